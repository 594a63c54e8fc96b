"""The SARIF 2.1.0 report, for code-review annotations (one run, tool ``optlint``).

The driver lists every rule that a run knows (built-in and plugin) with short and full
descriptions, help text and default level; each result has a physical location (URI relative to
the project root, ``%SRCROOT%``), a region, and the same fingerprint the baseline stores, under
``partialFingerprints["optlint/v1"]``. A notebook finding's region is the line within its cell;
the cell number is in the message and in the result's ``properties``. Levels are SARIF's own
(error, warning, note), which are optlint's severities.
"""

from __future__ import annotations

import json
import os
from urllib.parse import quote

from optlint import __version__
from optlint.policy import FINGERPRINT_KEY, relative

SCHEMA = "https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json"
INFORMATION_URI = "https://pypi.org/project/optlint/"


def _rule(rule) -> dict:
    return {
        "id": rule.id,
        "name": "".join(part.capitalize() for part in rule.id.split("-")),
        "shortDescription": {"text": rule.summary},
        "fullDescription": {"text": rule.rationale},
        "help": {"text": f"{rule.rationale}\n\nReference: {rule.reference}\n\nFlagged:\n{rule.bad}\n\nFine:\n{rule.good}",
                 "markdown": (f"{rule.rationale}\n\n**Reference:** {rule.reference}\n\nFlagged:\n\n```python\n"
                              f"{rule.bad}\n```\n\nFine:\n\n```python\n{rule.good}\n```")},
        "defaultConfiguration": {"level": rule.severity},
        "properties": {"tags": ["optimisation", "convexity"]},
    }


def _uri(path: str, root: str | None) -> str:
    rel = relative(path, root)
    if rel.startswith("../"):
        return "file://" + quote(os.path.abspath(path).replace(os.sep, "/"))
    return quote(rel)


def render(results, problems, stats: dict, root: str | None, success: bool = True) -> str:
    from optlint.plugins import registry

    rules = registry()
    index = {rule_id: i for i, rule_id in enumerate(rules)}
    out = []
    for r in results:
        for f, fp in zip(r.findings, r.fingerprints):
            s = f.site
            message = f.message
            props: dict = {}
            if "cell" in f.evidence:
                message = f"cell {f.evidence['cell']}, line {f.evidence['cell_line']}: {message}"
                props = {"cell": f.evidence["cell"], "cellLine": f.evidence["cell_line"]}
                start_line = end_line = f.evidence["cell_line"]
            else:
                start_line, end_line = s.line, max(s.line, s.end_line)
            region = {"startLine": start_line, "startColumn": s.column, "endLine": end_line}
            if end_line == start_line and s.end_column > s.column:
                region["endColumn"] = s.end_column
            elif end_line > start_line:
                region["endColumn"] = max(s.end_column, 1)
            location = {"physicalLocation": {"artifactLocation": {"uri": _uri(s.path, root), "uriBaseId": "%SRCROOT%"},
                                             "region": region}}
            result = {"ruleId": f.rule, "level": f.severity, "message": {"text": message},
                      "locations": [location], "partialFingerprints": {FINGERPRINT_KEY: fp}}
            if f.rule in index:
                result["ruleIndex"] = index[f.rule]
            if props:
                result["properties"] = props
            out.append(result)
    root_uri = "file://" + quote(os.path.abspath(root or os.getcwd()).replace(os.sep, "/").rstrip("/") + "/")
    invocation = {"executionSuccessful": success}
    if problems:
        invocation["toolExecutionNotifications"] = [
            {"level": "error", "message": {"text": f"{p}: {m}"}} for p, m in problems]
    run = {
        "tool": {"driver": {"name": "optlint", "version": __version__, "semanticVersion": __version__,
                            "informationUri": INFORMATION_URI, "rules": [_rule(r) for r in rules.values()]}},
        "originalUriBaseIds": {"%SRCROOT%": {"uri": root_uri}},
        "invocations": [invocation],
        "results": out,
        "columnKind": "unicodeCodePoints",
        "properties": {"accepted_inline": stats.get("accepted_inline", 0), **({"baseline": stats["baseline"]}
                                                                              if "baseline" in stats else {})},
    }
    return json.dumps({"$schema": SCHEMA, "version": "2.1.0", "runs": [run]}, indent=2, ensure_ascii=False)
