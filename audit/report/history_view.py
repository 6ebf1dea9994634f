"""The report's process-history section: valves ranked by time at a limit, and travel over time.

One row per valve with history; the share of operating time at each limit
(history.csv) and, per valve, a plot of predicted and observed travel and of
the choke ratio against time, drawn once from the audited samples.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

LIMITS = [  # history.csv column, heading
    ("share_choked", "choked"), ("share_near_choke", "near choke"), ("share_cavitating", "cavitating"),
    ("share_flashing", "flashing"), ("share_travel_high", "travel high"), ("share_travel_low", "travel low"),
    ("share_velocity_over", "too fast"), ("share_noise_over", "too loud")]


def _pct(x) -> str:
    return "" if not np.isfinite(x) else f"{100 * x:.0f} %"


def history_rows(table: pd.DataFrame) -> list[dict]:
    """Valves with history, most time at any one limit first (the largest of its shares), then by tag."""
    if table is None or not len(table):
        return []
    shares = table[[c for c, _ in LIMITS]].to_numpy(float)
    worst = np.nanmax(np.where(np.isfinite(shares), shares, -1.0), axis=1)
    order = np.lexsort((table["tag"].to_numpy(dtype=object), -worst))
    rows = []
    for i in order:
        r = table.iloc[i]
        excluded = int(r["samples_read"] - r["samples_used"])
        rows.append({"tag": r["tag"], "used": int(r["samples_used"]), "read": int(r["samples_read"]),
                     "excluded": excluded, "shares": [_pct(float(r[c])) for c, _ in LIMITS],
                     "gap": "" if not np.isfinite(r["travel_gap_median_pct"]) else f"{r['travel_gap_median_pct']:.1f}",
                     "trend": "" if not np.isfinite(r["travel_gap_trend_pct_per_month"])
                     else f"{r['travel_gap_trend_pct_per_month']:+.1f}",
                     "assumed": str(r["assumed"]).replace(";", ", "), "note": r["note"]})
    return rows


def trace_svg(trace: pd.DataFrame, tag: str) -> str:
    """Predicted and observed travel (top) and choke ratio (bottom) over time, as inline SVG."""
    from audit.report.plots import svg_text, plt

    # Every point given: the study already kept every n-th sample, some TRACE_POINTS of them (history.study).
    t = pd.to_datetime(trace["time_ns"].to_numpy(np.int64).astype("datetime64[ns]"))
    fig, (top, bottom) = plt.subplots(2, 1, figsize=(7.0, 3.6), sharex=True)
    try:
        top.plot(t, trace["travel_pct"].to_numpy(float), "-", lw=0.8, color="0.2", label="predicted")
        observed = trace["travel_observed_pct"].to_numpy(float)
        if np.isfinite(observed).any():
            top.plot(t, observed, ":", lw=0.9, color="tab:blue", label="observed")
        top.set_ylabel("travel [%]")
        top.legend(loc="upper left", frameon=False, ncols=2)
        bottom.plot(t, trace["choke_ratio"].to_numpy(float), "-", lw=0.8, color="0.2")
        bottom.axhline(1.0, ls="--", lw=0.8, color="tab:red")
        bottom.set_ylabel("choke ratio [-]")
        bottom.set_xlabel("time (UTC)")
        fig.autofmt_xdate()
        fig.suptitle(f"{tag}: operating samples", fontsize=8)
        fig.tight_layout()
        return svg_text(fig)
    finally:
        plt.close(fig)


def history_context(audit) -> dict:
    """What the template needs for the section; empty without --history."""
    result = getattr(audit, "history", None)
    if result is None:
        return {"history": None}
    rows = history_rows(result.table)
    plots = {}
    for tag, trace in result.traces.items():
        if len(trace):
            try:
                plots[tag] = trace_svg(trace, tag)
            except (ValueError, OverflowError) as exc:  # a plot never stops a run
                plots[tag] = f'<p class="muted">Plot not drawn: {str(exc)[:100]}</p>'
    return {"history": {"rows": rows, "limits": [h for _, h in LIMITS], "plots": plots}}
