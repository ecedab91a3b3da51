"""Edge cases found in review: stray unit punctuation, WSFU totals, a fixture on a root."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import pytest
from conftest import MINIMAL, locate, tweak

from rulecheck.cli import main
from rulecheck.pipeline import analyse_file, check_file
from rulecheck.units import QuantityError, to_si


@pytest.mark.parametrize("text", ["20 ft!", "20 ft;", "20 (ft", "20 ft,"])
def test_stray_punctuation_is_not_a_unit(text: str) -> None:
    """pint would read '20 ft!' as 20 ft; a typo must not pass silently."""
    with pytest.raises(QuantityError, match="unknown unit"):
        to_si(text, "length", "us")


def test_stray_punctuation_is_reported_at_its_node(
    write_layout: Callable[..., Path], capsys: pytest.CaptureFixture[str]
) -> None:
    text = tweak(MINIMAL, ("length: 20 ft", "length: 20 ft!"))
    path = write_layout(text)
    assert main(["check", str(path)]) == 2
    line, column = locate(text, "20 ft!")
    assert f"{path}:{line}:{column}: error:" in capsys.readouterr().err


def test_wsfu_total_defaults_to_cold_plus_hot_in_layouts_and_catalog_entries(
    write_layout: Callable[..., Path],
) -> None:
    """One rule for a missing 'total' wherever a {cold, hot} mapping appears: the sum,
    which errs high against the IPC totals [D]."""
    local_type = """fixture_types:
  - id: test-sink
    wsfu: {cold: 1.0, hot: 0.5}
    flow: 2 gpm
    min_pressure: 8 psi
    source: "test entry"
"""
    text = tweak(
        MINIMAL,
        (
            "type: water-closet-tank, cold: J1,",
            "type: test-sink, wsfu: {cold: 2.0, hot: 1.0}, cold: J1,",
        ),
        append=local_type,
    )
    analysis = analyse_file(write_layout(text))
    assert analysis.layout.fixtures[0].wsfu.total == pytest.approx(3.0)
    text = tweak(MINIMAL, ("type: water-closet-tank", "type: test-sink"), append=local_type)
    analysis = analyse_file(write_layout(text, name="second.yaml"))
    assert analysis.layout.fixtures[0].wsfu.total == pytest.approx(1.5)


def test_fixture_straight_on_a_heater_outlet_has_no_column_to_stop(
    write_layout: Callable[..., Path],
) -> None:
    """No pipe between the heater outlet and the valve: nothing to stop, so no surge and no
    arrester is demanded; the same appliance one pipe further on is demanded one."""
    text = tweak(
        MINIMAL,
        (
            "  - {id: J1, elevation: 0 ft}",
            "  - {id: J1, elevation: 0 ft}\n  - {id: H0}\n  - {id: H1}",
        ),
        (
            "service: cold}",
            "service: cold}\n  - {id: P2, from: H0, to: H1, material: copper-l, "
            "size: 1/2, length: 30 ft, service: hot}",
        ),
        append="heaters:\n  - {id: WH1, inlet: J1, outlet: H0}\n",
    )
    on_outlet = tweak(
        text, ("fixtures:\n", "fixtures:\n  - {id: DW1, type: dishwasher, hot: H0}\n")
    )
    result = check_file(write_layout(on_outlet))
    event = next(e for e in result.analysis.surge.events if e.fixture.id == "DW1")
    assert event.path == () and event.surge == 0.0 and not event.quick
    assert not [f for f in result.findings if f.element == "DW1"]
    one_pipe_on = tweak(
        text, ("fixtures:\n", "fixtures:\n  - {id: DW1, type: dishwasher, hot: H1}\n")
    )
    result = check_file(write_layout(one_pipe_on, name="second.yaml"))
    assert "arrester-required" in {f.rule for f in result.findings if f.element == "DW1"}


def test_absurd_quantities_are_input_errors(
    write_layout: Callable[..., Path], capsys: pytest.CaptureFixture[str]
) -> None:
    """1e300 gpm would overflow the friction; it is refused where it is written."""
    text = tweak(MINIMAL, ("service: cold}", "service: cold, demand: 1e300 gpm}"))
    path = write_layout(text)
    assert main(["check", str(path)]) == 2
    line, column = locate(text, "1e300 gpm")
    err = capsys.readouterr().err
    assert f"{path}:{line}:{column}: error:" in err and "far outside" in err
    assert to_si("117 GPa", "pressure", "si") == pytest.approx(117e9)  # real moduli still pass


def test_the_garbage_collector_is_restored_after_each_file(
    write_layout: Callable[..., Path],
) -> None:
    """The pipeline pauses the cyclic collector per file (benchmarks/bench_check.py shows
    why); it must come back as it was, also when the file has input errors."""
    import gc

    from rulecheck.errors import InputError

    assert gc.isenabled()
    check_file(write_layout())
    assert gc.isenabled()
    with pytest.raises(InputError):
        check_file(write_layout(tweak(MINIMAL, ("length: 20 ft", "length: 20 psi"))))
    assert gc.isenabled()
    gc.disable()
    try:
        check_file(write_layout())
        assert not gc.isenabled()  # a caller's choice is left alone
    finally:
        gc.enable()
