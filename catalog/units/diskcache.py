"""A small on-disk memo of unit conversions, so a fresh process needs no pint registry.

Building the pint registry costs about 0.3 s (more on a busy machine); a command that only reads
spellings it has met before (an envelope file, a known supplier) should not pay it.  Each
conversion found by the spelling layer is written to a JSON file keyed by a hash of the
spelling tables and code and the pint version, so any change to either starts a new file.
Only successful conversions are kept; failures are always worked out afresh.

The folder is ``$MOTORSHELF_CACHE_DIR``, else ``$XDG_CACHE_HOME/motorshelf``, else
``~/.cache/motorshelf``; ``MOTORSHELF_NO_CACHE=1`` turns the memo off.  A folder that cannot be
written is ignored silently: the memo is an optimisation, never a source of truth.
"""
from __future__ import annotations

__all__ = ["lookup", "store"]

import hashlib
import json
import os
import tempfile
import threading
from pathlib import Path

_lock = threading.Lock()
_memo: dict | None = None
_path: Path | None = None


def _enabled() -> bool:
    return os.environ.get("MOTORSHELF_NO_CACHE", "") not in ("1", "true", "yes")


def _file() -> Path:
    global _path
    if _path is None:
        here = Path(__file__).resolve().parent
        digest = hashlib.sha1()
        for name in ("atoms.py", "spelling.py", "dimensions.py"):
            digest.update((here / name).read_bytes())
        from importlib.metadata import PackageNotFoundError, version

        try:
            digest.update(version("pint").encode())
        except PackageNotFoundError:  # pragma: no cover - pint always installed with motorshelf
            digest.update(b"pint?")
        base = os.environ.get("MOTORSHELF_CACHE_DIR") or os.path.join(
            os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache"), "motorshelf")
        _path = Path(base) / f"unit-conversions-{digest.hexdigest()[:16]}.json"
    return _path


def _load() -> dict:
    global _memo
    if _memo is None:
        try:
            _memo = json.loads(_file().read_text(encoding="utf-8"))
            if not isinstance(_memo, dict):
                _memo = {}
        except (OSError, ValueError):
            _memo = {}
    return _memo


def lookup(spelling: str, dimension: str):
    """The memo of (spelling, dimension): (factor, offset, si_unit, canonical, warnings) or None."""
    if not _enabled():
        return None
    item = _load().get(f"{dimension}\x1f{spelling}")
    if not isinstance(item, list) or len(item) != 5:
        return None
    return item


def store(spelling: str, dimension: str, factor: float, offset: float, si_unit: str, canonical: str,
          warnings) -> None:
    """Remember a successful conversion (best effort; errors are ignored)."""
    if not _enabled():
        return
    with _lock:
        memo = _load()
        key = f"{dimension}\x1f{spelling}"
        value = [factor, offset, si_unit, canonical, list(warnings)]
        if memo.get(key) == value:
            return
        memo[key] = value
        try:
            path = _file()
            path.parent.mkdir(parents=True, exist_ok=True)
            fd, tmp = tempfile.mkstemp(dir=path.parent, prefix=".units-", suffix=".json")
            with os.fdopen(fd, "w", encoding="utf-8") as fh:
                json.dump(memo, fh, ensure_ascii=False)
            os.replace(tmp, path)  # readers see the old or the new file, never half of one
        except OSError:
            pass
