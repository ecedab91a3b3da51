"""The built wheel carries ``rules/`` and ``schemas/`` and works outside the repository.

Builds a wheel (``python -m build --wheel --no-isolation``, offline), installs
it with ``pip --no-deps --no-index`` into a fresh virtual environment that sees
the system's site-packages (for pyyaml, numpy, ...), and runs the installed
``rulecheck`` from a scratch folder on a copy of a sample. The source checkout
is kept off the path, so the data can only come from inside the wheel
(``rulecheck/_data/``, see ``[tool.hatch.build.targets.wheel.force-include]``).
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest
from conftest import REPO, SAMPLES

from rulecheck.checks import REGISTRY

pytestmark = pytest.mark.slow


def _run(args: list[str | Path], cwd: Path, timeout: int = 300) -> subprocess.CompletedProcess:
    env = {
        k: v
        for k, v in os.environ.items()
        if k not in ("PYTHONPATH", "PYTHONHOME", "VIRTUAL_ENV", "PYTHONSTARTUP")
    }
    env["PIP_DISABLE_PIP_VERSION_CHECK"] = "1"
    env["PIP_NO_INPUT"] = "1"
    return subprocess.run(
        [str(a) for a in args],
        cwd=cwd,
        env=env,
        capture_output=True,
        text=True,
        timeout=timeout,
        check=False,
    )


@pytest.fixture(scope="module")
def installed(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    """(the wheel, the venv's bin folder) -- built and installed once for this module."""
    root = tmp_path_factory.mktemp("wheel")
    dist = root / "dist"
    built = _run(
        [sys.executable, "-m", "build", "--wheel", "--no-isolation", "--outdir", dist, REPO],
        cwd=root,
    )
    if built.returncode != 0:  # fall back to pip's builder (also offline)
        built = _run(
            [
                sys.executable,
                "-m",
                "pip",
                "wheel",
                "--no-deps",
                "--no-build-isolation",
                "--no-index",
                "-w",
                dist,
                REPO,
            ],
            cwd=root,
        )
    assert built.returncode == 0, built.stdout + built.stderr
    (wheel,) = dist.glob("rulecheck-*.whl")

    venv = root / "venv"
    made = _run([sys.executable, "-m", "venv", "--system-site-packages", venv], cwd=root)
    assert made.returncode == 0, made.stderr
    bin_dir = venv / ("Scripts" if os.name == "nt" else "bin")
    python = bin_dir / "python"
    # --ignore-installed: the development checkout may be installed (editable) system-wide.
    pip = _run(
        [python, "-m", "pip", "install", "--no-deps", "--no-index", "--ignore-installed", wheel],
        cwd=root,
    )
    assert pip.returncode == 0, pip.stdout + pip.stderr
    return wheel, bin_dir


def test_wheel_contains_the_data(installed: tuple[Path, Path]) -> None:
    wheel, _ = installed
    names = set(zipfile.ZipFile(wheel).namelist())
    assert "rulecheck/_data/rules/materials.yaml" in names
    assert "rulecheck/_data/rules/fixture-types.yaml" in names
    assert "rulecheck/_data/schemas/layout.schema.json" in names
    for rule_file in ("hydraulic-rules.yaml", "housekeeping-rules.yaml"):
        assert f"rulecheck/_data/rules/{rule_file}" in names


def test_installed_package_is_the_wheel(installed: tuple[Path, Path], tmp_path: Path) -> None:
    """The venv imports rulecheck from its own site-packages, not from the checkout."""
    _, bin_dir = installed
    done = _run(
        [bin_dir / "python", "-c", "import rulecheck; print(rulecheck.__file__)"], cwd=tmp_path
    )
    assert done.returncode == 0, done.stderr
    where = Path(done.stdout.strip()).resolve()
    assert bin_dir.parent.resolve() in where.parents, where
    assert REPO.resolve() not in where.parents


def test_installed_cli_checks_a_sample(installed: tuple[Path, Path], tmp_path: Path) -> None:
    _, bin_dir = installed
    layout = tmp_path / "house.yaml"
    shutil.copy(SAMPLES / "two-bath-house.yaml", layout)
    done = _run([bin_dir / "rulecheck", "check", layout.name], cwd=tmp_path)
    assert "Traceback" not in done.stdout + done.stderr
    assert done.returncode == 0, done.stdout + done.stderr
    assert "1 file checked" in done.stdout


def test_installed_module_lists_the_rules(installed: tuple[Path, Path], tmp_path: Path) -> None:
    _, bin_dir = installed
    done = _run([bin_dir / "python", "-m", "rulecheck", "rules"], cwd=tmp_path)
    assert done.returncode == 0, done.stdout + done.stderr
    for rule_id in REGISTRY:
        assert rule_id in done.stdout


def test_installed_schema_path_is_inside_the_package(
    installed: tuple[Path, Path], tmp_path: Path
) -> None:
    _, bin_dir = installed
    done = _run([bin_dir / "rulecheck", "schema"], cwd=tmp_path)
    assert done.returncode == 0, done.stderr
    schema = Path(done.stdout.strip())
    assert schema.is_file() and schema.name == "layout.schema.json"
    assert bin_dir.parent.resolve() in schema.resolve().parents
