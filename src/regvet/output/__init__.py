"""Renderers: a list of file reports in, text out. No I/O beyond building strings.

Each format's module is imported only when it is asked for (``renderer``): a plain ``regvet check``
needs the text renderer alone.
"""

from __future__ import annotations

import importlib
from collections.abc import Callable

#: Format name -> the module (in this package) whose ``render`` writes it.
FORMAT_MODULES = {"text": "text", "lines": "lines", "json": "json_out", "sarif": "sarif", "github": "github"}


def renderer(name: str) -> Callable[..., str]:
    """The ``render`` function of one format."""
    render: Callable[..., str] = importlib.import_module(f"regvet.output.{FORMAT_MODULES[name]}").render
    return render
