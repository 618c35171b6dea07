"""Put every optic on the table: positions, orientations and mount footprints.

Optics are placed by `at`, or relatively along one path (distance from the previous
element, heading changed by each fold).  Orientation comes from the first path that
meets an optic (cavities before beams): a mirror's normal bisects its arriving and
leaving directions; a transmissive optic's axis is the beam direction.  Footprints are
shapely polygons for the geometry queries of later stages.  Nothing here knows about
Gaussian beams.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import shapely
from shapely.geometry import Polygon

from .model import Layout, LayoutError, Loc, Optic

#: Default clear aperture (mm) where an optic gives no diameter: one inch (common practice).
DEFAULT_DIAMETER = 25.4
FOLDING_KINDS = ("mirror", "splitter")
MIN_SEGMENT = 1e-6  # mm; shorter segments make the direction undefined
#: A path that turns by less than this (deg) at an optic passes straight through it; more,
#: and it is a reflection (or, at an optic that cannot fold, a layout-geometry problem).
#: Coordinates typed to 0.01 mm over 100 mm are good to about 0.006 deg.
STRAIGHT_TOLERANCE_DEG = 0.05


def unit(heading_deg: float) -> np.ndarray:
    a = math.radians(heading_deg)
    return np.array([math.cos(a), math.sin(a)])


def heading_of(vec) -> float:
    return math.degrees(math.atan2(vec[1], vec[0]))


def wrap180(angle: float) -> float:
    """Angle in (-180, 180]."""
    a = (angle + 180.0) % 360.0 - 180.0
    return 180.0 if a == -180.0 else a


def turn_for_fold(fold: float) -> float:
    """Heading change at a mirror of signed full fold angle ``fold`` (docs/design.md §3).

    new heading = old + sign(fold) * (180 - |fold|); a fold of 0 is a retro-reflection
    (a turn of 180 degrees either way).
    """
    if fold == 0:
        return 180.0
    return math.copysign(180.0 - abs(fold), fold)


def fold_for_turn(turn: float) -> float:
    """Inverse of ``turn_for_fold``: signed full fold angle for a heading change."""
    t = wrap180(turn)
    if abs(t) >= 180.0 - 1e-12:
        return 0.0
    return math.copysign(180.0 - abs(t), t) if t != 0 else 180.0


class Note(str):
    """An assumption placement made, as text, with the optics it concerns and the line of
    the layout where the user would change it."""

    targets: tuple[str, ...]
    loc: Loc | None

    def __new__(cls, text: str, targets: tuple[str, ...] = (), loc: Loc | None = None):
        obj = super().__new__(cls, text)
        obj.targets, obj.loc = targets, loc
        return obj


@dataclass
class Placed:
    """Where an optic stands and which way it faces."""

    optic: Optic
    point: np.ndarray
    #: mirror, splitter: unit normal pointing out of the reflecting face; others: beam axis
    direction: np.ndarray
    oriented_by: str | None          # id of the cavity or beam that set the orientation
    footprint: Polygon


@dataclass
class Placement:
    layout: Layout
    optics: dict[str, Placed]
    sources: dict[str, np.ndarray]
    #: assumptions made while placing (an optic on no path, a splitter's face angle)
    notes: list[str] = field(default_factory=list)

    def point(self, ident: str) -> np.ndarray:
        if ident in self.optics:
            return self.optics[ident].point
        return self.sources[ident]


def ordered_paths(layout: Layout):
    """Cavities first, then beams, each in file order: the order that places and orients."""
    return [("cavity", c) for c in layout.cavities.values()] + [("beam", b) for b in layout.beams.values()]


def place(layout: Layout) -> Placement:
    points: dict[str, np.ndarray] = {oid: np.array(o.at, dtype=float) for oid, o in layout.optics.items() if o.at}
    sources = {sid: np.array(s.at, dtype=float) for sid, s in layout.sources.items() if s.at is not None}
    arrivals: dict[str, list] = {}      # optic id -> [(holder id, d_in, d_out)] in path order

    orienting = first_paths(layout)
    for cav in layout.cavities.values():
        _walk_cavity(layout, cav, points, arrivals, orienting)
    for src in layout.sources.values():
        if src.coaxial is not None:
            sources[src.id] = coaxial_point(src, points)
    for beam in layout.beams.values():
        _walk_beam(layout, beam, points, sources, arrivals, orienting)

    for zone in layout.zones:
        poly = Polygon(zone.polygon)
        if not poly.is_valid or poly.area <= 0:
            raise LayoutError(f"zone \"{zone.id}\": the polygon crosses itself or has no area; list its corners "
                              "in order round the outline", zone.loc)
    missing = [o for o in layout.optics.values() if o.kind != "obstacle" and o.id not in points]
    if missing:
        o = missing[0]
        raise LayoutError(f"optic \"{o.id}\" has no position: give it 'at', or place it in a path with "
                          "{ id = ..., distance = ... }", o.loc)
    placed = {}
    notes = []
    mounts = []         # (id, corners): every mount's rectangle, made into polygons in one call
    for oid, optic in layout.optics.items():
        if optic.kind == "obstacle":
            placed[oid] = Placed(optic, _obstacle_anchor(optic), np.array([1.0, 0.0]), None, obstacle_footprint(optic))
            continue
        direction, by, note = _orientation(optic, arrivals.get(oid, []))
        if note:
            notes.append(note)
        placed[oid] = Placed(optic, points[oid], direction, by, None)
        mounts.append((oid, footprint_corners(optic, points[oid], direction)))
    if mounts:
        for (oid, _), poly in zip(mounts, shapely.polygons(np.array([c for _, c in mounts]))):
            placed[oid].footprint = poly
    return Placement(layout, placed, sources, notes)


def coaxial_direction(src, points: dict) -> np.ndarray:
    """Unit direction of the cavity leg a ``coaxial`` source shines along: from the mirror
    it goes through toward the neighbour it names."""
    co = src.coaxial
    where = src.where("coaxial")
    return _norm(_need_point(co.toward, points, where) - _need_point(co.through, points, where))


def coaxial_point(src, points: dict) -> np.ndarray:
    """Where a ``coaxial`` source stands: ``distance`` mm behind its mirror, on the line of
    the cavity leg, so it follows the leg when the cavity's folds or distances change."""
    return points[src.coaxial.through] - src.coaxial.distance * coaxial_direction(src, points)


def _need_point(ident: str, points: dict, loc: Loc) -> np.ndarray:
    if ident not in points:
        raise LayoutError(f"\"{ident}\" has no position yet: give it 'at', or place it here with "
                          "{ id = ..., distance = ... } after an element that has one", loc)
    return points[ident]


def _advance(entry, prev_point, heading, points, layout, holder_id) -> np.ndarray:
    if entry.distance is not None:
        if heading is None:
            raise LayoutError(f"cannot place \"{entry.id}\" by distance: the direction after the previous element is "
                              "unknown (give the path a 'heading', or 'fold' at the mirror before it)", entry.loc)
        if entry.id in points:
            raise LayoutError(f"\"{entry.id}\" is placed twice (again in \"{holder_id}\"); an optic may be placed once",
                              entry.loc)
        points[entry.id] = prev_point + entry.distance * unit(heading)
    point = _need_point(entry.id, points, entry.loc)
    if np.linalg.norm(point - prev_point) < MIN_SEGMENT:
        raise LayoutError(f"\"{entry.id}\" stands where the previous element of \"{holder_id}\" stands; "
                          "a path needs a distance between elements", entry.loc)
    return point


def _heading_after(entry, optic: Optic, heading_in: float | None, orienting: bool) -> float | None:
    """Declared heading leaving an element, from its fold; None where geometry must decide.

    A path entry's own ``fold`` always applies.  A mirror's ``fold`` key belongs to the
    path that orients it (the first cavity, else the first beam, that meets it); any other
    beam passes a mirror straight on unless its entry gives a ``fold``.  A splitter's
    ``fold`` key only sets its face angle: a path follows its reflected branch only where
    the path entry says ``fold``.
    """
    if heading_in is None:
        return None
    if optic.kind == "splitter":
        return heading_in + (turn_for_fold(entry.fold) if entry.fold is not None else 0.0)
    if optic.kind == "mirror":
        fold = entry.fold if entry.fold is not None else (optic.fold if orienting else None)
        if fold is None:
            return None if orienting else heading_in
        return heading_in + turn_for_fold(fold)
    return heading_in


def first_paths(layout: Layout) -> dict[str, str]:
    """Optic id -> id of the cavity or beam that orients it."""
    out: dict[str, str] = {}
    for _, holder in ordered_paths(layout):
        for e in holder.path:
            out.setdefault(e.id, holder.id)
    return out


def _walk_cavity(layout, cav, points, arrivals, orienting) -> None:
    entries = list(cav.path)
    first = entries[0]
    if first.distance is not None:
        raise LayoutError(f"cavity \"{cav.id}\": the first element cannot be placed by distance; give it 'at'",
                          first.loc)
    start = _need_point(first.id, points, first.loc)
    heading = cav.heading
    prev = start
    pts = [start]
    for e in entries[1:]:
        p = _advance(e, prev, heading, points, layout, cav.id)
        heading = _heading_after(e, layout.optics[e.id], heading_of(p - prev), orienting.get(e.id) == cav.id)
        pts.append(p)
        prev = p
    if cav.kind == "linear":
        fwd = [None] + [_norm(pts[i] - pts[i - 1]) for i in range(1, len(pts))]
        for i, e in enumerate(entries):
            if i == 0:
                d_in, d_out = -_norm(pts[1] - pts[0]), _norm(pts[1] - pts[0])
            elif i == len(entries) - 1:
                d_in, d_out = fwd[i], -fwd[i]
            else:
                d_in, d_out = fwd[i], _norm(pts[i + 1] - pts[i])
            arrivals.setdefault(e.id, []).append((cav.id, d_in, d_out))
    else:
        n = len(pts)
        if np.linalg.norm(pts[0] - pts[-1]) < MIN_SEGMENT:
            raise LayoutError(f"ring \"{cav.id}\": the last element stands on the first", entries[-1].loc)
        for i, e in enumerate(entries):
            d_in = _norm(pts[i] - pts[i - 1])
            d_out = _norm(pts[(i + 1) % n] - pts[i])
            arrivals.setdefault(e.id, []).append((cav.id, d_in, d_out))


def cavity_exit(layout, cav, points) -> tuple[np.ndarray, np.ndarray]:
    """Point and direction of the beam a cavity sends out through its output coupler."""
    ids = [e.id for e in cav.path]
    pts = [points[i] for i in ids]
    k = ids.index(cav.output_coupler)
    if cav.kind == "linear" and k == 0:
        return pts[0], _norm(pts[0] - pts[1])
    return pts[k], _norm(pts[k] - pts[k - 1])


def _walk_beam(layout, beam, points, sources, arrivals, orienting) -> None:
    origin = beam.origin
    if origin in layout.sources:
        src = layout.sources[origin]
        start = sources[origin]
        if src.toward is not None:
            target = _need_point(src.toward, points, src.where("toward"))
            if np.linalg.norm(target - start) < MIN_SEGMENT:
                raise LayoutError(f"source \"{origin}\" stands on \"{src.toward}\", which it points toward",
                                  src.where("toward"))
            heading = heading_of(target - start)
        elif src.coaxial is not None:
            heading = heading_of(coaxial_direction(src, points))
        else:
            heading = src.heading if src.heading is not None else beam.heading
        if heading is None and beam.path[0].distance is not None:
            raise LayoutError(f"source \"{origin}\" needs 'toward' or 'heading' to place \"{beam.path[0].id}\" by "
                              "distance", src.loc)
    else:
        start, d = cavity_exit(layout, layout.cavities[origin], points)
        heading = heading_of(d)
    prev = start
    pts = [start]
    for e in beam.path:
        p = _advance(e, prev, heading, points, layout, beam.id)
        heading = _heading_after(e, layout.optics[e.id], heading_of(p - prev), orienting.get(e.id) == beam.id)
        pts.append(p)
        prev = p
    for i, e in enumerate(beam.path, start=1):
        d_in = _norm(pts[i] - pts[i - 1])
        d_out = _norm(pts[i + 1] - pts[i]) if i + 1 < len(pts) else None
        arrivals.setdefault(e.id, []).append((beam.id, d_in, d_out))


def _norm(v) -> np.ndarray:
    n = float(np.hypot(v[0], v[1]))
    return np.asarray(v, dtype=float) / n


def bends(d_in, d_out, tol_deg: float = STRAIGHT_TOLERANCE_DEG) -> bool:
    if d_out is None:
        return False
    return abs(wrap180(heading_of(d_out) - heading_of(d_in))) > tol_deg


#: Face angle assumed for a splitter that no path reflects from and that gives no ``fold``.
DEFAULT_SPLITTER_FOLD = 90.0


def _orientation(optic: Optic, seen: list):
    """Facing of an optic from the first path that meets it, and a note where it is assumed."""
    if not seen:
        if optic.kind in ("dump", "detector"):
            return np.array([1.0, 0.0]), None, None   # a block for stray light: facing does not matter
        return np.array([1.0, 0.0]), None, Note(f"optic \"{optic.id}\" is on no cavity or beam path; its mount is "
                                                "drawn facing +x", (optic.id,), optic.loc)
    by, d_in, d_out = seen[0]
    if optic.kind in FOLDING_KINDS:
        if d_out is not None and bends(d_in, d_out):
            return _norm(d_out - d_in), by, None
        # passes straight through: the face angle comes from a declared fold
        note = None
        fold = optic.fold
        if fold is None and optic.kind == "splitter":
            fold = DEFAULT_SPLITTER_FOLD
            note = Note(f"splitter \"{optic.id}\" gives no 'fold' for its face angle; {DEFAULT_SPLITTER_FOLD:g} deg "
                        "(45 deg incidence) is assumed", (optic.id,), optic.loc)
        if fold is None:
            return -np.asarray(d_in), by, None
        d_refl = unit(heading_of(d_in) + turn_for_fold(fold))
        return _norm(d_refl - d_in), by, note
    return np.asarray(d_in), by, None


def clear_diameter(optic: Optic) -> float:
    """The clear aperture (mm): the optic's diameter, else one inch (a crystal: 5 mm)."""
    return optic.diameter or (5.0 if optic.kind == "crystal" else DEFAULT_DIAMETER)


def mount_size(optic: Optic) -> tuple[float, float]:
    """[width, depth] of the mount, or a default that follows from the optic's size."""
    if optic.mount_size:
        return optic.mount_size
    d = clear_diameter(optic)
    if optic.kind == "crystal":
        return (max(2.0 * d, 20.0), (optic.length or 0.0) + 10.0)
    if optic.kind == "plate":
        return (max(1.5 * d, 12.7), (optic.thickness or 0.0) + 10.0)
    return (max(2.0 * d, 12.7), max(d, 10.0))


def _rect(center, along, width, depth) -> Polygon:
    """Rectangle with ``width`` across ``along`` and ``depth`` along it, centred at ``center``."""
    return Polygon(_rect_corners(center, along, width, depth))


def _rect_corners(center, along, width, depth) -> list[tuple[float, float]]:
    """The four corners of ``_rect``, in order round the outline."""
    ax, ay = (float(v) for v in np.asarray(along, dtype=float))
    px, py = (float(v) for v in np.asarray(center, dtype=float))
    cx, cy = -ay, ax
    hw, hd = width / 2.0, depth / 2.0
    # plain floats, in the order numpy would take them: center + c * sx * hw + a * sy * hd
    corners = [(px + cx * sx * hw + ax * sy * hd, py + cy * sx * hw + ay * sy * hd)
               for sx, sy in ((-1, -1), (1, -1), (1, 1), (-1, 1))]
    return corners


def footprint(optic: Optic, point: np.ndarray, direction: np.ndarray) -> Polygon:
    """Mount outline on the table: a mirror's spans its face and reaches ``depth`` behind it;
    a transmissive optic's is centred on it (docs/design.md §3)."""
    return Polygon(footprint_corners(optic, point, direction))


def footprint_corners(optic: Optic, point: np.ndarray, direction: np.ndarray) -> list[tuple[float, float]]:
    """The corners of ``footprint`` (``place`` makes the polygons of every mount in one
    shapely call)."""
    width, depth = mount_size(optic)
    if optic.kind in FOLDING_KINDS:
        return _rect_corners(point - direction * depth / 2.0, direction, width, depth)
    return _rect_corners(point, direction, width, depth)


def _obstacle_anchor(optic: Optic) -> np.ndarray:
    if optic.polygon:
        return np.asarray(Polygon(optic.polygon).centroid.coords[0])
    return np.array(optic.at, dtype=float)


def obstacle_footprint(optic: Optic) -> Polygon:
    if optic.polygon:
        poly = Polygon(optic.polygon)
        if not poly.is_valid or poly.area <= 0:
            raise LayoutError(f"obstacle \"{optic.id}\": the polygon crosses itself or has no area",
                              optic.where("polygon"))
        return poly
    w, d = optic.size
    return _rect(np.array(optic.at, dtype=float), unit(optic.angle), d, w)
