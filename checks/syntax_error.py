"""syntax-error: a file that cannot be read as Python; reported by the engine, not from a model."""

ID = "syntax-error"
SEVERITY = "error"
SUMMARY = "File could not be parsed or decoded as Python source."
RATIONALE = """
A file that does not parse cannot be analysed, and a model in it goes unchecked. optlint reports it
once, at the parser's position, and goes on with the other files, so one broken file never hides
the findings elsewhere.
"""
REFERENCE = "The Python Language Reference, §2 (lexical analysis) and PEP 263 (source encodings)."
BAD = """
import cvxpy as cp
x = cp.Variable(2
"""
GOOD = """
import cvxpy as cp
x = cp.Variable(2)
"""
