"""Where does a free beam go?  A ray cast across the table against every mount footprint,
every zone boundary and the table edge.

Used for beams that end on no dump or detector (they are traced on) and for leak and
secondary beams.  Queries go through a shapely STRtree so the cost grows with the number
of footprints the ray actually passes, not with every pair.  Knows nothing of Gaussian
beams: a ray is a point and a direction.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from shapely import STRtree
from shapely.geometry import LineString, Point, box

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
    """The static scene: table outline, footprints by optic id, zones by id."""

    def __init__(self, size: tuple[float, float], footprints: dict, zones: dict):
        self.outline = box(0.0, 0.0, size[0], size[1])
        self.reach = float(np.hypot(*size)) * 4.0 + 1.0
        self.ids = list(footprints)
        self.shapes = [footprints[i] for i in self.ids]
        self.tree = STRtree(self.shapes) if self.shapes else None
        self.zone_ids = list(zones)
        self.zone_kinds = [zones[z][0] for z in self.zone_ids]
        self.zone_lines = [zones[z][1].exterior for z in self.zone_ids]
        self.zone_tree = STRtree(self.zone_lines) if self.zone_lines else None

    def cast(self, origin, direction, exclude: frozenset | set = frozenset()) -> RayEnd:
        """First thing the ray from ``origin`` along unit ``direction`` meets."""
        o = np.asarray(origin, dtype=float)
        d = np.asarray(direction, dtype=float)
        far = o + d * self.reach
        ray = LineString([tuple(o), tuple(far)])
        best = self._edge(o, d, ray)
        if self.tree is not None:
            for k in self.tree.query(ray, predicate="intersects"):
                ident = self.ids[int(k)]
                if ident in exclude:
                    continue
                dist = _first_distance(self.shapes[int(k)].boundary.intersection(ray), o, d)
                if self.shapes[int(k)].contains(Point(o)):
                    continue   # starting inside a mount (one's own neighbour): not a hit
                if dist is not None and dist > START_CLEARANCE and dist < best.length:
                    best = RayEnd(FOOTPRINT, ident, tuple(o + d * dist), dist)
        if self.zone_tree is not None:
            for k in self.zone_tree.query(ray, predicate="intersects"):
                dist = _first_distance(self.zone_lines[int(k)].intersection(ray), o, d)
                if dist is not None and dist > START_CLEARANCE and dist < best.length:
                    best = RayEnd(ZONE, self.zone_ids[int(k)], tuple(o + d * dist), dist, self.zone_kinds[int(k)])
        return best

    def _edge(self, o, d, ray) -> RayEnd:
        if not self.outline.covers(Point(o)):
            return RayEnd(TABLE_EDGE, None, tuple(o), 0.0)
        dist = _last_distance(self.outline.boundary.intersection(ray), o, d)
        dist = 0.0 if dist is None else dist
        return RayEnd(TABLE_EDGE, None, tuple(o + d * dist), dist)


def _distances(geom, o, d):
    if geom.is_empty:
        return []
    parts = getattr(geom, "geoms", [geom])
    out = []
    for part in parts:
        for x, y in np.asarray(part.coords):
            out.append(float((x - o[0]) * d[0] + (y - o[1]) * d[1]))
    return out


def _first_distance(geom, o, d):
    ds = [x for x in _distances(geom, o, d) if x > START_CLEARANCE]
    return min(ds) if ds else None


def _last_distance(geom, o, d):
    ds = _distances(geom, o, d)
    return max(ds) if ds else None
