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
    "hazard": "#e0b400",
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
        #: (x0, y0, x1, y1) in pixels: where labels and markers may go
        self.area = (margin, margin, margin + self.w_mm * self.scale, margin + self.h_mm * self.scale)

    def xy(self, x, y):
        """Scalars or numpy arrays alike."""
        return self.margin + x * self.scale, self.margin + (self.h_mm - y) * self.scale

    def pts(self, coords) -> str:
        xy = np.asarray(coords, dtype=float).reshape(-1, 2)
        px, py = self.xy(xy[:, 0], xy[:, 1])          # numpy arrays: the same arithmetic per point
        return " ".join(map("{:.1f},{:.1f}".format, px.tolist(), py.tolist()))


class _Inset(_Frame):
    """A region of the table (mm box) drawn enlarged into a pixel box below the plan."""

    def __init__(self, region, box):
        (self.x0, self.y0, self.x1, self.y1), (bx, by, bw, bh) = region, box
        self.scale = min(bw / (self.x1 - self.x0), bh / (self.y1 - self.y0))
        self.left, self.top = bx, by
        self.area = (bx, by, bx + (self.x1 - self.x0) * self.scale, by + (self.y1 - self.y0) * self.scale)

    def xy(self, x, y):
        return self.left + (x - self.x0) * self.scale, self.top + (self.y1 - y) * self.scale


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


#: samples along each leg for its envelope
ENVELOPE_SAMPLES = 48


def _radii(legs, pieces):
    """The in-plane radius at ENVELOPE_SAMPLES points along each leg, one row a leg (NaN
    inside thin elements), looked up in one call for the whole path; None without a mode."""
    if not pieces or not legs:
        return None
    t = np.linspace(0.0, 1.0, ENVELOPE_SAMPLES)
    s0 = np.array([sr[0] for _, sr in legs])
    s1 = np.array([sr[1] for _, sr in legs])
    s = s0[:, None] + (s1 - s0)[:, None] * t[None, :]
    return radius_along(pieces, s.ravel()).reshape(s.shape)


def _envelope(frame, leg, w, k) -> str | None:
    """Polygon of the in-plane envelope +-k w along one leg (``w`` its row of ``_radii``),
    or None without a mode."""
    if w is None or np.all(np.isnan(w)):
        return None
    t = np.linspace(0.0, 1.0, ENVELOPE_SAMPLES)
    idx = np.arange(len(w))
    good = ~np.isnan(w)
    w = np.interp(idx, idx[good], w[good])      # inside thin elements: from the neighbours
    a, b = leg
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


def plan_svg(solution, findings=(), hazards=None, width_px: float = 960.0) -> str:
    """The plan view.  ``findings`` are (number, Finding) pairs to mark on the drawing;
    ``hazards`` (a ``hazards.Assessment``) adds the hazard zones of open beams."""
    return plan_drawing(solution, findings, width_px, hazards)[0]


def plan_drawing(solution, findings=(), width_px: float = 960.0, hazards=None):
    """The plan view's SVG text and, per panel (the plan, then the inset where there is
    one), the pixel boxes the placement pass worked with: (svg, [{"labels": [(kind, text,
    box)], "optics": [box]}]), labels and markers in "labels", mount footprints and sources
    in "optics"."""
    layout = solution.layout
    frame = _Frame(layout.bench.size, width_px, margin=46.0)
    k = exaggeration_for(solution, frame)
    region = densest_region(solution, frame)
    inset = None
    height = frame.height
    if region is not None:
        rw, rh = region[2] - region[0], region[3] - region[1]
        box_w = min(width_px - 2 * frame.margin, 620.0)
        box_h = min(box_w * rh / rw, 420.0)
        inset = _Inset(region, (frame.margin, frame.height + 24.0, box_w, box_h))
        height = inset.area[3] + 40.0
    out = [f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {frame.width:.0f} {height:.0f}" '
           f'class="plan" role="img" aria-label="Plan view of the bench">',
           '<defs><pattern id="hatch" width="8" height="8" patternUnits="userSpaceOnUse" '
           'patternTransform="rotate(45)"><line x1="0" y1="0" x2="0" y2="8" '
           f'stroke="{STYLE["keepout"]}" stroke-width="2"/></pattern>'
           '<marker id="arrow" viewBox="0 0 10 10" refX="9" refY="5" markerWidth="7" markerHeight="7" '
           f'orient="auto-start-reverse"><path d="M0,0 L10,5 L0,10 z" fill="{STYLE["stray"]}"/></marker></defs>']
    out += _table(frame)
    stretches = hazard_stretches(hazards) if hazards is not None else None
    body, placer = _panel(frame, solution, findings, k, stretches)
    out += body
    panels = [placer]
    out.append(f'<text x="{frame.width - 10:.0f}" y="{frame.height - 10:.0f}" text-anchor="end" class="small">'
               f'beam envelopes drawn at {k:g} x their 1/e&#178; radius (in-plane); '
               f'cavities solid, beams solid thin, leaks dashed</text>')
    unlabelled = _unlabelled(frame, solution, findings)
    if unlabelled:
        out.append(f'<a href="#optics"><text x="{frame.width - 10:.0f}" y="{frame.height - 24:.0f}" '
                   f'text-anchor="end" class="small">{unlabelled} further optics not labelled; see the optics '
                   f'table</text></a>')
    if inset is not None:
        (ax0, ay0), (ax1, ay1) = frame.xy(region[0], region[3]), frame.xy(region[2], region[1])
        out.append(f'<rect x="{ax0:.1f}" y="{ay0:.1f}" width="{ax1 - ax0:.1f}" height="{ay1 - ay0:.1f}" '
                   f'fill="none" stroke="{STYLE["ink"]}" stroke-width="1" stroke-dasharray="3 3"/>')
        text = "A: enlarged below"
        box = placer.place("inset", text, (ax0, ay1), _text_box(text, 9.0), start=-45.0)
        out.append(_leader((ax0, ay1), box, STYLE["ink"], 8.0))
        out.append(f'<text x="{box[0] + 1:.1f}" y="{box[3] - 2.5:.1f}" class="tiny" {HALO}>{text}</text>')
        ki = exaggeration_for(solution, inset, 9.0)
        x0, y0, x1, y1 = inset.area
        out.append(f'<clipPath id="inset-clip"><rect x="{x0:.1f}" y="{y0:.1f}" width="{x1 - x0:.1f}" '
                   f'height="{y1 - y0:.1f}"/></clipPath>')
        out.append(f'<rect x="{x0:.1f}" y="{y0:.1f}" width="{x1 - x0:.1f}" height="{y1 - y0:.1f}" '
                   f'fill="{STYLE["table"]}" stroke="{STYLE["ink"]}" stroke-width="1.2"/>')
        body, placer = _panel(inset, solution, findings, ki, stretches)
        out.append('<g clip-path="url(#inset-clip)">')
        out += body
        out.append("</g>")
        panels.append(placer)
        out.append(f'<text x="{x0:.1f}" y="{y0 - 6:.1f}" class="small">A: x {region[0]:.0f} to {region[2]:.0f} mm, '
                   f'y {region[1]:.0f} to {region[3]:.0f} mm, {inset.scale / frame.scale:.1f} times larger; '
                   f'envelopes at {ki:g} x</text>')
    out.append("</svg>")
    return "\n".join(out), [{"labels": list(p.placed), "optics": list(p.blocked)} for p in panels]


def _unlabelled(frame, solution, findings) -> int:
    """How many optics in view of the plan go without a label (``labelled_optics``)."""
    keep = labelled_optics(solution, findings)
    if keep is None:
        return 0
    return sum(1 for oid, placed in solution.placement.optics.items()
               if oid not in keep and _in_view(frame, *_centre(placed.footprint.bounds)))


def _centre(bounds) -> tuple[float, float]:
    minx, miny, maxx, maxy = bounds
    return (minx + maxx) / 2, (miny + maxy) / 2


#: The bench is crowded, and gets an enlarged inset, when optics of the densest region lie
#: closer than this on the drawing (px, centre to centre, on average to their nearest).
CROWDED_PX = 48.0


def densest_region(solution, frame):
    """(x0, y0, x1, y1) mm of the most crowded part of the bench, or None when no part is.

    Every optic is a centre candidate; its neighbourhood is the optics within an eighth of
    the table's larger side.  The one with most neighbours wins if their mean distance to
    their nearest neighbour is below CROWDED_PX on the drawing; the region is their
    bounding box with a margin."""
    points = {oid: np.asarray(p.point, float) for oid, p in solution.placement.optics.items()
              if p.optic.kind != "obstacle"}
    if len(points) < 3:
        return None
    xy = np.array(list(points.values()))
    reach = max(frame.w_mm, frame.h_mm) / 8.0
    # pairs within reach: candidates from an STRtree (a little wider), kept by the same test
    # as a full distance matrix would apply, so the result does not depend on the index
    import shapely

    tree = shapely.STRtree(shapely.points(xy))
    a, b = tree.query(shapely.points(xy), predicate="dwithin", distance=reach * (1 + 1e-9) + 1e-9)
    keep = np.hypot(*(xy[b] - xy[a]).T) <= reach
    a, b = a[keep], b[keep]
    counts = np.bincount(a, minlength=len(xy))
    centre = int(np.argmax(counts))           # the first of the most crowded
    if counts[centre] < 3:
        return None
    best = xy[np.sort(b[a == centre])]
    d = np.hypot(best[:, None, 0] - best[None, :, 0], best[:, None, 1] - best[None, :, 1])
    np.fill_diagonal(d, np.inf)
    if float(np.mean(d.min(axis=1))) * frame.scale >= CROWDED_PX:
        return None
    pad = max(float(np.ptp(best[:, 0])), float(np.ptp(best[:, 1])), 40.0) * 0.15 + 15.0
    x0, y0 = best.min(axis=0) - pad
    x1, y1 = best.max(axis=0) + pad
    return (max(0.0, x0), max(0.0, y0), min(frame.w_mm, x1), min(frame.h_mm, y1))


def _panel(frame, solution, findings, k, stretches=None):
    """Everything drawn on the table, in one frame: zones, mounts, paths, strays, hazard
    bands (``stretches``, from ``hazard_stretches``), then the labels and markers placed by
    one pass so that none covers an optic or another."""
    layout = solution.layout
    out = []
    out += _zones(frame, layout)
    bands, hazard_labels = _hazard_zones(frame, stretches) if stretches is not None else ([], [])
    out += bands
    out += _mounts(frame, solution)
    for cid in solution.cavities:
        out += _path(frame, solution, cid, "cavity", k)
    for bid in solution.beams:
        out += _path(frame, solution, bid, "beam", k)
    out += _strays(frame, solution)
    placer = _Placer(frame, solution)
    out += _labels(frame, solution, placer, labelled_optics(solution, findings))
    out += _markers(frame, solution, findings, placer)
    out += _stray_labels(frame, solution, placer)
    out += _zone_labels(frame, layout, placer)
    for text, anchor in hazard_labels:
        box = placer.place("hazard", text, anchor, _text_box(text, 9.0))
        out.append(_leader(anchor, box, STYLE["ink"], 8.0))
        out.append(f'<text x="{box[0] + 1:.1f}" y="{box[3] - 2.5:.1f}" class="tiny" {HALO}>{escape(text)}</text>')
    return out, placer


def _text_box(text: str, size: float, bold: bool = False) -> tuple[float, float]:
    """Rough (width, height) in px of a label (0.62 em a character, bold 0.68)."""
    return (0.68 if bold else 0.62) * size * len(text) + 2.0, size + 2.0


class _Placer:
    """A simple label-placement pass: each label or marker takes the first free spot of a
    ring of candidates around its anchor (nearest first), free meaning inside the drawing,
    clear of every mount footprint and source and of everything placed before; where no
    spot is free, the one with least overlap.  A spot away from the anchor gets a leader.

    Boxes already taken are kept in a grid of CELL px squares, so that a label is tested
    only against the boxes near its anchor: the pass grows linearly with the labels, not
    with their square (a box out of the candidates' reach overlaps none of them)."""

    CELL = 64.0

    def __init__(self, frame, solution):
        self.frame = frame
        self.area = frame.area
        self.blocked: list[tuple] = []
        for placed in solution.placement.optics.values():
            pts = [frame.xy(x, y) for x, y in placed.footprint.exterior.coords]
            xs, ys = [p[0] for p in pts], [p[1] for p in pts]
            self.blocked.append((min(xs) - 1.5, min(ys) - 1.5, max(xs) + 1.5, max(ys) + 1.5))
        for point in solution.placement.sources.values():
            px, py = frame.xy(*point)
            self.blocked.append((px - 5, py - 5, px + 5, py + 5))
        self.placed: list[tuple] = []      # (kind, text, box)
        self._boxes: list[tuple] = []      # blocked, then placed, in that order
        self._grid: dict[tuple[int, int], list[int]] = {}
        for box in self.blocked:
            self._index(box)

    def _cells(self, box):
        c = self.CELL
        i0, j0 = math.floor(box[0] / c), math.floor(box[1] / c)
        i1, j1 = math.floor(box[2] / c), math.floor(box[3] / c)
        return ((i, j) for i in range(i0, i1 + 1) for j in range(j0, j1 + 1))

    def _index(self, box) -> None:
        n = len(self._boxes)
        self._boxes.append(box)
        for cell in self._cells(box):
            self._grid.setdefault(cell, []).append(n)

    def _near(self, region) -> list[int]:
        """Indices (ascending, as they were taken) of the boxes in the cells ``region`` covers."""
        found = set()
        grid = self._grid
        for cell in self._cells(region):
            hit = grid.get(cell)
            if hit:
                found.update(hit)
        return sorted(found)

    #: candidate distances (px) beyond the anchor's own radius, and directions per ring
    RINGS = (2.0, 8.0, 16.0, 26.0, 38.0, 54.0, 74.0, 100.0, 130.0)
    TURNS = 16
    #: rings tried on their own before all of them
    INNER = 4

    def _cost(self, boxes, inside):
        """Per candidate box, its overlap area (px^2) with the boxes taken near it; inf
        outside the drawing."""
        reach = (float(boxes[:, 0].min()), float(boxes[:, 1].min()), float(boxes[:, 2].max()),
                 float(boxes[:, 3].max()))
        others = np.array([self._boxes[i] for i in self._near(reach)], dtype=float).reshape(-1, 4)
        ow = np.minimum(boxes[:, None, 2], others[None, :, 2]) - np.maximum(boxes[:, None, 0], others[None, :, 0])
        oh = np.minimum(boxes[:, None, 3], others[None, :, 3]) - np.maximum(boxes[:, None, 1], others[None, :, 1])
        cost = (np.clip(ow, 0.0, None) * np.clip(oh, 0.0, None)).sum(axis=1)
        return np.where(inside, cost, np.inf)

    def place(self, kind: str, text: str, anchor, size, start: float = 90.0, near: float = 0.0):
        """Box (x0, y0, x1, y1) for a label of ``size`` (w, h) px near ``anchor`` (px);
        ``start`` is the preferred direction (degrees, 90 = above), ``near`` the radius of
        the anchor's own footprint.  All candidates are scored in one numpy pass."""
        ax, ay = anchor
        w, h = size
        # ring by ring, directions alternating either side of the preferred one
        steps = np.arange(self.TURNS)
        turns = ((steps + 1) // 2) * (360.0 / self.TURNS) * np.where(steps % 2, 1.0, -1.0)
        ang = np.radians(start + turns)[None, :]
        r = (near + np.asarray(self.RINGS))[:, None]
        cx = (ax + np.cos(ang) * (r + w / 2)).ravel()
        cy = (ay - np.sin(ang) * (r + h / 2)).ravel()
        boxes = np.stack([cx - w / 2, cy - h / 2, cx + w / 2, cy + h / 2], axis=1)
        x0, y0, x1, y1 = self.area
        inside = (boxes[:, 0] >= x0) & (boxes[:, 1] >= y0) & (boxes[:, 2] <= x1) & (boxes[:, 3] <= y1)
        # the inner rings first (most labels find a spot there, against fewer boxes near
        # them); the first free candidate is the same as in one pass over all of them
        for first in (self.INNER * self.TURNS, len(boxes)):
            cost = self._cost(boxes[:first], inside[:first])
            free = np.flatnonzero(cost == 0.0)
            if free.size:
                break
        if free.size:
            best = tuple(boxes[free[0]])
        elif np.isfinite(cost).any():
            best = tuple(boxes[int(np.argmin(cost))])
        else:    # nothing fits inside the drawing: beside the anchor
            best = (ax - w / 2, ay - h - 4, ax + w / 2, ay - 4)
        best = tuple(float(v) for v in best)
        self.placed.append((kind, text, best))
        self._index(best)
        return best


def _leader(anchor, box, colour: str, min_gap: float = 6.0) -> str:
    """A thin line from the anchor to the nearest point of the box, where they are apart."""
    ax, ay = anchor
    nx, ny = min(max(ax, box[0]), box[2]), min(max(ay, box[1]), box[3])
    if math.hypot(nx - ax, ny - ay) < min_gap:
        return ""
    return (f'<line x1="{ax:.1f}" y1="{ay:.1f}" x2="{nx:.1f}" y2="{ny:.1f}" stroke="{colour}" '
            f'stroke-width="0.8"/><circle cx="{ax:.1f}" cy="{ay:.1f}" r="1.8" fill="{colour}"/>')


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
    return out


HALO = 'style="paint-order:stroke;stroke:#ffffff;stroke-width:3px;stroke-linejoin:round"'


def _zone_labels(frame, layout, placer) -> list[str]:
    out = []
    for z in layout.zones:
        cx = sum(p[0] for p in z.polygon) / len(z.polygon)
        top = max(p[1] for p in z.polygon)
        text = f"{z.id} ({z.kind})"
        box = placer.place("zone", text, frame.xy(cx, top), _text_box(text, 10.0), start=-90.0)
        colour = STYLE["keepout"] if z.kind == "keepout" else STYLE["enclosure"]
        out.append(f'<text x="{(box[0] + box[2]) / 2:.1f}" y="{box[3] - 3:.1f}" text-anchor="middle" class="small" '
                   f'fill="{colour}" {HALO}>{escape(text)}</text>')
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
    legs = _legs(solution, ident, "beam" if role == "beam" else role)
    radii = _radii(legs, pieces)
    for i, (leg, _) in enumerate(legs):
        env = _envelope(frame, leg, None if radii is None else radii[i], k)
        if env:
            out.append(f'<polygon points="{env}" fill="{colour}" fill-opacity="0.22" stroke="none"/>')
        (x1, y1), (x2, y2) = frame.xy(*leg[0]), frame.xy(*leg[1])
        out.append(f'<line x1="{x1:.1f}" y1="{y1:.1f}" x2="{x2:.1f}" y2="{y2:.1f}" stroke="{colour}" '
                   f'stroke-width="{width}"><title>{role} {escape(ident)}</title></line>')
    return out


def hazard_stretches(assessment) -> list[tuple]:
    """Every stretch outside the enclosures where the exposure exceeds the MPE, cut at the
    hazard distance, in table mm, with its title and, where the hazard runs on past the
    drawing, the label for its end: [(coords, title, label or None)].  Worked out once for
    the plan and its inset."""
    from shapely.geometry import LineString
    from shapely.ops import substring

    out = []
    for seg in assessment.segments:
        if seg.inside_enclosure or seg.ratio is None or seg.ratio <= 1.0:
            continue
        length = seg.length_mm
        reach = length if seg.nohd_mm is None else min(seg.nohd_mm, length)
        if reach <= 0:
            continue
        stretch = substring(LineString(seg.polyline), 0.0, reach)
        title = f"{seg.id}: {seg.ratio:.3g} x MPE, OD {seg.od}"
        label = None
        if seg.nohd_mm is not None and seg.nohd_mm > length:
            far = "unbounded" if seg.nohd_mm == float("inf") else (
                f"{seg.nohd_mm / 1000:.3g} m" if seg.nohd_mm >= 1000 else f"{seg.nohd_mm:.0f} mm")
            label = f"hazard to {far}"
        out.append((list(stretch.coords), title, label))
    return out


def _hazard_zones(frame, stretches):
    """A wide translucent band along every stretch of ``hazard_stretches``; where the
    hazard runs on past the drawing, a label at its end with the distance (placed by the
    label pass).  Returns the bands and the (text, anchor px) of the labels."""
    out, labels = [], []
    colour = STYLE["hazard"]
    for coords, title, label in stretches:
        out.append(f'<polyline points="{frame.pts(coords)}" fill="none" stroke="{colour}" '
                   f'stroke-opacity="0.45" stroke-width="12" stroke-linecap="butt" stroke-linejoin="round">'
                   f'<title>{escape(title)}</title></polyline>')
        if label is not None:
            labels.append((label, frame.xy(*coords[-1])))
    return out, labels


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
    return out


def _stray_labels(frame, solution, placer) -> list[str]:
    """Each leak's power beside the middle of its line (the part in view, for an inset)."""
    out = []
    for r in solution.strays:
        if r.power_w is None:
            continue
        st = r.stray
        (x1, y1), (x2, y2) = frame.xy(*st.origin), frame.xy(*st.end.point)
        a = _clip_segment((x1, y1), (x2, y2), frame.area)
        if a is None:
            continue
        (x1, y1), (x2, y2) = a
        text = f"{'up to ' if r.at_most else ''}{r.power_w:.3g} W"
        mid = ((x1 + x2) / 2, (y1 + y2) / 2)
        box = placer.place("power", text, mid, _text_box(text, 9.0))
        out.append(_leader(mid, box, STYLE["stray"], 10.0))
        out.append(f'<text x="{box[0] + 1:.1f}" y="{box[3] - 2.5:.1f}" class="tiny" fill="{STYLE["stray"]}" '
                   f'{HALO}>{escape(text)}</text>')
    return out


def _clip_segment(a, b, area):
    """The part of segment a-b inside the box ``area`` (Liang-Barsky), or None."""
    (x1, y1), (x2, y2) = a, b
    dx, dy = x2 - x1, y2 - y1
    t0, t1 = 0.0, 1.0
    for p, q in ((-dx, x1 - area[0]), (dx, area[2] - x1), (-dy, y1 - area[1]), (dy, area[3] - y1)):
        if p == 0:
            if q < 0:
                return None
            continue
        r = q / p
        if p < 0:
            t0 = max(t0, r)
        else:
            t1 = min(t1, r)
        if t0 > t1:
            return None
    return (x1 + t0 * dx, y1 + t0 * dy), (x1 + t1 * dx, y1 + t1 * dy)


def _in_view(frame, x, y) -> bool:
    px, py = frame.xy(x, y)
    x0, y0, x1, y1 = frame.area
    return x0 <= px <= x1 and y0 <= py <= y1


#: Up to this many optics every one gets its label on the plan; on a larger bench only the
#: ones that matter (see ``labelled_optics``), and a note sends the reader to the optics table.
LABEL_ALL_UP_TO = 60
#: Kinds always labelled on a large bench: where light is stopped or split, the gain medium,
#: and what stands in the way.
LABEL_KINDS = ("dump", "detector", "splitter", "crystal", "obstacle")


def labelled_optics(solution, findings=()) -> set | None:
    """The optics to label on the plan: all of them (None) on a bench of up to
    LABEL_ALL_UP_TO optics; on a larger one, a reviewer cannot read a label per optic, so
    only those that matter: every optic of a cavity, the first and last optic of every beam,
    dumps, detectors, splitters, crystals and obstacles, and every optic a finding names."""
    optics = solution.placement.optics
    if len(optics) <= LABEL_ALL_UP_TO:
        return None
    keep = {oid for oid, placed in optics.items() if placed.optic.kind in LABEL_KINDS}
    for cav in solution.cavities.values():
        keep.update(h.optic for h in cav.hits)
    for beam in solution.beams.values():
        if beam.hits:
            keep.update((beam.hits[0].optic, beam.hits[-1].optic))
    for _, f in findings:
        keep.update(t for t in f.targets if t in optics)
    return keep


def _labels(frame, solution, placer, keep=None) -> list[str]:
    """Each optic's id beside its mount (only those in ``keep`` where it is given), each
    source's id beside its mark."""
    out = []
    for oid, placed in solution.placement.optics.items():
        if keep is not None and oid not in keep:
            continue
        minx, miny, maxx, maxy = placed.footprint.bounds
        if not _in_view(frame, *_centre(placed.footprint.bounds)):
            continue
        (l, t), (r, b) = frame.xy(minx, maxy), frame.xy(maxx, miny)
        anchor = ((l + r) / 2, (t + b) / 2)
        box = placer.place("optic", oid, anchor, _text_box(oid, 10.0, bold=True), near=max(r - l, b - t) / 2)
        out.append(_leader(anchor, box, STYLE["ink"], max(r - l, b - t) / 2 + 10))
        out.append(f'<text x="{(box[0] + box[2]) / 2:.1f}" y="{box[3] - 2.5:.1f}" text-anchor="middle" '
                   f'class="label" {HALO}>{escape(oid)}</text>')
    for sid, point in solution.placement.sources.items():
        if not _in_view(frame, *point):
            continue
        px, py = frame.xy(*point)
        out.append(f'<rect x="{px - 4:.1f}" y="{py - 4:.1f}" width="8" height="8" fill="{STYLE["beam"]}"/>')
        box = placer.place("source", sid, (px, py), _text_box(sid, 10.0, bold=True), near=4.0)
        out.append(_leader((px, py), box, STYLE["ink"], 14.0))
        out.append(f'<text x="{(box[0] + box[2]) / 2:.1f}" y="{box[3] - 2.5:.1f}" text-anchor="middle" '
                   f'class="label" {HALO}>{escape(sid)}</text>')
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


def _markers(frame, solution, findings, placer) -> list[str]:
    """One badge per place: findings at the same spot share it ("3,15,19"), drawn in the
    shape of the worst severity there and linked to the first of them.  The badge sits
    beside the place, where it covers no optic and no other label, with a leader to it."""
    groups: dict[tuple, list] = {}
    order = []
    for number, f in findings:
        point = finding_point(solution, f)
        if point is None or not _in_view(frame, *point):
            continue
        px, py = frame.xy(*point)
        key = (round(px / 8), round(py / 8))
        if key not in groups:
            groups[key] = []
            order.append((key, px, py))
        groups[key].append((number, f))
    rank = {"error": 0, "warning": 1, "note": 2}
    out = []
    for key, ax, ay in order:
        items = groups[key]
        worst = min(items, key=lambda nf: (nf[1].waived, rank.get(nf[1].severity, 3)))[1]
        numbers = [str(n) for n, _ in items]
        label = ",".join(numbers) if len(numbers) <= 3 else ",".join(numbers[:2]) + f",+{len(numbers) - 2}"
        colour = STYLE.get(worst.severity, STYLE["note"])
        tag_w = 5.6 * len(label) + 6 if len(label) > 2 else 0.0
        box = placer.place("marker", label, (ax, ay), (20.0 + tag_w + (2.0 if tag_w else 0.0), 20.0), start=45.0,
                           near=6.0)
        px, py = box[0] + 10.0, (box[1] + box[3]) / 2
        leader = _leader((ax, ay), box, colour, 3.0)
        hollow = all(f.waived for _, f in items)
        titles = " | ".join(f"{n} {f.severity}: {f.message}" for n, f in items)
        shape = _marker_shape(worst.severity, px, py, colour, hollow)
        text_fill = colour if hollow else "#ffffff"
        if tag_w:   # a wider tag beside the mark for several numbers
            tag = (f'<rect x="{px + 11:.1f}" y="{py - 7:.1f}" width="{tag_w:.1f}" height="14" rx="3" '
                   f'fill="#ffffff" stroke="{colour}" stroke-width="1"/><text x="{px + 14:.1f}" y="{py + 3.5:.1f}" '
                   f'class="mark" fill="{colour}" style="fill:{colour}">{escape(label)}</text>')
            inner = ""
        else:
            tag = ""
            inner = (f'<text x="{px:.1f}" y="{py + 3.5:.1f}" text-anchor="middle" class="mark" '
                     f'style="fill:{text_fill}">{escape(label)}</text>')
        out.append(f'<a href="#finding-{items[0][0]}"><g class="marker"><title>{escape(titles)}</title>'
                   f'{leader}{shape}{inner}{tag}</g></a>')
    return out
