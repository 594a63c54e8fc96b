"""Where optlint's time goes on the benchmark's model tree: cProfile, in one process, by stage.

    python tests/benchmarks/where_time_goes.py [--top 25] [--out profile.pstats]

Builds the same tree as bench.py (the fixtures replicated to >= 300 files plus generated 500-line
models), checks it with one worker under cProfile (the per-file deep-stack thread is bypassed so
that the profiler sees inside), and prints the cumulative seconds of each stage and the functions
with the most time of their own. Profiled times are about twice the real ones; read the shares.
A script, not a test.
"""

from __future__ import annotations

import argparse
import cProfile
import io
import pstats
import sys
import tempfile
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
import bench  # noqa: E402  (the tree builder)

STAGES = [  # (label, file suffix, function name): the outermost call of each stage
    ("whole run", "optlint/runner.py", "run"),
    ("libcst parse (the floor)", "libcst/_parser/entrypoints.py", "parse_module"),
    ("nesting check (CPython ast)", "optlint/nesting.py", "checked_parse"),
    ("recognisers (interpreter)", "optlint/dialects/registry.py", "run_dialect"),
    ("  placing nodes", "optlint/positions.py", "within"),
    ("lagrangian recogniser", "optlint/dialects/lagrangian.py", "recognise"),
    ("rules", "optlint/engine.py", "_run_rules"),
    ("  witness search", "optlint/evidence/witness.py", "for_judgement"),
    ("  second-order proofs", "optlint/evidence/second_order.py", "prove_convex"),
    ("  calculus", "optlint/calculus/analysis.py", "analyse"),
    ("policy (acceptances, fingerprints)", "optlint/policy.py", "apply"),
]


def main(argv=None) -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("--top", type=int, default=25)
    ap.add_argument("--out", default=None, help="also write the raw profile (pstats format)")
    args = ap.parse_args(argv)

    import optlint.nesting
    from optlint.cli import main as cli

    optlint.nesting.deep_call = lambda fn, *a: fn(*a)  # profile inside the per-file thread
    with tempfile.TemporaryDirectory() as tmp:
        tree = Path(tmp) / "models"
        files = bench.build_model_tree(tree)
        profile = cProfile.Profile()
        profile.enable()
        try:
            cli(["check", str(tree), "--no-cache", "--jobs", "1", "--quiet", "--no-config"])
        except SystemExit:
            pass
        profile.disable()
    stats = pstats.Stats(profile)
    if args.out:
        stats.dump_stats(args.out)
    print(f"{len(files)} model files, cProfile (profiled seconds, cumulative)")
    total = None
    for label, suffix, name in STAGES:
        seconds = max((v[3] for k, v in stats.stats.items() if k[0].endswith(suffix) and k[2] == name), default=0.0)
        total = total or seconds
        print(f"  {label:<38} {seconds:8.2f} s  {100 * seconds / total:5.1f} %")
    out = io.StringIO()
    pstats.Stats(profile, stream=out).sort_stats("tottime").print_stats(args.top)
    print("\nfunctions with the most time of their own:")
    print(out.getvalue().split("\n", 6)[-1] if "ncalls" in out.getvalue() else out.getvalue())
    return 0


if __name__ == "__main__":
    sys.exit(main())
