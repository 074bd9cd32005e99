"""Benchmark of the runtime probe's statistics (``regvet_stats.fit_statistics``).

A generated OLS fit with n = 1,000,000 rows and k = 20 regressors plus a constant (fixed seed,
heteroskedastic errors): the time of ``sm.OLS(y, X).fit()`` against the time of
``fit_statistics(res)`` with the default options (their ratio; target < 1.0), and the peak of
memory traced by ``tracemalloc`` while ``fit_statistics`` runs, against the design matrix's size
``X.nbytes`` (target: under 2 x X.nbytes on top of what the fit itself holds).

``run()`` returns a JSON-safe dict; ``python bench/runtime_stats.py`` prints it.
"""

from __future__ import annotations

import gc
import json
import statistics
import sys
import time
import tracemalloc
import warnings
from pathlib import Path
from typing import Any

PROBE = Path(__file__).resolve().parents[1] / "src" / "regvet" / "runtime" / "probe"


def _probe() -> Any:
    """Import the probe module the way the runtime mode does: from its directory on sys.path."""
    if str(PROBE) not in sys.path:
        sys.path.insert(0, str(PROBE))
    import regvet_stats

    return regvet_stats


def _data(n: int, k: int, seed: int) -> tuple[Any, Any]:
    import numpy as np

    rng = np.random.default_rng(seed)
    X = np.empty((n, k + 1))
    X[:, 0] = 1.0
    X[:, 1:] = rng.standard_normal((n, k))
    X[:, 2] += 0.5 * X[:, 1]  # some collinearity
    beta = rng.standard_normal(k + 1)
    y = X @ beta + rng.standard_normal(n) * (1.0 + 0.5 * np.abs(X[:, 1]))
    return X, y


def run(n: int = 1_000_000, k: int = 20, repeats: int = 3, seed: int = 0) -> dict[str, Any]:
    """Time the fit and the statistics (median of ``repeats``), then trace the statistics' peak memory."""
    import numpy as np
    import statsmodels.api as sm

    stats_mod = _probe()
    X, y = _data(n, k, seed)
    fit_times, stat_times = [], []
    result: dict[str, Any] = {}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for _ in range(repeats):
            gc.collect()
            start = time.perf_counter()
            res = sm.OLS(y, X).fit()
            fit_times.append(time.perf_counter() - start)
            gc.collect()
            start = time.perf_counter()
            result = stats_mod.fit_statistics(res)
            stat_times.append(time.perf_counter() - start)
        # Peak memory on a fresh fit, so no lazily computed attribute (resid, fittedvalues) is cached yet.
        res = sm.OLS(y, X).fit()
        gc.collect()
        tracemalloc.start()
        base, _ = tracemalloc.get_traced_memory()
        stats_mod.fit_statistics(res)
        _, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
    json.dumps(result, allow_nan=False)  # the output is JSON-safe
    fit_s, stat_s = statistics.median(fit_times), statistics.median(stat_times)
    peak_bytes = peak - base
    return {
        "target": f"OLS fit, n = {n:,}, k = {k} regressors + constant",
        "fit_s": round(fit_s, 3),
        "fit_statistics_s": round(stat_s, 3),
        "ratio": round(stat_s / fit_s, 3),
        "peak_bytes": int(peak_bytes),
        "design_bytes": int(X.nbytes),
        "peak_over_design": round(peak_bytes / X.nbytes, 3),
        "robust_se": result["coefficients"][0]["robust_type"],
        "white_form": result["white"]["form"],
        "errors": result["errors"],
        "repeats": repeats,
        "numpy": np.__version__,
        "statsmodels": sm.__version__ if hasattr(sm, "__version__") else None,
    }


if __name__ == "__main__":
    print(json.dumps(run(), indent=2))
