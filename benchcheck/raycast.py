"""Where does a free beam go?  A ray cast across the table against every mount footprint,
every zone boundary and the table edge.

Used for beams that end on no dump or detector (they are traced on) and for leak and
secondary beams.  Queries go through a shapely STRtree so the cost grows with the number
of footprints the ray actually passes, not with every pair.  Knows nothing of Gaussian
beams: a ray is a point and a direction.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import cached_property

import numpy as np
import shapely
from shapely import STRtree
from shapely.geometry import box

#: a ray starting this close (mm) to an obstacle does not count as meeting it
START_CLEARANCE = 1e-6

TABLE_EDGE = "table-edge"
FOOTPRINT = "footprint"
ZONE = "zone"


@dataclass(frozen=True)
class RayEnd:
    kind: str                  # table-edge | footprint | zone
    id: str | None             # optic or zone id
    point: tuple[float, float]
    length: float              # mm from the ray's start
    zone_kind: str | None = None


class Table:
    """The static scene: table outline, footprints by optic id, zones by id.

    Every outline is also kept as a flat array of straight segments, so that a ray is
    tested against all the candidates an STRtree query returns in one vectorised step and
    the nearest crossing wins (no shapely call per candidate)."""

    def __init__(self, size: tuple[float, float], footprints: dict, zones: dict):
        self.size = (float(size[0]), float(size[1]))
        self.reach = float(np.hypot(*size)) * 4.0 + 1.0
        self.ids = list(footprints)
        self.shapes = [footprints[i] for i in self.ids]
        self.tree = STRtree(self.shapes) if self.shapes else None
        self._shape_array = np.array(self.shapes, dtype=object)
        self.zone_ids = list(zones)
        self.zone_kinds = [zones[z][0] for z in self.zone_ids]
        #: the zone polygons by id (the hazard assessment and the rules reuse them)
        self.zone_shapes = {z: zones[z][1] for z in self.zone_ids}
        self.zone_lines = [zones[z][1].exterior for z in self.zone_ids]
        self.zone_tree = STRtree(self.zone_lines) if self.zone_lines else None
        # the outlines of the footprints, then of the zones (outline k >= len(ids) is zone
        # k - len(ids)): one crossing test serves both
        outlines = np.concatenate([shapely.boundary(self._shape_array), np.array(self.zone_lines, dtype=object)])
        self._segments = _Segments(outlines) if len(outlines) else None

    @cached_property
    def outline(self):
        """The table as a polygon (built on first use: the casts do not need it)."""
        return box(0.0, 0.0, self.size[0], self.size[1])

    def cast(self, origin, direction, exclude: frozenset | set = frozenset()) -> RayEnd:
        """First thing the ray from ``origin`` along unit ``direction`` meets."""
        return self.cast_many([origin], [direction], [exclude])[0]

    def cast_many(self, origins, directions, excludes) -> list[RayEnd]:
        """``cast`` of many rays at once (one STRtree query per tree and one vectorised
        crossing test for all of them); ``excludes`` gives each ray's set of footprint ids to
        pass by."""
        if not len(origins):
            return []
        o = np.asarray(origins, dtype=float).reshape(len(origins), 2)
        d = np.asarray(directions, dtype=float).reshape(len(origins), 2)
        rays = shapely.linestrings(np.stack([o, o + d * self.reach], axis=1))
        best = [self._edge(o[r], d[r]) for r in range(len(o))]
        rows, owners = [], []
        if self.tree is not None:
            which, found = self.tree.query(rays, predicate="intersects")
            keep = [self.ids[k] not in excludes[r] for r, k in zip(which.tolist(), found.tolist())]
            which, found = which[keep], found[keep]
            if found.size:
                # starting inside a mount (one's own neighbour) is not a hit on it
                away = ~shapely.contains_xy(self._shape_array[found], o[which, 0], o[which, 1])
                which, found = which[away], found[away]
            rows.append(which)
            owners.append(found)
        if self.zone_tree is not None:
            which, found = self.zone_tree.query(rays, predicate="intersects")
            rows.append(which)
            owners.append(found + len(self.ids))
        if not rows:
            return best
        which, found = np.concatenate(rows), np.concatenate(owners)
        if len(rows) > 1:
            # each ray's footprints, then its zones: the nearest crossing wins, and a zone
            # only where it is nearer than every footprint (the first on a tie)
            order = np.argsort(which, kind="stable")
            which, found = which[order], found[order]
        nf = len(self.ids)
        for r, k, dist in self._segments.first(which, found, o, d, best):
            if k < nf:
                best[r] = RayEnd(FOOTPRINT, self.ids[k], tuple(o[r] + d[r] * dist), dist)
            else:
                k -= nf
                best[r] = RayEnd(ZONE, self.zone_ids[k], tuple(o[r] + d[r] * dist), dist, self.zone_kinds[k])
        return best

    def _edge(self, o, d) -> RayEnd:
        """Where the ray leaves the table (a box from the origin): the nearest of the two
        edges it runs toward; length 0 for a ray that starts off the table."""
        width, height = self.size
        if not (0.0 <= o[0] <= width and 0.0 <= o[1] <= height):
            return RayEnd(TABLE_EDGE, None, tuple(o), 0.0)
        dist = self.reach
        for axis, high in ((0, width), (1, height)):
            if d[axis] > 0.0:
                dist = min(dist, (high - o[axis]) / d[axis])
            elif d[axis] < 0.0:
                dist = min(dist, -o[axis] / d[axis])
        return RayEnd(TABLE_EDGE, None, tuple(o + d * dist), dist)


class _Segments:
    """The straight pieces of a set of outlines, grouped by the outline they belong to."""

    def __init__(self, lines: np.ndarray):
        parts, owner = shapely.get_parts(lines, return_index=True)
        coords, part = shapely.get_coordinates(parts, return_index=True)
        same = part[:-1] == part[1:]          # consecutive points of one line make a segment
        self.a = coords[:-1][same]
        self.b = coords[1:][same]
        # the per-segment terms of every crossing test, as rows (x, y of the start, of the
        # segment vector, and its length) so that one gather serves a query
        e = self.b - self.a
        self.cols = np.stack([self.a[:, 0], self.a[:, 1], e[:, 0], e[:, 1],
                              np.maximum(np.hypot(e[:, 0], e[:, 1]), 1e-300)])
        seg_owner = owner[part[:-1][same]]
        n = len(lines)
        self.start = np.searchsorted(seg_owner, np.arange(n), side="left")
        self.stop = np.searchsorted(seg_owner, np.arange(n), side="right")

    def first(self, rays: np.ndarray, owners: np.ndarray, o: np.ndarray, d: np.ndarray, best: list):
        """(ray, owner, distance) of the nearest crossing of each ray farther than
        START_CLEARANCE and nearer than its ``best[ray].length``, among the outlines
        ``owners`` paired with it (pairs grouped by ray, as an STRtree query gives them);
        rays with no such crossing are left out.  On a tie the first pair and segment win."""
        owners = np.asarray(owners, dtype=np.intp)
        if owners.size == 0:
            return []
        counts = self.stop[owners] - self.start[owners]
        total = int(counts.sum())
        if total == 0:
            return []
        first_of = np.cumsum(counts) - counts
        idx = np.repeat(self.start[owners] - first_of, counts) + np.arange(total)
        who = np.repeat(owners, counts)
        ray = np.repeat(np.asarray(rays, dtype=np.intp), counts)
        dist = self._crossings(idx, ray, o, d)
        before = np.array([b.length for b in best], dtype=float)[ray]
        dist[~(dist > START_CLEARANCE) | ~(dist < before)] = np.inf
        # each ray's rows are one run: its smallest distance, and the first row that has it
        new_run = np.empty(ray.size, dtype=bool)
        new_run[0] = True
        np.not_equal(ray[1:], ray[:-1], out=new_run[1:])
        starts = np.flatnonzero(new_run)
        low = np.minimum.reduceat(dist, starts)
        run = np.cumsum(new_run) - 1
        row = np.minimum.reduceat(np.where(dist == low[run], np.arange(ray.size), ray.size), starts)
        return [(int(ray[k]), int(who[k]), float(dist[k])) for k, m in zip(row.tolist(), low.tolist())
                if math.isfinite(m)]

    def _crossings(self, idx: np.ndarray, ray: np.ndarray, o: np.ndarray, d: np.ndarray) -> np.ndarray:
        """Distance along ray ``ray[i]`` (origin ``o[ray[i]]``, unit direction ``d[ray[i]]``)
        to the first point of segment ``idx[i]`` beyond START_CLEARANCE; inf where the ray
        misses it.  A segment lying along the ray counts from its nearer end (or from where
        the ray leaves it when the ray starts on it)."""
        ax, ay, ex, ey, scale = self.cols[:, idx]
        ox, oy, dx, dy = o[ray, 0], o[ray, 1], d[ray, 0], d[ray, 1]
        wx, wy = ax - ox, ay - oy                   # w = a - o
        denom = dx * ey - dy * ex                   # cross(d, e)
        along = wx * ey - wy * ex                   # cross(w, e)
        across = wx * dy - wy * dx                  # cross(w, d)
        parallel = np.abs(denom) <= 1e-12 * scale
        with np.errstate(divide="ignore", invalid="ignore"):
            t = along / denom
            u = across / denom
        tol = 1e-12
        out = np.where(~parallel & (u >= -tol) & (u <= 1.0 + tol) & (t >= 0.0), t, np.inf)
        # collinear segments: the ray meets the nearer end, or leaves the segment at the farther
        collinear = parallel & (np.abs(across) <= 1e-9 * np.maximum(scale, 1.0))
        # rare: one ray at a time (sorted set, not np.unique: that imports numpy.ma, ~10 ms, on every check)
        for r in sorted(set(ray[collinear].tolist())):
            on = collinear & (ray == r)
            rows = idx[on]
            ta = (self.a[rows] - o[r]) @ d[r]
            tb = (self.b[rows] - o[r]) @ d[r]
            near, far = np.minimum(ta, tb), np.maximum(ta, tb)
            first = np.where(near > START_CLEARANCE, near, far)
            out[on] = np.where(first > START_CLEARANCE, first, np.inf)
        return out
