"""Config files at the edges: nesting too deep, a byte-order mark, tables in the wrong place or of the
wrong type, runtime limits that are not finite or not sane. Each is a configuration error (exit 2)
naming the file, or, for the BOM, simply accepted. Real files, the real command line."""

from __future__ import annotations

import math
import textwrap

import pytest

from regvet.config import ConfigError, find_config, load_settings
from regvet.model.settings import MAX_MEGABYTES, MAX_SECONDS, MIN_MEGABYTES

FIT = textwrap.dedent(
    """\
    import statsmodels.api as sm

    res = sm.OLS([3.1, 4.9, 7.2, 8.8], sm.add_constant([1.0, 2.0, 3.0, 4.0])).fit()
    print(res.params)
    """
)


@pytest.fixture
def project(tmp_path, monkeypatch):
    (tmp_path / ".git").mkdir()
    (tmp_path / "bakery.py").write_text(FIT)
    monkeypatch.chdir(tmp_path)
    return tmp_path


def _config_error(run_cli, expected: str) -> str:
    code, out, err = run_cli("check", ".", "--no-cache")
    assert code == 2, (out, err)
    assert "Traceback" not in err
    assert err.startswith("regvet: configuration error: ") and expected in err, err
    return err


@pytest.mark.parametrize("nest", ["[" * 3000 + "]" * 3000, "{a = " * 3000 + "1" + "}" * 3000])
def test_toml_nested_too_deep_is_a_configuration_error_naming_the_file(project, run_cli, nest):
    (project / "regvet.toml").write_text(f"deep = {nest}\n")
    err = _config_error(run_cli, "regvet.toml: invalid TOML: arrays or inline tables nest too deeply to read")
    assert str(project / "regvet.toml") in err


def test_deep_nesting_in_a_pyproject_that_mentions_regvet(project, run_cli):
    (project / "pyproject.toml").write_text(
        "[tool.regvet]\nalpha = 0.01\n[tool.other]\nx = " + "[" * 3000 + "]" * 3000 + "\n"
    )
    _config_error(run_cli, "pyproject.toml: invalid TOML: arrays or inline tables nest too deeply")


@pytest.mark.parametrize("name, table", [("regvet.toml", ""), ("pyproject.toml", "[tool.regvet]\n")])
def test_a_byte_order_mark_is_accepted(project, run_cli, name, table):
    code, out, _ = run_cli("check", ".", "--no-cache")
    assert code == 1 and "no-form-test" in out  # the finding the config below switches off
    (project / name).write_bytes(b"\xef\xbb\xbf" + f'{table}skip = ["no-form-test"]\n'.encode())
    assert find_config(project / "bakery.py") == project / name
    assert load_settings(project / name).skip == frozenset({"no-form-test"})
    code, out, err = run_cli("check", ".", "--no-cache")
    assert code == 0, (out, err)
    assert "no-form-test" not in out


@pytest.mark.parametrize(
    "name, text, expected",
    [
        ("pyproject.toml", "tool = 5\n", "`tool` must be a table (regvet reads `[tool.regvet]`), got a number (5)"),
        ("pyproject.toml", 'tool = "regvet"\n', "`tool` must be a table (regvet reads `[tool.regvet]`), got a string"),
        ("pyproject.toml", "[tool]\nregvet = 5\n", "`tool.regvet` must be a table, got a number (5)"),
        ("pyproject.toml", "[tool]\nregvet = [1, 2]\n", "`tool.regvet` must be a table, got a list"),
        ("pyproject.toml", "[regvet]\nalpha = 0.01\n", "regvet's options belong in `[tool.regvet]`"),
        ("regvet.toml", "[tool.regvet]\nalpha = 0.01\n", "a regvet.toml holds the options at the top level"),
        ("regvet.toml", "severity = 5\n", "key `severity`: expected a table of rule id"),
        ("regvet.toml", "[alpha]\nvalue = 0.01\n", "key `alpha`: expected a number between 0 and 1, got a table"),
        (
            "regvet.toml",
            "[diagnostic_helpers]\n'lib.check' = 5\n",
            "key `diagnostic_helpers.lib.check`: expected a list",
        ),
    ],
)
def test_misplaced_and_mistyped_tables_are_reported(project, run_cli, name, text, expected):
    (project / name).write_text(text)
    err = _config_error(run_cli, expected)
    assert f"{project / name}: " in err


def test_a_pyproject_without_regvet_is_still_not_regvets_business(project, run_cli):
    (project / "pyproject.toml").write_text('[project]\nname = "bakery"\n[tool.black]\nline-length = 100\n')
    assert find_config(project / "bakery.py") is None
    code, _, err = run_cli("check", ".", "--no-cache")
    assert code == 1 and not err


@pytest.mark.parametrize(
    "key, value",
    [
        ("run_timeout", "nan"),
        ("run_timeout", "inf"),
        ("run_timeout", "-inf"),
        ("run_timeout", "-5"),
        ("run_timeout", "0"),
        ("run_timeout", str(MAX_SECONDS + 1)),
        ("run_timeout", "1e300"),
        ("run_timeout", "true"),
        ("run_timeout", '"300"'),
        ("run_memory_mb", "-1"),
        ("run_memory_mb", "0"),
        ("run_memory_mb", str(MIN_MEGABYTES - 1)),
        ("run_memory_mb", str(MAX_MEGABYTES + 1)),
        ("run_memory_mb", "99999999999999999999999"),
        ("run_memory_mb", "8192.5"),
        ("run_memory_mb", "nan"),
        ("run_memory_mb", "inf"),
    ],
)
def test_runtime_limits_must_be_finite_and_sane(project, run_cli, key, value):
    (project / "regvet.toml").write_text(f"{key} = {value}\n")
    _config_error(run_cli, f"regvet.toml: key `{key}`: expected ")
    with pytest.raises(ConfigError) as info:
        load_settings(project / "regvet.toml")
    assert info.value.key == key and info.value.line == 1  # an editor can underline it


@pytest.mark.parametrize(
    "key, value, read",
    [
        ("run_timeout", "0.5", 0.5),
        ("run_timeout", str(MAX_SECONDS), MAX_SECONDS),
        ("run_memory_mb", str(MIN_MEGABYTES), MIN_MEGABYTES),
        ("run_memory_mb", "32768", 32768),
    ],
)
def test_sane_runtime_limits_are_kept(project, key, value, read):
    (project / "regvet.toml").write_text(f"{key} = {value}\n")
    got = getattr(load_settings(project / "regvet.toml"), key)
    assert got == read and math.isfinite(got)


def test_the_language_servers_config_cache_keeps_a_deep_file_as_its_error(project):
    from regvet.workspace import ConfigCache

    (project / "regvet.toml").write_text("deep = " + "[" * 3000 + "]" * 3000 + "\n")
    loaded = ConfigCache().for_file(project / "bakery.py")
    assert isinstance(loaded, ConfigError) and "nest too deeply" in str(loaded)
