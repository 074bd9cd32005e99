"""Finding the project's own modules on disk for the analyser (a front-side adapter: it does I/O).

An import is resolved relative to the importing file's folder first, then to the
scanned root, as a module file (``name.py``) or a package (``name/__init__.py``).
"""

from __future__ import annotations

import os
from collections.abc import Callable, Mapping
from pathlib import Path

from regvet.analysis.modules import ModuleSource
from regvet.discovery import read_regular
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
        found: dict | None = None,
    ) -> None:
        self.root = root.resolve()
        self.main = main.resolve()
        self.texts = texts if texts is not None else {}
        #: (name, level, importer, root) -> the existing candidate files, in order; may be shared like ``texts``
        self.found: dict[tuple[str, int, str | None, Path], tuple[Path, ...]] = found if found is not None else {}
        #: A found file -> its module key and the path findings show (the same for every importer)
        self.names: dict[Path, tuple[str, str]] = self.found.setdefault(("names", 0, None, self.root), {})  # type: ignore[arg-type,assignment]
        self.overlay = overlay or {}  # unsaved editor buffers win over the files on disk
        self.show = show or display_path

    def _read(self, path: Path) -> str | None:
        if path in self.overlay:
            return self.overlay[path]
        if path not in self.texts:
            try:
                text = decode(read_regular(path))
            except OSError:
                text = None
            self.texts[path] = None if isinstance(text, SourceError) else text
        return self.texts[path]

    def find(self, name: str, level: int, importer: str | None) -> ModuleSource | None:
        for candidate in self._candidates(name, level, importer):
            if candidate == self.main:
                continue
            text = self._read(candidate)
            if text is None:
                return None
            named = self.names.get(candidate)
            if named is None:
                named = self.names[candidate] = (_key(candidate, self.root), self.show(candidate))
            return ModuleSource(named[0], named[1], text)
        return None

    def _candidates(self, name: str, level: int, importer: str | None) -> tuple[Path, ...]:
        """The files that exist for the import, in the order they are tried (remembered: many files ask)."""
        key = (name, level, importer if importer else str(self.main.parent), self.root)
        known = self.found.get(key)
        if known is not None:
            return known
        start = Path(importer).resolve().parent if importer else self.main.parent
        if level:
            base = start
            for _ in range(level - 1):
                base = base.parent
            bases = [base]
        else:
            bases = [start] if start == self.root else [start, self.root]
        parts = [p for p in name.split(".") if p]
        out: list[Path] = []
        if parts:
            for base in bases:
                for candidate in (base.joinpath(*parts).with_suffix(".py"), base.joinpath(*parts, "__init__.py")):
                    if candidate.is_file():
                        out.append(candidate)
        self.found[key] = tuple(out)
        return self.found[key]


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
        try:
            return Path(path).resolve().as_posix()
        except (OSError, RuntimeError):  # a symbolic link loop (a name a scan skips)
            return Path(os.path.abspath(path)).as_posix()
    return Path(rel).as_posix()
