"""Runner: check many files, in parallel worker processes and through the result cache.

- Work per file is independent, so a process pool runs ``engine.check_file`` over the files;
  results come back in the order of the input, so output is the same whatever ``jobs`` is.
  Small runs stay in-process (starting workers costs more than it saves).
- The cache maps (file content hash, optlint version, effective configuration, rule set) to the
  file's result. A result also records the hashes of the other files its analysis read (helpers
  imported from sibling modules); a changed dependency invalidates it. Entries are written to a
  temporary file and renamed into place, so concurrent runs never see half an entry; an entry
  that does not parse is ignored and rewritten. The cache directory carries its own .gitignore;
  a cache directory that links out of the project root is not used, and a result with an
  ``internal-error`` is not stored.
- Entries are signed (HMAC-SHA256) with a key that lives outside the project, in the user's cache
  directory (``$XDG_CACHE_HOME/optlint/key``, else ``~/.cache/optlint/key``, created on first
  use, readable by the user only): an entry committed to the repository, copied from another
  machine or edited by hand has no valid signature and is ignored and rewritten, so nobody can
  plant a clean result for a file through the cache. Where no key can be kept, each run uses a
  fresh one (entries written by other runs are then never trusted).
"""

from __future__ import annotations

import hashlib
import hmac
import json
import os
import tempfile
from concurrent.futures import ProcessPoolExecutor
from dataclasses import asdict, fields
from typing import Callable

from optlint import __version__
from optlint.engine import FileResult, Options, check_file
from optlint.findings import Finding
from optlint.ir import Site

CACHE_DIR_NAME = ".optlint_cache"
CACHE_FORMAT = 2  # 2: entries are signed
MIN_FILES_PER_WORKER = 8


def default_jobs() -> int:
    return max(1, os.cpu_count() or 1)


# -- cache ----------------------------------------------------------------------------------


def _digest(data: bytes) -> str:
    return hashlib.sha256(data).hexdigest()


_KEY: bytes | None = None


def _key_dir() -> str:
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return os.path.join(base, "optlint")


def signing_key() -> bytes:
    """This user's cache-signing key (created once, atomically, mode 0600; see the module doc)."""
    global _KEY
    if _KEY is None:
        path = os.path.join(_key_dir(), "key")
        try:
            with open(path, "rb") as fh:
                key = fh.read()
            if len(key) < 32:
                raise OSError("short key")
        except OSError:
            key = os.urandom(32)
            try:
                os.makedirs(os.path.dirname(path), mode=0o700, exist_ok=True)
                fd, tmp = tempfile.mkstemp(dir=os.path.dirname(path), prefix=".key-")
                with os.fdopen(fd, "wb") as fh:
                    fh.write(key)
                try:
                    os.link(tmp, path)  # atomic, and never replaces a key another run just made
                except FileExistsError:  # another run made one meanwhile (whole: it was linked)
                    with open(path, "rb") as fh:
                        key = fh.read()
                finally:
                    os.unlink(tmp)
            except OSError:
                pass  # no place for a key: this run's own, so no earlier entry is trusted
        _KEY = key
    return _KEY


def _sign(body: dict) -> str:
    text = json.dumps(body, sort_keys=True, separators=(",", ":")).encode()
    return hmac.new(signing_key(), text, hashlib.sha256).hexdigest()


def _rules_fingerprint() -> list[str]:
    """What identifies the rule set without importing it: the built-in rule files' contents and the
    installed plugins' entry points and versions (importing the rules would import sympy)."""
    import importlib.metadata as md
    import importlib.util

    spec = importlib.util.find_spec("optlint.checks")
    out = []
    for folder in (spec.submodule_search_locations or []) if spec else []:
        for name in sorted(os.listdir(folder)):
            if name.endswith(".py"):
                with open(os.path.join(folder, name), "rb") as fh:
                    out.append(f"{name}:{_digest(fh.read())}")
    try:
        eps = md.entry_points(group="optlint.rules")
    except TypeError:  # Python 3.10 without the selection interface
        eps = md.entry_points().get("optlint.rules", [])
    for ep in sorted(eps, key=lambda e: e.name):
        dist = getattr(ep, "dist", None)
        out.append(f"plugin:{ep.name}={ep.value}@{getattr(dist, 'version', '?')}")
    return out


def _options_key(options: Options) -> str:
    parts = {f.name: repr(getattr(options, f.name)) for f in fields(options)}
    parts["rules"] = _rules_fingerprint()
    parts["version"] = __version__
    parts["format"] = CACHE_FORMAT
    return _digest(json.dumps(parts, sort_keys=True).encode())


def _inside(path: str, top: str) -> bool:
    """Whether ``path`` stays inside ``top`` once symbolic links are resolved."""
    real, real_top = os.path.realpath(path), os.path.realpath(top)
    try:
        return os.path.commonpath([real, real_top]) == real_top
    except ValueError:
        return False


class Cache:
    def __init__(self, root: str, options: Options):
        self.root = root
        self.dir = os.path.join(root, CACHE_DIR_NAME, f"v{CACHE_FORMAT}")
        self.options_key = _options_key(options)
        self.hits = 0
        self.misses = 0

    def _entry_path(self, key: str) -> str:
        return os.path.join(self.dir, key[:2], key + ".json")

    def _contained(self, target: str) -> bool:
        # A cache directory (or a folder in it) that is a link out of the project is not used:
        # entries are neither read from nor written to somewhere the project does not own.
        return _inside(os.path.dirname(target), self.root)

    def key(self, path: str, data: bytes) -> str:
        return _digest(b"\0".join([self.options_key.encode(), os.path.abspath(path).encode(),
                                   path.encode(), data]))

    def get(self, path: str) -> tuple[FileResult | None, str | None]:
        try:
            with open(path, "rb") as fh:
                data = fh.read()
        except OSError:
            return None, None
        key = self.key(path, data)
        if not self._contained(self._entry_path(key)):
            return None, None
        try:
            with open(self._entry_path(key), encoding="utf-8") as fh:
                entry = json.load(fh)
            body = {"result": entry["result"], "dependencies": entry.get("dependencies", {})}
            if not hmac.compare_digest(str(entry.get("signature", "")), _sign(body)):
                raise ValueError("unsigned or forged cache entry")  # ignored, and rewritten below
            result = _result_from_json(entry["result"])
            for dep, digest in entry.get("dependencies", {}).items():
                with open(dep, "rb") as dfh:
                    if _digest(dfh.read()) != digest:
                        self.misses += 1
                        return None, key
        except (OSError, ValueError, KeyError, TypeError):
            self.misses += 1
            return None, key
        self.hits += 1
        return result, key

    def put(self, key: str, result: FileResult) -> None:
        if any(f.rule == "internal-error" for f in result.findings):
            return  # the failure may depend on this machine (memory, stack): try again next run
        deps = {}
        for dep in getattr(result, "dependencies", []) or []:
            try:
                with open(dep, "rb") as fh:
                    deps[dep] = _digest(fh.read())
            except OSError:
                return  # a dependency we cannot read: do not cache a result that relied on it
        target = self._entry_path(key)
        if not self._contained(target):
            return
        try:
            os.makedirs(os.path.dirname(target), exist_ok=True)
            self._write_gitignore()
            fd, tmp = tempfile.mkstemp(dir=os.path.dirname(target), prefix=".tmp-", suffix=".json")
            body = {"result": _result_to_json(result), "dependencies": deps}
            body = json.loads(json.dumps(body))  # what a reader will parse: sign exactly that
            with os.fdopen(fd, "w", encoding="utf-8") as fh:
                json.dump({**body, "signature": _sign(body)}, fh)
            os.replace(tmp, target)
        except OSError:
            pass  # a read-only tree or a full disk: the run is still correct, only slower

    def _write_gitignore(self) -> None:
        top = os.path.dirname(self.dir)
        marker = os.path.join(top, ".gitignore")
        if not os.path.exists(marker):
            with open(marker, "w", encoding="utf-8") as fh:
                fh.write("# optlint's result cache: safe to delete\n*\n")


def _result_to_json(r: FileResult) -> dict:
    out = {f.name: getattr(r, f.name) for f in fields(r) if f.name != "findings"}
    out["findings"] = [{"rule": f.rule, "site": asdict(f.site), "message": f.message,
                        "severity": f.severity, "evidence": f.evidence} for f in r.findings]
    return out


def _result_from_json(d: dict) -> FileResult:
    findings = [Finding(rule=f["rule"], site=Site(**f["site"]), message=f["message"], severity=f["severity"],
                        evidence=f["evidence"]) for f in d.pop("findings")]
    names = {f.name for f in fields(FileResult)}
    return FileResult(findings=findings, **{k: v for k, v in d.items() if k in names})


# -- running --------------------------------------------------------------------------------


def _check_one(args: tuple[str, Options]) -> FileResult:
    path, options = args
    return check_file(path, options)


def run(files: list[str], options: Options, jobs: int = 1, cache: Cache | None = None,
        on_result: Callable[[FileResult], None] | None = None) -> list[FileResult]:
    results: list[FileResult | None] = [None] * len(files)
    todo: list[int] = []
    keys: dict[int, str | None] = {}
    for i, path in enumerate(files):
        if cache is not None:
            hit, keys[i] = cache.get(path)
            if hit is not None:
                results[i] = hit
                if on_result:
                    on_result(hit)
                continue
        todo.append(i)
    workers = min(jobs, max(1, len(todo) // MIN_FILES_PER_WORKER))
    if workers <= 1:
        computed = (check_file(files[i], options) for i in todo)
        pool = None
    else:
        _warm_imports()  # forked workers then share the parent's imported modules
        pool = ProcessPoolExecutor(max_workers=workers, mp_context=_context())
        computed = pool.map(_check_one, [(files[i], options) for i in todo], chunksize=4)
    try:
        for i, result in zip(todo, computed):
            results[i] = result
            if cache is not None and keys.get(i):
                cache.put(keys[i], result)
            if on_result:
                on_result(result)
    finally:
        if pool is not None:
            pool.shutdown()
    return results  # type: ignore[return-value]


def _warm_imports() -> None:
    import libcst  # noqa: F401
    import sympy  # noqa: F401

    import optlint.analysis  # noqa: F401
    from optlint.dialects import DIALECT_MODULES, load
    from optlint.rules import all_rules

    for name in DIALECT_MODULES:
        load(name)
    all_rules()


def _context():
    import multiprocessing

    methods = multiprocessing.get_all_start_methods()
    # fork shares the already imported modules with the workers (fast start); elsewhere spawn.
    return multiprocessing.get_context("fork" if "fork" in methods else "spawn")
