"""A small reader for the formula strings of ``statsmodels.formula.api``.

It understands the operators formulas use (``~ + - * / : **``, parentheses,
``0``/``1``/``-1`` for the intercept) well enough to tell the dependent
variable, the model's terms and which categorical ``C(...)`` factors are
interacted. It never raises: a formula it cannot read gives ``None``.

Its work is bounded whatever the formula: at most ``MAX_TERMS`` terms are expanded and no
product of term sets above ``MAX_PAIRS`` pairs is formed (a longer one gives a formula marked
``too_large``, whose terms are not known), a power stops as soon as it adds no term (a sum of
k factors saturates by the power k), and parentheses nest at most ``MAX_DEPTH`` deep.
"""

from __future__ import annotations

import ast
import re
from dataclasses import dataclass
from functools import lru_cache
from itertools import product

from regvet.analysis.walk import walk
from regvet.model.facts import Outcome

#: Functions that transform an outcome, and the transform's name (``np.log(y)``, ``log(y)`` -> log).
TRANSFORMS = {
    "log": "log",
    "log1p": "log1p",
    "log10": "log10",
    "log2": "log2",
    "sqrt": "sqrt",
    "exp": "exp",
    "square": "square",
    "abs": "abs",
    "arcsinh": "asinh",
    "asinh": "asinh",
}
# One way to match each name (``l\d+\d*`` backtracks quadratically over a long run of digits).
_LAG_NAME = re.compile(r"(?:^|_)(?:lagged\d*|lag\d*|l\d+)(?:_|$)|lag\d", re.IGNORECASE)
_LAG_CALL = re.compile(r"\b(?:shift|diff|lag|L)\s*\(")


@dataclass(frozen=True)
class Formula:
    text: str
    outcome: Outcome | None
    terms: tuple[tuple[str, ...], ...]  # each term: its factors, sorted; intercept excluded
    intercept: bool
    variables: frozenset[str]  # every identifier read by the formula, both sides
    shift_groups: frozenset[str]  # C(g) factors that only shift the intercept
    interacted_groups: frozenset[str]  # C(g) factors that appear in an interaction
    lagged: bool  # lags or differences appear in the formula
    #: The right-hand side expands to more than MAX_TERMS terms: ``terms`` is empty, and the
    #: groups are the ones the formula names, all counted as interacted.
    too_large: bool = False
    main_groups: frozenset[str] = frozenset()  # C(g) factors that are a term of their own (interacted or not)
    interacted_columns: frozenset[str] = frozenset()  # identifiers read by a factor of an interaction term

    @property
    def n_regressors(self) -> int:
        return len(self.terms)


def outcome_of_expr(node: ast.expr) -> Outcome | None:
    """Base variable and transform of a left-hand side such as ``np.log(riders)``."""
    text = _strip_modules(ast.unparse(node))
    inner = node
    transform: str | None = None
    if isinstance(node, ast.Call) and len(node.args) == 1 and not node.keywords:
        fname = node.func.attr if isinstance(node.func, ast.Attribute) else getattr(node.func, "id", None)
        arg = node.args[0]
        if fname == "Q" and isinstance(arg, ast.Constant) and isinstance(arg.value, str):
            return Outcome(arg.value, None, arg.value)
        if fname == "I":
            return outcome_of_expr(arg)
        if fname in TRANSFORMS:
            transform = TRANSFORMS[fname]
            inner = arg
    base = _base_name(inner)
    if base is None:
        return None
    if transform is None and not isinstance(inner, ast.Name):
        transform = "expr"
    return Outcome(base, transform, text)


def _base_name(node: ast.expr) -> str | None:
    """The one variable an expression reads (function names and numpy prefixes aside)."""
    if isinstance(node, ast.Name):
        return node.id
    if isinstance(node, ast.Call) and isinstance(node.func, ast.Name) and node.func.id == "Q" and node.args:
        arg = node.args[0]
        return arg.value if isinstance(arg, ast.Constant) and isinstance(arg.value, str) else None
    calls = {id(n.func) for n in walk(node) if isinstance(n, ast.Call)}
    names = [n.id for n in walk(node) if isinstance(n, ast.Name) and id(n) not in calls and n.id not in ("np", "numpy")]
    return names[0] if len(set(names)) == 1 else None


def _strip_modules(text: str) -> str:
    return re.sub(r"\b(?:np|numpy)\.", "", text).replace(" ", "")


# --- right-hand side -----------------------------------------------------------------------
class _Unreadable(Exception):
    pass


class _TooLarge(Exception):
    pass


#: The most terms a formula is expanded to (patsy would build a column for each).
MAX_TERMS = 1000
#: The most pairs of terms one product (``*``, ``:``, a step of ``**``) may combine.
MAX_PAIRS = 100_000
#: The deepest nesting of parentheses read.
MAX_DEPTH = 100


_Terms = frozenset  # frozenset[frozenset[str]]; the empty frozenset is the intercept


def _tokenize(text: str) -> list[str]:
    tokens: list[str] = []
    i, n = 0, len(text)
    while i < n:
        ch = text[i]
        if ch.isspace():
            i += 1
        elif text.startswith("**", i):
            tokens.append("**")
            i += 2
        elif ch in "+-*/:()":
            tokens.append(ch)
            i += 1
        else:
            start = i
            depth = 0
            quote: str | None = None
            while i < n:
                c = text[i]
                if quote:
                    if c == "\\":
                        i += 1
                    elif c == quote:
                        quote = None
                elif c in "'\"":
                    quote = c
                elif c in "([{":
                    depth += 1
                elif c in ")]}":
                    if depth == 0:
                        break
                    depth -= 1
                elif depth == 0 and (c.isspace() or c in "+-*/:~"):
                    break
                i += 1
            if quote or depth:
                raise _Unreadable
            tokens.append(text[start:i].strip())
    return tokens


class _Parser:
    def __init__(self, tokens: list[str]) -> None:
        self.toks = tokens
        self.i = 0
        self.depth = 0

    def peek(self) -> str | None:
        return self.toks[self.i] if self.i < len(self.toks) else None

    def take(self) -> str:
        tok = self.peek()
        if tok is None:
            raise _Unreadable
        self.i += 1
        return tok

    def expr(self) -> tuple[_Terms, bool | None]:
        """Sum of terms, and an explicit intercept flag (None when not mentioned)."""
        terms: set[frozenset[str]] = set()
        intercept: bool | None = None
        sign = "+"
        if self.peek() in ("+", "-"):
            sign = self.take()
        while True:
            part, icpt = self.term()
            if icpt is not None:  # 0 or 1 as a term
                intercept = icpt if sign == "+" else not icpt
            elif sign == "+":
                terms |= part
            else:
                terms -= part
            tok = self.peek()
            if tok in ("+", "-"):
                sign = self.take()
                continue
            break
        return _Terms(terms), intercept

    def term(self) -> tuple[_Terms, bool | None]:
        left, icpt = self.factor()
        while self.peek() in ("*", "/"):
            op = self.take()
            right, _ = self.factor()
            if op == "*":
                left = _bounded(left | right | _pairs(left, right))
            else:
                everything = frozenset().union(*left) if left else frozenset()
                left = _bounded(left | _Terms(everything | b for b in right))
            icpt = None
        return left, icpt

    def factor(self) -> tuple[_Terms, bool | None]:
        left, icpt = self.power()
        while self.peek() == ":":
            self.take()
            right, _ = self.power()
            left = _bounded(_pairs(left, right))
            icpt = None
        return left, icpt

    def power(self) -> tuple[_Terms, bool | None]:
        base, icpt = self.atom()
        if self.peek() == "**":
            self.take()
            exp = self.take()
            if not exp.isascii() or not exp.isdigit():
                raise _Unreadable
            # Each step can only add unions of more base factors, so after as many steps as the
            # base has factors nothing is added: the exponent beyond that changes nothing.
            factors = frozenset().union(*base) if base else frozenset()
            steps = min(int(exp) if len(exp) <= 7 else len(factors), len(factors)) - 1
            result = base
            for _ in range(steps):
                grown = _bounded(result | _pairs(result, base))
                if grown == result:
                    break
                result = grown
            return _Terms(t for t in result if t), None
        return base, icpt

    def atom(self) -> tuple[_Terms, bool | None]:
        tok = self.take()
        if tok == "(":
            self.depth += 1
            if self.depth > MAX_DEPTH:
                raise _Unreadable
            inner, icpt = self.expr()
            if self.take() != ")":
                raise _Unreadable
            self.depth -= 1
            return inner, icpt
        if tok in ("0", "1"):
            return _Terms(), tok == "1"
        if tok == "-":
            inner, icpt = self.atom()
            return inner, (None if icpt is None else not icpt)
        if tok in "+*/:)":
            raise _Unreadable
        return _Terms({frozenset({_normalize_factor(tok)})}), None


def _pairs(left: _Terms, right: _Terms) -> _Terms:
    """Every union of a term of ``left`` with a term of ``right`` (an interaction), or _TooLarge."""
    if len(left) * len(right) > MAX_PAIRS:
        raise _TooLarge
    return _Terms(a | b for a, b in product(left, right))


def _bounded(terms: _Terms) -> _Terms:
    if len(terms) > MAX_TERMS + 1:  # the intercept's empty term aside
        raise _TooLarge
    return terms


def _normalize_factor(tok: str) -> str:
    return re.sub(r"\s+", "", tok)


def _group_of(factor: str) -> str | None:
    m = re.match(r"^C\(\s*([A-Za-z_][\w.]*)", factor)
    return m.group(1) if m else None


def _identifiers(text: str) -> set[str]:
    out: set[str] = set()
    for m in re.finditer(r"Q\(\s*['\"]([^'\"]+)['\"]\s*\)", text):
        out.add(m.group(1))
    stripped = re.sub(r"(['\"]).*?\1", "", text)
    for m in re.finditer(r"(?<![\w.])([A-Za-z_]\w*)(?!\w)(?!\s*\()", stripped):
        name = m.group(1)
        if name not in {"np", "numpy", "C", "I", "Q", "Treatment", "Sum", "Diff", "Poly"}:
            out.add(name)
    return out


@lru_cache(maxsize=4096)
def parse_formula(text: str) -> Formula | None:
    """Read ``text`` as a model formula, or return None when it is not one regvet can read."""
    if text.count("~") != 1:
        return None
    lhs, rhs = (s.strip() for s in text.split("~"))
    outcome: Outcome | None = None
    if lhs:
        try:
            outcome = outcome_of_expr(ast.parse(lhs, mode="eval").body)
        except (SyntaxError, ValueError, RecursionError, MemoryError):  # NUL bytes, absurd nesting
            outcome = None
    too_large = False
    try:
        tokens = _tokenize(rhs)
        parser = _Parser(tokens)
        terms, intercept = parser.expr()
        if parser.peek() is not None:
            return None
    except _TooLarge:
        too_large, terms, intercept = True, _Terms(), None
    except (_Unreadable, RecursionError):
        return None
    real = tuple(sorted(tuple(sorted(t)) for t in terms if t))
    shift: set[str] = set()
    inter: set[str] = set()
    inter_columns: set[str] = set()
    for t in real:
        for f in t:
            g = _group_of(f)
            if g:
                (inter if len(t) > 1 else shift).add(g)
            if len(t) > 1:
                inter_columns |= _identifiers(f)
    if too_large:
        inter = {g for g in (_group_of(tok) for tok in tokens) if g}
    variables = _identifiers(rhs) | (_identifiers(lhs) if lhs else set())
    lagged = bool(_LAG_CALL.search(rhs)) or any(_LAG_NAME.search(v) for v in variables)
    return Formula(
        text=text,
        outcome=outcome,
        terms=real,
        intercept=True if intercept is None else intercept,
        variables=frozenset(variables),
        shift_groups=frozenset(shift - inter),
        interacted_groups=frozenset(inter),
        lagged=lagged,
        too_large=too_large,
        main_groups=frozenset(shift),
        interacted_columns=frozenset(inter_columns),
    )
