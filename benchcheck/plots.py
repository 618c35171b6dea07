"""Plots for the review report, drawn with matplotlib and returned as inline SVG text.

matplotlib is imported here only, and only the report command imports this module, so
``check`` and ``beams`` stay fast and need no plotting library (it is the ``report``
extra).  Planes are told apart by line style (tangential solid, sagittal dashed) as well
as colour, so the plots read in greyscale.
"""

from __future__ import annotations

import io
import itertools
import math
import re

import numpy as np

from .planview import STYLE
from .solve import radius_along

T_STYLE = dict(color="#0b5fa5", linestyle="-", linewidth=1.6)
S_STYLE = dict(color="#c2571a", linestyle="--", linewidth=1.6)


def _pyplot():
    import matplotlib

    matplotlib.use("svg")
    import matplotlib.pyplot as plt

    plt.rcParams.update({
        "svg.fonttype": "path",          # text as outlines: no font files needed by the reader
        "svg.hashsalt": "benchcheck",    # stable ids, so the same bench gives the same file
        "font.size": 9,
        "axes.spines.top": False,
        "axes.spines.right": False,
        "axes.grid": True,
        "grid.color": "#e6e3dc",
        "grid.linewidth": 0.6,
    })
    return plt


_FIGURES = itertools.count(1)


def _svg(fig) -> str:
    """The figure as inline SVG, its element ids made unique within the page (several
    figures share one HTML document, and matplotlib numbers ids the same way in each)."""
    plt = _pyplot()
    buf = io.StringIO()
    fig.savefig(buf, format="svg", bbox_inches="tight", metadata={"Date": None, "Creator": None})
    plt.close(fig)
    text = buf.getvalue()
    start = text.find("<svg")
    text = text[start:] if start >= 0 else text
    prefix = f"fig{next(_FIGURES)}-"
    text = re.sub(r'\bid="([^"]+)"', lambda m: f'id="{prefix}{m.group(1)}"', text)
    text = re.sub(r"url\(#([^)]+)\)", lambda m: f"url(#{prefix}{m.group(1)})", text)
    return re.sub(r'href="#([^"]+)"', lambda m: f'href="#{prefix}{m.group(1)}"', text)


def path_length(solution, ident: str, role: str) -> float:
    if role == "cavity":
        path = solution.trace.cavities[ident]
        return sum(path.segments) if path.role == "ring" else path.hits[-1].s
    path = solution.trace.beams[ident]
    end = path.hits[-1].s
    return end + (path.tail.length if path.tail is not None else 0.0)


def beam_size_svg(solution, ident: str, role: str) -> str | None:
    """w_t and w_s against the distance along one cavity or beam, optics and waists marked."""
    result = solution.cavities[ident] if role == "cavity" else solution.beams[ident]
    if not any(result.profile.get(p) for p in ("t", "s")):
        return None
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(7.2, 2.6))
    s = np.linspace(0.0, path_length(solution, ident, role), 900)
    top = 0.0
    for plane, style, name in (("t", T_STYLE, "tangential $w_t$"), ("s", S_STYLE, "sagittal $w_s$")):
        pieces = result.profile.get(plane) or []
        if not pieces:
            continue
        w = radius_along(pieces, s) * 1e3
        ax.plot(s, w, label=name, **style)
        top = max(top, float(np.nanmax(w)))
    for h in result.hits:
        ax.axvline(h.s, color="#8c8880", linewidth=0.7, linestyle=":")
        ax.annotate(h.optic, (h.s, 1.0), xycoords=("data", "axes fraction"), rotation=90, fontsize=7,
                    ha="right", va="top", color="#444444")
    for wst in result.waists:
        marker = "o" if wst.plane == "t" else "s"
        colour = T_STYLE["color"] if wst.plane == "t" else S_STYLE["color"]
        ax.plot([wst.s], [wst.w * 1e3], marker=marker, color=colour, markersize=4, linestyle="none")
        ax.annotate(f"{wst.plane} {wst.w * 1e3:.0f} µm", (wst.s, wst.w * 1e3), textcoords="offset points",
                    xytext=(3, -10 if wst.plane == "t" else 4), fontsize=7, color=colour, annotation_clip=False)
    ax.set_xlabel("distance along the path s (mm)")
    ax.set_ylabel("1/e$^2$ radius (µm)")
    ax.set_ylim(0, top * 1.15 if top > 0 else 1)
    ax.set_xlim(s[0], s[-1])
    ax.legend(loc="lower left", bbox_to_anchor=(0.0, 1.08), ncol=2, fontsize=7, frameon=False)
    return _svg(fig)


def stability_svg(solution) -> str | None:
    """Every cavity's half-traces (m_t, m_s): stable inside the square |m| < 1 in both."""
    cavities = list(solution.cavities.values())
    if not cavities:
        return None
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(3.6, 3.4))
    ax.add_patch(plt.Rectangle((-1, -1), 2, 2, facecolor="#dcebf5", edgecolor="#0b5fa5", linewidth=1.0,
                               hatch="..", zorder=0))
    lim = 1.25
    for c in cavities:
        mt, ms = c.modes["t"].m, c.modes["s"].m
        lim = max(lim, min(abs(mt), 5.0) + 0.25, min(abs(ms), 5.0) + 0.25)
        shown = (max(-5.0, min(5.0, mt)), max(-5.0, min(5.0, ms)))
        ax.plot(*shown, marker="o", color=STYLE["ink"], markersize=5)
        ax.annotate(c.id, shown, textcoords="offset points", xytext=(5, 4), fontsize=8)
        if c.thermal is not None:
            (t0, t1), (s0, s1) = c.thermal.m_range["t"], c.thermal.m_range["s"]
            ax.plot([t0, t1], [s0, s1], color=STYLE["ink"], linewidth=2.0, alpha=0.5)
    ax.set_xlim(-lim, lim)
    ax.set_ylim(-lim, lim)
    ax.set_aspect("equal")
    ax.set_xlabel("tangential half-trace $m_t$")
    ax.set_ylabel("sagittal half-trace $m_s$")
    ax.set_title("stable inside the square", fontsize=8)
    return _svg(fig)


def windows_svg(windows) -> str:
    """Each air gap's stability window as the change of spacing (mm) it allows, the plan at
    zero; a symmetric-log axis shows windows of a tenth of a millimetre beside ones of metres."""
    if not windows:
        return None
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(7.2, 0.42 * len(windows) + 1.0))
    labels = []
    reach = 1.0
    for w in windows:
        for edge in (w.lo, w.hi):
            if edge is not None:
                reach = max(reach, abs(edge - w.gap.length))
    reach *= 1.5
    for i, w in enumerate(windows):
        g = w.gap
        lo = -g.length if w.lo is None else w.lo - g.length
        hi = reach if w.hi is None else w.hi - g.length
        narrow = w.distance < 1.0
        ax.barh(i, hi - lo, left=lo, height=0.5, color="#f6d9c8" if narrow else "#dcebf5",
                edgecolor="#b3261e" if narrow else "#0b5fa5", hatch="//" if w.hi is None else "")
        ax.plot([0.0], [i], marker="|", markersize=14, markeredgewidth=2.5, color=STYLE["ink"])
        text = "no edge" if math.isinf(w.distance) else f"{w.distance:.3g} mm to the nearer edge"
        ax.annotate(text, (0.0, i), textcoords="offset points", xytext=(6, 6), fontsize=7)
        labels.append(f"{g.first} → {g.second} ({g.length:.1f} mm)")
    ax.set_xscale("symlog", linthresh=1.0)
    ax.set_xlim(-reach, reach)
    ax.axvline(0.0, color=STYLE["ink"], linewidth=0.6)
    ax.set_yticks(range(len(windows)))
    ax.set_yticklabels(labels, fontsize=7)
    ax.invert_yaxis()
    ax.set_xlabel("change of air spacing (mm, symmetric log scale): stable in both planes inside the bar; "
                  "plan at 0", fontsize=8)
    ax.grid(axis="y", visible=False)
    return _svg(fig)
