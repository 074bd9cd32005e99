"""What the engine hands every front for one file: a :class:`FileReport`.

A pure value: the engine builds it, the CLI, the outputs, the language server, the hover
status and the runtime mode read it.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Protocol

from regvet.model.cells import CellMap
from regvet.model.facts import FileFacts
from regvet.model.finding import Finding
from regvet.model.runtime import RuntimeFacts
from regvet.model.settings import Settings


@dataclass(frozen=True)
class Crash:
    """A part of regvet that failed on this file (its findings are lost, the rest are kept)."""

    where: str  # "analysis" or a rule id
    message: str


class JudgedInput(Protocol):
    """What a report's readers may use of the input its rules judged.

    The engine keeps its ``regvet.rules.base.RuleInput`` here (so a run can be judged again
    without parsing); the model names only the parts that are model values. Code that needs
    the whole rule input (the engine, the hover status) narrows with ``isinstance``.
    """

    @property
    def facts(self) -> FileFacts: ...

    @property
    def settings(self) -> Settings: ...

    @property
    def runtime(self) -> RuntimeFacts | None: ...


@dataclass(frozen=True)
class FileReport:
    path: str
    findings: tuple[Finding, ...] = ()
    crashes: tuple[Crash, ...] = ()
    skipped: bool = False  # nothing regression-related in the file: not analysed
    #: The analysis stopped at its time budget: a verdict of this run's speed, not of the text (never cached).
    over_budget: bool = False
    facts: FileFacts | None = field(default=None, compare=False, repr=False)
    cell_count: int | None = None
    cell_map: CellMap | None = field(default=None, compare=False, repr=False)
    rule_input: JudgedInput | None = field(default=None, compare=False, repr=False)
    #: The Python that was analysed (a notebook's code cells joined, magics neutralised).
    python: str | None = field(default=None, compare=False, repr=False)
