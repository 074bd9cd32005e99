"""Configuration discovery, validation errors (exit 2 naming file, key and expected type) and effects."""

from __future__ import annotations

import textwrap
from pathlib import Path

import pytest

from regvet.config import ConfigError, find_config, load_settings

FIT = textwrap.dedent(
    """\
    import pandas as pd
    import statsmodels.formula.api as smf

    crossings = pd.read_csv("crossings.csv")
    res = smf.ols("riders ~ fare + fuel_price", data=crossings).fit()
    print(res.summary())
    """
)


def write(path: Path, text: str) -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(textwrap.dedent(text))
    return path


def test_nearest_config_wins_and_pyproject_without_table_is_skipped(tmp_path):
    (tmp_path / ".git").mkdir()
    write(tmp_path / "regvet.toml", 'skip = ["no-form-test"]\n')
    sub = tmp_path / "analysis"
    write(sub / "pyproject.toml", '[project]\nname = "x"\n')  # no [tool.regvet]: but it marks a root
    write(sub / "model.py", FIT)
    assert find_config(sub / "model.py") is None  # the pyproject.toml marks the project root
    (sub / "pyproject.toml").unlink()
    assert find_config(sub / "model.py") == (tmp_path / "regvet.toml").resolve()
    write(sub / "pyproject.toml", "[tool.regvet]\nalpha = 0.01\n")
    assert find_config(sub / "model.py") == (sub / "pyproject.toml").resolve()
    assert load_settings(sub / "pyproject.toml").alpha == 0.01


def test_search_stops_at_the_repository_root(tmp_path):
    write(tmp_path / "regvet.toml", 'skip = ["no-form-test"]\n')
    repo = tmp_path / "repo"
    (repo / ".git").mkdir(parents=True)
    write(repo / "a.py", FIT)
    assert find_config(repo / "a.py") is None


@pytest.mark.parametrize(
    "body,key,expected",
    [
        ("alpah = 0.05", "alpah", "did you mean `alpha`"),
        ('alpha = "0.05"', "alpha", "expected a number between 0 and 1, got a string"),
        ("alpha = 1.5", "alpha", "expected a number between 0 and 1"),
        ('skip = "no-form-test"', "skip", "expected a list of rule ids"),
        ('skip = ["no-such-rule"]', "skip", "`no-such-rule` is not a rule id"),
        ('severity = { no-form-test = "fatal" }', "severity.no-form-test", "expected one of error, warning, info"),
        ("exclude = [1, 2]", "exclude", "expected a list of glob patterns, got a list with non-string items"),
        (
            'diagnostic_helpers = { "lib.check" = ["form", "magic"] }',
            "diagnostic_helpers.lib.check",
            "`magic` is not a check family",
        ),
        (
            'diagnostic_helpers = { "lib.check" = "form" }',
            "diagnostic_helpers.lib.check",
            "expected a list of check families",
        ),
    ],
)
def test_bad_values_name_file_key_and_expectation(tmp_path, run_cli, body, key, expected):
    cfg = write(tmp_path / "regvet.toml", body + "\n")
    script = write(tmp_path / "model.py", FIT)
    with pytest.raises(ConfigError) as info:
        load_settings(cfg)
    assert info.value.key == key and expected in str(info.value)
    code, out, err = run_cli("check", str(script), "--config", str(cfg))
    assert code == 2 and out == ""
    assert str(cfg) in err and f"`{key}`" in err and expected in err
    assert "Traceback" not in err


def test_invalid_toml_is_a_configuration_error(tmp_path, run_cli):
    (tmp_path / ".git").mkdir()
    write(tmp_path / "pyproject.toml", "[tool.regvet]\nalpha = = 1\n")
    write(tmp_path / "model.py", FIT)
    code, out, err = run_cli("check", str(tmp_path / "model.py"))
    assert code == 2
    assert "pyproject.toml" in err and "invalid TOML" in err and "line 2" in err


def test_severity_only_skip_and_no_config(tmp_path, run_cli):
    (tmp_path / ".git").mkdir()
    write(
        tmp_path / "pyproject.toml",
        '[tool.regvet]\nseverity = { no-variance-test = "error" }\nskip = ["no-form-test"]\n',
    )
    script = write(tmp_path / "model.py", FIT)
    code, out, _ = run_cli("check", str(script), "--format", "json")
    import json

    rules = {f["rule"]: f["severity"] for f in json.loads(out)["findings"]}
    assert rules == {"no-variance-test": "error"}
    code, out, _ = run_cli("check", str(script), "--format", "json", "--no-config")
    rules = {f["rule"]: f["severity"] for f in json.loads(out)["findings"]}
    assert rules == {"no-variance-test": "warning", "no-form-test": "warning"}
    code, out, _ = run_cli("check", str(script), "--format", "json", "--no-config", "--only", "no-form-test")
    assert {f["rule"] for f in json.loads(out)["findings"]} == {"no-form-test"}
    code, out, err = run_cli("check", str(script), "--only", "no-such-rule")
    assert code == 2 and "no-such-rule" in err


def test_exclude_globs_and_default_excludes(tmp_path, run_cli):
    (tmp_path / ".git").mkdir()
    write(tmp_path / "regvet.toml", 'exclude = ["scratch", "old/*.py"]\n')
    for rel in (
        "keep.py",
        "scratch/a.py",
        "old/b.py",
        ".venv/lib/c.py",
        "node_modules/d.py",
        "build/e.py",
        "site-packages/f.py",
        "venv/g.py",
        "nested/.ipynb_checkpoints/h.py",
    ):
        write(tmp_path / rel, FIT)
    code, out, _ = run_cli("check", str(tmp_path), "--format", "json")
    import json

    paths = {Path(f["path"]).name for f in json.loads(out)["findings"]}
    assert paths == {"keep.py"}


def test_break_candidates_reach_the_rule(tmp_path, run_cli):
    (tmp_path / ".git").mkdir()
    script = write(
        tmp_path / "model.py",
        """\
        import pandas as pd
        import statsmodels.formula.api as smf

        crossings = pd.read_csv("crossings.csv")
        res = smf.ols("riders ~ fare + post_timetable", data=crossings).fit(cov_type="HC3")
        print(res.params)
        """,
    )
    code, out, _ = run_cli("check", str(script), "--only", "no-break-test")
    assert code == 0 and "no-break-test" not in out
    write(tmp_path / "regvet.toml", 'break_candidates = ["post_timetable == 1"]\n')
    code, out, _ = run_cli("check", str(script), "--only", "no-break-test", "--fail-on", "info")
    assert code == 1 and "no-break-test" in out and "post_timetable == 1" in out


def test_diagnostic_helpers_count_as_checks(tmp_path, run_cli):
    (tmp_path / ".git").mkdir()
    script = write(
        tmp_path / "model.py",
        """\
        import pandas as pd
        import statsmodels.formula.api as smf
        from ourlib.checks import run_all

        crossings = pd.read_csv("crossings.csv")
        res = smf.ols("riders ~ fare", data=crossings).fit()
        run_all(res)
        print(res.summary())
        """,
    )
    code, out, _ = run_cli("check", str(script))
    assert "no-form-test" in out and "diagnostic_helpers" in out
    write(tmp_path / "regvet.toml", 'diagnostic_helpers = { "ourlib.checks.run_all" = ["form", "variance"] }\n')
    code, out, _ = run_cli("check", str(script))
    assert code == 0, out


def test_settings_and_the_option_table_describe_the_same_keys():
    """``OPTIONS`` drives validation and docs, ``Settings`` holds the values: neither may gain a key alone."""
    import dataclasses

    from regvet.model.settings import OPTIONS, Settings

    fields = {f.name: f for f in dataclasses.fields(Settings) if f.compare}  # `source` is bookkeeping
    options = {o.name: o for o in OPTIONS}
    assert list(fields) == list(options)
    defaults = Settings()
    for name, option in options.items():
        value = getattr(defaults, name)
        if option.kind in ("rules",):
            assert value == frozenset(option.default), name
        elif option.kind in ("globs", "strings", "severity-map", "helpers"):
            assert tuple(value) == tuple(option.default), name
        else:
            assert value == option.default, name
        assert option.expected  # every kind has the text an error message shows
