"""The Model IR: what a dialect recogniser hands to the checks, independent of the library used.

Everything after recognition reads only these values. Expressions are sympy expressions built from
the vocabulary of ``optlint.calculus.functions``; sites point back into the source (1-based lines and
columns, end exclusive as libcst reports them). Nothing here imports sympy at module import time, so
the engine can build findings for files that never reach the lifter.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any


@dataclass(frozen=True)
class Site:
    path: str
    line: int
    column: int
    end_line: int
    end_column: int
    cell: int | None = None  # notebook cell number (1-based), when the file is a notebook


@dataclass
class Declaration:
    """A symbol the model knows about: a decision variable, a parameter, a constant or a multiplier."""

    name: str
    role: str  # "variable" | "parameter" | "constant" | "multiplier"
    symbol: Any  # sympy.Symbol
    site: Site | None
    shape: tuple[Any, ...] | None = None
    sign: str = "unknown"  # positive | nonnegative | nonpositive | negative | unknown
    attributes: tuple[str, ...] = ()  # e.g. ("boolean",), ("integer",), ("PSD",)


@dataclass
class Variant:
    """One way an expression can be built when names have several reaching definitions."""

    expr: Any  # sympy expression
    branch: tuple[str, ...] = ()  # human descriptions of the definitions chosen, e.g. "`risk` from line 14"


@dataclass
class Objective:
    sense: str  # "minimise" | "maximise"
    variants: list[Variant]
    site: Site
    dialect: str
    code: str  # source text of the objective call, one line, for messages


@dataclass
class Constraint:
    relation: str  # "==", "<=", ">=", "<", ">", "psd" (left - right is positive semidefinite)
    variants: list[tuple[Any, Any, tuple[str, ...]]]  # (left, right, branch) per reaching definition
    site: Site
    dialect: str
    code: str
    origin: str = "comparison"  # comparison | cone | ...
    in_loop: bool = False  # built inside a loop or comprehension: one site, many instances
    instances: int | None = None  # how many, when every enclosing loop's trip count is known


@dataclass
class Notice:
    """Something a recogniser wants reported that is not about curvature (e.g. a model it skipped)."""

    rule: str
    site: Site
    message: str
    evidence: dict[str, Any] = field(default_factory=dict)


@dataclass
class MultiplierStep:
    """One statement that updates a multiplier by (a multiple of) its residual."""

    site: Site
    code: str
    direction: int  # +1 ascent on the Lagrangian (right), -1 descent (wrong)
    projection: int | None  # +1 onto [0, inf), -1 onto (-inf, 0], None: not projected
    in_loop: bool


@dataclass
class MultiplierUse:
    """A multiplier recognised by use: it multiplies a residual in a Lagrangian-shaped sum and is
    updated by that residual, or is minimised jointly with the primal quantities."""

    name: str
    site: Site  # the sum it enters
    code: str
    entry: int  # +1: L = f + name*residual is minimised over the primal; -1: f - name*residual
    residual: str
    orientation: int | None  # +1: residual <= 0, -1: residual >= 0, 0: == 0, None: the code does not say
    orientation_source: str
    declared: str | None  # declared sign of a library parameter/variable, or None (no declaration)
    declared_site: Site | None
    steps: list[MultiplierStep] = field(default_factory=list)
    joint: list[tuple[Site, str]] = field(default_factory=list)  # minimiser/optimizer holding it with the primal


@dataclass
class WrittenOp:
    """A product of two non-constant expressions, or a division by one, as the code writes it.

    sympy folds x*x into x**2 and 1/x into x**-1, so the expression alone no longer shows an
    operation a disciplined-convex package rejects; the DSL recogniser records each one that
    reaches a model part (``Model.written``)."""

    kind: str  # "product" | "division"
    site: Site
    code: str  # source text of the operation
    left: Any  # the operands, lifted (sympy)
    right: Any
    left_code: str
    right_code: str
    value: Any  # left*right or left/right as sympy folds it


@dataclass
class Model:
    """All objectives and constraints one recogniser found in one file."""

    path: str
    dialect: str
    declarations: dict[Any, Declaration] = field(default_factory=dict)  # keyed by sympy symbol
    objectives: list[Objective] = field(default_factory=list)
    constraints: list[Constraint] = field(default_factory=list)
    notices: list[Notice] = field(default_factory=list)
    psd: set[Any] = field(default_factory=set)  # constant symbols known positive semidefinite
    matrices: dict[Any, Any] = field(default_factory=dict)  # literal constant arrays by symbol
    origins: dict[Any, tuple[int, str]] = field(default_factory=dict)  # sympy node -> (line, source)
    truncated: bool = False  # the interpreter hit its statement budget; the model may be incomplete
    # (line, column, rule id) -> a sentence the recogniser adds to a finding there (conventions of the
    # library, e.g. that scipy's 'ineq' means fun(x) >= 0); the engine appends it to the message
    remarks: dict[tuple[int, int, str], str] = field(default_factory=dict)
    dependencies: list[str] = field(default_factory=list)  # sibling modules the analysis read (for caches)
    multipliers: list[MultiplierUse] = field(default_factory=list)  # Lagrangian code (dialects/lagrangian.py)
    # ("objective" | "constraint", line, column, variant index) -> the written operations reaching it
    written: dict[tuple[str, int, int, int], list[WrittenOp]] = field(default_factory=dict)

    @property
    def variables(self) -> frozenset[Any]:
        return frozenset(d.symbol for d in self.declarations.values() if d.role in ("variable", "multiplier"))
