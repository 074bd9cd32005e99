"""The language server's memory over many notifications, measured on a real ``regvet serve``.

Raw JSON-RPC over the server's stdio pipes (no client library in between, so nothing on our side
is measured). Three runs of 20,000 notifications each, each on a fresh server:

* ``text``: didChange on a plain-text document regvet never analyses;
* ``python``: didChange on a Python script (debounced: only the last edits are analysed);
* ``open-close``: didOpen then didClose of 10,000 distinct Python scripts (each analysed).

The server's resident memory (``VmRSS``) is read after a warm-up of 2,000 notifications and at the
end; the growth per notification is (end - warm) / (notifications after the warm-up). Flat memory
means a growth of a few bytes per notification at most (allocator noise).

    python bench/lsp_memory.py [N]     # writes bench/results/lsp_memory.json
"""

from __future__ import annotations

import json
import platform
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

SERVER = [sys.executable, "-m", "regvet", "serve"]
WARM = 2_000
SCRIPT = (
    "import pandas as pd\nimport statsmodels.formula.api as smf\n"
    "df = pd.read_csv('harbour_{i}.csv')\nfit = smf.ols('berths ~ tide + wind', data=df).fit()\n"
)


def frame(message: dict) -> bytes:
    body = json.dumps(message).encode()
    return b"Content-Length: %d\r\n\r\n" % len(body) + body


def rss_kb(pid: int) -> int:
    for line in Path(f"/proc/{pid}/status").read_text().splitlines():
        if line.startswith("VmRSS:"):
            return int(line.split()[1])
    raise RuntimeError("no VmRSS")


class Server:
    """``regvet serve`` with a thread draining its stdout (counting the answers to our requests)."""

    def __init__(self, root: Path) -> None:
        self.proc = subprocess.Popen(SERVER, stdin=subprocess.PIPE, stdout=subprocess.PIPE, stderr=subprocess.DEVNULL)
        self.answered: set[int] = set()
        self.published = 0
        threading.Thread(target=self._drain, daemon=True).start()
        self.send(
            {
                "jsonrpc": "2.0",
                "id": 1,
                "method": "initialize",
                "params": {
                    "processId": None,
                    "rootUri": root.as_uri(),
                    "capabilities": {},
                    "initializationOptions": {"regvet": {"debounceMs": 20}},
                },
            }
        )
        self.wait_for(1)
        self.send({"jsonrpc": "2.0", "method": "initialized", "params": {}})

    def _drain(self) -> None:
        out = self.proc.stdout
        assert out is not None
        while True:
            header = out.readline()
            if not header:
                return
            if header.lower().startswith(b"content-length:"):
                length = int(header.split(b":")[1])
                while out.readline() not in (b"\r\n", b""):
                    pass
                msg = json.loads(out.read(length))
                if "id" in msg and "method" not in msg:
                    self.answered.add(msg["id"])
                elif msg.get("method") == "textDocument/publishDiagnostics":
                    self.published += 1

    def send(self, message: dict) -> None:
        assert self.proc.stdin is not None
        self.proc.stdin.write(frame(message))
        self.proc.stdin.flush()

    def wait_for(self, request_id: int, timeout: float = 120) -> None:
        deadline = time.monotonic() + timeout
        while request_id not in self.answered:
            if time.monotonic() > deadline:
                raise TimeoutError(f"no answer to request {request_id}")
            time.sleep(0.005)

    def settle(self, request_id: int) -> None:
        """A round trip (shutdown is not used: the server must stay up): a hover on nothing."""
        self.send(
            {
                "jsonrpc": "2.0",
                "id": request_id,
                "method": "textDocument/hover",
                "params": {"textDocument": {"uri": "file:///nowhere/none.py"}, "position": {"line": 0, "character": 0}},
            }
        )
        self.wait_for(request_id)
        time.sleep(0.5)  # let debounced analyses finish

    def stop(self) -> None:
        self.send({"jsonrpc": "2.0", "id": 999_999, "method": "shutdown"})
        self.wait_for(999_999)
        self.send({"jsonrpc": "2.0", "method": "exit"})
        self.proc.wait(30)


def notifications(kind: str, root: Path, n: int):
    if kind in ("text", "python"):
        suffix, language = (".txt", "plaintext") if kind == "text" else (".py", "python")
        uri = (root / f"notes{suffix}").as_uri()
        yield {
            "jsonrpc": "2.0",
            "method": "textDocument/didOpen",
            "params": {"textDocument": {"uri": uri, "languageId": language, "version": 1, "text": SCRIPT.format(i=0)}},
        }
        for v in range(2, n + 1):
            yield {
                "jsonrpc": "2.0",
                "method": "textDocument/didChange",
                "params": {
                    "textDocument": {"uri": uri, "version": v},
                    "contentChanges": [{"text": SCRIPT.format(i=v)}],
                },
            }
    else:
        for i in range(n // 2):
            uri = (root / f"harbour_{i}.py").as_uri()
            yield {
                "jsonrpc": "2.0",
                "method": "textDocument/didOpen",
                "params": {
                    "textDocument": {"uri": uri, "languageId": "python", "version": 1, "text": SCRIPT.format(i=i)}
                },
            }
            yield {"jsonrpc": "2.0", "method": "textDocument/didClose", "params": {"textDocument": {"uri": uri}}}


def measure(kind: str, n: int) -> dict:
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp)
        server = Server(root)
        request = 10
        warm_kb = 0
        started = time.perf_counter()
        for count, message in enumerate(notifications(kind, root, n), 1):
            server.send(message)
            if count == WARM:
                request += 1
                server.settle(request)
                warm_kb = rss_kb(server.proc.pid)
        request += 1
        server.settle(request)
        end_kb = rss_kb(server.proc.pid)
        elapsed = time.perf_counter() - started
        server.stop()
    per = (end_kb - warm_kb) * 1024 / (n - WARM)
    return {
        "kind": kind,
        "notifications": n,
        "rss_warm_kb": warm_kb,
        "rss_end_kb": end_kb,
        "bytes_per_notification": round(per, 1),
        "seconds": round(elapsed, 1),
    }


def main(n: int = 20_000) -> dict:
    results = [measure(kind, n) for kind in ("text", "python", "open-close")]
    out = {"machine": f"{platform.machine()} {platform.python_version()} {platform.system()}", "runs": results}
    target = Path(__file__).parent / "results" / "lsp_memory.json"
    target.write_text(json.dumps(out, indent=2) + "\n")
    for r in results:
        print(
            f"{r['kind']:<11} {r['notifications']:>6} notifications: RSS {r['rss_warm_kb'] / 1024:.1f} MB after "
            f"{WARM}, {r['rss_end_kb'] / 1024:.1f} MB at the end: {r['bytes_per_notification']:+.1f} B each "
            f"({r['seconds']} s)"
        )
    return out


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 20_000)
