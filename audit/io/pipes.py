"""Pipe inside diameters from nominal pipe size and schedule.

Dimensions come from the `fluids` library's tables of ASME B36.10M (carbon
steel: 5 to 160, STD, XS, XXS) and ASME B36.19M (stainless: 5S, 10S, 40S,
80S), NPS 1/8 to 36 and over: a maintained table, not one recalled by hand.
A size/schedule pair the standard leaves blank is an error for that row,
never a guess.  The tables hold millimetres; this module returns metres.
"""
from __future__ import annotations

import numpy as np
from fluids.piping import schedule_lookup

# The ASME schedules a line list names (B36.10M and B36.19M); fluids also carries plastic and other
# pipe standards, which a control-valve line list does not mean by "schedule 40".
ASME_SCHEDULES = ("5", "10", "20", "30", "40", "60", "80", "100", "120", "140", "160", "STD", "XS", "XXS",
                  "5S", "10S", "40S", "80S")
_TABLES = {s: {float(n): (do, t) for n, do, t in zip(schedule_lookup[s][0], schedule_lookup[s][2],
                                                        schedule_lookup[s][3])} for s in ASME_SCHEDULES}


def normalise_schedule(text: str) -> str:
    """'sch 40', 'SCH40', '40', 40.0 (a spreadsheet number) -> '40'; 'std' -> 'STD'; '10s' -> '10S'."""
    s = str(text).strip().upper().replace("SCHEDULE", "").replace("SCH", "").strip()
    s = s.replace(" ", "")
    try:
        number = float(s)
    except ValueError:
        return s
    return f"{number:g}" if np.isfinite(number) and number == int(number) else s


def pipe_dimensions(nps_inch: np.ndarray, schedules: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Inside diameter and wall of nominal pipes.

    nps_inch: nominal pipe size [inch, as a number: 0.5, 4, ...];
    schedules: schedule text per row ('40', 'STD', '10S', ...).
    Returns (inside diameter [m], wall [m], message) with NaN and a message
    where the pair is not in ASME B36.10M / B36.19M.
    """
    n = len(nps_inch)
    inside = np.full(n, np.nan)
    wall = np.full(n, np.nan)
    msg = np.full(n, "", dtype=object)
    for i, (size, sched) in enumerate(zip(nps_inch, schedules)):
        if not np.isfinite(size):
            continue
        key = normalise_schedule(sched) if sched is not None else ""
        table = _TABLES.get(key)
        if table is None:
            msg[i] = f"schedule '{sched}' is not one of {', '.join(ASME_SCHEDULES)}"
        elif float(size) not in table:
            sizes = ", ".join(f"{s:g}" for s in sorted(table))
            msg[i] = f"NPS {size:g} is not tabulated for schedule {key} (ASME lists {sizes})"
        else:
            od, t = table[float(size)]
            inside[i] = (od - 2.0 * t) / 1000.0
            wall[i] = t / 1000.0
    return inside, wall, msg


def assumed_std_wall(inside_m: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Standard-weight (STD) wall [m] of the nominal pipe whose STD bore is nearest each inside diameter.

    For noise, where the line list gives no wall thickness: the transmission
    loss needs one, and STD is the common default (common practice).  Returns
    (wall [m], the nominal size [in] it was taken from); NaN for a NaN bore.
    """
    std = _TABLES["STD"]
    sizes = np.array(sorted(std))
    bores = np.array([std[s][0] - 2 * std[s][1] for s in sizes]) / 1000.0
    walls = np.array([std[s][1] for s in sizes]) / 1000.0
    inside = np.asarray(inside_m, float)
    pick = np.argmin(np.abs(np.log(np.where(inside > 0, inside, np.nan)[:, None] / bores[None, :])), axis=1) \
        if inside.size else np.zeros(0, int)
    good = np.isfinite(inside) & (inside > 0)
    return np.where(good, walls[pick], np.nan), np.where(good, sizes[pick], np.nan)


# Nominal sizes: NPS [in] and the DN [mm] that stands for it (ISO 6708 / ASME B36.10M pairing).
NPS_TO_DN = {0.125: 6, 0.25: 8, 0.375: 10, 0.5: 15, 0.75: 20, 1.0: 25, 1.25: 32, 1.5: 40, 2.0: 50, 2.5: 65,
             3.0: 80, 3.5: 90, 4.0: 100, 5.0: 125, 6.0: 150, 8.0: 200, 10.0: 250, 12.0: 300, 14.0: 350,
             16.0: 400, 18.0: 450, 20.0: 500, 24.0: 600, 30.0: 750, 36.0: 900, 42.0: 1050, 48.0: 1200}


def nominal_dn(size_m: np.ndarray) -> np.ndarray:
    """The nominal size DN [mm] a body or trim size stands for, whether written in mm (DN80) or inches (3 in).

    A size within 3 % of a DN, or of an NPS in inches, maps to that DN; any other size keeps its
    own value in mm (rounded), so two sizes match only when they name the same nominal size.
    """
    mm = np.asarray(size_m, float) * 1000.0
    dn = np.array(sorted(set(NPS_TO_DN.values())), float)
    nps_mm = np.array([k * 25.4 for k in NPS_TO_DN]), np.array(list(NPS_TO_DN.values()), float)
    out = np.round(mm)
    for targets, values in ((dn, dn), nps_mm):
        near = np.abs(mm[:, None] / targets[None, :] - 1.0) <= 0.03
        hit = near.any(axis=1)
        out = np.where(hit, values[np.argmax(near, axis=1)], out)
    return out
