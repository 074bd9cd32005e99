"""The parallel scan and the fact cache: the same findings as one job without a cache, whatever happens.

Everything here runs real ``regvet`` processes (or real worker processes) on real files: the demo,
copies of statsmodels' own modules, and small invented projects (a harbour's crane models) whose
helper modules change between runs.
"""

from __future__ import annotations

import os
import pickle
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from regvet.factcache import FORMAT
from regvet.parallel import map_ordered

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "fixtures" / "demo"


def regvet(*args: str, cache: Path | None, cwd: Path, env: dict | None = None) -> subprocess.CompletedProcess:
    full_env = {**os.environ, **(env or {})}
    if cache is not None:
        full_env["REGVET_CACHE_DIR"] = str(cache)
    return subprocess.run(
        [sys.executable, "-m", "regvet", *args], cwd=cwd, env=full_env, capture_output=True, text=True, timeout=600
    )


def _statsmodels_copies(dest: Path, count: int = 20) -> Path:
    """Copies of statsmodels' own modules that fit models (and their neighbours, for relative imports)."""
    import statsmodels

    src = Path(statsmodels.__file__).parent
    for sub in ("regression",):
        shutil.copytree(src / sub, dest / sub, ignore=shutil.ignore_patterns("__pycache__", "results", "*.csv"))
    files = sorted(dest.rglob("*.py"))
    assert len(files) >= count
    return dest


@pytest.fixture(scope="module")
def copies(tmp_path_factory) -> Path:
    return _statsmodels_copies(tmp_path_factory.mktemp("sm"))


def test_two_jobs_give_the_same_output_as_one(copies, tmp_path):
    one = regvet("check", ".", "--format", "json", "--no-config", "--no-cache", "-j", "1", cache=None, cwd=copies)
    two = regvet("check", ".", "--format", "json", "--no-config", "--no-cache", "-j", "2", cache=None, cwd=copies)
    assert one.returncode in (0, 1) and one.stderr == ""
    assert two.stdout == one.stdout and two.returncode == one.returncode and two.stderr == ""
    assert one.stdout.count('"rule"') > 10  # statsmodels' tests fit many models without checks
    text1 = regvet("check", ".", "--no-cache", "-j", "1", cache=None, cwd=DEMO)
    text2 = regvet("check", ".", "--no-cache", "-j", "2", cache=None, cwd=DEMO)
    assert text2.stdout == text1.stdout and "finding" in text1.stdout


def test_warm_run_reads_the_cache_and_gives_the_same_output(copies, tmp_path):
    cache = tmp_path / "cache"
    plain = regvet("check", ".", "--format", "sarif", "--no-config", "--no-cache", cache=cache, cwd=copies)
    assert not cache.exists()  # --no-cache writes nothing
    cold = regvet("check", ".", "--format", "sarif", "--no-config", cache=cache, cwd=copies)
    entries = sorted(cache.rglob("*.pickle"))
    assert len(entries) == len(list(copies.rglob("*.py")))
    stamps = [e.stat().st_mtime_ns for e in entries]
    warm = regvet("check", ".", "--format", "sarif", "--no-config", cache=cache, cwd=copies)
    assert cold.stdout == plain.stdout == warm.stdout and warm.returncode == plain.returncode
    assert [e.stat().st_mtime_ns for e in sorted(cache.rglob("*.pickle"))] == stamps  # read, not rewritten


HELPER = """import statsmodels.formula.api as smf


def fit_lifts(df):
    return smf.ols("lifts ~ wind + shift_hours", data=df).fit()
"""
CHECKED_HELPER = HELPER.replace(
    "    return smf.ols(", "    from statsmodels.stats.diagnostic import linear_reset\n\n    res = smf.ols("
).replace(".fit()\n", ".fit()\n    linear_reset(res, power=3, use_f=True)\n    return res\n")
MAIN = """import pandas as pd
from crane_helpers import fit_lifts

df = pd.read_csv("cranes.csv")
res = fit_lifts(df)
print(res.params)
"""


def _rules(proc: subprocess.CompletedProcess) -> list[str]:
    import json

    return sorted(f["rule"] for f in json.loads(proc.stdout)["findings"])


def test_a_changed_helper_module_re_analyses_the_file_that_imports_it(tmp_path):
    project, cache = tmp_path / "harbour", tmp_path / "cache"
    project.mkdir()
    (project / "crane_helpers.py").write_text(HELPER)
    (project / "model_lifts.py").write_text(MAIN)
    first = regvet("check", "model_lifts.py", "--format", "json", cache=cache, cwd=project)
    assert "no-form-test" in _rules(first)
    (project / "crane_helpers.py").write_text(CHECKED_HELPER)  # only the helper changes
    second = regvet("check", "model_lifts.py", "--format", "json", cache=cache, cwd=project)
    fresh = regvet("check", "model_lifts.py", "--format", "json", "--no-cache", cache=None, cwd=project)
    assert "no-form-test" not in _rules(second) and second.stdout == fresh.stdout


def test_a_new_module_that_an_import_now_finds_re_analyses_the_file(tmp_path):
    project, cache = tmp_path / "harbour", tmp_path / "cache"
    project.mkdir()
    (project / "model_lifts.py").write_text(MAIN)
    before = regvet("check", "model_lifts.py", "--format", "json", cache=cache, cwd=project)
    assert _rules(before) == []  # crane_helpers is not there: fit_lifts is some library's function
    (project / "crane_helpers.py").write_text(HELPER)
    after = regvet("check", "model_lifts.py", "--format", "json", cache=cache, cwd=project)
    assert "no-form-test" in _rules(after)


QUAY_PLAIN = """def fit_lifts(df):
    return None
"""
BERTHS = """import model_lifts_north
from quay import fit_lifts


def berth_count():
    return 12
"""
LIFTS = """import pandas as pd
from berths import fit_lifts

df = pd.read_csv("lifts.csv")
res = fit_lifts(df)
print(res.params)
"""


def _stamps(cache: Path) -> dict[Path, int]:
    return {e: e.stat().st_mtime_ns for e in cache.rglob("*.pickle")}


def test_lookups_shared_by_the_files_of_a_scan_stay_right(tmp_path):
    """Files skipped unread (nothing in reach mentions statsmodels) share their module lookups in a
    warm scan: an unchanged tree reads every entry and rewrites none; a helper two imports away that
    starts fitting models re-analyses every file that reaches it. ``berths`` imports one of the
    files that import it, which its own lookups must never find (the memo is per analysed file there)."""
    project, cache = tmp_path / "harbour", tmp_path / "cache"
    project.mkdir()
    (project / "quay.py").write_text(QUAY_PLAIN)
    (project / "berths.py").write_text(BERTHS)
    for side in ("north", "south", "east"):
        (project / f"model_lifts_{side}.py").write_text(LIFTS)
    args = ("check", ".", "--format", "json", "--no-config", "-j", "1")
    cold = regvet(*args, cache=cache, cwd=project)
    assert cold.returncode == 0 and _rules(cold) == []
    stamps = _stamps(cache)
    assert len(stamps) == 5
    warm = regvet(*args, cache=cache, cwd=project)
    assert warm.stdout == cold.stdout and _stamps(cache) == stamps  # every entry read, none rewritten
    (project / "quay.py").write_text(HELPER)  # the helper now fits a model without a RESET test
    changed = regvet(*args, cache=cache, cwd=project)
    fresh = regvet(*args, "--no-cache", cache=None, cwd=project)
    assert changed.stdout == fresh.stdout
    assert _rules(changed).count("no-form-test") == 3  # each model_lifts_* file, through berths and quay
    again = _stamps(cache)
    assert len(again) == 6 and sum(again[e] != t for e, t in stamps.items()) == 4  # berths and its importers
    assert regvet(*args, cache=cache, cwd=project).stdout == fresh.stdout and _stamps(cache) == again


def test_settings_change_the_key_and_the_key_is_stable_across_processes(tmp_path):
    cache = tmp_path / "cache"
    args = (
        "check",
        "02_weather_effects.py",
        "--format",
        "json",
        "--only",
        "no-form-test,no-variance-test,no-break-test",
    )
    a = regvet(*args, cache=cache, cwd=DEMO, env={"PYTHONHASHSEED": "1"})
    n = len(list(cache.rglob("*.pickle")))
    b = regvet(*args, cache=cache, cwd=DEMO, env={"PYTHONHASHSEED": "2"})  # sets hash in another order
    assert a.stdout == b.stdout and len(list(cache.rglob("*.pickle"))) == n
    c = regvet("check", "02_weather_effects.py", "--format", "json", "--only", "no-form-test", cache=cache, cwd=DEMO)
    assert len(list(cache.rglob("*.pickle"))) == n + 1
    assert set(_rules(c)) == {"no-form-test"} and set(_rules(a)) > {"no-form-test"}


def test_concurrent_runs_share_one_cache_safely(copies, tmp_path):
    cache = tmp_path / "cache"
    expected = regvet("check", ".", "--format", "json", "--no-config", "--no-cache", cache=None, cwd=copies).stdout
    env = {**os.environ, "REGVET_CACHE_DIR": str(cache)}
    procs = [
        subprocess.Popen(
            [sys.executable, "-m", "regvet", "check", ".", "--format", "json", "--no-config", "-j", "1"],
            cwd=copies,
            env=env,
            stdout=subprocess.PIPE,
            text=True,
        )
        for _ in range(2)
    ]
    outs = [p.communicate(timeout=600)[0] for p in procs]
    assert outs == [expected, expected]
    warm = regvet("check", ".", "--format", "json", "--no-config", cache=cache, cwd=copies)
    assert warm.stdout == expected


def test_a_killed_run_leaves_no_partial_entry(copies, tmp_path):
    cache = tmp_path / "cache"
    env = {**os.environ, "REGVET_CACHE_DIR": str(cache)}
    proc = subprocess.Popen(
        [sys.executable, "-m", "regvet", "check", ".", "--no-config", "-j", "2"],
        cwd=copies,
        env=env,
        stdout=subprocess.DEVNULL,
        start_new_session=True,
    )
    deadline = time.monotonic() + 120
    while time.monotonic() < deadline and len(list(cache.rglob("*.pickle"))) < 3:
        time.sleep(0.02)
    os.killpg(proc.pid, signal.SIGKILL)  # the run and its workers, in the middle of the scan
    proc.wait()
    entries = list(cache.rglob("*.pickle"))
    assert 3 <= len(entries) < len(list(copies.rglob("*.py")))
    for entry in entries:  # every entry under its final name is whole
        with open(entry, "rb") as fh:
            fmt, _groups, report = pickle.load(fh)
        assert fmt == FORMAT and report.path.endswith(".py")
    expected = regvet("check", ".", "--format", "json", "--no-config", "--no-cache", cache=None, cwd=copies).stdout
    assert regvet("check", ".", "--format", "json", "--no-config", cache=cache, cwd=copies).stdout == expected


# --- the pool itself, with real worker processes -------------------------------------------------
def _doubler(die_on: str):  # a worker factory: module-level, so the pool can name it
    def work(item: str) -> str:
        if item == die_on:
            os.kill(os.getpid(), signal.SIGKILL)
        if item == "raise":
            raise ValueError("refused")
        return item * 2

    return work


def _lost(item: str, why: str) -> str:
    return f"lost {item}: {why}"


def test_a_dead_worker_costs_only_its_own_item():
    items = [f"f{i}" for i in range(30)]
    items[17] = "boom"
    items[4] = "raise"
    out = map_ordered(_doubler, ("boom",), items, 2, _lost)
    assert out[17] == "lost boom: the worker process analysing it was killed (SIGKILL)"
    assert out[4].startswith("lost raise: the worker process failed: ValueError: refused")
    assert [o for i, o in enumerate(out) if i not in (4, 17)] == [
        x * 2 for i, x in enumerate(items) if i not in (4, 17)
    ]


def test_one_job_runs_in_this_process():
    pid = os.getpid()
    assert map_ordered(lambda: (lambda item: (item, os.getpid())), (), ["a", "b"], 1, _lost) == [("a", pid), ("b", pid)]


# --- regvet run --jobs ------------------------------------------------------------------------------
CRANE = """import time

import numpy as np
import statsmodels.api as sm

time.sleep({pause})
rng = np.random.default_rng({n})
wind = rng.normal(8, 2, {n})
lifts = 30 - 1.2 * wind + rng.normal(0, 1, {n})
res = sm.OLS(lifts, sm.add_constant(wind)).fit()
print(res.params)
"""


def _crane_scripts(folder: Path, sizes: list[int], pause: float = 0) -> None:
    folder.mkdir(exist_ok=True)
    for n in sizes:
        (folder / f"crane_{n}.py").write_text(CRANE.format(n=n, pause=pause if n % 20 else 0))


def test_parallel_runs_keep_each_file_with_its_own_statistics(tmp_path):
    import json

    project = tmp_path / "cranes"
    _crane_scripts(project, [40, 55, 60, 75], pause=0.5)  # two of them finish later than the others
    one = regvet("run", ".", "--format", "json", "--no-cache", "-j", "1", cache=tmp_path / "c1", cwd=project)
    two = regvet("run", ".", "--format", "json", "--no-cache", "-j", "2", cache=tmp_path / "c2", cwd=project)
    assert two.stdout == one.stdout and two.returncode == one.returncode == 1
    findings = json.loads(two.stdout)["findings"]
    assert [f["path"] for f in findings] == ["crane_40.py", "crane_55.py", "crane_60.py", "crane_75.py"]
    for f in findings:  # each file's findings carry the statistics of its own run (n rows)
        n = int(f["path"][len("crane_") : -3])
        assert f["stats"]["fits"][0]["statistics"]["nobs"] == n


def test_a_killed_parallel_run_leaves_no_partial_run_entry(tmp_path):
    import json

    project, cache = tmp_path / "cranes", tmp_path / "cache"
    _crane_scripts(project, [40, 45, 50, 55, 60, 65], pause=2)
    env = {**os.environ, "REGVET_CACHE_DIR": str(cache)}
    proc = subprocess.Popen(
        [sys.executable, "-m", "regvet", "run", ".", "-j", "2"],
        cwd=project,
        env=env,
        stdout=subprocess.DEVNULL,
        start_new_session=True,
    )
    deadline = time.monotonic() + 120
    while time.monotonic() < deadline and not list(cache.glob("*.json")):
        time.sleep(0.02)
    os.killpg(proc.pid, signal.SIGKILL)
    proc.wait()
    entries = list(cache.glob("*.json"))
    assert 1 <= len(entries) < 6
    for entry in entries:  # whole entries only, under their final names
        assert "result" in json.loads(entry.read_text())
