"""Running a notebook's code cells in the child as Jupyter would: IPython's shell, or a small stand-in.

Started by ``regvet_probe_boot.py``; standard library only here (IPython is used when the analysis
environment has it). Each cell is compiled under the name ``<regvet-cell-N>`` (N: the cell's index in
the notebook, markdown cells counted) with its own line numbers, so call sites and tracebacks carry the
cell and line the static analysis knows.

With IPython (``IPython.core.interactiveshell.InteractiveShell``, no terminal, no history, no colours,
a fresh profile folder the parent gives in ``IPYTHONDIR``): the cells as written run through the shell,
so magics, ``display``, ``get_ipython()`` and the displayed last expression of a cell (as text) behave as
in Jupyter, except:

* shell escapes are never run: ``!cmd``, ``!!cmd``, ``x = !cmd``, ``%system``, ``%sx``, the aliases
  (``%ls``, ``%rm``, ...), ``%pip``/``%conda``/``%mamba``/``%uv`` installs and the script cell magics
  (``%%bash``, ``%%sh``, ``%%script``, ...). Each is named once in the output; ``x = !cmd`` gets an
  empty list. A check must not install packages, reach the network or change files through a shell;
* ``%matplotlib`` (any backend) keeps the non-interactive Agg backend the parent chose;
* the cell magics whose body is Python and that time, profile or debug it (``%%time``, ``%%timeit``,
  ``%%prun``, ``%%memit``, ``%%debug``) run their body once as an ordinary cell, so a fit in it maps to its
  line; ``%%capture`` runs as in Jupyter, its body at its own lines.

Without IPython (or with ``REGVET_PROBE_NO_IPYTHON=1`` in the child's environment, which the tests use to
take this path): the cells as the static analysis read them (magics already replaced by ``pass``) run in
one namespace that has ``display`` and ``get_ipython()`` (whose magics and shell escapes do nothing), and a
cell's last expression is displayed as text. The output says so once.
"""

from __future__ import annotations

import ast
import builtins
import linecache
import os
import re
import sys
import types
from typing import Any

#: Cell magics whose body is Python and which only time, profile or debug it: run once as a plain cell.
BODY_ONLY_MAGICS = frozenset({"time", "timeit", "prun", "memit", "debug"})
#: IPython's cell magics that run their body with another program (``%%bash``, ...): never run here.
SCRIPT_MAGICS = frozenset({"bash", "sh", "script", "perl", "ruby", "python", "python2", "python3", "pypy"})
#: Set in the child's environment to run notebooks with the stand-in even where IPython is installed.
NO_IPYTHON = "REGVET_PROBE_NO_IPYTHON"


def cell_name(index: int) -> str:
    return f"<regvet-cell-{index}>"


class _Notes:
    """What the run says once in its output (shell escapes not run, the shell used)."""

    def __init__(self) -> None:
        self.said: set[str] = set()

    def say(self, text: str) -> None:
        if text in self.said:
            return
        self.said.add(text)
        print(f"[regvet] {text}", flush=True)


def _magic_name(source: str) -> str | None:
    """The cell magic a cell starts with (``%%time`` -> ``time``), or None."""
    first = source.lstrip("\n").split("\n", 1)[0].strip()
    if not first.startswith("%%"):
        return None
    return (first[2:].split() or [""])[0]


def run_cells(cells: list[dict[str, Any]], notes_out: dict[str, Any]) -> BaseException | None:
    """Run the cells in order in one ``__main__`` namespace; the first failure stops the run and is returned.

    ``notes_out`` receives ``shell``: which shell ran the cells (for the run's end record)."""
    module = types.ModuleType("__main__")
    module.__dict__["__builtins__"] = builtins
    sys.modules["__main__"] = module  # classes defined in cells pickle, as in Jupyter
    notes = _Notes()
    shell = None
    reason = "switched off by the caller" if os.environ.get(NO_IPYTHON) else None
    if reason is None:
        try:
            shell = _ipython_shell(module.__dict__, notes)
        except Exception as exc:  # not installed, or broken: the stand-in
            reason = f"{type(exc).__name__}: {exc}" if not isinstance(exc, ImportError) else "not installed"
    if shell is not None:
        import IPython

        notes_out["shell"] = f"IPython {IPython.__version__}"
        return _run_ipython(shell, cells, notes)
    notes_out["shell"] = "stand-in"
    notes.say(
        f"IPython is not available here ({reason}): the cells run with a stand-in; "
        "`display` prints text and IPython magics and shell commands do nothing"
    )
    return _run_standin(module.__dict__, cells, notes)


# --- with IPython ----------------------------------------------------------------------------------


def _ipython_shell(namespace: dict[str, Any], notes: _Notes) -> Any:
    from IPython.core.interactiveshell import InteractiveShell
    from IPython.utils.text import SList
    from traitlets.config import Config

    base: Any = InteractiveShell  # its methods are overridden loosely, as IPython calls them

    class RegvetShell(base):
        """The interactive shell without a terminal or a kernel, whose shell escapes do not run."""

        current = 0  # the index of the cell running now
        header = False  # whether that cell starts with a cell magic (a nested run_cell is its body)
        depth = 0

        def enable_gui(self, gui=None):
            return None

        def enable_matplotlib(self, gui=None):
            notes.say(f"%matplotlib {gui or ''}".rstrip() + ": plots use the Agg backend and are not shown")
            return gui, "agg"

        def system(self, cmd):
            notes.say(f"shell command not run: {cmd}")
            self.user_ns["_exit_code"] = 0

        system_raw = system_piped = system

        def getoutput(self, cmd, split=True, depth=0):
            notes.say(f"shell command not run: {cmd}")
            return SList([]) if split else ""

        def run_cell(self, raw_cell, *args, **kwargs):
            self.depth += 1
            try:
                if self.depth > 1 and self.header:  # %%capture's body: at its own lines, below the magic
                    raw_cell = _keep_lines("\n" + raw_cell)
                return super().run_cell(raw_cell, *args, **kwargs)
            finally:
                self.depth -= 1

    config = Config()
    config.HistoryManager.enabled = False
    config.InteractiveShell.colors = "nocolor"
    config.InteractiveShell.autocall = 0
    shell: Any = RegvetShell.instance(config=config, user_module=sys.modules["__main__"], user_ns=namespace)
    shell.display_formatter.active_types = ["text/plain"]  # as a terminal: no images rendered
    shell.compile.get_code_name = lambda raw_code, transformed_code, number: cell_name(shell.current)

    cell_magics = shell.magics_manager.magics["cell"]
    scripts = {  # IPython loads its magics lazily: the unloaded ones name their class
        name
        for name, magic in cell_magics.items()
        if "ScriptMagics" in repr(magic) or type(getattr(magic, "__self__", None)).__name__ == "ScriptMagics"
    }
    for name in sorted(scripts | SCRIPT_MAGICS):

        def quiet(line, cell=None, _name=name):
            notes.say(f"shell cell not run: %%{_name} {line}".rstrip())

        shell.register_magic_function(quiet, magic_kind="cell", magic_name=name)
    return shell


def _run_ipython(shell: Any, cells: list[dict[str, Any]], notes: _Notes) -> BaseException | None:
    for cell in cells:
        raw = cell.get("raw")
        raw = cell["source"] if raw is None else raw
        magic = _magic_name(raw)
        text = cell["source"] if magic in BODY_ONLY_MAGICS else raw
        if magic is None or magic in BODY_ONLY_MAGICS:
            text = _keep_lines(text)
        shell.current = cell["index"]
        shell.header = magic is not None
        result = shell.run_cell(text, store_history=True)
        error = result.error_before_exec or result.error_in_exec
        if error is not None:
            return error
        if getattr(shell, "exit_now", False):  # exit() or quit() in a cell: the kernel would stop here
            return SystemExit(None)
    return None


def _keep_lines(text: str) -> str:
    """``text`` with its leading blank lines as comments: IPython drops leading blank lines, which would
    move every line of the cell up."""
    lines = text.split("\n")
    for i, line in enumerate(lines):
        if line.strip():
            break
        lines[i] = "#"
    return "\n".join(lines)


# --- the stand-in ----------------------------------------------------------------------------------


class _Absorbing:
    """Whatever is asked of the stand-in's shell beyond its few real members: every attribute, call and
    item is again this object, so code that configures IPython (formatters, events, the kernel) goes on."""

    def __getattr__(self, name: str) -> _Absorbing:
        if name.startswith("__"):
            raise AttributeError(name)
        return self

    def __call__(self, *args: Any, **kwargs: Any) -> _Absorbing:
        return self

    def __getitem__(self, key: Any) -> _Absorbing:
        return self

    def __setitem__(self, key: Any, value: Any) -> None:
        pass

    def __bool__(self) -> bool:
        return False

    def __iter__(self):
        return iter(())


class _StandInShell(_Absorbing):
    """``get_ipython()`` without IPython: magics and shell commands do nothing (and say so once)."""

    def __init__(self, namespace: dict[str, Any], notes: _Notes) -> None:
        self.user_ns = namespace
        self.notes = notes

    def run_line_magic(self, name: str, line: str = "", *args: Any, **kwargs: Any) -> None:
        self.notes.say(f"%{name} does nothing here (no IPython)")

    def run_cell_magic(self, name: str, line: str = "", cell: str = "", *args: Any, **kwargs: Any) -> None:
        self.notes.say(f"%%{name} does nothing here (no IPython)")

    def magic(self, line: str) -> None:
        self.run_line_magic(line.split(" ", 1)[0].lstrip("%"))

    def system(self, cmd: str) -> None:
        self.notes.say(f"shell command not run: {cmd}")

    def getoutput(self, cmd: str, *args: Any, **kwargs: Any) -> list[str]:
        self.system(cmd)
        return []


class _Handle:
    """What ``display(..., display_id=...)`` returns: updates display again."""

    def __init__(self, show: Any) -> None:
        self.show = show

    def display(self, obj: Any, **kwargs: Any) -> None:
        self.show(obj)

    def update(self, obj: Any, **kwargs: Any) -> None:
        self.show(obj)


def _display_text(obj: Any) -> None:
    try:
        print(repr(obj), flush=True)
    except Exception as exc:  # a broken repr fails the display, never the cell (as in IPython)
        print(f"[regvet] display of {type(obj).__name__} failed: {type(exc).__name__}: {exc}", flush=True)


def display(*objs: Any, **kwargs: Any) -> _Handle | None:
    """The stand-in's ``display``: the text form of each object (``raw=True`` prints strings as they are)."""
    for obj in objs:
        if kwargs.get("raw") and isinstance(obj, str):
            print(obj, flush=True)
        else:
            _display_text(obj)
    return _Handle(_display_text) if kwargs.get("display_id") else None


def _displayhook(value: Any) -> None:
    if value is None:
        return
    builtins._ = value  # type: ignore[attr-defined]
    _display_text(value)


def _run_standin(namespace: dict[str, Any], cells: list[dict[str, Any]], notes: _Notes) -> BaseException | None:
    shell = _StandInShell(namespace, notes)
    namespace["get_ipython"] = lambda: shell
    namespace["display"] = display
    compiler = _Compiler()
    for cell in cells:
        source, name = _standin_source(cell["source"], cell.get("raw"), notes), cell_name(cell["index"])
        linecache.cache[name] = (len(source), None, source.splitlines(True), name)  # tracebacks show the lines
        try:
            tree = ast.parse(source, name)
            body = tree.body
            shown = bool(body) and isinstance(body[-1], ast.Expr) and not _ends_quiet(source)
            parts = [ast.Module(body[:-1], []), ast.Interactive(body[-1:])] if shown else [tree]
            for part in parts:
                code = compiler(part, name, "single" if isinstance(part, ast.Interactive) else "exec")
                _execute(code, namespace)
        except BaseException as exc:
            return exc
    return None


_MAGIC_LINE = re.compile(r"^(\s*)(?:([A-Za-z_][\w.]*)\s*=\s*)?(!!?|%)(.*)$")


def _standin_source(source: str, raw: str | None, notes: _Notes) -> str:
    """The analysed cell (magics replaced by ``pass``, lines kept) with each magic line as the stand-in's
    call instead, as IPython would turn it: ``x = !ls`` binds ``x`` (to an empty list), ``%time f()`` says
    that it did nothing. Help lines (``obj?``) stay ``pass``; a cell magic's cell says so once."""
    if raw is None:
        return source
    raw_lines = raw.split("\n")
    if not source.strip() and raw.strip().startswith("%%"):
        name = _magic_name(raw) or ""
        notes.say(f"%%{name} does nothing here (no IPython)")
        return source
    out = []
    for i, line in enumerate(source.split("\n")):
        written = raw_lines[i] if i < len(raw_lines) else line
        m = _MAGIC_LINE.match(written) if written != line and line.strip() == "pass" else None
        if m is not None:
            indent, target, kind, rest = m.groups()
            if kind.startswith("!"):
                call = f"get_ipython().{'getoutput' if target else 'system'}({rest.strip()!r})"
            else:
                magic, _, args = rest.strip().partition(" ")
                call = f"get_ipython().run_line_magic({magic!r}, {args!r})"
            line = indent + (f"{target} = " if target else "") + call
        out.append(line)
    return "\n".join(out)


class _Compiler:
    """``compile`` that keeps a cell's ``from __future__`` imports for the cells after it, as IPython does,
    and allows top-level ``await``."""

    def __init__(self) -> None:
        self.flags = getattr(ast, "PyCF_ALLOW_TOP_LEVEL_AWAIT", 0)

    def __call__(self, tree: Any, name: str, mode: str) -> types.CodeType:
        import __future__

        code = compile(tree, name, mode, self.flags, True)
        for feature in __future__.all_feature_names:
            flag = getattr(__future__, feature).compiler_flag
            if code.co_flags & flag:
                self.flags |= flag
        return code


def _ends_quiet(source: str) -> bool:
    """A cell whose last line ends with ``;`` shows nothing (Jupyter's rule)."""
    lines = [line.split("#", 1)[0].rstrip() for line in source.split("\n") if line.strip()]
    return bool(lines) and lines[-1].endswith(";")


def _execute(code: types.CodeType, namespace: dict[str, Any]) -> None:
    import inspect

    hook = sys.displayhook
    sys.displayhook = _displayhook
    try:
        if code.co_flags & inspect.CO_COROUTINE:  # a cell with top-level await
            import asyncio

            asyncio.run(eval(code, namespace))
        else:
            exec(code, namespace)
    finally:
        sys.displayhook = hook
