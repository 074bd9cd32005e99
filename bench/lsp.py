"""Language-server benchmarks: edit-to-diagnostics latency and memory across many edits.

Drives a real ``regvet serve`` process over stdio with a pygls client (debounce set to 0,
so the figure is analysis plus transport, not waiting). Edits are incremental, as editors send
them while typing (one line inserted at the end of the script per edit).
"""

from __future__ import annotations

import asyncio
import statistics
import sys
import time
from pathlib import Path

from lsprotocol import types as t
from pygls.lsp.client import LanguageClient

from generate import script

SERVER = [sys.executable, "-m", "regvet", "serve"]


def rss_mb(pid: int) -> float:
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        if line.startswith("VmRSS:"):
            return int(line.split()[1]) / 1024
    return float("nan")


class Bench:
    def __init__(self) -> None:
        self.client = LanguageClient("regvet-bench", "1")
        self.versions: dict[str, int] = {}
        self.arrived: dict[tuple[str, int], float] = {}

        @self.client.feature(t.TEXT_DOCUMENT_PUBLISH_DIAGNOSTICS)
        def on_publish(params: t.PublishDiagnosticsParams) -> None:
            if params.version is not None:
                self.arrived[(params.uri, params.version)] = time.perf_counter()

    async def start(self, root: Path) -> None:
        await self.client.start_io(*SERVER)
        await self.client.initialize_async(
            t.InitializeParams(
                capabilities=t.ClientCapabilities(),
                root_uri=root.as_uri(),
                initialization_options={"regvet": {"debounceMs": 0}},
            )
        )
        self.client.initialized(t.InitializedParams())

    async def wait(self, uri: str, version: int, timeout: float = 60) -> float:
        deadline = time.perf_counter() + timeout
        while (uri, version) not in self.arrived:
            if time.perf_counter() > deadline:
                raise TimeoutError(f"no diagnostics for version {version}")
            await asyncio.sleep(0.0005)
        return self.arrived[(uri, version)]

    def open(self, uri: str, text: str) -> None:
        self.versions[uri] = 1
        self.client.text_document_did_open(
            t.DidOpenTextDocumentParams(t.TextDocumentItem(uri=uri, language_id="python", version=1, text=text))
        )

    def insert(self, uri: str, line: int, text: str) -> int:
        """An incremental change, as editors send while typing: insert ``text`` at the start of ``line``."""
        self.versions[uri] += 1
        self.client.text_document_did_change(
            t.DidChangeTextDocumentParams(
                text_document=t.VersionedTextDocumentIdentifier(uri=uri, version=self.versions[uri]),
                content_changes=[
                    t.TextDocumentContentChangePartial(
                        range=t.Range(t.Position(line, 0), t.Position(line, 0)), text=text
                    )
                ],
            )
        )
        return self.versions[uri]

    def change(self, uri: str, text: str) -> int:
        self.versions[uri] += 1
        self.client.text_document_did_change(
            t.DidChangeTextDocumentParams(
                text_document=t.VersionedTextDocumentIdentifier(uri=uri, version=self.versions[uri]),
                content_changes=[t.TextDocumentContentChangeWholeDocument(text=text)],
            )
        )
        return self.versions[uri]

    async def stop(self) -> None:
        await self.client.shutdown_async(None)
        self.client.exit(None)
        await self.client.stop()


async def latency(root: Path, lines: int, edits: int = 25) -> dict:
    bench = Bench()
    await bench.start(root)
    uri = (root / f"generated_{lines}.py").as_uri()
    base = script(lines)
    bench.open(uri, base)
    await bench.wait(uri, 1)
    samples = []
    last = base.count("\n")
    for i in range(edits):  # typing at the end of the script: one small incremental edit each
        sent = time.perf_counter()
        version = bench.insert(uri, last + i, f"note_{i} = {i}\n")
        samples.append(await bench.wait(uri, version) - sent)
    await bench.stop()
    return {
        "lines": base.count("\n"),
        "median_ms": round(statistics.median(samples) * 1000, 1),
        "max_ms": round(max(samples) * 1000, 1),
        "edits": edits,
    }


async def memory(root: Path, edits: int = 1000, lines: int = 2000) -> dict:
    bench = Bench()
    await bench.start(root)
    pid = bench.client._server.pid  # type: ignore[attr-defined]
    uri = (root / "memory.py").as_uri()
    helper_uri = (root / "ferry_helpers.py").as_uri()
    base = script(lines)
    bench.open(uri, base)
    bench.open(helper_uri, "def helper(res):\n    return res.params\n")
    await bench.wait(uri, 1)
    marks = {}
    for i in range(1, edits + 1):
        version = bench.change(uri, base + f"\nnote = {i}\n")
        if i % 10 == 0:  # the helper module changes too (exercises the parsed-module cache)
            bench.change(helper_uri, f"def helper(res):\n    return res.params  # {i}\n")
        await bench.wait(uri, version)
        if i in (1, 100, 250, 500, 750, 1000):
            marks[i] = round(rss_mb(pid), 1)
    await bench.stop()
    growth = marks[edits] - marks[100]
    return {"lines": base.count("\n"), "rss_mb_after_edits": marks, "growth_100_to_1000_mb": round(growth, 1)}


def analysis_time(lines: int, repeats: int = 9) -> dict:
    """The analysis alone (``engine.analyze`` in this process): what the targets are about."""
    from regvet.engine import analyze

    text = script(lines)
    analyze(text, "generated.py")  # warm caches as a running server would have them
    samples = []
    for _ in range(repeats):
        start = time.perf_counter()
        analyze(text, "generated.py")
        samples.append(time.perf_counter() - start)
    return {"lines": text.count("\n"), "median_ms": round(statistics.median(samples) * 1000, 1)}


def run(root: Path) -> dict:
    sys.path.insert(0, str(Path(__file__).parent))
    out = {"analysis": [analysis_time(n) for n in (200, 2000, 10000)]}
    out["latency"] = [asyncio.run(latency(root, n)) for n in (200, 2000, 10000)]
    out["memory"] = asyncio.run(memory(root))
    return out
