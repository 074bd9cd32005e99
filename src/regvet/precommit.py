"""Entry point of the pre-commit hook: ``regvet check`` on the files pre-commit passes, static only.

The hook never executes the user's code: options that would (the runtime mode) are refused.
Helper modules the staged files import are still read from the working tree, so a fit made
in a helper is judged where it is used.
"""

from __future__ import annotations

import sys
from collections.abc import Sequence

from regvet.cli import EXIT_USAGE
from regvet.cli import main as cli_main

_RUNTIME_FLAGS = ("--run", "--no-cache")


def main(argv: Sequence[str] | None = None) -> int:
    args = list(sys.argv[1:] if argv is None else argv)
    refused = [a for a in args if a.split("=", 1)[0] in _RUNTIME_FLAGS]
    if refused:
        sys.stderr.write(
            f"regvet: error: {refused[0]} is not available in the pre-commit hook: the hook only reads code "
            "and never runs it\n"
        )
        return EXIT_USAGE
    return cli_main(["check", *args])


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
