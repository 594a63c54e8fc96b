"""optlint: reads optimisation-modelling code without running it and proves or refutes convexity.

The package is a pipeline of small stages (see DEVELOPERS.md): discover -> prefilter -> parse ->
recognise -> lift -> analyse -> checks -> report. Importing this package is cheap: sympy, numpy and
rich are imported only by the stages that need them.
"""

__version__ = "0.1.0"
