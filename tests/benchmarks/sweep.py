"""Corpus sweep: run optlint over a directory and report what a robustness review needs.

    python tests/benchmarks/sweep.py DIR [--force [--dialect NAME]] [--isolate] [--sample N [--max-bytes N]]
                                         [--jobs N] [--exclude GLOB] [--json OUT]

prints the number of files (checked / skipped by the prefilter), findings by rule, every crash
(an ``internal-error`` finding, an exception out of the engine, or a worker process that died),
the slowest files with their times, and the total time. ``--force`` sends every file through the
decoder, the parser and every recogniser even when it imports no modelling library, so that a
corpus such as the standard library really exercises them (``--dialect NAME``, repeatable: only
those recognisers; the parser and the shared interpreter run either way). ``--sample N`` checks a deterministic
sample (the N files whose relative paths hash lowest; ``--max-bytes N``: among files of at most
N bytes). ``--isolate`` analyses each file alone (a numbered copy in an empty folder), so that
no sibling module is read: in place, a small file that calls into big neighbours costs the
reading of them (antigravity.py calls into webbrowser.py). Exit status: 0 without crashes, 1 with.
The full standard-library sweep (a long run, not a test; each file alone, every recogniser):

    python tests/benchmarks/sweep.py --force --isolate --exclude site-packages \
        "$(python -c 'import sysconfig; print(sysconfig.get_paths()["stdlib"])')"

Without ``--isolate`` (files in place, sibling helpers read) it takes hours; ``--dialect dsl``
runs one recogniser instead of all.

A script, like bench.py: its numbers never gate CI; tests/robust/test_sweep.py runs it on a
200-file sample and requires zero crashes.
"""

from __future__ import annotations

import argparse
import hashlib
import json
import os
import shutil
import sys
import tempfile
import time
from collections import Counter
from concurrent.futures import ProcessPoolExecutor, as_completed
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass, field


@dataclass
class Outcome:
    path: str
    seconds: float
    checked: bool
    rules: dict[str, int] = field(default_factory=dict)
    crash: str | None = None  # what went wrong inside optlint, if anything


def _init(force: bool, dialects: tuple[str, ...] = ()) -> None:
    if force:
        from optlint import engine
        from optlint.dialects import DIALECT_MODULES

        chosen = tuple(dialects) or tuple(DIALECT_MODULES)
        engine.scan_dialects = lambda path, data: chosen  # the prefilter's answer, overruled


def _one(path: str) -> Outcome:
    from optlint.engine import check_file

    start = time.perf_counter()
    try:
        result = check_file(path)
    except BaseException as exc:  # the engine promises never to raise: that promise is under test
        return Outcome(path, time.perf_counter() - start, True, crash=f"{type(exc).__name__} out of the engine: {exc}")
    elapsed = time.perf_counter() - start
    rules = Counter(f.rule for f in result.findings)
    crashes = [f.message for f in result.findings if f.rule == "internal-error"]
    return Outcome(path, elapsed, result.checked, dict(rules), "; ".join(crashes) or None)


def sample(files: list[str], root: str, n: int | None) -> list[str]:
    if n is None or n >= len(files):
        return files
    key = {f: hashlib.sha256(os.path.relpath(f, root).replace(os.sep, "/").encode()).hexdigest() for f in files}
    return sorted(sorted(files, key=key.__getitem__)[:n])


def sweep(root: str, force: bool = False, jobs: int = 1, n: int | None = None,
          exclude: tuple[str, ...] = (), dialects: tuple[str, ...] = (), max_bytes: int | None = None,
          isolate: bool = False) -> dict:
    from optlint.discover import discover

    start = time.perf_counter()
    files, problems = discover([root], exclude)
    if max_bytes is not None:
        files = [f for f in files if os.path.getsize(f) <= max_bytes]
    files = sample(files, root, n)
    if isolate:
        with tempfile.TemporaryDirectory(prefix="optlint-sweep-") as alone:
            copies = {}
            for i, path in enumerate(files):
                copy = os.path.join(alone, f"f{i:05d}_{os.path.basename(path)}")
                shutil.copyfile(path, copy)
                copies[copy] = path
            report = sweep(alone, force, jobs, None, (), dialects)
        for key in ("crashes", "slowest"):
            for item in report[key]:
                item["path"] = copies.get(item["path"], item["path"])
        report.update(root=root, isolated=True, total_seconds=round(time.perf_counter() - start, 1))
        return report
    outcomes: dict[str, Outcome] = {}
    if jobs <= 1:
        from optlint import engine

        original = engine.scan_dialects
        _init(force, dialects)
        try:
            for path in files:
                outcomes[path] = _one(path)
        finally:
            engine.scan_dialects = original
    else:
        _pool_run(files, (force, dialects), jobs, outcomes)
    total = time.perf_counter() - start
    rules: Counter = Counter()
    for o in outcomes.values():
        rules.update(o.rules)
    ordered = [outcomes[p] for p in files]
    return {
        "root": root, "forced": force and (list(dialects) or "all dialects"), "files": len(files),
        "checked": sum(o.checked for o in ordered), "skipped": sum(not o.checked for o in ordered),
        "findings_by_rule": dict(sorted(rules.items())),
        "crashes": [{"path": o.path, "what": o.crash} for o in ordered if o.crash],
        "slowest": [{"path": o.path, "seconds": round(o.seconds, 3)}
                    for o in sorted(ordered, key=lambda o: -o.seconds)[:10]],
        "discovery_problems": [list(p) for p in problems],
        "total_seconds": round(total, 1),
    }


def _pool_run(files, init, jobs, outcomes) -> None:
    """Worker processes; when one dies (a crash in native code), the files it left unfinished are
    run again one process each, so the file that kills a worker is named."""
    with ProcessPoolExecutor(max_workers=jobs, initializer=_init, initargs=init) as pool:
        futures = {pool.submit(_one, p): p for p in files}
        broken = []
        for fut in as_completed(futures):
            try:
                outcomes[futures[fut]] = fut.result()
            except BrokenProcessPool:
                broken.append(futures[fut])
    for path in sorted(broken):
        with ProcessPoolExecutor(max_workers=1, initializer=_init, initargs=init) as alone:
            try:
                outcomes[path] = alone.submit(_one, path).result()
            except BrokenProcessPool:
                outcomes[path] = Outcome(path, 0.0, True, crash="the worker process died (native crash)")


def render(report: dict) -> str:
    forced = f" (forced through the parser: {report['forced']})" if report["forced"] else ""
    lines = [f"optlint sweep of {report['root']}{forced}",
             f"files: {report['files']} (checked {report['checked']}, skipped by the prefilter {report['skipped']})",
             "findings by rule:"]
    lines += [f"  {rule}: {n}" for rule, n in report["findings_by_rule"].items()] or ["  none"]
    lines.append(f"crashes: {len(report['crashes'])}")
    lines += [f"  {c['path']}: {c['what']}" for c in report["crashes"]]
    lines.append("slowest files:")
    lines += [f"  {s['seconds']:8.3f} s  {s['path']}" for s in report["slowest"]]
    if report["discovery_problems"]:
        lines.append(f"paths that could not be listed: {len(report['discovery_problems'])}")
    lines.append(f"total time: {report['total_seconds']} s")
    return "\n".join(lines) + "\n"


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Run optlint over a directory and report crashes and timings.")
    parser.add_argument("root", metavar="DIR")
    parser.add_argument("--force", action="store_true",
                        help="parse and recognise every file, even without a modelling import")
    parser.add_argument("--dialect", action="append", default=[], metavar="NAME",
                        help="with --force: only these recognisers (default: all)")
    parser.add_argument("--sample", type=int, default=None, metavar="N", help="a deterministic sample of N files")
    parser.add_argument("--jobs", "-j", type=int, default=os.cpu_count() or 1, metavar="N")
    parser.add_argument("--exclude", action="append", default=[], metavar="GLOB")
    parser.add_argument("--max-bytes", type=int, default=None, metavar="N", help="only files of at most N bytes")
    parser.add_argument("--isolate", action="store_true",
                        help="analyse each file alone (a numbered copy in an empty folder): no sibling modules read")
    parser.add_argument("--json", metavar="OUT", help="also write the report as JSON")
    args = parser.parse_args(argv)
    report = sweep(args.root, args.force, args.jobs, args.sample, tuple(args.exclude), tuple(args.dialect),
                   args.max_bytes, args.isolate)
    sys.stdout.write(render(report))
    if args.json:
        with open(args.json, "w", encoding="utf-8") as fh:
            json.dump(report, fh, indent=2)
    return 1 if report["crashes"] else 0


if __name__ == "__main__":
    sys.exit(main())
