"""Relay point for the Crumb & Co. bakery's morning deliveries.

Two vans leave the ovens at the same time; they meet at a relay point where the second van
hands over the sourdough for the hill route. The planner keeps the relay close to the ovens and
to the hill café, and within radio range of the dispatcher. The distances were written out as
square roots of sums of squares: convex (2-norms), but not spelled with the norm atom.
"""

import cvxpy as cp

HILL_WEIGHT = 0.5  # the hill café's bread goes stale fastest


def relay_point(radio_range_m):
    relay = cp.Variable(2, name="relay_xy")
    ovens = cp.Parameter(2, name="ovens_xy")
    cafe = cp.Parameter(2, name="cafe_xy")
    dispatcher = cp.Parameter(2, name="dispatcher_xy")

    # Straight-line legs (the town grid is close enough to flat).
    to_ovens = cp.norm(relay - ovens, 2)
    to_cafe = cp.norm(relay - cafe, 2)

    constraints = [
        cp.norm(relay - dispatcher, 2) <= radio_range_m,  # expect: undisciplined-convex
        relay >= 0,
    ]
    problem = cp.Problem(cp.Minimize(to_ovens + HILL_WEIGHT * to_cafe), constraints)  # expect: undisciplined-convex
    problem.solve()
    return relay.value


def corner_shop_detour():
    east = cp.Variable(name="detour_east_m")
    north = cp.Variable(name="detour_north_m")
    shop_east = cp.Parameter(name="shop_east_m")
    shop_north = cp.Parameter(name="shop_north_m")
    lane_width = cp.Parameter(name="lane_width_m")

    detour = cp.norm(cp.hstack([east - shop_east, north - shop_north, lane_width]), 2)
    problem = cp.Problem(cp.Minimize(detour), [east >= 0, north >= 0])  # expect: undisciplined-convex
    problem.solve()
    return east.value, north.value
