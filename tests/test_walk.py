"""``analysis.walk.walk`` visits exactly the nodes ``ast.walk`` (the standard library, the reference)
visits, but the expression contexts, on every fixture and on a sample of the standard library."""

from __future__ import annotations

import ast
import sysconfig
from collections import Counter
from pathlib import Path

import pytest

from regvet.analysis.walk import walk

ROOT = Path(__file__).resolve().parents[1]
CONTEXTS = (ast.Load, ast.Store, ast.Del)


def _sources() -> list[Path]:
    fixtures = sorted((ROOT / "fixtures").rglob("*.py"))
    stdlib = sorted(Path(sysconfig.get_paths()["stdlib"]).glob("*.py"))[:60]
    return fixtures + stdlib


@pytest.mark.parametrize("path", _sources(), ids=lambda p: p.name)
def test_walk_visits_what_ast_walk_visits_without_contexts(path: Path) -> None:
    try:
        tree = ast.parse(path.read_text(encoding="utf-8"))
    except (SyntaxError, UnicodeDecodeError, ValueError):
        pytest.skip("not a parseable module")
    expected = Counter(id(n) for n in ast.walk(tree) if not isinstance(n, CONTEXTS))
    assert Counter(id(n) for n in walk(tree)) == expected


def test_walk_handles_the_holes_and_the_string_lists() -> None:
    tree = ast.parse(
        "def f(*, a, b=1):\n    global g\n    nonlocal_free = {**x, 'k': v}\n    return {**y}\n"
        "match p:\n    case {'a': 1, **rest}: pass\n"
    )
    kinds = Counter(type(n).__name__ for n in walk(tree))
    assert kinds == Counter(type(n).__name__ for n in ast.walk(tree) if not isinstance(n, CONTEXTS))
    assert kinds["Global"] == 1 and kinds["Dict"] == 2
