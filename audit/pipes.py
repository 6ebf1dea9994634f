"""Pipe inside diameters from nominal pipe size and schedule.

Outside diameters and wall thicknesses of ASME B36.10M (carbon steel) and
ASME B36.19M (stainless, the "S" schedules) for the sizes a control-valve
line list usually holds, NPS 1/2 to 24.  The figures are recalled from the
tables (from memory) and rounded as those tables print them, in mm; rows the
tables leave blank are absent here, so a size/schedule pair they do not list
is an error for that row, never a guess.
"""
from __future__ import annotations

import numpy as np

# NPS (inch): outside diameter [mm]
OUTSIDE_DIAMETER_MM = {
    0.5: 21.3, 0.75: 26.7, 1.0: 33.4, 1.25: 42.2, 1.5: 48.3, 2.0: 60.3, 2.5: 73.0,
    3.0: 88.9, 4.0: 114.3, 6.0: 168.3, 8.0: 219.1, 10.0: 273.0, 12.0: 323.8,
    14.0: 355.6, 16.0: 406.4, 18.0: 457.0, 20.0: 508.0, 24.0: 610.0,
}

# schedule: {NPS: wall [mm]}
WALL_MM = {
    "10S": {0.5: 2.11, 0.75: 2.11, 1.0: 2.77, 1.25: 2.77, 1.5: 2.77, 2.0: 2.77, 2.5: 3.05,
            3.0: 3.05, 4.0: 3.05, 6.0: 3.40, 8.0: 3.76, 10.0: 4.19, 12.0: 4.57},
    "40": {0.5: 2.77, 0.75: 2.87, 1.0: 3.38, 1.25: 3.56, 1.5: 3.68, 2.0: 3.91, 2.5: 5.16,
           3.0: 5.49, 4.0: 6.02, 6.0: 7.11, 8.0: 8.18, 10.0: 9.27, 12.0: 10.31,
           14.0: 11.13, 16.0: 12.70, 18.0: 14.27, 20.0: 15.09, 24.0: 17.48},
    "80": {0.5: 3.73, 0.75: 3.91, 1.0: 4.55, 1.25: 4.85, 1.5: 5.08, 2.0: 5.54, 2.5: 7.01,
           3.0: 7.62, 4.0: 8.56, 6.0: 10.97, 8.0: 12.70, 10.0: 15.09, 12.0: 17.48,
           14.0: 19.05, 16.0: 21.44, 18.0: 23.83, 20.0: 26.19, 24.0: 30.96},
    "160": {0.5: 4.78, 0.75: 5.56, 1.0: 6.35, 1.25: 6.35, 1.5: 7.14, 2.0: 8.74, 2.5: 9.53,
            3.0: 11.13, 4.0: 13.49, 6.0: 18.26, 8.0: 23.01, 10.0: 28.58, 12.0: 33.32},
}
WALL_MM["40S"] = {k: v for k, v in WALL_MM["40"].items() if k <= 10.0}
WALL_MM["40S"].update({12.0: 9.53})
WALL_MM["80S"] = {k: v for k, v in WALL_MM["80"].items() if k <= 8.0}
WALL_MM["80S"].update({10.0: 12.70, 12.0: 12.70})
WALL_MM["STD"] = {k: (v if k <= 10.0 else 9.53) for k, v in WALL_MM["40"].items()}
WALL_MM["XS"] = {k: (v if k <= 8.0 else 12.70) for k, v in WALL_MM["80"].items()}


def normalise_schedule(text: str) -> str:
    """'sch 40', 'SCH40', '40' -> '40'; 'std' -> 'STD'; '10s' -> '10S'."""
    s = str(text).strip().upper().replace("SCHEDULE", "").replace("SCH", "").strip()
    return s.replace(" ", "")


def pipe_dimensions(nps_inch: np.ndarray, schedules: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Inside diameter and wall of nominal pipes.

    nps_inch: nominal pipe size [inch, as a number: 0.5, 4, ...];
    schedules: schedule text per row ('40', 'STD', '10S', ...).
    Returns (inside diameter [m], wall [m], message) with NaN and a message
    where the pair is not in ASME B36.10M / B36.19M as tabulated here.
    """
    n = len(nps_inch)
    inside = np.full(n, np.nan)
    wall = np.full(n, np.nan)
    msg = np.full(n, "", dtype=object)
    for i, (size, sched) in enumerate(zip(nps_inch, schedules)):
        if not np.isfinite(size):
            continue
        key = normalise_schedule(sched) if sched is not None else ""
        od = OUTSIDE_DIAMETER_MM.get(float(size))
        table = WALL_MM.get(key)
        if od is None:
            msg[i] = f"nominal pipe size {size:g} in is not one of {sorted(OUTSIDE_DIAMETER_MM)}"
        elif table is None:
            msg[i] = f"schedule '{sched}' is not one of {sorted(WALL_MM)}"
        elif float(size) not in table:
            msg[i] = f"schedule {key} is not tabulated for NPS {size:g}"
        else:
            t = table[float(size)]
            inside[i] = (od - 2.0 * t) / 1000.0
            wall[i] = t / 1000.0
    return inside, wall, msg


def assumed_std_wall(inside_m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Standard-weight (STD) wall [m] of the nominal pipe whose STD bore is nearest each inside diameter.

    For noise, where the line list gives no wall thickness: the transmission
    loss needs one, and STD is the common default (common practice).  Returns
    (wall [m], the nominal size [in] it was taken from); NaN for a NaN bore.
    """
    sizes = np.array(sorted(WALL_MM["STD"]))
    bores = np.array([OUTSIDE_DIAMETER_MM[s] - 2 * WALL_MM["STD"][s] for s in sizes]) / 1000.0
    walls = np.array([WALL_MM["STD"][s] for s in sizes]) / 1000.0
    inside = np.asarray(inside_m, float)
    pick = np.argmin(np.abs(np.log(np.where(inside > 0, inside, np.nan)[:, None] / bores[None, :])), axis=1) \
        if inside.size else np.zeros(0, int)
    good = np.isfinite(inside) & (inside > 0)
    return np.where(good, walls[pick], np.nan), np.where(good, sizes[pick], np.nan)
