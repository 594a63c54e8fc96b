"""The vocabulary of model expressions: sympy function classes for the atoms optlint knows.

The lifter (CST -> sympy) builds expressions only from these classes, sympy's own arithmetic
(Add, Mul, Pow), sympy's elementary functions (Abs, exp, log, sqrt as Pow, Max, Min, trig) and
symbols. The curvature facts of each class live in the atom catalogue (``catalogue.py``), not here:
this module only names the functions and fixes their argument conventions.

Invariants:
- None of these classes evaluates or simplifies itself (no ``eval`` classmethod), so an expression
  keeps the structure the modeller wrote; sympy's own arithmetic still folds numbers and merges
  repeated terms, which preserves meaning.
- Symbols may stand for scalars, vectors or matrices; arithmetic is elementwise (the DSL's
  ``multiply``), ``matmul`` is the matrix product. Shapes, when known, travel beside the expression.
- Extra numeric parameters (the p of a norm, the M of huber) are sympy numbers in a fixed position.
"""

from __future__ import annotations

import sympy


class ModelFunction(sympy.Function):
    """Base class of optlint's atoms; ``dsl_name`` is how the disciplined-convex DSL spells it."""

    dsl_name: str = ""

    def _eval_evalf(self, prec):
        # sympy would otherwise evaluate an atom numerically with mpmath's function of the same
        # name (power, diff, log1p), whose meaning differs from the DSL's (and diff crashes).
        return None


def _atom(name: str, nargs: int | tuple[int, ...] | None, dsl_name: str | None = None) -> type:
    cls = type(name, (ModelFunction,), {"nargs": nargs, "dsl_name": dsl_name or name})
    return cls


# Affine structure (shape manipulation and reductions that keep curvature).
vsum = _atom("vsum", 1, "sum")                       # sum of all entries
index = _atom("index", 2, "[]")                      # index(x, k): one entry (or slice) of x
reshape = _atom("reshape", 1, "reshape")             # reshape / vec / flatten
transpose = _atom("transpose", 1, "T")               # transpose
trace = _atom("trace", 1, "trace")                   # trace of a square matrix
stack = _atom("stack", None, "hstack")               # hstack / vstack / bmat of any number of arguments
matmul = _atom("matmul", 2, "@")                     # matrix product A @ B
diff = _atom("diff", 1, "diff")                      # first differences x[1:] - x[:-1]
cumsum = _atom("cumsum", 1, "cumsum")                # cumulative sum
mean = _atom("mean", 1, "mean")                      # arithmetic mean of the entries

# Scalar (elementwise) atoms with a domain or a structure sympy's elementary functions lack.
entr = _atom("entr", 1, "entr")                      # -x log x, x >= 0
rel_entr = _atom("rel_entr", 2, "rel_entr")          # x log(x / y), x, y >= 0
kl_div = _atom("kl_div", 2, "kl_div")                # x log(x / y) - x + y
logistic = _atom("logistic", 1, "logistic")          # log(1 + exp(x))
huber = _atom("huber", 2, "huber")                   # huber(x, M): x^2 for |x|<=M, 2M|x|-M^2 else
inv_pos = _atom("inv_pos", 1, "inv_pos")             # 1/x on x > 0
power = _atom("power", 2, "power")                   # power(x, p) with the DSL's domain conventions
pos = _atom("pos", 1, "pos")                         # max(x, 0)
neg = _atom("neg", 1, "neg")                         # max(-x, 0)
log1p = _atom("log1p", 1, "log1p")                   # log(1 + x), x > -1
xexp = _atom("xexp", 1, "xexp")                      # x exp(x), x >= 0

# Vector / matrix atoms (scalar-valued unless noted).
pnorm = _atom("pnorm", 2, "norm")                    # pnorm(x, p): entrywise p-norm, p >= 1 or oo
sigma_max = _atom("sigma_max", 1, "sigma_max")       # largest singular value (spectral norm)
sum_squares = _atom("sum_squares", 1, "sum_squares")
quad_form = _atom("quad_form", 2, "quad_form")       # quad_form(x, P) = x' P x
quad_over_lin = _atom("quad_over_lin", 2, "quad_over_lin")  # sum(x^2) / y, y > 0
log_sum_exp = _atom("log_sum_exp", 1, "log_sum_exp")
geo_mean = _atom("geo_mean", 1, "geo_mean")          # x >= 0
harmonic_mean = _atom("harmonic_mean", 1, "harmonic_mean")  # x > 0
vmax = _atom("vmax", 1, "max")                       # largest entry
vmin = _atom("vmin", 1, "min")                       # smallest entry
lambda_max = _atom("lambda_max", 1, "lambda_max")    # symmetric X
lambda_min = _atom("lambda_min", 1, "lambda_min")    # symmetric X
log_det = _atom("log_det", 1, "log_det")             # X positive definite
matrix_frac = _atom("matrix_frac", 2, "matrix_frac")  # x' P^-1 x, P positive definite
nnz = _atom("nnz", 1, "count_nonzero")               # number of nonzero entries (L0 "norm")
sum_largest = _atom("sum_largest", 2, "sum_largest")  # sum_largest(x, k): sum of the k largest entries
sum_smallest = _atom("sum_smallest", 2, "sum_smallest")  # sum_smallest(x, k): sum of the k smallest
tv = _atom("tv", 1, "tv")                            # total variation sum |x[i+1] - x[i]|
norm_nuc = _atom("norm_nuc", 1, "norm_nuc")          # nuclear norm: sum of singular values

ALL_ATOMS: tuple[type, ...] = tuple(
    obj for obj in list(globals().values())
    if isinstance(obj, type) and issubclass(obj, ModelFunction) and obj is not ModelFunction
)
