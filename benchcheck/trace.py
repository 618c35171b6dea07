"""Follow every cavity and beam across the placed optics.

For each path: the ordered hits with their geometric position along the path, the angle
of incidence, the fold each mirror really makes, and the segment lengths; plus the
geometric problems a reviewer must see (a path that bends where nothing folds, a fold
that differs from the declared one, a ring that does not close, optics off the table).
These problems are data here; the ``layout-geometry`` rule turns them into findings.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import shapely
from shapely.geometry import Polygon, box

from .abcd import brewster_angle
from .coatings import pass_factor, reflectivity_at, transmission
from .model import WAVELENGTH_MATCH, Layout, LayoutError, Loc
from .raycast import FOOTPRINT, START_CLEARANCE, RayEnd, Table
from .placement import (
    DEFAULT_SPLITTER_FOLD, FOLDING_KINDS, clear_diameter, STRAIGHT_TOLERANCE_DEG, Placement, bends, cavity_exit, fold_for_turn, heading_of, turn_for_fold, unit, wrap180,
)

#: Default tolerance (deg) between a declared fold and the one the geometry gives.
FOLD_TOLERANCE_DEG = 0.5
#: A beam crossing a crystal, plate or lens this far (deg) off its axis is reported.
AXIS_TOLERANCE_DEG = 0.5
#: A beam passing a mirror or splitter beyond this angle of incidence (deg) runs almost
#: along its face: reported, and its substrate is not taken as a lens beyond 89 deg.
GRAZING_DEG = 80.0


REFLECT = "reflect"
TRANSMIT = "transmit"
END = "end"


@dataclass
class Hit:
    optic: str
    kind: str
    point: np.ndarray
    s: float                    # mm from the path start along the beam
    d_in: np.ndarray            # unit vector arriving
    d_out: np.ndarray | None    # unit vector leaving (None where the path ends)
    action: str                 # reflect | transmit | end
    aoi: float                  # radians, the angle the optical model uses
    fold: float | None          # degrees, geometric full fold at a reflection
    loc: Loc
    #: a mirror or splitter met from its back (transmission through the substrate from behind)
    from_back: bool = False


@dataclass
class GeometryIssue:
    kind: str
    message: str
    targets: tuple[str, ...]
    loc: Loc
    value: float | None = None
    limit: float | None = None
    unit: str | None = None


@dataclass
class PathTrace:
    id: str
    role: str                   # "linear" | "ring" | "beam"
    wavelength_nm: float
    hits: list[Hit]
    #: geometric segment lengths: between hits (ring: plus the closing one back to the
    #: first hit); for a beam the first is from its origin to the first hit
    segments: list[float]
    loc: Loc
    origin: str | None = None           # beams: source or cavity id
    start: np.ndarray | None = None     # beams: the origin point
    #: beams that end on no dump or detector are traced on to what they meet first
    tail: RayEnd | None = None
    #: a beam that ends on a passive cavity's input coupler is coupled into that cavity
    into: str | None = None


@dataclass
class Stray:
    """A leak through a cavity mirror, or the branch a beam does not follow at a splitter
    (or at a mirror it passes), traced across the table to what it meets first."""

    id: str
    kind: str                   # "leak" | "secondary"
    parent: str                 # cavity or beam id
    optic: str
    hit: int                    # index of the hit in the parent path
    origin: np.ndarray
    direction: np.ndarray
    end: RayEnd
    wavelength_nm: float
    fraction: float             # of the parent's power at that hit (T, or R for a reflected branch)
    loc: Loc
    #: True for what leaves a passive cavity's input coupler: the cavity's reflection
    input_reflection: bool = False
    #: True where the power is a cavity's (a leak, or a branch of one), else a beam's
    from_cavity: bool = False
    #: the optics it passes inside their clear aperture on its way, in order
    via: tuple[str, ...] = ()
    #: fraction of its starting power that reaches ``end`` (the product of what each optic
    #: in ``via`` transmits)
    passed: float = 1.0
    #: the corners of its path: origin, where it crosses each optic in ``via``, end
    points: list = field(default_factory=list)
    #: optics in ``via`` whose coating gives nothing at this wavelength: taken as passing all
    assumed: tuple[str, ...] = ()
    #: optics passed by the strays it branched from (bounds the tree at MAX_PASSES)
    depth: int = 0
    #: for a reflection off an optic another stray passes: the fraction of that stray's
    #: starting power it starts with (else 1)
    start_fraction: float = 1.0

    def path_points(self) -> list[tuple[float, float]]:
        """The polyline the stray follows across the table (mm)."""
        pts = self.points or [self.origin, self.end.point]
        return [(float(p[0]), float(p[1])) for p in pts]


@dataclass
class Trace:
    placement: Placement
    cavities: dict[str, PathTrace]
    beams: dict[str, PathTrace]
    issues: list[GeometryIssue] = field(default_factory=list)
    table: Table | None = None          # the scene for ray casts (leaks, beams traced on)
    strays: list[Stray] = field(default_factory=list)


def scene(placement: Placement) -> Table:
    layout = placement.layout
    footprints = {oid: p.footprint for oid, p in placement.optics.items()}
    zones = {z.id: (z.kind, Polygon(z.polygon)) for z in layout.zones}
    return Table(layout.bench.size, footprints, zones)


def trace(placement: Placement, fold_tolerance: float = FOLD_TOLERANCE_DEG) -> Trace:
    layout = placement.layout
    out = Trace(placement, {}, {}, [], scene(placement))
    for cav in layout.cavities.values():
        out.cavities[cav.id] = _trace_cavity(placement, cav, fold_tolerance, out.issues)
    onward = []
    for beam in layout.beams.values():
        path = _trace_beam(placement, beam, fold_tolerance, out.issues)
        last = path.hits[-1]
        path.into = _coupled_into(layout, last, path.wavelength_nm)
        if last.d_out is not None and path.into is None:
            onward.append(path)
        out.beams[beam.id] = path
    strays = _leaks(layout, out) + _secondaries(layout, out)
    # the beams traced on and the first leg of every stray: one ray cast for all of them
    ends = out.table.cast_many([p.hits[-1].point for p in onward] + [st.origin for st in strays],
                               [p.hits[-1].d_out for p in onward] + [st.direction for st in strays],
                               [{p.hits[-1].optic} for p in onward] + [{st.optic} for st in strays])
    for path, end in zip(onward, ends):
        path.tail = end
    for st, end in zip(strays, ends[len(onward):]):
        st.end = end
    out.strays = pass_through(out, strays)
    _off_table(placement, out.issues)
    return out


def _leaks(layout: Layout, out: Trace) -> list[Stray]:
    """Every mirror with T > 0 inside a cavity passes light out of its back face along the
    arriving direction: once per arrival, so twice at a fold mirror of a linear cavity
    (docs/design.md §4).  Their ``end`` is left to the caller's ray cast."""
    strays = []
    sent_out = {b.origin for b in layout.beams.values()}
    for cav in layout.cavities.values():
        path = out.cavities[cav.id]
        n = len(path.hits)
        for i, hit in enumerate(path.hits):
            optic = layout.optics[hit.optic]
            if optic.kind not in FOLDING_KINDS or hit.action != REFLECT:
                continue
            t = transmission(optic, cav.wavelength_nm)
            if t <= 0:
                continue
            arrivals = [hit.d_in]
            if cav.kind == "linear" and 0 < i < n - 1:
                arrivals.append(-hit.d_out)
            for k, d in enumerate(arrivals):
                # the first arrival is the one placement.cavity_exit sends out as the output beam
                if optic.id == cav.output_coupler and cav.id in sent_out and k == 0:
                    continue   # this leak is the output beam a [[beam]] follows
                suffix = "" if len(arrivals) == 1 else ("/out" if k == 0 else "/back")
                strays.append(Stray(f"{cav.id}/{optic.id}{suffix}", "leak", cav.id, optic.id, i, hit.point,
                                    np.asarray(d), None, cav.wavelength_nm, t, optic.loc,
                                    input_reflection=cav.input_coupler == optic.id, from_cavity=True))
    return strays


def _secondaries(layout: Layout, out: Trace) -> list[Stray]:
    """The branch a beam does not follow where it meets a splitter, or passes a mirror,
    unless another beam from the same origin follows that branch.  Their ``end`` is left
    to the caller's ray cast."""
    strays = []
    followed = {}
    for beam in layout.beams.values():
        for hit in out.beams[beam.id].hits:
            followed.setdefault((beam.origin, hit.optic, hit.action), beam.id)
    for beam in layout.beams.values():
        path = out.beams[beam.id]
        for i, hit in enumerate(path.hits):
            optic = layout.optics[hit.optic]
            if optic.kind not in FOLDING_KINDS or hit.action == END:
                continue
            other = TRANSMIT if hit.action == REFLECT else REFLECT
            if (beam.origin, hit.optic, other) in followed:
                continue
            if path.into is not None and i == len(path.hits) - 1:
                continue   # a seed's reflection off the input coupler is the cavity's reflection (a leak)
            placed = out.placement.optics[hit.optic]
            if other == TRANSMIT:
                direction = hit.d_in
                fraction = transmission(optic, path.wavelength_nm)
            else:
                normal = placed.direction
                direction = hit.d_in - 2.0 * np.dot(hit.d_in, normal) * normal
                fraction = reflectivity_at(optic, path.wavelength_nm, 1.0 if optic.kind == "mirror" else 0.0)
            if fraction <= 0:
                continue
            strays.append(Stray(f"{beam.id}/{optic.id}", "secondary", beam.id, optic.id, i, hit.point,
                                np.asarray(direction), None, path.wavelength_nm, fraction, optic.loc))
    return strays


#: A stray is followed through optics, and a reflection off one of them becomes a further
#: secondary beam, while it keeps at least this fraction of the power it started with.
NEGLIGIBLE_FRACTION = 1e-6
#: At most this many optics are passed by one stray and its branches (two facing partial
#: reflectors would send light back and forth without end); the stray then stops at the
#: next mount it meets, which the safety rules treat as not stopping it.
MAX_PASSES = 8
#: Optics that pass no light anywhere: a stray ends on them.
OPAQUE_KINDS = ("dump", "detector", "obstacle")


def pass_through(out: Trace, strays: list[Stray]) -> list[Stray]:
    """Follow each leak and secondary beam through every optic it meets inside the clear
    aperture (reduced by what that optic transmits, deviated by a lens) until something
    opaque stops it: a mount outside the clear aperture, a dump, a detector, an obstacle, a
    zone or the table edge.  What a passed mirror, splitter or untilted plate reflects,
    above ``NEGLIGIBLE_FRACTION`` of the stray, is a further secondary beam, followed alike.

    The casts go through ``Table.cast`` (shapely STRtree queries); each generation of
    branches is cast after the one before."""
    done: list[Stray] = []
    queue = list(strays)
    while queue:
        branches: list[Stray] = []
        for st in queue:
            branches += _follow(out, st)
            done.append(st)
        queue = branches
    return done


def _follow(out: Trace, st: Stray) -> list[Stray]:
    """Extend ``st`` in place through the optics it passes; return the branches it sends off."""
    placement, table = out.placement, out.table
    origin, direction, end = np.asarray(st.origin, float), np.asarray(st.direction, float), st.end
    points = [origin]
    total = 0.0
    branches = []
    depth = st.depth
    while end.kind == FOOTPRINT and depth < MAX_PASSES:
        crossing = _crossing(placement, origin, direction, end)
        if crossing is None:
            break
        placed, point, along = crossing
        optic = placed.optic
        depth += 1
        t, r, known = _split(optic, st.wavelength_nm)
        if not known:
            st.assumed += (optic.id,)
        if r * st.passed * st.start_fraction >= NEGLIGIBLE_FRACTION:
            normal = _face_normal(placed)
            if normal is None:
                out.issues.append(GeometryIssue(
                    "stray-reflection-untraced",
                    f"{st.kind} beam {st.id} passes tilted {optic.kind} \"{optic.id}\", which reflects {r:.3g} of it; "
                    "the layout does not say which way the plate is tilted, so that reflection is not traced",
                    (optic.id, st.parent), optic.loc, r, None, "fraction"))
            else:
                mirrored = direction - 2.0 * float(np.dot(direction, normal)) * normal
                branches.append(Stray(
                    f"{st.id}/{optic.id}", "secondary", st.parent, optic.id, st.hit, point, mirrored,
                    table.cast(point, mirrored, exclude={optic.id}), st.wavelength_nm, st.fraction, optic.loc,
                    input_reflection=st.input_reflection, from_cavity=st.from_cavity, assumed=st.assumed,
                    depth=depth, start_fraction=st.start_fraction * st.passed * r))
        total += along
        points.append(point)
        st.via += (optic.id,)
        st.passed *= t
        if st.passed * st.start_fraction < NEGLIGIBLE_FRACTION:
            # what is left is negligible: the optic reflects or absorbs the rest
            end = RayEnd(FOOTPRINT, optic.id, (float(point[0]), float(point[1])), 0.0)
            break
        direction = _after(placed, point, direction)
        origin = point
        end = table.cast(origin, direction, exclude={optic.id})
    points.append(np.asarray(end.point, float))
    if st.via:
        st.end = RayEnd(end.kind, end.id, end.point, total + end.length, end.zone_kind)
    st.points = points
    return branches


def _crossing(placement, origin, direction, end):
    """(placed optic, point on its face, distance from ``origin``) where the ray meets the
    optic whose footprint stopped it, inside its clear aperture; None where that optic is
    opaque or the ray meets its mount outside the clear aperture."""
    placed = placement.optics.get(end.id)
    if placed is None or placed.optic.kind in OPAQUE_KINDS:
        return None
    axis = _face_normal(placed)
    if axis is None:
        axis = np.asarray(placed.direction, float)
    across = float(np.dot(direction, axis))
    if abs(across) < 1e-9:
        return None              # along the face: it meets the mount's side
    dist = float(np.dot(placed.point - origin, axis)) / across
    if dist <= START_CLEARANCE:
        return None
    point = origin + dist * direction
    off = abs(float(np.dot(point - placed.point, np.array([-axis[1], axis[0]]))))
    if off > clear_diameter(placed.optic) / 2.0:
        return None              # the mount body outside the clear aperture stops it
    return placed, point, dist


def _face_normal(placed) -> np.ndarray | None:
    """Unit normal of the surface a stray crosses: a mirror's or splitter's face, the axis of
    an untilted optic; None for a plate or crystal tilted at an angle the layout does not
    orient (its aoi or Brewster faces give the angle, not the side)."""
    optic = placed.optic
    if optic.kind in FOLDING_KINDS:
        return np.asarray(placed.direction, float)
    if optic.kind in ("plate", "crystal") and (optic.faces == "brewster" or (optic.aoi or 0.0) != 0.0):
        return None
    return np.asarray(placed.direction, float)


def _split(optic, wavelength_nm: float) -> tuple[float, float, bool]:
    """(transmitted, reflected, known) fractions for a stray crossing ``optic``.  Where the
    coating gives no value at the stray's wavelength the optic is taken as passing it all
    (the side of caution for where the light goes) and ``known`` is False."""
    try:
        t = pass_factor(optic, TRANSMIT, wavelength_nm)
        if optic.kind in FOLDING_KINDS or optic.kind == "plate":
            r = reflectivity_at(optic, wavelength_nm, 1.0 if optic.kind == "mirror" else 0.0) or 0.0
        else:
            r = 0.0              # a lens, crystal or aperture gives no reflectivity
    except LayoutError:
        return 1.0, 0.0, False
    return t, r, True


def _after(placed, point, direction) -> np.ndarray:
    """Direction after crossing: a thin lens turns a ray by -h/f (h its height above the
    lens axis, paraxial; Hecht, Optics, ch. 5, from memory); other optics pass it straight
    (a tilted plate's sideways shift is not drawn)."""
    optic = placed.optic
    if optic.kind != "lens" or not optic.focal_length:
        return direction
    axis = np.asarray(placed.direction, float)
    if float(np.dot(direction, axis)) < 0:
        axis = -axis
    up = np.array([-axis[1], axis[0]])
    h = float(np.dot(point - placed.point, up))
    slope = float(np.dot(direction, up)) / float(np.dot(direction, axis)) - h / optic.focal_length
    d = axis + slope * up
    return d / float(np.hypot(*d))


def _hit(placement, entry, s, d_in, d_out, role_end, holder_id, tol, issues) -> Hit:
    placed = placement.optics[entry.id]
    optic = placed.optic
    if role_end:
        action = REFLECT if optic.kind in FOLDING_KINDS else END
    elif d_out is None:
        action = END
    else:
        action = REFLECT if bends(d_in, d_out, STRAIGHT_TOLERANCE_DEG) else TRANSMIT
    fold = None
    from_back = False
    if action == REFLECT and optic.kind not in FOLDING_KINDS:
        turn = wrap180(heading_of(d_out) - heading_of(d_in))
        issues.append(GeometryIssue(
            "bend-at-non-folding",
            f"the path of \"{holder_id}\" turns by {abs(turn):.3g} deg at {optic.kind} \"{optic.id}\", which does not fold a beam",
            (optic.id, holder_id), entry.loc, abs(turn), 0.0, "deg"))
        action = TRANSMIT
    if (action == REFLECT and not role_end and optic.kind in FOLDING_KINDS and entry.fold is None
            and placed.oriented_by not in (None, holder_id) and float(np.dot(d_in, d_out)) > 0.0):
        # a path that passes a mirror another path orients goes straight on (README, "Which
        # path decides"); a forward bend there is a passage at the wrong angle, not a reflection
        turn = wrap180(heading_of(d_out) - heading_of(d_in))
        issues.append(GeometryIssue(
            "bend-in-passage",
            f"\"{holder_id}\" passes through {optic.kind} \"{optic.id}\" but turns there by {abs(turn):.3g} deg: "
            f"a beam passing a mirror goes straight on, so the elements before and after \"{optic.id}\" on "
            f"\"{holder_id}\" are not on one line",
            (optic.id, holder_id), entry.loc, abs(turn), STRAIGHT_TOLERANCE_DEG, "deg"))
        action = TRANSMIT
    if action == REFLECT:
        fold = fold_for_turn(heading_of(d_out) - heading_of(d_in))
        declared = [(entry.fold, entry.loc)] if entry.fold is not None else []
        if optic.fold is not None and (not declared or (optic.kind == "splitter" and placed.oriented_by == holder_id)):
            declared.append((optic.fold, optic.where("fold")))
        for value, where in declared:
            if abs(wrap180(fold - value)) > tol:
                issues.append(GeometryIssue(
                    "fold-mismatch",
                    f"\"{optic.id}\" folds \"{holder_id}\" by {fold:.3f} deg on the table, but {value:g} deg is declared",
                    (optic.id, holder_id), where, fold, value, "deg"))
        # the law of reflection against the normal set by the path that oriented the mirror
        normal = placed.direction
        expected = np.asarray(d_in) - 2.0 * np.dot(d_in, normal) * normal
        miss = abs(wrap180(heading_of(d_out) - heading_of(expected)))
        if placed.oriented_by != holder_id and miss > tol and optic.kind == "splitter":
            issues.append(_splitter_face(placement, placed, entry, d_in, d_out, miss, holder_id, tol))
        elif placed.oriented_by != holder_id and miss > tol:
            issues.append(GeometryIssue(
                "reflection-off-normal",
                f"\"{holder_id}\" reflects at \"{optic.id}\" {miss:.2f} deg away from the law of reflection for the "
                f"mirror as \"{placed.oriented_by}\" sets it",
                (optic.id, holder_id), entry.loc, miss, tol, "deg"))
        aoi = math.acos(min(1.0, abs(float(np.dot(d_in, normal)))))
        # a retro-reflecting end mirror: aoi from the geometry is 0
        if fold == 0.0:
            aoi = 0.0
    else:
        aoi = _transmission_aoi(placed, d_in, holder_id, entry.loc, issues)
        if optic.kind in FOLDING_KINDS:
            from_back = float(np.dot(d_in, placed.direction)) > 0
    return Hit(optic.id, optic.kind, placed.point, s, np.asarray(d_in), None if d_out is None else np.asarray(d_out),
               action, aoi, fold, entry.loc, from_back)


def _splitter_face(placement, placed, entry, d_in, d_out, miss, holder_id, tol) -> GeometryIssue:
    """A path reflecting at a splitter whose face another path's pass (and the splitter's
    own ``fold`` key, or the default angle) has set: the splitter's ``fold`` is what to
    change, to the value that makes this path obey the law of reflection."""
    optic = placed.optic
    wanted = np.asarray(d_out) - np.asarray(d_in)
    wanted = wanted / float(np.hypot(*wanted))
    setter = placement.layout.cavities.get(placed.oriented_by) or placement.layout.beams.get(placed.oriented_by)
    arrive = _arrival(placement, setter, optic.id)
    mirrored = arrive - 2.0 * float(np.dot(arrive, wanted)) * wanted
    needed = fold_for_turn(heading_of(mirrored) - heading_of(arrive))
    if optic.fold is None:
        face = f"its own 'fold' key, which is not given ({DEFAULT_SPLITTER_FOLD:g} deg, 45 deg incidence, is assumed)"
    else:
        face = f"its own 'fold = {optic.fold:g}'"
    how = f"as the entry's 'fold = {entry.fold:g}' says" if entry.fold is not None else "where the coordinates lead it"
    return GeometryIssue(
        "splitter-face",
        f"\"{holder_id}\" reflects at splitter \"{optic.id}\" {how}, {miss:.2f} deg away from the law of "
        f"reflection: the splitter's face is set by {face} for the pass of \"{placed.oriented_by}\"; "
        f"'fold = {needed:.6g}' on \"{optic.id}\" turns its face to reflect \"{holder_id}\" this way",
        (optic.id, holder_id), optic.where("fold"), miss, tol, "deg")


def _arrival(placement, holder, optic_id) -> np.ndarray:
    """Direction in which ``holder`` (the path that orients the optic) first arrives at it."""
    ids = [e.id for e in holder.path]
    k = ids.index(optic_id)
    if k > 0:
        prev = placement.optics[ids[k - 1]].point
    elif holder.id in placement.layout.beams:
        origin = holder.origin
        layout = placement.layout
        prev = (placement.sources[origin] if origin in layout.sources
                else cavity_exit(layout, layout.cavities[origin], {i: v.point for i, v in placement.optics.items()})[0])
    else:   # the first element of a cavity: arriving from the second (linear) or the last (ring)
        prev = placement.optics[ids[1] if holder.kind == "linear" else ids[-1]].point
    return _dir(prev, placement.optics[optic_id].point)


def _transmission_aoi(placed, d_in, holder_id, loc, issues) -> float:
    optic = placed.optic
    axis = placed.direction
    off = math.degrees(math.acos(min(1.0, abs(float(np.dot(d_in, axis))))))
    if optic.kind in FOLDING_KINDS:
        if off > GRAZING_DEG:
            issues.append(GeometryIssue(
                "grazing", f"\"{holder_id}\" crosses {optic.kind} \"{optic.id}\" at {off:.1f} deg incidence, almost along "
                           "its face", (optic.id, holder_id), loc, off, GRAZING_DEG, "deg"))
        return math.radians(off)
    if optic.kind == "lens" and off > AXIS_TOLERANCE_DEG:
        issues.append(GeometryIssue(
            "off-axis-crossing",
            f"\"{holder_id}\" crosses lens \"{optic.id}\" {off:.2f} deg off its axis; it is modelled as on axis",
            (optic.id, holder_id), loc, off, AXIS_TOLERANCE_DEG, "deg"))
    if optic.kind in ("crystal", "plate"):
        if off > AXIS_TOLERANCE_DEG:
            issues.append(GeometryIssue(
                "off-axis-crossing",
                f"\"{holder_id}\" crosses {optic.kind} \"{optic.id}\" {off:.2f} deg off its axis; it is modelled on axis",
                (optic.id, holder_id), loc, off, AXIS_TOLERANCE_DEG, "deg"))
        if optic.faces == "brewster":
            return float(brewster_angle(optic.index))
        if optic.kind == "plate":
            return math.radians(optic.aoi or 0.0)
        return 0.0
    return math.radians(off)


def _trace_cavity(placement: Placement, cav, tol, issues) -> PathTrace:
    entries = list(cav.path)
    pts = [placement.optics[e.id].point for e in entries]
    n = len(entries)
    hits: list[Hit] = []
    _check_heading(cav.id, cav.heading, pts[0], pts[1], entries[1].id, cav.where("heading"), tol, issues)
    if cav.kind == "linear":
        segs = [float(np.linalg.norm(pts[i + 1] - pts[i])) for i in range(n - 1)]
        s = 0.0
        for i, e in enumerate(entries):
            fwd_in = _dir(pts[i - 1], pts[i]) if i > 0 else -_dir(pts[0], pts[1])
            if i == 0:
                d_in, d_out = fwd_in, _dir(pts[0], pts[1])
            elif i == n - 1:
                d_in, d_out = fwd_in, -fwd_in
            else:
                d_in, d_out = fwd_in, _dir(pts[i], pts[i + 1])
            hits.append(_hit(placement, e, s, d_in, d_out, i in (0, n - 1), cav.id, tol, issues))
            if i < n - 1:
                s += segs[i]
    else:
        segs = [float(np.linalg.norm(pts[(i + 1) % n] - pts[i])) for i in range(n)]
        s = 0.0
        for i, e in enumerate(entries):
            d_in = _dir(pts[i - 1], pts[i])
            d_out = _dir(pts[i], pts[(i + 1) % n])
            hits.append(_hit(placement, e, s, d_in, d_out, False, cav.id, tol, issues))
            s += segs[i]
        _ring_closure(placement, cav, pts, issues)
    return PathTrace(cav.id, cav.kind, cav.wavelength_nm, hits, segs, cav.loc)


def _check_heading(holder_id: str, declared: float | None, start, first, first_id: str, loc, tol, issues) -> None:
    """A declared first heading must agree with where the first element really is."""
    if declared is None:
        return
    actual = heading_of(np.asarray(first) - np.asarray(start))
    off = abs(wrap180(actual - declared))
    if off > tol:
        issues.append(GeometryIssue(
            "heading-mismatch",
            f"\"{holder_id}\" declares heading {declared:g} deg but \"{first_id}\" lies at {actual:.3f} deg",
            (holder_id, first_id), loc, actual, declared, "deg"))


def _ring_closure(placement, cav, pts, issues) -> None:
    """A relatively placed ring must close: the declared heading leaving the last element
    should lead back onto the first.  Reports the miss in mm and the angle error (the
    closure residual), the fold at the last element that would close it, the first element
    in path order where the declared and the geometric folds part, and the total turn the
    declared folds make where all are declared (a closed ring turns by 360 deg)."""
    entries = cav.path
    if not any(e.distance is not None for e in entries):
        return
    last = entries[-1]
    optic = placement.optics[last.id].optic
    arrive = heading_of(pts[-1] - pts[-2])
    fold = _declared_fold(placement, last)
    if optic.kind in FOLDING_KINDS and fold is None:
        return
    leave = arrive + (turn_for_fold(fold) if optic.kind in FOLDING_KINDS else 0.0)
    to_first = pts[0] - pts[-1]
    along = unit(leave)
    miss = abs(float(along[0] * to_first[1] - along[1] * to_first[0]))
    angle = abs(wrap180(heading_of(to_first) - leave))
    if miss <= 1e-3 and float(np.dot(along, to_first)) > 0:
        return
    text = (f"ring \"{cav.id}\" does not close: leaving \"{last.id}\" it passes {miss:.3f} mm beside "
            f"\"{entries[0].id}\" ({angle:.3f} deg off)")
    if optic.kind in FOLDING_KINDS:
        text += (f"; a fold of {fold_for_turn(heading_of(to_first) - arrive):.3f} deg at \"{last.id}\" (declared "
                 f"{fold:g}) would send it onto \"{entries[0].id}\"")
    n = len(entries)
    declared = [_declared_fold(placement, e) for e in entries]
    for i, e in enumerate(entries):
        if declared[i] is None or placement.optics[e.id].optic.kind not in FOLDING_KINDS:
            continue
        geometric = fold_for_turn(heading_of(pts[(i + 1) % n] - pts[i]) - heading_of(pts[i] - pts[i - 1]))
        if abs(wrap180(geometric - declared[i])) > FOLD_TOLERANCE_DEG:
            text += (f"; the declared and the geometric folds first part at \"{e.id}\" ({geometric:.3f} deg on the "
                     f"table, {declared[i]:g} declared)")
            break
    folding = [placement.optics[e.id].optic.kind in FOLDING_KINDS for e in entries]
    if all(d is not None for d, f in zip(declared, folding) if f):
        total = sum(turn_for_fold(d) for d, f in zip(declared, folding) if f)
        off = wrap180(total)
        if abs(off) > FOLD_TOLERANCE_DEG:
            text += (f"; the declared folds turn the beam by {total:.3f} deg in all, {off:+.3f} deg from a whole "
                     "turn, which no choice of distances can close")
    issues.append(GeometryIssue("ring-not-closed", text, (cav.id, last.id, entries[0].id), cav.loc, miss, 1e-3, "mm"))


def _declared_fold(placement, entry) -> float | None:
    optic = placement.optics[entry.id].optic
    return entry.fold if entry.fold is not None else optic.fold


def _trace_beam(placement: Placement, beam, tol, issues) -> PathTrace:
    layout = placement.layout
    if beam.origin in layout.sources:
        start = placement.sources[beam.origin]
    else:
        start, _ = cavity_exit(layout, layout.cavities[beam.origin], {k: v.point for k, v in placement.optics.items()})
    pts = [start] + [placement.optics[e.id].point for e in beam.path]
    if beam.origin in layout.sources:
        src = layout.sources[beam.origin]
        declared = src.heading if src.heading is not None else beam.heading
        where = src.where("heading") if src.heading is not None else beam.where("heading")
        _check_heading(beam.id, declared, start, pts[1], beam.path[0].id, where, tol, issues)
    segs = [float(np.linalg.norm(pts[i + 1] - pts[i])) for i in range(len(pts) - 1)]
    hits = []
    s = 0.0
    for i, e in enumerate(beam.path, start=1):
        s += segs[i - 1]
        d_in = _dir(pts[i - 1], pts[i])
        d_out = _dir(pts[i], pts[i + 1]) if i + 1 < len(pts) else _continue(placement, e, d_in, beam.id)
        hits.append(_hit(placement, e, s, d_in, d_out, False, beam.id, tol, issues))
    wl = (layout.sources[beam.origin].wavelength_nm if beam.origin in layout.sources
          else layout.cavities[beam.origin].wavelength_nm)
    return PathTrace(beam.id, "beam", wl, hits, segs, beam.loc, beam.origin, start)


def _coupled_into(layout: Layout, last: Hit, wavelength_nm: float) -> str | None:
    """The passive cavity a beam feeds when it ends on that cavity's input coupler,
    arriving from the back at (within 2 %) the cavity's wavelength."""
    if last.action != TRANSMIT or not last.from_back:
        return None
    for cav in layout.cavities.values():
        if cav.input_coupler == last.optic and abs(cav.wavelength_nm - wavelength_nm) <= WAVELENGTH_MATCH * wavelength_nm:
            return cav.id
    return None


def _continue(placement, entry, d_in, beam_id):
    """Direction after a beam's last element: None at a dump or detector, else onward."""
    optic = placement.optics[entry.id].optic
    if optic.kind in ("dump", "detector"):
        return None
    if optic.kind in FOLDING_KINDS and entry.fold is not None:
        return unit(heading_of(d_in) + turn_for_fold(entry.fold))
    if optic.kind == "mirror" and placement.optics[entry.id].oriented_by == beam_id and optic.fold is not None:
        return unit(heading_of(d_in) + turn_for_fold(optic.fold))
    return np.asarray(d_in)


def _dir(a, b) -> np.ndarray:
    v = np.asarray(b, dtype=float) - np.asarray(a, dtype=float)
    return v / float(np.hypot(v[0], v[1]))


def _off_table(placement: Placement, issues) -> None:
    layout: Layout = placement.layout
    w, h = layout.bench.size
    optics = list(placement.optics.values())
    if not optics:
        return
    # whatever lies within the table's bounds lies on it (the table is a box: it holds the
    # convex hull of any points inside it); only the rest, if any, goes to shapely's covers
    centres = np.array([np.asarray(p.point, dtype=float)[:2] for p in optics])
    mounts = np.array([p.footprint for p in optics], dtype=object)
    bounds = shapely.bounds(mounts)
    centre_on = (centres >= 0.0).all(axis=1) & (centres[:, 0] <= w) & (centres[:, 1] <= h)
    mount_on = (bounds[:, :2] >= 0.0).all(axis=1) & (bounds[:, 2] <= w) & (bounds[:, 3] <= h)
    if not (centre_on.all() and mount_on.all()):
        table = box(0.0, 0.0, w, h)
        centre_on |= shapely.covers(table, shapely.points(centres))
        mount_on |= shapely.covers(table, mounts)
    centre_on, mount_on = centre_on.tolist(), mount_on.tolist()
    for placed, centre_ok, mount_ok in zip(optics, centre_on, mount_on):
        o = placed.optic
        if not centre_ok and o.kind != "obstacle":
            issues.append(GeometryIssue(
                "off-table", f"\"{o.id}\" at ({placed.point[0]:.1f}, {placed.point[1]:.1f}) mm is off the "
                             f"{w:g} x {h:g} mm table", (o.id,), o.loc))
        elif not mount_ok:
            over = placed.footprint.difference(table).area
            issues.append(GeometryIssue(
                "off-table", f"the mount of \"{o.id}\" overhangs the table edge by {over:.0f} mm^2",
                (o.id,), o.loc, over, 0.0, "mm^2"))
