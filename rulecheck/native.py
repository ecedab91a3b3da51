"""Build a shipped C source into a shared library at first use and load it with ctypes.

Nothing is compiled at install time, so installing needs no compiler. The first run on
a machine compiles the source with the system C compiler (``CC``, else the compiler
Python was built with, else ``cc``) into the per-user cache (``rulecheck.cache.cache_dirs``:
``RULECHECK_CACHE_DIR``, else ``$XDG_CACHE_HOME/rulecheck``, else ``~/.cache/rulecheck``;
a folder in the temporary directory when that one cannot be written), under a name keyed by the
source, the compiler command and the platform; later runs load the cached file. A
build goes to a temporary file that is renamed into place, so two processes building
at once cannot leave a torn file. When there is no compiler or the build fails, the
caller gets None and the reason, and runs its pure-Python path instead. A caller that
knows early that it will need the library can :func:`start_building` it, so that the
compiler runs beside its other work.
"""

from __future__ import annotations

import atexit
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
FLAGS = ("-O3", "-std=c99", "-fPIC", "-shared", "-ffp-contract=off", "-fno-fast-math")


def compiler() -> list[str] | None:
    """The C compiler command, or None when none is found."""
    for text in (os.environ.get("CC"), sysconfig.get_config_var("CC"), "cc"):
        words = shlex.split(text) if text else []
        if words and shutil.which(words[0]):
            return words
    return None


def _private_folder(folder: Path) -> None:
    """Make ``folder`` (owner-only) or check an existing one: a library is only loaded
    from a folder that this user owns and nobody else may write to (the spare folder is
    in the shared temporary directory). Raises OSError otherwise."""
    folder.mkdir(mode=0o700, parents=True, exist_ok=True)
    if hasattr(os, "getuid"):
        st = folder.stat()
        if st.st_uid != os.getuid() or st.st_mode & 0o022:
            raise OSError(f"{folder} is not a private folder of this user")


def _mine(path: Path) -> bool:
    """Whether the file at ``path`` belongs to this user (always on Windows)."""
    return not hasattr(os, "getuid") or path.stat().st_uid == os.getuid()


class _Build:
    """A compiler run writing ``temporary``, renamed to ``target`` when it succeeds."""

    def __init__(self, command: list[str], source: Path, target: Path) -> None:
        _private_folder(target.parent)
        handle, name = tempfile.mkstemp(dir=target.parent, prefix=".build-", suffix=target.suffix)
        os.close(handle)
        self.target, self.temporary, self.owner = target, Path(name), os.getpid()
        try:
            self.process = subprocess.Popen(
                [*command, *FLAGS, "-o", name, str(source), "-lm"],
                stdin=subprocess.DEVNULL,
                stdout=subprocess.PIPE,
                stderr=subprocess.STDOUT,
                text=True,
            )
        except OSError:
            self.temporary.unlink(missing_ok=True)
            raise

    def abandon(self) -> None:
        """Stop the compiler and remove its file (this process ends before it is used)."""
        if self.process.poll() is None:
            self.process.kill()
            self.process.communicate()
        self.temporary.unlink(missing_ok=True)

    def finish(self) -> str | None:
        """Wait for the compiler; the complaint, or None once the library is in place."""
        try:
            output, _ = self.process.communicate(timeout=120)
            if self.process.returncode != 0:
                return output.strip()[:500] or f"exit code {self.process.returncode}"
            os.replace(self.temporary, self.target)
            return None
        except subprocess.TimeoutExpired:
            self.process.kill()
            self.process.communicate()
            return "the compiler took more than 120 s"
        finally:
            self.temporary.unlink(missing_ok=True)


#: builds started by :func:`start_building` and not yet collected, by source
_PENDING: dict[Path, _Build] = {}


@atexit.register
def _abandon_pending() -> None:
    for build in _PENDING.values():
        if build.owner == os.getpid():
            build.abandon()


def _library_name(source: Path, command: list[str]) -> str:
    """The cached library's file name: keyed by the source, the compiler command and flags,
    and the platform."""
    parts = [source.read_bytes(), " ".join([*command, *FLAGS]).encode()]
    parts += [platform.machine().encode(), sys.platform.encode()]
    key = hashlib.sha256(b"\0".join(parts)).hexdigest()[:20]
    return f"{source.stem}-{key}{'.dll' if sys.platform == 'win32' else '.so'}"


def start_building(source: Path) -> None:
    """Start compiling ``source`` in the background when its library is not cached yet,
    so that the compiler runs on another core while this process does other work;
    :func:`load_library` collects it. Does nothing when there is no compiler."""
    if source in _PENDING:
        return
    command = compiler()
    if command is None:
        return
    name = _library_name(source, command)
    for folder in cache_dirs():
        target = folder / name
        try:
            if not target.exists():
                _PENDING[source] = _Build(command, source, target)
            return
        except OSError:
            continue


def load_library(source: Path) -> tuple[ctypes.CDLL | None, str | None]:
    """The shared library built from ``source`` (from the cache, or built now), or None
    and why not."""
    command = compiler()
    if command is None:
        return None, "no C compiler found (set CC to use one)"
    pending = _PENDING.pop(source, None)
    if pending is not None and pending.owner == os.getpid():  # not one a forked parent began
        complaint = pending.finish()
        if complaint is not None:
            return None, f"the C kernel did not compile: {complaint}"
    reason, name = "no writable cache folder", _library_name(source, command)
    for folder in cache_dirs():
        target = folder / name
        try:
            _private_folder(folder)
            if target.exists() and _mine(target):
                try:
                    return ctypes.CDLL(str(target)), None
                except OSError:  # torn or foreign: built again below
                    target.unlink()
            complaint = _Build(command, source, target).finish()
            if complaint is not None:
                return None, f"the C kernel did not compile: {complaint}"
            return ctypes.CDLL(str(target)), None
        except (OSError, subprocess.SubprocessError) as error:
            reason = f"the C kernel could not be built or loaded: {error}"
    return None, reason
