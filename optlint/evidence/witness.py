"""Witness search: two concrete points that show an expression is not convex (or not affine).

Role: for a failing judgement, scalarise the expression it judges and look for points a, b of
its domain and t in (0, 1) with f(t·a + (1−t)·b) > t·f(a) + (1−t)·f(b) (B&V 2004 §3.1.1, the
definition of convexity, from memory). The search is seeded and deterministic: structured starts
(origin, coordinate axes, the all-ones direction, signs respected), random dyadic points, and
coordinate lines through the points where an affine piece of the expression vanishes, at steps
from 2^-10 to 2^7 (a cusp |r|^p shows only very near r = 0, a cap min(c, |r|) only far from the
origin), so every coordinate prints exactly and a reader can recompute the sentence by hand.
Data of unknown value are tried at a few values (whole numbers for integer data); values that make
the instance undefined (a division by zero) are skipped, and the values used are reported. A
vector-valued constraint is tested entry by entry (or, for its set, through its largest entry).

The evidence dict (``evidence.witness``):
- ``expression``: ``str()`` of the scalar sympy function tested, over ``variables`` (x_0, x_1, ...);
  ``variable_map`` says which model component each is; ``sizes`` the dimensions used;
- ``a``, ``b``, ``t``, ``f_a``, ``f_b``, ``f_t`` (``f_t`` = f(t·a + (1−t)·b));
- ``kind``: "function" — f_t > t·f_a + (1−t)·f_b (f is not convex);
  "not-affine" — f_t differs from t·f_a + (1−t)·f_b (f is not affine);
  "set" — for a constraint g <= 0: f_a <= 0, f_b <= 0 and f_t > 0, so a and b are feasible and
  the point between them is not (the feasible set is not convex);
- ``tested``: which function it is ("the objective", "minus the objective" for a maximisation,
  "lhs - rhs of the constraint", ...); ``data``: values given to data of unknown value (absent
  when none were needed); ``notes``: other instantiations (symbolic indices, unknown shapes).
"""

from __future__ import annotations

import math

import numpy
import sympy

from .numeric import evaluate
from .scalar import Scalarised, Unsupported, scalarise, substitute
from .second_order import degree_bound
from optlint.lift import preorder

SEED = 20261201
_RANDOM_POINTS = 600
_DATA_TRIALS = 6


def _dyadic(v: float, step: float = 8.0) -> float:
    return round(v * step) / step


_FINE = 1024.0  # roots are placed on a grid of 2^-10, so a point beside a cusp is exact and short
_LINE_STEPS = (0.0,) + tuple(sgn * 2.0 ** j for j in range(-10, 8) for sgn in (1.0, -1.0))
_MAX_LINES = 16
_MAX_POWER = 1024
_MAX_ROOT_DEGREE = 8  # a piece with a higher power is not looked at for a root (it is not affine anyway)


def _affine_root(node, index) -> tuple[int, float] | None:
    """For an affine piece c·x + d (any number of variables): the coordinate with the largest
    coefficient and where the piece vanishes along it, the others at 0."""
    free = node.free_symbols
    if not free or not free <= set(index):
        return None
    simple = _linear_terms(node)
    if simple is not None:  # c_1 x_1 + ... + d as written: no Poly needed (same answer, cheaper)
        return _root_along_largest(*simple, index)
    if not node.is_polynomial(*free):
        return None
    if any(n.is_Pow and n.exp.is_Number and abs(n.exp) > _MAX_ROOT_DEGREE for n in preorder(node)):
        return None  # Poly is dense: x**10**10 would ask for 10**10 coefficients (a fuzzed model ran out of memory)
    if degree_bound(node) > 1:  # node is a polynomial in its variables only: the bound is its degree's
        return None  # not affine as written; expanding (18-term sum)**6 into 134,596 terms took minutes (fuzzed)
    try:
        poly = sympy.Poly(node, *sorted(free, key=str))
    except sympy.PolynomialError:
        return None
    if poly.total_degree() != 1:
        return None
    terms = dict(poly.terms())
    const = float(terms.get((0,) * len(poly.gens), 0))
    coeffs = {}
    for monom, c in terms.items():
        if sum(monom) == 1:
            coeffs[poly.gens[monom.index(1)]] = float(c)
    return _root_along_largest(const, coeffs, index)


def _root_along_largest(const: float, coeffs: dict, index) -> tuple[int, float]:
    x = max(coeffs, key=lambda s: abs(coeffs[s]))
    return index[x], _dyadic(-const / coeffs[x], _FINE)


def _linear_terms(node):
    """(d, {x: c}) when every term of the sum is a number, a symbol or a number times a symbol
    (coefficients in the order Poly lists its generators: by name), else None."""
    const, coeffs = 0.0, {}
    for term in node.args:
        if term.is_Number:
            const += float(term)
        elif term.is_Symbol:
            coeffs[term] = coeffs.get(term, 0.0) + 1.0
        elif term.is_Mul and len(term.args) == 2 and term.args[0].is_Number and term.args[1].is_Symbol:
            coeffs[term.args[1]] = coeffs.get(term.args[1], 0.0) + float(term.args[0])
        else:
            return None
    if not coeffs or any(c == 0.0 for c in coeffs.values()):
        return None
    return const, {x: coeffs[x] for x in sorted(coeffs, key=str)}


def _roots(expr, symbols) -> list[tuple[int, float]]:
    """Where an affine piece of the expression vanishes: curvature changes hide there (a bump
    exp(-(x - 60)^2) is non-convex only near x = 60, a cusp |r|^p or a cap min(c, |r|) near r = 0)."""
    out: list[tuple[int, float]] = []
    index = {s: k for k, s in enumerate(symbols)}
    for node in preorder(expr):
        if not isinstance(node, sympy.Add) or len(node.args) > 64:
            continue
        found = _affine_root(node, index)
        if found is not None and found not in out:
            out.append(found)
        if len(out) >= 64:
            break
    return out


def _lines(sc: Scalarised, roots) -> list[numpy.ndarray]:
    """Points on coordinate lines through the first roots, at steps 2^-10 .. 2^7 on either side:
    a cusp shows at tiny steps, a cap or a saturation at large ones (B&V 2004 §3.1.1: f is convex
    iff it is convex on every line, from memory)."""
    n = len(sc.symbols)
    out = []
    for k, r in roots[:_MAX_LINES]:
        line = numpy.zeros((len(_LINE_STEPS), n))
        line[:, k] = r + numpy.array(_LINE_STEPS)
        out.append(line)
    return out


def _points(sc: Scalarised, rng, roots) -> numpy.ndarray:
    n = len(sc.symbols)
    rows = [numpy.zeros(n)]
    for k, r in roots:
        for base in (numpy.zeros(n), numpy.full(n, r)):
            p = base.copy()
            p[k] = r
            rows.append(p)
    eye = numpy.eye(n)
    for c in (1.0, -1.0, 2.0, -2.0, 0.5, -0.5, 4.0, -4.0):
        rows.extend(c * eye[: min(n, 16)])
        rows.append(c * numpy.ones(n))
    structured = numpy.array(rows)
    scales = numpy.array([0.25, 1.0, 4.0, 16.0])
    rand = rng.integers(-8, 9, size=(_RANDOM_POINTS, n)) / 4.0
    rand *= scales[rng.integers(0, len(scales), size=(_RANDOM_POINTS, 1))]
    pts = numpy.vstack([structured, rand])
    signs = numpy.array(sc.signs, dtype=float)
    strict = numpy.array(sc.strict, dtype=bool)
    pts = numpy.where(signs > 0, numpy.abs(pts), numpy.where(signs < 0, -numpy.abs(pts), pts))
    zero = (pts == 0) & strict
    pts = numpy.where(zero, 0.25 * signs, pts)
    return _unique_rows(pts)


def _unique_rows(pts: numpy.ndarray) -> numpy.ndarray:
    """The distinct rows of ``pts`` in lexicographic order (what numpy's unique over axis 0 gives),
    by a column ``lexsort``: unique over rows sorts a structured view field by field, 3-10x slower
    on the witness batches (up to 25,000 points of 49 coordinates on the fixtures)."""
    if len(pts) < 2:
        return pts
    s = pts[numpy.lexsort(pts.T[::-1])]
    keep = numpy.ones(len(s), dtype=bool)
    keep[1:] = numpy.any(s[1:] != s[:-1], axis=1)
    return s[keep]


def _row_finder(pts: numpy.ndarray):
    """A function from an array of rows to the index of each row in ``pts`` (-1 where absent),
    matching rows byte for byte (as a dict of ``row.tobytes()`` would, without a Python loop)."""
    void = numpy.dtype((numpy.void, pts.dtype.itemsize * pts.shape[1]))
    keys = numpy.ascontiguousarray(pts).view(void).ravel()
    order = numpy.argsort(keys, kind="stable")
    ordered = keys[order]

    def find(rows: numpy.ndarray) -> numpy.ndarray:
        q = numpy.ascontiguousarray(rows, dtype=pts.dtype).view(void).ravel()
        at = numpy.minimum(numpy.searchsorted(ordered, q), len(ordered) - 1)
        return numpy.where(ordered[at] == q, order[at], -1)

    return find


def _pairs(m: int, rng) -> tuple[numpy.ndarray, numpy.ndarray]:
    if m * (m - 1) // 2 <= 4000:
        i, j = numpy.triu_indices(m, 1)
        return i, j
    i = rng.integers(0, m, size=4000)
    j = rng.integers(0, m, size=4000)
    keep = i != j
    return i[keep], j[keep]


def _values(expr, symbols, pts) -> numpy.ndarray:
    env = {s: pts[:, k] for k, s in enumerate(symbols)}
    return evaluate(expr, env, len(pts))


def search_points(expr, sc: Scalarised, kind: str, seed: int = SEED):
    """(a, b, t, f_a, f_b, f_t) with the largest relative violation, or None."""
    rng = numpy.random.default_rng(seed)
    roots = _roots(expr, sc.symbols)
    centres = _points(sc, rng, roots)
    # Local pairs (p +- h*d) test curvature near each point; line pairs along a coordinate through
    # a root, at many scales; far pairs test it between points.
    n = len(sc.symbols)
    dirs = numpy.vstack([numpy.eye(n), numpy.ones((1, n)), rng.integers(-1, 2, size=(4, n))])
    pick = rng.integers(0, len(dirs), size=len(centres))
    local = [(centres + h * dirs[pick], centres - h * dirs[pick]) for h in (0.25, 1.0)]
    signs = numpy.array(sc.signs, dtype=float)
    lines = [numpy.where(signs * line < 0, 0.0, line) for line in _lines(sc, roots)]
    for line in lines:
        a, b = numpy.triu_indices(len(line), 1)
        local.append((line[a], line[b]))
    pts = numpy.vstack([centres] + [p for pair in local for p in pair])
    pts = numpy.where(signs * pts < 0, 0.0, pts) + 0.0  # + 0.0: -0.0 becomes 0.0, for the byte lookup
    pts = _unique_rows(pts)
    fp = _values(expr, sc.symbols, pts)
    ok = numpy.isfinite(fp)
    pts, fp = pts[ok], fp[ok]
    if len(pts) < 2:
        return None
    find = _row_finder(pts)
    li, lj = [], []
    for pa, pb in local:
        ka = find(numpy.where(signs * pa < 0, 0.0, pa) + 0.0)
        kb = find(numpy.where(signs * pb < 0, 0.0, pb) + 0.0)
        keep = (ka >= 0) & (kb >= 0) & (ka != kb)
        li.append(ka[keep])
        lj.append(kb[keep])
    fi, fj = _pairs(len(pts), rng)
    i = numpy.concatenate(li + [fi]).astype(int)
    j = numpy.concatenate(lj + [fj]).astype(int)
    best = None
    for t in (0.5, 0.25):
        mids = t * pts[i] + (1 - t) * pts[j]
        fm = _values(expr, sc.symbols, mids)
        fa, fb = fp[i], fp[j]
        chord = t * fa + (1 - t) * fb
        scale = 1.0 + numpy.abs(fa) + numpy.abs(fb)
        with numpy.errstate(all="ignore"):
            if kind == "set":
                score = numpy.where((fa <= 0) & (fb <= 0), fm, -numpy.inf) / scale
            elif kind == "not-affine":
                score = numpy.abs(fm - chord) / scale
            else:
                score = (fm - chord) / scale
        score = numpy.where(numpy.isfinite(fm) & numpy.isfinite(score), score, -numpy.inf)
        k = int(numpy.argmax(score))
        if score[k] > 1e-6 and (best is None or score[k] > best[0]):
            best = (score[k], pts[i[k]], pts[j[k]], t, fa[k], fb[k], fm[k])
    return None if best is None else best[1:]


def _data_trials(sc: Scalarised, rng) -> list[dict]:
    if not sc.data:
        return [{}]
    choices = [0.5, 1.0, 2.0]
    trials = []
    for k in range(_DATA_TRIALS):
        values = {}
        for m, (d, (_, sign)) in enumerate(sc.data.items()):
            # First trial: distinct values, so that two data that may differ do differ.
            v = float(1 + m) if k == 0 else float(rng.choice(choices))
            if d in sc.integers:
                v = float(math.ceil(v)) + (k > 1)  # a length or a count: a whole number
            if sign < 0 or (sign == 0 and k > 1 and rng.random() < 0.5):
                v = -v
            values[d] = v
        trials.append(values)
    return trials


def find(expr, model, facts, kind: str, tested: str, elementwise: bool = False) -> dict | None:
    """The witness evidence for ``expr`` (see the module docstring), or None if none was found.

    ``elementwise``: ``expr`` may be a vector (a constraint holds entry by entry). For a set
    witness the function tested is the largest entry (<= 0 exactly where every entry is); otherwise
    each of the first entries in turn, since every entry must be convex (affine).
    """
    # Bounded by counts (points, pairs, data trials), not by the clock: a clock budget would make
    # the evidence depend on machine load, and two runs must give identical output.
    try:
        sc = scalarise(expr, model, facts, entries=elementwise)
    except Unsupported:
        return None
    if len(sc.entries) > 1 and kind == "set":
        candidates = [(sympy.Max(*sc.entries, evaluate=False), f"the largest entry of {tested}")]
    elif len(sc.entries) > 1:
        candidates = [(e, f"entry {k} (flattened) of {tested}") for k, e in enumerate(sc.entries)]
    else:
        candidates = [(sc.expr, tested)]
    candidates = [(g, what) for g, what in candidates if not _huge_power(g)]
    rng = numpy.random.default_rng(SEED)
    for values in _data_trials(sc, rng) if candidates else ():
        subs = {d: sympy.Float(v) if not float(v).is_integer() else sympy.Integer(int(v)) for d, v in values.items()}
        for g, what in candidates:
            found = _search(substitute(g, subs) if subs else g, sc, kind)
            if found is not None:
                return _evidence(sc, kind, what, values, *found)
    return None


def _huge_power(expr) -> bool:
    """A power with an exponent beyond ``_MAX_POWER``: in doubles it is 0, 1 or inf almost
    everywhere, so no witness is sought; and data values put into it exactly (2**(10**10)) would
    cost gigabytes (a fuzzed model ran out of memory there)."""
    return any(n.is_Pow and n.exp.is_Number and abs(n.exp) > _MAX_POWER for n in preorder(expr))


def _search(f, sc: Scalarised, kind: str):
    if f.has(sympy.zoo, sympy.nan) or not f.free_symbols:
        return None  # data values that divide by zero leave the instance undefined: try others
    try:
        found = search_points(f, sc, kind)
    except Unsupported:
        return None
    return None if found is None else (f, *found)


def _evidence(sc: Scalarised, kind, tested, values, f, a, b, t, fa, fb, ft) -> dict:
    used = {str(s) for s in f.free_symbols}
    order = [k for k, s in enumerate(sc.symbols) if str(s) in used]
    out = {
        "kind": kind,
        "tested": tested,
        "expression": str(f),
        "variables": [str(sc.symbols[k]) for k in order],
        "a": [float(a[k]) for k in order],
        "b": [float(b[k]) for k in order],
        "t": float(t),
        "f_a": float(fa), "f_b": float(fb), "f_t": float(ft),
        "variable_map": {str(sc.symbols[k]): sc.labels[k] for k in order},
        "sizes": {name: list(dims) for name, dims in sc.sizes.items()},
    }
    if values:
        out["data"] = {sc.data[d][0]: v for d, v in values.items()}
    if sc.notes:
        out["notes"] = list(sc.notes)
    return out


def for_judgement(analysis, j) -> dict | None:
    """The witness for a failing judgement's claim, or None (objectives, inequalities, equalities)."""
    from optlint.calculus import Curvature
    from optlint.ir import Objective

    model, facts = analysis.model, analysis.facts
    expr = j.expr
    if not isinstance(expr, sympy.Basic):
        return None
    if isinstance(j.item, Objective):
        if j.want is Curvature.CONCAVE:
            return find(-expr, model, facts, "function", "minus the maximised objective")
        return find(expr, model, facts, "function", "the minimised objective")
    relation = j.item.relation
    if relation in ("<=", "<", ">=", ">"):
        side = "lhs - rhs" if relation in ("<=", "<") else "rhs - lhs"
        return (find(expr, model, facts, "set", f"{side} of the constraint (feasible where <= 0)", True)
                or find(expr, model, facts, "function", f"{side} of the constraint", True))
    if relation == "==":
        return find(expr, model, facts, "not-affine", "lhs - rhs of the equality", True)
    return None
