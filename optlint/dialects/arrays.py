"""Shared pieces of the array-style recognisers (scipy.optimize, hand-written losses, CasADi, ...).

- ``ArrayHooks``: a ``DialectHooks`` base with numpy's functions mapped to atoms of
  ``optlint.calculus.functions`` (resolved by qualified name, so ``np.exp`` and ``numpy.exp`` agree
  and a local ``np`` that is not numpy is not mistaken for it) and array methods on model terms
  (``.sum()``, ``.T``, ``.dot``); functions with no curvature facts become unknown functions.
- ``DialectRegistry``: a ``Registry`` that can ignore bare comparisons, for libraries whose
  constraints are not written as comparisons (``x > 0`` inside a scipy objective is a mask).
- small helpers: declaring a decision variable, signs from bounds, recognising infinite bounds.

Invariant: every mapping is a mathematical identity of the library's documented function (or a
positive multiple of it, which keeps curvature); anything else is an unknown function, never a guess.
"""

from __future__ import annotations

from typing import Any

import sympy

from optlint.calculus import functions as F
from optlint.dialects.registry import Registry
from optlint.interp import NONE, DialectHooks, GlobalRef, Interpreter, ListVal, Opaque
from optlint.ir import Declaration
from optlint.lift import preorder, safe_pow
from optlint.lift import maximum as _maximum, minimum as _minimum

_INF_NAMES = {"numpy.inf", "numpy.Inf", "numpy.infty", "numpy.PINF", "math.inf", "casadi.inf"}
SIGNS = ("positive", "nonnegative", "negative", "nonpositive")


class DialectRegistry(Registry):
    def __init__(self, path: str, dialect: str, comparisons: bool = True):
        super().__init__(path, dialect)
        self.comparisons = comparisons

    def constraint(self, interp, node, part, relation, left, right, branch, origin="comparison"):
        if origin == "comparison" and not self.comparisons:
            return ("ignored-comparison",)
        return super().constraint(interp, node, part, relation, left, right, branch, origin)


def is_unbounded(value) -> bool:
    """None, +-inf (numpy, math, casadi spellings, float('inf')): no bound on that side."""
    if value is None or value is NONE:
        return True
    if isinstance(value, GlobalRef):
        return value.qualname in _INF_NAMES
    if isinstance(value, Opaque):
        text = value.text.replace(" ", "").lower()
        return text in ("none", "float('inf')", 'float("inf")', "-float('inf')", '-float("inf")')
    if isinstance(value, sympy.Basic):
        if value in (sympy.oo, -sympy.oo):
            return True
        syms = value.free_symbols
        return bool(syms) and all(getattr(s, "name", "") in _INF_NAMES for s in syms)
    if isinstance(value, ListVal):
        return bool(value.items) and all(is_unbounded(v) for v in value.items)
    return False


def sign_of_number(value) -> str:
    if isinstance(value, sympy.Basic) and not value.free_symbols or isinstance(value, sympy.Symbol):
        if value.is_positive:
            return "positive"
        if value.is_nonnegative:
            return "nonnegative"
        if value.is_negative:
            return "negative"
        if value.is_nonpositive:
            return "nonpositive"
    return "unknown"


def sign_from_bounds(lb, ub) -> str:
    """The sign a box lb <= x <= ub guarantees (``unknown`` when it guarantees none)."""
    if isinstance(lb, ListVal) or isinstance(ub, ListVal):
        lbs = lb.items if isinstance(lb, ListVal) else [lb]
        ubs = ub.items if isinstance(ub, ListVal) else [ub]
        n = max(len(lbs), len(ubs))
        return common_sign([sign_from_bounds(lbs[min(i, len(lbs) - 1)], ubs[min(i, len(ubs) - 1)])
                            for i in range(n)])
    if not is_unbounded(lb):
        s = sign_of_number(lb)
        if s in ("positive", "nonnegative"):
            return s
    if not is_unbounded(ub):
        s = sign_of_number(ub)
        if s in ("negative", "nonpositive"):
            return s
    return "unknown"


def common_sign(signs: list[str]) -> str:
    if not signs or "unknown" in signs:
        return "unknown"
    if all(s == "positive" for s in signs):
        return "positive"
    if all(s in ("positive", "nonnegative") for s in signs):
        return "nonnegative"
    if all(s == "negative" for s in signs):
        return "negative"
    if all(s in ("negative", "nonpositive") for s in signs):
        return "nonpositive"
    return "unknown"


def _ord(value):
    """numpy.linalg.norm's ``ord`` as a p for pnorm (None: 2), or None when not a vector p-norm."""
    if value is None or value is NONE:
        return sympy.Integer(2)
    if isinstance(value, str):
        return sympy.Integer(2) if value == "fro" else None
    if is_unbounded(value):
        if isinstance(value, sympy.Basic) and value.could_extract_minus_sign():
            return None  # -inf: the smallest magnitude, not a norm
        return sympy.oo
    if isinstance(value, sympy.Number) and value >= 1:
        return value
    return None


def _numbers(value, depth=0):
    """Nested lists of real numbers as Python floats (a rectangular array), else None."""
    if isinstance(value, ListVal) and not value.from_comprehension and value.items and depth < 3:
        out = [_numbers(v, depth + 1) for v in value.items]
        if any(o is None for o in out) or len({isinstance(o, list) and len(o) for o in out}) != 1:
            return None
        return out
    if isinstance(value, sympy.Number) and value.is_real and value.is_finite:
        return float(value)
    return None


def log_of(e):
    """log, with log(1 + exp(z)) read as the logistic atom (softplus written out by hand)."""
    if isinstance(e, sympy.Add) and len(e.args) == 2 and sympy.Integer(1) in e.args:
        other = e.args[0] if e.args[1] == 1 else e.args[1]
        if isinstance(other, sympy.exp):
            return F.logistic(other.args[0])
    return sympy.log(e)


def log1p_of(e):
    """log1p, with log1p(exp(z)) read as the logistic atom."""
    return F.logistic(e.args[0]) if isinstance(e, sympy.exp) else F.log1p(e)


def _dot(a, b):
    """np.dot: a vector with itself is its sum of squares (the usual ``np.dot(r, r)``); when reshaping
    or matrix products are involved the operands may be matrices, and the matrix product is kept."""
    matrix_like = (F.reshape, F.matmul, F.transpose, F.stack)
    if a == b and not any(isinstance(n, matrix_like) for n in preorder(a)):
        return F.vsum(a * a)
    return F.matmul(a, b)


def clip(x, lo, hi):
    out = x
    if lo is not None:
        out = _maximum(out, lo)
    if hi is not None:
        out = _minimum(out, hi)
    return out


def _stack_items(items) -> Any:
    exprs = []
    for item in items:
        if isinstance(item, ListVal):
            inner = _stack_items(item.items)
            if inner is None:
                return None
            exprs.append(inner)
        elif isinstance(item, sympy.Basic):
            exprs.append(item)
        elif isinstance(item, (int, float)):
            exprs.append(sympy.Number(item))
        elif isinstance(item, Opaque) and item is not NONE:
            from optlint.lift import data
            exprs.append(data(item.text))
        else:
            return None
    if not exprs or len(exprs) > 64:
        return None
    return F.stack(*exprs)


def _array(e, kw, raw):
    if raw and isinstance(raw[0], ListVal):
        if raw[0].from_comprehension:
            return F.stack(e[0]) if e[0] is not None else None
        return _stack_items(raw[0].items)
    return e[0]


def _concat(e, kw, raw):
    if raw and isinstance(raw[0], ListVal) and not raw[0].from_comprehension:
        return _stack_items(raw[0].items)
    return None


def _arg(e, kw, i, name, default=None):
    if len(e) > i and e[i] is not None:
        return e[i]
    return kw.get(name, default)


def _norm(e, kw, raw):
    p = _ord(raw[1] if len(raw) > 1 else kw.get("ord"))
    return F.pnorm(e[0], p) if p is not None else None


# numpy function -> atom; ``e`` are the arguments as sympy (None where not an expression), ``kw``
# the keyword arguments as sympy (or str), ``raw`` the interpreter values of the positional ones.
NUMPY = {
    "sum": lambda e, kw, raw: F.vsum(e[0]),
    "nansum": lambda e, kw, raw: F.vsum(e[0]),
    "mean": lambda e, kw, raw: F.mean(e[0]),
    "average": lambda e, kw, raw: F.mean(e[0]) if "weights" not in kw else None,
    "dot": lambda e, kw, raw: _dot(e[0], e[1]),
    "matmul": lambda e, kw, raw: F.matmul(e[0], e[1]),
    "inner": lambda e, kw, raw: F.vsum(e[0] * e[1]),
    "vdot": lambda e, kw, raw: F.vsum(e[0] * e[1]),
    "multiply": lambda e, kw, raw: e[0] * e[1],
    "add": lambda e, kw, raw: e[0] + e[1],
    "subtract": lambda e, kw, raw: e[0] - e[1],
    "divide": lambda e, kw, raw: e[0] / e[1],
    "negative": lambda e, kw, raw: -e[0],
    "linalg.norm": _norm,
    "exp": lambda e, kw, raw: sympy.exp(e[0]),
    "log": lambda e, kw, raw: log_of(e[0]),
    "log1p": lambda e, kw, raw: log1p_of(e[0]),
    "sqrt": lambda e, kw, raw: sympy.sqrt(e[0]),
    "abs": lambda e, kw, raw: sympy.Abs(e[0]),
    "absolute": lambda e, kw, raw: sympy.Abs(e[0]),
    "fabs": lambda e, kw, raw: sympy.Abs(e[0]),
    "square": lambda e, kw, raw: sympy.Pow(e[0], 2),
    "power": lambda e, kw, raw: safe_pow(e[0], e[1]),
    "maximum": lambda e, kw, raw: _maximum(e[0], e[1]),
    "minimum": lambda e, kw, raw: _minimum(e[0], e[1]),
    "fmax": lambda e, kw, raw: _maximum(e[0], e[1]),
    "fmin": lambda e, kw, raw: _minimum(e[0], e[1]),
    "max": lambda e, kw, raw: F.vmax(e[0]),
    "amax": lambda e, kw, raw: F.vmax(e[0]),
    "min": lambda e, kw, raw: F.vmin(e[0]),
    "amin": lambda e, kw, raw: F.vmin(e[0]),
    "clip": lambda e, kw, raw: clip(e[0], _arg(e, kw, 1, "a_min"), _arg(e, kw, 2, "a_max")),
    "cumsum": lambda e, kw, raw: F.cumsum(e[0]),
    "diff": lambda e, kw, raw: F.diff(e[0]) if _arg(e, kw, 1, "n", sympy.Integer(1)) == 1 else None,
    "array": _array,
    "asarray": _array,
    "atleast_1d": lambda e, kw, raw: e[0],
    "hstack": _concat,
    "vstack": _concat,
    "concatenate": _concat,
    "stack": _concat,
    "reshape": lambda e, kw, raw: F.reshape(e[0]),
    "ravel": lambda e, kw, raw: F.reshape(e[0]),
    "transpose": lambda e, kw, raw: F.transpose(e[0]),
    "trace": lambda e, kw, raw: F.trace(e[0]),
    "sin": lambda e, kw, raw: sympy.sin(e[0]),
    "cos": lambda e, kw, raw: sympy.cos(e[0]),
    "logaddexp": lambda e, kw, raw: F.log_sum_exp(F.stack(e[0], e[1])),
}

# Methods of array-like model terms (numpy arrays, tensors, casadi expressions).
METHODS = {
    "sum": lambda e, kw: F.vsum(e[0]),
    "mean": lambda e, kw: F.mean(e[0]),
    "dot": lambda e, kw: F.matmul(e[0], e[1]),
    "max": lambda e, kw: F.vmax(e[0]) if len(e) == 1 else None,
    "min": lambda e, kw: F.vmin(e[0]) if len(e) == 1 else None,
    "cumsum": lambda e, kw: F.cumsum(e[0]),
    "flatten": lambda e, kw: F.reshape(e[0]),
    "ravel": lambda e, kw: F.reshape(e[0]),
    "reshape": lambda e, kw: F.reshape(e[0]),
    "transpose": lambda e, kw: F.transpose(e[0]),
    "clip": lambda e, kw: clip(e[0], _arg(e, kw, 1, "min"), _arg(e, kw, 2, "max")),
    "copy": lambda e, kw: e[0],
    "astype": lambda e, kw: e[0],
    "item": lambda e, kw: e[0],
}


class ArrayHooks(DialectHooks):
    """numpy vocabulary plus the bookkeeping every array-style recogniser needs."""

    # Extra library prefixes a subclass maps, as {qualified prefix: builder table}.
    tables: dict[str, dict] = {}

    def __init__(self, registry: Registry):
        self.registry = registry
        self.literal_names: dict[str, object] = {}

    def builders(self) -> dict[str, dict]:
        return {"numpy.": NUMPY, **self.tables}

    def build(self, interp: Interpreter, qualname: str, args, kwargs, node):
        """The value of a mapped library function, ``NotImplemented`` if ``qualname`` is not mapped."""
        for prefix, table in self.builders().items():
            if not qualname.startswith(prefix):
                continue
            name = qualname[len(prefix):]
            builder = table.get(name)
            if builder is None:
                if prefix == "numpy." and name in ("array", "asarray", "diag", "eye"):
                    break
                return interp.unknown_call(qualname, args, kwargs, node)
            if (prefix == "numpy." and name in ("array", "asarray")
                    and not any(interp.involves(interp.to_expr(a, None)) for a in args[:1])):
                return self.literal_array(interp, qualname, node, args)
            exprs = [interp.to_expr(a, None) for a in args]
            kw = {k: (v if isinstance(v, str) else interp.to_expr(v, None)) for k, v in kwargs.items()}
            try:
                result = builder(exprs, kw, args)
            except (TypeError, ValueError, IndexError, AttributeError, ZeroDivisionError):
                result = None
            if result is None:
                return interp.unknown_call(qualname, args, kwargs, node)
            if isinstance(result, sympy.Basic) and interp.involves(result):
                self.registry.model.origins.setdefault(result, (interp.line(node), interp.code(node)))
            return result
        if qualname in ("numpy.array", "numpy.asarray", "numpy.diag", "numpy.eye"):
            return self.literal_array(interp, qualname, node)
        return NotImplemented

    def call(self, interp, qualname, args, kwargs, node):
        return self.build(interp, qualname, args, kwargs, node)

    def literal_array(self, interp, qualname, node, args=()):
        from optlint.dialects.dsl import DSLHooks

        # the DSL's reading of literal arrays (entries known, so PSD-ness can be decided)
        value = DSLHooks.literal_array(self, interp, qualname, node)  # type: ignore[arg-type]
        if not isinstance(value, Opaque) or not args or not qualname.endswith(("array", "asarray")):
            return value
        numbers = _numbers(args[0])  # a list of numbers that reached here through names
        if numbers is None:
            return value
        import numpy as np

        values = np.asarray(numbers, dtype=float)
        sign = common_sign([sign_of_number(sympy.Float(v)) for v in values.ravel()]) if values.size else "unknown"
        from optlint.lift import data

        symbol = data(f"{interp.code(node)}@{interp.line(node)}", **({sign: True} if sign in SIGNS else {}))
        self.registry.model.matrices[symbol] = values
        return symbol

    def method(self, interp, base, name, args, kwargs, node):
        # data keep their structure too (a reshaped positive array is still positive)
        if isinstance(base, sympy.Basic):
            builder = METHODS.get(name)
            if builder is not None:
                exprs = [base] + [interp.to_expr(a, None) for a in args]
                kw = {k: interp.to_expr(v, None) for k, v in kwargs.items() if not isinstance(v, str)}
                try:
                    result = builder(exprs, kw)
                except (TypeError, ValueError, IndexError, AttributeError):
                    result = None
                if result is not None:
                    return result
        return NotImplemented

    def attribute(self, interp, base, name, node):
        if isinstance(base, sympy.Basic):
            if name == "T":
                return F.transpose(base)
            if name in ("shape", "size", "ndim", "dtype"):
                return Opaque(interp.code(node))
        return NotImplemented

    # -- declarations ------------------------------------------------------------------------

    def declare(self, interp: Interpreter, name: str, node, role: str = "variable", sign: str = "unknown",
                attributes: tuple[str, ...] = (), shape=None) -> sympy.Symbol:
        assumptions: dict[str, bool] = {"real": True}
        if sign in SIGNS:
            assumptions[sign] = True
        if "integer" in attributes:
            assumptions["integer"] = True
        # A fresh symbol per evaluation: a factory called twice makes two variables, never one.
        symbol = sympy.Dummy(name, **assumptions)
        decl = Declaration(name=name, role=role, symbol=symbol, site=interp.site(node), shape=shape, sign=sign,
                           attributes=attributes)
        self.registry.declare(decl, (interp.line(node), interp.site(node).column))
        if role in ("variable", "multiplier"):
            interp.variables.add(symbol)
        return symbol

    def remark(self, interp: Interpreter, node, rule: str, text: str) -> None:
        site = interp.site(node)
        self.registry.model.remarks[(site.line, site.column, rule)] = text


def hint_name(interp: Interpreter, default: str) -> str:
    """The name a declaration gets: its assignment target's last part (``m.flow`` -> ``flow``)."""
    hint = interp.current_hint
    return hint.rsplit(".", 1)[-1] if isinstance(hint, str) and hint else default


def kwarg_or_arg(args, kwargs, index: int, name: str, default=None):
    if name in kwargs:
        return kwargs[name]
    if len(args) > index:
        return args[index]
    return default


def items_of(value) -> list:
    if isinstance(value, ListVal):
        return list(value.items)
    if value is None or value is NONE:
        return []
    return [value]
