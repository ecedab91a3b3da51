"""Reading inputs and writing outputs: regular files only, size caps, atomic replacement.

Every file rulecheck reads (layouts, ``rulecheck.toml``, baselines) goes through
:func:`read_text`, and every report or baseline it writes goes through
:func:`atomic_output`:

- Reading opens the file without blocking (a FIFO would otherwise wait forever
  for a writer), refuses anything that is not a regular file (FIFOs, devices such
  as ``/dev/zero``, sockets, folders) and reads at most the cap for its kind plus
  one byte, so an endless or huge file stops with an input error instead of
  filling memory. Caps (bytes): layouts 64 MiB -- the largest benchmarked layout,
  a generated 100,000-pipe tower (``benchmarks/generate_tower.py``), is about
  23 MB, and the budget for hostile input is files under 1 MB; configurations
  1 MiB (a ``rulecheck.toml`` is a few hundred bytes); baselines 64 MiB (about
  100 bytes per entry, so room for a finding on every pipe of that tower).
- Writing goes to a temporary file in the target's folder, which is renamed over
  the target only once everything is written and flushed. An interrupt or a
  full disk leaves the old file whole and no temporary file behind. Character
  devices (``/dev/null``, ``/dev/stdout``) and FIFOs with a reader are written
  directly; other special files are refused.
"""

from __future__ import annotations

import os
import stat
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import TextIO

from rulecheck.errors import NO_POSITION, InputError, InputProblem, Position

MiB = 1024 * 1024
MAX_LAYOUT_BYTES = 64 * MiB  #: cap for a layout file (see the module docstring)
MAX_CONFIG_BYTES = 1 * MiB  #: cap for a rulecheck.toml
MAX_BASELINE_BYTES = 64 * MiB  #: cap for a baseline file

_KIND_OF_SPECIAL = (
    (stat.S_ISDIR, "a folder"),
    (stat.S_ISFIFO, "a FIFO (named pipe)"),
    (stat.S_ISCHR, "a character device"),
    (stat.S_ISBLK, "a block device"),
    (stat.S_ISSOCK, "a socket"),
)


class UnreadableFile(InputError):
    """An input that could not be read at all (missing, special, too big, no permission)."""


class OutputError(Exception):
    """An output file that cannot be written; the message names it and says why."""


def special_kind(mode: int) -> str | None:
    """What a non-regular file is ("a FIFO (named pipe)", …), or None for a regular file."""
    if stat.S_ISREG(mode):
        return None
    for test, kind in _KIND_OF_SPECIAL:
        if test(mode):
            return kind
    return "not a regular file"


def read_bytes(
    path: str | Path, limit: int, what: str = "file", missing: tuple[str, str] | None = None
) -> bytes:
    """The bytes of the regular file ``path`` (at most ``limit``); problems are UnreadableFile.

    ``what`` names the kind of file in messages ("layout", "configuration", "baseline");
    ``missing`` is the (message, hint) for a path that does not exist.
    """
    name = str(path)

    def refuse(message: str, hint: str = "") -> UnreadableFile:
        return UnreadableFile([InputProblem(name, NO_POSITION, message, hint)])

    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_BINARY", 0)
    try:
        fd = os.open(path, flags | getattr(os, "O_NOCTTY", 0))
    except FileNotFoundError:
        raise refuse(*(missing or ("no such file", "check the path"))) from None
    except IsADirectoryError:
        raise refuse("this is a folder, not a file", "give the path of a file") from None
    except OSError as exc:
        raise refuse(f"cannot read the {what}: {exc.strerror}") from None
    try:
        kind = special_kind(os.fstat(fd).st_mode)
        if kind == "a folder":
            raise refuse("this is a folder, not a file", "give the path of a file")
        if kind is not None:
            raise refuse(
                f"this is {kind}, not a regular file; rulecheck reads only regular files",
                f"save the {what} to a file and give its path",
            )
        if hasattr(os, "set_blocking"):
            os.set_blocking(fd, True)
        chunks: list[bytes] = []
        size = 0
        while size <= limit:
            chunk = os.read(fd, min(MiB, limit + 1 - size))
            if not chunk:
                break
            chunks.append(chunk)
            size += len(chunk)
        if size > limit:
            raise refuse(
                f"the {what} is larger than {limit // MiB} MiB, the most rulecheck reads",
                "split it into several files",
            )
        return b"".join(chunks)
    except OSError as exc:
        raise refuse(f"cannot read the {what}: {exc.strerror}") from None
    finally:
        os.close(fd)


def read_text(
    path: str | Path, limit: int, what: str = "file", missing: tuple[str, str] | None = None
) -> str:
    """:func:`read_bytes` decoded as UTF-8 (a leading BOM dropped).

    Bytes that are not UTF-8 are an :class:`InputError` at their line and column.
    """
    raw = read_bytes(path, limit, what, missing)
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        column = exc.start - (raw.rfind(b"\n", 0, exc.start) + 1) + 1
        raise InputError.at(
            str(path), Position(line, column), "the file is not UTF-8 text", "save it as UTF-8"
        ) from None


def is_regular_file(path: str | Path) -> bool:
    """True for an existing regular file (symlinks followed); never opens it."""
    try:
        return stat.S_ISREG(os.stat(path).st_mode)
    except (OSError, ValueError):
        return False


def file_identity(path: str | Path) -> tuple[int, int] | None:
    """(device, inode) of an existing file (symlinks followed), or None."""
    try:
        info = os.stat(path)
    except (OSError, ValueError):
        return None
    return (info.st_dev, info.st_ino)


def read_ends(path: str | Path, size: int) -> tuple[bytes, bytes]:
    """The first and the last ``size`` bytes of the regular file ``path`` (may overlap).

    Raises OSError; the caller has checked that ``path`` is a regular file.
    """
    with open(path, "rb") as handle:
        head = handle.read(size)
        end = handle.seek(0, os.SEEK_END)
        handle.seek(max(0, end - size))
        return head, handle.read(size)


def _why(exc: OSError) -> str:
    return exc.strerror or exc.__class__.__name__


@contextmanager
def atomic_output(target: str | Path) -> Iterator[TextIO]:
    """A UTF-8 text handle (``\\n`` line ends) whose content replaces ``target`` on success.

    Raises :class:`OutputError` (naming ``target``) when it cannot be written.
    """
    name = str(target)
    real = Path(os.path.realpath(target))  # write where a symlink points, keep the link
    try:
        mode: int | None = os.stat(real).st_mode
    except FileNotFoundError:
        mode = None
    except OSError as exc:
        raise OutputError(f"cannot write {name}: {_why(exc)}") from None
    if mode is not None and not stat.S_ISREG(mode):
        with _direct_output(name, real, mode) as handle:
            yield handle
        return
    try:
        import tempfile  # only when an output is written

        fd, temp = tempfile.mkstemp(dir=real.parent, prefix=f".{real.name}.", suffix=".part")
    except OSError as exc:
        where = f"in the folder {real.parent}"
        raise OutputError(f"cannot write {name}: {_why(exc)} ({where})") from None
    try:
        os.chmod(temp, stat.S_IMODE(mode) if mode is not None else 0o666 & ~_umask())
        with open(fd, "w", encoding="utf-8", newline="\n") as handle:
            yield handle
            handle.flush()
            os.fsync(handle.fileno())
        os.replace(temp, real)
    except OSError as exc:
        _remove(temp)
        raise OutputError(f"cannot write {name}: {_why(exc)}") from None
    except BaseException:
        _remove(temp)
        raise


@contextmanager
def _direct_output(name: str, real: Path, mode: int) -> Iterator[TextIO]:
    """Write straight into a character device or a FIFO that has a reader."""
    kind = special_kind(mode)
    if not (stat.S_ISCHR(mode) or stat.S_ISFIFO(mode)):
        raise OutputError(f"cannot write {name}: it is {kind}, not a file")
    try:
        # O_NONBLOCK: opening a FIFO nobody reads fails (ENXIO) instead of waiting forever
        fd = os.open(real, os.O_WRONLY | getattr(os, "O_NONBLOCK", 0))
        if hasattr(os, "set_blocking"):
            os.set_blocking(fd, True)
    except OSError as exc:
        hint = " (nothing is reading from the FIFO)" if stat.S_ISFIFO(mode) else ""
        raise OutputError(f"cannot write {name}: {_why(exc)}{hint}") from None
    try:
        with open(fd, "w", encoding="utf-8", newline="\n") as handle:
            yield handle
            handle.flush()
    except OSError as exc:
        raise OutputError(f"cannot write {name}: {_why(exc)}") from None


def _umask() -> int:
    current = os.umask(0o022)
    os.umask(current)
    return current


def _remove(path: str) -> None:
    try:
        os.unlink(path)
    except OSError:
        pass


def relative_posix(path: str | Path, base: Path | None = None) -> str:
    """``path`` relative to ``base`` (default: the working folder), with ``/`` separators."""
    base = base or Path.cwd()
    try:
        return Path(os.path.relpath(os.path.abspath(path), os.path.abspath(base))).as_posix()
    except ValueError:  # another drive on Windows
        return Path(os.path.abspath(path)).as_posix()
