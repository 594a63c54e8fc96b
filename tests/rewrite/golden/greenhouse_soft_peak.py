"""Heating plan for the Willowmere greenhouse's three growing zones.

The controller trades gas use against a soft peak of the zones' heat deficits: a smooth maximum
(log of a sum of exps) so that no zone is sacrificed for the others. The smooth maximum is
convex, but written with log and exp it is not in the form the modelling package accepts.
"""

from cvxpy import (
    Minimize,
    Parameter,
    Problem,
    Variable,
    exp,
    hstack,
    log,
    log_sum_exp,
)
from cvxpy import sum as total

ZONES = 3


def heating_plan(gas_price):
    heat = Variable(ZONES, nonneg=True, name="heat_kw")
    demand = Parameter(ZONES, name="demand_kw")
    deficit = demand - heat

    soft_peak = log_sum_exp(deficit)
    problem = Problem(Minimize(soft_peak + gas_price * total(heat)), [heat <= 40])  # expect: undisciplined-convex
    problem.solve()
    return heat.value


def propagation_bed(gas_price):
    seedlings = Variable(name="seedling_heat_kw")
    cuttings = Variable(name="cutting_heat_kw")
    chill = Parameter(name="night_chill_kw")

    # The two benches share one boiler loop; the worse-off bench dominates the soft peak.
    peak = log_sum_exp(hstack([chill - seedlings, chill - 2 * cuttings]))
    problem = Problem(Minimize(peak + gas_price * (seedlings + cuttings)),  # expect: undisciplined-convex
                      [seedlings >= 0, cuttings >= 0])
    problem.solve()
    return seedlings.value, cuttings.value
