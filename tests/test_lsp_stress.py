"""The language server under stress and hostile input (issue 12): a real ``regvet serve`` process.

Rapid edits and pathological documents go through pytest-lsp's client; broken protocol (text that
is not JSON, wrong or absurd ``Content-Length``, invalid params, a client that goes away mid-request)
is written byte for byte to the server's stdin through raw subprocess pipes, since a client library
would refuse to send it. Waits are on what the server sends, with generous deadlines (the machine
may be loaded); "answers within seconds" means a deadline of 15 s against an analysis that, today,
never ends.
"""

from __future__ import annotations

import asyncio
import json
import os
import subprocess
import threading
import time
from pathlib import Path

import pytest
from lsprotocol import types as t
from pygls.uris import from_fs_path

from lsp_client import SERVER, capabilities, session
from regvet.engine import analyze
from regvet.model.settings import Settings

FIT = 'import pandas as pd\nimport statsmodels.formula.api as smf\n\nharbour = pd.read_csv("berths.csv")\n'
CHECKS = (
    "from statsmodels.stats.diagnostic import het_breuschpagan, linear_reset\n"
    "print(linear_reset(res, power=3, use_f=True))\nprint(het_breuschpagan(res.resid, res.model.exog))\n"
)
NORMAL = FIT + 'res = smf.ols("berths ~ tide + wind", data=harbour).fit()\nprint(res.summary())\n'
#: A formula whose power the analyser once expanded term by term (its analysis never ended before
#: issue 12 bounded it): now an `incomplete-analysis` finding at once, and still no hang.
HUGE_POWER = FIT + 'res = smf.ols("berths ~ (a+b+c+d+e+f+g+h+i+j+k+l)**99999999", data=harbour).fit()\n'


def long_script(lines: int = 40_000) -> str:
    """An ordinary generated study (bench/generate.py) whose analysis takes tens of seconds."""
    import sys

    sys.path.insert(0, str(Path(__file__).parents[1] / "bench"))
    from generate import script

    return script(lines)


@pytest.fixture
def project(tmp_path):
    (tmp_path / ".git").mkdir()
    return tmp_path


def codes(diags) -> list[str]:
    return sorted(str(d.code) for d in diags)


def expected_codes(text: str) -> list[str]:
    """What the analysis core itself reports on ``text`` (the CLI's engine, called directly)."""
    return sorted(f.rule for f in analyze(text, "x.py", Settings(), notebook=False).findings if not f.waived)


def children(pid: int) -> set[int]:
    out: set[int] = set()
    for task in Path(f"/proc/{pid}/task").iterdir():
        out |= {int(p) for p in (task / "children").read_text().split()}
    return out


def alive(pid: int) -> bool:
    try:
        return Path(f"/proc/{pid}/stat").read_text().split(")")[-1].split()[0] != "Z"
    except OSError:
        return False


# --- raw pipes ---------------------------------------------------------------------------------
def frame(message: dict | bytes) -> bytes:
    body = message if isinstance(message, bytes) else json.dumps(message).encode()
    return b"Content-Length: %d\r\n\r\n" % len(body) + body


class Raw:
    """``regvet serve`` on raw pipes: we write bytes, a thread collects every message it sends."""

    def __init__(self, root: Path, initialize: bool = True, options: dict | None = None, pipes=None) -> None:
        self.messages: list[dict] = []
        self.stderr = b""
        if pipes is None:
            self.proc = subprocess.Popen(SERVER, stdin=subprocess.PIPE, stdout=subprocess.PIPE, stderr=subprocess.PIPE)
            self._in, self._out = self.proc.stdin, self.proc.stdout
            threading.Thread(target=self._read_stderr, daemon=True).start()
        else:  # a server running in this process on these pipes
            self._in, self._out = pipes
        threading.Thread(target=self._read, daemon=True).start()
        if initialize:
            self.request(
                1,
                "initialize",
                {
                    "processId": None,
                    "rootUri": root.as_uri(),
                    "capabilities": {},
                    "initializationOptions": {"regvet": options or {"debounceMs": 20}},
                },
            )
            self.answer(1)
            self.notify("initialized", {})

    def _read(self) -> None:
        out = self._out
        assert out is not None
        while header := out.readline():
            if header.lower().startswith(b"content-length:"):
                length = int(header.split(b":")[1])
                while out.readline() not in (b"\r\n", b""):
                    pass
                self.messages.append(json.loads(out.read(length)))

    def _read_stderr(self) -> None:
        assert self.proc.stderr is not None
        self.stderr = self.proc.stderr.read()

    def write(self, data: bytes) -> None:
        assert self._in is not None
        self._in.write(data)
        self._in.flush()

    def request(self, msg_id: int, method: str, params: dict | None = None) -> None:
        self.write(frame({"jsonrpc": "2.0", "id": msg_id, "method": method, "params": params}))

    def notify(self, method: str, params: dict) -> None:
        self.write(frame({"jsonrpc": "2.0", "method": method, "params": params}))

    def wait(self, condition, timeout: float = 20.0):
        deadline = time.monotonic() + timeout
        while time.monotonic() < deadline:
            found = next((m for m in self.messages if condition(m)), None)
            if found is not None:
                return found
            time.sleep(0.01)
        raise AssertionError(f"nothing matched in {timeout} s; got {self.messages[-5:]}")

    def answer(self, msg_id, timeout: float = 20.0) -> dict:
        return self.wait(lambda m: m.get("id") == msg_id and "method" not in m, timeout)

    def errors_without_id(self) -> list[dict]:
        return [m for m in self.messages if "error" in m and m.get("id") is None]

    def alive_check(self, msg_id: int) -> None:
        """A request that must be answered: the server is still reading and in step."""
        self.request(
            msg_id,
            "textDocument/hover",
            {"textDocument": {"uri": "file:///nowhere/x.py"}, "position": {"line": 0, "character": 0}},
        )
        assert self.answer(msg_id)["result"] is None

    def stop(self) -> int:
        if self.proc.poll() is None:
            self.request(99_999, "shutdown")
            self.answer(99_999)
            self.notify("exit", {})
        return self.proc.wait(20)

    def vm_peak_kb(self) -> int:
        for line in Path(f"/proc/{self.proc.pid}/status").read_text().splitlines():
            if line.startswith("VmPeak:"):
                return int(line.split()[1])
        raise AssertionError("no VmPeak")


@pytest.fixture
def raw(project):
    servers: list[Raw] = []

    def start(**kw) -> Raw:
        servers.append(Raw(project, **kw))
        return servers[-1]

    yield start
    for s in servers:
        if s.proc.poll() is None:
            s.proc.kill()
            s.proc.wait(10)


def test_text_that_is_not_json_gets_a_parse_error_and_the_server_reads_on(raw):
    s = raw()
    s.write(frame(b'{"jsonrpc": "2.0", "id": 5, "method": "textDocument/hover", "params": {'))
    error = s.wait(lambda m: m.get("error", {}).get("code") == -32700)
    assert error["id"] is None  # JSON-RPC 2.0: the id could not be read
    for body in (
        b"[1, 2, 3]",
        b"42",
        b'{"id": 6, "method": "shutdown"}',
        b'{"jsonrpc": "1.0", "id": 7, "method": "x"}',
    ):
        s.write(frame(body))
    invalid = lambda: [m for m in s.messages if m.get("error", {}).get("code") == -32600]  # noqa: E731
    s.wait(lambda m: len(invalid()) == 4)
    assert sorted(str(m["id"]) for m in invalid()) == ["6", "7", "None", "None"]
    s.write(frame(b"[" * 200_000 + b"]" * 200_000))  # deeper than the JSON decoder goes
    s.wait(lambda m: len([e for e in s.messages if e.get("error", {}).get("code") == -32700]) == 2)
    s.alive_check(10)
    assert s.stop() == 0
    assert b"Traceback" not in s.stderr


def test_a_request_with_invalid_params_gets_an_invalid_params_error_with_its_id(raw, project):
    s = raw()
    s.request(20, "textDocument/hover", {"textDocument": 5, "position": {"line": 0}})
    s.request(21, "textDocument/codeAction", {"textDocument": {"uri": "file:///x.py"}})  # no range, no context
    s.request(22, "workspace/executeCommand", {"command": 7})
    for msg_id in (20, 21, 22):
        error = s.answer(msg_id)["error"]
        assert error["code"] == -32602, error
    assert "textDocument/hover" in s.answer(20)["error"]["message"]
    # a notification with invalid params is never answered (JSON-RPC forbids it) and harms nothing
    s.notify("textDocument/didOpen", {"textDocument": {"uri": 3}})
    s.alive_check(23)
    uri = from_fs_path(str(project / "berths.py"))
    s.notify(
        "textDocument/didOpen", {"textDocument": {"uri": uri, "languageId": "python", "version": 1, "text": NORMAL}}
    )
    published = s.wait(lambda m: m.get("method") == "textDocument/publishDiagnostics" and m["params"]["uri"] == uri)
    assert sorted(d["code"] for d in published["params"]["diagnostics"]) == expected_codes(NORMAL)
    assert not [m for m in s.messages if "id" in m and m["id"] not in (1, 20, 21, 22, 23) and "method" not in m]
    assert s.stop() == 0


def test_wrong_content_lengths_lose_only_their_own_message(raw):
    s = raw()
    good = json.dumps(
        {
            "jsonrpc": "2.0",
            "id": 30,
            "method": "textDocument/hover",
            "params": {"textDocument": {"uri": "file:///a.py"}, "position": {"line": 0, "character": 0}},
        }
    )
    # too short: the body is cut, its tail then stands before the next header
    s.write(b"Content-Length: %d\r\n\r\n%s" % (len(good) - 10, good.encode()))
    s.alive_check(31)
    # too long: the body swallows the start of the next message; the one after is read
    s.write(b"Content-Length: %d\r\n\r\n%s" % (len(good) + 25, good.replace("30", "32").encode()))
    s.write(frame(json.loads(good.replace("30", "33"))))
    s.alive_check(34)
    # no Content-Length at all, a non-numeric one, and lines of bytes that are no header
    s.write(b"Content-Type: application/vscode-jsonrpc\r\n\r\n")
    s.write(b"Content-Length: twelve\r\n\r\n{}")
    s.write(b"\x00\xff garbage " * 5_000 + b"\r\n")
    s.alive_check(35)
    # the header is case-insensitive, as HTTP's
    s.write(b"content-length: %d\r\n\r\n%s" % (len(good), good.replace("30", "36").encode()))
    assert s.answer(36)["result"] is None
    assert 32 not in [m.get("id") for m in s.messages]  # the message the long one swallowed is lost, no more
    assert s.errors_without_id(), "each framing problem is answered with an error"
    assert s.stop() == 0


def test_an_absurd_content_length_is_refused_without_allocating_it(raw):
    s = raw()
    before = s.vm_peak_kb()
    s.write(b"Content-Length: 99999999999999\r\n\r\n" + b'{"jsonrpc": "2.0", "id": 40, "method": "shutdown"}')
    refused = s.wait(lambda m: "over the limit" in m.get("error", {}).get("message", ""))
    assert refused["id"] is None and refused["error"]["code"] == -32700
    s.write(b"Content-Length: 200000000\r\n\r\n")  # 200 MB announced (under the limit), 1 MB sent
    s.write(b"x" * 1_000_000)
    time.sleep(0.5)
    assert s.proc.poll() is None
    # what the server holds is what arrived, not what the header announced (from memory: pygls 2.1
    # allocates the announced length at once; VmPeak would then jump by 200 MB or more)
    assert s.vm_peak_kb() - before < 100_000, (before, s.vm_peak_kb())
    s.proc.stdin.close()  # the client goes away in the middle of the announced body
    assert s.proc.wait(20) == 1  # no `shutdown` was asked: exit code 1, as the LSP says for `exit`
    assert b"Traceback" not in s.stderr


def test_a_request_after_shutdown_is_refused_and_exit_ends_the_process(raw):
    s = raw()
    s.request(50, "shutdown")
    assert s.answer(50)["result"] is None
    s.request(
        51, "textDocument/hover", {"textDocument": {"uri": "file:///a.py"}, "position": {"line": 0, "character": 0}}
    )
    assert s.answer(51)["error"]["code"] == -32600
    s.notify("exit", {})
    assert s.proc.wait(20) == 0


def test_a_client_that_disconnects_mid_request_leaves_no_process_behind(raw, project):
    (project / "regvet.toml").write_text("analysis_budget = 600\n")
    s = raw(options={"debounceMs": 0, "budgetMs": 600_000})
    uri = from_fs_path(str(project / "slow.py"))
    s.notify(
        "textDocument/didOpen",
        {"textDocument": {"uri": uri, "languageId": "python", "version": 1, "text": long_script()}},
    )
    s.request(60, "textDocument/hover", {"textDocument": {"uri": uri}, "position": {"line": 5, "character": 8}})
    deadline = time.monotonic() + 20
    while not children(s.proc.pid) and time.monotonic() < deadline:
        time.sleep(0.05)
    workers = children(s.proc.pid)
    assert workers, "the analysis runs in a child process"
    time.sleep(0.5)
    assert not [m for m in s.messages if m.get("id") == 60]  # the hover waits for the analysis
    s.proc.stdin.close()  # gone, with the hover unanswered
    started = time.monotonic()
    assert s.proc.wait(20) == 1
    assert time.monotonic() - started < 10
    time.sleep(0.2)
    assert not [pid for pid in workers if alive(pid)], "analysis processes outlived the server"
    assert b"Traceback" not in s.stderr


# --- a real client -----------------------------------------------------------------------------
async def test_a_thousand_rapid_edits_end_with_the_diagnostics_of_the_final_text(project):
    async with session(project) as c:
        uri = c.open(project / "berths.py", NORMAL)
        await c.diagnostics_for(uri, 1)
        lines = NORMAL.count("\n")
        for i in range(1_000):  # type a comment, then the checks, one edit at a time
            if i == 500:
                c.edit(uri, (lines, 0), (lines, 0), CHECKS)
                lines += CHECKS.count("\n")
            else:
                c.edit(uri, (lines, 0), (lines, 0), f"# {i}\n")
                lines += 1
        final = c.versions[uri]
        diags = await c.diagnostics_for(uri, final, timeout=60)
        text = (
            NORMAL + "".join(f"# {i}\n" for i in range(500)) + CHECKS + "".join(f"# {i}\n" for i in range(501, 1_000))
        )
        assert codes(diags) == expected_codes(text) == []
        assert codes(await c.diagnostics_for(uri, 1)) == expected_codes(NORMAL) != []
        ours = [p.version for p in c.published if p.uri == uri]
        assert ours == sorted(ours) and ours[-1] == final  # never an older version after a newer one
        assert len(ours) < 200  # debounced: far fewer analyses than edits
        hover = await c.lsp.text_document_hover_async(
            t.HoverParams(t.TextDocumentIdentifier(uri=uri), t.Position(4, 8))
        )
        assert hover is not None and "**done**" in hover.contents.value


async def test_an_analysis_over_its_budget_is_stopped_and_says_so(project):
    import sys

    sys.path.insert(0, str(Path(__file__).parents[1] / "bench"))
    big = long_script(3_000)  # an ordinary script, but no analysis of it fits in 1 ms
    async with session(project, init_options={"regvet": {"debounceMs": 0, "budgetMs": 1}}) as c:
        uri = c.open(project / "big.py", big)
        [stopped] = await c.diagnostics_for(uri, 1)
        assert stopped.code == "analysis-stopped" and "budget of 0.001 s" in stopped.message
        small = c.open(project / "small.py", NORMAL)
        await c.diagnostics_for(small, 1)  # each document gets its own analysis (and budget)
        c.lsp.workspace_did_change_configuration(t.DidChangeConfigurationParams(settings={"regvet": {"debounceMs": 0}}))
        await c.until(lambda: codes(c.lsp.diagnostics.get(uri, [])) == expected_codes(big), timeout=60)
        assert expected_codes(big) != []


async def test_two_long_analyses_do_not_block_the_others_nor_shutdown(project):
    slow_text = long_script()
    (project / "regvet.toml").write_text("analysis_budget = 600\n")  # the engine's own budget out of the way
    async with session(project, init_options={"regvet": {"debounceMs": 0, "budgetMs": 600_000}}) as c:
        server = c.lsp._server
        assert server is not None
        slow = [c.open(project / f"slow_{i}.py", slow_text) for i in (1, 2)]
        power = c.open(project / "power.py", HUGE_POWER)
        assert codes(await c.diagnostics_for(power, 1, timeout=15)) == expected_codes(HUGE_POWER)
        started = time.monotonic()
        normal = c.open(project / "berths.py", NORMAL)
        assert codes(await c.diagnostics_for(normal, 1, timeout=15)) == expected_codes(NORMAL)
        hover = await asyncio.wait_for(
            c.lsp.text_document_hover_async(t.HoverParams(t.TextDocumentIdentifier(uri=normal), t.Position(4, 8))), 15
        )
        assert hover is not None and "functional form" in hover.contents.value
        assert time.monotonic() - started < 15
        # a newer version of a long document replaces its stale analysis
        c.replace(slow[0], NORMAL)
        assert codes(await c.diagnostics_for(slow[0], 2, timeout=15)) == expected_codes(NORMAL)
        assert len(children(server.pid)) <= 3 + 1  # at most three analysis processes (and a starting one)
        assert not [p for p in c.published if p.uri == slow[1]], "slow_2 is still being analysed"
    # session() ended with shutdown and exit while slow_2 was still being analysed
    assert await asyncio.wait_for(server.wait(), 15) == 0


def test_closed_documents_leave_no_state_behind(project):
    """In-process (the tables are looked at directly), over real pipes: once every document is
    closed, nothing about them is kept."""
    from regvet.lsp.app import create_server

    ls = create_server()
    to_server, from_server = os.pipe(), os.pipe()
    thread = threading.Thread(
        target=ls.start_io, daemon=True, args=(os.fdopen(to_server[0], "rb"), os.fdopen(from_server[1], "wb"))
    )
    thread.start()
    s = Raw(project, pipes=(os.fdopen(to_server[1], "wb"), os.fdopen(from_server[0], "rb")))
    uris = []
    for i in range(30):
        suffix, language = (".py", "python") if i % 3 else (".txt", "plaintext")
        uri = from_fs_path(str(project / f"quay_{i}{suffix}"))
        uris.append(uri)
        s.notify(
            "textDocument/didOpen", {"textDocument": {"uri": uri, "languageId": language, "version": 1, "text": NORMAL}}
        )
        s.notify(
            "textDocument/didChange",
            {"textDocument": {"uri": uri, "version": 2}, "contentChanges": [{"text": NORMAL + CHECKS}]},
        )
    nb = from_fs_path(str(project / "tides.ipynb"))
    cell = f"vscode-notebook-cell:{project.as_posix()}/tides.ipynb#W0"
    s.notify(
        "notebookDocument/didOpen",
        {
            "notebookDocument": {
                "uri": nb,
                "notebookType": "jupyter-notebook",
                "version": 0,
                "cells": [{"kind": 2, "document": cell}],
            },
            "cellTextDocuments": [{"uri": cell, "languageId": "python", "version": 1, "text": NORMAL}],
        },
    )
    s.wait(
        lambda m: m.get("method") == "textDocument/publishDiagnostics"
        and m["params"]["uri"] == uris[-1]
        and m["params"]["version"] == 2
    )
    assert ls.results  # analysed and kept while open
    for uri in uris:
        s.notify("textDocument/didClose", {"textDocument": {"uri": uri}})
    s.notify("notebookDocument/didClose", {"notebookDocument": {"uri": nb}, "cellTextDocuments": [{"uri": cell}]})
    s.alive_check(70)
    deadline = time.monotonic() + 20
    while ls.pending and time.monotonic() < deadline:
        time.sleep(0.05)
    assert ls.pending == {} and ls.results == {} and ls.runtime == {}
    assert ls.workspace.text_documents == {} and ls.workspace.notebook_documents == {}
    assert dict(ls.protocol._request_futures) == {}  # every handled message forgotten
    s.request(71, "shutdown")
    s.answer(71)
    s.notify("exit", {})
    thread.join(20)
    assert not thread.is_alive() and ls.exit_code == 0
    assert ls.analyses.all == set()  # its analysis processes are ended


async def test_a_cell_document_listed_twice_in_a_notebook_is_analysed_and_shown_once(project):
    nb_uri = from_fs_path(str(project / "tides.ipynb"))
    cell = lambda i: f"vscode-notebook-cell:{project.as_posix()}/tides.ipynb#W{i}"  # noqa: E731
    async with session(project, capabilities(notebook=True)) as c:
        c.lsp.notebook_document_did_open(
            t.DidOpenNotebookDocumentParams(
                notebook_document=t.NotebookDocument(
                    uri=nb_uri,
                    notebook_type="jupyter-notebook",
                    version=0,
                    cells=[
                        t.NotebookCell(kind=t.NotebookCellKind.Code, document=cell(0)),
                        t.NotebookCell(kind=t.NotebookCellKind.Code, document=cell(0)),
                        t.NotebookCell(kind=t.NotebookCellKind.Code, document=cell(1)),
                    ],
                ),
                cell_text_documents=[
                    t.TextDocumentItem(uri=cell(0), language_id="python", version=1, text=NORMAL),
                    t.TextDocumentItem(uri=cell(0), language_id="python", version=1, text=NORMAL),
                    t.TextDocumentItem(uri=cell(1), language_id="python", version=1, text="print(res.params)\n"),
                ],
            )
        )
        await c.until(lambda: c.lsp.diagnostics.get(cell(0)) and cell(1) in c.lsp.diagnostics)
        diags = c.lsp.diagnostics[cell(0)]
        assert codes(diags) == expected_codes(NORMAL) != []  # once, not once per listing
        assert len({(d.range.start.line, d.range.start.character, d.code) for d in diags}) == len(diags)
        assert [p.uri for p in c.published].count(cell(0)) == 1 and list(c.lsp.diagnostics[cell(1)]) == []
