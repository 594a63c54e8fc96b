"""unused-suppression: an inline acceptance that accepts nothing; produced by the policy stage
(optlint.policy), not from a model."""

ID = "unused-suppression"
SEVERITY = "note"
SUMMARY = "Inline acceptance that matches no finding, names an unknown rule, or is not understood."
RATIONALE = """
Acceptances rot: the model is fixed or the line moves, and the comment stays behind, ready to hide
the next real finding on that line. Reporting an acceptance that covers nothing keeps them honest;
an unknown rule id or a comment that is not in the accepted form is reported the same way, with a
suggestion where the id is a near miss.
"""
REFERENCE = ("Common practice for linters run in review: stale or mistyped exceptions are reported so "
             "they can be removed.")
BAD = """
import cvxpy as cp
x = cp.Variable(3)
cons = [x >= 0]  # optlint: accept strict-inequality -- left over from an older version
"""
GOOD = """
import cvxpy as cp
x = cp.Variable(3)
cons = [x >= 0]
"""
