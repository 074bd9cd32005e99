"""Benchmarks for regvet, run by ``make bench``. Results go to ``bench/results/latest.json``.

runtime: a script fitting OLS on 10^6 rows and 20 regressors, run plainly and under the probe
(``bench/runtime.py``), and the statistics alone in process (``bench/runtime_stats.py``).

language_server: median latency from ``didChange`` to the matching ``publishDiagnostics``
for generated scripts of about 200, 2,000 and 10,000 lines (debounce 0), and the server's
resident memory over 1,000 edits (see ``bench/lsp.py``).

scan-statsmodels: a full ``regvet check`` of the installed statsmodels package (sources and
tests, with project-module resolution as in a real scan) against a bare ``ast.parse`` of the
same files in the same run, so the ratio says what regvet's analysis costs on top of reading.
Each is the median of several repetitions.
"""

from __future__ import annotations

import ast
import io
import json
import platform
import statistics
import sys
import time
import warnings
from contextlib import redirect_stdout
from pathlib import Path

HERE = Path(__file__).resolve().parent
RESULTS = HERE / "results"


def _files(root: Path) -> list[Path]:
    return sorted(p for p in root.rglob("*.py"))


def bare_parse(files: list[Path]) -> float:
    start = time.perf_counter()
    for f in files:
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                ast.parse(f.read_bytes(), filename=str(f))
        except SyntaxError:
            pass
    return time.perf_counter() - start


def regvet_scan(root: Path) -> tuple[float, int, int]:
    from regvet.cli import main

    buf = io.StringIO()
    start = time.perf_counter()
    with redirect_stdout(buf):
        code = main(["check", str(root), "--format", "json", "--no-config"])
    elapsed = time.perf_counter() - start
    findings = json.loads(buf.getvalue())["findings"]
    return elapsed, code, len(findings)


def bench_scan(repeats: int = 3) -> dict:
    import statsmodels

    root = Path(statsmodels.__file__).parent
    files = _files(root)
    lines = sum(f.read_bytes().count(b"\n") for f in files)
    parse_times, scan_times = [], []
    findings = 0
    for _ in range(repeats):
        parse_times.append(bare_parse(files))
        elapsed, code, findings = regvet_scan(root)
        assert code in (0, 1), f"regvet exited {code}"
        scan_times.append(elapsed)
    parse_s, scan_s = statistics.median(parse_times), statistics.median(scan_times)
    return {
        "target": f"statsmodels {statsmodels.__version__} ({len(files)} files, {lines} lines)",
        "ast_parse_s": round(parse_s, 3),
        "regvet_check_s": round(scan_s, 3),
        "ratio": round(scan_s / parse_s, 2),
        "findings": findings,
        "repeats": repeats,
    }


def main() -> int:
    import tempfile

    sys.path.insert(0, str(HERE))
    import lsp
    import runtime
    import runtime_stats

    RESULTS.mkdir(exist_ok=True)
    with tempfile.TemporaryDirectory() as tmp:
        server = lsp.run(Path(tmp))
    result = {
        "python": platform.python_version(),
        "machine": f"{platform.machine()}, {platform.system()}",
        "date": time.strftime("%Y-%m-%d"),
        "scan_statsmodels": bench_scan(),
        "language_server": server,
        "runtime": runtime.run(),
        "runtime_statistics_in_process": runtime_stats.run(),
    }
    out = RESULTS / "latest.json"
    tmp = out.with_suffix(".json.tmp")
    tmp.write_text(json.dumps(result, indent=2) + "\n")
    tmp.replace(out)
    s = result["scan_statsmodels"]
    print(f"scan of {s['target']}: regvet check {s['regvet_check_s']} s, bare ast.parse {s['ast_parse_s']} s, "
          f"ratio {s['ratio']}x ({s['findings']} findings)")  # fmt: skip
    for row in result["language_server"]["analysis"]:
        print(f"analysis alone, {row['lines']} lines: median {row['median_ms']} ms")
    for row in result["language_server"]["latency"]:
        print(f"didChange -> publishDiagnostics, {row['lines']} lines: median {row['median_ms']} ms "
              f"(max {row['max_ms']} ms over {row['edits']} edits)")  # fmt: skip
    mem = result["language_server"]["memory"]
    print(f"server RSS over 1000 edits of a {mem['lines']}-line script (MB): {mem['rss_mb_after_edits']}")
    rt = result["runtime"]
    print(f"runtime mode, OLS n={rt['n']:,} k={rt['k']}: plain run {rt['plain_run_s']} s, under the probe "
          f"{rt['probed_run_s']} s; statistics {rt['statistics_s']} s for a {rt['fit_s']} s fit "
          f"(ratio {rt['statistics_over_fit']}); peak RSS {rt['plain_peak_rss_mb']} -> {rt['probed_peak_rss_mb']} MB "
          f"(design {rt['design_mb']} MB); cached re-run {rt['cached_rerun_s']} s")  # fmt: skip
    print(f"written to {out.relative_to(HERE.parent)}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
