"""Renderers: a list of file reports in, text out. No I/O beyond building strings."""

from __future__ import annotations

from collections.abc import Callable

from regvet.output import github, json_out, sarif, text

FORMATS: dict[str, Callable[..., str]] = {"text": text.render, "json": json_out.render, "sarif": sarif.render, "github": github.render}
