"""``regvet report``: the specification audit of the demo, static and with ``--run``; HTML structure and
accessibility with an HTML5 parser; Markdown; the plots; the progress line; and headless Chromium.

Chromium comes from the distribution's packages (``.ci/run`` installs it); without it the browser
tests skip, unless ``REGVET_REQUIRE_BROWSER=1`` (set by ``.ci/run``) turns the skip into a failure.
"""

from __future__ import annotations

import io
import itertools
import os
import re
import shutil
import subprocess
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

import html5lib
import pytest

from conftest import FIXTURES
from regvet import audit as A
from regvet.output import report_html

DEMO = FIXTURES / "demo"
NS = {"h": "http://www.w3.org/1999/xhtml"}

#: An invented analysis whose wind coefficient is significant at 5 % with the usual standard errors
#: and not with HC3 (seed found by trying seeds with statsmodels: usual p = 0.018, HC3 p = 0.076).
FLIP = """\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf
from statsmodels.stats.diagnostic import linear_reset

rng = np.random.default_rng(35)
n = 60
crossings = pd.DataFrame({"wind": rng.uniform(0, 30, n), "fare": rng.uniform(2, 9, n)})
noise = rng.normal(0, 1, n) * (1 + crossings["wind"]) ** 1.3
crossings["riders"] = 500 - 8 * crossings["fare"] + 0.6 * crossings["wind"] + noise
gusty = smf.ols("riders ~ fare + wind", data=crossings).fit()
print(linear_reset(gusty, power=3, use_f=True))
print(gusty.summary())
calm = smf.ols("riders ~ fare", data=crossings).fit(cov_type="HC3")
print(calm.summary())
"""


def scan_demo(run: bool = False):
    from regvet.cli import _parser, scan

    args = _parser().parse_args(["check", "."] + (["--run"] if run else []))
    return scan(args)


@pytest.fixture
def in_demo(monkeypatch):
    monkeypatch.chdir(DEMO)


def by_place(audit: A.Audit) -> dict[tuple[str, str], A.FitAudit]:
    return {(fit.path, fit.where): fit for f in audit.files for fit in f.fits}


def states(fit: A.FitAudit) -> dict[str, str]:
    return {r.family: r.state for r in fit.checks}


# --- the audit model, static ---------------------------------------------------------------------
def test_every_fit_of_the_demo_is_in_the_audit_in_source_order(in_demo):
    result = scan_demo()
    audit = A.build(result.reports)
    for report, fa in zip(result.reports, audit.files, strict=False):
        assert fa.path == report.path
        if report.facts is None:
            continue
        judged = {
            (report.cell_map.span(f.site.span) if report.cell_map else f.site.span, A.fit_name(f))
            for f in report.rule_input.judged_fits()
        }
        shown = [(fit.span, fit.name) for fit in fa.fits]
        assert sorted(shown, key=lambda x: x[0].sort_key()) == shown  # in source order
        assert set(shown) == judged and len(shown) == len(judged)  # every fit, each place and name once
    names = {fit.name for f in audit.files for fit in f.fits}
    assert {
        "level",
        "loglog",
        "by_route",
        "naive",
        "wind_res",
        "rain_res",
        "final",
        "seasonal",
        "quick",
        "pooled",
        "pooled_hc3",
        "interacted",
        "res",
    } <= names
    assert audit.fit_count == sum(len(f.fits) for f in audit.files)
    # the summary counts are those of `regvet check`
    findings = [f for r in result.reports for f in r.findings]
    assert audit.counts == {
        "error": 2,
        "warning": 8,
        "info": 2,
    }  # 8: the demo's misspelt waiver (waiver-unknown-rule) counts too
    assert len(audit.waivers) == sum(1 for f in findings if f.waived) == 3
    assert all(w.reason for w in audit.waivers)


def test_the_state_of_every_check_family_of_key_demo_fits(in_demo):
    fits = by_place(A.build(scan_demo().reports))
    rain = fits[("02_weather_effects.py", "line 34")]
    assert states(rain) == {
        "form": A.DONE,
        "variance": A.MISSING,
        "normality": A.NOT_APPLICABLE,
        "serial": A.DONE,
        "breaks": A.NOT_APPLICABLE,
        "collinearity": A.NOT_APPLICABLE,
        "comparison": A.NOT_APPLICABLE,
    }
    assert next(r.how for r in rain.checks if r.family == "form") == "`linear_reset` at line 37"
    helper = fits[("02_weather_effects.py", "line 28")]  # fitted in ferry_helpers with HC3
    assert states(helper)["form"] == A.MISSING and states(helper)["breaks"] == A.MISSING
    assert states(helper)["variance"] == A.DONE and "robust covariance (HC3)" in helper.checks[1].how
    naive = fits[("01_fare_elasticity.py", "line 61")]
    assert states(naive)["form"] == A.WAIVED and "descriptive slope for the memo" in naive.checks[0].how
    level = fits[("01_fare_elasticity.py", "line 17")]
    assert states(level)["comparison"] == A.REJECTED and not level.comparisons[0].valid
    assert "different" in level.comparisons[0].problem  # the compare-across-outcomes finding's message
    quick = fits[("03_model_choice.py", "line 50")]
    assert states(quick)["form"] == A.MISSING  # its waiver gives no reason
    pooled_hc3 = fits[("04_timetable_change.ipynb", "cell 4, line 10")]
    assert states(pooled_hc3)["serial"] == A.MISSING
    pooled = fits[("04_timetable_change.ipynb", "cell 4, line 2")]
    assert states(pooled)["breaks"] == A.WAIVED and "equal slopes across routes were tested" in pooled.checks[4].how
    wind = fits[("02_weather_effects.py", "line 33")]
    assert set(states(wind).values()) <= {A.DONE, A.NOT_APPLICABLE}
    final = fits[("03_model_choice.py", "line 38")]
    assert final.alternatives == 4  # a HAC copy of whichever candidate won: shown once
    assert states(final)["serial"] == A.DONE


#: The state of each check family (form, variance, normality, serial, breaks, collinearity, comparison) of
#: every demo fit without a run, by hand from fixtures/demo/README.md's findings and the scripts:
#: D done, M missing, W waived, R rejected (an invalid comparison), - not applicable.
DEMO_STATES = """
01_fare_elasticity.py line 17 level D D - - - - R
01_fare_elasticity.py line 29 loglog D D - D - - R
01_fare_elasticity.py line 38 by_route D D - D - - -
01_fare_elasticity.py line 61 naive W - - - - - -
02_weather_effects.py line 20 riders~fare+wind_speed+rain_mm+holiday D D - D - - -
02_weather_effects.py line 28 riders~fare+wind_speed+rain_mm+C(route) M D - - M - -
02_weather_effects.py line 33 wind_res D D - D - - -
02_weather_effects.py line 34 rain_res D M - D - - -
03_model_choice.py line 23 riders~fare D D - D - - R
03_model_choice.py line 23 riders~fare+fuel_price D D - D - - R
03_model_choice.py line 23 riders~fare+fuel_price+wind_speed+rain_mm D D - D - - R
03_model_choice.py line 23 riders~fare+fuel_price+wind_speed+rain_mm+holiday D D - D - - R
03_model_choice.py line 38 final D D - D - - R
03_model_choice.py line 43 seasonal D D - D M - -
03_model_choice.py line 50 quick M - - - - - -
04_timetable_change.ipynb cell 4, line 2 pooled D D - - W - -
04_timetable_change.ipynb cell 4, line 10 pooled_hc3 D D - M - - -
04_timetable_change.ipynb cell 6, line 2 interacted D D - D W - -
04_timetable_change.ipynb cell 8, line 5 res M D - D - - -
ferry_helpers.py line 21 OLS fit - - - - - - -
"""


def test_every_state_of_every_demo_fit(in_demo):
    letter = {A.DONE: "D", A.MISSING: "M", A.WAIVED: "W", A.REJECTED: "R", A.NOT_APPLICABLE: "-"}
    got = []
    for f in A.build(scan_demo().reports).files:
        for fit in f.fits:
            got.append(
                f"{fit.path} {fit.where} {fit.name.replace(' ', '')} " + " ".join(letter[r.state] for r in fit.checks)
            )
    assert got == [line.replace("OLS fit", "OLSfit") for line in DEMO_STATES.strip().splitlines()]


def test_static_ranking_puts_invalid_comparisons_then_missing_checks_first(in_demo):
    audit = A.build(scan_demo().reports)
    keys = [fit.risk.key for fit in audit.ranked]
    assert keys == sorted(keys)
    order = [(fit.path, fit.where) for fit in audit.ranked]
    assert order[:2] == [("01_fare_elasticity.py", "line 17"), ("01_fare_elasticity.py", "line 29")]
    missing_first = [
        p for p, fit in zip(order, audit.ranked, strict=False) if fit.risk.rejected == 0 and fit.risk.missing
    ]
    assert missing_first[0] == ("02_weather_effects.py", "line 28")  # two missing checks
    assert audit.ranked[-1].risk.describe() == "no missing or failed check found"


# --- HTML: structure and accessibility --------------------------------------------------------------
def _contrast(fg: str, bg: str) -> float:
    """WCAG 2.1 contrast ratio of two #rrggbb colours (relative luminance, sRGB)."""

    def luminance(colour: str) -> float:
        channels = [int(colour[i : i + 2], 16) / 255 for i in (1, 3, 5)]
        lin = [c / 12.92 if c <= 0.03928 else ((c + 0.055) / 1.055) ** 2.4 for c in channels]
        return 0.2126 * lin[0] + 0.7152 * lin[1] + 0.0722 * lin[2]

    a, b = sorted((luminance(fg), luminance(bg)), reverse=True)
    return (a + 0.05) / (b + 0.05)


def test_the_contrast_formula_against_known_values():
    assert round(_contrast("#000000", "#ffffff"), 2) == 21.0  # the WCAG extremes
    assert round(_contrast("#777777", "#ffffff"), 2) == 4.48  # the usual example of a grey that just fails


def check_html(text: str) -> None:
    """One h1, headings in order, tables with header cells, alt text on every image, no external resource,
    and every text colour of the style sheet at least 4.5:1 against its background."""
    doc = html5lib.parse(text, treebuilder="etree", namespaceHTMLElements=True)
    parser = html5lib.HTMLParser(strict=True)
    parser.parse(text)  # raises on a parse error
    headings = [int(el.tag[-1]) for el in doc.iter() if re.fullmatch(r"\{[^}]+\}h[1-6]", el.tag)]
    assert headings.count(1) == 1 and headings[0] == 1
    assert all(b <= a + 1 for a, b in itertools.pairwise(headings)), "a heading level is skipped"
    tables = doc.findall(".//h:table", NS)
    assert tables
    for table in tables:
        assert table.find("h:thead/h:tr/h:th", NS) is not None, "a table without header cells"
        assert table.find("h:caption", NS) is not None
    for img in doc.findall(".//h:img", NS):
        assert (img.get("alt") or "").strip()
    for svg in doc.iter("{http://www.w3.org/2000/svg}svg"):
        assert svg.get("role") == "img" and len(svg.get("aria-label") or "") > 40
        assert svg.find("{http://www.w3.org/2000/svg}title") is not None
    assert not doc.findall(".//h:script", NS) and not doc.findall(".//h:link", NS)
    for el in doc.iter():
        for attr in ("src", "href"):
            value = el.get(attr) or el.get("{http://www.w3.org/1999/xlink}" + attr)
            if value is not None:
                assert value.startswith("#"), f"an external resource: {value}"
    style = "".join(s.text or "" for s in doc.findall(".//h:style", NS))
    assert "@import" not in style and "url(" not in style
    body_bg = re.search(r"body \{[^}]*background: (#[0-9a-f]{6})", style).group(1)
    rules = 0
    for selector, block in re.findall(r"([^{}]+)\{([^{}]*)\}", style):
        colour = re.search(r"(?<![-\w])color: (#[0-9a-f]{6})", block)
        if colour:
            bg = re.search(r"background: (#[0-9a-f]{6})", block)
            ratio = _contrast(colour.group(1), bg.group(1) if bg else body_bg)
            assert ratio >= 4.5, f"{selector.strip()}: contrast {ratio:.2f}"
            rules += 1
    assert rules >= 10


def test_static_html_report_of_the_demo(run_cli, in_demo, tmp_path):
    out = tmp_path / "audit.html"
    code, stdout, err = run_cli("report", ".", "-o", str(out))
    assert code == 0, err
    assert "20 fits in 5 files" in stdout
    text = out.read_text(encoding="utf-8")
    check_html(text)
    assert "<svg" not in text  # no plots without --run
    assert text.count('<table class="checks">') == 20
    assert "Passing regvet does not make a model right" in text
    for state in A.STATES:  # the states are explained in words
        assert f'<dt><span class="state {report_html.STATE_STYLE[state][0]}">{state}</span></dt>' in text
    assert "descriptive slope for the memo only" in text  # a waiver's reason


def test_html_checker_catches_what_it_should():
    good = (
        '<!DOCTYPE html><html lang="en"><head><meta charset="utf-8"><title>t</title><style>body { color: #1a1a1a; background: #ffffff; }'
        + "".join(f" .c{i} {{ color: #1a1a1a; }}" for i in range(10))
        + "</style></head><body><h1>a</h1><h2>b</h2><table><caption>c</caption><thead><tr><th>x</th></tr></thead></table></body></html>"
    )
    check_html(good)
    for bad in (
        good.replace("<h2>b</h2>", "<h3>b</h3>"),
        good.replace("<h2>b</h2>", "<h1>b</h1>"),
        good.replace("<thead><tr><th>x</th></tr></thead>", "<tbody><tr><td>x</td></tr></tbody>"),
        good.replace(".c0 { color: #1a1a1a; }", ".c0 { color: #999999; }"),
        good.replace("<h2>b</h2>", '<h2>b</h2><img src="https://example.org/x.png" alt="x">'),
    ):
        with pytest.raises(AssertionError):
            check_html(bad)


def test_markdown_report_of_the_demo(run_cli, in_demo, tmp_path):
    out = tmp_path / "audit.md"
    code, stdout, err = run_cli("report", ".", "-o", str(out))
    assert code == 0, err
    text = out.read_text(encoding="utf-8")
    assert text.startswith("# Specification audit\n")
    assert text.count("| check | state | done by, or why |") == 20
    assert "| heteroskedasticity and covariance | **missing** |" in text
    assert "![" not in text and not (tmp_path / "audit_plots").exists()
    assert "> **Caution.** Passing regvet does not make a model right" in text
    # a Markdown table row has as many cells as its header
    for block in re.findall(r"((?:^\|.*\|\n)+)", text, flags=re.M):
        rows = [re.split(r"(?<!\\)\|", r)[1:-1] for r in block.splitlines()]
        assert len({len(r) for r in rows}) == 1, block


def test_bad_output_paths_are_clear_errors(run_cli, in_demo, tmp_path):
    code, out, err = run_cli("report", ".", "-o", str(tmp_path / "audit.txt"))
    assert code == 2 and "must be a .html or .md file" in err
    code, out, err = run_cli("report", ".", "-o", str(tmp_path / "nowhere" / "audit.html"))
    assert code == 2 and "no such folder" in err
    code, out, err = run_cli("report", ".")
    assert code == 2  # -o is required
    locked = tmp_path / "locked"
    locked.mkdir()
    locked.chmod(0o500)
    try:
        if os.access(locked, os.W_OK):  # root ignores permissions: make the target a file's child instead
            (tmp_path / "plain").write_text("x")
            target = str(tmp_path / "plain" / "audit.html")
        else:
            target = str(locked / "audit.html")
        code, out, err = run_cli("report", ".", "-o", target)
        assert code == 2 and "Traceback" not in err and target.rsplit("/", 2)[-2] in err
    finally:
        locked.chmod(0o700)


# --- with --run: statistics, coefficients, plots ---------------------------------------------------
@pytest.fixture(scope="module")
def ran(tmp_path_factory):
    """The demo and the invented FLIP script, reported with --run (HTML and Markdown; the second
    report reuses the cached runs)."""
    folder = tmp_path_factory.mktemp("report")
    shutil.copytree(DEMO, folder / "demo", ignore=shutil.ignore_patterns("__pycache__"))
    (folder / "demo" / "05_gusty_weeks.py").write_text(FLIP, encoding="utf-8")
    env = {**os.environ, "REGVET_CACHE_DIR": str(folder / "cache")}
    for name in ("audit.html", "audit.md"):
        proc = subprocess.run(
            [sys.executable, "-m", "regvet", "report", "--run", ".", "-o", str(folder / name)],
            cwd=folder / "demo",
            env=env,
            capture_output=True,
            text=True,
            timeout=600,
        )
        assert proc.returncode == 0, proc.stderr
        assert proc.stderr == ""  # not a terminal: no progress line
    return folder


def test_run_report_has_statistics_coefficients_and_plots(ran):
    text = (ran / "audit.html").read_text(encoding="utf-8")
    check_html(text)
    assert text.count('<table class="checks">') == 22
    assert "done, passed" in text and "done, rejected" in text
    # RESET of the helper-made weather model (an HC3 fit), as the probe computed it: the HC3 Wald form
    # it is judged by, and the classical F beside it.
    assert "HC3 covariance, F(2, 539) = 110.7, p &lt; 0.001; classical F = 106.7, p &lt; 0.001" in text
    assert "Koenker studentized LM" in text
    svgs = re.findall(r"<svg .*?</svg>", text, flags=re.S)
    assert len(svgs) >= 3 * 15
    labels = re.findall(r'<svg role="img" aria-label="([^"]+)"', text)
    assert len(labels) == len(svgs)
    assert any("300 of 546 observations (a random subset, seed 0)" in a for a in labels)  # downsampled, and said so
    assert any(a.startswith("Line plot of the residuals of") and "in time order" in a for a in labels)
    assert "The same residuals as" in text  # a robust copy's plots are not drawn twice
    assert len(text.encode()) < 4_000_000


def test_the_fit_whose_significance_changes_ranks_first(ran):
    text = (ran / "audit.html").read_text(encoding="utf-8")
    ranking = text.split('id="ranking"', 1)[1].split("</table>", 1)[0]
    first = re.search(r"<tr><th scope=\"row\">1</th><td><a href=\"#([^\"]+)\"><code>([^<]+)</code>", ranking)
    assert first.group(2) == "gusty"
    article = text.split(f'<article id="{first.group(1)}">', 1)[1].split("</article>", 1)[0]
    assert "1 coefficient changes 5 % significance under robust standard errors" in article
    assert "changes: significant at 5 % with the usual standard errors only, not with HC3" in article
    row = re.search(r"<code>wind</code></th>(.*?)</tr>", article).group(1)
    # usual and HC3 side by side; reference: statsmodels' own fit(cov_type="HC3", use_t=True) of the same data
    # gives bse 0.8380 and p 0.0761 (t with the residual degrees of freedom, as the probe reports)
    got = re.findall(r'<td class="num">([^<]+)</td>', row)
    # estimates and standard errors to four significant digits, p-values as p() writes them
    assert got == ["1.514", "0.6230", "0.018", "0.8380", "0.076"]


def test_run_markdown_has_svg_files_beside_it(ran):
    text = (ran / "audit.md").read_text(encoding="utf-8")
    images = re.findall(r"!\[([^\]]+)\]\(([^)]+)\)", text)
    assert len(images) >= 45
    for alt, rel in images:
        assert rel.startswith("audit_plots/") and rel.endswith(".svg") and len(alt) > 40
        svg = ET.parse(ran / rel).getroot()
        assert svg.tag == "{http://www.w3.org/2000/svg}svg" and svg.get("role") == "img"
    assert sorted(p.name for p in (ran / "audit_plots").iterdir()) == sorted(Path(r).name for _, r in images)


def test_progress_line_on_a_terminal_only(tmp_path):
    import pty

    (tmp_path / "gusty.py").write_text(FLIP, encoding="utf-8")
    env = {**os.environ, "REGVET_CACHE_DIR": str(tmp_path / "cache")}
    leader, follower = pty.openpty()
    proc = subprocess.Popen(
        [sys.executable, "-m", "regvet", "report", "--run", "--no-cache", "gusty.py", "-o", "a.html"],
        cwd=tmp_path,
        env=env,
        stdout=subprocess.PIPE,
        stderr=follower,
    )
    os.close(follower)
    seen = b""
    while True:
        try:
            chunk = os.read(leader, 4096)
        except OSError:
            break
        if not chunk:
            break
        seen += chunk
    proc.wait(120)
    os.close(leader)
    assert proc.returncode == 0
    shown = seen.decode()
    assert "regvet: running file 1 of 1, gusty.py" in shown
    assert "fit 1 (`gusty`)" in shown and "fit 2 (`calm`)" in shown
    assert shown.endswith("\r\x1b[K")  # the line is cleared at the end


# --- headless Chromium ----------------------------------------------------------------------------
def need_browser() -> None:
    from browser import chromium

    if chromium() is None:
        reason = "chromium is not installed (.ci/run installs Debian's chromium package)"
        if os.environ.get("REGVET_REQUIRE_BROWSER") == "1":
            pytest.fail(f"REGVET_REQUIRE_BROWSER=1 but {reason}", pytrace=False)
        pytest.skip(reason)


PAGE_CHECKS = {
    "checks_tables": "document.querySelectorAll('table.checks').length",
    "check_rows": "document.querySelectorAll('table.checks tbody tr').length",
    "svgs": "document.querySelectorAll('svg[role=img]').length",
    "h1": "document.querySelector('h1').textContent",
    "height": "document.documentElement.scrollHeight",
}


def _non_blank(png: bytes) -> float:
    """The share of pixels that are not the page background (decoded with matplotlib's PNG reader)."""
    import matplotlib.image
    import numpy as np

    pixels = matplotlib.image.imread(io.BytesIO(png), format="png")[..., :3]
    return float(np.mean(np.any(np.abs(pixels - pixels[0, 0]) > 0.05, axis=-1)))


def test_the_report_in_a_real_browser(ran):
    need_browser()
    from browser import load

    page = load((ran / "audit.html").as_uri(), PAGE_CHECKS)
    assert page.errors == []
    assert page.requests and all(url.startswith("file://") for url in page.requests), page.requests
    assert page.requests == [(ran / "audit.html").as_uri()]  # the document itself, nothing else
    assert page.values["checks_tables"] == 22 and page.values["check_rows"] == 22 * 7
    assert page.values["svgs"] >= 45 and page.values["h1"] == "Specification audit"
    assert page.screenshot.startswith(b"\x89PNG") and _non_blank(page.screenshot) > 0.02


def test_the_browser_check_fails_on_a_broken_page(tmp_path):
    need_browser()
    from browser import load

    broken = tmp_path / "broken.html"
    broken.write_text(
        '<!DOCTYPE html><html lang="en"><head><meta charset="utf-8"><title>x</title></head><body>'
        '<h1>x</h1><img src="http://127.0.0.1:9/pixel.png" alt="pixel">'
        '<script>console.error("broken on purpose"); undefined_function();</script></body></html>'
    )
    page = load(broken.as_uri(), {"h1": "document.querySelector('h1').textContent"})
    assert any("broken on purpose" in e for e in page.errors)
    assert any("undefined_function" in e for e in page.exceptions)
    assert "http://127.0.0.1:9/pixel.png" in page.requests
    blank = tmp_path / "blank.html"
    blank.write_text(
        '<!DOCTYPE html><html lang="en"><head><meta charset="utf-8"><title>x</title></head><body></body></html>'
    )
    assert _non_blank(load(blank.as_uri(), {}).screenshot) == 0.0
