"""How the analysis gets the project's own modules: the interface a front implements.

The collector does no I/O; the caller hands it a :class:`ModuleProvider` (the CLI reads files from
disk, the language server serves open buffers, single-file analysis uses :class:`NoModules`).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Protocol


@dataclass(frozen=True)
class ModuleSource:
    """A project module as the provider found it."""

    key: str  # dotted module name, used for ``diagnostic_helpers`` matching
    path: str  # shown in related locations
    text: str


class ModuleProvider(Protocol):
    """Finds the project's own modules. ``importer`` is the path of the importing file (None: the analysed file)."""

    def find(self, name: str, level: int, importer: str | None) -> ModuleSource | None: ...


class NoModules:
    """A provider for single-file analysis: no project modules."""

    def find(self, name: str, level: int, importer: str | None) -> ModuleSource | None:
        return None
