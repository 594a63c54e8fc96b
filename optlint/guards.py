"""Guards: sign facts the code itself establishes about its data, read from the source.

Real model code checks its weights: ``assert gamma >= 0``, ``if lam < 0: raise ValueError(...)``,
or gives them a literal default (``shrink=0.5``). After such a check the name is known to have that
sign for the rest of the function, and the interpreter rebinds it to data with that sign. Only
plain comparisons of a name (or a dotted attribute) with the literal 0 count; anything else
establishes nothing.
"""

from __future__ import annotations

import libcst as cst

from optlint.names import dotted as _dotted

# (operator, name on the left) -> sign the name has when the comparison holds
_HOLDS_LEFT = {"GreaterThanEqual": "nonnegative", "GreaterThan": "positive",
               "LessThanEqual": "nonpositive", "LessThan": "negative"}
_HOLDS_RIGHT = {"LessThanEqual": "nonnegative", "LessThan": "positive",
                "GreaterThanEqual": "nonpositive", "GreaterThan": "negative"}
_NEGATION = {"nonnegative": "negative", "positive": "nonpositive", "nonpositive": "positive",
             "negative": "nonnegative"}


def _is_zero(node) -> bool:
    return isinstance(node, (cst.Integer, cst.Float)) and float(node.value.replace("_", "")) == 0.0


def facts(test, holds: bool = True) -> list[tuple[str, str]]:
    """(name, sign) pairs that hold when ``test`` evaluates to ``holds``."""
    if isinstance(test, cst.UnaryOperation) and isinstance(test.operator, cst.Not):
        return facts(test.expression, not holds)
    if isinstance(test, cst.BooleanOperation):
        conj = isinstance(test.operator, cst.And)
        if conj == holds:  # a true `and`, or a false `or`: both sides are known
            return facts(test.left, holds) + facts(test.right, holds)
        return []
    if isinstance(test, cst.Comparison) and len(test.comparisons) == 1:
        op = type(test.comparisons[0].operator).__name__
        left, right = test.left, test.comparisons[0].comparator
        sign = None
        if _is_zero(right) and _dotted(left) is not None:
            name, sign = _dotted(left), _HOLDS_LEFT.get(op)
        elif _is_zero(left) and _dotted(right) is not None:
            name, sign = _dotted(right), _HOLDS_RIGHT.get(op)
        if sign is not None:
            return [(name, sign if holds else _NEGATION[sign])]
    return []


def always_raises(body) -> bool:
    """Whether a block ends by raising (``if bad: raise ...`` guards)."""
    statements = list(body.body) if isinstance(body, cst.IndentedBlock) else [body]
    if not statements:
        return False
    last = statements[-1]
    smalls = last.body if isinstance(last, (cst.SimpleStatementLine, cst.SimpleStatementSuite)) else []
    return bool(smalls) and isinstance(smalls[-1], cst.Raise)


def literal_sign(node) -> str | None:
    """The sign of a numeric literal default (``0.5``, ``-1``), or None."""
    negative = False
    while isinstance(node, cst.UnaryOperation) and isinstance(node.operator, (cst.Minus, cst.Plus)):
        negative ^= isinstance(node.operator, cst.Minus)
        node = node.expression
    if not isinstance(node, (cst.Integer, cst.Float)):
        return None
    try:
        value = float(node.value.replace("_", ""))
    except ValueError:
        return None
    value = -value if negative else value
    if value > 0:
        return "positive"
    if value < 0:
        return "negative"
    return "nonnegative"
