"""The text report for people: findings grouped by file, each under the code line it is about.

Layout (our own): a file heading with its count, then for each finding the source line with its
number, and beneath it the severity, the rule id and the message, and the failing step of the
derivation. Colour only on a terminal and never when NO_COLOR is set (rich honours both); every
piece of user text is passed as plain text, never as markup.
"""

from __future__ import annotations

from collections import Counter

from rich.console import Console
from rich.text import Text

STYLE = {"error": "bold red", "warning": "yellow", "note": "cyan"}


def make_console(stream=None, no_color: bool = False) -> Console:
    return Console(file=stream, highlight=False, soft_wrap=True, no_color=no_color or None, emoji=False)


def render(console: Console, results, files_skipped: int, problems, quiet: bool = False) -> None:
    for path, message in problems:
        console.print(Text(f"{path}: {message}", style="red"))
    total = Counter()
    for result in results:
        if not result.findings:
            continue
        total.update(f.severity for f in result.findings)
        if quiet:
            continue
        n = len(result.findings)
        head = Text("▸ ", style="bold")
        head.append(result.path, style="bold")
        head.append(f"  ({n} finding{'s' if n != 1 else ''})", style="dim")
        console.print(head)
        for f in result.findings:
            _finding(console, result, f)
        console.print()
    _summary(console, total, results, files_skipped)


def _finding(console: Console, result, f) -> None:
    line_no = f.site.line
    cell = f.evidence.get("cell")
    shown_line = f.evidence.get("cell_line", line_no)
    label = f"cell {cell}, line {shown_line}" if cell is not None else f"line {line_no}"
    width = max(len(str(line_no)), 3)
    if result.lines and 1 <= line_no <= len(result.lines):
        code = Text(f"  {shown_line:>{width}} │ ", style="dim")
        code.append(result.lines[line_no - 1].rstrip()[:200])
        console.print(code)
    body = Text(" " * (width + 3) + "└─ ", style="dim")
    body.append(f.severity, style=STYLE.get(f.severity, ""))
    body.append(" · ")
    body.append(f.rule, style="bold")
    body.append(f" ({label}, col {f.site.column}): ", style="dim")
    body.append(f.message)
    console.print(body)
    branch = f.evidence.get("failing_branches")
    if branch:
        console.print(Text(" " * (width + 6) + "fails when: " + " | ".join("; ".join(b) for b in branch if b),
                           style="dim"))


def _summary(console: Console, total: Counter, results, files_skipped: int) -> None:
    checked = sum(1 for r in results if r.checked)
    n = sum(total.values())
    parts = [f"{total[s]} {s}{'s' if total[s] != 1 else ''}" for s in ("error", "warning", "note") if total[s]]
    found = f"{n} finding{'s' if n != 1 else ''}" + (f" ({', '.join(parts)})" if parts else "")
    line = Text("optlint: ", style="bold")
    line.append(found, style="bold red" if total["error"] else ("yellow" if n else "green"))
    line.append(f" · {checked} file{'s' if checked != 1 else ''} checked, {files_skipped} without models skipped")
    console.print(line)
