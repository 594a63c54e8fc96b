"""scipy.optimize recogniser: objectives, the 'ineq'/'eq' convention, NonlinearConstraint, bounds.

Source of the convention: scipy's documentation of ``scipy.optimize.minimize`` (constraints
parameter): "Equality constraint means that the constraint function result is to be zero whereas
inequality means that it is to be non-negative." A convex fun in an 'ineq' constraint therefore
bounds a convex function from below (a superlevel set), which is not convex in general, while a
concave fun gives a convex superlevel set (B&V 2004 §3.1.6, from memory). The convention itself
is also checked numerically against scipy below (scipy is run only by this test, never by optlint).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.optimize import minimize

from helpers import findings, rules

HEADER = """
import numpy as np
from scipy.optimize import minimize, NonlinearConstraint
"""


def test_scipy_itself_reads_ineq_as_nonnegative():
    # Independent numerics: minimise x^2 subject to {'ineq': x - 1}; scipy lands on x = 1, i.e. it
    # enforced x - 1 >= 0 (with '<= 0' the answer would be x = 0).
    res = minimize(lambda x: x[0] ** 2, np.array([3.0]), method="SLSQP",
                   constraints=[{"type": "ineq", "fun": lambda x: x[0] - 1.0}])
    assert abs(res.x[0] - 1.0) < 1e-6


def test_concave_ineq_fun_is_clean(tmp_path):
    # 1 - ||x||^2 >= 0 is the unit ball: convex (scipy convention, see module docstring)
    assert rules(tmp_path, HEADER + """
def fit():
    cons = [{"type": "ineq", "fun": lambda x: 1.0 - np.sum(x ** 2)}]
    return minimize(lambda x: np.sum(np.abs(x - 0.3)), np.zeros(3), constraints=cons)
""") == []


def test_convex_ineq_fun_is_a_finding_that_states_the_convention(tmp_path):
    found = findings(tmp_path, HEADER + """
def fit():
    cons = [{"type": "ineq", "fun": lambda x: np.sum(x ** 2) - 1.0}]
    return minimize(lambda x: np.sum(np.abs(x - 0.3)), np.zeros(3), constraints=cons)
""")
    assert [(f.site.line, f.rule) for f in found] == [(6, "nonconvex-inequality")]
    assert "fun(x) >= 0" in found[0].message and "-fun(x)" in found[0].message
    assert found[0].evidence["dialect_note"].startswith("In scipy an 'ineq' constraint")


def test_eq_constraint_must_be_affine(tmp_path):
    # B&V 2004 §4.2.1 (from memory): equality constraints of a convex problem are affine
    assert rules(tmp_path, HEADER + """
def fit():
    cons = ({"type": "eq", "fun": lambda x: x[0] * x[1] - 2.0},
            {"type": "eq", "fun": lambda x: x[0] + x[1] - 3.0})
    return minimize(lambda x: np.sum(x ** 2), np.ones(2), constraints=cons)
""") == [(6, "nonaffine-equality")]


@pytest.mark.parametrize("lb, ub, expected", [
    ("0.5", "np.inf", [(6, "nonconvex-inequality")]),   # convex norm bounded below: outside of a ball
    ("-np.inf", "0.5", []),                               # convex norm bounded above: a ball
])
def test_nonlinear_constraint_sides(tmp_path, lb, ub, expected):
    assert rules(tmp_path, HEADER + f"""
def fit():
    ring = NonlinearConstraint(lambda x: np.linalg.norm(x), {lb}, {ub})
    return minimize(lambda x: np.sum(x ** 2), np.ones(2), constraints=[ring])
""") == expected


def test_bounds_give_signs(tmp_path):
    # -log(x) and 1/x are convex only on x > 0 (B&V 2004 §3.1.5, from memory): the bounds say so
    source = HEADER + """
def fit(bounds):
    return minimize(lambda x: np.sum(1.0 / x) - np.sum(np.log(x)), np.ones(3), bounds=bounds)

fit({bounds})
"""
    assert rules(tmp_path, source.format(bounds="[(0.1, None)] * 3")) == []
    assert [r for _, r in rules(tmp_path, source.format(bounds="[(None, None)] * 3"))] == ["nonconvex-objective"]


def test_objective_callables_partial_method_and_args(tmp_path):
    # x0 * x1 is not convex whichever way the callable reaches minimize
    assert rules(tmp_path, HEADER + """
from functools import partial

def cost(x, a):
    return a * x[0] * x[1]

class Fit:
    def __init__(self, a):
        self.a = a
    def cost(self, x):
        return cost(x, self.a)
    def run(self):
        return minimize(self.cost, np.ones(2))

minimize(partial(cost, a=2.0), np.ones(2))
minimize(cost, np.ones(2), args=(3.0,))
""") == [(16, "nonconvex-objective"), (18, "nonconvex-objective"), (19, "nonconvex-objective")]


def test_least_squares_judges_the_sum_of_squared_residuals(tmp_path):
    found = findings(tmp_path, HEADER + """
from scipy.optimize import least_squares
t = np.linspace(0, 1, 10)
y = np.exp(-t)
least_squares(lambda p: p[0] + p[1] * t - y, np.zeros(2))
least_squares(lambda p: p[0] * np.exp(-p[1] * t) - y, np.ones(2))
""")
    assert [(f.site.line, f.rule) for f in found] == [(9, "nonconvex-objective")]
    assert "0.5 * sum(fun(x)**2)" in found[0].message


def test_comparisons_inside_objectives_are_not_constraints(tmp_path):
    assert rules(tmp_path, HEADER + """
def loss(x):
    active = x > 0
    return np.sum(np.maximum(x, 0.0) ** 2) + np.sum(np.abs(x))
minimize(loss, np.ones(4))
""") == []


@pytest.mark.parametrize("expr, clean", [
    ("np.linalg.norm(x - 1, ord=1) + np.linalg.norm(x, np.inf)", True),   # norms are convex (B&V §3.1.5)
    ("np.linalg.norm(x, ord=0.5)", False),                                # not a norm for p < 1
    ("np.sum(np.maximum(x, 0.0) ** 2) + np.max(np.abs(x))", True),
    ("np.sum(np.clip(x, -1.0, 1.0) ** 2)", False),                       # clip: neither convex nor concave
    ("x @ np.ones(3) + np.dot(x, x) + np.sum(np.square(x[:2]))", True),
    ("np.sum(np.exp(x)) - np.sum(np.log(x))", None),                       # -log needs x > 0: bounds decide
])
def test_numpy_vocabulary(tmp_path, expr, clean):
    source = HEADER + f"""
minimize(lambda x: {expr}, np.ones(3), bounds=[(0.5, 2.0)] * 3)
"""
    found = rules(tmp_path, source)
    assert (found == []) is (clean is not False), found


def test_linear_programs_are_recognised_and_silent(tmp_path):
    assert rules(tmp_path, """
import numpy as np
from scipy.optimize import linprog, milp, LinearConstraint
c = np.array([1.0, 2.0, -1.0])
linprog(c, A_ub=np.eye(3), b_ub=np.ones(3), bounds=[(0, None)] * 3)
milp(c, constraints=LinearConstraint(np.ones((1, 3)), 0, 4), integrality=np.ones(3))
""") == []


def test_vector_times_itself_is_a_sum_of_squares(tmp_path):
    # scipy's x is one-dimensional (minimize's documentation: x0 has shape (n,)), so x @ x = ||x||^2,
    # convex (B&V 2004 §3.1.5, from memory); numpy agrees on a random point.
    x = np.random.default_rng(0).normal(size=4)
    assert np.isclose(x @ x, np.sum(x ** 2))
    assert rules(tmp_path, HEADER + """
def fit(c):
    return minimize(lambda x: x @ x + c @ x, np.zeros(4))
""") == []
    found = rules(tmp_path, HEADER + """
def fit(c):
    return minimize(lambda x: -(x @ x) + c @ x, np.zeros(4))
""")
    assert found == [(6, "weight-sign")]  # a convex term subtracted under minimisation
