"""Check regvet's runtime statistics against statsmodels' own functions on real analysis scripts.

Usage::

    python bench/realcode/runtime_agreement.py --folder ../corpus/EconMaett+UPfIE
        [--regvet .venv/bin/regvet] [--out bench/results/runtime_agreement.json] [--limit N]
        [--timeout 300] [--no-exact]

1. ``regvet run --format json --no-baseline --no-cache --no-config --jobs 1`` once over the
   folder's Python scripts that build an OLS or WLS model (run from the folder, so every path is
   relative to it). A fit's statistics reach the JSON on its findings (``stats.fits``); the
   findings about one fit (its line, one fit each) give regvet's statistics of that fit.
2. Each script again, in a child process of its own, under ``agreement_hook.py``: statsmodels'
   ``fit`` patched to compute reference statistics on each results object with statsmodels' own
   public functions, and to record the script's lines on the call stack.
3. regvet's fits paired with the reference fits by file and line (the fit call's line, or a line
   of the call stack, or the model's line); a pair whose rows, SSR or R² differ (an unseeded
   simulation gives other data on the second run) is not compared but listed.
4. Every statistic and p-value compared (relative tolerance ``RTOL``, absolute floor ``P_FLOOR``
   for p-values) and each p-value's 5 % decision; every disagreement recomputed exactly with
   mpmath (``exact.py``, 50 digits) and classified by which side the exact value agrees with.

Scripts that fail to run are counted and listed with the reason, for both sides; bad input never
stops the harness. Writes OUT (JSON, paths relative to the folder) and prints a summary.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import re
import shlex
import subprocess
import sys
import tempfile
from collections import Counter, defaultdict
from datetime import datetime, timezone
from pathlib import Path
from typing import Any

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent.parent
HOOK = HERE / "agreement_hook.py"

RTOL = 1e-6
P_FLOOR = 1e-12
ALPHA = 0.05
#: Findings whose span starts at the fit they are about (one fit each).
FIT_RULES = {
    "no-form-test",
    "no-variance-test",
    "no-serial-test",
    "no-break-test",
    "heteroskedastic-plain-se",
    "form-rejected",
    "nonnormal-small-sample",
    "hc-small-sample",
    "collinear-design",
    "serial-correlation-plain-se",
    "break-rejected",
    "rank-lost-to-scaling",
}
#: The reference beside each statistic (the group key: test and field; coefficients by field).
REFERENCE = {
    "breusch_pagan": "statsmodels.stats.diagnostic.het_breuschpagan(resid, exog) (robust=True, Koenker)",
    "white": "statsmodels.stats.diagnostic.het_white(resid, exog); special form: het_breuschpagan(resid, [1, ŷ, ŷ²])",
    "reset": "statsmodels.stats.diagnostic.linear_reset(res, power=3, use_f=True)",
    "reset.robust": "statsmodels.stats.diagnostic.linear_reset(res, power=3, use_f=True, cov_type=res.cov_type)",
    "jarque_bera": "statsmodels.stats.stattools.jarque_bera(resid)",
    "vif": "statsmodels.stats.outliers_influence.variance_inflation_factor(exog, j) (WLS: weighted, by sm.OLS)",
    "condition_index": "numpy.linalg.svd of the design with unit-length columns (BKW; no statsmodels function)",
    "durbin_watson": "statsmodels.stats.stattools.durbin_watson(resid in time order)",
    "breusch_godfrey": "statsmodels.stats.diagnostic.acorr_breusch_godfrey(res, nlags=lags)",
    "coef": "res.params/bse/tvalues/pvalues; robust: res.get_robustcov_results(cov_type='HC3', use_t=True)",
}
PAIRING = ("nobs", "ssr", "rsquared")


# --------------------------------------------------------------------------------------------
# Running


def scripts_in(folder: Path, limit: int | None) -> list[str]:
    """The folder's Python scripts that build an OLS or WLS model (relative paths, sorted)."""
    out = []
    pattern = re.compile(r"\b(ols|OLS|wls|WLS)\s*\(")
    for path in sorted(folder.rglob("*.py")):
        if any(part.startswith(".") for part in path.relative_to(folder).parts):
            continue
        try:
            text = path.read_text(encoding="utf-8", errors="replace")
        except OSError:
            continue
        if pattern.search(text):
            out.append(path.relative_to(folder).as_posix())
    return out[:limit] if limit else out


def run_regvet(
    regvet: list[str], folder: Path, files: list[str], timeout: float, run_timeout: float | None = None
) -> tuple[list[dict[str, Any]], str | None]:
    """regvet's findings (JSON) over the files, or an error text. With ``run_timeout``, regvet's
    defaults but that wall-clock limit per script (a ``regvet.toml`` of one line, ``--config``)."""
    with tempfile.TemporaryDirectory(prefix="rt-agree-config-") as tmp:
        config = ["--no-config"]
        if run_timeout is not None:
            path = Path(tmp) / "regvet.toml"
            path.write_text(f"run_timeout = {float(run_timeout)!r}\n", encoding="utf-8")
            config = ["--config", str(path)]
        cmd = [*regvet, "run", "--format", "json", "--no-baseline", "--no-cache", *config, "--jobs", "1", *files]
        try:
            proc = subprocess.run(
                cmd, cwd=folder, capture_output=True, text=True, check=False, timeout=timeout, stdin=subprocess.DEVNULL
            )
        except (OSError, subprocess.TimeoutExpired) as exc:
            return [], f"regvet did not run: {exc}"
    try:
        return list(json.loads(proc.stdout)["findings"]), None
    except (ValueError, KeyError, TypeError):
        return [], f"regvet gave no JSON (exit {proc.returncode}): {proc.stderr.strip()[:500]}"


def run_reference(python: str, folder: Path, rel: str, work: Path, timeout: float) -> dict[str, Any]:
    """Run one script under the hook: its fit records and how it ended."""
    script = (folder / rel).resolve()
    out = work / "fits.jsonl"
    designs = work / "designs"
    designs.mkdir(parents=True, exist_ok=True)
    env = dict(os.environ, MPLBACKEND="Agg", AGREEMENT_DESIGNS=str(designs))
    end: dict[str, Any] = {"status": "error", "error": "no end record (the child was killed or crashed)"}
    try:
        proc = subprocess.run(
            [python, str(HOOK), str(script), str(out)],
            cwd=script.parent,
            capture_output=True,
            text=True,
            check=False,
            timeout=timeout,
            stdin=subprocess.DEVNULL,
            env=env,
        )
        if proc.returncode != 0:
            end["error"] = f"exit {proc.returncode}: {proc.stderr.strip()[-300:]}"
    except subprocess.TimeoutExpired:
        end = {"status": "error", "error": f"timed out after {timeout:g} s"}
    except OSError as exc:
        end = {"status": "error", "error": f"could not start: {exc}"}
    fits = []
    if out.exists():
        for line in out.read_text(encoding="utf-8").splitlines():
            try:
                rec = json.loads(line)
            except ValueError:
                continue
            if rec.get("type") == "fit":
                rec["design"] = str(designs / f"{rec['seq']}.npz")
                fits.append(rec)
            elif rec.get("type") == "end":
                end = rec
    return {"fits": fits, "end": end}


# --------------------------------------------------------------------------------------------
# regvet's side


def flatten(st: dict[str, Any]) -> dict[str, Any]:
    """regvet's statistics of one fit under the reference's keys (None where regvet has no value)."""
    out: dict[str, Any] = {}
    for test in ("breusch_pagan", "white"):
        d = st.get(test) or {}
        for key in ("lm", "lm_pvalue", "f", "f_pvalue"):
            out[f"{test}.{key}"] = d.get(key)
    white = st.get("white")
    out["white.form"] = white.get("form") if white else None
    reset = st.get("reset") or {}
    out["reset.f"], out["reset.pvalue"] = reset.get("f"), reset.get("pvalue")
    out["reset.df_num"] = reset.get("df_num")
    robust = reset.get("robust") or {}
    out["reset.robust.f"], out["reset.robust.pvalue"] = robust.get("f"), robust.get("pvalue")
    jb = st.get("jarque_bera") or {}
    for key in ("statistic", "pvalue", "skew", "kurtosis"):
        out[f"jarque_bera.{key}"] = jb.get(key)
    for name, value in ((st.get("vif") or {}).get("values") or {}).items():
        out[f"vif.values.{name}"] = value
    out["condition_index.value"] = (st.get("condition_index") or {}).get("value")
    for c in st.get("coefficients") or []:
        for key in ("estimate", "se", "t", "p", "se_robust", "t_robust", "p_robust"):
            out[f"coef.{c['name']}.{key}"] = c.get(key)
    out["time_ordered"] = st.get("time_ordered") is not None
    out["durbin_watson"] = st.get("durbin_watson")
    bg = st.get("breusch_godfrey") or {}
    for key in ("lm", "lm_pvalue", "f", "f_pvalue"):
        out[f"breusch_godfrey.{key}"] = bg.get(key)
    out["breusch_godfrey.lags"] = bg.get("lags")
    for key in PAIRING:
        out[key] = st.get(key)
    out["robust_type"] = next((c.get("robust_type") for c in st.get("coefficients") or []), None)
    return out


def regvet_fits(findings: list[dict[str, Any]]) -> tuple[dict[str, list[dict[str, Any]]], dict[str, str]]:
    """Per file: regvet's distinct fits with statistics ({line, fit, stats}); and run failures."""
    fits: dict[str, list[dict[str, Any]]] = defaultdict(list)
    seen: set[tuple[str, int, str]] = set()
    failed: dict[str, str] = {}
    for f in findings:
        if f.get("rule") == "run-failed":
            failed.setdefault(f["path"], f"line {f.get('line')}: {f.get('message', '')[:300]}")
        stats = f.get("stats")
        if f.get("rule") not in FIT_RULES or not stats or len(stats.get("fits") or []) != 1:
            continue
        ev = stats["fits"][0]
        text = json.dumps(ev["statistics"], sort_keys=True)
        key = (f["path"], int(f["line"]), text)
        if key in seen:
            continue
        seen.add(key)
        fits[f["path"]].append(
            {"line": int(f["line"]), "fit": ev.get("fit"), "runs": ev.get("runs"), "stats": ev["statistics"]}
        )
    return fits, failed


# --------------------------------------------------------------------------------------------
# Comparing


def close(a: float, b: float, pvalue: bool) -> bool:
    if a == b:
        return True
    if pvalue and abs(a - b) <= P_FLOOR:
        return True
    return abs(a - b) <= RTOL * max(abs(a), abs(b))


def is_pvalue(key: str) -> bool:
    last = key.rsplit(".", 1)[-1]
    return last in ("pvalue", "lm_pvalue", "f_pvalue", "p", "p_robust")


def group_of(key: str) -> str:
    """The per-statistic group: test.field; coefficients and VIFs by field."""
    parts = key.split(".")
    if parts[0] == "coef":
        return f"coef.{parts[-1]}"
    if parts[0] == "vif":
        return "vif"
    if parts[0] == "reset" and parts[1] == "robust":
        return f"reset.robust.{parts[2]}"
    return ".".join(parts[:2])


def reference_name(key: str) -> str:
    parts = key.split(".")
    if parts[0] == "reset" and len(parts) > 2 and parts[1] == "robust":
        return REFERENCE["reset.robust"]
    return REFERENCE.get(parts[0], "?")


COMPARED_PREFIXES = (
    "breusch_pagan.",
    "white.",
    "reset.",
    "jarque_bera.",
    "vif.",
    "condition_index.",
    "coef.",
    "durbin_watson",
    "breusch_godfrey.",
)
NOT_STATISTICS = {"white.form", "reset.df_num", "breusch_godfrey.lags"}


def pair_fits(
    regvet: list[dict[str, Any]], ref: list[dict[str, Any]]
) -> tuple[list[tuple[dict[str, Any], dict[str, Any]]], list[dict[str, Any]]]:
    """Pair regvet's fits (by finding line) with the reference fits (by call-stack or model line)."""
    pairs = []
    unpaired = []
    used: set[int] = set()
    by_line: dict[int, list[dict[str, Any]]] = defaultdict(list)
    for r in regvet:
        by_line[r["line"]].append(r)
    for line, entries in sorted(by_line.items()):
        cands = [f for f in ref if f["lines"] and f["lines"][0] == line]
        if not cands:
            cands = [f for f in ref if line in f["lines"]]
        if not cands:
            cands = [f for f in ref if line in f.get("model_lines", [])]
        cands = sorted(cands, key=lambda f: f["seq"])
        for entry in entries:
            free = [f for f in cands if f["seq"] not in used]
            if len(entries) > 1:
                # Several distinct regvet fits at one line (a helper called from two places): the
                # reference fit with the same rows and SSR, else the next one in run order.
                same = [f for f in free if _same_data(entry["stats"], f["ref"])]
                free = same or free
            if not free:
                unpaired.append({"line": line, "fit": entry["fit"], "why": "no reference fit at this line"})
                continue
            chosen = free[0]
            if len(entries) > 1:
                used.add(chosen["seq"])
            pairs.append((entry, chosen))
    return pairs, unpaired


def _same_data(st: dict[str, Any], ref: dict[str, Any]) -> bool:
    if st.get("nobs") != ref.get("nobs"):
        return False
    a, b = st.get("ssr"), ref.get("ssr")
    if a is None or b is None:
        return a == b
    return abs(a - b) <= 1e-6 * max(abs(a), abs(b), 1e-300)


def classify(
    key: str, mine: Any, ref: Any, rv: dict[str, Any], rf: dict[str, Any], st: dict[str, Any], exact_value: Any
) -> str:
    """One line: why the two differ (and which is right, from the exact value when there is one)."""
    errors = st.get("errors") or {}
    head = key.split(".")[0]
    if st.get("scaled_refit"):
        base = "statsmodels lost rank on the raw columns and regvet refitted in the scaled basis (scaled_refit)"
    else:
        base = ""
    if mine is None:
        why = errors.get("reset_robust" if ".robust." in key else head) or errors.get(head) or ""
        if head == "coef":
            why = errors.get("coefficients", why)
        text = f"regvet gives no value ({why[:160]})" if why else "regvet gives no value"
        if exact_value is None:
            return "regvet gives no value and the exact statistic is undefined: regvet is right" + f" ({why[:160]})"
        if isinstance(exact_value, (int, float)):
            return text + "; the exact statistic is defined"
        return text
    if ref is None:
        return "the reference gives no value"
    if head == "white" and rv.get("white.form") != rf.get("white.form"):
        return "White: different forms (full vs special)"
    if head == "reset" and rv.get("reset.df_num") not in (None, 2):
        return f"RESET: regvet identifies {rv.get('reset.df_num')} power(s); linear_reset always adds 2"
    if head == "breusch_godfrey" and rv.get("breusch_godfrey.lags") != rf.get("breusch_godfrey.lags"):
        return f"Breusch-Godfrey: lags differ (regvet {rv.get('breusch_godfrey.lags')}, reference {rf.get('breusch_godfrey.lags')})"
    if head in ("white", "breusch_pagan", "breusch_godfrey") and not key.endswith(".lm"):
        lm_r, lm_s = rv.get(f"{head}.lm"), rf.get(f"{head}.lm")
        if lm_r is not None and lm_s is not None and close(lm_r, lm_s, False):
            base = (
                "the LM statistics agree, the degrees of freedom differ: statsmodels takes the rank of the "
                "auxiliary design on its raw (badly scaled) columns" + (f"; {base}" if base else "")
            )
    if isinstance(exact_value, (int, float)):
        ok_r = close(mine, exact_value, is_pvalue(key)) or _closer(mine, ref, exact_value)
        ok_s = close(ref, exact_value, is_pvalue(key)) or _closer(ref, mine, exact_value)
        if ok_r and not ok_s:
            return "statsmodels is wrong: regvet equals the exact value" + (f"; {base}" if base else "")
        if ok_s and not ok_r:
            return "regvet is wrong: statsmodels equals the exact value" + (f"; {base}" if base else "")
        return "neither equals the exact value" + (f"; {base}" if base else "")
    if isinstance(exact_value, str):
        return f"undecided: exact reference {exact_value}" + (f"; {base}" if base else "")
    return "undecided" + (f"; {base}" if base else "")


def _closer(a: float, b: float, exact: float) -> bool:
    """a is at least 100 times closer to the exact value than b."""
    return abs(a - exact) * 100 <= abs(b - exact)


def compare_pair(
    entry: dict[str, Any], rec: dict[str, Any], use_exact: bool, exact_cache: dict[str, Any]
) -> tuple[list[dict[str, Any]], list[tuple[str, str, bool | None]], str | None]:
    """All comparisons of one pair: (disagreements, [(group, outcome, decision_agrees)], skip reason)."""
    st = entry["stats"]
    rv = flatten(st)
    rf = rec["ref"]
    ref_errors = rec.get("ref_errors") or {}
    for key in PAIRING:
        a, b = rv.get(key), rf.get(key)
        if a is None or b is None or not close(float(a), float(b), False):
            return (
                [],
                [],
                f"not the same data: {key} regvet {a}, reference {b} (an unseeded simulation, or a pairing by line that fails)",
            )
    results: list[tuple[str, str, bool | None]] = []
    disagreements: list[dict[str, Any]] = []
    if rv["time_ordered"] != rf.get("time_ordered"):
        disagreements.append(
            {
                "statistic": "time_ordered",
                "regvet": rv["time_ordered"],
                "reference": rf.get("time_ordered"),
                "reason": "time order judged differently",
            }
        )
    keys = sorted(k for k in set(rv) | set(rf) if k.startswith(COMPARED_PREFIXES) and k not in NOT_STATISTICS)
    for key in keys:
        if (
            key.startswith("reset.robust")
            and "reset.robust.f" not in rf
            and not any(e.startswith("reset.robust") for e in ref_errors)
        ):
            continue  # not an HC fit: no robust RESET on either side
        if key.startswith(("durbin_watson", "breusch_godfrey")) and not (rv["time_ordered"] or rf.get("time_ordered")):
            continue
        mine, ref = rv.get(key), rf.get(key)
        group = group_of(key)
        if mine is None and ref is None:
            results.append((group, "both_undefined", None))
            continue
        pv = is_pvalue(key)
        agree = mine is not None and ref is not None and close(float(mine), float(ref), pv)
        decision = None
        if pv and mine is not None and ref is not None:
            decision = (mine < ALPHA) == (ref < ALPHA)
        if agree:
            results.append((group, "agree", decision))
            continue
        exact_value: Any = None
        if use_exact:
            exact_value = _exact(rec, key, exact_cache)
        reason = classify(key, mine, ref, rv, rf, st, exact_value)
        results.append((group, "disagree", decision))
        disagreements.append(
            {
                "statistic": key,
                "regvet": mine,
                "reference": ref,
                "reference_function": reference_name(key),
                "exact": exact_value,
                "decision_5pct_agrees": decision,
                "reason": reason,
            }
        )
    return disagreements, results, None


def _exact(rec: dict[str, Any], key: str, cache: dict[str, Any]) -> Any:
    """The exact value of a statistic for this fit, or a short text why there is none."""
    try:
        import numpy as np

        if str(HERE) not in sys.path:
            sys.path.insert(0, str(HERE))
        from exact import ExactFit
    except ImportError as exc:
        return f"not computed ({exc})"
    path = rec.get("design")
    if not path or not Path(path).exists():
        return "not computed (no saved design)"
    try:
        fit = cache.get(path)
        if fit is None:
            with np.load(path) as data:
                if data["X"].shape[0] * data["X"].shape[1] ** 2 > 5_000_000:
                    return "not computed (design too large for 50-digit arithmetic)"
                fit = ExactFit(data)
            cache.clear()
            cache[path] = fit
        value = fit.value(key)
        return value if value is None or math.isfinite(value) else None
    except Exception as exc:
        return f"not computed ({type(exc).__name__}: {str(exc)[:120]})"


# --------------------------------------------------------------------------------------------
# The whole run


def measure(
    folder: Path,
    regvet: list[str],
    python: str,
    limit: int | None = None,
    timeout: float = 300.0,
    use_exact: bool = True,
    log: Any = None,
    run_timeout: float | None = None,
) -> dict[str, Any]:
    files = scripts_in(folder, limit)
    if log is not None:
        print(f"regvet run over {len(files)} scripts ...", file=log, flush=True)
    findings, regvet_error = run_regvet(regvet, folder, files, 600 + timeout * max(len(files), 1), run_timeout)
    by_file, regvet_failed = regvet_fits(findings)
    per_stat: dict[str, Counter[str]] = defaultdict(Counter)
    per_file: dict[str, Any] = {}
    disagreements: list[dict[str, Any]] = []
    failed_scripts: list[dict[str, Any]] = []
    not_same: list[dict[str, Any]] = []
    unpaired_all: list[dict[str, Any]] = []
    totals: Counter[str] = Counter()
    exact_cache: dict[str, Any] = {}
    ref_sites: list[tuple[str, list[int]]] = []
    compared_ref_sites: list[tuple[str, list[int]]] = []
    with tempfile.TemporaryDirectory(prefix="rt-agree-") as tmp:
        for i, rel in enumerate(files):
            work = Path(tmp) / str(i)
            work.mkdir()
            run = run_reference(python, folder, rel, work, timeout)
            ref_fits = run["fits"]
            ref_sites.extend((rel, f["lines"]) for f in ref_fits)
            if run["end"].get("status") != "ok" or rel in regvet_failed:
                failed_scripts.append(
                    {
                        "file": rel,
                        "reference": None
                        if run["end"].get("status") == "ok"
                        else _scrub(run["end"].get("error", ""), folder),
                        "regvet": _scrub(regvet_failed[rel], folder) if rel in regvet_failed else None,
                    }
                )
            pairs, unpaired = pair_fits(by_file.get(rel, []), ref_fits)
            for u in unpaired:
                unpaired_all.append({"file": rel, **u})
            counts: Counter[str] = Counter()
            counts["reference_fits"] = len(ref_fits)
            counts["regvet_fits"] = len(by_file.get(rel, []))
            for entry, rec in pairs:
                dis, res, skip = compare_pair(entry, rec, use_exact, exact_cache)
                if skip:
                    not_same.append({"file": rel, "line": entry["line"], "fit": entry["fit"], "why": skip})
                    counts["pairs_not_same_data"] += 1
                    continue
                counts["fits_compared"] += 1
                compared_ref_sites.append((rel, rec["lines"]))
                for group, outcome, decision in res:
                    per_stat[group][outcome] += 1
                    counts[outcome] += 1
                    if outcome != "both_undefined":
                        per_stat[group]["compared"] += 1
                        counts["compared"] += 1
                    if decision is not None:
                        per_stat[group]["decisions"] += 1
                        per_stat[group]["decision_agree" if decision else "decision_disagree"] += 1
                for d in dis:
                    disagreements.append(
                        {"file": rel, "line": entry["line"], "fit": entry["fit"], "reference_seq": rec["seq"], **d}
                    )
                    if d["statistic"] == "time_ordered":
                        counts["time_order_differs"] += 1
            per_file[rel] = dict(counts)
            totals.update(counts)
            if log is not None:
                print(f"[{i + 1}/{len(files)}] {rel}: {dict(counts)}", file=log, flush=True)
            exact_cache.clear()
    classes = Counter(_class_of(d["reason"]) for d in disagreements)
    sites = {(f, tuple(x)) for f, x in ref_sites}
    compared_sites = {(f, tuple(x)) for f, x in compared_ref_sites}
    compared = totals["compared"]
    return {
        "generated": datetime.now(timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ"),
        "folder": folder.name,
        "tolerance": {"rtol": RTOL, "p_value_absolute_floor": P_FLOOR, "alpha": ALPHA},
        "limits": {"regvet_run_timeout_s": run_timeout, "reference_timeout_s": timeout},
        "references": REFERENCE,
        "regvet_error": regvet_error,
        "summary": {
            "scripts": len(files),
            "scripts_failed": len(failed_scripts),
            "reference_fits": totals["reference_fits"],
            "reference_call_sites": len(sites),
            "reference_call_sites_compared": len(compared_sites & sites),
            "regvet_fits_with_statistics": totals["regvet_fits"],
            "fits_compared": totals["fits_compared"],
            "pairs_not_same_data": totals["pairs_not_same_data"],
            "regvet_fits_unpaired": len(unpaired_all),
            "statistics_compared": compared,
            "agree": totals["agree"],
            "disagree": totals["disagree"],
            "both_undefined": totals["both_undefined"],
            "agreement_rate": round(totals["agree"] / compared, 6) if compared else None,
            "decisions_compared": sum(c["decisions"] for c in per_stat.values()),
            "decisions_agree": sum(c["decision_agree"] for c in per_stat.values()),
            "disagreements_by_class": dict(classes.most_common()),
        },
        "per_statistic": {g: dict(c) for g, c in sorted(per_stat.items())},
        "per_file": per_file,
        "disagreements": disagreements,
        "failed_scripts": failed_scripts,
        "pairs_not_same_data": not_same,
        "regvet_fits_unpaired": unpaired_all,
    }


def _class_of(reason: str) -> str:
    """The class of a disagreement: its reason up to the first parenthesis or semicolon."""
    return re.split(r"[(;]", reason, maxsplit=1)[0].strip()


def _scrub(text: str, folder: Path) -> str:
    """No absolute machine paths in the output."""
    text = text.replace(str(folder.resolve()) + os.sep, "").replace(str(folder.resolve()), ".")
    return re.sub(r"(/[^\s'\"]+)+/", "", text)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--folder", required=True, type=Path, help="the corpus folder (one repository's scripts)")
    default_regvet = ROOT / ".venv" / "bin" / "regvet"
    ap.add_argument(
        "--regvet",
        default=str(default_regvet) if default_regvet.exists() else f"{sys.executable} -m regvet",
        help="the regvet command to run (default: the repository's .venv/bin/regvet)",
    )
    ap.add_argument("--python", default=sys.executable, help="the interpreter that runs the scripts under the hook")
    ap.add_argument("--out", type=Path, default=ROOT / "bench" / "results" / "runtime_agreement.json")
    ap.add_argument("--limit", type=int, default=None, help="only the first N scripts")
    ap.add_argument("--timeout", type=float, default=300.0, help="seconds per script")
    ap.add_argument(
        "--run-timeout", type=float, default=None, help="regvet's run_timeout per script (default: its own)"
    )
    ap.add_argument("--no-exact", action="store_true", help="do not recompute disagreements with mpmath")
    args = ap.parse_args(argv)
    folder = args.folder.resolve()
    if not folder.is_dir():
        print(f"runtime_agreement: no folder {args.folder}", file=sys.stderr)
        return 2
    result = measure(
        folder,
        shlex.split(args.regvet),
        args.python,
        args.limit,
        args.timeout,
        not args.no_exact,
        log=sys.stderr,
        run_timeout=args.run_timeout,
    )
    args.out.parent.mkdir(parents=True, exist_ok=True)
    args.out.write_text(json.dumps(result, indent=1, ensure_ascii=False, allow_nan=False) + "\n", encoding="utf-8")
    s = result["summary"]
    print(json.dumps(s, indent=1, ensure_ascii=False))
    return 0 if result["regvet_error"] is None else 1


if __name__ == "__main__":
    sys.exit(main())
