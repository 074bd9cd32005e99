"""libcst rewrites: a keyword argument on a call, statements after a statement, imports.

Nodes are found by their :class:`~libcst.metadata.PositionProvider` range, which matches the
``ast`` positions regvet's spans come from: 1-based lines, 0-based code-point columns, exclusive
end, surrounding parentheses not included (``tests/test_edits.py`` pins this).
"""

from __future__ import annotations

import textwrap
from collections.abc import Mapping, Sequence
from typing import TypeVar, cast

import libcst as cst
from libcst.helpers import get_full_name_for_node
from libcst.metadata import CodeRange, MetadataWrapper, ParentNodeProvider, PositionProvider

from regvet.edits.text import EditError
from regvet.model.span import Span

_Item = TypeVar("_Item", cst.Arg, cst.ImportAlias)
_STATEMENT = (cst.BaseSmallStatement, cst.BaseCompoundStatement)


def set_cov_type(source: str, fit_call: Span, cov_type: str = "HC3") -> str:
    """``source`` with the call at exactly ``fit_call`` given ``cov_type=<cov_type>``.

    An existing ``cov_type=`` keyword (or the second positional argument, which is ``cov_type``
    in ``OLS.fit``) gets the new value, in the same quote style; otherwise the keyword is added
    after the last argument, on its own line when the arguments are one per line, keeping a
    trailing comma. Raises :class:`EditError` if the file does not parse or no call is at that span.
    """
    module = _parse(source)
    wrapper = MetadataWrapper(module, unsafe_skip_copy=True)
    call = _node_at(wrapper.resolve(PositionProvider), fit_call, (cst.Call,), "call")
    assert isinstance(call, cst.Call)
    args = list(call.args)
    at = next((i for i, a in enumerate(args) if a.keyword is not None and a.keyword.value == "cov_type"), None)
    if at is None and len(args) >= 2 and all(a.keyword is None and not a.star for a in args[:2]):
        at = 1  # OLS.fit(method, cov_type, ...)
    if at is not None:
        args[at] = args[at].with_changes(value=_string(cov_type, args[at].value))
        return _replaced(module, call, call.with_changes(args=args)).code
    equal = next((a.equal for a in args if a.keyword is not None), None)
    if not isinstance(equal, cst.AssignEqual):  # no keyword to copy the style of: PEP 8's `key=value`
        equal = cst.AssignEqual(whitespace_before=cst.SimpleWhitespace(""), whitespace_after=cst.SimpleWhitespace(""))
    new = cst.Arg(value=_string(cov_type, None), keyword=cst.Name("cov_type"), equal=equal)
    if args:
        before_last = args[-2].comma if len(args) > 1 else None
        first = before_last.whitespace_after if isinstance(before_last, cst.Comma) else call.whitespace_before_args
        args = _append(args, new, first)
    else:
        args = [new]
    return _replaced(module, call, call.with_changes(args=args)).code


def insert_after_statement(source: str, statement: Span, code: str, imports: tuple[tuple[str, str], ...] = ()) -> str:
    """``source`` with the statements in ``code`` inserted right after the statement at ``statement``.

    The new statements take that statement's indentation (``code`` itself is dedented first);
    a statement sharing its line with others (``a = f(); b = 2``) gets them after the whole line.
    For each ``(module, name)`` in ``imports`` whose ``name`` no top-level import before the
    enclosing top-level statement binds, ``name`` is added to the first such ``from module
    import ...`` if there is one, else ``from module import name`` goes after the last of those
    imports (or at the top, after a module docstring, when there is none). Raises
    :class:`EditError` if the file or ``code`` does not parse, no statement is at that span, or
    the statement shares a line with its block's header (``if x: res = m.fit()``).
    """
    module = _parse(source)
    wrapper = MetadataWrapper(module, unsafe_skip_copy=True)
    positions = wrapper.resolve(PositionProvider)
    parents = wrapper.resolve(ParentNodeProvider)
    target = _node_at(positions, statement, _STATEMENT, "statement")
    line = target if isinstance(target, cst.BaseCompoundStatement) else parents[target]
    if isinstance(line, cst.SimpleStatementSuite):
        raise EditError("the statement is on the same line as its block header; put it on a line of its own first")
    block = parents[line]
    if not isinstance(block, (cst.Module, cst.IndentedBlock)):
        raise EditError("cannot insert after this statement (it is not in a block)")
    top = line
    while parents[top] is not module:
        top = parents[top]
    top_index = _index(module.body, top)
    at = _index(block.body, line) + 1
    body = [*block.body[:at], *_statements(code), *block.body[at:]]
    if block is module:
        module = module.with_changes(body=body)
    else:
        module = _replaced(module, block, block.with_changes(body=body))
    for from_module, name in imports:
        module, top_index = _add_import(module, from_module, name, top_index)
    return module.code


# --- helpers ----------------------------------------------------------------------------------


def _parse(source: str) -> cst.Module:
    try:
        return cst.parse_module(source)
    except cst.ParserSyntaxError as exc:
        raise EditError(f"cannot parse the file (line {exc.raw_line}): {exc.message}") from None


def _node_at(positions: Mapping[cst.CSTNode, CodeRange], span: Span, kinds: tuple[type, ...], what: str) -> cst.CSTNode:
    want = (span.line, span.col, span.end_line, span.end_col)
    for node, where in positions.items():
        if isinstance(node, kinds) and (where.start.line, where.start.column, where.end.line, where.end.column) == want:
            return node
    raise EditError(f"no {what} at line {span.line}, column {span.col} (the file changed since it was analysed?)")


def _index(body: Sequence[cst.CSTNode], node: cst.CSTNode) -> int:
    return next(i for i, n in enumerate(body) if n is node)


def _string(text: str, like: cst.BaseExpression | None) -> cst.SimpleString:
    quote = "'" if isinstance(like, cst.SimpleString) and like.value[len(like.prefix) :].startswith("'") else '"'
    if quote in text or "\\" in text or "\n" in text or "\r" in text:
        return cst.SimpleString(repr(text))
    return cst.SimpleString(f"{quote}{text}{quote}")


def _separator(first: cst.BaseParenthesizableWhitespace) -> cst.BaseParenthesizableWhitespace:
    """The whitespace after a new comma: a fresh line like ``first`` when the list is one item per line."""
    if isinstance(first, cst.ParenthesizedWhitespace):
        clean = first.first_line.with_changes(whitespace=cst.SimpleWhitespace(""), comment=None)
        return first.with_changes(first_line=clean, empty_lines=())
    return cst.SimpleWhitespace(" ")


def _replaced(module: cst.Module, old: cst.CSTNode, new: cst.CSTNode) -> cst.Module:
    """``module`` with the node ``old`` replaced by ``new`` (libcst types the result loosely)."""
    result = module.deep_replace(old, new)
    assert isinstance(result, cst.Module)
    return result


def _smalls(statement: cst.BaseStatement) -> Sequence[cst.BaseSmallStatement]:
    """The small statements of a simple statement line; none for a compound statement."""
    return statement.body if isinstance(statement, cst.SimpleStatementLine) else ()


def _append(items: list[_Item], new: _Item, first: cst.BaseParenthesizableWhitespace) -> list[_Item]:
    """``items`` + ``new``: the old last item gets a comma, ``new`` takes over its trailing comma and spacing.

    ``first`` is the whitespace before the first item, or after the comma before the last one. In
    a list of one item per line, a comment after the old last item stays on its line.
    """
    last: cst.Arg | cst.ImportAlias = items[-1]
    had_comma = isinstance(last.comma, cst.Comma)
    if isinstance(last.comma, cst.Comma):
        tail: cst.BaseParenthesizableWhitespace | None = last.comma.whitespace_after
    else:
        tail = last.whitespace_after_arg if isinstance(last, cst.Arg) else None
    sep = _separator(first)
    if isinstance(tail, cst.ParenthesizedWhitespace) and isinstance(sep, cst.ParenthesizedWhitespace):
        sep = tail.with_changes(indent=sep.indent, last_line=sep.last_line)
        tail = _separator(tail).with_changes(indent=tail.indent, last_line=tail.last_line)
    before = last.comma.whitespace_before if isinstance(last.comma, cst.Comma) else cst.SimpleWhitespace("")
    old_changes: dict = {"comma": cst.Comma(whitespace_before=before, whitespace_after=sep)}
    new_changes: dict = {
        "comma": last.comma.with_changes(whitespace_after=tail) if isinstance(last.comma, cst.Comma) else last.comma
    }
    if isinstance(last, cst.Arg) and not had_comma:  # the space before `)` moves to the new last argument
        old_changes["whitespace_after_arg"] = cst.SimpleWhitespace("")
        new_changes["whitespace_after_arg"] = tail
    out = items[:-1]
    out.append(cast(_Item, last.with_changes(**old_changes)))
    out.append(new.with_changes(**new_changes))
    return out


def _statements(code: str) -> list[cst.BaseStatement]:
    try:
        parsed = cst.parse_module(textwrap.dedent(code))
    except cst.ParserSyntaxError as exc:
        raise EditError(f"the code to insert does not parse: {exc.message}") from None
    body = list(parsed.body)
    if not body:
        raise EditError("there is no statement to insert")
    if parsed.header:  # comments above the first statement
        body[0] = body[0].with_changes(leading_lines=(*parsed.header, *body[0].leading_lines))
    return list[cst.BaseStatement](body)


def _import_lines(body: Sequence[cst.BaseStatement]) -> list[int]:
    return [
        i
        for i, s in enumerate(body)
        if isinstance(s, cst.SimpleStatementLine) and any(isinstance(x, (cst.Import, cst.ImportFrom)) for x in s.body)
    ]


def _module_name(node: cst.ImportFrom) -> str | None:
    if node.relative or node.module is None:
        return None
    return get_full_name_for_node(node.module)


def _binds(node: cst.BaseSmallStatement, from_module: str, name: str) -> bool:
    if isinstance(node, cst.Import):
        return any((a.evaluated_alias or a.evaluated_name.split(".")[0]) == name for a in node.names)
    if isinstance(node, cst.ImportFrom):
        if isinstance(node.names, cst.ImportStar):
            return _module_name(node) == from_module
        return any((a.evaluated_alias or a.evaluated_name) == name for a in node.names)
    return False


def _add_import(module: cst.Module, from_module: str, name: str, before: int) -> tuple[cst.Module, int]:
    """``module`` with ``name`` importable from ``from_module`` by the top-level statement at index ``before``,
    and that statement's index afterwards."""
    body = list(module.body)
    lines = [i for i in _import_lines(body) if i < before]
    smalls = [(i, j, s) for i in lines for j, s in enumerate(_smalls(body[i]))]
    if any(_binds(s, from_module, name) for _, _, s in smalls):
        return module, before
    for i, j, s in smalls:
        if isinstance(s, cst.ImportFrom) and not isinstance(s.names, cst.ImportStar) and _module_name(s) == from_module:
            names = list(s.names)
            before_last = names[-2].comma if len(names) > 1 else None
            if isinstance(before_last, cst.Comma):
                first: cst.BaseParenthesizableWhitespace = before_last.whitespace_after
            else:
                first = s.lpar.whitespace_after if s.lpar else cst.SimpleWhitespace(" ")
            names = _append(names, cst.ImportAlias(name=cst.Name(name)), first)
            small = list(_smalls(body[i]))
            small[j] = s.with_changes(names=names)
            body[i] = body[i].with_changes(body=small)
            return module.with_changes(body=body), before
    new = cst.parse_statement(f"from {from_module} import {name}\n")
    if lines:
        at = lines[-1] + 1
    else:
        at = 1 if body and _is_docstring(body[0]) else 0
        if at == 0 and body:  # comments above the first statement stay above (a shebang, a coding line)
            new = new.with_changes(leading_lines=body[0].leading_lines)
            body[0] = body[0].with_changes(leading_lines=())
    body.insert(at, new)
    return module.with_changes(body=body), before + 1


def _is_docstring(stmt: cst.BaseStatement) -> bool:
    return (
        isinstance(stmt, cst.SimpleStatementLine)
        and len(stmt.body) == 1
        and isinstance(stmt.body[0], cst.Expr)
        and isinstance(stmt.body[0].value, (cst.SimpleString, cst.ConcatenatedString))
    )
