"""The per-user cache of built data (rulecheck.cache): the built-in catalog and the rule data
read from it equal a fresh read; a change to a source file or to the building code makes a
new file; a corrupt file is ignored and built again; an unwritable folder falls back to
building every run."""

from __future__ import annotations

import os
import pickle
import shutil
import sys
from pathlib import Path

import pytest
from conftest import REPO

from rulecheck import cache
from rulecheck.input import catalog, rulebook
from rulecheck.resources import load_yaml, read_yaml


@pytest.fixture
def folder(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """A cache folder of the test's own, and the memoised built-ins forgotten around it."""
    where = tmp_path / "cache"
    _use(monkeypatch, where, where / "spare")
    catalog.builtin_catalog.cache_clear()
    rulebook.rule_specs.cache_clear()
    yield where
    catalog.builtin_catalog.cache_clear()
    rulebook.rule_specs.cache_clear()


def _use(monkeypatch: pytest.MonkeyPatch, first: Path, spare: Path) -> None:
    monkeypatch.setattr(cache, "user_cache_dir", lambda: first)
    monkeypatch.setattr(cache, "spare_cache_dir", lambda: spare)


def _counting(value: object) -> tuple[list[int], object]:
    calls: list[int] = []

    def build() -> object:
        calls.append(1)
        return value

    return calls, build


def _fresh_catalog() -> catalog.Catalog:
    rules = REPO / "rules"
    return catalog.read_builtin_catalog(
        (rules / catalog.MATERIALS_FILE).read_text(encoding="utf-8"),
        (rules / catalog.FIXTURE_TYPES_FILE).read_text(encoding="utf-8"),
    )


def test_catalog_and_rules_from_the_cache_equal_a_fresh_read(folder: Path) -> None:
    first = catalog.builtin_catalog()
    specs = rulebook.rule_specs()
    assert len(list(folder.glob("catalog-*.pickle"))) == 1
    assert len(list(folder.glob("rule-specs-*.pickle"))) == 1
    catalog.builtin_catalog.cache_clear()
    rulebook.rule_specs.cache_clear()
    again = catalog.builtin_catalog()
    assert again is not first  # read back from the file, not the memo
    assert again == first == _fresh_catalog()
    assert list(again.materials) == list(first.materials)  # order too (catalog listings)
    texts = [(REPO / "rules" / n).read_text(encoding="utf-8") for n in rulebook.RULE_FILES]
    assert rulebook.rule_specs() == specs == rulebook.read_rule_specs(texts)


def test_same_sources_build_once(folder: Path) -> None:
    calls, build = _counting({"a": 1})
    assert cache.cached("t", [b"x"], ["rulecheck.cache"], build) == {"a": 1}
    assert cache.cached("t", [b"x"], ["rulecheck.cache"], build) == {"a": 1}
    assert len(calls) == 1


def test_changed_source_is_built_again(folder: Path) -> None:
    calls, build = _counting([1])
    cache.cached("t", [b"old"], ["rulecheck.cache"], build)
    calls2, build2 = _counting([2])
    assert cache.cached("t", [b"new"], ["rulecheck.cache"], build2) == [2]
    assert (len(calls), len(calls2)) == (1, 1)


def test_changed_code_is_built_again(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    module = tmp_path / "cache_probe_mod.py"
    module.write_text("X = 1\n", encoding="utf-8")
    monkeypatch.syspath_prepend(str(tmp_path))
    before = cache.cache_key("t", [b"x"], ["cache_probe_mod"])
    module.write_text("X = 2\n", encoding="utf-8")
    assert cache.cache_key("t", [b"x"], ["cache_probe_mod"]) != before
    sys.modules.pop("cache_probe_mod", None)


def test_changed_catalog_file_is_read_again(
    folder: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """End to end: a shipped file edited after the cache was filled gives the new data."""
    rules = tmp_path / "rules"
    shutil.copytree(REPO / "rules", rules)
    monkeypatch.setattr(catalog, "data_dir", lambda name: rules)
    name = next(iter(catalog.builtin_catalog().materials.values())).name
    text = (rules / catalog.MATERIALS_FILE).read_text(encoding="utf-8")
    assert text.count(f"name: {name}\n") == 1
    (rules / catalog.MATERIALS_FILE).write_text(
        text.replace(f"name: {name}\n", "name: Renamed for the test\n"), encoding="utf-8"
    )
    catalog.builtin_catalog.cache_clear()
    first = next(iter(catalog.builtin_catalog().materials.values()))
    assert first.name == "Renamed for the test"
    assert len(list(folder.glob("catalog-*.pickle"))) == 2


def test_shipped_yaml_from_the_cache_is_a_fresh_equal_copy(folder: Path) -> None:
    fresh = load_yaml((REPO / "rules" / "profiles.yaml").read_text(encoding="utf-8"))
    first = read_yaml("rules", "profiles.yaml")
    assert len(list(folder.glob("data-rules-profiles-*.pickle"))) == 1
    again = read_yaml("rules", "profiles.yaml")  # from the file
    assert first == again == fresh
    again["default"] = "changed by a caller"
    assert read_yaml("rules", "profiles.yaml") == fresh


def test_corrupt_file_is_ignored_and_rebuilt(folder: Path) -> None:
    catalog.builtin_catalog()
    (path,) = folder.glob("catalog-*.pickle")
    path.write_bytes(b"\x80\x05not a pickle at all")
    catalog.builtin_catalog.cache_clear()
    assert catalog.builtin_catalog() == _fresh_catalog()
    assert pickle.loads(path.read_bytes()) == _fresh_catalog()  # written again, whole


def test_truncated_file_is_ignored(folder: Path) -> None:
    catalog.builtin_catalog()
    (path,) = folder.glob("catalog-*.pickle")
    path.write_bytes(path.read_bytes()[:1000])
    catalog.builtin_catalog.cache_clear()
    assert catalog.builtin_catalog() == _fresh_catalog()


def test_unwritable_folder_falls_back(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    blocker = tmp_path / "a-file"
    blocker.write_text("not a folder", encoding="utf-8")
    _use(monkeypatch, blocker / "cache", blocker / "spare")
    calls, build = _counting("built")
    assert cache.cached("t", [b"x"], ["rulecheck.cache"], build) == "built"
    assert cache.cached("t", [b"x"], ["rulecheck.cache"], build) == "built"
    assert len(calls) == 2  # nothing could be kept: built every time
    catalog.builtin_catalog.cache_clear()
    try:
        assert catalog.builtin_catalog() == _fresh_catalog()
    finally:
        catalog.builtin_catalog.cache_clear()
    assert blocker.read_text(encoding="utf-8") == "not a folder"


def test_second_folder_when_the_first_cannot_be_written(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    blocker = tmp_path / "a-file"
    blocker.write_text("", encoding="utf-8")
    spare = tmp_path / "spare"
    _use(monkeypatch, blocker / "cache", spare)
    calls, build = _counting(3)
    cache.cached("t", [b"x"], ["rulecheck.cache"], build)
    assert cache.cached("t", [b"x"], ["rulecheck.cache"], build) == 3
    assert len(calls) == 1
    assert len(list(spare.glob("t-*.pickle"))) == 1


@pytest.mark.skipif(not hasattr(os, "getuid") or os.getuid() != 0, reason="needs chown")
def test_file_of_another_user_is_not_read(folder: Path) -> None:
    calls, build = _counting("mine")
    cache.cached("t", [b"x"], ["rulecheck.cache"], build)
    (path,) = folder.glob("t-*.pickle")
    path.write_bytes(pickle.dumps("planted"))
    os.chown(path, 54321, -1)
    assert cache.cached("t", [b"x"], ["rulecheck.cache"], build) == "mine"
    assert len(calls) == 2


def test_cache_dirs_order(monkeypatch: pytest.MonkeyPatch, tmp_path: Path) -> None:
    monkeypatch.setenv("RULECHECK_CACHE_DIR", str(tmp_path / "given"))
    assert cache.cache_dirs()[0] == tmp_path / "given"
    monkeypatch.delenv("RULECHECK_CACHE_DIR")
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path / "xdg"))
    assert cache.cache_dirs()[0] == tmp_path / "xdg" / "rulecheck"
    assert cache.cache_dirs()[1].name.startswith("rulecheck-")
