"""Plots for the report, as inline SVG text (matplotlib, no files, no fonts embedded).

One figure object per kind is built once and reused with new data, because
a report for thousands of valves draws hundreds of them.  Greyscale-safe:
line styles and markers carry the meaning, colour only repeats it.
"""
from __future__ import annotations

import io
import re
import xml.etree.ElementTree as ET

import numpy as np

import matplotlib

matplotlib.use("svg")
# Text stays text (small files); ticks are few, as each label costs the PDF renderer a layout.
# Text from the line list (tags, case names) is shown literally, never parsed as math ($...$) or TeX.
matplotlib.rcParams.update({"svg.fonttype": "none", "svg.hashsalt": "valve-audit", "font.size": 8,
                            "axes.spines.top": False, "axes.spines.right": False, "text.parse_math": False,
                            "text.usetex": False})
from matplotlib.ticker import MaxNLocator  # noqa: E402
import matplotlib.pyplot as plt  # noqa: E402

from audit.iec.characteristic import cv_ratio_at_travel  # noqa: E402
from audit.iec.sizing import flow_through  # noqa: E402

_CASE_MARKERS = ["o", "s", "^", "D", "v", "P", "X", "*"]


def svg_text(fig) -> str:
    buf = io.StringIO()
    fig.savefig(buf, format="svg")
    text = buf.getvalue()
    text = text[text.index("<svg"):]               # drop the XML prolog and doctype
    text = re.sub(r"<metadata>.*?</metadata>", "", text, flags=re.S)
    # Inline SVG in HTML needs no namespace declarations, and SVG 2 takes plain href: the
    # report then holds no URL at all, not even a namespace name.
    text = re.sub(r'\s+xmlns(:xlink)?="[^"]*"', "", text)
    return _lighten(text.replace("xlink:href=", "href="))


PNG_DPI = 96  # print: readable at the page width of A4 (a 7.2 in figure, 690 pixels across); smaller is faster


def png_base64(fig) -> str:
    """The figure as a PNG, base64 text for a data: URL (the PDF renderer's only accepted source)."""
    import base64

    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=PNG_DPI)
    return base64.b64encode(buf.getvalue()).decode("ascii")


def _flatten_groups(node) -> None:
    """Lift the children of groups that carry nothing but an id (matplotlib wraps every artist)."""
    for child in list(node):
        _flatten_groups(child)
    kept = []
    for child in list(node):
        kept.extend(list(child) if child.tag == "g" and set(child.attrib) <= {"id"} else [child])
    for child in list(node):
        node.remove(child)
    node.extend(kept)


def _lighten(svg: str) -> str:
    """The same drawing with fewer nodes and attributes: the PDF renderer's cost goes with them.

    Drops id-only groups, ids nothing refers to and no-op rotations, and turns inline styles of
    shapes into presentation attributes (text keeps its style, where font settings live).
    """
    root = ET.fromstring(svg)
    used = set(re.findall(r'href="#([^"]+)"', svg)) | set(re.findall(r"url\(#([^)]+)\)", svg))
    _flatten_groups(root)
    for el in root.iter():
        if el.attrib.get("transform", "").startswith("rotate(-0 "):
            del el.attrib["transform"]
        if el.tag != "svg" and el.attrib.get("id") not in used:
            el.attrib.pop("id", None)
        style = el.attrib.get("style")
        if style and el.tag != "text":
            del el.attrib["style"]
            for part in style.split(";"):
                if ":" in part:
                    key, value = part.split(":", 1)
                    el.set(key.strip(), value.strip())
    return ET.tostring(root, encoding="unicode")


def fleet_svg(ratios: np.ndarray, tags: list[str]) -> str:
    """Every valve's choke_ratio_max, ranked, with the 1.0 line where flow chokes."""
    fig, ax = plt.subplots(figsize=(7.0, 2.6))
    fig.subplots_adjust(left=0.09, right=0.98, bottom=0.3 if len(ratios) <= 40 else 0.18, top=0.95)
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
    svg = svg_text(fig)
    plt.close(fig)
    return svg


class ValvePlots:
    """The two per-valve panels: flow against pressure drop, and the inherent characteristic.

    The figure and its artists are made once; each valve only sets new data and limits.  Case
    markers carry their case name as a label beside the point, so no legend is redrawn.
    """

    def __init__(self):
        self.fig, (self.ax1, self.ax2) = plt.subplots(1, 2, figsize=(7.2, 2.7))
        self.fig.subplots_adjust(left=0.09, right=0.98, bottom=0.18, top=0.95, wspace=0.3)
        self.curve, = self.ax1.plot([], [], color="black", linewidth=1.2)
        self.choke = self.ax1.axvline(1.0, color="black", linestyle=":", linewidth=1.0)
        self.choke_label = self.ax1.text(0, 0, " choked from here", fontsize=6, rotation=90, va="bottom")
        self.inherent, = self.ax2.plot([], [], color="black", linewidth=1.2)
        self.ax2.axvline(100.0, color="black", linestyle=":", linewidth=1.0)
        self.marks = [[], []]
        self.labels = [[], []]
        for k, ax in enumerate((self.ax1, self.ax2)):
            for j in range(len(_CASE_MARKERS)):
                mark, = ax.plot([], [], _CASE_MARKERS[j], color="#333333", markersize=5, markerfacecolor="white")
                self.marks[k].append(mark)
                self.labels[k].append(ax.text(0, 0, "", fontsize=6, va="bottom"))
            ax.xaxis.set_major_locator(MaxNLocator(5))
            ax.yaxis.set_major_locator(MaxNLocator(4))
        self.ax2.set_xlabel("travel [%]")
        self.ax2.set_ylabel("Cv")
        self.ax1.set_ylabel("flow [kg/h]")
        self.title2 = self.ax2.text(0.02, 0.97, "", transform=self.ax2.transAxes, fontsize=6.5, va="top")
        self.title1 = self.ax1.text(0.02, 0.97, "", transform=self.ax1.transAxes, fontsize=6.5, va="top")

    def close(self):
        plt.close(self.fig)

    def svg(self, valve_cases, worst) -> str:
        """valve_cases: the valve's rows of the case table; worst: its worst case's row."""
        return self.render(valve_cases, worst, png=False)[0]

    def render(self, valve_cases, worst, png: bool) -> tuple[str, str]:
        """(SVG text, base64 PNG or '') of the valve's panels: vector for the page, an image for print."""
        sized = valve_cases[np.isfinite(valve_cases["cv"].to_numpy(float))]
        self._flow_panel(sized, worst)
        self._characteristic_panel(sized, worst)
        return svg_text(self.fig), (png_base64(self.fig) if png else "")

    def _place(self, k, xs, ys, names):
        for j in range(len(_CASE_MARKERS)):
            if j < len(xs):
                self.marks[k][j].set_data([xs[j]], [ys[j]])
                self.labels[k][j].set_position((xs[j], ys[j]))
                self.labels[k][j].set_text(f"  {names[j]}")
            else:
                self.marks[k][j].set_data([], [])
                self.labels[k][j].set_text("")

    LABEL_GAP = 0.065  # axes fraction between stacked case labels: a 6 pt line in a 2.7 in tall panel, and air

    def _spread(self, k, ax):
        """Move case labels that would overlap up, one line apart (cases of near-equal flow or travel,
        such as the history's percentiles beside the line list's cases, otherwise print over each other).
        Called once the panel's limits are set; the markers stay where the numbers put them."""
        (x0, x1), (y0, y1) = ax.get_xlim(), ax.get_ylim()
        shown = [lab for lab in self.labels[k] if lab.get_text()]
        spots = []
        for lab in shown:
            x, y = lab.get_position()
            spots.append([(x - x0) / (x1 - x0), (y - y0) / (y1 - y0), lab])
        placed = []
        for spot in sorted(spots, key=lambda s: (s[1], s[0])):
            fx, fy, lab = spot
            for px, py in sorted(placed, key=lambda q: q[1]):
                if abs(px - fx) < 0.3 and abs(py - fy) < self.LABEL_GAP:
                    fy = py + self.LABEL_GAP
            placed.append((fx, fy))
            lab.set_position((x0 + fx * (x1 - x0), y0 + fy * (y1 - y0)))

    def _flow_panel(self, cases, worst):
        gas = worst["phase"] == "gas"
        p1 = worst["p_in"]
        dp = np.linspace(0.0, 0.98 * p1, 100)[1:]
        kw = dict(is_gas=gas, p1=p1, p2=p1 - dp, t1=worst["t_in"], rho1=worst["rho"], pv=worst["pv"],
                  pc=worst["pc"], molar_mass=worst["molar_mass"], k=worst["k"], d=worst["valve_size"],
                  d1=max(worst["pipe_in_id"], worst["valve_size"]), d2=max(worst["pipe_out_id"], worst["valve_size"]),
                  fl=worst["fl"], xt=worst["xt"])
        with np.errstate(invalid="ignore"):
            w = flow_through(worst["kv"], **kw) * 3600.0
        self.curve.set_data(dp / 1e5, w)
        x_choke = worst["dp_choked"] / 1e5
        self.choke.set_xdata([x_choke, x_choke])
        xs = cases["dp"].to_numpy(float) / 1e5
        ys = cases["w"].to_numpy(float) * 3600.0
        self._place(0, xs, ys, list(cases["case"]))
        top = np.nanmax(np.r_[w, ys, 1e-9]) * 1.12
        self.ax1.set_xlim(0, max(p1 / 1e5, np.nanmax(np.r_[xs, 0])) * 1.02)
        self.ax1.set_ylim(0, top)
        self.choke_label.set_position((x_choke, top * 0.05))
        self._spread(0, self.ax1)
        self.ax1.set_xlabel(f"pressure drop [bar] (inlet {p1 / 1e5:.3g} bar(a))")
        self.title1.set_text(f"at the opening of case {worst['case']}")

    def _characteristic_panel(self, cases, worst):
        h = np.linspace(0.0, 100.0, 101)
        char, rng, rated = worst["characteristic"], worst["rangeability"], worst["rated_cv"]
        curve = rated * cv_ratio_at_travel(h, char, rng)
        self.inherent.set_data(h, curve)
        xs = cases["travel_pct"].to_numpy(float)
        ys = cases["cv"].to_numpy(float)
        self._place(1, xs, ys, list(cases["case"]))
        self.ax2.set_xlim(0, max(105.0, np.nanmax(np.r_[xs, 0]) + 5))
        self.ax2.set_ylim(0, np.nanmax(np.r_[curve, ys]) * 1.1)
        self._spread(1, self.ax2)
        self.title2.set_text(f"inherent: {char.replace('_', ' ')}")


__all__ = ["fleet_svg", "ValvePlots"]
