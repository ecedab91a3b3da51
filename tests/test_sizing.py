# ruff: noqa: E501  (layout text and table rows read best on one line)
"""`rulecheck size`: exactness, local optimality, the sized samples, the written file.

Outside references: scipy's MILP solver (HiGHS) for the least-material optimum of each
sample, brute-force enumeration for random small trees, and the friction-loss-per-100-ft
method of IPC Appendix E (2018 IPC, Section E103.3, from memory; verify against the
adopted edition) for a hand-sized line.
"""

from __future__ import annotations

import itertools
import math
import random
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from scipy.optimize import Bounds, LinearConstraint, milp

from rulecheck.analysis import analyse
from rulecheck.analysis.sizing import (
    catalog_order,
    inch_labelled,
    nominal_inches,
    size_pipes,
    sized_layout,
)
from rulecheck.analysis.sizing_data import nominal
from rulecheck.analysis.steady import device_effect, steady_state
from rulecheck.cli import main
from rulecheck.engine.context import Settings
from rulecheck.engine.run import run_rules
from rulecheck.input import load_layout
from rulecheck.input.network import build_network
from rulecheck.physics.constants import STANDARD_GRAVITY
from rulecheck.sizing_run import code_minimums, size_file, velocity_limits

SAMPLES = sorted(Path(__file__).parent.parent.joinpath("samples").glob("*.yaml"))
HELD = {"velocity-limit", "residual-pressure", "arrester-required"}


def _steady(layout):
    return steady_state(layout, build_network(layout))


@pytest.mark.parametrize("path", SAMPLES, ids=lambda p: p.stem)
def test_sized_samples_pass_the_held_rules(path: Path) -> None:
    result = size_file(path)
    assert result.sizing.feasible
    held = [f for f in result.findings if f.rule in HELD]
    assert held == []
    # the sizing's own pressures are the analysis's pressures of the sized layout
    for node, value in result.sizing.residual.items():
        assert value == pytest.approx(result.analysis.residual[node], abs=1e-6)


def _pipe_drops(layout):
    """Friction drop of every (pipe, size), by the analysis itself on layouts at each size."""
    drops: dict[tuple[int, str], float] = {}
    labels = sorted({label for p in layout.pipes for label in p.material.sizes})
    for label in labels:
        pipes = []
        for p in layout.pipes:
            if label in p.material.sizes:
                od, wall = p.material.sizes[label]
                p = replace(p, size=label, outside_diameter=od, wall=wall)
            pipes.append(p)
        steady = _steady(replace(layout, pipes=pipes))
        for i, p in enumerate(pipes):
            if p.size == label:
                drops[(i, label)] = float(steady.friction_drop[i])
    return drops


def _milp_optimum(path: Path) -> float:
    """Least Σ length × OD under the same constraints, by scipy's MILP (HiGHS)."""
    layout = load_layout(path)
    steady = _steady(layout)
    net = steady.network
    limits = velocity_limits(steady, Settings())
    minimum = code_minimums(layout)
    drops = _pipe_drops(layout)
    tree_pipes = sorted(i for t in net.trees.values() for i in t.parent.values())
    prv = [d for d in layout.devices if d.kind == "pressure-reducing"]
    variables: list[tuple[int, str]] = []
    for i in tree_pipes:
        p = layout.pipes[i]
        keep = p.keep_size or (steady.flow[i] <= 0 and steady.fixtures_served[i] == 0)
        for label in catalog_order(p):
            od, wall = p.material.sizes[label]
            if keep and label != p.size:
                continue
            if (
                not keep
                and float(steady.flow[i]) / (math.pi * (od - 2 * wall) ** 2 / 4) > limits[i]
            ):
                continue
            m = minimum.get(p.id)
            if not keep and m and inch_labelled(p) and nominal_inches(label) < m.inches - 1e-9:
                continue
            variables.append((i, label))
    index = {v: n for n, v in enumerate(variables)}
    cost = np.array(
        [layout.pipes[i].length * layout.pipes[i].material.sizes[s][0] for i, s in variables]
    )
    rows, lo, hi = [], [], []
    for i in tree_pipes:
        row = np.zeros(len(variables))
        for (j, _s), n in index.items():
            if j == i:
                row[n] = 1
        rows.append(row), lo.append(1), hi.append(1)
    z = net.elevation
    rho_g = {s: steady.water_for(s).density * STANDARD_GRAVITY for s in ("cold", "hot")}
    on = {}
    for d in layout.devices:
        on.setdefault(d.on, []).append(d)

    def path_terms(point: str, service: str):
        """(constant loss, pipe indices) from the supply to ``point``."""
        pipes_up = net.path_up(point, service)
        const = 0.0
        for i in pipes_up:
            p = layout.pipes[i]
            const += rho_g[p.service if p.service == "cold" else "hot"] * (z[p.end] - z[p.start])
            const += device_effect(on.get(p.id, ()))[0]
        root = layout.pipes[pipes_up[-1]].start if pipes_up else point
        heater = net.heater_at_outlet.get(root)
        if heater is not None:
            const += rho_g["hot"] * (z[heater.outlet] - z[heater.inlet]) + heater.loss
            c2, more, root = path_terms(heater.inlet, "cold")
            return const + c2, pipes_up + more, root
        return const, pipes_up, root

    best = math.inf
    # a reducing valve may sit only on a supply's own pipe here: enumerate that pipe's size
    prv_pipes = {d.on for d in prv}
    assert len(prv_pipes) <= 1
    prv_index = next((i for i in tree_pipes if layout.pipes[i].id in prv_pipes), None)
    choices = [None] if prv_index is None else [s for (i, s) in variables if i == prv_index]
    for fixed in choices:
        r, lo_, hi_ = list(rows), list(lo), list(hi)
        if fixed is not None:
            row = np.zeros(len(variables))
            row[index[(prv_index, fixed)]] = 1
            r.append(row), lo_.append(1), hi_.append(1)
        for fx in layout.fixtures:
            for service, point in (("cold", fx.cold), ("hot", fx.hot)):
                if point is None:
                    continue
                const, up, root = path_terms(point, service)
                supply = next(s for s in layout.supplies if s.id == root)
                row = np.zeros(len(variables))
                start = supply.pressure_min
                for i in up:
                    if i == prv_index:  # the valve caps what passes: a constant per size
                        p = layout.pipes[i]
                        loss, cap = device_effect(on[p.id])
                        lift = rho_g["cold"] * (z[p.end] - z[p.start])
                        start = min(start - lift - drops[(i, fixed)] - loss, cap)
                        const -= lift + loss
                        continue
                    for (j, s_), n in index.items():
                        if j == i:
                            row[n] += drops[(j, s_)]
                (
                    r.append(row),
                    lo_.append(-np.inf),
                    hi_.append(start - const - fx.min_pressure - 1e-6),
                )
        for node, i in itertools.chain.from_iterable(t.parent.items() for t in net.trees.values()):
            p = layout.pipes[i]
            for _c_node, c in itertools.chain.from_iterable(
                t.parent.items() for t in net.trees.values()
            ):
                child = layout.pipes[c]
                if child.start != node or p.keep_size or child.keep_size:
                    continue
                row = np.zeros(len(variables))
                for (j, s), n in index.items():  # the sizer's order measure (metric: bore)
                    if j == c:
                        row[n] += nominal(child, s, inch_labelled(child))
                    if j == i:
                        row[n] -= nominal(p, s, inch_labelled(p))
                if any(row):
                    r.append(row), lo_.append(-np.inf), hi_.append(1e-9)
        res = milp(
            cost,
            constraints=LinearConstraint(np.array(r), lo_, hi_),
            integrality=np.ones(len(variables)),
            bounds=Bounds(0, 1),
        )
        if res.status == 0:
            best = min(best, res.fun)
    fixed_cost = sum(
        p.length * p.outside_diameter for n, p in enumerate(layout.pipes) if n not in tree_pipes
    )
    return best + fixed_cost


@pytest.mark.parametrize("path", SAMPLES, ids=lambda p: p.stem)
def test_samples_least_material_equals_milp(path: Path) -> None:
    """The sizing's material equals the MILP optimum (scipy.optimize.milp, HiGHS)."""
    result = size_file(path)
    assert result.sizing.material_after == pytest.approx(_milp_optimum(path), rel=1e-9)


@pytest.mark.parametrize("path", SAMPLES, ids=lambda p: p.stem)
def test_local_optimality_each_smaller_size_breaks_a_named_constraint(path: Path) -> None:
    result = size_file(path)
    sized = sized_layout(result.layout, result.sizing.sizes)
    steady = _steady(sized)
    limits = velocity_limits(steady, Settings())
    minimum = code_minimums(sized)
    tried = 0
    for i, pipe in enumerate(sized.pipes):
        reason = result.sizing.reasons.get(pipe.id, "")
        if reason.startswith("kept") or pipe.service == "hot-return":
            continue
        labels = catalog_order(pipe)
        k = labels.index(pipe.size)
        if k == 0:
            assert reason == "smallest catalog size"
            continue
        smaller = labels[k - 1]
        shrunk = sized_layout(sized, {pipe.id: smaller})
        s2 = _steady(shrunk)
        broken = []
        if float(s2.velocity[i]) > limits[i]:
            broken.append("velocity")
        if any(s2.fixture_residual(f)[0] < f.min_pressure for f in shrunk.fixtures):
            broken.append("pressure")
        m = minimum.get(pipe.id)
        if m and inch_labelled(pipe) and nominal_inches(smaller) < m.inches:
            broken.append("code minimum")
        kids = [p for p in sized.pipes if p.start == pipe.end and not p.keep_size]
        here = nominal(pipe, smaller, inch_labelled(pipe))
        if any(nominal(c, c.size, inch_labelled(c)) > here for c in kids):
            broken.append("downstream order")
        assert broken, f"{pipe.id} could be {smaller}"
        for name in broken:
            assert name in reason, (pipe.id, name, reason)
        tried += 1
    assert tried > 0


def _random_layout(rng: random.Random, tmp: Path, n: int) -> Path:
    """A random cold tree of ``n`` pipes, one material of 5 sizes, fixtures at its leaves."""
    lines = [
        "version: 1",
        "project: {name: random tree, units: us, profile: ipc}",
        f"supplies: [{{id: S, pressure: {rng.uniform(30, 70):.1f} psi, elevation: 0 ft}}]",
        "materials:",
        "  - {id: tube-x, name: test tube, family: copper, modulus: 117 GPa, poisson: 0.34,",
        "     roughness: 0.0015 mm, pressure_rating: [{temperature: 100 degF, pressure: 500 psi}],",
        '     sizes: {"3/8": {outside_diameter: 0.5 in, wall: 0.035 in}, "1/2": {outside_diameter: 0.625 in, wall: 0.04 in},',
        '             "3/4": {outside_diameter: 0.875 in, wall: 0.045 in}, "1": {outside_diameter: 1.125 in, wall: 0.05 in},',
        '             "1-1/4": {outside_diameter: 1.375 in, wall: 0.055 in}},',
        "     source: invented for a test}",
        "points:",
    ]
    nodes = ["S"]
    pipes = []
    for k in range(n):
        parent = rng.choice(nodes)
        node = f"J{k}"
        nodes.append(node)
        pipes.append((f"P{k}", parent, node))
        lines.append(f"  - {{id: {node}, elevation: {rng.uniform(0, 30):.1f} ft}}")
    lines.append("pipes:")
    for pid, a, b in pipes:
        keep = ", keep_size: true" if rng.random() < 0.1 else ""
        size = rng.choice(["3/8", "1/2", "3/4", "1", "1-1/4"])
        lines.append(
            f"  - {{id: {pid}, from: {a}, to: {b}, material: tube-x, size: {size}, "
            f"length: {rng.uniform(5, 120):.1f} ft, service: cold{keep}}}"
        )
    lines.append("fixtures:")
    leaves = [b for _, _, b in pipes if not any(a == b for _, a, _ in pipes)]
    types = ["water-closet-tank", "lavatory", "kitchen-sink", "shower", "hose-bibb"]
    for m, leaf in enumerate(leaves):
        lines.append(f"  - {{id: F{m}, type: {rng.choice(types)}, cold: {leaf}}}")
    path = tmp / f"tree-{n}-{rng.random():.6f}.yaml"
    path.write_text("\n".join(lines) + "\n")
    return path


def _exhaustive(layout) -> float | None:
    """The least Σ L·OD over every combination of sizes, checked by the analysis's own
    friction at each size and pressures summed along each path (no shortcuts)."""
    steady = _steady(layout)
    limits = velocity_limits(steady, Settings())
    minimum = code_minimums(layout)
    drops = _pipe_drops(layout)
    pipes = layout.pipes
    z = steady.network.elevation
    rho_g = steady.water_for("cold").density * STANDARD_GRAVITY
    supply = layout.supplies[0].pressure_min
    options = [[p.size] if p.keep_size else catalog_order(p) for p in pipes]
    by_id = {p.end: i for i, p in enumerate(pipes)}
    best = None
    for combo in itertools.product(*options):
        ok = True
        for i, (p, s) in enumerate(zip(pipes, combo, strict=True)):
            od, wall = p.material.sizes[s]
            if (
                not p.keep_size
                and float(steady.flow[i]) / (math.pi * (od - 2 * wall) ** 2 / 4) > limits[i]
            ):
                ok = False
            m = minimum.get(p.id)
            if not p.keep_size and m and nominal_inches(s) < m.inches:
                ok = False
            parent = by_id.get(p.start)
            if parent is not None and not p.keep_size and not pipes[parent].keep_size:
                if nominal_inches(s) > nominal_inches(combo[parent]):
                    ok = False
            if not ok:
                break
        if not ok:
            continue
        for fx in layout.fixtures:
            node, pressure = fx.cold, supply
            while node in by_id:
                i = by_id[node]
                pressure -= rho_g * (z[pipes[i].end] - z[pipes[i].start]) + drops[(i, combo[i])]
                node = pipes[i].start
            if pressure < fx.min_pressure + 1e-6:
                ok = False
                break
        if ok:
            cost = sum(p.length * p.material.sizes[s][0] for p, s in zip(pipes, combo, strict=True))
            best = cost if best is None else min(best, cost)
    return best


@pytest.mark.parametrize("seed", range(24))
def test_exact_against_exhaustive_search_on_random_trees(seed: int, tmp_path: Path) -> None:
    rng = random.Random(seed)
    layout = load_layout(_random_layout(rng, tmp_path, rng.randint(1, 7)))
    steady = _steady(layout)
    result = size_pipes(steady, velocity_limits(steady, Settings()), code_minimums(layout))
    expected = _exhaustive(layout)
    if expected is None:
        assert not result.feasible
    else:
        assert result.feasible
        assert result.material_after == pytest.approx(expected, rel=1e-12)


def test_infeasible_names_the_fixture_shortfall_and_remedies(tmp_path: Path, capsys) -> None:
    text = (
        "version: 1\nproject: {name: weak main, units: us}\n"
        "supplies: [{id: S, pressure: 20 psi, elevation: 0 ft}]\n"
        "points: [{id: J1, elevation: 30 ft}]\n"
        "pipes: [{id: P1, from: S, to: J1, material: copper-l, size: 1/2, length: 40 ft, service: cold}]\n"
        "fixtures: [{id: WC1, type: water-closet-tank, cold: J1}]\n"
    )
    path = tmp_path / "weak.yaml"
    path.write_text(text)
    out = tmp_path / "sized.yaml"
    assert main(["size", str(path), "--output", str(out)]) == 1
    said = capsys.readouterr().out
    assert "cannot be sized; nothing written" in said
    assert "fixture WC1 at J1" in said and "short" in said and "booster" in said
    assert "lower fixture" in said
    assert not out.exists()


def test_keep_size_is_kept_and_the_others_work_around_it(tmp_path: Path) -> None:
    text = (
        Path(SAMPLES[0])
        .read_text()
        .replace(
            "size: 1, length: 35 ft, service: cold}",
            "size: 1, length: 35 ft, service: cold, keep_size: true}",
        )
    )
    assert "keep_size" in text
    path = tmp_path / "kept.yaml"
    path.write_text(text)
    result = size_file(path)
    assert result.sizing.sizes["P7"] == "1"
    assert result.sizing.reasons["P7"] == "kept (keep_size)"
    assert not [f for f in result.findings if f.rule in HELD]


def test_corner_bistro_done_when(tmp_path: Path, capsys) -> None:
    """size --output writes a layout whose check has none of the held findings, whose diff
    touches only sizes and added arresters, every other byte as it was."""
    source = Path(__file__).parent.parent / "samples" / "corner-bistro.yaml"
    out = tmp_path / "sized.yaml"
    main(["size", str(source), "--output", str(out)])
    capsys.readouterr()
    findings = run_rules(analyse(load_layout(out)), Settings())
    assert not [f for f in findings if f.rule in HELD]
    before = source.read_text().splitlines(keepends=True)
    after = out.read_text().splitlines(keepends=True)
    added = [line for line in after if line not in before]
    assert added, "the sizing changed nothing"
    kept = [line for line in after if line in before]
    assert kept == [line for line in before if line in after]  # same order, comments included
    for line in added:
        if "at:" in line and "rating:" in line:
            assert line.startswith("  - {id: WHA-")
            continue
        twin = next(b for b in before if b.split(",")[0] == line.split(",")[0])
        assert _without_size(twin) == _without_size(line)  # only the size value differs
    assert sum("# " in line for line in before) == sum("# " in line for line in after)


def _without_size(line: str) -> str:
    head, _, tail = line.partition("size: ")
    return head + tail.split(",", 1)[1]


def test_unchanged_layout_is_written_byte_for_byte() -> None:
    from rulecheck.layout_edit import edit_layout

    for path in SAMPLES:
        text = path.read_text()
        assert edit_layout(text, {}, []) == text


def test_appendix_e_friction_per_100_ft_hand_sizing(tmp_path: Path) -> None:
    """IPC Appendix E (2018 IPC, E103.3; from memory; verify against the adopted edition):
    pressure available for friction = static pressure − elevation (0.433 psi per foot of
    lift) − meter loss − the fixture's minimum flow pressure; divided by the developed length
    (with fittings) to the most remote fixture it gives the friction allowed per 100 ft; each
    section takes the smallest size whose friction per 100 ft at its demand stays within it.

    Our own scenario: 60 psi main, a 5 psi meter, a shower 20 ft up at the end of
    60 + 40 + 20 ft of copper type L (fittings allowance from the profile)."""
    text = (
        "version: 1\nproject: {name: hand sized, units: us}\n"
        "supplies: [{id: S, pressure: 60 psi, elevation: 0 ft}]\n"
        "points: [{id: J1, elevation: 0 ft}, {id: J2, elevation: 10 ft}, {id: J3, elevation: 20 ft}]\n"
        "pipes:\n"
        "  - {id: P1, from: S, to: J1, material: copper-l, size: 2, length: 60 ft, service: cold}\n"
        "  - {id: P2, from: J1, to: J2, material: copper-l, size: 2, length: 40 ft, service: cold}\n"
        "  - {id: P3, from: J2, to: J3, material: copper-l, size: 2, length: 20 ft, service: cold}\n"
        "fixtures:\n"
        "  - {id: WC1, type: water-closet-tank, cold: J1}\n  - {id: LV1, type: lavatory, cold: J2}\n"
        "  - {id: SH1, type: shower, cold: J3}\n"
        "devices: [{id: M1, kind: meter, on: P1, loss: 5 psi}]\n"
    )
    path = tmp_path / "hand.yaml"
    path.write_text(text)
    layout = load_layout(path)
    steady = _steady(layout)
    psi, ft = 6894.757, 0.3048
    shower = next(f for f in layout.fixtures if f.id == "SH1")
    developed = sum(p.length + p.fittings_length for p in layout.pipes) / ft
    available = 60 - 0.433 * 20 - 5 - shower.min_pressure / psi  # psi for friction
    per_100 = available / (developed / 100)
    # the analysis's lift agrees with the hand method's 0.433 psi/ft (water near 60 degF)
    lift = (steady.static_min["S"] - steady.static_min["J3"]) / psi
    assert lift == pytest.approx(0.433 * 20, rel=2e-3)
    # hand sizing: the smallest size per section within the allowance per 100 ft
    drops = _pipe_drops(layout)
    hand = {}
    minimum = code_minimums(layout)  # the hand method keeps the code minimums too
    for i, p in enumerate(layout.pipes):
        for label in catalog_order(p):
            per = drops[(i, label)] / psi / ((p.length + p.fittings_length) / ft / 100)
            v = float(steady.flow[i]) / (
                math.pi * (p.material.sizes[label][0] - 2 * p.material.sizes[label][1]) ** 2 / 4
            )
            least = minimum[p.id].inches if p.id in minimum else 0.0
            if per <= per_100 and v <= 8 * ft and nominal_inches(label) >= least:
                hand[p.id] = label
                break
    hand_layout = sized_layout(layout, hand)
    hand_steady = _steady(hand_layout)
    assert hand_steady.residual["J3"] >= shower.min_pressure  # the hand method's promise
    result = size_pipes(steady, velocity_limits(steady, Settings()), code_minimums(layout))
    cost = lambda sizes: sum(p.length * p.material.sizes[sizes[p.id]][0] for p in layout.pipes)  # noqa: E731
    assert result.material_after <= cost(hand) + 1e-12  # never more material than by hand
    assert _steady(sized_layout(layout, result.sizes)).residual["J3"] >= shower.min_pressure
    assert per_100 > 0 and list(hand.values()) == sorted(
        hand.values(), key=nominal_inches, reverse=True
    )


def test_json_output_and_diff(tmp_path: Path, capsys) -> None:
    import json

    source = Path(__file__).parent.parent / "samples" / "two-bath-house.yaml"
    main(["size", str(source), "--format", "json"])
    data = json.loads(capsys.readouterr().out)
    assert data["feasible"] is True and data["changes"]
    assert all({"pipe", "old", "new", "reason"} <= set(c) for c in data["changes"])
    main(["size", str(source), "--diff"])
    said = capsys.readouterr().out
    assert "--- " in said and "+++ " in said and "@@" in said
    main(["size", str(source), "--diff", "--format", "json"])
    data = json.loads(capsys.readouterr().out)  # the diff inside the JSON, not after it
    assert data["diff"].startswith("--- ")


def test_output_never_replaces_the_input(tmp_path: Path, capsys) -> None:
    path = tmp_path / "a.yaml"
    path.write_text(SAMPLES[0].read_text())
    assert main(["size", str(path), "--output", str(path)]) == 2
    assert path.read_text() == SAMPLES[0].read_text()
    assert "refusing" in capsys.readouterr().err


def test_random_trees_include_pressure_bound_and_infeasible_cases(tmp_path: Path) -> None:
    """The random set above is not trivial: pressure binds some pipes, some trees fail."""
    reasons, infeasible = [], 0
    for seed in range(24):
        rng = random.Random(seed)
        layout = load_layout(_random_layout(rng, tmp_path, rng.randint(1, 7)))
        steady = _steady(layout)
        result = size_pipes(steady, velocity_limits(steady, Settings()), code_minimums(layout))
        infeasible += not result.feasible
        reasons.extend(result.reasons.values())
    assert infeasible >= 1
    assert any("pressure at fixture" in r for r in reasons)
    assert any("downstream order" in r for r in reasons)


EDIT_CASES = [
    # (original, expected): P1 becomes 2, arrester X at J is added
    (
        "pipes:\n- {id: P1, size: '1'}\n",
        "pipes:\n- {id: P1, size: '2'}\narresters:\n- {id: X, at: J, rating: A}\n",
    ),
    (
        "pipes:\n  - id: P1\n    size: 1 # c\narresters: []\n",
        "pipes:\n  - id: P1\n    size: 2 # c\narresters: [{id: X, at: J, rating: A}]\n",
    ),
    (
        'pipes:\n  - id: P1\n    size: "1"\narresters:\n  - id: A1\n    at: J\n    rating: A   # note\n\nwaivers: []\n',
        'pipes:\n  - id: P1\n    size: "2"\narresters:\n  - id: A1\n    at: J\n    rating: A   # note\n  - id: X\n    at: J\n    rating: A\n\nwaivers: []\n',
    ),
    (
        "arresters:\npipes: [{id: P1, size: 1}]\n",
        "arresters:\n  - {id: X, at: J, rating: A}\npipes: [{id: P1, size: 2}]\n",
    ),
    (
        "pipes: [{id: P1, size: 1}]\narresters: [{id: A1, at: J, rating: A}]\n",
        "pipes: [{id: P1, size: 2}]\narresters: [{id: A1, at: J, rating: A}, {id: X, at: J, rating: A}]\n",
    ),
    (
        "pipes: [{id: P1, size: 1}]\r\narresters:\r\n- {id: A1, at: J, rating: A}",
        "pipes: [{id: P1, size: 2}]\r\narresters:\r\n- {id: A1, at: J, rating: A}\r\n- {id: X, at: J, rating: A}\r\n",
    ),
]


@pytest.mark.parametrize(("original", "expected"), EDIT_CASES)
def test_edit_changes_only_the_values_in_the_original_style(original: str, expected: str) -> None:
    from rulecheck.layout_edit import edit_layout

    head = "version: 1  # kept\n"
    out = edit_layout(head + original, {"P1": "2"}, [{"id": "X", "at": "J", "rating": "A"}])
    assert out == head + expected


@pytest.mark.parametrize(
    "text",
    [
        "version: 1\nproject: {name: x}\nsupplies: [{id: S, pressure: 50 psi}]\n"
        "pipes: [{id: P1, from: S, to: J1, material: copper-l, size: 1, length: 5 ft, service: cold, keep_size: yes please}]\n"
        "points: [{id: J1}]\n",
        "version: 1\npipes: [{id: P1\n",
        "",
    ],
    ids=["keep-size-not-boolean", "broken-yaml", "empty"],
)
def test_bad_input_is_an_input_error_with_its_position(text: str, tmp_path: Path, capsys) -> None:
    path = tmp_path / "bad.yaml"
    path.write_text(text)
    out = tmp_path / "sized.yaml"
    assert main(["size", str(path), "--output", str(out)]) == 2
    err = capsys.readouterr().err
    assert f"{path}:" in err and "error:" in err and "Traceback" not in err
    assert not out.exists()
