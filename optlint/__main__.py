"""``python -m optlint`` is the same as the ``optlint`` command."""

import sys

from optlint.cli import main

sys.exit(main())
