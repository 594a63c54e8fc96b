"""The PuLP dialect (linear programs built with ``pulp``), read, never imported.

``prob = LpProblem(name, LpMinimize | LpMaximize)``; ``LpVariable(name, lowBound, upBound, cat)`` and
``LpVariable.dicts`` / ``.matrix`` make decision variables (indexing gives entries), signed by a
constant bound. ``prob += expr`` with an expression that is not a relation sets the objective (the
first one; the site is that line), ``prob += relation[, "name"]`` adds a constraint (judged at the
relation's line); ``setObjective`` and ``addConstraint`` likewise. ``lpSum``/``lpDot`` are sums.

PuLP is linear by design, so a correct model is silent; what can still be reported is a product of
variables (or any non-affine term) and a strict inequality.
"""

from __future__ import annotations

import libcst as cst
import sympy

from optlint.calculus import functions as F
from optlint.dialects.arrays import ArrayHooks, DialectRegistry, hint_name, sign_from_bounds
from optlint.interp import NONE, ConsVal, GlobalRef, InstanceVal, Interpreter, ListVal, Opaque
from optlint.ir import Model
from optlint.dialects.registry import run_dialect

NAME = "pulp"
LIBRARY = "pulp"
_NAMES = {"LpProblem", "LpVariable", "LpMinimize", "LpMaximize", "lpSum", "lpDot", "LpConstraint",
          "LpAffineExpression", "value", "LpStatus", "PULP_CBC_CMD", "LpInteger", "LpBinary", "LpContinuous"}


class PulpHooks(ArrayHooks):
    def star_import_name(self, module, name):
        if module == LIBRARY and name in _NAMES:
            return f"{LIBRARY}.{name}"
        return None

    def call(self, interp: Interpreter, qualname, args, kwargs, node):
        if not qualname.startswith(LIBRARY + "."):
            return self.build(interp, qualname, args, kwargs, node)
        name = qualname[len(LIBRARY) + 1:]
        if name == "LpProblem":
            sense = kwargs.get("sense", args[1] if len(args) > 1 else None)
            maximise = (isinstance(sense, GlobalRef) and sense.qualname.endswith("LpMaximize")) or (
                isinstance(sense, sympy.Basic) and sense == -1)
            return InstanceVal(None, kind="lp", data={"sense": "maximise" if maximise else "minimise",
                                                      "objective": False})
        if name in ("LpVariable", "LpVariable.dicts", "LpVariable.matrix"):
            label = args[0] if args and isinstance(args[0], str) else hint_name(interp, "x")
            at = 1 if name == "LpVariable" else 2  # dicts/matrix take the index set second
            lo = kwargs.get("lowBound", args[at] if len(args) > at else None)
            hi = kwargs.get("upBound", args[at + 1] if len(args) > at + 1 else None)
            cat = kwargs.get("cat")
            attributes = ()
            if isinstance(cat, GlobalRef):
                cat = cat.qualname.rsplit(".", 1)[-1].replace("Lp", "")
            if cat in ("Binary", "Integer"):
                attributes = ("boolean",) if cat == "Binary" else ("integer",)
            sign = sign_from_bounds(lo, hi)
            if cat == "Binary" and sign == "unknown":
                sign = "nonnegative"
            return self.declare(interp, label, node, sign=sign, attributes=attributes)
        if name == "lpSum" and args:
            return interp.builtin("builtins.sum", args[:1], {}, node)
        if name == "lpDot" and len(args) == 2:
            a, b = interp.to_expr(args[0], None), interp.to_expr(args[1], None)
            if a is not None and b is not None:
                return F.vsum(a * b)
        return interp.unknown_call(qualname, args, kwargs, node)

    def augassign(self, interp, op, target, value, node):
        if not (isinstance(target, InstanceVal) and target.kind == "lp" and op == "Add"):
            return NotImplemented
        self.add(interp, target, value, node)
        return target

    def add(self, interp, prob, value, node) -> None:
        if isinstance(value, ListVal) and value.items:
            value = value.items[0]  # (expression, "name")
        if isinstance(value, ConsVal) or value is NONE:
            return
        expr = interp.to_expr(value, None)
        if expr is None or not interp.involves(expr):
            return
        if prob.data["objective"] and prob.data["objective"] != (interp.line(node), interp.site(node).column):
            return  # a later expression replaces the objective in PuLP; the first one is judged
        prob.data["objective"] = (interp.line(node), interp.site(node).column)
        self.registry.objective(interp, node, prob.data["sense"], expr, interp.current_branch)

    def method(self, interp, base, name, args, kwargs, node):
        if isinstance(base, InstanceVal) and base.kind == "lp":
            if name == "setObjective" and args:
                self.add(interp, base, args[0], node)
            return Opaque(interp.code(node))
        return super().method(interp, base, name, args, kwargs, node)


def recognise(wrapper: cst.MetadataWrapper, path: str) -> list[Model]:
    registry = DialectRegistry(path, NAME)
    hooks = PulpHooks(registry)
    return run_dialect(wrapper, path, hooks, registry)
