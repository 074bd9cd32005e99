"""Finding the project's own modules on disk for the analyser (a front-side adapter: it does I/O).

An import is resolved relative to the importing file's folder first, then to the
scanned root, as a module file (``name.py``) or a package (``name/__init__.py``).
"""

from __future__ import annotations

import os
from collections.abc import Callable, Mapping
from pathlib import Path

from regvet.analysis.providers import ModuleSource
from regvet.discovery import read_regular


class ScanLookups:
    """What the :class:`FileModules` of one scan share, worked out once for all its files: where each
    import search starts, the files that exist for each import, the resolved roots and analysed
    files, and each found file's module key and shown path. The files on disk are taken to stay as
    they are for the length of a scan."""

    def __init__(self) -> None:
        #: (name, level, folder the search starts from, root) -> the existing candidate files, in order
        self.files: dict[tuple[str, int, str, str], tuple[Path, ...]] = {}
        #: an importer's path -> the (resolved) folder its imports are searched from
        self.folders: dict[str, str] = {}
        #: (a found file, the root) -> its module key and the path findings show
        self.names: dict[tuple[Path, str], tuple[str, str]] = {}
        self.resolved: dict[Path, Path] = {}
        #: a folder -> the names in it that are regular files (or links to one); empty when it cannot be listed
        self.listed: dict[str, frozenset[str]] = {}

    def is_file(self, path: str) -> bool:
        """``os.path.isfile(path)``, from one listing of each folder."""
        folder, name = os.path.split(path)
        names = self.listed.get(folder)
        if names is None:
            try:
                with os.scandir(folder) as entries:
                    names = frozenset(e.name for e in entries if _is_file(e))
            except OSError:
                names = frozenset()
            self.listed[folder] = names
        return name in names

    def resolve(self, path: Path) -> Path:
        """``path.resolve()``, with each folder resolved once: a name that is not a symbolic link
        resolves to its resolved folder joined with the name."""
        known = self.resolved.get(path)
        if known is None:
            name = path.name
            if name in ("", ".", "..") or path.parent == path or os.path.islink(path):
                known = path.resolve()
            else:
                known = self.resolve(path.parent) / name
            self.resolved[path] = known
        return known

    def show(self, path: Path) -> str:
        """:func:`display_path`, resolving through :meth:`resolve`."""
        return display_path(path, self.resolve)


class FileModules:
    """A :class:`~regvet.analysis.modules.ModuleProvider` reading ``.py`` files under ``root``.

    One instance serves one analysed file (``main``); ``texts`` (each helper module read once) and
    ``found`` (the lookups' file-system work) may be shared by every file of a scan.
    """

    def __init__(
        self,
        root: Path,
        main: Path,
        texts: dict[Path, str | None] | None = None,
        *,
        overlay: Mapping[Path, str] | None = None,
        show: Callable[[Path], str] | None = None,
        found: ScanLookups | None = None,
    ) -> None:
        self.found = found if found is not None else ScanLookups()
        self.root = self.found.resolve(root)
        self.main = self.found.resolve(main)
        self._root = str(self.root)
        self._folder = str(self.main.parent)
        self.texts = texts if texts is not None else {}
        self.overlay = overlay or {}  # unsaved editor buffers win over the files on disk
        self.show = show or self.found.show

    def _read(self, path: Path) -> str | None:
        if path in self.overlay:
            return self.overlay[path]
        if path not in self.texts:
            from regvet.sources.python import SourceError, decode

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
            names = self.found.names
            named = names.get((candidate, self._root))
            if named is None:
                named = names[(candidate, self._root)] = (_key(candidate, self.root), self.show(candidate))
            return ModuleSource(named[0], named[1], text)
        return None

    def scope(self, importer: str | None) -> tuple[str, str]:
        """What a lookup from ``importer`` depends on besides the import itself, the files on disk and
        the analysed file (which it never finds): the project root and the folder the search starts from."""
        return (self._root, self._start(importer))

    def first_file(self, name: str, level: int, importer: str | None) -> Path | None:
        """The file the import names first, the analysed file included (``find`` skips that one)."""
        candidates = self._candidates(name, level, importer)
        return candidates[0] if candidates else None

    def _start(self, importer: str | None) -> str:
        """The folder an import is searched from: the importer's (resolved), else the analysed file's."""
        if not importer:
            return self._folder
        folders = self.found.folders
        folder = folders.get(importer)
        if folder is None:
            folder = folders[importer] = str(self.found.resolve(Path(importer)).parent)
        return folder

    def _candidates(self, name: str, level: int, importer: str | None) -> tuple[Path, ...]:
        """The files that exist for the import, in the order they are tried (remembered: many files ask)."""
        folder = self._start(importer)
        key = (name, level, folder, self._root)
        known = self.found.files.get(key)
        if known is not None:
            return known
        if level:
            base = folder
            for _ in range(level - 1):
                base = os.path.dirname(base)
            bases = [base]
        else:
            bases = [folder] if folder == self._root else [folder, self._root]
        parts = [p for p in name.split(".") if p]
        out: list[Path] = []
        if parts:
            for base in bases:
                stem = os.path.join(base, *parts)
                for candidate in (stem + ".py", os.path.join(stem, "__init__.py")):
                    if self.found.is_file(candidate):
                        out.append(Path(candidate))
        self.found.files[key] = tuple(out)
        return self.found.files[key]


def _is_file(entry: os.DirEntry) -> bool:
    try:
        return entry.is_file()
    except OSError:
        return False


def _key(path: Path, root: Path) -> str:
    try:
        rel = path.relative_to(root)
    except ValueError:
        rel = Path(path.name)
    parts = list(rel.with_suffix("").parts)
    if parts and parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def display_path(path: Path, resolve: Callable[[Path], Path] = Path.resolve) -> str:
    """A path relative to the current folder when it is inside it, with forward slashes (else
    resolved, by ``resolve``)."""
    cwd = os.getcwd()
    absolute = os.path.abspath(path)
    outside = absolute != cwd and not absolute.startswith(cwd.rstrip(os.sep) + os.sep)
    try:
        rel = ".." if outside else os.path.relpath(absolute, cwd)  # outside: relpath would start with ..
    except ValueError:  # another drive on Windows
        return path.as_posix()
    if rel.startswith(".."):
        try:
            return resolve(Path(path)).as_posix()
        except (OSError, RuntimeError):  # a symbolic link loop (a name a scan skips)
            return Path(os.path.abspath(path)).as_posix()
    return Path(rel).as_posix()
