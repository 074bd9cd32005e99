"""The cache of per-file analyses (``regvet check``): one entry per file content, settings and regvet build.

An entry holds the file's report (its facts, findings and the rule input) and every project-module
lookup the analysis made, with what it found (the module's path and a hash of its text, or
nothing). The entry's key covers regvet's version and the source of regvet itself (so an edited
checkout never reads stale entries), the settings, the path the findings name, the project root
and the file's bytes; a lookup is valid only while every recorded module lookup still finds the
same module with the same text, so a changed helper module re-analyses the files that import it
(and a new module that shadows an import does too).

The lookups are stored grouped by the module that made them (the analysed file's own, then each
project module's imports). A scan checks a group once for all its files (:class:`LookupMemo`):
the standard library's files each look up some 360 modules, most of them the same ones.

Entries live under ``$REGVET_CACHE_DIR/facts``, else ``$XDG_CACHE_HOME/regvet/facts``, else
``~/.cache/regvet/facts``. Each is written to a temporary file in the same folder and renamed into
place, so concurrent runs never read a half-written entry and a killed run leaves none; an
unreadable or foreign entry is a miss. Reports whose analysis crashed are never stored.
"""

from __future__ import annotations

import os
from collections.abc import Hashable
from pathlib import Path
from typing import Any, Protocol

from regvet import __version__
from regvet.analysis.providers import ModuleProvider, ModuleSource
from regvet.digest import blake2b
from regvet.model.report import FileReport
from regvet.model.settings import Settings

#: Bumped when the layout of an entry changes.
FORMAT = 3
#: What a lookup found: the module's key, shown path and text hash, or None (nothing).
Found = tuple[str, str, str] | None
#: The lookups one importer made (None: the analysed file): the importer, each lookup's level and
#: name (``"level:name"`` lines: one string unpickles far faster than a tuple per lookup), a digest
#: of those lines, and a digest of what each lookup found, in the same order.
Group = tuple[str | None, str, bytes, bytes]

_BUILD: str | None = None


def default_folder() -> Path:
    base = os.environ.get("REGVET_CACHE_DIR")
    if base:
        return Path(base) / "facts"
    xdg = os.environ.get("XDG_CACHE_HOME")
    return (Path(xdg) if xdg else Path.home() / ".cache") / "regvet" / "facts"


def build_fingerprint() -> str:
    """regvet's version and the size and modification time of every module of the installed package."""
    global _BUILD
    if _BUILD is None:
        h = blake2b(f"{FORMAT}\0{__version__}\0".encode(), digest_size=32)
        package = Path(__file__).resolve().parent
        for folder, dirs, names in os.walk(package):
            dirs[:] = sorted(d for d in dirs if d != "__pycache__")
            for name in sorted(names):
                if name.endswith(".py"):
                    st = os.stat(os.path.join(folder, name))
                    h.update(
                        f"{os.path.relpath(os.path.join(folder, name), package)}\0{st.st_size}\0"
                        f"{st.st_mtime_ns}\0".encode()
                    )
        _BUILD = h.hexdigest()
    return _BUILD


_FINGERPRINTS: dict[int, tuple[Settings, str]] = {}


def settings_fingerprint(settings: Settings) -> str:
    """Every field of the settings in a stable spelling (sets sorted: string hashes vary per process);
    worked out once per settings object (a scan shares one per config file)."""
    known = _FINGERPRINTS.get(id(settings))
    if known is not None and known[0] is settings:
        return known[1]
    if len(_FINGERPRINTS) > 1_000:
        _FINGERPRINTS.clear()
    _FINGERPRINTS[id(settings)] = (settings, _spelled(settings))
    return _FINGERPRINTS[id(settings)][1]


def _spelled(settings: Settings) -> str:
    parts = []
    for name in sorted(settings.__dataclass_fields__):
        if name == "source":
            continue
        value = getattr(settings, name)
        if isinstance(value, frozenset):
            value = sorted(value)
        parts.append(f"{name}={value!r}")
    return "\n".join(parts)


_HASHES: dict[int, tuple[str, str]] = {}


def _text_hash(text: str) -> str:
    """A module text's hash, computed once per text object (a scan shares one text per module)."""
    known = _HASHES.get(id(text))
    if known is not None and known[0] is text:
        return known[1]
    digest = blake2b(text.encode("utf-8", "surrogatepass"), digest_size=32).hexdigest()
    if len(_HASHES) > 20_000:
        _HASHES.clear()
    _HASHES[id(text)] = (text, digest)
    return digest


def _found(source: ModuleSource | None) -> Found:
    return None if source is None else (source.key, source.path, _text_hash(source.text))


def _digest(value: object) -> bytes:
    """A short digest of a string, or of a tuple of strings and numbers (its ``repr`` is stable across processes)."""
    text = value if isinstance(value, str) else repr(value)
    return blake2b(text.encode("utf-8", "surrogatepass"), digest_size=16).digest()


def grouped(lookups: dict[tuple[str, int, str | None], Found]) -> tuple[Group, ...]:
    """The recorded lookups as groups, one per importer, in the order they were first made."""
    groups: dict[str | None, tuple[list[str], list[Found]]] = {}
    for (name, level, importer), found in lookups.items():
        lines, founds = groups.setdefault(importer, ([], []))
        lines.append(f"{level}:{name}")
        founds.append(found)
    out = []
    for importer, (lines, founds) in groups.items():
        names = "\n".join(lines)
        out.append((importer, names, _digest(names), _digest(tuple(founds))))
    return tuple(out)


def _names(lines: str) -> list[tuple[str, int]]:
    """The ``(name, level)`` of each lookup of a group."""
    return [(name, int(level)) for level, name in (line.split(":", 1) for line in lines.split("\n"))]


def _finds(provider: ModuleProvider, importer: str | None, names: list[tuple[str, int]]) -> bytes:
    """The digest of what the group's lookups find now."""
    return _digest(tuple(_found(provider.find(name, level, importer)) for name, level in names))


class ScopedProvider(ModuleProvider, Protocol):
    """A provider whose lookups :class:`LookupMemo` can share between the files of a scan
    (:class:`regvet.project.FileModules`)."""

    main: Path

    def scope(self, importer: str | None) -> tuple[str, str]: ...

    def first_file(self, name: str, level: int, importer: str | None) -> Path | None: ...


class LookupMemo:
    """What each group of lookups finds now, worked out once per scan and shared by its files.

    A group's result depends on its scope (the project root and the folder the search starts
    from), its imports, the files on disk and their texts (all fixed for one scan), and on the
    analysed file only through ``find`` never returning it. So a result is kept only when the
    analysed file was none of the files the group's imports name first, and reused only by a
    file that is none of them either; any other file works its groups out itself.
    """

    def __init__(self) -> None:
        #: root -> (importer, the analysed file's folder when the importer is None, digest of the
        #: imports) -> (digest of what they find, the files they name first). Within a scan, the
        #: folder an importer's search starts from is a function of the importer.
        self.groups: dict[Hashable, dict[tuple[str, str, bytes], tuple[bytes, frozenset[str]]]] = {}

    def holds(self, provider: ScopedProvider, groups: tuple[Group, ...]) -> bool:
        """Whether every group of lookups still finds what it found."""
        main = str(provider.main)
        root, home = provider.scope(None)
        known_groups = self.groups.setdefault(root, {})
        for importer, lines, imports, was in groups:
            key = (importer, "", imports) if importer else ("", home, imports)
            known = known_groups.get(key)
            if known is not None and main not in known[1]:
                now = known[0]
            else:
                names = _names(lines)
                now = _finds(provider, importer, names)
                firsts = {provider.first_file(name, level, importer) for name, level in names}
                named = frozenset(str(f) for f in firsts if f is not None)
                if main not in named:
                    known_groups[key] = (now, named)
            if now != was:
                return False
        return True


class RecordingModules:
    """A :class:`ModuleProvider` that passes lookups on and records each one with what it found."""

    def __init__(self, inner: ModuleProvider) -> None:
        self.inner = inner
        self.lookups: dict[tuple[str, int, str | None], tuple[str, str, str] | None] = {}

    def find(self, name: str, level: int, importer: str | None) -> ModuleSource | None:
        found = self.inner.find(name, level, importer)
        self.lookups[(name, level, importer)] = _found(found)
        return found


class FactCache:
    """Reports by content key, valid while the project modules their analysis looked up are unchanged."""

    def __init__(self, folder: Path | None = None) -> None:
        self.folder = folder if folder is not None else default_folder()

    def key(self, data: bytes, shown: str, root: Path, settings: Settings, notebook: bool) -> str:
        h = blake2b(digest_size=32)
        for part in (build_fingerprint(), settings_fingerprint(settings), shown, str(root), str(notebook)):
            h.update(part.encode("utf-8", "surrogateescape"))
            h.update(b"\0")
        h.update(data)
        return h.hexdigest()

    def _entry(self, key: str) -> Path:
        return self.folder / key[:2] / f"{key[2:]}.pickle"

    def get(self, key: str, provider: ModuleProvider, memo: LookupMemo | None = None) -> FileReport | None:
        """The stored report, if there is one and its module lookups still find the same modules
        (with ``memo`` and a :class:`ScopedProvider`, each group of lookups is worked out once per scan)."""
        import pickle

        try:
            with open(self._entry(key), "rb") as fh:
                stored: Any = pickle.load(fh)
        except Exception:  # missing, unreadable, truncated by hand or from another layout: a miss
            return None
        if not (isinstance(stored, tuple) and len(stored) == 3 and stored[0] == FORMAT):
            return None
        _, groups, report = stored
        if not isinstance(report, FileReport):
            return None
        try:
            if memo is not None and hasattr(provider, "scope") and hasattr(provider, "first_file"):
                holds = memo.holds(provider, groups)  # type: ignore[arg-type]
            else:
                holds = all(_finds(provider, importer, _names(lines)) == was for importer, lines, _, was in groups)
        except Exception:
            return None
        if not holds:
            return None
        return report

    def put(self, key: str, lookups: dict, report: FileReport) -> None:
        """Store ``report`` (atomically: a temporary file renamed into place); crashed analyses, and those
        stopped at their time budget (a slower moment of the machine), are not stored."""
        import pickle

        if report.crashes or report.over_budget:
            return
        import tempfile

        entry = self._entry(key)
        try:
            data = pickle.dumps((FORMAT, grouped(lookups), report), protocol=pickle.HIGHEST_PROTOCOL)
            entry.parent.mkdir(parents=True, exist_ok=True)
            fd, tmp = tempfile.mkstemp(dir=entry.parent, prefix=".", suffix=".tmp")
            try:
                with os.fdopen(fd, "wb") as fh:
                    fh.write(data)
                os.replace(tmp, entry)
            except BaseException:
                Path(tmp).unlink(missing_ok=True)
                raise
        except (OSError, pickle.PicklingError, TypeError, AttributeError, RecursionError):
            pass  # a cache that cannot be written only costs a new analysis next time
