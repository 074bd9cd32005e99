"""Where a file's baseline is, and the error a bad one gives: all that ``regvet check`` needs of the
baseline when there is none (:mod:`regvet.baseline` reads, matches and writes them)."""

from __future__ import annotations

from pathlib import Path

from regvet.config import ROOT_MARKERS

BASELINE_NAME = "regvet-baseline.json"


class BaselineError(Exception):
    """A baseline file that cannot be used; ``str()`` names the file and the problem."""


def find_baseline(start: Path) -> Path | None:
    """The baseline for ``start`` (a file or folder): ``regvet-baseline.json`` in its folder or one
    above it, up to the project root (the first folder with ``pyproject.toml``, ``.git`` or
    ``.hg``, as for the configuration); None when there is none."""
    here = start if start.is_dir() else start.parent
    here = here.resolve()
    for folder in (here, *here.parents):
        candidate = folder / BASELINE_NAME
        if candidate.is_file():
            return candidate
        if any((folder / m).exists() for m in ROOT_MARKERS):
            return None
    return None
