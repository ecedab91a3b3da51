"""The per-user cache: where it is, and built data kept there between runs.

The folder is ``RULECHECK_CACHE_DIR``, else ``$XDG_CACHE_HOME/rulecheck``, else
``~/.cache/rulecheck``; a folder in the temporary directory when that one cannot be written
(:func:`cache_dirs`, also where :mod:`rulecheck.native` keeps its compiled kernel).

:func:`cached` keeps the result of a pure function of some shipped files (the built-in
catalog, the rule data) as a pickle named by a hash of those files' bytes, the bytes of
the Python modules that build and define the result, and the Python and rulecheck
versions: a change to any of them names another file, so a stale file is never read. The
file is written to a temporary name and renamed into place, so a reader never sees half of
it; a file that cannot be read back (torn by a crash, written by another version, not a
pickle) is ignored and built again; when no folder can be written the result is simply
built every run.
"""

from __future__ import annotations

import hashlib
import importlib
import os
import pickle
import sys
from collections.abc import Callable, Iterable, Iterator
from pathlib import Path
from typing import Any, TypeVar

from rulecheck import __version__

T = TypeVar("T")

#: bump when the layout of the cache files changes
FORMAT = b"rulecheck-data-cache 1"


def user_cache_dir() -> Path:
    """The first choice of :func:`cache_dirs` (found without importing :mod:`tempfile`)."""
    given = os.environ.get("RULECHECK_CACHE_DIR")
    base = os.environ.get("XDG_CACHE_HOME") or str(Path.home() / ".cache")
    return Path(given) if given else Path(base) / "rulecheck"


def spare_cache_dir() -> Path:
    """The second choice: a folder of the user's own in the temporary directory."""
    import tempfile

    user = getattr(os, "getuid", lambda: "user")()
    return Path(tempfile.gettempdir()) / f"rulecheck-{user}"


def cache_dirs() -> list[Path]:
    """Where cached files are kept, first choice first."""
    return list(_folders())


def _folders() -> Iterator[Path]:
    """:func:`cache_dirs` one by one: the spare is only looked up when it is needed."""
    yield user_cache_dir()
    yield spare_cache_dir()


def cache_key(name: str, sources: Iterable[bytes], modules: Iterable[str]) -> str:
    """The hash that names the cache file of ``name`` built from ``sources`` by the code
    of ``modules`` (imported module names)."""
    digest = hashlib.sha256(b"\0".join([FORMAT, __version__.encode(), sys.version.encode()]))
    digest.update(name.encode())
    for blob in sources:
        digest.update(b"\0source\0" + hashlib.sha256(blob).digest())
    for module in modules:
        digest.update(b"\0module\0" + module.encode() + b"\0")
        code = Path(importlib.import_module(module).__file__ or "").read_bytes()
        digest.update(hashlib.sha256(code).digest())
    return digest.hexdigest()[:24]


def cached(
    name: str, sources: Iterable[bytes], modules: Iterable[str], build: Callable[[], T]
) -> T:
    """``build()``, from the cache when a file of the same key is there and reads back,
    else built now and stored (where a cache folder can be written)."""
    filename = f"{name}-{cache_key(name, sources, modules)}.pickle"
    for folder in _folders():
        found = _read(folder / filename)
        if found is not None:
            return found[0]  # type: ignore[no-any-return]
    value = build()
    for folder in _folders():
        if _write(folder / filename, value):
            break
    return value


def _read(path: Path) -> tuple[Any] | None:
    """The value stored at ``path``, or None: missing, unreadable, not a pickle, or not
    the user's own (:func:`read_own`)."""
    data = read_own(path)
    if data is None:
        return None
    try:
        return (pickle.loads(data),)  # noqa: S301 - our own file in the user's own cache
    except Exception:  # torn, from another version, not a pickle: build it again
        return None


def read_own(path: Path) -> bytes | None:
    """The bytes of ``path``, or None: missing, unreadable, or (on POSIX) a file that
    another user owns (the spare folder is in the shared temporary directory)."""
    try:
        with path.open("rb") as stream:
            if hasattr(os, "getuid") and os.fstat(stream.fileno()).st_uid != os.getuid():
                return None
            return stream.read()
    except OSError:
        return None


def _write(path: Path, value: object) -> bool:
    """Store ``value`` at ``path`` (renamed into place); False when it cannot be written."""
    return write_atomically(path, pickle.dumps(value, protocol=pickle.HIGHEST_PROTOCOL))


def write_atomically(path: Path, data: bytes) -> bool:
    """Write ``data`` to a temporary file beside ``path`` and rename it into place, so a
    reader never sees half of it; False when it cannot be written."""
    import tempfile

    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        handle, temporary = tempfile.mkstemp(dir=path.parent, prefix=".data-", suffix=".tmp")
    except OSError:
        return False
    try:
        with os.fdopen(handle, "wb") as stream:
            stream.write(data)
        os.replace(temporary, path)
        return True
    except OSError:
        return False
    finally:
        if os.path.exists(temporary):
            os.unlink(temporary)
