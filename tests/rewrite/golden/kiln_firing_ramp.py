"""Firing schedule for the Fenwick Lane pottery's electric kiln.

The glaze crazes if the ramp deviates from the target rate, and the penalty grows the shorter the
soak that follows (a square over the soak time); the heating elements wear with the square of the
cooling rate. A square over a positive variable is convex, but written as a division the
modelling package rejects it. The melt must also be even: the spread of the three zone
temperatures plus a term that falls with the soak time (a reciprocal) stays within tolerance.
"""

import cvxpy as cvx

TARGET_RAMP_C_PER_H = 120.0  # the glaze supplier's recommended rate
POWER_PRICE = 0.8  # per hour at full power, in units of one crazed pot
SPREAD_TOLERANCE_C = 30.0


def firing_schedule():
    ramp = cvx.Variable(name="ramp_c_per_h")
    soak = cvx.Variable(pos=True, name="soak_h")
    cooling = cvx.Variable(name="cooling_c_per_h")
    zone_temp = cvx.Variable(3, name="zone_temp_c")
    setpoint = cvx.Parameter(3, name="setpoint_c")

    craze_risk = cvx.quad_over_lin(ramp - TARGET_RAMP_C_PER_H, soak)
    wear = cvx.square(cooling)  # element stress

    evenness = [
        cvx.norm(zone_temp - setpoint, 2) + 4.0 * cvx.inv_pos(soak) <= SPREAD_TOLERANCE_C,  # expect: undisciplined-convex
        soak <= 6,
        cooling >= -150,
    ]
    cost = craze_risk + POWER_PRICE * soak + 0.1 * wear
    problem = cvx.Problem(cvx.Minimize(cost), evenness)  # expect: undisciplined-convex
    problem.solve()
    return ramp.value, soak.value, cooling.value
