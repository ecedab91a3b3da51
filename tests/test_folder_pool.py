"""A folder checked on several worker processes gives the same bytes as checked in one.

The folder holds the samples, every rule case (failing and passing layouts, so there are
findings of every rule), a file that is not YAML, one that breaks the schema and one with
a unit error, so the input errors' order and text are compared too.
"""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent


@pytest.fixture(scope="module")
def folder(tmp_path_factory: pytest.TempPathFactory) -> Path:
    here = tmp_path_factory.mktemp("folder")
    for sample in sorted((ROOT / "samples").glob("*.yaml")):
        shutil.copy(sample, here / sample.name)
    for case in sorted((ROOT / "tests" / "cases").glob("*/*.yaml")):
        shutil.copy(case, here / f"{case.parent.name}-{case.name}")
    text = (ROOT / "samples" / "two-bath-house.yaml").read_text(encoding="utf-8")
    (here / "zz-not-yaml.yaml").write_text("pipes: [1, 2\n", encoding="utf-8")
    (here / "m-schema.yaml").write_text(text.replace("units: us", "units: metric"), "utf-8")
    (here / "m-unit.yaml").write_text(text.replace("1 psi", "1 furlong"), encoding="utf-8")
    return here


def _check(folder: Path, fmt: str, jobs: int) -> subprocess.CompletedProcess[bytes]:
    command = [sys.executable, "-m", "rulecheck", "check", str(folder), "--format", fmt]
    return subprocess.run([*command, "--jobs", str(jobs)], capture_output=True, timeout=600)


@pytest.mark.parametrize("fmt", ["json", "text", "sarif"])
def test_two_and_three_workers_give_the_serial_bytes(folder: Path, fmt: str) -> None:
    serial = _check(folder, fmt, 1)
    assert serial.returncode == 2  # the broken files
    assert len(serial.stdout) > 1000
    for jobs in (2, 3):
        pooled = _check(folder, fmt, jobs)
        assert pooled.returncode == serial.returncode
        assert pooled.stdout == serial.stdout
        assert pooled.stderr == serial.stderr


def test_input_errors_keep_their_file_order(folder: Path) -> None:
    done = _check(folder, "text", 2)
    errors = [
        line.split(":")[0] for line in done.stderr.decode().splitlines() if ": error:" in line
    ]
    named = [Path(e).name for e in errors]
    assert named[0] == "m-schema.yaml" and named[-1] == "zz-not-yaml.yaml", named
    assert "m-unit.yaml" in named


@pytest.mark.parametrize("jobs", ["0", "-1", "two", "999"])
def test_jobs_must_be_a_sensible_count(folder: Path, jobs: str) -> None:
    command = [sys.executable, "-m", "rulecheck", "check", str(folder), "--jobs", jobs]
    done = subprocess.run(command, capture_output=True, text=True, timeout=120)
    assert done.returncode == 2
    assert "--jobs" in done.stderr and "Traceback" not in done.stderr


def test_transient_runs_in_pooled_files_give_the_serial_bytes(tmp_path: Path) -> None:
    for sample in sorted((ROOT / "samples").glob("*.yaml")):
        shutil.copy(sample, tmp_path / sample.name)
    command = [sys.executable, "-m", "rulecheck", "check", str(tmp_path), "--transient"]
    runs = [
        subprocess.run(
            [*command, "--format", "json", "--jobs", jobs], capture_output=True, timeout=600
        )
        for jobs in ("1", "2")
    ]
    assert runs[0].returncode in (0, 1) and b"simulation" in runs[0].stdout
    assert runs[1].stdout == runs[0].stdout and runs[1].returncode == runs[0].returncode
