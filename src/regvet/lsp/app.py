"""The language server assembled: ``create_server()`` wires the features of :mod:`regvet.lsp.server`
and the ``regvet.runFits`` command of :mod:`regvet.lsp.run_command` onto a fresh server, and
``main()`` is ``regvet serve``. Importing this module starts, reads and writes nothing.
"""

from __future__ import annotations

import logging

from lsprotocol import types as t

from regvet.lsp.features import code_action, hover
from regvet.lsp.run_command import run_fits
from regvet.lsp.server import (
    RUN_FITS,
    RegvetServer,
    did_change,
    did_close,
    did_open,
    did_save,
    nb_change,
    nb_close,
    nb_open,
    nb_save,
    on_config,
    on_initialize,
    on_initialized,
    on_shutdown,
    on_watched,
)


def create_server() -> RegvetServer:
    """A new server with every feature registered on it; nothing is started, read or written.

    Each call builds an independent instance (its own documents, results, settings and pool), so
    tests and embedders can make as many as they like. Pull diagnostics are added later, inside
    ``initialize``, for clients that can pull.
    """
    server = RegvetServer()
    for method, handler, options in (
        (t.INITIALIZE, on_initialize, None),
        (t.INITIALIZED, on_initialized, None),
        (t.SHUTDOWN, on_shutdown, None),
        (t.WORKSPACE_DID_CHANGE_CONFIGURATION, on_config, None),
        (t.WORKSPACE_DID_CHANGE_WATCHED_FILES, on_watched, None),
        (t.TEXT_DOCUMENT_DID_OPEN, did_open, None),
        (t.TEXT_DOCUMENT_DID_CHANGE, did_change, None),
        (t.TEXT_DOCUMENT_DID_SAVE, did_save, t.SaveOptions(include_text=False)),
        (t.TEXT_DOCUMENT_DID_CLOSE, did_close, None),
        (t.NOTEBOOK_DOCUMENT_DID_OPEN, nb_open, None),
        (t.NOTEBOOK_DOCUMENT_DID_CHANGE, nb_change, None),
        (t.NOTEBOOK_DOCUMENT_DID_SAVE, nb_save, None),
        (t.NOTEBOOK_DOCUMENT_DID_CLOSE, nb_close, None),
        (t.TEXT_DOCUMENT_HOVER, hover, None),
        (t.TEXT_DOCUMENT_CODE_ACTION, code_action, t.CodeActionOptions(code_action_kinds=[t.CodeActionKind.QuickFix])),
    ):
        server.feature(method, options)(handler)
    server.command(RUN_FITS)(run_fits)
    return server


# --- entry point ---------------------------------------------------------------------------------
def _free_port() -> int:
    """A port on 127.0.0.1 that nothing listens on now (the system picks it)."""
    import socket

    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def main(argv: list[str] | None = None) -> int:
    import argparse

    parser = argparse.ArgumentParser(prog="regvet serve", description="Run the regvet language server.")
    parser.add_argument("--tcp", action="store_true", help="listen on TCP (127.0.0.1) instead of stdio")
    parser.add_argument(
        "--port",
        type=int,
        default=None,
        help="the TCP port (1-65535); without it --tcp picks a free port and prints it",
    )
    parser.add_argument("--log-file", help="write the server log here (stdout carries the protocol)")
    args = parser.parse_args(argv)
    logging.basicConfig(
        filename=args.log_file,
        level=logging.INFO if args.log_file else logging.WARNING,
        format="%(asctime)s %(name)s %(levelname)s %(message)s",
    )
    if args.port is not None and not args.tcp:
        parser.error("--port needs --tcp (without --tcp the server speaks over stdio)")
    if args.port is not None and not 0 < args.port < 65536:
        parser.error(f"--port must be between 1 and 65535, not {args.port}")
    server = create_server()
    if args.tcp:
        port = args.port if args.port is not None else _free_port()
        # The one line on stdout in TCP mode (stdio carries no protocol then): where to connect.
        print(f"regvet language server: listening on 127.0.0.1:{port}", flush=True)
        server.start_tcp("127.0.0.1", port)
    else:
        server.start_io()
    # Leave at once: a thread still blocked reading stdin (or a quick fix under way) must not
    # keep the process alive after `exit` or the end of the stream.
    import atexit
    import os
    import sys

    atexit._run_exitfuncs()
    logging.shutdown()
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.flush()
        except (OSError, ValueError):  # `exit` closed stdout, or the client is gone
            pass
    os._exit(server.exit_code)
