"""The runner: worker processes give the same output as one, and the result cache is never stale.

Cache correctness (an entry must be invalidated by an edit, a configuration change, a new optlint
version; a corrupted entry is ignored and rewritten; concurrent runs do not corrupt it) is common
practice for content-addressed caches; each property is checked directly here.
"""

from __future__ import annotations

import json
import shutil
import subprocess
import sys
from pathlib import Path

from conftest import FIXTURES, run_cli
from optlint import runner
from optlint.engine import Options


def _tree(tmp_path: Path) -> Path:
    tree = tmp_path / "models"
    shutil.copytree(FIXTURES / "dsl", tree / "dsl")
    shutil.copytree(FIXTURES / "tour", tree / "tour")
    return tree


def test_two_workers_give_byte_identical_output(tmp_path):
    tree = _tree(tmp_path)
    for fmt in ("json", "text"):
        one = run_cli("check", "--format", fmt, "--jobs", "1", "--no-cache", str(tree), cwd=tmp_path)
        two = run_cli("check", "--format", fmt, "--jobs", "2", "--no-cache", str(tree), cwd=tmp_path)
        assert one.returncode == two.returncode == 1
        assert one.stdout == two.stdout and one.stdout


def _files(tree: Path) -> list[str]:
    return sorted(str(p) for p in tree.rglob("*.py"))


def test_cache_hits_and_invalidation(tmp_path, monkeypatch):
    tree = _tree(tmp_path)
    files = _files(tree)
    options = Options()
    cache = runner.Cache(str(tmp_path), options)
    cold = runner.run(files, options, 1, cache)
    assert cache.hits == 0
    assert (tmp_path / ".optlint_cache" / ".gitignore").read_text().strip().endswith("*")

    cache = runner.Cache(str(tmp_path), options)
    warm = runner.run(files, options, 1, cache)
    assert cache.hits == len(files)
    assert [f.to_json() for r in warm for f in r.findings] == [f.to_json() for r in cold for f in r.findings]

    # an edit invalidates that file only
    target = tree / "tour" / "pumps" / "schedule.py"
    target.write_text(target.read_text().replace("cp.square(flow[p, t])", "flow[p, t]"))
    cache = runner.Cache(str(tmp_path), options)
    edited = runner.run(files, options, 1, cache)
    assert cache.hits == len(files) - 1
    by_path = {r.path: r for r in edited}
    assert [f.rule for f in by_path[str(target)].findings] == []

    # a configuration change invalidates everything
    cache = runner.Cache(str(tmp_path), Options(severities={"strict-inequality": "off"}))
    runner.run(files, Options(severities={"strict-inequality": "off"}), 1, cache)
    assert cache.hits == 0

    # so does a new optlint version
    monkeypatch.setattr(runner, "__version__", "999.0")
    cache = runner.Cache(str(tmp_path), options)
    runner.run(files, options, 1, cache)
    assert cache.hits == 0


def test_corrupted_entry_is_ignored_and_rewritten(tmp_path):
    tree = _tree(tmp_path)
    files = _files(tree)
    options = Options()
    first = runner.run(files, options, 1, runner.Cache(str(tmp_path), options))
    entries = sorted((tmp_path / ".optlint_cache").rglob("*.json"))
    assert entries
    for e in entries:
        e.write_text("{not json")
    cache = runner.Cache(str(tmp_path), options)
    again = runner.run(files, options, 1, cache)
    assert cache.hits == 0
    assert [f.to_json() for r in again for f in r.findings] == [f.to_json() for r in first for f in r.findings]
    for e in sorted((tmp_path / ".optlint_cache").rglob("*.json")):
        json.loads(e.read_text())


def test_concurrent_runs_do_not_corrupt_the_cache(tmp_path):
    tree = _tree(tmp_path)
    cmd = [sys.executable, "-m", "optlint", "check", "--format", "json", "--jobs", "1", str(tree)]
    procs = [subprocess.Popen(cmd, cwd=str(tmp_path), stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
             for _ in range(3)]
    outs = [p.communicate(timeout=300)[0] for p in procs]
    assert len(set(outs)) == 1 and json.loads(outs[0])["findings"]
    for e in (tmp_path / ".optlint_cache").rglob("*.json"):
        json.loads(e.read_text())
    assert not list((tmp_path / ".optlint_cache").rglob(".tmp-*"))
    warm = run_cli("check", "--format", "json", "--jobs", "1", str(tree), cwd=tmp_path)
    assert warm.stdout == outs[0]


def test_no_cache_writes_nothing(tmp_path):
    tree = _tree(tmp_path)
    run_cli("check", "--no-cache", str(tree), cwd=tmp_path)
    assert not (tmp_path / ".optlint_cache").exists()


def test_rule_modules_import_without_sympy():
    """Listing the rules (config validation, cache keys, warm runs) must not import sympy."""
    code = "import sys; from optlint.rules import all_rules; all_rules(); print('sympy' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert out.stdout.strip() == "False", out.stderr


def test_a_changed_sibling_helper_invalidates_the_cached_result(tmp_path):
    """A loss helper in a module that imports no modelling library is read for the model's sake: the
    cached result of the model file must not outlive an edit of that helper."""
    (tmp_path / "losses_lib.py").write_text("def robust(r):\n    return r ** 2\n")
    model = tmp_path / "fit.py"
    model.write_text("import numpy as np\nfrom scipy.optimize import minimize\nfrom losses_lib import robust\n\n"
                     "res = minimize(lambda w: np.sum(robust(w - 1.0)), np.zeros(3))\n")
    options = Options()
    first = runner.run([str(model)], options, 1, runner.Cache(str(tmp_path), options))
    assert first[0].findings == [] and first[0].dependencies
    (tmp_path / "losses_lib.py").write_text("def robust(r):\n    return np.minimum(r ** 2, 1.0)\n"
                                            "import numpy as np\n")
    cache = runner.Cache(str(tmp_path), options)
    second = runner.run([str(model)], options, 1, cache)
    assert cache.hits == 0
    assert [f.rule for f in second[0].findings] in (["nonconvex-penalty"], ["nonconvex-objective"])


def test_a_planted_or_foreign_entry_is_not_trusted(tmp_path):
    """A clean result written into the cache by hand (or committed to the repository), or signed on
    another machine, must not hide the findings of the file it claims to describe."""
    tree = _tree(tmp_path)
    files = _files(tree)
    options = Options()
    first = runner.run(files, options, 1, runner.Cache(str(tmp_path), options))
    expected = [f.to_json() for r in first for f in r.findings]
    assert expected
    forged = 0
    for e in sorted((tmp_path / ".optlint_cache").rglob("*.json")):  # findings removed, signature kept
        entry = json.loads(e.read_text())
        if entry["result"]["findings"]:
            entry["result"]["findings"] = []
            e.write_text(json.dumps(entry))
            forged += 1
    assert forged
    cache = runner.Cache(str(tmp_path), options)
    again = runner.run(files, options, 1, cache)
    assert cache.hits == len(files) - forged and [f.to_json() for r in again for f in r.findings] == expected

    own_key = runner.signing_key()
    try:  # entries signed with another machine's key, findings removed
        runner._KEY = b"another machine's key, 32 bytes!"
        for e in sorted((tmp_path / ".optlint_cache").rglob("*.json")):
            entry = json.loads(e.read_text())
            body = {"result": dict(entry["result"], findings=[]), "dependencies": entry["dependencies"]}
            e.write_text(json.dumps({**body, "signature": runner._sign(body)}))
    finally:
        runner._KEY = own_key
    cache = runner.Cache(str(tmp_path), options)
    again = runner.run(files, options, 1, cache)
    assert cache.hits == 0 and [f.to_json() for r in again for f in r.findings] == expected
    cache = runner.Cache(str(tmp_path), options)  # and the rewritten entries are trusted again
    runner.run(files, options, 1, cache)
    assert cache.hits == len(files)


def test_the_signing_key_is_private_and_kept(tmp_path, monkeypatch):
    import stat

    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "xdg"))
    monkeypatch.setattr(runner, "_KEY", None)
    key = runner.signing_key()
    path = tmp_path / "xdg" / "optlint" / "key"
    assert path.read_bytes() == key and len(key) == 32
    assert stat.S_IMODE(path.stat().st_mode) == 0o600
    monkeypatch.setattr(runner, "_KEY", None)
    assert runner.signing_key() == key  # the next run reads the same key
    assert not list(path.parent.glob(".key-*"))
