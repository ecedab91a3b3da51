"""The compiled schema check's ``const`` (which no longer imports jsonschema for texts and
numbers) against jsonschema's own equality, the reference, on values of every JSON type."""

from __future__ import annotations

import pytest
from jsonschema._utils import equal

from rulecheck.input.schema import _const

VALUES = [1, 1.0, 0, True, False, None, "1", "us", "", 2.5, [1], {"a": 1}, float("nan"), -0.0]


@pytest.mark.parametrize("const", [1, 0, 1.0, 2.5, "us", "", "1", -0.0])
def test_const_agrees_with_jsonschema(const: object) -> None:
    check = _const(const)
    for value in VALUES:
        assert check(value) == bool(equal(value, const)), (value, const)
