"""Scan speed, side by side in one run: the installed statsmodels package and the standard library.

For each tree, repeated and interleaved (so a load spike on the shared machine hits every
contender alike), each figure the median of its repetitions:

* ``ast_parse``: read and ``ast.parse`` every file, nothing else (the floor);
* ``pyflakes``: pyflakes in process over the same files (``pyflakes.api.checkPath``; the yardstick);
* ``regvet_cold_1`` / ``regvet_cold_2``: ``regvet check`` in process, ``--no-cache``, 1 and 2 jobs;
* ``regvet_warm``: ``regvet check`` with the fact cache full (filled by one run before).

And one small file (``fixtures/demo/01_fare_elasticity.py``) as a whole process:
``python -m pyflakes FILE`` against ``regvet check --no-cache FILE`` and ``regvet check FILE`` with
its cache entry present, each the median of many runs, with regvet's modules byte-compiled as
after any installation.

Targets (issue 12): cold with 1 job at most 2.5x the floor and faster than pyflakes; 2 jobs at
most 1.5x the floor; warm under 10 % of cold; the one-file run no slower than pyflakes'.
"""

from __future__ import annotations

import ast
import compileall
import io
import json
import os
import statistics
import subprocess
import sys
import sysconfig
import tempfile
import time
import warnings
from contextlib import redirect_stderr, redirect_stdout
from pathlib import Path

HERE = Path(__file__).resolve().parent
SMALL = HERE.parent / "fixtures" / "demo" / "01_fare_elasticity.py"


def _trees() -> dict[str, Path]:
    import statsmodels

    return {
        f"statsmodels {statsmodels.__version__}": Path(statsmodels.__file__).parent,
        f"standard library (Python {sys.version.split()[0]})": Path(sysconfig.get_paths()["stdlib"]),
    }


def _files(root: Path) -> list[Path]:
    """The files ``regvet check ROOT`` reads: ``.py`` files outside site-packages and the other default excludes."""
    from regvet.cli import EXTRA_EXCLUDE, collect_files
    from regvet.model.settings import DEFAULT_EXCLUDE

    return [f for f in collect_files([str(root)], (*DEFAULT_EXCLUDE, *EXTRA_EXCLUDE)) if f.suffix == ".py"]


def ast_parse(files: list[Path]) -> float:
    start = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for f in files:
            try:
                ast.parse(f.read_bytes(), filename=str(f))
            except (SyntaxError, ValueError):
                pass
    return time.perf_counter() - start


def pyflakes(files: list[Path]) -> float:
    from pyflakes.api import checkPath
    from pyflakes.reporter import Reporter

    reporter = Reporter(io.StringIO(), io.StringIO())
    start = time.perf_counter()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for f in files:
            checkPath(str(f), reporter)
    return time.perf_counter() - start


def regvet(root: Path, *options: str) -> tuple[float, int]:
    """One in-process ``regvet check`` of ``root``: seconds and number of findings."""
    from regvet.analysis import collect
    from regvet.cli import main

    collect._LITERALS.clear()  # a fresh process starts without it
    out = io.StringIO()
    start = time.perf_counter()
    with redirect_stdout(out), redirect_stderr(io.StringIO()):
        code = main(["check", str(root), "--format", "json", "--no-config", *options])
    elapsed = time.perf_counter() - start
    assert code in (0, 1), f"regvet exited {code}"
    return elapsed, len(json.loads(out.getvalue())["findings"])


def bench_tree(root: Path, repeats: int) -> dict:
    files = _files(root)
    lines = sum(f.read_bytes().count(b"\n") for f in files)
    times: dict[str, list[float]] = {
        k: [] for k in ("ast_parse", "pyflakes", "regvet_cold_1", "regvet_cold_2", "regvet_warm")
    }
    findings = set()
    with tempfile.TemporaryDirectory() as cache:
        os.environ["REGVET_CACHE_DIR"] = cache
        regvet(root, "-j", "2")  # fills the cache for the warm runs
        for _ in range(repeats):
            times["ast_parse"].append(ast_parse(files))
            times["pyflakes"].append(pyflakes(files))
            for key, opts in (
                ("regvet_cold_1", ("--no-cache", "-j", "1")),
                ("regvet_cold_2", ("--no-cache", "-j", "2")),
                ("regvet_warm", ("-j", "2")),
            ):
                elapsed, n = regvet(root, *opts)
                times[key].append(elapsed)
                findings.add(n)
        del os.environ["REGVET_CACHE_DIR"]
    assert len(findings) == 1, f"the runs disagree on the number of findings: {findings}"
    med = {k: round(statistics.median(v), 3) for k, v in times.items()}
    floor = med["ast_parse"]
    return {
        "files": len(files),
        "lines": lines,
        "findings": findings.pop(),
        "repeats": repeats,
        "seconds": med,
        "ratio_to_ast_parse": {k: round(v / floor, 2) for k, v in med.items()},
        "warm_over_cold_1": round(med["regvet_warm"] / med["regvet_cold_1"], 3),
    }


def _process_ms(cmd: list[str], cwd: Path, env: dict) -> float:
    start = time.perf_counter()
    subprocess.run(cmd, cwd=cwd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=False)
    return (time.perf_counter() - start) * 1000


#: The standard-library modules every ``regvet check FILE`` imports because regvet's design uses them
#: (the command line, paths, syntax trees, patterns, enums, dataclasses, annotations).
STDLIB_FLOOR = ("argparse", "pathlib", "ast", "re", "enum", "dataclasses", "typing")


def bench_one_file(runs: int = 21) -> dict:
    import regvet

    compileall.compile_dir(Path(regvet.__file__).parent, quiet=1)  # as an installation leaves it
    with tempfile.TemporaryDirectory() as cache:
        env = {**os.environ, "REGVET_CACHE_DIR": cache}
        env.pop("PYTHONDONTWRITEBYTECODE", None)
        cmds = {
            "pyflakes": [sys.executable, "-m", "pyflakes", SMALL.name],
            "regvet_no_cache": [sys.executable, "-m", "regvet", "check", "--no-cache", SMALL.name],
            "regvet_cached": [sys.executable, "-m", "regvet", "check", SMALL.name],
            "python_alone": [sys.executable, "-c", "pass"],
            # The standard modules regvet's code rests on, imported and nothing else: what no start-up
            # work of regvet's own can go below.
            "stdlib_floor": [sys.executable, "-c", f"import {', '.join(STDLIB_FLOOR)}"],
        }
        _process_ms(cmds["regvet_cached"], SMALL.parent, env)  # fills its cache entry
        times: dict[str, list[float]] = {k: [] for k in cmds}
        for _ in range(runs):
            for key, cmd in cmds.items():
                times[key].append(_process_ms(cmd, SMALL.parent, env))
    med = {k: round(statistics.median(v), 1) for k, v in times.items()}
    return {
        "file": f"fixtures/demo/{SMALL.name}",
        "lines": SMALL.read_text().count("\n"),
        "runs": runs,
        "median_ms": med,
        "min_ms": {k: round(min(v), 1) for k, v in times.items()},
    }


def run(repeats: int = 3) -> dict:
    return {
        "trees": {name: bench_tree(root, repeats) for name, root in _trees().items()},
        "one_file": bench_one_file(),
        "cores": os.cpu_count(),
    }


def summary(result: dict) -> list[str]:
    out = []
    for name, t in result["trees"].items():
        s, r = t["seconds"], t["ratio_to_ast_parse"]
        out.append(
            f"scan of {name} ({t['files']} files, {t['lines']} lines, {t['findings']} findings): "
            f"ast.parse {s['ast_parse']} s, pyflakes {s['pyflakes']} s ({r['pyflakes']}x), regvet cold 1 job "
            f"{s['regvet_cold_1']} s ({r['regvet_cold_1']}x), 2 jobs {s['regvet_cold_2']} s "
            f"({r['regvet_cold_2']}x), warm {s['regvet_warm']} s ({t['warm_over_cold_1']:.1%} of cold)"
        )
    o = result["one_file"]["median_ms"]
    out.append(
        f"one file as a process (median ms): python alone {o['python_alone']}, pyflakes {o['pyflakes']}, "
        f"regvet --no-cache {o['regvet_no_cache']}, regvet cached {o['regvet_cached']}, "
        f"the standard modules regvet imports, alone {o.get('stdlib_floor')}"
    )
    return out


if __name__ == "__main__":
    import platform

    repeats = int(sys.argv[1]) if len(sys.argv) > 1 else 3
    result = run(repeats)
    print("\n".join(summary(result)))
    out = HERE / "results" / "latest.json"  # this section refreshed, the others kept
    data = json.loads(out.read_text()) if out.exists() else {}
    data.update(
        python=platform.python_version(),
        machine=f"{platform.machine()}, {platform.system()}",
        date=time.strftime("%Y-%m-%d"),
        scan=result,
    )
    data.pop("scan_statsmodels", None)  # the one-tree figure this section replaced
    tmp = out.with_suffix(".json.tmp")
    tmp.write_text(json.dumps(data, indent=2) + "\n")
    tmp.replace(out)
    print(f"written to {out.relative_to(HERE.parent)}")
