"""Runtime-mode benchmark: a generated script fitting OLS on n = 10^6 rows and k = 20 regressors.

Three runs of the same script in child processes: plainly (``python script.py``), and under
the probe through regvet's runner (twice: the statistics are computed the first time; the
second is a cache hit and executes nothing). Reported: wall time of each, the fit's own time
and the statistics' time for that fit (their ratio; target < 1.0), and peak resident memory
of the plain and probed runs against the design matrix's size (target: the probe adds less
than twice the design). In-process figures from ``runtime_stats.py`` (tracemalloc) are kept
beside them.
"""

from __future__ import annotations

import json
import subprocess
import sys
import tempfile
import textwrap
from pathlib import Path

N, K = 1_000_000, 20
SCRIPT = textwrap.dedent(
    f"""\
    import time
    import numpy as np
    import statsmodels.api as sm

    rng = np.random.default_rng(20261202)
    X = np.column_stack([np.ones({N}), rng.normal(size=({N}, {K}))])
    beta = np.linspace(-1.0, 1.0, {K} + 1)
    y = X @ beta + rng.normal(size={N}) * (1.0 + 0.5 * np.abs(X[:, 1]))
    start = time.perf_counter()
    res = sm.OLS(y, X).fit()
    fit_seconds = time.perf_counter() - start
    print("FIT_SECONDS", fit_seconds)
    print(res.params[:3])
    """
)

MEASURE = """
import json, resource, subprocess, sys, time
start = time.perf_counter()
{body}
elapsed = time.perf_counter() - start
print(json.dumps({{"elapsed": elapsed, "maxrss_mb": resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024,
                  "extra": extra}}))
"""


def _measure(body: str) -> dict:
    proc = subprocess.run(
        [sys.executable, "-c", MEASURE.format(body=body)], capture_output=True, text=True, check=True, timeout=1800
    )
    return json.loads(proc.stdout.strip().split("\n")[-1])


def run() -> dict:
    with tempfile.TemporaryDirectory() as tmp:
        script = Path(tmp) / "big_fit.py"
        script.write_text(SCRIPT)
        plain = _measure(
            f"out = subprocess.run([sys.executable, {str(script)!r}], capture_output=True, text=True, check=True).stdout\n"
            "extra = float([l for l in out.split(chr(10)) if l.startswith('FIT_SECONDS')][0].split()[1])"
        )
        runner = (
            "from pathlib import Path\nfrom regvet.runtime.runner import RunCache, run\n"
            f"r = run(Path({str(script)!r}), cache=RunCache(Path({tmp!r}) / 'cache'), timeout=1200, memory_mb=None)\n"
            "fit = r.fits[0]\n"
            "extra = {'stats_seconds': fit['stats_seconds'], 'cached': r.cached,"
            " 'fit_seconds': float([l for l in r.output_tail if l.startswith('FIT_SECONDS')][0].split()[1]) if r.output_tail else None}"
        )
        probed = _measure(runner)
        cached = _measure(runner)
    design_mb = N * (K + 1) * 8 / 2**20
    fit_s = probed["extra"]["fit_seconds"]
    stats_s = probed["extra"]["stats_seconds"]
    return {
        "n": N,
        "k": K,
        "design_mb": round(design_mb, 1),
        "plain_run_s": round(plain["elapsed"], 2),
        "probed_run_s": round(probed["elapsed"], 2),
        "probe_added_s": round(probed["elapsed"] - plain["elapsed"], 2),
        "fit_s": round(fit_s, 3),
        "statistics_s": round(stats_s, 3),
        "statistics_over_fit": round(stats_s / fit_s, 2),
        "cached_rerun_s": round(cached["elapsed"], 2),
        "cached": cached["extra"]["cached"],
        "plain_peak_rss_mb": round(plain["maxrss_mb"], 1),
        "probed_peak_rss_mb": round(probed["maxrss_mb"], 1),
        "probe_added_rss_mb": round(probed["maxrss_mb"] - plain["maxrss_mb"], 1),
        "probe_added_over_design": round((probed["maxrss_mb"] - plain["maxrss_mb"]) / design_mb, 2),
    }


if __name__ == "__main__":
    print(json.dumps(run(), indent=2))
