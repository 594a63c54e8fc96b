"""Algebraic (pyomo style) recogniser: components, rules, decorators, domains, Params vs Vars.

Facts: Param x Var is affine, Var x Var is not convex (a saddle, B&V 2004 §3.1.4 second-order
condition, from memory); log is concave and exp convex (§3.1.5); a maximised objective must be
concave and equality constraints affine (§4.2.1).
"""

from __future__ import annotations

import pytest

from helpers import rules


@pytest.mark.parametrize("imports", [
    "import pyomo.environ as pyo",
    "import pyomo.core as pyo",
])
def test_param_times_var_is_affine_var_times_var_is_not(tmp_path, imports):
    assert rules(tmp_path, imports + """
m = pyo.ConcreteModel()
m.I = pyo.Set(initialize=[1, 2, 3])
m.c = pyo.Param(m.I, initialize={1: 2.0, 2: -1.0, 3: 0.5}, mutable=True)
m.x = pyo.Var(m.I)
m.y = pyo.Var(m.I)
m.lin = pyo.Constraint(m.I, rule=lambda m, i: m.c[i] * m.x[i] == 1)
m.bil = pyo.Constraint(m.I, rule=lambda m, i: m.y[i] * m.x[i] == 1)
m.obj = pyo.Objective(expr=sum(m.c[i] * m.x[i] for i in m.I))
""") == [(8, "nonaffine-equality")]


def test_star_import_decorators_sense_and_skip(tmp_path):
    assert rules(tmp_path, """
from pyomo.environ import *

model = ConcreteModel()
model.T = RangeSet(1, 4)
model.x = Var(model.T, within=NonNegativeReals)

@model.Constraint(model.T)
def ramp(m, t):
    if t == 1:
        return Constraint.Skip
    return m.x[t] - m.x[t - 1] <= 2

@model.Objective(sense=maximize)
def welfare(m):
    return sum(log(1 + m.x[t]) for t in m.T)

@model.Objective(sense=maximize)
def spend(m):
    return sum(exp(m.x[t]) for t in m.T)
""") == [(19, "nonconvex-objective")]


def test_domains_give_signs(tmp_path):
    # 1/x is convex on x > 0 and concave on x < 0 (B&V 2004 §3.1.5, from memory): the sign decides
    source = """
import pyomo.environ as pyo
m = pyo.ConcreteModel()
m.x = pyo.Var({decl})
m.obj = pyo.Objective(expr=1 / m.x)
"""
    assert rules(tmp_path, source.format(decl="within=pyo.PositiveReals")) == []
    assert rules(tmp_path, source.format(decl="bounds=(0.5, 5)")) == []
    assert [r for _, r in rules(tmp_path, source.format(decl="within=pyo.Reals"))] == ["nonconvex-objective"]


def test_ranged_tuples_and_constraint_list(tmp_path):
    assert rules(tmp_path, """
import pyomo.environ as pyo
m = pyo.ConcreteModel()
m.x = pyo.Var([1, 2])
m.band = pyo.Constraint(expr=(1.0, m.x[1] ** 2, 4.0))
m.ok = pyo.Constraint(expr=(0.0, m.x[1] + m.x[2], 4.0))
m.cl = pyo.ConstraintList()
m.cl.add(m.x[1] * m.x[2] <= 3)
m.cl.add((None, m.x[2] ** 2, 9.0))
""") == [(5, "nonconvex-inequality"), (8, "nonconvex-inequality")]


def test_rule_receives_the_model_it_is_assigned_to(tmp_path):
    # the rule's model parameter is named differently from the builder's variable
    assert rules(tmp_path, """
import pyomo.environ as pyo

def cap_rule(model, i, j):
    return model.flow[i, j] * model.price[i] <= model.limit[j]

def build():
    plant = pyo.ConcreteModel()
    plant.I = pyo.Set(initialize=["a", "b"])
    plant.J = pyo.Set(initialize=["x", "y"])
    plant.price = pyo.Var(plant.I)
    plant.limit = pyo.Param(plant.J, initialize={"x": 1.0, "y": 2.0})
    plant.flow = pyo.Var(plant.I, plant.J, within=pyo.NonNegativeReals)
    plant.cap = pyo.Constraint(plant.I, plant.J, rule=cap_rule)
    return plant
""") == [(5, "nonconvex-inequality")]


def test_kernel_api(tmp_path):
    assert rules(tmp_path, """
import pyomo.kernel as pmo
b = pmo.block()
b.x = pmo.variable(lb=0)
b.y = pmo.variable()
b.c = pmo.constraint(b.x + b.y <= 3)
b.r = pmo.constraint(lb=1, body=b.x * b.y, ub=2)
b.o = pmo.objective(pmo.log(b.x) + b.y, sense=pmo.maximize)
""") == [(7, "nonconvex-inequality"), (7, "nonconvex-inequality")]


REBOUND = """
import pyomo.environ as pyo

def build():
    m = pyo.ConcreteModel()
    m.I = pyo.RangeSet(3)
    m.x = pyo.Var(m.I, within=pyo.NonNegativeReals)
    m.y = pyo.Var(within=pyo.NonNegativeReals)
    {change}
    m.obj = pyo.Objective(expr=sum(m.x[i] ** 3 for i in m.I) + m.y ** 3)
    return m
"""


@pytest.mark.parametrize("change, expected", [
    ("pass", []),
    ("m.x[2].setlb(-5.0)", [(10, "nonconvex-objective")]),
    ("m.y.domain = pyo.Reals", [(10, "nonconvex-objective")]),
    ("for v in m.component_data_objects(pyo.Var):\n        v.setlb(None)", [(11, "nonconvex-objective")]),
])
def test_bounds_changed_after_declaration_drop_the_declared_sign(tmp_path, change, expected):
    """x**3 is convex only on x >= 0 (B&V 2004 §3.1.5, powers, from memory): a sign the declaration
    gave but a later setlb/domain change takes away proves nothing."""
    assert rules(tmp_path, REBOUND.format(change=change)) == expected
