"""Discover: turn the paths given on the command line into the ordered list of files to check.

Directories are walked recursively in sorted order; ``.gitignore`` files met on the way are
respected (the subset of the format that real repositories use: comments, blank lines, ``!``
negation, trailing ``/`` for directories, leading ``/`` or an inner ``/`` for anchored patterns,
``*``, ``?``, ``[...]`` and ``**``). Directories that never hold project sources (``.git``, virtual
environments, caches) are skipped. A file named explicitly is always checked, whatever its suffix
or ignore status, but ``--exclude``/``--include`` and the configuration's globs apply to it (so a
pre-commit run honours them). Symlinked directories are not followed, so a link loop cannot trap
the walk; a source name that is not a readable regular file (a broken or looping link, a pipe)
is listed, so that the engine reports it as a ``file-error`` instead of the walk hiding it.
Changed-files mode asks git (an argument list, never a shell string; the revision is validated
first) which files differ from a revision and keeps only those.
"""

from __future__ import annotations

import fnmatch
import os
import re
import subprocess
from dataclasses import dataclass
from functools import lru_cache

SUFFIXES = (".py", ".ipynb")
ALWAYS_SKIPPED_DIRS = frozenset({
    ".git", ".hg", ".svn", "__pycache__", ".mypy_cache", ".pytest_cache", ".ruff_cache",
    ".tox", ".nox", ".venv", "venv", ".eggs", "node_modules", ".optlint_cache",
})


@dataclass(frozen=True)
class IgnoreRule:
    regex: re.Pattern[str]
    negated: bool
    dir_only: bool


def _glob_to_regex(pattern: str) -> str:
    out, i = [], 0
    while i < len(pattern):
        c = pattern[i]
        if pattern.startswith("**/", i):
            out.append("(?:.*/)?")
            i += 3
            continue
        if pattern.startswith("/**", i) and i + 3 == len(pattern):
            out.append("/.*")
            i += 3
            continue
        if pattern.startswith("**", i):
            out.append(".*")
            i += 2
            continue
        if c == "*":
            out.append("[^/]*")
        elif c == "?":
            out.append("[^/]")
        elif c == "[":
            j = pattern.find("]", i + 1)
            if j == -1:
                out.append(re.escape(c))
            else:
                body = pattern[i + 1:j].replace("\\", "\\\\")
                if body.startswith("!"):
                    body = "^" + body[1:]
                out.append(f"[{body}]")
                i = j
        else:
            out.append(re.escape(c))
        i += 1
    return "".join(out)


@lru_cache(maxsize=256)
def _project_glob(pattern: str) -> re.Pattern[str]:
    anchored = "/" in pattern.rstrip("/")
    body = _glob_to_regex(pattern.strip("/"))
    return re.compile(("^" if anchored else r"^(?:.*/)?") + body + "$")


def glob_match(pattern: str, relpath: str) -> bool:
    """A project glob (relative to the project root; ``**`` spans directories; without a ``/`` it
    matches a name at any depth) against a root-relative POSIX path or any of its directories."""
    regex = _project_glob(pattern)
    parts = relpath.split("/")
    return any(regex.match("/".join(parts[:i])) for i in range(len(parts), 0, -1))


def parse_gitignore(text: str) -> list[IgnoreRule]:
    rules = []
    for raw in text.splitlines():
        line = raw.rstrip()
        if not line or line.startswith("#"):
            continue
        negated = line.startswith("!")
        if negated:
            line = line[1:]
        dir_only = line.endswith("/")
        line = line.rstrip("/")
        if not line:
            continue
        anchored = "/" in line
        line = line.lstrip("/")
        body = _glob_to_regex(line)
        regex = re.compile(("^" if anchored else r"^(?:.*/)?") + body + "$")
        rules.append(IgnoreRule(regex, negated, dir_only))
    return rules


def _ignored(rel: str, is_dir: bool, stack: list[tuple[str, list[IgnoreRule]]]) -> bool:
    verdict = False
    for base, rules in stack:
        if base and not rel.startswith(base + "/"):
            continue
        sub = rel[len(base) + 1:] if base else rel
        for rule in rules:
            if rule.dir_only and not is_dir:
                continue
            if rule.regex.match(sub):
                verdict = not rule.negated
    return verdict


def _read_gitignore(directory: str) -> list[IgnoreRule]:
    try:
        with open(os.path.join(directory, ".gitignore"), encoding="utf-8", errors="replace") as fh:
            return parse_gitignore(fh.read())
    except OSError:
        return []


def discover(paths: list[str], excludes: tuple[str, ...] = (), includes: tuple[str, ...] = (),
             root: str | None = None, only: set[str] | None = None) -> tuple[list[str], list[tuple[str, str]]]:
    """Return (files to check, [(path, problem)]) for the given paths, in a deterministic order.

    ``excludes``/``includes`` are globs: matched as given (and against the base name, as on the command
    line) and, relative to ``root``, as project globs. ``only`` (absolute paths) keeps just those files.
    """
    files: list[str] = []
    problems: list[tuple[str, str]] = []
    seen: set[str] = set()
    base = os.path.abspath(root or os.getcwd())

    def rel(path: str) -> str:
        return os.path.relpath(os.path.abspath(path), base).replace(os.sep, "/")

    def matches(path: str, patterns: tuple[str, ...]) -> bool:
        norm = path.replace(os.sep, "/")
        return any(fnmatch.fnmatch(norm, pat) or fnmatch.fnmatch(os.path.basename(norm), pat)
                   or glob_match(pat, rel(path)) for pat in patterns)

    def excluded(path: str) -> bool:
        return matches(path, excludes)

    def add(path: str) -> None:
        key = os.path.normpath(path)
        if key in seen or (includes and not matches(path, includes)):
            return
        if only is not None and os.path.abspath(path) not in only:
            return
        seen.add(key)
        files.append(path)

    for given in paths:
        if os.path.isfile(given):
            if not excluded(given):
                add(given)
            continue
        if not os.path.isdir(given):
            problems.append((given, "no such file or directory"))
            continue
        stack: list[tuple[str, list[IgnoreRule]]] = []
        _walk(given, "", stack, add, excluded, problems)
    return files, problems


class ChangedFilesError(Exception):
    pass


# A revision as people write them (sha, branch, tag, HEAD~2, origin/main, main@{upstream}); never an
# option: it may not start with "-".
_REVISION = re.compile(r"^(?!-)[A-Za-z0-9._/~^@{}-]{1,200}$")


def changed_files(revision: str, cwd: str | None = None) -> set[str]:
    """Absolute paths of files that differ from ``revision`` in the work tree (committed or not),
    plus untracked files git does not ignore. Deleted files are not listed."""
    if not _REVISION.match(revision) or ".." in revision:
        raise ChangedFilesError(f"{revision!r} is not a revision name (a commit, branch or tag such as "
                                f"HEAD~1, origin/main or a commit id)")

    def git(*args: str) -> str:
        try:
            proc = subprocess.run(["git", *args], cwd=cwd, capture_output=True, text=True, timeout=60)
        except (OSError, subprocess.TimeoutExpired) as exc:
            raise ChangedFilesError(f"cannot run git: {exc}")
        if proc.returncode != 0:
            raise ChangedFilesError(proc.stderr.strip() or f"git {args[0]} failed")
        return proc.stdout

    top = git("rev-parse", "--show-toplevel").strip()
    try:
        git("rev-parse", "--verify", "--quiet", "--end-of-options", revision + "^{commit}")
    except ChangedFilesError:
        raise ChangedFilesError(f"unknown revision {revision!r} in the repository at {top}")
    names = git("diff", "--name-only", "-z", "--diff-filter=ACMRT", revision, "--").split("\0")
    names += git("ls-files", "-z", "--others", "--exclude-standard").split("\0")
    return {os.path.abspath(os.path.join(top, n)) for n in names if n}


def _walk(root, rel_dir, stack, add, excluded, problems) -> None:
    directory = os.path.join(root, rel_dir) if rel_dir else root
    own = _read_gitignore(directory)
    if own:
        stack = stack + [(rel_dir, own)]
    try:
        entries = sorted(os.scandir(directory), key=lambda e: e.name)
    except OSError as exc:
        problems.append((directory, f"cannot list directory: {exc.strerror or exc}"))
        return
    for entry in entries:
        rel = f"{rel_dir}/{entry.name}" if rel_dir else entry.name
        path = os.path.join(root, rel)
        try:
            is_dir = entry.is_dir(follow_symlinks=False)
        except OSError:
            continue
        try:
            is_file = entry.is_file()
            linked_dir = not is_file and entry.is_dir()
        except OSError:  # a symbolic link loop: listed, so that the engine reports it
            is_file = linked_dir = False
        if is_dir:
            if entry.name in ALWAYS_SKIPPED_DIRS or _ignored(rel, True, stack) or excluded(path):
                continue
            _walk(root, rel, stack, add, excluded, problems)
        elif not linked_dir and entry.name.endswith(SUFFIXES):  # files, and what only looks like one
            if _ignored(rel, False, stack) or excluded(path):
                continue
            add(path)
