"""Second-order proofs of convexity for small expressions the composition rules cannot decide.

Role: ``prove(expr, model, facts)`` scalarises ``expr`` (optlint.evidence.scalar) and shows it
convex by the second-order condition (B&V 2004 §3.1.4, from memory): a twice-differentiable f on an
open convex set is convex iff its Hessian is positive semidefinite there.
- Constant Hessian (a quadratic after expansion, up to ``MAX_QUADRATIC`` scalars): eigenvalues by
  numpy.linalg.eigvalsh decide; eigenvalues too close to zero to call are settled exactly by sympy
  on the exact rational Hessian.
- Otherwise (up to ``MAX_SYMBOLIC`` scalars): every principal minor must be provably >= 0 by sympy's
  ``is_nonnegative`` under the symbols' sign assumptions (the principal-minor test for PSD); a
  ``None`` is no proof.

Invariants (soundness first; any doubt returns None):
- The scalar function must BE the model expression (or each entry of it, see
  ``_instance_is_exact``): no data of unknown value or shape, no symbolic index (scalarisation
  notes); Floats are read as the exact binary rationals they are.
- Domain: all of R^n, or the declared sign orthant D (closed for nonnegative, open for positive).
  Only Add, Mul, Pow, exp, log are accepted (smooth where defined); every log argument and every
  base of a negative or fractional power must be provably positive on D, so f is C^2 on an open
  set containing D; a PSD Hessian on D gives convexity on D's interior and, f being continuous on
  D, on D itself (the chord inequality passes to limits).
- Sizes are capped (scalars, nodes, minors, the degree of a minor over a common denominator, the
  bit length of its exact coefficients, and the rationals in exponents, which sympy's polynomial
  algebra turns into degrees), so the cost per expression is bounded.
"""

from __future__ import annotations

import itertools
from typing import Any

import numpy
import sympy

from .scalar import Unsupported, scalarise
from optlint.lift import preorder

MAX_SYMBOLIC = 3
MAX_QUADRATIC = 16
MAX_NODES = 160
MAX_MINOR_NODES = 600
MAX_MINOR_ENTRY_NODES = 240
MAX_COEFFICIENT_BITS = 512   # the fixtures' minors need at most 106 (exact binary rationals of floats)
_EIG_RTOL = 1e-9
REFERENCE = "B&V 2004 §3.1.4 (second-order conditions)"


def _nodes(expr) -> int:
    return sum(1 for _ in preorder(expr))


def _exact(expr):
    """Floats as the exact binary rationals the program computes with (no rounding in the proof)."""
    floats = {f: sympy.Rational(float(f)) for f in expr.atoms(sympy.Float)}
    return expr.xreplace(floats) if floats else expr


def _smooth_on_domain(f) -> bool:
    for node in preorder(f):
        if isinstance(node, (sympy.Symbol, sympy.Number)) or getattr(node, "is_NumberSymbol", False):
            continue
        if isinstance(node, (sympy.Add, sympy.Mul)) or node.func is sympy.exp:
            continue
        if node.func is sympy.log:
            if node.args[0].is_positive is not True:
                return False
            continue
        if isinstance(node, sympy.Pow):
            base, e = node.args
            if e.free_symbols:
                if base.is_positive is not True:  # b**g(x) = exp(g log b) needs b > 0
                    return False
                continue
            if not (e.is_Integer and e >= 0) and base.is_positive is not True:
                return False
            continue
        return False
    return True


def _constant_psd(h: sympy.Matrix) -> tuple[bool, float] | None:
    values = numpy.array(h.tolist(), dtype=float)
    eig = numpy.linalg.eigvalsh(values)
    scale = max(float(numpy.max(numpy.abs(eig))), 1.0)
    low = float(eig[0])
    if low > _EIG_RTOL * scale:
        return True, low
    if low < -_EIG_RTOL * scale:
        return False, low
    exact = h.is_positive_semidefinite  # rational entries: decided exactly
    return (bool(exact), low) if exact is not None else None


def degree_bound(expr) -> int:
    """An upper bound of the total degree of ``expr`` brought over a common denominator (numerator
    and denominator together), each symbol and each non-polynomial part counted as one generator."""
    memo: dict = {}
    stack = [(expr, False)]
    while stack:  # post-order, (numerator degree, denominator degree) per node
        node, ready = stack.pop()
        if node in memo:
            continue
        if isinstance(node, sympy.Number) or getattr(node, "is_NumberSymbol", False):
            memo[node] = (0, 0)
            continue
        if isinstance(node, sympy.Symbol) or not isinstance(node, (sympy.Add, sympy.Mul, sympy.Pow)):
            memo[node] = (1, 0)
            continue
        if not ready:
            stack.append((node, True))
            stack.extend((a, False) for a in node.args)
            continue
        kids = [memo[a] for a in node.args]
        if isinstance(node, sympy.Mul):
            memo[node] = (sum(k[0] for k in kids), sum(k[1] for k in kids))
        elif isinstance(node, sympy.Add):
            den = sum(k[1] for k in kids)
            memo[node] = (max(k[0] for k in kids) + den, den)
        else:
            (num, den), e = kids[0], node.exp
            if not e.is_Integer:
                memo[node] = (1, 1)  # a generator of its own (b^(p/q), b^g(x)), on either side
            else:
                k = abs(int(e))
                memo[node] = (k * num, k * den) if e >= 0 else (k * den, k * num)
    num, den = memo[expr]
    return num + den


def _coefficient_bits(expr) -> int:
    """The longest numerator or denominator, in bits, among the exact rationals of expr."""
    return max((max(abs(r.p).bit_length(), r.q.bit_length()) for r in expr.atoms(sympy.Rational)), default=0)


def _minors_nonnegative(h: sympy.Matrix) -> bool:
    n = h.shape[0]
    for k in range(1, n + 1):
        for rows in itertools.combinations(range(n), k):
            sub = h.extract(list(rows), list(rows))
            if sum(_nodes(e) for e in sub) > MAX_MINOR_ENTRY_NODES:
                return False  # a determinant of large entries, or cancelling one, can take a minute
            m = sub.det(method="berkowitz") if k > 1 else sub[0, 0]
            if _nodes(m) > MAX_MINOR_NODES or degree_bound(m) > MAX_MINOR_DEGREE:
                return False  # factoring a polynomial of degree 40 in 3 variables takes minutes
            if _coefficient_bits(m) > MAX_COEFFICIENT_BITS:
                return False  # 1e308 read exactly is a 1,024-bit integer: factoring took 12 s in primality tests
            m = sympy.factor(sympy.cancel(sympy.together(m)))
            if m.is_nonnegative is not True:
                return False
    return True


def _domain_symbols(sc) -> tuple[dict, str]:
    out, parts = {}, []
    for s, label, sign, strict in zip(sc.symbols, sc.labels, sc.signs, sc.strict):
        if sign > 0:
            out[s] = sympy.Symbol(s.name, positive=True) if strict else sympy.Symbol(s.name, nonnegative=True)
            parts.append(f"{s.name} {'>' if strict else '>='} 0")
        elif sign < 0:
            out[s] = sympy.Symbol(s.name, negative=True) if strict else sympy.Symbol(s.name, nonpositive=True)
            parts.append(f"{s.name} {'<' if strict else '<='} 0")
        else:
            out[s] = sympy.Symbol(s.name, real=True)
    return out, ("all of R^%d" % len(sc.symbols)) if not parts else "the orthant " + ", ".join(parts)


def _shape(v, model):
    decl = model.declarations.get(v) if model is not None else None
    if decl is None or decl.shape is None:
        return None
    try:
        dims = tuple(int(s) for s in decl.shape)
    except (TypeError, ValueError):
        return None
    return dims if all(d >= 1 for d in dims) else None


def _instance_is_exact(expr, model, facts) -> bool:
    """Whether the scalar instance proves the expression itself, whatever the unknown sizes are.

    With every variable's shape known, scalarisation is exact. A variable of unknown shape is
    accepted only in a purely elementwise expression (Add, Mul, Pow, exp, log, and the variable
    itself or one entry of it at a constant index): each entry of such an expression is the scalar
    instance composed with a coordinate projection, and convexity survives affine maps
    (B&V 2004 §3.2.2, from memory), whatever the sizes.
    """
    from optlint.calculus import functions as F

    variables = expr.free_symbols & facts.variables
    if all(_shape(v, model) is not None for v in variables):
        return True
    stack = [expr]
    while stack:
        node = stack.pop()
        if node in facts.variables or isinstance(node, sympy.Number) or getattr(node, "is_NumberSymbol", False):
            continue
        if isinstance(node, F.index):
            if node.args[0] not in facts.variables or not node.args[1].is_Integer:
                return False
            continue
        if isinstance(node, (sympy.Add, sympy.Mul, sympy.Pow)) or node.func in (sympy.exp, sympy.log):
            stack.extend(node.args)
            continue
        return False
    return True


MAX_EXPONENT = 8
MAX_EXPONENT_DENOMINATOR = 64
MAX_MINOR_DEGREE = 24


def _exponents_small(f) -> bool:
    """Every rational in an exponent (of a power, or inside exp) has a small numerator and denominator.

    sympy's polynomial algebra (together, cancel, factor) takes exp(c·x) with c = p/q as
    (exp(x/q))^p and x^(p/q) as (x^(1/q))^p and builds a dense polynomial of degree p in that
    generator. A Float such as 0.3 is read exactly as 5404319552844595/2^54, so a minor with
    exp(0.3·x) would need ~10^16 coefficients: memory is exhausted long before an answer."""
    for node in preorder(f):
        if isinstance(node, sympy.Pow):
            spot = node.exp
        elif node.func is sympy.exp:
            spot = node.args[0]
        else:
            continue
        for r in spot.atoms(sympy.Rational):
            if r.q > MAX_EXPONENT_DENOMINATOR or abs(r.p) > MAX_EXPONENT * MAX_EXPONENT_DENOMINATOR:
                return False
    return True


def prove_convex(expr, model, facts) -> dict[str, Any] | None:
    """Evidence that ``expr`` is convex on its declared domain, or None (no proof)."""
    if not isinstance(expr, sympy.Basic) or not _instance_is_exact(expr, model, facts):
        return None
    try:
        sc = scalarise(expr, model, facts)
    except Unsupported:
        return None
    if sc.data or sc.notes or not sc.symbols or len(sc.symbols) > MAX_QUADRATIC:
        return None
    mapping, domain = _domain_symbols(sc)
    f = _exact(sc.expr.xreplace(mapping))  # Piecewise domain guards settle under the signs here
    if _nodes(f) > MAX_NODES * 4 or not _smooth_on_domain(f):
        return None
    if any(isinstance(n, sympy.Pow) and n.exp.is_Number and abs(n.exp) > MAX_EXPONENT
           for n in preorder(f)):
        return None  # expanding or differentiating (g)**1000 costs memory, not insight
    if not _exponents_small(f):
        return None
    symbols = [mapping[s] for s in sc.symbols]
    # Poly expands: on a degree-16 polynomial in 3 variables that alone takes many seconds
    quadratic = (degree_bound(f) <= 4 and f.is_polynomial(*symbols)
                 and sympy.Poly(f, *symbols).total_degree() <= 2)
    if not quadratic and (len(symbols) > MAX_SYMBOLIC or _nodes(f) > MAX_NODES):
        return None
    h = sympy.hessian(sympy.expand(f) if quadratic else f, symbols)
    evidence: dict[str, Any] = {
        "method": "second-order",
        "reference": REFERENCE,
        "expression": str(f),
        "variables": [s.name for s in symbols],
        "variable_map": {s.name: label for s, label in zip(sc.symbols, sc.labels)},
        "domain": domain,
    }
    if all(e.is_Number for e in h):
        decided = _constant_psd(h)
        if decided is None or not decided[0]:
            return None
        evidence.update(hessian="constant", min_eigenvalue=decided[1],
                        quadratic_form=[[float(e) / 2 for e in row] for row in h.tolist()])
        return evidence
    if len(symbols) > MAX_SYMBOLIC or not _minors_nonnegative(h):
        return None
    evidence["hessian"] = "symbolic: every principal minor is nonnegative on the domain"
    return evidence
