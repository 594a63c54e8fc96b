"""Lift: the small vocabulary for turning source values into sympy expressions, safely.

Every sympy object optlint builds from user code is built here or in a recogniser from CST nodes,
never by parsing text. Numbers that would be expensive to materialise (``10**10**10``, a 5,000-digit
literal) become named positive data symbols instead of being computed.

Invariant: a value that is not a decision-variable expression is *data*. Data whose origin the
interpreter cannot resolve becomes a ``DataSymbol`` named by its source text. ``DataSymbol`` is its
own class so that data named ``x`` never equals a decision variable named ``x``.
"""

from __future__ import annotations

import math

import sympy

MAX_INT_DIGITS = 60
MAX_EXACT_POW_BITS = 256


class DataSymbol(sympy.Symbol):
    """A constant whose value the analyser does not know (data, a parameter passed in, an index)."""


def data(text: str, **assumptions) -> DataSymbol:
    """Data are real numbers (or arrays of them) unless a recogniser knows more."""
    assumptions.setdefault("real", True)
    return DataSymbol(text, **assumptions)


def number_from_literal(kind: str, text: str) -> sympy.Basic | None:
    """A sympy number for an Integer/Float literal of Python source, or None (imaginary, odd)."""
    t = text.replace("_", "")
    if kind == "int":
        digits = t.lower()
        if len(digits) > MAX_INT_DIGITS:
            return data(text, positive=True)
        try:
            return sympy.Integer(int(digits, 0))
        except ValueError:
            return None
    if kind == "float":
        try:
            value = float(t)
        except ValueError:
            return None
        if math.isinf(value):
            return data(text, positive=True)
        return sympy.Float(value)
    return None


def exact_power_too_big(base: sympy.Basic, exp: sympy.Basic) -> bool:
    """Whether base ** exp of two constants would be an exact number of more than
    ``MAX_EXACT_POW_BITS`` bits (or its size cannot even be estimated)."""
    try:
        return abs(float(exp)) * max(1.0, math.log2(abs(complex(base)) + 1.0)) > MAX_EXACT_POW_BITS
    except (OverflowError, ValueError, TypeError):
        return True


def _opaque_power(base: sympy.Basic, exp: sympy.Basic) -> sympy.Basic:
    positive = bool(base.is_positive)
    return data(f"({base})**({exp})", positive=positive) if positive else data(f"({base})**({exp})")


def safe_pow(base: sympy.Basic, exp: sympy.Basic) -> sympy.Basic:
    """base ** exp, without letting sympy compute astronomically large numbers.

    A constant base with a large exponent becomes opaque data. A product with constant factors is
    split first, because sympy distributes a numeric exponent over a product and would compute the
    constant part exactly: ``(2*x)**(10**10)`` is ``2**(10**10) * x**(10**10)`` (found by the
    mutation fuzzer; minutes of big-integer arithmetic). The split is exact on the principal branch
    that sympy uses: for a constant c > 0, ``(c*r)**e == c**e * r**e`` for every e; for c < 0 the
    sign moves into r, ``(c*r)**e == (-c)**e * (-r)**e``."""
    if not (isinstance(base, sympy.Basic) and isinstance(exp, sympy.Basic) and exp.is_Number):
        return sympy.Pow(base, exp)
    if base.is_number:
        return _opaque_power(base, exp) if exact_power_too_big(base, exp) else sympy.Pow(base, exp)
    if isinstance(base, sympy.Mul):
        constant = sympy.Mul(*[f for f in base.args if f.is_number])
        if constant != 1 and exact_power_too_big(constant, exp):
            rest = sympy.Mul(*[f for f in base.args if not f.is_number])
            if constant.is_negative:
                constant, rest = -constant, -rest
            if constant.is_positive:
                return _opaque_power(constant, exp) * sympy.Pow(rest, exp)
            return sympy.Function("operator**")(base, exp)   # a complex or unordered constant: unknown
    return sympy.Pow(base, exp)


def is_expr(value) -> bool:
    return isinstance(value, sympy.Basic)


def involves(expr, variables: frozenset) -> bool:
    if not isinstance(expr, sympy.Basic) or not variables:
        return False
    return bool(expr.free_symbols & variables)


def preorder(expr):
    """The nodes of a sympy expression, parents before children, in ``args`` order. sympy's own
    ``preorder_traversal`` walks a Min, Max, And or Or through its frozenset of arguments, whose
    order changes with the process's string hashing (PYTHONHASHSEED): a witness search seeded from
    it gave different points from run to run."""
    stack = [expr]
    while stack:
        node = stack.pop()
        yield node
        if isinstance(node, sympy.Basic):
            stack.extend(reversed(node.args))


def maximum(*args) -> sympy.Basic:
    """``sympy.Max(*args)``; where sympy refuses an argument as not comparable (a number it
    cannot order, such as an atom applied to constants: ``60.0 - matmul(6.5, 4.0)``), the same
    maximum unevaluated, instead of a ValueError out of the recogniser (found by the fuzzer)."""
    return _lattice(sympy.Max, args)


def minimum(*args) -> sympy.Basic:
    """``sympy.Min(*args)``, unevaluated where sympy refuses an argument (see ``maximum``)."""
    return _lattice(sympy.Min, args)


def _lattice(cls, args) -> sympy.Basic:
    try:
        return cls(*args)
    except (ValueError, TypeError):
        return cls(*_numbers(args), evaluate=False)


def _numbers(args) -> list:
    """The arguments as sympy objects; TypeError for anything else (None: a value that is not a
    number, which the caller reports as an unknown call), so no maximum holds a None."""
    out = []
    for a in args:
        if isinstance(a, sympy.Basic):
            out.append(a)
        elif isinstance(a, bool) or not isinstance(a, (int, float)):
            raise TypeError(f"not a number: {type(a).__name__}")
        else:
            out.append(sympy.Integer(a) if isinstance(a, int) else sympy.Float(a))
    return out
