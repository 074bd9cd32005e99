"""The run's cells of ``regvet report --run``: the collinearity row and the comparison tables.

Invented analyses (a harbour, its pilots, a ferry operator, a bakery's deliveries; fixed seeds) are
reported with ``regvet report --run`` in a real subprocess, as Markdown and HTML; each script is
also executed here, in this process, so the same statsmodels fits give the reference numbers,
named beside each check:

* statsmodels' ``variance_inflation_factor`` for a one-column term's VIF;
* the generalized VIF of Fox and Monette (1992) from determinants of the regressors' correlation
  matrix (numpy), det(R_SS)·det(R_rest)/det(R), and its scaling GVIF^(1/(2·df));
* the Belsley-Kuh-Welsch condition indexes and variance-decomposition proportions from numpy's SVD
  of the design with unit-length columns;
* the level-scale R²: ``np.corrcoef`` of the level outcome with exp(fitted values) of the log model,
  and with the level model's fitted values;
* the level-scale CV errors: statsmodels refits on the same folds as the probe's
  (``default_rng(seed).permutation(n)`` split by ``array_split``, seed 0 and 5 folds, regvet's
  defaults), the log model's predictions retransformed with Duan's (1983) smearing (from memory:
  the mean of exp(prediction + each training residual)), a WLS level model's plain errors.

The report writes four significant digits (``rules.evidence.num``): numbers are compared to a
relative 6e-4.
"""

from __future__ import annotations

import contextlib
import io
import os
import re
import subprocess
import sys
import warnings
from pathlib import Path
from typing import Any

import html5lib
import numpy as np
import pytest
import statsmodels.api as sm
from statsmodels.stats.outliers_influence import variance_inflation_factor

from regvet import audit
from regvet.output.report_cells import comparison_cells
from regvet.rules.collinearity import collinearity_cell
from test_report import check_html

HEAD = """\
import numpy as np
import pandas as pd
import statsmodels.formula.api as smf
"""

#: Two collinear regressors (tonnage tracks cranes) beside a regressor far from zero (`built`, a year):
#: the largest condition index sits on the intercept, the second carries cranes and tonnage.
HARBOUR = (
    HEAD
    + """
rng = np.random.default_rng(7)
n = 400
cranes = rng.uniform(2, 9, n)
quay = pd.DataFrame({"cranes": cranes, "tide": rng.normal(0, 1, n), "tonnage": 3 * cranes + rng.normal(0, 0.4, n),
                     "built": rng.normal(1950, 15, n)})
quay["ships"] = 5 + 0.8 * cranes - 0.3 * quay["tide"] + rng.normal(0, 1 + 0.3 * cranes, n)
busy = smf.ols("ships ~ cranes + tonnage + tide + built", data=quay).fit(cov_type="HC3")
print(busy.summary())
square = smf.ols("ships ~ cranes + I(cranes ** 2) + tide", data=quay).fit(cov_type="HC3")
print(square.summary())
"""
)

#: Pilots who mostly work one berth: two three-level factors nearly aligned, so the worst term has
#: two columns; `draft` (a depth around 6 m) puts the largest condition index on the intercept.
PILOTS = (
    HEAD
    + """
rng = np.random.default_rng(21)
n = 400
berth = rng.choice(["east", "north", "west"], n)
usual = pd.Series(berth).map({"east": "ada", "north": "bo", "west": "cy"}).to_numpy()
pilot = np.where(rng.uniform(size=n) < 0.95, usual, rng.choice(["ada", "bo", "cy"], n))
moorings = pd.DataFrame({"berth": berth, "pilot": pilot, "tide": rng.normal(0, 1, n)})
moorings["draft"] = 6 + 0.8 * (moorings["pilot"] == "bo") + rng.normal(0, 0.5, n)
moorings["minutes"] = 30 + 3 * moorings["tide"] + rng.normal(0, 4, n)
docking = smf.ols("minutes ~ C(berth) + C(pilot) + tide + draft", data=moorings).fit(cov_type="HC3")
print(docking.summary())
"""
)

#: A log and a level model of the same riders compared by R², and two level models by adjusted R².
FERRY = (
    HEAD
    + """
rng = np.random.default_rng(9)
n = 240
trips = pd.DataFrame({"fare": rng.uniform(2, 9, n), "wind": rng.uniform(0, 30, n)})
trips["riders"] = np.exp(5 - 0.12 * trips["fare"] - 0.01 * trips["wind"] + rng.normal(0, 0.35, n))
trips["log_riders"] = np.log(trips["riders"])
logged = smf.ols("log_riders ~ fare + wind", data=trips).fit(cov_type="HC3")
level = smf.ols("riders ~ fare + wind", data=trips).fit(cov_type="HC3")
print(logged.rsquared, level.rsquared)
print("log fits better" if logged.rsquared > level.rsquared else "level fits better")
fare_only = smf.ols("riders ~ fare", data=trips).fit(cov_type="HC3")
print(fare_only.rsquared_adj, level.rsquared_adj)
print("wind helps" if level.rsquared_adj > fare_only.rsquared_adj else "wind does not help")
"""
)

#: A log model beside a WLS level model (weights 1/distance): the level row's CV errors must be the
#: plain ones on the level scale, not the whitened errors of the WLS fit's own cross-validation.
BAKERY = (
    HEAD
    + """
rng = np.random.default_rng(4)
n = 200
rounds = pd.DataFrame({"distance": rng.uniform(1, 12, n), "stops": rng.integers(3, 15, n).astype(float)})
rounds["loaves"] = np.exp(3 + 0.08 * rounds["distance"] + 0.04 * rounds["stops"] + rng.normal(0, 0.3, n))
rounds["log_loaves"] = np.log(rounds["loaves"])
logged_rounds = smf.ols("log_loaves ~ distance + stops", data=rounds).fit(cov_type="HC3")
weighted = smf.wls("loaves ~ distance + stops", data=rounds, weights=1 / rounds["distance"]).fit(cov_type="HC3")
print(logged_rounds.rsquared, weighted.rsquared)
print("log fits better" if logged_rounds.rsquared > weighted.rsquared else "level fits better")
"""
)

SCRIPTS = {"harbour.py": HARBOUR, "pilots.py": PILOTS, "ferry.py": FERRY, "bakery.py": BAKERY}
REL = 6e-4  # four significant digits
FOLDS, SEED = 5, 0  # regvet's defaults (cv_folds, cv_seed)


@pytest.fixture(scope="module")
def reported(tmp_path_factory) -> dict[str, Any]:
    """The Markdown and HTML reports of the scripts (one ``--run`` each, the second from the cache),
    and the scripts' own objects, executed here."""
    folder = tmp_path_factory.mktemp("cells")
    project = folder / "project"
    project.mkdir()
    for name, text in SCRIPTS.items():
        (project / name).write_text(text, encoding="utf-8")
    env = {**os.environ, "REGVET_CACHE_DIR": str(folder / "cache")}
    for name in ("audit.md", "audit.html"):
        proc = subprocess.run(
            [sys.executable, "-m", "regvet", "report", "--run", ".", "-o", str(folder / name)],
            cwd=project,
            env=env,
            capture_output=True,
            text=True,
            timeout=600,
        )
        assert proc.returncode == 0, proc.stderr
    space: dict[str, Any] = {}
    with contextlib.redirect_stdout(io.StringIO()), warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for text in SCRIPTS.values():
            exec(compile(text, "<script>", "exec"), space)  # the very code the run executed
    return {
        "md": (folder / "audit.md").read_text(encoding="utf-8"),
        "html": (folder / "audit.html").read_text(encoding="utf-8"),
        "ns": space,
    }


def fit_section(md: str, name: str) -> str:
    """The Markdown section of the fit whose result is ``name``."""
    match = re.search(rf"^### <a id=\"[^\"]+\"></a>`{re.escape(name)}`:.*?(?=^### |^## |\Z)", md, flags=re.M | re.S)
    assert match is not None, f"no section for {name}"
    return match.group(0)


def cells(line: str) -> list[str]:
    return [c.strip() for c in line.strip().strip("|").split(" | ")]


def collinearity_row(md: str, name: str) -> str:
    row = next(line for line in fit_section(md, name).splitlines() if line.startswith("| collinearity |"))
    return cells(row)[3]  # check, state, done by, statistic, form, p-value


def comparison_table(md: str, name: str, fits: list[str]) -> tuple[list[str], dict[str, list[str]], list[str]]:
    """(head, {fit: cells}, notes) of the comparison table in ``name``'s section that lists ``fits``."""
    lines = fit_section(md, name).splitlines()
    for i, line in enumerate(lines):
        if line.startswith("| fit | outcome |"):
            body, j = {}, i + 2
            while j < len(lines) and lines[j].startswith("| `"):
                row = cells(lines[j])
                body[row[0].strip("`")] = row
                j += 1
            notes = []
            j += 1
            while j < len(lines) and lines[j].startswith("- "):
                notes.append(lines[j][2:])
                j += 1
            if sorted(body) == sorted(fits):
                return cells(line), body, notes
    raise AssertionError(f"no comparison table of {fits} under {name}")


def number(text: str) -> float:
    return float(text.split(" ")[0])


def slopes(res: Any) -> tuple[list[str], np.ndarray]:
    names = [n for n in res.model.exog_names if n != "Intercept"]
    return names, res.model.exog[:, [res.model.exog_names.index(n) for n in names]]


def fox_monette(exog: np.ndarray, cols: list[int]) -> float:
    """GVIF of columns ``cols`` of the non-constant regressors: det R_SS det R_rest / det R (Fox and Monette 1992)."""
    r = np.corrcoef(exog, rowvar=False)
    rest = [j for j in range(exog.shape[1]) if j not in cols]
    return float(np.linalg.det(r[np.ix_(cols, cols)]) * np.linalg.det(r[np.ix_(rest, rest)]) / np.linalg.det(r))


def bkw(res: Any) -> tuple[np.ndarray, np.ndarray]:
    """Condition indexes and proportions[j, k] from numpy's SVD of the unit-length-scaled design."""
    x = res.model.exog
    _, sv, wt = np.linalg.svd(x / np.linalg.norm(x, axis=0), full_matrices=False)
    phi = (wt.T / sv) ** 2
    return sv[0] / sv, phi / phi.sum(axis=1, keepdims=True)


# ------------------------------------------------------------------------------------------
# the collinearity row


def test_collinear_pair_shows_the_largest_vif_and_the_index_that_carries_both_slopes(reported) -> None:
    res = reported["ns"]["busy"]
    cell = collinearity_row(reported["md"], "busy")
    names, exog = slopes(res)
    m = re.match(r"worst term `([^`]+)`: VIF (\S+) \(threshold 10\); ", cell)
    assert m is not None, cell
    value, term = float(m.group(2)), m.group(1)
    # reference: statsmodels' variance_inflation_factor on the fit's own design (the constant included)
    reference = {n: variance_inflation_factor(res.model.exog, res.model.exog_names.index(n)) for n in names}
    assert value == pytest.approx(reference[term], rel=REL)
    assert value == pytest.approx(max(reference.values()), rel=REL)  # the worst term (cranes and tonnage tie)
    assert term in ("cranes", "tonnage")
    index, props = bkw(res)  # reference: numpy SVD of the unit-length design
    order = np.argsort(-index)
    first, second = order[0], order[1]
    const = res.model.exog_names.index("Intercept")
    built = res.model.exog_names.index("built")
    assert props[const, first] > 0.5 and props[built, first] > 0.5  # the largest index is the intercept's
    assert f"condition index {index[first]:#.4g} (threshold 30): its variance sits on the intercept" in cell
    m = re.search(
        r"; condition index (\S+): carries more than half the variance of `(\w+)`, `(\w+)` "
        r"\(Belsley-Kuh-Welsch proportions (\S+), (\S+)\)",
        cell,
    )
    assert m is not None, cell
    assert float(m.group(1)) == pytest.approx(index[second], rel=REL)
    assert {m.group(2), m.group(3)} == {"cranes", "tonnage"}  # largest share first
    got = [float(m.group(4)), float(m.group(5))]
    want = [props[res.model.exog_names.index(m.group(k)), second] for k in (2, 3)]
    assert got == pytest.approx(want, rel=REL)
    assert all(p > 0.5 for p in want)
    section = fit_section(reported["md"], "busy")
    assert "| collinearity | **missing** |" in section  # the rule judged it, and the code never checked


def test_a_square_beside_its_variable_shows_the_index_inside_one_term(reported) -> None:
    res = reported["ns"]["square"]
    cell = collinearity_row(reported["md"], "square")
    index, props = bkw(res)  # reference: numpy SVD of the unit-length design
    top = int(np.argmax(index))
    assert index[top] > 30
    m = re.search(
        r"condition index (\S+) \(threshold 30\): its variance sits inside the term `cranes` \(`cranes`, `I\(cranes \*\* 2\)`: "
        r"proportions (\S+), (\S+)\)",
        cell,
    )
    assert m is not None, cell
    assert float(m.group(1)) == pytest.approx(index[top], rel=REL)
    names = res.model.exog_names
    want = [props[names.index("cranes"), top], props[names.index("I(cranes ** 2)"), top]]
    assert sorted([float(m.group(2)), float(m.group(3))]) == pytest.approx(sorted(want), rel=REL)
    assert "| collinearity | **not applicable** |" in fit_section(reported["md"], "square")  # not judged a problem


def test_a_two_column_term_shows_its_generalized_vif_and_scaled_value(reported) -> None:
    res = reported["ns"]["docking"]
    cell = collinearity_row(reported["md"], "docking")
    names, exog = slopes(res)
    pilot = [i for i, n in enumerate(names) if n.startswith("C(pilot)")]
    gvif = fox_monette(exog, pilot)  # reference: Fox and Monette (1992), determinants
    m = re.match(
        r"worst term `pilot` \(2 columns: `C\(pilot\)\[T\.bo\]`, `C\(pilot\)\[T\.cy\]`\): "
        r"generalized VIF (\S+), GVIF\^\(1/\(2·df\)\) = (\S+) \(threshold √10 = 3\.162\); ",
        cell,
    )
    assert m is not None, cell
    assert float(m.group(1)) == pytest.approx(gvif, rel=REL)
    assert float(m.group(2)) == pytest.approx(gvif ** (1 / 4), rel=REL)
    # every other term's scaled value is smaller (the berth factor and two one-column terms)
    berth = [i for i, n in enumerate(names) if n.startswith("C(berth)")]
    assert fox_monette(exog, berth) ** (1 / 4) < gvif ** (1 / 4)
    for one in ("tide", "draft"):
        assert variance_inflation_factor(res.model.exog, res.model.exog_names.index(one)) ** 0.5 < gvif ** (1 / 4)
    index, props = bkw(res)
    top = int(np.argmax(index))
    m = re.search(
        r"condition index (\S+) \(threshold 30\): its variance sits on the intercept \(proportions `Intercept` (\S+)",
        cell,
    )
    assert m is not None, cell
    assert float(m.group(1)) == pytest.approx(index[top], rel=REL)
    assert float(m.group(2)) == pytest.approx(props[res.model.exog_names.index("Intercept"), top], rel=REL)
    assert "| collinearity | **missing** |" in fit_section(reported["md"], "docking")  # the GVIF is above √10


def test_runs_without_generalized_vifs_or_proportions_fall_back_to_the_plain_numbers(reported) -> None:
    """A run recorded before ``gvif`` and ``dimensions`` existed: the probe's real statistics of the
    same fit with those keys taken out."""
    sys.path.insert(0, str(Path(audit.__file__).parent / "runtime" / "probe"))
    from regvet_stats import fit_statistics

    res = reported["ns"]["busy"]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        stats = fit_statistics(res, {})
    stats["gvif"] = None
    del stats["condition_index"]["dimensions"]
    statistic, form, _ = collinearity_cell(stats)
    assert statistic is not None
    m = re.fullmatch(r"largest VIF (\S+) \(`(\w+)`\); condition index (\S+)", statistic)
    assert m is not None, statistic
    reference = variance_inflation_factor(res.model.exog, res.model.exog_names.index(m.group(2)))  # statsmodels
    assert float(m.group(1)) == pytest.approx(reference, rel=REL)
    assert float(m.group(3)) == pytest.approx(bkw(res)[0].max(), rel=REL)  # numpy SVD
    assert form == stats["condition_index"]["form"]  # the probe's own description of that old index


# ------------------------------------------------------------------------------------------
# the comparison tables


def _duan_cv(y_t: np.ndarray, y: np.ndarray, x: np.ndarray) -> float:
    """Level-scale k-fold RMSE of a log model: statsmodels refits, Duan's smearing (see the docstring)."""
    errors = []
    for part in np.array_split(np.random.default_rng(SEED).permutation(len(y)), FOLDS):
        train = np.setdiff1d(np.arange(len(y)), part)
        refit = sm.OLS(y_t[train], x[train]).fit()
        pred = x[part] @ refit.params
        errors.append(y[part] - np.exp(pred[:, None] + refit.resid[None, :]).mean(axis=1))
    e = np.concatenate(errors)
    return float(np.sqrt(np.mean(e**2)))


def _plain_cv(y: np.ndarray, x: np.ndarray, w: np.ndarray | None = None) -> float:
    """k-fold RMSE of the plain errors y - x'b, b refitted by statsmodels (WLS when weighted) on each training fold."""
    errors = []
    for part in np.array_split(np.random.default_rng(SEED).permutation(len(y)), FOLDS):
        train = np.setdiff1d(np.arange(len(y)), part)
        refit = sm.OLS(y[train], x[train]).fit() if w is None else sm.WLS(y[train], x[train], weights=w[train]).fit()
        errors.append(y[part] - x[part] @ refit.params)
    e = np.concatenate(errors)
    return float(np.sqrt(np.mean(e**2)))


def test_log_and_level_models_get_the_level_scale_r2_and_level_scale_cv(reported) -> None:
    ns = reported["ns"]
    logged, level = ns["logged"], ns["level"]
    head, rows, notes = comparison_table(reported["md"], "logged", ["logged", "level"])
    assert head == ["fit", "outcome", "nobs", "R²", "adjusted R²", "AIC", "BIC", "level-scale R²", "CV RMSE"]
    y = np.asarray(level.model.endog)
    # reference: np.corrcoef of the riders with exp(fitted log riders), and with the level fit's fitted values
    r2_log = np.corrcoef(y, np.exp(logged.fittedvalues))[0, 1] ** 2
    r2_level = np.corrcoef(y, level.fittedvalues)[0, 1] ** 2
    assert number(rows["logged"][7]) == pytest.approx(r2_log, rel=REL)
    assert number(rows["level"][7]) == pytest.approx(r2_level, rel=REL)
    assert number(rows["logged"][3]) == pytest.approx(logged.rsquared, rel=REL)  # statsmodels' own R², own scale
    assert number(rows["level"][5]) == pytest.approx(level.aic, rel=REL)
    x = logged.model.exog
    assert rows["logged"][8].endswith("(level scale)") and rows["level"][8].endswith("(level scale)")
    assert number(rows["logged"][8]) == pytest.approx(_duan_cv(np.asarray(logged.model.endog), y, x), rel=REL)
    assert number(rows["level"][8]) == pytest.approx(_plain_cv(y, x), rel=REL)
    assert len(notes) == 3
    assert notes[0].startswith("The fits have different outcomes (`log_riders`, `riders`)")
    assert "not comparable" in notes[0]
    assert notes[1].startswith("The level-scale R² is corr(y, ŷ)² with y and ŷ on the scale of `riders`")
    assert notes[2].startswith("CV RMSE marked “level scale” are k-fold prediction errors on the scale of `riders`")
    assert "Duan's smearing" in notes[2]


def test_two_level_models_of_one_outcome_get_no_level_column_and_no_notes(reported) -> None:
    ns = reported["ns"]
    head, rows, notes = comparison_table(reported["md"], "level", ["fare_only", "level"])
    assert head == ["fit", "outcome", "nobs", "R²", "adjusted R²", "AIC", "BIC", "CV RMSE"]
    assert notes == []
    x = ns["level"].model.exog
    y = np.asarray(ns["level"].model.endog)
    assert number(rows["level"][7]) == pytest.approx(_plain_cv(y, x), rel=REL)  # statsmodels refits
    assert number(rows["fare_only"][4]) == pytest.approx(ns["fare_only"].rsquared_adj, rel=REL)


def test_a_wls_level_model_shows_its_plain_cv_errors_on_the_level_scale(reported) -> None:
    ns = reported["ns"]
    logged, weighted = ns["logged_rounds"], ns["weighted"]
    head, rows, notes = comparison_table(reported["md"], "weighted", ["logged_rounds", "weighted"])
    assert "level-scale R²" in head
    y = np.asarray(weighted.model.endog)
    x = weighted.model.exog
    w = np.asarray(weighted.model.weights)
    # reference: WLS refits by statsmodels, the errors y - x'b unweighted (the level scale)
    plain = _plain_cv(y, x, w)
    whitened = _plain_cv(np.sqrt(w) * y, np.sqrt(w)[:, None] * x)  # what a WLS fit's own CV measures
    assert abs(plain - whitened) / plain > 0.05  # the two differ here: the test can tell them apart
    assert rows["weighted"][8].endswith("(level scale)")
    assert number(rows["weighted"][8]) == pytest.approx(plain, rel=REL)
    assert number(rows["logged_rounds"][8]) == pytest.approx(_duan_cv(np.asarray(logged.model.endog), y, x), rel=REL)
    # the level model's corr(y, ŷ)², unweighted (np.corrcoef), beside the log model's level-scale R²
    assert number(rows["weighted"][7]) == pytest.approx(np.corrcoef(y, weighted.fittedvalues)[0, 1] ** 2, rel=REL)
    assert number(rows["logged_rounds"][7]) == pytest.approx(
        np.corrcoef(y, np.exp(logged.fittedvalues))[0, 1] ** 2, rel=REL
    )
    assert len(notes) == 3


def test_the_html_comparison_table_has_the_same_cells_and_notes(reported) -> None:
    check_html(reported["html"])  # strict HTML5 parse, headings, captions, contrast (tests/test_report.py)
    doc = html5lib.parse(reported["html"], namespaceHTMLElements=False)
    md_head, md_rows, md_notes = comparison_table(reported["md"], "logged", ["logged", "level"])
    article = next(a for a in doc.iter("article") if "".join(a.find("h3").itertext()).startswith("logged:"))
    table = next(
        t
        for t in article.iter("table")
        if "".join(t.find("caption").itertext()) == "Comparable measures"
        and "level-scale R²" in "".join(t.find("thead").itertext())
    )
    head = ["".join(th.itertext()) for th in table.find("thead").iter("th")]
    assert head == md_head
    for tr in table.find("tbody").iter("tr"):
        row = ["".join(c.itertext()) for c in tr]
        assert row == [c.replace("`", "") for c in md_rows[row[0]]]
        assert [c.get("class") for c in tr][2:] == ["num"] * (len(head) - 2)
    children = list(article)
    notes = children[children.index(table) + 1]  # the notes follow the table
    assert notes.tag == "ul" and notes.get("class") == "notes"
    assert ["".join(li.itertext()) for li in notes.iter("li")] == [n.replace("`", "") for n in md_notes]


def test_comparison_cells_mark_cv_errors_on_each_outcomes_scale_when_unpaired() -> None:
    """Two fits of different outcomes that the run did not pair (a table a finding stored): no level
    column, and each CV RMSE says whose scale it is on."""
    rows: list[Any] = [
        {"fit": "a", "outcome": "riders", "nobs": 10, "rsquared": 0.5, "rsquared_adj": 0.4, "aic": 1.0,
         "bic": 2.0, "cv_rmse": 3.0, "cv_mae": 2.0, "cv_folds": 5, "log_level_r2": None},
        {"fit": "b", "outcome": "fares", "nobs": 10, "rsquared": 0.6, "rsquared_adj": 0.5, "aic": 1.5,
         "bic": 2.5, "cv_rmse": 0.3, "cv_mae": 0.2, "cv_folds": 5, "log_level_r2": None},
    ]  # fmt: skip
    out = comparison_cells(rows)
    assert "level-scale R²" not in out.head
    assert [r[-1] for r in out.rows] == ["3.000 (scale of `riders`)", "0.3000 (scale of `fares`)"]
    assert len(out.notes) == 1 and "neither are the CV RMSE" in out.notes[0]


def test_a_term_of_many_columns_lists_six_of_them_and_counts_the_rest() -> None:
    """Two nearly aligned nine-level factors (a depot and its usual van): the probe's real statistics."""
    import pandas as pd
    import statsmodels.formula.api as smf

    sys.path.insert(0, str(Path(audit.__file__).parent / "runtime" / "probe"))
    from regvet_stats import fit_statistics

    rng = np.random.default_rng(3)
    n = 900
    depot = rng.integers(0, 9, n)
    van = np.where(rng.uniform(size=n) < 0.9, depot, rng.integers(0, 9, n))
    frame = pd.DataFrame({"depot": depot, "van": van, "minutes": rng.normal(40, 5, n)})
    res = smf.ols("minutes ~ C(depot) + C(van)", data=frame).fit()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        stats = fit_statistics(res, {})
    statistic, _, _ = collinearity_cell(stats)
    assert statistic is not None
    m = re.match(
        r"worst term `(\w+)` \(8 columns: ((?:`[^`]+`, ){5}`[^`]+`) and 2 more\): generalized VIF ([^,\s]+),", statistic
    )
    assert m is not None, statistic
    names, exog = slopes(res)
    cols = [i for i, c in enumerate(names) if c.startswith(f"C({m.group(1)})")]
    assert len(cols) == 8
    assert m.group(2).split(", ")[0] == f"`{names[cols[0]]}`"
    assert float(m.group(3)) == pytest.approx(fox_monette(exog, cols), rel=REL)  # Fox and Monette (1992)
