"""beam-obstructed: a beam's Gaussian envelope meets a mount or obstacle beside its path.

A reviewer's question is not only "does the axis hit the post?" but "how much of the beam
does the neighbouring mount shave off?".  A mount's footprint is a polygon on the table
(the table plane holds every fold, so it is the tangential plane of the beam); the beam is
a Gaussian across it.  Near the closest point a footprint edge is treated as a straight
knife edge parallel to the beam, and the power beyond it is the Gaussian edge integral

    fraction = 1/2 erfc(sqrt(2) delta / w)

with ``delta`` the signed distance from the beam axis to the footprint (negative when the
axis runs inside it) and ``w`` the local 1/e^2 radius in the table plane (the
error-function integral of a Gaussian intensity profile; Siegman, "Lasers" (1986), ch. 17,
from memory).  The model ignores diffraction ripple and the finite width of a post
narrower than the beam (it then overstates the loss): it answers "is there enough
clearance", not "what is the diffracted field".

Every free leg of every cavity and [[beam]] is checked (a ring's closing leg, a beam's leg
from its source, and the stretch a beam is traced on past its last optic).  The optics at
the two ends of a leg are exempt on that leg only: the far mirror of a Z-fold is not
exempt on the leg that runs past its mount.  Leak and secondary beams are not checked:
by construction they end on the first footprint they meet, and ``leak-beam`` reports that.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np
import shapely
from shapely import STRtree
from shapely.affinity import translate
from shapely.geometry import LineString, Point, Polygon

from benchcheck.clipping import edge_clip_fraction
from benchcheck.coatings import pass_factor
from benchcheck.findings import ERROR, WARNING, Finding, Option, Rule
from benchcheck.solve import linspace_rows, radius_along

SQRT2 = math.sqrt(2.0)
#: Uniform samples along a leg; the radius changes on the scale of the Rayleigh range and
#: the clearance on the scale of a mount, so a few hundred points bracket the worst place,
#: which a second, local grid then pins down (plus the footprint's own corners and the
#: point of closest approach, where the worst place usually is).
BASE_SAMPLES = 257
REFINE_SAMPLES = 129
#: Legs checked together: one ``radius_along`` call and one footprint query per block (a
#: call per leg costs more in numpy overhead than in arithmetic on a small layout), while
#: what a block holds (legs x BASE_SAMPLES samples, radii and the temporaries of sizing
#: them) stays near a few MB instead of growing with the path (about 90 MB at 4,000 legs).
LEG_BLOCK = 256
#: Footprints are looked up within this many local radii of the axis (at least as far as
#: the clearance the limit needs), plus a fixed margin for rounding.
MARGIN_RADII = 5.0
MARGIN_MM = 1.0
#: A source standing this close (mm) to a footprint stands in it: its own housing.
ON_FOOTPRINT_MM = 1e-6
#: Hints give the move to 0.1 mm, the precision a breadboard layout is drawn to.
HINT_STEP_MM = 0.1

#: Default limit, 1 ppm of the power beyond an edge (about 2.4 radii of clearance).  It keeps
#: a clipping loss two orders below the round-trip loss budget of a low-loss cavity (mirrors
#: of R = 0.9999 lose 100 ppm each; common practice), and a smaller limit would mean nothing:
#: that far out a real beam's wings are set by scatter and M^2, not by the Gaussian.
MAX_FRACTION = 1e-6
#: Above 1 % on a mount edge most lasers lose a visible part of their output and a
#: watt-level beam scatters a hazardous amount across the bench: an error, not a warning.
ERROR_FRACTION = 1e-2


def edge_fraction(clearance: float, radius: float) -> float:
    """Power fraction beyond a straight edge at signed ``clearance`` from the axis of a beam
    of 1/e^2 radius ``radius`` (``benchcheck.clipping.edge_clip_fraction``)."""
    return float(edge_clip_fraction(clearance, radius))


@functools.lru_cache(maxsize=32)
def clearance_ratio(fraction: float) -> float:
    """delta / w at which the edge passes ``fraction``: the inverse of ``edge_fraction``.

    Solved by bisection on the monotone erfc (the standard library has no inverse), to
    1e-12 in delta / w.  Kept per limit: every check asks again with the same one.
    """
    if not 0.0 < fraction < 1.0:
        raise ValueError(f"a clipped fraction must lie between 0 and 1, not {fraction!r}")
    lo, hi = -40.0, 40.0          # edge_fraction spans 1 - 1e-700 .. 1e-700 over this range
    while hi - lo > 1e-12:
        mid = 0.5 * (lo + hi)
        if edge_fraction(mid, 1.0) > fraction:
            lo = mid
        else:
            hi = mid
    return 0.5 * (lo + hi)


# --- the legs of every path ------------------------------------------------------------

@dataclass(frozen=True)
class Leg:
    """One straight stretch of a path between two elements (or a source, or where a beam
    traced on stops), with what is needed to size the beam along it."""

    path: str                   # cavity or beam id
    label: str                  # 'cavity "osc"' / 'beam "out"'
    where: str                  # which leg, in words
    a: np.ndarray               # start point (mm)
    b: np.ndarray               # end point (mm)
    s0: float                   # path coordinate of ``a`` (mm)
    exempt: frozenset           # footprint ids the leg may touch: the elements at its ends
    profile: dict               # plane -> free-propagation pieces of the path
    power_w: float | None       # power travelling along the leg
    power_text: str             # what that power is, in words
    members: frozenset = frozenset()   # every optic on the path (elsewhere it is no exemption)


def legs(bench, tree: STRtree | None = None, ids: list | None = None):
    """Every leg of every cavity and [[beam]], in file order.  ``tree`` holds the
    footprints (ids in ``ids``), to find the housing a source stands in."""
    sol = bench.solution
    for cid, path in bench.trace.cavities.items():
        res = sol.cavities[cid]
        hits = path.hits
        pairs = [(i, i + 1) for i in range(len(hits) - 1)]
        if path.role == "ring":
            pairs.append((len(hits) - 1, 0))     # the closing leg, s runs on past the last hit
        each = " each way" if path.role == "linear" else ""
        for i, j in pairs:
            yield Leg(cid, f"cavity \"{cid}\"", f"leg {hits[i].optic} -> {hits[j].optic}",
                      np.asarray(hits[i].point, float), np.asarray(hits[j].point, float), hits[i].s,
                      frozenset({hits[i].optic, hits[j].optic}), res.profile, res.circulating_w,
                      f"circulating{each}", frozenset(h.optic for h in hits))
    for bid, path in bench.trace.beams.items():
        res = sol.beams[bid]
        hits = path.hits
        members = frozenset(h.optic for h in hits)
        start = np.asarray(path.start, float)
        # a beam from a cavity starts on its output coupler; one from a source starts inside
        # whatever housing the source stands in
        first_exempt = {hits[0].optic}
        if path.origin in bench.layout.cavities:
            first_exempt.add(bench.layout.cavities[path.origin].output_coupler)
        else:
            first_exempt |= _housing(tree, ids, start)
        yield Leg(bid, f"beam \"{bid}\"", f"from {path.origin} to {hits[0].optic}", start,
                  np.asarray(hits[0].point, float), 0.0, frozenset(first_exempt), res.profile,
                  res.hits[0].power_w, "in the beam", members)
        for i in range(len(hits) - 1):
            yield Leg(bid, f"beam \"{bid}\"", f"leg {hits[i].optic} -> {hits[i + 1].optic}",
                      np.asarray(hits[i].point, float), np.asarray(hits[i + 1].point, float), hits[i].s,
                      frozenset({hits[i].optic, hits[i + 1].optic}), res.profile,
                      res.hits[i + 1].power_w, "in the beam", members)
        tail = path.tail
        if tail is not None and tail.length > 0:
            last = hits[-1]
            p = res.hits[-1].power_w
            if p is not None:
                p *= pass_factor(bench.layout.optics[last.optic], last.action, path.wavelength_nm)
            # where the tail stops on a mount, the beam ends there by construction:
            # beam-unterminated reports it, and that mount is not an obstruction of the tail
            exempt = {last.optic} | ({tail.id} if tail.kind == "footprint" else set())
            yield Leg(bid, f"beam \"{bid}\"", f"traced on past {last.optic}", np.asarray(last.point, float),
                      np.asarray(tail.point, float), last.s, frozenset(exempt), res.profile, p, "in the beam", members)


def _housing(tree: STRtree | None, ids: list | None, point) -> set:
    """Ids of footprints a source stands in or on (a laser head drawn as an obstacle)."""
    if tree is None:
        return set()
    # the disk's polygon lies inside the circle of radius ON_FOOTPRINT_MM: only footprints
    # within twice that can meet it.  A footprint the point itself meets surely does; the
    # polygon is built only to settle the others (most sources stand clear of every mount)
    centre = Point(point)
    near = tree.query(centre, predicate="dwithin", distance=2.0 * ON_FOOTPRINT_MM)
    if near.size == 0:
        return set()
    on = shapely.intersects(tree.geometries.take(near), centre)
    found = {ids[int(k)] for k in near[on]}
    rest = near[~on]
    if rest.size:
        disk = centre.buffer(ON_FOOTPRINT_MM)
        found |= {ids[int(k)] for k in rest[shapely.intersects(tree.geometries.take(rest), disk)]}
    return found


# --- clearance along one leg -----------------------------------------------------------

@dataclass(frozen=True)
class Worst:
    """The place on a leg where a footprint clips the largest fraction."""

    t: float                    # mm from the leg's start
    delta: float                # signed clearance (mm); <= 0: the axis meets the footprint
    w: float                    # local radius (mm)
    ratio: float                # delta / w
    crosses: bool               # the axis meets the footprint somewhere on the leg
    need: float                 # largest (required clearance - clearance) over the samples (mm)


def signed_clearance(poly: Polygon, pts: np.ndarray) -> np.ndarray:
    """Distance (mm) from each point to the footprint; inside it, minus the distance to its
    boundary (how far the axis runs inside the mount)."""
    geoms = shapely.points(pts)
    d = shapely.distance(geoms, poly)
    inside = shapely.contains_xy(poly, pts[:, 0], pts[:, 1])
    if np.any(inside):
        d[inside] = -shapely.distance(geoms[inside], poly.boundary)
    return d


class LegSampler:
    """Beam radius and clearance sampled along one leg, in one plane's radius."""

    def __init__(self, leg: Leg, pieces: list, plane: str, t=None, w=None, line=None):
        """``t``, ``w``, ``line``: the base samples, their radii and the leg's line where the
        caller has them already (``samplers`` builds those of all legs at once)."""
        self.leg = leg
        self.pieces = pieces
        self.plane = plane
        v = leg.b - leg.a
        self.length = float(np.hypot(v[0], v[1]))
        self.u = v / self.length
        self.normal = np.array([-self.u[1], self.u[0]])
        self.line = LineString([tuple(leg.a), tuple(leg.b)]) if line is None else line
        self.t = np.linspace(0.0, self.length, BASE_SAMPLES) if t is None else t
        self.w = self.radius(self.t) if w is None else w

    def radius(self, t) -> np.ndarray:
        return radius_along(self.pieces, self.leg.s0 + np.asarray(t, dtype=float))

    def points(self, t) -> np.ndarray:
        return self.leg.a + np.outer(np.asarray(t, dtype=float), self.u)

    def along(self, coords) -> np.ndarray:
        """Leg coordinates (mm from its start, clipped to the leg) of table points."""
        c = np.asarray(coords, dtype=float).reshape(-1, 2)
        return np.clip((c - self.leg.a) @ self.u, 0.0, self.length)

    def features(self, poly: Polygon) -> np.ndarray:
        """Leg coordinates where the worst place is likely: the closest approach, abreast of
        each corner of the footprint, and inside every stretch where the axis crosses it."""
        near = shapely.get_coordinates(shapely.shortest_line(self.line, poly))[:1]
        corners = shapely.get_coordinates(poly)
        inside = self.along(shapely.get_coordinates(self.line.intersection(poly)))
        inside = np.sort(inside)
        mids = 0.5 * (inside[:-1] + inside[1:]) if inside.size > 1 else inside
        return np.concatenate([self.along(near), self.along(corners), inside, mids])

    def worst(self, poly: Polygon, ratio_needed: float) -> Worst | None:
        """The largest clipped fraction (smallest delta / w) along the leg, or None where the
        leg has no beam size at all."""
        extra = self.features(poly)
        t = np.concatenate([self.t, extra])
        w = np.concatenate([self.w, self.radius(extra)])
        order = np.argsort(t, kind="stable")
        t, w = t[order], w[order]
        delta = signed_clearance(poly, self.points(t))
        ratio = delta / w
        if not np.any(np.isfinite(ratio)):
            return None
        k = int(np.nanargmin(ratio))
        # a finer grid between the neighbours of the worst sample
        t2 = np.linspace(t[max(k - 1, 0)], t[min(k + 1, t.size - 1)], REFINE_SAMPLES)
        w2 = self.radius(t2)
        d2 = signed_clearance(poly, self.points(t2))
        t, w, delta = np.concatenate([t, t2]), np.concatenate([w, w2]), np.concatenate([delta, d2])
        ratio = delta / w
        k = int(np.nanargmin(ratio))
        crosses = bool(self.line.intersects(poly)) or bool(np.nanmin(delta) <= 0.0)
        need = float(np.nanmax(ratio_needed * w - delta))
        return Worst(float(t[k]), float(delta[k]), float(w[k]), float(ratio[k]), crosses, need)

    def move_to_clear(self, poly: Polygon, worst: Worst, ratio_needed: float):
        """(distance mm, unit direction) to move the footprint, perpendicular to the leg, so
        that no point of the leg clips more than the limit; None where no move up to the
        table's scale does it.

        The first guess is the largest shortfall of clearance over the samples; a move
        does not widen every clearance by its full length (a corner off the leg's end), so
        the guess is checked on the moved footprint, doubled until clear, and bisected
        down to ``HINT_STEP_MM``.
        """
        if not worst.crosses:
            p_axis = self.points([worst.t])[0]
            p_poly = shapely.get_coordinates(shapely.shortest_line(Point(p_axis), poly))[-1]
            side = 1.0 if float(np.dot(p_poly - p_axis, self.normal)) >= 0.0 else -1.0
            guess = max(worst.need, HINT_STEP_MM)
        else:
            # the part of the footprint abreast of the leg, measured across the leg
            offsets = (shapely.get_coordinates(self.abreast(poly)) - self.leg.a) @ self.normal
            if offsets.size == 0:
                offsets = (shapely.get_coordinates(poly) - self.leg.a) @ self.normal
            reach = ratio_needed * float(np.nanmax(self.w))
            up, down = reach - float(offsets.min()), float(offsets.max()) + reach
            side, guess = (1.0, up) if up <= down else (-1.0, down)
            guess = max(guess, HINT_STEP_MM)
        direction = side * self.normal

        def clear(shift: float) -> bool:
            moved = translate(poly, *(shift * direction))
            res = self.worst(moved, ratio_needed)
            return res is None or (not res.crosses and res.ratio >= ratio_needed)

        lo, hi = 0.0, guess
        for _ in range(40):
            if clear(hi):
                break
            lo, hi = hi, 2.0 * hi
        else:
            return None
        while hi - lo > HINT_STEP_MM / 2.0:
            mid = 0.5 * (lo + hi)
            if clear(mid):
                hi = mid
            else:
                lo = mid
        return math.ceil(hi / HINT_STEP_MM - 1e-9) * HINT_STEP_MM, direction

    def abreast(self, poly: Polygon):
        """The part of ``poly`` between the perpendiculars through the leg's two ends."""
        reach = self.length + float(np.hypot(*np.subtract(poly.bounds[2:], poly.bounds[:2]))) + 1.0
        a, b, n = self.leg.a, self.leg.b, self.normal * reach
        slab = Polygon([tuple(a - n), tuple(b - n), tuple(b + n), tuple(a + n)])
        return poly.intersection(slab)


def _in_line(bench, leg: Leg, oid: str) -> bool:
    """Whether the optic stands on the straight line through the leg (within 1 um)."""
    p = np.asarray(bench.placement.optics[oid].point, float)
    v = leg.b - leg.a
    cross = v[0] * (p - leg.a)[1] - v[1] * (p - leg.a)[0]
    return abs(float(cross)) / float(np.hypot(*v)) < 1e-3


def _polygonal(geom):
    """The polygonal part of a clipped footprint (a single polygon or a multipolygon);
    None where nothing with an area is left."""
    if geom.is_empty:
        return None
    if geom.geom_type in ("Polygon", "MultiPolygon"):
        return geom if geom.area > 0 else None
    parts = [g for g in getattr(geom, "geoms", []) if g.geom_type in ("Polygon", "MultiPolygon") and g.area > 0]
    return shapely.union_all(parts) if parts else None


def sampler_for(leg: Leg) -> LegSampler | None:
    """Sampler in the tangential plane (the table plane, where footprints lie); the
    sagittal radius where the path has no tangential mode; None where it has neither."""
    return samplers([leg])[0]


def samplers(legs: list[Leg]) -> list[LegSampler | None]:
    """``sampler_for`` of every leg, with the base radii of all the legs that share a
    path's pieces found in one ``radius_along`` call (a per-leg call costs more in numpy
    overhead than in arithmetic on a small layout)."""
    out: list[LegSampler | None] = [None] * len(legs)
    if not legs:
        return out
    a = np.array([leg.a for leg in legs], dtype=float)
    b = np.array([leg.b for leg in legs], dtype=float)
    v = b - a
    lengths = np.hypot(v[:, 0], v[:, 1])
    grids = linspace_rows(np.zeros(len(legs)), lengths, BASE_SAMPLES)   # np.linspace(0, length) each
    lines = shapely.linestrings(np.stack([a, b], axis=1))
    pending = [i for i in range(len(legs)) if float(lengths[i]) >= 1e-6]
    for plane in ("t", "s"):
        groups: dict[int, tuple[list, list[int]]] = {}
        for i in pending:
            pieces = legs[i].profile.get(plane) or []
            if pieces:
                groups.setdefault(id(pieces), (pieces, []))[1].append(i)
        done = set()
        for pieces, members in groups.values():
            s = np.array([legs[i].s0 for i in members])[:, None] + grids[members]
            w_all = radius_along(pieces, s.ravel()).reshape(s.shape)
            for i, w, sized in zip(members, w_all, np.isfinite(w_all).any(axis=1).tolist()):
                if sized:
                    out[i] = LegSampler(legs[i], pieces, plane, grids[i], w, lines[i])
                    done.add(i)
        pending = [i for i in pending if i not in done]
    return out


# --- the rule ----------------------------------------------------------------------------

def _what(optic) -> str:
    if optic.kind == "obstacle":
        return f"obstacle \"{optic.id}\""
    return f"the mount of {optic.kind} \"{optic.id}\""


def check(bench, options):
    limit = float(options["max_fraction"])
    error_at = float(options["error_fraction"])
    ratio_needed = clearance_ratio(limit)
    if not 0.0 < error_at <= 1.0:
        raise ValueError(f"rules.beam-obstructed.error_fraction must lie in (0, 1], not {error_at!r}")
    ids = list(bench.placement.optics)
    shapes = [bench.placement.optics[i].footprint for i in ids]
    if not shapes:
        return
    # the ray-cast scene's tree holds the same footprints in the same order: reuse it
    table = bench.trace.table
    same = table is not None and table.tree is not None and table.ids == ids \
        and all(a is b for a, b in zip(table.shapes, shapes))
    tree = table.tree if same else STRtree(shapes)
    all_legs = list(legs(bench, tree, ids))
    for lo in range(0, len(all_legs), LEG_BLOCK):
        yield from _check_legs(bench, all_legs[lo:lo + LEG_BLOCK], tree, ids, shapes, limit, error_at, ratio_needed)


def _check_legs(bench, some_legs, tree, ids, shapes, limit, error_at, ratio_needed):
    """Findings on a block of legs, in order."""
    # no sampler: no beam size on a leg in either plane (e.g. an unstable cavity)
    found = [(leg, sampler) for leg, sampler in zip(some_legs, samplers(some_legs)) if sampler is not None]
    if not found:
        return
    # the footprints within a margin of each leg (exact distance: no buffer polygon built),
    # every leg of the block in one query
    margins = max(MARGIN_RADII, ratio_needed) * np.nanmax(np.stack([sampler.w for _, sampler in found]), axis=1) \
        + MARGIN_MM
    which, near = tree.query(np.array([sampler.line for _, sampler in found], dtype=object),
                             predicate="dwithin", distance=margins)
    by_leg: list[list[int]] = [[] for _ in found]
    for n, k in zip(which.tolist(), near.tolist()):
        by_leg[n].append(k)
    for (leg, sampler), close in zip(found, by_leg):
        for k in sorted(close):
            oid = ids[k]
            if oid in leg.exempt:
                continue
            # light on this leg travels between its two ends only: what lies behind its start
            # or beyond its end (a lens just behind the fold mirror the leg starts at) cannot
            # clip it, only the part of the footprint abreast of the leg
            poly = _polygonal(sampler.abreast(shapes[k]))
            if poly is None:
                continue
            worst = sampler.worst(poly, ratio_needed)
            if worst is None:
                continue
            fraction = edge_fraction(worst.delta, worst.w)
            if fraction <= limit and not worst.crosses:
                continue
            yield _finding(bench, leg, sampler, oid, poly, worst, fraction, limit, error_at, ratio_needed)


def _finding(bench, leg, sampler, oid, poly, worst, fraction, limit, error_at, ratio_needed) -> Finding:
    optic = bench.layout.optics[oid]
    x, y = (float(c) for c in sampler.points([worst.t])[0])
    w_um = worst.w * 1e3
    plane = "" if sampler.plane == "t" else " (sagittal radius: the path has no tangential mode)"
    if worst.delta <= 0.0:
        how = (f"runs into {_what(optic)}: at ({x:.1f}, {y:.1f}) mm its axis is {-worst.delta:.3g} mm inside "
               f"the footprint (clearance {worst.delta:.3g} mm), where the beam radius is {w_um:.0f} um{plane}")
    elif worst.crosses:
        how = (f"crosses {_what(optic)}; its worst place for the beam is at ({x:.1f}, {y:.1f}) mm with clearance "
               f"{worst.delta:.3g} mm and beam radius {w_um:.0f} um{plane}")
    else:
        how = (f"passes {worst.delta:.3g} mm from {_what(optic)} at ({x:.1f}, {y:.1f}) mm, where the beam radius "
               f"is {w_um:.0f} um{plane}")
    power = ""
    if leg.power_w is not None:
        power = f"; about {leg.power_w * fraction:.3g} W of the {leg.power_w:.3g} W {leg.power_text}"
    message = (f"{leg.label} {leg.where} {how}: the Gaussian edge clips a fraction {fraction:.3g} of the power "
               f"(1/2 erfc(sqrt(2) clearance / radius)), limit {limit:g}{power}")
    severity = ERROR if worst.crosses or fraction > error_at else WARNING
    move = sampler.move_to_clear(poly, worst, ratio_needed)
    thing = f"obstacle \"{oid}\"" if optic.kind == "obstacle" else f"\"{oid}\""
    if move is None:
        hint = f"re-route {leg.label} away from {thing}, or move {thing} out of its way"
    elif oid in leg.members and _in_line(bench, leg, oid):
        # on the straight line of this leg there is no angle between legs to open
        hint = (f"\"{oid}\" is on this path elsewhere, in line with this leg: if the beam passes through it here, "
                f"list it in the path at this place too; else move it, or give it a mount that stays "
                f"{ratio_needed:.2f} beam radii clear of this leg (a clipped fraction below {limit:g})")
    elif oid in leg.members:
        # the optic is on this path elsewhere: moving it moves the path; its mount or the
        # angle between the legs is what can change
        dist, _ = move
        hint = (f"\"{oid}\" is on this path elsewhere: give it a mount that reaches {dist:.1f} mm less far toward this leg, "
                f"or open the angle between the legs so this one passes {dist:.1f} mm farther from it (to keep "
                f"{ratio_needed:.2f} beam radii of clearance, a clipped fraction below {limit:g})")
    else:
        dist, d = move
        dx, dy = (round(float(c) * dist, 1) + 0.0 for c in d)      # + 0.0: no "-0.0"
        hint = (f"move {thing} {dist:.1f} mm away from the beam, by ({dx:+.1f}, {dy:+.1f}) mm, "
                f"to keep {ratio_needed:.2f} beam radii of clearance (a clipped fraction below {limit:g}); or "
                f"re-route the beam so this leg passes farther from it")
    return Finding(message, (oid, leg.path), value=fraction, limit=limit, unit="fraction", hint=hint,
                   severity=severity, at=(x, y))


RULES = (
    Rule(
        id="beam-obstructed",
        summary="a beam's envelope meets a mount or obstacle that is not on its path there",
        explanation=(
            "Every leg of every cavity (a ring's closing leg too) and of every [[beam]] (from its source, between "
            "its optics, and the stretch it is traced on past its last optic) is checked against every footprint "
            "on the table: mounts and obstacles, the part of each that lies abreast of the leg (between the "
            "perpendiculars through its ends: light on the leg goes nowhere else). The two elements at the ends "
            "of a leg are exempt on that leg; "
            "other optics of the same path are not (the far mirror of a Z-fold beside the first leg). Along the "
            "leg the signed clearance delta from the beam axis to the footprint and the local 1/e^2 radius w in "
            "the table (tangential) plane give the power beyond a straight edge, 1/2 erfc(sqrt(2) delta / w) "
            "(the Gaussian edge integral, Siegman 1986 ch. 17); the largest value over the leg is compared with "
            "max_fraction. Where the path has no tangential mode the sagittal radius is used; with no mode at "
            "all the leg is skipped. An axis that meets a footprint, or a fraction above error_fraction, is an "
            "error. The hint gives how far to move the footprint, perpendicular to the leg, to get below the "
            "limit. The straight-edge model overstates the loss at a post narrower than the beam and ignores "
            "diffraction. Leak and secondary beams end on the first footprint they meet by construction and are "
            "left to leak-beam."
        ),
        check=check,
        severity=WARNING,
        options=(
            Option("max_fraction", MAX_FRACTION,
                   "largest accepted fraction of a beam's power beyond a footprint edge (1 ppm: about 2.4 beam "
                   "radii of clearance)", "fraction"),
            Option("error_fraction", ERROR_FRACTION,
                   "above this fraction (or where the axis meets the footprint) a finding is an error", "fraction"),
        ),
    ),
)
