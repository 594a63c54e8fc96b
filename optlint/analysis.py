"""Analysis of one Model: the curvature question asked of each objective and constraint, memoised.

Rules never call the calculus themselves; they ask this object, which knows the model's facts
(variables, declared signs, PSD parameters, literal matrices) and caches one answer per expression.

The question each model part asks:
- a minimised objective must be convex, a maximised one concave;
- ``lhs <= rhs`` (or ``<``) needs ``lhs - rhs`` convex; ``lhs >= rhs`` (or ``>``) needs ``rhs - lhs``
  convex; ``lhs == rhs`` needs ``lhs - rhs`` affine (B&V 2004 §4.2.1: the standard form of a convex
  problem has convex inequality functions and affine equality functions);
- ``A >> B`` and cone constraints need affine arguments.
The difference of the two sides is judged, not each side alone: that is the mathematical question;
the sides are analysed as well, only to phrase the message.

When the rules fail (and no unknown function is involved) the escalation tries a normal form
(optlint.evidence.rewrite) and a second-order proof (optlint.evidence.second_order); a proof
makes the judgement ``ok`` and is kept in ``Judgement.proof``; the rules' failure stays beside it,
so that the disciplined-convex dialect can be told its package rejects what is in fact convex
(``undisciplined``). The same holds when the rules prove a part only in the form sympy folded it
into: a product of two variable expressions or a division by one, as written in the DSL
(``Model.written``), is rejected by the package although x·x = x² is convex.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import sympy

from optlint.calculus import functions as F
from optlint.calculus import Analysis, Budget, Curvature, Derivation, Facts, analyse, blame
from optlint.ir import Constraint, Model, Objective
from optlint.printer import show
from optlint.lift import preorder


@dataclass
class Judgement:
    """The verdict on one variant of one objective or constraint."""

    item: Objective | Constraint
    want: Curvature
    expr: Any
    branch: tuple[str, ...]
    result: Analysis
    failure: tuple[Derivation, str] | None  # None when the part is as it must be
    sides: tuple[Any, Any] | None = None  # (left, right) of a constraint variant
    # Evidence of a proof beyond the rules when they fail; the failure is kept beside it.
    proof: dict[str, Any] | None = None

    @property
    def ok(self) -> bool:
        """The part is as it must be: proved by the rules or by the escalation."""
        return self.failure is None or self.proof is not None

    @property
    def undisciplined(self) -> bool:
        """Proved only beyond the rules: a disciplined-convex package would reject it as written."""
        return self.failure is not None and self.proof is not None

    @property
    def unknown_only(self) -> bool:
        """The verdict fails only because a function with no known curvature is involved."""
        return bool(self.result.unknown_functions)


def satisfies(curvature: Curvature, want: Curvature) -> bool:
    if want is Curvature.CONVEX:
        return curvature.is_convex
    if want is Curvature.CONCAVE:
        return curvature.is_concave
    return curvature.is_affine


class ModelAnalysis:
    def __init__(self, model: Model, budget: Budget | None = None):
        self.model = model
        self.budget = budget or Budget()
        self.facts = Facts(
            variables=model.variables,
            psd=frozenset(model.psd),
            matrices=dict(model.matrices),
        )
        self._memo: dict[Any, Analysis] = {}
        self._judged: dict[int, list[Judgement]] = {}
        self._shared: dict[str, object] = {}
        self._witness: dict[int, dict | None] = {}
        self._proofs: dict[Any, dict | None] = {}

    def analyse(self, expr) -> Analysis:
        hit = self._memo.get(expr)
        if hit is None:
            hit = analyse(_quadratic_forms(expr, self.model), self.facts, self.budget)
            self._memo[expr] = hit
        return hit

    def shared(self, key: str, compute):
        """A per-model result several rules read (computed on first use, then reused)."""
        if key not in self._shared:
            self._shared[key] = compute()
        return self._shared[key]

    def witness(self, j: Judgement) -> dict | None:
        """Two concrete points refuting what ``j`` needs (see optlint.evidence.witness), memoised."""
        if j.ok or j.unknown_only:
            return None
        key = id(j)
        if key not in self._witness:
            from optlint.evidence.witness import for_judgement

            try:
                self._witness[key] = for_judgement(self, j)
            except Exception:  # evidence is optional; a failed search must never fail the file
                self._witness[key] = None
        return self._witness[key]

    def has_variables(self, expr) -> bool:
        return isinstance(expr, sympy.Basic) and bool(expr.free_symbols & self.facts.variables)

    # -- judgements --------------------------------------------------------------------------

    def judge(self, item: Objective | Constraint) -> list[Judgement]:
        key = id(item)
        if key not in self._judged:
            self._judged[key] = (self._judge_objective(item) if isinstance(item, Objective)
                                 else self._judge_constraint(item))
        return self._judged[key]

    def _verdict(self, item, want, expr, branch, sides=None, written=()) -> Judgement:
        result = self.analyse(expr)
        failure = None
        proof = None
        if not satisfies(result.curvature, want):
            failure = blame(result.tree, want) or (result.tree, "the composition rules give no verdict")
            if not result.unknown_functions:
                proof = self.escalate(expr, want)
            if proof is not None and proof["method"] == "normal-form" and written:
                from optlint.evidence.rewrite import written_rewrites

                proof = dict(proof, rewrites=written_rewrites(self, written))
        elif written:
            # Proved on the folded form, but the code multiplies two variable expressions (or
            # divides by one), which the disciplined-convex package rejects as written.
            from optlint.evidence.rewrite import rejected_as_written

            failure, proof = rejected_as_written(self, result.tree, written)
        return Judgement(item, want, expr, branch, result, failure, sides, proof)

    def _written(self, kind: str, item, index: int) -> list:
        return self.model.written.get((kind, item.site.line, item.site.column, index), [])

    def escalate(self, expr, want: Curvature) -> dict[str, Any] | None:
        """A proof beyond the rules that ``expr`` has the wanted curvature, or None; memoised.

        Normal forms first (optlint.evidence.rewrite: any size, data allowed), then the
        second-order condition (optlint.evidence.second_order: small, data-free expressions).
        """
        if want is Curvature.AFFINE or not isinstance(expr, sympy.Basic):
            return None
        target = expr if want is Curvature.CONVEX else -expr
        if target not in self._proofs:
            from optlint.evidence import rewrite, second_order

            try:
                found = (rewrite.proves(target, self, Curvature.CONVEX)
                         or second_order.prove_convex(target, self.model, self.facts))
            except Exception:  # a failed proof attempt is no proof; it must never fail the file
                found = None
            if found is not None and want is Curvature.CONCAVE:
                found = dict(found, tested="minus the expression (concave iff its negation is convex)")
            self._proofs[target] = found
        return self._proofs[target]

    def _judge_objective(self, obj: Objective) -> list[Judgement]:
        want = Curvature.CONVEX if obj.sense == "minimise" else Curvature.CONCAVE
        return [self._verdict(obj, want, v.expr, v.branch, written=self._written("objective", obj, k))
                for k, v in enumerate(obj.variants) if self.has_variables(v.expr)]

    def _judge_constraint(self, con: Constraint) -> list[Judgement]:
        out = []
        for k, (left, right, branch) in enumerate(con.variants):
            if con.relation in ("<=", "<"):
                expr, want = left - right, Curvature.CONVEX
            elif con.relation in (">=", ">"):
                expr, want = right - left, Curvature.CONVEX
            else:  # "==", "psd", "cone"
                expr, want = left - right, Curvature.AFFINE
            if self.has_variables(expr):
                out.append(self._verdict(con, want, expr, branch, (left, right),
                                         written=self._written("constraint", con, k)))
        return out

    # -- words for messages ------------------------------------------------------------------

    def text(self, expr) -> str:
        """The modeller's own source text for a subexpression when we have it, else a printout."""
        origin = self.model.origins.get(expr)
        if origin is not None:
            return origin[1]
        return show(expr)

    def side_curvature(self, expr) -> Curvature:
        return self.analyse(expr).curvature if isinstance(expr, sympy.Basic) else Curvature.CONSTANT


def _quadratic_forms(expr, model: Model):
    """``x.T @ P @ x`` and ``x @ P @ x`` with x a 1-D decision variable and P constant, read as
    ``quad_form(x, P)``: for a vector x the two are the same number, and quad_form's curvature
    follows P's definiteness (B&V 2004 §3.1.5, from memory)."""
    if not isinstance(expr, sympy.Basic) or not expr.has(F.matmul):
        return expr
    variables = model.variables

    def vector(v):
        decl = model.declarations.get(v)
        return v in variables and decl is not None and decl.shape is not None and len(decl.shape) == 1

    found = {}
    for node in preorder(expr):
        if not isinstance(node, F.matmul):
            continue
        outer_l, outer_r = node.args
        if isinstance(outer_l, F.matmul):
            x_left, p, x = outer_l.args[0], outer_l.args[1], outer_r
        elif isinstance(outer_r, F.matmul):
            x_left, p, x = outer_l, outer_r.args[0], outer_r.args[1]
        else:
            continue
        if isinstance(x_left, F.transpose):
            x_left = x_left.args[0]
        if x_left == x and vector(x) and not (p.free_symbols & variables):
            found[node] = F.quad_form(x, p)
        if len(found) > 64:
            break
    return expr.xreplace(found) if found else expr


def derivation_path(root: Derivation, target: Derivation) -> list[Derivation]:
    """The nodes from the root down to ``target`` (inclusive), found by identity; iterative."""
    stack: list[tuple[Derivation, list[Derivation]]] = [(root, [root])]
    while stack:
        node, path = stack.pop()
        if node is target:
            return path
        for child in reversed(node.children):
            stack.append((child, path + [child]))
    return [root]


def step_evidence(analysis: ModelAnalysis, node: Derivation) -> dict[str, Any]:
    return {
        "expression": analysis.text(node.expr),
        "curvature": node.curvature.value,
        "sign": node.sign.value,
        "rule": node.rule,
    }


def judgement_evidence(analysis: ModelAnalysis, j: Judgement) -> dict[str, Any]:
    """The JSON evidence every curvature finding carries: the verdict and the failing derivation."""
    evidence: dict[str, Any] = {
        "proof": "rules",
        "curvature": j.result.curvature.value,
        "required": j.want.value,
        "expression": show(j.expr, 400),
    }
    if j.branch:
        evidence["branch"] = list(j.branch)
    if j.failure is not None:
        node, reason = j.failure
        evidence["failing_step"] = dict(step_evidence(analysis, node), reason=reason)
        evidence["derivation"] = [step_evidence(analysis, n) for n in derivation_path(j.result.tree, node)]
    if j.proof is not None:
        evidence["proof"] = j.proof["method"]
        evidence["escalation"] = j.proof
    witness = analysis.witness(j)
    if witness is not None:
        evidence["proof"] = "witness"
        evidence["witness"] = witness
    if j.result.unknown_functions:
        evidence["unknown_functions"] = list(j.result.unknown_functions)
    if j.result.budget_exceeded:
        evidence["budget_exceeded"] = True
    return evidence
