"""Plots for the review report, drawn with matplotlib and returned as inline SVG text.

matplotlib is imported here only, and only the report command imports this module, so
``check`` and ``beams`` stay fast and need no plotting library (it is the ``report``
extra).  Planes are told apart by line style (tangential solid, sagittal dashed) as well
as colour, so the plots read in greyscale.
"""

from __future__ import annotations

import io
import math

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


def _svg(fig) -> str:
    plt = _pyplot()
    buf = io.StringIO()
    fig.savefig(buf, format="svg", bbox_inches="tight", metadata={"Date": None, "Creator": None})
    plt.close(fig)
    text = buf.getvalue()
    start = text.find("<svg")
    return text[start:] if start >= 0 else text


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
        ax.annotate(f"{wst.w * 1e3:.0f}", (wst.s, wst.w * 1e3), textcoords="offset points", xytext=(3, -10),
                    fontsize=7, color=colour)
    ax.set_xlabel("distance along the path s (mm)")
    ax.set_ylabel("1/e$^2$ radius (µm)")
    ax.set_ylim(0, top * 1.15 if top > 0 else 1)
    ax.set_xlim(s[0], s[-1])
    ax.legend(loc="upper left", fontsize=7, frameon=False)
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


def windows_svg(windows) -> str | None:
    """Each air gap's stability window (mm) with the planned spacing marked."""
    if not windows:
        return None
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(7.2, 0.42 * len(windows) + 0.9))
    labels = []
    for i, w in enumerate(windows):
        g = w.gap
        lo = 0.0 if w.lo is None else w.lo
        hi = w.hi if w.hi is not None else max(g.length * 2.0, lo + 1.0)
        ax.barh(i, hi - lo, left=lo, height=0.5, color="#dcebf5", edgecolor="#0b5fa5", hatch="//" if w.hi is None else "")
        ax.plot([g.length], [i], marker="|", markersize=14, markeredgewidth=2.5, color=STYLE["ink"])
        dist = w.distance
        text = "no edge" if math.isinf(dist) else f"{dist:.3g} mm to edge"
        ax.annotate(text, (g.length, i), textcoords="offset points", xytext=(6, 5), fontsize=7)
        labels.append(f"{g.first} → {g.second}")
    ax.set_yticks(range(len(windows)))
    ax.set_yticklabels(labels, fontsize=7)
    ax.invert_yaxis()
    ax.set_xlabel("air spacing (mm): stable in both planes inside the bar, plan marked |")
    ax.grid(axis="y", visible=False)
    return _svg(fig)
