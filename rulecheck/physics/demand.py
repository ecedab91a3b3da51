"""Design demand flow from water-supply fixture units by Hunter's curve (IPC Table E103.3(3))."""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache
from typing import TYPE_CHECKING

import numpy as np

from rulecheck.resources import read_yaml

if TYPE_CHECKING:  # numpy.typing costs start-up; the names are for annotations
    from numpy.typing import ArrayLike

US_GALLON = 231 * 0.0254**3  # [m^3], 231 in^3 exactly [S: NIST SP 811]
GPM = US_GALLON / 60.0  # 1 gpm = 6.30901964e-5 m^3/s [S: NIST SP 811]


@dataclass(frozen=True, eq=False)
class HunterTable:
    """Hunter's curve as tabled: WSFU [-] against demand [gpm] for the two system types."""

    wsfu: np.ndarray  # [-], rising
    tank: np.ndarray  # [gpm], systems predominantly flush tanks
    flushometer: np.ndarray  # [gpm], systems predominantly flushometer valves; NaN where absent
    source: str
    # "predominantly": flushometer valves carry more than this share of a pipe's WSFU [-] [CP]
    flushometer_share: float = 0.5
    share_basis: str = "common practice [CP]"


@cache
def hunter_table() -> HunterTable:
    """Load Hunter's curve, WSFU against gpm, from the shipped ``rules/hunter.yaml``.

    The rows of IPC Table E103.3(3), each cell tagged S (seen) or M (from
    memory; verify against the adopted edition) in the data file.

    Returns
    -------
    HunterTable
        WSFU [-] and the flush-tank and flushometer demand columns [gpm]
        (read-only arrays), with the source citation.

    Examples
    --------
    The first flushometer row is 5 WSFU, 15.0 gpm [1]:

    >>> table = hunter_table()
    >>> print(table.wsfu[4], table.flushometer[4])
    5.0 15.0

    References
    ----------
    1. International Plumbing Code, Appendix E, Table E103.3(3)
       [S: IPC Table E103.3(3) for the cells tagged S; M for the rest].
    """
    data = read_yaml("rules", "hunter.yaml")
    rows = data["rows"]
    columns = {
        key: np.array([np.nan if row[key] is None else row[key] for row in rows], dtype=float)
        for key in ("wsfu", "tank", "flushometer")
    }
    for column in columns.values():
        column.setflags(write=False)
    if np.any(np.diff(columns["wsfu"]) <= 0) or np.any(np.isnan(columns["tank"])):
        raise ValueError("hunter.yaml: WSFU must rise row by row and every row needs a tank flow")
    rule = data["predominantly"]
    share = float(rule["flushometer_share"])
    if not 0.0 <= share < 1.0:
        raise ValueError("hunter.yaml: predominantly.flushometer_share must lie in [0, 1)")
    return HunterTable(
        **columns,
        source=data["source"],
        flushometer_share=share,
        share_basis=" ".join(str(rule["basis"]).split()),
    )


#: ``project.demand_curve`` values: decide per pipe, or one column for every pipe.
DEMAND_CURVES = ("auto", "flush-tank", "flushometer")


def flushometer_column(
    flushometer_wsfu: ArrayLike,
    wsfu: ArrayLike,
    curve: str = "auto",
    share: float | None = None,
) -> np.ndarray:
    """Which column of IPC Table E103.3(3) each pipe reads: True for flushometer valves.

    auto: flushometer where W_fv / W > s, else flush tank; W_fv the fixture units of the
    flushometer-valve fixtures the pipe serves, W all the fixture units it serves,
    s = 0.5 by default ("predominantly" read as more than half [CP]);
    ``flush-tank`` or ``flushometer`` choose that column for every pipe.

    Parameters
    ----------
    flushometer_wsfu : float or ndarray
        Fixture units served by flushometer valves W_fv [-], >= 0.
    wsfu : float or ndarray
        All fixture units served W [-], >= W_fv.
    curve : str
        ``auto``, ``flush-tank`` or ``flushometer`` (``project.demand_curve``) [-].
    share : float, optional
        Threshold share s [-]; default the shipped ``hunter_table().flushometer_share``.

    Returns
    -------
    ndarray of bool
        True where the flushometer column applies [-].

    Raises
    ------
    ValueError
        On an unknown ``curve``.

    Notes
    -----
    The table's columns are for supply systems "predominantly for flush tanks" and
    "predominantly for flushometer valves" [1]; the code gives no number, so the
    threshold is common practice [CP]. Below the flushometer column's first row
    (5 WSFU) ``demand_flow`` reads the tank column whatever is chosen here. A pipe
    serving no fixture units reads the tank column [D].

    Examples
    --------
    One public flushometer closet (10 WSFU) among 40 WSFU of flush-tank fixtures
    serves 20 % of the units: the tank column, 29.1 gpm at 50 WSFU, not 50.0 [1]:

    >>> bool(flushometer_column(10.0, 50.0))
    False
    >>> bool(flushometer_column(40.0, 50.0)), bool(flushometer_column(0.0, 50.0, "flushometer"))
    (True, True)

    References
    ----------
    1. International Plumbing Code, Appendix E, Table E103.3(3), column headings
       [S: IPC Table E103.3(3)].
    """
    fv, n = np.broadcast_arrays(
        np.asarray(flushometer_wsfu, dtype=float), np.asarray(wsfu, dtype=float)
    )
    if curve == "flushometer":
        return np.ones(n.shape, dtype=bool)
    if curve == "flush-tank":
        return np.zeros(n.shape, dtype=bool)
    if curve != "auto":
        raise ValueError(f"demand curve {curve!r}: use one of {', '.join(DEMAND_CURVES)}")
    threshold = hunter_table().flushometer_share if share is None else share
    with np.errstate(divide="ignore", invalid="ignore"):
        fraction = np.where(n > 0, fv / np.where(n > 0, n, 1.0), 0.0)
    return np.asarray(fraction > threshold, dtype=bool)


def _interpolate(x: np.ndarray, xp: np.ndarray, fp: np.ndarray) -> np.ndarray:
    """Linear interpolation, constant below the first row, extended along the last segment."""
    y = np.interp(x, xp, fp)
    slope = (fp[-1] - fp[-2]) / (xp[-1] - xp[-2])
    return np.where(x > xp[-1], fp[-1] + slope * (x - xp[-1]), y)


def demand_flow(
    wsfu: ArrayLike, flushometer: ArrayLike, table: HunterTable | None = None
) -> float | np.ndarray:
    """Design demand flow by Hunter's curve, linear interpolation in IPC Table E103.3(3).

    Q = GPM * (q_i + (q_(i+1) - q_i)(n - n_i)/(n_(i+1) - n_i)) for n WSFU between
    rows n_i and n_(i+1), q from the flushometer column where ``flushometer``
    is set (see ``flushometer_column``) and n >= 5 (its first row), else from
    the flush-tank column; GPM = 6.30901964e-5 m^3/s per gpm.

    Parameters
    ----------
    wsfu : float or ndarray
        Water-supply fixture units served [-], >= 0.
    flushometer : bool or ndarray of bool
        True where the pipe reads the flushometer column (a system
        predominantly of flushometer valves, ``flushometer_column``) [-].
    table : HunterTable, optional
        Table to use, flows in [gpm]; default the shipped ``hunter_table()``.

    Returns
    -------
    float or ndarray
        Demand flow [m^3/s].

    Raises
    ------
    ValueError
        On negative WSFU.

    Notes
    -----
    0 WSFU gives 0. Between 0 and the first row (1 WSFU) the first row's flow
    is returned, a conservative choice [D]. Above the last row (3000 WSFU) the
    last segment is extended linearly [D]. The flushometer column starts at
    5 WSFU; below it the flush-tank column applies (engineering-basis
    section 3), so the flushometer demand jumps at 5 WSFU as in the table.

    Examples
    --------
    IPC Table E103.3(3) [1]: 10 WSFU, flush tanks, 14.6 gpm; flushometer 27.0 gpm:

    >>> print(f"{demand_flow(10, False) / GPM:.1f} {demand_flow(10, True) / GPM:.1f}")
    14.6 27.0

    References
    ----------
    1. International Plumbing Code, Appendix E, Table E103.3(3)
       [S: IPC Table E103.3(3) for the cells tagged S; M for the rest].
    2. Hunter, R. B. (1940). Methods of estimating loads in plumbing systems.
       NBS Report BMS65, National Bureau of Standards.
    3. NIST SP 811 (2008), Guide for the Use of the International System of
       Units, Appendix B (US gallon = 231 in^3) [S: NIST SP 811].
    """
    table = hunter_table() if table is None else table
    n, flush = np.broadcast_arrays(np.asarray(wsfu, dtype=float), np.asarray(flushometer, bool))
    if np.any(n < 0):
        raise ValueError("fixture units (WSFU) must not be negative")
    tank_gpm = _interpolate(n, table.wsfu, table.tank)
    has_flush = ~np.isnan(table.flushometer)
    flush_wsfu = table.wsfu[has_flush]
    flush_gpm = _interpolate(n, flush_wsfu, table.flushometer[has_flush])
    gpm = np.where(flush & (n >= flush_wsfu[0]), flush_gpm, tank_gpm)
    q = np.where(n > 0, gpm * GPM, 0.0)
    return float(q) if q.ndim == 0 else q


@dataclass(frozen=True, eq=False)
class LoadingUnitTable:
    """EN 806-3's design flow against total loading units: LU [-] against flow [L/s]."""

    lu: np.ndarray  # [-], rising
    flow: np.ndarray  # [L/s]
    source: str


LOADING_UNIT = 1e-4  # 1 LU = 0.1 L/s = 1e-4 m^3/s [S: EN 806-3:2006 Table 2]


@cache
def loading_unit_table() -> LoadingUnitTable:
    """Load the EN 806-3 conversion of total loading units to design flow.

    The rows of ``rules/loading-units.yaml``, read linearly (see
    ``loading_unit_flow``); the curve's rows are tagged from memory in the data.

    Returns
    -------
    LoadingUnitTable
        Total loading units [-] and design flow [L/s] (read-only arrays), with the
        source citation.

    Examples
    --------
    The first row is one loading unit, 0.1 L/s, the definition of the unit [1]:

    >>> table = loading_unit_table()
    >>> print(table.lu[0], table.flow[0])
    1.0 0.1

    References
    ----------
    1. EN 806-3:2006, Specifications for installations inside buildings conveying
       water for human consumption, Part 3: Pipe sizing, simplified method, Table 2
       (1 LU = 0.1 L/s) [S: via a published excerpt]; curve rows [M: from memory;
       verify against the adopted edition].
    """
    data = read_yaml("rules", "loading-units.yaml")
    lu = np.array([row["lu"] for row in data["rows"]], dtype=float)
    flow = np.array([row["flow"] for row in data["rows"]], dtype=float)
    if np.any(np.diff(lu) <= 0) or np.any(np.diff(flow) < 0) or np.any(flow > 0.1 * lu + 1e-12):
        raise ValueError("loading-units.yaml: LU must rise, flow not fall, and stay <= 0.1 L/s/LU")
    for column in (lu, flow):
        column.setflags(write=False)
    return LoadingUnitTable(lu, flow, " ".join(str(data["source"]).split()))


def loading_unit_flow(lu: ArrayLike, table: LoadingUnitTable | None = None) -> float | np.ndarray:
    """Design flow from total loading units by the EN 806-3 simplified method.

    Q = 1e-3 * (q_i + (q_(i+1) - q_i)(n - n_i)/(n_(i+1) - n_i)) for n LU between rows
    n_i and n_(i+1) of the table [L/s -> m^3/s]; below the first row (1 LU) Q = n * 0.1 L/s
    (the unit's definition); above the last row Q = q_last * sqrt(n / n_last) [D].

    Parameters
    ----------
    lu : float or ndarray
        Total loading units served [-], >= 0.
    table : LoadingUnitTable, optional
        Table to use, flows in [L/s]; default the shipped ``loading_unit_table()``.

    Returns
    -------
    float or ndarray
        Design flow [m^3/s].

    Raises
    ------
    ValueError
        On negative loading units.

    Examples
    --------
    One washbasin is 1 LU, 0.1 L/s; a bath alone 4 LU [1]:

    >>> print(f"{loading_unit_flow(1) * 1e3:.2f} {loading_unit_flow(0.5) * 1e3:.2f}")
    0.10 0.05

    References
    ----------
    1. EN 806-3:2006, Table 2 (loading units per draw-off point; 1 LU = 0.1 L/s)
       [S: via a published excerpt]; the curve [M: from memory; verify against the
       adopted edition].
    """
    table = loading_unit_table() if table is None else table
    n = np.asarray(lu, dtype=float)
    if np.any(n < 0):
        raise ValueError("loading units (LU) must not be negative")
    inside = np.interp(n, table.lu, table.flow)
    with np.errstate(invalid="ignore"):
        above = table.flow[-1] * np.sqrt(np.maximum(n, 0.0) / table.lu[-1])
    litres = np.where(n < table.lu[0], n * LOADING_UNIT * 1e3, inside)
    litres = np.where(n > table.lu[-1], above, litres)
    q = litres * 1e-3
    return float(q) if q.ndim == 0 else q
