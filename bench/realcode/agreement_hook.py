"""Run one analysis script with statsmodels' OLS/WLS ``fit`` patched to compute reference statistics.

Usage (the harness ``runtime_agreement.py`` starts it in a child process, in the script's folder)::

    python agreement_hook.py SCRIPT OUT.jsonl

Every ``fit`` of an OLS or WLS model called directly from SCRIPT is recorded as one JSON line in
OUT.jsonl: the lines of SCRIPT on the call stack (innermost first), the lines where the model was
built, and the reference statistics computed at once on that same results object with statsmodels'
own public functions (``het_breuschpagan``, ``het_white``, ``linear_reset``, ``jarque_bera``,
``variance_inflation_factor``, ``durbin_watson``, ``acorr_breusch_godfrey``,
``get_robustcov_results``). It imports nothing of regvet: the reference is independent of regvet's
probe. The choices that define *which* test is run (Koenker's BP, ŷ² and ŷ³ for RESET, the lag
count by data frequency, HC3 below 100,000 rows, the whitened model for WLS, White's special form
for wide designs) follow regvet's documented forms so that like is compared with like; each is
decided here from the data, never read from regvet's output.

The last line of OUT.jsonl is ``{"type": "end", "status": "ok"}`` or ``"status": "error"`` with the
exception, when the script raised (fits before that are kept).
"""

from __future__ import annotations

import json
import math
import os
import runpy
import sys
import threading
import traceback
import warnings
from typing import Any

import numpy as np

ROBUST_LARGE_N = 100_000
WHITE_MAX_COLUMNS = 40

#: Reference statistics for the first few runs of one call site only (regvet's JSON has the first run's).
RUNS_PER_SITE = 3

_state = threading.local()
_seq = [0]
_runs: dict[tuple[int, ...], int] = {}


def _clean(v: Any) -> Any:
    try:
        f = float(np.asarray(v, dtype=float).reshape(()))
    except (TypeError, ValueError):
        return None
    return f if math.isfinite(f) else None


def _user_lines(script: str, start: Any) -> list[int]:
    lines = []
    frame = start
    while frame is not None:
        if os.path.abspath(frame.f_code.co_filename) == script:
            lines.append(frame.f_lineno)
        frame = frame.f_back
    return lines


def _lag_count(index: Any) -> int:
    """Breusch-Godfrey lags by data frequency: 12 monthly, 4 quarterly, else 1."""
    import pandas as pd

    freq = None
    try:
        if isinstance(index, pd.PeriodIndex):
            freq = index.freqstr
        else:
            uniq = pd.DatetimeIndex(sorted(set(index)))
            if len(uniq) >= 3:
                freq = pd.infer_freq(uniq)
    except (TypeError, ValueError):
        freq = None
    if not freq:
        return 1
    head = freq.split("-")[0].upper().lstrip("0123456789")
    if head.startswith(("Q", "BQ")):
        return 4
    if head in ("M", "MS", "ME", "BM", "BMS", "BME", "CBM", "CBMS", "CBME"):
        return 12
    return 1


def reference(res: Any, dump: str | None = None) -> tuple[dict[str, Any], dict[str, str]]:
    """Reference statistics of one OLS/WLS results object, flattened: ``{key: value}`` and ``{key: error}``.

    With ``dump``, the whitened design, outcome and time order are saved there (``.npz``) so that the
    harness can recompute a disputed statistic exactly."""
    import pandas as pd
    import statsmodels.api as sm
    from scipy import stats
    from statsmodels.regression.linear_model import WLS
    from statsmodels.stats.diagnostic import acorr_breusch_godfrey, het_breuschpagan, het_white, linear_reset
    from statsmodels.stats.outliers_influence import variance_inflation_factor
    from statsmodels.stats.stattools import durbin_watson, jarque_bera

    out: dict[str, Any] = {}
    errors: dict[str, str] = {}
    model = res.model
    is_wls = isinstance(model, WLS) and type(model).__name__ == "WLS"
    n_all = int(model.wexog.shape[0])
    kept = np.arange(n_all)
    if is_wls:
        w = np.broadcast_to(np.asarray(model.weights, dtype=float), (n_all,))
        kept = np.flatnonzero(w != 0)
    X = np.asarray(model.wexog, dtype=float)[kept]
    y = np.asarray(model.wendog, dtype=float).reshape(-1)[kept]
    u = np.asarray(res.wresid, dtype=float).reshape(-1)[kept]
    yhat = y - u
    n, k = X.shape
    const_weights = not is_wls or bool(
        np.ptp(np.asarray(model.weights, dtype=float)[kept] if np.ndim(model.weights) else [0]) == 0
    )
    has_const = bool(model.k_constant) and const_weights
    # For WLS every test runs on the whitened model, fitted by OLS (statsmodels' own tests would
    # otherwise mix weighted residuals with the unweighted design, or drop the weights: linear_reset).
    if is_wls:
        ref = sm.OLS(y, X).fit()
        if res.cov_type in ("HC0", "HC1", "HC2", "HC3"):
            ref_cov = sm.OLS(y, X).fit(cov_type=res.cov_type)
        else:
            ref_cov = ref
    else:
        ref = res
        ref_cov = res
    Z = X if has_const else np.column_stack([np.ones(n), X])

    def put(prefix: str, fn: Any) -> None:
        try:
            values = fn()
        except Exception as exc:
            errors[prefix] = f"{type(exc).__name__}: {exc}"
            return
        for key, value in values.items():
            out[f"{prefix}.{key}" if key else prefix] = _clean(value)

    def bp() -> dict[str, Any]:
        lm, lmp, f, fp = het_breuschpagan(u, Z)  # robust=True: Koenker
        return {"lm": lm, "lm_pvalue": lmp, "f": f, "f_pvalue": fp}

    put("breusch_pagan", bp)

    p_plus = Z.shape[1]
    white_full = p_plus * (p_plus + 1) // 2 <= WHITE_MAX_COLUMNS

    def white() -> dict[str, Any]:
        if white_full:
            lm, lmp, f, fp = het_white(u, Z)
        else:
            t = yhat - yhat.mean()
            lm, lmp, f, fp = het_breuschpagan(u, np.column_stack([np.ones(n), t, t * t]))
        return {"lm": lm, "lm_pvalue": lmp, "f": f, "f_pvalue": fp}

    put("white", white)
    out["white.form"] = "full" if white_full else "special (ŷ, ŷ²)"

    def reset() -> dict[str, Any]:
        t = linear_reset(ref, power=3, use_f=True)
        return {"f": t.fvalue, "pvalue": t.pvalue}

    put("reset", reset)
    if res.cov_type in ("HC0", "HC1", "HC2", "HC3"):

        def reset_robust() -> dict[str, Any]:
            t = linear_reset(ref_cov, power=3, use_f=True, cov_type=res.cov_type)
            return {"f": t.fvalue, "pvalue": t.pvalue}

        put("reset.robust", reset_robust)

    def jb() -> dict[str, Any]:
        s, p, skew, kurt = jarque_bera(u)
        return {"statistic": s, "pvalue": p, "skew": skew, "kurtosis": kurt}

    put("jarque_bera", jb)

    names = [str(x) for x in model.exog_names]
    const_idx = getattr(model.data, "const_idx", None)

    def vif() -> dict[str, Any]:
        vals = {}
        # Without a constant column the VIFs are still the centred ones (as regvet documents):
        # variance_inflation_factor on the design with a constant column put in front.
        design = X if const_idx is not None else np.column_stack([np.ones(n), X])
        shift = 0 if const_idx is not None else 1
        for j in range(k):
            if j == const_idx:
                continue
            if is_wls:
                # Weighted centred VIF: SS of √w·x_j about its weighted mean over the SSR of √w·x_j on
                # the other whitened columns and √w (statsmodels' OLS for both auxiliary regressions).
                rw = np.sqrt(np.asarray(model.weights, dtype=float)[kept] if np.ndim(model.weights) else np.ones(n))
                others = [c for c in range(k) if c != j and c != const_idx]
                base = rw[:, None]
                tss = sm.OLS(X[:, j], base).fit().ssr
                ssr = sm.OLS(X[:, j], np.column_stack([base, X[:, others]])).fit().ssr
                vals[names[j]] = tss / ssr
            else:
                vals[names[j]] = variance_inflation_factor(design, j + shift)
        return {f"values.{a}": b for a, b in vals.items()}

    put("vif", vif)

    def condition() -> dict[str, Any]:
        norms = np.sqrt((X * X).sum(axis=0))
        s = np.linalg.svd(X / norms, compute_uv=False)
        return {"value": s[0] / s[-1]}

    put("condition_index", condition)

    # Coefficients: the usual SEs (nonrobust) and HC3 (HC1 from 100,000 rows), t with df_resid.
    hc = "HC3" if n < ROBUST_LARGE_N else "HC1"

    def coefs() -> dict[str, Any]:
        plain = res if res.cov_type == "nonrobust" else res.model.fit()
        rob = res.get_robustcov_results(cov_type=hc, use_t=True)
        o: dict[str, Any] = {}
        for j, name in enumerate(names):
            o[f"{name}.estimate"] = np.asarray(plain.params)[j]
            o[f"{name}.se"] = np.asarray(plain.bse)[j]
            o[f"{name}.t"] = np.asarray(plain.tvalues)[j]
            o[f"{name}.p"] = (
                np.asarray(plain.pvalues)[j]
                if plain.use_t
                else 2 * stats.t.sf(abs(np.asarray(plain.tvalues)[j]), plain.df_resid)
            )
            o[f"{name}.se_robust"] = np.asarray(rob.bse)[j]
            o[f"{name}.t_robust"] = np.asarray(rob.tvalues)[j]
            o[f"{name}.p_robust"] = np.asarray(rob.pvalues)[j]
        return o

    put("coef", coefs)

    # Time order: a DatetimeIndex or PeriodIndex on the fit's rows (regvet's default rule).
    labels: Any = getattr(model.data, "row_labels", None)
    timed = isinstance(labels, (pd.DatetimeIndex, pd.PeriodIndex))
    out["time_ordered"] = bool(timed)
    if timed:
        labels = labels[kept]
        repeats = bool(pd.Index(labels).duplicated().any())
        out["time_repeats"] = repeats
        lags = _lag_count(labels)
        out["breusch_godfrey.lags"] = lags
        if not repeats:
            order = np.argsort(np.asarray(labels.asi8 if hasattr(labels, "asi8") else labels), kind="stable")
            put("durbin_watson", lambda: {"": durbin_watson(u[order])})
            if res.cov_type == "nonrobust" and not is_wls and bool(np.all(order == np.arange(n))):
                bg_res = res
            else:
                bg_res = sm.OLS(y[order], X[order]).fit()

            def bg() -> dict[str, Any]:
                r = acorr_breusch_godfrey(bg_res, nlags=lags, result_object=True)
                return {"lm": r.lm, "lm_pvalue": r.lmpval, "f": r.fval, "f_pvalue": r.fpval}

            put("breusch_godfrey", bg)
    if dump is not None:
        order_arr = np.argsort(np.asarray(labels.asi8), kind="stable") if timed and hasattr(labels, "asi8") else None
        np.savez(
            dump,
            X=X,
            y=y,
            order=order_arr if order_arr is not None else np.arange(0),
            lags=out.get("breusch_godfrey.lags", 0),
            has_const=has_const,
            const_idx=-1 if const_idx is None else const_idx,
            hc=hc,
            names=np.array(names),
        )
    out["nobs"] = n
    out["ssr"] = _clean(float(u @ u))
    out["rsquared"] = _clean(res.rsquared)
    out["estimator"] = "WLS" if is_wls else "OLS"
    out["cov_type"] = str(res.cov_type)
    return out, errors


def install(script: str, sink: Any) -> None:
    from statsmodels.regression.linear_model import WLS, RegressionModel

    original_init = RegressionModel.__init__
    original_fit = RegressionModel.fit

    def init(self: Any, *args: Any, **kwargs: Any) -> None:
        original_init(self, *args, **kwargs)
        if not hasattr(self, "_agreement_lines"):
            self._agreement_lines = _user_lines(script, sys._getframe(1))

    def fit(self: Any, *args: Any, **kwargs: Any) -> Any:
        res = original_fit(self, *args, **kwargs)
        caller = sys._getframe(1)
        if (
            getattr(_state, "busy", False)
            or not isinstance(self, WLS)
            or os.path.abspath(caller.f_code.co_filename) != script
        ):
            return res
        lines = _user_lines(script, caller)
        site = tuple(lines)
        _runs[site] = _runs.get(site, 0) + 1
        if _runs[site] > RUNS_PER_SITE:
            return res
        _state.busy = True
        _seq[0] += 1
        record: dict[str, Any] = {
            "type": "fit",
            "seq": _seq[0],
            "lines": lines,
            "model_lines": getattr(self, "_agreement_lines", []),
        }
        try:
            with warnings.catch_warnings(), np.errstate(all="ignore"):
                warnings.simplefilter("ignore")
                designs = os.environ.get("AGREEMENT_DESIGNS")
                dump = os.path.join(designs, f"{_seq[0]}.npz") if designs else None
                record["ref"], record["ref_errors"] = reference(res, dump)
        except Exception as exc:
            record["ref"], record["ref_errors"] = {}, {"all": f"{type(exc).__name__}: {exc}"}
        finally:
            _state.busy = False
        sink.write(json.dumps(record, allow_nan=False) + "\n")
        sink.flush()
        return res

    RegressionModel.__init__ = init
    RegressionModel.fit = fit


def main() -> int:
    script = os.path.abspath(sys.argv[1])
    out_path = sys.argv[2]
    os.environ.setdefault("MPLBACKEND", "Agg")
    with open(out_path, "w", encoding="utf-8") as sink:
        install(script, sink)
        sys.argv = [script]
        sys.path.insert(0, os.path.dirname(script))
        end: dict[str, Any] = {"type": "end", "status": "ok"}
        try:
            runpy.run_path(script, run_name="__main__")
        except SystemExit as exc:
            if exc.code not in (None, 0):
                end = {"type": "end", "status": "error", "error": f"SystemExit: {exc.code}"}
        except BaseException as exc:
            tb = traceback.extract_tb(exc.__traceback__)
            where = next((f.lineno for f in reversed(tb) if os.path.abspath(f.filename) == script), None)
            end = {"type": "end", "status": "error", "error": f"{type(exc).__name__}: {exc}"[:300], "line": where}
        sink.write(json.dumps(end) + "\n")
    return 0


if __name__ == "__main__":
    sys.exit(main())
