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

#: The slow groups, by test module (or ``module::test`` prefix): each gets its marker, so that
#: ``make test-fast`` can leave them out. ``make test`` runs everything.
SLOW_GROUPS: dict[str, str] = {
    "test_runtime.py": "runtime",  # the analysed code runs in real child processes
    "test_bench_agreement.py": "runtime",  # the agreement harness runs regvet and the script in child processes
    "test_golden_text.py::test_demo_run_text_matches_the_golden_file": "runtime",
    "test_runtime_rules.py": "runtime",
    "test_runtime_judging.py": "runtime",
    "test_demo.py::test_demo_run_gives_the_documented_findings_from_the_numbers": "runtime",
    "test_demo.py::test_demo_scripts_run": "runtime",
    "test_demo.py::test_demo_notebook_cells_run_in_order": "runtime",
    "test_demo.py::test_demo_data_regenerates_byte_for_byte": "runtime",
    "test_published_examples.py": "runtime",  # runs the published examples' scripts for real
    "test_stats_schema.py::test_the_fit_records_of_a_real_run_match_the_schema": "runtime",
    "test_stats_schema.py::test_a_robust_copy_records_the_fit_it_came_from": "runtime",
    "test_stats_schema.py::test_plot_points_are_downsampled_and_in_time_order": "runtime",
    "test_lsp.py": "server",  # the real language server over stdio and TCP
    "test_lsp_stress.py": "server",  # the real server under stress and hostile input
    "test_baseline.py::test_the_language_server_hides_baselined_findings": "server",
    "test_report.py::test_run_report_has_statistics_coefficients_and_plots": "runtime",
    "test_report.py::test_the_fit_whose_significance_changes_ranks_first": "runtime",
    "test_report.py::test_run_markdown_has_svg_files_beside_it": "runtime",
    "test_report.py::test_progress_line_on_a_terminal_only": "runtime",
    "test_report.py::test_the_report_in_a_real_browser": "browser",  # headless Chromium (and a real run)
    "test_report.py::test_the_browser_check_fails_on_a_broken_page": "browser",
    "test_mend.py::test_killed": "runtime",  # real mend processes killed mid-write
    "test_mend.py::test_a_file_changed_while_mend_works_is_left_alone": "runtime",
    "test_editors.py": "editors",  # Neovim and Emacs, headless
    "test_robustness.py": "scan",
    "test_collector_golden.py": "scan",  # the whole installed statsmodels
    "test_scan_speed.py::test_two": "scan",  # real regvet processes over copies of statsmodels modules
    "test_scan_speed.py::test_warm": "scan",
    "test_scan_speed.py::test_concurrent": "scan",
    "test_scan_speed.py::test_a_killed_run": "scan",
    "test_scan_speed.py::test_parallel_runs": "runtime",
    "test_scan_speed.py::test_a_killed_parallel": "runtime",  # the whole installed statsmodels and standard library
    "test_precommit.py": "precommit",  # the real pre-commit tool builds a hook environment
}


def pytest_collection_modifyitems(config, items):
    for item in items:
        name = item.nodeid.split("/")[-1]
        for prefix, marker in SLOW_GROUPS.items():
            if (
                name == prefix
                or name.startswith((prefix + "::", prefix + "["))
                or ("::" in prefix and name.startswith(prefix))
            ):
                item.add_marker(getattr(pytest.mark, marker))
                break


def pytest_configure(config):
    """Every regvet the tests start (in process or as a subprocess) caches into a folder of this session,
    never into the user's cache; tests of the cache itself set their own."""
    import os
    import tempfile

    if "REGVET_CACHE_DIR" not in os.environ:
        os.environ["REGVET_CACHE_DIR"] = tempfile.mkdtemp(prefix="regvet-test-cache-")


def load_realcode(name: str):
    """A module of ``bench/realcode`` (not a package) by file name, for the tests of the measuring tools."""
    import importlib.util

    path = Path(__file__).resolve().parents[1] / "bench" / "realcode" / f"{name}.py"
    spec = importlib.util.spec_from_file_location(f"realcode_{name}", path)
    assert spec and spec.loader
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module
