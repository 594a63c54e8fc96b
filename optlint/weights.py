"""Weights: which weights of a failing objective have the wrong (or an unknown) sign.

For a minimised objective a convex term needs a nonnegative weight and a concave term a
nonpositive one (mirrored for maximisation; B&V 2004 §3.2.1). A diagnosis is made only when
changing the signs it names is *enough*: the objective with the wrong weights flipped and the
unknown weights assumed of the needed sign is convex (concave) by the calculus. Otherwise the
objective has another problem and ``nonconvex-objective`` speaks for it.

Shared by the ``weight-sign`` and ``weight-sign-unknown`` rules; computed once per model.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import sympy

from optlint.analysis import ModelAnalysis, judgement_evidence, satisfies
from optlint.calculus import Curvature
from optlint.findings import Finding
from optlint.terms import Term, curved, definite, weighted_terms


@dataclass
class Diagnosis:
    judgement: object
    wrong: list[tuple[Term, Curvature]] = field(default_factory=list)
    unknown: list[tuple[Term, Curvature]] = field(default_factory=list)

    def finding(self, rule: str, analysis: ModelAnalysis, kind: str) -> Finding:
        j = self.judgement
        obj = j.item
        verb = "minimised" if obj.sense == "minimise" else "maximised"
        parts = []
        terms = self.wrong if kind == "wrong" else self.unknown
        for term, curvature in terms:
            body = analysis.text(term.body)
            weight = analysis.text(term.weight)
            need = _needed_sign(curvature, j.want)
            if kind == "wrong":
                parts.append(f"{curvature.value} term `{body}` has weight {weight} in a {verb} objective; "
                             f"make the weight {need} (flip its sign)")
            else:
                # The weight is c*m (c a number): m needs the needed sign, flipped when c < 0.
                c, m = term.weight.as_coeff_Mul()
                m_need = need if c > 0 else ("nonpositive" if need == "nonnegative" else "nonnegative")
                declared = [analysis.model.declarations[s].name for s in m.free_symbols
                            if s in analysis.model.declarations]
                op = ">=" if m_need == "nonnegative" else "<="
                how = (f"declare {', '.join(f'`{n}`' for n in declared)} with a sign "
                       f"({'nonneg' if m_need == 'nonnegative' else 'nonpos'}=True)" if declared
                       else f"check it (`assert {analysis.text(m)} {op} 0`)")
                parts.append(f"{curvature.value} term `{body}` has weight `{weight}` whose sign is unknown; "
                             f"the objective is {j.want.value} only if it is {need}: {how}, or state the "
                             f"assumption in the project configuration")
        message = "; ".join(parts)
        evidence = judgement_evidence(analysis, j)
        evidence["terms"] = [{"term": analysis.text(t.body), "weight": analysis.text(t.weight),
                              "curvature": c.value, "needed_sign": _needed_sign(c, j.want)} for t, c in terms]
        if j.branch:
            message += f" (when {'; '.join(j.branch)})"
        return Finding(rule=rule, site=obj.site, message=message, evidence=evidence)


def _needed_sign(curvature: Curvature, want: Curvature) -> str:
    return "nonnegative" if curvature is want else "nonpositive"


def diagnose(model, analysis: ModelAnalysis) -> list[Diagnosis]:
    return analysis.shared("weights", lambda: _diagnose_all(model, analysis))


def _diagnose_all(model, analysis: ModelAnalysis) -> list[Diagnosis]:
    out = []
    variables = analysis.facts.variables
    for obj in model.objectives:
        for j in analysis.judge(obj):
            if j.ok or j.unknown_only:
                continue
            d = _diagnose_one(analysis, j, variables)
            if d is not None:
                out.append(d)
                break  # one diagnosis per objective site: the first failing variant
    return out


def _diagnose_one(analysis: ModelAnalysis, j, variables) -> Diagnosis | None:
    terms = weighted_terms(j.expr, variables)
    explicit = any(t.weight != 1 for t in terms)
    if len(terms) < 2 and not explicit:
        return None  # a lone unweighted term: the sense, not a weight, is in question
    d = Diagnosis(j)
    fixed = j.expr
    for t in terms:
        curvature = analysis.analyse(t.body).curvature
        if not curved(curvature):
            continue
        sign = definite(analysis.analyse(t.weight).sign)
        good = 1 if curvature is j.want else -1
        if sign == 0:
            if t.weight.free_symbols and not (t.weight.free_symbols & variables):
                d.unknown.append((t, curvature))
                fixed = fixed - t.term + good * sympy.Dummy("w", positive=True) * t.body
        elif sign != good:
            d.wrong.append((t, curvature))
            fixed = fixed - 2 * t.term
    if not (d.wrong or d.unknown):
        return None
    if not satisfies(analysis.analyse(fixed).curvature, j.want):
        return None
    return d
