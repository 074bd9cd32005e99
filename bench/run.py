"""Benchmarks for regvet, run by ``make bench``. Results go to ``bench/results/latest.json``.

runtime: a script fitting OLS on 10^6 rows and 20 regressors, run plainly and under the probe
(``bench/runtime.py``), and the statistics alone in process (``bench/runtime_stats.py``).

language_server: median latency from ``didChange`` to the matching ``publishDiagnostics``
for generated scripts of about 200, 2,000 and 10,000 lines (debounce 0), and the server's
resident memory over 1,000 edits (see ``bench/lsp.py``).

scan: ``bench/scan.py``: the installed statsmodels package and the standard library, each scanned
side by side by a bare ``ast.parse`` (the floor), pyflakes in process (the yardstick) and
``regvet check`` cold with 1 and 2 jobs and warm; and one small file as a whole process against
``python -m pyflakes``. ``python bench/scan.py`` alone refreshes just that section.
"""

from __future__ import annotations

import json
import platform
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
RESULTS = HERE / "results"


def main() -> int:
    import tempfile

    sys.path.insert(0, str(HERE))
    import lsp
    import runtime
    import runtime_stats
    import scan

    RESULTS.mkdir(exist_ok=True)
    with tempfile.TemporaryDirectory() as tmp:
        server = lsp.run(Path(tmp))
    result = {
        "python": platform.python_version(),
        "machine": f"{platform.machine()}, {platform.system()}",
        "date": time.strftime("%Y-%m-%d"),
        "scan": scan.run(),
        "language_server": server,
        "runtime": runtime.run(),
        "runtime_statistics_in_process": runtime_stats.run(),
    }
    out = RESULTS / "latest.json"
    tmp = out.with_suffix(".json.tmp")
    tmp.write_text(json.dumps(result, indent=2) + "\n")
    tmp.replace(out)
    for line in scan.summary(result["scan"]):
        print(line)
    for row in result["language_server"]["analysis"]:
        print(f"analysis alone, {row['lines']} lines: median {row['median_ms']} ms")
    for row in result["language_server"]["latency"]:
        print(
            f"didChange -> publishDiagnostics, {row['lines']} lines: median {row['median_ms']} ms "
            f"(max {row['max_ms']} ms over {row['edits']} edits)"
        )
    mem = result["language_server"]["memory"]
    print(f"server RSS over 1000 edits of a {mem['lines']}-line script (MB): {mem['rss_mb_after_edits']}")
    rt = result["runtime"]
    print(
        f"runtime mode, OLS n={rt['n']:,} k={rt['k']}: plain run {rt['plain_run_s']} s, under the probe "
        f"{rt['probed_run_s']} s; statistics {rt['statistics_s']} s for a {rt['fit_s']} s fit "
        f"(ratio {rt['statistics_over_fit']}); peak RSS {rt['plain_peak_rss_mb']} -> {rt['probed_peak_rss_mb']} MB "
        f"(design {rt['design_mb']} MB); cached re-run {rt['cached_rerun_s']} s"
    )
    print(f"written to {out.relative_to(HERE.parent)}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
