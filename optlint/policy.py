"""Policy: what the project decided about findings — severities, intended non-convexity, inline
acceptances and the baseline — applied after the rules, never inside them.

Inline acceptance: ``# optlint: accept RULE[, RULE...] -- reason`` on a line of the finding, or on
the first line of its statement. Comments are found with ``tokenize`` (a ``#`` inside a string is
not a comment). An acceptance without a reason still applies but is reported
(``suppression-without-reason``); one that matches nothing, names an unknown rule or is not
understood is reported as a note (``unused-suppression``).

Fingerprints (baseline and SARIF ``partialFingerprints``) hash the rule id, the path relative to
the project root, the statement's tokens without comments or layout, and the occurrence of that
triple in the file: edits elsewhere that shift line numbers leave them unchanged.
"""

from __future__ import annotations

import ast
import hashlib
import io
import json
import os
import re
import tokenize
from dataclasses import dataclass, field

from optlint.discover import glob_match
from optlint.findings import Finding
from optlint.ir import Site

# Rules an [[tool.optlint.intended]] entry turns into notes (and any rule named nonconvex-*/nonaffine-*).
NONCONVEXITY_RULES = ("nonconvex-objective", "nonconvex-inequality", "nonaffine-equality")
NO_REASON, UNUSED = "suppression-without-reason", "unused-suppression"
FINGERPRINT_KEY = "optlint/v1"
BASELINE_FORMAT = "optlint-baseline"
BASELINE_VERSION = 1

_DIRECTIVE = re.compile(r"#\s*optlint\s*:(?P<rest>.*)$")
_ACCEPT = re.compile(r"^\s*accept\s+(?P<ids>[A-Za-z0-9_-]+(?:\s*,\s*[A-Za-z0-9_-]+)*)\s*(?:--(?P<reason>.*))?$")
_LAYOUT = {tokenize.COMMENT, tokenize.NL, tokenize.NEWLINE, tokenize.INDENT, tokenize.DEDENT,
           tokenize.ENCODING, tokenize.ENDMARKER}


@dataclass
class Acceptance:
    line: int
    column: int
    rules: tuple[str, ...]
    reason: str
    text: str
    used: set[str] = field(default_factory=set)


class SourceFacts:
    """Comments, tokens and statement spans of one source text, computed once and only on demand."""

    def __init__(self, text: str):
        self.text = text
        self.lines = text.splitlines()
        self._tokens: list[tokenize.TokenInfo] | None = None
        self._spans: list[tuple[int, int]] | None = None
        self._functions: list[tuple[int, int, str]] | None = None
        # Per line, the tokens that start on it; and normalised text per statement span. A line of
        # thousands of constraints has thousands of findings: each must not rescan every token.
        self._by_line: dict[int, list[str]] | None = None
        self._normalised: dict[tuple[int, int], str] = {}

    @property
    def tokens(self) -> list[tokenize.TokenInfo]:
        if self._tokens is None:
            self._tokens = []
            try:
                for tok in tokenize.generate_tokens(io.StringIO(self.text).readline):
                    self._tokens.append(tok)
            except (tokenize.TokenError, SyntaxError, IndentationError):
                pass  # a file that does not tokenize keeps the tokens read so far
        return self._tokens

    def comments(self) -> list[tokenize.TokenInfo]:
        return [t for t in self.tokens if t.type == tokenize.COMMENT]

    def _tree(self):
        try:
            return ast.parse(self.text)  # parses only; nothing is compiled or run
        except (SyntaxError, ValueError, RecursionError, MemoryError):
            return None

    def statement(self, line: int) -> tuple[int, int]:
        """(first, last) line of the innermost statement holding ``line``; a compound statement's
        span is its header only, so an edit in its body does not change it."""
        if self._spans is None:
            self._spans = []
            tree = self._tree()
            for node in ast.walk(tree) if tree is not None else ():
                if isinstance(node, ast.stmt):
                    end = node.end_lineno or node.lineno
                    body = getattr(node, "body", None)
                    if isinstance(body, list) and body and isinstance(body[0], ast.AST):
                        end = max(node.lineno, body[0].lineno - 1)
                    self._spans.append((node.lineno, end))
        best = None
        for first, last in self._spans:
            if first <= line <= last and (best is None or (first, -last) > (best[0], -best[1])):
                best = (first, last)
        return best or (line, line)

    def normalised(self, first: int, last: int) -> str:
        done = self._normalised.get((first, last))
        if done is not None:
            return done
        if self._by_line is None:
            self._by_line = {}
            for t in self.tokens:
                if t.type not in _LAYOUT:
                    self._by_line.setdefault(t.start[0], []).append(t.string)
        toks = [s for line in range(first, last + 1) for s in self._by_line.get(line, ())]
        text = " ".join(toks) if toks else " ".join(" ".join(self.lines[first - 1:last]).split())
        self._normalised[(first, last)] = text
        return text

    def function_at(self, line: int) -> list[str]:
        """Qualified names (``f``, ``Class.method``) of the functions enclosing ``line``."""
        if self._functions is None:
            self._functions = []
            tree = self._tree()
            if tree is not None:
                self._collect(tree, "")
        return [name for first, last, name in self._functions if first <= line <= last]

    def _collect(self, node, prefix: str) -> None:
        for child in ast.iter_child_nodes(node):
            if isinstance(child, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef)):
                name = prefix + child.name
                if not isinstance(child, ast.ClassDef):
                    first = min([child.lineno] + [d.lineno for d in child.decorator_list])
                    self._functions.append((first, child.end_lineno or child.lineno, name))
                self._collect(child, name + ".")
            else:
                self._collect(child, prefix)


def acceptances(facts: SourceFacts) -> tuple[list[Acceptance], list[tuple[int, int, str]]]:
    """(well-formed acceptances, [(line, column, problem)] for directives not understood)."""
    good, bad = [], []
    for tok in facts.comments():
        m = _DIRECTIVE.match(tok.string)
        if not m:
            continue
        line, column = tok.start[0], tok.start[1] + 1
        a = _ACCEPT.match(m.group("rest"))
        if not a:
            bad.append((line, column, "comment not understood as an acceptance; the form is "
                                      "`# optlint: accept RULE[, RULE...] -- reason`, so it accepts nothing"))
            continue
        rules = tuple(r.strip() for r in a.group("ids").split(","))
        good.append(Acceptance(line, column, rules, (a.group("reason") or "").strip(), tok.string))
    return good, bad


def resolve_severity(rule: str, default: str, dialect: str | None, relpath: str, options) -> str:
    """Rule default < dialect severity < rule severity < matching overrides (in order) < command line."""
    level = default
    if dialect is not None:
        level = options.dialect_severities.get(dialect, {}).get(rule, level)
    level = options.severities.get(rule, level)
    for override in options.overrides:
        if any(glob_match(p, relpath) for p in override.paths):
            level = override.severity.get(rule, level)
    return options.command_line_severities.get(rule, level)


def relative(path: str, root: str | None) -> str:
    root = os.path.abspath(root or os.getcwd())
    rel = os.path.relpath(os.path.abspath(path), root)
    return rel.replace(os.sep, "/")


def apply(path: str, findings: list[Finding], dialect_of: dict[int, str], facts: SourceFacts | None,
          options, rules: dict) -> tuple[list[Finding], int]:
    """Severities, intended non-convexity and inline acceptances for one file's findings.

    Returns (findings to report, number accepted inline).
    """
    relpath = relative(path, options.root)
    accepted_count = 0
    good, bad = ([], [])
    if facts is not None and options.honour_acceptances and "optlint" in facts.text:
        good, bad = acceptances(facts)
    out: list[Finding] = []
    for f in findings:
        acceptance = _matching(good, f, facts)
        if acceptance is not None:
            acceptance.used.add(f.rule)
        rule = rules.get(f.rule)
        level = resolve_severity(f.rule, rule.severity if rule else f.severity, dialect_of.get(id(f)), relpath,
                                 options)
        if level == "off":
            continue
        f.severity = level
        if acceptance is not None:
            accepted_count += 1
            continue
        _intended(f, relpath, facts, options)
        out.append(f)
    for a in good:
        out.extend(_acceptance_findings(path, a, rules))
    for line, column, problem in bad:
        out.append(Finding(UNUSED, Site(path, line, column, line, column), problem))
    final = []
    for f in out:
        if f.rule in (NO_REASON, UNUSED):
            level = resolve_severity(f.rule, rules[f.rule].severity if f.rule in rules else f.severity, None,
                                     relpath, options)
            if level == "off":
                continue
            f.severity = level
        final.append(f)
    return final, accepted_count


def _matching(good: list[Acceptance], f: Finding, facts: SourceFacts | None) -> Acceptance | None:
    if not good or f.rule in (NO_REASON, UNUSED):
        return None
    lines = set(range(f.site.line, max(f.site.line, f.site.end_line) + 1))
    lines.add(facts.statement(f.site.line)[0])
    for a in good:
        if a.line in lines and f.rule in a.rules:
            return a
    return None


def _acceptance_findings(path: str, a: Acceptance, rules: dict):
    site = Site(path, a.line, a.column, a.line, a.column + len(a.text))
    if not a.reason or not re.search(r"[A-Za-z]{2,}", a.reason):
        yield Finding(NO_REASON, site, f"acceptance of {', '.join(a.rules)} gives no reason; write "
                                       f"`# optlint: accept {', '.join(a.rules)} -- why this is fine`")
    for rule in a.rules:
        if rule in a.used:
            continue
        if rule not in rules:
            near = _near(rule, list(rules))
            yield Finding(UNUSED, site, f"acceptance names unknown rule {rule!r}{near}; it accepts nothing")
        else:
            yield Finding(UNUSED, site, f"acceptance of {rule} matches no finding here; remove it or move it "
                                        f"to the line of the finding")


def _near(word: str, choices: list[str]) -> str:
    import difflib

    near = difflib.get_close_matches(word, choices, n=1)
    return f" (did you mean {near[0]!r}?)" if near else ""


def _intended(f: Finding, relpath: str, facts: SourceFacts | None, options) -> None:
    if f.rule not in NONCONVEXITY_RULES and not f.rule.startswith(("nonconvex-", "nonaffine-")):
        return
    for entry in options.intended:
        if not glob_match(entry.path, relpath):
            continue
        if entry.function is not None:
            names = facts.function_at(f.site.line) if facts is not None else []
            if not any(n == entry.function or n.rsplit(".", 1)[-1] == entry.function for n in names):
                continue
        f.severity = "note"
        where = f"function {entry.function}" if entry.function else relpath
        f.message += f" [intended non-convex ({where}): {entry.reason}]"
        f.evidence["intended"] = {"reason": entry.reason, "function": entry.function, "path": entry.path}
        return


# -- fingerprints and the baseline ---------------------------------------------------------------

def fingerprints(path: str, findings: list[Finding], facts: SourceFacts | None, root: str | None) -> list[str]:
    relpath = relative(path, root)
    seen: dict[tuple[str, str], int] = {}
    out = []
    for f in findings:
        if facts is not None:
            text = facts.normalised(*facts.statement(f.site.line))
        else:
            text = ""
        key = (f.rule, text)
        occurrence = seen.get(key, 0)
        seen[key] = occurrence + 1
        payload = "\x00".join((FINGERPRINT_KEY, f.rule, relpath, text, str(occurrence)))
        out.append(hashlib.sha256(payload.encode("utf-8")).hexdigest()[:32])
    return out


class BaselineError(Exception):
    pass


def write_baseline(path: str, results, root: str | None) -> int:
    entries = []
    for r in results:
        for f, fp in zip(r.findings, r.fingerprints):
            entries.append({"fingerprint": fp, "rule": f.rule, "path": relative(r.path, root),
                            "line": f.site.line, "message": f.message})
    doc = {"format": BASELINE_FORMAT, "version": BASELINE_VERSION,
           "note": "findings accepted as they were when this file was written; `optlint baseline` rewrites it",
           "entries": sorted(entries, key=lambda e: (e["path"], e["line"], e["rule"], e["fingerprint"]))}
    with open(path, "w", encoding="utf-8") as fh:
        json.dump(doc, fh, indent=2, ensure_ascii=False)
        fh.write("\n")
    return len(entries)


def read_baseline(path: str) -> list[dict]:
    try:
        with open(path, encoding="utf-8") as fh:
            doc = json.load(fh)
    except OSError as exc:
        raise BaselineError(f"{path}: cannot read baseline ({exc.strerror or exc})")
    except ValueError as exc:
        raise BaselineError(f"{path}: baseline is not valid JSON ({exc})")
    if not (isinstance(doc, dict) and doc.get("format") == BASELINE_FORMAT and isinstance(doc.get("entries"), list)):
        raise BaselineError(f"{path}: not an optlint baseline (expected a JSON object with "
                            f"\"format\": \"{BASELINE_FORMAT}\" and a list of \"entries\")")
    if doc.get("version") != BASELINE_VERSION:
        raise BaselineError(f"{path}: baseline version {doc.get('version')!r}; this optlint reads version "
                            f"{BASELINE_VERSION}")
    entries = []
    for i, e in enumerate(doc["entries"]):
        if not (isinstance(e, dict) and isinstance(e.get("fingerprint"), str)):
            raise BaselineError(f"{path}: entries[{i}] has no \"fingerprint\" string")
        entries.append(e)
    return entries


def filter_baseline(results, entries: list[dict]) -> tuple[int, int]:
    """Drop findings whose fingerprint is in the baseline (each entry matches once).

    Returns (findings matched, baseline entries that matched nothing).
    """
    remaining: dict[str, int] = {}
    for e in entries:
        remaining[e["fingerprint"]] = remaining.get(e["fingerprint"], 0) + 1
    matched = 0
    for r in results:
        keep_f, keep_fp = [], []
        for f, fp in zip(r.findings, r.fingerprints):
            if remaining.get(fp, 0) > 0:
                remaining[fp] -= 1
                matched += 1
            else:
                keep_f.append(f)
                keep_fp.append(fp)
        r.findings, r.fingerprints = keep_f, keep_fp
    return matched, sum(remaining.values())

