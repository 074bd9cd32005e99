"""Imports: names from libraries, and the project's own modules.

An import binds a name to a QUALIFIED tag (``import statsmodels.api as sm`` -> ``statsmodels.api``)
unless the name is a module of the project, which the caller's :class:`ModuleProvider` finds.
Project modules are found at import time (a cheap lookup) but parsed and run only when a name
from them is first used: scripts import far more than they call. ``from helpers import fit_all``
binds a LAZY_IMPORT tag that :meth:`ModuleLoading.resolve_lazy` replaces on first lookup.

This module does no I/O itself: the provider reads files (or editor buffers).
"""

from __future__ import annotations

import ast

from regvet.analysis import catalog, tags
from regvet.analysis.providers import ModuleProvider, ModuleSource, NoModules
from regvet.analysis.state import CollectorState, Frame, ModuleRecord, Node
from regvet.analysis.tags import Tag
from regvet.analysis.values import EMPTY, Value, join, tagged

__all__ = ["WELL_KNOWN_LIBRARIES", "ModuleLoading", "ModuleProvider", "ModuleSource", "NoModules"]


#: Never looked up as project modules (a project rarely shadows them, and lookups cost).
WELL_KNOWN_LIBRARIES = frozenset(
    {
        "numpy",
        "pandas",
        "scipy",
        "matplotlib",
        "seaborn",
        "sklearn",
        "linearmodels",
        "patsy",
        "IPython",
        "os",
        "sys",
        "pathlib",
        "json",
        "math",
        "re",
        "itertools",
        "functools",
        "collections",
        "operator",
        "typing",
        "warnings",
        "datetime",
        "random",
        "statistics",
        "csv",
        "pickle",
        "logging",
        "dataclasses",
        "abc",
    }
)


class ModuleLoading(CollectorState):
    """Import statements, attributes of library names and of project modules, loading project modules."""

    def import_names(self, stmt: ast.Import | ast.ImportFrom, frame: Frame) -> None:
        if isinstance(stmt, ast.Import):
            for alias in stmt.names:
                name = alias.name
                if name.startswith("statsmodels.tsa"):
                    self.tsa_in_use = True
                if alias.asname:
                    found = self.find_module(name, 0, frame)
                    bound = tags.project_module(found.key) if found else tags.qualified(catalog.canonical(name))
                    self.assign(frame, alias.asname, tagged(bound))
                else:
                    top = name.split(".")[0]
                    found = self.find_module(top, 0, frame)
                    self.assign(frame, top, tagged(tags.project_module(found.key) if found else tags.qualified(top)))
            return
        modname = stmt.module or ""
        if modname.startswith("statsmodels.tsa") or (
            modname == "statsmodels" and any(a.name == "tsa" for a in stmt.names)
        ):
            self.tsa_in_use = True
        found = self.find_module(modname, stmt.level, frame) if modname else None
        for alias in stmt.names:
            local = alias.asname or alias.name
            if alias.name == "*":
                module = self.load_module(found.key) if found else None
                if module is not None:
                    for name, value in module.globals.items():
                        if not name.startswith("_"):
                            self.assign(frame, name, value)
                elif not stmt.level:
                    base = catalog.canonical(modname)
                    for qualname in (*catalog.CONSTRUCTORS, *catalog.DIAGNOSTICS):
                        if qualname.rsplit(".", 1)[0] == base:
                            self.assign(frame, qualname.rsplit(".", 1)[1], tagged(tags.qualified(qualname)))
                continue
            if found is not None:
                sub = self.find_module(f"{modname}.{alias.name}", stmt.level, frame)
                self.assign(frame, local, tagged(tags.lazy_import(found.key, alias.name, sub.key if sub else None)))
            elif stmt.level:
                sub = self.find_module(f"{modname}.{alias.name}" if modname else alias.name, stmt.level, frame)
                self.assign(frame, local, tagged(tags.project_module(sub.key)) if sub else EMPTY)
            else:
                self.assign(frame, local, tagged(tags.qualified(catalog.canonical(f"{modname}.{alias.name}"))))

    def find_module(self, name: str, level: int, frame: Frame) -> ModuleSource | None:
        if not name and not level:
            return None
        if not level and (catalog.is_statsmodels(name) or name.split(".")[0] in WELL_KNOWN_LIBRARIES):
            return None
        key = (name, level, frame.module.path)
        if key in self.found:
            return self.found[key]
        try:
            found = self.provider.find(name, level, frame.module.path)
        except Exception:  # a provider failure must not stop the analysis
            found = None
        self.found[key] = found
        if found is not None:
            self.sources.setdefault(found.key, found)
        return found

    def load_module(self, key: str) -> ModuleRecord | None:
        """Parse and run a project module's top level (once), returning it."""
        if key in self.modules:
            return self.modules[key]
        found = self.sources.get(key)
        if found is None or key in self.loading:
            return None
        cached = self.module_cache.get((found.path, found.text))
        tree = cached if cached is not None else self.parse_module(found.text, found.path)
        if tree is None:
            self.modules[key] = None
            return None
        self.module_cache[(found.path, found.text)] = tree
        module = ModuleRecord(key, found.path, tree, found.text.split("\n"))
        self.loading.add(key)
        saved = self.stmt, self.stmt_module
        try:
            self.exec_block(tree.body, Frame(module, module.globals, None, ()))
        finally:
            self.loading.discard(key)
            self.stmt, self.stmt_module = saved
        module.executed = True
        self.modules[key] = module
        return module

    def find_submodule(self, package: ModuleSource, name: str) -> ModuleSource | None:
        """``package.name`` as a submodule, found relative to the package's own file."""
        try:
            found = self.provider.find(name, 1, package.path)
        except Exception:
            found = None
        if found is not None and found.key != package.key:
            self.sources.setdefault(found.key, found)
            return found
        return None

    def resolve_lazy(self, value: Value) -> Value:
        """Replace lazy ``from module import name`` references by what the module binds."""
        if not value.has(tags.LAZY_IMPORT):
            return value
        out = Value(
            frozenset(tags.without_kinds(value.tags, (tags.LAZY_IMPORT,))),
            value.elem,
            value.keys,
            value.items,
            value.level,
        )
        for tag in value.tags_of(tags.LAZY_IMPORT):
            key, name, sub = tags.lazy_import_parts(tag)
            if (key, name) in self.resolving:  # modules importing names from each other
                continue
            self.resolving.add((key, name))
            try:
                module = self.load_module(key)
                if module is not None and name in module.globals:
                    out = join(out, self.resolve_lazy(module.globals[name]))
                elif sub is not None:
                    out = join(out, tagged(tags.project_module(sub)))
            finally:
                self.resolving.discard((key, name))
        return out

    # --- attribute handlers (see ``collect.ATTRIBUTE_HANDLERS``) ---------------------------------
    def attribute_of_qualified(self, tag: Tag, name: str, node: Node, frame: Frame, out: set[Tag]) -> Value | None:
        """``sm.OLS``: the qualified name one level down."""
        qualname = catalog.canonical(f"{tags.qualname(tag)}.{name}")
        if qualname.startswith("statsmodels.tsa"):
            self.tsa_in_use = True
        out.add(tags.qualified(qualname))
        return None

    def attribute_of_project_module(self, tag: Tag, name: str, node: Node, frame: Frame, out: set[Tag]) -> Value | None:
        """``helpers.fit_all``: what the module binds (which ends the attribute read), or a submodule."""
        key = tags.module_key(tag)
        module = self.load_module(key)
        if module is not None and name in module.globals:
            return self.resolve_lazy(module.globals[name])
        source = self.sources.get(key)
        if source is not None:
            sub = self.find_submodule(source, name)
            if sub is not None:
                out.add(tags.project_module(sub.key))
        return None
