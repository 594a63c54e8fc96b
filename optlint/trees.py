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
"""

from __future__ import annotations

from rich.markup import escape
from rich.tree import Tree

MAX_DEPTH = 14
MAX_CHILDREN = 12
_STYLE = {"convex": "green", "concave": "cyan", "affine": "blue", "constant": "dim", "unknown": "yellow"}


def _label(analysis, node, failing: bool) -> str:
    curv = node.curvature.value
    text = escape(analysis.text(node.expr))
    label = (f"[bold]{text}[/bold]  [{_STYLE.get(curv, 'white')}]{curv}[/], sign {node.sign.value}"
             f"  [dim]({escape(node.rule)})[/dim]")
    if failing:
        return f"[bold red]✗ {label}[/bold red]" + (f"  [red]{escape(node.reason)}[/red]" if node.reason else "")
    return label


def derivation_tree(analysis, root, failing=None, title: str | None = None) -> Tree:
    """The rich Tree of ``root``; the node ``failing`` (by identity) is highlighted."""
    tree = Tree(escape(title) if title else _label(analysis, root, root is failing))
    top = tree if title is None else tree.add(_label(analysis, root, root is failing))
    stack = [(root, top, 1)]
    while stack:
        node, branch, depth = stack.pop()
        kids = node.children
        if depth >= MAX_DEPTH and kids:
            branch.add("[dim]… (deeper steps not shown)[/dim]")
            continue
        added = []
        for child in kids[:MAX_CHILDREN]:
            added.append((child, branch.add(_label(analysis, child, child is failing)), depth + 1))
        if len(kids) > MAX_CHILDREN:
            branch.add(f"[dim]… {len(kids) - MAX_CHILDREN} more[/dim]")
        stack.extend(reversed(added))
    return tree


def _num(x: float) -> str:
    return f"{x:.6g}"


def _point(values) -> str:
    return "(" + ", ".join(_num(v) for v in values) + ")"


def witness_sentence(w: dict) -> str:
    """The witness as one sentence with every number a reader needs to recompute it."""
    t = w["t"]
    fa, fb, ft = w["f_a"], w["f_b"], w["f_t"]
    chord = t * fa + (1 - t) * fb
    names = ", ".join(w["variables"])
    head = (f"for f({names}) = {w['expression']}, a = {_point(w['a'])}, b = {_point(w['b'])}, t = {_num(t)}: "
            f"f(a) = {_num(fa)}, f(b) = {_num(fb)}, f(t·a+(1−t)·b) = {_num(ft)}")
    kind = w.get("kind", "function")
    if kind == "set":
        tail = f"; a and b satisfy f <= 0 but the point between them has f = {_num(ft)} > 0, so the feasible set is not convex"
    elif kind == "not-affine":
        tail = f" ≠ t·f(a)+(1−t)·f(b) = {_num(chord)}, so f is not affine"
    else:
        tail = f" > t·f(a)+(1−t)·f(b) = {_num(chord)}, so f is not convex"
    data = w.get("data")
    if data:
        tail += " (for data " + ", ".join(f"{k} = {_num(v)}" for k, v in data.items()) + ")"
    return head + tail


def _models(path: str):
    from optlint.engine import Options, _parse_and_recognise
    from optlint.prefilter import scan_dialects
    from optlint.sources import read_source

    with open(path, "rb") as fh:
        data = fh.read()
    dialects = scan_dialects(path, data)
    if not dialects:
        return []
    source = read_source(path, data)
    _, models = _parse_and_recognise(path, source, dialects, Options())
    return models


def trees_at(path: str, line: int, console) -> int:
    """Print the derivation trees of the model parts whose site starts at ``line``; 0 if any, else 1."""
    from optlint.analysis import ModelAnalysis, judgement_evidence

    found = 0
    for model in _models(path):
        analysis = ModelAnalysis(model)
        items = [i for i in list(model.objectives) + list(model.constraints) if i.site.line == line]
        for item in items:
            for j in analysis.judge(item):
                failing = j.failure[0] if j.failure is not None else None
                kind = "objective" if hasattr(item, "sense") else f"constraint ({item.relation})"
                title = f"{path}:{line} {kind}: needs {j.want.value}" + (
                    f" when {'; '.join(j.branch)}" if j.branch else "")
                console.print(derivation_tree(analysis, j.result.tree, failing, title))
                if j.proof is not None:
                    console.print(f"  proved beyond the rules ({escape(j.proof['method'])}): "
                                  f"{escape(j.proof.get('reference', ''))}")
                elif not j.ok:
                    w = judgement_evidence(analysis, j).get("witness")
                    if w is not None:
                        console.print("  witness: " + escape(witness_sentence(w)))
                found += 1
    return 0 if found else 1
