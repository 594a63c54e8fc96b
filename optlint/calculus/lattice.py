"""The curvature and sign lattices of the calculus.

Invariants:
- A Curvature is the set of properties it guarantees (convex, concave, constant); ``join`` keeps the
  properties both sides guarantee, so the lattice order is reverse inclusion of those sets.
- A Sign is the set of sign classes (negative, zero, positive) the value may take, elementwise for
  vectors. Every table (add, multiply, max, min, join) is derived by combining classes pairwise and
  mapping the result up to the smallest Sign containing it, so no table is written out by hand.
- Signs of symbols come only from sympy's own assumption queries (``is_positive`` ...), never guessed.
"""

from __future__ import annotations

import enum
from itertools import product
from typing import Callable, Iterable

import numpy


class Curvature(enum.Enum):
    CONSTANT = "constant"
    AFFINE = "affine"
    CONVEX = "convex"
    CONCAVE = "concave"
    UNKNOWN = "unknown"

    @property
    def is_convex(self) -> bool:
        return "convex" in _CURVATURE_PROPS[self]

    @property
    def is_concave(self) -> bool:
        return "concave" in _CURVATURE_PROPS[self]

    @property
    def is_affine(self) -> bool:
        return self.is_convex and self.is_concave

    @property
    def is_constant(self) -> bool:
        return self is Curvature.CONSTANT

    def join(self, other: Curvature) -> Curvature:
        return _CURVATURE_FROM_PROPS[_CURVATURE_PROPS[self] & _CURVATURE_PROPS[other]]

    def negate(self) -> Curvature:
        swap = {"convex": "concave", "concave": "convex", "constant": "constant"}
        return _CURVATURE_FROM_PROPS[frozenset(swap[p] for p in _CURVATURE_PROPS[self])]

    def __le__(self, other: object) -> bool:
        if not isinstance(other, Curvature):
            return NotImplemented
        return self.join(other) is other

    def __ge__(self, other: object) -> bool:
        if not isinstance(other, Curvature):
            return NotImplemented
        return other.join(self) is self

    def __str__(self) -> str:
        return self.value


_CURVATURE_PROPS: dict[Curvature, frozenset[str]] = {
    Curvature.CONSTANT: frozenset({"convex", "concave", "constant"}),
    Curvature.AFFINE: frozenset({"convex", "concave"}),
    Curvature.CONVEX: frozenset({"convex"}),
    Curvature.CONCAVE: frozenset({"concave"}),
    Curvature.UNKNOWN: frozenset(),
}
# The five property sets are closed under intersection and under swapping convex/concave.
_CURVATURE_FROM_PROPS = {props: c for c, props in _CURVATURE_PROPS.items()}

_NEG, _ZERO, _POS = -1, 0, 1


class Sign(enum.Enum):
    POSITIVE = "positive"
    NONNEGATIVE = "nonnegative"
    ZERO = "zero"
    NONPOSITIVE = "nonpositive"
    NEGATIVE = "negative"
    UNKNOWN = "unknown"

    @property
    def classes(self) -> frozenset[int]:
        return _SIGN_CLASSES[self]

    @property
    def is_nonneg(self) -> bool:
        return _NEG not in self.classes

    @property
    def is_nonpos(self) -> bool:
        return _POS not in self.classes

    def negate(self) -> Sign:
        return Sign.from_classes(-c for c in self.classes)

    def add(self, other: Sign) -> Sign:
        return _combine(self, other, _class_add)

    def multiply(self, other: Sign) -> Sign:
        return _combine(self, other, lambda a, b: {a * b})

    def maximum(self, other: Sign) -> Sign:
        return _combine(self, other, lambda a, b: {max(a, b)})

    def minimum(self, other: Sign) -> Sign:
        return _combine(self, other, lambda a, b: {min(a, b)})

    def join(self, other: Sign) -> Sign:
        return Sign.from_classes(self.classes | other.classes)

    @staticmethod
    def from_classes(classes: Iterable[int]) -> Sign:
        wanted = frozenset(classes)
        for sign in _SIGNS_BY_SIZE:
            if wanted <= sign.classes:
                return sign
        return Sign.UNKNOWN

    @staticmethod
    def from_sympy(expr) -> Sign:
        """The sign sympy's assumption system proves for ``expr`` (use on symbols and numbers)."""
        if expr.is_zero:
            return Sign.ZERO
        if expr.is_positive:
            return Sign.POSITIVE
        if expr.is_negative:
            return Sign.NEGATIVE
        if expr.is_nonnegative:
            return Sign.NONNEGATIVE
        if expr.is_nonpositive:
            return Sign.NONPOSITIVE
        return Sign.UNKNOWN

    @staticmethod
    def from_array(values) -> Sign:
        """The sign shared by every entry of a literal array (UNKNOWN for non-real or non-finite)."""
        try:
            arr = numpy.asarray(values)
            if arr.size == 0 or not numpy.isrealobj(arr):
                return Sign.UNKNOWN
            arr = arr.astype(float)
        except (TypeError, ValueError):
            return Sign.UNKNOWN
        if not numpy.all(numpy.isfinite(arr)):
            return Sign.UNKNOWN
        present = set()
        if numpy.any(arr < 0):
            present.add(_NEG)
        if numpy.any(arr == 0):
            present.add(_ZERO)
        if numpy.any(arr > 0):
            present.add(_POS)
        return Sign.from_classes(present)

    def __str__(self) -> str:
        return self.value


_SIGN_CLASSES: dict[Sign, frozenset[int]] = {
    Sign.POSITIVE: frozenset({_POS}),
    Sign.NONNEGATIVE: frozenset({_ZERO, _POS}),
    Sign.ZERO: frozenset({_ZERO}),
    Sign.NONPOSITIVE: frozenset({_NEG, _ZERO}),
    Sign.NEGATIVE: frozenset({_NEG}),
    Sign.UNKNOWN: frozenset({_NEG, _ZERO, _POS}),
}
_SIGNS_BY_SIZE = sorted(Sign, key=lambda s: len(_SIGN_CLASSES[s]))


def _class_add(a: int, b: int) -> set[int]:
    if a == _ZERO:
        return {b}
    if b == _ZERO or a == b:
        return {a}
    return {_NEG, _ZERO, _POS}


def _combine(left: Sign, right: Sign, op: Callable[[int, int], set[int]]) -> Sign:
    out: set[int] = set()
    for a, b in product(left.classes, right.classes):
        out |= op(a, b)
    return Sign.from_classes(out)


def sign_sum(signs: Iterable[Sign]) -> Sign:
    total = Sign.ZERO
    for s in signs:
        total = total.add(s)
    return total


def sign_product(signs: Iterable[Sign]) -> Sign:
    total = Sign.POSITIVE
    for s in signs:
        total = total.multiply(s)
    return total
