"""What the fronts share about the project around a file: its settings, their overrides, its root.

The command line and the language server both read the nearest config file once per file it
applies to, lay their own choices (``--only``/``--skip``; the editor's ``only``/``skip``/``alpha``)
over it the same way, and look for project modules from the same kind of root. Config files are
read only through :mod:`regvet.config`; nothing here prints or exits.
"""

from __future__ import annotations

import os
from collections.abc import Iterable
from dataclasses import dataclass, replace
from pathlib import Path

from regvet.config import ConfigError, find_config, load_settings
from regvet.model.settings import Settings


class ConfigCache:
    """Settings per config file, each file read and validated once (None stands for "no config file").

    A file that cannot be used is kept as its :class:`ConfigError`; the caller decides what that
    means (the command line stops, the language server uses the defaults and marks the file).
    """

    def __init__(self) -> None:
        self._loaded: dict[Path | None, Settings | ConfigError] = {}

    def load(self, config: Path | None) -> Settings | ConfigError:
        """The settings of ``config`` (the defaults for None), read on first use."""
        if config not in self._loaded:
            try:
                self._loaded[config] = load_settings(config) if config is not None else Settings()
            except ConfigError as exc:
                self._loaded[config] = exc
        return self._loaded[config]

    def for_file(self, path: Path) -> Settings | ConfigError:
        """The settings of the config file nearest to ``path`` (see :func:`regvet.config.find_config`)."""
        return self.load(find_config(path))

    def errors(self) -> list[ConfigError]:
        """The config files read so far that cannot be used."""
        # A snapshot of the values: the language server may add an entry from its pool meanwhile.
        return [v for v in list(self._loaded.values()) if isinstance(v, ConfigError)]

    def clear(self) -> None:
        """Forget everything read (a config file changed on disk)."""
        self._loaded.clear()


@dataclass(frozen=True)
class Overrides:
    """A front's choices laid over the project's settings.

    ``skip`` adds to the project's ``skip``; a non-empty ``only`` replaces the project's ``only``;
    ``alpha`` replaces the project's. Empty choices change nothing, so a front cannot silently drop
    what the project decided.
    """

    only: frozenset[str] = frozenset()
    skip: frozenset[str] = frozenset()
    alpha: float | None = None

    def apply(self, settings: Settings) -> Settings:
        changes: dict[str, object] = {}
        if self.alpha is not None:
            changes["alpha"] = self.alpha
        if self.skip:
            changes["skip"] = settings.skip | self.skip
        if self.only:
            changes["only"] = self.only
        return replace(settings, **changes) if changes else settings  # type: ignore[arg-type]


def split_rule_ids(values: Iterable[object]) -> tuple[frozenset[str], list[object]]:
    """(the rule ids among ``values``, the other values in their order): fronts decide how to complain."""
    items = list(values)
    from regvet.rules import RULES_BY_ID

    known = frozenset(v for v in items if isinstance(v, str) and v in RULES_BY_ID)
    return known, [v for v in items if not (isinstance(v, str) and v in RULES_BY_ID)]


def project_root(path: Path, folders: Iterable[Path], fallback: Path | None = None) -> Path:
    """Where to look for the project modules of ``path`` (a resolved file).

    The deepest of ``folders`` (the folders named on the command line, the editor's workspace
    folders) that holds ``path``; else ``fallback`` (the working folder, the editor's root) when it
    holds ``path``; else the file's own folder.
    """
    best: Path | None = None
    for folder in folders:
        if folder == path or _inside(path, folder):
            if best is None or len(folder.parts) > len(best.parts):
                best = folder
    if best is None and fallback is not None and _inside(path, fallback):
        best = fallback
    return best or path.parent


def _inside(path: Path, folder: Path) -> bool:
    """``folder in path.parents``, for absolute paths, without building the parents."""
    return str(path).startswith(str(folder).rstrip("/\\") + os.sep) or path.parent == folder
