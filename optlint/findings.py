"""Findings: what a rule reports, in the one shape every output format reads.

A finding is a plain value: a site, a rule id, a severity, a message and an evidence dict that
is JSON-serialisable. Severities are SARIF's levels; ``SEVERITY_RANK`` orders them for the
fail-threshold.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from optlint.ir import Site

SEVERITIES = ("error", "warning", "note")
SEVERITY_RANK = {"note": 1, "warning": 2, "error": 3}


@dataclass
class Finding:
    rule: str
    site: Site
    message: str
    severity: str = "warning"
    evidence: dict[str, Any] = field(default_factory=dict)

    def sort_key(self) -> tuple:
        s = self.site
        return (s.path, s.line, s.column, self.rule, self.message)

    def to_json(self) -> dict[str, Any]:
        s = self.site
        out: dict[str, Any] = {
            "path": s.path,
            "line": s.line,
            "column": s.column,
            "end_line": s.end_line,
            "end_column": s.end_column,
            "rule": self.rule,
            "severity": self.severity,
            "message": self.message,
            "evidence": self.evidence,
        }
        if s.cell is not None:
            out["cell"] = s.cell
        return out
