"""Shared pieces for curvature rules: one finding per source site, built from failing judgements.

A site reached with several variants (branches, inlined calls) yields one finding that describes
the first failing variant and lists the branches in which the part fails.
"""

from __future__ import annotations

from typing import Callable, Iterable, Iterator

from optlint.analysis import Judgement, ModelAnalysis, judgement_evidence
from optlint.findings import Finding


def site_findings(rule_id: str, analysis: ModelAnalysis, items: Iterable,
                  select: Callable[[Judgement], bool],
                  message: Callable[[ModelAnalysis, Judgement], str]) -> Iterator[Finding]:
    for item in items:
        failing = [j for j in analysis.judge(item) if not j.ok and select(j)]
        if not failing:
            continue
        first = failing[0]
        evidence = judgement_evidence(analysis, first)
        if any(j.branch for j in failing) and len(analysis.judge(item)) > 1:
            evidence["failing_branches"] = [list(j.branch) for j in failing]
        if getattr(item, "in_loop", False):
            count = getattr(item, "instances", None)
            evidence["instances"] = (count if isinstance(count, int) and count > 1
                                     else "one per iteration of the enclosing loop or comprehension")
        text = message(analysis, first)
        if first.branch and len(analysis.judge(item)) > len(failing):
            text += f" (when {'; '.join(first.branch)})"
        yield Finding(rule=rule_id, site=item.site, message=text, evidence=evidence)


def failing_step(analysis: ModelAnalysis, j: Judgement) -> str:
    node, reason = j.failure
    snippet = analysis.text(node.expr)
    return reason if snippet == j.item.code else f"{reason}, at `{snippet}`"
