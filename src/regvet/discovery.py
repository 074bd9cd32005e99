"""Which files a scan reads, and reading one without ever blocking on it.

A folder scan walks for ``.py`` and ``.ipynb`` names and keeps only regular files: a symbolic
link loop, a broken link, a named pipe (FIFO), a device or a socket that carries such a name is
*skipped with a note* (never opened: opening a FIFO would wait for a writer for ever). Folders
behind symbolic links are not followed, so a link to a parent cannot make the walk loop. A folder
that cannot be listed is a note too. A file that exists but cannot be read is kept: reading it
gives that file a ``parse-error`` finding that says why.

:func:`read_regular` is the one way the fronts read a scanned file: it refuses anything that is
not a regular file at the moment it is opened (the name may have been swapped since the walk).
Nothing here prints or exits.
"""

from __future__ import annotations

import errno
import fnmatch
import os
import re
import stat
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path

SUFFIXES = (".py", ".ipynb")


class MissingPath(Exception):
    """A path named on the command line that does not exist at all (a usage error for the front)."""


@dataclass(frozen=True)
class Skipped:
    """A name a scan left out, and why (``"a named pipe (FIFO)"``)."""

    path: Path
    why: str


@dataclass
class Discovery:
    files: list[Path] = field(default_factory=list)
    skipped: list[Skipped] = field(default_factory=list)


def not_regular(mode: int) -> str | None:
    """Why a file of this ``st_mode`` is not read (None for a regular file)."""
    if stat.S_ISREG(mode):
        return None
    if stat.S_ISFIFO(mode):
        return "a named pipe (FIFO)"
    if stat.S_ISCHR(mode):
        return "a character device"
    if stat.S_ISBLK(mode):
        return "a block device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    if stat.S_ISDIR(mode):
        return "a folder"
    return "not a regular file"


def examine(path: Path) -> tuple[os.stat_result | None, str | None]:
    """(the file's status, None) for a file to read; (None, why) for a name to skip.

    A status that cannot be read for another reason (permissions of a parent folder) keeps the
    file, with no status: reading it will say what is wrong.
    """
    try:
        st = os.stat(path)
    except OSError as exc:
        if exc.errno == errno.ELOOP:
            return None, "a symbolic link loop"
        if exc.errno in (errno.ENOENT, errno.ENOTDIR) and os.path.islink(path):
            return None, "a broken symbolic link"
        if exc.errno in (errno.ENOENT, errno.ENOTDIR):
            return None, "it no longer exists"
        return None, None
    return st, not_regular(st.st_mode)


def excluded(rel: Path, patterns: Sequence[str]) -> bool:
    """Whether a path relative to a scanned folder matches one of the exclude globs."""
    return Excluder(patterns)(rel.parts, rel.as_posix())


class Excluder:
    """The exclude globs, compiled once: a glob with a ``/`` matches the relative path (or a folder
    above the name), any other glob matches one of its parts."""

    def __init__(self, patterns: Sequence[str]) -> None:
        globs = [p.rstrip("/") for p in patterns]
        nested = [t for g in globs if "/" in g for t in (fnmatch.translate(g), fnmatch.translate(g + "/*"))]
        plain = [fnmatch.translate(g) for g in globs if "/" not in g]
        self._path = re.compile("|".join(nested)).match if nested else None
        self._part = re.compile("|".join(plain)).match if plain else None

    def __call__(self, parts: Sequence[str], posix: str) -> bool:
        """``parts``: the relative path's parts; ``posix``: the same with forward slashes."""
        if self._path is not None and self._path(os.path.normcase(posix)):
            return True
        part = self._part
        return part is not None and any(part(os.path.normcase(p)) for p in parts)


def discover(paths: Sequence[str], exclude: Sequence[str]) -> Discovery:
    """The files to scan, in order and without duplicates, and the names left out.

    Files named on the command line are read whatever their suffix (but only when they are regular
    files); folders are walked for ``.py`` and ``.ipynb`` files. :class:`MissingPath` for a named
    path that does not exist.
    """
    out = Discovery()
    seen: set[tuple[int, int]] = set()
    leave_out = Excluder(exclude)

    def keep(path: Path) -> None:
        st, why = examine(path)
        if why is not None:
            out.skipped.append(Skipped(path, why))
            return
        if st is not None:
            key = (st.st_dev, st.st_ino)
            if key in seen:
                return
            seen.add(key)
        out.files.append(path)

    for raw in paths:
        path = Path(raw)
        if not os.path.lexists(path):
            raise MissingPath(raw)
        if not path.is_dir():
            keep(path)
            continue

        def unlisted(exc: OSError, top: Path = path) -> None:
            where = Path(exc.filename) if exc.filename else top
            out.skipped.append(Skipped(where, f"the folder cannot be listed: {exc.strerror or exc}"))

        for folder, dirs, names in os.walk(path, onerror=unlisted):
            rel = Path(folder).relative_to(path)
            parts, prefix = rel.parts, "" if not rel.parts else rel.as_posix() + "/"
            dirs[:] = sorted(d for d in dirs if not leave_out((*parts, d), prefix + d))
            for name in sorted(names):
                if name.endswith(SUFFIXES) and not leave_out((*parts, name), prefix + name):
                    keep(Path(folder) / name)
    return out


def read_regular(path: Path) -> bytes:
    """The bytes of ``path``; ``OSError`` when it cannot be read or is not a regular file.

    The file is checked before it is opened (opening some devices has effects), opened without
    blocking (a FIFO swapped in meanwhile cannot make this wait), and checked again on the open
    descriptor before a single byte is read.
    """
    st, why = examine(path)
    if why is None and st is not None:
        why = not_regular(st.st_mode)
    if why is not None:
        raise OSError(errno.EINVAL, f"not a regular file: {why}", str(path))
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0) | getattr(os, "O_CLOEXEC", 0)
    fd = os.open(path, flags)
    try:
        why = not_regular(os.fstat(fd).st_mode)
        if why is not None:
            raise OSError(errno.EINVAL, f"not a regular file: {why}", str(path))
        chunks = []
        while True:
            chunk = os.read(fd, 1 << 20)
            if not chunk:
                break
            chunks.append(chunk)
        return b"".join(chunks)
    finally:
        os.close(fd)
