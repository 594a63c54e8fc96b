"""Blame: the first node of a derivation tree, from the root down, where the rules break.

Invariants:
- Reads only the Derivation record (curvature, rule, reason, Composition); never re-derives a rule.
- Descends into a child while that child fails what its parent's rule needs of it; stops at the node
  whose own rule causes the failure: a function of the wrong curvature, a product of non-constants,
  a subtraction or a weight/argument sign that spoils an otherwise fine child, an unknown function.
- Iterative: a tree of any depth is walked without recursion.
"""

from __future__ import annotations

from .catalogue import Mono
from .lattice import Curvature
from .model import Composition, Derivation, Link, requirement, satisfies

_WANTS = (Curvature.CONVEX, Curvature.CONCAVE, Curvature.AFFINE)


def blame(tree: Derivation, want: Curvature) -> tuple[Derivation, str] | None:
    if want not in _WANTS:
        raise ValueError(f"blame wants CONVEX, CONCAVE or AFFINE, not {want}")
    if satisfies(tree.curvature, want):
        return None
    node, need, at_root = tree, want, True
    while True:
        comp = node.composition
        if comp is None:
            return node, _own(node, need, at_root)
        if not satisfies(comp.base, need):
            return node, _wrong_function(node, comp, need, at_root)
        step = _failing_child(node, comp, need)
        if step is None:
            return node, _own(node, need, at_root)
        link, child, child_need = step
        if child.curvature is not Curvature.UNKNOWN and link.cause and any(
                satisfies(child.curvature, requirement(m, need)) for m in link.ideal):
            return node, _sign_culprit(comp, link, child)
        node, need, at_root = child, child_need if child_need is not None else need, False


def _failing_child(node: Derivation, comp: Composition, need: Curvature):
    for link in comp.links:
        if link.effect is Mono.PARAM:
            continue
        child = node.children[link.index]
        child_need = requirement(link.effect, need)
        if not satisfies(child.curvature, child_need):
            return link, child, child_need
    return None


def _article(curvature: Curvature) -> str:
    return ("an " if curvature.value[0] in "aeiou" else "a ") + curvature.value


def _own(node: Derivation, need: Curvature, at_root: bool) -> str:
    if node.curvature is Curvature.UNKNOWN and node.reason:
        return node.reason
    if at_root and need is Curvature.AFFINE:
        return f"equality needs an affine expression; this is {node.curvature.value}"
    return f"this is {node.curvature.value} where {_article(need)} expression is needed"


def _wrong_function(node: Derivation, comp: Composition, need: Curvature, at_root: bool) -> str:
    if comp.base is Curvature.UNKNOWN:
        return node.reason or f"'{comp.label}' is neither convex nor concave"
    what = f"{comp.base.value} function '{comp.label}'"
    if at_root and need is Curvature.AFFINE:
        return f"equality needs an affine expression; this is {node.curvature.value} ({what})"
    return f"{what} where {_article(need)} expression is needed"


def _sign_culprit(comp: Composition, link: Link, child: Derivation) -> str:
    curv = child.curvature.value
    if link.cause == "negated":
        return f"{curv} term subtracted (weight {comp.weight})"
    if link.cause == "weight-sign":
        return f"sign of weight unknown ({comp.weight}) on a {curv} term"
    known = "known to be nonnegative" if link.ideal == (Mono.INC,) else "of known sign"
    return f"'{comp.label}' needs its {curv} argument to be {known}; its sign is unknown"
