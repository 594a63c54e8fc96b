"""Products and quotients of variables as the DSL code writes them (x * x, 1 / x).

sympy folds x*x into x**2 and 1/x into x**-1, which the composition rules accept; the modelling
package does not: it rejects any product of two non-constant expressions and any division by one
(a fact of disciplined convex programming, Grant, Boyd & Ye 2006, from memory). The DSL recogniser
follows each such operation to the model parts it reaches; these cases check that it reaches
exactly those (a textual match would flag `cp.square(x)` elsewhere too), and that a part that is
not convex anyway keeps its usual finding.
"""

from __future__ import annotations

import textwrap

from optlint.engine import check_file


def _findings(tmp_path, body: str):
    path = tmp_path / "plan.py"
    path.write_text("import cvxpy as cp" + textwrap.dedent(body))  # the body's first line is line 2
    return [(f.rule, f.site.line, f) for f in check_file(str(path)).findings]


def test_only_the_part_the_product_reaches_is_flagged(tmp_path):
    found = _findings(tmp_path, """
        x = cp.Variable(name="x")
        limits = [x * x <= 4]
        cp.Problem(cp.Minimize(cp.square(x) + x), limits).solve()
    """)
    assert [(r, line) for r, line, _ in found] == [("undisciplined-convex", 3)]
    assert "cp.square(x)" in found[0][2].message and "x * x" in found[0][2].message


def test_product_through_a_helper_and_a_loop(tmp_path):
    found = _findings(tmp_path, """
        x = cp.Variable(3, name="x")
        def wear(v):
            return v * v
        cons = []
        for k in range(3):
            cons.append(x[k] * x[k] <= 1)
        cp.Problem(cp.Minimize(cp.sum(wear(x))), cons).solve()
    """)
    assert sorted((r, line) for r, line, _ in found) == [("undisciplined-convex", 7), ("undisciplined-convex", 8)]
    objective = next(f for _, line, f in found if line == 8)
    assert "`v * v` (line 4) as `cp.square(v)`" in objective.message


def test_one_branch_writes_the_product(tmp_path):
    found = _findings(tmp_path, """
        x = cp.Variable(name="x")
        def plan(fast):
            if fast:
                cost = x * x
            else:
                cost = cp.square(x)
            cp.Problem(cp.Minimize(cost)).solve()
        plan(True)
    """)
    ((rule, _, f),) = found
    assert rule == "undisciplined-convex" and "`x * x` (line 5)" in f.message
    # only the branch that writes x * x fails; the cp.square branch (line 7) is fine
    assert f.evidence["failing_branches"] == [["`cost` as assigned on line 5"]]


def test_constants_and_parameters_are_not_flagged(tmp_path):
    found = _findings(tmp_path, """
        x = cp.Variable(name="x")
        r = cp.Variable(pos=True, name="r")
        p = cp.Parameter(nonneg=True, name="p")
        cp.Problem(cp.Minimize(p * x + x / 4 + 2 * r + cp.inv_pos(r) + cp.multiply(3.0, x))).solve()
    """)
    assert found == []


def test_division_by_an_unsigned_variable_stays_nonconvex(tmp_path):
    # 1/y on y of either sign is not convex (concave for y < 0): the usual finding, with a witness.
    found = _findings(tmp_path, """
        y = cp.Variable(name="y")
        cp.Problem(cp.Minimize(1 / y)).solve()
    """)
    ((rule, _, f),) = found
    assert rule == "nonconvex-objective" and "witness" in f.evidence


def test_cancelled_product_is_still_rejected_as_written(tmp_path):
    # x*x - cp.square(x) folds to 0; the package still sees x * x and rejects it.
    found = _findings(tmp_path, """
        x = cp.Variable(name="x")
        y = cp.Variable(name="y")
        cp.Problem(cp.Minimize(x * x - cp.square(x) + cp.abs(y))).solve()
    """)
    assert [(r, line) for r, line, _ in found] == [("undisciplined-convex", 4)]
