"""Mutated layouts never crash the checker (property tests with hypothesis).

Each example takes a bundled sample (``samples/*.yaml``), breaks it in one way
-- a key deleted, a value replaced by a random scalar, list or mapping, a list
entry duplicated, two ids swapped, the text cut at a random point -- and runs
``rulecheck.cli.main(["check", file])``. Whatever the damage, the process must
not raise, must exit 0, 1 or 2, and must print neither a Python traceback nor
an "internal error" finding (a rule that crashed on input the loader let through).
"""

from __future__ import annotations

import contextlib
import copy
import io
import tempfile
from pathlib import Path
from typing import Any

import pytest
import yaml
from conftest import SAMPLES
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from rulecheck.cli import main

SAMPLE_FILES = sorted(SAMPLES.glob("*.yaml"))
TEXTS = {p.name: p.read_text(encoding="utf-8") for p in SAMPLE_FILES}
DATA = {name: yaml.safe_load(text) for name, text in TEXTS.items()}

SETTINGS = settings(
    max_examples=60,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large],
)

SCALARS = st.one_of(
    st.none(),
    st.booleans(),
    st.integers(-(10**6), 10**6),
    st.floats(allow_nan=True, allow_infinity=True),
    st.text(max_size=12),
    st.sampled_from(
        [
            "12 ft",
            "-3 ft",
            "0",
            "5 psi",
            "nan ft",
            "1e999 psi",
            "3/4",
            "1-1/4",
            "SVC",
            "P1",
            "J1",
            "cold",
            "hot",
            "hot-return",
            "",
            " ",
            "degF",
            "1 (ft",
            "copper-l",
            "lavatory",
            "A",
            "AA",
            "quick",
            "10 furlongz",
        ]
    ),
)
VALUES = st.one_of(
    SCALARS,
    st.lists(SCALARS, max_size=3),
    st.dictionaries(st.text(max_size=8), SCALARS, max_size=3),
)


def run_check(text: str) -> tuple[int, str]:
    """Write ``text`` to a temporary layout and run the CLI on it; return (code, all output)."""
    out, err = io.StringIO(), io.StringIO()
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "mutant.yaml"
        path.write_text(text, encoding="utf-8", errors="surrogatepass")
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            rc = main(["check", str(path)])
    return rc, out.getvalue() + err.getvalue()


def assert_survives(text: str) -> None:
    rc, output = run_check(text)
    assert rc in (0, 1, 2), output
    assert "Traceback" not in output, output
    assert "internal error" not in output, output


def _paths(node: Any, prefix: tuple = ()) -> list[tuple]:
    """Every path (tuple of keys / indices) to a node below the root."""
    found = []
    if isinstance(node, dict):
        items: Any = node.items()
    elif isinstance(node, list):
        items = enumerate(node)
    else:
        return found
    for key, child in items:
        found.append((*prefix, key))
        found.extend(_paths(child, (*prefix, key)))
    return found


def _get(node: Any, path: tuple) -> Any:
    for key in path:
        node = node[key]
    return node


_Dumper = getattr(yaml, "CSafeDumper", yaml.SafeDumper)


def _copy(data: Any) -> Any:
    return copy.deepcopy(data)


def _dump(data: Any) -> str:
    return yaml.dump(data, Dumper=_Dumper, sort_keys=False, allow_unicode=True)


def test_samples_are_there() -> None:
    assert SAMPLE_FILES, "no samples to mutate"
    for text in TEXTS.values():
        assert_survives(text)


@SETTINGS
@given(st.data())
def test_delete_a_key_or_entry(data: st.DataObject) -> None:
    doc = _copy(DATA[data.draw(st.sampled_from(sorted(DATA)))])
    path = data.draw(st.sampled_from(_paths(doc)))
    parent = _get(doc, path[:-1])
    del parent[path[-1]]
    assert_survives(_dump(doc))


@SETTINGS
@given(st.data())
def test_replace_a_value(data: st.DataObject) -> None:
    doc = _copy(DATA[data.draw(st.sampled_from(sorted(DATA)))])
    path = data.draw(st.sampled_from(_paths(doc)))
    _get(doc, path[:-1])[path[-1]] = data.draw(VALUES)
    assert_survives(_dump(doc))


@SETTINGS
@given(st.data())
def test_duplicate_an_entry(data: st.DataObject) -> None:
    doc = _copy(DATA[data.draw(st.sampled_from(sorted(DATA)))])
    lists = [p for p in _paths(doc) if isinstance(_get(doc, p), list) and _get(doc, p)]
    path = data.draw(st.sampled_from(lists))
    items = _get(doc, path)
    index = data.draw(st.integers(0, len(items) - 1))
    items.insert(index, _copy(items[index]))
    assert_survives(_dump(doc))


@SETTINGS
@given(st.data())
def test_swap_two_ids(data: st.DataObject) -> None:
    doc = _copy(DATA[data.draw(st.sampled_from(sorted(DATA)))])
    owners = [p for p in _paths(doc) if isinstance(_get(doc, p), dict) and "id" in _get(doc, p)]
    first, second = data.draw(
        st.lists(st.sampled_from(owners), min_size=2, max_size=2, unique=True)
    )
    a, b = _get(doc, first), _get(doc, second)
    a["id"], b["id"] = b["id"], a["id"]
    assert_survives(_dump(doc))


@SETTINGS
@given(st.data())
def test_rename_a_reference(data: st.DataObject) -> None:
    """Point one reference (from, to, cold, hot, at, on, inlet, outlet, element) elsewhere."""
    doc = _copy(DATA[data.draw(st.sampled_from(sorted(DATA)))])
    refs = [
        p
        for p in _paths(doc)
        if p and p[-1] in ("from", "to", "cold", "hot", "at", "on", "inlet", "outlet", "element")
    ]
    ids = [
        _get(doc, p)["id"]
        for p in _paths(doc)
        if isinstance(_get(doc, p), dict) and "id" in _get(doc, p)
    ]
    path = data.draw(st.sampled_from(refs))
    _get(doc, path[:-1])[path[-1]] = data.draw(st.sampled_from(ids))
    assert_survives(_dump(doc))


@SETTINGS
@given(st.data())
def test_truncate_the_text(data: st.DataObject) -> None:
    text = TEXTS[data.draw(st.sampled_from(sorted(TEXTS)))]
    cut = data.draw(st.integers(0, len(text)))
    assert_survives(text[:cut])


@SETTINGS
@given(st.data())
def test_insert_random_characters(data: st.DataObject) -> None:
    text = TEXTS[data.draw(st.sampled_from(sorted(TEXTS)))]
    at = data.draw(st.integers(0, len(text)))
    junk = data.draw(
        st.text(
            alphabet=st.sampled_from(list("{}[]:,-#&*!|>'\"%@`\t\n ?0aZ.")), min_size=1, max_size=4
        )
    )
    assert_survives(text[:at] + junk + text[at:])


@pytest.mark.parametrize(
    "text",
    [
        "version: 1\nproject: &a {name: x, units: us}\nsupplies: *a\npipes: []\n",
        "a: &x [*x]\n",
        "version: !!python/object:os.system 1\n",
        "? [a, b]\n: 1\n",
        "---\nversion: 1\n---\nversion: 1\n",
        "version: 1\nproject: {name: x}\nsupplies: [{id: S, pressure: 1}]\npipes: []\n",
        "- 1\n- 2\n",
        "just text\n",
        "42\n",
    ],
    ids=[
        "alias-as-list",
        "recursive-alias",
        "python-tag",
        "complex-key",
        "two-documents",
        "no-pipes",
        "top-level-list",
        "top-level-text",
        "top-level-number",
    ],
)
def test_odd_yaml(text: str) -> None:
    assert_survives(text)
