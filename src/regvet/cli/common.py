"""What every verb of the CLI shares: exit codes, usage errors, the files a scan reads, settings per file."""

from __future__ import annotations

import argparse
import os
import sys
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from pathlib import Path

from regvet.config import ConfigError, load_settings
from regvet.discovery import MissingPath, discover, examine
from regvet.model.settings import Settings
from regvet.output.safe import printable
from regvet.project import display_path
from regvet.workspace import ConfigCache, Overrides, split_rule_ids

EXIT_OK, EXIT_FINDINGS, EXIT_USAGE, EXIT_FAILED = 0, 1, 2, 3
EXTRA_EXCLUDE = (".ipynb_checkpoints", "__pycache__", ".tox", ".nox", ".mypy_cache")


class UsageError(Exception):
    pass


def tolerant_streams() -> None:
    """Standard output and error never fail on a character their encoding lacks (an ASCII or Latin-1
    locale): it is written as a backslash escape instead."""
    for stream in (sys.stdout, sys.stderr):
        reconfigure = getattr(stream, "reconfigure", None)
        if reconfigure is not None:
            try:
                reconfigure(errors="backslashreplace")
            except (ValueError, OSError):  # a closed or unusual stream: leave it as it is
                pass


def emit(text: str, *, utf8: bool = False) -> None:
    """Write ``text`` to standard output; with ``utf8`` (JSON, SARIF: UTF-8 by definition) as UTF-8 bytes
    whatever the locale's encoding."""
    buffer = getattr(sys.stdout, "buffer", None)
    if not utf8 or buffer is None:
        sys.stdout.write(text)
        return
    sys.stdout.flush()
    buffer.write(text.encode("utf-8"))
    buffer.flush()


def _rule_list(text: str | None, flag: str) -> frozenset[str]:
    if not text:
        return frozenset()
    known, unknown = split_rule_ids(t.strip() for t in text.split(",") if t.strip())
    if unknown:
        raise UsageError(f"{flag}: `{unknown[0]}` is not a rule id (see `regvet rules`)")
    return known


def collect_files(paths: Sequence[str], exclude: Sequence[str]) -> list[Path]:
    """Files to scan: named files as given, folders walked for ``.py`` and ``.ipynb`` files.

    Names that are not regular files (symbolic link loops, FIFOs, devices) and folders that cannot be
    listed are left out with a note on standard error (see :mod:`regvet.discovery`)."""
    try:
        found = discover(paths, exclude)
    except MissingPath as exc:
        raise UsageError(f"no such file or folder: {exc}") from None
    for skipped in found.skipped:
        sys.stderr.write(f"regvet: skipped {printable(display_path(skipped.path))}: {skipped.why}\n")
    return found.files


class _SettingsFinder:
    """Settings per file: the nearest config file (each read once), or one forced file, with CLI overrides."""

    def __init__(self, args: argparse.Namespace) -> None:
        self.overrides = Overrides(only=_rule_list(args.only, "--only"), skip=_rule_list(args.skip, "--skip"))
        self.no_config = args.no_config
        self.forced: Settings | None = None
        self.default: Settings | None = None
        if args.config:
            path = Path(args.config)
            if not path.is_file():
                _, why = examine(path)  # a FIFO, a link loop: say so rather than "no such file"
                raise UsageError(
                    f"--config: {args.config} is {why}"
                    if why and os.path.lexists(path)
                    else f"--config: no such file: {args.config}"
                )
            self.forced = load_settings(path)
        self.configs = ConfigCache()

    def for_path(self, path: Path) -> Settings:
        if self.forced is not None:
            return self.overrides.apply(self.forced)
        if self.no_config:
            if self.default is None:
                self.default = self.overrides.apply(Settings())
            return self.default  # one object for every file (the fact cache fingerprints it once)
        loaded = self.configs.for_file(path)
        if isinstance(loaded, ConfigError):
            raise loaded
        return self.overrides.apply(loaded)


class Stopped(BaseException):
    """regvet was sent a signal that stops it (SIGTERM, SIGHUP) while it ran analysed code."""

    def __init__(self, signum: int) -> None:
        super().__init__(signum)
        self.signum = signum


@contextmanager
def runs_end_with_regvet(running: bool) -> Iterator[None]:
    """While analysed code runs: SIGTERM and SIGHUP end every running child's process group and stop
    regvet with :class:`Stopped`; Ctrl-C (SIGINT) ends them too and raises ``KeyboardInterrupt``.
    Without it a stopped regvet would leave the scripts it started running, with no time limit left
    to end them (and the threads waiting on them would keep regvet from exiting)."""
    if not running:
        yield
        return
    import signal

    def end_runs() -> None:
        runner = sys.modules.get("regvet.runtime.runner")
        if runner is not None:
            runner.end_all_runs()

    def stop(signum: int, frame: object) -> None:
        end_runs()  # first: the threads waiting on the children must not wait for them to finish
        if signum == signal.SIGINT:
            raise KeyboardInterrupt
        raise Stopped(signum)

    previous = {}
    for sig in (signal.SIGINT, signal.SIGTERM, getattr(signal, "SIGHUP", None)):
        if sig is None:
            continue
        try:
            previous[sig] = signal.signal(sig, stop)
        except ValueError:  # not the main thread (regvet called from a program's thread): leave signals alone
            pass
    try:
        yield
    finally:
        for sig, handler in previous.items():
            signal.signal(sig, handler)
