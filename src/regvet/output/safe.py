"""Text that can always be written: file names that are not UTF-8, lone surrogates.

On Linux a file name is bytes; Python hands a name that is not valid UTF-8 over as a string whose
undecodable bytes are lone surrogates (U+DC80..U+DCFF, PEP 383). A notebook's JSON may also
carry a lone surrogate escape (``"\\ud800"``). Such strings cannot be encoded as UTF-8, so every
renderer passes its output through one of these before it leaves regvet:

* :func:`printable` (text, GitHub annotations, messages on standard error): each undecodable byte
  shown as ``\\xNN``, another lone surrogate as ``\\uXXXX``, so a reader can find the file;
* :func:`valid_utf8` (JSON, SARIF, HTML, Markdown): each replaced by U+FFFD, so the document is
  valid UTF-8 for the strictest parser;
* :func:`uri_path` (SARIF, and JSON's ``path_uri``): the name's own bytes, percent-encoded.
"""

from __future__ import annotations

import os
import re
from urllib.parse import quote

_SURROGATE = re.compile("[\ud800-\udfff]")


def encodable(text: str) -> bool:
    """Whether ``text`` encodes as UTF-8 as it is."""
    if text.isascii():
        return True
    try:
        text.encode("utf-8")
    except UnicodeEncodeError:
        return False
    return True


def _escape(match: re.Match[str]) -> str:
    code = ord(match.group())
    return f"\\x{code - 0xDC00:02x}" if 0xDC80 <= code <= 0xDCFF else f"\\u{code:04x}"


def printable(text: str) -> str:
    """``text`` with each undecodable byte of a file name as ``\\xNN`` (other lone surrogates ``\\uXXXX``)."""
    return text if encodable(text) else _SURROGATE.sub(_escape, text)


def valid_utf8(text: str) -> str:
    """``text`` with each lone surrogate replaced by U+FFFD."""
    return text if encodable(text) else _SURROGATE.sub("\ufffd", text)


def uri_path(path: str) -> str:
    """A relative URI reference for a path with forward slashes: its bytes, percent-encoded (RFC 3986)."""
    try:
        raw = os.fsencode(path) if os.name != "nt" else path.encode("utf-8", "surrogatepass")
    except UnicodeEncodeError:  # a lone surrogate outside the escaped-byte range
        raw = valid_utf8(path).encode("utf-8")
    return quote(raw, safe="/")
