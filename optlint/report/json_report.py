"""The JSON report: one object on stdout; the shape is a contract (see README, 'JSON output')."""

from __future__ import annotations

import json

from optlint import __version__


def render(results, files_skipped: int, problems: list[tuple[str, str]]) -> str:
    findings = [f.to_json() for r in results for f in r.findings]
    doc = {
        "optlint": __version__,
        "findings": findings,
        "files_checked": sum(1 for r in results if r.checked),
        "files_skipped": files_skipped,
    }
    if problems:
        doc["path_errors"] = [{"path": p, "message": m} for p, m in problems]
    return json.dumps(doc, indent=2, sort_keys=False, ensure_ascii=False)
