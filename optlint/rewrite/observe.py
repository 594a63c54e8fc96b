"""Observe: what each CST node of a file evaluates to, and what can be proved about those values.

The disciplined-convex recogniser is run with an interpreter that records, for every expression
node of the file, each value it evaluates to (every branch, loop pass and inlined call). The
rewrite forms ask these values the side conditions of their identities: which library function a
callee is, whether a subexpression involves decision variables, its sign, and how many dimensions
it can have. Invariants:
- a node with a value the interpreter could not model, or with more values than are kept, has no
  proved property (every question about it answers "not shown");
- every function also runs on its own, its parameters unknown data, so what is proved of a node
  inside a function holds for any caller, not only for the calls the file makes;
- dimensions are a set of possible ``ndim`` values (0, 1, 2), None when unknown; arithmetic is
  read both ways the DSL's ``*`` can mean (elementwise, or the matrix product of two arrays), and
  a reduction is 0-d only for an argument of at most one dimension (an ``axis=`` the lifter does
  not keep could otherwise leave a vector).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import libcst as cst
import sympy

from optlint.analysis import ModelAnalysis
from optlint.calculus import Sign
from optlint.calculus import functions as F
from optlint.dialects.dsl import NAME, DSLHooks
from optlint.dialects.registry import Registry
from optlint.interp import OPTIONS, GlobalRef, Interpreter, _StopRun
from optlint.ir import Model

MAX_VALUES = 64  # values kept per node; a node met more often proves nothing
OVERFLOW = object()

_ELEMENTWISE = (sympy.exp, sympy.log, sympy.Abs, F.inv_pos, F.pos, F.neg, F.entr, F.log1p, F.logistic,
                F.xexp, F.cumsum, F.diff)
_REDUCTIONS = (F.vsum, F.pnorm, F.log_sum_exp, F.vmax, F.vmin, F.mean, F.geo_mean, F.harmonic_mean,
               F.sum_largest, F.sum_smallest, F.tv)
_SCALAR_ALWAYS = (F.sum_squares, F.quad_form, F.norm_nuc, F.lambda_max, F.lambda_min, F.log_det, F.trace,
                  F.sigma_max, F.matrix_frac)


class _Recording(Interpreter):
    """The shared interpreter, keeping every value each node of this module evaluates to.

    Every function also runs on its own (parameters as unknown data) even when the file calls
    it: a property proved of a node inside a function must hold for callers the file does not
    show, not only for the calls it makes."""

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        self.values: dict[int, Any] = {}
        self._module_env = None
        self._alone: set[int] = set()

    def exec_block(self, body, env) -> None:
        if body is self.module.body and self._module_env is None:
            self._module_env = env
        super().exec_block(body, env)

    def run_function_standalone(self, fn, closure, cls) -> None:
        self._alone.add(id(fn))
        super().run_function_standalone(fn, closure, cls)

    def run(self) -> None:
        super().run()
        if self.registry.model.truncated or self._module_env is None:
            return
        try:
            for fn, closure, cls in self._all_functions(self.module.body, self._module_env):
                if id(fn) not in self._alone:
                    self.run_function_standalone(fn, closure, cls)
        except _StopRun:
            self.registry.note_budget(self.path)

    def evaluate(self, node, env, hint=None):
        alts = super().evaluate(node, env, hint)
        if node in self.positions:  # nodes of sibling modules are not ours to rewrite
            kept = self.values.setdefault(id(node), [])
            if kept is not OVERFLOW:
                if len(kept) + len(alts) > MAX_VALUES:
                    self.values[id(node)] = OVERFLOW
                else:
                    kept.extend(alt.value for alt in alts)
        return alts


@dataclass
class Observation:
    """One file as the DSL recogniser saw it: the module, its model, and each node's values."""

    path: str
    module: cst.Module
    model: Model
    analysis: ModelAnalysis
    positions: Any
    values: dict[int, Any]
    _calls_at: dict[tuple[int, int], cst.Call] = field(default_factory=dict)

    # -- values ---------------------------------------------------------------------------------

    def raw(self, node) -> list | None:
        """Every value the node took, or None when it was never met or met too often."""
        kept = self.values.get(id(node))
        return None if kept is None or kept is OVERFLOW or not kept else kept

    def exprs(self, node) -> list | None:
        """The node's values as sympy expressions, or None if any value is not one."""
        kept = self.raw(node)
        if kept is None:
            return None
        out = []
        for v in kept:
            if isinstance(v, bool) or not isinstance(v, (sympy.Basic, int, float)):
                return None
            out.append(v if isinstance(v, sympy.Basic) else sympy.Number(v))
        return out

    def callee_is(self, node, qualname: str) -> bool:
        """Every value of the callee ``node`` is the library function ``qualname``."""
        kept = self.raw(node)
        return kept is not None and all(isinstance(v, GlobalRef) and v.qualname == qualname for v in kept)

    def involves_variables(self, node) -> bool:
        """Every value of the node involves a decision variable."""
        exprs = self.exprs(node)
        return exprs is not None and all(self.analysis.has_variables(e) for e in exprs)

    def constant(self, node) -> bool:
        """No value of the node involves a decision variable."""
        exprs = self.exprs(node)
        return exprs is not None and not any(self.analysis.has_variables(e) for e in exprs)

    def positive(self, node) -> bool:
        """Every value of the node is positive on the model's domain (by the sign calculus)."""
        exprs = self.exprs(node)
        return exprs is not None and all(self.analysis.analyse(e).sign is Sign.POSITIVE for e in exprs)

    def ndims(self, node) -> frozenset | None:
        """The possible numbers of dimensions of the node's values, or None when unknown."""
        exprs = self.exprs(node)
        if exprs is None:
            return None
        out: set[int] = set()
        for e in exprs:
            nd = self.expr_ndims(e)
            if nd is None:
                return None
            out |= nd
        return frozenset(out)

    def scalar(self, node) -> bool:
        return self.ndims(node) == frozenset({0})

    def at_most_vector(self, node) -> bool:
        nd = self.ndims(node)
        return nd is not None and nd <= {0, 1}

    # -- dimensions of values ---------------------------------------------------------------------

    def expr_ndims(self, e, depth: int = 0) -> frozenset | None:
        if depth > 60:
            return None
        sub = lambda x: self.expr_ndims(x, depth + 1)  # noqa: E731 - a local shorthand
        if isinstance(e, sympy.Number):
            return frozenset({0})
        if isinstance(e, sympy.Symbol):
            return self._symbol_ndims(e)
        if isinstance(e, sympy.Add):
            return _broadcast([sub(a) for a in e.args])
        if isinstance(e, sympy.Mul):
            return _product([sub(a) for a in e.args])
        if isinstance(e, sympy.Pow):
            if not e.exp.is_Number:
                return None
            base = sub(e.base)
            if base is None:
                return None
            # x*x of a vector is its inner product in the DSL, and sympy folds it into x**2
            return base | ({0} if 1 in base and e.exp.is_Integer and e.exp >= 2 else set())
        if isinstance(e, (sympy.Max, sympy.Min)):
            return _broadcast([sub(a) for a in e.args])
        if isinstance(e, _ELEMENTWISE):
            return sub(e.args[0])
        if isinstance(e, (F.power, F.huber)):
            return sub(e.args[0])
        if isinstance(e, (F.rel_entr, F.kl_div)):
            return _broadcast([sub(a) for a in e.args])
        if isinstance(e, _REDUCTIONS):
            inner = sub(e.args[0])
            return frozenset({0}) if inner is not None and inner <= {0, 1} else None
        if isinstance(e, F.quad_over_lin):
            x, y = sub(e.args[0]), sub(e.args[1])
            return frozenset({0}) if x is not None and x <= {0, 1} and y == {0} else None
        if isinstance(e, _SCALAR_ALWAYS):
            return frozenset({0})
        if isinstance(e, F.transpose):
            return sub(e.args[0])
        if isinstance(e, F.matmul):
            a, b = sub(e.args[0]), sub(e.args[1])
            if a is None or b is None or 0 in a or 0 in b:
                return None
            return frozenset(_MATMUL[(i, j)] for i in a for j in b)
        if isinstance(e, F.index):
            return self._index_ndims(e)
        return None

    def _index_ndims(self, e) -> frozenset | None:
        base = self.expr_ndims(e.args[0])
        idx = e.args[1]
        if base is None:
            return None
        if isinstance(idx, sympy.Integer):
            return frozenset(n - 1 for n in base) if base <= {1, 2} else None
        if (getattr(idx, "func", None) is not None and getattr(idx.func, "__name__", "") == "ix"
                and len(idx.args) == 2 and all(isinstance(a, sympy.Integer) for a in idx.args)):
            return frozenset({0}) if base == {2} else None
        return None  # slices, loop indices (which may be arrays) and fancy indexing: unknown

    def _symbol_ndims(self, s) -> frozenset | None:
        matrix = self.model.matrices.get(s)
        if matrix is not None:
            return frozenset({int(getattr(matrix, "ndim", -1))}) if getattr(matrix, "ndim", 3) <= 2 else None
        decl = self.model.declarations.get(s)
        return self._declared_ndims(decl) if decl is not None else None

    def _declared_ndims(self, decl) -> frozenset | None:
        """From the declaring call as written: no shape is a scalar, an integer a vector, a tuple
        of k integers a k-dimensional array."""
        site = decl.site
        if site is None or site.path != self.path:
            return None
        call = self.call_at(site.line, site.column)
        if call is None:
            return None
        shape = None
        positional = [a for a in call.args if a.keyword is None]
        if any(a.star for a in call.args) or any(not isinstance(a.value, cst.SimpleString) for a in positional[1:]):
            return None  # only a name may follow the shape; anything else is not the library's signature
        for arg in call.args:
            if arg is (positional[0] if positional else None) or (arg.keyword is not None
                                                                   and arg.keyword.value == "shape"):
                shape = arg.value
        if shape is None:
            return frozenset({0})
        if isinstance(shape, (cst.Tuple, cst.List)):
            if all(not isinstance(el, cst.StarredElement) and self._integer(el.value) for el in shape.elements):
                n = len(shape.elements)
                return frozenset({n}) if n <= 2 else None
            return None
        return frozenset({1}) if self._integer(shape) else None

    def _integer(self, node) -> bool:
        if isinstance(node, cst.Integer):
            return True
        if isinstance(node, cst.Call) and not node.args[1:] and self.callee_is(node.func, "builtins.len"):
            return True
        exprs = self.exprs(node)
        return exprs is not None and all(isinstance(e, sympy.Integer) for e in exprs)

    def call_at(self, line: int, column: int) -> cst.Call | None:
        if not self._calls_at:
            module, positions = self.module, self.positions

            class _Calls(cst.CSTVisitor):
                def __init__(self, out):
                    self.out = out

                def visit_Call(self, node):
                    start = positions[node].start
                    self.out.setdefault((start.line, start.column + 1), node)

            module.visit(_Calls(self._calls_at))
        return self._calls_at.get((line, column))


_MATMUL = {(1, 1): 0, (2, 1): 1, (1, 2): 1, (2, 2): 2}


def _broadcast(parts) -> frozenset | None:
    if any(p is None or not p for p in parts):
        return None
    floor = max(min(p) for p in parts)
    return frozenset(n for p in parts for n in p if n >= floor)


def _product(parts) -> frozenset | None:
    """``*`` in the DSL: elementwise when a factor is a scalar, else possibly the matrix product."""
    if any(p is None or not p for p in parts):
        return None
    arrays = [p for p in parts if p != {0}]
    if len(arrays) <= 1:
        return arrays[0] if arrays else frozenset({0})
    if len(arrays) > 2:
        return None
    a, b = arrays
    elementwise = _broadcast([a, b])
    matrix = {_MATMUL[(i, j)] for i in a for j in b if i and j}
    return frozenset(set(elementwise) | matrix)


def observe(path: str, data: bytes, options=None) -> Observation | None:
    """The file's disciplined-convex model with each node's values, or None (no such model, or
    the interpreter stopped at its budget and so may not have met every evaluation)."""
    module = cst.parse_module(data)
    wrapper = cst.MetadataWrapper(module, unsafe_skip_copy=True)
    registry = Registry(path, NAME)
    hooks = DSLHooks(registry)
    token = OPTIONS.set(options)
    try:
        interp = _Recording(wrapper, path, hooks, registry)
        interp.run()
    finally:
        OPTIONS.reset(token)
    model = hooks.finish() if hasattr(hooks, "finish") else registry.finish()
    if model.truncated or not (model.objectives or model.constraints):
        return None
    # The recogniser may stand in fresh symbols for variables while it runs (so that sympy keeps a
    # written x * x apart from x**2) and put the variables back in the model; the same for the values.
    back = {alias: v for alias, (v, _) in getattr(hooks, "aliases", {}).items()}
    if back:
        for kept in interp.values.values():
            if kept is not OVERFLOW:
                kept[:] = [v.xreplace(back) if isinstance(v, sympy.Basic) else v for v in kept]
    return Observation(path, module, model, ModelAnalysis(model), interp.positions, interp.values)

