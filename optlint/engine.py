"""Engine: runs the stages for each file and returns plain results; it never raises for a file.

Per file: read bytes -> prefilter (which dialects may be present) -> decode / notebook join ->
libcst parse -> recognise (dialect -> Model IR) -> analyse -> rules -> superseded findings dropped
-> severities applied. A file that cannot be read, decoded or parsed yields one finding and the run
goes on; an unexpected exception inside a stage yields an ``internal-error`` finding for that file.
sympy is imported only when a file passes the prefilter.
"""

from __future__ import annotations

import os
import traceback
from dataclasses import dataclass, field

from optlint.findings import SEVERITY_RANK, Finding
from optlint.ir import Site
from optlint.prefilter import scan_dialects

MAX_FILE_BYTES = 8 * 1024 * 1024


@dataclass
class Options:
    severities: dict[str, str] = field(default_factory=dict)  # rule id -> severity or "off"
    dialects: tuple[str, ...] | None = None  # None: all


@dataclass
class FileResult:
    path: str
    findings: list[Finding]
    checked: bool  # False: skipped by the prefilter (no model library imported)
    lines: list[str] = field(default_factory=list)  # source lines, for the text report
    cell_map: list | None = None


def _site(path: str, line: int, column: int = 1) -> Site:
    return Site(path, max(line, 1), max(column, 1), max(line, 1), max(column, 1))


def check_file(path: str, options: Options | None = None) -> FileResult:
    options = options or Options()
    try:
        return _check_file(path, options)
    except Exception as exc:  # the engine's promise: one broken file never stops the run
        return FileResult(path, [_internal(path, exc)], True)


def _internal(path: str, exc: BaseException) -> Finding:
    frame = traceback.extract_tb(exc.__traceback__)[-1] if exc.__traceback__ else None
    where = f" in {os.path.basename(frame.filename)}:{frame.lineno}" if frame else ""
    return Finding(
        rule="internal-error", site=_site(path, 1), severity="error",
        message=(f"optlint failed on this file ({type(exc).__name__}{where}): {exc}. The rest of the run "
                 f"went on; please report this with the file or a reduced copy of it."),
        evidence={"exception": type(exc).__name__},
    )


def _check_file(path: str, options: Options) -> FileResult:
    try:
        size = os.path.getsize(path)
        if size > MAX_FILE_BYTES:
            return FileResult(path, [Finding("file-error", _site(path, 1),
                                             f"file is larger than {MAX_FILE_BYTES // (1024 * 1024)} MiB; not checked",
                                             "warning", {"bytes": size})], True)
        with open(path, "rb") as fh:
            data = fh.read()
    except OSError as exc:
        return FileResult(path, [Finding("file-error", _site(path, 1),
                                         f"cannot read file: {exc.strerror or exc}", "error")], True)

    dialects = scan_dialects(path, data)
    if options.dialects is not None:
        dialects = tuple(d for d in dialects if d in options.dialects)
    if not dialects:
        return FileResult(path, [], False)

    from optlint.sources import SourceError, read_source

    try:
        source = read_source(path, data)
    except SourceError as exc:
        return FileResult(path, [Finding("syntax-error", _site(path, exc.line, exc.column), str(exc))], True)

    findings, models = _parse_and_recognise(path, source, dialects)
    if models:
        findings.extend(_run_rules(models))
    findings = _finalise(findings, options, source)
    return FileResult(path, findings, True, source.lines, source.cell_map)


def _parse_and_recognise(path, source, dialects):
    import libcst as cst

    from optlint.dialects import load

    try:
        module = cst.parse_module(source.text)
    except cst.ParserSyntaxError as exc:
        line, column, message = _python_syntax_error(source.text) or (exc.raw_line, exc.raw_column + 1, exc.message)
        return [Finding("syntax-error", _site(path, line, column), f"file does not parse: {message}")], []
    except RecursionError:
        return [Finding("syntax-error", _site(path, 1),
                        "file is nested too deeply for the parser; not checked")], []
    wrapper = cst.MetadataWrapper(module, unsafe_skip_copy=True)
    models = []
    for name in dialects:
        models.extend(load(name).recognise(wrapper, path))
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


def _run_rules(models) -> list[Finding]:
    from optlint.analysis import ModelAnalysis
    from optlint.rules import all_rules

    findings: list[Finding] = []
    for model in models:
        analysis = ModelAnalysis(model)
        for rule in all_rules().values():
            if rule.check is None:
                continue
            try:
                findings.extend(rule.check(model, analysis))
            except RecursionError as exc:
                findings.append(_internal(model.path, exc))
    return findings


def _finalise(findings: list[Finding], options: Options, source) -> list[Finding]:
    from optlint.rules import all_rules

    rules = all_rules()
    by_site: dict[tuple, set[str]] = {}
    for f in findings:
        by_site.setdefault((f.site.line, f.site.column), set()).add(f.rule)
    out = []
    for f in findings:
        rule = rules.get(f.rule)
        here = by_site[(f.site.line, f.site.column)]
        if any(f.rule in rules[o].supersedes for o in here if o in rules and o != f.rule):
            continue
        severity = options.severities.get(f.rule) or (rule.severity if rule else f.severity)
        if severity == "off":
            continue
        f.severity = severity
        if source is not None and source.cell_map is not None:
            cell, line = source.locate(f.site.line)
            if cell is not None:
                f.evidence.setdefault("cell", cell)
                f.evidence.setdefault("cell_line", line)
        out.append(f)
    out.sort(key=Finding.sort_key)
    return out


def fails(findings: list[Finding], threshold: str) -> bool:
    rank = SEVERITY_RANK[threshold]
    return any(SEVERITY_RANK.get(f.severity, 0) >= rank for f in findings)
