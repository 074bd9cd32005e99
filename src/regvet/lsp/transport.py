"""The language server's side of the wire: message framing with bounds, and answers to bad messages.

pygls 2.1 reads a message by trusting its ``Content-Length`` (``stdin.read(n)`` allocates ``n`` bytes
at once), reads header lines without a length limit, and when a request's params do not fit the
method's type it logs the error and answers nothing: the client waits for ever. It also keeps the
future of every notification handled by a generator or a coroutine in ``_request_futures`` for
good (about 2 KB per notification). This module replaces the reading loop and fixes the book-keeping:

* the stream is read in chunks of at most 64 KiB; a header block longer than ``MAX_HEADER`` or a
  ``Content-Length`` over ``MAX_BODY`` is refused (an error with ``id: null``) and the reader
  looks for the next ``Content-Length`` header; a body is kept only as far as its bytes arrived;
* text that is not JSON gets a parse error (-32700), JSON that is not a JSON-RPC 2.0 object an
  invalid-request error (-32600), a request whose params do not fit its method an invalid-params
  error (-32602) with the request's id, and a request after ``shutdown`` an invalid-request error;
  notifications are never answered (JSON-RPC forbids it), only logged;
* a finished handler's future leaves ``_request_futures``.
"""

from __future__ import annotations

import json
import logging
import re
import threading
from collections.abc import Awaitable, Callable
from concurrent.futures import Future
from typing import Any

from lsprotocol.types import EXIT
from pygls.exceptions import JsonRpcException, JsonRpcInternalError
from pygls.protocol import LanguageServerProtocol

log = logging.getLogger("regvet.lsp")

CHUNK = 64 * 1024
MAX_HEADER = 8 * 1024  #: bytes of one header block (LSP clients send one or two short lines)
MAX_BODY = 256 * 1024 * 1024  #: bytes of one message: a 20 MB script JSON-escaped fits many times over

PARSE_ERROR = -32700
INVALID_REQUEST = -32600
INVALID_PARAMS = -32602

_LENGTH = re.compile(rb"content-length[ \t]*:[ \t]*(\d+)[ \t]*(?:\r\n|$)", re.IGNORECASE)
_HEADER_START = re.compile(rb"content-length", re.IGNORECASE)


class Framer:
    """Splits a byte stream into message bodies (the LSP base protocol), never holding more than
    what arrived plus ``MAX_HEADER``; ``next()`` gives a body, a problem (a str), or None at the end."""

    def __init__(self, read: Callable[[], Awaitable[bytes]]) -> None:
        self.read = read
        self.buf = bytearray()
        self.garbage = False  # inside a run of bytes that are no header (reported once per run)

    async def _fill(self) -> bool:
        chunk = await self.read()
        if not chunk:
            return False
        self.buf += chunk
        return True

    async def next(self) -> bytes | str | None:
        while True:
            end = self.buf.find(b"\r\n\r\n")
            if end > MAX_HEADER or (end < 0 and len(self.buf) > MAX_HEADER):
                problem = self._skip_garbage(end)
                if problem:
                    return problem
                continue
            if end < 0:
                if not await self._fill():
                    return None
                continue
            header = bytes(self.buf[:end])
            del self.buf[: end + 4]
            lengths = _LENGTH.findall(header)
            if not lengths:
                if self.garbage:
                    continue
                self.garbage = True
                return f"a header without a valid Content-Length: {header[:80]!r}"
            self.garbage = False
            digits = lengths[-1]  # garbage before a header (a short body's tail) is skipped
            if len(digits) > 12 or int(digits) > MAX_BODY:
                self.garbage = True  # what follows is the refused body: look for the next header
                return f"Content-Length {int(digits)} is over the limit of {MAX_BODY} bytes; message refused"
            length = int(digits)
            while len(self.buf) < length:
                if not await self._fill():
                    return None
            body = bytes(self.buf[:length])
            del self.buf[:length]
            return body

    def _skip_garbage(self, end: int) -> str | None:
        """Drop bytes that cannot be part of a header (before ``end``, the next blank line, or all
        but the last few when there is none yet), keeping a possible start of the next header."""
        limit = end if end >= 0 else len(self.buf)
        starts = [m.start() for m in _HEADER_START.finditer(self.buf, max(0, limit - MAX_HEADER), limit)]
        if starts and starts[-1] > 0:
            cut = starts[-1]
        elif end >= 0:
            cut = end + 4
        else:
            cut = len(self.buf) - 64
        del self.buf[:cut]
        if self.garbage:
            return None
        self.garbage = True
        return "bytes that are no JSON-RPC header; skipped up to the next Content-Length"


class _Futures(dict):
    """In-flight requests: ``items()`` is a copy, because cancelling one (pygls' ``shutdown`` does,
    looping over them) runs its done-callback at once, and that removes it."""

    def items(self):
        return list(super().items())


class RegvetProtocol(LanguageServerProtocol):
    """pygls' protocol, with finished handlers forgotten and bad messages answered."""

    def __init__(self, server: Any, converter: Any) -> None:
        super().__init__(server, converter)
        self._request_futures = _Futures()

    def _execute_handler(self, msg_id: Any, handler: Any, callback: Any, args: Any = None, kwargs: Any = None) -> None:
        def done(future: Future, msg_id: Any = msg_id) -> None:
            if self._request_futures.get(msg_id) is future:
                del self._request_futures[msg_id]
            callback(future)

        super()._execute_handler(msg_id, handler, done, args, kwargs)

    def send_error(self, msg_id: Any, code: int, message: str) -> None:
        if isinstance(msg_id, bool) or not isinstance(msg_id, (int, str)):
            msg_id = None
        # a plain dict: the converter would leave out `"id": null`, which JSON-RPC requires here
        self._send_data({"jsonrpc": "2.0", "id": msg_id, "error": {"code": code, "message": message}})

    def handle_body(self, body: bytes) -> None:
        """One message body: structured and handled, or answered with the error it deserves."""
        try:
            data = json.loads(body)
        except (ValueError, RecursionError) as exc:
            log.warning("not JSON: %r", exc)
            self.send_error(None, PARSE_ERROR, f"Parse error: the message is not JSON ({exc})")
            return
        if not isinstance(data, dict) or data.get("jsonrpc") != "2.0" or not isinstance(data.get("method", ""), str):
            msg_id = data.get("id") if isinstance(data, dict) else None
            log.warning("not a JSON-RPC 2.0 message: %.200r", data)
            self.send_error(msg_id, INVALID_REQUEST, "Invalid request: not a JSON-RPC 2.0 message object")
            return
        is_request = "method" in data and "id" in data
        if is_request and (isinstance(data["id"], bool) or not isinstance(data["id"], (int, str))):
            self.send_error(None, INVALID_REQUEST, "Invalid request: the id must be a number or a string")
            return
        if is_request and self._shutdown and data["method"] != EXIT:
            self.send_error(data["id"], INVALID_REQUEST, "Invalid request: the server is shutting down")
            return
        try:
            message = self.structure_message(data)
        except JsonRpcException as exc:
            if is_request:
                what = "invalid params" if exc.CODE == INVALID_PARAMS else "cannot read the message"
                self.send_error(data["id"], exc.CODE, f"{data['method']}: {what} ({_cause(exc)})")
            else:
                log.warning("notification %r dropped: %s", data.get("method"), _cause(exc))
            return
        try:
            self.handle_message(message)
        except JsonRpcException as exc:
            if is_request:
                self.send_error(data["id"], exc.CODE, str(exc))
        except Exception as exc:  # a handler that fails outright: answer, log, and keep serving
            log.exception("cannot handle %r", data.get("method"))
            if is_request:
                self.send_error(data["id"], JsonRpcInternalError.CODE, f"internal error: {exc!r}")


def _cause(exc: BaseException) -> str:
    cause = exc.__cause__ or exc
    text = str(cause).splitlines()[0] if str(cause) else type(cause).__name__
    return text[:300]


async def serve(stop: threading.Event, read: Callable[[], Awaitable[bytes]], protocol: RegvetProtocol) -> None:
    """The reading loop: until the stream ends or ``stop`` is set (``exit`` raises SystemExit)."""
    framer = Framer(read)
    while not stop.is_set():
        item = await framer.next()
        if item is None:
            return
        if isinstance(item, str):
            log.warning("framing: %s", item)
            protocol.send_error(None, PARSE_ERROR, f"Parse error: {item}")
            continue
        protocol.handle_body(item)
