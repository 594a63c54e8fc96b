"""The atom catalogue: one table entry per function (or per parameter regime of a function).

Each entry gives the function's curvature on its domain, the sign of its value, its domain, its
monotonicity in each argument and the source of those facts. The analysis reads only this table; no
curvature fact about an atom lives anywhere else.

Invariants:
- Monotonicity is meant in the extended-value sense (B&V 2004 §3.1.2, §3.2.4; from memory): a convex
  function is +inf off its domain and a concave one -inf, so a convex function whose domain is
  bounded below (x^1.5 on x >= 0) is NOT nondecreasing unless its argument is known nonnegative
  (``INC_IF_NONNEG``), while a concave one with such a domain (sqrt) is.
- A family (e.g. odd powers) may list several entries guarded by ``when``, a sign the first
  expression argument must be known to have; the first entry whose guard holds applies, and every
  entry of a family shares one value-sign rule (checked by the tests).
- Parameters (the p of a norm, the M of huber, the exponent of a power) are ``PARAM`` positions: they
  must be constant; the classifier reads their value to pick the family.
- Sources are Boyd & Vandenberghe, Convex Optimization (2004); section numbers are from memory.
"""

from __future__ import annotations

import enum
import functools
from dataclasses import dataclass
from typing import Callable, Sequence

import sympy

from . import functions as F
from .lattice import Curvature, Sign

BV = "B&V 2004 "
FROM_MEMORY = " (from memory)"


class Mono(enum.Enum):
    """How a function varies with one argument (before the argument's sign is known)."""

    INC = "nondecreasing"
    DEC = "nonincreasing"
    NONE = "not monotone"
    BY_SIGN = "nondecreasing for a nonnegative argument, nonincreasing for a nonpositive one"
    INC_IF_NONNEG = "nondecreasing for a nonnegative argument only"
    SCALED = "monotone by the sign of the constant factor"
    ANY = "value does not depend on the argument"
    PARAM = "parameter (must be constant)"


SignRule = Callable[[Sequence[Sign]], Sign]


@functools.cache  # one rule object per sign, so entries of a family share it by identity
def _fixed(sign: Sign) -> SignRule:
    return lambda signs: sign


def _same(signs: Sequence[Sign]) -> Sign:
    return signs[0]


def _even(signs: Sequence[Sign]) -> Sign:
    """|g|, g^2k, norms: positive where g is known nonzero, zero where g is zero."""
    if signs[0] in (Sign.POSITIVE, Sign.NEGATIVE):
        return Sign.POSITIVE
    return Sign.ZERO if signs[0] is Sign.ZERO else Sign.NONNEGATIVE


def _root(signs: Sequence[Sign]) -> Sign:
    """Functions >= 0 on a domain g >= 0 that vanish exactly at 0 (sqrt, x^p on x >= 0, xexp)."""
    if signs[0] is Sign.POSITIVE:
        return Sign.POSITIVE
    if signs[0] is Sign.ZERO:
        return Sign.ZERO
    return Sign.NONNEGATIVE


def _weak_same(signs: Sequence[Sign]) -> Sign:
    """Sums of a data-dependent number of entries: keeps the sign but not strictness."""
    if signs[0].is_nonneg:
        return Sign.NONNEGATIVE if signs[0] is not Sign.ZERO else Sign.ZERO
    if signs[0].is_nonpos:
        return Sign.NONPOSITIVE
    return Sign.UNKNOWN


def _pos_part(signs: Sequence[Sign]) -> Sign:
    return signs[0].maximum(Sign.ZERO)


def _neg_part(signs: Sequence[Sign]) -> Sign:
    return signs[0].negate().maximum(Sign.ZERO)


def _maximum(signs: Sequence[Sign]) -> Sign:
    out = signs[0]
    for s in signs[1:]:
        out = out.maximum(s)
    return out


def _minimum(signs: Sequence[Sign]) -> Sign:
    out = signs[0]
    for s in signs[1:]:
        out = out.minimum(s)
    return out


def _join(signs: Sequence[Sign]) -> Sign:
    out = signs[0]
    for s in signs[1:]:
        out = out.join(s)
    return out


def _product(signs: Sequence[Sign]) -> Sign:
    return signs[0].multiply(signs[1])


@dataclass(frozen=True)
class Entry:
    name: str                       # unique catalogue id, e.g. "pow:odd/nonneg"
    family: str                     # entries tried in order for one function regime
    curvature: Curvature
    monotone: tuple[Mono, ...]      # per argument; a variadic entry has one, used for every argument
    sign: SignRule
    domain: str
    source: str
    when: Sign | None = None        # first expression argument must be known to have this sign
    reason: str | None = None       # why an UNKNOWN entry is unknown, in the modeller's words
    variadic: bool = False

    def mono(self, position: int) -> Mono:
        return self.monotone[0] if self.variadic else self.monotone[position]


C, A, V, K, U = Curvature.CONSTANT, Curvature.AFFINE, Curvature.CONVEX, Curvature.CONCAVE, Curvature.UNKNOWN
INC, DEC, NONE, BYS, INN, SCL, ANY, PAR = (
    Mono.INC, Mono.DEC, Mono.NONE, Mono.BY_SIGN, Mono.INC_IF_NONNEG, Mono.SCALED, Mono.ANY, Mono.PARAM)
POS, NN, ZERO, NP, NEG, UNK = (
    Sign.POSITIVE, Sign.NONNEGATIVE, Sign.ZERO, Sign.NONPOSITIVE, Sign.NEGATIVE, Sign.UNKNOWN)
_AFFINE_MAP = BV + "§3.2.2 composition with an affine mapping; affine maps are convex and concave" + FROM_MEMORY
_POWERS = BV + "§3.1.5 powers: x^a convex on x > 0 for a >= 1 or a <= 0, concave for 0 <= a <= 1" + FROM_MEMORY
_MIRROR = "; the x -> -x mirror of it, " + BV + "§3.2.2" + FROM_MEMORY
_COMPOSITION = BV + "§3.2.4 scalar composition rules" + FROM_MEMORY

TABLE: tuple[Entry, ...] = (
    # sympy's elementary functions
    Entry("exp", "exp", V, (INC,), _fixed(POS), "all reals", BV + "§3.1.5 exponential e^ax" + FROM_MEMORY),
    Entry("log", "log", K, (INC,), _fixed(UNK), "x > 0", BV + "§3.1.5 logarithm" + FROM_MEMORY),
    Entry("abs", "abs", V, (BYS,), _even, "all reals", BV + "§3.1.5 norms (|x| on R)" + FROM_MEMORY),
    Entry("maximum", "maximum", V, (INC,), _maximum, "all reals",
          BV + "§3.2.3 pointwise maximum; §3.1.5 max function" + FROM_MEMORY, variadic=True),
    Entry("minimum", "minimum", K, (INC,), _minimum, "all reals",
          BV + "§3.2.3 pointwise minimum of concave functions" + FROM_MEMORY, variadic=True),
    # sympy Pow(g, p) with a constant number p: the domain is where g**p is real
    Entry("pow:0", "pow:0", C, (ANY, PAR), _fixed(POS), "where g is defined", "from memory (g^0 = 1)"),
    Entry("pow:1", "pow:1", A, (INC, PAR), _same, "all reals", "from memory (g^1 = g)"),
    Entry("pow:even", "pow:even", V, (BYS, PAR), _even, "all reals",
          BV + "§3.1.5 powers |x|^p, p >= 1" + FROM_MEMORY),
    Entry("pow:odd/nonneg", "pow:odd", V, (INC, PAR), _same, "all reals; convex where x >= 0",
          _POWERS, when=NN),
    Entry("pow:odd/nonpos", "pow:odd", K, (INC, PAR), _same, "all reals; concave where x <= 0",
          _POWERS + _MIRROR, when=NP),
    Entry("pow:frac", "pow:frac", K, (INC, PAR), _root, "x >= 0", _POWERS),
    Entry("pow:gt1", "pow:gt1", V, (INN, PAR), _root, "x >= 0", _POWERS),
    Entry("pow:neg-even/pos", "pow:neg-even", V, (DEC, PAR), _fixed(POS), "x != 0", _POWERS, when=POS),
    Entry("pow:neg-even/neg", "pow:neg-even", V, (INC, PAR), _fixed(POS), "x != 0",
          _POWERS + _MIRROR, when=NEG),
    Entry("pow:neg-odd/pos", "pow:neg-odd", V, (DEC, PAR), _same, "x != 0", _POWERS, when=POS),
    Entry("pow:neg-odd/neg", "pow:neg-odd", K, (DEC, PAR), _same, "x != 0", _POWERS + _MIRROR, when=NEG),
    Entry("pow:neg-frac", "pow:neg-frac", V, (DEC, PAR), _fixed(POS), "x > 0", _POWERS),
    Entry("pow:symbolic", "pow:symbolic", U, (NONE, PAR), _fixed(UNK), "unknown", "from memory",
          reason="exponent is not a known real number"),
    Entry("pow:variable-exponent", "pow:variable-exponent", U, (NONE, NONE), _fixed(UNK), "unknown",
          "from memory", reason="power with a non-constant base and a non-constant exponent"),
    # sympy Pow(c, g) with a constant base: c^g = exp(g log c)
    Entry("exp-base:gt1", "exp-base:gt1", V, (PAR, INC), _fixed(POS), "all reals",
          BV + "§3.1.5 exponential e^ax with a = log c > 0" + FROM_MEMORY),
    Entry("exp-base:lt1", "exp-base:lt1", V, (PAR, DEC), _fixed(POS), "all reals",
          BV + "§3.1.5 exponential e^ax with a = log c < 0" + FROM_MEMORY),
    Entry("exp-base:pos", "exp-base:pos", V, (PAR, NONE), _fixed(POS), "all reals",
          BV + "§3.1.5 exponential e^ax, a = log c of unknown sign" + FROM_MEMORY),
    Entry("exp-base:other", "exp-base:other", U, (PAR, NONE), _fixed(UNK), "unknown", "from memory",
          reason="power with a non-constant exponent and a base not known to be positive"),
    # affine structure
    Entry("vsum", "vsum", A, (INC,), _same, "all", _AFFINE_MAP),
    Entry("mean", "mean", A, (INC,), _same, "all", _AFFINE_MAP),
    Entry("cumsum", "cumsum", A, (INC,), _same, "all", _AFFINE_MAP),
    Entry("trace", "trace", A, (INC,), _same, "square matrices", _AFFINE_MAP),
    Entry("reshape", "reshape", A, (INC,), _same, "all", _AFFINE_MAP),
    Entry("transpose", "transpose", A, (INC,), _same, "all", _AFFINE_MAP),
    Entry("index", "index", A, (INC, PAR), _same, "all", _AFFINE_MAP),
    Entry("stack", "stack", A, (INC,), _join, "all", _AFFINE_MAP, variadic=True),
    Entry("diff", "diff", A, (NONE,), _fixed(UNK), "all", _AFFINE_MAP),
    Entry("matmul", "matmul", A, (SCL, SCL), _product, "conforming shapes",
          BV + "§3.2.1 nonnegative weighted sums; §3.2.2 affine maps" + FROM_MEMORY),
    # scalar atoms
    Entry("entr", "entr", K, (NONE,), _fixed(UNK), "x >= 0", BV + "§3.1.5 negative entropy x log x is convex"
          + FROM_MEMORY),
    Entry("rel_entr", "rel_entr", V, (NONE, DEC), _fixed(UNK), "x >= 0, y > 0",
          BV + "§3.2.6 perspective of -log (relative entropy)" + FROM_MEMORY),
    Entry("kl_div", "kl_div", V, (NONE, NONE), _fixed(NN), "x >= 0, y > 0",
          BV + "§3.2.6 perspective of -log, plus an affine term" + FROM_MEMORY),
    Entry("logistic", "logistic", V, (INC,), _fixed(POS), "all reals",
          BV + "§3.1.5 log-sum-exp of (0, x)" + FROM_MEMORY),
    Entry("huber", "huber", V, (BYS, PAR), _fixed(NN), "all reals",
          "from memory (B&V 2004 §6.1.2 robust penalty)"),
    Entry("huber:bad-threshold", "huber:bad-threshold", U, (NONE, PAR), _fixed(UNK), "unknown", "from memory",
          reason="threshold of 'huber' is not known to be a nonnegative constant"),
    Entry("inv_pos", "inv_pos", V, (DEC,), _fixed(POS), "x > 0", _POWERS),
    Entry("pos", "pos", V, (INC,), _pos_part, "all reals", BV + "§3.2.3 max of affine functions" + FROM_MEMORY),
    Entry("neg", "neg", V, (DEC,), _neg_part, "all reals", BV + "§3.2.3 max of affine functions" + FROM_MEMORY),
    Entry("log1p", "log1p", K, (INC,), _same, "x > -1", BV + "§3.1.5 logarithm; §3.2.2 affine argument"
          + FROM_MEMORY),
    Entry("xexp", "xexp", V, (INN,), _root, "x >= 0", "from memory (second derivative (x + 2) e^x > 0)"),
    Entry("power:0", "power:0", C, (ANY, PAR), _fixed(POS), "all reals", "from memory (x^0 = 1)"),
    Entry("power:1", "power:1", A, (INC, PAR), _same, "all reals", "from memory (x^1 = x)"),
    Entry("power:even", "power:even", V, (BYS, PAR), _even, "all reals",
          BV + "§3.1.5 powers |x|^p, p >= 1" + FROM_MEMORY),
    Entry("power:gt1", "power:gt1", V, (INN, PAR), _root, "x >= 0", _POWERS),
    Entry("power:frac", "power:frac", K, (INC, PAR), _root, "x >= 0", _POWERS),
    Entry("power:neg", "power:neg", V, (DEC, PAR), _fixed(POS), "x > 0", _POWERS),
    Entry("power:symbolic", "power:symbolic", U, (NONE, PAR), _fixed(UNK), "unknown", "from memory",
          reason="exponent of 'power' is not a known real number"),
    # vector and matrix atoms
    Entry("pnorm", "pnorm", V, (BYS, PAR), _even, "all", BV + "§3.1.5 norms" + FROM_MEMORY),
    Entry("pnorm:bad-p", "pnorm:bad-p", U, (NONE, PAR), _fixed(NN), "all", BV + "§3.1.5 norms need p >= 1"
          + FROM_MEMORY, reason="'norm' with p < 1 or p not a known number is not a convex norm"),
    Entry("sigma_max", "sigma_max", V, (NONE,), _fixed(NN), "all",
          BV + "§3.2.3 maximum singular value" + FROM_MEMORY),
    Entry("norm_nuc", "norm_nuc", V, (NONE,), _fixed(NN), "all", "from memory (a norm; B&V 2004 §3.1.5 norms)"),
    Entry("sum_squares", "sum_squares", V, (BYS,), _even, "all", BV + "§3.1.5 norms (squared)" + FROM_MEMORY),
    Entry("quad_form:psd", "quad_form:psd", V, (NONE, PAR), _fixed(NN), "all",
          "from memory (B&V 2004 §3.1.4: x'Px is convex iff P is PSD)"),
    Entry("quad_form:nsd", "quad_form:nsd", K, (NONE, PAR), _fixed(NP), "all",
          "from memory (B&V 2004 §3.1.4: x'Px is concave iff P is NSD)"),
    Entry("quad_form:in-P", "quad_form:in-P", A, (PAR, NONE), _fixed(UNK), "all",
          "from memory (x'Px is linear in P)"),
    Entry("quad_form:unknown", "quad_form:unknown", U, (NONE, NONE), _fixed(UNK), "all", "from memory",
          reason="matrix of the quadratic form not known to be PSD"),
    Entry("quad_form:both", "quad_form:both", U, (NONE, NONE), _fixed(UNK), "all", "from memory",
          reason="quadratic form with a non-constant matrix and a non-constant vector"),
    Entry("quad_over_lin", "quad_over_lin", V, (BYS, DEC), _fixed(NN), "y > 0",
          BV + "§3.1.5 quadratic-over-linear" + FROM_MEMORY),
    Entry("matrix_frac", "matrix_frac", V, (NONE, NONE), _fixed(NN), "P positive definite",
          BV + "§3.1.7 matrix fractional function" + FROM_MEMORY),
    Entry("log_sum_exp", "log_sum_exp", V, (INC,), _fixed(UNK), "all", BV + "§3.1.5 log-sum-exp" + FROM_MEMORY),
    Entry("geo_mean", "geo_mean", K, (INC,), _root, "x >= 0", BV + "§3.1.5 geometric mean" + FROM_MEMORY),
    Entry("harmonic_mean", "harmonic_mean", K, (INC,), _fixed(POS), "x > 0",
          "from memory (n / sum(1/x_i); B&V 2004 §3.1.5 style example)"),
    Entry("vmax", "vmax", V, (INC,), _same, "all", BV + "§3.1.5 max function" + FROM_MEMORY),
    Entry("vmin", "vmin", K, (INC,), _same, "all", BV + "§3.2.3 pointwise minimum" + FROM_MEMORY),
    Entry("lambda_max", "lambda_max", V, (NONE,), _fixed(UNK), "symmetric",
          BV + "§3.2.3 maximum eigenvalue of a symmetric matrix" + FROM_MEMORY),
    Entry("lambda_min", "lambda_min", K, (NONE,), _fixed(UNK), "symmetric",
          BV + "§3.2.3 (minimum eigenvalue, mirror of the maximum)" + FROM_MEMORY),
    Entry("log_det", "log_det", K, (NONE,), _fixed(UNK), "X positive definite",
          BV + "§3.1.5 log-determinant" + FROM_MEMORY),
    Entry("sum_largest", "sum_largest", V, (INC, PAR), _weak_same, "all",
          BV + "§3.2.3 sum of the r largest components" + FROM_MEMORY),
    Entry("sum_smallest", "sum_smallest", K, (INC, PAR), _weak_same, "all",
          BV + "§3.2.3 (sum of the r smallest, mirror)" + FROM_MEMORY),
    Entry("tv", "tv", V, (NONE,), _fixed(NN), "all", BV + "§3.2.2 norm of an affine map" + FROM_MEMORY),
    Entry("nnz", "nnz", U, (NONE,), _fixed(NN), "all", "from memory (cardinality is not convex)",
          reason="count of nonzeros is not convex"),
    Entry("bad-parameter", "bad-parameter", U, (NONE,), _fixed(UNK), "unknown", "from memory",
          reason="a parameter of this function is not a constant", variadic=True),
)

FAMILIES: dict[str, tuple[Entry, ...]] = {}
for _entry in TABLE:
    FAMILIES[_entry.family] = FAMILIES.get(_entry.family, ()) + (_entry,)

# Functions whose family does not depend on a parameter value.
FIXED: dict[type, str] = {
    sympy.exp: "exp", sympy.log: "log", sympy.Abs: "abs", sympy.Max: "maximum", sympy.Min: "minimum",
    F.vsum: "vsum", F.mean: "mean", F.cumsum: "cumsum", F.trace: "trace", F.reshape: "reshape",
    F.transpose: "transpose", F.stack: "stack", F.diff: "diff", F.matmul: "matmul", F.entr: "entr",
    F.rel_entr: "rel_entr", F.kl_div: "kl_div", F.logistic: "logistic", F.inv_pos: "inv_pos",
    F.pos: "pos", F.neg: "neg", F.log1p: "log1p", F.xexp: "xexp", F.sigma_max: "sigma_max",
    F.norm_nuc: "norm_nuc", F.sum_squares: "sum_squares", F.quad_over_lin: "quad_over_lin",
    F.matrix_frac: "matrix_frac", F.log_sum_exp: "log_sum_exp", F.geo_mean: "geo_mean",
    F.harmonic_mean: "harmonic_mean", F.vmax: "vmax", F.vmin: "vmin", F.lambda_max: "lambda_max",
    F.lambda_min: "lambda_min", F.log_det: "log_det", F.tv: "tv", F.nnz: "nnz",
    # a constant index / count needs no value, only constancy (checked as a PARAM)
    F.index: "index", F.sum_largest: "sum_largest", F.sum_smallest: "sum_smallest",
}
_SYMPY_LABELS = {sympy.exp: "exp", sympy.log: "log", sympy.Abs: "abs", sympy.Max: "maximum",
                 sympy.Min: "minimum"}


@dataclass(frozen=True)
class ArgInfo:
    """What the classifier may know about one argument: its expression, constancy and sign."""

    expr: sympy.Basic
    constant: bool
    sign: Sign


class Exponent(enum.Enum):
    ZERO = "0"
    ONE = "1"
    EVEN = "even"
    ODD = "odd"
    FRAC = "frac"          # 0 < p < 1
    GT1 = "gt1"            # p > 1, not an integer
    NEG_EVEN = "neg-even"
    NEG_ODD = "neg-odd"
    NEG_FRAC = "neg-frac"  # p < 0, not an integer
    SYMBOLIC = "symbolic"


def real_number(expr: sympy.Basic) -> sympy.Number | None:
    """``expr`` if it is a finite real sympy number (Integer, Rational, Float), else None."""
    if isinstance(expr, (sympy.Integer, sympy.Rational, sympy.Float)) and expr.is_finite:
        return expr
    return None


def _integer_parity(p: sympy.Number) -> int | None:
    """0 or 1 for an even or odd integer, None for a non-integer; exact, never builds big numbers."""
    if isinstance(p, sympy.Rational):  # includes Integer
        return None if p.q != 1 else p.p % 2
    sign, man, exp, _ = p._mpf_  # Float: value = (-1)^sign * man * 2^exp with man odd (or zero)
    if man == 0:
        return 0
    if exp < 0:
        return None
    return 0 if exp >= 1 else man % 2


def _compare(p: sympy.Number, q: int) -> int:
    return int(bool(p > q)) - int(bool(p < q))


def classify_exponent(p: sympy.Basic) -> Exponent:
    num = real_number(p)
    if num is None:
        return Exponent.SYMBOLIC
    parity = _integer_parity(num)
    if num.is_zero:
        return Exponent.ZERO
    if num.is_positive:
        if _compare(num, 1) == 0:
            return Exponent.ONE
        if parity is None:
            return Exponent.FRAC if _compare(num, 1) < 0 else Exponent.GT1
        return Exponent.EVEN if parity == 0 else Exponent.ODD
    if parity is None:
        return Exponent.NEG_FRAC
    return Exponent.NEG_EVEN if parity == 0 else Exponent.NEG_ODD


_POWER_FAMILY = {  # the DSL's power(x, p): non-even p > 1 lives on x >= 0
    Exponent.ZERO: "power:0", Exponent.ONE: "power:1", Exponent.EVEN: "power:even",
    Exponent.ODD: "power:gt1", Exponent.GT1: "power:gt1", Exponent.FRAC: "power:frac",
    Exponent.NEG_EVEN: "power:neg", Exponent.NEG_ODD: "power:neg", Exponent.NEG_FRAC: "power:neg",
    Exponent.SYMBOLIC: "power:symbolic",
}


def _pow_family(args: Sequence[ArgInfo]) -> str:
    base, exponent = args
    if exponent.constant and (not base.constant or real_number(exponent.expr) is not None):
        return "pow:" + classify_exponent(exponent.expr).value
    if base.constant:
        num = real_number(base.expr)
        if num is not None and num.is_positive and _compare(num, 1) != 0:
            return "exp-base:gt1" if _compare(num, 1) > 0 else "exp-base:lt1"
        return "exp-base:pos" if base.sign is Sign.POSITIVE else "exp-base:other"
    return "pow:variable-exponent"


def _pnorm_family(args: Sequence[ArgInfo]) -> str:
    p = args[1].expr
    if p is sympy.oo:
        return "pnorm"
    num = real_number(p)
    return "pnorm" if num is not None and _compare(num, 1) >= 0 else "pnorm:bad-p"


def _huber_family(args: Sequence[ArgInfo]) -> str:
    return "huber" if args[1].sign.is_nonneg else "huber:bad-threshold"


def family_of(node: sympy.Basic, args: Sequence[ArgInfo],
              psd: Callable[[sympy.Basic], Curvature]) -> str | None:
    """The catalogue family for ``node`` (None when the function is not in the catalogue).

    ``psd(P)`` answers CONVEX for a matrix known PSD, CONCAVE for NSD, UNKNOWN otherwise.
    """
    func = node.func
    if func is sympy.Pow:
        return _pow_family(args)
    if func is F.power:
        return _POWER_FAMILY[classify_exponent(args[1].expr)]
    if func is F.pnorm:
        return _pnorm_family(args)
    if func is F.huber:
        return _huber_family(args)
    if func is F.quad_form:
        x, p = args
        if p.constant:
            kind = psd(p.expr)
            if kind is Curvature.CONVEX:
                return "quad_form:psd"
            if kind is Curvature.CONCAVE:
                return "quad_form:nsd"
        if x.constant:
            return "quad_form:in-P"
        return "quad_form:unknown" if p.constant else "quad_form:both"
    return FIXED.get(func) or getattr(func, "declared_family", None)


_DECLARED_CURVATURE = {"convex": V, "concave": K, "affine": A}
_DECLARED_MONO = {"increasing": INC, "decreasing": DEC, "nonmonotone": NONE}
_DECLARED_SIGN = {"positive": POS, "nonnegative": NN, "nonpositive": NP, "negative": NEG, "unknown": UNK}


def declare_atom(name: str, curvature: str, sign: str = "unknown", monotonicity: Sequence[str] = ()) -> type:
    """A function class for a project helper whose curvature the project declares (pyproject.toml).

    The declaration is the project's assertion, not a proof of ours; findings that rest on it say
    so through the derivation (rule "atom", source "declared in the project configuration").
    """
    family = f"declared:{name}"
    if family not in FAMILIES:
        monos = tuple(_DECLARED_MONO[m] for m in monotonicity) or (NONE,)
        entry = Entry(family, family, _DECLARED_CURVATURE[curvature], monos, _fixed(_DECLARED_SIGN[sign]),
                      "as declared", "declared in the project configuration ([tool.optlint.atoms])",
                      variadic=len(monos) == 1)
        FAMILIES[family] = (entry,)
    cls = _DECLARED_CLASSES.get(name)
    if cls is None:
        cls = type(name.replace(".", "_"), (F.ModelFunction,), {"declared_family": family, "dsl_name": name})
        _DECLARED_CLASSES[name] = cls
    return cls


_DECLARED_CLASSES: dict[str, type] = {}


def _number_text(num: sympy.Number) -> str:
    if isinstance(num, sympy.Rational) and (abs(num.p) > 10**15 or num.q > 10**15):
        return "<large number>"
    return sympy.sstr(num, full_prec=False)


def label_of(node: sympy.Basic) -> str:
    """How the modeller wrote the function: the DSL name, or the Python spelling for sympy's own."""
    func = node.func
    if func is sympy.Pow:
        exponent = real_number(node.args[1])
        if exponent is None:
            base = real_number(node.args[0])
            return f"{_number_text(base)}**" if base is not None else "**"
        if exponent == sympy.Rational(1, 2):
            return "sqrt"
        return "square" if exponent == 2 else f"**{_number_text(exponent)}"
    if isinstance(func, type) and issubclass(func, F.ModelFunction):
        return func.dsl_name
    return _SYMPY_LABELS.get(func, getattr(func, "__name__", str(func)))
