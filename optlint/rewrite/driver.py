"""Driver: from a file's findings to verified rewrites, one file at a time.

A round: check the file (the engine's findings, after the project's policy), observe it (every
node's values, ``observe``), and for each finding of a rule with exact rewrites find the CST
nodes to replace:
- ``strict-inequality`` and ``degenerate-constraint`` (with an affine equivalent): the comparison at
  the finding's own site;
- ``undisciplined-convex``: every node of the file that has a form (``forms``) and a value that is
  part of the flagged objective or constraint as the interpreter built it (so a definition on an
  earlier line, or inside a helper, is found as well as the expression at the site).
Nested candidates wait for the next round; rounds repeat until nothing is left (at most
``MAX_ROUNDS``), so a second run finds nothing to do.

Every round's result is re-parsed and re-checked; it is kept only if every finding outside the
rewritten lines (its rule, severity and place, lines shifted by the rewrite) is the same as before
and the rewritten lines gained no finding of a rule they did not have. Otherwise the file is left
as it was and the reason is reported.
"""

from __future__ import annotations

import difflib
from collections import Counter
from dataclasses import dataclass, field

import libcst as cst

from optlint.rewrite import forms
from optlint.rewrite.codemod import Namer, apply
from optlint.rewrite.observe import Observation, observe
from optlint.lift import preorder

MAX_ROUNDS = 4
RULES = ("undisciplined-convex", "degenerate-constraint", "strict-inequality")


@dataclass
class Change:
    line: int  # in the file as it was before the round that made the change
    rule: str
    summary: str
    before: str
    after: str


@dataclass
class Outcome:
    path: str
    original: bytes
    rewritten: bytes
    encoding: str = "utf-8"
    changes: list[Change] = field(default_factory=list)
    notes: list[tuple[int, str, str]] = field(default_factory=list)  # (line, rule, why it stays a suggestion)
    refused: str | None = None  # why a rewrite was not kept (the file is left as it was)
    failed: bool = False  # optlint itself failed on the file (refused says how)

    @property
    def changed(self) -> bool:
        return self.rewritten != self.original

    def diff(self) -> str:
        if not self.changed:
            return ""
        before = self.original.decode(self.encoding).splitlines(keepends=True)
        after = self.rewritten.decode(self.encoding).splitlines(keepends=True)
        out = []
        for line in difflib.unified_diff(before, after, fromfile=self.path, tofile=self.path):
            out.append(line if line.endswith("\n") else line + "\n\\ No newline at end of file\n")
        return "".join(out)


@dataclass
class _Edit:
    node: cst.CSTNode
    replacement: object  # the form's Match until the atoms are named, then the new node
    rule: str
    sites: list  # the sites of the findings this edit answers
    summary: str


def rewrite_source(path: str, data: bytes, options=None) -> Outcome:
    """The rewritten bytes of ``data`` (read as the file at ``path``), verified. Never raises:
    a failure of optlint itself leaves the file as it was, with the reason in ``refused``."""
    outcome = Outcome(path, data, data)
    if options is not None and options.dialects is not None and "dsl" not in options.dialects:
        return outcome
    from optlint.elide import elide_large_literals
    from optlint.sources import SourceError, read_source

    try:
        if elide_large_literals(read_source(path, data).text)[1]:
            outcome.refused = "the file holds very large numeric literals, which optlint reads elided; not rewritten"
            return outcome
        module = cst.parse_module(data)
    except (SourceError, cst.ParserSyntaxError, RecursionError):
        return outcome  # `optlint check` reports it; there is nothing to rewrite
    outcome.encoding = module.encoding
    try:
        _rounds(outcome, options)
    except Exception as exc:  # the engine's promise holds here too: one file never stops the run
        outcome.rewritten, outcome.changes, outcome.failed = data, [], True
        outcome.refused = f"optlint failed while rewriting ({type(exc).__name__}: {exc}); file left as it was"
    return outcome


def _rounds(outcome: Outcome, options) -> None:
    from optlint.engine import check_data

    path, data = outcome.path, outcome.original
    current = data
    findings = check_data(path, current, options).findings
    for _ in range(MAX_ROUNDS):
        if not any(f.rule in RULES for f in findings):
            break
        try:
            obs = observe(path, current, options)
        except RecursionError:
            obs = None
        if obs is None:
            break
        edits, namer, notes = _plan(obs, findings)
        outcome.notes = notes
        if not edits:
            break
        new_module, spans = _apply(obs, edits, namer)
        new = new_module.bytes
        try:
            cst.parse_module(new)
        except cst.ParserSyntaxError as exc:
            outcome.refused = f"the rewrite would not parse ({exc.message}); file left as it was"
            outcome.changes = []
            return
        new_findings = check_data(path, new, options).findings
        problem = _compare(findings, new_findings, spans, [s for e in edits for s in e.sites])
        if problem is not None:
            outcome.refused = f"{problem}; file left as it was"
            outcome.changes = []
            return
        for e in edits:
            outcome.changes.append(Change(obs.positions[e.node].start.line, e.rule, e.summary,
                                          forms.code(e.node), forms.code(e.replacement)))
        current, findings = new, new_findings
    outcome.rewritten = current


def rewrite_file(path: str, options=None) -> Outcome:
    with open(path, "rb") as fh:
        data = fh.read()
    return rewrite_source(path, data, options)


# -- planning ------------------------------------------------------------------------------------


def _plan(obs: Observation, findings):
    """(edits, namer, notes): the outermost replacements of this round, and why each other finding
    of the rules with rewrites stays a suggestion."""
    at_site = _nodes_by_start(obs)
    candidates = None
    matches: dict[int, _Edit] = {}
    notes = []
    for f in findings:
        if f.rule not in RULES:
            continue
        if f.rule == "degenerate-constraint" and "affine_equivalent" not in f.evidence:
            continue  # no affine equivalent (or infeasible on its face): nothing exact to write
        line = f.site.line
        item = _item_at(obs, f)
        if item is None:
            notes.append((line, f.rule, "not part of a disciplined-convex model this tool rewrites"))
            continue
        if f.rule == "undisciplined-convex":
            if candidates is None:
                candidates = _candidates(obs)
            found = _linked(obs, item, candidates)
            if not found:
                notes.append((line, f.rule, "no rewrite of this expression is known to be exact"))
        else:
            node = next((n for n in at_site.get((line, f.site.column), ()) if isinstance(n, cst.Comparison)), None)
            form = forms.degenerate_form if f.rule == "degenerate-constraint" else forms.strict_form
            result = form(obs, node) if node is not None else None
            if result is None:
                notes.append((line, f.rule, "no rewrite of this constraint is known to be exact"))
            found = [(node, result)] if result is not None else []
        for node, result in found:
            if isinstance(result, forms.Refusal):
                notes.append((line, f.rule, result.reason))
            elif id(node) in matches:
                matches[id(node)].sites.append(f.site)
            elif forms.has_comment(node) and not isinstance(node, cst.Comparison):
                notes.append((line, f.rule, "a comment inside the expression would be lost"))
            else:
                matches[id(node)] = _Edit(node, result, f.rule, [f.site], result.summary)
    namer = Namer(obs.module)
    edits = []
    for edit in _outermost(obs, list(matches.values())):  # inner ones wait for the next round
        edit.replacement = _build(namer, edit.replacement)
        if edit.replacement is None:
            notes.append((edit.sites[0].line, edit.rule, "the library's atom cannot be named without a "
                                                         "clash with another name of the file"))
        else:
            edits.append(edit)
    return edits, namer, sorted(set(notes))


def _build(namer: Namer, match: forms.Match):
    """The replacement with every atom named in one style (the file's preferred one, else the
    other), or None."""
    for second in (False, True):
        namer.attempt(second)
        replacement = match.build(namer)
        if replacement is not None:
            return replacement
        namer.abandon()
    return None


def _outermost(obs: Observation, edits: list[_Edit]) -> list[_Edit]:
    """Edits not inside another edit."""
    def span(e):
        r = obs.positions[e.node]
        return (r.start.line, r.start.column), (r.end.line, r.end.column)

    kept = []
    for e in sorted(edits, key=lambda e: (span(e)[0], tuple(-x for x in span(e)[1]))):
        (s, t) = span(e)
        if any(span(k)[0] <= s and t <= span(k)[1] for k in kept):
            continue
        kept.append(e)
    return kept


def _nodes_by_start(obs: Observation) -> dict:
    out: dict = {}
    for node, rng in obs.positions.items():
        out.setdefault((rng.start.line, rng.start.column + 1), []).append(node)
    return out


def _item_at(obs: Observation, finding):
    s = finding.site
    for item in list(obs.model.objectives) + list(obs.model.constraints):
        if (item.site.line, item.site.column) == (s.line, s.column):
            return item
    return None


def _candidates(obs: Observation) -> list:
    """(node, Match or Refusal) for every node of the module that has an undisciplined form."""
    out = []

    class _Walk(cst.CSTVisitor):
        def on_visit(self, node):
            if isinstance(node, (cst.Call, cst.BinaryOperation)):
                for form in forms.UNDISCIPLINED_FORMS:
                    result = form(obs, node)
                    if result is not None:
                        out.append((node, result))
                        break
            return True

    obs.module.visit(_Walk())
    return out


def _linked(obs: Observation, item, candidates) -> list:
    """The candidates one of whose values is part of an expression of ``item``."""
    parts: set = set()
    products: list = []
    for expr in _item_exprs(item):
        for node in _preorder(expr):
            parts.add(node)
            if node.is_Add or node.is_Mul:
                products.append(node)
    out = []
    for node, result in candidates:
        values = obs.exprs(node) or []
        if any(v in parts or _inside(v, products) for v in values):
            out.append((node, result))
    return out


def _item_exprs(item):
    if hasattr(item, "sense"):
        return [v.expr for v in item.variants]
    return [e for left, right, _ in item.variants for e in (left, right)]


def _preorder(expr, limit: int = 50_000):
    import sympy

    if not isinstance(expr, sympy.Basic):
        return []
    out = []
    for i, node in enumerate(preorder(expr)):
        if i >= limit:
            break
        out.append(node)
    return out


def _inside(value, sums) -> bool:
    """``value`` (a sum or product) is some of the terms of a sum or factors of a product."""
    if not (value.is_Add or value.is_Mul):
        return False
    args = set(value.args)
    return any(type(s) is type(value) and args <= set(s.args) for s in sums)


# -- applying and checking -----------------------------------------------------------------------


def _apply(obs: Observation, edits: list[_Edit], namer: Namer):
    """The new module and the rewritten spans: (old start line, old end line, line delta)."""
    replacements = {id(e.node): e.replacement for e in edits}
    spans = []
    empty = cst.Module([])
    for e in edits:
        spans.append(_span(obs, e.node, empty.code_for_node(e.replacement)))
    for key, (old, new) in namer.import_edits().items():
        replacements[key] = new
        spans.append(_span(obs, old, empty.code_for_node(new)))
    return apply(obs.module, replacements), sorted(spans)


def _span(obs: Observation, node, new_code: str):
    r = obs.positions[node]
    old_lines = r.end.line - r.start.line
    return (r.start.line, r.end.line, new_code.count("\n") - old_lines)


def _compare(before, after, spans, sites) -> str | None:
    """None when the analysis outside the rewritten lines is unchanged, else what changed."""
    old_ranges = [(a, b) for a, b, _ in spans] + [(s.line, s.end_line) for s in sites]

    def shift(line: int) -> int:
        return line + sum(d for _, end, d in spans if end < line)

    new_ranges = [(shift(a), b + sum(d for _, end, d in spans if end <= b)) for a, b in old_ranges]

    def touches(f, ranges) -> bool:
        return any(f.site.line <= b and a <= f.site.end_line for a, b in ranges)

    original_line = {}
    kept_before: Counter = Counter()
    for f in before:
        if not touches(f, old_ranges):
            key = (shift(f.site.line), f.site.column, f.rule, f.severity)
            kept_before[key] += 1
            original_line[key] = f.site.line
    kept_after = Counter((f.site.line, f.site.column, f.rule, f.severity)
                         for f in after if not touches(f, new_ranges))
    if kept_before != kept_after:
        gone = kept_before - kept_after
        if gone:
            key = min(gone)
            return (f"the analysis of another statement would change (the {key[2]} finding at line "
                    f"{original_line[key]} would disappear)")
        line, _, rule, _ = min(kept_after - kept_before)
        return (f"the analysis of another statement would change (a {rule} finding would appear at "
                f"line {line} of the rewritten file)")
    rules_before = {f.rule for f in before if touches(f, old_ranges)}
    gained = sorted({f.rule for f in after if touches(f, new_ranges)} - rules_before)
    if gained:
        return f"the rewritten lines would gain a {gained[0]} finding"
    return None
