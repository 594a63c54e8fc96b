"""Curvature analysis of a lifted sympy expression: the disciplined composition rules.

Role: ``analyse`` walks the expression once, bottom-up, and gives every subexpression a curvature,
a sign and a Derivation node saying which rule produced them.

Invariants:
- Soundness first: CONVEX/CONCAVE/AFFINE/CONSTANT are proofs under the extended-value reading of
  B&V 2004 §3.1.2 and §3.2.4 (from memory); anything the rules cannot show is UNKNOWN with a reason.
- Atom facts come only from ``catalogue.TABLE``.
- The walk is iterative (no Python recursion), memoised by object identity (so it never hashes a deep
  expression from the top), and bounded by ``Budget``: node count, depth and a wall-clock deadline.
- sympy's assumption queries are asked only of symbols and single numbers; composite constants get
  their sign from the same sign rules as everything else (sympy may evaluate huge numbers without end).
- ``analyse`` never raises: an internal failure yields UNKNOWN with rule "internal-error".
"""

from __future__ import annotations

import time
from dataclasses import dataclass
from typing import Sequence

import numpy
import sympy
from sympy.core.function import AppliedUndef

from . import catalogue as cat
from .catalogue import ArgInfo, Mono
from . import functions as F
from .functions import ModelFunction
from .lattice import Curvature, Sign, sign_product, sign_sum
from .model import Analysis, Budget, Composition, Derivation, Facts, Link, satisfies

CURV = Curvature
_PSD_RTOL = 1e-9
_PRINT_LIMIT = 12  # nodes; larger constants are described, not printed


@dataclass
class _Node:
    """Per-subexpression result: the derivation plus what parents need to know."""

    d: Derivation
    has_var: bool
    bad: bool   # contains a complex, infinite or undefined number outside a parameter position
    size: int   # subtree node count, capped at _PRINT_LIMIT + 1


class _OverBudget(Exception):
    pass


def analyse(expr: sympy.Basic, facts: Facts, budget: Budget | None = None) -> Analysis:
    budget = budget or Budget()
    walker = _Walker(facts, budget)
    try:
        return walker.run(expr)
    except _OverBudget as over:
        tree = Derivation(expr, CURV.UNKNOWN, Sign.UNKNOWN, "budget", str(over), [])
        return Analysis(CURV.UNKNOWN, Sign.UNKNOWN, tree, tuple(walker.unknown_names), True)
    except Exception as exc:  # a linter must not crash on odd input; UNKNOWN is always sound
        tree = Derivation(expr, CURV.UNKNOWN, Sign.UNKNOWN, "internal-error",
                          f"analysis failed ({type(exc).__name__})", [])
        return Analysis(CURV.UNKNOWN, Sign.UNKNOWN, tree, tuple(walker.unknown_names), False)


class _Walker:
    def __init__(self, facts: Facts, budget: Budget) -> None:
        self.facts = facts
        self.budget = budget
        self.unknown_names: dict[str, None] = {}  # insertion-ordered set

    # -- the walk ---------------------------------------------------------------------------
    def run(self, root: sympy.Basic) -> Analysis:
        deadline = time.monotonic() + self.budget.max_seconds
        done: dict[int, _Node] = {}
        stack: list[tuple[sympy.Basic, int, bool]] = [(root, 1, False)]
        count = 0
        while stack:
            node, depth, expanded = stack.pop()
            args = _args(node)
            if expanded:
                done[id(node)] = self._evaluate(node, [done[id(a)] for a in args])
                continue
            if id(node) in done:
                continue
            count += 1
            if count > self.budget.max_nodes:
                raise _OverBudget(f"expression has more than {self.budget.max_nodes} nodes")
            if depth > self.budget.max_depth:
                raise _OverBudget(f"expression is nested more than {self.budget.max_depth} levels deep")
            if time.monotonic() > deadline:
                raise _OverBudget(f"analysis took longer than {self.budget.max_seconds} s")
            stack.append((node, depth, True))
            stack.extend((a, depth + 1, False) for a in reversed(args) if id(a) not in done)
        top = done[id(root)].d
        return Analysis(top.curvature, top.sign, top, tuple(self.unknown_names), False)

    def _evaluate(self, node: sympy.Basic, kids: list[_Node]) -> _Node:
        size = min(1 + sum(k.size for k in kids), _PRINT_LIMIT + 1)
        if node in self.facts.variables:
            return self._variable(node, size)
        if not kids:
            return self._leaf(node)
        has_var = any(k.has_var for k in kids)
        if isinstance(node, sympy.Add):
            d, params = self._sum(node, kids), ()
        elif isinstance(node, sympy.Mul):
            d, params = self._scale(node, kids), ()
        elif isinstance(node, AppliedUndef):
            name = _undef_name(node)
            if has_var:  # an unknown function of data only is just data
                self.unknown_names.setdefault(name, None)
            d, params = Derivation(node, CURV.UNKNOWN, Sign.UNKNOWN, "unknown-function",
                                   f"{_reason_label(name)} is unknown", _ds(kids), function_name=name), ()
        elif node.func is sympy.Pow or node.func in cat.FIXED or isinstance(node, ModelFunction):
            d, params = self._atom(node, kids)
        elif isinstance(node, sympy.Function):
            d, params = Derivation(node, CURV.UNKNOWN, Sign.UNKNOWN, "unsupported-function",
                                   f"'{cat.label_of(node)}' is not a known convex or concave function",
                                   _ds(kids)), ()
        else:
            d, params = _unsupported(node, kids), ()
        bad = any(k.bad for i, k in enumerate(kids) if i not in params)
        if bad:  # the value is not a real number, so no sign rule applies either
            d.curvature, d.sign = CURV.UNKNOWN, Sign.UNKNOWN
            d.reason = "contains a complex, infinite or undefined number"
        elif not has_var and isinstance(node, sympy.Expr):
            d.curvature, d.reason, d.composition = CURV.CONSTANT, None, None
            d.rule = "constant"
        return _Node(d, has_var, bad, size)

    # -- leaves -----------------------------------------------------------------------------
    def _variable(self, node: sympy.Basic, size: int) -> _Node:
        if not isinstance(node, sympy.Symbol) or node.is_extended_real is False:
            d = Derivation(node, CURV.UNKNOWN, Sign.UNKNOWN, "leaf-variable",
                           f"variable of unsupported kind '{type(node).__name__}'"
                           if not isinstance(node, sympy.Symbol) else "variable is not real", [])
            return _Node(d, True, False, size)
        return _Node(Derivation(node, CURV.AFFINE, Sign.from_sympy(node), "leaf-variable", None, []),
                     True, False, 1)

    def _leaf(self, node: sympy.Basic) -> _Node:
        if isinstance(node, sympy.Symbol):
            if node.is_extended_real is False:
                return _bad_leaf(node, "constant symbol is not real")
            literal = self.facts.matrices.get(node)
            sign = Sign.from_array(literal) if literal is not None else Sign.from_sympy(node)
            return _Node(Derivation(node, CURV.CONSTANT, sign, "leaf-constant", None, []), False, False, 1)
        if cat.real_number(node) is not None or getattr(node, "is_NumberSymbol", False):
            return _Node(Derivation(node, CURV.CONSTANT, Sign.from_sympy(node), "leaf-constant", None, []),
                         False, False, 1)
        if getattr(node, "is_number", False):
            return _bad_leaf(node, "complex, infinite or undefined number")
        return _Node(_unsupported(node, []), False, False, 1)

    # -- arithmetic -------------------------------------------------------------------------
    def _sum(self, node: sympy.Basic, kids: list[_Node]) -> Derivation:
        comp = Composition(CURV.AFFINE, "sum", tuple(Link(i, Mono.INC) for i in range(len(kids))))
        curvature = _compose(comp, kids)
        reason = None
        if curvature is CURV.UNKNOWN:
            reason = ("term of unknown curvature" if any(k.d.curvature is CURV.UNKNOWN for k in kids)
                      else "sum of convex and concave terms")
        return Derivation(node, curvature, sign_sum(k.d.sign for k in kids), "sum", reason, _ds(kids),
                          composition=comp)

    def _scale(self, node: sympy.Basic, kids: list[_Node]) -> Derivation:
        sign = sign_product(k.d.sign for k in kids)
        varying = [i for i, k in enumerate(kids) if k.has_var]
        if len(varying) > 1:
            return Derivation(node, CURV.UNKNOWN, sign, "product-nonconstant",
                              "product of two non-constant expressions", _ds(kids))
        constants = [i for i, k in enumerate(kids) if not k.has_var]
        links = [Link(i, Mono.PARAM) for i in constants]
        if varying:
            links.append(_resolve(Mono.SCALED, varying[0], kids, constants))
        comp = Composition(CURV.AFFINE, "scaling", tuple(links),
                           weight=_weight_text(node, kids, constants))
        curvature = _compose(comp, kids)
        return Derivation(node, curvature, sign, "scale", _reason(comp, kids, curvature, "factor"),
                          _ds(kids), composition=comp)

    # -- catalogue atoms --------------------------------------------------------------------
    def _atom(self, node: sympy.Basic, kids: list[_Node]) -> tuple[Derivation, tuple[int, ...]]:
        infos = [ArgInfo(a, not k.has_var, k.d.sign) for a, k in zip(node.args, kids)]
        label = cat.label_of(node)
        rule = "elementwise-pow" if node.func is sympy.Pow else "atom"
        family = cat.family_of(node, infos, self._psd_kind)
        if family is None:  # a vocabulary class the catalogue has no entry for yet
            return Derivation(node, CURV.UNKNOWN, Sign.UNKNOWN, "unsupported-function",
                              f"'{label}' is not in the atom catalogue", _ds(kids)), ()
        entries = cat.FAMILIES[family]
        first = entries[0]
        params = tuple(i for i in range(len(kids)) if first.mono(i) is Mono.PARAM)
        signs = [k.d.sign for k in kids]
        sign = first.sign(signs)
        if any(kids[i].has_var for i in params):
            return Derivation(node, CURV.UNKNOWN, sign, rule, f"a parameter of '{label}' is not constant",
                              _ds(kids), atom="bad-parameter"), params
        scaled = [i for i in range(len(kids)) if first.mono(i) is Mono.SCALED and kids[i].has_var]
        if len(scaled) > 1:
            return Derivation(node, CURV.UNKNOWN, sign, "product-nonconstant",
                              "product of two non-constant expressions", _ds(kids), atom=first.name), params
        exprs = [i for i in range(len(kids)) if i not in params]
        lead = signs[exprs[0]] if exprs else Sign.UNKNOWN
        entry = next((e for e in entries if e.when is None or lead.classes <= e.when.classes), None)
        if entry is None:
            needs = " or ".join(e.when.value for e in entries if e.when is not None)
            return Derivation(node, CURV.UNKNOWN, sign, rule,
                              f"'{label}' needs an argument known to be {needs}; its sign is unknown",
                              _ds(kids), atom=family), params
        constants = [i for i, k in enumerate(kids) if not k.has_var]
        links = []
        for i in range(len(kids)):
            mono = entry.mono(i)
            if mono is Mono.SCALED and not kids[i].has_var:
                mono = Mono.PARAM  # the constant side of a product is its weight
            links.append(_resolve(mono, i, kids, [j for j in constants if j != i]))
        comp = Composition(entry.curvature, label, tuple(links),
                           weight=_weight_text(node, kids, constants) if scaled else None)
        curvature = _compose(comp, kids)
        if curvature is CURV.UNKNOWN:
            reason = entry.reason or _reason(comp, kids, curvature, f"argument of '{label}'")
        else:
            reason = None
            if rule == "atom" and any(not kids[link.index].d.curvature.is_affine
                                      for link in links if link.effect is not Mono.PARAM):
                rule = "composition"
        return Derivation(node, curvature, sign, rule, reason, _ds(kids), atom=entry.name,
                          composition=comp), params

    def _psd_kind(self, matrix: sympy.Basic) -> Curvature:
        """CONVEX if ``matrix`` is known PSD, CONCAVE if known NSD, else UNKNOWN."""
        if isinstance(matrix, sympy.Mul):
            # c * P with c a real number: PSD-ness scales by the sign of c (B&V 2004 §A.5, from memory)
            coeff, rest = matrix.as_coeff_Mul()
            if coeff.is_zero is False and coeff.is_real and rest is not matrix:
                kind = self._psd_kind(rest)
                return kind.negate() if coeff < 0 and kind is not CURV.UNKNOWN else kind
            return CURV.UNKNOWN
        if isinstance(matrix, F.matmul) and not (matrix.free_symbols & self.facts.variables):
            # B'B and BB' are PSD by construction: x'B'Bx = |Bx|^2 >= 0 (B&V 2004 §A.5, from memory)
            left, right = matrix.args
            if (isinstance(left, F.transpose) and left.args[0] == right) or \
                    (isinstance(right, F.transpose) and right.args[0] == left):
                return CURV.CONVEX
            return CURV.UNKNOWN
        if not isinstance(matrix, sympy.Symbol):
            return CURV.UNKNOWN
        if matrix in self.facts.psd:
            return CURV.CONVEX
        if matrix in self.facts.nsd:
            return CURV.CONCAVE
        literal = self.facts.matrices.get(matrix)
        return _literal_psd_kind(literal) if literal is not None else CURV.UNKNOWN


# -- helpers ----------------------------------------------------------------------------------
def _args(node) -> tuple:
    return node.args if isinstance(node, sympy.Basic) else ()


def _ds(kids: Sequence[_Node]) -> list[Derivation]:
    return [k.d for k in kids]


def _undef_name(node: sympy.Basic) -> str:
    return getattr(node.func, "__name__", str(node.func))


OPERATOR_PREFIX = "operator"


def operator_text(name: str) -> str | None:
    """The operator of an unknown function the interpreter named ``operator`` + its text
    (``operator+``: one operand is a model term, the other nothing optlint models), else None."""
    rest = name[len(OPERATOR_PREFIX):]
    return rest if name.startswith(OPERATOR_PREFIX) and rest and not rest[0].isalnum() else None


def unknown_label(name: str) -> str:
    """How a finding names an unknown function; an operation is worded as such, never by its
    internal name."""
    op = operator_text(name)
    return f"operator `{op}` with an operand optlint cannot follow" if op else f"function `{name}`"


def _reason_label(name: str) -> str:
    return unknown_label(name) if operator_text(name) else f"function '{name}'"


def _bad_leaf(node: sympy.Basic, reason: str) -> _Node:
    return _Node(Derivation(node, CURV.UNKNOWN, Sign.UNKNOWN, "non-real-number", reason, []), False, True, 1)


def _unsupported(node: sympy.Basic, kids: Sequence[_Node]) -> Derivation:
    return Derivation(node, CURV.UNKNOWN, Sign.UNKNOWN, "unsupported-node",
                      f"unsupported expression type '{type(node).__name__}'", _ds(kids))


def _literal_psd_kind(values) -> Curvature:
    try:
        arr = numpy.asarray(values)
        if arr.ndim != 2 or arr.shape[0] != arr.shape[1] or arr.size == 0 or not numpy.isrealobj(arr):
            return CURV.UNKNOWN
        arr = arr.astype(float)
        if not numpy.all(numpy.isfinite(arr)):
            return CURV.UNKNOWN
        # x'Px only sees the symmetric part of P.
        eig = numpy.linalg.eigvalsh((arr + arr.T) / 2)
    except (TypeError, ValueError, numpy.linalg.LinAlgError):
        return CURV.UNKNOWN
    tol = _PSD_RTOL * max(float(numpy.max(numpy.abs(eig))), numpy.finfo(float).tiny)
    if eig.min() >= -tol:
        return CURV.CONVEX
    if eig.max() <= tol:
        return CURV.CONCAVE
    return CURV.UNKNOWN


def _resolve(mono: Mono, index: int, kids: Sequence[_Node], weights: Sequence[int]) -> Link:
    """Turn a catalogue monotonicity into the effect used, given the signs now known."""
    if mono is Mono.BY_SIGN:
        arg = kids[index].d.sign
        if arg.is_nonneg:
            return Link(index, Mono.INC)
        if arg.is_nonpos:
            return Link(index, Mono.DEC)
        return Link(index, Mono.NONE, "arg-sign", (Mono.INC, Mono.DEC))
    if mono is Mono.INC_IF_NONNEG:
        if kids[index].d.sign.is_nonneg:
            return Link(index, Mono.INC)
        return Link(index, Mono.NONE, "arg-sign", (Mono.INC,))
    if mono is Mono.SCALED:
        weight = sign_product(kids[j].d.sign for j in weights)
        if weight.is_nonneg:
            return Link(index, Mono.INC)
        if weight.is_nonpos:
            return Link(index, Mono.DEC, "negated", (Mono.INC,))
        return Link(index, Mono.NONE, "weight-sign", (Mono.INC, Mono.DEC))
    return Link(index, mono)


def _meets(curvature: Curvature, effect: Mono, want: Curvature) -> bool:
    if effect is Mono.PARAM:
        return True
    if effect is Mono.ANY:
        return curvature is not CURV.UNKNOWN
    if effect is Mono.INC:
        return satisfies(curvature, want)
    if effect is Mono.DEC:
        return satisfies(curvature, want.negate())
    return curvature.is_affine


def _compose(comp: Composition, kids: Sequence[_Node]) -> Curvature:
    """B&V 2004 §3.2.4 (from memory): f(g) is convex if f is convex and every argument is affine, or
    convex where f is nondecreasing in it, or concave where f is nonincreasing; mirrored for concave."""
    def side(want: Curvature) -> bool:
        return satisfies(comp.base, want) and all(
            _meets(kids[link.index].d.curvature, link.effect, want) for link in comp.links)
    convex, concave = side(CURV.CONVEX), side(CURV.CONCAVE)
    if convex and concave:
        return CURV.CONSTANT if comp.base is CURV.CONSTANT else CURV.AFFINE
    return CURV.CONVEX if convex else CURV.CONCAVE if concave else CURV.UNKNOWN


def _reason(comp: Composition, kids: Sequence[_Node], curvature: Curvature, noun: str) -> str | None:
    """Plain words for why a composite rule gave UNKNOWN (None when it did not)."""
    if curvature is not CURV.UNKNOWN:
        return None
    links = [link for link in comp.links if link.effect is not Mono.PARAM]
    if any(kids[link.index].d.curvature is CURV.UNKNOWN for link in links):
        return f"{noun} has unknown curvature"
    base = comp.base.value
    for want in (CURV.CONVEX, CURV.CONCAVE):
        if not satisfies(comp.base, want):
            continue
        for link in links:
            curv = kids[link.index].d.curvature
            if _meets(curv, link.effect, want):
                continue
            if link.cause == "weight-sign":
                return f"sign of weight unknown ({comp.weight}) on a {curv.value} term"
            if link.cause == "arg-sign":
                known = "nonnegative" if link.ideal == (Mono.INC,) else "of known sign"
                return f"'{comp.label}' needs this {curv.value} argument to be {known}; its sign is unknown"
            if link.effect is Mono.NONE:
                return f"{base} function '{comp.label}' needs an affine argument; this one is {curv.value}"
            if comp.base is CURV.AFFINE:
                return f"'{comp.label}' of convex and concave arguments"
            needed = want if link.effect is Mono.INC else want.negate()
            return (f"{base} function '{comp.label}' applied to a {curv.value} argument (it is "
                    f"{link.effect.value}, so it needs a {needed.value} one)")
    return "the composition rules do not apply"


def _weight_text(node: sympy.Basic, kids: Sequence[_Node], constants: Sequence[int]) -> str:
    parts = [node.args[i] for i in constants]
    if not parts:
        return "1"
    if sum(kids[i].size for i in constants) > _PRINT_LIMIT or not all(_printable(p) for p in parts):
        return "a constant"
    return " * ".join(sympy.sstr(p) for p in parts)


def _printable(expr: sympy.Basic) -> bool:
    """Small enough to print quickly (no huge integers; Python refuses to print those anyway)."""
    stack = [expr]
    while stack:
        node = stack.pop()
        if isinstance(node, sympy.Rational) and (abs(node.p) > 10**15 or node.q > 10**15):
            return False
        stack.extend(_args(node))
    return True
