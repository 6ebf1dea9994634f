"""The report's content and page: report.html, self-contained.

All text that comes from the line list goes through Jinja's autoescaping;
plots are inline SVG drawn by ``plots``.
"""
from __future__ import annotations

import contextlib
from html import escape as html_escape
from pathlib import Path

import numpy as np
import pandas as pd
from jinja2 import Environment, PackageLoader, select_autoescape

from rules import all_rules, effective_thresholds, severity
from rules.base import Severity

from audit.ranking import family_summary
from audit.workers import die_with_parent

SEVERITY_MEANING = {
    Severity.URGENT: "the valve cannot do its job, or people may be exposed: look now",
    Severity.PLAN: "past a limit: plan a fix for the next maintenance window",
    Severity.WATCH: "near a limit or doubtful data: check at the next opportunity",
    Severity.NOTE: "worth knowing: assumptions behind the numbers",
    Severity.CLEAR: "nothing found",
}
SEVERITY_MARK = {4: "!!!!", 3: "!!!", 2: "!!", 1: "!", 0: "-"}
PRINT_HEADROOM_ROWS = 200  # the PDF lists the valves with least headroom; the page and valves.csv list all
PLOT_FROM = Severity.WATCH  # valves with a finding of this severity or worse get plots

METHODS = [
    "Flow coefficients: IEC 60534-2-1:2011, clauses 6 to 9 and annex A: incompressible and compressible flow, "
    "choked and not, piping geometry factors FP, FLP and xTP for concentric reducers, Reynolds number factor FR "
    "(full-size and reduced trims); the coefficient C is solved for every case to 0.1 %.",
    "Liquid choked limit: dp_choked = (FLP/FP)^2 (p1 - FF pv), FF = 0.96 - 0.28 sqrt(pv/pc). Gas choked limit: "
    "x_choked = F_gamma xTP, F_gamma = kappa/1.40, kappa = rho c^2 / p the isentropic exponent at the inlet "
    "(CoolProp; the row's own k wins): the exponent that sets a nozzle's critical pressure ratio, where the real "
    "gas's cp/cv can be far off near saturation and at high pressure (within 2 % of CoolProp's isentropic nozzle "
    "for the gases tested, 6 % for saturated steam). A case whose factors put x_choked at 1 or more is refused.",
    "Cavitation: xF = dp/(p1 - pv) against xFz (IEC 60534-8-4; estimated from Fd, FL and the case's Kv where the line "
    "list gives none) corrected to the inlet pressure, and against (FLP/FP)^2.",
    "Flashing: outlet pressure at or below the vapour pressure; outlet vapour fraction and mixture density from an "
    "isenthalpic expansion (CoolProp). Outlet velocity: mass flow over outlet density and the valve's nominal bore. "
    "Outlet Mach number for gases and for flashing liquids, the latter against the homogeneous-equilibrium (HEM) "
    "speed of sound of the outlet mixture (dp/drho along the isentrope); at Mach 1 or more the outlet is choked, "
    "the velocity reported is the speed of sound, and the finding gives the outlet bore that would bring the "
    "velocity under its limit. Body inlet and upstream line velocity at the inlet density.",
    "Acoustic-induced vibration: sound power level of gas letdowns by Carucci and Mueller (1982), as the Energy "
    "Institute's 2008 guidelines use it, 10 lg[(dp/p1)^3.6 W^2 (T1/M)^1.2] + 126.1 dB (constants from memory), "
    "against a 155 dB screening limit (common practice).",
    "Liquid noise: IEC 60534-8-4:2015, A-weighted level 1 m from the downstream pipe, turbulent and cavitating "
    "parts with their own third-octave spectra, pipe-wall transmission loss band by band (steel pipe), acoustic "
    "efficiency correction An = -4.6 (globe valves; a site file may change it). Where the line list gives no "
    "downstream wall thickness, the standard-weight (STD) wall of the nearest nominal pipe is assumed and the case "
    "says so. Flashing cases get no number (outside the method). Limit 85 dBA by default (common practice), or the "
    "row's noise_limit. Predictions of this kind are commonly held to be within about 5 dB (common practice).",
    "Gas noise: IEC 60534-8-3:2010, the same level for gases and vapours, all five flow regimes (acoustic efficiency "
    "and peak frequency per regime), third-octave spectrum, pipe-wall transmission loss band by band, and the noise "
    "of the outlet flow where the valve outlet runs faster than Mach 0.3 into a larger pipe (clause 7). An = -3.8 and "
    "Stp = 0.2 (globe valve, cage trim) unless a site file sets others. Outlet state from the isenthalpic expansion "
    "(CoolProp). At a valve outlet Mach number of 1 or more the level is still given, at the method's edge (the "
    "note says so); no number where the outlet gas condenses, and a finding says why.",
    "Travel: from the inherent characteristic (linear, equal percentage with the rangeability, quick opening as "
    "square root), which departs from the installed characteristic.",
    "Fluid properties: CoolProp (Helmholtz equations of state; mixtures by its mixture model; mixture critical "
    "pressure by Kay's rule). Line-list overrides win over CoolProp. Standard gas volumes at the real gas's density "
    "at their reference state (the ideal gas's for custom fluids). Inlets within 1 K of saturation, t_in 'sat' and "
    "quality_in are audited as saturated liquid, saturated vapour or wet vapour (quality 0.9 or more, sized as a gas "
    "with the mixture's density: common practice for wet steam).",
]
NOT_COVERED = [
    "Noise of special low-noise trims (multi-hole cages, multistage trims: IEC 60534-8-3 clause 6 and their own "
    "xFz estimates in 8-4): they are computed as standard trims, which overstates their noise. Noise radiated by the "
    "valve body or upstream pipe.",
    "Two-phase inlets, slurries, non-Newtonian fluids; actuator sizing, stroking speed, shut-off and leakage; body "
    "and trim material, pressure rating; installed (rather than inherent) characteristic; control loop behaviour.",
    "The valve manufacturer's own factors at partial travel (FL, xT and Fd change with opening; rated values are "
    "used).",
]


def _fmt(x, digits=3) -> str:
    """A number to ``digits`` significant figures, never in exponent form between 1e-4 and 1e9:
    2.669 -> '2.67', 4898 -> '4,900', 0.000123 -> '0.000123' (the same precision down a column)."""
    try:
        x = float(x)
    except (TypeError, ValueError):
        return str(x)
    if not np.isfinite(x):
        return ""
    if x == 0:
        return "0"
    if not 1e-4 <= abs(x) < 1e9:
        return f"{x:.{digits}g}"
    magnitude = int(np.floor(np.log10(abs(x))))
    rounded = round(x, digits - 1 - magnitude)
    if rounded != 0 and int(np.floor(np.log10(abs(rounded)))) > magnitude:  # 99.96 -> 100: one digit more
        magnitude += 1
    return f"{rounded:,.{max(digits - 1 - magnitude, 0)}f}"


def _key(x) -> str:
    """A sort key for the page's script: the number, or '' for a blank (blanks sort last)."""
    try:
        x = float(x)
    except (TypeError, ValueError):
        return ""
    return repr(x) if np.isfinite(x) else ""


def _env() -> Environment:
    return Environment(loader=PackageLoader("audit.report", "templates"), autoescape=select_autoescape(["html"]),
                       trim_blocks=True, lstrip_blocks=True)


CASE_ROWS = [  # label, unit, column, scale, offset (numbers: 3 significant figures throughout)
    ("phase", "", "phase", None, 0), ("flow", "kg/h", "w", 3600.0, 0), ("p in", "bar(a)", "p_in", 1e-5, 0),
    ("p out", "bar(a)", "p_out", 1e-5, 0), ("t in", "degC", "t_in", 1.0, -273.15),
    ("Cv required", "", "cv", 1.0, 0), ("Cv ratio", "", "cv_ratio", 1.0, 0),
    ("travel, predicted", "%", "travel_pct", 1.0, 0), ("travel, observed", "%", "travel_observed_pct", 1.0, 0),
    ("dp", "kPa", "dp", 1e-3, 0), ("dp choked", "kPa", "dp_choked", 1e-3, 0), ("x", "", "x", 1.0, 0),
    ("x choked", "", "x_choked", 1.0, 0), ("choke ratio", "", "choke_ratio", 1.0, 0), ("sigma", "", "sigma", 1.0, 0),
    ("xF", "", "xf", 1.0, 0), ("xFz at p1", "", "xfzp1", 1.0, 0), ("cavitation", "", "cavitation", None, 0),
    ("vapour fraction out", "", "vapour_fraction_out", 1.0, 0), ("outlet velocity", "m/s", "velocity_out_m_s", 1.0, 0),
    ("outlet Mach", "", "mach_out", 1.0, 0), ("noise at 1 m", "dBA", "noise_dba", 1.0, 0),
    ("noise limit", "dBA", "noise_limit_dba", 1.0, 0), ("FP", "", "fp", 1.0, 0), ("FLP", "", "flp", 1.0, 0),
    ("FR", "", "fr", 1.0, 0),
]


def _case_table(cases: pd.DataFrame) -> dict:
    """The cases side by side: {'names': case names, 'rows': [(label, unit, cells)]}, blank rows left out."""
    names = [str(c) for c in cases["case"]]
    rows = []
    for label, unit, col, scale, offset in CASE_ROWS:
        if col not in cases:
            continue
        values = cases[col].to_numpy()
        if scale is None:
            cells = ["" if v is None or (isinstance(v, float) and np.isnan(v)) else str(v) for v in values]
        else:
            cells = [_fmt(float(v) * scale + offset) if v is not None else "" for v in values]
        if any(cells):
            rows.append((label, unit, cells))
    return {"names": names, "rows": rows, "text": _case_text(names, rows)}


def _case_text(names: list[str], rows: list) -> str:
    """The same table as aligned plain text, for print: a PDF lays out a text block some ten times
    faster than a table of cells, and a report for thousands of valves holds thousands of them."""
    width = max([10] + [len(n) + 2 for n in names])
    lines = [f"{'quantity':<20}{'unit':<8}" + "".join(f"{n:>{width}}" for n in names)]
    for label, unit, cells in rows:
        lines.append(f"{label:<20}{unit:<8}" + "".join(f"{c[:width - 1]:>{width}}" for c in cells))
    return "\n".join(lines)


def build_context(audit, meta: dict, plots: bool = True, progress=None, images: bool = False) -> dict:
    """Everything the page needs. images: also draw each valve's plots as a PNG, for the PDF
    (``render_html(context, for_print=True)`` places them instead of the SVG)."""
    from audit.report.plots import fleet_svg

    valves, cases = audit.valves, audit.cases
    sev_levels = valves["severity_level"].to_numpy(int)
    severities = [{"label": s.label, "mark": SEVERITY_MARK[int(s)], "meaning": SEVERITY_MEANING[s],
                   "count": int((sev_levels == int(s)).sum())} for s in sorted(Severity, reverse=True)]
    areas = []
    for name, group in valves.groupby(valves["area"].replace("", "(no area)"), sort=True):
        lv = group["severity_level"].to_numpy(int)
        areas.append({"name": name, "counts": [int((lv == int(s)).sum()) for s in sorted(Severity, reverse=True)],
                      "total": len(group)})
    details = _details(audit, plots, progress, images)
    detailed = {d["tag"] for d in details}
    rows = [{"rank": int(v.rank), "tag": v.tag, "area": v.area, "service": v.service, "worst_case": v.worst_case,
             "ratio": _fmt(v.choke_ratio_max), "ratio_key": _key(v.choke_ratio_max), "severity": v.severity,
             "level": int(v.severity_level), "mark": SEVERITY_MARK[int(v.severity_level)],
             "codes": v.finding_codes.replace(";", ", "), "criticality": v.criticality,
             "margin": _fmt(v.capacity_margin), "margin_key": _key(v.capacity_margin),
             "families": " ".join(sorted({severity.family_of(c) for c in v.finding_codes.split(";") if c})),
             "anchor": f"valve-{int(v.rank)}" if v.tag in detailed else ""} for v in valves.itertuples()]
    families = sorted({f for r in rows for f in r["families"].split()})
    thresholds = effective_thresholds(audit.options.thresholds)
    trows = [{"rule": r.code, "name": t.name, "value": _fmt(thresholds[r.code.lower()][t.name], 4), "unit": t.unit,
              "default": _fmt(t.default, 4), "source": t.source, "meaning": t.meaning}
             for r in all_rules() for t in r.thresholds]
    ll = audit.linelist.valves
    typical = [{"tag": t, "style": s, "which": w}
               for t, s, w in zip(ll["tag"], ll["valve_style"], ll["typical_factors"]) if w]
    methods = METHODS + [f"Atmospheric pressure for gauge units: {meta['p_atm_kpa']:g} kPa unless a row's p_atm says "
                         f"otherwise. Property backend for pure fluids: {meta['property_backend']}."]
    scaled = ""
    if meta.get("flow_scale", 1.0) != 1.0 or meta.get("area_scale"):
        scaled = (f"flows of cases {meta['scale_cases']} multiplied by {meta['flow_scale']:g}"
                  + (f"; per area: {meta['area_scale']}" if meta.get("area_scale") else ""))
    meta_rows = [("input file", meta["input_file"]), ("sheet read", meta.get("input_sheet", "") or "(CSV)"),
                 ("input SHA-256", meta["input_sha256"]), ("date", meta["date"]),
                 ("tool version", meta["tool_version"]), ("output format version", meta["output_format_version"]),
                 ("rule-set file", meta["rules_file"]), ("rule-set SHA-256", meta.get("rules_file_sha256", "")),
                 ("trim alternatives file", meta.get("trims_file", "")),
                 ("flow scaling", scaled or "none"), ("atmospheric pressure [kPa]", _fmt(meta["p_atm_kpa"], 6)),
                 ("property backend", meta["property_backend"])]
    if meta.get("previous"):
        meta_rows.append(("previous audit (work list carried over)", meta["previous"]))
    for item in meta.get("history_files", []):
        meta_rows.append(("history file, SHA-256", f"{item['file']}, {item['sha256']}"))
    headroom = []
    if "flow_mult_full_travel" in valves:
        order = np.argsort(np.fmin(valves["flow_mult_full_travel"].to_numpy(float),
                                   valves["capacity_ceiling_mult"].to_numpy(float)), kind="stable")
        headroom = [{"tag": v.tag, "service": v.service, "high": _fmt(v.flow_mult_high_travel),
                     "full": _fmt(v.flow_mult_full_travel), "ceiling": _fmt(v.capacity_ceiling_mult),
                     "dp": _fmt(v.dp_headroom_kpa, 4), "case": v.headroom_case}
                    for v in valves.iloc[order].itertuples()]
    trims = []
    if "trim_alternative" in valves:
        trims = [{"tag": v.tag, "codes": v.finding_codes.replace(";", ", "), "alternative": v.trim_alternative}
                 for v in valves.itertuples() if v.trim_alternative]
    from audit.report.history_view import history_context

    return {
        **history_context(audit),
        "headroom": headroom, "trims": trims,
        "meta": meta, "css": (Path(__file__).parent / "templates" / "report.css").read_text(encoding="utf-8"),
        "counts": {"rows": audit.linelist.rows_total, "audited": len(valves), "rejected": len(audit.rejected),
                   "cases": len(cases)},
        "severities": severities, "areas": areas, "top": rows[:10], "valves": rows, "details": details,
        "families": families, "script": (Path(__file__).parent / "templates" / "report.js").read_text(encoding="utf-8"),
        "choking": choking_view(audit), "grades": severity.TABLE, "adjustments": severity.ADJUSTMENTS,
        "fleet_svg": fleet_svg(valves["choke_ratio_max"].to_numpy(float), list(valves["tag"])) if len(valves) else "",
        "rejected": audit.rejected.to_dict(orient="records"),
        "ignored": ", ".join(audit.linelist.ignored_columns), "methods": methods, "thresholds": trows,
        "typical": typical, "not_covered": NOT_COVERED, "scaled": scaled, "meta_rows": meta_rows,
    }


def choking_view(audit) -> list[dict]:
    """Valves choked at full travel in some case, smallest capacity margin first."""
    cases, valves = audit.cases, audit.valves
    if "choked_at_full_travel" not in cases or not len(valves):
        return []
    hit = cases[cases["choked_at_full_travel"].to_numpy(bool)]
    names = hit.groupby("valve")["case"].agg(lambda c: ", ".join(c))
    chosen = valves[valves["valve"].isin(names.index)]
    chosen = chosen.iloc[np.argsort(chosen["capacity_margin"].to_numpy(float), kind="stable")]
    return [{"tag": v.tag, "service": v.service, "margin": _fmt(v.capacity_margin), "ratio": _fmt(v.choke_ratio_max),
             "cases": names[v.valve], "severity": v.severity, "mark": SEVERITY_MARK[int(v.severity_level)]}
            for v in chosen.itertuples()]


PLOT_COLUMNS = ["case", "phase", "p_in", "t_in", "rho", "pv", "pc", "molar_mass", "k", "valve_size", "pipe_in_id",
                "pipe_out_id", "fl", "xt", "kv", "cv", "dp", "dp_choked", "w", "travel_pct", "characteristic",
                "rangeability", "rated_cv", "choke_ratio"]
PARALLEL_FROM = 60  # plots; below this one process draws them all


def _draw_many(jobs: list[tuple[pd.DataFrame, int, bool]]) -> list[tuple[str, str]]:
    """Draw the per-valve panels for (case rows, worst-case position, with a PNG) jobs, in this process."""
    from audit.report.plots import ValvePlots

    drawer = ValvePlots()
    try:
        return [_one_plot(drawer, vc, worst, png) for vc, worst, png in jobs]
    finally:
        drawer.close()


def _one_plot(drawer, vc: pd.DataFrame, worst: int, png: bool = False) -> tuple[str, str]:
    """One valve's plots (SVG, and a PNG for print when asked), or a plain sentence where its numbers cannot
    be drawn: a plot never stops a run."""
    try:
        return drawer.render(vc, vc.iloc[worst], png)
    except (ValueError, OverflowError, FloatingPointError, RuntimeError) as exc:
        return f"<p class=\"muted\">Plots not drawn for this valve: {html_escape(str(exc).strip()[:120])}.</p>", ""


def draw_plots(jobs: list, workers: int | None = None) -> list[tuple[str, str]]:
    """(SVG text, PNG base64) per job, split over the machine's cores when there are many (matplotlib
    is single-threaded and a plot costs some 30 ms)."""
    import concurrent.futures
    import multiprocessing
    import os

    workers = workers or min(os.cpu_count() or 1, 8)
    if workers < 2 or len(jobs) < PARALLEL_FROM:
        return _draw_many(jobs)
    chunks = [jobs[i::workers] for i in range(workers)]
    with concurrent.futures.ProcessPoolExecutor(workers, mp_context=multiprocessing.get_context("fork"),
                                                initializer=die_with_parent) as pool:
        parts = list(pool.map(_draw_many, chunks))
    out = [("", "")] * len(jobs)
    for i, part in enumerate(parts):
        out[i::workers] = part
    return out


def _details(audit, plots: bool, progress, images: bool = False) -> list[dict]:
    valves, cases, findings = audit.valves, audit.cases, audit.findings
    ll = audit.linelist.valves
    if not len(findings):
        return []
    by_valve = {k: g for k, g in family_summary(cases, findings).groupby("valve")}
    case_groups = {k: g for k, g in cases.groupby("valve")}
    out, jobs, slots = [], [], []
    for v in valves.itertuples():
        vid = int(v.valve)
        if vid not in by_valve:
            continue
        fv = by_valve[vid]  # one line per finding family, worst first (ranking.family_summary)
        vc = case_groups[vid]
        lv = ll.iloc[vid]
        sized = np.isfinite(vc["cv"].to_numpy(float))
        if plots and v.severity_level >= PLOT_FROM and sized.any():
            ratios = np.where(sized, vc["choke_ratio"].to_numpy(float), -np.inf)
            jobs.append((vc[PLOT_COLUMNS].reset_index(drop=True), int(np.argmax(ratios)), images))
            slots.append(len(out))
        out.append({
            "rank": int(v.rank), "anchor": f"valve-{int(v.rank)}", "tag": v.tag, "service": v.service, "area": v.area,
            "severity": v.severity,
            "mark": SEVERITY_MARK[int(v.severity_level)], "worst_case": v.worst_case,
            "fluid": lv["fluid"], "size": f"{lv['valve_size'] * 1000:.0f} mm", "rated_cv": _fmt(lv["rated_cv"], 4),
            "characteristic": lv["characteristic"].replace("_", " "), "fl": _fmt(lv["fl"]), "xt": _fmt(lv["xt"]),
            "fd": _fmt(lv["fd"]), "typical": lv["typical_factors"],
            "findings": [{"severity": Severity(int(s)).label, "sentence": t}
                         for s, t in zip(fv["severity"], fv["sentence"])],
            "case_names": list(vc["case"]), "table": _case_table(vc), "svg": "", "png": "",
        })
    if jobs:
        with _stage(progress, f"Drawing plots for {len(jobs)} valves"):
            for slot, (svg, png) in zip(slots, draw_plots(jobs)):
                out[slot]["svg"], out[slot]["png"] = svg, png
    return out


def _stage(progress, title: str):
    """The progress display's stage, or nothing when there is none."""
    return progress.stage(title) if progress is not None else contextlib.nullcontext()


def render_html(context: dict, for_print: bool = False) -> str:
    """The page; for_print: per-valve plots as PNG images where drawn (the PDF's layout of a vector plot
    costs ten times that of an image), vector plots otherwise."""
    return _env().get_template("report.html").render(**context, for_print=for_print,
                                                      print_headroom_rows=PRINT_HEADROOM_ROWS)
