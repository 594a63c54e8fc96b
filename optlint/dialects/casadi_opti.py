"""The CasADi Opti dialect (``casadi.Opti``), read, never imported.

``opti = Opti()``; ``opti.variable(n, m)`` makes a decision variable, ``opti.parameter`` a constant;
``opti.minimize(e)`` is the objective (at the call's site); ``opti.subject_to(c)`` takes a relation,
a list of them, or ``opti.bounded(lb, e, ub)``, in loops or not -- a relation is judged at its own
line, once however many time steps reach it. A whole variable bounded by a constant
(``subject_to(0 <= v)``, ``v >= 0``, ``bounded(0, v, ub)``) gets that sign for the rest of the
model, so ``sqrt(v)`` and ``log(v)`` are judged on the feasible set.

``from casadi import *`` beside ``import numpy as np`` is the common style: names resolve by qualified
name, so a bare ``exp`` is casadi's and ``np.exp`` numpy's. casadi functions map to atoms: sumsqr ->
sum_squares, norm_1/norm_2/norm_inf/norm_fro -> p-norms, fmax/fmin -> max/min, mtimes/@ -> matrix
product, dot -> inner product, vertcat/horzcat -> stacking, sum1/sum2 -> sums. ``Function(name,
[inputs], [outputs])`` built from ``MX.sym``/``SX.sym`` symbols is substituted where it is called.

A nonlinear equality (dynamics x[k+1] == f(x[k], u[k]) in NMPC) is legitimately non-convex; its
finding says so and that a local NLP solver is the right tool.
"""

from __future__ import annotations

import libcst as cst
import sympy

from optlint.calculus import functions as F
from optlint.dialects.arrays import (NUMPY, ArrayHooks, DialectRegistry, hint_name, is_unbounded, log1p_of, log_of,
                                     sign_of_number)
from optlint.interp import NONE, ConsVal, InstanceVal, Interpreter, ListVal, Opaque
from optlint.ir import Model
from optlint.lift import data, safe_pow
from optlint.dialects.registry import run_dialect
from optlint.lift import maximum as _maximum, minimum as _minimum

NAME = "casadi"
LIBRARY = "casadi"

DYNAMICS_REMARK = ("A nonlinear equality such as the dynamics x[k+1] == f(x[k], u[k]) makes the problem "
                   "non-convex by design; that is normal in nonlinear MPC, where a local NLP solver (e.g. "
                   "ipopt) is the right tool and its answer depends on the initial guess")


def _mtimes(e, kw, raw):
    out = e[0]
    for other in e[1:]:
        out = F.matmul(out, other)
    return out


def _cat(e, kw, raw):
    return F.stack(*e) if e and all(x is not None for x in e) and len(e) <= 64 else None


CASADI = {
    "sumsqr": lambda e, kw, raw: F.sum_squares(e[0]),
    "norm_1": lambda e, kw, raw: F.pnorm(e[0], sympy.Integer(1)),
    "norm_2": lambda e, kw, raw: F.pnorm(e[0], sympy.Integer(2)),
    "norm_fro": lambda e, kw, raw: F.pnorm(e[0], sympy.Integer(2)),
    "norm_inf": lambda e, kw, raw: F.pnorm(e[0], sympy.oo),
    "exp": lambda e, kw, raw: sympy.exp(e[0]),
    "log": lambda e, kw, raw: log_of(e[0]),
    "log1p": lambda e, kw, raw: log1p_of(e[0]),
    "sqrt": lambda e, kw, raw: sympy.sqrt(e[0]),
    "sin": lambda e, kw, raw: sympy.sin(e[0]),
    "cos": lambda e, kw, raw: sympy.cos(e[0]),
    "fabs": lambda e, kw, raw: sympy.Abs(e[0]),
    "fmax": lambda e, kw, raw: _maximum(e[0], e[1]),
    "fmin": lambda e, kw, raw: _minimum(e[0], e[1]),
    "mmax": lambda e, kw, raw: F.vmax(e[0]),
    "mmin": lambda e, kw, raw: F.vmin(e[0]),
    "mtimes": _mtimes,
    "dot": lambda e, kw, raw: F.vsum(e[0] * e[1]),
    "vertcat": _cat,
    "horzcat": _cat,
    "veccat": _cat,
    "vcat": lambda e, kw, raw: NUMPY["concatenate"](e, kw, raw),
    "hcat": lambda e, kw, raw: NUMPY["concatenate"](e, kw, raw),
    "sum1": lambda e, kw, raw: F.vsum(e[0]),
    "sum2": lambda e, kw, raw: F.vsum(e[0]),
    "transpose": lambda e, kw, raw: F.transpose(e[0]),
    "reshape": lambda e, kw, raw: F.reshape(e[0]),
    "vec": lambda e, kw, raw: F.reshape(e[0]),
    "power": lambda e, kw, raw: safe_pow(e[0], e[1]),
    "constpow": lambda e, kw, raw: safe_pow(e[0], e[1]),
    "sq": lambda e, kw, raw: sympy.Pow(e[0], 2),
    "logsumexp": lambda e, kw, raw: F.log_sum_exp(e[0]),
    "diff": lambda e, kw, raw: F.diff(e[0]),
    "cumsum": lambda e, kw, raw: F.cumsum(e[0]),
    "trace": lambda e, kw, raw: F.trace(e[0]),
}
_NAMES = set(CASADI) | {"Opti", "MX", "SX", "DM", "Function", "inf", "pi", "if_else", "tanh", "atan", "tan",
                        "integrator", "nlpsol", "jacobian", "gradient", "mpower"}


class CasFunction:
    """``Function(name, [inputs], [outputs])``: calling it substitutes the arguments for the inputs."""

    def __init__(self, inputs, outputs):
        self.inputs, self.outputs = inputs, outputs


class CasadiHooks(ArrayHooks):
    tables = {"casadi.": CASADI}

    def __init__(self, registry):
        super().__init__(registry)
        self.signs: dict[sympy.Symbol, list[str]] = {}

    def star_import_name(self, module, name):
        if module == LIBRARY and name in _NAMES:
            return f"{LIBRARY}.{name}"
        return None

    def call(self, interp: Interpreter, qualname, args, kwargs, node):
        if qualname == "casadi.Opti":
            return InstanceVal(None, kind="opti")
        if qualname in ("casadi.MX.sym", "casadi.SX.sym"):
            label = args[0] if args and isinstance(args[0], str) else interp.code(node)
            return data(f"{label}@{interp.line(node)}")
        if qualname == "casadi.Function" and len(args) >= 3:
            ins = [interp.to_expr(v, None) for v in interp.iterate(args[1])]
            outs = [interp.to_expr(v, None) for v in interp.iterate(args[2])]
            if all(isinstance(v, sympy.Symbol) for v in ins) and outs and all(v is not None for v in outs):
                return CasFunction(ins, outs)
            return Opaque(interp.code(node))
        if qualname == "casadi.inf":
            return sympy.oo
        return self.build(interp, qualname, args, kwargs, node)

    def call_value(self, interp, func, args, kwargs, node):
        if isinstance(func, CasFunction):
            exprs = [interp.to_expr(a, None) for a in args]
            if len(exprs) != len(func.inputs) or any(e is None for e in exprs):
                return interp.unknown_call(interp.code(node.func), args, kwargs, node)
            mapping = dict(zip(func.inputs, exprs))
            outs = [o.xreplace(mapping) for o in func.outputs]
            return outs[0] if len(outs) == 1 else ListVal(outs)
        return NotImplemented

    def method(self, interp, base, name, args, kwargs, node):
        if isinstance(base, InstanceVal) and base.kind == "opti":
            return self.opti_method(interp, name, args, kwargs, node)
        return super().method(interp, base, name, args, kwargs, node)

    def opti_method(self, interp, name, args, kwargs, node):
        if name in ("variable", "parameter"):
            shape = tuple(a for a in args if isinstance(a, sympy.Basic)) or None
            role = "variable" if name == "variable" else "parameter"
            return self.declare(interp, hint_name(interp, name), node, role=role, shape=shape)
        if name == "minimize" and args:
            expr = interp.to_expr(args[0], None)
            if expr is not None and interp.involves(expr):
                self.registry.objective(interp, node, "minimise", expr, interp.current_branch)
            return NONE
        if name == "subject_to":
            for value in args:
                self.subject_to(interp, value)
            return NONE
        if name == "bounded" and len(args) == 3:
            return self.bounded(interp, args, node)
        return Opaque(interp.code(node))

    def bounded(self, interp, args, node):
        lb, body, ub = args
        expr = interp.to_expr(body, None)
        if expr is None or not interp.involves(expr):
            return NONE
        keys = []
        for bound, rel in ((lb, ">="), (ub, "<=")):
            if is_unbounded(bound):
                continue
            b = interp.to_expr(bound, None)
            if b is not None:
                keys.append(self.registry.constraint(interp, node, None, rel, expr, b, interp.current_branch,
                                                     origin="bounded"))
        return ConsVal(tuple(keys))

    def subject_to(self, interp, value) -> None:
        stack = [value]
        while stack:
            v = stack.pop()
            if isinstance(v, ListVal):
                stack.extend(v.items)
            elif isinstance(v, ConsVal):
                for key in v.keys:
                    # a bound imposed only in some branches gives the variable no sign
                    self.constrained(key, signs=interp.branch_depth == 0)

    def constrained(self, key, signs: bool) -> None:
        con = self.registry.constraint_for(key)
        if con is None:
            return
        if con.relation == "==":
            self.registry.model.remarks[(con.site.line, con.site.column, "nonaffine-equality")] = DYNAMICS_REMARK
        if not signs:
            return
        for left, right, _ in con.variants:
            var, bound, rel = (left, right, con.relation) if left in self.registry.model.declarations else (
                right, left, _FLIP.get(con.relation))
            decl = self.registry.model.declarations.get(var)
            if decl is None or decl.role != "variable" or rel not in ("<=", ">=", "<", ">"):
                continue
            s = sign_of_number(bound)
            if rel in (">=", ">") and s in ("positive", "nonnegative"):
                self.signs.setdefault(var, []).append("positive" if rel == ">" or s == "positive" else "nonnegative")
            elif rel in ("<=", "<") and s in ("negative", "nonpositive"):
                self.signs.setdefault(var, []).append("negative" if rel == "<" or s == "negative" else "nonpositive")

    def finish(self) -> Model:
        """Give each variable the sign its constraints guarantee (one symbol replaced everywhere)."""
        model = self.registry.finish()
        mapping = {}
        for var, signs in self.signs.items():
            sign = _strongest(signs)
            decl = model.declarations.pop(var)
            new = sympy.Dummy(var.name, real=True, **{sign: True})
            decl.symbol, decl.sign = new, sign
            model.declarations[new] = decl
            mapping[var] = new
        if mapping:
            for obj in model.objectives:
                for v in obj.variants:
                    v.expr = v.expr.xreplace(mapping)
            for con in model.constraints:
                con.variants = [(l.xreplace(mapping), r.xreplace(mapping), b) for l, r, b in con.variants]
            model.origins = {k.xreplace(mapping): v for k, v in model.origins.items()}
        return model


_FLIP = {"<=": ">=", ">=": "<=", "<": ">", ">": "<", "==": "=="}


def _strongest(signs: list[str]) -> str:
    for s in ("positive", "negative", "nonnegative", "nonpositive"):
        if s in signs:
            return s
    return signs[0]


def recognise(wrapper: cst.MetadataWrapper, path: str) -> list[Model]:
    registry = DialectRegistry(path, NAME)
    hooks = CasadiHooks(registry)
    return run_dialect(wrapper, path, hooks, registry, finish=hooks.finish)
