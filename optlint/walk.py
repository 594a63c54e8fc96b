"""Walk: the child nodes of a libcst node that carry meaning, read straight from its fields.

libcst's visitors rebuild every node they pass (``_visit_and_replace_children``), which on the
model fixtures cost more than the parse; a question that only reads the tree ("which names does
this function assign", "where are bounds changed") walks it with ``children``/``walk`` instead.
Whitespace, brackets, commas and operator tokens are not walked (the operator *nodes* are:
``BinaryOperation.operator`` is skipped, the ``BinaryOperation`` itself is not).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Iterator

import libcst as cst

_NOT_WALKED = (cst.SimpleWhitespace, cst.ParenthesizedWhitespace, cst.Newline, cst.Comment, cst.EmptyLine,
               cst.TrailingWhitespace, cst.LeftParen, cst.RightParen, cst.LeftSquareBracket, cst.RightSquareBracket,
               cst.LeftCurlyBrace, cst.RightCurlyBrace, cst.Comma, cst.Dot, cst.Colon, cst.AssignEqual,
               cst.Semicolon, cst.BaseBinaryOp, cst.BaseUnaryOp, cst.BaseCompOp, cst.BaseBooleanOp, cst.BaseAugOp)
_FIELDS: dict[type, tuple[str, ...]] = {}
_WALKED: dict[type, bool] = {}


def children(node) -> list:
    """Child nodes of interest (no whitespace, brackets or operator tokens), in source order."""
    names = _FIELDS.get(type(node))
    if names is None:
        names = _FIELDS[type(node)] = tuple(f.name for f in dataclasses.fields(node))
    out = []
    for name in names:
        v = getattr(node, name)
        if isinstance(v, (list, tuple)):
            out.extend(x for x in v if _walked(type(x)))
        elif _walked(type(v)):
            out.append(v)
    return out


def walk(node) -> Iterator[cst.CSTNode]:
    """``node`` and every node of interest below it, parents first, in source order; iterative
    (no recursion limit)."""
    stack = [node]
    while stack:
        n = stack.pop()
        yield n
        stack.extend(reversed(children(n)))


def _walked(t: type) -> bool:
    hit = _WALKED.get(t)
    if hit is None:
        hit = _WALKED[t] = issubclass(t, cst.CSTNode) and not issubclass(t, _NOT_WALKED)
    return hit
