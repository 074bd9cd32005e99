"""A small client of headless Chromium's DevTools protocol over ``--remote-debugging-pipe`` (no websocket).

Chromium reads commands from file descriptor 3 and writes replies and events to descriptor 4, as
JSON messages ended by a NUL byte. :func:`load` opens one page and returns what a test needs: the
console messages and uncaught exceptions, every network request the page made, values evaluated
in the page, and a PNG screenshot.
"""

from __future__ import annotations

import base64
import json
import os
import shutil
import subprocess
import tempfile
import time
from dataclasses import dataclass, field
from typing import Any

FLAGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--no-first-run",
    "--disable-default-apps",
    "--remote-debugging-pipe",
]


def chromium() -> str | None:
    for name in ("chromium", "chromium-browser", "google-chrome"):
        found = shutil.which(name)
        if found:
            return found
    return None


@dataclass
class Page:
    console: list[tuple[str, str]] = field(default_factory=list)  # (level, text)
    exceptions: list[str] = field(default_factory=list)
    requests: list[str] = field(default_factory=list)  # every URL the page asked for
    values: dict[str, Any] = field(default_factory=dict)
    screenshot: bytes = b""

    @property
    def errors(self) -> list[str]:
        return [text for level, text in self.console if level in ("error", "assert")] + self.exceptions


class _Pipe:
    def __init__(self, exe: str, profile: str) -> None:
        to_child_r, self.to_child = os.pipe()
        self.from_child, from_child_w = os.pipe()
        # The child sees our pipes as its descriptors 3 (commands) and 4 (replies).
        os.set_inheritable(to_child_r, True)
        os.set_inheritable(from_child_w, True)

        def setup() -> None:
            os.dup2(to_child_r, 3)
            os.dup2(from_child_w, 4)

        self.proc = subprocess.Popen(
            [exe, *FLAGS, f"--user-data-dir={profile}", "about:blank"],
            stdin=subprocess.DEVNULL,
            stdout=subprocess.DEVNULL,
            stderr=subprocess.DEVNULL,
            preexec_fn=setup,
            close_fds=False,
        )
        os.close(to_child_r)
        os.close(from_child_w)
        self.buffer = b""
        self.next_id = 0
        self.events: list[dict] = []

    def send(self, method: str, params: dict | None = None, session: str | None = None, timeout: float = 60) -> dict:
        self.next_id += 1
        msg: dict[str, Any] = {"id": self.next_id, "method": method, "params": params or {}}
        if session:
            msg["sessionId"] = session
        os.write(self.to_child, json.dumps(msg).encode() + b"\0")
        deadline = time.monotonic() + timeout
        while True:
            for m in self._read(deadline):
                if m.get("id") == self.next_id:
                    if "error" in m:
                        raise RuntimeError(f"{method}: {m['error']}")
                    return m.get("result", {})
                self.events.append(m)

    def _read(self, deadline: float) -> list[dict]:
        import select

        while b"\0" not in self.buffer:
            left = deadline - time.monotonic()
            if left <= 0:
                raise TimeoutError("no answer from Chromium")
            ready, _, _ = select.select([self.from_child], [], [], left)
            if ready:
                chunk = os.read(self.from_child, 1 << 20)
                if not chunk:
                    raise RuntimeError("Chromium closed the DevTools pipe")
                self.buffer += chunk
        *messages, self.buffer = self.buffer.split(b"\0")
        return [json.loads(m) for m in messages if m]

    def wait_event(self, method: str, session: str, timeout: float = 60) -> dict:
        deadline = time.monotonic() + timeout
        while True:
            for i, m in enumerate(self.events):
                if m.get("method") == method and m.get("sessionId") == session:
                    return self.events.pop(i)
            self.events.extend(self._read(deadline))

    def close(self) -> None:
        try:
            os.write(self.to_child, json.dumps({"id": 0, "method": "Browser.close"}).encode() + b"\0")
        except OSError:
            pass
        try:
            self.proc.wait(10)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            self.proc.wait(10)
        os.close(self.to_child)
        os.close(self.from_child)


def load(url: str, expressions: dict[str, str], width: int = 1200, height: int = 1600, settle: float = 0.5) -> Page:
    """Open ``url`` in a fresh headless Chromium and report what happened (see :class:`Page`)."""
    exe = chromium()
    if exe is None:
        raise FileNotFoundError("chromium")
    with tempfile.TemporaryDirectory(prefix="regvet-chromium-") as profile:
        pipe = _Pipe(exe, profile)
        try:
            target = pipe.send("Target.createTarget", {"url": "about:blank"})["targetId"]
            session = pipe.send("Target.attachToTarget", {"targetId": target, "flatten": True})["sessionId"]
            for domain in ("Page", "Runtime", "Network", "Log"):
                pipe.send(f"{domain}.enable", session=session)
            pipe.send(
                "Emulation.setDeviceMetricsOverride",
                {"width": width, "height": height, "deviceScaleFactor": 1, "mobile": False},
                session,
            )
            pipe.send("Page.navigate", {"url": url}, session)
            pipe.wait_event("Page.loadEventFired", session)
            end = time.monotonic() + settle
            while time.monotonic() < end:  # let late requests and messages arrive
                try:
                    pipe.events.extend(pipe._read(end))
                except TimeoutError:
                    break
            page = Page()
            for name, expression in expressions.items():
                result = pipe.send("Runtime.evaluate", {"expression": expression, "returnByValue": True}, session)
                if "exceptionDetails" in result:
                    raise RuntimeError(f"{name}: {result['exceptionDetails']}")
                page.values[name] = result["result"].get("value")
            shot = pipe.send("Page.captureScreenshot", {"format": "png"}, session)
            page.screenshot = base64.b64decode(shot["data"])
            for m in pipe.events:
                method, params = m.get("method"), m.get("params", {})
                if method == "Network.requestWillBeSent":
                    page.requests.append(params["request"]["url"])
                elif method == "Runtime.consoleAPICalled":
                    text = " ".join(str(a.get("value", a.get("description", ""))) for a in params.get("args", []))
                    page.console.append((params.get("type", ""), text))
                elif method == "Runtime.exceptionThrown":
                    details = params.get("exceptionDetails", {})
                    page.exceptions.append(
                        str((details.get("exception") or {}).get("description") or details.get("text"))
                    )
                elif method == "Log.entryAdded":
                    entry = params.get("entry", {})
                    page.console.append(
                        (entry.get("level", ""), f"{entry.get('source')}: {entry.get('text')} {entry.get('url', '')}")
                    )
            return page
        finally:
            pipe.close()
