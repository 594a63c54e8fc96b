"""The text report for people: findings grouped by file, each under the code line it is about.

Layout (our own): a file heading with its count, then for each finding the source line with its
number, and beneath it the severity, the rule id and the message, and the failing step of the
derivation (with ``--show-derivation`` also the whole derivation tree and the witness as a sentence);
then a count per rule and the summary line (inline acceptances and baseline matches included). Colour only on a terminal and never when NO_COLOR is set (rich honours both); every
piece of user text is passed as plain text, never as markup. A progress bar goes to stderr, only
when it is a terminal and the run has at least ``PROGRESS_MIN_FILES`` files, and vanishes after.
"""

from __future__ import annotations

from collections import Counter

from rich.console import Console
from rich.text import Text

STYLE = {"error": "bold red", "warning": "yellow", "note": "cyan"}
PROGRESS_MIN_FILES = 20


def make_console(stream=None, no_color: bool = False) -> Console:
    return Console(file=stream, highlight=False, soft_wrap=True, no_color=no_color or None, emoji=False)


def progress_console(stream, no_color: bool = False) -> Console | None:
    """A console for the progress bar, or None when ``stream`` is not an interactive terminal."""
    console = make_console(stream, no_color)
    return console if console.is_terminal and not console.is_dumb_terminal else None


def with_progress(console: Console, files: list[str], work) -> list:
    """Run ``work(on_result)`` with a bar that advances each time a file's result arrives."""
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeElapsedColumn

    columns = (TextColumn("optlint"), BarColumn(), MofNCompleteColumn(), TimeElapsedColumn(),
               TextColumn("{task.description}", markup=False))
    with Progress(*columns, console=console, transient=True) as bar:
        task = bar.add_task("", total=len(files))

        def advance(result) -> None:
            bar.update(task, description=result.path[-60:])
            bar.advance(task)

        return work(advance)


def render(console: Console, results, files_skipped: int, problems, quiet: bool = False,
           stats: dict | None = None, explain=None) -> None:
    """``explain(path, finding)``, when given, returns renderables printed under each finding (the
    derivation tree and the witness sentence of ``--show-derivation``)."""
    for path, message in problems:
        console.print(Text(f"{path}: {message}", style="red"))
    total = Counter()
    by_rule = Counter()
    for result in results:
        if not result.findings:
            continue
        total.update(f.severity for f in result.findings)
        by_rule.update(f.rule for f in result.findings)
        if quiet:
            continue
        n = len(result.findings)
        head = Text("▸ ", style="bold")
        head.append(result.path, style="bold")
        head.append(f"  ({n} finding{'s' if n != 1 else ''})", style="dim")
        console.print(head)
        for f in result.findings:
            _finding(console, result, f)
            if explain is not None:
                for part in explain(result.path, f):
                    print_wide(console, part, indent=9)
        console.print()
    if by_rule and not quiet:
        for rule, n in sorted(by_rule.items(), key=lambda kv: (-kv[1], kv[0])):
            console.print(Text(f"  {n:>4}  {rule}", style="dim"))
    _summary(console, total, results, files_skipped, stats or {})


def print_wide(console: Console, renderable, indent: int = 0) -> None:
    """Print ``renderable`` (a derivation tree, a sentence) indented and never cropped: a tree's
    labels are expressions, and cutting one at the terminal's width would hide what it says."""
    options = console.options.update(width=100_000, no_wrap=True, overflow="ignore")
    if isinstance(renderable, str):
        renderable = Text.from_markup(renderable)
    for line in console.render_lines(renderable, options, pad=False):
        text = Text(" " * indent)
        for segment in line:
            if not segment.control:
                text.append(segment.text, segment.style)
        text.rstrip()
        console.print(text, soft_wrap=True)


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


def _summary(console: Console, total: Counter, results, files_skipped: int, stats: dict) -> None:
    checked = sum(1 for r in results if r.checked)
    n = sum(total.values())
    parts = [f"{total[s]} {s}{'s' if total[s] != 1 else ''}" for s in ("error", "warning", "note") if total[s]]
    found = f"{n} finding{'s' if n != 1 else ''}" + (f" ({', '.join(parts)})" if parts else "")
    line = Text("optlint: ", style="bold")
    line.append(found, style="bold red" if total["error"] else ("yellow" if n else "green"))
    line.append(f" · {checked} file{'s' if checked != 1 else ''} checked, {files_skipped} without models skipped")
    if stats.get("accepted_inline"):
        line.append(f" · {stats['accepted_inline']} accepted inline")
    base = stats.get("baseline")
    if base is not None:
        line.append(f" · {base['matched']} in baseline")
        if base["unmatched_entries"]:
            n = base["unmatched_entries"]
            line.append(f", {n} baseline entr{'ies' if n != 1 else 'y'} no longer match (rewrite with "
                        f"`optlint baseline`)", style="yellow")
    console.print(line)
