"""Throughput of the whole audit, and the same work done row by row.

Prints, for synthetic line lists of 2,000 and 20,000 valves (three cases each, fixed seed):
valve-cases per second from file to the CSV outputs, the growth ratio between the two sizes,
peak memory; on the 2,000-valve list, the time per case of a plain row-by-row reference loop
(a CoolProp PropsSI call per property and the `fluids` library's scalar sizing functions per
case, carried to convergence where reducers make them iterate: see reference.py) and the speed ratio; and the time to write the HTML and PDF reports for 2,000 valves.

Each measurement runs in a fresh process, so CoolProp's caches start cold every time.

    python benchmarks/bench_audit.py               # the full run (a few minutes, most of it the PDF)
    python benchmarks/bench_audit.py --small 300   # smoke test: every step at 300 valves
    python benchmarks/bench_audit.py --skip-report # the audit's figures only
    python benchmarks/bench_audit.py --report-only --repeat 3  # the report's figures, median of three PDFs
    python benchmarks/bench_audit.py --skip-report --audit-repeat 3  # each list audited three times, in turn
"""
from __future__ import annotations

import argparse
import json
import math
import platform
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent))

from memory import TreeMemory  # noqa: E402


def _measure_audit(path: str, out: str, formats: str) -> dict:
    """In this (fresh) process, as the command line runs: from the first import of the tool to the outputs.

    The line list is read in a child process while this one imports the engine and CoolProp
    (audit.io.early), as ``valve-audit run`` does; both are inside the end-to-end time and the memory.
    """
    import resource

    from stages import TIMES, instrument_engine, instrument_pipeline

    t_start = time.perf_counter()
    from audit.io.early import start_reading
    from audit.io.reader import Limits

    # The row limit a user raises with --max-rows for a genuine list of over 100,000 rows (--huge).
    limits = Limits(max_rows=1_000_000, max_bytes=500_000_000)
    # Forked before the memory sampler's thread starts (a fork copies no thread); the sampler finds the child.
    early = start_reading(Path(path), None, 101325.0, limits)  # 101325 Pa: Options' default p_atm
    with TreeMemory(every=0.05) as memory:  # the workers' share too (the reading child, property calls, CSV parts)
        from audit.engine import Options
        from audit.pipeline import run_files
        import CoolProp.CoolProp  # noqa: F401  (imported by the engine already; named for the reader)
        t_import = time.perf_counter() - t_start

        instrument_engine()
        instrument_pipeline()
        t0 = time.perf_counter()
        summary = run_files(Path(path), Path(out), Options(), limits=limits, formats=set(formats.split(",")),
                            quiet=True, early=early)
        seconds = time.perf_counter() - t0
    end_to_end = time.perf_counter() - t_start
    rss_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    # Judged: the larger of the tree's peak PSS and this process's own peak RSS (shared pages in full).
    return {"seconds": seconds, "end_to_end": end_to_end, "cases": summary.cases, "valves": summary.audited,
            "peak_mb": max(memory.peak_mb, rss_mb), "tree_pss_mb": memory.peak_mb, "rss_mb": rss_mb,
            "stages": dict(TIMES), "import_seconds": t_import, "early": early is not None}


def _measure_report(path: str, out: str, plots_in_pdf: str = "png") -> dict:
    """In this (fresh) process: the audit once, then the HTML and the PDF, each timed, with sizes and the
    process's peak memory. plots_in_pdf: 'png' (this release: images in the PDF, vector plots in the
    HTML, parts of about 100 valve sections) or 'svg' (before: the same vector plots laid out by the PDF
    renderer, the report cut in one part per core)."""
    import resource

    from audit.engine import Options
    from audit.pipeline import run_audit, run_metadata
    from audit.report.html import build_context, render_html
    from audit.report.pdf import render_pdf

    options = Options()
    audit = run_audit(Path(path), options)
    meta = run_metadata(audit.linelist, options, None, None)
    images = plots_in_pdf == "png"
    t0 = time.perf_counter()
    context = build_context(audit, meta, images=images)
    html = render_html(context)
    (Path(out) / "report.html").write_text(html, encoding="utf-8")
    t_html = time.perf_counter() - t0
    plotted = sum(1 for d in context["details"] if d["svg"])
    with_findings = len(context["details"])
    t0 = time.perf_counter()
    with TreeMemory() as memory:   # as audit.report.write does: the page drawn, the context let go, then printed
        printed = render_html(context, for_print=images)
        del context, html
        render_pdf(printed, Path(out) / "report.pdf", **({} if images else {"part_cost": float("inf")}))
    t_pdf = time.perf_counter() - t0
    return {"html_seconds": t_html, "pdf_seconds": t_pdf, "valves": len(audit.valves),
            "valves_with_findings": with_findings, "valves_plotted": plotted,
            "html_mb": (Path(out) / "report.html").stat().st_size / 1e6,
            "pdf_mb": (Path(out) / "report.pdf").stat().st_size / 1e6,
            "peak_mb": resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
            + resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024.0,
            "pdf_tree_pss_mb": memory.peak_mb}


def reference_row_by_row(path: Path) -> tuple[list[dict], float]:
    """The plain loop: per case, PropsSI for each property, then fluids' scalar sizing.

    Returns the Kv per (tag, case) and the seconds taken.  Same inputs as the audit, read with
    the project's loader so that only properties and sizing are compared.
    """
    import CoolProp.CoolProp as CP

    from audit.engine import Options, case_table
    from audit.io.loader import load_linelist

    ll = load_linelist(path)
    cases = case_table(ll, Options())
    fluid_names = ll.valves["fluid"].to_numpy()[cases["valve"].to_numpy(int)]
    phases = cases["phase_given"].to_numpy()
    results = []
    t0 = time.perf_counter()
    for i, c in enumerate(cases.itertuples()):
        name = fluid_names[i].strip()
        p1, p2, t1 = c.p_in, c.p_out, c.t_in
        rho = CP.PropsSI("D", "P", p1, "T", t1, name)
        mu = CP.PropsSI("V", "P", p1, "T", t1, name)
        if phases[i]:
            gas = phases[i] == "gas"
        elif "&" in name:
            gas = True  # the synthetic mixtures are all natural gas
        else:
            gas = t1 >= CP.PropsSI("TCRIT", name) or p1 < CP.PropsSI("P", "T", t1, "Q", 0, name)
        w = c.flow if c.flow_basis == "mass" else c.flow * rho
        d, d1, d2 = c.valve_size, max(c.pipe_in_id, c.valve_size), max(c.pipe_out_id, c.valve_size)
        try:
            kv = _reference_kv(CP, gas, name, p1, p2, t1, rho, mu, w, d, d1, d2, c)
            error = ""
        except Exception as exc:  # the reference's own failures are counted, not hidden
            kv, error = math.nan, f"{type(exc).__name__}: {exc}"[:120]
        results.append({"tag": c.tag, "case": c.case, "kv": kv, "gas": bool(gas), "error": error})
    return results, time.perf_counter() - t0


def _reference_kv(CP, gas, name, p1, p2, t1, rho, mu, w, d, d1, d2, c):
    """One case through PropsSI and fluids' scalar sizing (see reference.py)."""
    import reference

    if gas:
        mw = CP.PropsSI("M", "P", p1, "T", t1, name) * 1000.0
        z = CP.PropsSI("Z", "P", p1, "T", t1, name)
        # The isentropic exponent rho c^2 / p (docs/methods.md): the exponent the audit uses for F_gamma.
        k = CP.PropsSI("D", "P", p1, "T", t1, name) * CP.PropsSI("A", "P", p1, "T", t1, name) ** 2 / p1
        q_normal = w / (101325.0 * mw / 1000.0 / (8.314462618 * 273.15))
        return reference.kv_gas(t1, mw, mu, k, z, p1, p2, q_normal, d, d1, d2, c.fl, c.fd, c.xt)
    psat = CP.PropsSI("P", "T", t1, "Q", 0, name)
    pc = CP.PropsSI("PCRIT", name)
    return reference.kv_liquid(rho, psat, pc, mu, p1, p2, w / rho, d, d1, d2, c.fl, c.fd)


def _measure_core(path: str) -> dict:
    """In this (fresh) process: properties and sizing only, the work the reference loop does."""
    from audit.engine import Options, add_mass_flow, add_properties, add_sizing, case_table
    from audit.io.loader import load_linelist

    ll = load_linelist(Path(path))
    t0 = time.perf_counter()
    cases = case_table(ll, Options())
    add_properties(cases, ll, Options())
    add_mass_flow(cases, ll, Options())
    add_sizing(cases)
    return {"seconds": time.perf_counter() - t0, "cases": len(cases)}


def _measure_reference(path: str) -> dict:
    results, seconds = reference_row_by_row(Path(path))
    return {"seconds": seconds, "cases": len(results)}


def _child(func: str, *args: str) -> dict:
    """Run one measurement in a fresh interpreter and return its JSON result."""
    code = (f"import sys, json; sys.path.insert(0, {str(HERE)!r}); sys.path.insert(0, {str(HERE.parent)!r}); "
            f"import bench_audit as b; print(json.dumps(b.{func}(*{list(args)!r})))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--small", type=int, default=0, help="smoke test: run every step at this many valves")
    parser.add_argument("--skip-report", action="store_true", help="audit figures only (the two PDFs take minutes)")
    parser.add_argument("--report-only", action="store_true", help="the report figures only, at 2,000 valves")
    parser.add_argument("--repeat", type=int, default=1, help="runs of this release's PDF (the median is judged)")
    parser.add_argument("--audit-repeat", type=int, default=1,
                        help="audits of each list, the sizes in turn (medians of the times and stages are judged, "
                             "and the highest peak memory)")
    parser.add_argument("--huge", type=int, default=0,
                        help="also audit a list of this many valves, for its memory (200000: the 2 GB target)")
    args = parser.parse_args(argv)
    from synthetic import make_linelist

    small, large = (args.small, args.small * 10) if args.small else (2000, 20000)
    with tempfile.TemporaryDirectory() as tmp:
        tmp = Path(tmp)
        lists = {n: make_linelist(n, tmp / f"linelist_{n}.csv") for n in (small, large)}
        print(f"machine: {platform.machine()}, {platform.processor() or platform.platform()}, "
              f"Python {platform.python_version()}")
        every = {n: [] for n in lists}
        for k in range(0 if args.report_only else max(args.audit_repeat, 1)):
            for n, path in lists.items():  # the sizes in turn, so a slow spell of this shared machine hits both
                every[n].append(_audit_line(n, path, tmp, k))
        runs = {n: _median_run(rs) for n, rs in every.items() if rs}
        if args.audit_repeat > 1 and runs:
            print(f"medians of {args.audit_repeat} runs at each size (peak memory: the highest) are judged below")
        if not args.report_only:
            _print_audit(runs, lists, small, large, args)
        if args.huge and not args.report_only:
            r = _audit_line(args.huge, make_linelist(args.huge, tmp / f"linelist_{args.huge}.csv"), tmp, 0)
            if args.huge == 200000:
                print(f"target at 200,000 valves: peak memory {r['peak_mb']:.0f} MB (target under 2 GB: "
                      f"{'met' if r['peak_mb'] < 2048 else 'NOT met'})")
        if args.skip_report:
            return 0
        _print_reports(tmp, lists[small], args)
    return 0


def _median_run(runs: list[dict]) -> dict:
    """One figure per measure over repeated audits of one list: the median of the times (stage by
    stage), the highest peak memory (a target is a ceiling)."""
    import statistics

    out = dict(runs[0])
    for key in ("seconds", "end_to_end", "import_seconds"):
        out[key] = statistics.median(r[key] for r in runs)
    for key in ("peak_mb", "tree_pss_mb", "rss_mb"):
        out[key] = max(r[key] for r in runs)
    out["stages"] = {name: statistics.median(r["stages"].get(name, 0.0) for r in runs) for name in runs[0]["stages"]}
    out["early"] = all(r["early"] for r in runs)
    return out


def _audit_line(n: int, path: Path, tmp: Path, k: int) -> dict:
    """Audit one list in a fresh process (run k) and print its line."""
    out = tmp / f"out_{n}_{k}"
    out.mkdir()
    r = _child("_measure_audit", str(path), str(out), "csv")
    print(f"{n:>6} valves, {r['cases']:>6} cases: {r['end_to_end']:7.2f} s end to end ({r['seconds']:.2f} s after "
          f"the imports), {r['cases'] / r['end_to_end']:7.0f} valve-cases/s, peak memory {r['peak_mb']:5.0f} MB "
          f"(process and workers {r['tree_pss_mb']:.0f} MB PSS, this process {r['rss_mb']:.0f} MB RSS)")
    return r


def _print_audit(runs, lists, small, large, args):
    big = runs[large]
    beside = ("with the line list read beside it in a child process" if big["early"]
              else "the line list read after it, in this process")
    print(f"stages at {large} valves (import of the tool and CoolProp: {big['import_seconds']:.2f} s, {beside}):")
    for name, sec in sorted(big["stages"].items(), key=lambda kv: -kv[1]):
        print(f"  {name:<16} {sec:6.2f} s  {100 * sec / big['seconds']:4.0f} %")
    rest = big["seconds"] - sum(big["stages"].values())
    print(f"  {'other':<16} {rest:6.2f} s  {100 * rest / big['seconds']:4.0f} %   (case table, outlet notes, JSON, "
          "publishing)")
    if not args.small:
        end_to_end = big["end_to_end"]
        print(f"targets at 20,000 valves: end to end {end_to_end:.1f} s (target under 4.5 s: "
              f"{'met' if end_to_end < 4.5 else 'NOT met'}), peak memory {big['peak_mb']:.0f} MB (target under "
              f"400 MB: {'met' if big['peak_mb'] < 400 else 'NOT met'})")
    growth = runs[large]["end_to_end"] / runs[small]["end_to_end"]
    print(f"growth for {large // small}x the work: {growth:.2f}x")
    ref = _child("_measure_reference", str(lists[small]))
    core = _child("_measure_core", str(lists[large]))
    # End to end at both sizes: the fixed costs (imports, process start) cancel; reading stays in, as a cost
    # per case wherever it is not hidden behind the imports.
    marginal = (runs[large]["end_to_end"] - runs[small]["end_to_end"]) / (runs[large]["cases"] - runs[small]["cases"])
    core_large = core["seconds"] / core["cases"]
    # The floor: every case's CoolProp state and its IEC sizing, nothing else (measured at the large list).
    print(f"marginal cost per case, {small} to {large} valves: {marginal * 1e6:.0f} us; properties and sizing "
          f"alone at {large} valves: {core_large * 1e6:.0f} us/case; ratio {marginal / core_large:.1f} "
          f"(target at most 2x the floor: {'met' if marginal <= 2 * core_large else 'NOT met'})")
    core = _child("_measure_core", str(lists[small]))
    ref_per_case = ref["seconds"] / ref["cases"]
    core_per_case = core["seconds"] / core["cases"]
    ours_per_case = runs[small]["seconds"] / runs[small]["cases"]
    print(f"row-by-row reference on {small} valves (properties and sizing): {ref['seconds']:.2f} s, "
          f"{ref_per_case * 1e3:.3f} ms/case")
    print(f"  vectorised properties and sizing, same cases: {core['seconds']:.3f} s, "
          f"{core_per_case * 1e3:.4f} ms/case: {ref_per_case / core_per_case:.0f}x faster per case")
    print(f"  whole audit after the imports (also rules, headroom, writing; reading where not beside the imports): "
          f"{ours_per_case * 1e3:.4f} ms/case: "
          f"{ref_per_case / ours_per_case:.0f}x")


def _print_reports(tmp, linelist, args):
    import statistics

    for mode, words, runs in (("svg", "before (vector plots laid out in the PDF, one part per core)", 1),
                              ("png", "after (plots as images in the PDF in parts of about 100 valve sections, "
                                      "vector in the HTML)", args.repeat)):
        reps = []
        for k in range(runs):
            out = tmp / f"report_{mode}_{k}"
            out.mkdir()
            reps.append(rep := _child("_measure_report", str(linelist), str(out), mode))
            print(f"report for {rep['valves']} valves ({rep['valves_with_findings']} with findings, "
                  f"{rep['valves_plotted']} plotted), {words}: HTML {rep['html_seconds']:.1f} s "
                  f"{rep['html_mb']:.1f} MB, PDF {rep['pdf_seconds']:.1f} s {rep['pdf_mb']:.1f} MB, memory while "
                  f"printing {rep['pdf_tree_pss_mb']:.0f} MB (peak PSS of the process and its workers)")
    seconds = statistics.median(r["pdf_seconds"] for r in reps)
    memory = statistics.median(r["pdf_tree_pss_mb"] for r in reps)
    if not args.small:
        print(f"  target: PDF for 2,000 valves under 60 s and 1 GB: median of {len(reps)} run(s) {seconds:.1f} s, "
              f"{memory:.0f} MB: {'met' if seconds < 60 and memory < 1024 else 'NOT met'}")


if __name__ == "__main__":
    sys.exit(main())
