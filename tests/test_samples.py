"""Every bundled sample gives exactly the findings recorded beside it (regression check)."""

from __future__ import annotations

import importlib.util
import json
import os
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
# the expected files are by definition what this script writes: share its projection
_spec = importlib.util.spec_from_file_location(
    "update_expected", ROOT / "scripts" / "update_expected.py"
)
update_expected = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(update_expected)
SAMPLES = sorted((ROOT / "samples").glob("*.yaml"))


def test_there_are_samples_of_three_scales() -> None:
    assert len(SAMPLES) >= 3


@pytest.mark.parametrize("sample", SAMPLES, ids=lambda p: p.stem)
def test_sample_matches_expected(sample: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.chdir(ROOT)
    expected = json.loads(sample.with_suffix(".expected.json").read_text(encoding="utf-8"))
    got = update_expected.expected_for(Path(os.path.relpath(sample, ROOT)))
    assert got == expected


def test_one_sample_is_clean() -> None:
    clean = [
        s
        for s in SAMPLES
        if json.loads(s.with_suffix(".expected.json").read_text(encoding="utf-8")) == []
    ]
    assert clean, "at least one sample must come out clean"


def test_restaurant_and_clinic_exercise_every_surge_rule() -> None:
    surge_rules = {
        "closure-time",
        "surge-peak",
        "column-separation",
        "arrester-required",
        "arrester-capacity",
        "arrester-kind",
    }
    seen: set[str] = set()
    for name in ("corner-bistro", "fernhill-clinic"):
        seen |= {
            f["rule"]
            for f in json.loads(
                (ROOT / "samples" / f"{name}.expected.json").read_text(encoding="utf-8")
            )
        }
    assert surge_rules <= seen
