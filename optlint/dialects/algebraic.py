"""The algebraic-modelling dialect (code written against ``pyomo``), read, never imported.

Recognised: ``pyomo.environ`` / ``pyomo.core`` (any alias, or ``from pyomo.environ import *``) and
the kernel API (``pyomo.kernel``: block, variable, constraint, objective). A model object
(ConcreteModel, AbstractModel, Block, kernel block) keeps its components as attributes:

- ``Var(*sets, within=/domain=, bounds=)``: one decision variable per declaration (indexing gives
  entries of it), signed by its domain (NonNegativeReals, Binary, ...) or a constant lower/upper bound;
- ``Param(...)`` and plain data (dicts, numbers) attached to the model are constants, so Param x Var
  is affine and Var x Var is not; a Param's sign comes from ``within=`` or literal ``initialize=``;
- ``Objective(expr= | rule=, sense=)`` (minimise unless ``maximize`` / -1), judged at the
  component's site; ``@m.Objective(sense=...)`` at the decorated function's ``def`` line;
- ``Constraint(*sets, expr= | rule=)``, ``@m.Constraint(*sets)``, ``ConstraintList().add``,
  ``inequality(lb, e, ub)``: a relation is judged at its own line (inside the rule function for
  rules: one site however many indices); a ranged tuple ``(lb, e, ub)`` at the component's site;
  ``Constraint.Skip`` is nothing;
- rules: the model parameter is bound to the model the component is assigned to, the index
  parameters to fresh index symbols; ``Expression(rule=)`` is inlined where it is indexed;
- ``sum(... for i in m.I)``, ``quicksum``, ``summation`` / ``sum_product``; exp, log, sqrt, log10.
"""

from __future__ import annotations

import libcst as cst
import sympy

from optlint.calculus import functions as F
from optlint.dialects.arrays import (ArrayHooks, DialectRegistry, common_sign, hint_name, log_of, sign_from_bounds,
                                     sign_of_number)
from optlint.interp import (NONE, Alt, BoundFunc, ConsVal, DictVal, FuncVal, GlobalRef, InstanceVal, Interpreter,
                            ListVal, Opaque, PartialVal)
from optlint.ir import Model
from optlint.dialects.registry import run_dialect
from optlint.walk import walk

NAME = "algebraic"
LIBRARY = "pyomo"

_DOMAINS = {
    "NonNegativeReals": ("nonnegative", ()), "PositiveReals": ("positive", ()),
    "NonPositiveReals": ("nonpositive", ()), "NegativeReals": ("negative", ()),
    "Reals": ("unknown", ()), "Any": ("unknown", ()),
    "Binary": ("nonnegative", ("boolean",)), "Boolean": ("nonnegative", ("boolean",)),
    "Integers": ("unknown", ("integer",)), "NonNegativeIntegers": ("nonnegative", ("integer",)),
    "PositiveIntegers": ("positive", ("integer",)), "NonPositiveIntegers": ("nonpositive", ("integer",)),
    "NegativeIntegers": ("negative", ("integer",)), "PercentFraction": ("nonnegative", ()),
    "UnitInterval": ("nonnegative", ()),
}
_MODELS = ("ConcreteModel", "AbstractModel", "Block", "block")
_FUNCS = {
    "exp": lambda e: sympy.exp(e), "log": log_of, "sqrt": lambda e: sympy.sqrt(e),
    "log10": lambda e: sympy.log(e) / sympy.log(10), "sin": lambda e: sympy.sin(e),
    "cos": lambda e: sympy.cos(e),
}
_VOCABULARY = set(_DOMAINS) | set(_MODELS) | set(_FUNCS) | {
    "Var", "Param", "Set", "RangeSet", "Objective", "Constraint", "ConstraintList", "Expression",
    "inequality", "quicksum", "summation", "sum_product", "minimize", "maximize", "value",
    "variable", "parameter", "constraint", "objective", "expression", "constraint_list",
    "variable_list", "variable_dict", "constraint_dict", "SolverFactory", "NonNegativeReals",
}


class Pending:
    """A component whose rule needs its model: built when assigned to a model's attribute."""

    def __init__(self, kind: str, args, kwargs, node):
        self.kind, self.args, self.kwargs, self.node = kind, args, kwargs, node


class Factory:
    """``m.Constraint`` / ``m.Objective`` used as a decorator factory on a model."""

    def __init__(self, kind: str, model: InstanceVal):
        self.kind, self.model = kind, model


class DecoratorSpec:
    def __init__(self, kind: str, model: InstanceVal, args, kwargs):
        self.kind, self.model, self.args, self.kwargs = kind, model, args, kwargs


class IndexedRule:
    """An indexed Expression: its rule is inlined with each index it is read at."""

    def __init__(self, rule, model):
        self.rule, self.model = rule, model


_CALLABLE = (FuncVal, BoundFunc, PartialVal)


def local_name(qualname: str) -> str | None:
    if not qualname.startswith(LIBRARY + "."):
        return None
    parts = qualname.split(".")[1:]
    for i, part in enumerate(parts):
        if part in _VOCABULARY:
            return ".".join(parts[i:])
    return None


class AlgebraicHooks(ArrayHooks):
    rebounded: frozenset | None = frozenset()  # see rebounded_names
    def star_import_name(self, module, name):
        if module.startswith(LIBRARY) and name in _VOCABULARY:
            return f"{module}.{name}"
        return None

    # -- library calls ---------------------------------------------------------------------------

    def call(self, interp: Interpreter, qualname, args, kwargs, node):
        name = local_name(qualname)
        if name is None:
            return self.build(interp, qualname, args, kwargs, node)
        if name in _MODELS:
            return InstanceVal(None, kind="model")
        if name in _FUNCS and args:
            e = interp.to_expr(args[0], None)
            return _FUNCS[name](e) if e is not None else interp.unknown_call(qualname, args, kwargs, node)
        if name in ("Var", "variable"):
            return self.variable(interp, args, kwargs, node)
        if name in ("Param", "parameter"):
            return self.parameter(interp, args, kwargs, node)
        if name in ("Set", "RangeSet"):
            return Opaque(interp.code(node))
        if name in ("quicksum",):
            return interp.builtin("builtins.sum", args, {}, node)
        if name in ("summation", "sum_product"):
            exprs = [interp.to_expr(a, None) for a in args]
            if not exprs or any(e is None for e in exprs):
                return interp.unknown_call(qualname, args, kwargs, node)
            return F.vsum(sympy.Mul(*exprs))
        if name == "inequality":
            return self.ranged(interp, list(args) + [kwargs.get(k) for k in ("lower", "body", "upper") if k in kwargs],
                               node)
        if name == "value":
            return Opaque(interp.code(node))
        if name in ("ConstraintList", "constraint_list"):
            return InstanceVal(None, kind="constraint-list")
        if name in ("variable_list", "constraint_dict", "variable_dict"):
            return args[0] if args and isinstance(args[0], ListVal) else ListVal([])
        if name == "constraint":  # kernel: constraint(expr) or constraint(lb=, body=, ub=)
            if "body" in kwargs:
                return self.ranged(interp, [kwargs.get("lb"), kwargs["body"], kwargs.get("ub")], node)
            return args[0] if args else NONE
        if name == "objective":
            self.objective(interp, kwarg(args, kwargs, 0, "expr"), kwargs.get("sense"), node, interp.current_branch)
            return Opaque(interp.code(node))
        if name == "expression":
            return kwarg(args, kwargs, 0, "expr", NONE)
        if name in ("Objective", "Constraint", "Expression"):
            if name == "Expression" and "expr" in kwargs:
                return kwargs["expr"]
            if name == "Objective" and "expr" in kwargs:
                self.objective(interp, kwargs["expr"], kwargs.get("sense"), node, interp.current_branch)
                return Opaque(interp.code(node))
            if name == "Constraint" and "expr" in kwargs:
                value = kwargs["expr"]
                if isinstance(value, ListVal):
                    return self.ranged(interp, value.items, node)
                return value
            return Pending(name, args, kwargs, node)
        return Opaque(interp.code(node))

    def variable(self, interp, args, kwargs, node):
        domain = kwargs.get("within", kwargs.get("domain"))
        sign, attributes = "unknown", ()
        if isinstance(domain, GlobalRef):
            dname = local_name(domain.qualname)
            sign, attributes = _DOMAINS.get(dname or "", ("unknown", ()))
        bounds = kwargs.get("bounds")
        if isinstance(bounds, _CALLABLE):
            indices = [interp.fresh_index("i") for _ in range(max(len(args), 1))]
            alts = interp.call_function(bounds, [Opaque("model")] + indices, {}, node)
            bounds = alts[0].value if len(alts) == 1 else None
        if sign == "unknown":
            if isinstance(bounds, ListVal) and len(bounds.items) == 2:
                sign = sign_from_bounds(bounds.items[0], bounds.items[1])
            elif "lb" in kwargs or "ub" in kwargs:
                sign = sign_from_bounds(kwargs.get("lb"), kwargs.get("ub"))
        name = hint_name(interp, "var")
        if self.rebounded is None or name in self.rebounded:
            sign = "unknown"  # setlb/setub/domain= elsewhere can change the sign the declaration gave
        return self.declare(interp, name, node, sign=sign, attributes=attributes,
                            shape=tuple(args) if args else None)

    def parameter(self, interp, args, kwargs, node):
        domain = kwargs.get("within", kwargs.get("domain"))
        sign = "unknown"
        if isinstance(domain, GlobalRef):
            sign = _DOMAINS.get(local_name(domain.qualname) or "", ("unknown", ()))[0]
        if sign == "unknown":
            init = kwargs.get("initialize", kwargs.get("value", args[0] if args and not kwargs else None))
            values = list(init.items.values()) if isinstance(init, DictVal) else (
                list(init.items) if isinstance(init, ListVal) else [init])
            if "default" in kwargs:
                values.append(kwargs["default"])
            sign = common_sign([sign_of_number(v) for v in values]) if values and init is not None else "unknown"
        return self.declare(interp, hint_name(interp, "param"), node, role="parameter", sign=sign)

    def objective(self, interp, value, sense, node, branch) -> None:
        expr = interp.to_expr(value, None)
        if expr is None or not interp.involves(expr):
            return
        self.registry.objective(interp, node, "maximise" if _maximise(sense) else "minimise", expr, branch)

    def ranged(self, interp, parts, node):
        """``(lb, body, ub)``, ``inequality(lb, body, ub)``: lb <= body <= ub, at the component's site."""
        parts = list(parts)
        if len(parts) == 2:
            left, right = (interp.to_expr(p, None) for p in parts)
            if left is not None and right is not None and (interp.involves(left) or interp.involves(right)):
                return ConsVal((self.registry.constraint(interp, node, None, "==", left, right,
                                                         interp.current_branch, origin="ranged"),))
            return NONE
        if len(parts) != 3:
            return NONE
        lb, body, ub = parts
        keys = []
        expr = interp.to_expr(body, None)
        if expr is None or not interp.involves(expr):
            return NONE
        for bound, rel in ((lb, ">="), (ub, "<=")):
            b = None if bound is None or bound is NONE else interp.to_expr(bound, None)
            if b is not None:
                keys.append(self.registry.constraint(interp, node, None, rel, expr, b, interp.current_branch,
                                                     origin="ranged"))
        return ConsVal(tuple(keys)) if keys else NONE

    # -- rules -----------------------------------------------------------------------------------

    def build_component(self, interp, kind, model, args, kwargs, node, rule=None):
        rule = rule if rule is not None else kwargs.get("rule", kwargs.get("expr"))
        if not isinstance(rule, _CALLABLE):
            return Opaque(interp.code(node))
        if kind == "Expression":
            if args:
                return IndexedRule(rule, model)
            alts = interp.call_function(rule, [model], {}, node)
            return alts[0].value if alts else NONE
        indices = [interp.fresh_index(_param_name(rule, k + 1, "i")) for k in range(_index_count(rule, args))]
        for alt in interp.call_function(rule, [model] + indices, {}, node):
            value = alt.value
            if kind == "Objective":
                self.objective(interp, value, kwargs.get("sense"), node, alt.branch)
            elif isinstance(value, ListVal) and not value.from_comprehension:
                self.ranged(interp, value.items, node)
        return Opaque(interp.code(node))

    def bind_attribute(self, interp, owner, name, value, node):
        if isinstance(value, Pending) and owner.kind == "model":
            return self.build_component(interp, value.kind, owner, value.args, value.kwargs, value.node)
        return NotImplemented

    def attribute(self, interp, base, name, node):
        if isinstance(base, InstanceVal) and base.kind == "model" and name in ("Constraint", "Objective", "Expression"):
            return Factory(name, base)
        if isinstance(base, GlobalRef):
            return NotImplemented
        return super().attribute(interp, base, name, node)

    def call_value(self, interp, func, args, kwargs, node):
        if isinstance(func, Factory):
            return DecoratorSpec(func.kind, func.model, args, kwargs)
        return NotImplemented

    def decorate(self, interp, decorator, func, node):
        if isinstance(decorator, Factory):
            decorator = DecoratorSpec(decorator.kind, decorator.model, [], {})
        if not isinstance(decorator, DecoratorSpec):
            return NotImplemented
        value = self.build_component(interp, decorator.kind, decorator.model, decorator.args, decorator.kwargs,
                                     node, rule=func)
        decorator.model.attrs[node.name.value] = [Alt(value)]
        return value

    def method(self, interp, base, name, args, kwargs, node):
        if isinstance(base, InstanceVal) and base.kind == "constraint-list" and name == "add" and args:
            value = args[0]
            if isinstance(value, ListVal):
                return self.ranged(interp, value.items, node)
            return NONE
        if isinstance(base, InstanceVal) and base.kind == "model" and name == "add_component" and len(args) >= 2:
            if isinstance(args[0], str):
                value = args[1]
                if isinstance(value, Pending):
                    value = self.build_component(interp, value.kind, base, value.args, value.kwargs, value.node)
                base.attrs[args[0]] = [Alt(value)]
            return NONE
        return super().method(interp, base, name, args, kwargs, node)

    def subscript(self, interp, base, index, node):
        if isinstance(base, IndexedRule):
            parts = list(index.args) if isinstance(index, sympy.Function) and type(index).__name__ == "ix" else [index]
            alts = interp.call_function(base.rule, [base.model] + parts, {}, node)
            return alts[0].value if alts else Opaque(interp.code(node))
        return NotImplemented


def _maximise(sense) -> bool:
    if isinstance(sense, GlobalRef):
        return (local_name(sense.qualname) or "").endswith("maximize") or sense.qualname.endswith(".maximize")
    if isinstance(sense, sympy.Basic):
        return sense == -1
    return isinstance(sense, str) and sense.lower().startswith("max")


def kwarg(args, kwargs, index, name, default=None):
    if name in kwargs:
        return kwargs[name]
    return args[index] if len(args) > index else default


def _rule_params(rule):
    fn = rule.func if isinstance(rule, BoundFunc) else rule
    if isinstance(fn, PartialVal):
        return None
    params = fn.node.params
    names = [p.name.value for p in list(params.posonly_params) + list(params.params)]
    if isinstance(rule, BoundFunc):
        names = names[1:]
    return names, isinstance(params.star_arg, cst.Param)


def _index_count(rule, sets) -> int:
    info = _rule_params(rule)
    if info is None:
        return len(sets)
    names, star = info
    return len(sets) if star else max(len(names) - 1, 0)


def _param_name(rule, k, default):
    info = _rule_params(rule)
    if info is None or len(info[0]) <= k:
        return default
    return info[0][k]


def recognise(wrapper: cst.MetadataWrapper, path: str) -> list[Model]:
    registry = DialectRegistry(path, NAME)
    hooks = AlgebraicHooks(registry)
    hooks.rebounded = rebounded_names(wrapper.module)
    return run_dialect(wrapper, path, hooks, registry)


_REBOUND_METHODS = frozenset({"setlb", "setub", "set_bounds", "set_lb", "set_ub"})
_REBOUND_ATTRIBUTES = frozenset({"domain", "lb", "ub", "bounds", "lower", "upper"})


def rebounded_names(module: cst.Module) -> frozenset | None:
    """Names of variables whose bounds or domain the code changes after declaring them
    (``m.x.setlb(-5)``, ``m.x[i].domain = pyo.Reals``, ``m.x.bounds = (...)``); None when such a
    change is made through a name we cannot tie to one declaration (``for v in m.component_data_objects(): v.setlb(...)``),
    so that no declared sign is trusted."""
    out: set[str] = set()
    unknown = False

    def owner(node) -> str | None:
        while isinstance(node, cst.Subscript):
            node = node.value
        if isinstance(node, cst.Attribute):
            return node.attr.value
        return None

    def note(name) -> None:
        nonlocal unknown
        if name is None:
            unknown = True
        else:
            out.add(name)

    for node in walk(module):  # a plain read of the tree (optlint/walk.py), not a libcst visitor
        if isinstance(node, cst.Call):
            f = node.func
            if isinstance(f, cst.Attribute) and f.attr.value in _REBOUND_METHODS:
                note(owner(f.value))
        elif isinstance(node, cst.AssignTarget):
            target = node.target
            if isinstance(target, cst.Attribute) and target.attr.value in _REBOUND_ATTRIBUTES:
                note(owner(target.value))
    return None if unknown else frozenset(out)
