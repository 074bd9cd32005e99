"""The language server's structure: a factory that builds independent servers, an import with no side effects.

The protocol itself is tested end to end in ``test_lsp.py`` (a real client over stdio); these tests look
at the pieces in-process and in a fresh interpreter.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys

from lsprotocol import types as t

from regvet.lsp.app import create_server
from regvet.lsp.server import RUN_FITS, RegvetServer


def test_importing_the_server_module_creates_no_server_and_writes_nothing(tmp_path):
    code = (
        "import gc, json, threading, regvet.lsp.app, regvet.lsp.server as m\n"
        "from pygls.lsp.server import LanguageServer\n"
        "print(json.dumps({'servers': sum(isinstance(o, LanguageServer) for o in gc.get_objects()),\n"
        "                  'threads': threading.active_count(), 'attribute': hasattr(m, 'server')}))\n"
    )
    env = {**os.environ, "TMPDIR": str(tmp_path)}
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env, check=True)
    assert json.loads(proc.stdout) == {"servers": 0, "threads": 1, "attribute": False}
    assert list(tmp_path.iterdir()) == []  # no rule documents (or anything else) in the temp folder


def test_each_server_from_the_factory_is_independent_and_fully_wired():
    a, b = create_server(), create_server()
    assert isinstance(a, RegvetServer) and a is not b
    for server in (a, b):
        features = server.protocol.fm.features
        for method in (
            t.INITIALIZE,
            t.INITIALIZED,
            t.TEXT_DOCUMENT_DID_OPEN,
            t.TEXT_DOCUMENT_DID_CHANGE,
            t.TEXT_DOCUMENT_DID_SAVE,
            t.TEXT_DOCUMENT_DID_CLOSE,
            t.NOTEBOOK_DOCUMENT_DID_CHANGE,
            t.TEXT_DOCUMENT_HOVER,
            t.TEXT_DOCUMENT_CODE_ACTION,
            t.WORKSPACE_DID_CHANGE_WATCHED_FILES,
            t.WORKSPACE_DID_CHANGE_CONFIGURATION,
        ):
            assert method in features, method
        assert t.TEXT_DOCUMENT_DIAGNOSTIC not in features  # only added in `initialize`, for pulling clients
        assert list(server.protocol.fm.commands) == [RUN_FITS]
        assert server.protocol.fm.feature_options[t.TEXT_DOCUMENT_DID_SAVE] == t.SaveOptions(include_text=False)
    a.client_settings["skip"] = ["no-form-test"]
    a.results["file:///x.py"] = None  # type: ignore[assignment]
    assert b.client_settings == {} and b.results == {} and a.pool is not b.pool


def test_rule_documents_are_written_when_first_linked(tmp_path, monkeypatch):
    monkeypatch.setenv("TMPDIR", str(tmp_path))
    import tempfile

    monkeypatch.setattr(tempfile, "tempdir", None)  # re-read TMPDIR
    server = create_server()
    assert list(tmp_path.iterdir()) == []
    uri = server.rule_doc_uri("no-form-test")
    assert uri is not None and uri.endswith("/no-form-test.md")
    [folder] = tmp_path.iterdir()
    assert "no-form-test" in (folder / "no-form-test.md").read_text(encoding="utf-8")
    assert server.rule_doc_uri("no-such-rule") is None


async def test_a_config_error_is_marked_from_where_the_config_error_says_in_client_units(tmp_path):
    from pygls.uris import from_fs_path

    from lsp_client import session

    (tmp_path / ".git").mkdir()
    cfg = tmp_path / "pyproject.toml"
    cfg.write_text('[tool.regvet]\nname = "🚢" x\n', encoding="utf-8")  # invalid TOML after a non-BMP character
    cfg_uri = from_fs_path(str(cfg))
    async with session(tmp_path) as c:
        c.open(tmp_path / "model.py", "import statsmodels.api as sm\n")
        await c.until(lambda: c.lsp.diagnostics.get(cfg_uri))
        [d] = c.lsp.diagnostics[cfg_uri]
        # tomllib: column 12 counted from 1 in code points; the ship is two UTF-16 units
        assert "invalid TOML" in d.message and (d.range.start.line, d.range.start.character) == (1, 12)
        cfg.write_text('[tool.regvet]\nseverity = { no-form-test = "warning", no-variance-test = "fatal" }\n')
        c.lsp.workspace_did_change_watched_files(
            t.DidChangeWatchedFilesParams(changes=[t.FileEvent(uri=cfg_uri, type=t.FileChangeType.Changed)])
        )
        await c.until(lambda: "fatal" in c.lsp.diagnostics[cfg_uri][0].message)
        [d] = c.lsp.diagnostics[cfg_uri]
        assert (d.range.start.line, d.range.start.character) == (1, 39) and d.range.end.line == 1
