"""Water levels for the three locks of the Hollin Brook canal flight, over one morning.

Boats need the pounds between locks above a navigable depth, and the top pound must stay below
the overflow weir. The bounds were written as strict inequalities, which the modelling package
treats as non-strict anyway; the rewrite says what the solver does.
"""

import cvxpy as cp

HOURS = 6
NAVIGABLE_M = 1.4


def lock_levels(inflow_m, weir_m):
    level = cp.Variable((3, HOURS), name="pound_level_m")
    release = cp.Variable((3, HOURS), nonneg=True, name="release_m")

    constraints = [level[:, 0] == 1.8]
    for hour in range(1, HOURS):
        constraints += [
            level[:, hour] == level[:, hour - 1] + inflow_m - release[:, hour],
            level[:, hour] >= NAVIGABLE_M,  # expect: strict-inequality
        ]
    constraints.append(level[0, :] <= weir_m)  # expect: strict-inequality
    if weir_m < NAVIGABLE_M:  # a data check, not a constraint: left alone
        raise ValueError("weir below navigable depth")
    problem = cp.Problem(cp.Minimize(cp.sum(release)), constraints)
    problem.solve()
    return level.value
