"""Python source made safe for the standard library's tokenizer, position for position.

CPython 3.11's ``tokenize`` is written in Python with one regular expression per token. Where a run
of blanks (spaces, tabs, form feeds) is followed by a character that begins no token (a NUL, ``$``,
``?``, a backtick, ``!`` without ``=``, a vertical tab, a symbol such as ``€``, a stray backslash),
the expression fails after scanning the whole run, the tokenizer gives up one character and tries
again: quadratic in the run's length (3,000 tabs and a ``$`` took 2 s, a fuzzed file with 70,000
tabs and a NUL about 18 minutes). :func:`for_tokenize` replaces each such character, when it ends a
run of :data:`RUN` blanks or more, by ``x``, which begins a name: every token keeps its line and
column, and only those characters change. Characters that shape the token stream (quotes, ``#``,
brackets, line ends, a backslash before a quote, a backslash or a line end) are never replaced, so
strings and comments stay where they were; the replaced character itself can be inside a comment
or a string, so callers take a token's text from the original source by its position.
"""

from __future__ import annotations

import re

#: Blanks before a character that begins no token, from which the tokenizer's retries are worth
#: avoiding (shorter runs cost microseconds).
RUN = 32

_BLANKS = re.compile(rf"[ \t\f]{{{RUN},}}")  # a run of blanks: greedy, one match per run, linear
_KEEP = frozenset("\"'#()[]{}\r\n\\")
#: Characters that begin an operator or a delimiter token (besides names, numbers, strings, comments).
_OPERATORS = frozenset("+-*/%&|^~<>=.,:;@")


def for_tokenize(text: str) -> str:
    """``text`` with each character that begins no token and ends a long run of blanks replaced by ``x``."""
    swaps: list[int] = []
    for m in _BLANKS.finditer(text):
        end = m.end()
        if end >= len(text):
            break
        c = text[end]
        if c in _KEEP:
            if c == "\\" and text[end + 1 : end + 2] not in ("", "\r", "\n", "\\", "'", '"'):
                swaps.append(end)  # a stray backslash outside a line end or an escape that matters
            continue
        if c in _OPERATORS or c.isalnum() or c == "_" or (c == "!" and text[end + 1 : end + 2] == "="):
            continue
        swaps.append(end)
    if not swaps:
        return text
    out: list[str] = []
    last = 0
    for at in swaps:
        out.append(text[last:at])
        out.append("x")
        last = at + 1
    out.append(text[last:])
    return "".join(out)
