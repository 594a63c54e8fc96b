"""Derivation trees and blame: for wrong-way expressions, the first failing node and its reason.

The expected failure points follow the composition rules of B&V 2004 §3.2.1-§3.2.4 (from memory):
a nonnegative weighted sum needs every term of the wanted curvature, a negative weight flips it, a
nondecreasing convex function needs a convex argument, and so on.
"""

from __future__ import annotations

import pytest
import sympy as sp

from optlint.calculus import Curvature, Derivation, Facts, analyse, blame
from optlint.calculus import functions as F

x, y, v, w = sp.symbols("x y v w")
gamma = sp.Symbol("gamma")
FACTS = Facts(variables=frozenset({x, y, v, w}))
CV, CC, AF = Curvature.CONVEX, Curvature.CONCAVE, Curvature.AFFINE

CASES = [
    # (expression, want, expected blamed subexpression, words the reason must contain, source)
    (-F.pnorm(v, 2), CV, -F.pnorm(v, 2), ["convex term subtracted", "weight -1"],
     "B&V 2004 §3.2.1: only nonnegative weights keep convexity"),
    (F.pnorm(v, 2) - F.pnorm(w, 2), CV, -F.pnorm(w, 2), ["convex term subtracted"],
     "B&V 2004 §3.2.1: the subtracted norm is the culprit"),
    (F.sum_squares(v) - sp.Float(0.1) * F.pnorm(w, 1), CV, -sp.Float(0.1) * F.pnorm(w, 1),
     ["convex term subtracted", "-0.1"], "B&V 2004 §3.2.1: negative weight on a convex term"),
    (sp.sqrt(F.sum_squares(v)), CV, sp.sqrt(F.sum_squares(v)), ["concave function 'sqrt'", "convex"],
     "B&V 2004 §3.1.5: sqrt is concave; §3.2.4 cannot make it convex"),
    (sp.sqrt(F.sum_squares(v)), CC, F.sum_squares(v), ["convex function 'sum_squares'", "concave"],
     "B&V 2004 §3.2.4: concave nondecreasing needs a concave argument"),
    (gamma * F.pnorm(x, 2), CV, gamma * F.pnorm(x, 2), ["sign of weight unknown", "gamma"],
     "B&V 2004 §3.2.1: weights must be known nonnegative"),
    (x * y, CV, x * y, ["product of two non-constant expressions"],
     "B&V 2004 §3.1.4: xy is indefinite"),
    (sp.log(sp.exp(x) + sp.exp(y)), CV, sp.log(sp.exp(x) + sp.exp(y)), ["concave function 'log'"],
     "B&V 2004 §3.1.5: log is concave (log-sum-exp must be written with the atom)"),
    (sp.log(sp.exp(x) + sp.exp(y)), CC, sp.exp(x), ["convex function 'exp'", "concave"],
     "B&V 2004 §3.2.4: log needs a concave argument; the first convex term is blamed"),
    (x + F.pnorm(v, 2), AF, F.pnorm(v, 2), ["convex function 'norm'", "affine"],
     "from memory: an equality constraint needs an affine expression"),
    (F.pnorm(v, 2), AF, F.pnorm(v, 2), ["equality needs an affine expression; this is convex"],
     "from memory: an equality constraint needs an affine expression"),
    (sp.exp(sp.sqrt(x)), CV, sp.sqrt(x), ["concave function 'sqrt'", "convex expression is needed"],
     "B&V 2004 §3.2.4: exp is nondecreasing, so it needs a convex argument"),
    ((x**2 - 1)**2, CV, (x**2 - 1)**2, ["'square'", "sign is unknown"],
     "B&V 2004 §3.2.4: square is monotone only on a known-sign argument"),
    (sp.exp(x) + sp.Function("mylib.penalty")(x), CV, sp.Function("mylib.penalty")(x),
     ["function 'mylib.penalty' is unknown"], "from memory: an unknown function proves nothing"),
    (F.entr(x**2), CC, x**2, ["convex function 'square'", "affine"],
     "from memory: entr is not monotone, so it needs an affine argument"),
    (x**3 + x, CV, x**3, ["'**3'", "sign"], "B&V 2004 §3.1.5: x^3 is convex only on x >= 0"),
]


@pytest.mark.parametrize("expr, want, culprit, words, source", CASES, ids=[c[-1] for c in CASES])
def test_blame_names_the_first_failing_node(expr, want, culprit, words, source):
    tree = analyse(expr, FACTS).tree
    found = blame(tree, want)
    assert found is not None, source
    node, reason = found
    assert node.expr == culprit, (source, node.expr, reason)
    for word in words:
        assert word in reason, (source, reason)


def test_blame_is_none_when_satisfied():
    tree = analyse(F.pnorm(v, 2) + x, FACTS).tree
    assert blame(tree, CV) is None
    assert blame(analyse(-F.pnorm(v, 2), FACTS).tree, CC) is None
    assert blame(analyse(2 * x - y, FACTS).tree, AF) is None


def test_blame_rejects_other_wants():
    with pytest.raises(ValueError):
        blame(analyse(x, FACTS).tree, Curvature.UNKNOWN)


def test_derivation_tree_records_rules():
    tree = analyse(3 * sp.exp(x) + sp.sqrt(F.sum_squares(v)), FACTS).tree
    assert tree.rule == "sum" and tree.curvature is Curvature.UNKNOWN
    assert tree.reason == "sum of convex and concave terms" or "unknown" in tree.reason
    rules = {child.rule for child in tree.children}
    assert "scale" in rules
    sqrt_node = next(c for c in tree.children if c.expr == sp.sqrt(F.sum_squares(v)))
    assert sqrt_node.rule == "elementwise-pow" and sqrt_node.atom == "pow:frac"
    assert "concave function 'sqrt' applied to a convex argument" in sqrt_node.reason
    leaf = sqrt_node.children[0].children[0]
    assert isinstance(leaf, Derivation) and leaf.rule == "leaf-variable"


def test_unknown_functions_are_listed_in_order_once():
    f, g = sp.Function("mylib.penalty"), sp.Function("helper")
    c = sp.Symbol("c")
    result = analyse(F.vsum(F.stack(f(x), g(y), f(y), g(c))), FACTS)
    assert result.unknown_functions == ("mylib.penalty", "helper")
    node = result.tree.children[0].children[0]
    assert node.rule == "unknown-function" and node.function_name == "mylib.penalty"
    # a call on data only is a constant, whatever the function, and is not reported as unknown
    constant = analyse(x + g(c), FACTS)
    assert constant.curvature is AF and constant.unknown_functions == ()
