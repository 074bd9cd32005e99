"""Finding the project's own modules on disk for the analyser (a front-side adapter: it does I/O).

An import is resolved relative to the importing file's folder first, then to the
scanned root, as a module file (``name.py``) or a package (``name/__init__.py``).
"""

from __future__ import annotations

import os
from collections.abc import Callable, Mapping
from pathlib import Path

from regvet.analysis.modules import ModuleSource
from regvet.sources.python import SourceError, decode


class FileModules:
    """A :class:`~regvet.analysis.modules.ModuleProvider` reading ``.py`` files under ``root``.

    One instance serves one analysed file (``main``); ``texts`` may be shared between
    instances to read each helper module once per scan.
    """

    def __init__(
        self,
        root: Path,
        main: Path,
        texts: dict[Path, str | None] | None = None,
        *,
        overlay: Mapping[Path, str] | None = None,
        show: Callable[[Path], str] | None = None,
    ) -> None:
        self.root = root.resolve()
        self.main = main.resolve()
        self.texts = texts if texts is not None else {}
        self.overlay = overlay or {}  # unsaved editor buffers win over the files on disk
        self.show = show or display_path

    def _read(self, path: Path) -> str | None:
        if path in self.overlay:
            return self.overlay[path]
        if path not in self.texts:
            try:
                text = decode(path.read_bytes())
            except OSError:
                text = None
            self.texts[path] = None if isinstance(text, SourceError) else text
        return self.texts[path]

    def find(self, name: str, level: int, importer: str | None) -> ModuleSource | None:
        start = Path(importer).resolve().parent if importer else self.main.parent
        if level:
            base = start
            for _ in range(level - 1):
                base = base.parent
            bases = [base]
        else:
            bases = [start] if start == self.root else [start, self.root]
        parts = [p for p in name.split(".") if p]
        if not parts:
            return None
        for base in bases:
            for candidate in (base.joinpath(*parts).with_suffix(".py"), base.joinpath(*parts, "__init__.py")):
                if candidate == self.main or not candidate.is_file():
                    continue
                text = self._read(candidate)
                if text is None:
                    return None
                return ModuleSource(_key(candidate, self.root), self.show(candidate), text)
        return None


def _key(path: Path, root: Path) -> str:
    try:
        rel = path.relative_to(root)
    except ValueError:
        rel = Path(path.name)
    parts = list(rel.with_suffix("").parts)
    if parts and parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def display_path(path: Path) -> str:
    """A path relative to the current folder when it is inside it, with forward slashes."""
    try:
        rel = os.path.relpath(path, Path.cwd())
    except ValueError:  # another drive on Windows
        return path.as_posix()
    if rel.startswith(".."):
        return Path(path).resolve().as_posix()
    return Path(rel).as_posix()
