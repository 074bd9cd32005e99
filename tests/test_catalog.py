"""Every qualified name in the catalogue exists in the installed statsmodels/scipy (the reference implementation)."""

from __future__ import annotations

import importlib

import pytest

from regvet.analysis import catalog as cat


def _resolve(qualname: str):
    parts = qualname.split(".")
    for cut in range(len(parts), 0, -1):
        try:
            obj = importlib.import_module(".".join(parts[:cut]))
        except ImportError:
            continue
        for attr in parts[cut:]:
            obj = getattr(obj, attr)
        return obj
    raise ImportError(qualname)


@pytest.mark.parametrize("qualname", sorted(cat.DIAGNOSTICS))
def test_diagnostic_path_exists(qualname):
    assert callable(_resolve(qualname))


@pytest.mark.parametrize("qualname", sorted(cat.CONSTRUCTORS))
def test_constructor_path_exists(qualname):
    obj = _resolve(qualname)
    assert callable(obj)
    est = cat.CONSTRUCTORS[qualname].estimator
    import statsmodels.regression.linear_model as lm

    target = getattr(lm, est)
    # formula functions are bound from_formula methods of the same class
    assert obj is target or getattr(obj, "__self__", None) is target or obj == target.from_formula


@pytest.mark.parametrize("qualname", sorted(cat.SUMMARY_TABLES | cat.ANOVA | cat.ADD_CONSTANT), ids=str)
def test_helper_path_exists(qualname):
    assert callable(_resolve(qualname))


@pytest.mark.parametrize("qualname", sorted(cat.DESIGN_MATRICES))
def test_design_matrices_path_exists(qualname):
    import patsy  # statsmodels' formula engine, installed with it

    assert _resolve(qualname) is patsy.dmatrices


@pytest.mark.parametrize("alias,target", sorted(cat.NAMESPACE_ALIASES.items()))
def test_namespace_alias_is_the_same_object(alias, target):
    assert _resolve(alias) is _resolve(target)


def test_same_function_under_every_path():
    # statsmodels exports one function object under several modules; regvet maps them all to one family.
    by_name: dict[str, set] = {}
    for q, (_family, name) in cat.DIAGNOSTICS.items():
        if q.startswith("statsmodels"):
            by_name.setdefault(name, set()).add(id(_resolve(q)))
    for name, ids in by_name.items():
        assert len(ids) == 1, name


def test_results_members_exist_on_a_real_fit():
    import numpy as np
    import statsmodels.api as sm

    rng = np.random.default_rng(7)
    X = sm.add_constant(rng.normal(size=(30, 2)))
    res = sm.OLS(X @ [1.0, 2.0, -1.0] + rng.normal(size=30), X).fit()
    members = cat.INFERENCE_MEMBERS | cat.ESTIMATE_MEMBERS | cat.ROBUST_MEMBERS | set(cat.PART_MEMBERS)
    members |= cat.COMPARED_MEASURES | cat.SSR_MEASURES | cat.COLLINEARITY_MEMBERS
    for name in sorted(members):
        assert hasattr(res, name), name
    for name in cat.MODEL_PART_MEMBERS:
        assert hasattr(res.model, name), name
    assert hasattr(res, "get_robustcov_results")


def test_covariance_names_are_accepted_by_statsmodels():
    import numpy as np
    import statsmodels.api as sm

    rng = np.random.default_rng(8)
    X = sm.add_constant(rng.normal(size=(40, 1)))
    y = X @ [1.0, 0.5] + rng.normal(size=40)
    for cov in sorted(cat.ROBUST_COV - {"cluster", "hac-panel", "hac-groupsum", "nw-panel", "nw-groupsum"}):
        kwds = {"maxlags": 2} if cov == "hac" else None
        res = sm.OLS(y, X).fit(cov_type=cov.upper(), cov_kwds=kwds)
        assert res.cov_type.lower() == cov
    groups = np.arange(40) % 5
    assert sm.OLS(y, X).fit(cov_type="cluster", cov_kwds={"groups": groups}).cov_type == "cluster"
