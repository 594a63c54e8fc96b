"""internal-error: optlint itself failed on a file; reported by the engine, the run goes on."""

ID = "internal-error"
SEVERITY = "error"
SUMMARY = "optlint failed while analysing this file (a bug in optlint, not in the model)."
RATIONALE = """
An exception inside optlint on one file must not block every commit in the repository. The file is
reported with the exception's type and place, the other files are checked as usual, and the report
asks for the file (or a reduced copy) so the bug can be fixed.
"""
REFERENCE = "Common practice for static analysers: failures are per-file results, never a crash."
BAD = """
# any file on which optlint raises
"""
GOOD = """
# the same file after the bug is fixed in optlint
"""
