"""optlint's speed benchmark: figures as ratios against floors measured in the same run.

Run from the repository root (it is a script, not a test):

    python -m pip install -e ".[bench]" && python tests/benchmarks/bench.py [--repeat 3] [--out bench.json]

Figures (medians of --repeat runs, each a fresh process as a user would start it):
 1. a tree with no models (the running interpreter's standard library): optlint vs pyflakes on the
    same tree, and vs a plain read of the files;
 2. a tree of model files (the fixtures replicated to >= 300 files plus generated 500-line models):
    optlint with one worker vs the floor, a plain ``libcst.parse_module`` of the same files;
 3. the same tree with two workers vs one;
 4. one 200-line model file, whole process, cold; and ``optlint --version``;
 5. a warm re-run (result cache) on the unchanged model tree vs the cold run;
 6. peak resident memory of the one-worker model-tree run.
Each figure prints one line; all are written to the JSON file for comparison across commits.
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import statistics
import subprocess
import sys
import sysconfig
import tempfile
import textwrap
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
FIXTURES = ROOT / "fixtures"


def timed(cmd: list[str], cwd: Path, repeat: int, env: dict | None = None) -> float:
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        subprocess.run(cmd, cwd=str(cwd), stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                       env=env, check=False)
        times.append(time.perf_counter() - t)
    return statistics.median(times)


def peak_rss_mb(cmd: list[str], cwd: Path) -> float:
    probe = ("import resource, subprocess, sys; subprocess.run(sys.argv[1:], stdout=subprocess.DEVNULL, "
             "stderr=subprocess.DEVNULL); print(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)")
    out = subprocess.run([sys.executable, "-c", probe, *cmd], cwd=str(cwd), capture_output=True, text=True)
    return int(out.stdout.strip() or 0) / 1024.0


def generated_model(index: int, lines: int = 500) -> str:
    """A long, realistic-shaped DSL model: many statements, loops, helper calls (invented plant)."""
    body = [f'"""Generated benchmark model {index}: a multi-unit steam plant dispatch (synthetic)."""',
            "import numpy as np", "import cvxpy as cp", "", "T = 24", "UNITS = 6", "",
            "def ramp_cost(p, r):", "    return r * cp.sum_squares(cp.diff(p))", "", "",
            "def build(load, price, gamma=0.5):",
            "    p = cp.Variable((UNITS, T), nonneg=True)",
            "    s = cp.Variable(T, nonneg=True)",
            "    cons = []", "    cost = 0"]
    k = 0
    while len(body) < lines - 6:
        u = k % 6
        body += [f"    cost = cost + {1 + k % 7}.0 * cp.sum(p[{u}, :]) + ramp_cost(p[{u}, :], {0.1 + k % 3})",
                 f"    cons.append(p[{u}, :] <= {50 + k % 40}.0)",
                 f"    cons += [cp.abs(cp.diff(p[{u}, :])) <= {5 + k % 9}.0]",
                 f"    for t in range(T):",
                 f"        cons.append(cp.sum(p[:, t]) + s[t] >= load[t] - {k % 5}.0)"]
        k += 1
    body += ["    cost = cost + gamma * cp.sum_squares(s)",
             "    return cp.Problem(cp.Minimize(cost), cons)", ""]
    return "\n".join(body) + "\n"


def build_model_tree(target: Path, minimum: int = 300) -> list[Path]:
    sources = sorted(p for p in FIXTURES.rglob("*.py") if "broken" not in p.name)
    files: list[Path] = []
    copy = 0
    while len(files) < minimum:
        for src in sources:
            dest = target / f"copy{copy:02d}" / src.relative_to(FIXTURES)
            dest.parent.mkdir(parents=True, exist_ok=True)
            shutil.copyfile(src, dest)
            files.append(dest)
        copy += 1
    for i in range(4):
        dest = target / "generated" / f"plant_{i}.py"
        dest.parent.mkdir(parents=True, exist_ok=True)
        dest.write_text(generated_model(i))
        files.append(dest)
    return files


FLOOR_PARSE = textwrap.dedent("""
    import sys, libcst
    for path in sys.argv[1:]:
        with open(path, "rb") as fh:
            libcst.parse_module(fh.read())
""")
FLOOR_READ = textwrap.dedent("""
    import os, sys
    for top in sys.argv[1:]:
        if top.endswith(".py"):
            open(top, "rb").read()
            continue
        for d, _, names in os.walk(top):
            for n in names:
                if n.endswith(".py"):
                    with open(os.path.join(d, n), "rb") as fh:
                        fh.read()
""")


def main(argv=None) -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--out", default=str(ROOT / "bench.json"))
    args = ap.parse_args(argv)
    py = sys.executable
    optlint = [py, "-m", "optlint"]
    env = dict(os.environ, NO_COLOR="1")
    figures: dict[str, float] = {}

    def report(name: str, value: float, unit: str, ratio: float | None = None, floor: str = "") -> None:
        figures[name] = round(value, 4)
        line = f"{name:<40} {value:10.3f} {unit}"
        if ratio is not None:
            figures[name + "_ratio"] = round(ratio, 4)
            line += f"   ratio {ratio:6.3f} vs {floor}"
        print(line, flush=True)

    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        stdlib = Path(sysconfig.get_paths()["stdlib"])
        # The standard library proper: the installed third-party packages beside it are not part of it.
        parts = [str(p) for p in sorted(stdlib.iterdir())
                 if p.name not in ("site-packages", "dist-packages") and (p.is_dir() or p.suffix == ".py")]
        n_std = sum(1 for p in parts for _ in (Path(p).rglob("*.py") if Path(p).is_dir() else [p]))
        opt_cmd = optlint + ["check", *parts, "--no-cache", "--jobs", "1", "--quiet", "--no-config"]
        t_opt = timed(opt_cmd, tmp, args.repeat, env)
        t_read = timed([py, "-c", FLOOR_READ, *parts], tmp, args.repeat, env)
        print(f"standard library: {n_std} .py files under {stdlib}", flush=True)
        try:
            import pyflakes  # noqa: F401
            t_flakes = timed([py, "-m", "pyflakes", *parts], tmp, args.repeat, env)
        except ImportError:
            t_flakes = float("nan")
            print("pyflakes is not installed: pip install -e '.[bench]'", file=sys.stderr)
        report("stdlib: optlint", t_opt, "s", t_opt / t_flakes, "pyflakes")
        report("stdlib: pyflakes", t_flakes, "s")
        report("stdlib: plain read", t_read, "s")
        report("stdlib: optlint vs read", t_opt, "s", t_opt / t_read, "plain read")

        tree = tmp / "models"
        files = build_model_tree(tree)
        listing = [str(f) for f in files]
        t_floor = timed([py, "-c", FLOOR_PARSE, *listing], tmp, args.repeat, env)
        one = optlint + ["check", str(tree), "--no-cache", "--jobs", "1", "--quiet", "--no-config"]
        two = optlint + ["check", str(tree), "--no-cache", "--jobs", "2", "--quiet", "--no-config"]
        t_one = timed(one, tmp, args.repeat, env)
        t_two = timed(two, tmp, args.repeat, env)
        report(f"models ({len(files)} files): parse floor", t_floor, "s")
        report("models: optlint, 1 worker", t_one, "s", t_one / t_floor, "libcst parse floor")
        report("models: optlint, 2 workers", t_two, "s", t_two / t_one, "1 worker")

        single = tmp / "single" / "plant.py"
        single.parent.mkdir()
        single.write_text(generated_model(99, lines=200))
        t_single = timed(optlint + ["check", str(single), "--no-cache", "--quiet", "--no-config"], tmp,
                         args.repeat, env)
        t_version = timed(optlint + ["--version"], tmp, args.repeat, env)
        report("one 200-line model, whole process", t_single, "s")
        report("optlint --version", t_version, "s")

        cached = optlint + ["check", str(tree), "--jobs", "1", "--quiet", "--no-config"]
        shutil.rmtree(tmp / ".optlint_cache", ignore_errors=True)
        cold = timed(cached, tmp, 1, env)
        warm = timed(cached, tmp, args.repeat, env)
        report("models: cold run with cache", cold, "s")
        report("models: warm re-run", warm, "s", warm / cold, "cold run")

        report("models: peak RSS, 1 worker", peak_rss_mb(one, tmp), "MB")

    Path(args.out).write_text(json.dumps(figures, indent=2) + "\n")
    print(f"figures written to {args.out}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
