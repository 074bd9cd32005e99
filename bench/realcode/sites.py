"""List the OLS fit sites of extracted corpus files, to label them (a labelling aid, not the scorer).

Usage: python bench/realcode/sites.py CORPUS_DIR [owner+name ...]

A site is a call of ``OLS``/``ols``/``WLS``/``wls`` (or ``.from_formula``) (any module prefix) read with ``ast``;
its line is the line where the call starts, counted within the cell for notebooks (code cells
only, cell = 0-based index in the notebook's cell list, magics and shell lines masked). Prints
one JSON object per line: repo, path, cell, line, code.
"""

from __future__ import annotations

import ast
import json
import sys
from pathlib import Path

FIT_NAMES = {"OLS", "ols", "WLS", "wls"}


def _calls(source: str) -> list[int]:
    try:
        tree = ast.parse(source)
    except SyntaxError:
        return []
    lines = []
    for node in ast.walk(tree):
        if not isinstance(node, ast.Call):
            continue
        func = node.func
        name = func.attr if isinstance(func, ast.Attribute) else func.id if isinstance(func, ast.Name) else ""
        if name == "from_formula" and isinstance(func, ast.Attribute):
            inner = func.value
            name = inner.attr if isinstance(inner, ast.Attribute) else inner.id if isinstance(inner, ast.Name) else ""
        if name in FIT_NAMES:
            lines.append(node.lineno)
    return sorted(set(lines))


def _mask(source: str) -> str:
    return "\n".join("pass" if ln.lstrip().startswith(("%", "!")) else ln for ln in source.splitlines())


def sites(root: Path, key: str) -> list[dict[str, object]]:
    out: list[dict[str, object]] = []
    for file in sorted((root / key).rglob("*")):
        rel = file.relative_to(root / key).as_posix()
        if file.suffix == ".py":
            text = file.read_text(encoding="utf-8", errors="replace")
            src_lines = text.splitlines()
            out += [
                {"repo": key, "path": rel, "cell": None, "line": n, "code": src_lines[n - 1].strip()}
                for n in _calls(text)
            ]
        elif file.suffix == ".ipynb":
            try:
                cells = json.loads(file.read_text(encoding="utf-8"))["cells"]
            except (ValueError, KeyError):
                continue
            for index, cell in enumerate(cells):
                if cell.get("cell_type") != "code":
                    continue
                src = cell["source"]
                text = "".join(src) if isinstance(src, list) else src
                src_lines = text.splitlines()
                for n in _calls(_mask(text)):
                    out.append({"repo": key, "path": rel, "cell": index, "line": n, "code": src_lines[n - 1].strip()})
    return out


def main(argv: list[str]) -> int:
    root = Path(argv[0])
    keys = argv[1:] or sorted(p.name for p in root.iterdir() if p.is_dir())
    for key in keys:
        for site in sites(root, key):
            print(json.dumps(site))
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
