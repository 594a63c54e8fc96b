"""Projections: code that puts a value onto one side of zero, read from the tree.

``np.maximum(lam, 0)``, ``lam.clamp(min=0)``, ``torch.relu(lam)``, ``np.clip(lam, 0, None)`` and
their in-place forms project onto [0, inf); the min/negative-side forms onto (-inf, 0]. Shared by
the Lagrangian dialect (which multipliers are kept signed) and the interpreter's sign guards
(``optlint.guards``: a projected value has that sign from there on).
"""

from __future__ import annotations

import libcst as cst

from optlint.names import dotted

TRANSPARENT_ATTRS = {"value", "data", "T", "real"}
TRANSPARENT_METHODS = {"detach", "item", "numpy", "cpu", "clone", "copy", "flatten", "ravel", "squeeze", "tolist"}
MAX_CALLS = {"maximum", "fmax", "max"}
MIN_CALLS = {"minimum", "fmin", "min"}
LIBRARIES = {"np", "numpy", "torch", "cp", "cvxpy", "jnp", "jax.numpy"}


def node_text(node: cst.CSTNode) -> str:
    return " ".join(cst.Module([]).code_for_node(node).split())


def callee_tail(node) -> str | None:
    """Last component of a dotted callee: ``np.maximum`` -> ``maximum``."""
    if isinstance(node, cst.Attribute):
        return node.attr.value
    return node.value if isinstance(node, cst.Name) else None


def is_zero(node) -> bool:
    if isinstance(node, cst.Integer):
        try:
            return int(node.value.replace("_", ""), 0) == 0  # 0, 00, 0x0, 0o000, 0b0
        except ValueError:
            return False
    if isinstance(node, cst.Float):
        try:
            return float(node.value.replace("_", "")) == 0.0
        except ValueError:
            return False
    if isinstance(node, cst.UnaryOperation) and isinstance(node.operator, (cst.Minus, cst.Plus)):
        return is_zero(node.expression)
    return False


def is_none(node) -> bool:
    return isinstance(node, cst.Name) and node.value == "None"


def keyword_arg(call: cst.Call, name: str):
    for a in call.args:
        if a.keyword is not None and a.keyword.value == name:
            return a.value
    return None


def positional_args(call: cst.Call) -> list:
    return [a.value for a in call.args if a.keyword is None and not a.star]


def target_text(node) -> str | None:
    """Normalised text of an assignment target or a multiplier factor: ``lam.value``, ``lam.data``,
    ``lam[:]`` and ``lam.T`` all name ``lam``."""
    while True:
        if isinstance(node, cst.Attribute) and node.attr.value in TRANSPARENT_ATTRS:
            node = node.value
        elif (isinstance(node, cst.Subscript) and len(node.slice) == 1
              and isinstance(node.slice[0].slice, cst.Index) and isinstance(node.slice[0].slice.value, cst.Ellipsis)):
            node = node.value
        elif (isinstance(node, cst.Subscript) and len(node.slice) == 1 and isinstance(node.slice[0].slice, cst.Slice)
              and all(getattr(node.slice[0].slice, p) is None for p in ("lower", "upper", "step"))):
            node = node.value
        elif (isinstance(node, cst.Call) and isinstance(node.func, cst.Attribute) and not node.args
              and node.func.attr.value in TRANSPARENT_METHODS):
            node = node.func.value
        else:
            break
    if isinstance(node, (cst.Name, cst.Attribute)):
        return dotted(node)
    if isinstance(node, cst.Subscript) and isinstance(node.value, (cst.Name, cst.Attribute)):
        return node_text(node)
    return None


def projection(node) -> tuple[int, cst.CSTNode] | None:
    """(side, inner) when ``node`` projects ``inner`` onto [0, inf) (side +1) or (-inf, 0] (side -1)."""
    if not isinstance(node, cst.Call):
        return None
    tail = callee_tail(node.func)
    pos = positional_args(node)
    method_base = node.func.value if isinstance(node.func, cst.Attribute) else None
    if tail in MAX_CALLS | MIN_CALLS and len(pos) == 2:
        side = 1 if tail in MAX_CALLS else -1
        if is_zero(pos[0]):
            return side, pos[1]
        if is_zero(pos[1]):
            return side, pos[0]
        return None
    if tail in ("relu", "relu_"):
        if pos:
            return 1, pos[0]
        return (1, method_base) if method_base is not None else None
    if tail in ("clamp", "clip", "clamp_", "clip_"):
        # torch.clamp(X, min=0) / X.clamp(min=0) / np.clip(X, 0, None) / X.clip(0)
        if method_base is not None and dotted(method_base) not in LIBRARIES:
            inner, rest = method_base, pos
        elif pos:
            inner, rest = pos[0], pos[1:]
        else:
            return None
        lo = keyword_arg(node, "min") or keyword_arg(node, "a_min") or (rest[0] if rest else None)
        hi = keyword_arg(node, "max") or keyword_arg(node, "a_max") or (rest[1] if len(rest) > 1 else None)
        if lo is not None and is_zero(lo) and (hi is None or is_none(hi)):
            return 1, inner
        if hi is not None and is_zero(hi) and (lo is None or is_none(lo)):
            return -1, inner
    return None
