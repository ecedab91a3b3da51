"""``--output`` and ``--write-baseline``: nothing the user wrote is lost.

- An output is refused when it is an input layout, the configuration, the
  baseline read, or the other output of the run (same inode: hard and symbolic
  links, another spelling), or an existing ``.yaml``/``.yml`` file in any case.
- An existing file that is not one of our reports or baselines is replaced only
  with ``--replace-any``.
- Reports and baselines are written to a temporary file beside the target and
  renamed into place: an interrupt or a failed write leaves the old file whole
  and no temporary file behind.
- A target that cannot be written (a full device, a read-only or missing folder,
  a folder as the target) is a clear error with exit status 2, never a traceback.
"""

from __future__ import annotations

import errno
import json
import os
import stat
from collections.abc import Callable
from pathlib import Path

import pytest
from conftest import MINIMAL, tweak

from rulecheck.errors import EXIT_FINDINGS, EXIT_INPUT, EXIT_INTERRUPTED, EXIT_OK
from rulecheck.files import OutputError, atomic_output
from rulecheck.report import text as text_report

Cli = Callable[..., tuple[int, str, str]]
# 95 psi static (over 80 psi [S: UPC 608.2]) gives one violation, so a baseline has content
FAILING = tweak(MINIMAL, ("pressure: 60 psi", "pressure: 95 psi"))
BASELINE = json.dumps({"version": 1, "tool": "rulecheck", "findings": []}, indent=2) + "\n"
CONFIG = 'fail-on = "violation"\n'


@pytest.fixture
def work(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """``plan.yaml`` (a layout), ``keep.toml`` (a config), ``b.json`` (a baseline)."""
    monkeypatch.chdir(tmp_path)
    (tmp_path / "plan.yaml").write_text(FAILING, encoding="utf-8")
    (tmp_path / "keep.toml").write_text(CONFIG, encoding="utf-8")
    (tmp_path / "b.json").write_text(BASELINE, encoding="utf-8")
    return tmp_path


def _snapshot(folder: Path) -> dict[str, bytes]:
    return {p.name: p.read_bytes() for p in folder.iterdir() if p.is_file()}


def _no_temp_files(folder: Path) -> None:
    left = [p.name for p in folder.iterdir() if p.name.endswith(".part")]
    assert not left, left


# (setup, argv, the file the message must name, what the message must say)
REFUSED = [
    ("", ["--output", "plan.yaml"], "plan.yaml", "refusing to write over the layout"),
    ("", ["--output", "./sub/../plan.yaml"], "plan.yaml", "refusing to write over the layout"),
    ("upper", ["--output", "Other.YAML"], "Other.YAML", "refusing to write over the layout"),
    ("hard", ["--output", "hard.json"], "plan.yaml", "refusing to write over the layout"),
    ("soft", ["--output", "soft.txt"], "plan.yaml", "refusing to write over the layout"),
    ("", ["--baseline", "b.json", "--output", "b.json"], "b.json", "over the baseline"),
    ("soft-b", ["--baseline", "b.json", "--output", "lb.json"], "b.json", "over the baseline"),
    ("", ["--config", "keep.toml", "--output", "keep.toml"], "keep.toml", "configuration"),
    ("", ["--write-baseline", "wb.json", "--output", "wb.json"], "wb.json", "same file"),
    ("", ["--write-baseline", "WB.json", "--output", "wb.json"], "WB.json", "same file"),
    ("", ["--write-baseline", "keep.toml"], "keep.toml", "not a rulecheck report or baseline"),
    ("notes", ["--output", "notes.txt"], "notes.txt", "not a rulecheck report or baseline"),
    ("notes", ["--write-baseline", "notes.txt"], "notes.txt", "--replace-any"),
    ("found", ["--output", "rulecheck.toml"], "rulecheck.toml", "over the configuration"),
    ("found", ["--output", "rulecheck.toml", "--replace-any"], "rulecheck.toml", "configuration"),
    ("", ["--output", "plan.yaml", "--replace-any"], "plan.yaml", "over the layout"),
]


def _setup(work: Path, kind: str) -> None:
    if kind == "upper":
        (work / "Other.YAML").write_text(MINIMAL, encoding="utf-8")
    elif kind == "hard":
        os.link(work / "plan.yaml", work / "hard.json")
    elif kind == "soft":
        (work / "soft.txt").symlink_to("plan.yaml")
    elif kind == "soft-b":
        (work / "lb.json").symlink_to("b.json")
    elif kind == "notes":
        (work / "notes.txt").write_text("My notes on the riser.\n", encoding="utf-8")
    elif kind == "found":
        (work / "rulecheck.toml").write_text(CONFIG, encoding="utf-8")
    (work / "sub").mkdir()


@pytest.mark.parametrize(("kind", "argv", "named", "says"), REFUSED)
def test_output_that_would_lose_user_data_is_refused(
    cli: Cli, work: Path, kind: str, argv: list[str], named: str, says: str
) -> None:
    _setup(work, kind)
    before = _snapshot(work)
    rc, out, err = cli("check", *argv, "plan.yaml")
    assert "Traceback" not in out + err
    assert rc == EXIT_INPUT, (out, err)
    assert says in err and named in err, err
    assert _snapshot(work) == before  # nothing written, nothing replaced
    _no_temp_files(work)


@pytest.mark.parametrize("fmt", ["text", "json", "sarif"])
def test_our_own_report_is_replaced(cli: Cli, work: Path, fmt: str) -> None:
    """A report of any format from an earlier run may be replaced by the next one."""
    assert cli("check", "--format", fmt, "--output", "report.out", "plan.yaml")[0] == EXIT_FINDINGS
    first = (work / "report.out").read_bytes()
    (work / "plan.yaml").write_text(MINIMAL, encoding="utf-8")  # now passes
    rc, out, err = cli("check", "--format", fmt, "--output", "report.out", "plan.yaml")
    assert rc == EXIT_OK, err
    assert (work / "report.out").read_bytes() != first
    _no_temp_files(work)


def test_our_baseline_and_an_empty_file_are_replaced(cli: Cli, work: Path) -> None:
    (work / "empty.json").write_bytes(b"")
    rc, out, err = cli("check", "--write-baseline", "empty.json", "plan.yaml")
    assert rc == EXIT_OK, err  # the findings just recorded are hidden by that baseline
    assert json.loads((work / "empty.json").read_text(encoding="utf-8"))["findings"]
    rc, out, err = cli("check", "--write-baseline", "b.json", "plan.yaml")
    assert rc == EXIT_OK and "wrote the baseline b.json (1 findings)" in err


def test_replace_any_replaces_a_foreign_file(cli: Cli, work: Path) -> None:
    (work / "notes.txt").write_text("My notes.\n", encoding="utf-8")
    rc, out, err = cli("check", "--output", "notes.txt", "--replace-any", "plan.yaml")
    assert rc == EXIT_FINDINGS, err
    assert "static-pressure" in (work / "notes.txt").read_text(encoding="utf-8")


def test_symlinked_report_keeps_its_link(cli: Cli, work: Path) -> None:
    (work / "reports").mkdir()
    (work / "reports" / "latest.json").write_bytes(b"")
    (work / "link.json").symlink_to("reports/latest.json")
    rc, out, err = cli("check", "--format", "json", "--output", "link.json", "plan.yaml")
    assert rc == EXIT_FINDINGS, err
    assert (work / "link.json").is_symlink()
    assert json.loads((work / "reports" / "latest.json").read_text(encoding="utf-8"))["files"]


def test_replaced_report_keeps_its_permissions(cli: Cli, work: Path) -> None:
    report = work / "report.json"
    cli("check", "--format", "json", "--output", report.name, "plan.yaml")
    report.chmod(0o640)
    cli("check", "--format", "json", "--output", report.name, "plan.yaml")
    assert stat.S_IMODE(report.stat().st_mode) == 0o640


def test_interrupt_mid_report_leaves_the_old_file_whole(
    cli: Cli, work: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Ctrl-C after part of the report is out: the old report stays, no temporary file."""
    assert cli("check", "--output", "report.txt", "plan.yaml")[0] == EXIT_FINDINGS
    old = (work / "report.txt").read_bytes()

    def interrupted(stream, lines):  # noqa: ANN001
        for _ in range(2000):
            stream.write("a line of a long report that is being written\n")
        stream.flush()
        raise KeyboardInterrupt

    monkeypatch.setattr(text_report, "write_plain", interrupted)
    rc, out, err = cli("check", "--output", "report.txt", "plan.yaml")
    assert rc == EXIT_INTERRUPTED and "Traceback" not in out + err
    assert (work / "report.txt").read_bytes() == old
    _no_temp_files(work)


@pytest.mark.parametrize("option", ["--output", "--write-baseline"])
def test_disk_full_while_writing_leaves_the_old_file_whole(
    cli: Cli, work: Path, monkeypatch: pytest.MonkeyPatch, option: str
) -> None:
    target = work / "out.json"
    written = EXIT_OK if option == "--write-baseline" else EXIT_FINDINGS
    assert cli("check", option, target.name, "plan.yaml")[0] == written
    old = target.read_bytes()

    def full(fd: int) -> None:
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(os, "fsync", full)
    rc, out, err = cli("check", "--format", "json", option, target.name, "plan.yaml")
    assert rc == EXIT_INPUT and "Traceback" not in out + err
    assert f"cannot write {target.name}: {os.strerror(errno.ENOSPC)}" in err, err
    assert target.read_bytes() == old
    _no_temp_files(work)


def test_atomic_output_interrupted_after_partial_write(tmp_path: Path) -> None:
    target = tmp_path / "report.txt"
    target.write_text("the old report\n", encoding="utf-8")
    with pytest.raises(KeyboardInterrupt):
        with atomic_output(target) as handle:
            handle.write("half of the new" * 10_000)
            handle.flush()
            raise KeyboardInterrupt
    assert target.read_text(encoding="utf-8") == "the old report\n"
    assert [p.name for p in tmp_path.iterdir()] == ["report.txt"]


def test_atomic_output_refuses_a_block_device_or_socket(tmp_path: Path) -> None:
    import socket

    if not hasattr(socket, "AF_UNIX"):
        pytest.skip("no Unix sockets here")
    path = tmp_path / "s.sock"
    with socket.socket(socket.AF_UNIX) as sock:
        sock.bind(str(path))
        with pytest.raises(OutputError, match="it is a socket"):
            with atomic_output(path):
                pass


def _unwritable_folder(tmp_path: Path) -> Path:
    folder = tmp_path / "locked"
    folder.mkdir()
    folder.chmod(0o500)
    return folder


WRITE_ERRORS = [
    ("--output", "/dev/full", "No space left on device"),
    ("--output", "/proc/version", "not a rulecheck report or baseline"),
    ("--write-baseline", "/proc/version", "not a rulecheck report or baseline"),
    ("--write-baseline", "/proc/rulecheck-baseline.json", "cannot write"),
    ("--output", "/proc/rulecheck-report.txt", "cannot write"),
    ("--write-baseline", "FOLDER", "it is a folder, not a file"),
    ("--output", "FOLDER", "it is a folder, not a file"),
    ("--output", "no/such/folder/r.json", "No such file or directory"),
    ("--write-baseline", "no/such/folder/b.json", "No such file or directory"),
    ("--write-baseline", "LOCKED/b.json", "Permission denied"),
    ("--output", "LOCKED/r.txt", "Permission denied"),
]


@pytest.mark.parametrize(("option", "target", "says"), WRITE_ERRORS)
def test_unwritable_target_is_a_clear_error(
    cli: Cli, work: Path, option: str, target: str, says: str
) -> None:
    if target.startswith(("/dev/", "/proc/")) and not Path(target).parent.is_dir():
        pytest.skip(f"no {Path(target).parent} on this platform")
    if target == "/dev/full" and not Path(target).exists():
        pytest.skip("no /dev/full on this platform")
    if target.startswith("LOCKED/"):
        if os.name != "posix" or os.geteuid() == 0:
            pytest.skip("permissions do not stop root (the /proc rows cover unwritable folders)")
        target = str(_unwritable_folder(work) / Path(target).name)
    if target == "FOLDER":
        target = str(work / "sub")
        (work / "sub").mkdir()
    rc, out, err = cli("check", option, target, "plan.yaml")
    assert "Traceback" not in out + err
    assert rc == EXIT_INPUT, (out, err)
    assert target in err and says in err, err


def test_replace_any_into_proc_is_still_a_clear_error(cli: Cli, work: Path) -> None:
    if not Path("/proc/version").exists():
        pytest.skip("no /proc on this platform")
    rc, out, err = cli("check", "--output", "/proc/version", "--replace-any", "plan.yaml")
    assert rc == EXIT_INPUT and "Traceback" not in out + err
    assert "cannot write /proc/version" in err, err


def test_character_device_is_written_directly(cli: Cli, work: Path) -> None:
    if not Path("/dev/null").exists():
        pytest.skip("no /dev/null here")
    rc, out, err = cli("check", "--output", os.devnull, "plan.yaml")
    assert rc == EXIT_FINDINGS and out == "", err
