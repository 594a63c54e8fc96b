"""Numeric evaluation of scalar sympy functions at many points at once (numpy, no code generation).

Role: the witness search evaluates a scalarised expression at thousands of points; this walks the
sympy tree once per batch with numpy arrays as values. No ``lambdify`` (which generates and executes
code): the tree is interpreted node by node from a fixed table.

Invariants: points outside the domain come out as nan or +-inf (never an exception); an
unsupported node raises ``Unsupported``.
"""

from __future__ import annotations

import numpy
import sympy
from sympy.functions.elementary.piecewise import ExprCondPair

from .scalar import Unsupported

_UNARY = {
    sympy.exp: numpy.exp, sympy.log: numpy.log, sympy.Abs: numpy.abs, sympy.sin: numpy.sin,
    sympy.cos: numpy.cos, sympy.tan: numpy.tan, sympy.tanh: numpy.tanh, sympy.sinh: numpy.sinh,
    sympy.cosh: numpy.cosh, sympy.atan: numpy.arctan, sympy.sign: numpy.sign,
}
_COMPARE = {
    sympy.StrictLessThan: numpy.less, sympy.LessThan: numpy.less_equal,
    sympy.StrictGreaterThan: numpy.greater, sympy.GreaterThan: numpy.greater_equal,
    sympy.Equality: numpy.equal, sympy.Unequality: numpy.not_equal,
}


def evaluate(expr: sympy.Basic, env: dict[sympy.Symbol, numpy.ndarray], n: int) -> numpy.ndarray:
    """Values of ``expr`` at ``n`` points; ``env`` maps each free symbol to its ``n`` values."""
    memo: dict[sympy.Basic, numpy.ndarray] = {}
    stack = [(expr, False)]
    while stack:  # post-order without recursion
        node, ready = stack.pop()
        if node in memo:
            continue
        if ready or not node.args:
            memo[node] = _node(node, [memo[a] for a in node.args] if node.args else [], env, n)
            continue
        stack.append((node, True))
        stack.extend((a, False) for a in node.args if a not in memo)
    return numpy.broadcast_to(numpy.asarray(memo[expr], dtype=float), (n,)).astype(float)


def _node(node, vals, env, n):
    with numpy.errstate(all="ignore"):
        if isinstance(node, sympy.Symbol):
            if node not in env:
                raise Unsupported(f"no value for {node}")
            return env[node]
        if node is sympy.oo:
            return numpy.inf
        if node is sympy.S.NegativeInfinity:
            return -numpy.inf
        if node is sympy.true:
            return True
        if node is sympy.false:
            return False
        if isinstance(node, sympy.Number) or getattr(node, "is_NumberSymbol", False):
            return float(node)
        if isinstance(node, sympy.Add):
            return sum(vals[1:], vals[0])
        if isinstance(node, sympy.Mul):
            out = vals[0]
            for v in vals[1:]:
                out = out * v
            return out
        if isinstance(node, sympy.Pow):
            base, exp = vals
            return numpy.power(numpy.asarray(base, dtype=float), exp)  # nan for a negative base
        if node.func in _UNARY:
            return _UNARY[node.func](vals[0])
        if isinstance(node, sympy.Max):
            return numpy.maximum.reduce(numpy.broadcast_arrays(*vals))
        if isinstance(node, sympy.Min):
            return numpy.minimum.reduce(numpy.broadcast_arrays(*vals))
        if type(node) in _COMPARE:
            return _COMPARE[type(node)](vals[0], vals[1])
        if isinstance(node, sympy.And):
            return numpy.logical_and.reduce(numpy.broadcast_arrays(*vals))
        if isinstance(node, sympy.Or):
            return numpy.logical_or.reduce(numpy.broadcast_arrays(*vals))
        if isinstance(node, sympy.Piecewise):
            return _piecewise(node, vals, n)
        if isinstance(node, ExprCondPair):
            return (vals[0], vals[1])
    raise Unsupported(f"cannot evaluate {type(node).__name__}")


def _piecewise(node, vals, n):
    out = numpy.full(n, numpy.nan)
    done = numpy.zeros(n, dtype=bool)
    for value, cond in vals:
        c = numpy.broadcast_to(numpy.asarray(cond, dtype=bool), (n,))
        take = c & ~done
        out[take] = numpy.broadcast_to(numpy.asarray(value, dtype=float), (n,))[take]
        done |= c
    return out
