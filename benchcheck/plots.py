"""Plots for the review report, drawn with matplotlib and returned as inline SVG text.

matplotlib is imported here only, and only the report command imports this module, so
``check`` and ``beams`` stay fast and need no plotting library (it is the ``report``
extra).  Planes are told apart by place, tone, texture and line style as well as colour
(tangential above the axis, dark and solid; sagittal below, light, hatched and dashed), so
the plots read in greyscale.
"""

from __future__ import annotations

import io
import itertools
import math
import re

import numpy as np

from .planview import STYLE
from .solve import radius_along



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


#: Tangential above the axis (dark, solid edge), sagittal below (light, hatched, dashed edge):
#: the planes differ in tone, texture and line, so the caustic reads in greyscale.
T_FILL = dict(facecolor="#2f5d8a", alpha=0.45, edgecolor="none")
S_FILL = dict(facecolor="#e0a35b", alpha=0.40, edgecolor="#b06a1c", hatch="////", linewidth=0.0)
GLYPH = "#3d3a35"
EMPHASIS = "#b3261e"
#: An aperture is emphasised as the tightest only when it is this tight (clear radius over
#: the larger beam radius); a/w = pi/2 passes about 99 % (common practice).
TIGHT_A_OVER_W = 3.0


def _rows(xs, widths, gap: float = 0.004) -> list[int]:
    """A simple label-placement pass along one axis: each label (centre ``xs``, width
    ``widths``, both in axes fractions), taken from left to right, goes into the lowest row
    where it overlaps no label already placed."""
    placed: list[list[tuple[float, float]]] = []
    rows = [0] * len(xs)
    for i in sorted(range(len(xs)), key=lambda j: xs[j]):
        lo, hi = xs[i] - widths[i] / 2 - gap, xs[i] + widths[i] / 2 + gap
        for row, spans in enumerate(placed):
            if all(hi <= a or lo >= b for a, b in spans):
                spans.append((lo, hi))
                rows[i] = row
                break
        else:
            rows[i] = len(placed)
            placed.append([(lo, hi)])
    return rows


def _text_width(text: str, size_pt: float, axes_pt: float) -> float:
    """Rough width of a label as a fraction of the axes width (0.6 em a character)."""
    return 0.6 * size_pt * len(text) / axes_pt


def _tightest(layout, hits) -> set:
    """Hits whose clear aperture is tightest for the beam: the smallest a/w along the path
    (a = clear radius, w the larger plane's radius), when it is below TIGHT_A_OVER_W."""
    ratios = {}
    for i, h in enumerate(hits):
        optic = layout.optics[h.optic]
        w = max((v for v in h.w.values() if v), default=None)
        if optic.diameter is None or w is None or optic.kind in ("dump", "detector", "obstacle"):
            continue
        ratios[i] = optic.diameter / 2.0 / w
    if not ratios:
        return set()
    best = min(ratios, key=ratios.get)
    return {best} if ratios[best] < TIGHT_A_OVER_W else set()


def _glyph(ax, optic, hit, size: float, length: float, emphasise: bool, ratio: float | None) -> None:
    """One optic drawn as its own small symbol on the axis at its position: a mirror a bar
    with its back hatched (bowed by its curvature), a lens a lens outline, a crystal or plate
    a block of its length, an aperture a pair of jaws at its clear radius, a dump or
    detector a filled stop."""
    from matplotlib.patches import Ellipse, Polygon, Rectangle

    s = hit.s
    colour = EMPHASIS if emphasise else GLYPH
    lw = 2.4 if emphasise else 1.3
    kind = optic.kind
    dx = 0.006 * length
    if kind in ("mirror", "splitter"):
        y = np.linspace(-size, size, 21)
        bow = 0.0 if optic.roc is None else math.copysign(dx * 1.5, optic.roc)
        x = s + bow * (y / size) ** 2
        ax.plot(x, y, color=colour, linewidth=lw, solid_capstyle="butt", zorder=4)
        back = 1.0 if hit.action != "end" or hit.s > 0 else -1.0
        for yy in np.linspace(-size * 0.9, size * 0.9, 7):
            xx = s + bow * (yy / size) ** 2
            ax.plot([xx, xx + back * dx], [yy, yy - 0.18 * size], color=colour, linewidth=0.7, zorder=4)
        if kind == "splitter":
            ax.plot([s - dx, s + dx], [-size, size], color=colour, linewidth=0.8, zorder=4)
    elif kind == "lens":
        if (optic.focal_length or 1.0) > 0:
            ax.add_patch(Ellipse((s, 0.0), 2.2 * dx, 2 * size, facecolor="white", edgecolor=colour, linewidth=lw,
                                 zorder=4))
        else:
            pts = [(s - 1.4 * dx, size), (s + 1.4 * dx, size), (s + 0.4 * dx, 0.0), (s + 1.4 * dx, -size),
                   (s - 1.4 * dx, -size), (s - 0.4 * dx, 0.0)]
            ax.add_patch(Polygon(pts, closed=True, facecolor="white", edgecolor=colour, linewidth=lw, zorder=4))
    elif kind in ("crystal", "plate"):
        inside = optic.length if kind == "crystal" else (optic.thickness or 0.0)
        half = max(inside / 2.0, dx)
        ax.add_patch(Rectangle((s - half, -0.8 * size), 2 * half, 1.6 * size, facecolor="#d9d4c7",
                               edgecolor=EMPHASIS if kind == "crystal" else colour,
                               linewidth=2.4 if kind == "crystal" else lw, hatch="xx" if kind == "crystal" else "",
                               alpha=0.9, zorder=3))
    elif kind == "aperture":
        pass
    else:   # dump, detector
        ax.add_patch(Rectangle((s, -0.6 * size), 1.6 * dx, 1.2 * size, facecolor=colour, edgecolor=colour, zorder=4))
    if optic.diameter is not None and kind not in ("dump", "detector"):
        a = optic.diameter / 2.0 * 1e3                       # um, on the same scale as the beam
        top = ax.get_ylim()[1]
        if (kind == "aperture" or emphasise) and a < top:
            for sign in (1.0, -1.0):
                ax.plot([s, s], [sign * a, sign * min(top, a + 0.15 * top)], color=colour,
                        linewidth=3.2 if emphasise else 2.2, solid_capstyle="butt", zorder=5)
        elif kind == "aperture":      # clear radius beyond the drawing: jaws at its edge, open
            for sign in (1.0, -1.0):
                ax.plot([s, s], [sign * 0.93 * top, sign * top], color=colour, linewidth=2.2, zorder=5)
        if emphasise and ratio is not None:
            ax.annotate(f"tightest: a/w = {ratio:.2g}", (s, -min(a, top) * 0.5), textcoords="offset points",
                        xytext=(5, 0), fontsize=6.5, color=EMPHASIS, fontweight="bold", zorder=6,
                        bbox=dict(boxstyle="round,pad=0.15", fc="white", ec="none", alpha=0.85))


def _profile(result, plane: str, s: np.ndarray):
    pieces = result.profile.get(plane) or []
    if not pieces:
        return None
    w = radius_along(pieces, s) * 1e3
    good = ~np.isnan(w)
    if not good.any():
        return None
    idx = np.arange(len(w))
    return np.interp(idx, idx[good], w[good])        # inside thin elements: from the neighbours


#: Up to this many optics on a path, each is drawn as its glyph and labelled, and each
#: waist labelled; on a longer path only the optics that matter (``_kept_hits``) are, the
#: others drawn as ticks, and only the narrowest waist of each plane is labelled.
LABEL_ALL_HITS = 40


def _kept_hits(layout, hits, tight: set, named=()) -> set:
    """On a long path, the hits drawn and labelled in full: the first and the last, the
    tightest aperture, crystals, dumps, detectors and splitters, and optics findings name."""
    keep = {0, len(hits) - 1} | set(tight)
    for i, h in enumerate(hits):
        if layout.optics[h.optic].kind in ("crystal", "dump", "detector", "splitter") or h.optic in named:
            keep.add(i)
    return keep


def caustic_svg(solution, ident: str, role: str, named=()) -> str | None:
    """The beam along one cavity or beam path as a caustic about its axis: the tangential
    1/e^2 radius above, the sagittal below, both to the same scale and filled; each optic
    as its own glyph at its position, the crystal and the tightest aperture emphasised;
    waists marked and labelled (labels placed so they do not overlap).  On a path of more
    than LABEL_ALL_HITS optics, only those that matter get a glyph and a label (``named``:
    optic ids findings name) and the axis title says how many did not."""
    result = solution.cavities[ident] if role == "cavity" else solution.beams[ident]
    length = path_length(solution, ident, role)
    long_path = len(result.hits) > LABEL_ALL_HITS
    s = np.linspace(0.0, length, max(1200, 8 * len(result.hits)))     # some samples between every two optics
    w_t, w_s = _profile(result, "t", s), _profile(result, "s", s)
    if w_t is None and w_s is None:
        return None
    plt = _pyplot()
    from matplotlib.ticker import FuncFormatter

    fig, ax = plt.subplots(figsize=(7.2, 2.9))
    top = max(float(np.max(w)) for w in (w_t, w_s) if w is not None) * 1.3
    ax.set_xlim(-0.01 * length, length * 1.01)
    ax.set_ylim(-top, top)
    if w_t is not None:
        ax.fill_between(s, 0.0, w_t, zorder=1, **T_FILL)
        ax.plot(s, w_t, color="#1d3f63", linewidth=1.2, linestyle="-", zorder=2)
    if w_s is not None:
        ax.fill_between(s, -w_s, 0.0, zorder=1, **S_FILL)
        ax.plot(s, -w_s, color="#8a4f12", linewidth=1.2, linestyle="--", zorder=2)
    ax.axhline(0.0, color=GLYPH, linewidth=0.6, linestyle="-.", zorder=2)
    layout = solution.layout
    tight = _tightest(layout, result.hits)
    keep = _kept_hits(layout, result.hits, tight, named) if long_path else set(range(len(result.hits)))
    glyph = 0.55 * top
    ticks = [h.s for i, h in enumerate(result.hits) if i not in keep]
    if ticks:      # the optics not drawn in full: a short tick each on the axis's foot (a rug), in one artist
        ax.vlines(ticks, 0.0, 0.04, transform=ax.get_xaxis_transform(), colors=GLYPH, linewidth=0.4, zorder=4)
    for i, h in enumerate(result.hits):
        if i not in keep:
            continue
        optic = layout.optics[h.optic]
        w = max((v for v in h.w.values() if v), default=None)
        ratio = optic.diameter / 2.0 / w if (optic.diameter and w) else None
        _glyph(ax, optic, h, glyph, length, i in tight, ratio)
    axes_pt = 0.86 * 7.2 * 72
    # optic ids above the plot, in as many rows as close optics need
    shown = [(i, h) for i, h in enumerate(result.hits) if i in keep]
    names = [h.optic for _, h in shown]
    xs = [(h.s + 0.01 * length) / (1.02 * length) for _, h in shown]
    rows = _rows(xs, [_text_width(n, 7, axes_pt) for n in names])
    for (i, h), row in zip(shown, rows):
        bold = i in tight or layout.optics[h.optic].kind == "crystal"
        ax.annotate(h.optic, (h.s, 1.0), xycoords=("data", "axes fraction"), textcoords="offset points",
                    xytext=(0, 3 + 9 * row), ha="center", va="bottom", fontsize=7,
                    fontweight="bold" if bold else "normal", color=EMPHASIS if bold else "#333333",
                    annotation_clip=False)
    # waists: a tick on the envelope, labels in rows inside the plot (t near the top, s near the bottom)
    quiet = 0
    for plane, sign, colour in (("t", 1.0, "#1d3f63"), ("s", -1.0, "#8a4f12")):
        ws = [w for w in result.waists if w.plane == plane]
        if not ws:
            continue
        if long_path:    # every waist marked, in one artist; the narrowest labelled
            ax.plot([w.s for w in ws], [sign * w.w * 1e3 for w in ws], linestyle="none",
                    marker="v" if plane == "t" else "^", color=colour, markersize=3, zorder=6)
            quiet += len(ws) - 1
            ws = [min(ws, key=lambda w: w.w)]
        texts = [f"{plane} {w.w * 1e3:.0f} µm" for w in ws]
        xs = [(min(max(w.s, 0.06 * length), 0.94 * length) + 0.01 * length) / (1.02 * length) for w in ws]
        rows = _rows(xs, [_text_width(t, 6.5, axes_pt) for t in texts])
        for w, text, row in zip(ws, texts, rows):
            y = sign * w.w * 1e3
            ax.plot([w.s], [y], marker="v" if plane == "t" else "^", color=colour, markersize=4, zorder=6)
            ly = sign * top * (0.80 - 0.11 * row)
            lx = min(max(w.s, 0.06 * length), 0.94 * length)      # clear of the axis and its ticks
            ax.annotate(("narrowest: " if long_path else "") + text, (w.s, y), xytext=(lx, ly), fontsize=6.5,
                        color=colour, ha="center", va="center", zorder=6,
                        bbox=dict(boxstyle="round,pad=0.15", fc="white", ec="none", alpha=0.8),
                        arrowprops=dict(arrowstyle="-", color=colour, linewidth=0.5))
    ax.yaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{abs(v):g}"))
    xlabel = "distance along the path s (mm)"
    if long_path:
        xlabel += (f"; {len(result.hits) - len(keep)} further optics (ticks at the foot) and {quiet} further "
                   f"waists not labelled: see the optics table")
    ax.set_xlabel(xlabel)
    ax.text(-0.075, 0.75, "tangential $w_t$ (µm)", transform=ax.transAxes, rotation=90, ha="center", va="center",
            fontsize=8, color="#1d3f63")
    ax.text(-0.075, 0.25, "sagittal $w_s$ (µm)", transform=ax.transAxes, rotation=90, ha="center", va="center",
            fontsize=8, color="#8a4f12")
    ax.grid(axis="x", visible=False)
    return _svg(fig)


def _steps_half_trace(steps) -> np.ndarray:
    from .unfold import Marker

    m = None
    for st in steps:
        if isinstance(st, Marker):
            continue
        mat = st.matrix()
        m = mat if m is None else np.matmul(mat, m)
    return (m[..., 0, 0] + m[..., 1, 1]) / 2.0


def _thermal_curve(solution, cav):
    """m per plane against the first crystal's thermal-lens power (1/m), from no lens to
    past the range; a crystal whose planes differ keeps their ratio.  Returns (crystal id,
    powers, {plane: m}, (range lo, hi), design power), powers in 1/m."""
    from .unfold import cavity_train

    layout = solution.layout
    path = solution.trace.cavities[cav.id]
    cid = next(iter(cav.thermal.lenses))
    design = {pl: (1.0 / f if math.isfinite(f) and f else 0.0) for pl, f in cav.thermal.design_f[cid].items()}
    ranges = [1.0 / f for f in (cav.thermal.lenses[cid]["t"] or ())] or [design["t"]]
    lo, hi = min(ranges), max(ranges)

    def half_traces(p):
        out = {}
        for plane in ("t", "s"):
            ratio = design[plane] / design["t"] if design["t"] else 1.0
            train = cavity_train(layout, path, plane, {(cid, plane): p * ratio})
            out[plane] = np.broadcast_to(_steps_half_trace(train.steps), p.shape)
        return out

    # show the range and, where one lies within 50 times its reach, the first edge beyond it
    reach = max(abs(lo), abs(hi), 1e-4)
    far = np.linspace(hi, hi + 50.0 * reach, 2001)
    out = np.flatnonzero((np.abs(half_traces(far)["t"]) >= 1.0) | (np.abs(half_traces(far)["s"]) >= 1.0))
    end = far[out[0]] + 0.25 * (far[out[0]] - lo) if out.size else hi + 0.6 * reach
    p = np.linspace(min(0.0, lo) - 0.05 * (end - lo), end, 500)
    curves = half_traces(p)
    return cid, p * 1e3, curves, (lo * 1e3, hi * 1e3), design["t"] * 1e3


def _gap_curve(solution, cav, windows):
    """m per plane against the air spacing whose stability window is narrowest."""
    try:
        from benchcheck.rules.margin import GapScan, air_gaps
    except ImportError:   # a source checkout: the rule pack is loaded by the plugin manager
        from .plugins import _builtin_module
        _builtin_module()
        from benchcheck.rules.margin import GapScan, air_gaps
    path = solution.trace.cavities[cav.id]
    if windows:
        win = min(windows, key=lambda w: w.distance)
        gap = win.gap
    else:
        gaps = [g for g in air_gaps(solution.layout, path) if g.length > 0]
        if not gaps:
            return None
        gap, win = max(gaps, key=lambda g: g.length), None
    edges = [e for e in ((win.lo, win.hi) if win else ()) if e is not None]
    span = max([abs(e - gap.length) for e in edges] + [0.25 * gap.length, 1.0])
    x = np.linspace(max(0.0, gap.length - 1.6 * span), gap.length + 1.6 * span, 600)
    curves = {}
    for plane in ("t", "s"):
        trips = GapScan(cav.trains[plane], gap, path.role).round_trips(x)
        curves[plane] = (trips[..., 0, 0] + trips[..., 1, 1]) / 2.0
    return gap, x, curves, win


#: A spacing is compared with the thermal lens as it can be set on a bench: to about this (mm).
SPACING_TOLERANCE_MM = 1.0


def _thermal_matters_more(cav, found) -> bool:
    """Whether the thermal-lens range brings |m| nearer to 1 than the narrowest spacing
    does when it moves by SPACING_TOLERANCE_MM either way (or the range is not stable)."""
    if not all(cav.thermal.stable.values()):
        return True
    thermal = max(abs(v) for rng in cav.thermal.m_range.values() for v in rng)
    gap, x, curves, _ = found
    near = np.abs(x - gap.length) <= SPACING_TOLERANCE_MM
    spacing = max(float(np.max(np.abs(curves[p][near]))) for p in ("t", "s")) if near.any() else 0.0
    return thermal >= spacing


def stability_scan_svg(solution, cavity_id: str, windows=()) -> str | None:
    """For one cavity, the half-trace m = (A+D)/2 of both planes against what matters most
    for its stability: the thermal-lens power, or the air spacing with the narrowest
    stability window, whichever brings |m| nearer to 1 (the spacing moved by a millimetre
    either way, the lens over its whole range).  The stable band |m| < 1 and the stable
    stretch of the parameter are shaded, the plan (and a thermal-lens range) marked."""
    cav = solution.cavities[cavity_id]
    plt = _pyplot()
    found = _gap_curve(solution, cav, windows)
    if cav.thermal is not None and cav.thermal.lenses and (found is None or _thermal_matters_more(cav, found)):
        cid, x, curves, (lo, hi), plan = _thermal_curve(solution, cav)
        xlabel = f"thermal-lens power of {cid} (1/m, dioptres)"
        span = (lo, hi)
        span_label = "thermal-lens range"
    else:
        if found is None:
            return None
        gap, x, curves, win = found
        plan = gap.length
        xlabel = f"air spacing {gap.first} → {gap.second} (mm)"
        span = None if win is None else (win.lo if win.lo is not None else x[0],
                                         win.hi if win.hi is not None else x[-1])
        span_label = "stable in both planes"
    fig, ax = plt.subplots(figsize=(7.2, 2.6))
    ax.axhspan(-1.0, 1.0, facecolor="#e4efe4", edgecolor="none", zorder=0)
    ax.text(0.995, 0.5, "stable band |m| < 1", transform=ax.get_yaxis_transform(), ha="right", va="center",
            fontsize=6.5, color="#2d5a2d")
    if span is not None:
        ax.axvspan(*span, facecolor="none", edgecolor="#6b6b6b", hatch="\\\\", linewidth=0.0, zorder=0)
        ax.text((span[0] + span[1]) / 2, 1.0, span_label, transform=ax.get_xaxis_transform(), ha="center",
                va="bottom", fontsize=6.5, color="#444444")
    styles = {"t": dict(color="#1d3f63", linestyle="-", linewidth=1.6, label="tangential $m_t$"),
              "s": dict(color="#b06a1c", linestyle="--", linewidth=1.6, label="sagittal $m_s$")}
    for plane in ("t", "s"):
        ax.plot(x, np.clip(curves[plane], -2.9, 2.9), **styles[plane])
    ax.axvline(plan, color=STYLE["ink"], linewidth=1.0, linestyle=":")
    for plane, marker in (("t", "o"), ("s", "s")):
        m = cav.modes[plane].m
        ax.plot([plan], [max(-2.9, min(2.9, m))], marker=marker, color=styles[plane]["color"], markersize=5,
                linestyle="none", zorder=5)
    ax.annotate("plan", (plan, 0.0), xycoords=("data", "axes fraction"), textcoords="offset points",
                xytext=(3, 2), fontsize=7)
    for edge in (-1.0, 1.0):
        ax.axhline(edge, color="#2d5a2d", linewidth=0.7)
    big = max(float(np.nanmax(np.abs(np.clip(curves[p], -2.9, 2.9)))) for p in ("t", "s"))
    ax.set_ylim(-max(1.25, big * 1.1), max(1.25, big * 1.1))
    ax.set_xlim(x[0], x[-1])
    ax.set_xlabel(xlabel)
    ax.set_ylabel("half-trace m")
    ax.legend(loc="lower left", bbox_to_anchor=(0.0, 1.06), ncol=2, fontsize=7, frameon=False)
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
