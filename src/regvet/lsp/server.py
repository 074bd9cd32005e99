"""The regvet language server (pygls 2.x): diagnostics as you type, fit status on hover, quick fixes.

Design notes (each one a pitfall met with pygls 2.1):

* Analysis runs in a private thread pool, never on the event loop and never in
  ``server.thread_pool`` (pygls reads stdin there). Each edit cancels the pending
  debounce for its document; a result is published only if the document's version
  has not moved since the text was taken, so the newest text always wins.
* Open documents are looked up by the *unquoted* URI (pygls' key), and always
  published under the URI exactly as the client sent it.
* Pull diagnostics are registered inside the ``initialize`` handler (capabilities are
  fixed once it returns); clients that can pull get pull only, the others get push.
* Everything sent is plain JSON (no NaN, no numpy scalars).
* An internal error is logged, never shown as a popup per keystroke, and never stops
  the server.
"""

from __future__ import annotations

import asyncio
import atexit
import logging
import shutil
import tempfile
import threading
import uuid
from collections import OrderedDict
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any
from urllib.parse import unquote

from lsprotocol import types as t
from pygls.lsp.server import LanguageServer
from pygls.uris import from_fs_path, to_fs_path

from regvet import __version__
from regvet.baseline import hide_known
from regvet.config import ConfigError, find_config
from regvet.engine import with_runtime
from regvet.lsp.convert import CONFIG_ERROR, Positions, to_diagnostic
from regvet.lsp.transport import CHUNK, RegvetProtocol, serve
from regvet.lsp.workers import DEFAULT_BUDGET_S, AnalysisFailed, AnalysisPool, AnalysisTimeout, Job, analyse_job
from regvet.model.report import FileReport
from regvet.model.settings import Settings
from regvet.rules import RULES_BY_ID
from regvet.workspace import ConfigCache, Overrides, project_root, split_rule_ids

log = logging.getLogger("regvet.lsp")
DEFAULT_DEBOUNCE_MS = 300
CLIENT_KEYS = ("alpha", "skip", "only", "debounceMs", "budgetMs")
BUDGET_MARGIN_S = 5.0
STOPPED = "analysis-stopped"  #: the code of the diagnostic on a document whose analysis was given up


class LRU(OrderedDict):
    """A small bounded cache (parsed helper modules: one entry per distinct text)."""

    def __init__(self, size: int) -> None:
        super().__init__()
        self.size = size

    def __setitem__(self, key: Any, value: Any) -> None:
        super().__setitem__(key, value)
        self.move_to_end(key)
        while len(self) > self.size:
            self.popitem(last=False)


@dataclass
class Result:
    """The latest analysis of one target (a file, or a whole notebook)."""

    version: Any
    report: FileReport
    diagnostics: dict[str, list[t.Diagnostic]]  # published URI -> diagnostics
    texts: dict[str, str]  # published URI -> the text the positions refer to
    cells: dict[int, str] = field(default_factory=dict)  # notebook cell index -> cell URI


@dataclass(frozen=True)
class FileSnapshot:
    """An open Python file as one analysis sees it, taken on the event loop."""

    key: str  # the analysed target: the URI the file was opened under
    uri: str  # the document's URI as the client sent it (diagnostics are published under it)
    version: int | None
    text: str


@dataclass(frozen=True)
class CellSnapshot:
    """One cell of a notebook snapshot (markdown cells too: they keep the cell numbering)."""

    index: int
    kind: t.NotebookCellKind
    uri: str
    text: str

    @property
    def is_code(self) -> bool:
        return self.kind == t.NotebookCellKind.Code


@dataclass(frozen=True)
class NotebookSnapshot:
    """An open notebook as one analysis sees it: every cell's text, taken on the event loop."""

    key: str  # the notebook's URI
    version: tuple[int, tuple[int | None, ...]]  # the notebook's version and each cell document's
    cells: tuple[CellSnapshot, ...]

    def code_cells(self) -> list[tuple[int, str]]:
        """(cell index, text) of every code cell, in notebook order: what the engine analyses."""
        return [(c.index, c.text) for c in self.cells if c.is_code]


Snapshot = FileSnapshot | NotebookSnapshot


class RegvetServer(LanguageServer):
    def __init__(self) -> None:
        super().__init__(
            "regvet",
            __version__,
            text_document_sync_kind=t.TextDocumentSyncKind.Incremental,
            notebook_document_sync=t.NotebookDocumentSyncOptions(
                notebook_selector=[
                    t.NotebookDocumentFilterWithCells(
                        notebook="jupyter-notebook", cells=[t.NotebookCellLanguage(language="python")]
                    )
                ],
                save=True,
            ),
            protocol_cls=RegvetProtocol,
        )
        self.pool = ThreadPoolExecutor(max_workers=2, thread_name_prefix="regvet-analysis")  # quick fixes, runs
        self.analyses = AnalysisPool()  # static analyses as you type: child processes with a budget
        self.client_settings: dict[str, Any] = {}
        self.pending: dict[str, asyncio.Task] = {}
        self.results: dict[str, Result] = {}
        #: statistics of the last explicit run per target, valid for the document version it ran on
        self.runtime: dict[str, tuple[Any, Any]] = {}
        self.use_pull = False
        self.config_ready = asyncio.Event()
        self.configs = ConfigCache()
        self.config_diagnostics: set[str] = set()
        self.module_cache: LRU = LRU(64)
        self._rule_docs: Path | None = None
        self._doc_uris: dict[str, str | None] = {}
        self._warned: set[tuple] = set()
        self.exit_code = 0

    @property
    def rule_docs(self) -> Path:
        """A temporary folder with one Markdown document per rule (the diagnostics link to them),
        written when the first diagnostic needs it and removed when the process exits."""
        if self._rule_docs is None:
            self._rule_docs = Path(tempfile.mkdtemp(prefix="regvet-rules-"))
            atexit.register(shutil.rmtree, self._rule_docs, True)
            self._write_rule_docs()
        return self._rule_docs

    def _write_rule_docs(self) -> None:
        from regvet.rules.texts import explain

        for rid in RULES_BY_ID:
            (self.rule_docs / f"{rid}.md").write_text(explain(rid), encoding="utf-8")

    # --- transport (pygls' reading loop replaced: see transport.py) ----------------------------
    def start_io(self, stdin: Any = None, stdout: Any = None) -> None:
        """Serve over stdio until the client says ``exit`` or closes the stream."""
        import os
        import sys

        from pygls.io_ import StdoutWriter

        self._stop_event = stop = threading.Event()
        fd = (stdin or sys.stdin.buffer).fileno()
        self.protocol.set_writer(StdoutWriter(stdout or sys.stdout.buffer))
        reader = ThreadPoolExecutor(max_workers=1, thread_name_prefix="regvet-stdin")

        async def read() -> bytes:
            return await asyncio.get_running_loop().run_in_executor(reader, os.read, fd, CHUNK)

        self.exit_code = 1  # the end of the stream without `shutdown` first (as `exit` without it)
        try:
            asyncio.run(serve(stop, read, self.protocol))  # type: ignore[arg-type]
            self.exit_code = 0 if self.protocol._shutdown else 1
        except BrokenPipeError:
            log.error("the client's end of the pipe is closed; stopping")
        except SystemExit as exc:  # `exit`: 0 after `shutdown`, 1 without
            self.exit_code = exc.code if isinstance(exc.code, int) else 1
        except KeyboardInterrupt:
            pass
        finally:
            reader.shutdown(wait=False)
            self.shutdown()

    def start_tcp(self, host: str, port: int) -> None:
        """Serve one client over TCP until it says ``exit`` or disconnects."""
        self._stop_event = stop = threading.Event()

        async def connection(reader: asyncio.StreamReader, writer: asyncio.StreamWriter) -> None:
            self.protocol.set_writer(writer)
            try:
                await serve(stop, lambda: reader.read(CHUNK), self.protocol)  # type: ignore[arg-type]
            finally:
                self.shutdown()

        async def listen() -> None:
            self._server = await asyncio.start_server(connection, host, port)
            async with self._server:
                await self._server.serve_forever()

        try:
            asyncio.run(listen())
        except (asyncio.CancelledError, KeyboardInterrupt, SystemExit):
            pass

    # --- reporting -------------------------------------------------------------------------
    def report_server_error(self, error: Exception, source: Any) -> None:
        log.error("regvet internal error: %r", error)
        try:
            self.window_log_message(
                t.LogMessageParams(type=t.MessageType.Error, message=f"regvet internal error: {error!r}")
            )
        except Exception:  # the transport may be gone
            pass

    def rule_doc_uri(self, rule: str) -> str | None:
        if rule not in self._doc_uris:
            path = self.rule_docs / f"{rule}.md"
            self._doc_uris[rule] = from_fs_path(str(path)) if path.exists() else None
        return self._doc_uris[rule]

    def budget(self, settings: Settings) -> float:
        """Seconds one analysis may take before its process is killed: the client's `budgetMs`, else
        a few seconds past the project's `analysis_budget` (the engine then stops first, with its
        own `incomplete-analysis` finding, and the kill is the backstop)."""
        value = self.client_settings.get("budgetMs")
        if isinstance(value, (int, float)) and not isinstance(value, bool) and 0 < value < 3_600_000:
            return float(value) / 1000.0
        core = getattr(settings, "analysis_budget", None)
        return float(core) + BUDGET_MARGIN_S if isinstance(core, (int, float)) else DEFAULT_BUDGET_S

    def shutdown(self) -> None:
        """Stop reading, and end every analysis process and pending task at once."""
        self.analyses.close()
        for task in list(self.pending.values()):
            task.cancel()
        self.pool.shutdown(wait=False, cancel_futures=True)
        super().shutdown()

    @property
    def debounce(self) -> float:
        value = self.client_settings.get("debounceMs", DEFAULT_DEBOUNCE_MS)
        try:
            return max(float(value), 0.0) / 1000.0
        except (TypeError, ValueError):
            return DEFAULT_DEBOUNCE_MS / 1000.0

    # --- documents -----------------------------------------------------------------------------
    def open_text(self, uri: str):
        """The open document for ``uri`` (None when not open; never read from disk)."""
        return self.workspace.text_documents.get(unquote(uri))

    def target_of(self, uri: str) -> str | None:
        """The key analysed for ``uri``: the notebook URI for a cell, the URI itself for a file."""
        nb = self.workspace.get_notebook_document(cell_uri=uri)
        if nb is not None:
            return nb.uri
        if self.workspace.get_notebook_document(notebook_uri=uri) is not None:
            return uri
        return uri if self.open_text(uri) is not None else None

    def snapshot(self, key: str) -> Snapshot | None:
        """Everything one analysis needs, taken on the event loop: texts and versions."""
        nb = self.workspace.get_notebook_document(notebook_uri=key)
        if nb is not None:
            cells = []
            versions = []
            seen: set[str] = set()
            for index, cell in enumerate(nb.cells):
                doc = self.open_text(cell.document)
                text = doc.source if doc is not None else ""
                versions.append(doc.version if doc is not None else None)
                kind = cell.kind
                if unquote(cell.document) in seen:  # one document listed twice: analysed (and shown) once
                    kind, text = t.NotebookCellKind.Markup, ""
                seen.add(unquote(cell.document))
                cells.append(CellSnapshot(index, kind, cell.document, text))
            return NotebookSnapshot(key, (nb.version, tuple(versions)), tuple(cells))
        doc = self.open_text(key)
        if doc is None:
            return None
        return FileSnapshot(key, doc.uri, doc.version, doc.source)

    def current_version(self, key: str) -> Any:
        snap = self.snapshot(key)
        return None if snap is None else snap.version

    def overlay(self) -> dict[Path, str]:
        out: dict[Path, str] = {}
        for doc in list(self.workspace.text_documents.values()):
            path = to_fs_path(doc.uri)
            if path and path.endswith(".py"):
                out[Path(path).resolve()] = doc.source
        return out

    # --- settings ------------------------------------------------------------------------------
    def settings_for(self, path: Path | None) -> Settings:
        base = Settings()
        if path is not None:
            try:
                cfg = find_config(path)
            except OSError:
                cfg = None
            loaded = self.configs.load(cfg)
            base = loaded if isinstance(loaded, Settings) else Settings()
        return self.client_overrides().apply(base)

    def client_overrides(self) -> Overrides:
        """The editor's `alpha`, `skip` and `only` (laid over the project's settings as the CLI's flags are)."""
        alpha = self.client_settings.get("alpha")
        if isinstance(alpha, bool) or not isinstance(alpha, (int, float)) or not 0 < alpha < 1:
            alpha = None
        skip = self._rule_ids("skip")
        only = self._rule_ids("only")
        return Overrides(only=only, skip=skip, alpha=None if alpha is None else float(alpha))

    def _rule_ids(self, key: str) -> frozenset[str]:
        value = self.client_settings.get(key)
        if not isinstance(value, list):
            return frozenset()
        known, unknown = split_rule_ids(value)
        if unknown and (key, tuple(unknown)) not in self._warned:
            self._warned.add((key, tuple(unknown)))
            self.window_log_message(
                t.LogMessageParams(
                    type=t.MessageType.Warning,
                    message=f"regvet: setting `{key}` names unknown rule ids {unknown}; they are ignored",
                )
            )
        return known


# --- analysis (runs in the private pool) ---------------------------------------------------------
def _root_for(ls: RegvetServer, path: Path) -> Path:
    folders = [Path(fs) for fs in (to_fs_path(f.uri) for f in ls.workspace.folders.values()) if fs]
    root = ls.workspace.root_path
    return project_root(path, folders, Path(root) if root else None)


def job_for(ls: RegvetServer, snap: Snapshot, overlay: dict[Path, str]) -> Job:
    """What the analysis of ``snap`` needs besides its text: settings, project root, open buffers."""
    fs = to_fs_path(snap.key)
    path = Path(fs).resolve() if fs else None
    root = _root_for(ls, path) if path is not None else None
    return Job(snap, ls.settings_for(path), root, path, overlay)


def with_last_run(ls: RegvetServer, snap: Snapshot, report: FileReport, settings: Settings) -> FileReport:
    ran = ls.runtime.get(snap.key)
    if ran is not None and ran[0] == snap.version:
        report = with_runtime(report, ran[1], settings)  # the last run still describes this text
    return report


def run_analysis(ls: RegvetServer, snap: Snapshot, overlay: dict[Path, str]) -> FileReport:
    """The analysis in this process (``regvet.runFits``, which the user starts, runs it in the pool)."""
    job = job_for(ls, snap, overlay)
    return with_last_run(ls, snap, analyse_job(job, ls.module_cache), job.settings)


def stopped_result(ls: RegvetServer, snap: Snapshot, why: str) -> Result:
    """A result with one diagnostic saying the analysis was given up (on the first code cell of a notebook)."""
    shown = to_fs_path(snap.key) or snap.key
    if isinstance(snap, NotebookSnapshot):
        texts = {c.uri: c.text for c in snap.cells if c.is_code}
        cells = {c.index: c.uri for c in snap.cells}
    else:
        texts, cells = {snap.uri: snap.text}, {}
    diagnostics: dict[str, list[t.Diagnostic]] = {uri: [] for uri in texts}
    for uri in list(diagnostics)[:1]:
        diagnostics[uri].append(
            t.Diagnostic(
                range=t.Range(t.Position(0, 0), t.Position(0, 0)),
                severity=t.DiagnosticSeverity.Warning,
                source="regvet",
                code=STOPPED,
                message=f"regvet did not finish analysing this document: {why}. "
                "Its other documents are analysed as usual; `regvet check` reports the file on its own.",
            )
        )
    return Result(snap.version, FileReport(path=shown), diagnostics, texts, cells)


def build_result(ls: RegvetServer, snap: Snapshot, report: FileReport) -> Result:
    encoding = ls.workspace.position_encoding
    report = hide_known(report, to_fs_path(snap.key))  # what the project's regvet-baseline.json lists
    file_uri: str | None = None
    if isinstance(snap, NotebookSnapshot):
        texts = {c.uri: c.text for c in snap.cells if c.is_code}
        cells = {c.index: c.uri for c in snap.cells}
        diagnostics: dict[str, list[t.Diagnostic]] = {uri: [] for uri in texts}
    else:
        file_uri = snap.uri
        texts = {snap.uri: snap.text}
        cells = {}
        diagnostics = {snap.uri: []}
    positions = {uri: Positions(text, encoding) for uri, text in texts.items()}
    for f in report.findings:
        if f.waived:
            continue
        uri = cells.get(f.span.cell) if f.span.cell is not None else file_uri
        if uri is None or uri not in positions:
            continue
        related = []
        for r in f.related:
            if r.path is not None:
                rel_uri = from_fs_path(r.path)
                rel_pos = Positions(_read(r.path), encoding)
            else:
                rel_uri = cells.get(r.span.cell) if r.span.cell is not None else uri
                if rel_uri is None or rel_uri not in positions:
                    continue
                rel_pos = positions[rel_uri]
            related.append(
                t.DiagnosticRelatedInformation(
                    location=t.Location(uri=rel_uri, range=rel_pos.range(r.span)), message=r.message
                )
            )
        diagnostic = to_diagnostic(f, positions[uri], related, ls.rule_doc_uri(f.rule))
        if diagnostic not in diagnostics[uri]:
            diagnostics[uri].append(diagnostic)
    return Result(snap.version, report, diagnostics, texts, cells)


def _read(path: str) -> str:
    try:
        return Path(path).read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError):
        return ""


async def analyse(ls: RegvetServer, key: str) -> Result | None:
    """Analyse the newest text of ``key``; None when the document is gone or changed meanwhile."""
    try:
        await asyncio.wait_for(ls.config_ready.wait(), 2.0)
    except asyncio.TimeoutError:
        pass  # the client never answered workspace/configuration: go on with what we have
    snap = ls.snapshot(key)
    if snap is None:
        return None
    job = job_for(ls, snap, ls.overlay())
    budget = ls.budget(job.settings)
    report: FileReport | None = None
    try:
        report = await ls.analyses.run(job, budget)
    except AnalysisTimeout:
        why = f"it took longer than the budget of {budget:g} s (too large or too complex to analyse as you type)"
    except AnalysisFailed as exc:
        why = f"the analysis failed ({exc})"
    if ls.current_version(key) != snap.version:
        return None  # edited while we worked: a newer analysis is on its way
    if report is None:
        log.warning("%s: %s", key, why)
        result = stopped_result(ls, snap, why)
    else:
        result = build_result(ls, snap, with_last_run(ls, snap, report, job.settings))
    ls.results[key] = result
    publish_config_errors(ls)
    return result


def publish(ls: RegvetServer, result: Result) -> None:
    for uri, diags in result.diagnostics.items():
        doc = ls.open_text(uri)
        ls.text_document_publish_diagnostics(
            t.PublishDiagnosticsParams(uri=uri, diagnostics=diags, version=doc.version if doc else None)
        )


def publish_config_errors(ls: RegvetServer) -> None:
    """One diagnostic on each broken config file; cleared once it is fixed."""
    current: set[str] = set()
    for err in ls.configs.errors():
        uri = from_fs_path(str(Path(err.path).resolve()))
        current.add(uri)
        ls.text_document_publish_diagnostics(
            t.PublishDiagnosticsParams(
                uri=uri,
                diagnostics=[
                    t.Diagnostic(
                        range=_config_error_range(err, ls.workspace.position_encoding),
                        message=f"regvet cannot use this configuration ({err}); using the defaults until it is fixed.",
                        severity=t.DiagnosticSeverity.Error,
                        source="regvet",
                        code=CONFIG_ERROR,
                    )
                ],
            )
        )
    for uri in ls.config_diagnostics - current:
        ls.text_document_publish_diagnostics(t.PublishDiagnosticsParams(uri=uri, diagnostics=[]))
    ls.config_diagnostics = current


def _config_error_range(err: ConfigError, encoding: str | None) -> t.Range:
    """From where the error is (the TOML error, the bad key) to the end of its line; the first line
    when the file gives no position (unreadable, not UTF-8)."""
    if err.line is None:
        return t.Range(t.Position(0, 0), t.Position(0, 1_000))
    start = Positions(_read(err.path), encoding).to_client(err.line, err.column or 0)
    return t.Range(start, t.Position(start.line, 1_000))


async def lint_later(ls: RegvetServer, key: str, delay: float) -> None:
    if delay:
        await asyncio.sleep(delay)  # a newer edit cancels us here
    try:
        result = await analyse(ls, key)
    except asyncio.CancelledError:
        raise
    except Exception as exc:  # never let one document's failure stop the server
        ls.report_server_error(exc, None)
        return
    if result is None:
        return
    if ls.use_pull:
        refresh = ls.client_capabilities.workspace
        if refresh and refresh.diagnostics and refresh.diagnostics.refresh_support:
            ls.workspace_diagnostic_refresh(None)
        return
    publish(ls, result)


def schedule(ls: RegvetServer, key: str, delay: float) -> None:
    old = ls.pending.pop(key, None)
    if old is not None:
        old.cancel()
    task = asyncio.ensure_future(lint_later(ls, key, delay))
    ls.pending[key] = task

    def done(finished: asyncio.Task, key: str = key) -> None:
        if ls.pending.get(key) is finished:
            ls.pending.pop(key, None)

    task.add_done_callback(done)


def forget(ls: RegvetServer, key: str) -> None:
    """A closed document: stop its pending analysis and drop its result."""
    task = ls.pending.pop(key, None)
    if task is not None:
        task.cancel()
    ls.results.pop(key, None)
    ls.runtime.pop(key, None)


def schedule_dependents(ls: RegvetServer, changed: Path, delay: float) -> None:
    """Re-analyse open targets that read ``changed`` (a project module) during their last analysis."""
    target = str(changed.resolve())
    for key, result in list(ls.results.items()):
        deps = result.report.facts.dependencies if result.report.facts else ()
        if target in deps:
            schedule(ls, key, delay)


def all_targets(ls: RegvetServer) -> list[str]:
    keys = [nb.uri for nb in ls.workspace.notebook_documents.values()]
    cells = {unquote(c.document) for nb in ls.workspace.notebook_documents.values() for c in nb.cells}
    for doc in list(ls.workspace.text_documents.values()):
        if unquote(doc.uri) not in cells and (doc.uri.endswith(".py") or doc.language_id == "python"):
            keys.append(doc.uri)
    return keys


# --- lifecycle and configuration -----------------------------------------------------------------
def on_initialize(ls: RegvetServer, params: t.InitializeParams) -> None:
    td = params.capabilities.text_document
    ls.use_pull = bool(td and td.diagnostic)
    opts = params.initialization_options
    if isinstance(opts, dict):
        section = opts.get("regvet", opts)
        if isinstance(section, dict):
            ls.client_settings.update({k: v for k, v in section.items() if k in CLIENT_KEYS})
    if ls.use_pull:

        @ls.feature(
            t.TEXT_DOCUMENT_DIAGNOSTIC,
            t.DiagnosticOptions(identifier="regvet", inter_file_dependencies=True, workspace_diagnostics=False),
        )
        async def pull(ls: RegvetServer, p: t.DocumentDiagnosticParams):
            uri = p.text_document.uri
            key = ls.target_of(uri)
            if key is None:
                return t.FullDocumentDiagnosticReport(items=[])
            result = ls.results.get(key)
            if result is None or result.version != ls.current_version(key):
                pending = ls.pending.pop(key, None)
                if pending is not None:
                    pending.cancel()
                result = await analyse(ls, key)
                if result is None:  # changed while analysing: analyse the newest text once more
                    result = await analyse(ls, key)
            if result is None:
                return t.FullDocumentDiagnosticReport(items=[])
            result_id = f"{uuid.uuid5(uuid.NAMESPACE_URL, repr(result.version))}"
            mine = result.diagnostics.get(uri)
            if mine is None:
                mine = next((d for u, d in result.diagnostics.items() if unquote(u) == unquote(uri)), [])
            if p.previous_result_id == result_id:
                return t.UnchangedDocumentDiagnosticReport(result_id=result_id)
            return t.FullDocumentDiagnosticReport(items=mine, result_id=result_id)


async def pull_settings(ls: RegvetServer) -> None:
    ws = ls.client_capabilities.workspace
    try:
        if ws and ws.configuration:
            [cfg] = await ls.workspace_configuration_async(
                t.ConfigurationParams(items=[t.ConfigurationItem(section="regvet")])
            )
            if isinstance(cfg, dict):
                ls.client_settings = {k: v for k, v in cfg.items() if k in CLIENT_KEYS}
    except Exception as exc:  # a client that fails the request: keep what we have
        log.warning("workspace/configuration failed: %r", exc)
    finally:
        ls.config_ready.set()


async def on_initialized(ls: RegvetServer, params: t.InitializedParams) -> None:
    ls.analyses.background(ls.analyses.warm())  # the first analysis process starts while settings arrive
    await pull_settings(ls)
    ws = ls.client_capabilities.workspace
    if ws and ws.did_change_watched_files and ws.did_change_watched_files.dynamic_registration:
        await ls.client_register_capability_async(
            t.RegistrationParams(
                registrations=[
                    t.Registration(
                        id=str(uuid.uuid4()),
                        method=t.WORKSPACE_DID_CHANGE_WATCHED_FILES,
                        register_options=t.DidChangeWatchedFilesRegistrationOptions(
                            watchers=[
                                t.FileSystemWatcher(glob_pattern="**/pyproject.toml"),
                                t.FileSystemWatcher(glob_pattern="**/regvet.toml"),
                                t.FileSystemWatcher(glob_pattern="**/*.py"),
                            ]
                        ),
                    )
                ]
            )
        )


async def on_shutdown(ls: RegvetServer, params: Any) -> None:
    """``shutdown``: no more analyses; the ones under way end now (their processes are killed)."""
    ls.analyses.close()
    for task in list(ls.pending.values()):
        task.cancel()


async def on_config(ls: RegvetServer, params: t.DidChangeConfigurationParams) -> None:
    pushed = params.settings.get("regvet") if isinstance(params.settings, dict) else None
    if isinstance(pushed, dict):
        ls.client_settings = {k: v for k, v in pushed.items() if k in CLIENT_KEYS}
        ls.config_ready.set()
    else:
        await pull_settings(ls)
    for key in all_targets(ls):
        schedule(ls, key, 0)


def on_watched(ls: RegvetServer, params: t.DidChangeWatchedFilesParams) -> None:
    config_changed = False
    for change in params.changes:
        path = to_fs_path(change.uri)
        if not path:
            continue
        name = Path(path).name
        if name in ("pyproject.toml", "regvet.toml"):
            config_changed = True
        elif name.endswith(".py") and ls.open_text(change.uri) is None:
            schedule_dependents(ls, Path(path), 0)
    if config_changed:
        ls.configs.clear()
        for key in all_targets(ls):
            schedule(ls, key, 0)


# --- text documents ------------------------------------------------------------------------------
def _is_python(ls: RegvetServer, uri: str) -> bool:
    doc = ls.open_text(uri)
    if ls.workspace.get_notebook_document(cell_uri=uri) is not None:
        return False  # cells are handled with their notebook
    return uri.endswith(".py") or (doc is not None and doc.language_id == "python")


def did_open(ls: RegvetServer, params: t.DidOpenTextDocumentParams) -> None:
    uri = params.text_document.uri
    if _is_python(ls, uri):
        schedule(ls, uri, 0)


def did_change(ls: RegvetServer, params: t.DidChangeTextDocumentParams) -> None:
    uri = params.text_document.uri
    if _is_python(ls, uri):
        schedule(ls, uri, ls.debounce)
        path = to_fs_path(uri)
        if path:
            schedule_dependents(ls, Path(path), ls.debounce)


def did_save(ls: RegvetServer, params: t.DidSaveTextDocumentParams) -> None:
    uri = params.text_document.uri
    if _is_python(ls, uri):
        schedule(ls, uri, 0)


def did_close(ls: RegvetServer, params: t.DidCloseTextDocumentParams) -> None:
    uri = params.text_document.uri
    forget(ls, uri)
    if not ls.use_pull:
        ls.text_document_publish_diagnostics(t.PublishDiagnosticsParams(uri=uri, diagnostics=[]))


# --- notebooks -----------------------------------------------------------------------------------
def nb_open(ls: RegvetServer, params: t.DidOpenNotebookDocumentParams) -> None:
    schedule(ls, params.notebook_document.uri, 0)


def nb_change(ls: RegvetServer, params: t.DidChangeNotebookDocumentParams) -> None:
    key = params.notebook_document.uri
    nb = ls.workspace.get_notebook_document(notebook_uri=key)
    previous = ls.results.get(key)
    if previous is not None and nb is not None and not ls.use_pull:
        gone = set(previous.diagnostics) - {c.document for c in nb.cells}
        for uri in gone:  # a deleted cell: clear what was shown on it
            ls.text_document_publish_diagnostics(t.PublishDiagnosticsParams(uri=uri, diagnostics=[]))
    schedule(ls, key, ls.debounce)


def nb_save(ls: RegvetServer, params: t.DidSaveNotebookDocumentParams) -> None:
    schedule(ls, params.notebook_document.uri, 0)


def nb_close(ls: RegvetServer, params: t.DidCloseNotebookDocumentParams) -> None:
    forget(ls, params.notebook_document.uri)
    if not ls.use_pull:
        for cell in params.cell_text_documents:
            ls.text_document_publish_diagnostics(t.PublishDiagnosticsParams(uri=cell.uri, diagnostics=[]))


# --- the server ----------------------------------------------------------------------------------
RUN_FITS = "regvet.runFits"
