"""optlint's curvature calculus: proves expressions convex, concave or affine, or says why not.

Public API (the lifter and the rules code against exactly this): ``Curvature``, ``Sign``, ``Facts``,
``Budget``, ``Analysis``, ``Derivation``, ``analyse`` and ``blame``. Every verdict other than
UNKNOWN is a proof; the atom facts live in ``catalogue.TABLE``.
"""

from .analysis import analyse
from .blame import blame
from .lattice import Curvature, Sign
from .model import Analysis, Budget, Derivation, Facts

__all__ = ["Curvature", "Sign", "Facts", "Budget", "Analysis", "Derivation", "analyse", "blame"]
