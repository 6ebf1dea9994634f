"""Plots for the report, as inline SVG text (matplotlib, no files, no fonts embedded).

One figure object per kind is built once and reused with new data, because
a report for thousands of valves draws hundreds of them.  Greyscale-safe:
line styles and markers carry the meaning, colour only repeats it.
"""
from __future__ import annotations

import io
import re

import numpy as np

import matplotlib

matplotlib.use("svg")
matplotlib.rcParams.update({"svg.fonttype": "none", "svg.hashsalt": "valve-audit", "font.size": 8,
                            "axes.spines.top": False, "axes.spines.right": False})
import matplotlib.pyplot as plt  # noqa: E402

from .characteristic import cv_ratio_at_travel  # noqa: E402
from .sizing import KV_TO_CV, flow_through  # noqa: E402

_CASE_MARKERS = ["o", "s", "^", "D", "v", "P", "X", "*"]


def _svg(fig) -> str:
    buf = io.StringIO()
    fig.savefig(buf, format="svg", bbox_inches="tight")
    text = buf.getvalue()
    text = text[text.index("<svg"):]               # drop the XML prolog and doctype
    text = re.sub(r"<metadata>.*?</metadata>", "", text, flags=re.S)
    # Inline SVG in HTML needs no namespace declarations, and SVG 2 takes plain href: the
    # report then holds no URL at all, not even a namespace name.
    text = re.sub(r'\s+xmlns(:xlink)?="[^"]*"', "", text)
    return text.replace("xlink:href=", "href=")


def fleet_svg(ratios: np.ndarray, tags: list[str]) -> str:
    """Every valve's choke_ratio_max, ranked, with the 1.0 line where flow chokes."""
    fig, ax = plt.subplots(figsize=(7.0, 2.6))
    r = np.asarray(ratios, float)
    order = np.argsort(-np.nan_to_num(r, nan=-1.0))
    r = r[order]
    x = np.arange(1, len(r) + 1)
    ax.bar(x, np.nan_to_num(r), width=0.85, color=np.where(r >= 1.0, "#444444", "#aaaaaa"), linewidth=0)
    ax.axhline(1.0, color="black", linestyle="--", linewidth=1.0)
    ax.text(len(r) + 0.5, 1.0, " choked (1.0)", va="bottom", ha="right", fontsize=7)
    ax.set_xlabel("valves, ranked by choke ratio (rank 1 at left)")
    ax.set_ylabel("highest choke ratio")
    ax.set_xlim(0.3, len(r) + 0.7)
    if len(r) <= 40:
        ax.set_xticks(x, [tags[i] for i in order], rotation=90, fontsize=6)
    svg = _svg(fig)
    plt.close(fig)
    return svg


class ValvePlots:
    """The two per-valve panels: flow against pressure drop, and the inherent characteristic."""

    def __init__(self):
        self.fig, (self.ax1, self.ax2) = plt.subplots(1, 2, figsize=(7.2, 2.7))
        self.fig.subplots_adjust(wspace=0.35)

    def close(self):
        plt.close(self.fig)

    def svg(self, valve_cases, worst) -> str:
        """valve_cases: the valve's rows of the case table; worst: its worst case's row."""
        for ax in (self.ax1, self.ax2):
            ax.clear()
        self._flow_panel(valve_cases, worst)
        self._characteristic_panel(valve_cases, worst)
        return _svg(self.fig)

    def _flow_panel(self, cases, worst):
        ax = self.ax1
        gas = worst["phase"] == "gas"
        p1 = worst["p_in"]
        dp = np.linspace(0.0, 0.98 * p1, 120)[1:]
        kw = dict(is_gas=gas, p1=p1, p2=p1 - dp, t1=worst["t_in"], rho1=worst["rho"], pv=worst["pv"],
                  pc=worst["pc"], molar_mass=worst["molar_mass"], k=worst["k"], d=worst["valve_size"],
                  d1=max(worst["pipe_in_id"], worst["valve_size"]), d2=max(worst["pipe_out_id"], worst["valve_size"]),
                  fl=worst["fl"], xt=worst["xt"])
        with np.errstate(invalid="ignore"):
            w = flow_through(worst["kv"], **kw) * 3600.0
        ax.plot(dp / 1e5, w, color="black", linewidth=1.2, label=f"at the opening of case {worst['case']}")
        ax.axvline(worst["dp_choked"] / 1e5, color="black", linestyle=":", linewidth=1.0)
        ax.text(worst["dp_choked"] / 1e5, ax.get_ylim()[1] * 0.05, " choked from here", fontsize=6, rotation=90,
                va="bottom")
        for j, (_, c) in enumerate(cases.iterrows()):
            if np.isfinite(c.get("cv", np.nan)):
                ax.plot([c["dp"] / 1e5], [c["w"] * 3600.0], _CASE_MARKERS[j % 8], color="#555555", markersize=5,
                        markerfacecolor="white", label=f"case {c['case']}")
        ax.set_xlabel(f"pressure drop [bar] (inlet {p1 / 1e5:.3g} bar(a))")
        ax.set_ylabel("flow [kg/h]")
        ax.set_xlim(left=0)
        ax.set_ylim(bottom=0)
        ax.legend(fontsize=6, frameon=False, loc="lower right")

    def _characteristic_panel(self, cases, worst):
        ax = self.ax2
        h = np.linspace(0.0, 100.0, 101)
        char, rng, rated = worst["characteristic"], worst["rangeability"], worst["rated_cv"]
        ax.plot(h, rated * cv_ratio_at_travel(h, char, rng), color="black", linewidth=1.2,
                label=f"inherent: {char.replace('_', ' ')}")
        for j, (_, c) in enumerate(cases.iterrows()):
            if np.isfinite(c.get("cv", np.nan)):
                ax.plot([c["travel_pct"]], [c["cv"]], _CASE_MARKERS[j % 8], color="#555555", markersize=5,
                        markerfacecolor="white", label=f"case {c['case']}")
        ax.axvline(100.0, color="black", linestyle=":", linewidth=1.0)
        ax.set_xlabel("travel [%]")
        ax.set_ylabel("Cv")
        ax.set_xlim(0, max(105.0, np.nanmax(np.r_[cases["travel_pct"].to_numpy(float), 0]) + 5))
        ax.set_ylim(bottom=0)
        ax.legend(fontsize=6, frameon=False, loc="upper left")


__all__ = ["fleet_svg", "ValvePlots", "KV_TO_CV"]
