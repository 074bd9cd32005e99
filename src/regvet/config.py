"""Find, read and validate regvet configuration. The only module that reads config files.

Configuration lives in ``[tool.regvet]`` of a ``pyproject.toml`` or at the top level
of a ``regvet.toml``. The nearest one wins: the search walks up from a file's folder
and stops at the project root (the first folder holding ``pyproject.toml``, ``.git``
or ``.hg``). Every key is described once, in :data:`regvet.model.settings.OPTIONS`.
"""

from __future__ import annotations

import re
import sys
from collections.abc import Collection
from dataclasses import replace
from pathlib import Path
from types import ModuleType
from typing import Any

from regvet.model.settings import FAMILIES, MAX_MEGABYTES, MAX_SECONDS, MIN_MEGABYTES, OPTIONS, Option, Settings


def _json_string(raw: str) -> str:
    """A TOML basic string's body with its escapes read (they are JSON's)."""
    import json

    value: str = json.loads(f'"{raw}"')
    return value


def _toml() -> ModuleType:
    """The TOML reader, imported only when a file has to be parsed (a few milliseconds of start-up)."""
    if sys.version_info >= (3, 11):
        import tomllib
    else:  # pragma: no cover - exercised on Python 3.10 only
        import tomli as tomllib
    return tomllib


CONFIG_NAMES = ("regvet.toml", "pyproject.toml")
ROOT_MARKERS = ("pyproject.toml", ".git", ".hg")
_SEVERITIES = ("error", "warning", "info")
_COLUMN = re.compile(r"[A-Za-z_][\w.]*\Z")


class ConfigError(Exception):
    """A configuration file that cannot be used. ``str()`` names the file, the key and what was expected.

    ``line`` (1-based) and ``column`` (0-based, in code points, as in regvet's spans) say where in
    the file: the TOML syntax error, or where the bad key is written; both None when unknown.
    """

    def __init__(
        self, path: str, message: str, key: str | None = None, line: int | None = None, column: int | None = None
    ) -> None:
        self.path = path
        self.key = key
        self.detail = message
        self.line = line
        self.column = column
        where = f"{path}: " + (f"key `{key}`: " if key else "")
        super().__init__(where + message)


def find_config(start: Path) -> Path | None:
    """The nearest config file for ``start`` (a file or folder), or None."""
    here = start if start.is_dir() else start.parent
    here = here.resolve()
    for folder in (here, *here.parents):
        for name in CONFIG_NAMES:
            candidate = folder / name
            if candidate.is_file() and _has_table(candidate):
                return candidate
        if any((folder / m).exists() for m in ROOT_MARKERS):
            return None
    return None


def _has_table(path: Path) -> bool:
    """Whether a config file is regvet's to read: a regvet.toml always; a pyproject.toml when it has a
    ``tool.regvet`` table, or names regvet where it cannot be used (``tool = 5``, ``[regvet]``), or
    cannot be read at all while it mentions regvet (load_settings then reports the problem)."""
    if path.name != "pyproject.toml":
        return True
    try:
        text = path.read_bytes().decode("utf-8-sig")
    except (OSError, UnicodeDecodeError):
        return True
    assigned = _TOOL_ASSIGNED.search(text)
    if "tool.regvet" in text and not assigned:
        return True  # the usual case, decided without parsing (this runs once per scanned file)
    if "regvet" not in text and not assigned:
        return False
    tomllib = _toml()
    try:
        data = tomllib.loads(text)
    except (tomllib.TOMLDecodeError, RecursionError, MemoryError):
        return "regvet" in text
    tool = data.get("tool")
    if tool is not None and not isinstance(tool, dict):
        return True
    return "regvet" in (tool or {}) or "regvet" in data


#: ``tool = ...`` at the top level of a pyproject.toml: ``tool`` must be a table (PEP 518).
_TOOL_ASSIGNED = re.compile(r"(?m)^[ \t]*[\"']?tool[\"']?[ \t]*=")


def load_table(path: Path) -> dict[str, Any]:
    """The regvet table of a config file (empty when a pyproject.toml has none)."""
    return _read_table(path)[1]


def _read_table(path: Path) -> tuple[str, dict[str, Any]]:
    """(the file's text, its regvet table)."""
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise ConfigError(str(path), f"cannot read the file: {exc.strerror or exc}") from None
    tomllib = _toml()
    try:
        text = raw.decode("utf-8-sig")  # a byte-order mark at the start is not part of the TOML
        data = tomllib.loads(text)
    except UnicodeDecodeError:
        raise ConfigError(str(path), "the file is not UTF-8 text") from None
    except tomllib.TOMLDecodeError as exc:
        line, column = _toml_error_position(exc, text)
        raise ConfigError(str(path), f"invalid TOML: {exc}", line=line, column=column) from None
    except (RecursionError, MemoryError):
        raise ConfigError(str(path), "invalid TOML: arrays or inline tables nest too deeply to read") from None
    return text, _regvet_table(path, data)


def _regvet_table(path: Path, data: dict[str, Any]) -> dict[str, Any]:
    """The regvet table of a parsed file; a :class:`ConfigError` when it is missing from where it was
    meant to be (``tool = 5``, ``[regvet]`` in a pyproject.toml, ``[tool.regvet]`` in a regvet.toml)."""
    if path.name == "pyproject.toml":
        tool = data.get("tool", {})
        if not isinstance(tool, dict):
            raise ConfigError(
                str(path), f"`tool` must be a table (regvet reads `[tool.regvet]`), got {_tomltype(tool)}"
            )
        if "regvet" not in tool and isinstance(data.get("regvet"), dict):
            raise ConfigError(
                str(path), "regvet's options belong in `[tool.regvet]` in a pyproject.toml, not in " "`[regvet]`"
            )
        table = tool.get("regvet", {})
        if not isinstance(table, dict):
            raise ConfigError(str(path), f"`tool.regvet` must be a table, got {_tomltype(table)}")
        return table
    tool = data.get("tool")
    if isinstance(tool, dict) and "regvet" in tool:
        raise ConfigError(
            str(path),
            "a regvet.toml holds the options at the top level; `[tool.regvet]` belongs in " "a pyproject.toml",
        )
    return data


def _mismatch(source: str, option: Option, key: str, value: Any) -> ConfigError:
    """The error for a value of the wrong type or range (raised only when the check fails)."""
    return ConfigError(source, f"expected {option.expected}, got {_tomltype(value)}", key)


def _rule_ids() -> Collection[str]:
    """The rule ids (importing the rules only when a config names one)."""
    from regvet.rules import RULES_BY_ID  # rules import settings; keep this import local

    return RULES_BY_ID.keys()


def settings_from_table(table: dict[str, Any], source: str, base: Settings | None = None) -> Settings:
    """Validate a config table and turn it into :class:`Settings` (on top of ``base``)."""
    known = {o.name: o for o in OPTIONS}
    values: dict[str, Any] = {}
    for key, value in table.items():
        option = known.get(key)
        if option is None:
            import difflib

            close = difflib.get_close_matches(key, list(known), n=1)
            hint = f"; did you mean `{close[0]}`?" if close else f"; known keys: {', '.join(known)}"
            raise ConfigError(source, f"unknown key{hint}", key)
        bad = _mismatch(source, option, key, value)

        if option.kind == "float":
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not 0 < value < 1:
                raise bad
            values[key] = float(value)
        elif option.kind in ("rules", "globs", "strings"):
            if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
                raise bad
            if option.kind == "rules":
                for rid in value:
                    if rid not in _rule_ids():
                        raise ConfigError(source, f"`{rid}` is not a rule id (see `regvet rules`)", key)
                values[key] = frozenset(value)
            else:
                values[key] = tuple(value)
        elif option.kind == "columns":
            if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
                raise bad
            for name in value:
                if not _COLUMN.match(name):
                    raise ConfigError(
                        source,
                        f"{name!r} is not a column name as a formula writes it in `C(...)` "
                        "(letters, digits, `_` and `.`, not starting with a digit)",
                        key,
                    )
                if value.count(name) > 1:
                    raise ConfigError(source, f"`{name}` is listed twice", key)
            values[key] = tuple(value)
        elif option.kind == "severity-map":
            if not isinstance(value, dict):
                raise bad
            severities: list[tuple[str, str]] = []
            for rid, sev in value.items():
                if rid not in _rule_ids():
                    raise ConfigError(source, f"`{rid}` is not a rule id (see `regvet rules`)", f"{key}.{rid}")
                if not isinstance(sev, str) or sev.lower() not in _SEVERITIES:
                    raise ConfigError(source, f"expected one of {', '.join(_SEVERITIES)}, got {sev!r}", f"{key}.{rid}")
                severities.append((rid, sev.lower()))
            values[key] = tuple(sorted(severities))
        elif option.kind == "string":
            if not isinstance(value, str):
                raise bad
            values[key] = value
        elif option.kind in ("int", "optional-int"):
            if (
                isinstance(value, bool)
                or not isinstance(value, int)
                or value < (0 if option.kind == "optional-int" else 1)
            ):
                raise bad
            values[key] = value
        elif option.kind == "seconds":
            # nan compares false with everything, so it fails the range test like inf and 0 do
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not 0 < value <= MAX_SECONDS:
                raise bad
            values[key] = float(value)
        elif option.kind == "megabytes":
            if isinstance(value, bool) or not isinstance(value, int) or not MIN_MEGABYTES <= value <= MAX_MEGABYTES:
                raise bad
            values[key] = value
        elif option.kind == "hc":
            if not isinstance(value, str) or value.upper() not in ("HC0", "HC1", "HC2", "HC3"):
                raise bad
            values[key] = value.upper()
        elif option.kind == "helpers":
            if not isinstance(value, dict):
                raise bad
            pairs: list[tuple[str, tuple[str, ...]]] = []
            for name, families in value.items():
                if not isinstance(families, list) or not all(isinstance(f, str) for f in families):
                    raise ConfigError(
                        source, f"expected a list of check families ({', '.join(FAMILIES)})", f"{key}.{name}"
                    )
                unknown = [f for f in families if f not in FAMILIES]
                if unknown:
                    raise ConfigError(
                        source, f"`{unknown[0]}` is not a check family; use {', '.join(FAMILIES)}", f"{key}.{name}"
                    )
                pairs.append((name, tuple(families)))
            values[key] = tuple(sorted(pairs))
    fixed = values.get("fixed_effects", base.fixed_effects if base else ())
    both = sorted(set(fixed) & set(values.get("break_candidates", base.break_candidates if base else ())))
    if both:
        key = "fixed_effects" if "fixed_effects" in values else "break_candidates"
        raise ConfigError(
            source,
            f"`{both[0]}` is both a fixed effect and a break candidate; a column is one or "
            "the other (a break candidate asks for a break test, a fixed effect for none)",
            key,
        )
    return replace(base or Settings(), source=source, **values)


def _tomltype(value: Any) -> str:
    if isinstance(value, bool):
        return f"a boolean ({str(value).lower()})"
    if isinstance(value, (int, float)):
        return f"a number ({value})"
    if isinstance(value, str):
        return f"a string ({value!r})"
    if isinstance(value, list):
        return "a list" if all(isinstance(v, str) for v in value) else "a list with non-string items"
    if isinstance(value, dict):
        return "a table"
    return type(value).__name__


def load_settings(path: Path, base: Settings | None = None) -> Settings:
    """Read and validate one config file. A :class:`ConfigError` about a key carries where it is written."""
    text, table = _read_table(path)
    try:
        return settings_from_table(table, str(path), base)
    except ConfigError as exc:
        if exc.key is not None and exc.line is None:
            where = _key_position(text, exc.key, ("tool", "regvet") if path.name == "pyproject.toml" else ())
            if where is not None:
                exc.line, exc.column = where
        raise


# --- positions in the file, for editors ------------------------------------------------------------
_TOML_AT = re.compile(r"\(at line (\d+), column (\d+)\)")
_BARE_KEY = re.compile(r"[A-Za-z0-9_-]+")
_LINE_BREAK = re.compile(r"\r\n|\n")


def _toml_error_position(exc: Exception, text: str) -> tuple[int | None, int | None]:
    """(1-based line, 0-based column) of a TOML syntax error.

    Newer parsers (tomli >= 2.1, Python >= 3.14) carry ``lineno``/``colno``; older ones only say
    "(at line L, column C)" or "(at end of document)" at the end of the message. Both count the
    column from 1 in code points.
    """
    line, col = getattr(exc, "lineno", None), getattr(exc, "colno", None)
    if isinstance(line, int) and isinstance(col, int):
        return line, max(col - 1, 0)
    match = _TOML_AT.search(str(exc))
    if match:
        return int(match.group(1)), max(int(match.group(2)) - 1, 0)
    if "(at end of document)" in str(exc):
        return text.count("\n") + 1, len(text) - (text.rfind("\n") + 1)
    return None, None


def _toml_key(line: str, start: int) -> tuple[tuple[str, ...], int] | None:
    """The (dotted) TOML key that begins at ``line[start]`` and the index just after it, or None."""
    parts: list[str] = []
    i = start
    while True:
        while i < len(line) and line[i] in " \t":
            i += 1
        if i < len(line) and line[i] in "\"'":
            quote = line[i]
            end = i + 1
            while end < len(line) and line[end] != quote:
                end += 2 if quote == '"' and line[end] == "\\" else 1
            if end >= len(line):
                return None
            raw = line[i + 1 : end]
            try:
                part = _json_string(raw) if quote == '"' else raw  # TOML basic strings escape as JSON
            except ValueError:
                part = raw
            i = end + 1
        else:
            match = _BARE_KEY.match(line, i)
            if match is None:
                return None
            part, i = match.group(), match.end()
        parts.append(part)
        while i < len(line) and line[i] in " \t":
            i += 1
        if i < len(line) and line[i] == ".":
            i += 1
            continue
        return tuple(parts), i


def _key_position(text: str, key: str, table: tuple[str, ...]) -> tuple[int, int] | None:
    """Where a key of the regvet table is written: (1-based line, 0-based column), or None.

    ``key`` is an option (``alpha``) or one entry of a table-valued option (``severity.<rule-id>``,
    ``diagnostic_helpers.<name>``, where the name may itself hold dots). ``table`` is the regvet
    table's path (``tool.regvet`` in a pyproject.toml, the top level of a regvet.toml). The entry's
    own line wins (in a ``[tool.regvet.severity]`` table or as a dotted key); else the option's line
    (an inline table: at the entry inside it when it can be found); else None.
    """
    option, _, entry = key.partition(".")
    target = (*table, option)
    current: tuple[str, ...] = ()
    fallback: tuple[int, int] | None = None
    for number, line in enumerate(_LINE_BREAK.split(text), 1):
        indent = len(line) - len(line.lstrip(" \t"))
        if line.startswith("[", indent):
            header = _toml_key(line, indent + (2 if line.startswith("[[", indent) else 1))
            if header is None:
                continue
            current = header[0]
            path, column, rest = current, indent, ""
        else:
            found = _toml_key(line, indent)
            if found is None or not line[found[1] :].lstrip(" \t").startswith("="):
                continue
            path, column, rest = current + found[0], indent, line[found[1] :]
        if entry and path == (*target, entry):
            return number, column
        if path == target:
            if not entry:
                return number, column
            if fallback is None:
                fallback = (number, column)
                for spelled in (f'"{entry}"', f"'{entry}'", entry):
                    at = rest.find(spelled)
                    if at >= 0:
                        fallback = (number, len(line) - len(rest) + at)
                        break
    return fallback
