"""Shared helpers for the test suite."""

from __future__ import annotations

import re
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
FIXTURES = ROOT / "fixtures"
_MARK = re.compile(r"#\s*expect:\s*([a-z0-9, -]+?)\s*$")


def expected_markers(code: str, rule: str | None = None) -> list[tuple[int, str]]:
    """(line, rule) for every ``# expect: RULE[, RULE]`` marker, optionally for one rule."""
    out = []
    for number, line in enumerate(code.split("\n"), start=1):
        m = _MARK.search(line)
        if not m:
            continue
        for rid in (r.strip() for r in m.group(1).split(",")):
            if rid and (rule is None or rid == rule):
                out.append((number, rid))
    return sorted(out)


def found(report, rule: str | None = None, include_waived: bool = False) -> list[tuple[int, str]]:
    return sorted(
        (f.span.line, f.rule)
        for f in report.findings
        if (rule is None or f.rule == rule) and (include_waived or not f.waived)
    )


@pytest.fixture
def run_cli(capsys):
    """Run ``regvet`` in-process: returns (exit code, stdout, stderr)."""
    from regvet.cli import main

    def _run(*argv: str) -> tuple[int, str, str]:
        code = main(list(argv))
        out, err = capsys.readouterr()
        return code, out, err

    return _run


sys.path.insert(0, str(Path(__file__).parent))
