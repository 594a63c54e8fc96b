"""The data the calculus takes and returns: facts about symbols, the budget, derivation trees.

Invariants:
- ``Facts.variables`` are the decision variables; every other symbol is data (a constant).
- A Derivation node records the rule applied and, for composite rules, a ``Composition`` saying what
  the rule needs of each child; ``blame`` reads only that record, so analysis and blame cannot
  disagree about a rule.
- Derivation trees may share nodes (memoised subexpressions): treat them as read-only.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Mapping

import numpy
import sympy

from .catalogue import Mono
from .lattice import Curvature, Sign


@dataclass(frozen=True)
class Facts:
    variables: frozenset[sympy.Symbol]
    psd: frozenset[sympy.Symbol] = frozenset()
    nsd: frozenset[sympy.Symbol] = frozenset()
    # Arrays do not compare or hash as values, so they take no part in Facts equality.
    matrices: Mapping[sympy.Symbol, numpy.ndarray] = field(default_factory=dict, compare=False)

    def __post_init__(self) -> None:
        for name in ("variables", "psd", "nsd"):
            object.__setattr__(self, name, frozenset(getattr(self, name)))


@dataclass(frozen=True)
class Budget:
    max_nodes: int = 4000
    max_depth: int = 200
    max_seconds: float = 1.0


@dataclass(frozen=True)
class Link:
    """What a composite rule does with one child.

    ``effect`` is the monotonicity actually used (INC, DEC, NONE, ANY or PARAM). ``cause`` is set
    when the effect is weaker than the function allows because a sign was not known or was wrong:
    "negated" (negative weight), "weight-sign" (weight of unknown sign), "arg-sign" (a monotonicity
    that needs the argument's sign). ``ideal`` lists the effects a better sign would have given.
    """

    index: int
    effect: Mono
    cause: str | None = None
    ideal: tuple[Mono, ...] = ()


@dataclass(frozen=True)
class Composition:
    base: Curvature             # curvature of the outer operation itself (AFFINE for sums and scaling)
    label: str                  # the operation in the modeller's words
    links: tuple[Link, ...]
    weight: str | None = None   # printed constant weight, for scaling rules


@dataclass(eq=False)
class Derivation:
    expr: sympy.Basic
    curvature: Curvature
    sign: Sign
    rule: str
    reason: str | None
    children: list[Derivation]
    atom: str | None = None
    function_name: str | None = None
    composition: Composition | None = None

    def __repr__(self) -> str:
        # Shallow on purpose: trees can be hundreds of levels deep.
        return (f"Derivation(rule={self.rule!r}, curvature={self.curvature.value}, sign={self.sign.value}, "
                f"expr=<{type(self.expr).__name__}>, children={len(self.children)})")


@dataclass
class Analysis:
    curvature: Curvature
    sign: Sign
    tree: Derivation
    unknown_functions: tuple[str, ...]
    budget_exceeded: bool


def satisfies(curvature: Curvature, want: Curvature | None) -> bool:
    """Whether ``curvature`` meets ``want`` (None: any curvature other than UNKNOWN)."""
    if want is None:
        return curvature is not Curvature.UNKNOWN
    if want is Curvature.CONVEX:
        return curvature.is_convex
    if want is Curvature.CONCAVE:
        return curvature.is_concave
    if want is Curvature.AFFINE:
        return curvature.is_affine
    if want is Curvature.CONSTANT:
        return curvature.is_constant
    return True


def requirement(effect: Mono, want: Curvature) -> Curvature | None:
    """What a rule needs of a child with ``effect`` for the rule's result to be ``want``.

    B&V 2004 §3.2.4 (from memory): a nondecreasing outer function passes the wanted curvature
    through, a nonincreasing one flips it, a non-monotone one needs an affine argument.
    """
    if effect is Mono.INC:
        return want
    if effect is Mono.DEC:
        return want.negate()
    if effect is Mono.NONE:
        return Curvature.AFFINE
    return None
