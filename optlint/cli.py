"""The ``optlint`` command. Exit codes are decided here and only here:

- 0: no finding at or above the failing severity (``--fail-on``, default ``warning``);
- 1: at least one finding at or above it;
- 2: usage error (unknown option, missing path, unknown rule id).

``optlint check PATH...`` checks files and directories; ``optlint rules`` lists the rules;
``optlint explain RULE`` prints a rule's rationale, reference and examples.
"""

from __future__ import annotations

import argparse
import sys

from optlint import __version__

EXIT_OK, EXIT_FINDINGS, EXIT_USAGE = 0, 1, 2


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
    check.add_argument("paths", nargs="*", default=["."], help="files or directories (default: .)")
    check.add_argument("--format", choices=("text", "json"), default="text", help="output format")
    check.add_argument("--fail-on", choices=("error", "warning", "note"), default="warning",
                       help="lowest severity that makes the exit code 1 (default: warning)")
    check.add_argument("--exclude", action="append", default=[], metavar="GLOB",
                       help="skip paths matching GLOB (repeatable)")
    check.add_argument("--quiet", action="store_true", help="print only the summary line (text format)")
    check.add_argument("--no-color", action="store_true", help="plain text even on a terminal")

    rules = sub.add_parser("rules", help="list the rules with their default severity")
    rules.add_argument("--format", choices=("text", "markdown"), default="text",
                       help="markdown: the table the README carries")
    explain = sub.add_parser("explain", help="explain one rule")
    explain.add_argument("rule", help="rule id, e.g. nonconvex-objective")
    return parser


def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:
        return int(exc.code or 0)
    if args.command == "check":
        return cmd_check(args)
    if args.command == "rules":
        return cmd_rules(args.format)
    if args.command == "explain":
        return cmd_explain(args.rule)
    parser.print_help(sys.stderr)
    return EXIT_USAGE


def cmd_check(args) -> int:
    from optlint.discover import discover
    from optlint.engine import check_file, fails

    files, problems = discover(args.paths, tuple(args.exclude))
    if problems and not files:
        for path, message in problems:
            sys.stderr.write(f"optlint: {path}: {message}\n")
        return EXIT_USAGE
    results = [check_file(path) for path in files]
    skipped = sum(1 for r in results if not r.checked)
    checked = [r for r in results if r.checked]
    if args.format == "json":
        from optlint.report.json_report import render

        sys.stdout.write(render(checked, skipped, problems) + "\n")
    else:
        from optlint.report.text import make_console, render

        render(make_console(sys.stdout, args.no_color), checked, skipped, problems, args.quiet)
    findings = [f for r in checked for f in r.findings]
    if problems:
        return EXIT_USAGE
    return EXIT_FINDINGS if fails(findings, args.fail_on) else EXIT_OK


def cmd_rules(fmt: str = "text") -> int:
    from optlint.rules import all_rules, markdown_table

    rules = all_rules()
    if fmt == "markdown":
        sys.stdout.write(markdown_table())
        return EXIT_OK
    width = max(len(r) for r in rules)
    for rule in rules.values():
        sys.stdout.write(f"{rule.id:<{width}}  {rule.severity:<7}  {rule.summary}\n")
    return EXIT_OK


def cmd_explain(rule_id: str) -> int:
    import difflib

    from optlint.rules import all_rules

    rules = all_rules()
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
