"""The corpus sweep (tests/benchmarks/sweep.py) over a sample of the running interpreter's standard
library, every file forced through the decoder, the parser and every recogniser: no crash.

The standard library is a large body of real Python that optlint did not choose (its tests include
deliberately odd files: bad encodings, syntax errors, deep nesting). The sample is deterministic
(200 files of at most 4 KB, chosen by a hash of their relative paths). Each is copied under a
numbered name into an empty folder, so that it is analysed on its own: in place, a small file that
calls into big sibling modules costs optlint seconds of reading them (antigravity.py calls into
webbrowser.py), which the full sweep measures and CI time cannot afford. The full sweep is the
long command in sweep.py's docstring.
"""

from __future__ import annotations

import os
import shutil
import sys
import sysconfig

from conftest import ROOT

sys.path.insert(0, str(ROOT / "tests" / "benchmarks"))
import sweep  # noqa: E402
from optlint.discover import discover  # noqa: E402


def test_a_standard_library_sample_goes_through_without_a_crash(tmp_path):
    root = sysconfig.get_paths()["stdlib"]
    files, _ = discover([root], ("site-packages",))
    chosen = sweep.sample([f for f in files if os.path.getsize(f) <= 4000], root, 200)
    assert len(chosen) == 200
    for i, path in enumerate(chosen):
        shutil.copyfile(path, tmp_path / f"f{i:03d}_{os.path.basename(path)}")
    report = sweep.sweep(str(tmp_path), force=True, jobs=1)
    assert report["files"] == 200 and report["checked"] == 200, report
    assert report["crashes"] == [], sweep.render(report)
    text = sweep.render(report)
    assert "crashes: 0" in text and "slowest files:" in text and "total time:" in text


def test_the_sample_is_deterministic_and_a_crash_is_named(tmp_path, monkeypatch):
    files = [str(tmp_path / f"m{i}.py") for i in range(30)]
    assert sweep.sample(files, str(tmp_path), 7) == sweep.sample(list(reversed(files)), str(tmp_path), 7)
    model = "import cvxpy as cp\nx = cp.Variable(2)\nprob = cp.Problem(cp.Minimize(cp.sum(x)), [x > 0])\n"
    (tmp_path / "fine.py").write_text(model)
    (tmp_path / "fragile.py").write_text(model)
    (tmp_path / "notes.py").write_text("print('no model here')\n")
    from optlint.dialects import load

    dsl = load("dsl")
    original = dsl.recognise

    def recognise(wrapper, path, **kw):  # stands for a bug in a recogniser
        if path.endswith("fragile.py"):
            raise IndexError("tuple index out of range")
        return original(wrapper, path, **kw)

    monkeypatch.setattr(dsl, "recognise", recognise)
    report = sweep.sweep(str(tmp_path), force=False, jobs=1)
    assert (report["files"], report["checked"], report["skipped"]) == (3, 2, 1)
    assert [c["path"] for c in report["crashes"]] == [str(tmp_path / "fragile.py")]
    assert "IndexError" in report["crashes"][0]["what"]
    assert report["findings_by_rule"] == {"internal-error": 1, "strict-inequality": 1}
    assert "crashes: 1" in sweep.render(report)
