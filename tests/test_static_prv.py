"""static-pressure applies downstream of the service point, after any reducing valve.

engineering-basis §9 (`static-pressure` row): the 80 psi maximum [S: UPC 608.2; IPC 604.8
partly confirmed] is judged at the points of the building's distribution, after any
pressure-reducing device upstream of them; a supply over the limit whose every outgoing
path is reduced is compliant (IPC 604.8 asks for the reducing valve, not a lower main).
Static pressure falls 0.433 psi per foot of rise [CP: ρ·g for water at 15 °C].
"""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

from conftest import SAMPLES, locate

from rulecheck.pipeline import analyse_file

PSI = 6894.757293168361  # [Pa] [S: NIST SP 811, 1 lbf/in²]

# A street main at 85–95 psi feeds the building through P1, which carries a PRV set to
# 65 psi (an invented scenario). Every point in the building sits at 65 psi or less.
REDUCED = """\
version: 1
project: {name: PRV at the service entrance, units: us}
supplies:
  - {id: SVC, pressure: {min: 85 psi, max: 95 psi}, elevation: 0 ft}
points:
  - {id: J1, elevation: 0 ft}
  - {id: J2, elevation: 0 ft}
  - {id: J3, elevation: 10 ft}
pipes:
  - {id: P1, from: SVC, to: J1, material: copper-l, size: 1-1/4, length: 20 ft, service: cold}
  - {id: P2, from: J1, to: J2, material: copper-l, size: 1, length: 30 ft, service: cold}
  - {id: P3, from: J1, to: J3, material: copper-l, size: 3/4, length: 25 ft, service: cold}
fixtures:
  - {id: WC1, type: water-closet-tank, cold: J2, valve: {closing: slow, closure_time: 10 s}}
  - {id: WC2, type: water-closet-tank, cold: J3, valve: {closing: slow, closure_time: 10 s}}
devices:
  - {id: PRV1, kind: pressure-reducing, on: P1, set_pressure: 65 psi}
"""

# The same main, with a second branch P4 straight off the supply to an outdoor hose bibb
# point K1 with no reducing valve, and K2 behind it.
ONE_BRANCH_UNREDUCED = REDUCED.replace(
    "  - {id: J3, elevation: 10 ft}\n",
    "  - {id: J3, elevation: 10 ft}\n  - {id: K1, elevation: 0 ft}\n"
    "  - {id: K2, elevation: 0 ft}\n",
).replace(
    "fixtures:\n",
    "  - {id: P4, from: SVC, to: K1, material: copper-l, size: 3/4, length: 15 ft, "
    "service: cold}\n"
    "  - {id: P5, from: K1, to: K2, material: copper-l, size: 3/4, length: 10 ft, "
    "service: cold}\n"
    "fixtures:\n"
    "  - {id: WC3, type: water-closet-tank, cold: K2, valve: {closing: slow, "
    "closure_time: 10 s}}\n",
)


def _static_findings(cli: Callable[..., tuple[int, str, str]], path: Path) -> list[dict]:
    rc, out, err = cli("check", path, "--format", "json", "--fail-on", "never")
    assert rc == 0, out + err
    (entry,) = json.loads(out)["files"]
    return [f for f in entry["findings"] if f["rule"] == "static-pressure"]


def test_reduced_service_has_no_static_finding(
    write_layout: Callable[..., Path], cli: Callable[..., tuple[int, str, str]]
) -> None:
    """95 psi at the service point, 65 psi after PRV1: compliant, no finding."""
    path = write_layout(REDUCED)
    analysis = analyse_file(path)
    assert analysis.static_max["SVC"] > 80 * PSI  # the supply itself is over 80 psi
    assert max(v for k, v in analysis.static_max.items() if k != "SVC") <= 65 * PSI + 1e-6
    assert _static_findings(cli, path) == []


def test_unreduced_branch_names_its_first_point(
    write_layout: Callable[..., Path], cli: Callable[..., tuple[int, str, str]]
) -> None:
    """The reduced branch stays quiet; the unreduced one is reported once, at K1 (its first
    point), counting K2 behind it, and the fix asks for a valve on P4."""
    path = write_layout(ONE_BRANCH_UNREDUCED)
    (finding,) = _static_findings(cli, path)
    assert finding["element"] == "K1"
    assert (finding["line"], finding["column"]) == locate(ONE_BRANCH_UNREDUCED, "{id: K1")
    assert abs(finding["measured"] / PSI - 95) < 1e-3  # level with the supply: 95 psi
    assert "1 more point downstream" in finding["message"] and "K2" in finding["message"]
    assert "pipe P4" in finding["fix"]


def test_reducer_set_too_high_is_reported_after_it(
    write_layout: Callable[..., Path], cli: Callable[..., tuple[int, str, str]]
) -> None:
    """A PRV set at 85 psi: the first point after it (J1) is reported, not the supply, and
    the fix is to lower that valve's setting."""
    path = write_layout(REDUCED, ("set_pressure: 65 psi", "set_pressure: 85 psi"))
    (finding,) = _static_findings(cli, path)
    assert finding["element"] == "J1"
    assert "PRV1" in finding["fix"] and "lower the set pressure" in finding["fix"]


def test_clinic_static_findings_are_downstream_of_its_prv(
    cli: Callable[..., tuple[int, str, str]],
) -> None:
    """The clinic's PRV1 sits on M1 (MAIN → B1) at 560 kPa, just over the 552 kPa limit:
    any static finding names a point at or after B1, never the service point MAIN."""
    path = SAMPLES / "fernhill-clinic.yaml"
    analysis = analyse_file(path)
    m1 = next(p for p in analysis.layout.pipes if p.id == "M1")
    findings = _static_findings(cli, path)
    for finding in findings:
        node = finding["element"]
        service = analysis.network.service_of(node)
        route = [analysis.layout.pipes[i].id for i in analysis.network.path_up(node, service)]
        if service == "hot":  # through the heater to its cold inlet
            heater = analysis.layout.heaters[0]
            route += [
                analysis.layout.pipes[i].id for i in analysis.network.path_up(heater.inlet, "cold")
            ]
        assert m1.id in route, f"{node} is not downstream of PRV1"
        assert node != "MAIN"
