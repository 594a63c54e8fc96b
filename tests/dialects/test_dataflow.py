"""Dataflow across functions: helpers in the module, classes, rule functions, sibling modules.

Each case builds a model whose verdict depends on following the code across a function, method
or module boundary; the verdict is settled by hand (B&V 2004 §3.2.4 composition, from memory):
a product of two decision variables is not convex, a sum of squares of affine terms is.
"""

from __future__ import annotations

from helpers import findings, rules

from optlint.prefilter import scan_dialects


def test_helper_in_the_same_module(tmp_path):
    assert rules(tmp_path, """
import numpy as np
from scipy.optimize import minimize

def cross(v):
    return v[0] * v[1]

def loss(v):
    return np.sum(v ** 2) + cross(v)

minimize(loss, np.ones(2))
""") == [(11, "nonconvex-objective")]


def test_class_attributes_from_init_and_self_method_calls(tmp_path):
    # run standalone, `cost` sees self.weight set by __init__ and calls self.penalty
    assert rules(tmp_path, """
import casadi as ca

class Controller:
    def __init__(self):
        self.opti = ca.Opti()
        self.u = self.opti.variable(4)
        self.weight = -2.0

    def penalty(self):
        return self.weight * ca.sumsqr(self.u)

    def cost(self):
        self.opti.minimize(ca.sumsqr(self.u - 1) + self.penalty())
""") in ([(14, "nonconvex-objective")], [(14, "weight-sign")])


def test_rule_function_with_indices(tmp_path):
    assert rules(tmp_path, """
import pyomo.environ as pyo

def balance(m, i, t):
    return m.x[i, t] * m.x[i, t - 1] >= m.d[i]

m = pyo.ConcreteModel()
m.I = pyo.Set(initialize=[1, 2])
m.T = pyo.RangeSet(1, 5)
m.d = pyo.Param(m.I, initialize={1: 1.0, 2: 3.0})
m.x = pyo.Var(m.I, m.T)
m.balance = pyo.Constraint(m.I, m.T, rule=balance)
""") == [(5, "nonconvex-inequality")]


def test_helper_imported_from_a_sibling_module_the_prefilter_skips(tmp_path):
    helper = ("import numpy as np\n\ndef tukey(r):\n    return np.minimum(r ** 2, 1.0)\n\n"
              "def sq(r):\n    return r ** 2\n")
    (tmp_path / "terms.py").write_text(helper)
    assert scan_dialects("terms.py", helper.encode()) == ()     # never analysed on its own
    pkg = tmp_path / "pkg"
    pkg.mkdir()
    (pkg / "__init__.py").write_text("")
    (pkg / "more.py").write_text("def soft(r):\n    return r ** 2 + abs(r)\n")
    found = findings(tmp_path, """
import numpy as np
from scipy.optimize import minimize
from terms import tukey, sq
from pkg.more import soft

minimize(lambda w: np.sum(sq(w - 1.0)) + np.sum(soft(w)), np.zeros(3))
minimize(lambda w: np.sum(tukey(w - 1.0)), np.zeros(3))
""")
    assert [f.site.line for f in found] == [8]
    assert found[0].rule in ("nonconvex-objective", "nonconvex-penalty")


def test_relative_import_inside_a_package(tmp_path):
    pkg = tmp_path / "models"
    pkg.mkdir()
    (pkg / "__init__.py").write_text("")
    (pkg / "costs.py").write_text("def bilinear(a, b):\n    return a * b\n")
    path = pkg / "plan.py"
    assert rules(pkg, """
import pulp
from .costs import bilinear
prob = pulp.LpProblem("p", pulp.LpMinimize)
x = pulp.LpVariable("x", 0)
y = pulp.LpVariable("y", 0)
prob += x + y
prob += bilinear(x, y) <= 4
""", name=path.name) == [(8, "nonconvex-inequality")]


def test_unresolvable_helper_is_an_unknown_curvature_note(tmp_path):
    found = findings(tmp_path, """
import numpy as np
from scipy.optimize import minimize
from vendor.smoothing import soft_cost

minimize(lambda w: np.sum(w ** 2) + soft_cost(w), np.zeros(3))
""")
    assert [(f.rule, f.severity) for f in found] == [("unknown-curvature", "note")]
    assert "vendor.smoothing.soft_cost" in found[0].message


def test_oversized_sibling_module_is_not_parsed(tmp_path):
    big = "def sq(r):\n    return r * r * r * r\n" + "# padding\n" * 40000
    (tmp_path / "big.py").write_text(big)
    found = findings(tmp_path, """
import numpy as np
from scipy.optimize import minimize
from big import sq
minimize(lambda w: sq(w[0]), np.zeros(3))
""")
    assert [f.rule for f in found] == ["unknown-curvature"]


def test_models_list_the_sibling_modules_they_read(tmp_path):
    # a result cache must invalidate a file's result when a helper it read changes
    import libcst as cst

    from optlint.dialects import load

    (tmp_path / "terms.py").write_text("def sq(r):\n    return r ** 2\n")
    path = tmp_path / "fit.py"
    path.write_text("import numpy as np\nfrom scipy.optimize import minimize\nfrom terms import sq\n"
                    "minimize(lambda w: np.sum(sq(w)), np.zeros(2))\n")
    wrapper = cst.MetadataWrapper(cst.parse_module(path.read_text()))
    (model,) = load("scipy").recognise(wrapper, str(path))
    assert model.dependencies == [str((tmp_path / "terms.py").resolve())]
