"""The architecture, enforced: which regvet packages may import what (read with ``ast``, nothing imported).

model <- sources <- analysis <- rules <- engine <- fronts (cli, project, output).
The static core never imports numpy, pandas, scipy, statsmodels, libcst or pygls; ``edits`` (the
quick-fix rewrites, imported lazily by the language server) is the one package that imports libcst.
The import graph (every import, lazy ones inside functions included) has no cycle, neither between
layers nor between modules.
"""

from __future__ import annotations

import ast
import itertools
import sys
from pathlib import Path

import pytest

SRC = Path(__file__).resolve().parents[1] / "src" / "regvet"
HEAVY = {"numpy", "pandas", "scipy", "statsmodels", "libcst", "pygls", "lsprotocol", "matplotlib"}
#: For each layer, the regvet layers it may import.
ALLOWED = {
    "model": {"model"},
    "sources": {"model", "sources"},
    "analysis": {"model", "sources", "analysis"},
    "rules": {"model", "sources", "analysis", "rules"},
    "engine": {"model", "sources", "analysis", "rules", "engine"},
    "config": {"model", "rules", "config"},
    "workspace": {"model", "rules", "config", "workspace"},
    "output": {"model", "rules", "engine", "output", "__init__", "audit"},
    "project": {"model", "sources", "analysis", "project", "discovery"},
    "discovery": {"discovery"},
    "cli": {
        "model",
        "sources",
        "analysis",
        "rules",
        "engine",
        "config",
        "output",
        "project",
        "cli",
        "lsp",
        "runtime",
        "workspace",
        "__init__",
        "baseline",
        "baseline_file",
        "mend",
        "audit",
        "plots",
        "factcache",
        "parallel",
        "discovery",
    },
    "factcache": {"model", "analysis", "factcache", "digest", "__init__"},
    "digest": {"digest"},
    "parallel": {"parallel"},
    "precommit": {"cli", "precommit"},
    "status": {"model", "analysis", "rules", "engine", "status"},
    "edits": {"model", "sources", "edits"},
    "lsp": {
        "model",
        "sources",
        "analysis",
        "rules",
        "engine",
        "config",
        "project",
        "status",
        "edits",
        "lsp",
        "runtime",
        "workspace",
        "__init__",
        "baseline",
    },
    "runtime": {"model", "sources", "rules", "engine", "runtime"},
    "baseline": {"model", "rules", "config", "baseline", "baseline_file"},
    "baseline_file": {"config", "baseline_file"},
    "mend": {"model", "sources", "rules", "engine", "edits", "baseline", "mend"},
    "audit": {"model", "analysis", "rules", "engine", "status", "audit"},
    "plots": {"model", "plots"},
}
#: Fronts that may reach the runtime mode (lazily, on an explicit request).
RUNTIME_USERS = {"cli", "lsp", "runtime"}
#: The only layers that may import a heavy package, and which.
HEAVY_ALLOWED = {"lsp": {"pygls", "lsprotocol"}, "edits": {"libcst"}, "plots": {"matplotlib"}}
PROBE = SRC / "runtime" / "probe"


def _layer(path: Path) -> str:
    rel = path.relative_to(SRC)
    return rel.parts[0] if len(rel.parts) > 1 else rel.stem


def _imports(path: Path) -> set[str]:
    tree = ast.parse(path.read_text(), filename=str(path))
    out: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            out.update(a.name for a in node.names)
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            out.add(node.module)
            out.update(f"{node.module}.{a.name}" for a in node.names)
    return out


MODULES = sorted(p for p in SRC.rglob("*.py") if _layer(p) in ALLOWED and PROBE not in p.parents)


@pytest.mark.parametrize("path", MODULES, ids=lambda p: str(p.relative_to(SRC)))
def test_module_respects_the_layers(path):
    layer = _layer(path)
    for name in _imports(path):
        top = name.split(".")[0]
        assert top not in HEAVY - HEAVY_ALLOWED.get(layer, set()), f"{path.name} imports {name}"
        if top == "regvet" and name != "regvet":
            target = name.split(".")[1]
            target = target if (SRC / target).is_dir() or (SRC / f"{target}.py").exists() else "__init__"
            assert target in ALLOWED[layer], f"{layer} may not import regvet.{target} ({path.name})"


def test_every_module_is_in_a_known_layer():
    known = {_layer(p) for p in SRC.rglob("*.py")}
    assert known <= set(ALLOWED) | {"__init__", "__main__"}, known - set(ALLOWED)


def test_only_the_language_server_imports_pygls_and_only_edits_import_libcst():
    for path in MODULES:
        tops = {n.split(".")[0] for n in _imports(path)}
        if tops & {"pygls", "lsprotocol"}:
            assert _layer(path) == "lsp", path
        if "libcst" in tops:
            assert _layer(path) == "edits", path


def test_the_static_core_never_imports_the_runtime_mode():
    for path in MODULES:
        if _layer(path) in RUNTIME_USERS:
            continue
        assert not any(n.startswith("regvet.runtime") for n in _imports(path)), path


@pytest.mark.parametrize("path", sorted(PROBE.glob("*.py")), ids=lambda p: p.name)
def test_the_probe_needs_only_the_standard_library_numpy_scipy_and_statsmodels(path):
    """The probe runs in the user's interpreter, where regvet may not be installed (IPython: only if there)."""
    allowed = set(sys.stdlib_module_names) | {"numpy", "scipy", "statsmodels", "pandas"}
    allowed |= {
        "regvet_probe",
        "regvet_stats",
        "regvet_linalg",
        "regvet_align",
        "regvet_points",
        "regvet_fit",
        "regvet_passes",
        "regvet_rank",
        "regvet_reset",
        "regvet_cells",
        "regvet_collinear",
        "regvet_pairs",
    }  # the probe's own modules
    if path.name == "regvet_cells.py":  # notebooks run in IPython's shell where that interpreter has it
        allowed |= {"IPython", "traitlets"}
    for name in _imports(path):
        assert name.split(".")[0] in allowed, f"{path.name} imports {name}"


def test_importing_the_cli_loads_no_heavy_package():
    import subprocess

    code = f"import sys, regvet.cli; print(sorted(m for m in sys.modules if m.split('.')[0] in {sorted(HEAVY)!r}))"
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert proc.stdout.strip() == "[]"


# --- the import graph has no cycles ----------------------------------------------------------------
def _module_name(path: Path) -> str:
    rel = path.relative_to(SRC.parent).with_suffix("")
    parts = rel.parts[:-1] if rel.name == "__init__" else rel.parts
    return ".".join(parts)


def _is_module(name: str) -> bool:
    rel = Path(*name.split(".")[1:]) if "." in name else Path()
    return (SRC / rel).with_suffix(".py").is_file() or (SRC / rel / "__init__.py").is_file()


def _regvet_imports(path: Path) -> set[str]:
    """The regvet modules ``path`` imports anywhere in its text (lazy imports inside functions included).

    Imports under ``if TYPE_CHECKING:`` are left out: they name types for the checker and never run,
    so they cannot make an import cycle.
    """
    tree = ast.parse(path.read_text(), filename=str(path))
    for node in ast.walk(tree):
        if isinstance(node, ast.If) and "TYPE_CHECKING" in ast.unparse(node.test):
            node.body = []
    package = _module_name(path) if path.name == "__init__.py" else _module_name(path).rpartition(".")[0]
    out: set[str] = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            out.update(a.name for a in node.names)
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                anchor = package.split(".")[: len(package.split(".")) - (node.level - 1)]
                base = ".".join([*anchor, *([base] if base else [])])
            for a in node.names:
                sub = f"{base}.{a.name}"
                out.add(sub if _is_module(sub) else base)
    return {n for n in out if n == "regvet" or n.startswith("regvet.")}


def _layer_of(module: str) -> str:
    parts = module.split(".")
    if len(parts) == 1:
        return "__init__"
    return parts[1]


def find_cycle(graph: dict[str, set[str]]) -> list[str] | None:
    """A cycle of ``graph`` as a list of nodes whose last equals its first, or None."""
    state: dict[str, int] = {}  # 1: on the current path, 2: done
    path: list[str] = []

    def visit(node: str) -> list[str] | None:
        state[node] = 1
        path.append(node)
        for nxt in sorted(graph.get(node, ())):
            if state.get(nxt) == 1:
                return path[path.index(nxt) :] + [nxt]
            if nxt not in state:
                found = visit(nxt)
                if found:
                    return found
        path.pop()
        state[node] = 2
        return None

    for start in sorted(graph):
        if start not in state:
            found = visit(start)
            if found:
                return found
    return None


ALL_MODULES = sorted(p for p in SRC.rglob("*.py") if PROBE not in p.parents)
MODULE_GRAPH = {_module_name(p): _regvet_imports(p) - {_module_name(p)} for p in ALL_MODULES}


def test_the_cycle_finder_finds_a_cycle():
    assert find_cycle({"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}) == ["a", "b", "c", "a"]
    assert find_cycle({"a": {"b", "c"}, "b": {"c"}, "c": set()}) is None


def test_the_import_graph_has_no_cycle_between_layers():
    layers: dict[str, set[str]] = {}
    why: dict[tuple[str, str], str] = {}
    for module, targets in MODULE_GRAPH.items():
        for target in targets:
            a, b = _layer_of(module), _layer_of(target)
            if a != b:
                layers.setdefault(a, set()).add(b)
                why.setdefault((a, b), f"{module} imports {target}")
    cycle = find_cycle(layers)
    assert cycle is None, (
        "layers import each other: "
        + " -> ".join(cycle)
        + " ("
        + "; ".join(why[(a, b)] for a, b in itertools.pairwise(cycle))
        + ")"
    )


def test_the_import_graph_of_modules_has_no_cycle():
    cycle = find_cycle(MODULE_GRAPH)
    assert cycle is None, "modules import each other: " + " -> ".join(cycle)
