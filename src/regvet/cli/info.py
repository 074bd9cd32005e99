"""``regvet rules``, ``explain`` and ``serve``: the verbs that scan nothing."""

from __future__ import annotations

import sys

from regvet.cli.common import EXIT_OK, EXIT_USAGE


def _serve(argv: list[str]) -> int:
    """``regvet serve [--tcp --port N]``: the language server (imports pygls only now)."""
    try:
        from regvet.lsp.app import main as serve_main
    except ImportError as exc:  # pragma: no cover - pygls is a core dependency
        sys.stderr.write(f"regvet: error: the language server needs pygls: {exc}\n")
        return EXIT_USAGE
    try:
        return serve_main(argv)
    except SystemExit as exc:
        return EXIT_USAGE if exc.code not in (0, None) else EXIT_OK
