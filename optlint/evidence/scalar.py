"""Scalarisation: a model expression (vector variables, atoms) -> one scalar sympy function.

Role: the second-order checks and the witness search work on functions of plain real symbols
x_0, x_1, ... written only with elementary functions (Add, Mul, Pow, exp, log, Abs, Max, Min,
Piecewise, trig). ``scalarise`` builds that function by evaluating the expression over numpy object
arrays of sympy scalars, one entry per component of each decision variable.

Invariants:
- The result is an *instance* of the model expression, never a different function: unknown
  dimensions are fixed at a stated size (2, 3, or the length of a literal array the expression
  uses), a symbolic index at a stated element, data of unknown value are placeholder symbols
  (``data``; an entry of such data is one too) the caller must give values and report (whole
  numbers for integer data such as a ``len``: ``integers``), and data of unknown shape used in a
  matrix product are vectors of identical entries (a restriction of the data, stated in
  ``notes``). Non-convexity of an instance shows non-convexity of the expression for that data.
- A variable too large to scalarise whole, used only through constant (or first-element)
  indices, varies only in the entries used; the others are fixed at a point of its domain and a
  note says so. That restricts the function to an affine set: enough for a witness, never for a
  proof (the note bars second-order proofs).
- ``entries=True`` accepts a vector value (an elementwise constraint): its first entries are in
  ``entries``.
- Atoms with a restricted domain are +oo outside it (Piecewise), the extended-value convention of
  B&V 2004 §3.1.2 (from memory), so an evaluator never mistakes a point outside the domain for one
  inside.
- Anything not understood raises ``Unsupported``; callers then give no evidence (sound).
- Sizes are capped (scalar variables, literal entries, expression nodes).
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field

import numpy
import sympy
from sympy.core.function import AppliedUndef
from sympy.functions.elementary.piecewise import ExprCondPair

from optlint.calculus import functions as F
from optlint.lift import DataSymbol, exact_power_too_big, preorder
from optlint.printer import show

MAX_SCALARS = 64
MAX_LITERAL = 4096
MAX_OPS = 6000
MAX_ENTRIES = 100_000  # a larger variable is not even scanned for the entries it uses
MAX_ENTRIES_TESTED = 8  # entries of a vector-valued constraint the witness search tries
DEFAULT_DIMS = (2, 3)

_ELEMENTWISE = (sympy.exp, sympy.log, sympy.Abs, sympy.sin, sympy.cos, sympy.tan, sympy.tanh,
                sympy.sinh, sympy.cosh, sympy.atan, sympy.sign)


MAX_POWER = 1024  # exponents beyond this are not scalarised (see _build)


class Unsupported(Exception):
    pass


@dataclass
class Scalarised:
    expr: sympy.Expr
    symbols: list[sympy.Symbol]
    labels: list[str]                       # "x_0" -> "charge[0]", same order as symbols
    signs: list[int]                        # +1 nonnegative, -1 nonpositive, 0 free; per symbol
    strict: list[bool]                      # strictly signed (positive/negative)
    data: dict[sympy.Symbol, tuple[str, int]] = field(default_factory=dict)  # placeholder -> (name, sign)
    integers: set[sympy.Symbol] = field(default_factory=set)  # placeholders for integer data (a length)
    entries: list[sympy.Expr] = field(default_factory=list)  # each entry of a vector value (``expr`` is the first)
    sizes: dict[str, list[int]] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)


def _sign_of(sym) -> tuple[int, bool]:
    if sym.is_positive:
        return 1, True
    if sym.is_nonnegative:
        return 1, False
    if sym.is_negative:
        return -1, True
    if sym.is_nonpositive:
        return -1, False
    return 0, False


def _dim(value, default: int) -> int | None:
    if value is None:
        return default
    try:
        n = int(value)
    except (TypeError, ValueError):
        return default
    return n if n >= 1 else None


class _Builder:
    def __init__(self, model, facts, default_dim: int, needs: dict, root=None):
        self.needs = needs
        self.root = root
        # data symbols used in an index (loop targets, keys): they name positions (see ``integer``)
        self.keys = set() if root is None else {
            s for node in preorder(root) if isinstance(node, F.index)
            for s in node.args[1].free_symbols if isinstance(s, DataSymbol) and s not in facts.variables}
        self.model = model
        self.facts = facts
        self.default_dim = default_dim
        self.out = Scalarised(sympy.Integer(0), [], [], [], [])
        self.vars: dict = {}
        self.placeholders: dict = {}
        self.index_syms: dict = {}
        self.memo: dict = {}

    # -- leaves -------------------------------------------------------------------------------
    def variable(self, sym) -> numpy.ndarray:
        if sym in self.vars:
            return self.vars[sym]
        decl = self.model.declarations.get(sym) if self.model is not None else None
        name = decl.name if decl is not None else str(sym)
        shape = tuple(decl.shape) if decl is not None and decl.shape else ()
        need = self.needs.get(sym, ())
        if not shape and need:
            shape = (None,) * len(need)  # indexed, so not a scalar: its size is unknown
        dims = []
        for axis, s in enumerate(shape):
            known = _dim(s, 0)
            least = need[axis] if len(need) == len(shape) else 1
            dims.append(known if known else max(self.default_dim, least))
        if any(d is None for d in dims) or len(dims) > 2:
            raise Unsupported("variable shape")
        size = int(numpy.prod(dims)) if dims else 1
        sign, strict = _sign_of(sym)
        used = None  # every entry
        if len(self.out.symbols) + size > MAX_SCALARS:
            used = self.used_entries(sym, dims) if size <= MAX_ENTRIES else None
            if used is None or len(self.out.symbols) + len(used) > MAX_SCALARS:
                raise Unsupported("too many scalar variables")
            # Only the entries the expression indexes vary; the others are fixed at a point of the
            # domain. That restricts f to an affine set, and a restriction of a convex (affine)
            # function is convex (affine), so a witness for it is one for f (B&V 2004 §3.1.1,
            # from memory). A restriction proves nothing, so the note also bars second-order proofs.
            fixed = sympy.Integer(sign if strict else 0)
            self.out.notes.append(f"entries of `{name}` the expression does not index are fixed at {fixed}")
        cells = numpy.empty(size, dtype=object)
        for k, idx in enumerate(itertools.product(*[range(d) for d in dims]) if dims else [()]):
            if used is not None and k not in used:
                cells[k] = fixed
                continue
            s = sympy.Symbol(f"x_{len(self.out.symbols)}", real=True)
            self.out.symbols.append(s)
            self.out.labels.append(name + ("[" + ", ".join(map(str, idx)) + "]" if idx else ""))
            self.out.signs.append(sign)
            self.out.strict.append(strict)
            cells[k] = s
        arr = cells.reshape(dims) if dims else cells.reshape(())
        self.out.sizes[name] = dims
        self.vars[sym] = arr
        return arr

    def used_entries(self, sym, dims) -> set[int] | None:
        """Flat positions of ``sym`` the expression picks by indexing; None if it uses it whole."""
        positions = numpy.arange(int(numpy.prod(dims))).reshape(dims) if dims else None
        if positions is None:
            return None
        used: set[int] = set()
        stack = [(self.root, False)]
        while stack:
            node, as_base = stack.pop()
            if node == sym:
                if not as_base:
                    return None
                continue
            if isinstance(node, F.index) and node.args[0] == sym:
                spec = node.args[1]
                parts = spec.args if isinstance(spec, AppliedUndef) and _undef(spec) == "ix" else (spec,)
                key = tuple(self.index_part(p) for p in parts)
                try:
                    used.update(int(k) for k in numpy.ravel(positions[key if len(key) > 1 else key[0]]))
                except (IndexError, TypeError) as exc:
                    raise Unsupported("index") from exc
                continue
            stack.extend((a, False) for a in node.args)
        return used

    def data(self, sym) -> numpy.ndarray:
        literal = self.facts.matrices.get(sym)
        if literal is not None:
            values = numpy.asarray(literal, dtype=float)
            if values.size > MAX_LITERAL or values.ndim > 2:
                raise Unsupported("literal too large")
            return _obj(values)
        if sym in self.keys:  # a key also used as a number: the same value in both places, or none
            if not sym.is_integer:
                raise Unsupported("index used as a number")
            return numpy.array(self.key(sym), dtype=object)
        return self.placeholder(sym, str(sym), _sign_of(sym)[0] if not sym.is_zero else 0, bool(sym.is_integer))

    def placeholder(self, key, name: str, sign: int, integer: bool) -> numpy.ndarray:
        if key not in self.placeholders:
            d = sympy.Symbol(f"d_{len(self.placeholders)}", real=True)
            self.placeholders[key] = d
            taken = {n for n, _ in self.out.data.values()}
            while name in taken:  # two data printed alike (x[k] in two iterations) stay two names
                name += "'"
            self.out.data[d] = (name, sign)
            if integer:
                self.out.integers.add(d)
        return numpy.array(self.placeholders[key], dtype=object)

    # -- the walk -----------------------------------------------------------------------------
    def build(self, node) -> numpy.ndarray:
        key = node
        if key in self.memo:
            return self.memo[key]
        value = self._build(node)
        self.memo[key] = value
        return value

    def _build(self, node) -> numpy.ndarray:
        if node in self.facts.variables:
            return self.variable(node)
        if isinstance(node, sympy.Symbol):
            return self.data(node)
        if isinstance(node, sympy.Number) or getattr(node, "is_NumberSymbol", False):
            if not node.is_extended_real or not node.is_finite:
                raise Unsupported("non-real number")
            return numpy.array(node, dtype=object)
        if isinstance(node, AppliedUndef):
            raise Unsupported("unknown function")
        if isinstance(node, F.index):
            return self.index(node)
        if isinstance(node, sympy.Pow) and node.exp.is_Number and abs(node.exp) > MAX_POWER:
            # entries raised exactly to 10**10 took minutes (a fuzzed model); in doubles such a
            # power is 0, 1 or inf almost everywhere, so there is nothing to evaluate
            raise Unsupported("huge power")
        args = [self.build(a) for a in node.args] if not isinstance(node, _PARAM_ATOMS) else None
        if isinstance(node, sympy.Add):
            return _fold(args, lambda a, b: a + b)
        if isinstance(node, sympy.Mul):
            return _fold(args, lambda a, b: a * b)
        if isinstance(node, sympy.Pow):
            return _map2(lambda b, e: b ** e, args[0], args[1])
        if node.func in _ELEMENTWISE:
            return _map1(node.func, args[0])
        if isinstance(node, (sympy.Max, sympy.Min)):
            return _fold(args, lambda a, b: _map2(_UNEVALUATED[node.func], a, b))
        return self.atom(node, args)

    def index(self, node) -> numpy.ndarray:
        base = self.build(node.args[0])
        if base.ndim == 0 and not (node.free_symbols & self.facts.variables):
            # An entry of data whose value and shape are unknown (a placeholder) is itself data of
            # unknown value, with the sign the whole array is known to have.
            whole = node.args[0]
            sign = _sign_of(whole)[0] if isinstance(whole, sympy.Symbol) else 0
            return self.placeholder(node, show(node, 200), sign, False)
        spec = node.args[1]
        parts = spec.args if isinstance(spec, AppliedUndef) and _undef(spec) == "ix" else (spec,)
        key = tuple(self.index_part(p) for p in parts)
        try:
            return numpy.asarray(base[key if len(key) > 1 else key[0]], dtype=object)
        except (IndexError, TypeError) as exc:
            raise Unsupported("index") from exc

    def index_part(self, part):
        if isinstance(part, AppliedUndef) and _undef(part) == "slice":
            return slice(*[None if a == sympy.Symbol("_") else self.integer(a) for a in part.args])
        return self.integer(part)

    def integer(self, expr) -> int:
        """The position an index expression picks. A symbolic key (a loop target, data) is taken
        at the first element of what it ranges over, position 0; a key that is not known to be an
        integer (a loop over a pyomo set, a list of names) is a position only, never a number."""
        subs = {}
        for s in expr.free_symbols:
            if s in self.facts.variables or not isinstance(s, DataSymbol):
                raise Unsupported("index")
            subs[s] = self.key(s)
        value = expr.xreplace(subs) if subs else expr
        if not value.is_Integer:
            raise Unsupported("index")
        return int(value)

    def key(self, s) -> sympy.Integer:
        if s not in self.index_syms:
            self.index_syms[s] = sympy.Integer(0)
            what = "its first element (0)" if s.is_integer else "the first element of what it ranges over"
            self.out.notes.append(f"index `{str(s).split('#')[0]}` taken at {what}")
        return self.index_syms[s]

    # -- atoms --------------------------------------------------------------------------------
    def atom(self, node, args) -> numpy.ndarray:
        f = type(node)
        if f in _PARAM_ATOMS:
            return self.param_atom(node)
        a = args[0]
        if f in (F.vsum,):
            return _scalar(sympy.Add(*a.ravel()))
        if f is F.mean:
            return _scalar(sympy.Add(*a.ravel()) / max(a.size, 1))
        if f is F.reshape:
            return a.ravel() if a.ndim else a
        if f is F.transpose:
            return a.T
        if f is F.trace:
            if a.ndim != 2 or a.shape[0] != a.shape[1]:
                raise Unsupported("trace")
            return _scalar(sympy.Add(*numpy.diagonal(a)))
        if f is F.stack:
            if any(x.ndim > 1 for x in args):
                raise Unsupported("stack of matrices")
            return numpy.concatenate([x.reshape(-1) for x in args])
        if f is F.matmul:
            return self.matmul(node, args[0], args[1])
        if f is F.diff:
            return a[1:] - a[:-1] if a.ndim == 1 else _raise("diff")
        if f is F.cumsum:
            return numpy.cumsum(a.ravel()) if a.ndim <= 1 else _raise("cumsum")
        if f in _SCALAR_FORMS:
            return _map_n(_SCALAR_FORMS[f], *args)
        if f is F.sum_squares:
            return _scalar(sympy.Add(*[e ** 2 for e in a.ravel()]))
        if f is F.quad_over_lin:
            y = _one(args[1])
            return _scalar(_restrict(sympy.Add(*[e ** 2 for e in a.ravel()]) / y, _gt0(y)))
        if f is F.quad_form:
            return self.quad(a, args[1])
        if f is F.log_sum_exp:
            return _scalar(sympy.log(sympy.Add(*[sympy.exp(e) for e in a.ravel()])))
        if f is F.geo_mean:
            n = a.size
            return _scalar(sympy.Mul(*[e ** sympy.Rational(1, n) for e in a.ravel()]))
        if f is F.harmonic_mean:
            es = list(a.ravel())
            return _scalar(_restrict(len(es) / sympy.Add(*[1 / e for e in es]), _all([_gt0(e) for e in es])))
        if f is F.vmax:
            return _scalar(_max(*a.ravel()))
        if f is F.vmin:
            return _scalar(_min(*a.ravel()))
        if f is F.tv:
            v = a.ravel()
            return _scalar(sympy.Add(*[sympy.Abs(v[i + 1] - v[i]) for i in range(len(v) - 1)]))
        if f is F.nnz:
            return _scalar(sympy.Add(*[sympy.Piecewise((0, sympy.Eq(e, 0)), (1, True)) for e in a.ravel()]))
        raise Unsupported(f"atom {f.__name__}")

    def param_atom(self, node) -> numpy.ndarray:
        f = type(node)
        a = self.build(node.args[0])
        p = node.args[1]
        if p.free_symbols or not p.is_Number:
            raise Unsupported("parameter")
        es = list(a.ravel())
        if f is F.pnorm:
            if p is sympy.oo:
                return _scalar(_max(*[sympy.Abs(e) for e in es]))
            if p == 2:
                return _scalar(sympy.sqrt(sympy.Add(*[e ** 2 for e in es])))
            if p == 1:
                return _scalar(sympy.Add(*[sympy.Abs(e) for e in es]))
            if p > 0:
                return _scalar(sympy.Add(*[sympy.Abs(e) ** p for e in es]) ** (1 / p))
            raise Unsupported("norm parameter")
        if f is F.huber:
            m = p
            return _map1(lambda e: _piecewise([(e ** 2, sympy.Abs(e) <= m if _small(e) else
                                                sympy.LessThan(sympy.Abs(e), m, evaluate=False)),
                                               (2 * m * sympy.Abs(e) - m ** 2, sympy.true)]), a)
        if f is F.power:
            if p.is_integer and p >= 0:
                return _map1(lambda e: e ** p, a)
            if p > 0:
                return _map1(lambda e: _restrict(e ** p, _ge0(e)), a)
            return _map1(lambda e: _restrict(e ** p, _gt0(e)), a)
        if f in (F.sum_largest, F.sum_smallest):
            k = int(p)
            if not 1 <= k <= len(es) or len(es) > 8:
                raise Unsupported("sum_largest")
            pick = _max if f is F.sum_largest else _min
            return _scalar(pick(*[sympy.Add(*c) for c in itertools.combinations(es, k)]))
        raise Unsupported(f"atom {f.__name__}")

    def matmul(self, node, a, b) -> numpy.ndarray:
        # A 0-d operand of a matrix product is data (or a variable) of unknown shape: it stands
        # for a vector of identical entries, the only reading that fits any partner's shape.
        if a.ndim == 0 and b.ndim == 0:
            return a * b
        if a.ndim == 0 or b.ndim == 0:
            unknown = node.args[0] if a.ndim == 0 else node.args[1]
            if unknown in self.placeholders:
                # Data standing for a matrix or vector of unknown content: only a positive fill
                # is offered, so that a witness never rests on an implausible negative Gram matrix.
                d = self.placeholders[unknown]
                self.out.data[d] = (self.out.data[d][0], 1)
                self.out.notes.append(f"`{unknown}` (shape unknown) taken as a vector whose entries are all equal")
            else:
                self.out.notes.append("an operand of unknown shape taken as a vector whose entries are all equal")
            c, other = (a, b) if a.ndim == 0 else (b, a)
            axis = 0 if a.ndim == 0 else -1
            return numpy.asarray(c[()] * numpy.sum(other, axis=axis), dtype=object)
        try:
            return numpy.asarray(numpy.dot(a, b), dtype=object)
        except ValueError as exc:
            raise Unsupported("shapes") from exc

    def quad(self, x, p) -> numpy.ndarray:
        v = x.ravel()
        if p.ndim == 0:
            return _scalar(p[()] * sympy.Add(*[e ** 2 for e in v]))
        if p.shape != (len(v), len(v)):
            raise Unsupported("quad_form shapes")
        return _scalar(sympy.Add(*[v[i] * p[i, j] * v[j] for i in range(len(v)) for j in range(len(v))
                                   if p[i, j] != 0]))


_PARAM_ATOMS = (F.pnorm, F.huber, F.power, F.sum_largest, F.sum_smallest)


def _restrict(expr, cond):
    """``expr`` on the domain ``cond``, +oo elsewhere (the extended-value convention).

    Small pieces are built as sympy builds them (a guard it can settle, such as ``Abs(x) >= 0``,
    disappears). Large ones are built as given: sympy's Piecewise canonicalises its conditions,
    folds every condition holding a Piecewise into if-then-else form and asks the assumption
    system about them, which on ``x > 0`` over a sum of 48 Huber pieces (a fuzzed model) took
    over three minutes; the numeric evaluator needs the pairs only."""
    if cond is sympy.true:
        return expr
    return _piecewise([(expr, cond), (sympy.oo, sympy.true)])


SMALL_NODES = 60  # up to this size a condition or a piece is left to sympy's own simplification


def _small(*exprs) -> bool:
    count = 0
    for e in exprs:
        for _ in preorder(e):
            count += 1
            if count > SMALL_NODES:
                return False
    return True


def _piecewise(pairs):
    if _small(*[c for _, c in pairs]) and not any(c.has(sympy.Piecewise) for _, c in pairs):
        return sympy.Piecewise(*pairs)
    return sympy.Basic.__new__(sympy.Piecewise, *[sympy.Tuple.__new__(ExprCondPair, v if isinstance(v, sympy.Basic) else sympy.Float(v), c)
                                                   for v, c in pairs])


def _gt0(e):
    return e > 0 if _small(e) else sympy.StrictGreaterThan(e, 0, evaluate=False)


def _ge0(e):
    return e >= 0 if _small(e) else sympy.GreaterThan(e, 0, evaluate=False)


def _all(conditions):
    return sympy.And(*conditions) if _small(*conditions) else sympy.And(*conditions, evaluate=False)


# Max and Min are built unevaluated: the scalar function is only evaluated numerically (witness
# search) or re-evaluated on substitution (second-order proofs), and sympy's evaluation of a max
# compares every pair of entries under assumptions (seconds for a few hundred entries; cProfile
# on the model fixtures: 15 % of the whole run).
def _max(*args):
    return sympy.Max(*args, evaluate=False)


def _min(*args):
    return sympy.Min(*args, evaluate=False)


_UNEVALUATED = {sympy.Max: _max, sympy.Min: _min}


def _float_power(base, exp):
    """A power of two numbers too large to compute exactly, in floating point (mpmath keeps the
    exponent range, so 3.0**(4e10) is quick), or nan where it is not a real number."""
    try:
        out = sympy.Float(base) ** sympy.Float(exp)
    except (TypeError, ValueError):
        return sympy.nan
    return out if out.is_real else sympy.nan


def substitute(expr, subs: dict):
    """``expr.xreplace(subs)`` that rebuilds Max, Min, And, Or, Piecewise and comparisons that
    still hold symbols unevaluated (xreplace would evaluate them again; see ``_restrict``) and a power of two numbers too large to compute exactly in floating point (data
    values put into ``d2**(10**10*d3)`` made 3**(4*10**10) exactly: a fuzzed model hung); every
    other node is rebuilt as xreplace does."""
    memo: dict = {}

    def walk(e):
        if e in subs:
            return subs[e]
        if not e.args:
            return e
        done = memo.get(e)
        if done is not None:
            return done
        args = tuple(walk(a) for a in e.args)
        if args == e.args:
            out = e
        elif isinstance(e, (sympy.Max, sympy.Min)) or (isinstance(e, (sympy.And, sympy.Or)) and not _small(*args)):
            out = e.func(*args, evaluate=False)
        elif isinstance(e, sympy.Piecewise):
            out = _piecewise([p.args for p in args])
        elif isinstance(e, ExprCondPair):
            out = sympy.Tuple.__new__(ExprCondPair, *args)
        elif isinstance(e, sympy.core.relational.Relational) and not _small(*args):
            out = e.func(*args, evaluate=False)
        elif isinstance(e, sympy.Pow) and args[0].is_number and args[1].is_number and exact_power_too_big(*args):
            out = _float_power(*args)
        else:
            out = e.func(*args)
        memo[e] = out
        return out

    return walk(expr)


def _neg_log(e):
    return _restrict(-e * sympy.log(e), _gt0(e))


_SCALAR_FORMS = {
    F.entr: _neg_log,
    F.rel_entr: lambda x, y: _restrict(x * sympy.log(x) - x * sympy.log(y), _all([_gt0(x), _gt0(y)])),
    F.kl_div: lambda x, y: _restrict(x * sympy.log(x) - x * sympy.log(y) - x + y, _all([_gt0(x), _gt0(y)])),
    F.logistic: lambda x: sympy.log(1 + sympy.exp(x)),
    F.inv_pos: lambda x: _restrict(1 / x, _gt0(x)),
    F.pos: lambda x: _max(x, 0),
    F.neg: lambda x: _max(-x, 0),
    F.log1p: lambda x: sympy.log(1 + x),
    F.xexp: lambda x: _restrict(x * sympy.exp(x), _ge0(x)),
}


def _undef(node) -> str:
    return getattr(node.func, "__name__", "")


def _raise(what):
    raise Unsupported(what)


def _obj(values: numpy.ndarray) -> numpy.ndarray:
    out = numpy.empty(values.shape, dtype=object)
    for idx, v in numpy.ndenumerate(values):
        out[idx] = sympy.Integer(int(v)) if float(v).is_integer() and abs(v) < 1e15 else sympy.Float(float(v))
    return out


def _scalar(expr) -> numpy.ndarray:
    return numpy.array(expr, dtype=object)


def _one(a: numpy.ndarray):
    if a.size != 1:
        raise Unsupported("scalar expected")
    return a.ravel()[0]


def _fold(args, op):
    out = args[0]
    for a in args[1:]:
        try:
            out = numpy.asarray(op(out, a), dtype=object)
        except ValueError as exc:
            raise Unsupported("shapes") from exc
    return out


def _map1(fn, a) -> numpy.ndarray:
    return numpy.asarray(numpy.frompyfunc(fn, 1, 1)(a), dtype=object)


def _map2(fn, a, b) -> numpy.ndarray:
    try:
        return numpy.asarray(numpy.frompyfunc(fn, 2, 1)(a, b), dtype=object)
    except ValueError as exc:
        raise Unsupported("shapes") from exc


def _map_n(fn, *args) -> numpy.ndarray:
    try:
        return numpy.asarray(numpy.frompyfunc(fn, len(args), 1)(*args), dtype=object)
    except ValueError as exc:
        raise Unsupported("shapes") from exc


def _index_needs(expr, variables) -> dict:
    """Least size per axis of each variable, from its constant indices and slices (x[0], X[1, 2], x[3:])."""
    needs: dict = {}
    for node in preorder(expr):
        if not isinstance(node, F.index) or node.args[0] not in variables:
            continue
        spec = node.args[1]
        parts = spec.args if isinstance(spec, AppliedUndef) and _undef(spec) == "ix" else (spec,)
        sizes = [_least_size(p) for p in parts]
        old = needs.get(node.args[0], ())
        if len(old) == len(sizes):
            sizes = [max(a, b) for a, b in zip(old, sizes)]
        needs[node.args[0]] = tuple(sizes)
    return needs


def _least_size(part) -> int:
    """The least length of an axis for ``part`` to pick something: x[2] needs 3, x[3:] needs 4."""
    if isinstance(part, AppliedUndef) and _undef(part) == "slice":
        start, stop = part.args[0], part.args[1] if len(part.args) > 1 else None
        need = [int(start) + 1] if start.is_Integer and start >= 0 else []
        need += [int(stop)] if stop is not None and stop.is_Integer and stop > 0 else []
        return max(need or [1])
    return int(part) + 1 if part.is_Integer and part >= 0 else 1


def _ops(expr) -> int:
    return sum(1 for _ in preorder(expr))


def scalarise(expr, model, facts, entries: bool = False) -> Scalarised:
    """The scalar instance of ``expr``; tries the default sizes for unknown dimensions in turn, then
    the lengths of the literal data it uses (a variable of unknown size beside a 6-entry array).

    ``entries``: a vector or matrix value is allowed (an elementwise constraint); its first
    ``MAX_ENTRIES_TESTED`` entries are in ``Scalarised.entries`` and ``expr`` is the first of them.
    """
    last: Exception = Unsupported("no size fits")
    needs = _index_needs(expr, facts.variables)
    literal = sorted({int(n) for s in expr.free_symbols if s in facts.matrices
                      for n in numpy.shape(facts.matrices[s]) if 1 <= n <= MAX_SCALARS})
    for dim in DEFAULT_DIMS + tuple(n for n in literal if n not in DEFAULT_DIMS):
        builder = _Builder(model, facts, dim, needs, expr)
        try:
            value = builder.build(expr)
        except Unsupported as exc:
            last = exc
            continue
        except (TypeError, ValueError, AttributeError, RecursionError, ZeroDivisionError) as exc:
            raise Unsupported(f"scalarisation failed ({type(exc).__name__})") from exc
        if value.size != 1 and not (entries and value.size):
            raise Unsupported("not a scalar expression")
        result = builder.out
        tops = [e if isinstance(e, sympy.Basic) else sympy.Float(float(e))
                for e in value.ravel()[:MAX_ENTRIES_TESTED]]
        result.entries = tops
        result.expr = tops[0]
        if sum(_ops(e) for e in tops) > MAX_OPS:
            raise Unsupported("expression too large")
        result.notes = list(dict.fromkeys(result.notes))
        # data met on the way but folded away are not part of the instance
        used = set().union(*(e.free_symbols for e in tops))
        result.data = {d: v for d, v in result.data.items() if d in used}
        result.integers &= set(result.data)
        return result
    raise last
