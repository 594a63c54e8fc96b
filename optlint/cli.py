"""The ``optlint`` command. Exit codes are decided here and only here:

- 0: no finding at or above the failing severity (``--fail-on``, default ``warning``);
- 1: at least one finding at or above it;
- 2: usage error (unknown option, missing path, unknown rule id), a configuration error (file,
  key and what was expected), an unreadable baseline, a failed git query or a broken plugin;
- 3: the run was incomplete: at least one file was not fully checked because optlint itself
  failed on it (an ``internal-error`` finding, whatever its severity and even when a baseline
  records it). 3 takes precedence over 1 (the findings that were reached are still reported),
  2 over both.

``optlint check PATH...`` checks files and directories; ``optlint baseline PATH...`` writes the
current findings to a baseline file; ``optlint rules`` lists the rules; ``optlint explain RULE``
prints a rule's rationale, reference and examples. Command-line options override the
``[tool.optlint]`` configuration (``optlint.config``).

``optlint rewrite PATH...`` prints, as a unified diff, the exact rewrites it would make
(``optlint.rewrite``) and changes nothing: exit 0 when there is nothing to rewrite, 1 when there
is (so it works as a check). With ``--apply`` it writes them: exit 0 when every rewrite was
written, 1 when a file could not be written. Usage and configuration errors exit 2 and a file
optlint itself failed on exits 3, as above. A file whose rewrite fails its re-check is left as it
was and named on stderr.
"""

from __future__ import annotations

import argparse
import difflib
import os
import sys

from optlint import __version__

EXIT_OK, EXIT_FINDINGS, EXIT_USAGE, EXIT_INCOMPLETE = 0, 1, 2, 3


class _Parser(argparse.ArgumentParser):
    def error(self, message):  # argparse's own exit code for usage errors is 2 as well; keep its text
        self.print_usage(sys.stderr)
        sys.stderr.write(f"optlint: error: {message}\n")
        raise SystemExit(EXIT_USAGE)


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(prog="optlint", description="Proves or refutes convexity of optimisation models in Python code, "
                                                 "without running the code.")
    parser.add_argument("--version", action="version", version=f"optlint {__version__}")
    sub = parser.add_subparsers(dest="command", parser_class=_Parser)

    check = sub.add_parser("check", help="check files and directories")
    _run_options(check)
    check.add_argument("--format", choices=("text", "json", "sarif"), default="text",
                       help="output format (sarif: SARIF 2.1.0 for code-review annotations)")
    check.add_argument("--baseline", metavar="FILE", help="report only findings not in this baseline file")
    check.add_argument("--no-baseline", action="store_true", help="ignore the baseline named in the configuration")
    check.add_argument("--quiet", action="store_true", help="print only the summary line (text format)")
    check.add_argument("--no-color", action="store_true", help="plain text even on a terminal")
    check.add_argument("--no-progress", action="store_true", help="no progress bar, even on a terminal")
    check.add_argument("--show-derivation", action="store_true",
                       help="under each finding, its derivation tree and its witness as a sentence (text format)")

    base = sub.add_parser("baseline", help="write the current findings to a baseline file")
    _run_options(base)
    base.add_argument("--output", "-o", metavar="FILE",
                      help="baseline file to write (default: the configuration's `baseline`, else "
                           "optlint-baseline.json in the project root)")

    rules = sub.add_parser("rules", help="list the rules with their default severity")
    rules.add_argument("--format", choices=("text", "markdown"), default="text",
                       help="markdown: the table the README carries")
    rewrite = sub.add_parser("rewrite", help="show (or --apply) the exact rewrites of undisciplined-convex, "
                                             "degenerate-constraint and strict-inequality findings")
    rewrite.add_argument("paths", nargs="*", default=["."], help="files or directories (default: .)")
    rewrite.add_argument("--apply", action="store_true", help="write the rewrites instead of printing the diff")
    for flag, kwargs in (("--exclude", dict(metavar="GLOB", help="skip paths matching GLOB (repeatable)")),
                         ("--include", dict(metavar="GLOB", help="only files matching GLOB (repeatable)")),
                         ("--severity", dict(metavar="RULE=LEVEL", help="as for check; `off` leaves a rule's "
                                                                        "findings unrewritten (repeatable)"))):
        rewrite.add_argument(flag, action="append", default=[], **kwargs)
    rewrite.add_argument("--config", metavar="FILE", help="read [tool.optlint] from FILE")
    rewrite.add_argument("--no-config", action="store_true", help="use no configuration file")
    rewrite.set_defaults(dialect=[], changed_since=None, no_accept_comments=False)
    derive = sub.add_parser("derive", help="print the derivation trees of the model parts at PATH:LINE")
    derive.add_argument("location", metavar="PATH:LINE", help="a file and the line an objective or constraint starts on")
    derive.add_argument("--no-color", action="store_true", help="plain text even on a terminal")
    explain = sub.add_parser("explain", help="explain one rule")
    explain.add_argument("rule", help="rule id, e.g. nonconvex-objective")
    return parser


def _run_options(p: argparse.ArgumentParser) -> None:
    p.add_argument("paths", nargs="*", default=["."], help="files or directories (default: .)")
    p.add_argument("--fail-on", choices=("error", "warning", "note"), default=None,
                   help="lowest severity that makes the exit code 1 (default: the configuration's, else warning)")
    p.add_argument("--exclude", action="append", default=[], metavar="GLOB",
                   help="skip paths matching GLOB (repeatable; added to the configuration's)")
    p.add_argument("--include", action="append", default=[], metavar="GLOB",
                   help="check only files matching GLOB (repeatable; replaces the configuration's)")
    p.add_argument("--severity", action="append", default=[], metavar="RULE=LEVEL",
                   help="set a rule's severity: error, warning, note or off (repeatable)")
    p.add_argument("--dialect", action="append", default=[], metavar="NAME",
                   help="enable only these dialects (repeatable; replaces the configuration's)")
    p.add_argument("--config", metavar="FILE", help="read [tool.optlint] from FILE instead of the nearest pyproject.toml")
    p.add_argument("--no-config", action="store_true", help="use no configuration file")
    p.add_argument("--changed-since", metavar="REV",
                   help="check only files that differ from the git revision REV (and untracked ones)")
    p.add_argument("--no-accept-comments", action="store_true",
                   help="ignore inline `# optlint: accept` comments (report everything)")
    p.add_argument("--jobs", "-j", type=_positive_int, default=None, metavar="N",
                   help="worker processes (default: the number of cores; output is the same for any N)")
    p.add_argument("--no-cache", action="store_true",
                   help="neither read nor write the result cache (.optlint_cache in the project root)")


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:
        return int(exc.code or 0)
    if args.command in ("check", "baseline"):
        return cmd_check(args)
    if args.command == "rules":
        return cmd_rules(args.format)
    if args.command == "rewrite":
        return cmd_rewrite(args)
    if args.command == "derive":
        return cmd_derive(args.location, args.no_color)
    if args.command == "explain":
        return cmd_explain(args.rule)
    parser.print_help(sys.stderr)
    return EXIT_USAGE


class UsageError(Exception):
    pass


def _prepare(args):
    """(config, Options, files, path problems) for a check or baseline run, or UsageError."""
    from optlint.config import ConfigError, find_config, load_config
    from optlint.dialects import DIALECT_MODULES
    from optlint.discover import ChangedFilesError, changed_files, discover
    from optlint.engine import Options
    from optlint.plugins import PluginError, registry

    try:
        rule_ids = list(registry())
    except PluginError as exc:
        raise UsageError(str(exc))
    dialects = list(DIALECT_MODULES)
    try:
        if args.no_config:
            path = None
        elif args.config:
            if not os.path.isfile(args.config):
                raise UsageError(f"{args.config}: configuration file not found")
            path = args.config
        else:
            path = find_config(args.paths)
        config = load_config(path, rule_ids, dialects)
    except ConfigError as exc:
        raise UsageError(f"configuration error: {exc.file}: key `{exc.key}`: expected {exc.expected}")
    forced = {}
    for item in args.severity:
        rule, _, level = item.partition("=")
        if rule not in rule_ids:
            near = difflib.get_close_matches(rule, rule_ids, n=1)
            raise UsageError(f"--severity {item}: unknown rule {rule!r}"
                             + (f" (did you mean {near[0]}?)" if near else ""))
        if level not in ("error", "warning", "note", "off"):
            raise UsageError(f"--severity {item}: expected RULE=LEVEL with LEVEL error, warning, note or off")
        forced[rule] = level
    for name in args.dialect:
        if name not in dialects:
            raise UsageError(f"--dialect {name}: unknown dialect; known: {', '.join(dialects)}")
    options = Options(
        severities=config.severity, dialects=tuple(args.dialect) or config.dialects,
        dialect_severities=config.dialect_severity, overrides=config.overrides,
        command_line_severities=forced, intended=config.intended, atoms=config.atoms,
        assumptions=config.assumptions, root=config.root, honour_acceptances=not args.no_accept_comments)
    only = None
    if args.changed_since is not None:
        try:
            only = changed_files(args.changed_since, cwd=config.root if config.file else None)
        except ChangedFilesError as exc:
            raise UsageError(f"--changed-since: {exc}")
    files, problems = discover(args.paths, config.exclude + tuple(args.exclude),
                               tuple(args.include) or config.include, config.root, only)
    return config, options, files, problems


def cmd_check(args) -> int:
    from optlint.engine import check_file, fails
    from optlint.policy import BaselineError, filter_baseline, read_baseline, write_baseline

    try:
        config, options, files, problems = _prepare(args)
    except UsageError as exc:
        sys.stderr.write(f"optlint: {exc}\n")
        return EXIT_USAGE
    if problems and not files:
        for path, message in problems:
            sys.stderr.write(f"optlint: {path}: {message}\n")
        return EXIT_USAGE
    baseline_path = None
    if args.command == "check" and not args.no_baseline:
        baseline_path = args.baseline or config.baseline
    entries = None
    if baseline_path:
        try:
            entries = read_baseline(baseline_path)
        except BaselineError as exc:
            sys.stderr.write(f"optlint: {exc}\n")
            return EXIT_USAGE

    results = _run(files, options, check_file, args)
    skipped = sum(1 for r in results if not r.checked)
    checked = [r for r in results if r.checked]
    if args.command == "baseline":
        target = args.output or config.baseline or os.path.join(config.root, "optlint-baseline.json")
        n = write_baseline(target, checked, options.root)
        sys.stdout.write(f"optlint: wrote {n} finding{'s' if n != 1 else ''} to {target}\n")
        return EXIT_USAGE if problems else EXIT_OK

    stats = {"accepted_inline": sum(r.accepted for r in checked)}
    # before the baseline: a recorded internal error still leaves this run incomplete
    crashed = sorted({r.path for r in checked if any(f.rule == "internal-error" for f in r.findings)})
    if entries is not None:
        matched, stale = filter_baseline(checked, entries)
        stats["baseline"] = {"file": baseline_path, "matched": matched, "unmatched_entries": stale}
    findings = [f for r in checked for f in r.findings]
    fail_on = args.fail_on or config.fail_on or "warning"
    failed = fails(findings, fail_on)
    incomplete = bool(crashed)  # whatever severity it was given
    if args.format == "json":
        from optlint.report.json_report import render

        sys.stdout.write(render(checked, skipped, problems, stats) + "\n")
    elif args.format == "sarif":
        from optlint.report.sarif import render

        sys.stdout.write(render(checked, problems, stats, options.root,
                                success=not problems and not incomplete) + "\n")
    else:
        from optlint.report.text import make_console, render

        explain = None
        if args.show_derivation:
            from optlint.trees import FindingTrees

            explain = FindingTrees(options).renderables
        render(make_console(sys.stdout, args.no_color), checked, skipped, problems, args.quiet, stats, explain)
    if incomplete:
        n = len(crashed)
        sys.stderr.write(f"optlint: the run was incomplete: {n} file{'s were' if n != 1 else ' was'} not fully "
                         f"checked (internal-error)\n")
    if problems:
        return EXIT_USAGE
    if incomplete:
        return EXIT_INCOMPLETE
    return EXIT_FINDINGS if failed else EXIT_OK


def _positive_int(text: str) -> int:
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, got {text!r}")
    if value < 1:
        raise argparse.ArgumentTypeError("expected a number of at least 1")
    return value


def _run(files, options, check_file, args):
    """Check every file (worker processes, result cache); a progress bar on a terminal for long runs."""
    from optlint import runner
    from optlint.report.text import PROGRESS_MIN_FILES, progress_console

    jobs = getattr(args, "jobs", None) or runner.default_jobs()
    cache = None if getattr(args, "no_cache", False) else runner.Cache(options.root or os.getcwd(), options)
    console = None
    if not getattr(args, "no_progress", False) and not getattr(args, "quiet", False) \
            and len(files) >= PROGRESS_MIN_FILES:
        console = progress_console(sys.stderr, getattr(args, "no_color", False))
    if console is None:
        return runner.run(files, options, jobs, cache)
    from optlint.report.text import with_progress

    return with_progress(console, files, lambda on_result: runner.run(files, options, jobs, cache, on_result))


def cmd_rules(fmt: str = "text") -> int:
    from optlint.plugins import PluginError, registry
    from optlint.rules import markdown_table

    try:
        rules = registry()
    except PluginError as exc:
        sys.stderr.write(f"optlint: {exc}\n")
        return EXIT_USAGE
    if fmt == "markdown":
        sys.stdout.write(markdown_table())
        return EXIT_OK
    width = max(len(r) for r in rules)
    for rule in rules.values():
        sys.stdout.write(f"{rule.id:<{width}}  {rule.severity:<7}  {rule.summary}\n")
    return EXIT_OK


def cmd_rewrite(args) -> int:
    """Preview (a unified diff on stdout) or --apply the exact rewrites; notes on stderr."""
    from optlint.rewrite import rewrite_file

    try:
        _, options, files, problems = _prepare(args)
    except UsageError as exc:
        sys.stderr.write(f"optlint: {exc}\n")
        return EXIT_USAGE
    for path, message in problems:
        sys.stderr.write(f"optlint: {path}: {message}\n")
    if problems and not files:
        return EXIT_USAGE
    pending = failed = written = broken = 0
    for path in files:
        if path.endswith(".ipynb"):
            continue  # notebooks are JSON: their cells are not rewritten in place
        try:
            outcome = rewrite_file(path, options)
        except OSError as exc:
            sys.stderr.write(f"optlint: {path}: cannot read: {exc.strerror or exc}\n")
            failed += 1
            continue
        for line, rule, why in outcome.notes:
            sys.stderr.write(f"optlint: {path}:{line}: {rule} left as a suggestion: {why}\n")
        if outcome.refused:
            sys.stderr.write(f"optlint: {path}: not rewritten: {outcome.refused}\n")
        broken += outcome.failed
        if not outcome.changed:
            continue
        if not args.apply:
            sys.stdout.write(outcome.diff())
            pending += 1
            continue
        try:
            with open(path, "wb") as fh:
                fh.write(outcome.rewritten)
            written += 1
        except OSError as exc:
            sys.stderr.write(f"optlint: {path}: cannot write: {exc.strerror or exc}\n")
            failed += 1
    if args.apply:
        sys.stderr.write(f"optlint: rewrote {written} file{'s' if written != 1 else ''}\n")
    elif pending:
        sys.stderr.write(f"optlint: {pending} file{'s' if pending != 1 else ''} would be rewritten "
                         f"(run with --apply to write)\n")
    else:
        sys.stderr.write("optlint: nothing to rewrite\n")
    if problems:
        return EXIT_USAGE
    if broken:
        return EXIT_INCOMPLETE
    return EXIT_FINDINGS if (pending or failed) else EXIT_OK


def cmd_derive(location: str, no_color: bool = False) -> int:
    """Derivation trees (and witnesses) of the objectives/constraints starting at PATH:LINE.

    Exit 0 when something was found there, 1 when nothing at that line is a model part, 2 when the
    location is not PATH:LINE of a readable file."""
    path, _, line_text = location.rpartition(":")
    if not path or not line_text.isdigit() or not os.path.isfile(path):
        sys.stderr.write(f"optlint: derive expects PATH:LINE of an existing file, got {location!r}\n")
        return EXIT_USAGE
    from optlint.report.text import make_console
    from optlint.trees import trees_at

    console = make_console(sys.stdout, no_color)
    found = trees_at(path, int(line_text), console)
    if found:
        sys.stderr.write(f"optlint: no objective or constraint of a recognised model starts at {location}\n")
    return found


def cmd_explain(rule_id: str) -> int:
    from optlint.plugins import PluginError, registry

    try:
        rules = registry()
    except PluginError as exc:
        sys.stderr.write(f"optlint: {exc}\n")
        return EXIT_USAGE
    rule = rules.get(rule_id)
    if rule is None:
        near = difflib.get_close_matches(rule_id, list(rules), n=1)
        hint = f" (did you mean {near[0]}?)" if near else ""
        sys.stderr.write(f"optlint: unknown rule {rule_id!r}{hint}; `optlint rules` lists them\n")
        return EXIT_USAGE
    out = [
        f"{rule.id}  (default severity: {rule.severity})",
        "",
        rule.summary,
        "",
        rule.rationale,
        "",
        f"Reference: {rule.reference}",
        "",
        "Flagged:",
        _indent(rule.bad),
        "",
        "Fine:",
        _indent(rule.good),
    ]
    sys.stdout.write("\n".join(out) + "\n")
    return EXIT_OK


def _indent(code: str) -> str:
    return "\n".join("    " + line if line else "" for line in code.splitlines())
