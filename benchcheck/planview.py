"""The bench seen from above, as an SVG drawing for the review report.

Hand-written SVG (no plotting library): the table with a millimetre scale and axes, zones,
every mount footprint with its id, cavity legs and beams with their envelope (+-k w of the
in-plane radius, k stated on the drawing), leak and secondary beams to where they stop,
and numbered markers where findings are, each linking to its row in the findings table.

Styles are told apart by line style and weight as well as by colour, so the drawing reads
in greyscale and for colour-blind readers.
"""

from __future__ import annotations

import math
from html import escape

import numpy as np

from .solve import radius_along

#: Colours (a colour-blind-safe set) and, just as important, distinct line styles.
STYLE = {
    "table": "#fbfaf7",
    "grid": "#e6e3dc",
    "ink": "#222222",
    "mount": "#c9c6bf",
    "obstacle": "#8c8880",
    "cavity": "#0b5fa5",
    "beam": "#c2571a",
    "stray": "#a23b72",
    "keepout": "#d08a00",
    "enclosure": "#1b7a5a",
    "error": "#b3261e",
    "warning": "#8a5a00",
    "note": "#44546a",
}
NICE = (1, 2, 5, 10, 20, 50, 100, 200, 500, 1000)


class _Frame:
    """Table millimetres to SVG pixels: y up on the table, down on the screen."""

    def __init__(self, size, width_px: float, margin: float):
        self.w_mm, self.h_mm = size
        self.scale = (width_px - 2 * margin) / self.w_mm
        self.margin = margin
        self.width = width_px
        self.height = self.h_mm * self.scale + 2 * margin + 30

    def xy(self, x, y):
        return self.margin + x * self.scale, self.margin + (self.h_mm - y) * self.scale

    def pts(self, coords) -> str:
        return " ".join(f"{px:.1f},{py:.1f}" for px, py in (self.xy(x, y) for x, y in coords))


def _nice(value: float) -> float:
    """The largest 1-2-5 step not above ``value``."""
    exp = 10 ** math.floor(math.log10(value)) if value > 0 else 1
    for step in (5, 2, 1):
        if step * exp <= value:
            return step * exp
    return exp


def exaggeration_for(solution, frame: _Frame, target_px: float = 5.0) -> float:
    """Envelope magnification k so that the widest beam is drawn about ``target_px`` wide."""
    widest = 0.0
    for res in list(solution.cavities.values()) + list(solution.beams.values()):
        for h in res.hits:
            for w in h.w.values():
                if w:
                    widest = max(widest, w)
    if widest <= 0:
        return 1.0
    k = target_px / (widest * frame.scale)
    return max(1.0, min((n for n in NICE if n >= k), default=NICE[-1]))


def _legs(solution, path_id: str, role: str):
    """(points, s values) per leg of a path: straight stretches between hits."""
    trace = solution.trace
    if role == "beam":
        path = trace.beams[path_id]
        pts = [tuple(path.start)] + [tuple(h.point) for h in path.hits]
        ss = [0.0] + [h.s for h in path.hits]
        if path.tail is not None:
            pts.append(tuple(path.tail.point))
            ss.append(path.hits[-1].s + path.tail.length)
    else:
        path = trace.cavities[path_id]
        pts = [tuple(h.point) for h in path.hits]
        ss = [h.s for h in path.hits]
        if path.role == "ring":
            pts.append(pts[0])
            ss.append(sum(path.segments))
    return [((pts[i], pts[i + 1]), (ss[i], ss[i + 1])) for i in range(len(pts) - 1)]


def _envelope(frame, leg, srange, pieces, k) -> str | None:
    """Polygon of the in-plane envelope +-k w along one leg, or None without a mode."""
    if not pieces:
        return None
    (a, b), (s0, s1) = leg, srange
    t = np.linspace(0.0, 1.0, 48)
    s = s0 + (s1 - s0) * t
    w = radius_along(pieces, s)
    if np.all(np.isnan(w)):
        return None
    idx = np.arange(len(w))
    good = ~np.isnan(w)
    w = np.interp(idx, idx[good], w[good])      # inside thin elements: from the neighbours
    a, b = np.asarray(a, float), np.asarray(b, float)
    d = b - a
    length = float(np.hypot(*d))
    if length <= 0:
        return None
    n = np.array([-d[1], d[0]]) / length
    centre = a[None, :] + t[:, None] * d[None, :]
    upper = centre + (k * w)[:, None] * n[None, :]
    lower = centre - (k * w)[:, None] * n[None, :]
    ring = np.vstack([upper, lower[::-1]])
    return frame.pts(ring)


def plan_svg(solution, findings=(), width_px: float = 960.0) -> str:
    """The plan view.  ``findings`` are (number, Finding) pairs to mark on the drawing."""
    layout = solution.layout
    frame = _Frame(layout.bench.size, width_px, margin=46.0)
    k = exaggeration_for(solution, frame)
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {frame.width:.0f} {frame.height:.0f}" '
           f'class="plan" role="img" aria-label="Plan view of the bench">',
           '<defs><pattern id="hatch" width="8" height="8" patternUnits="userSpaceOnUse" '
           'patternTransform="rotate(45)"><line x1="0" y1="0" x2="0" y2="8" '
           f'stroke="{STYLE["keepout"]}" stroke-width="2"/></pattern>'
           '<marker id="arrow" viewBox="0 0 10 10" refX="9" refY="5" markerWidth="7" markerHeight="7" '
           f'orient="auto-start-reverse"><path d="M0,0 L10,5 L0,10 z" fill="{STYLE["stray"]}"/></marker></defs>']
    out += _table(frame)
    out += _zones(frame, layout)
    out += _mounts(frame, solution)
    for cid in solution.cavities:
        out += _path(frame, solution, cid, "cavity", k)
    for bid in solution.beams:
        out += _path(frame, solution, bid, "beam", k)
    out += _strays(frame, solution)
    out += _labels(frame, solution)
    out += _markers(frame, solution, findings)
    out.append(f'<text x="{frame.width - 10:.0f}" y="{frame.height - 10:.0f}" text-anchor="end" class="small">'
               f'beam envelopes drawn at {k:g} x their 1/e&#178; radius (in-plane); '
               f'cavities solid, beams solid thin, leaks dashed</text>')
    out.append("</svg>")
    return "\n".join(out)


def _table(frame) -> list[str]:
    x0, y0 = frame.xy(0, frame.h_mm)
    w, h = frame.w_mm * frame.scale, frame.h_mm * frame.scale
    out = [f'<rect x="{x0:.1f}" y="{y0:.1f}" width="{w:.1f}" height="{h:.1f}" fill="{STYLE["table"]}" '
           f'stroke="{STYLE["ink"]}" stroke-width="1.5"/>']
    step = _nice(max(frame.w_mm, frame.h_mm) / 8)
    x = step
    while x < frame.w_mm:
        (px, top), (_, bottom) = frame.xy(x, frame.h_mm), frame.xy(x, 0)
        out.append(f'<line x1="{px:.1f}" y1="{top:.1f}" x2="{px:.1f}" y2="{bottom:.1f}" stroke="{STYLE["grid"]}"/>')
        out.append(f'<text x="{px:.1f}" y="{bottom + 13:.1f}" text-anchor="middle" class="small">{x:g}</text>')
        x += step
    y = step
    while y < frame.h_mm:
        (left, py), (right, _) = frame.xy(0, y), frame.xy(frame.w_mm, y)
        out.append(f'<line x1="{left:.1f}" y1="{py:.1f}" x2="{right:.1f}" y2="{py:.1f}" stroke="{STYLE["grid"]}"/>')
        out.append(f'<text x="{left - 4:.1f}" y="{py + 4:.1f}" text-anchor="end" class="small">{y:g}</text>')
        y += step
    ox, oy = frame.xy(0, 0)
    out.append(f'<text x="{ox - 4:.1f}" y="{oy + 13:.1f}" text-anchor="end" class="small">0</text>')
    out.append(f'<text x="{ox + w / 2:.1f}" y="{oy + 27:.1f}" text-anchor="middle" class="small">x (mm)</text>')
    out.append(f'<text x="{ox - 30:.1f}" y="{oy - h / 2:.1f}" text-anchor="middle" class="small" '
               f'transform="rotate(-90 {ox - 30:.1f} {oy - h / 2:.1f})">y (mm)</text>')
    bar = _nice(frame.w_mm / 5)
    bx, by = frame.xy(0, 0)
    by += 24
    out.append(f'<line x1="{bx:.1f}" y1="{by:.1f}" x2="{bx + bar * frame.scale:.1f}" y2="{by:.1f}" '
               f'stroke="{STYLE["ink"]}" stroke-width="3"/>')
    out.append(f'<text x="{bx + bar * frame.scale + 6:.1f}" y="{by + 4:.1f}" class="small">{bar:g} mm</text>')
    return out


def _zones(frame, layout) -> list[str]:
    out = []
    for z in layout.zones:
        if z.kind == "keepout":
            style = f'fill="url(#hatch)" stroke="{STYLE["keepout"]}" stroke-width="1.5"'
        else:
            style = f'fill="none" stroke="{STYLE["enclosure"]}" stroke-width="2" stroke-dasharray="8 4"'
        out.append(f'<polygon points="{frame.pts(z.polygon)}" {style}><title>{escape(z.kind)} zone '
                   f'{escape(z.id)}</title></polygon>')
        cx = sum(p[0] for p in z.polygon) / len(z.polygon)
        top = max(p[1] for p in z.polygon)
        px, py = frame.xy(cx, top)
        colour = STYLE["keepout"] if z.kind == "keepout" else STYLE["enclosure"]
        out.append(f'<text x="{px:.1f}" y="{py + 12:.1f}" text-anchor="middle" class="small" fill="{colour}">'
                   f'{escape(z.id)} ({escape(z.kind)})</text>')
    return out


def _mounts(frame, solution) -> list[str]:
    out = []
    for oid, placed in solution.placement.optics.items():
        fill = STYLE["obstacle"] if placed.optic.kind == "obstacle" else STYLE["mount"]
        coords = list(placed.footprint.exterior.coords)
        out.append(f'<polygon points="{frame.pts(coords)}" fill="{fill}" fill-opacity="0.75" '
                   f'stroke="{STYLE["ink"]}" stroke-width="0.8"><title>{escape(placed.optic.kind)} '
                   f'{escape(oid)}</title></polygon>')
    return out


def _path(frame, solution, ident: str, role: str, k: float) -> list[str]:
    result = solution.cavities[ident] if role == "cavity" else solution.beams[ident]
    colour = STYLE["cavity"] if role == "cavity" else STYLE["beam"]
    width = 1.6 if role == "cavity" else 1.0
    pieces = result.profile.get("t") or result.profile.get("s") or []
    out = []
    for leg, srange in _legs(solution, ident, "beam" if role == "beam" else role):
        env = _envelope(frame, leg, srange, pieces, k)
        if env:
            out.append(f'<polygon points="{env}" fill="{colour}" fill-opacity="0.22" stroke="none"/>')
        (x1, y1), (x2, y2) = frame.xy(*leg[0]), frame.xy(*leg[1])
        out.append(f'<line x1="{x1:.1f}" y1="{y1:.1f}" x2="{x2:.1f}" y2="{y2:.1f}" stroke="{colour}" '
                   f'stroke-width="{width}"><title>{role} {escape(ident)}</title></line>')
    return out


def _strays(frame, solution) -> list[str]:
    out = []
    for r in solution.strays:
        st = r.stray
        pts = [frame.xy(*p) for p in st.path_points()]      # bends where it passes a lens
        (x1, y1), (x2, y2) = pts[0], pts[1]
        power = "" if r.power_w is None else f"{'up to ' if r.at_most else ''}{r.power_w:.3g} W"
        corners = " ".join(f"{x:.1f},{y:.1f}" for x, y in pts)
        out.append(f'<polyline points="{corners}" fill="none" stroke="{STYLE["stray"]}" '
                   f'stroke-width="1" stroke-dasharray="5 3" marker-end="url(#arrow)">'
                   f'<title>{escape(st.kind)} {escape(st.id)}: {escape(power)}</title></polyline>')
        if power:
            out.append(f'<text x="{(x1 + x2) / 2:.1f}" y="{(y1 + y2) / 2 - 3:.1f}" class="tiny" '
                       f'fill="{STYLE["stray"]}">{escape(power)}</text>')
    return out


def _labels(frame, solution) -> list[str]:
    out = []
    for oid, placed in solution.placement.optics.items():
        minx, miny, maxx, maxy = placed.footprint.bounds
        px, py = frame.xy((minx + maxx) / 2, maxy)
        out.append(f'<text x="{px:.1f}" y="{py - 3:.1f}" text-anchor="middle" class="label">{escape(oid)}</text>')
    for sid, point in solution.placement.sources.items():
        px, py = frame.xy(*point)
        out.append(f'<rect x="{px - 4:.1f}" y="{py - 4:.1f}" width="8" height="8" fill="{STYLE["beam"]}"/>')
        out.append(f'<text x="{px:.1f}" y="{py - 7:.1f}" text-anchor="middle" class="label">{escape(sid)}</text>')
    return out


def finding_point(solution, f):
    """Where on the table a finding is: its own point, else its first target's position."""
    if f.at is not None:
        return f.at
    for t in f.targets:
        if t in solution.placement.optics:
            return tuple(solution.placement.optics[t].point)
        if t in solution.placement.sources:
            return tuple(solution.placement.sources[t])
        if t in solution.trace.cavities:
            return tuple(solution.trace.cavities[t].hits[0].point)
        if t in solution.trace.beams:
            return tuple(solution.trace.beams[t].hits[0].point)
        for z in solution.layout.zones:
            if z.id == t:
                return (sum(p[0] for p in z.polygon) / len(z.polygon), sum(p[1] for p in z.polygon) / len(z.polygon))
    return None


def _marker_shape(severity: str, x: float, y: float, colour: str, hollow: bool) -> str:
    """Severity by shape as well as colour: error a circle, warning a diamond, note a square;
    a waived finding hollow."""
    fill, stroke = ("#ffffff", colour) if hollow else (colour, "#ffffff")
    style = f'fill="{fill}" stroke="{stroke}" stroke-width="1.4"'
    if severity == "warning":
        r = 9.0
        return f'<polygon points="{x:.1f},{y - r:.1f} {x + r:.1f},{y:.1f} {x:.1f},{y + r:.1f} {x - r:.1f},{y:.1f}" {style}/>'
    if severity == "note":
        r = 7.0
        return f'<rect x="{x - r:.1f}" y="{y - r:.1f}" width="{2 * r:.1f}" height="{2 * r:.1f}" {style}/>'
    return f'<circle cx="{x:.1f}" cy="{y:.1f}" r="7.5" {style}/>'


def _markers(frame, solution, findings) -> list[str]:
    """One badge per place: findings at the same spot share it ("3,15,19"), drawn in the
    shape of the worst severity there and linked to the first of them."""
    groups: dict[tuple, list] = {}
    order = []
    for number, f in findings:
        point = finding_point(solution, f)
        if point is None:
            continue
        px, py = frame.xy(*point)
        key = (round(px / 8), round(py / 8))
        if key not in groups:
            groups[key] = []
            order.append((key, px, py))
        groups[key].append((number, f))
    rank = {"error": 0, "warning": 1, "note": 2}
    out = []
    for key, px, py in order:
        items = groups[key]
        worst = min(items, key=lambda nf: (nf[1].waived, rank.get(nf[1].severity, 3)))[1]
        numbers = [str(n) for n, _ in items]
        label = ",".join(numbers) if len(numbers) <= 3 else ",".join(numbers[:2]) + f",+{len(numbers) - 2}"
        colour = STYLE.get(worst.severity, STYLE["note"])
        hollow = all(f.waived for _, f in items)
        titles = " | ".join(f"{n} {f.severity}: {f.message}" for n, f in items)
        shape = _marker_shape(worst.severity, px, py, colour, hollow)
        text_fill = colour if hollow else "#ffffff"
        if len(label) > 2:   # a wider tag beside the mark for several numbers
            tag = (f'<rect x="{px + 9:.1f}" y="{py - 7:.1f}" width="{5.6 * len(label) + 6:.1f}" height="14" rx="3" '
                   f'fill="#ffffff" stroke="{colour}" stroke-width="1"/><text x="{px + 12:.1f}" y="{py + 3.5:.1f}" '
                   f'class="mark" fill="{colour}" style="fill:{colour}">{escape(label)}</text>')
            inner = ""
        else:
            tag = ""
            inner = (f'<text x="{px:.1f}" y="{py + 3.5:.1f}" text-anchor="middle" class="mark" '
                     f'style="fill:{text_fill}">{escape(label)}</text>')
        out.append(f'<a href="#finding-{items[0][0]}"><g class="marker"><title>{escape(titles)}</title>'
                   f'{shape}{inner}{tag}</g></a>')
    return out
