"""Forms: the CST shapes that have an exact disciplined spelling, with the conditions that make it exact.

Each form looks at one CST node of an observed file (``optlint.rewrite.observe``) and answers
``None`` (not this shape), a ``Refusal`` (this shape, but a condition is not shown; the reason is
reported and the code left alone) or a ``Match`` whose ``build(namer)`` makes the replacement.
The identities, entry by entry (B&V 2004 §3.1.5, from memory, for the atoms' definitions):
- sqrt(sum_squares(u)) = norm(u, 2) when u has at most one dimension (a matrix's norm(., 2) is its
  largest singular value, not the root of its sum of squares);
- sqrt(t_1**2 + ... + t_k**2) = norm(hstack([t_1, ..., t_k]), 2) when every t_i is a scalar;
- log(sum(exp(v))) = log_sum_exp(v) for any shape; log(exp(a_1) + ... + exp(a_k)) =
  log_sum_exp(hstack([a_1, ..., a_k])) when every a_i is a scalar;
- t**2 / y = quad_over_lin(t, y) and sum_squares(u) / y = quad_over_lin(u, y) for a scalar
  y > 0 (the atom's domain) and a scalar t (u at most one dimension);
- c / y = c * inv_pos(y) on y > 0 (elementwise; c a constant, a scalar unless y is one);
- x * x = square(x) for a scalar x (of a vector, the DSL's ``*`` is the inner product);
- h(u) <= 0, h(u) == 0 with h a norm, sum of squares, square or absolute value: u == 0, written
  ``a == b`` when u is ``a - b`` (every norm is zero exactly at zero; so is a sum of squares);
- ``<`` and ``>`` between model terms are the DSL's ``<=`` and ``>=``.
Library functions are recognised by what the interpreter resolved the callee to, never by its
spelling, and every condition must hold for every value a node took (see observe).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import libcst as cst

from optlint.interp import ConsVal
from optlint.rewrite.observe import Observation

LIB = "cvxpy"


@dataclass
class Match:
    summary: str  # what is rewritten into what, for the report
    build: Callable  # namer -> replacement node, or None when the atoms cannot be named


@dataclass
class Refusal:
    reason: str


def code(node) -> str:
    return " ".join(cst.Module([]).code_for_node(node).split())


def has_comment(node) -> bool:
    found = []

    class _Comments(cst.CSTVisitor):
        def visit_Comment(self, _node):
            found.append(True)
            return False

    node.visit(_Comments())
    return bool(found)


def _bare(node):
    """The node without its outer parentheses where they cannot matter inside a call's arguments."""
    if isinstance(node, (cst.BinaryOperation, cst.UnaryOperation, cst.Name, cst.Attribute, cst.Call,
                         cst.Subscript, cst.Integer, cst.Float)) and (node.lpar or node.rpar):
        return node.with_changes(lpar=[], rpar=[])
    return node


def _positional(call: cst.Call, n: int, extra_ok: bool = False):
    """The first n positional argument values of a call, or None (keywords, stars, wrong count)."""
    args = list(call.args)
    if any(a.star for a in args) or len(args) < n or (not extra_ok and len(args) != n):
        return None
    if any(a.keyword is not None for a in args[:n]):
        return None
    if not extra_ok and any(a.keyword is not None for a in args):
        return None
    return [a.value for a in args[:n]]


def _calls(obs: Observation, node, name: str, n: int = 1, extra_ok: bool = False):
    """The arguments of ``node`` when it calls the library's ``name`` with n positional arguments."""
    if not isinstance(node, cst.Call) or not obs.callee_is(node.func, f"{LIB}.{name}"):
        return None
    return _positional(node, n, extra_ok)


def _terms(node) -> list:
    """The operands of a chain of ``+`` (through parentheses), in order."""
    if isinstance(node, cst.BinaryOperation) and isinstance(node.operator, cst.Add):
        return _terms(node.left) + _terms(node.right)
    return [node]


def _literal(node, value: float) -> bool:
    try:
        if isinstance(node, cst.Integer):
            return int(node.value.replace("_", ""), 0) == value
        if isinstance(node, cst.Float):
            return float(node.value.replace("_", "")) == value
    except ValueError:
        return False
    return False


def _even_literal(node) -> bool:
    if not isinstance(node, cst.Integer):
        return False
    try:
        v = int(node.value.replace("_", ""), 0)
    except ValueError:
        return False
    return v >= 2 and v % 2 == 0


_PURE = (cst.Name, cst.Attribute, cst.Subscript, cst.Integer, cst.Float, cst.BinaryOperation, cst.UnaryOperation)


def _pure(node) -> bool:
    """No calls, walrus or other effects: evaluating the text twice gives the same value."""
    ok = [True]

    class _Pure(cst.CSTVisitor):
        def on_visit(self, n):
            if isinstance(n, cst.BaseExpression) and not isinstance(n, _PURE):
                ok[0] = False
            return ok[0]

    node.visit(_Pure())
    return ok[0]


def _same_twice(node) -> cst.BaseExpression | None:
    """x for ``x * x`` with the same effect-free text on both sides."""
    if (isinstance(node, cst.BinaryOperation) and isinstance(node.operator, cst.Multiply)
            and code(_bare(node.left)) == code(_bare(node.right)) and _pure(node.left)):
        return node.left
    return None


def square_base(obs: Observation, node):
    """t for ``t ** 2``, ``square(t)``, ``power(t, 2)`` or ``t * t``; else None."""
    if (isinstance(node, cst.BinaryOperation) and isinstance(node.operator, cst.Power)
            and isinstance(node.right, cst.Integer) and _literal(node.right, 2)):
        return node.left
    args = _calls(obs, node, "square")
    if args is not None:
        return args[0]
    args = _calls(obs, node, "power", 2)
    if args is not None and isinstance(args[1], cst.Integer) and _literal(args[1], 2):
        return args[0]
    return _same_twice(node)


def _arglist(items) -> list[cst.Arg]:
    out = []
    for i, item in enumerate(items):
        comma = cst.Comma(whitespace_after=cst.SimpleWhitespace(" ")) if i < len(items) - 1 else cst.MaybeSentinel.DEFAULT
        out.append(cst.Arg(value=_bare(item), comma=comma))
    return out


def _stack(namer, like, items):
    hstack = namer.callee("hstack", like)
    if hstack is None:
        return None
    elements = []
    for i, item in enumerate(items):
        comma = cst.Comma(whitespace_after=cst.SimpleWhitespace(" ")) if i < len(items) - 1 else cst.MaybeSentinel.DEFAULT
        elements.append(cst.Element(value=_bare(item), comma=comma))
    return cst.Call(func=hstack, args=[cst.Arg(value=cst.List(elements=elements))])


def _call(namer, atom, like, args, keep=None):
    """``atom(args...)``, with the parentheses of ``keep`` (the replaced node) if given."""
    func = namer.callee(atom, like)
    if func is None or any(a is None for a in args):
        return None
    parens = {"lpar": keep.lpar, "rpar": keep.rpar} if keep is not None else {}
    return cst.Call(func=func, args=_arglist(args), **parens)


# -- the forms of undisciplined-convex ----------------------------------------------------------


def sqrt_form(obs: Observation, node):
    inner = _calls(obs, node, "sqrt")
    if inner is None:
        return None
    arg = inner[0]
    u = _calls(obs, arg, "sum_squares")
    if u is not None:
        u = u[0]
        if not obs.at_most_vector(u):
            return Refusal(f"cannot show that `{code(u)}` has at most one dimension "
                           f"(norm(., 2) of a matrix is its largest singular value)")
        return Match("sqrt of a sum of squares -> 2-norm",
                     lambda n: _call(n, "norm", node.func, [u, cst.Integer("2")], node))
    terms = _terms(arg)
    bases = [square_base(obs, t) for t in terms]
    if len(terms) < 2 or any(b is None for b in bases):
        return None
    for b in bases:
        if not obs.scalar(b):
            return Refusal(f"cannot show that `{code(b)}` is a scalar (each entry of a vector would get "
                           f"its own root)")
    return Match("sqrt of a sum of squares -> 2-norm of a stacked vector",
                 lambda n: _call(n, "norm", node.func, [_stack(n, node.func, bases), cst.Integer("2")], node))


def lse_form(obs: Observation, node):
    inner = _calls(obs, node, "log")
    if inner is None:
        return None
    arg = inner[0]
    summed = _calls(obs, arg, "sum")
    if summed is not None:
        v = _calls(obs, summed[0], "exp")
        if v is None:
            return None
        return Match("log of a sum of exps -> log_sum_exp",
                     lambda n: _call(n, "log_sum_exp", node.func, [v[0]], node))
    terms = _terms(arg)
    exps = [_calls(obs, t, "exp") for t in terms]
    if len(terms) < 2 or any(e is None for e in exps):
        return None
    pieces = [e[0] for e in exps]
    for p in pieces:
        if not obs.scalar(p):
            return Refusal(f"cannot show that `{code(p)}` is a scalar (a vector would be summed entry "
                           f"by entry)")
    return Match("log of a sum of exps -> log_sum_exp of a stacked vector",
                 lambda n: _call(n, "log_sum_exp", node.func, [_stack(n, node.func, pieces)], node))


def division_form(obs: Observation, node):
    if not (isinstance(node, cst.BinaryOperation) and isinstance(node.operator, cst.Divide)):
        return None
    top, y = node.left, node.right
    if not (obs.involves_variables(node) and obs.involves_variables(y)):
        return None
    if not obs.positive(y):
        return Refusal(f"cannot show that the denominator `{code(y)}` is positive on the model's domain")
    t = square_base(obs, top)
    u = _calls(obs, top, "sum_squares")
    if t is not None or u is not None:
        if not obs.scalar(y):
            return Refusal(f"cannot show that the denominator `{code(y)}` is a scalar")
        if t is not None and not obs.scalar(t):
            return Refusal(f"cannot show that `{code(t)}` is a scalar (quad_over_lin sums the squares)")
        if u is not None and not obs.at_most_vector(u[0]):
            return Refusal(f"cannot show that `{code(u[0])}` has at most one dimension")
        num = t if t is not None else u[0]
        return Match("square over a positive variable -> quad_over_lin",
                     lambda n: _call(n, "quad_over_lin", None, [num, y], node))
    if not obs.constant(top):
        return None
    if _literal(top, 1):
        return Match("1 / y on y > 0 -> inv_pos", lambda n: _call(n, "inv_pos", None, [y], node))
    if not (obs.scalar(top) or obs.scalar(y)):
        return Refusal(f"cannot show that `{code(top)}` or `{code(y)}` is a scalar")

    def build(n):
        inv = _call(n, "inv_pos", None, [y])
        if inv is None:
            return None
        op = node.operator
        return cst.BinaryOperation(left=top, operator=cst.Multiply(whitespace_before=op.whitespace_before,
                                                                   whitespace_after=op.whitespace_after),
                                   right=inv, lpar=node.lpar, rpar=node.rpar)

    return Match("c / y on y > 0 -> c * inv_pos(y)", build)


def product_form(obs: Observation, node):
    x = _same_twice(node)
    if x is None or not obs.involves_variables(x):
        return None
    if not obs.scalar(x):
        return Refusal(f"cannot show that `{code(x)}` is a scalar (x * x of a vector is its inner product)")
    return Match("x * x -> square(x)", lambda n: _call(n, "square", None, [x], node))


UNDISCIPLINED_FORMS = (sqrt_form, lse_form, division_form, product_form)


# -- constraints (found at a finding's own site) ------------------------------------------------


def _all_constraints(obs: Observation, node) -> bool:
    """Every evaluation of the comparison built a model constraint (never a plain boolean)."""
    kept = obs.raw(node)
    return kept is not None and all(isinstance(v, ConsVal) for v in kept)


_NONNEG_ATOMS = {"norm": True, "norm1": False, "norm2": False, "norm_inf": False, "pnorm": True,
                 "sum_squares": False, "abs": False, "square": False}  # name -> may take more arguments


def _nonneg_argument(obs: Observation, node):
    """u for a nonnegative h(u) that is zero exactly where u is zero (a norm, sum of squares, ...)."""
    for name, extra in _NONNEG_ATOMS.items():
        args = _calls(obs, node, name, 1, extra_ok=extra)
        if args is not None:
            return args[0]
    if isinstance(node, cst.BinaryOperation) and isinstance(node.operator, cst.Power) and _even_literal(node.right):
        return node.left
    args = _calls(obs, node, "power", 2)
    if args is not None and _even_literal(args[1]):
        return args[0]
    return None


def degenerate_form(obs: Observation, node):
    if not isinstance(node, cst.Comparison) or len(node.comparisons) != 1:
        return None
    target = node.comparisons[0]
    op = target.operator
    left, right = node.left, target.comparator
    zero = lambda n: _literal(n, 0)  # noqa: E731 - a local shorthand
    if isinstance(op, cst.LessThanEqual) and zero(right):
        body = left
    elif isinstance(op, cst.GreaterThanEqual) and zero(left):
        body = right
    elif isinstance(op, cst.Equal) and (zero(right) or zero(left)):
        body = left if zero(right) else right
    else:
        return None
    u = _nonneg_argument(obs, body)
    if u is None:
        return None
    if not (_all_constraints(obs, node) and obs.involves_variables(u)):
        return Refusal("the comparison is not always a model constraint")
    if has_comment(node):
        return Refusal("a comment inside the constraint would be lost")
    inner = _bare(u)
    if isinstance(inner, cst.BinaryOperation) and isinstance(inner.operator, cst.Subtract):
        a, b = inner.left, inner.right
    else:
        a, b = inner, cst.Integer("0")
    equal = cst.Equal(whitespace_before=op.whitespace_before, whitespace_after=op.whitespace_after)
    replacement = cst.Comparison(left=a, comparisons=[cst.ComparisonTarget(operator=equal, comparator=b)],
                                 lpar=node.lpar, rpar=node.rpar)
    return Match("nonnegative expression held at zero -> affine equality", lambda n: replacement)


def strict_form(obs: Observation, node):
    if not isinstance(node, cst.Comparison) or len(node.comparisons) != 1:
        return None
    target = node.comparisons[0]
    op = target.operator
    wide = {cst.LessThan: cst.LessThanEqual, cst.GreaterThan: cst.GreaterThanEqual}.get(type(op))
    if wide is None:
        return None
    if not _all_constraints(obs, node):
        return Refusal("the comparison is not always a model constraint (on plain numbers `<` and `<=` differ)")
    new_op = wide(whitespace_before=op.whitespace_before, whitespace_after=op.whitespace_after)
    replacement = node.with_changes(comparisons=[target.with_changes(operator=new_op)])
    return Match("strict inequality -> non-strict (the DSL treats them alike)", lambda n: replacement)
