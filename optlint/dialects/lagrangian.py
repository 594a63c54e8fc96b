"""Lagrangian code: multipliers recognised by use, for the ``multiplier-sign`` rule.

A *multiplier* is a name M that multiplies a residual r in a sum (``f + M @ r``, ``f - M * r``,
``np.dot(M, r)``, ...) and either is updated by that residual (``M = M + step * r``, possibly
projected: ``np.maximum(0, ...)``, ``clamp(min=0)``, ``relu``) or is optimised together with the
primal quantities by one minimiser (scipy's ``minimize`` over a stacked vector, a torch optimizer
holding both). A name alone never makes a multiplier. The code is read, never run: residuals are
compared by lifting both sides into sympy with opaque symbols for everything that is not
arithmetic (a call ``g(x)`` is one symbol per callee), so ``A @ x - b`` matches ``b - A @ x`` with
the opposite sign and ``slack`` matches what ``slack`` was last bound to.

What the code says about the constraint behind r (its *orientation*: r <= 0, r >= 0, or r == 0) is
taken only from the code: comparisons of r with a constant (``assert np.all(g(x) <= 1e-6)``, DSL
constraints ``A @ x <= b``), violation measures (``np.maximum(0, g(x))``), scipy constraint dicts
and ``NonlinearConstraint`` bounds. Without such evidence the constraint may be an equality (ADMM's
scaled dual update is unprojected by design), and only the direction of the update is judged.

The output is one ``Model`` per file whose ``multipliers`` list holds ``MultiplierUse`` facts; the
rule (checks/multiplier_sign.py) decides what is wrong. Sign conventions: with L = f + e·M·r
minimised over the primal, dual ascent is M <- M + step·e·r (Nocedal & Wright 2006, §12.3; B&V
2004 §5.1, from memory), and for an inequality r <= 0 (o = +1) or r >= 0 (o = -1) the multiplier
must satisfy e·o·M >= 0.
"""

from __future__ import annotations


import libcst as cst
import sympy
from sympy.core.function import AppliedUndef

from optlint.ir import Model, MultiplierStep, MultiplierUse, Site
from optlint.names import QualifiedNames, dotted
from optlint.projections import (node_text as _text, callee_tail as _tail, is_zero as _is_zero, keyword_arg as _kw,
                                 positional_args as _positional, TRANSPARENT_ATTRS as _TRANSPARENT_ATTRS,
                                 TRANSPARENT_METHODS as _TRANSPARENT_METHODS, LIBRARIES as _LIBRARIES, projection,
                                 target_text)
from optlint.walk import children

NAME = "lagrangian"

_PRODUCT_CALLS = {"dot", "inner", "vdot", "matmul", "multiply", "mul"}
_REDUCTIONS = {"sum", "mean"}
_CHECK_REDUCTIONS = {"max", "amax", "min", "amin", "all", "any", "sum", "mean", "norm"}
_OPTIMISERS = {"SGD", "Adam", "AdamW", "RMSprop", "Adagrad", "Adadelta", "Adamax", "NAdam", "RAdam", "LBFGS", "ASGD",
               "Rprop", "SparseAdam"}
_SIGN_KWARGS = {"nonneg": 1, "pos": 1, "nonpos": -1, "neg": -1}
MAX_RESOLVE_DEPTH = 3
_PRIMES = (2, 3, 5, 7, 11, 13, 17, 19, 23, 29, 31)


# ---------------------------------------------------------------------------------------------
# Lifting for comparison (not for curvature): everything that is not arithmetic is an opaque symbol


class _Lifter:
    def __init__(self, scan: "_Scan"):
        self.scan = scan

    def __call__(self, node, scope, order: int, subst: dict | None = None, resolve: bool = True,
                 keep: frozenset = frozenset()):
        self.keep = keep  # names never replaced by their binding (the multiplier's own name)
        try:
            return self._lift(node, scope, order, subst or {}, resolve, 0)
        except (TypeError, ValueError, ZeroDivisionError, OverflowError, RecursionError):
            return sympy.Symbol(_text(node))

    def _lift(self, node, scope, order, subst, resolve, depth):
        rec = lambda n: self._lift(n, scope, order, subst, resolve, depth)  # noqa: E731
        if isinstance(node, cst.Integer):
            digits = node.value.replace("_", "")
            return sympy.Integer(int(digits, 0)) if len(digits) <= 30 else sympy.Symbol(node.value)
        if isinstance(node, cst.Float):
            value = float(node.value.replace("_", ""))
            return sympy.Float(value) if abs(value) < 1e300 else sympy.Symbol(node.value)
        if isinstance(node, cst.UnaryOperation):
            inner = rec(node.expression)
            if isinstance(node.operator, cst.Minus):
                return -inner
            if isinstance(node.operator, cst.Plus):
                return inner
            return sympy.Symbol(_text(node))
        if isinstance(node, cst.BinaryOperation):
            op = node.operator
            if isinstance(op, cst.Add):
                return rec(node.left) + rec(node.right)
            if isinstance(op, cst.Subtract):
                return rec(node.left) - rec(node.right)
            if isinstance(op, cst.Multiply):
                return rec(node.left) * rec(node.right)
            if isinstance(op, cst.Divide):
                return rec(node.left) / rec(node.right)
            if isinstance(op, cst.MatrixMultiply):
                return sympy.Function("matmul")(rec(node.left), rec(node.right))
            if isinstance(op, cst.Power) and isinstance(node.right, cst.Integer) and len(node.right.value) <= 1:
                return rec(node.left) ** int(node.right.value)
            return sympy.Symbol(_text(node))
        if isinstance(node, cst.Call):
            if (isinstance(node.func, cst.Attribute) and not node.args
                    and node.func.attr.value in _TRANSPARENT_METHODS | _REDUCTIONS):
                return rec(node.func.value)  # r.mean(): a positive multiple of the residual's sum
            tail = _tail(node.func)
            pos = _positional(node)
            if tail in _REDUCTIONS and len(node.args) == 1 and len(pos) == 1 and (
                    not isinstance(node.func, cst.Attribute) or dotted(node.func.value) in _LIBRARIES):
                return rec(pos[0])
            if tail in ("asarray", "array", "as_tensor", "tensor", "float64") and len(pos) == 1:
                return rec(pos[0])
            if tail in ("dot", "matmul") and len(pos) == 2 and dotted(node.func) != "dot":
                return sympy.Function("matmul")(rec(pos[0]), rec(pos[1]))
            callee = dotted(node.func) or _text(node.func)
            return sympy.Symbol(f"{callee}()")
        if isinstance(node, cst.Attribute) and node.attr.value in _TRANSPARENT_ATTRS:
            return rec(node.value)
        if isinstance(node, cst.Name):
            name = node.value
            if name in subst:
                return self._lift(subst[name], scope, order, {}, resolve, depth + 1)
            if resolve and depth < MAX_RESOLVE_DEPTH and name not in self.keep:
                bound = self.scan.binding(scope, name, order)
                if bound is not None:
                    value, bscope, border = bound
                    return self._lift(value, bscope, border, {}, resolve, depth + 1)
            return sympy.Symbol(name)
        return sympy.Symbol(_text(node))


def relation(candidate, reference) -> int:
    """+1 if candidate = positive-coefficient * reference, -1 if negative, 0 if not a multiple.

    Symbols left in the ratio are step sizes and scalings; they are taken as positive (common
    practice: a step size is a positive number), numbers decide the sign."""
    if reference == 0 or candidate == 0 or not reference.free_symbols <= candidate.free_symbols:
        return 0
    try:
        q, r = sympy.expand(candidate), sympy.expand(reference)
        # matmul(A, x) and the like become one symbol each, the same in both
        apps = {a: sympy.Dummy() for a in (q.atoms(AppliedUndef) | r.atoms(AppliedUndef))}
        q, r = q.xreplace(apps), r.xreplace(apps)
        own = r.free_symbols
        # the ratio, read off at one point of the reference's own symbols, then checked exactly
        point = {sym: sympy.Rational(_PRIMES[i % len(_PRIMES)], _PRIMES[(i + 3) % len(_PRIMES)])
                 for i, sym in enumerate(sorted(own, key=str))}
        at = r.xreplace(point)
        if at == 0:
            return 0
        ratio = sympy.expand(q.xreplace(point) / at)
        if ratio.free_symbols & own or sympy.expand(q - ratio * r) != 0:
            return 0
    except (TypeError, ValueError, ZeroDivisionError):
        return 0
    coeff, rest = ratio.as_coeff_Mul()
    factors = sympy.Mul.make_args(rest)
    for f in factors:
        base = f.base if f.is_Pow else f
        if not (base.is_Symbol or base == 1):
            return 0
    if not coeff.is_Number or coeff == 0:
        return 0
    return 1 if coeff > 0 else -1


# ---------------------------------------------------------------------------------------------
# The scan: one pass over the module collecting what the facts are made of


class _Scope:
    def __init__(self, node, parent: "_Scope | None", params: list[str]):
        self.node, self.parent, self.params = node, parent, params
        self.bindings: dict[str, list[tuple[int, cst.CSTNode]]] = {}


class _Product:
    def __init__(self, mult, mult_node, residual_nodes, entry, term, whole, scope, order, sense, subst=None):
        self.mult, self.mult_node, self.residual_nodes, self.entry = mult, mult_node, residual_nodes, entry
        self.term, self.whole, self.scope, self.order, self.sense = term, whole, scope, order, sense
        self.subst = subst or {}  # parameter -> argument node, for a product seen through a call


class _Update:
    def __init__(self, target, delta_node, delta_sign, side, stmt, block, index, in_loop, scope, order):
        self.target, self.delta_node, self.delta_sign, self.side = target, delta_node, delta_sign, side
        self.stmt, self.block, self.index, self.in_loop = stmt, block, index, in_loop
        self.scope, self.order = scope, order


class _Scan:
    def __init__(self, module: cst.Module):
        self.module = module
        self.qualnames = QualifiedNames(module)
        self.order = 0
        self.root = _Scope(module, None, [])
        self.functions: dict[str, tuple[cst.FunctionDef | cst.Lambda, _Scope]] = {}
        self.scope_of: dict[int, _Scope] = {}
        self.products: list[_Product] = []
        self.updates: list[_Update] = []
        self.projections: list[tuple[str, int, int, int, cst.CSTNode]] = []  # target, side, block id, index, stmt
        self.comparisons: list[tuple[cst.CSTNode, cst.CSTNode, str, _Scope, int, cst.CSTNode]] = []
        self.violations: list[tuple[cst.CSTNode, int, _Scope, int, cst.CSTNode]] = []
        self.scipy_constraints: list[tuple[str, int, cst.CSTNode]] = []  # callee text, orientation, node
        self.declared: dict[str, tuple[int, cst.CSTNode]] = {}  # DSL Parameter/Variable name -> (sign, node)
        self.minimise_calls: list[tuple[cst.Call, _Scope]] = []
        self.optimisers: list[tuple[cst.Call, _Scope, int]] = []
        self.negated_grads: set[str] = set()
        self.maximised: set[int] = set()
        self.calls: list[tuple[cst.Call, _Scope, int]] = []

    def qualified(self, node) -> set[str]:
        return {q.name for q in self.qualnames.get(node, ())}

    def binding(self, scope: _Scope, name: str, order: int):
        s = scope
        while s is not None:
            found = [(o, v) for o, v in s.bindings.get(name, ()) if o < order or s is not scope]
            if found:
                o, v = max(found, key=lambda t: t[0])
                return v, s, o
            if name in s.params:
                return None
            s = s.parent
        return None

    # -- statements --------------------------------------------------------------------------

    def run(self) -> None:
        self.block(self.module.body, self.root, False)

    def block(self, body, scope: _Scope, in_loop: bool) -> None:
        for index, stmt in enumerate(body):
            self.order += 1
            self.statement(stmt, body, index, scope, in_loop)

    def statement(self, stmt, body, index, scope, in_loop) -> None:
        if isinstance(stmt, cst.FunctionDef):
            params = [p.name.value for p in (list(stmt.params.posonly_params) + list(stmt.params.params)
                                             + list(stmt.params.kwonly_params))]
            inner = _Scope(stmt, scope, params)
            self.functions.setdefault(stmt.name.value, (stmt, inner))
            self.scope_of[id(stmt)] = inner
            for deco in stmt.decorators:
                self.expression(deco.decorator, scope, in_loop)
            self.block(_body(stmt.body), inner, False)
            return
        if isinstance(stmt, cst.ClassDef):
            self.block(_body(stmt.body), scope, in_loop)
            return
        if isinstance(stmt, cst.SimpleStatementLine):
            for small in stmt.body:
                self.small(small, stmt, body, index, scope, in_loop)
            return
        loop = isinstance(stmt, (cst.For, cst.While))
        for attr in ("test", "iter", "target"):
            part = getattr(stmt, attr, None)
            if isinstance(part, cst.BaseExpression):
                self.expression(part, scope, in_loop)
        if isinstance(stmt, cst.With):
            for item in stmt.items:
                self.expression(item.item, scope, in_loop)
        for sub in _sub_blocks(stmt):
            self.block(sub, scope, in_loop or loop)

    def small(self, small, stmt, body, index, scope, in_loop) -> None:
        order = self.order
        if isinstance(small, cst.Assign):
            for t in small.targets:
                self._bind(t.target, small.value, scope, order)
            self.expression(small.value, scope, in_loop)
            if len(small.targets) == 1:
                self._assignment(small.targets[0].target, small.value, stmt, body, index, scope, in_loop, order)
        elif isinstance(small, cst.AnnAssign) and small.value is not None:
            self._bind(small.target, small.value, scope, order)
            self.expression(small.value, scope, in_loop)
            self._assignment(small.target, small.value, stmt, body, index, scope, in_loop, order)
        elif isinstance(small, cst.AugAssign):
            self.expression(small.value, scope, in_loop)
            t = target_text(small.target)
            if t is not None and isinstance(small.operator, (cst.AddAssign, cst.SubtractAssign)):
                sign = 1 if isinstance(small.operator, cst.AddAssign) else -1
                self.updates.append(_Update(t, small.value, sign, None, stmt, id(body), index, in_loop, scope, order))
            elif (t is not None and isinstance(small.operator, cst.MultiplyAssign)
                  and isinstance(small.target, cst.Attribute) and small.target.attr.value == "grad"
                  and isinstance(small.value, cst.UnaryOperation)):
                self.negated_grads.add(target_text(small.target.value) or "")
        elif isinstance(small, cst.Expr):
            self.expression(small.value, scope, in_loop)
            self._method_update(small.value, stmt, body, index, scope, in_loop, order)
        elif isinstance(small, cst.Return) and small.value is not None:
            self.expression(small.value, scope, in_loop)
        elif isinstance(small, cst.Assert):
            self.expression(small.test, scope, in_loop, context=1)

    def _bind(self, target, value, scope, order) -> None:
        if isinstance(target, cst.Name):
            scope.bindings.setdefault(target.value, []).append((order, value))
        elif isinstance(target, (cst.Tuple, cst.List)) and isinstance(value, (cst.Tuple, cst.List)):
            if len(target.elements) == len(value.elements):
                for t, v in zip(target.elements, value.elements):
                    self._bind(t.value, v.value, scope, order)
        elif isinstance(target, (cst.Tuple, cst.List)) and isinstance(value, cst.Call):
            # x, lam = np.split(z, [n]) : each part is a piece of the split vector
            if _tail(value.func) in ("split", "array_split", "unbind", "chunk") and _positional(value):
                for t in target.elements:
                    if isinstance(t.value, cst.Name):
                        piece = cst.Subscript(_positional(value)[0],
                                              [cst.SubscriptElement(cst.Slice(lower=cst.Name(t.value.value),
                                                                              upper=None))])
                        scope.bindings.setdefault(t.value.value, []).append((order, piece))

    def _assignment(self, target, value, stmt, body, index, scope, in_loop, order) -> None:
        t = target_text(target)
        if t is None or isinstance(target, cst.Subscript):
            # lam[lam < 0] = 0 projects lam onto [0, inf)
            if (isinstance(target, cst.Subscript) and len(target.slice) == 1 and _is_zero(value)
                    and isinstance(target.slice[0].slice, cst.Index)
                    and isinstance(target.slice[0].slice.value, cst.Comparison)):
                cmp = target.slice[0].slice.value
                base = target_text(target.value)
                if (base is not None and len(cmp.comparisons) == 1 and target_text(cmp.left) == base
                        and _is_zero(cmp.comparisons[0].comparator)):
                    op = cmp.comparisons[0].operator
                    side = 1 if isinstance(op, (cst.LessThan, cst.LessThanEqual)) else -1
                    self.projections.append((base, side, id(body), index, stmt))
            return
        if isinstance(value, cst.Call):
            self._declaration(t, value)
            self._optimiser(value, target, scope, order)
        side, inner = None, value
        proj = projection(value)
        if proj is not None:
            side, inner = proj
            if target_text(inner) == t:
                self.projections.append((t, side, id(body), index, stmt))
                return
        # lam = lam + step * r  (or the projection of it); the delta is inner - lam
        self.updates.append(_Update(t, inner, 0, side, stmt, id(body), index, in_loop, scope, order))

    def _method_update(self, call, stmt, body, index, scope, in_loop, order) -> None:
        if not isinstance(call, cst.Call) or not isinstance(call.func, cst.Attribute):
            return
        attr = call.func.attr.value
        base = target_text(call.func.value)
        pos = _positional(call)
        if attr in ("add_", "sub_") and base is not None and pos:
            delta = pos[0]
            alpha = _kw(call, "alpha")
            if alpha is not None:
                delta = cst.BinaryOperation(alpha, cst.Multiply(), delta)
            self.updates.append(_Update(base, delta, 1 if attr == "add_" else -1, None, stmt, id(body), index,
                                        in_loop, scope, order))
            return
        if attr == "neg_" and isinstance(call.func.value, cst.Attribute) and call.func.value.attr.value == "grad":
            self.negated_grads.add(target_text(call.func.value.value) or "")
            return
        proj = projection(call)
        if proj is not None:
            side, inner = proj
            out = _kw(call, "out")
            t = target_text(inner)
            if attr.endswith("_") and t is not None:
                self.projections.append((t, side, id(body), index, stmt))
            elif out is not None and t is not None and target_text(out) == t:
                self.projections.append((t, side, id(body), index, stmt))

    def _declaration(self, name: str, call: cst.Call) -> None:
        quals = self.qualified(call.func)
        if not any(q in ("cvxpy.Parameter", "cvxpy.Variable") or q.endswith(".Parameter") and q.startswith("cvxpy")
                   for q in quals):
            return
        sign = 0
        for kw, s in _SIGN_KWARGS.items():
            v = _kw(call, kw)
            if isinstance(v, cst.Name) and v.value == "True":
                sign = s
        self.declared[name] = (sign, call)

    def _optimiser(self, call: cst.Call, target, scope, order) -> None:
        quals = self.qualified(call.func)
        if any(q.startswith("torch.optim.") and q.rsplit(".", 1)[-1] in _OPTIMISERS for q in quals):
            self.optimisers.append((call, scope, order))

    # -- expressions -------------------------------------------------------------------------

    def expression(self, node, scope, in_loop, context: int | None = None) -> None:
        """Walk one expression. ``context``: +1 where a comparison states a constraint that holds
        (an assert, a constraint list, ``np.all(...)``), -1 where it detects a violation
        (``np.any(r > tol)``). A plain walk over the nodes' fields: libcst's visitors rebuild every
        node they pass, which cost several parses per file."""
        contexts: list[int | None] = [context]
        stack: list[tuple[cst.CSTNode, bool]] = [(node, False)]
        while stack:
            n, leaving = stack.pop()
            if leaving:
                contexts.pop()
                continue
            if isinstance(n, (cst.List, cst.Tuple)):
                contexts.append(1)
                stack.append((n, True))
            elif isinstance(n, cst.Call):
                self.call(n, scope)
                tail = _tail(n.func)
                contexts.append(1 if tail in ("all", "append", "Constraint") else -1 if tail == "any"
                                else contexts[-1] if tail == "bool" else None)
                stack.append((n, True))
            elif isinstance(n, cst.Dict):
                self.dict_constraint(n)
            elif isinstance(n, cst.Lambda):
                inner = _Scope(n, scope, [p.name.value for p in n.params.params])
                self.scope_of[id(n)] = inner
                self.expression(n.body, inner, in_loop, contexts[-1])
                continue
            elif isinstance(n, cst.BinaryOperation) and isinstance(n.operator, (cst.Add, cst.Subtract)):
                self.sum(n, scope)
                stack.extend((term, False) for _, term in reversed(_terms(n, 1)))
                continue
            elif isinstance(n, cst.Comparison) and contexts[-1] is not None:
                self.comparison(n, contexts[-1], scope)
            stack.extend((c, False) for c in reversed(children(n)))

    def comparison(self, cmp: cst.Comparison, context: int, scope) -> None:
        left = cmp.left
        for c in cmp.comparisons:
            if isinstance(c.operator, (cst.LessThan, cst.LessThanEqual, cst.GreaterThan, cst.GreaterThanEqual,
                                       cst.Equal)):
                rel = ("<=" if isinstance(c.operator, (cst.LessThan, cst.LessThanEqual)) else
                       ">=" if isinstance(c.operator, (cst.GreaterThan, cst.GreaterThanEqual)) else "==")
                if context < 0:  # r > tol detects a violation of r <= tol
                    rel = {"<=": ">=", ">=": "<=", "==": "=="}[rel]
                self.comparisons.append((left, c.comparator, rel, scope, self.order, cmp))
            left = c.comparator

    def call(self, call: cst.Call, scope) -> None:
        self.calls.append((call, scope, self.order))
        tail = _tail(call.func)
        quals = self.qualified(call.func)
        if tail == "Maximize" and call.args:
            self.maximised.add(id(call.args[0].value))
        if tail == "Minimize" or tail == "Maximize":
            return
        proj = projection(call)
        if proj is not None:
            self.violations.append((proj[1], proj[0], scope, self.order, call))
        if any(q in ("scipy.optimize.minimize", "scipy.optimize.minimize_scalar") for q in quals):
            self.minimise_calls.append((call, scope))
        if any(q in ("scipy.optimize.NonlinearConstraint",) for q in quals):
            pos = _positional(call)
            fun = pos[0] if pos else _kw(call, "fun")
            lb = pos[1] if len(pos) > 1 else _kw(call, "lb")
            ub = pos[2] if len(pos) > 2 else _kw(call, "ub")
            if fun is not None and lb is not None and ub is not None:
                if _is_zero(ub) and _is_infinite(lb, -1):
                    self.scipy_constraints.append((_text(fun), 1, call))
                elif _is_zero(lb) and _is_infinite(ub, 1):
                    self.scipy_constraints.append((_text(fun), -1, call))
                elif _is_zero(lb) and _is_zero(ub):
                    self.scipy_constraints.append((_text(fun), 0, call))

    def dict_constraint(self, d: cst.Dict) -> None:
        """{'type': 'ineq', 'fun': g} means g(x) >= 0 (scipy.optimize.minimize documentation)."""
        kind = fun = None
        for el in d.elements:
            if isinstance(el, cst.DictElement) and isinstance(el.key, cst.SimpleString):
                key = el.key.evaluated_value
                if key == "type" and isinstance(el.value, cst.SimpleString):
                    kind = el.value.evaluated_value
                elif key == "fun":
                    fun = el.value
        if fun is not None and kind in ("ineq", "eq"):
            self.scipy_constraints.append((_text(fun), -1 if kind == "ineq" else 0, d))

    def sum(self, op: cst.BinaryOperation, scope) -> None:
        terms = _terms(op, 1)
        if len(terms) < 2:
            return
        sense = -1 if id(op) in self.maximised else 1
        for sign, term in terms:
            factors, fsign = _factors(term)
            if len(factors) < 2:
                continue
            for i, f in enumerate(factors):
                mult = target_text(f)
                if mult is None or isinstance(f, cst.Call):
                    continue
                rest = factors[:i] + factors[i + 1:]
                if all(isinstance(r, (cst.Integer, cst.Float)) for r in rest):
                    continue
                if any(mult.split("[")[0] in _names(r) for r in rest):
                    continue  # w @ (l2 * w) is a quadratic, not a multiplier times a residual
                others = [t for s, t in terms if t is not term]
                if any(mult in _names(t) for t in others):
                    continue  # the multiplier appears elsewhere in the sum: not the bilinear shape
                self.products.append(_Product(mult, f, rest, sign * fsign, term, op, scope, self.order, sense))


def _is_infinite(node, sign: int) -> bool:
    if isinstance(node, cst.UnaryOperation) and isinstance(node.operator, cst.Minus):
        return _is_infinite(node.expression, -sign)
    text = dotted(node)
    if text is not None and text.rsplit(".", 1)[-1] in ("inf", "infty", "Inf"):
        return sign == 1
    if isinstance(node, cst.Call) and _tail(node.func) == "float" and node.args:
        v = node.args[0].value
        if isinstance(v, cst.SimpleString) and v.evaluated_value.lstrip("+-").lower() in ("inf", "infinity"):
            return (v.evaluated_value.startswith("-")) == (sign == -1)
    return False


_NAMES_MEMO: dict[int, tuple[cst.CSTNode, frozenset]] = {}


def _names(node) -> frozenset:
    """Names and dotted names a node mentions (lambdas excluded); memoised per node (nodes are
    immutable, the memo keeps them alive so ids are not reused during a file)."""
    hit = _NAMES_MEMO.get(id(node))
    if hit is not None and hit[0] is node:
        return hit[1]
    found = frozenset(_collect_names(node))
    _NAMES_MEMO[id(node)] = (node, found)
    return found


def _collect_names(node) -> set[str]:
    out: set[str] = set()
    stack = [node]
    while stack:
        n = stack.pop()
        if isinstance(n, cst.Lambda):
            continue  # a lambda's body runs elsewhere (inside a minimiser)
        if isinstance(n, cst.Name):
            out.add(n.value)
            continue
        if isinstance(n, cst.Attribute):
            t = target_text(n)
            if t:
                out.add(t)
        stack.extend(children(n))
    return out


def _terms(op, sign) -> list[tuple[int, cst.CSTNode]]:
    """Flatten an additive chain into signed terms (parentheses included in libcst's nodes)."""
    out: list[tuple[int, cst.CSTNode]] = []
    stack = [(sign, op)]
    while stack:
        s, node = stack.pop()
        if isinstance(node, cst.BinaryOperation) and isinstance(node.operator, (cst.Add, cst.Subtract)):
            stack.append((s if isinstance(node.operator, cst.Add) else -s, node.right))
            stack.append((s, node.left))
        elif isinstance(node, cst.UnaryOperation) and isinstance(node.operator, cst.Minus):
            stack.append((-s, node.expression))
        else:
            out.append((s, node))
    return out


def _factors(node) -> tuple[list[cst.CSTNode], int]:
    """Factors of a product term, seeing through dot/inner/multiply calls and sum reductions."""
    out: list[cst.CSTNode] = []
    sign = 1
    stack = [node]
    while stack:
        n = stack.pop()
        if isinstance(n, cst.BinaryOperation) and isinstance(n.operator, (cst.Multiply, cst.MatrixMultiply)):
            stack.extend([n.right, n.left])
        elif isinstance(n, cst.UnaryOperation) and isinstance(n.operator, cst.Minus):
            sign = -sign
            stack.append(n.expression)
        elif isinstance(n, cst.Call):
            tail = _tail(n.func)
            pos = _positional(n)
            library_call = not isinstance(n.func, cst.Attribute) or dotted(n.func.value) in _LIBRARIES
            if tail in _PRODUCT_CALLS and len(pos) == 2 and library_call:
                stack.extend([pos[1], pos[0]])  # np.dot(lam, r)
            elif tail in _PRODUCT_CALLS and len(pos) == 1 and not library_call:
                stack.extend([pos[0], n.func.value])  # lam.dot(r)
            elif tail in _REDUCTIONS and len(pos) == 1 and not n.args[0].keyword and len(n.args) == 1:
                stack.append(pos[0])
            elif tail in _REDUCTIONS and not n.args and isinstance(n.func, cst.Attribute):
                stack.append(n.func.value)  # (lam * r).sum()
            else:
                out.append(n)
        elif isinstance(n, (cst.Integer, cst.Float)):
            out.append(n)
        else:
            out.append(n)
    return out, sign


def _body(suite) -> list:
    return list(suite.body) if isinstance(suite, cst.IndentedBlock) else [cst.SimpleStatementLine(suite.body)]


def _sub_blocks(stmt) -> list[list]:
    out = []
    for attr in ("body", "orelse", "finalbody"):
        part = getattr(stmt, attr, None)
        if part is None:
            continue
        if isinstance(part, (cst.IndentedBlock, cst.SimpleStatementSuite)):
            out.append(_body(part))
        elif hasattr(part, "body"):
            out.append(_body(part.body))
    for h in getattr(stmt, "handlers", ()) or ():
        out.append(_body(h.body))
    for case in getattr(stmt, "cases", ()) or ():
        out.append(_body(case.body))
    return out


# ---------------------------------------------------------------------------------------------
# From the scan to facts


class _Facts:
    def __init__(self, scan: _Scan, wrapper: cst.MetadataWrapper, path: str):
        from optlint.positions import positions

        self.scan, self.path = scan, path
        self.positions = positions(wrapper)  # computed only if a multiplier is placed
        self.lift = _Lifter(scan)

    def site(self, node) -> Site:
        rng = self.positions.get(node) or self.positions[self.scan.module]
        return Site(self.path, rng.start.line, rng.start.column + 1, rng.end.line, rng.end.column + 1)

    def residual(self, product: _Product, subst=None, resolve=True):
        value = sympy.Integer(1)
        for f in product.residual_nodes:
            value = value * self.lift(f, product.scope, product.order, subst, resolve)
        return value

    def derived_products(self) -> list[tuple[_Product, dict]]:
        """Products in a function, seen again at each call that passes a name for the multiplier
        parameter (``lambda z: lagrangian(z, lam)`` makes ``lam`` the multiplier there)."""
        out = [(p, {}) for p in self.scan.products]
        for p in self.scan.products:
            fn = p.scope.node
            if not isinstance(fn, (cst.FunctionDef, cst.Lambda)) or p.mult not in p.scope.params:
                continue
            j = p.scope.params.index(p.mult)
            name = fn.name.value if isinstance(fn, cst.FunctionDef) else None
            for call, scope, order in self.scan.calls:
                if name is None or dotted(call.func) not in (name, f"self.{name}"):
                    continue
                pos = _positional(call)
                offset = 1 if dotted(call.func).startswith("self.") and p.scope.params[:1] == ["self"] else 0
                if j - offset < 0 or j - offset >= len(pos):
                    continue
                arg = pos[j - offset]
                mult = target_text(arg)
                if mult is None:
                    continue
                subst = {param: pos[k - offset] for k, param in enumerate(p.scope.params)
                         if 0 <= k - offset < len(pos)}
                out.append((_Product(mult, arg, p.residual_nodes, p.entry, p.term, p.whole, scope, order,
                                     p.sense, subst), subst))
        return out

    def orientation(self, residuals) -> tuple[int | None, str]:
        """+1: r <= 0, -1: r >= 0, 0: r == 0, None: the code does not say."""
        scan = self.scan
        for left, right, rel, scope, order, node in scan.comparisons:
            for resolve in (False, True):
                d = (self.lift(_unwrap_check(left), scope, order, resolve=resolve)
                     - self.lift(_unwrap_check(right), scope, order, resolve=resolve))
                k = next((k for r in residuals for k in [_offset_relation(d, r)] if k), 0)
                if k:
                    o = 0 if rel == "==" else (1 if rel == "<=" else -1) * k
                    return o, f"`{_text(node)}` at line {self.site(node).line}"
        for inner, side, scope, order, node in scan.violations:
            for resolve in (False, True):
                d = self.lift(inner, scope, order, resolve=resolve)
                k = next((k for r in residuals for k in [_offset_relation(d, r)] if k), 0)
                if k:
                    # np.maximum(0, g) measures how far g <= 0 is violated
                    return side * k, f"`{_text(node)}` at line {self.site(node).line}"
        for fun, o, node in scan.scipy_constraints:
            symbol = sympy.Symbol(f"{fun}()")
            for r in residuals:
                if symbol in (r, -r):
                    k = 1 if symbol == r else -1
                    return o * k, f"the scipy constraint at line {self.site(node).line}"
        return None, ""

    def projected_after(self, update: _Update, name: str) -> int | None:
        for target, side, block, index, _ in self.scan.projections:
            if target == name and block == update.block and index >= update.index:
                return side
        return None

    def facts(self) -> list[MultiplierUse]:
        scan = self.scan
        uses: dict[tuple, MultiplierUse] = {}
        for product, subst in self.derived_products():
            residuals = [self.residual(product, subst, True), self.residual(product, subst, False)]
            steps = []
            for up in scan.updates:
                if up.target != product.mult:
                    continue
                keep = frozenset({product.mult})
                if up.delta_sign == 0:
                    new = self.lift(up.delta_node, up.scope, up.order, resolve=False)
                    old = sympy.Symbol(product.mult)
                    if old not in new.free_symbols:
                        continue
                    deltas = [new - old, self.lift(up.delta_node, up.scope, up.order, keep=keep) - old]
                else:
                    deltas = [up.delta_sign * self.lift(up.delta_node, up.scope, up.order, resolve=False),
                              up.delta_sign * self.lift(up.delta_node, up.scope, up.order, keep=keep)]
                rel = 0
                for delta in deltas:
                    for r in residuals:
                        rel = relation(delta, r)
                        if rel:
                            break
                    if rel:
                        break
                if not rel:
                    continue
                side = up.side if up.side is not None else self.projected_after(up, product.mult)
                direction = rel * product.entry * product.sense
                steps.append(MultiplierStep(self.site(up.stmt), _text(up.stmt), direction, side, up.in_loop))
            joint = self.joint(product)
            if not steps and not joint:
                continue
            key = (product.mult, self.site(product.term).line)
            orientation, why = self.orientation(residuals)
            declared = scan.declared.get(product.mult)
            entry = product.entry * product.sense
            use = MultiplierUse(
                name=product.mult, site=self.site(product.whole), code=_text(product.whole), entry=entry,
                residual=" * ".join(_text(n) for n in product.residual_nodes),
                orientation=orientation, orientation_source=why,
                declared=None if declared is None else {1: "nonnegative", -1: "nonpositive", 0: "unknown"}[declared[0]],
                declared_site=None if declared is None else self.site(declared[1]),
                steps=steps, joint=joint)
            if key in uses:
                known = {s.site for s in uses[key].steps}
                uses[key].steps.extend(s for s in steps if s.site not in known)
                uses[key].joint.extend(j for j in joint if j not in uses[key].joint)
            else:
                uses[key] = use
        return list(uses.values())

    def joint(self, product: _Product) -> list[tuple[Site, str]]:
        out = []
        scan = self.scan
        mult_root = product.mult.split("[")[0]
        # torch: one optimizer holds the multiplier (and usually the primal parameters too)
        for call, scope, order in scan.optimisers:
            if isinstance(_kw(call, "maximize"), cst.Name) and _kw(call, "maximize").value == "True":
                continue
            if mult_root in scan.negated_grads:
                continue
            held = _optimiser_params(call, scan, scope, order)
            others = held - {product.mult}
            # the residual must come from what the same optimizer moves (a fitted coefficient
            # times data is a model, not a Lagrangian)
            if product.mult in held and any(_derives_from(n, others, product, scan) for n in product.residual_nodes):
                out.append((self.site(call), _text(call)))
        # scipy: minimize(fun, ...) where fun's parameter is split into the primal and the multiplier
        for call, scope in scan.minimise_calls:
            pos = _positional(call)
            fun = pos[0] if pos else _kw(call, "fun")
            fn = fun if isinstance(fun, cst.Lambda) else None
            if fn is None and isinstance(fun, cst.Name) and fun.value in scan.functions:
                fn = scan.functions[fun.value][0]
            if fn is None:
                continue
            fscope = scan.scope_of.get(id(fn))
            if fscope is None or not fscope.params:
                continue
            vector = fscope.params[0]
            if self._piece_of(product, vector, fscope):
                out.append((self.site(call), _text(call)))
        return out

    def _piece_of(self, product: _Product, vector: str, fscope: _Scope) -> bool:
        """The multiplier and the residual both come from pieces of ``vector`` (the minimiser's
        argument): the Lagrangian is minimised over the stacked (primal, multiplier) vector."""
        s = product.scope
        while s is not None and s is not fscope:
            s = s.parent
        if s is None:
            return False
        derives = lambda n: _derives_from(n, {vector}, product, self.scan)  # noqa: E731
        return (self._block(product) and derives(product.mult_node)
                and any(derives(n) for n in product.residual_nodes))

    def _block(self, product: _Product) -> bool:
        """The multiplier is a block of the stacked vector (``z[n:]``, a name bound to a slice or to
        a piece of ``np.split``); a single entry times another (``z[0] * z[1]``) is just a bilinear
        term of an ordinary objective."""
        node, depth = product.mult_node, 0
        while isinstance(node, cst.Name) and depth < MAX_RESOLVE_DEPTH:
            if node.value in product.subst:
                node = product.subst[node.value]
            else:
                bound = self.scan.binding(product.scope, node.value, product.order + 1)
                if bound is None:
                    return False
                node = bound[0]
            depth += 1
        return (isinstance(node, cst.Subscript) and len(node.slice) == 1
                and isinstance(node.slice[0].slice, cst.Slice))


def _derives_from(node, sources: set[str], product: _Product, scan: _Scan, depth: int = 0) -> bool:
    """Whether ``node`` is computed from one of the names ``sources`` (through bindings and the
    call's arguments)."""
    for name in _names(node):
        if name in sources:
            return True
        if depth >= MAX_RESOLVE_DEPTH:
            continue
        if name in product.subst:
            if _derives_from(product.subst[name], sources, product, scan, depth + 1):
                return True
            continue
        bound = scan.binding(product.scope, name, product.order + 1)
        if bound is not None and _derives_from(bound[0], sources, product, scan, depth + 1):
            return True
    return False


def _optimiser_params(call: cst.Call, scan: _Scan, scope, order) -> set[str]:
    pos = _positional(call)
    params = pos[0] if pos else _kw(call, "params")
    out: set[str] = set()
    depth = 0
    while isinstance(params, cst.Name) and depth < MAX_RESOLVE_DEPTH:
        bound = scan.binding(scope, params.value, order)
        if bound is None:
            break
        params, scope, order = bound
        depth += 1
    stack = [params] if params is not None else []
    while stack:
        n = stack.pop()
        if isinstance(n, (cst.List, cst.Tuple)):
            stack.extend(e.value for e in n.elements)
        elif isinstance(n, cst.Dict):
            stack.extend(e.value for e in n.elements if isinstance(e, cst.DictElement))
        elif isinstance(n, cst.BinaryOperation) and isinstance(n.operator, cst.Add):
            stack.extend([n.left, n.right])
        elif isinstance(n, cst.Call) and _tail(n.func) == "list" and n.args:
            stack.append(n.args[0].value)
        elif isinstance(n, cst.Call) and _tail(n.func) == "parameters" and isinstance(n.func, cst.Attribute):
            base = target_text(n.func.value)  # net.parameters(): what net(...) computes moves
            if base is not None:
                out.add(base)
        else:
            t = target_text(n)
            if t is not None:
                out.add(t)
    return out


def _constant(node) -> bool:
    if isinstance(node, (cst.Integer, cst.Float)):
        return True
    if isinstance(node, cst.UnaryOperation):
        return _constant(node.expression)
    if isinstance(node, cst.Name):
        return node.value.isupper() or node.value in ("tol", "eps", "atol", "rtol")
    return False


def _unwrap_check(node):
    """``np.max(g(x))``, ``g(x).max()``, ``np.all(...)``: checks of every component of ``g(x)``."""
    while isinstance(node, cst.Call):
        tail = _tail(node.func)
        pos = _positional(node)
        if tail in _CHECK_REDUCTIONS and len(pos) == 1 and not isinstance(node.func, cst.Attribute):
            node = pos[0]
        elif tail in _CHECK_REDUCTIONS and len(pos) == 1 and dotted(node.func.value) in _LIBRARIES:
            node = pos[0]
        elif tail in _CHECK_REDUCTIONS and not pos and isinstance(node.func, cst.Attribute):
            node = node.func.value
        else:
            break
    return node


def _offset_relation(d, r) -> int:
    """+1 if d = r + c, -1 if d = -r + c, else 0; c is a number or plain names that r does not use
    (a tolerance, a bound), never a call or an expression of r's own quantities."""
    if not r.free_symbols:
        return 0
    for k in (1, -1):
        try:
            c = sympy.expand(d - k * r)
        except (TypeError, ValueError):
            return 0
        if c.free_symbols & r.free_symbols or c.has(sympy.Function):
            continue
        if all("(" not in s.name and "[" not in s.name for s in c.free_symbols):
            return k
    return 0


def ascended_names(module: cst.Module) -> frozenset:
    """Names held by a torch optimizer built with ``maximize=True`` (gradient ascent: multipliers)."""
    scan = _Scan(module)
    out: set[str] = set()

    stack = [module]
    while stack:
        node = stack.pop()
        if isinstance(node, cst.Call):
            flag = _kw(node, "maximize")
            if isinstance(flag, cst.Name) and flag.value == "True" and any(
                    q.startswith("torch.optim.") for q in scan.qualified(node.func)):
                out.update(_optimiser_params(node, scan, scan.root, 0))
        stack.extend(children(node))
    return frozenset(out)


def recognise(wrapper: cst.MetadataWrapper, path: str) -> list[Model]:
    try:
        return _recognise(wrapper, path)
    finally:
        _NAMES_MEMO.clear()


def _recognise(wrapper: cst.MetadataWrapper, path: str) -> list[Model]:
    scan = _Scan(wrapper.module)
    scan.run()
    if not scan.products:
        return []
    uses = _Facts(scan, wrapper, path).facts()
    if not uses:
        return []
    return [Model(path=path, dialect=NAME, multipliers=uses)]
