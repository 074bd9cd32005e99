"""Every rule's findings follow one style (issue 11, "Findings a person reads"), checked on the findings of
each rule's bad example (the runtime rules' examples are run for real, as in ``test_runtime_rules.py``):

* at most two sentences: what is missing or wrong and what the reported numbers then assume, then
  what to do; the shared notes (``rules.base``: a robust version reported beside, a result passed to
  code regvet cannot read) add at most one more;
* one opening: a finding about one fit starts with the fit's name (``rules.base.opening``: `` `res` ``,
  ``The fit of `y ~ x` ``), a finding about other code with ``This`` (``This comparison``, ``This waiver``);
* no nested parentheses in the prose (code spans are read as one word, but a code span with
  parentheses inside parentheses counts as nested);
* each test name spelled out at most once, and never as an abbreviation (BP, BG, DW);
* numbers with at most four significant digits;
* in the default text output (``output/text.py`` at ``DEFAULT_WIDTH``) no line over 160 characters, and
  under a fit's header the message does not repeat the fit's formula.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from regvet.engine import analyze
from regvet.model.finding import Finding
from regvet.model.report import FileReport
from regvet.output import text
from regvet.rules import ALL_RULES
from regvet.rules.base import in_header, opening

#: Rules whose wording another helper owns until it lands (then brought to this style).
PENDING: frozenset[str] = frozenset()
TEST_NAMES = ("Breusch-Pagan", "Breusch-Godfrey", "Durbin-Watson", "Jarque-Bera", "RESET", "Chow", "White")
ABBREVIATIONS = re.compile(r"\b(?:BP|BG|DW|JB)\b")
MAX_LINE = 160
#: The shared notes a finding may carry besides its own two sentences.
NOTES = ("version of the same specification on the same data is reported too", "which regvet cannot see into")


def prose(message: str) -> str:
    """The message with each code span replaced by a placeholder: ``C`` for code without parentheses,
    ``(C)`` for code with them (so code with parentheses inside parentheses reads as nested)."""
    parts = message.split("`")
    assert len(parts) % 2 == 1, f"unbalanced backticks: {message}"
    return "".join(p if i % 2 == 0 else ("(C)" if "(" in p else "C") for i, p in enumerate(parts))


def sentences(message: str) -> list[str]:
    """The sentences of the prose: split after ``.``, ``?`` or ``!`` followed by a space and a capital
    letter or a code span (numbers such as 0.048 have no space after the point)."""
    return [s for s in re.split(r"(?<=[.?!])\s+(?=[A-Z`C(])", prose(message).strip()) if s]


def depth(message: str) -> int:
    deepest = level = 0
    for ch in prose(message):
        if ch == "(":
            level += 1
            deepest = max(deepest, level)
        elif ch == ")":
            level -= 1
    return deepest


def significant(number: str) -> int:
    digits = number.replace(".", "").lstrip("0")
    return len(digits)


def style_problems(f: Finding, report: FileReport) -> list[str]:
    problems = []
    message = f.message
    limit = 2 + sum(1 for note in NOTES if note in message)
    if len(sentences(message)) > limit:
        problems.append(f"{len(sentences(message))} sentences (at most {limit})")
    fits = list(dict.fromkeys(f.fits))
    if len(fits) == 1 and report.facts is not None:
        fit = report.facts.fit(fits[0])
        if not message.startswith((opening(fit), "For ")):
            problems.append(f"does not open with {opening(fit)!r}")
    elif not message.startswith("This "):
        problems.append("does not open with 'This ...'")
    if depth(message) > 1:
        problems.append("nested parentheses")
    plain = prose(message)
    for name in TEST_NAMES:
        if len(re.findall(rf"\b{re.escape(name)}\b", plain)) > 1:
            problems.append(f"{name} spelled out more than once")
    if ABBREVIATIONS.search(plain):
        problems.append("a test name abbreviated")
    for number in re.findall(r"(?<![\w.])\d+\.\d+(?![\w.])", plain):
        if significant(number) > 4:
            problems.append(f"{number} has more than four significant digits")
    if not message.rstrip().endswith((".", "?")):
        problems.append("does not end a sentence")
    return problems


def _static_reports() -> list[tuple[str, FileReport]]:
    return [(r.id, analyze(r.bad, f"{r.id}_bad.py", strict=True)) for r in ALL_RULES if not r.needs_run]


@pytest.fixture(scope="module")
def runtime_reports(tmp_path_factory) -> list[tuple[str, FileReport]]:
    from test_runtime_rules import run_example

    out = []
    for rule in ALL_RULES:
        if rule.needs_run:
            report, _ = run_example(tmp_path_factory.mktemp(rule.id), "bad", rule.bad)
            out.append((rule.id, report))
    return out


def _check(reports: list[tuple[str, FileReport]]) -> None:
    seen = set()
    bad = []
    for rule_id, report in reports:
        for f in report.findings:
            if f.rule != rule_id:
                continue
            seen.add(rule_id)
            if rule_id in PENDING:
                continue
            bad += [f"{rule_id}: {p}\n    {f.message}" for p in style_problems(f, report)]
        lines = text.render([report], width=text.DEFAULT_WIDTH).split("\n")
        bad += [f"{rule_id}: text line of {len(line)} characters: {line}" for line in lines if len(line) > MAX_LINE]
    assert seen == {rid for rid, _ in reports}, "every example gives a finding of its rule"
    assert not bad, "\n".join(bad)


def test_static_rules_follow_the_style():
    _check(_static_reports())


def test_runtime_rules_follow_the_style(runtime_reports):
    _check(runtime_reports)


def test_under_a_header_an_unnamed_fit_is_this_fit_and_named_fits_keep_their_name():
    code = (
        "import pandas as pd\nimport statsmodels.formula.api as smf\n\n"
        'crossings = pd.read_csv("crossings.csv")\n'
        'print(smf.ols("riders ~ fare + fuel_price", data=crossings).fit().params)\n'
        'named = smf.ols("riders ~ fare", data=crossings).fit()\nprint(named.params)\n'
    )
    report = analyze(code, "ferries.py")
    unnamed, named = sorted((f for f in report.findings if f.rule == "no-form-test"), key=lambda f: f.span.line)
    assert unnamed.message.startswith("The fit of `riders ~ fare + fuel_price` has its estimates used")
    fit = report.facts.fit(unnamed.fits[0])
    assert in_header(unnamed.message, fit).startswith("This fit has its estimates used")
    assert named.message.startswith("`named` has its estimates used")
    out = text.render([report])
    assert "  warning no-form-test: This fit has its estimates used" in out
    assert out.count("riders ~ fare + fuel_price") == 1  # in the header only
    assert "  warning no-form-test: `named` has its estimates used" in out


def test_the_checks_themselves_catch_what_they_should():
    """The style checks fail on the habits they exist to stop (so a passing run means something)."""
    assert len(sentences("`res` has x. Run `f(res)`. And more.")) == 3
    assert len(sentences("`res` has p = 0.048, F(2, 83) = 3.478. Run `linear_reset(res, power=3)`.")) == 2
    assert depth("`res` (see (this)) is odd.") == 2
    assert depth("`res` is tested (`linear_reset(res)`).") == 2
    assert depth("`res` fails RESET, F(2, 83) = 3.478, so it is wrong (see the explain text).") == 1
    assert depth("The fit of `np.log(y) ~ (a + b) * C(g)` is wrong.") == 1  # code is one word
    assert significant("0.01234") == 4 and significant("12.345") == 5 and significant("11.00") == 4


def test_the_demo_text_output_stays_within_the_width(run_cli, monkeypatch):
    demo = Path(__file__).resolve().parents[1] / "fixtures" / "demo"
    monkeypatch.chdir(demo)
    monkeypatch.delenv("COLUMNS", raising=False)
    _, out, _ = run_cli("check", ".")
    assert max(len(line) for line in out.splitlines()) <= MAX_LINE
