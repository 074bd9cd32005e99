"""Where a configuration error is: ``ConfigError.line`` (1-based) and ``.column`` (0-based code points)."""

from __future__ import annotations

from pathlib import Path

import pytest

from regvet.config import ConfigError, load_settings

PYPROJECT = """\
[project]
name = "ferry-models"

[tool.regvet]
skip = [
  "no-break-test",
]
{body}
"""


def error_of(path: Path, text: str) -> ConfigError:
    path.write_text(text, encoding="utf-8")
    with pytest.raises(ConfigError) as info:
        load_settings(path)
    return info.value


@pytest.mark.parametrize(
    "body, key, line, column",
    [
        ("alpah = 0.05", "alpah", 8, 0),
        ('  "alpha" = "0.05"', "alpha", 8, 2),
        ('severity = { no-form-test = "warning", no-variance-test = "fatal" }', "severity.no-variance-test", 8, 39),
        ('severity.no-variance-test = "fatal"', "severity.no-variance-test", 8, 0),
        ('[tool.regvet.severity]\nno-form-test = "error"\nno-such-rule = "error"', "severity.no-such-rule", 10, 0),
        ('[tool.regvet.diagnostic_helpers]\n"lib.check" = ["form", "magic"]', "diagnostic_helpers.lib.check", 9, 0),
        ('diagnostic_helpers = { "lib.check" = "form" }', "diagnostic_helpers.lib.check", 8, 23),
    ],
)
def test_a_bad_key_carries_the_line_and_column_where_it_is_written(tmp_path, body, key, line, column):
    err = error_of(tmp_path / "pyproject.toml", PYPROJECT.format(body=body))
    assert err.key == key and (err.line, err.column) == (line, column)
    assert str(err).startswith(f"{tmp_path / 'pyproject.toml'}: key `{key}`: ")  # the message is unchanged


def test_a_bad_key_is_looked_for_in_the_regvet_table_only(tmp_path):
    text = "[tool.other]\nalpah = 1\n\n[tool.regvet]\n  alpah = 2\n"
    err = error_of(tmp_path / "pyproject.toml", text)
    assert err.key == "alpah" and (err.line, err.column) == (5, 2)
    err = error_of(tmp_path / "regvet.toml", '# Fähre\nalpah = 0.05\n[severity]\nalpah = "error"\n')
    assert err.key == "alpah" and (err.line, err.column) == (2, 0)
    err = error_of(tmp_path / "regvet.toml", '[severity]\nno-form-test = "error"\nno-such-rule = "error"\n')
    assert err.key == "severity.no-such-rule" and (err.line, err.column) == (3, 0)


def test_invalid_toml_carries_the_parsers_position(tmp_path):
    # tomllib reports "(at line 2, column 9)", counting columns from 1 (Python's tomllib as the reference).
    err = error_of(tmp_path / "pyproject.toml", "[tool.regvet]\nalpha = = 1\n")
    assert "line 2, column 9" in str(err) and (err.line, err.column) == (2, 8)
    err = error_of(tmp_path / "pyproject.toml", '[tool.regvet]\nname = "🚢" x\n')
    assert (err.line, err.column) == (2, 11)  # code points: the ship is one
    err = error_of(tmp_path / "pyproject.toml", "[tool.regvet]\nskip = [\n")
    assert "end of document" in str(err) and (err.line, err.column) == (3, 0)


def test_errors_without_a_place_in_the_file_carry_none(tmp_path):
    path = tmp_path / "regvet.toml"
    path.write_bytes(b"alpha = 0.05 # \xff\n")
    with pytest.raises(ConfigError) as info:
        load_settings(path)
    assert "not UTF-8" in str(info.value) and (info.value.line, info.value.column) == (None, None)
