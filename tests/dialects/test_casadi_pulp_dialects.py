"""CasADi Opti and PuLP recognisers.

Facts: a nonlinear equality is not a convex set (B&V 2004 §4.2.1, from memory); the outside of
a ball {x : ||x|| >= r} is not convex while the ball is (§2.2.3, §3.1.6); sqrt is concave and
-log convex on the positive reals (§3.1.5); min of two convex functions is not convex in
general; PuLP's objective is the first expression added that is not a relation (PuLP's
documented ``+=`` behaviour, from memory).
"""

from __future__ import annotations

from helpers import findings, rules

OPTI = """
from casadi import *
import numpy as np
opti = Opti()
x = opti.variable(3)
u = opti.variable(2)
"""


def test_dynamics_equality_is_one_finding_per_site_with_a_plain_note(tmp_path):
    found = findings(tmp_path, OPTI + """
for k in range(10):
    opti.subject_to(x[1] == x[0] + 0.1 * sin(x[2]))
    opti.subject_to(x[0] == x[1] + 0.1 * u[0])
opti.minimize(sumsqr(x) + sumsqr(u))
""")
    assert [(f.site.line, f.rule) for f in found] == [(9, "nonaffine-equality")]
    assert "non-convex by design" in found[0].message and "local NLP solver" in found[0].message
    assert found[0].evidence["instances"] == len(range(10))


def test_keep_out_versus_keep_in(tmp_path):
    assert rules(tmp_path, OPTI + """
opti.subject_to(norm_2(x - np.array([1.0, 2.0, 0.0])) >= 0.5)
opti.subject_to(norm_2(u) <= 1.0)
opti.subject_to([x[0] <= 3, x[1] >= -3])
opti.subject_to(u > 0)
opti.minimize(fmax(norm_1(x), norm_inf(u)) + dot(u, u))
""") == [(8, "nonconvex-inequality"), (11, "strict-inequality")]


def test_signs_come_from_constraints_on_the_whole_variable(tmp_path):
    source = OPTI + """
s = opti.variable()
{bound}
opti.minimize(sumsqr(u) + 1 / s - log(s))
"""
    # 1/s is convex for s > 0 only (B&V 2004 §3.1.5): the lower bound supplies the sign
    assert rules(tmp_path, source.format(bound="opti.subject_to(s >= 0.5)")) == []
    assert rules(tmp_path, source.format(bound="opti.subject_to(opti.bounded(0.5, s, 5))")) == []
    # a bound on one entry of another variable says nothing about s
    assert [r for _, r in rules(tmp_path, source.format(bound="opti.subject_to(x[0] >= 0)"))] == ["nonconvex-objective"]


def test_numpy_and_casadi_namespaces_stay_apart(tmp_path):
    # np.exp of data is data; casadi's exp of a variable is a model term (convex)
    assert rules(tmp_path, OPTI + """
w = np.exp(-0.1 * np.arange(3))
opti.minimize(mtimes(w.reshape((1, 3)), exp(x)) + sumsqr(vertcat(u[0], u[1])))
""") == []


def test_casadi_function_is_substituted(tmp_path):
    assert rules(tmp_path, OPTI + """
z = MX.sym("z", 3)
v = MX.sym("v", 2)
lin = Function("lin", [z, v], [z + 0.1 * vertcat(v[0], v[1], 0)])
nonlin = Function("nonlin", [z, v], [z + 0.1 * cos(z)])
opti.subject_to(x == lin(x, u))
opti.subject_to(x == nonlin(x, u))
""") == [(13, "nonaffine-equality")]


PULP = """
import pulp
prob = pulp.LpProblem("p", pulp.LpMaximize)
a = pulp.LpVariable("a", lowBound=0)
b = pulp.LpVariable("b", 0, 10)
xs = pulp.LpVariable.dicts("x", range(4), lowBound=0, cat="Integer")
"""


def test_pulp_first_expression_is_the_objective(tmp_path):
    found = findings(tmp_path, PULP + """
prob += a * b, "revenue"
prob += a + b <= 10
prob += pulp.lpSum(xs[i] for i in range(4)) >= 2, "cover"
prob += a * a
""")
    assert [(f.site.line, f.rule) for f in found] == [(8, "nonconvex-objective")]
    assert "maximise" in found[0].message


def test_pulp_linear_model_is_silent_but_strict_and_products_are_not(tmp_path):
    assert rules(tmp_path, PULP + """
prob += 3 * a + 2 * b + pulp.lpDot([1, 2, 3, 4], [xs[i] for i in range(4)])
prob += a - b >= -2
prob += a > 1
prob.addConstraint(xs[0] * b <= 4)
""") == [(10, "strict-inequality"), (11, "nonconvex-inequality")]


def test_a_bound_in_one_branch_gives_no_sign(tmp_path):
    assert [r for _, r in rules(tmp_path, OPTI + """
s = opti.variable()
def build(robust):
    if robust:
        opti.subject_to(s >= 0.5)
    opti.minimize(sumsqr(u) + 1 / s)
""")] == ["nonconvex-objective"]
