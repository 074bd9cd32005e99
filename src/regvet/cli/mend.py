"""``regvet mend``: apply the quick fixes of the selected rules to the files."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from regvet.cli.common import (
    EXIT_FAILED,
    EXIT_OK,
    EXTRA_EXCLUDE,
    UsageError,
    _rule_list,
    _SettingsFinder,
    collect_files,
)
from regvet.discovery import read_regular
from regvet.engine import analyze
from regvet.model.report import FileReport
from regvet.model.settings import DEFAULT_EXCLUDE, Settings
from regvet.model.span import Span
from regvet.project import FileModules, display_path
from regvet.workspace import project_root


def run_mend(args: argparse.Namespace) -> int:
    """``regvet mend``: apply the quick fixes of the selected rules to every file; ``--preview`` shows a diff."""
    from regvet.engine import analyze_cells
    from regvet.mend import (
        MendError,
        Outcome,
        fixable_rules,
        mend_notebook,
        mend_python,
        read_source,
        replace_file,
        unified_diff,
    )

    fixable = fixable_rules()
    rules = _rule_list(args.only, "--only") or frozenset(fixable)
    unfixable = sorted(rules - set(fixable))
    if unfixable:
        raise UsageError(f"--only: `{unfixable[0]}` has no mechanical fix; mend fixes {', '.join(fixable)}")
    args.skip = None
    finder = _SettingsFinder(args)
    base = finder.for_path(Path(args.paths[0]) if args.paths else Path("."))
    files = collect_files(args.paths, (*DEFAULT_EXCLUDE, *EXTRA_EXCLUDE, *base.exclude))
    roots = {Path(p).resolve() for p in args.paths if Path(p).is_dir()}
    texts: dict[Path, str | None] = {}
    module_cache: dict = {}
    edits = changed = 0
    failed = False
    for file in files:
        shown = display_path(file)
        settings = finder.for_path(file)
        provider = FileModules(project_root(file.resolve(), roots, Path.cwd().resolve()), file, texts)
        try:
            original = read_regular(file)
            if file.suffix == ".ipynb":
                try:
                    text = original.decode("utf-8")
                except UnicodeDecodeError as exc:
                    raise MendError(f"the notebook is not UTF-8: {exc.reason}") from None

                def analyze_notebook(
                    cells: list[tuple[int, str]],
                    count: int,
                    shown: str = shown,
                    settings: Settings = settings,
                    provider: FileModules = provider,
                    key: str = file.stem,
                ) -> FileReport:
                    return analyze_cells(
                        cells, count, shown, settings, provider=provider, module_key=key, module_cache=module_cache
                    )

                outcome: Outcome = mend_notebook(text, analyze_notebook, rules)
                data = outcome.new.encode("utf-8")
            else:
                try:
                    source = read_source(original)
                except MendError:
                    if b"statsmodels" not in original:
                        continue  # nothing to mend in it, and nothing regvet checks there either
                    raise

                def analyze_script(
                    text: str,
                    shown: str = shown,
                    settings: Settings = settings,
                    provider: FileModules = provider,
                    key: str = file.stem,
                ) -> FileReport:
                    return analyze(
                        text,
                        shown,
                        settings,
                        notebook=False,
                        provider=provider,
                        module_key=key,
                        module_cache=module_cache,
                    )

                outcome = mend_python(source.text, analyze_script, rules)
                data = _encode(source, outcome.new)
            if outcome.new != outcome.old:
                if args.preview:
                    sys.stdout.write(unified_diff(shown, outcome))
                else:
                    replace_file(file, data, original)
        except OSError as exc:
            failed = True
            sys.stderr.write(f"{shown}: regvet mend cannot edit the file: {exc.strerror or exc}\n")
            continue
        except MendError as exc:
            failed = True
            sys.stderr.write(f"{shown}: regvet mend left the file as it was: {exc}\n")
            continue
        out = sys.stderr if args.preview else sys.stdout
        for c in outcome.changes:
            where = Span(c.line, 0, c.line, 0, c.cell).describe()
            out.write(f"{shown}, {where}: {c.rule}: {c.title[0].lower() + c.title[1:]}\n")
        for n in outcome.not_fixed:
            where = Span(n.line, 0, n.line, 0, n.cell).describe()
            out.write(f"{shown}, {where}: {n.rule}: not fixed: {n.why}\n")
        if outcome.changes:
            edits += len(outcome.changes)
            changed += 1
    verb = "would make" if args.preview else "made"
    (sys.stderr if args.preview else sys.stdout).write(
        f"regvet mend: {verb} {edits} edit{'s' if edits != 1 else ''} in {changed} of {len(files)} "
        f"file{'s' if len(files) != 1 else ''}\n"
    )
    return EXIT_FAILED if failed else EXIT_OK


def _encode(source, text: str) -> bytes:
    from regvet.mend import encode_source

    return encode_source(source, text)
