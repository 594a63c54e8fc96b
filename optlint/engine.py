"""Engine: runs the stages for each file and returns plain results; it never raises for a file.

Per file: read bytes -> prefilter (which dialects may be present) -> decode / notebook join ->
libcst parse -> recognise (dialect -> Model IR) -> analyse -> rules -> superseded findings dropped
-> severities applied. A file that cannot be read, decoded or parsed yields one finding and the run
goes on; an unexpected exception inside a stage yields an ``internal-error`` finding for that file
(inside one rule: for that rule, and the other rules still run). A path that is not a regular file
is never opened; a file over the size limit is scanned in blocks for a model import and, if it has
one, reported as not checked. Nesting that would crash or stall libcst is refused first, and the
stages after the prefilter run with a deep stack (``optlint.nesting``).
sympy is imported only when a file passes the prefilter. After the rules, the policy stage
(``optlint.policy``) applies the project's severities, intended non-convexity and inline
acceptances, and fingerprints each finding for the baseline and SARIF.

Declared atoms and sign assumptions from the configuration travel as data on ``Options.atoms`` and
``Options.assumptions``; a dialect whose ``recognise`` accepts an ``options`` keyword receives the
``Options`` of the run (``recognise(wrapper, path, options=options)``), one that does not is
called as before.
"""

from __future__ import annotations

import inspect
import os
import stat
import traceback
from dataclasses import dataclass, field

from optlint.findings import SEVERITY_RANK, Finding
from optlint.ir import Site
from optlint.prefilter import scan_dialects

MAX_FILE_BYTES = 8 * 1024 * 1024


@dataclass
class Options:
    """What a run was configured with (``optlint.config`` fills it from pyproject.toml and the CLI)."""

    severities: dict[str, str] = field(default_factory=dict)  # rule id -> severity or "off"
    dialects: tuple[str, ...] | None = None  # None: all
    dialect_severities: dict[str, dict[str, str]] = field(default_factory=dict)  # dialect -> rule -> level
    overrides: list = field(default_factory=list)  # optlint.config.Override, applied in order
    command_line_severities: dict[str, str] = field(default_factory=dict)  # beat everything in the file
    intended: list = field(default_factory=list)  # optlint.config.Intended
    # Declared atoms: qualified function name -> optlint.config.DeclaredAtom (curvature, sign,
    # monotonicity per argument). For recognisers to consume; the engine only carries them.
    atoms: dict = field(default_factory=dict)
    # Declared signs of data names: "positive" | "nonnegative" | "nonpositive" | "negative" -> name
    # globs. For recognisers to consume (see ``assumed_sign``); the engine only carries them.
    assumptions: dict[str, tuple[str, ...]] = field(default_factory=dict)
    root: str | None = None  # project root: globs and fingerprints are relative to it (None: cwd)
    honour_acceptances: bool = True  # inline ``# optlint: accept`` comments

    def assumed_sign(self, name: str) -> str | None:
        """The sign the configuration declares for a data name, or None."""
        import fnmatch

        for sign, patterns in self.assumptions.items():
            if any(fnmatch.fnmatchcase(name, p) for p in patterns):
                return sign
        return None


@dataclass
class FileResult:
    path: str
    findings: list[Finding]
    checked: bool  # False: skipped by the prefilter (no model library imported)
    lines: list[str] = field(default_factory=list)  # source lines, for the text report
    cell_map: list | None = None
    fingerprints: list[str] = field(default_factory=list)  # one per finding, same order
    accepted: int = 0  # findings accepted by inline comments
    dependencies: list[str] = field(default_factory=list)  # other files the analysis read (sibling helpers)


def _site(path: str, line: int, column: int = 1) -> Site:
    return Site(path, max(line, 1), max(column, 1), max(line, 1), max(column, 1))


def check_file(path: str, options: Options | None = None) -> FileResult:
    return _guarded(path, options or Options(), _check_file)


def check_data(path: str, data: bytes, options: Options | None = None) -> FileResult:
    """``check_file`` of ``data`` as if it were the file's content (``optlint rewrite`` checks a
    rewritten file before writing it; sibling modules are still read beside ``path``)."""
    return _guarded(path, options or Options(), lambda p, o: _check_data(p, data, o))


def _guarded(path: str, options: Options, check) -> FileResult:
    try:
        result = check(path, options)
    except Exception as exc:  # the engine's promise: one broken file never stops the run
        result = FileResult(path, [_internal(path, exc)], True)
    if len(result.fingerprints) != len(result.findings):
        from optlint.policy import fingerprints

        result.fingerprints = fingerprints(path, result.findings, None, options.root)
    return result


def _internal(path: str, exc: BaseException, rule: str | None = None) -> Finding:
    frame = traceback.extract_tb(exc.__traceback__)[-1] if exc.__traceback__ else None
    where = f" in {os.path.basename(frame.filename)}:{frame.lineno}" if frame else ""
    during = f"rule {rule}: " if rule else ""
    evidence = {"exception": type(exc).__name__}
    if rule:
        evidence["rule"] = rule
    return Finding(
        rule="internal-error", site=_site(path, 1), severity="error",
        message=(f"optlint failed on this file ({during}{type(exc).__name__}{where}): {exc}. The rest of the run "
                 f"went on; please report this with the file or a reduced copy of it."),
        evidence=evidence,
    )


def _check_file(path: str, options: Options) -> FileResult:
    try:
        info = os.stat(path)
        if not stat.S_ISREG(info.st_mode):  # opening a FIFO would wait for a writer forever
            return _early(path, [Finding("file-error", _site(path, 1),
                                         "not a regular file (a pipe, socket or device); not checked",
                                         "error")], options)
        size = info.st_size
        if size > MAX_FILE_BYTES:
            if not _large_file_dialects(path, options):
                return FileResult(path, [], False)  # skipped as any file without a model import
            return _early(path, [Finding("file-error", _site(path, 1),
                                         f"file is larger than {MAX_FILE_BYTES // (1024 * 1024)} MiB; not checked",
                                         "warning", {"bytes": size})], options)
        with open(path, "rb") as fh:
            data = fh.read()
    except OSError as exc:
        return _early(path, [Finding("file-error", _site(path, 1),
                                     f"cannot read file: {exc.strerror or exc}", "error")], options)
    return _check_data(path, data, options)


def _large_file_dialects(path: str, options: Options) -> tuple[str, ...]:
    """The prefilter's answer for a file over the size limit, read in blocks of whole lines
    (generous, as the prefilter is: for a notebook, any library name in its raw JSON)."""
    from optlint.prefilter import WORDS, dialects_in

    notebook = path.endswith(".ipynb")

    def scan(block: bytes):
        if notebook:  # its code lines are JSON strings: any library name counts
            return [name for name, word in WORDS.items() if word in block]
        return dialects_in(block)

    found: set[str] = set()
    rest = b""  # the unfinished last line of the previous block, scanned again with its end
    with open(path, "rb") as fh:
        while block := fh.read(1 << 20):
            block = rest + block
            found.update(scan(block))
            rest = block[block.rfind(b"\n") + 1:][-65536:]  # cut off, a line start is only more generous
    return tuple(d for d in sorted(found) if options.dialects is None or d in options.dialects)


def _check_data(path: str, data: bytes, options: Options) -> FileResult:
    dialects = scan_dialects(path, data)
    if options.dialects is not None:
        dialects = tuple(d for d in dialects if d in options.dialects)
    if not dialects:
        return FileResult(path, [], False)

    from optlint.sources import SourceError, read_source

    try:
        source = read_source(path, data)
    except SourceError as exc:
        return _early(path, [Finding("syntax-error", _site(path, exc.line, exc.column), str(exc), "error")], options)

    from optlint.nesting import deep_call

    return deep_call(_analyse, path, source, dialects, options)


def _analyse(path, source, dialects, options) -> FileResult:
    """Parse, recognise, run the rules and the policy: in a thread with a deep stack (nesting.py).
    Warnings of the libraries used inside (numpy's overflow in a witness search at 1e308, sympy's
    deprecations) are not the user's business: they are silenced here, never printed."""
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return _analyse_quietly(path, source, dialects, options)


def _analyse_quietly(path, source, dialects, options) -> FileResult:
    findings, models = _parse_and_recognise(path, source, dialects, options)
    dialect_of: dict[int, str] = {}
    if models:
        findings.extend(_run_rules(models, dialect_of))
    result = _finalise(path, findings, dialect_of, options, source)
    result.dependencies = sorted({d for m in models for d in getattr(m, "dependencies", ())})
    return result


def _early(path: str, findings: list[Finding], options: Options) -> FileResult:
    """A file that never reached the parser: project severities apply (no source, so no acceptances)."""
    from optlint import policy

    out, _ = policy.apply(path, findings, {}, None, options, {})
    return FileResult(path, out, True, fingerprints=policy.fingerprints(path, out, None, options.root))


def _parse_and_recognise(path, source, dialects, options):
    import libcst as cst

    from optlint.dialects import load

    from optlint.elide import elide_large_literals
    from optlint.nesting import checked_parse
    from optlint.positions import install

    text, elided = elide_large_literals(source.text)  # data tables: libcst would take minutes on them
    if elided:
        source.text = text  # the policy stage's tokenizer reads the same light text; lines stay as shown
    refused, tree = checked_parse(text)  # nesting libcst would crash or stall on
    if refused is not None:
        return [Finding(refused.rule, _site(path, refused.line, refused.column), refused.message)], []
    try:
        module = cst.parse_module(text)
    except cst.ParserSyntaxError as exc:
        line, column, message = _python_syntax_error(source.text) or (exc.raw_line, exc.raw_column + 1, exc.message)
        return [Finding("syntax-error", _site(path, line, column), f"file does not parse: {message}")], []
    except RecursionError:
        return [Finding("syntax-error", _site(path, 1),
                        "file is nested too deeply for the parser; not checked")], []
    from optlint.interp import OPTIONS

    wrapper = cst.MetadataWrapper(module, unsafe_skip_copy=True)
    install(wrapper, text, tree)  # statement lines from CPython's tree: see optlint/positions.py
    models = []
    token = OPTIONS.set(options)  # declared atoms and assumptions reach the interpreter this way
    try:
        for name in dialects:
            recognise = load(name).recognise
            if "options" in inspect.signature(recognise).parameters:
                models.extend(recognise(wrapper, path, options=options))
            else:
                models.extend(recognise(wrapper, path))
    finally:
        OPTIONS.reset(token)
    return [], models


def _python_syntax_error(text: str) -> tuple[int, int, str] | None:
    """Where CPython's own parser places the error (libcst's recovery can point a line later).

    ``ast.parse`` only parses: nothing is compiled to bytecode or run.
    """
    import ast

    try:
        ast.parse(text)
    except SyntaxError as exc:
        return exc.lineno or 1, exc.offset or 1, exc.msg
    except (RecursionError, MemoryError, ValueError):
        return None
    return None


def _run_rules(models, dialect_of: dict[int, str]) -> list[Finding]:
    from optlint.analysis import ModelAnalysis
    from optlint.plugins import registry

    findings: list[Finding] = []
    failed: set[tuple[str, str]] = set()
    for model in models:
        analysis = ModelAnalysis(model)
        for rule in registry().values():
            if rule.check is None:
                continue
            try:
                produced = list(rule.check(model, analysis))
            except Exception as exc:  # one failing rule costs its own findings only
                produced = [] if (rule.id, type(exc).__name__) in failed else [_internal(model.path, exc, rule.id)]
                failed.add((rule.id, type(exc).__name__))
            for f in produced:
                dialect_of[id(f)] = model.dialect
                remark = model.remarks.get((f.site.line, f.site.column, f.rule))
                if remark:  # a recogniser's word on this site (e.g. scipy's 'ineq' sign convention)
                    f.message = f"{f.message}. {remark}"
                    f.evidence["dialect_note"] = remark
            findings.extend(produced)
    return findings


def _finalise(path: str, findings: list[Finding], dialect_of: dict[int, str], options: Options,
              source) -> FileResult:
    from optlint import policy
    from optlint.plugins import registry

    rules = registry()
    by_site: dict[tuple, set[str]] = {}
    for f in findings:
        by_site.setdefault((f.site.line, f.site.column), set()).add(f.rule)
    kept = []
    for f in findings:
        here = by_site[(f.site.line, f.site.column)]
        if any(f.rule in rules[o].supersedes for o in here if o in rules and o != f.rule):
            continue
        kept.append(f)
    facts = policy.SourceFacts(source.text)
    out, accepted = policy.apply(path, kept, dialect_of, facts, options, rules)
    for f in out:
        if source.cell_map is not None:
            cell, line = source.locate(f.site.line)
            if cell is not None:
                f.evidence.setdefault("cell", cell)
                f.evidence.setdefault("cell_line", line)
    out.sort(key=Finding.sort_key)
    return FileResult(path, out, True, source.lines, source.cell_map,
                      policy.fingerprints(path, out, facts, options.root), accepted)


def fails(findings: list[Finding], threshold: str) -> bool:
    rank = SEVERITY_RANK[threshold]
    return any(SEVERITY_RANK.get(f.severity, 0) >= rank for f in findings)
