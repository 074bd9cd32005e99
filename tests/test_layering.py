"""The architecture, enforced: which regvet packages may import what (read with ``ast``, nothing imported).

model <- sources <- analysis <- rules <- engine <- fronts (cli, project, output).
The static core never imports numpy, pandas, scipy, statsmodels, libcst or pygls; ``edits`` (the
quick-fix rewrites, imported lazily by the language server) is the one package that imports libcst.
"""

from __future__ import annotations

import ast
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
    "output": {"model", "rules", "engine", "output", "__init__"},
    "project": {"model", "sources", "analysis", "project"},
    "cli": {"model", "sources", "analysis", "rules", "engine", "config", "output", "project", "cli", "lsp", "runtime",
            "workspace", "__init__"},
    "precommit": {"cli", "precommit"},
    "status": {"model", "analysis", "rules", "engine", "status"},
    "edits": {"model", "sources", "edits"},
    "lsp": {"model", "sources", "analysis", "rules", "engine", "config", "project", "status", "edits", "cli", "lsp",
            "runtime", "workspace", "__init__"},
    "runtime": {"model", "sources", "engine", "runtime"},
}
#: Fronts that may reach the runtime mode (lazily, on an explicit request).
RUNTIME_USERS = {"cli", "lsp", "runtime"}
#: The only layers that may import a heavy package, and which.
HEAVY_ALLOWED = {"lsp": {"pygls", "lsprotocol"}, "edits": {"libcst"}}
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
    """The probe runs in the user's interpreter, where regvet may not be installed."""
    allowed = set(sys.stdlib_module_names) | {"numpy", "scipy", "statsmodels", "pandas"}
    allowed |= {"regvet_probe", "regvet_stats", "regvet_linalg", "regvet_align"}  # the probe's own modules
    for name in _imports(path):
        assert name.split(".")[0] in allowed, f"{path.name} imports {name}"


def test_importing_the_cli_loads_no_heavy_package():
    import subprocess

    code = "import sys, regvet.cli; print(sorted(m for m in sys.modules if m.split('.')[0] in %r))" % sorted(HEAVY)
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert proc.stdout.strip() == "[]"
