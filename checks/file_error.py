"""file-error: a file that could not be read at all; reported by the engine."""

ID = "file-error"
SEVERITY = "error"
SUMMARY = "File could not be read (permissions, size limit, I/O error)."
RATIONALE = """
A file optlint cannot read is a file whose models go unchecked. It is reported, with the reason the
operating system gave, and the run goes on with the other files.
"""
REFERENCE = "Common practice for linters run as pre-commit hooks: report per file, never abort the run."
BAD = """
# a model file without read permission for the user running the hook
"""
GOOD = """
# the same file, readable: chmod u+r models/dispatch.py
"""
