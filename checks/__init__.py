"""optlint's rules, one module each (installed as ``optlint.checks``); see ``optlint.rules``."""
