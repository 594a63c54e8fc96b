"""Overnight rebalancing plan for the Larkspur bike-share scheme.

Trucks move bikes between docks overnight. Some docks are pinned to the morning counts the
council agreed; the pins were written as a norm, a sum of squares or a square held at zero,
which only an exact match satisfies: no strictly feasible point, so the solver's multipliers
may not exist. Each has an exact affine equivalent.
"""

import cvxpy as cp
import numpy as np

DOCKS = 6
MOVE_COST = np.array([1.0, 1.2, 0.8, 1.5, 1.1, 0.9])


def rebalance(morning_target, station_square_target):
    fill = cp.Variable(DOCKS, nonneg=True, name="bikes_at_dock")
    moved = cp.Variable(DOCKS, name="bikes_moved")
    square_fill = cp.Variable(name="station_square_bikes")
    pinned = cp.Parameter(2, name="pinned_counts")

    constraints = [
        fill == 10 + moved,
        fill[0:2] == pinned,  # expect: degenerate-constraint
        fill[2:4] == morning_target,  # expect: degenerate-constraint, nonaffine-equality
        square_fill == station_square_target,  # expect: degenerate-constraint
        cp.sum(moved) == 0,
    ]
    # The depot's own dock is pinned too; written with the bound on the left.
    constraints.append(fill[5] == 12)  # expect: degenerate-constraint
    problem = cp.Problem(cp.Minimize(MOVE_COST @ cp.abs(moved)), constraints)
    problem.solve()
    return fill.value
