"""The indexed beam-radius lookup and the vectorised ray cast give the same answers as the
plain methods they replace, and the stability classification of many round trips at once
agrees with the one-at-a-time one (speed itself is measured by benchmarks/bench_scale.py).

References: the radius from each piece on its own (``Piece.radius``, the first piece in
list order that holds the point), and shapely's own intersection of the ray with every
outline (shapely's result); ``classify`` applied to one matrix at a time.
"""

from __future__ import annotations

import numpy as np
import pytest
from shapely.geometry import LineString, Point, Polygon, box
from shapely import affinity

from benchcheck.raycast import FOOTPRINT, START_CLEARANCE, TABLE_EDGE, ZONE, Table
from benchcheck.solve import Piece, radius_along


def _pieces(rng, n, gaps=True):
    out, s = [], 0.0
    for _ in range(n):
        length = float(rng.choice([0.0, rng.uniform(1.0, 80.0)], p=[0.1, 0.9]))
        q0 = complex(rng.uniform(-50, 50), rng.uniform(10, 500))
        out.append(Piece(s, length, float(rng.uniform(0.5, 1.0)), float(rng.uniform(0.8, 1.2)), q0,
                         1.064e-3, float(rng.uniform(1.0, 2.0))))
        s += length + (float(rng.choice([0.0, rng.uniform(0.0, 5.0)])) if gaps else 0.0)
    return out


def _by_each_piece(pieces, s):
    s = np.atleast_1d(np.asarray(s, dtype=float))
    out = np.full(s.shape, np.nan)
    for i, x in enumerate(s):
        for p in pieces:
            if p.s0 - 1e-9 <= x <= p.s0 + p.length + 1e-9:
                out[i] = float(p.radius(x))
                break
    return out


@pytest.mark.parametrize("seed", range(5))
def test_radius_along_matches_the_piece_that_holds_each_point(seed):
    rng = np.random.default_rng(seed)
    pieces = _pieces(rng, 60)
    end = pieces[-1].s0 + pieces[-1].length
    s = np.concatenate([rng.uniform(-10.0, end + 10.0, 400), [p.s0 for p in pieces],
                        [p.s0 + p.length for p in pieces]])
    got = radius_along(pieces, s)
    want = _by_each_piece(pieces, s)
    assert np.array_equal(np.isnan(got), np.isnan(want))
    assert np.allclose(got[~np.isnan(got)], want[~np.isnan(want)], rtol=1e-12, atol=0.0)
    # a second query on the same list (served from the index) agrees too
    assert np.allclose(radius_along(pieces, s[:50]), want[:50], rtol=1e-12, equal_nan=True)


def test_radius_along_on_pieces_out_of_path_order():
    rng = np.random.default_rng(7)
    pieces = _pieces(rng, 20)
    shuffled = [pieces[i] for i in rng.permutation(len(pieces))]
    s = rng.uniform(0.0, pieces[-1].s0 + pieces[-1].length, 300)
    assert np.allclose(radius_along(shuffled, s), _by_each_piece(shuffled, s), rtol=1e-12, equal_nan=True)


def test_radius_along_sees_a_list_changed_after_an_earlier_query():
    rng = np.random.default_rng(3)
    pieces = _pieces(rng, 10, gaps=False)
    end = pieces[-1].s0 + pieces[-1].length
    radius_along(pieces, [1.0])
    pieces.append(Piece(end, 100.0, 1.0, 1.0, complex(0.0, 200.0), 1.064e-3, 1.0))
    assert np.isfinite(radius_along(pieces, [end + 50.0])[0])


def _reference_cast(table_size, footprints, zones, o, d, exclude):
    """shapely's intersections of the ray with each outline, nearest first."""
    reach = float(np.hypot(*table_size)) * 4.0 + 1.0
    o, d = np.asarray(o, float), np.asarray(d, float)
    ray = LineString([tuple(o), tuple(o + d * reach)])
    outline = box(0, 0, *table_size)

    def dists(geom):
        if geom.is_empty:
            return []
        return [float((x - o[0]) * d[0] + (y - o[1]) * d[1])
                for part in getattr(geom, "geoms", [geom]) for x, y in part.coords]

    if not outline.covers(Point(o)):
        return TABLE_EDGE, None, 0.0
    best = (TABLE_EDGE, None, max(dists(outline.boundary.intersection(ray))))
    for ident, shape in footprints.items():
        if ident in exclude or shape.contains(Point(o)):
            continue
        ds = [x for x in dists(shape.boundary.intersection(ray)) if x > START_CLEARANCE]
        if ds and min(ds) < best[2]:
            best = (FOOTPRINT, ident, min(ds))
    for ident, (_, poly) in zones.items():
        ds = [x for x in dists(poly.exterior.intersection(ray)) if x > START_CLEARANCE]
        if ds and min(ds) < best[2]:
            best = (ZONE, ident, min(ds))
    return best


@pytest.mark.parametrize("seed", range(4))
def test_ray_cast_finds_the_same_first_hit_as_shapely(seed):
    rng = np.random.default_rng(100 + seed)
    size = (1000.0, 600.0)
    footprints = {}
    for i in range(40):
        x, y = rng.uniform(0, size[0]), rng.uniform(0, size[1])
        shape = box(x - rng.uniform(2, 30), y - rng.uniform(2, 30), x + rng.uniform(2, 30), y + rng.uniform(2, 30))
        footprints[f"F{i}"] = affinity.rotate(shape, float(rng.uniform(0, 90)))
    # a footprint with a hole and an axis-aligned box edge the rays can run along
    footprints["ring"] = Polygon([(400, 400), (500, 400), (500, 500), (400, 500)],
                                 [[(430, 430), (470, 430), (470, 470), (430, 470)]])
    zones = {"Z1": ("keepout", Polygon([(700, 50), (950, 50), (950, 250), (700, 250)]))}
    table = Table(size, footprints, zones)
    for _ in range(150):
        if rng.random() < 0.3:   # start on a footprint's boundary, as a leak from a mirror does
            ident = f"F{rng.integers(40)}"
            o = np.asarray(footprints[ident].exterior.interpolate(rng.random(), normalized=True).coords[0])
            exclude = {ident}
        else:
            o = rng.uniform([-20, -20], [size[0] + 20, size[1] + 20])
            exclude = set()
        angle = rng.choice([0.0, 90.0, 180.0, rng.uniform(0, 360)])
        d = np.array([np.cos(np.radians(angle)), np.sin(np.radians(angle))])
        got = table.cast(o, d, exclude=exclude)
        kind, ident, dist = _reference_cast(size, footprints, zones, o, d, exclude)
        assert (got.kind, got.id) == (kind, ident)
        assert got.length == pytest.approx(dist, rel=1e-9, abs=1e-9)


@pytest.mark.parametrize("seed", range(3))
def test_many_rays_cast_at_once_end_where_each_cast_alone_ends(seed):
    # reference: the same rays cast one at a time (Table.cast), compared to the bit
    rng = np.random.default_rng(200 + seed)
    footprints = {f"F{i}": affinity.rotate(box(x, y, x + 20, y + 10), float(rng.choice([0.0, 30.0])))
                  for i, (x, y) in enumerate(rng.integers(0, 400, size=(25, 2)).astype(float))}
    # a footprint whose left edge lies on a zone's edge: rays along y = 160 meet both at once
    footprints["edge"] = box(100, 150, 120, 170)
    zones = {"Z": ("keepout", box(100, 100, 300, 300)), "E": ("enclosure", box(320, 20, 380, 80))}
    table = Table((400.0, 400.0), footprints, zones)
    origins, directions, excludes = [(70.0, 160.0)], [(1.0, 0.0)], [set()]
    for _ in range(300):
        origins.append(tuple(rng.integers(0, 400, size=2).astype(float)))
        angle = float(rng.choice([0.0, 90.0, 180.0, 270.0, rng.uniform(0, 360)]))
        directions.append((np.cos(np.radians(angle)), np.sin(np.radians(angle))))
        excludes.append({f"F{rng.integers(25)}"} if rng.random() < 0.3 else set())
    together = table.cast_many(origins, directions, excludes)
    alone = [table.cast(o, d, exclude=e) for o, d, e in zip(origins, directions, excludes)]
    assert [(e.kind, e.id, e.zone_kind, e.length, tuple(map(float, e.point))) for e in together] == \
        [(e.kind, e.id, e.zone_kind, e.length, tuple(map(float, e.point))) for e in alone]
    assert {e.kind for e in together} == {FOOTPRINT, ZONE, TABLE_EDGE}
    # a footprint and a zone edge at the same distance: the footprint stops the ray
    # (a zone counts only where it is nearer than every footprint)
    assert (together[0].kind, together[0].id, together[0].length) == (FOOTPRINT, "edge", 30.0)


def test_ray_along_an_edge_of_a_footprint_meets_its_near_corner():
    table = Table((100.0, 100.0), {"B": box(40, 10, 60, 20)}, {})
    end = table.cast((10.0, 10.0), (1.0, 0.0))
    assert (end.kind, end.id) == (FOOTPRINT, "B")
    assert end.length == pytest.approx(30.0)   # derived: the corner (40, 10) is 30 mm along +x


TRICKY_TOML = '''\
a = """x = 1
y"""
b = ""
c = "q\\"r"
d = { e = 2, f = "g", "h i" = 3, j.k = 4 }
l = [1, 2, { m = 'n' }]
o.p = 1979-05-27T07:32:00
q = 'lit'  # comment = 5
[[r]]
s = -1.5e3
[r.t]
u = true
'''


@pytest.mark.parametrize("name", ["tricky"] + [p.name for p in sorted(
    (__import__("pathlib").Path(__file__).resolve().parents[1] / "layouts").rglob("*.toml"))])
def test_the_one_match_path_of_the_position_scan_agrees_with_the_step_by_step_one(name, monkeypatch):
    import re
    from pathlib import Path

    from benchcheck import tomlpos
    if name == "tricky":
        text = TRICKY_TOML
    else:
        text = next((Path(__file__).resolve().parents[1] / "layouts").rglob(name)).read_text(encoding="utf-8")
    fast = tomlpos.key_positions(text)
    monkeypatch.setattr(tomlpos, "_SIMPLE_KEY_VALUE", re.compile(r"(?!)"))   # never matches
    slow = tomlpos.key_positions(text)
    assert fast == slow
    assert len(fast) > 10


def _round_trips(rng):
    """Round trips of every kind ``classify`` tells apart: two-mirror cavities spread over
    the whole g1 g2 plane (stable, unstable, and the g1 g2 = 0 and 1 edges), +-I (retrace),
    free-space-like shears (walk-off), points just either side of an edge, and NaN."""
    out = []
    for _ in range(300):
        length = float(rng.uniform(10.0, 500.0))
        r1, r2 = (float(rng.choice([rng.uniform(-2000, 2000), 1e300, length, length / 2])) for _ in range(2))
        space = np.array([[1.0, length], [0.0, 1.0]])
        m1, m2 = (np.array([[1.0, 0.0], [-2.0 / r, 1.0]]) for r in (r1, r2))
        out.append((m1 @ space @ m2 @ space, length))
    for sign in (1.0, -1.0):
        out.append((sign * np.eye(2), 100.0))
        out.append((sign * np.array([[1.0, 1e-14], [0.0, 1.0]]), 100.0))
        out.append((sign * np.array([[1.0, 50.0], [0.0, 1.0]]), 100.0))
        for eps in (1e-15, 1e-12, 1e-9, -1e-9):
            out.append((np.array([[sign * (1.0 + eps), 20.0], [-eps / 10.0, sign]]), 100.0))
    out.append((np.full((2, 2), np.nan), 100.0))
    return out


def test_classify_many_gives_what_classify_gives_one_by_one():
    """The stability-margin rule classifies all its probes at once; each answer must be
    the one-matrix ``classify``'s (the reference: the same comparisons, one at a time)."""
    from benchcheck.resonator import classify, classify_many

    rng = np.random.default_rng(11)
    cases = _round_trips(rng)
    matrices = np.array([m for m, _ in cases])
    scales = np.array([s for _, s in cases])
    together = classify_many(matrices, scales)
    alone = [classify(m, s) for m, s in cases]
    assert together == alone
    assert len(set(alone)) == 4     # every status is among the cases
