"""Renderers a reviewer reads: derivation trees (rich) and witness sentences.

- ``derivation_tree(analysis, root, failing)``: a rich Tree, one node per derivation step with the
  expression (the modeller's source text when known), its curvature, sign and rule; the failing
  step is highlighted. Trees can be hundreds of levels deep: depth and width are capped, and the
  build is iterative.
- ``witness_sentence(w)``: one sentence from an ``evidence.witness`` dict that can be recomputed
  by hand from the numbers it shows.
- ``trees_at(path, line, console)``: prints the trees of the objectives and constraints whose site
  starts at ``line`` of ``path``; 0 when there was one, 1 when nothing is there. It reads the file
  and never runs it, like every other part of optlint.
- ``FindingTrees(options).renderables(path, finding)``: the same tree and the witness sentence
  under one finding of the text report (``optlint check --show-derivation``).
"""

from __future__ import annotations

from rich.markup import escape
from rich.text import Text
from rich.tree import Tree

MAX_DEPTH = 14
MAX_CHILDREN = 12
_STYLE = {"convex": "green", "concave": "cyan", "affine": "blue", "constant": "dim", "unknown": "yellow"}


def _label(analysis, node, failing: bool, reason: str | None = None) -> str:
    curv = node.curvature.value
    text = escape(analysis.text(node.expr))
    label = (f"[bold]{text}[/bold]  [{_STYLE.get(curv, 'white')}]{curv}[/], sign {node.sign.value}"
             f"  [dim]({escape(node.rule)})[/dim]")
    if failing:
        why = node.reason or reason
        return f"[bold red]✗ {label}[/bold red]" + (f"  [red]{escape(why)}[/red]" if why else "")
    return label


def derivation_tree(analysis, root, failing=None, title: str | None = None, reason: str | None = None) -> Tree:
    """The rich Tree of ``root``; the node ``failing`` (by identity) is highlighted, with ``reason``
    when the step itself carries none (a step the rules accept but the package rejects as written)."""
    tree = Tree(escape(title) if title else _label(analysis, root, root is failing, reason))
    top = tree if title is None else tree.add(_label(analysis, root, root is failing, reason))
    stack = [(root, top, 1)]
    while stack:
        node, branch, depth = stack.pop()
        kids = node.children
        if depth >= MAX_DEPTH and kids:
            branch.add("[dim]… (deeper steps not shown)[/dim]")
            continue
        added = []
        for child in kids[:MAX_CHILDREN]:
            added.append((child, branch.add(_label(analysis, child, child is failing, reason)), depth + 1))
        if len(kids) > MAX_CHILDREN:
            branch.add(f"[dim]… {len(kids) - MAX_CHILDREN} more[/dim]")
        stack.extend(reversed(added))
    return tree


def _num(x: float, digits: int = 6) -> str:
    return f"{x:.{digits}g}"


def _coordinate(x: float) -> str:
    return f"{x:.15g}"  # the search's points are dyadic: 15 digits print them exactly


def _point(values) -> str:
    return "(" + ", ".join(_coordinate(v) for v in values) + ")"


def _digits(left: float, right: float) -> int:
    """Enough significant digits that ``left`` and ``right`` print differently (6 at least)."""
    for digits in range(6, 18):
        if _num(left, digits) != _num(right, digits):
            return digits
    return 17


MAX_SHOWN_EXPRESSION = 400


def witness_sentence(w: dict) -> str:
    """The witness as one sentence with every number a reader needs to recompute it."""
    t = w["t"]
    fa, fb, ft = w["f_a"], w["f_b"], w["f_t"]
    chord = t * fa + (1 - t) * fb
    kind = w.get("kind", "function")
    d = _digits(ft, chord) if kind != "set" else 6
    names = ", ".join(w["variables"])
    expression = w["expression"]
    if len(expression) > MAX_SHOWN_EXPRESSION:
        expression = expression[:MAX_SHOWN_EXPRESSION - 1] + "… (in full in the JSON evidence)"
    where = [f"{v} = {label}" for v, label in w.get("variable_map", {}).items() if label != v]
    head = (f"for f({names}) = {expression}" + (f" where {', '.join(where)}" if where else "")
            + f", a = {_point(w['a'])}, b = {_point(w['b'])}, t = {_num(t)}: "
            f"f(a) = {_num(fa, d)}, f(b) = {_num(fb, d)}, f(t·a+(1−t)·b) = {_num(ft, d)}")
    if kind == "set":
        tail = f"; a and b satisfy f <= 0 but the point between them has f = {_num(ft)} > 0, so the feasible set is not convex"
    elif kind == "not-affine":
        tail = f" ≠ t·f(a)+(1−t)·f(b) = {_num(chord, d)}, so f is not affine"
    else:
        tail = f" > t·f(a)+(1−t)·f(b) = {_num(chord, d)}, so f is not convex"
    instance = [f"{k} = {_num(v)}" for k, v in (w.get("data") or {}).items()]
    if instance:
        tail += " (for data " + ", ".join(instance) + ")"
    if w.get("notes"):
        tail += " (instance: " + "; ".join(w["notes"]) + ")"
    return head + tail


def _models(path: str, options=None):
    from optlint.engine import Options, _parse_and_recognise
    from optlint.prefilter import scan_dialects
    from optlint.sources import read_source

    with open(path, "rb") as fh:
        data = fh.read()
    dialects = scan_dialects(path, data)
    if not dialects:
        return []
    source = read_source(path, data)
    _, models = _parse_and_recognise(path, source, dialects, options or Options())
    return models


def _parts(analysis, j, title: str | None = None, witness: bool = True) -> list:
    """The tree of one judgement and the line under it (its proof, or its witness sentence)."""
    failing, reason = j.failure if j.failure is not None else (None, None)
    out = [derivation_tree(analysis, j.result.tree, failing, title, reason)]
    if j.proof is not None:
        out.append(f"  proved beyond the rules ({escape(j.proof['method'])}): {escape(j.proof.get('reference', ''))}")
    elif not j.ok and witness:
        from optlint.analysis import judgement_evidence

        w = judgement_evidence(analysis, j).get("witness")
        if w is not None:
            out.append("  witness: " + escape(witness_sentence(w)))
    return out


class FindingTrees:
    """Derivation trees and witness sentences under the findings of a text report
    (``optlint check --show-derivation``). Each file is recognised and analysed again here, once,
    with the run's options; the witness sentence is read from the finding's own evidence."""

    def __init__(self, options=None):
        self.options = options
        self._files: dict[str, list] = {}

    def _items(self, path: str):
        if path not in self._files:
            from optlint.analysis import ModelAnalysis

            try:
                models = _models(path, self.options)
            except (OSError, ValueError, SyntaxError):
                models = []
            self._files[path] = [(ModelAnalysis(m), i) for m in models
                                 for i in list(m.objectives) + list(m.constraints)]
        return self._files[path]

    def renderables(self, path: str, finding) -> list:
        out: list = []
        if "required" in finding.evidence:  # a verdict on an objective or constraint
            for analysis, item in self._items(path):
                if (item.site.line, item.site.column) != (finding.site.line, finding.site.column):
                    continue
                # the variant the finding describes: the first that fails (or that the package rejects)
                judged = [j for j in analysis.judge(item) if j.failure is not None]
                if judged:
                    out.extend(_parts(analysis, judged[0], witness=False))
                    break
        w = finding.evidence.get("witness")
        if w is not None:
            out.append(Text("witness: " + witness_sentence(w)))
        return out


def trees_at(path: str, line: int, console) -> int:
    """Print the derivation trees of the model parts whose site starts at ``line``; 0 if any, else 1."""
    from optlint.analysis import ModelAnalysis
    from optlint.report.text import print_wide

    found = 0
    for model in _models(path):
        analysis = ModelAnalysis(model)
        items = [i for i in list(model.objectives) + list(model.constraints) if i.site.line == line]
        for item in items:
            for j in analysis.judge(item):
                kind = "objective" if hasattr(item, "sense") else f"constraint ({item.relation})"
                title = f"{path}:{line} {kind}: needs {j.want.value}" + (
                    f" when {'; '.join(j.branch)}" if j.branch else "")
                for part in _parts(analysis, j, title):
                    print_wide(console, part)
                found += 1
    return 0 if found else 1
