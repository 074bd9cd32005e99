"""How a file can already call a library function: its own import aliases, read with :mod:`ast`.

Pure: source text (or a parsed module) in, a spelling out. Suggested code (the quick fixes,
``regvet mend``) uses it so that an inserted check reads like the rest of the file:
``from statsmodels.stats.diagnostic import linear_reset as lr`` gives ``lr``,
``import statsmodels.stats.api as sms`` gives ``sms.linear_reset``.
"""

from __future__ import annotations

import ast
from collections.abc import Iterator, Sequence

#: Public modules the suggested diagnostics can be imported from (the first is the one an added import uses).
DIAGNOSTIC_MODULES = ("statsmodels.stats.diagnostic", "statsmodels.stats.api")
#: The diagnostics findings suggest, spelt as the file can already call them (``RuleInput.call``).
SUGGESTED = ("linear_reset", "het_breuschpagan", "acorr_breusch_godfrey")


def suggested_spellings(tree: ast.Module) -> tuple[tuple[str, str], ...]:
    """(name, how the file calls it) for each suggested diagnostic the module already imports."""
    out = []
    for name in SUGGESTED:
        spelt = spelling(tree, name, DIAGNOSTIC_MODULES)
        if spelt is not None and spelt != name:
            out.append((name, spelt))
    return tuple(out)


def _module_imports(tree: ast.Module, before_line: int | None) -> Iterator[ast.Import | ast.ImportFrom]:
    """Imports of the module's own body (inside top-level ``if``/``try``/``with`` too, not in functions
    or classes), in source order, that start before ``before_line``."""
    todo: list[ast.stmt] = list(tree.body)
    while todo:
        node = todo.pop(0)
        if before_line is not None and node.lineno >= before_line:
            continue
        if isinstance(node, (ast.Import, ast.ImportFrom)):
            yield node
        elif isinstance(node, (ast.If, ast.With)):
            todo[:0] = [*node.body, *getattr(node, "orelse", [])]
        elif isinstance(node, ast.Try) or type(node).__name__ == "TryStar":
            todo[:0] = [*node.body, *node.orelse, *node.finalbody]  # type: ignore[attr-defined]


def spelling(source: str | ast.Module, name: str, modules: Sequence[str], before_line: int | None = None) -> str | None:
    """How the file can call ``name`` (a function of each of ``modules``) with what it has imported, or None.

    ``modules`` are the public modules ``name`` can be imported from, the preferred first. Only
    imports of the module body that start before ``before_line`` (1-based; all when None) count.
    A ``from module import name [as alias]`` wins (the alias, or the name); then a module
    imported whole (``import module as m`` gives ``m.name``; ``from package import module``
    gives ``module.name``). None when nothing imported reaches ``name``, or when ``source``
    does not parse.
    """
    if isinstance(source, str):
        try:
            tree = ast.parse(source)
        except (SyntaxError, ValueError, RecursionError):
            return None
    else:
        tree = source
    direct: str | None = None
    via_module: dict[str, str] = {}
    for node in _module_imports(tree, before_line):
        if isinstance(node, ast.ImportFrom):
            if node.level or node.module is None:
                continue
            for alias in node.names:
                if node.module in modules and alias.name == name and direct is None:
                    direct = alias.asname or alias.name
                full = f"{node.module}.{alias.name}"
                if full in modules:
                    via_module.setdefault(full, alias.asname or alias.name)
        else:
            for alias in node.names:
                if alias.name in modules:
                    # ``import a.b.c`` binds ``a`` and reaches ``a.b.c.name``; ``import a.b.c as m`` binds m.
                    via_module.setdefault(alias.name, alias.asname or alias.name)
    if direct is not None:
        return direct
    for module in modules:
        if module in via_module:
            return f"{via_module[module]}.{name}"
    return None
