"""The analysis engine: source text in, a sorted report out. No file I/O, no printing, no exit.

``analyze`` runs sources -> facts -> rules -> waivers -> severities for one file.
Other project modules (for calls into the project's own helpers) come from the
``provider`` the caller passes in; the CLI reads them from disk, an editor can
serve open buffers.
"""

from __future__ import annotations

import ast
import gc
import time
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import replace
from functools import lru_cache

from regvet.analysis.collect import Collector
from regvet.analysis.modules import ModuleProvider, NoModules
from regvet.analysis.state import Frame, OverBudget
from regvet.model.cells import CellMap
from regvet.model.facts import FileFacts
from regvet.model.finding import Finding, Severity
from regvet.model.report import Crash, FileReport
from regvet.model.runtime import RuntimeFacts
from regvet.model.settings import Settings
from regvet.model.span import Span
from regvet.rules import ALL_RULES, RULES_BY_ID, RuleInput
from regvet.rules.base import one_per_site, robust_reported
from regvet.rules.incomplete_analysis import RULE as _INCOMPLETE
from regvet.rules.incomplete_analysis import crash_findings
from regvet.sources.imports import suggested_spellings
from regvet.sources.notebook import NotebookSource, join_cells, read_notebook
from regvet.sources.python import SourceError, parse, without_broken_cells
from regvet.sources.waivers import Waiver, find_waivers

#: Why the analysis stops on input nested deeper than the analyser's recursion allows.
TOO_DEEP = "the code is nested too deeply for regvet's analyser"
#: Why it stops when the analysis needs more memory than there is.
TOO_BIG = "the analysis ran out of memory"
INCOMPLETE = _INCOMPLETE.id


def mentions_fits(text: str, provider: ModuleProvider) -> bool:
    """Cheap pre-check: does the file mention statsmodels or import a project module that does?"""
    if "statsmodels" in text:
        return True
    if "import" not in text:
        return False
    seen: set[str] = set()
    todo: list[tuple[str, str | None, int]] = list(_imported(text, None))
    steps = 0
    while todo and steps < 500:
        steps += 1
        name, via, level = todo.pop()
        if not name and not level:
            continue
        try:
            found = provider.find(name, level, via)
        except Exception:
            found = None
        if found is None or found.key in seen:
            continue
        seen.add(found.key)
        mentions, imports = _summary(found.text)
        if mentions:
            return True
        todo.extend((name, found.path, level) for name, level in imports)
    return False


@lru_cache(maxsize=4096)
def _summary(text: str) -> tuple[bool, tuple[tuple[str, int], ...]]:
    """Whether a module's text mentions statsmodels, and what it imports: read once per text in a
    process (every file of a scan that imports the module asks again)."""
    return "statsmodels" in text, tuple((name, level) for name, _, level in _imported(text, None))


@contextmanager
def _no_gc_pauses() -> Iterator[None]:
    """Keep the cyclic garbage collector out of one analysis.

    A large module builds a syntax tree and value graph of a few hundred thousand objects, all
    alive until the analysis ends; without this, collections triggered by those allocations
    cost as much as the analysis itself (measured: 10,000 lines, 0.85 s against 0.46 s).
    Reference counting still frees everything that is not cyclic.
    """
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_enabled:
            gc.enable()


def _imported(text: str, importer: str | None) -> list[tuple[str, str | None, int]]:
    """(module, importer, level) for every import in ``text``, with ``from m import n`` also as ``m.n``.

    A scan of the lines that start with ``from`` or ``import``, linear in the text (a regular
    expression here backtracked quadratically over a long run of dots after ``from``).
    """
    out: list[tuple[str, str | None, int]] = []
    for raw in text.split("\n"):
        line = raw.lstrip(" \t")
        if line.startswith("from"):
            start = _blanks(line, 4)
            end = _run(line, start, _module_char)
            at = _blanks(line, end)
            if start == 4 or end == start or at == end or not line.startswith("import", at):
                continue
            first = _blanks(line, at + 6)
            if first == at + 6:
                continue
            if line.startswith("(", first):
                first += 1
            module = line[start:end]
            level = len(module) - len(module.lstrip("."))
            module = module.lstrip(".")
            out.append((module, importer, level))
            names = line[first : _run(line, first, _names_char)]
            for name in (n.strip().split(" ")[0] for n in names.split(",")):
                if name and name != "*":
                    out.append((f"{module}.{name}" if module else name, importer, level))
        elif line.startswith("import"):
            first = _blanks(line, 6)
            end = _run(line, first, _names_char)
            if first == 6 or end == first:
                continue
            for part in line[first:end].split(","):
                out.append((part.strip().split(" ")[0], importer, 0))
    return out


def _module_char(ch: str) -> bool:
    return ch.isalnum() or ch in "_."


def _names_char(ch: str) -> bool:
    return ch.isalnum() or ch in "_., \t"


def _blanks(line: str, i: int) -> int:
    """The index after the spaces and tabs from ``i`` on."""
    return _run(line, i, lambda ch: ch in " \t")


def _run(line: str, i: int, ok) -> int:
    """The index after the characters from ``i`` on for which ``ok`` holds."""
    n = len(line)
    while i < n and ok(line[i]):
        i += 1
    return i


def analyze(
    text: str,
    path: str,
    settings: Settings | None = None,
    *,
    notebook: bool | None = None,
    provider: ModuleProvider | None = None,
    module_key: str = "",
    module_cache: dict | None = None,
    strict: bool = False,
    skip_unrelated: bool = True,
    budget: float | None = None,
) -> FileReport:
    """Analyse one file's text. ``path`` names the file in findings; it is never opened.

    ``notebook`` defaults to ``path.endswith(".ipynb")``. With ``strict`` a crashing
    rule re-raises (for tests) instead of being reported as a :class:`Crash`. With
    ``skip_unrelated`` (the default) a file that mentions no statsmodels, directly or
    through the project modules it imports, is not parsed at all.

    It never raises (unless ``strict``): input too deep or too large for the analysis gives an
    ``incomplete-analysis`` finding, and a failure of regvet itself a :class:`Crash` with the same
    finding, so a scan keeps every other file's findings. The collection of facts stops after
    ``budget`` seconds (default: the ``analysis_budget`` setting) with that finding too.
    """
    with _no_gc_pauses():
        try:
            return _analyze(
                text, path, settings, notebook, provider, module_key, module_cache, strict, skip_unrelated, budget
            )
        except (RecursionError, MemoryError) as exc:  # deeper or larger than the analyser can follow
            if strict:
                raise
            return _stopped(path, settings, TOO_DEEP if isinstance(exc, RecursionError) else TOO_BIG)
        except Exception as exc:  # a bug in regvet outside the guarded stages: the file still gets its report
            if strict:
                raise
            return failure_report(path, Crash("analysis", _describe(exc)), settings)


def _analyze(
    text: str,
    path: str,
    settings: Settings | None,
    notebook: bool | None,
    provider: ModuleProvider | None,
    module_key: str,
    module_cache: dict | None,
    strict: bool,
    skip_unrelated: bool,
    budget: float | None,
) -> FileReport:
    settings = settings or Settings()
    is_nb = path.endswith(".ipynb") if notebook is None else notebook
    if is_nb:
        nb = read_notebook(text)
        if isinstance(nb, SourceError):
            return _finish(path, settings, RuleInput(FileFacts(), settings, (), nb), None, (), strict, None)
        return _analyze_python(
            nb.python, path, settings, provider, module_key, module_cache, strict, skip_unrelated, nb, budget
        )
    return _analyze_python(
        text, path, settings, provider, module_key, module_cache, strict, skip_unrelated, None, budget
    )


def analyze_cells(
    code_cells: list[tuple[int, str]],
    cell_count: int,
    path: str,
    settings: Settings | None = None,
    *,
    provider: ModuleProvider | None = None,
    module_key: str = "",
    module_cache: dict | None = None,
    strict: bool = False,
    budget: float | None = None,
) -> FileReport:
    """Analyse a notebook given as ``(cell index, source)`` code cells (as an editor syncs them)."""
    with _no_gc_pauses():
        try:
            nb = join_cells(code_cells, cell_count)
            return _analyze_python(
                nb.python, path, settings or Settings(), provider, module_key, module_cache, strict, True, nb, budget
            )
        except (RecursionError, MemoryError) as exc:  # deeper or larger than the analyser can follow
            if strict:
                raise
            return _stopped(path, settings, TOO_DEEP if isinstance(exc, RecursionError) else TOO_BIG)
        except Exception as exc:
            if strict:
                raise
            return failure_report(path, Crash("analysis", _describe(exc)), settings)


def failure_report(path: str, crash: Crash, settings: Settings | None = None) -> FileReport:
    """The report of a file regvet failed on outside the stages that guard themselves (or whose worker
    process died): the crash, and its ``incomplete-analysis`` finding."""
    settings = settings or Settings()
    return _finish(path, settings, RuleInput(FileFacts(), settings), None, (crash,), False, None)


def _stopped(path: str, settings: Settings | None, why: str) -> FileReport:
    """The report of a file whose analysis reached one of its bounds outside the guarded stages."""
    settings = settings or Settings()
    return _finish(path, settings, RuleInput(FileFacts(), settings, stopped=(why,)), None, (), False, None)


def _analyze_python(
    python: str,
    path: str,
    settings: Settings,
    provider: ModuleProvider | None,
    module_key: str,
    module_cache: dict | None,
    strict: bool,
    skip_unrelated: bool,
    nb: NotebookSource | None,
    budget: float | None = None,
) -> FileReport:
    started = time.monotonic()
    budget = settings.analysis_budget if budget is None else budget
    provider = provider or NoModules()
    cell_map = nb.cell_map if nb is not None else None
    cell_count = nb.cell_count if nb is not None else None
    if skip_unrelated and not mentions_fits(python, provider):
        return FileReport(path, skipped=True, cell_count=cell_count)
    if len(python) > settings.analysis_max_mb * 1_000_000:
        # Parsing alone takes about 100 bytes of memory per byte of code: a bound that holds whatever the file.
        size = len(python.encode("utf-8", "surrogatepass")) / 1e6
        why = f"its Python code is {size:.1f} MB, more than `analysis_max_mb` ({settings.analysis_max_mb} MB)"
        return replace(_stopped(path, settings, why), cell_count=cell_count)
    tree = parse(python, path)
    broken: tuple[SourceError, ...] = ()
    if isinstance(tree, SourceError) and cell_map is not None:
        python, broken = without_broken_cells(python, cell_map.starts)
        if broken:
            tree = parse(python, path)
    waivers = tuple(find_waivers(python, RULES_BY_ID))
    if isinstance(tree, SourceError):
        inp = RuleInput(FileFacts(), settings, waivers, tree, cell_map)
        return replace(_finish(path, settings, inp, cell_map, (), strict, cell_count), python=python)
    crashes: list[Crash] = []
    stopped: tuple[str, ...] = ()
    over_budget = False
    try:
        collector = _BudgetedCollector(provider, settings.helper_families(), module_key, _parse_module, module_cache)
        collector.deadline = started + budget
        facts = collector.run(tree, python)
    except OverBudget:
        facts = FileFacts()
        over_budget = True
        stopped = (f"it took longer than its time budget of {budget:g} s (`analysis_budget`)",)
    except (RecursionError, MemoryError) as exc:  # input deeper or larger than the analyser can follow
        if strict:
            raise
        facts = FileFacts()
        stopped = (TOO_DEEP if isinstance(exc, RecursionError) else TOO_BIG,)
    except Exception as exc:  # a bug in regvet: report it with the file, keep scanning
        if strict:
            raise
        facts = FileFacts()
        crashes.append(Crash("analysis", _describe(exc)))
    spellings = suggested_spellings(tree) if facts.fits else ()
    inp = RuleInput(
        facts, settings, waivers, cell_map=cell_map, stopped=stopped, spellings=spellings, broken_cells=broken
    )
    report = _finish(path, settings, inp, cell_map, tuple(crashes), strict, cell_count)
    return replace(report, python=python, over_budget=over_budget)


class _BudgetedCollector(Collector):
    """The collector with its clock: every statement it runs is counted (``tick``), so it stops
    with :class:`OverBudget` once its deadline has passed."""

    def exec_stmt(self, stmt: ast.stmt, frame: Frame) -> None:
        self.tick()
        super().exec_stmt(stmt, frame)


def error_report(path: str, error: SourceError, settings: Settings | None = None) -> FileReport:
    """The report for a file that could not even be read (one ``parse-error`` finding)."""
    settings = settings or Settings()
    return _finish(path, settings, RuleInput(FileFacts(), settings, (), error), None, (), False, None)


def _parse_module(text: str, path: str) -> ast.Module | None:
    tree = parse(text, path)
    return None if isinstance(tree, SourceError) else tree


def _describe(exc: BaseException) -> str:
    import traceback

    tb = traceback.extract_tb(exc.__traceback__)
    where = f" ({tb[-1].filename.rsplit('/', 1)[-1]}:{tb[-1].lineno})" if tb else ""
    return f"{type(exc).__name__}: {exc}{where}"


def _finish(
    path: str,
    settings: Settings,
    inp: RuleInput,
    cell_map: CellMap | None,
    crashes: tuple[Crash, ...],
    strict: bool,
    cell_count: int | None,
) -> FileReport:
    findings: list[Finding] = []
    all_crashes = list(crashes)
    inp = replace(inp, known_rules=frozenset(r.id for r in ALL_RULES))
    for rule in ALL_RULES:
        if not settings.enabled(rule.id):
            continue
        try:
            findings.extend(one_per_site(inp, robust_reported(inp, rule, rule.check(inp))))
        except Exception as exc:
            if strict:
                raise
            all_crashes.append(Crash(rule.id, _describe(exc)))
    if all_crashes and settings.enabled(INCOMPLETE):
        findings.extend(crash_findings(all_crashes))
    if inp.runtime is not None:
        from regvet.rules.evidence import attach

        findings = attach(findings, inp, comparing=frozenset(r.id for r in ALL_RULES if r.compares_fits))
    unwaivable = frozenset(r.id for r in ALL_RULES if not r.waivable)
    findings = _apply_waivers(_dedupe(findings), inp.waivers, unwaivable)
    findings = [_with_severity(f, settings) for f in findings]
    if cell_map is not None:
        findings = [_to_cells(f, cell_map) for f in findings]
    findings.sort(key=Finding.sort_key)
    return FileReport(
        path,
        tuple(findings),
        tuple(all_crashes),
        facts=inp.facts,
        cell_count=cell_count,
        cell_map=cell_map,
        rule_input=inp,
    )


def with_runtime(report: FileReport, runtime: RuntimeFacts, settings: Settings | None = None) -> FileReport:
    """The report again, with the rules also judging what a run showed (statistics and failures).

    The facts are reused: nothing is parsed or collected a second time.
    """
    if not isinstance(report.rule_input, RuleInput):
        return report
    settings = settings or report.rule_input.settings
    inp = replace(report.rule_input, runtime=runtime, settings=settings)
    crashes = tuple(c for c in report.crashes if c.where == "analysis")
    judged = _finish(report.path, settings, inp, report.cell_map, crashes, False, report.cell_count)
    return replace(judged, python=report.python)


def _dedupe(findings: list[Finding]) -> list[Finding]:
    seen: dict[tuple, Finding] = {}
    for f in findings:
        seen.setdefault((f.rule, f.span, f.message), f)
    return list(seen.values())


def _apply_waivers(findings: list[Finding], waivers: tuple[Waiver, ...], unwaivable: frozenset[str]) -> list[Finding]:
    """Mark the findings a valid waiver covers; the findings of rules that are not waivable stay as they are."""
    valid = [w for w in waivers if w.reason is not None and not w.malformed]
    if not valid:
        return findings
    out = []
    for f in findings:
        if f.rule in unwaivable:
            out.append(f)
            continue
        reason = None
        for w in valid:
            if f.rule not in w.rules:
                continue
            if w.file_wide or w.span.line == f.span.line or (w.alone and w.span.line == f.span.line - 1):
                reason = w.reason
                break
        out.append(f.with_(waived=True, reason=reason) if reason is not None else f)
    return out


def _with_severity(f: Finding, settings: Settings) -> Finding:
    override = settings.severity_for(f.rule)
    return f.with_(severity=Severity.parse(override)) if override else f


def _to_cells(f: Finding, cell_map: CellMap) -> Finding:
    related = tuple(
        r if r.path is not None else r.__class__(cell_map.span(r.span), r.message, r.path) for r in f.related
    )
    fix = f.fix
    if fix is not None:
        fix = dict(fix, cell=cell_map.locate(f.span.line)[0])
        for key in ("fit_call", "statement", "waiver"):
            if key in fix:
                s = cell_map.span(Span(*fix[key]))
                fix[key] = [s.line, s.col, s.end_line, s.end_col]
    return f.with_(span=cell_map.span(f.span), related=related, fix=fix)
