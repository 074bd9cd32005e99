"""The rule contract and the read-only view of a file that rules get.

A rule is one :class:`Rule` value in one module: id (stable forever), default
severity, a one-line summary, the rationale a user reads (what is missing, which
assumption it protects, what satisfies it), a bad and a good example, references,
and a ``check`` function from :class:`RuleInput` to findings. The same text feeds
``regvet explain``, ``regvet rules``, the README table and the language server.

What other parts need to know about a rule is declared on it too (the check family
it reports missing, whether it compares fits, its quick fixes, whether it can be
waived, whether its finding stops a run), so no other module lists rule ids.

Examples mark each expected finding with a trailing ``# expect: RULE`` comment on
the line where the finding starts; ``tests/test_rule_examples.py`` runs them all.
"""

from __future__ import annotations

import enum
from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass, field

from regvet.analysis.catalog import HAC_COV, ROBUST_COV
from regvet.model.cells import CellMap
from regvet.model.facts import Check, Escape, FileFacts, Fit, Loc, Use
from regvet.model.finding import Finding, Related, Severity
from regvet.model.runtime import RuntimeFacts
from regvet.model.settings import Settings
from regvet.model.span import Span
from regvet.sources.python import SourceError
from regvet.sources.waivers import Waiver


@dataclass(frozen=True)
class RuleInput:
    """Everything a rule may look at for one file. Rules never walk syntax trees."""

    facts: FileFacts
    settings: Settings
    waivers: tuple[Waiver, ...] = ()
    source_error: SourceError | None = None
    cell_map: CellMap | None = None
    runtime: RuntimeFacts | None = None  # only in runtime mode
    #: Ids of every rule in the catalogue (the engine fills it in), so waivers can name unknown ones.
    known_rules: frozenset[str] = frozenset()
    #: Why the analysis of the file stopped early (a bound regvet keeps whatever the input: too
    #: deep, over its time budget); the facts then hold what was found before it stopped, or nothing.
    stopped: tuple[str, ...] = ()
    #: How the file already calls the diagnostics findings suggest (``sources.imports.suggested_spellings``).
    spellings: tuple[tuple[str, str], ...] = ()
    #: Notebook cells that do not parse on their own (their code was left out of the analysis).
    broken_cells: tuple[SourceError, ...] = ()

    def call(self, name: str) -> str:
        """How suggested code calls ``name`` in this file: its import alias (``lr``, ``sms.linear_reset``)
        when the file has imported it, else the plain name."""
        for known, spelt in self.spellings:
            if known == name:
                return spelt
        return name

    def where(self, loc: Loc) -> str:
        """A location as a message names it: ``line 12``, ``cell 3, line 2`` or ``helpers.py, line 8``."""
        if loc.path is not None:
            return f"{loc.path}, line {loc.span.line}"
        if self.cell_map is not None:
            return self.cell_map.span(loc.span).describe()
        return loc.span.describe()

    def judged_fits(self) -> Iterator[Fit]:
        """Fits whose findings belong to this file, auxiliary regressions excluded."""
        for fit in self.facts.fits:
            if fit.site.path is None and not fit.auxiliary:
                yield fit

    def uses(self, fid: int, kinds: Iterable[str]) -> list[Use]:
        wanted = set(kinds)
        return sorted(
            (u for u in self.facts.events_of("uses", fid) if u.kind in wanted),
            key=lambda u: (u.loc.path or "", u.loc.span.sort_key()),
        )

    def checks(self, fid: int, family: str) -> list[Check]:
        """Checks of ``family`` applied to the fit, to any copy sharing its residuals, or to another fit of
        the identical specification on the same data."""
        return [
            c
            for m in sorted(self.facts.same_data(fid))
            for c in self.facts.events_of("checks", m)
            if c.family == family
        ]

    def escapes(self, fid: int) -> list[Escape]:
        return sorted(self.facts.events_of("escapes", fid), key=lambda e: (e.loc.path or "", e.loc.span.sort_key()))


class QuickFix(enum.Enum):
    """An edit an editor can offer for a rule's finding besides a waiver (``lsp/actions.py`` makes it)."""

    #: Set ``cov_type="HC3"`` on the fit call.
    ROBUST_COVARIANCE = "robust-covariance"
    #: Insert a RESET test of the fit after the statement that makes it.
    INSERT_RESET = "insert-reset"
    #: Insert a Breusch-Pagan test of the fit after the statement that makes it.
    INSERT_BREUSCH_PAGAN = "insert-breusch-pagan"


@dataclass(frozen=True)
class Rule:
    id: str
    severity: Severity
    summary: str
    rationale: str
    bad: str
    good: str
    check: Callable[[RuleInput], Iterable[Finding]] = field(compare=False)
    references: tuple[str, ...] = ()
    #: Fires only from the statistics of a run (``regvet check --run``); its examples are run.
    needs_run: bool = False
    #: The check family (a key of ``model.settings.FAMILIES``) whose missing check this rule
    #: reports; the hover status shows that family as missing, or waived, from its finding.
    family: str | None = None
    #: The check family (a key of ``model.settings.FAMILIES``) whose test, computed by a run, this
    #: rule reports as rejected for the fit; the audit report shows that family as rejected from it.
    rejects: str | None = None
    #: Judges a comparison between fits: after a run its findings carry the compared fits' table,
    #: and the hover status shows the comparison as failed.
    compares_fits: bool = False
    #: Edits an editor may offer for a finding, in the order offered (a waiver comes last).
    quick_fixes: tuple[QuickFix, ...] = ()
    #: False for the rules the engine owns: their findings are never waived and no waiver is offered.
    waivable: bool = True
    #: A finding of this rule means the file cannot run: the runtime mode leaves such a file alone.
    blocks_run: bool = False

    def finding(
        self,
        span: Span,
        message: str,
        related: Iterable[Related] = (),
        fix: dict | None = None,
        fits: Iterable[int] = (),
    ) -> Finding:
        return Finding(self.id, self.severity, span, message, tuple(related), fix=fix, fits=tuple(fits))

    def fit_finding(self, fit: Fit, message: str, uses: Sequence[Use] = (), fix: dict | None = None) -> Finding:
        """A finding about one fit, placed on its site: related to where a fit made inside a function
        is made and to the first three of ``uses``."""
        return self.finding(fit.site.span, message, [*fit_related(fit), *use_related(uses)], fix, fits=(fit.id,))


def once_per_root(inp: RuleInput, judge: Callable[[RuleInput, Fit], Finding | None]) -> Iterator[Finding]:
    """The findings ``judge`` gives for the judged fits, at most one per root fit.

    A fit and the robust-covariance copies derived from it share their residuals, so what one of
    them shows holds for all: once ``judge`` returns a finding for one, the others are skipped.
    A judge that reads a run's statistics returns the finding of the first run that fires.
    """
    reported: set[int] = set()
    for fit in inp.judged_fits():
        root = inp.facts.root(fit.id)
        if root in reported:
            continue
        found = judge(inp, fit)
        if found is not None:
            reported.add(root)
            yield found


def specification(fit: Fit) -> str | None:
    """A fit's specification as a message lists it: its formula, else its outcome on its regressors."""
    if fit.formula:
        return f"`{fit.formula}`"
    if fit.outcome is not None and fit.regressors:
        return f"`{fit.outcome.text}` on `{' + '.join(fit.regressors)}`"
    return None


def site_labels(fits: Sequence[Fit]) -> list[str]:
    """How a message tells apart the fits of one site: each by its specification when that is known
    and no other fit there has the same one, else by its number there (with the specification)."""
    specs = [specification(f) for f in fits]
    out = []
    for i, spec in enumerate(specs, start=1):
        if spec is not None and specs.count(spec) == 1:
            out.append(spec)
        else:
            out.append(f"fit {i}" + (f" {spec}" if spec else ""))
    return out


def listed(names: Sequence[str], limit: int = 4) -> str:
    """``a, b and c``; past ``limit`` names, ``a, b, c, d and 2 more``."""
    names = list(names)
    if len(names) > limit:
        return ", ".join(names[:limit]) + f" and {len(names) - limit} more"
    return " and ".join([", ".join(names[:-1]), names[-1]]) if len(names) > 1 else "".join(names)


def site_fits(inp: RuleInput, fit: Fit) -> list[Fit]:
    """The judged fits made at ``fit``'s site (a loop, a comprehension or a helper called in one makes
    several), one per root fit, in the order they are made."""
    if fit.site.path is not None:
        return [fit]
    out: dict[int, Fit] = {}
    for other in inp.facts.fits_at_site(fit.site):
        if not other.auxiliary:
            out.setdefault(inp.facts.root(other.id), other)
    # in the order their root fits are made: a copy's own id can depend on the order a set of
    # fits was walked in (robust copies of several candidates), which varies with the hash seed
    return [f for _, f in sorted(out.items())] or [fit]


#: The covariances whose reported version of a fit answers a family's missing check (``robust_reported``).
ROBUST_ANSWERS: dict[str, frozenset[str]] = {"variance": ROBUST_COV, "serial": HAC_COV}


def robust_version(inp: RuleInput, fit: Fit, family: str) -> Fit | None:
    """A version of ``fit`` whose covariance answers ``family`` (``ROBUST_ANSWERS``) and whose inference is
    reported too: a ``get_robustcov_results`` copy of it, or a second fit of the identical specification
    on the same data with such a ``cov_type``. None when there is none."""
    covs = ROBUST_ANSWERS.get(family)
    if covs is None:
        return None
    for fid in sorted(inp.facts.same_data(fit.id) - {fit.id}):
        other = inp.facts.fit(fid)
        if other.cov_type in covs and inp.uses(fid, ("inference",)):
            return other
    return None


def robust_reported(inp: RuleInput, rule: Rule, findings: Iterable[Finding]) -> Iterator[Finding]:
    """The findings of a rule reporting a variance or serial check missing, each downgraded to info when
    a robust (HAC for serial) version of its fit, the same specification on the same data, is reported
    too: the message says where. The engine applies it to every rule's findings."""
    for f in findings:
        if rule.family not in ROBUST_ANSWERS or len(f.fits) != 1:
            yield f
            continue
        fit = inp.facts.fit(f.fits[0])
        other = robust_version(inp, fit, rule.family)
        if other is None:
            yield f
            continue
        name = f"{describe_fit(other)} at " if other.result_name else "at "
        cov = (other.cov_type or "robust").upper()
        article = "An" if cov.startswith("HC") else "A"
        yield f.with_(
            severity=Severity.INFO,
            message=f"{f.message} {article} {cov} version of the same specification on the same data is reported "
            f"too, {name}{inp.where(other.site)}, so this is information only: read that version's standard errors.",
            related=(*f.related, related(other.site, "the robust version is fitted here")),
        )


def one_per_site(inp: RuleInput, findings: Iterable[Finding]) -> list[Finding]:
    """One finding per rule and site: the findings a rule gives for several fits made at one call site
    (a loop or comprehension over specifications) become one, whose message names how many fits the
    site makes, lists their specifications when known and, when only some of them are flagged, which.
    Its ``fits`` and ``related`` keep every fit it is about. Findings not placed on their one fit's
    site are kept as they are. The engine applies it to every rule's findings."""
    out: list[Finding] = []
    groups: dict[tuple[str, Span], list[Finding]] = {}
    for f in findings:
        if len(f.fits) == 1:
            try:
                fit: Fit | None = inp.facts.fit(f.fits[0])
            except KeyError:
                fit = None
            if fit is not None and fit.site.path is None and fit.site.span == f.span:
                group = groups.setdefault((f.rule, f.span), [])
                if not group:
                    out.append(f)  # placeholder, replaced below
                group.append(f)
                continue
        out.append(f)
    merged: dict[int, Finding] = {}
    for group in groups.values():
        first = group[0]
        fits = site_fits(inp, inp.facts.fit(first.fits[0]))
        if len(fits) > 1:
            merged[id(first)] = _merge(inp, group, fits)
    return [merged.get(id(f), f) for f in out]


def _merge(inp: RuleInput, group: list[Finding], fits: list[Fit]) -> Finding:
    flagged_ids: list[int] = []
    for f in group:
        if f.fits[0] not in flagged_ids:
            flagged_ids.append(f.fits[0])
    flagged_roots = {inp.facts.root(fid) for fid in flagged_ids}
    specs = site_labels(fits)
    n = len(fits)
    known = any(specification(f) for f in fits)
    hit = [s for fit, s in zip(fits, specs, strict=True) if inp.facts.root(fit.id) in flagged_roots]
    first = min(group, key=lambda f: f.fits[0])
    subject = inp.facts.fit(first.fits[0])
    body = first.message
    if not subject.result_name and subject.formula:  # the head names the fits: the body says "the fit"
        body = body.replace(opening(subject), "The fit", 1)
    if len(hit) == n:
        every = "both fits" if n == 2 else f"all {n} fits"
        head = f"For {every} from this line, {listed(specs)}: " if known else f"For {every} from this line: "
    else:  # the others are in the related locations, marked as not flagged
        head = f"For {len(hit)} of the {n} fits from this line, {listed(hit)}: "
    rel: list[Related] = []
    for i, (fit, spec) in enumerate(zip(fits, specs, strict=True), start=1):
        state = "" if inp.facts.root(fit.id) in flagged_roots else "; not flagged"
        rel.append(Related(fit.site.span, f"fit {i} of {n} from this line: {spec}{state}", fit.site.path))
    for f in group:
        rel.extend(r for r in f.related if r not in rel)
    message = f"{head}{lower_first(body)}"
    return first.with_(message=message, related=tuple(rel), fits=tuple(flagged_ids))


#: Names a message may start with: they keep their capital when the message follows a lead-in.
_NAMES = ("Ramsey", "Breusch", "White", "Chow", "Durbin", "Jarque", "Koenker", "Wooldridge")


def lower_first(text: str) -> str:
    """``text`` with its first letter in lower case, to follow a lead-in; unchanged when it opens with a
    code span, an acronym (RESET, VIF) or a name (Ramsey's RESET, Breusch-Pagan)."""
    word = text.split(" ", 1)[0]
    if text.startswith("`") or word[1:2].isupper() or word.startswith(_NAMES):
        return text
    return text[:1].lower() + text[1:]


def related(loc: Loc, message: str) -> Related:
    return Related(loc.span, message, loc.path)


def code_name(fit: Fit) -> str:
    """The fit's variable in suggested code (``res`` when the result has no simple name)."""
    return fit.result_name if fit.result_name and fit.result_name.isidentifier() else "res"


def describe_fit(fit: Fit) -> str:
    """How a message names a fit inside a sentence: its variable, else its formula, else its estimator."""
    if fit.result_name:
        return f"`{fit.result_name}`"
    if fit.formula:
        return f"the fit of `{fit.formula}`"
    return f"this {fit.estimator} fit"


def opening(fit: Fit) -> str:
    """How a finding about one fit opens (every fit finding starts so): `` `res` ``, ``The fit of `y ~ x` ``,
    ``This OLS fit``. Under a header that shows the fit's formula, ``in_header`` shortens it."""
    text = describe_fit(fit)
    return text if text.startswith("`") else text[:1].upper() + text[1:]


def in_header(message: str, fit: Fit) -> str:
    """``message`` as listed under a header line that already shows ``fit``'s formula (the text output):
    the words that name an unnamed fit by its formula become "This fit" / "this fit". Named fits keep
    their name; ``--format lines``, JSON, SARIF and the language server keep the message whole."""
    if fit.result_name or not fit.formula:
        return message
    long = describe_fit(fit)
    capital = long[:1].upper() + long[1:]
    if message.startswith(capital):
        return "This fit" + message[len(capital) :]
    return message.replace(long, "this fit", 1)


def fit_related(fit: Fit) -> list[Related]:
    """Related locations of a fit made inside a function: the ``.fit`` inside and the calls between."""
    out: list[Related] = []
    if fit.site != fit.fit_call:
        out.append(related(fit.fit_call, "the fit is made here"))
        for hop in fit.via[:-1]:
            out.append(related(hop, "and returned through here"))
    return out


def use_related(uses: Sequence[Use], limit: int = 3) -> list[Related]:
    out = []
    for use in uses[:limit]:
        what = "inference" if use.kind == "inference" else "estimates"
        out.append(related(use.loc, f"{what} used here (`{use.member}`)"))
    return out


def escape_clause(escapes: list[Escape]) -> str:
    """The sentence added when a result went where regvet cannot look."""
    if not escapes:
        return ""
    names = sorted({e.callee for e in escapes})
    shown = ", ".join(f"`{n}`" for n in names[:3])
    return (
        f" It is also passed to {shown}, which regvet cannot see into: if that runs the check, list it under "
        "`diagnostic_helpers` in the regvet config."
    )


def fix_data(fit: Fit) -> dict | None:
    """What a quick fix needs to edit the fit call in place (only for fits made in this file)."""
    if fit.fit_call.path is not None or fit.site != fit.fit_call:
        return None
    s = fit.fit_call.span
    data: dict = {"fit_call": [s.line, s.col, s.end_line, s.end_col]}
    if fit.statement is not None:
        data["statement"] = [fit.statement.line, fit.statement.col, fit.statement.end_line, fit.statement.end_col]
    if fit.result_name:
        data["result"] = fit.result_name
    return data


def missing_check(rule: Rule, fit: Fit, message: str, uses: list[Use], escapes: list[Escape]) -> Finding:
    """The finding of a check missing on a fit: placed on the fit, related to its uses, with fix data."""
    return rule.fit_finding(fit, message + escape_clause(escapes), uses, fix_data(fit))
