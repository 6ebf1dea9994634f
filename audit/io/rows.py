"""Checks on the valve (row) columns of a line list: identity, fluid, body, piping, service.

Each check reads parsed columns, writes its results into the valves table and
adds a message per failing row to ``Reasons`` (the row is then rejected).
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from audit.fluid.names import Fluid
from audit.iec import styles
from audit.iec.characteristic import CHARACTERISTICS, normalise_characteristic
from audit.io import pipes
from audit.io.columns import (BARE_SIZE_MIN_MM, CUSTOM_NEEDS, PHASE_WORDS, PIPE_NARROWER_LIMIT,
                              PLAUSIBLE, SERVICE_WORDS, _SERVICE_SPELLINGS)
from audit.io.reader import Limits, clean_text
from audit.io.units import _clip


class Reasons:
    """Accumulates per-row problems; a row with any problem is rejected."""

    def __init__(self, n: int):
        self.text = [[] for _ in range(n)]
        self.rows = set()   # rows with at least one reason (most rows have none)
        self.later = []     # (row, place in its reasons, key): a reason known only after the reading (settle)

    def add(self, mask: np.ndarray, message) -> None:
        for i in np.flatnonzero(mask):
            self.text[i].append(message(i) if callable(message) else message)
            self.rows.add(int(i))

    def note(self, i: int, message: str) -> None:
        self.text[i].append(message)
        self.rows.add(int(i))

    def note_later(self, i: int, key: str) -> None:
        """Keep row i's place for a reason ``settle`` gives, if any (such as a fluid name CoolProp refuses).

        Until settled, the reason is in no row's text: ``mentions`` and ``bad`` do not see it."""
        self.later.append((i, len(self.text[i]), key))

    def settle(self, answers: dict) -> None:
        """Put each awaited reason, ``answers[key]``, in its place; an empty answer is no reason."""
        for i, place, key in reversed(self.later):  # the last place first: an insertion moves none still to come
            if answers[key]:
                self.text[i].insert(place, answers[key])
                self.rows.add(int(i))
        self.later = []

    def add_array(self, messages: np.ndarray) -> None:
        for i in np.flatnonzero(messages != ""):
            self.text[i].append(messages[i])
            self.rows.add(int(i))

    def mentions(self, column: str) -> np.ndarray:
        """Rows that already have a reason naming ``column`` (so a blank it caused is not reported twice)."""
        needle = f"'{column}'"
        out = np.zeros(len(self.text), dtype=bool)
        for i in self.rows:
            out[i] = any(needle in t for t in self.text[i])
        return out

    def bad(self) -> np.ndarray:
        out = np.zeros(len(self.text), dtype=bool)
        out[list(self.rows)] = True
        return out

    def joined(self, i: int) -> str:
        return "; ".join(self.text[i])


def text_column(table: pd.DataFrame, col: str) -> np.ndarray:
    if col not in table:
        return np.full(len(table), "", dtype=object)
    return np.array([clean_text(str(v)).strip() for v in table[col].to_numpy(dtype=object)], dtype=object)


def check_cell_length(table: pd.DataFrame, limits: Limits, reasons: Reasons) -> None:
    for col in table.columns:
        values = table[col].to_numpy(dtype=object)
        try:  # the common case, all text within the limit, decided without a per-cell array
            if max(map(len, values), default=0) <= limits.max_cell_chars:
                continue
        except TypeError:  # a number or an empty cell of a workbook: measured as text below
            pass
        lengths = np.fromiter((len(str(v)) for v in values), dtype=np.int64, count=len(table))
        reasons.add(lengths > limits.max_cell_chars,
                    lambda i, col=col, lengths=lengths: f"column '{col}': a cell of {lengths[i]:,} characters, "
                    f"over the limit of {limits.max_cell_chars:,}")


def check_identity(tags: np.ndarray, reasons: Reasons) -> None:
    reasons.add(tags == "", "column 'tag' is blank; every valve needs a tag")
    series = pd.Series(tags)
    dup = series.duplicated(keep=False).to_numpy() & (tags != "")
    reasons.add(dup, lambda i: f"column 'tag': '{_clip(tags[i])}' appears more than once in the file; "
                               "every copy is rejected until the tag is unique")


def check_fluids(text, num, reasons: Reasons, valves: pd.DataFrame) -> list[str | None]:
    """The phase and fluid columns, without CoolProp: returns each row's fluid name to resolve (None for
    a custom or blank fluid), whose reason, if any, ``resolve_fluids`` gives in its place."""
    n = len(valves)
    to_resolve: list[str | None] = [None] * n
    custom = np.zeros(n, dtype=bool)
    phase = np.full(n, "", dtype=object)
    for i in range(n):
        word = text["phase"][i].lower()
        if word:
            if word not in PHASE_WORDS:
                reasons.note(i, f"column 'phase': '{_clip(text['phase'][i])}' is not one of "
                                       "liquid, gas, vapour, steam")
            phase[i] = PHASE_WORDS.get(word, "")
        name = text["fluid"][i]
        if not name:
            reasons.note(i, "column 'fluid' is blank; give a CoolProp fluid name, a mixture or 'custom'")
            continue
        if name.lower() == "custom":
            custom[i] = True
            if not phase[i]:
                phase[i] = "liquid" if np.isfinite(num["vapour_pressure"][i]) else (
                    "gas" if np.isfinite(num["molar_mass"][i]) else "")
            if not phase[i]:
                reasons.note(i, "fluid 'custom' needs column 'phase' (liquid or gas) or the overrides "
                                       "of one phase")
                continue
            missing = [c for c in CUSTOM_NEEDS[phase[i]] if not np.isfinite(num[c][i])]
            if missing:
                reasons.note(i, f"fluid 'custom' ({phase[i]}) needs column(s) {', '.join(missing)}")
            continue
        to_resolve[i] = name
        reasons.note_later(i, name)
    check_range(num, "density", reasons, low=0.0, what="a density above 0 kg/m3")
    check_range(num, "viscosity", reasons, low=0.0, what="a viscosity above 0")
    check_range(num, "molar_mass", reasons, low=0.0, what="a molar mass above 0 kg/kmol")
    check_range(num, "k", reasons, low=1.0, what="a ratio of specific heats above 1", low_inclusive=False)
    check_range(num, "z", reasons, low=0.0, what="a compressibility factor above 0")
    check_range(num, "vapour_pressure", reasons, low=0.0, what="a vapour pressure above 0", low_inclusive=True)
    check_range(num, "critical_pressure", reasons, low=0.0, what="a critical pressure above 0")
    valves["custom"] = custom
    valves["phase_given"] = phase
    valves["fluid"] = text["fluid"]
    return to_resolve


def resolve_fluids(names: list[str | None], reasons: Reasons) -> list[Fluid | None]:
    """Each row's ``Fluid`` from CoolProp (None for a custom, blank or unknown fluid); the reasons awaited
    by ``check_fluids`` are settled.  Each distinct name is asked once."""
    from audit.fluid.properties import resolve_fluid  # CoolProp: imported while the file was read (io.early)

    answers = {name: resolve_fluid(name) for name in dict.fromkeys(n for n in names if n is not None)}
    reasons.settle({name: problem for name, (_, problem) in answers.items()})
    return [None if n is None else answers[n][0] for n in names]


def check_service(text, reasons: Reasons, valves: pd.DataFrame) -> None:
    """The service columns (docs/input.md, "Service"): a word from a short list, or blank for the default."""
    for col, (words, default) in SERVICE_WORDS.items():
        given = np.array([_SERVICE_SPELLINGS.get(w.lower().replace(" ", "_"), w.lower().replace(" ", "_"))
                          for w in text[col]], dtype=object)
        wrong = (given != "") & ~np.isin(given, words)
        reasons.add(wrong, lambda i, col=col, words=words: (
            f"column '{col}': '{_clip(text[col][i])}' is not one of {', '.join(words)} (or blank)"))
        valves[col] = np.where(given == "", default, given)


def check_range(num, col, reasons, low=None, high=None, what="", low_inclusive=False, high_inclusive=True):
    v = num[col]
    finite = np.isfinite(v)
    bad = np.zeros(len(v), dtype=bool)
    if low is not None:
        bad |= finite & ((v < low) if low_inclusive else (v <= low))
    if high is not None:
        bad |= finite & ((v > high) if high_inclusive else (v >= high))
    reasons.add(bad, lambda i: f"column '{col}': {v[i]:g} is out of range; expected {what}")


def check_valve(text, num, reasons: Reasons, valves: pd.DataFrame) -> None:
    n = len(valves)
    size = num["valve_size"]
    reasons.add(~np.isfinite(size) & ~reasons.mentions("valve_size"),
                "column 'valve_size' is blank; the valve size is needed")
    check_range(num, "valve_size", reasons, low=0.0, what="a size above 0")
    cv = np.where(np.isfinite(num["rated_cv"]), num["rated_cv"], num["rated_kv"] * 1.156)
    both_blank = ~np.isfinite(cv)
    reasons.add(both_blank & ~reasons.mentions("rated_cv") & ~reasons.mentions("rated_kv"),
                "columns 'rated_cv' and 'rated_kv' are both blank; one is needed")
    reasons.add(np.isfinite(cv) & (cv <= 0), lambda i: f"rated flow coefficient {cv[i]:g} (Cv) must be above 0")
    check_range(num, "rangeability", reasons, low=1.0, what="an inherent rangeability above 1")
    characteristic = np.array([normalise_characteristic(c) for c in text["characteristic"]], dtype=object)
    reasons.add(~np.isin(characteristic, CHARACTERISTICS),
                lambda i: f"column 'characteristic': '{_clip(text['characteristic'][i])}' is not one of "
                          f"{', '.join(CHARACTERISTICS)}")
    fl, xt, fd = num["fl"].copy(), num["xt"].copy(), num["fd"].copy()
    check_range(num, "fl", reasons, low=0.0, high=1.0, what="0 < FL <= 1")
    check_range(num, "xt", reasons, low=0.0, high=1.0, what="0 < xT < 1", high_inclusive=False)
    check_range(num, "fd", reasons, low=0.0, high=1.0, what="0 < Fd <= 1")
    check_range(num, "xfz", reasons, low=0.0, high=1.0, what="0 < xFz <= 1")
    style = np.array([styles.normalise_style(s) for s in text["valve_style"]], dtype=object)
    typical = np.full(n, "", dtype=object)
    gasish = np.array([p == "gas" for p in valves.get("phase_given", [""] * n)])
    needed = [("fl", fl), ("fd", fd), ("xt", xt)]
    for i in np.flatnonzero(~(np.isfinite(fl) & np.isfinite(fd) & np.isfinite(xt))):  # rows with a factor blank
        missing = [name for name, arr in needed if not np.isfinite(arr[i])]
        if style[i]:
            if style[i] not in styles.TYPICAL_FACTORS:
                reasons.note(i, f"column 'valve_style': '{_clip(text['valve_style'][i])}' is not one of "
                                       f"{', '.join(styles.style_names())}")
                continue
            f_l, x_t, f_d, _ = styles.TYPICAL_FACTORS[style[i]]
            fill = {"fl": f_l, "xt": x_t, "fd": f_d}
            for name, arr in needed:
                if not np.isfinite(arr[i]):
                    arr[i] = fill[name]
            typical[i] = ", ".join(missing)
        else:
            need_now = [m for m in missing if m != "xt" or gasish[i]]
            if need_now:
                reasons.note(i, f"trim factor(s) {', '.join(need_now)} blank and no 'valve_style' "
                                       "to take typical values from")
    valves["valve_size"] = size
    valves["rated_cv"] = cv
    valves["characteristic"] = characteristic
    valves["rangeability"] = np.where(np.isfinite(num["rangeability"]), num["rangeability"], 50.0)
    valves["fl"], valves["xt"], valves["fd"] = fl, xt, fd
    valves["xfz_given"] = num["xfz"]
    valves["valve_style"] = style
    valves["typical_factors"] = typical


def check_piping(text, num, reasons: Reasons, valves: pd.DataFrame) -> None:
    size = valves["valve_size"].to_numpy()
    for side in ("in", "out"):
        given = num[f"pipe_{side}_id"]
        nps = num[f"pipe_{side}_size"] / 0.0254
        sched = text[f"pipe_{side}_schedule"]
        from_table, wall, msg = pipes.pipe_dimensions(np.round(nps, 3), sched)
        has_nps = np.isfinite(nps)
        reasons.add(has_nps & (sched == "") & ~np.isfinite(given),
                    f"column 'pipe_{side}_schedule' is blank; a nominal pipe size needs its schedule")
        reasons.add(has_nps & (sched != "") & (msg != ""),
                    lambda i, msg=msg, side=side: f"columns 'pipe_{side}_size'/'pipe_{side}_schedule': {msg[i]}")
        inside = np.where(np.isfinite(given), given, np.where(np.isfinite(from_table), from_table, size))
        check_range({f"pipe_{side}_id": given}, f"pipe_{side}_id", reasons, low=0.0, what="a diameter above 0")
        # Heavy schedules make the pipe bore a little under the nominal valve size (a 2 in
        # valve in 2 in schedule 80 pipe): that is no reducer.  Far smaller is a units slip or a
        # narrowing the reducer equations do not describe.
        much_smaller = np.isfinite(inside) & np.isfinite(size) & (inside < PIPE_NARROWER_LIMIT * size) & (inside > 0)
        reasons.add(much_smaller, lambda i, inside=inside, side=side: (
            f"pipe_{side} inside diameter {inside[i] * 1000:.1f} mm is much smaller than the valve size "
            f"{size[i] * 1000:.1f} mm; check the units (the methods assume reducers, not a pipe narrower "
            "than the valve)"))
        valves[f"pipe_{side}_id"] = inside
        if side == "out":
            wall_given = num["pipe_out_wall"]
            valves["pipe_out_wall"] = np.where(np.isfinite(wall_given), wall_given, wall)
            check_range(num, "pipe_out_wall", reasons, low=0.0, what="a wall thickness above 0")


def check_plausible(num: dict, reasons: Reasons) -> None:
    """Reject rows whose numbers are outside PLAUSIBLE (and blank them, so nothing downstream uses them)."""
    for col, (low, high, words) in PLAUSIBLE.items():
        values = num.get(col)
        if values is None:
            continue
        # Zero and negative values are left to the columns' own checks, which say "above 0" more plainly.
        out = np.isfinite(values) & (values > 0) & ((values < low) | (values > high)) | np.isinf(values)
        shown = values.copy()
        reasons.add(out & ~reasons.mentions(col), lambda i, col=col, words=words, shown=shown: (
            f"column '{col}': {shown[i]:.4g} (in SI) is outside the plausible range {words}; check the value and "
            "its unit"))
        values[out] = np.nan


def check_bare_sizes(table: pd.DataFrame, units: dict, num: dict, reasons: Reasons) -> None:
    """A valve size with no unit anywhere and below BARE_SIZE_MIN_MM is almost surely inches: refuse it."""
    if "valve_size" not in table or units.get("valve_size"):
        return
    bare = pd.to_numeric(table["valve_size"], errors="coerce").to_numpy(float)
    small = np.isfinite(bare) & (bare > 0) & (bare < BARE_SIZE_MIN_MM)
    num["valve_size"][small] = np.nan
    reasons.add(small, lambda i: (
        f"column 'valve_size': {bare[i]:g} has no unit and would be {bare[i]:g} mm, below the smallest "
        f"body ({BARE_SIZE_MIN_MM:g} mm): probably inches; write '{bare[i]:g} in' (or 'NPS {bare[i]:g}', "
        "or the header 'valve_size [in]')"))
