"""Shared helpers for the dialect tests: write a small model file and collect optlint's findings."""

from __future__ import annotations

import textwrap
from pathlib import Path

from optlint.engine import check_file


def findings(tmp_path: Path, source: str, name: str = "model.py"):
    path = tmp_path / name
    path.write_text(textwrap.dedent(source), encoding="utf-8")
    return check_file(str(path)).findings


def rules(tmp_path: Path, source: str, name: str = "model.py") -> list[tuple[int, str]]:
    return sorted((f.site.line, f.rule) for f in findings(tmp_path, source, name))
