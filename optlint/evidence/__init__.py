"""Evidence beyond the composition rules: scalar instances, witnesses, proofs and rewrites.

``scalar`` turns a model expression into one scalar sympy function of plain symbols; ``numeric``
evaluates such functions at many points with numpy; ``witness`` searches for two points that show
an expression is not convex (or not affine, or that a constraint's set is not convex);
``second_order`` proves small smooth expressions convex by the Hessian; ``rewrite`` recognises
convex expressions written without their atom (a proof when the rules accept the rewritten form,
and the DSL spelling for undisciplined-convex).
A witness is a refutation, never a proof of convexity; finding none leaves the verdict as it was.
A failed proof attempt is no proof: the verdict stays what the rules said.
"""
