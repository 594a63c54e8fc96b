"""Mutant scan: every mutant of the fixtures timed one by one, hangs included (a long run, not a test).

    python tests/robust/scan_mutants.py [--start 0] [--stop 2000] [--jobs 2] [--budget 15] [--limit 120]
                                        [--json OUT] [--save DIR]

Mutant k is the one ``tests/robust/test_fuzz.py`` checks as its k-th (the same seeded Mutator over
the same sorted fixture list), so a number printed here reproduces there. The fuzz test stops at
the first mutant that fails; this scan goes on and reports them all: mutants run, not printable
(splices libcst refuses to print), crashes (an ``internal-error`` finding or an exception out of the
engine), mutants over ``--budget`` seconds, the slowest ten, and the total time. A mutant still
running after ``--limit`` seconds is reported as hung and its worker process replaced, so one
hang does not stop the scan. ``--save DIR`` writes the mutants that crashed, exceeded the budget or
hung as files, for a hostile test. Exit status: 0 when nothing crashed, hung or exceeded the budget.

Times are wall-clock: run it on a quiet machine, with at most one job per core.
"""

from __future__ import annotations

import argparse
import json
import multiprocessing as mp
import os
import queue
import sys
import threading
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent


def _mutant(modules, files, k):
    from test_fuzz import mutant

    path, text, _ = mutant(modules, files, k)
    return path, text


def _worker(ks, results, limit):
    sys.path[:0] = [str(HERE), str(HERE.parent)]
    import libcst as cst
    from test_fuzz import PREFIX, _fixtures

    from optlint.engine import check_data

    modules = _fixtures()
    files = list(modules)
    check_data("warm.py", (PREFIX + "x = cp.Variable(2)\nprob = cp.Problem(cp.Minimize(cp.sum(x)))\n").encode())
    for k in ks:
        try:
            path, text = _mutant(modules, files, k)
        except (cst.ParserSyntaxError, ValueError):
            results.put({"k": k, "unprintable": True})
            continue
        box: dict = {}

        def run():
            try:
                r = check_data(str(path), text.encode("utf-8", "surrogatepass"))
                box["crash"] = "; ".join(f.message for f in r.findings if f.rule == "internal-error") or None
            except BaseException as exc:  # the engine promises never to raise
                box["crash"] = f"{type(exc).__name__} out of the engine: {exc}"

        start = time.perf_counter()
        thread = threading.Thread(target=run, daemon=True)
        thread.start()
        thread.join(limit)
        seconds = time.perf_counter() - start
        out = {"k": k, "file": path.name, "seconds": round(seconds, 2), "crash": box.get("crash")}
        if thread.is_alive():
            out["hung"] = True
            results.put(out)
            os._exit(0)  # the analysis cannot be stopped from outside its thread: drop the process
        results.put(out)


def scan(start: int, stop: int, jobs: int, limit: float) -> list[dict]:
    ctx = mp.get_context("spawn")
    results = ctx.Queue()
    todo = [list(range(start + j, stop, jobs)) for j in range(jobs)]
    done: dict[int, dict] = {}
    workers: list = [None] * jobs

    def launch(j):
        rest = [k for k in todo[j] if k not in done]
        if rest:
            workers[j] = ctx.Process(target=_worker, args=(rest, results, limit), daemon=True)
            workers[j].start()
        else:
            workers[j] = None

    for j in range(jobs):
        launch(j)
    while any(w is not None for w in workers):
        try:
            item = results.get(timeout=1.0)
            done[item["k"]] = item
            continue
        except queue.Empty:
            pass
        for j, w in enumerate(workers):
            if w is not None and not w.is_alive():
                w.join()
                while True:  # results it sent before it ended
                    try:
                        item = results.get(timeout=0.5)
                        done[item["k"]] = item
                    except queue.Empty:
                        break
                launch(j)
    return [done[k] for k in sorted(done)]


def report(rows: list[dict], budget: float, seconds: float) -> dict:
    timed = [r for r in rows if not r.get("unprintable")]
    return {
        "mutants": len(rows), "not_printable": len(rows) - len(timed),
        "crashes": [r for r in timed if r.get("crash")],
        "hung": [r for r in timed if r.get("hung")],
        "over_budget": [r for r in timed if r["seconds"] >= budget and not r.get("hung")],
        "slowest": sorted(timed, key=lambda r: -r["seconds"])[:10],
        "budget_seconds": budget, "total_seconds": round(seconds, 1),
    }


def render(rep: dict) -> str:
    lines = [f"mutants: {rep['mutants']} (not printable {rep['not_printable']})",
             f"crashes: {len(rep['crashes'])}"]
    lines += [f"  mutant {r['k']} ({r['file']}): {r['crash']}" for r in rep["crashes"]]
    lines.append(f"hung (still running at the limit): {len(rep['hung'])}")
    lines += [f"  mutant {r['k']} ({r['file']})" for r in rep["hung"]]
    lines.append(f"over the {rep['budget_seconds']:g} s budget: {len(rep['over_budget'])}")
    lines += [f"  mutant {r['k']} ({r['file']}): {r['seconds']} s" for r in rep["over_budget"]]
    lines.append("slowest mutants:")
    lines += [f"  {r['seconds']:8.2f} s  mutant {r['k']} ({r['file']})" for r in rep["slowest"]]
    lines.append(f"total time: {rep['total_seconds']} s")
    return "\n".join(lines) + "\n"


def save(rep: dict, folder: str) -> None:
    sys.path[:0] = [str(HERE), str(HERE.parent)]
    from test_fuzz import _fixtures

    modules = _fixtures()
    files = list(modules)
    os.makedirs(folder, exist_ok=True)
    for r in rep["crashes"] + rep["hung"] + rep["over_budget"]:
        path, text = _mutant(modules, files, r["k"])
        Path(folder, f"mutant_{r['k']}_{path.name}").write_text(text, encoding="utf-8")


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Time every mutant of the fixtures; report crashes, hangs, slow ones.")
    parser.add_argument("--start", type=int, default=0)
    parser.add_argument("--stop", type=int, default=2000)
    parser.add_argument("--jobs", "-j", type=int, default=os.cpu_count() or 1)
    parser.add_argument("--budget", type=float, default=15.0, help="seconds per mutant (the fuzz test's budget)")
    parser.add_argument("--limit", type=float, default=120.0, help="seconds after which a mutant counts as hung")
    parser.add_argument("--json", metavar="OUT")
    parser.add_argument("--save", metavar="DIR", help="write the failing mutants here")
    args = parser.parse_args(argv)
    began = time.perf_counter()
    rows = scan(args.start, args.stop, max(1, args.jobs), args.limit)
    rep = report(rows, args.budget, time.perf_counter() - began)
    sys.stdout.write(render(rep))
    if args.json:
        Path(args.json).write_text(json.dumps(rep, indent=2), encoding="utf-8")
    if args.save:
        save(rep, args.save)
    return 1 if rep["crashes"] or rep["hung"] or rep["over_budget"] else 0


if __name__ == "__main__":
    sys.exit(main())
