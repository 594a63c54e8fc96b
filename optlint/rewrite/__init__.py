"""Rewrites: exact, mechanical fixes of some findings, applied with libcst (``optlint rewrite``).

Only rewrites that keep the model's meaning are made: a convex expression spelled with elementary
functions becomes the disciplined atom it equals (``forms``), a nonnegative expression held at
zero becomes its affine equality, ``<``/``>`` in a DSL constraint becomes ``<=``/``>=``. A rewrite
needs its identity's conditions proved from what the interpreter computed for the nodes
(``observe``); tolerances, weight signs and surrogate losses change meaning and stay suggestions.
Atoms are spelled in the file's own import style (``codemod``). Every rewritten file is re-parsed
and re-checked before it is kept (``driver``); outside the rewritten expressions and the import
they need, the file stays byte for byte as it was.
"""

from optlint.rewrite.driver import Change, Outcome, rewrite_file, rewrite_source

__all__ = ["Change", "Outcome", "rewrite_file", "rewrite_source"]
