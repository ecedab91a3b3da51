"""Build a shipped C source into a shared library at first use and load it with ctypes.

Nothing is compiled at install time, so installing needs no compiler. The first run on
a machine compiles the source with the system C compiler (``CC``, else the compiler
Python was built with, else ``cc``) into the per-user cache (``rulecheck.cache.cache_dirs``:
``RULECHECK_CACHE_DIR``, else ``$XDG_CACHE_HOME/rulecheck``, else ``~/.cache/rulecheck``;
a folder in the temporary directory when that one cannot be written), under a name keyed by the
source, the compiler command and the platform; later runs load the cached file. A
build goes to a temporary file that is renamed into place, so two processes building
at once cannot leave a torn file. When there is no compiler or the build fails, the
caller gets None and the reason, and runs its pure-Python path instead.
"""

from __future__ import annotations

import ctypes
import hashlib
import os
import platform
import shlex
import shutil
import subprocess
import sys
import sysconfig
import tempfile
from pathlib import Path

from rulecheck.cache import cache_dirs

#: Standard C, position-independent, and no floating-point licence (no fused multiply-add,
#: no fast-math), so the compiled loop does the arithmetic the source spells out.
FLAGS = ("-O2", "-std=c99", "-fPIC", "-shared", "-ffp-contract=off", "-fno-fast-math")


def compiler() -> list[str] | None:
    """The C compiler command, or None when none is found."""
    for text in (os.environ.get("CC"), sysconfig.get_config_var("CC"), "cc"):
        words = shlex.split(text) if text else []
        if words and shutil.which(words[0]):
            return words
    return None


def _build(command: list[str], source: Path, target: Path) -> str | None:
    """Compile ``source`` into ``target`` (renamed into place); the complaint, or None."""
    target.parent.mkdir(parents=True, exist_ok=True)
    handle, temporary = tempfile.mkstemp(dir=target.parent, prefix=".build-", suffix=target.suffix)
    os.close(handle)
    try:
        done = subprocess.run(
            [*command, *FLAGS, "-o", temporary, str(source), "-lm"],
            capture_output=True,
            text=True,
            timeout=120,
            check=False,
        )
        if done.returncode != 0:
            return (done.stderr or done.stdout).strip()[:500] or f"exit code {done.returncode}"
        os.replace(temporary, target)
        return None
    finally:
        if os.path.exists(temporary):
            os.unlink(temporary)


def load_library(source: Path) -> tuple[ctypes.CDLL | None, str | None]:
    """The shared library built from ``source`` (from the cache, or built now), or None
    and why not."""
    command = compiler()
    if command is None:
        return None, "no C compiler found (set CC to use one)"
    parts = [source.read_bytes(), " ".join([*command, *FLAGS]).encode()]
    parts += [platform.machine().encode(), sys.platform.encode()]
    key = hashlib.sha256(b"\0".join(parts)).hexdigest()[:20]
    name = f"{source.stem}-{key}{'.dll' if sys.platform == 'win32' else '.so'}"
    reason = "no writable cache folder"
    for folder in cache_dirs():
        target = folder / name
        try:
            if not target.exists():
                complaint = _build(command, source, target)
                if complaint is not None:
                    return None, f"the C kernel did not compile: {complaint}"
            return ctypes.CDLL(str(target)), None
        except (OSError, subprocess.SubprocessError) as error:
            reason = f"the C kernel could not be built or loaded: {error}"
    return None, reason
