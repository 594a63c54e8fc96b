"""An independent numeric oracle for curvature verdicts (test code only; it imports nothing from
optlint and knows the atoms only by their class names).

It evaluates a sympy expression with its own numpy implementation of every atom and looks for
violations of the defining inequality f(t a + (1 - t) b) <= t f(a) + (1 - t) f(b) (>= for concave,
both for affine, equality for constant) at random pairs of points a, b inside the domain.

Invariants:
- The domain is where every intermediate value is real and finite (B&V 2004 §3.1.2 extended-value
  convention, from memory); each atom returns nan off its own domain, so a pair whose endpoints are
  in the domain but whose midpoint is not is a violation (the domain is not convex).
- Symbols are sampled inside their sign assumptions; data symbols are drawn once per trial, decision
  variables once per point. Vectors have length 3; matrices are symmetric 3 x 3 (half of them PD).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import sympy
from sympy.core.function import AppliedUndef

N = 3  # length of vector symbols, order of matrix symbols


class OutOfDomain(Exception):
    pass


def _finite(value):
    arr = np.asarray(value)
    if np.iscomplexobj(arr) or not np.all(np.isfinite(arr)):
        raise OutOfDomain
    return value


def _where(ok, value):
    """``value`` where ``ok`` holds everywhere, else out of the domain."""
    if not np.all(ok):
        raise OutOfDomain
    return value


def _int_exponent(p: float) -> int | None:
    return int(p) if float(p).is_integer() and abs(p) < 2**53 else None


def _real_power(base, p: float):
    """sympy's real reading of base**p: integer p anywhere but 0**negative; otherwise base >= 0."""
    base = np.asarray(base, dtype=float)
    k = _int_exponent(p)
    if k is not None:
        _where(~((base == 0) & (k < 0)), None)
        return np.power(base, float(k))
    _where(base >= 0, None)
    if p < 0:
        _where(base > 0, None)
    return np.power(base, p)


def _dsl_power(x, p: float):
    """The DSL's power(x, p): non-even p > 1 and 0 < p < 1 live on x >= 0, p < 0 on x > 0."""
    x = np.asarray(x, dtype=float)
    k = _int_exponent(p)
    if p == 0:
        return np.ones_like(x)
    if p == 1:
        return x
    if k is not None and k > 0 and k % 2 == 0:
        return np.power(x, float(k))
    if p > 0:
        return np.power(_where(x >= 0, x), p)
    return np.power(_where(x > 0, x), p)


def _entr(x):
    x = _where(np.asarray(x) >= 0, np.asarray(x, dtype=float))
    safe = np.where(x > 0, x, 1.0)
    return np.where(x > 0, -x * np.log(safe), 0.0)


def _rel_entr(x, y):
    x, y = np.broadcast_arrays(np.asarray(x, dtype=float), np.asarray(y, dtype=float))
    _where((x >= 0) & (y > 0), None)
    safe = np.where(x > 0, x, 1.0)
    return np.where(x > 0, x * np.log(safe / y), 0.0)


def _huber(x, m):
    a = np.abs(x)
    return np.where(a <= m, a**2, 2 * m * a - m**2)


def _sym(X):
    X = np.asarray(X, dtype=float)
    _where(X.ndim == 2 and np.allclose(X, X.T, atol=1e-9), None)
    return X


def _log_det(X):
    X = _sym(X)
    eig = np.linalg.eigvalsh(X)
    _where(eig > 0, None)
    return float(np.sum(np.log(eig)))


def _matrix_frac(x, P):
    P = _sym(P)
    _where(np.linalg.eigvalsh(P) > 0, None)
    return float(x @ np.linalg.solve(P, x))


def _sum_k(x, k, largest: bool):
    s = np.sort(np.atleast_1d(x))
    return float(np.sum(s[::-1][: int(k)] if largest else s[: int(k)]))


def _pnorm(x, p):
    a = np.abs(np.atleast_1d(x))
    if p == np.inf:
        return float(np.max(a))
    return float(np.sum(a**p) ** (1.0 / p))


def _geo_mean(x):
    x = _where(np.asarray(x) >= 0, np.atleast_1d(np.asarray(x, dtype=float)))
    return float(np.prod(x) ** (1.0 / x.size))


def _harmonic_mean(x):
    x = _where(np.asarray(x) > 0, np.atleast_1d(np.asarray(x, dtype=float)))
    return float(x.size / np.sum(1.0 / x))


def _undefined(name: str):
    # Some fixed, smooth, clearly non-convex function: only its constancy on constants matters.
    return lambda *vals: np.sin(3 * sum(np.asarray(v, dtype=float) for v in vals)) + 0.1 * len(name)


ATOMS = {
    "vsum": lambda x: np.sum(x),
    "mean": lambda x: np.mean(x),
    "cumsum": lambda x: np.cumsum(x),
    "trace": lambda X: np.trace(X),
    "reshape": lambda x: np.ravel(x),
    "transpose": lambda x: np.transpose(x),
    "index": lambda x, k: np.atleast_1d(x)[int(k)],
    "stack": lambda *xs: np.concatenate([np.atleast_1d(x) for x in xs]),
    "diff": lambda x: np.diff(x),
    "matmul": lambda a, b: np.asarray(a) @ np.asarray(b),
    "entr": _entr,
    "rel_entr": _rel_entr,
    "kl_div": lambda x, y: _rel_entr(x, y) - x + y,
    "logistic": lambda x: np.logaddexp(0.0, x),
    "huber": _huber,
    "inv_pos": lambda x: 1.0 / _where(np.asarray(x) > 0, np.asarray(x, dtype=float)),
    "power": _dsl_power,
    "pos": lambda x: np.maximum(x, 0.0),
    "neg": lambda x: np.maximum(-np.asarray(x), 0.0),
    "log1p": lambda x: np.log1p(_where(np.asarray(x) > -1, x)),
    "xexp": lambda x: _where(np.asarray(x) >= 0, x) * np.exp(x),
    "pnorm": _pnorm,
    "sigma_max": lambda X: float(np.linalg.norm(np.atleast_2d(X), 2)),
    "norm_nuc": lambda X: float(np.sum(np.linalg.svd(np.atleast_2d(X), compute_uv=False))),
    "sum_squares": lambda x: float(np.sum(np.asarray(x) ** 2)),
    "quad_form": lambda x, P: float(np.asarray(x) @ np.asarray(P) @ np.asarray(x)),
    "quad_over_lin": lambda x, y: np.sum(np.asarray(x) ** 2) / _where(np.asarray(y) > 0, y),
    "matrix_frac": _matrix_frac,
    "log_sum_exp": lambda x: float(np.logaddexp.reduce(np.atleast_1d(x))),
    "geo_mean": _geo_mean,
    "harmonic_mean": _harmonic_mean,
    "vmax": lambda x: np.max(x),
    "vmin": lambda x: np.min(x),
    "lambda_max": lambda X: float(np.linalg.eigvalsh(_sym(X))[-1]),
    "lambda_min": lambda X: float(np.linalg.eigvalsh(_sym(X))[0]),
    "log_det": _log_det,
    "nnz": lambda x: float(np.count_nonzero(x)),
    "sum_largest": lambda x, k: _sum_k(x, k, True),
    "sum_smallest": lambda x, k: _sum_k(x, k, False),
    "tv": lambda x: float(np.sum(np.abs(np.diff(x)))),
}
ELEMENTARY = {
    sympy.exp: np.exp, sympy.Abs: np.abs, sympy.sin: np.sin, sympy.cos: np.cos,
    sympy.log: lambda x: np.log(_where(np.asarray(x) > 0, x)),
}
PARAMETER_POSITIONS = {"index": (1,), "pnorm": (1,), "huber": (1,), "power": (1,),
                       "sum_largest": (1,), "sum_smallest": (1,)}


def _number(expr) -> float:
    return float(expr)


def evaluate(expr, env):
    """Value of ``expr`` at ``env`` (symbol -> number/array); OutOfDomain off the domain.

    Shape errors (sympy may fold v - v to the scalar 0 inside a vector grammar) and singular
    solves also count as "not evaluable here": they are caught at the endpoints, before any claim.
    """
    with np.errstate(all="ignore"):
        try:
            return _finite(_eval(expr, env))
        except (ValueError, IndexError, np.linalg.LinAlgError) as exc:
            raise OutOfDomain from exc


def _eval(expr, env):
    if isinstance(expr, sympy.Symbol):
        return env[expr]
    if expr is sympy.oo:
        return np.inf
    if expr.is_Number or expr.is_NumberSymbol:
        if not (expr.is_real and expr.is_finite):
            raise OutOfDomain
        return _number(expr)
    if isinstance(expr, sympy.Pow):
        base, exponent = expr.args
        if exponent.is_Number:
            return _finite(_real_power(_eval(base, env), _number(exponent)))
        b = _eval(base, env)
        _where(np.asarray(b) > 0, None)
        return _finite(np.power(b, _eval(exponent, env)))
    name = getattr(expr.func, "__name__", "")
    if isinstance(expr, AppliedUndef):
        fn = _undefined(name)
    elif expr.func in ELEMENTARY:
        fn = ELEMENTARY[expr.func]
    elif name in ATOMS:
        fn = ATOMS[name]
    else:
        fn = None
    if isinstance(expr, sympy.Add):
        return _finite(sum(_eval(a, env) for a in expr.args))
    if isinstance(expr, sympy.Mul):
        out = 1.0
        for a in expr.args:
            out = out * _eval(a, env)
        return _finite(out)
    if isinstance(expr, sympy.Max):
        return _finite(np.maximum.reduce(np.broadcast_arrays(*[_eval(a, env) for a in expr.args])))
    if isinstance(expr, sympy.Min):
        return _finite(np.minimum.reduce(np.broadcast_arrays(*[_eval(a, env) for a in expr.args])))
    if fn is None and not expr.free_symbols:
        # sympy rewrites some number combinations (sinh(1), ...); a closed number is just a number.
        value = complex(expr.evalf(30))
        _where(value.imag == 0, None)
        return _finite(value.real)
    if fn is None:
        raise NotImplementedError(f"oracle has no implementation of {type(expr).__name__}")
    params = PARAMETER_POSITIONS.get(name, ())
    vals = [(_number(a) if a.is_Number and a is not sympy.oo else np.inf if a is sympy.oo else _eval(a, env))
            if i in params else _eval(a, env) for i, a in enumerate(expr.args)]
    return _finite(fn(*vals))


# -- sampling ---------------------------------------------------------------------------------
@dataclass
class Shapes:
    vectors: frozenset = frozenset()
    matrices: frozenset = frozenset()   # symmetric matrix symbols


def _signed(sym, rng, size, scale):
    magnitude = np.exp(rng.normal(size=size)) * scale
    if sym.is_positive or sym.is_nonnegative:
        return magnitude
    if sym.is_negative or sym.is_nonpositive:
        return -magnitude
    return rng.normal(size=size) * scale * 1.5


def sample_symbol(sym, rng, shapes: Shapes, scale: float, psd=frozenset(), nsd=frozenset()):
    if sym in shapes.matrices or sym in psd or sym in nsd:
        B = rng.normal(size=(N, N)) * scale
        if sym in psd or sym in nsd or rng.random() < 0.5:
            M = B @ B.T / N + 0.05 * np.eye(N)
            return -M if sym in nsd else M
        return (B + B.T) / 2
    size = (N,) if sym in shapes.vectors else None
    value = _signed(sym, rng, size, scale)
    return float(value) if size is None else value


@dataclass
class Outcome:
    pairs: int = 0            # pairs with both endpoints in the domain
    violation: str | None = None


def check(expr, facts, shapes: Shapes, curvature: str, rng, trials: int = 4, points: int = 12,
          rtol: float = 1e-7) -> Outcome:
    """Search for a violation of the claimed ``curvature`` ("convex", "concave", "affine", "constant")."""
    out = Outcome()
    symbols = sorted(expr.free_symbols, key=lambda s: s.name)
    variables = [s for s in symbols if s in facts.variables]
    data = [s for s in symbols if s not in facts.variables]
    for _ in range(trials):
        env = {}
        for s in data:
            if s in facts.matrices:
                env[s] = np.asarray(facts.matrices[s], dtype=float)
            else:
                env[s] = sample_symbol(s, rng, shapes, 1.0, facts.psd, facts.nsd)
        for _ in range(points):
            scale = float(rng.choice([0.2, 1.0, 3.0]))
            a = {s: sample_symbol(s, rng, shapes, scale) for s in variables}
            b = {s: sample_symbol(s, rng, shapes, float(rng.choice([0.2, 1.0, 3.0]))) for s in variables}
            try:
                fa = np.asarray(evaluate(expr, {**env, **a}), dtype=float)
                fb = np.asarray(evaluate(expr, {**env, **b}), dtype=float)
            except OutOfDomain:
                continue
            out.pairs += 1
            t = float(rng.uniform(0.05, 0.95))
            m = {s: t * a[s] + (1 - t) * b[s] for s in variables}
            try:
                fm = np.asarray(evaluate(expr, {**env, **m}), dtype=float)
            except OutOfDomain:
                out.violation = f"midpoint outside the domain (t={t:.3f})"
                return out
            chord = t * fa + (1 - t) * fb
            tol = rtol * (1.0 + np.abs(t * fa) + np.abs((1 - t) * fb) + np.abs(fm))
            if curvature == "constant":
                if np.any(np.abs(fa - fb) > tol):
                    out.violation = f"not constant: {fa} vs {fb}"
                    return out
                continue
            if curvature in ("convex", "affine") and np.any(fm > chord + tol):
                out.violation = f"convexity fails: f(mid)={fm} > chord={chord} (t={t:.3f})"
                return out
            if curvature in ("concave", "affine") and np.any(fm < chord - tol):
                out.violation = f"concavity fails: f(mid)={fm} < chord={chord} (t={t:.3f})"
                return out
    return out
