"""The interpreter's soundness traps: ways model-building code could fool a naive reader.

Each case is a small model whose convexity is settled by hand (Boyd & Vandenberghe 2004, §3.2.4
composition rules); the test asserts the rule optlint reports, or that it reports nothing.
"""

from __future__ import annotations

import textwrap

import pytest

from optlint.engine import check_file


def _rules(tmp_path, source: str) -> list[tuple[int, str]]:
    path = tmp_path / "model.py"
    path.write_text(textwrap.dedent(source))
    return sorted((f.site.line, f.rule) for f in check_file(str(path)).findings)


def test_names_are_flow_sensitive(tmp_path):
    # obj is rebound: the final definition (convex) is what reaches Minimize.
    assert _rules(tmp_path, """
        import cvxpy as cp
        x = cp.Variable(3)
        obj = -cp.norm(x)
        obj = cp.norm(x) + 1
        prob = cp.Problem(cp.Minimize(obj))
    """) == []


def test_every_branch_reaching_the_objective_is_analysed(tmp_path):
    path = tmp_path / "model.py"
    path.write_text(textwrap.dedent("""
        import cvxpy as cp
        def build(robust):
            r = cp.Variable(5)
            if robust:
                loss = cp.sum(cp.huber(r, 1.0))
            else:
                loss = -cp.sum_squares(r)
            return cp.Problem(cp.Minimize(loss))
    """))
    findings = check_file(str(path)).findings
    assert [(f.site.line, f.rule) for f in findings] == [(9, "weight-sign")]
    assert "line 8" in findings[0].message          # the branch that fails is named


def test_a_factory_called_twice_makes_two_variables(tmp_path):
    # a*b of two distinct variables is not convex; a naive reader that reused one symbol
    # would see a square and call it convex.
    assert _rules(tmp_path, """
        import cvxpy as cp
        def make():
            return cp.Variable()
        a = make()
        b = make()
        prob = cp.Problem(cp.Minimize(a * b))
    """) == [(7, "nonconvex-objective")]


def test_loops_catch_sign_flips_in_accumulation(tmp_path):
    # After one pass obj = x[t]^2 (convex); after two, -x[t1]^2 + x[t2]^2 (not convex: one weight
    # of the wrong sign).
    assert _rules(tmp_path, """
        import cvxpy as cp
        x = cp.Variable(4)
        obj = 0
        for t in range(4):
            obj = -obj + cp.square(x[t])
        prob = cp.Problem(cp.Minimize(obj))
    """) == [(7, "weight-sign")]


def test_two_comprehensions_do_not_cancel(tmp_path):
    # Different index sets: the difference of the two sums is not constant (nor convex).
    assert _rules(tmp_path, """
        import cvxpy as cp
        x = cp.Variable(6)
        A, B = [0, 1, 2], [3, 4, 5]
        obj = sum(cp.square(x[i]) for i in A) - sum(cp.square(x[i]) for i in B)
        prob = cp.Problem(cp.Minimize(obj))
    """) == [(6, "weight-sign")]


def test_huge_literals_do_not_hang(tmp_path):
    assert _rules(tmp_path, """
        import cvxpy as cp
        x = cp.Variable(2)
        big = 10**10**10
        prob = cp.Problem(cp.Minimize(big * cp.norm(x) + 1e308 * cp.sum(x)), [x <= 1e400])
    """) == []


def test_star_import_and_alias_styles(tmp_path):
    assert _rules(tmp_path, """
        from cvxpy import *
        import cvxpy
        from cvxpy import norm as N
        x = Variable(3)
        y = cvxpy.Variable(3)
        prob = Problem(Minimize(N(x, 1) - norm(y)), [sum(x) == 1])
    """) == [(7, "weight-sign")]


def test_a_local_name_shadowing_the_library_is_not_the_library(tmp_path):
    assert _rules(tmp_path, """
        import cvxpy as cp
        def norm(v):
            return v
        x = cp.Variable(3)
        prob = cp.Problem(cp.Minimize(cp.sum(x)), [norm(x) >= 1])
    """) == []


def test_gp_mode_is_skipped_with_a_note(tmp_path):
    assert _rules(tmp_path, """
        import cvxpy as cp
        h = cp.Variable(pos=True)
        w = cp.Variable(pos=True)
        prob = cp.Problem(cp.Maximize(h * w), [h * w**2 <= 40])
        prob.solve(gp=True)
    """) == [(6, "model-skipped")]


@pytest.mark.parametrize("constraint, rule", [
    ("cp.norm(x) <= 1", None),
    ("cp.norm(x) >= 1", "nonconvex-inequality"),
    ("1 >= cp.norm(x)", None),
    ("cp.log(x[0]) >= 1", None),
    ("cp.log(x[0]) <= 1", "nonconvex-inequality"),
    ("cp.square(x[0]) == 1", "nonaffine-equality"),
    ("2 * x[0] + 1 == x[1]", None),
    ("x[0] * x[1] <= 1", "nonconvex-inequality"),
    ("cp.SOC(x[0], x[1:])", None),
    ("cp.SOC(cp.square(x[0]), x[1:])", "nonconvex-inequality"),
])
def test_constraint_directions(tmp_path, constraint, rule):
    found = _rules(tmp_path, f"""
        import cvxpy as cp
        x = cp.Variable(3)
        prob = cp.Problem(cp.Minimize(cp.sum(x)), [{constraint}])
    """)
    assert found == ([] if rule is None else [(4, rule)])


def test_transposed_data_times_a_variable_keeps_the_variable(tmp_path):
    """Soundness: `A.T @ lam` once became one data symbol (the attribute T of data was not data),
    hiding lam, so -sum_squares(A.T @ lam) under minimisation, concave (B&V 2004 §3.2.2, from
    memory: a concave function of an affine map), passed silently."""
    from optlint.engine import check_file

    path = tmp_path / "dual.py"
    path.write_text(
        "import cvxpy as cp\n"
        "def dual(A, b):\n"
        "    lam = cp.Variable(3)\n"
        "    return cp.Problem(cp.Minimize(-cp.sum_squares(A.T @ lam) + b @ lam))\n")
    assert [f.rule for f in check_file(str(path)).findings] == ["weight-sign"]
    path.write_text(
        "import cvxpy as cp\n"
        "def dual(A, b):\n"
        "    lam = cp.Variable(3)\n"
        "    return cp.Problem(cp.Minimize(cp.sum_squares(A.T @ lam) + b @ lam))\n")
    assert check_file(str(path)).findings == []


def test_loop_sites_carry_their_instance_count(tmp_path):
    """One finding per source site; its evidence counts the instances when the loops say how many
    (Python's own len(range(a, b, c)) is the reference), and says only "one per iteration" otherwise."""
    from optlint.engine import check_file

    path = tmp_path / "horizon.py"
    path.write_text(
        "import cvxpy as cp\n"
        "HORIZON = 12\n"
        "def plan(n):\n"
        "    x = cp.Variable(HORIZON)\n"
        "    cons = []\n"
        "    for t in range(2, HORIZON, 3):\n"
        "        cons.append(cp.square(x[t]) == 1)\n"
        "    cons += [cp.abs(x[k]) >= 1 for k in [0, 1, 5]]\n"
        "    for t in range(n):\n"
        "        cons.append(cp.sqrt(x[t]) == 1)\n"
        "    return cons\n")
    got = {f.site.line: f.evidence.get("instances") for f in check_file(str(path)).findings}
    assert got == {7: len(range(2, 12, 3)), 8: 3, 10: "one per iteration of the enclosing loop or comprehension"}


CLASS_MODEL = '''
import cvxpy as cp


class Planner:
    def __init__(self, prices, risk_weight):
        assert risk_weight >= 0
        self.risk = risk_weight
        self.prices = prices

    def set_risk(self, value):
{setter}
        self.risk = value

    def plan(self):
        sell = cp.Variable(4)
        rev = self.prices @ sell
        return cp.Problem(cp.Maximize(cp.sum(rev) - self.risk * cp.sum_squares(rev)))
'''


@pytest.mark.parametrize("setter, expected", [
    ("        pass", ["weight-sign-unknown"]),  # set_risk can make the weight negative: no proof
    ("        if value < 0:\n            raise ValueError('risk weight must be nonnegative')", []),
    ("        assert value >= 0", []),
])
def test_attributes_another_method_reassigns_keep_only_the_sign_it_guarantees(tmp_path, setter, expected):
    """A method analysed on its own saw only what __init__ set; another method may reassign the
    attribute, so the weight's sign is proved only if that method guards it too (B&V 2004 §3.2.1,
    from memory: only nonnegative weights preserve convexity)."""
    from optlint.engine import check_file

    path = tmp_path / "planner.py"
    path.write_text(CLASS_MODEL.format(setter=setter))
    assert [f.rule for f in check_file(str(path)).findings] == expected


def test_loop_targets_are_integers_only_where_the_iterable_says_so():
    """sympy simplifies sin(pi*k) to 0 for an integer k (a fact of the sine): a loop variable drawn
    from floats must not be assumed integer, one from range (or enumerate's count) is."""
    import libcst as cst

    from optlint.interp import DialectHooks, Env, Interpreter

    source = ("for k in range(3):\n    pass\nfor w in weights:\n    pass\n"
              "for i, v in enumerate(values):\n    pass\n")
    wrapper = cst.MetadataWrapper(cst.parse_module(source))
    interp = Interpreter(wrapper, "loops.py", DialectHooks(), registry=None)
    env = Env()
    interp.exec_block(wrapper.module.body, env)
    kinds = {name: env.vars[name][0].value.is_integer for name in ("k", "w", "i", "v")}
    assert kinds == {"k": True, "w": None, "i": True, "v": None}


def test_an_operation_on_something_unmodelled_is_named_for_people(tmp_path):
    # A model term plus a value the interpreter cannot follow (a bound method) is an unknown
    # function of the term; the finding names the operator, never the internal name (operatorAdd).
    path = tmp_path / "pumps.py"
    path.write_text(textwrap.dedent("""
        import cvxpy as cp
        TARIFF = {"peak": 3.0}
        flow = cp.Variable(4)
        cost = cp.sum_squares(flow) + TARIFF.get
        prob = cp.Problem(cp.Minimize(cost), [flow >= 0])
    """))
    (finding,) = check_file(str(path)).findings
    assert (finding.rule, finding.site.line) == ("unknown-curvature", 6)
    assert "operator `+` with an operand optlint cannot follow" in finding.message
    assert "operatorAdd" not in finding.message and "operator+" not in finding.message
