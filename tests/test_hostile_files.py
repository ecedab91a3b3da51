"""Special and oversized input files: refused at once with a message naming the file.

A FIFO (named pipe) given as the layout, as ``--baseline`` or as ``--config``
used to block forever waiting for a writer, and ``/dev/zero`` was read until
memory ran out. Every input now goes through ``rulecheck.files.read_text``:
regular files only, opened without blocking, read up to a cap per kind
(``MAX_LAYOUT_BYTES``, ``MAX_CONFIG_BYTES``, ``MAX_BASELINE_BYTES``).

The FIFO and ``/dev/zero`` cases run in a subprocess with a timeout (and, where
the platform allows, an address-space limit), so that a regression fails the
test instead of hanging the suite or eating the machine.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from collections.abc import Callable
from pathlib import Path

import pytest
from conftest import MINIMAL

from rulecheck.errors import EXIT_INPUT, EXIT_OK
from rulecheck.files import MAX_BASELINE_BYTES, MAX_CONFIG_BYTES, MAX_LAYOUT_BYTES, MiB

Cli = Callable[..., tuple[int, str, str]]
ROLES = {  # how each kind of input is given on the command line
    "layout": lambda special, good: ["check", special],
    "baseline": lambda special, good: ["check", "--baseline", special, good],
    "config": lambda special, good: ["check", "--config", special, good],
}


def _limit_memory() -> None:  # runs in the child before exec
    try:
        import resource

        resource.setrlimit(resource.RLIMIT_AS, (4 * 1024**3, 4 * 1024**3))
    except (ImportError, ValueError, OSError):
        pass


def _run(argv: list[str | Path], cwd: Path) -> tuple[int, str, str]:
    done = subprocess.run(
        [sys.executable, "-m", "rulecheck", *map(str, argv)],
        cwd=cwd,
        capture_output=True,
        text=True,
        timeout=60,  # a hang, not a speed target: a fixed run takes about a second
        preexec_fn=_limit_memory if os.name == "posix" else None,
        check=False,
    )
    return done.returncode, done.stdout, done.stderr


def _assert_refused(rc: int, out: str, err: str, path: Path | str, fragment: str) -> None:
    assert "Traceback" not in out + err
    assert rc == EXIT_INPUT, (out, err)
    assert f"{path}:1:1: error: " in err and fragment in err, err


@pytest.fixture
def good(tmp_path: Path) -> Path:
    path = tmp_path / "good.yaml"
    path.write_text(MINIMAL, encoding="utf-8")
    return path


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="no FIFOs on this platform")
@pytest.mark.parametrize("role", ROLES)
def test_fifo_is_refused_not_waited_on(tmp_path: Path, good: Path, role: str) -> None:
    fifo = tmp_path / f"pipe-{role}"
    os.mkfifo(fifo)
    rc, out, err = _run(ROLES[role](fifo, good), tmp_path)
    _assert_refused(rc, out, err, fifo, "is a FIFO (named pipe), not a regular file")


@pytest.mark.skipif(not Path("/dev/zero").exists(), reason="no /dev/zero on this platform")
@pytest.mark.parametrize("role", ROLES)
def test_endless_device_is_refused_not_read(tmp_path: Path, good: Path, role: str) -> None:
    rc, out, err = _run(ROLES[role]("/dev/zero", good), tmp_path)
    _assert_refused(rc, out, err, "/dev/zero", "is a character device, not a regular file")


@pytest.mark.parametrize("role", ["baseline", "config"])  # a folder of layouts is expanded
def test_folder_is_refused(cli: Cli, tmp_path: Path, good: Path, role: str) -> None:
    folder = tmp_path / "a-folder.yaml"
    folder.mkdir()
    rc, out, err = cli(*ROLES[role](folder, good))
    _assert_refused(rc, out, err, folder, "this is a folder, not a file")


@pytest.mark.parametrize(
    ("role", "cap", "name"),
    [
        ("layout", MAX_LAYOUT_BYTES, "huge.yaml"),
        ("baseline", MAX_BASELINE_BYTES, "huge.json"),
        ("config", MAX_CONFIG_BYTES, "huge.toml"),
    ],
)
def test_file_over_the_cap_is_refused(
    cli: Cli, tmp_path: Path, good: Path, role: str, cap: int, name: str
) -> None:
    """One byte over the cap (a sparse file: no disk space used) stops with a clear error."""
    big = tmp_path / name
    with open(big, "wb") as handle:
        handle.truncate(cap + 1)
    rc, out, err = cli(*ROLES[role](big, good))
    _assert_refused(rc, out, err, big, f"larger than {cap // MiB} MiB, the most rulecheck reads")


def test_caps_leave_room_for_real_files() -> None:
    """The issue's budget is files under 1 MB; the largest benchmarked layout is ~23 MB."""
    assert MAX_CONFIG_BYTES >= 1 * MiB
    assert MAX_LAYOUT_BYTES > 23 * 10**6 and MAX_BASELINE_BYTES > 23 * 10**6


def test_file_at_the_cap_is_read(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    """Exactly ``limit`` bytes is accepted: the cap refuses only what is larger."""
    from rulecheck import files

    path = tmp_path / "exact.txt"
    path.write_bytes(b"x" * 1000)
    assert files.read_text(path, 1000) == "x" * 1000
    with pytest.raises(files.UnreadableFile):
        files.read_text(path, 999)


def test_not_utf8_keeps_its_position(cli: Cli, tmp_path: Path) -> None:
    path = tmp_path / "latin1.yaml"
    path.write_bytes(MINIMAL.replace("Minimal", "Min\xefmal").encode("latin-1"))
    rc, out, err = cli("check", path)
    assert rc == EXIT_INPUT and "Traceback" not in out + err
    assert f"{path}:3:12: error: the file is not UTF-8 text" in err, err


def test_unreadable_file_is_not_counted_as_checked(cli: Cli, tmp_path: Path, good: Path) -> None:
    missing = tmp_path / "nowhere.yaml"
    rc, out, err = cli("check", missing)
    assert rc == EXIT_INPUT and f"{missing}:1:1: error: no such file" in err
    assert "0 files checked:" in out and "1 could not be read" in " ".join(out.split())
    assert "with input errors" not in out
    rc, out, err = cli("check", good, missing)
    assert rc == EXIT_INPUT
    assert "1 file checked:" in out and "1 could not be read" in " ".join(out.split())


def test_file_with_errors_is_counted_as_checked(cli: Cli, tmp_path: Path, good: Path) -> None:
    broken = tmp_path / "broken.yaml"
    broken.write_text("version: 1\nproject: [\n", encoding="utf-8")
    rc, out, err = cli("check", good, broken)
    assert rc == EXIT_INPUT
    assert "2 files checked:" in out and "1 with input errors" in " ".join(out.split())
    assert "could not be read" not in out


def test_declared_profile_probe_skips_special_files(tmp_path: Path) -> None:
    """``config.profile_for`` peeks into layouts; it must not open a FIFO either."""
    from rulecheck.engine.config import declares_profile

    if not hasattr(os, "mkfifo"):
        pytest.skip("no FIFOs on this platform")
    fifo = tmp_path / "pipe.yaml"
    os.mkfifo(fifo)
    assert declares_profile(fifo) is False  # returns at once; the loader reports the FIFO


def test_config_profile_with_a_fifo_layout(tmp_path: Path) -> None:
    """With ``profile`` in rulecheck.toml the CLI probes each layout: still no hang."""
    if not hasattr(os, "mkfifo"):
        pytest.skip("no FIFOs on this platform")
    (tmp_path / "rulecheck.toml").write_text('profile = "ipc"\n', encoding="utf-8")
    fifo = tmp_path / "pipe.yaml"
    os.mkfifo(fifo)
    rc, out, err = _run(["check", fifo], tmp_path)
    _assert_refused(rc, out, err, fifo, "is a FIFO (named pipe)")


def test_regular_baseline_and_config_still_read(cli: Cli, tmp_path: Path, good: Path) -> None:
    baseline = tmp_path / "base.json"
    baseline.write_text(
        json.dumps({"version": 1, "tool": "rulecheck", "findings": []}), encoding="utf-8"
    )
    config = tmp_path / "rc.toml"
    config.write_text('fail-on = "caution"\n', encoding="utf-8")
    rc, out, err = cli("check", "--baseline", baseline, "--config", config, good)
    assert rc == EXIT_OK, err
