"""A real LSP client over stdio (pytest-lsp's) driving ``python -m regvet serve`` for the end-to-end tests.

Waits are on conditions over what the server actually sent (never fixed sleeps).
"""

from __future__ import annotations

import asyncio
import sys
import time
from collections.abc import AsyncIterator, Callable
from contextlib import asynccontextmanager
from pathlib import Path
from typing import Any

from lsprotocol import types as t
from pygls.protocol import default_converter
from pygls.uris import from_fs_path
from pytest_lsp import LanguageClient
from pytest_lsp.client import DEFAULT_CLIENT_FEATURES, register_lsp_features

SERVER = [sys.executable, "-m", "regvet", "serve"]


def capabilities(
    *,
    pull: bool = False,
    notebook: bool = False,
    configuration: bool = True,
    watched: bool = True,
    encodings: list[str] | None = None,
    progress: bool = False,
) -> t.ClientCapabilities:
    return t.ClientCapabilities(
        window=t.WindowClientCapabilities(work_done_progress=True) if progress else None,
        workspace=t.WorkspaceClientCapabilities(
            configuration=configuration,
            did_change_watched_files=t.DidChangeWatchedFilesClientCapabilities(dynamic_registration=watched),
            diagnostics=t.DiagnosticWorkspaceClientCapabilities(refresh_support=True) if pull else None,
            workspace_folders=True,
        ),
        text_document=t.TextDocumentClientCapabilities(
            synchronization=t.TextDocumentSyncClientCapabilities(did_save=True),
            publish_diagnostics=t.PublishDiagnosticsClientCapabilities(
                related_information=True, version_support=True, code_description_support=True, data_support=True
            ),
            diagnostic=t.DiagnosticClientCapabilities(related_document_support=True) if pull else None,
            hover=t.HoverClientCapabilities(content_format=[t.MarkupKind.Markdown]),
            code_action=t.CodeActionClientCapabilities(
                code_action_literal_support=t.ClientCodeActionLiteralOptions(
                    code_action_kind=t.ClientCodeActionKindOptions(value_set=[t.CodeActionKind.QuickFix])
                ),
                data_support=True,
            ),
        ),
        notebook_document=t.NotebookDocumentClientCapabilities(
            synchronization=t.NotebookDocumentSyncClientCapabilities()
        )
        if notebook
        else None,
        general=t.GeneralClientCapabilities(position_encodings=encodings) if encodings else None,
    )


class Client:
    """pytest-lsp's client plus a log of every publishDiagnostics (uri, version, diagnostics)."""

    def __init__(self) -> None:
        self.lsp = LanguageClient(converter_factory=default_converter)
        self.published: list[t.PublishDiagnosticsParams] = []
        self.registrations: list[t.Registration] = []

        def on_publish(client: LanguageClient, params: t.PublishDiagnosticsParams) -> None:
            client.diagnostics[params.uri] = params.diagnostics
            self.published.append(params)

        def on_register(client: LanguageClient, params: t.RegistrationParams) -> None:
            self.registrations.extend(params.registrations)

        register_lsp_features(
            self.lsp,
            {
                **DEFAULT_CLIENT_FEATURES,
                t.TEXT_DOCUMENT_PUBLISH_DIAGNOSTICS: on_publish,
                t.CLIENT_REGISTER_CAPABILITY: on_register,
            },
        )
        self.versions: dict[str, int] = {}

    async def until(self, condition: Callable[[], Any], timeout: float = 20.0) -> Any:
        deadline = time.monotonic() + timeout
        while True:
            value = condition()
            if value:
                return value
            if time.monotonic() > deadline:
                raise AssertionError(f"timed out waiting; last published: {self.published[-3:]}")
            await asyncio.sleep(0.01)

    async def diagnostics_for(self, uri: str, version: int | None, timeout: float = 20.0) -> list[t.Diagnostic]:
        """The diagnostics published for ``uri`` at ``version`` (waits for them)."""
        params = await self.until(
            lambda: next((p for p in reversed(self.published) if p.uri == uri and p.version == version), None),
            timeout,
        )
        return list(params.diagnostics)

    def open(self, path: Path, text: str, language: str = "python") -> str:
        uri = from_fs_path(str(path))
        self.versions[uri] = 1
        self.lsp.text_document_did_open(
            t.DidOpenTextDocumentParams(t.TextDocumentItem(uri=uri, language_id=language, version=1, text=text))
        )
        return uri

    def replace(self, uri: str, text: str) -> int:
        self.versions[uri] += 1
        self.lsp.text_document_did_change(
            t.DidChangeTextDocumentParams(
                text_document=t.VersionedTextDocumentIdentifier(uri=uri, version=self.versions[uri]),
                content_changes=[t.TextDocumentContentChangeWholeDocument(text=text)],
            )
        )
        return self.versions[uri]

    def edit(self, uri: str, start: tuple[int, int], end: tuple[int, int], text: str) -> int:
        self.versions[uri] += 1
        self.lsp.text_document_did_change(
            t.DidChangeTextDocumentParams(
                text_document=t.VersionedTextDocumentIdentifier(uri=uri, version=self.versions[uri]),
                content_changes=[
                    t.TextDocumentContentChangePartial(range=t.Range(t.Position(*start), t.Position(*end)), text=text)
                ],
            )
        )
        return self.versions[uri]


@asynccontextmanager
async def session(
    root: Path, caps: t.ClientCapabilities | None = None, settings: dict | None = None, init_options: dict | None = None
) -> AsyncIterator[Client]:
    client = Client()
    if settings is not None:
        client.lsp.set_configuration(settings, section="regvet")
    await client.lsp.start_io(*SERVER)
    result = await client.lsp.initialize_session(
        t.InitializeParams(
            capabilities=caps or capabilities(),
            root_uri=from_fs_path(str(root)),
            workspace_folders=[t.WorkspaceFolder(uri=from_fs_path(str(root)), name=root.name)],
            initialization_options=init_options if init_options is not None else {"regvet": {"debounceMs": 50}},
        )
    )
    client.server_capabilities = result.capabilities  # type: ignore[attr-defined]
    try:
        yield client
    finally:
        await client.lsp.shutdown_session()
