"""Evidence beyond the composition rules: scalar instances of model expressions and witnesses.

``scalar`` turns a model expression into one scalar sympy function of plain symbols; ``numeric``
evaluates such functions at many points with numpy; ``witness`` searches for two points that show
an expression is not convex (or not affine, or that a constraint's set is not convex).
A witness is a refutation, never a proof of convexity; finding none leaves the verdict as it was.
"""
