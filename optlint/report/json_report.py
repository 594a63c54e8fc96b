"""The JSON report: one object on stdout; the shape is a contract (see README, 'JSON output')."""

from __future__ import annotations

import json

from optlint import __version__


def render(results, files_skipped: int, problems: list[tuple[str, str]], stats: dict | None = None) -> str:
    findings = []
    for r in results:
        for f, fp in zip(r.findings, r.fingerprints):
            item = f.to_json()
            if "cell" in f.evidence:  # notebooks: the cell (1-based, all cells counted) and line in it
                item["cell"] = f.evidence["cell"]
                item["cell_line"] = f.evidence["cell_line"]
            item["fingerprint"] = fp
            findings.append(item)
    doc = {
        "optlint": __version__,
        "findings": findings,
        "files_checked": sum(1 for r in results if r.checked),
        "files_skipped": files_skipped,
    }
    stats = stats or {}
    doc["accepted_inline"] = stats.get("accepted_inline", 0)
    if "baseline" in stats:
        doc["baseline"] = stats["baseline"]
    if problems:
        doc["path_errors"] = [{"path": p, "message": m} for p, m in problems]
    return json.dumps(doc, indent=2, sort_keys=False, ensure_ascii=False)
