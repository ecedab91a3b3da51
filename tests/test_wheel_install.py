"""The built wheel carries ``rules/`` and ``schemas/`` and works outside the repository.

Builds a wheel (``python -m build --wheel --no-isolation``, offline), installs
it with ``pip --no-deps --no-index`` into a fresh virtual environment, and runs
the installed ``rulecheck`` from a scratch folder on a copy of a sample. The
source checkout is kept off the path, so the data can only come from inside the
wheel (``rulecheck/_data/``, see ``[tool.hatch.build.targets.wheel.force-include]``).

The fresh environment does not lean on the base interpreter's site-packages
(which on a clean machine lack pyyaml, pint, rich, ...): it is made without
``--system-site-packages`` and finds its dependencies in the environment running
the tests, through one ``.pth`` file listing that environment's site-packages
folders. Entries in a ``.pth`` file are only appended to ``sys.path`` (the
``.pth`` files inside those folders, such as an editable install's, are not run),
and they come after the fresh environment's own site-packages, so ``rulecheck``
itself is the wheel's.
"""

from __future__ import annotations

import os
import shutil
import site
import subprocess
import sys
import sysconfig
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


def _outer_site_folders() -> list[str]:
    """The site-packages folders of the environment running the tests (not the checkout)."""
    paths = sysconfig.get_paths()
    folders = [paths["purelib"], paths["platlib"]]
    if site.ENABLE_USER_SITE and Path(site.getusersitepackages()).is_dir():
        folders.append(site.getusersitepackages())
    unique = dict.fromkeys(str(Path(f).resolve()) for f in folders if Path(f).is_dir())
    return [f for f in unique if Path(f) != REPO.resolve()]


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
    made = _run([sys.executable, "-m", "venv", "--without-pip", venv], cwd=root)
    assert made.returncode == 0, made.stderr
    bin_dir = venv / ("Scripts" if os.name == "nt" else "bin")
    python = bin_dir / "python"
    site = _run([python, "-c", "import sysconfig; print(sysconfig.get_paths()['purelib'])"], root)
    assert site.returncode == 0, site.stderr
    (Path(site.stdout.strip()) / "_outer_environment.pth").write_text(
        "".join(f"{folder}\n" for folder in _outer_site_folders()), encoding="utf-8"
    )
    # pip of the outer environment installs into the fresh one (--python, pip >= 22.3);
    # --ignore-installed: the outer environment may hold rulecheck (editable or not).
    pip = _run(
        [
            sys.executable,
            "-m",
            "pip",
            "--python",
            python,
            "install",
            "--no-deps",
            "--no-index",
            "--ignore-installed",
            wheel,
        ],
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


def test_fresh_environment_ignores_the_base_site_packages(
    installed: tuple[Path, Path], tmp_path: Path
) -> None:
    """No --system-site-packages: the base interpreter's own packages are not on the path."""
    _, bin_dir = installed
    done = _run(
        [
            bin_dir / "python",
            "-c",
            "import sys, sysconfig; base = sysconfig.get_paths("
            "vars={'base': sys.base_prefix, 'platbase': sys.base_prefix})['purelib']; "
            "print(sys.prefix != sys.base_prefix, base in sys.path)",
        ],
        cwd=tmp_path,
    )
    assert done.returncode == 0, done.stderr
    assert done.stdout.split() == ["True", str(base_is_outer())], done.stdout


def base_is_outer() -> bool:
    """True only when the tests themselves run on the base interpreter (no venv)."""
    return sys.prefix == sys.base_prefix


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


def test_installed_package_builds_its_step_loop_from_the_shipped_source(
    installed: tuple[Path, Path], tmp_path: Path
) -> None:
    """The wheel ships ``moc_kernel.c``; an installed copy compiles it at first use (where a
    C compiler is found) into the cache, and runs the numpy loop otherwise."""
    wheel, bin_dir = installed
    assert "rulecheck/physics/moc_kernel.c" in set(zipfile.ZipFile(wheel).namelist())
    code = "from rulecheck.physics.transient import step_loop; print(step_loop())"
    env_cache = tmp_path / "cache"
    done = subprocess.run(
        [bin_dir / "python", "-c", code],
        cwd=tmp_path,
        env={**os.environ, "RULECHECK_CACHE_DIR": str(env_cache)},
        capture_output=True,
        text=True,
        timeout=300,
        check=False,
    )
    assert done.returncode == 0, done.stderr
    if shutil.which("cc") or shutil.which("gcc"):
        assert done.stdout.strip() == "compiled C"
        assert len(list(env_cache.glob("moc_kernel-*.so"))) == 1
    else:
        assert done.stdout.strip().startswith("numpy (")
