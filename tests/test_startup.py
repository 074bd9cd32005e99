"""Start-up: ``regvet check`` of one file imports only what that run needs (counted, never timed).

Each case runs the real command in a new interpreter and lists the modules it ended with. A run
whose report comes from the fact cache never imports the analysis core or a rule; no run imports
the baseline machinery when there is no baseline, a TOML reader when there is no config file, the
other output formats, the quick-fix rewrites (libcst), the runtime mode or the language server.
The timings are in ``bench/scan.py`` (``bench_one_file``).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

#: A small analysis of our own: a ferry fare fit with no checks (one finding or more).
SCRIPT = """import pandas as pd
import statsmodels.formula.api as smf

trips = pd.read_csv("trips.csv")
res = smf.ols("riders ~ fare + rain", data=trips).fit()
print(res.summary())
"""

#: Never needed by ``regvet check FILE`` (no baseline, no config file, text output).
NEVER = (
    "regvet.baseline",
    "regvet.mend",
    "regvet.audit",
    "regvet.plots",
    "regvet.edits",
    "regvet.runtime",
    "regvet.lsp",
    "regvet.output.sarif",
    "regvet.output.json_out",
    "regvet.output.report_html",
    "regvet.output.report_md",
    "regvet.cli.report",
    "regvet.cli.mend",
    "regvet.cli.baseline",
    "regvet.rules.texts",
    "regvet.model.stats_schema",  # the statistics' TypedDicts only type annotations
    "hashlib",  # loads OpenSSL; the fact cache hashes with CPython's own BLAKE2 (regvet/digest.py)
    "difflib",  # only to suggest a rule for a misspelt waiver
    "traceback",  # only to describe a crash
    "tomllib",
    "libcst",
    "pygls",
    "numpy",
    "pandas",
    "statsmodels",
)
#: Not needed either when the file's report comes from the fact cache.
NOT_WHEN_CACHED = (
    "regvet.engine",
    "regvet.analysis.collect",
    "regvet.analysis.formula",
    "regvet.analysis.regressions",
    "regvet.analysis.state",
    "regvet.sources.notebook",
    "regvet.rules.no_form_test",
    "regvet.rules.no_variance_test",
    "regvet.rules.form_rejected",
    "tempfile",
    "json",
)

RUNNER = (
    "import sys\n"
    "from regvet.cli import main\n"
    "code = main(sys.argv[1:])\n"
    "sys.stdout.flush()\n"
    "sys.stderr.write('\\nMODULES ' + ' '.join(sorted(sys.modules)) + '\\n')\n"
    "sys.exit(code)\n"
)


def _modules(project: Path, cache: Path, *args: str) -> tuple[set[str], subprocess.CompletedProcess]:
    env = {**os.environ, "REGVET_CACHE_DIR": str(cache)}
    proc = subprocess.run(
        [sys.executable, "-c", RUNNER, "check", *args, "fares.py"],
        cwd=project,
        env=env,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert proc.returncode == 1, proc.stderr  # the fit has findings
    line = proc.stderr.rsplit("MODULES ", 1)[1]
    return set(line.split()), proc


@pytest.fixture
def project(tmp_path: Path) -> Path:
    folder = tmp_path / "ferries"
    folder.mkdir()
    (folder / ".git").mkdir()  # the project root: no config file is searched for above it
    (folder / "fares.py").write_text(SCRIPT)
    return folder


def test_an_analysed_file_imports_only_the_static_core_it_uses(project, tmp_path):
    loaded, proc = _modules(project, tmp_path / "cache", "--no-cache")
    assert "no-form-test" in proc.stdout  # it did analyse the file
    assert {"regvet.engine", "regvet.analysis.collect", "regvet.rules.no_form_test"} <= loaded
    assert sorted(m for m in NEVER if m in loaded) == []


def test_a_cached_file_needs_neither_the_analysis_core_nor_the_rules(project, tmp_path):
    cache = tmp_path / "cache"
    first, cold = _modules(project, cache)  # analyses the file and fills its cache entry
    assert "regvet.engine" in first and list(cache.rglob("*.pickle"))
    loaded, warm = _modules(project, cache)
    assert warm.stdout == cold.stdout and "no-form-test" in warm.stdout
    assert sorted(m for m in (*NEVER, *NOT_WHEN_CACHED) if m in loaded) == []


def test_a_config_file_and_a_baseline_are_read_when_they_exist(project, tmp_path):
    """The other side: what the lazy imports leave out is imported as soon as the run needs it."""
    (project / "regvet.toml").write_text('skip = ["no-variance-test"]\n')
    cache = tmp_path / "cache"
    loaded, _ = _modules(project, cache, "--no-cache")
    assert "tomllib" in loaded or "tomli" in loaded
    (project / "regvet-baseline.json").write_text(json.dumps({"format": "regvet-baseline", "version": 1, "files": {}}))
    loaded, proc = _modules(project, cache)
    assert "regvet.baseline" in loaded and "no-form-test" in proc.stdout
