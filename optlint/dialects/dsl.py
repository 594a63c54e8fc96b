"""The disciplined-convex DSL dialect (code written against ``cvxpy``), read, never imported.

Library calls are recognised by qualified name (libcst's QualifiedNameProvider), so ``cp.norm``,
``cvxpy.norm``, ``from cvxpy import norm as n`` and ``import cvxpy as cvx`` all resolve to one
atom, and a module aliased ``cvx`` that is *not* the library is not mistaken for it. ``from cvxpy
import *`` makes the library's public names visible unless the file rebinds them.

Each library function maps to an atom of ``optlint.calculus.functions`` (or sympy arithmetic);
functions of the library that optlint has no curvature facts for become unknown functions, which
the ``unknown-curvature`` rule names. Problems solved in the geometric-programming or quasiconvex
modes are reported as skipped: they follow other curvature rules.

The package rejects a product of two non-constant expressions (``x * x``, ``cp.multiply(x, x)``)
and a division by one (``1 / x``) even where sympy folds them into an atom it accepts (x**2,
x**-1); ``arithmetic`` and ``finish`` follow each such operation to the model parts it reaches
(``Model.written``, see ``DSLHooks.written``).
"""

from __future__ import annotations

import libcst as cst
import sympy

from optlint.calculus import functions as F
from optlint.dialects.registry import Registry, run_dialect
from optlint.interp import ConsVal, DialectHooks, Interpreter, ListVal, ObjVal, Opaque, ProbVal
from optlint.ir import Declaration, Model, Notice, Variant, WrittenOp
from optlint.lift import data, safe_pow
from optlint.lift import maximum as _maximum, minimum as _minimum

NAME = "dsl"
LIBRARY = "cvxpy"

MAX_ALIASES = 512  # per file; beyond it operations are folded as sympy likes (no undisciplined finding)

_SIGN_KWARGS = {"nonneg": "nonnegative", "pos": "positive", "nonpos": "nonpositive", "neg": "negative"}
_ATTR_KWARGS = ("boolean", "integer", "symmetric", "PSD", "NSD", "diag", "hermitian", "complex")


def _truthy(value) -> bool:
    return value is True or (isinstance(value, sympy.Basic) and value == 1)


def _norm_p(value):
    if value is None:
        return sympy.Integer(2)
    if isinstance(value, str):
        return {"fro": sympy.Integer(2), "inf": sympy.oo, "Inf": sympy.oo, "nuc": "nuc"}.get(value)
    if isinstance(value, sympy.Basic):
        if value.is_Number:
            return value
        if isinstance(value, sympy.Symbol) and value.name in ("numpy.inf", "numpy.Inf", "math.inf"):
            return sympy.oo
    return None


class DSLHooks(DialectHooks):
    def __init__(self, registry: Registry):
        self.registry = registry
        self.literal_names: dict[str, object] = {}
        self.aliases: dict[sympy.Symbol, tuple[sympy.Symbol, WrittenOp]] = {}  # alias -> (variable, op)

    # -- names ----------------------------------------------------------------------------

    def star_import_name(self, module: str, name: str) -> str | None:
        if module == LIBRARY and (name in _BUILDERS or name in _DECLARE or name in _MODEL_CALLS):
            return f"{LIBRARY}.{name}"
        return None

    @staticmethod
    def local_name(qualname: str) -> str | None:
        if qualname == LIBRARY or not qualname.startswith(LIBRARY + "."):
            return None
        return qualname.rsplit(".", 1)[1]

    # -- calls ----------------------------------------------------------------------------

    def call(self, interp: Interpreter, qualname: str, args, kwargs, node):
        if qualname in _NUMPY_LITERALS:
            return self.literal_array(interp, qualname, node)
        name = self.local_name(qualname)
        if name is None:
            return NotImplemented
        if name in _DECLARE:
            return self.declare(interp, name, args, kwargs, node)
        if name in _MODEL_CALLS:
            return getattr(self, "model_" + name)(interp, args, kwargs, node)
        builder = _BUILDERS.get(name)
        if builder is None:
            return interp.unknown_call(f"{LIBRARY}.{name}", args, kwargs, node)
        exprs = [interp.to_expr(a, None) for a in args]
        if name == "multiply" and len(exprs) == 2 and len(node.args) == 2 and all(
                e is not None and interp.involves(e) for e in exprs):
            marked = self.written(interp, "product", exprs[0], exprs[1], node,
                                  interp.code(node.args[0].value), interp.code(node.args[1].value))
            if marked is not NotImplemented:
                return marked
        if exprs and exprs[0] is None and name not in ("hstack", "vstack", "bmat"):
            return interp.unknown_call(f"{LIBRARY}.{name}", args, kwargs, node)
        kw = {k: (interp.to_expr(v, None) if not isinstance(v, str) else v) for k, v in kwargs.items()}
        try:
            result = builder(self, exprs, kw, args)
        except (TypeError, ValueError, IndexError, AttributeError):
            result = None
        if result is None:
            return interp.unknown_call(f"{LIBRARY}.{name}", args, kwargs, node)
        origins = self.registry.model.origins
        if isinstance(result, sympy.Basic) and result not in origins:
            origins[result] = (interp.line(node), interp.code(node))
        # The arguments' own text too, so a suggested rewrite can quote `A @ coef - b`, not its lifted form.
        for arg, e in zip(node.args, exprs):
            if arg.keyword is None and isinstance(e, sympy.Basic) and e not in origins and interp.involves(e):
                origins[e] = (interp.line(node), interp.code(arg.value))
        return result

    # -- products and divisions the package rejects as written ------------------------------------

    def arithmetic(self, interp: Interpreter, op: str, left, right, node):
        if not (interp.involves(right) and (op == "Divide" or interp.involves(left))):
            return NotImplemented
        return self.written(interp, "product" if op == "Multiply" else "division", left, right, node,
                            interp.code(node.left), interp.code(node.right))

    def written(self, interp: Interpreter, kind: str, left, right, node, left_code: str, right_code: str):
        """``left * right`` (or ``left / right``) with the right operand's variables replaced by aliases.

        An alias is a fresh symbol with its variable's assumptions, swapped back in ``finish``:
        until then sympy cannot fold x*x into x**2, and the operation travels with the value, so
        the model parts it reaches are known exactly (flow, not a textual match).
        """
        mapping = {}
        for v in sorted(right.free_symbols & interp.variables, key=str):
            if v not in self.aliases and len(self.aliases) < MAX_ALIASES:
                mapping[v] = sympy.Dummy(v.name, **v.assumptions0)
        if not mapping:
            return NotImplemented
        value = left * right if kind == "product" else left * safe_pow(right, sympy.Integer(-1))
        op = WrittenOp(kind, interp.site(node), interp.code(node), left, right, left_code, right_code, value)
        for v, alias in mapping.items():
            self.aliases[alias] = (v, op)
            interp.variables.add(alias)
            self.registry.alias(alias, v, f"{op.site.line}:{op.site.column}")
        aliased = right.xreplace(mapping)
        result = left * aliased if kind == "product" else left * safe_pow(aliased, sympy.Integer(-1))
        # The folded value reads as the modeller wrote it (`x * x`, not `x**2`), first come first served.
        self.registry.model.origins.setdefault(result, (op.site.line, op.code))
        return result

    def finish(self) -> Model:
        model = self.registry.finish()
        if self.aliases:
            _restore_aliases(model, self.aliases)
        return model

    def declare(self, interp: Interpreter, kind: str, args, kwargs, node):
        hint = interp.current_hint or kwargs.get("name") or kind.lower()
        if not isinstance(hint, str):
            hint = kind.lower()
        assumptions = {"real": True}
        sign = "unknown"
        for kw, assumption in _SIGN_KWARGS.items():
            if _truthy(kwargs.get(kw)):
                assumptions[assumption] = True
                sign = assumption
        attributes = tuple(a for a in _ATTR_KWARGS if _truthy(kwargs.get(a)))
        if "boolean" in attributes and sign == "unknown":
            assumptions["nonnegative"] = True
            sign = "nonnegative"
        shape = None
        if args:
            first = args[0]
            if isinstance(first, ListVal):
                shape = tuple(first.items)
            elif isinstance(first, sympy.Basic):
                shape = (first,)
        role = "variable" if kind == "Variable" else "parameter"
        # A fresh symbol per evaluation: a factory called twice makes two variables, never one.
        symbol = sympy.Dummy(hint, **assumptions)
        decl = Declaration(name=hint, role=role, symbol=symbol, site=interp.site(node), shape=shape,
                           sign=sign, attributes=attributes)
        self.registry.declare(decl, (interp.line(node), interp.site(node).column))
        if role == "variable":
            interp.variables.add(symbol)
        elif "PSD" in attributes:
            self.registry.model.psd.add(symbol)
        return symbol

    def literal_array(self, interp: Interpreter, qualname: str, node: cst.Call):
        """np.array / np.diag / np.eye of literal numbers: a constant whose entries are known."""
        import numpy as np

        values = None
        if node.args:
            lit = _literal_numbers(node.args[0].value)
            if lit is not None:
                try:
                    if qualname.endswith(".eye"):
                        n = int(lit)
                        values = np.eye(n) if 0 < n <= 200 else None
                    elif qualname.endswith(".diag"):
                        values = np.diag(np.asarray(lit, dtype=float)) if np.ndim(lit) == 1 else None
                    else:
                        values = np.asarray(lit, dtype=float)
                except (TypeError, ValueError, OverflowError):
                    values = None
        if values is None or values.size > 250_000:
            return Opaque(interp.code(node))
        name = interp.current_hint or interp.code(node)
        if name in self.literal_names and not np.array_equal(self.literal_names[name], values):
            name = f"{name}@{interp.line(node)}"
        self.literal_names[name] = values
        assumptions = {"real": True}
        if values.size and np.all(values > 0):
            assumptions["positive"] = True
        elif values.size and np.all(values >= 0):
            assumptions["nonnegative"] = True
        symbol = data(name, **assumptions)
        self.registry.model.matrices[symbol] = values
        return symbol

    # -- problems, objectives, constraint objects -------------------------------------------

    def model_Minimize(self, interp, args, kwargs, node):
        return self._objective(interp, "minimise", args, kwargs, node)

    def model_Maximize(self, interp, args, kwargs, node):
        return self._objective(interp, "maximise", args, kwargs, node)

    def _objective(self, interp, sense, args, kwargs, node):
        value = args[0] if args else kwargs.get("expr")
        expr = interp.to_expr(value, None)
        if expr is None:
            return Opaque(interp.code(node))
        return ObjVal(self.registry.objective(interp, node, sense, expr, interp.current_branch))

    def model_Problem(self, interp, args, kwargs, node):
        objective = args[0] if args else kwargs.get("objective")
        constraints = args[1] if len(args) > 1 else kwargs.get("constraints")
        return ProbVal(objective, constraints, interp.site(node))

    def model_SOC(self, interp, args, kwargs, node):
        if len(args) < 2:
            return Opaque(interp.code(node))
        t, x = interp.to_expr(args[0], None), interp.to_expr(args[1], None)
        if t is None or x is None:
            return Opaque(interp.code(node))
        return ConsVal((self.registry.constraint(interp, node, None, "<=", F.pnorm(x, 2), t, interp.current_branch,
                                                 origin="cone"),))

    def _affine_cone(self, interp, args, node):
        exprs = [interp.to_expr(a, None) for a in args[:3]]
        if len(exprs) < 3 or any(e is None for e in exprs):
            return Opaque(interp.code(node))
        return ConsVal((self.registry.constraint(interp, node, None, "cone", F.stack(*exprs), sympy.Integer(0),
                                                 interp.current_branch, origin="cone"),))

    def model_ExpCone(self, interp, args, kwargs, node):
        return self._affine_cone(interp, args, node)

    def model_PowCone3D(self, interp, args, kwargs, node):
        return self._affine_cone(interp, args, node)

    def model_PSD(self, interp, args, kwargs, node):
        x = interp.to_expr(args[0], None) if args else None
        if x is None:
            return Opaque(interp.code(node))
        return ConsVal((self.registry.psd(interp, node, x, sympy.Integer(0)),))

    def _simple_constraint(self, interp, rel, args, node):
        x = interp.to_expr(args[0], None) if args else None
        if x is None:
            return Opaque(interp.code(node))
        return ConsVal((self.registry.constraint(interp, node, None, rel, x, sympy.Integer(0), interp.current_branch),))

    def model_Zero(self, interp, args, kwargs, node):
        return self._simple_constraint(interp, "==", args, node)

    def model_NonNeg(self, interp, args, kwargs, node):
        return self._simple_constraint(interp, ">=", args, node)

    def model_NonPos(self, interp, args, kwargs, node):
        return self._simple_constraint(interp, "<=", args, node)

    # -- methods and attributes of model values -----------------------------------------------

    def method(self, interp, base, name, args, kwargs, node):
        if isinstance(base, ProbVal) and name == "solve":
            mode = next((m for m in ("gp", "qcp") if _truthy(kwargs.get(m))), None)
            if mode is not None:
                self.skip_problem(interp, base, mode, node)
            return Opaque(interp.code(node))
        if isinstance(base, ProbVal):
            return Opaque(interp.code(node))
        if isinstance(base, sympy.Basic) and interp.involves(base):
            if name == "sum":
                return F.vsum(base)
            if name in ("flatten", "reshape", "vec"):
                return F.reshape(base)
            if name == "transpose":
                return F.transpose(base)
        return NotImplemented

    def attribute(self, interp, base, name, node):
        if isinstance(base, sympy.Basic) and interp.involves(base):
            if name in ("T", "H"):
                return F.transpose(base)
            if name in ("value", "shape", "size", "ndim", "dual_value", "name", "grad", "curvature", "sign"):
                return Opaque(interp.code(node))
        return NotImplemented

    def skip_problem(self, interp, prob: ProbVal, mode: str, node) -> None:
        keys = []
        if isinstance(prob.objective, ObjVal):
            keys.append(prob.objective.key)
        stack = [prob.constraints]
        while stack:
            v = stack.pop()
            if isinstance(v, ConsVal):
                keys.extend(v.keys)
            elif isinstance(v, ListVal):
                stack.extend(v.items)
        self.registry.skip(keys)
        what = "geometric-programming" if mode == "gp" else "quasiconvex"
        self.registry.notice(Notice(
            rule="model-skipped",
            site=interp.site(node),
            message=(f"problem solved in {what} mode ({mode}=True) is not checked: it follows other curvature "
                     f"rules (log-log or quasiconvex), not the convex rules optlint applies"),
            evidence={"mode": mode, "problem_line": prob.site.line},
        ))


def _restore_aliases(model: Model, aliases: dict) -> None:
    """Put each variable back in place of its aliases, and record in ``model.written`` which
    written operations reached which variant of which objective or constraint."""
    back = {alias: v for alias, (v, _) in aliases.items()}

    def undo(e):
        return e.xreplace(back) if isinstance(e, sympy.Basic) else e

    def reached(*exprs) -> list[WrittenOp]:
        ops = {id(aliases[s][1]): aliases[s][1] for e in exprs if isinstance(e, sympy.Basic)
               for s in e.free_symbols if s in aliases}
        return sorted(ops.values(), key=lambda op: (op.site.line, op.site.column))

    for op in {id(op): op for _, op in aliases.values()}.values():
        op.left, op.right, op.value = undo(op.left), undo(op.right), undo(op.value)

    def same(a, b) -> bool:
        return (len(a[0]) == len(b[0]) and all(x == y for x, y in zip(a[0], b[0]))
                and a[1] == b[1] and [o.site for o in a[2]] == [o.site for o in b[2]])

    def rebuild(kind, item, parts) -> list:
        kept = []
        for exprs, branch in parts:
            entry = ([undo(e) for e in exprs], branch, reached(*exprs))
            if not any(same(entry, k) for k in kept):  # equal once the variables are back
                kept.append(entry)
        for k, (_, _, ops) in enumerate(kept):
            if ops:
                model.written[(kind, item.site.line, item.site.column, k)] = ops
        return kept

    for obj in model.objectives:
        kept = rebuild("objective", obj, [((v.expr,), v.branch) for v in obj.variants])
        obj.variants = [Variant(exprs[0], branch) for exprs, branch, _ in kept]
    for con in model.constraints:
        kept = rebuild("constraint", con, [((l, r), branch) for l, r, branch in con.variants])
        con.variants = [(exprs[0], exprs[1], branch) for exprs, branch, _ in kept]
    origins: dict = {}
    for key, where in model.origins.items():
        origins.setdefault(undo(key), where)
    model.origins = origins


def _literal_numbers(node):
    """Nested lists/tuples of numeric literals (with unary minus) as Python values, else None."""
    if isinstance(node, (cst.List, cst.Tuple)):
        out = []
        for el in node.elements:
            v = _literal_numbers(el.value)
            if v is None:
                return None
            out.append(v)
        return out
    if isinstance(node, cst.UnaryOperation) and isinstance(node.operator, cst.Minus):
        v = _literal_numbers(node.expression)
        return None if v is None or isinstance(v, list) else -v
    if isinstance(node, cst.Integer):
        text = node.value.replace("_", "")
        return int(text, 0) if len(text) < 20 else None
    if isinstance(node, cst.Float):
        return float(node.value.replace("_", ""))
    return None


def _arg(exprs, kw, i, name, default=None):
    if len(exprs) > i:
        return exprs[i]
    return kw.get(name, default)


def _norm(hooks, e, kw, raw):
    p = _norm_p(raw[1] if len(raw) > 1 else kw.get("p"))
    if p == "nuc":
        return F.norm_nuc(e[0])
    return F.pnorm(e[0], p) if p is not None else None


def _pnorm(hooks, e, kw, raw):
    p = _norm_p(raw[1] if len(raw) > 1 else kw.get("p", sympy.Integer(2)))
    return F.pnorm(e[0], p) if p is not None and p != "nuc" else None


def _diff(hooks, e, kw, raw):
    k = _arg(e, kw, 1, "k", sympy.Integer(1))
    if not (isinstance(k, sympy.Integer) and 0 <= int(k) <= 8):
        return None
    out = e[0]
    for _ in range(int(k)):
        out = F.diff(out)
    return out


def _stack(hooks, e, kw, raw):
    items = raw[0].items if raw and isinstance(raw[0], ListVal) and not raw[0].from_comprehension else None
    if items is None:
        return F.stack(e[0]) if e and e[0] is not None else None
    return F.stack(*[_flatten_rows(i) for i in items])


def _flatten_rows(item):
    if isinstance(item, ListVal):
        return F.stack(*[_flatten_rows(i) for i in item.items])
    if isinstance(item, sympy.Basic):
        return item
    if isinstance(item, Opaque):
        return data(item.text, real=True)
    raise TypeError("not an expression")


def _quad_form(hooks, e, kw, raw):
    if _truthy(kw.get("assume_PSD")) and isinstance(e[1], sympy.Symbol):
        hooks.registry.model.psd.add(e[1])
    return F.quad_form(e[0], e[1])


def _huber(hooks, e, kw, raw):
    return F.huber(e[0], _arg(e, kw, 1, "M", sympy.Integer(1)))


def _power(hooks, e, kw, raw):
    p = _arg(e, kw, 1, "p")
    return F.power(e[0], p) if p is not None else None


_BUILDERS = {
    "sum": lambda h, e, kw, raw: F.vsum(e[0]),
    "norm": _norm,
    "norm1": lambda h, e, kw, raw: F.pnorm(e[0], sympy.Integer(1)),
    "norm2": lambda h, e, kw, raw: F.pnorm(e[0], sympy.Integer(2)),
    "norm_inf": lambda h, e, kw, raw: F.pnorm(e[0], sympy.oo),
    "pnorm": _pnorm,
    "normNuc": lambda h, e, kw, raw: F.norm_nuc(e[0]),
    "sum_squares": lambda h, e, kw, raw: F.sum_squares(e[0]),
    "square": lambda h, e, kw, raw: sympy.Pow(e[0], 2),
    "abs": lambda h, e, kw, raw: sympy.Abs(e[0]),
    "power": _power,
    "sqrt": lambda h, e, kw, raw: sympy.sqrt(e[0]),
    "exp": lambda h, e, kw, raw: sympy.exp(e[0]),
    "log": lambda h, e, kw, raw: sympy.log(e[0]),
    "log1p": lambda h, e, kw, raw: F.log1p(e[0]),
    "entr": lambda h, e, kw, raw: F.entr(e[0]),
    "rel_entr": lambda h, e, kw, raw: F.rel_entr(e[0], e[1]),
    "kl_div": lambda h, e, kw, raw: F.kl_div(e[0], e[1]),
    "logistic": lambda h, e, kw, raw: F.logistic(e[0]),
    "huber": _huber,
    "inv_pos": lambda h, e, kw, raw: F.inv_pos(e[0]),
    "pos": lambda h, e, kw, raw: F.pos(e[0]),
    "neg": lambda h, e, kw, raw: F.neg(e[0]),
    "maximum": lambda h, e, kw, raw: _maximum(*e),
    "minimum": lambda h, e, kw, raw: _minimum(*e),
    "max": lambda h, e, kw, raw: F.vmax(e[0]),
    "min": lambda h, e, kw, raw: F.vmin(e[0]),
    "quad_form": _quad_form,
    "quad_over_lin": lambda h, e, kw, raw: F.quad_over_lin(e[0], e[1]),
    "log_sum_exp": lambda h, e, kw, raw: F.log_sum_exp(e[0]),
    "geo_mean": lambda h, e, kw, raw: F.geo_mean(e[0]),
    "harmonic_mean": lambda h, e, kw, raw: F.harmonic_mean(e[0]),
    "lambda_max": lambda h, e, kw, raw: F.lambda_max(e[0]),
    "lambda_min": lambda h, e, kw, raw: F.lambda_min(e[0]),
    "log_det": lambda h, e, kw, raw: F.log_det(e[0]),
    "matrix_frac": lambda h, e, kw, raw: F.matrix_frac(e[0], e[1]),
    "sigma_max": lambda h, e, kw, raw: F.sigma_max(e[0]),
    "trace": lambda h, e, kw, raw: F.trace(e[0]),
    "sum_largest": lambda h, e, kw, raw: F.sum_largest(e[0], e[1]),
    "sum_smallest": lambda h, e, kw, raw: F.sum_smallest(e[0], e[1]),
    "tv": lambda h, e, kw, raw: F.tv(e[0]),
    "multiply": lambda h, e, kw, raw: e[0] * e[1],
    "matmul": lambda h, e, kw, raw: F.matmul(e[0], e[1]),
    "vdot": lambda h, e, kw, raw: F.vsum(e[0] * e[1]),
    "scalar_product": lambda h, e, kw, raw: F.vsum(e[0] * e[1]),
    "diff": _diff,
    "cumsum": lambda h, e, kw, raw: F.cumsum(e[0]),
    "hstack": _stack,
    "vstack": _stack,
    "bmat": _stack,
    "reshape": lambda h, e, kw, raw: F.reshape(e[0]),
    "vec": lambda h, e, kw, raw: F.reshape(e[0]),
    "transpose": lambda h, e, kw, raw: F.transpose(e[0]),
    "mean": lambda h, e, kw, raw: F.mean(e[0]),
    "xexp": lambda h, e, kw, raw: F.xexp(e[0]),
    "Constant": lambda h, e, kw, raw: e[0],
    "promote": lambda h, e, kw, raw: e[0],
    "broadcast_to": lambda h, e, kw, raw: e[0],
}

_DECLARE = ("Variable", "Parameter")
_MODEL_CALLS = ("Minimize", "Maximize", "Problem", "SOC", "ExpCone", "PowCone3D", "PSD", "Zero", "NonNeg", "NonPos")
_NUMPY_LITERALS = ("numpy.array", "numpy.asarray", "numpy.diag", "numpy.eye")


def recognise(wrapper: cst.MetadataWrapper, path: str) -> list[Model]:
    registry = Registry(path, NAME)
    hooks = DSLHooks(registry)
    return run_dialect(wrapper, path, hooks, registry, finish=hooks.finish)
