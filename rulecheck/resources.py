"""Locate the data shipped with rulecheck (``rules/`` and ``schemas/``).

In an installed wheel the data sits inside the package under ``_data/``; in a
source checkout (editable install, or running from the repository) it sits at
the repository root. Both are tried, wheel first. The folders are looked for beside this
file first; ``importlib.resources`` (some 7 ms of imports at start-up) only for a package
that is not a folder on disk (a zip).
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any

import yaml

if TYPE_CHECKING:
    from importlib.resources.abc import Traversable

# libyaml's loader where PyYAML has it: the same data as yaml.safe_load, some 10x faster
# on the shipped rule files (part of every run's start-up).
_SAFE_LOADER: Any = getattr(yaml, "CSafeLoader", yaml.SafeLoader)
#: what reads the shipped YAML, for the keys of cached data built from it
YAML_TAG = f"PyYAML {yaml.__version__} {_SAFE_LOADER.__name__}".encode()


def data_dir(name: str) -> Traversable:
    """Return the shipped data folder ``name`` (``"rules"`` or ``"schemas"``)."""
    here = Path(__file__).resolve().parent
    for folder in (here / "_data" / name, here.parent / name):
        if folder.is_dir():
            return folder
    from importlib.resources import files

    packaged = files("rulecheck") / "_data" / name
    if packaged.is_dir():
        return packaged
    raise FileNotFoundError(f"rulecheck data folder {name!r} is missing from this installation")


def read_text(folder: str, filename: str) -> str:
    """Read one shipped data file as UTF-8 text."""
    return (data_dir(folder) / filename).read_text(encoding="utf-8")


def load_yaml(text: str) -> Any:
    """Shipped YAML data (trusted text) as plain Python data, with the C loader."""
    return yaml.load(text, Loader=_SAFE_LOADER)  # noqa: S506 - a safe loader


def read_yaml(folder: str, filename: str) -> Any:
    """One shipped YAML data file as plain Python data (a fresh copy on every call), from the
    per-user cache (:mod:`rulecheck.cache`) when it holds the same file read by the same
    PyYAML: PyYAML builds the objects in Python even behind the C parser, and the small
    data files (profiles, arresters, Hunter's table) cost some 10 ms of every start-up."""
    from rulecheck.cache import cached

    blob = (data_dir(folder) / filename).read_bytes()
    return cached(
        f"data-{folder}-{Path(filename).stem}",
        [blob, YAML_TAG],
        ("rulecheck.resources",),
        lambda: load_yaml(read_text(folder, filename)),
    )
