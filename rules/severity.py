"""The severity table: every finding, its level, why, and its source; and how service changes it.

This is the one place that grades findings.  A rule decides *whether* a
finding fires and writes its sentence; this table decides *how soon* someone
must act on it, and ``adjust_for_service`` moves that level where the line
list says what the valve is for (`intent`) and how often it works (`duty`).
docs/severity.md is generated from the same rows (``markdown_table``), and
`valve-audit rules` prints the thresholds they name.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from .levels import Severity

U, P, W, N = Severity.URGENT, Severity.PLAN, Severity.WATCH, Severity.NOTE


@dataclass(frozen=True)
class Grade:
    code: str
    family: str          # findings of one kind of problem: one sentence per family per valve
    severity: Severity
    when: str            # the condition, naming the thresholds it uses
    why: str             # what it means for the plant
    source: str          # standard, or "common practice"


TABLE: tuple[Grade, ...] = (
    Grade("OVER_CAPACITY", "capacity", U, "required Cv above rated Cv (capacity_margin below 1)",
          "the valve cannot pass the flow asked of it", "IEC 60534-2-1 (sizing)"),
    Grade("TRAVEL_HIGH", "capacity", P, "predicted travel above travel.high_pct",
          "little capacity left for a rise in throughput", "common practice"),
    Grade("TRAVEL_LOW", "low_travel", W, "predicted travel below travel.low_pct in a case",
          "works near the seat in that case: poor control, seat and plug wear", "common practice"),
    Grade("CAPACITY_MARGIN", "capacity", W,
          "capacity_margin between 1 and controllability.margin_watch",
          "a small rise in flow takes the valve to full travel", "common practice"),
    Grade("BELOW_RANGE", "low_travel", P, "the smallest case needs less than rated Cv / R",
          "below the controllable minimum of the trim: the valve cannot control there",
          "IEC 60534-2-4 (inherent rangeability)"),
    Grade("OVERSIZED", "low_travel", P, "predicted travel below controllability.oversized_pct in every case",
          "the valve never opens far enough to control well: oversized", "common practice"),
    Grade("GAIN", "gain", W,
          "installed gain between adjacent cases outside controllability.gain_low..gain_high "
          "(graded by controllability.gain_severity)",
          "the loop's tuning cannot suit every case", "common practice"),
    Grade("CHOKED", "choking", P, "choke_ratio at or above choking.choked",
          "a lower outlet pressure will not raise the flow: no throughput headroom",
          "IEC 60534-2-1 (choked flow)"),
    Grade("CHOKE_NEAR", "choking", W, "choke_ratio at or above choking.watch", "little room before choking",
          "common practice"),
    Grade("CAV_CHOKED", "cavitation", P, "xF at or above (FLP/FP)^2: choked cavitation",
          "heavy damage downstream of the seat", "IEC 60534-8-4 / IEC 60534-2-1"),
    Grade("CAV_DEVELOPED", "cavitation", P, "xF past the developed share of the cavitating range",
          "trim damage and noise", "common practice (split of the range)"),
    Grade("CAV_INCIPIENT", "cavitation", W, "xF at or above xFz corrected to the inlet pressure",
          "cavitation starts: little damage yet", "IEC 60534-8-4"),
    Grade("DISSOLVED_GAS", "dissolved_gas", W, "a liquid case of a valve with dissolved_gas = yes",
          "outgassing is neither cavitation nor flashing of a pure liquid: the methods do not describe it",
          "common practice"),
    Grade("FLASHING", "flashing", P, "outlet pressure at or below the vapour pressure",
          "erosion of trim, body and the pipe downstream", "IEC 60534-2-1 (flashing)"),
    Grade("CONDENSING", "condensing", W, "a gas partly condenses across the valve",
          "the gas methods assume a dry outlet: velocity and choking are rough", "common practice"),
    Grade("OUTLET_CHOKED", "outlet_choked", P, "valve outlet Mach number of 1 or more (gas, or a flashing liquid "
          "against the homogeneous-equilibrium speed of sound of its outlet mixture)",
          "the expansion finishes in the pipe downstream: shock, noise, vibration, erosion; a larger outlet helps",
          "IEC 60534-2-1 (outlet velocity); HEM speed of sound"),
    Grade("VELOCITY", "outlet_velocity", P, "outlet velocity above velocity.*_m_s or the row's velocity_limit",
          "erosion and vibration", "common practice"),
    Grade("MACH", "outlet_velocity", P, "gas outlet Mach number above velocity.gas_mach",
          "noise and vibration at the outlet", "common practice"),
    Grade("INLET_VELOCITY", "inlet_velocity", W,
          "body inlet velocity above velocity.inlet_liquid_m_s (liquid) or Mach velocity.inlet_gas_mach (gas)",
          "erosion at the inlet, and the inlet pressure the sizing assumed is not the one the valve sees",
          "common practice"),
    Grade("LINE_VELOCITY", "inlet_velocity", W,
          "upstream line velocity above velocity.line_liquid_m_s (liquid) or velocity.line_gas_m_s (gas)",
          "the line itself is undersized for this case", "common practice"),
    Grade("NOISE_SEVERE", "noise", U, "predicted level at or above the limit plus noise.urgent_over_db",
          "people near the valve are exposed: hearing protection before work near it", "common practice"),
    Grade("NOISE", "noise", P, "predicted level above noise.limit_dba or the row's noise_limit",
          "over the exposure action level", "common practice"),
    Grade("NOISE_NEAR", "noise", W, "predicted level within noise.watch_margin_db below the limit",
          "within the methods' uncertainty of the limit", "common practice"),
    Grade("NOISE_NO_DATA", "noise_unknown", N, "no level predicted (outside the methods, or a needed input missing)",
          "the noise of this case is unknown", "IEC 60534-8-3 / 8-4 (scope)"),
    Grade("AIV", "vibration", P, "sound power level above vibration.limit_db",
          "acoustic-induced vibration fatigues small-bore connections and supports downstream",
          "Carucci and Mueller (1982) sound power, Energy Institute (2008) guidelines; limit common practice"),
    Grade("TRAVEL_MISMATCH", "observed_travel", W, "observed travel differs from predicted by observed_travel.gap_pct",
          "trim wear, a wrong rated Cv on record, or process data that do not describe the case", "common practice"),
    Grade("TRAVEL_DRIFT", "travel_drift", W, "the history's observed-minus-predicted travel trend above "
          "observed_travel.drift_pct_per_month over at least observed_travel.drift_min_days",
          "a gap that grows month by month: trim wear, a positioner or transmitter drifting", "common practice"),
    Grade("BODY_SMALL", "body_size", N, "body more than body.size_steps nominal sizes below the upstream line",
          "unusual: confirm the valve size and the line size in the data", "common practice"),
    Grade("CV_IMPLAUSIBLE", "rated_cv", N, "rated Cv above body.cv_per_in2 times the body size in inches squared",
          "more than a full-bore body of that size passes: confirm the rated Cv and the size", "common practice"),
    Grade("NOT_CONVERGED", "not_converged", P, "no flow coefficient meets the case",
          "reducers or laminar flow limit the body, or the data are wrong", "IEC 60534-2-1"),
    Grade("CASE_INVALID", "case_invalid", W, "a case could not be audited", "that case is not screened", "—"),
    Grade("TYPICAL_FACTORS", "typical_factors", N, "typical factors of the valve style used",
          "the trim's own data would be better", "IEC 60534-2-1 (typical values)"),
    Grade("PROPERTIES_OVERRIDDEN", "properties_overridden", N, "fluid properties from the line list",
          "what the numbers rest on", "—"),
)
BY_CODE = {g.code: g for g in TABLE}

# How the service columns move a level (docs/severity.md prints these too).
ADJUSTMENTS: tuple[tuple[str, str, str], ...] = (
    ("CAV_CHOKED", "continuous duty and dp at or above cavitation.urgent_dp_kpa", "urgent"),
    ("CAV_CHOKED, CAV_DEVELOPED", "duty intermittent, startup or emergency", "one level lower"),
    ("FLASHING; CHOKED and CHOKE_NEAR of a flashing liquid case", "intent = flashing", "note"),
    ("CHOKED, CHOKE_NEAR of a gas case", "intent = choked", "note"),
    ("NOISE_SEVERE", "duty intermittent, startup or emergency", "plan"),
    ("NOISE", "duty startup or emergency", "watch"),
    ("NOISE_NEAR", "duty startup or emergency", "note"),
    ("GAIN", "always", "controllability.gain_severity (default watch)"),
)
DUTIES = ("continuous", "intermittent", "startup", "emergency")
INTENTS = ("flashing", "choked")
CRITICALITIES = ("high", "medium", "low")


def severity_of(code: str) -> Severity:
    return BY_CODE[code].severity


def family_of(code: str) -> str:
    return BY_CODE[code].family


def adjust_for_service(found: pd.DataFrame, cases: pd.DataFrame, thresholds: dict) -> pd.DataFrame:
    """Findings with their levels moved by each valve's intent and duty, and a sentence saying why.

    found: findings (case_row, code, severity, sentence, ...); cases: the case table
    (columns intent, duty, phase, flashing, p_in, p_out); thresholds: effective thresholds.
    """
    if not len(found):
        return found
    out = found.copy()
    row = out["case_row"].to_numpy(int)
    code = out["code"].to_numpy(dtype=object)
    sev = out["severity"].to_numpy(int).copy()
    note = np.full(len(out), "", dtype=object)
    duty = cases["duty"].to_numpy(dtype=object)[row]
    intent = cases["intent"].to_numpy(dtype=object)[row]
    gas = cases["phase"].to_numpy(dtype=object)[row] == "gas"
    flashing = cases["flashing"].to_numpy(bool)[row] if "flashing" in cases else np.zeros(len(out), bool)
    dp = (cases["p_in"].to_numpy(float) - cases["p_out"].to_numpy(float))[row]
    rare = np.isin(duty, ("startup", "emergency"))
    part_time = duty != "continuous"

    def move(mask, level, why):
        nonlocal sev
        mask = mask & (sev != level)
        sev = np.where(mask, level, sev)
        note[mask] = why

    hard = (code == "CAV_CHOKED") & (duty == "continuous") & (dp >= thresholds["cavitation"]["urgent_dp_kpa"] * 1e3)
    move(hard, U, f"urgent: {thresholds['cavitation']['urgent_dp_kpa']:.0f} kPa or more of choked cavitation in "
                  "continuous duty destroys a standard trim quickly")
    cav = np.isin(code, ("CAV_CHOKED", "CAV_DEVELOPED")) & part_time
    move(cav, np.maximum(sev - 1, int(N)), "one level lower: the valve works only part of the time, so cavitation "
                                           "damage accrues slowly")
    choke_codes = np.isin(code, ("CHOKED", "CHOKE_NEAR"))
    designed_flash = (intent == "flashing") & ((code == "FLASHING") | (choke_codes & flashing))
    move(designed_flash, N, "a note: the service is designed to flash; watch outlet erosion and the trim and body "
                            "material")
    designed_choke = (intent == "choked") & choke_codes & gas
    move(designed_choke, N, "a note: the service is designed to run choked and still controls by its inlet "
                            "pressure; watch trim wear and noise")
    exposure = "on this duty the question is how long people may be exposed, not whether"
    move((code == "NOISE_SEVERE") & part_time, P, f"plan rather than urgent: {exposure}")
    move((code == "NOISE") & rare, W, f"watch rather than plan: {exposure}")
    move((code == "NOISE_NEAR") & rare, N, f"a note: {exposure}")
    gain = code == "GAIN"
    sev = np.where(gain, int(thresholds["controllability"]["gain_severity"]), sev)
    out["severity"] = sev
    sentence = out["sentence"].to_numpy(dtype=object).copy()
    for i in np.flatnonzero(note != "").tolist():  # only the moved findings' sentences are rewritten
        sentence[i] = f"{sentence[i]} (Graded {note[i]}.)"
    out["sentence"] = sentence
    return out


def markdown_table() -> str:
    """The severity table as docs/severity.md prints it."""
    lines = ["| finding | family | level | when | why | source |", "|---|---|---|---|---|---|"]
    for g in TABLE:
        lines.append(f"| `{g.code}` | {g.family} | {g.severity.label} | {g.when} | {g.why} | {g.source} |")
    lines += ["", "| findings | when | becomes |", "|---|---|---|"]
    lines += [f"| {a} | {b} | {c} |" for a, b, c in ADJUSTMENTS]
    return "\n".join(lines) + "\n"
