"""The scipy.optimize dialect: objectives and constraints handed to scipy's solvers, read, never imported.

A call to ``minimize`` (or ``minimize_scalar``, ``least_squares``, ``linprog``, ``milp``, the old
``fmin_*`` functions) makes one decision vector ``x`` (signed when ``bounds`` / ``Bounds`` give it a
sign) and inlines the objective callable with it: a ``def``, a lambda, a nested function, a method
(``self.loss``), or ``functools.partial``; ``args=`` are passed along as data. What is judged:

- the objective: ``fun(x)`` at the solver call's site; for ``least_squares`` the documented cost
  ``0.5 * sum(fun(x)**2)`` of the residuals (``loss='huber'`` as the Huber function of them, other
  robust losses as unknown functions);
- ``constraints=``: a dict ``{'type': 'ineq'|'eq', 'fun': g}``, judged at the dict's site. scipy's
  documentation of ``minimize``: "Equality constraint means that the constraint function result is
  to be zero whereas inequality means that it is to be non-negative" -- so 'ineq' is g(x) >= 0 and
  needs a concave g; ``NonlinearConstraint(fun, lb, ub)`` (lb <= fun(x) <= ub, at its call's site)
  needs a concave fun for a finite lb and a convex one for a finite ub; ``LinearConstraint`` is affine.

Bare comparisons inside callables are masks, not constraints, and are not registered. Global
optimisers (differential_evolution, basinhopping, ...) are chosen for non-convex problems and are
not judged.
"""

from __future__ import annotations

import libcst as cst
import sympy

from optlint.calculus import functions as F
from optlint.dialects.arrays import (ArrayHooks, DialectRegistry, common_sign, is_unbounded, items_of,
                                     kwarg_or_arg, sign_from_bounds)
from optlint.interp import (NONE, BoundFunc, DictVal, FuncVal, Interpreter, ListVal, Opaque, PartialVal)
from optlint.ir import Model
from optlint.dialects.registry import run_dialect

NAME = "scipy"
PREFIX = "scipy.optimize."

INEQ_REMARK = ("In scipy an 'ineq' constraint means fun(x) >= 0 (scipy.optimize.minimize documentation), so "
               "fun must be concave for a convex feasible set; to require fun(x) <= 0, return -fun(x)")
EQ_REMARK = "In scipy an 'eq' constraint means fun(x) == 0; only an affine fun gives a convex feasible set"
NLC_REMARK = ("NonlinearConstraint(fun, lb, ub) means lb <= fun(x) <= ub: a finite lb needs a concave fun, "
              "a finite ub a convex one")
LSQ_REMARK = ("What is judged: least_squares minimises 0.5 * sum(fun(x)**2) of the residuals fun returns; it is convex "
              "when the residuals are affine in x")


class ConstraintSpec:
    """A NonlinearConstraint / LinearConstraint / Bounds object waiting for its decision vector."""

    def __init__(self, kind: str, node, fun=None, lb=None, ub=None, matrix=None):
        self.kind, self.node, self.fun, self.lb, self.ub, self.matrix = kind, node, fun, lb, ub, matrix


_CALLABLE = (FuncVal, BoundFunc, PartialVal)


class ScipyHooks(ArrayHooks):
    @staticmethod
    def matmul(a, b):
        """``x @ x`` is ``np.dot(x, x)``: scipy's decision vector is one-dimensional (its
        documentation: x0 is an array of shape (n,)), so this is a sum of squares."""
        from optlint.dialects.arrays import _dot

        return _dot(a, b)

    def call(self, interp: Interpreter, qualname, args, kwargs, node):
        if qualname == "builtins.dict" and not args:
            return DictVal(dict(kwargs), node)
        if not qualname.startswith(PREFIX):
            return self.build(interp, qualname, args, kwargs, node)
        name = qualname[len(PREFIX):]
        if name == "NonlinearConstraint":
            return ConstraintSpec("nonlinear", node, fun=kwarg_or_arg(args, kwargs, 0, "fun"),
                                  lb=kwarg_or_arg(args, kwargs, 1, "lb"), ub=kwarg_or_arg(args, kwargs, 2, "ub"))
        if name == "LinearConstraint":
            return ConstraintSpec("linear", node, matrix=kwarg_or_arg(args, kwargs, 0, "A"),
                                  lb=kwarg_or_arg(args, kwargs, 1, "lb"), ub=kwarg_or_arg(args, kwargs, 2, "ub"))
        if name == "Bounds":
            return ConstraintSpec("bounds", node, lb=kwarg_or_arg(args, kwargs, 0, "lb"),
                                  ub=kwarg_or_arg(args, kwargs, 1, "ub"))
        handler = _SOLVERS.get(name)
        if handler is None:
            return Opaque(interp.code(node))
        handler(self, interp, args, kwargs, node)
        return Opaque(interp.code(node))

    # -- the decision vector -------------------------------------------------------------------

    def vector(self, interp, fun, bounds, node, default="x"):
        name = default
        target = fun.func if isinstance(fun, (PartialVal, BoundFunc)) else fun
        if isinstance(target, PartialVal):
            target = target.func
        if isinstance(target, FuncVal):
            params = list(target.node.params.posonly_params) + list(target.node.params.params)
            if isinstance(fun, BoundFunc) or (params and params[0].name.value == "self"):
                params = params[1:]
            if params:
                name = params[0].name.value
        return self.declare(interp, name, node, sign=bounds_sign(bounds))

    def evaluate(self, interp, fun, x, extra, node) -> list:
        """(value, branch) of fun(x, *extra) for every way the callable can be built."""
        if not isinstance(fun, _CALLABLE):
            return []
        out = []
        for alt in interp.call_function(fun, [x] + list(extra), {}, node):
            out.append((alt.value, alt.branch))
        return out

    def objective(self, interp, expr, node, branch, sense="minimise") -> None:
        expr = interp.to_expr(expr, None) if not isinstance(expr, sympy.Basic) else expr
        if expr is not None and interp.involves(expr):
            self.registry.objective(interp, node, sense, expr, branch)

    def constrain(self, interp, at, relation, left, right, branch, remark_rule, remark) -> None:
        left, right = interp.to_expr(left, None), interp.to_expr(right, None)
        if left is None or right is None or not (interp.involves(left) or interp.involves(right)):
            return
        self.registry.constraint(interp, at, None, relation, left, right, branch, origin="scipy")
        self.remark(interp, at, remark_rule, remark)

    # -- constraints= ----------------------------------------------------------------------------

    def constraints(self, interp, value, x, node) -> None:
        for item in _flatten(value):
            if isinstance(item, DictVal):
                self.dict_constraint(interp, item, x, node)
            elif isinstance(item, ConstraintSpec):
                self.spec_constraint(interp, item, x)

    def dict_constraint(self, interp, item: DictVal, x, node) -> None:
        kind, fun = item.items.get("type"), item.items.get("fun")
        extra = items_of(item.items.get("args"))
        at = item.node if item.node is not None else node
        if kind not in ("eq", "ineq"):
            return
        for value, branch in self.evaluate(interp, fun, x, extra, at):
            if kind == "ineq":
                self.constrain(interp, at, ">=", value, sympy.Integer(0), branch, "nonconvex-inequality", INEQ_REMARK)
            else:
                self.constrain(interp, at, "==", value, sympy.Integer(0), branch, "nonaffine-equality", EQ_REMARK)

    def spec_constraint(self, interp, spec: ConstraintSpec, x) -> None:
        if spec.kind == "bounds":
            return
        if spec.kind == "linear":
            values = [(F.matmul(interp.to_expr(spec.matrix, None) or sympy.Integer(1), x), ())]
        else:
            values = self.evaluate(interp, spec.fun, x, [], spec.node)
        lb_free, ub_free = is_unbounded(spec.lb), is_unbounded(spec.ub)
        for value, branch in values:
            lb, ub = interp.to_expr(spec.lb, None), interp.to_expr(spec.ub, None)
            if not lb_free and not ub_free and lb is not None and lb == ub:
                self.constrain(interp, spec.node, "==", value, lb, branch, "nonaffine-equality", NLC_REMARK)
                continue
            if not lb_free and lb is not None:
                self.constrain(interp, spec.node, ">=", value, lb, branch, "nonconvex-inequality", NLC_REMARK)
            if not ub_free and ub is not None:
                self.constrain(interp, spec.node, "<=", value, ub, branch, "nonconvex-inequality", NLC_REMARK)


# -- solver calls ---------------------------------------------------------------------------------


def _minimize(h: ScipyHooks, interp, args, kwargs, node) -> None:
    fun = kwarg_or_arg(args, kwargs, 0, "fun")
    if not isinstance(fun, _CALLABLE):
        return
    bounds = kwargs.get("bounds")
    x = h.vector(interp, fun, bounds, node)
    extra = items_of(kwargs.get("args"))
    jac_in_fun = kwargs.get("jac") is True or _truthy(kwargs.get("jac"))
    for value, branch in h.evaluate(interp, fun, x, extra, node):
        if jac_in_fun and isinstance(value, ListVal) and value.items:
            value = value.items[0]  # fun returns (f, gradient)
        h.objective(interp, value, node, branch)
    h.constraints(interp, kwargs.get("constraints"), x, node)
    if isinstance(bounds, ConstraintSpec):
        h.spec_constraint(interp, bounds, x)


def _minimize_scalar(h: ScipyHooks, interp, args, kwargs, node) -> None:
    fun = kwarg_or_arg(args, kwargs, 0, "fun")
    if not isinstance(fun, _CALLABLE):
        return
    bounds = kwargs.get("bounds") if kwargs.get("method") in ("bounded", "Bounded") else None
    x = h.vector(interp, fun, bounds, node)
    for value, branch in h.evaluate(interp, fun, x, items_of(kwargs.get("args")), node):
        h.objective(interp, value, node, branch)


def _least_squares(h: ScipyHooks, interp, args, kwargs, node) -> None:
    fun = kwarg_or_arg(args, kwargs, 0, "fun")
    if not isinstance(fun, _CALLABLE):
        return
    bounds = kwarg_or_arg(args, kwargs, 3, "bounds") if len(args) > 3 or "bounds" in kwargs else None
    lbub = bounds.items if isinstance(bounds, ListVal) and len(bounds.items) == 2 else None
    if lbub:
        sign = sign_from_bounds(lbub[0], lbub[1])
    else:
        sign = bounds_sign(bounds) if isinstance(bounds, ConstraintSpec) else "unknown"
    x = h.vector(interp, fun, _SignOnly(sign), node)
    loss = kwargs.get("loss", "linear")
    scale = interp.to_expr(kwargs.get("f_scale"), None) if "f_scale" in kwargs else sympy.Integer(1)
    for value, branch in h.evaluate(interp, fun, x, items_of(kwargs.get("args")), node):
        r = _residuals(interp, value)
        if r is None:
            continue
        if loss == "linear":
            cost = sympy.Rational(1, 2) * F.sum_squares(r)
        elif loss == "huber" and scale is not None:
            # rho(z) = z for z <= 1, 2 sqrt(z) - 1 beyond, z = (r / f_scale)^2, scaled by f_scale^2:
            # r^2 for |r| <= f_scale, 2 f_scale |r| - f_scale^2 beyond -- the Huber function of r.
            cost = sympy.Rational(1, 2) * F.vsum(F.huber(r, scale))
        else:
            cost = sympy.Function(f"least_squares(loss={loss!r})")(r)
        h.objective(interp, cost, node, branch)
        h.remark(interp, node, "nonconvex-objective", LSQ_REMARK)


def _linprog(h: ScipyHooks, interp, args, kwargs, node) -> None:
    c = interp.to_expr(kwarg_or_arg(args, kwargs, 0, "c"), None)
    if c is None:
        return
    x = h.declare(interp, "x", node, sign=bounds_sign(kwargs.get("bounds")))
    h.objective(interp, F.matmul(c, x), node, ())


def _fmin(h: ScipyHooks, interp, args, kwargs, node) -> None:
    fun = kwarg_or_arg(args, kwargs, 0, "func")
    if not isinstance(fun, _CALLABLE):
        return
    bounds = kwargs.get("bounds")
    x = h.vector(interp, fun, bounds, node)
    for value, branch in h.evaluate(interp, fun, x, items_of(kwargs.get("args")), node):
        h.objective(interp, value, node, branch)
    for key, kind in (("ieqcons", "ineq"), ("eqcons", "eq")):
        for g in items_of(kwargs.get(key)):
            h.dict_constraint(interp, DictVal({"type": kind, "fun": g}), x, node)
    for key, kind in (("f_ieqcons", "ineq"), ("f_eqcons", "eq")):
        if key in kwargs:
            h.dict_constraint(interp, DictVal({"type": kind, "fun": kwargs[key]}), x, node)


_SOLVERS = {
    "minimize": _minimize,
    "minimize_scalar": _minimize_scalar,
    "least_squares": _least_squares,
    "linprog": _linprog,
    "milp": _linprog,
    "fmin": _fmin,
    "fmin_bfgs": _fmin,
    "fmin_cg": _fmin,
    "fmin_powell": _fmin,
    "fmin_l_bfgs_b": _fmin,
    "fmin_slsqp": _fmin,
    "fmin_tnc": _fmin,
}


# -- helpers ----------------------------------------------------------------------------------


class _SignOnly:
    def __init__(self, sign: str):
        self.sign = sign


def bounds_sign(bounds) -> str:
    """The sign every component of the decision vector gets from ``bounds`` (or ``unknown``)."""
    if isinstance(bounds, _SignOnly):
        return bounds.sign
    if isinstance(bounds, ConstraintSpec) and bounds.kind == "bounds":
        return sign_from_bounds(bounds.lb, bounds.ub)
    if isinstance(bounds, ListVal):
        items = bounds.items
        if len(items) == 2 and not any(isinstance(i, ListVal) for i in items):
            return sign_from_bounds(items[0], items[1])  # one (lb, ub) pair: a scalar or 1-vector
        pairs = [i for i in items if isinstance(i, ListVal) and len(i.items) == 2]
        if pairs and len(pairs) == len(items):
            return common_sign([sign_from_bounds(p.items[0], p.items[1]) for p in pairs])
    return "unknown"


def _truthy(value) -> bool:
    return value is True or (isinstance(value, sympy.Basic) and value == 1)


def _flatten(value):
    stack = [value]
    while stack:
        v = stack.pop(0)
        if isinstance(v, ListVal):
            stack[:0] = list(v.items)
        elif v is not None and v is not NONE:
            yield v


def _residuals(interp, value):
    if isinstance(value, ListVal):
        exprs = [interp.to_expr(v, None) for v in value.items]
        if not exprs or any(e is None for e in exprs) or len(exprs) > 64:
            return None
        return F.stack(*exprs) if len(exprs) > 1 else exprs[0]
    return interp.to_expr(value, None)




def recognise(wrapper: cst.MetadataWrapper, path: str) -> list[Model]:
    registry = DialectRegistry(path, NAME, comparisons=False)
    hooks = ScipyHooks(registry)
    return run_dialect(wrapper, path, hooks, registry)
