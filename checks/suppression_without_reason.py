"""suppression-without-reason: an inline acceptance that does not say why; produced by the policy
stage (optlint.policy), not from a model."""

ID = "suppression-without-reason"
SEVERITY = "warning"
SUMMARY = "Inline acceptance comment (`# optlint: accept RULE -- reason`) that gives no reason."
RATIONALE = """
An accepted finding is a decision someone made about a model; without the reason, the next reader
cannot tell a considered exception from a silenced mistake, and cannot tell when it stops holding.
The acceptance still applies, so the finding it covers is not shown twice, but the missing reason
is reported until one is written after `--`.
"""
REFERENCE = ("Common practice for code review: an exception to a check is recorded with its "
             "justification beside the code it covers.")
BAD = """
import cvxpy as cp
x = cp.Variable(3)
cons = [x > 0]  # optlint: accept strict-inequality
"""
GOOD = """
import cvxpy as cp
x = cp.Variable(3)
cons = [x > 0]  # optlint: accept strict-inequality -- solver treats it as >= and that is what we want
"""
