"""stability-margin: the half-trace limit and the stability window of every spacing.

References: H. Kogelnik and T. Li, Applied Optics 5, 1550 (1966) (two-mirror stability
0 < g1 g2 < 1, m = 2 g1 g2 - 1; ray matrices of a ring, m = 1 - P/(2f) for one focusing
element; a lens between two flat mirrors as equivalent g-parameters); H. Kogelnik, E. P.
Ippen, A. Dienes and C. V. Shank, IEEE J. Quantum Electron. 8, 373 (1972) (astigmatically
compensated four-mirror cavity: off-axis mirror f_t = (R/2) cos(theta), f_s = (R/2)/cos(theta),
Brewster crystal L/n^3 tangential and L/n sagittal; a stability edge where the crystal's
air-equivalent spacing equals the sum of the fold mirrors' focal lengths; from memory).
Every edge of the four-mirror cavity is derived here: the round trip is built from the
test's own matrices (``refphysics``: free space, thin lenses for the fold mirrors, the
crystal as its air-equivalent length) and |m| = 1 is found by scipy's ``brentq``; the
numbers written beside the checks are what that computation gives.  The symmetric
two-mirror cavity is stable for 0 < d < 2R and the confocal d = R is degenerate with a
round trip of -I: common practice (Kogelnik & Li 1966; Siegman, Lasers, ch. 19, from memory).
"""

from __future__ import annotations

import importlib
import math

import pytest

from scipy.optimize import brentq

import refphysics as ref
from benchcheck import solve_text
from benchcheck.config import Config
from benchcheck.findings import Bench
from benchcheck.plugins import load_rules
from layouts_util import cavity, layout, mirror, optic, rel, two_mirror

# the built-in pack as the engine loads it (``benchcheck.rules``, also from a source checkout)
RULE = load_rules(entry_points=False).rules["stability-margin"][0]
spacing_windows = importlib.import_module("benchcheck.rules.margin").spacing_windows


def findings(text: str, **options) -> list:
    sol = solve_text(text)
    bench = Bench(sol.layout, sol, Config().limits)
    opts = RULE.defaults()
    opts.update(options)
    return list(RULE.check(bench, opts))


def windows(text: str, cavity_id: str | None = None) -> dict:
    """Stability windows of every air gap, keyed by (first, second) optic ids."""
    sol = solve_text(text)
    cid = cavity_id or next(iter(sol.cavities))
    out = spacing_windows(sol.cavities[cid], sol.layout, sol.trace.cavities[cid])
    return {(w.gap.first, w.gap.second): w for w in out}


def spacing(found: list) -> list:
    return [f for f in found if f.unit == "mm"]


def half_trace(found: list) -> list:
    return [f for f in found if f.unit == "|m|"]


def printed(value: str):
    """pytest.approx to half a unit in the last printed digit of ``value``."""
    decimals = len(value.split(".")[1]) if "." in value else 0
    return pytest.approx(float(value), abs=0.5 * 10.0 ** (-decimals))


# --- two-mirror cavities ----------------------------------------------------------------

def test_symmetric_cavity_window_is_zero_to_2r():
    """R = 500 mm, d = 300 mm: stable for 0 < d < 2R (common practice; Kogelnik & Li 1966,
    g^2 in (0, 1)).  The window is (0, 1000), 300 mm from the nearer edge.  Both passes of
    the gap change together: changing one pass only would give other edges."""
    (w,) = windows(two_mirror(500.0, 500.0, 300.0)).values()
    assert w.lo == pytest.approx(0.0, abs=1e-9)
    assert w.hi == pytest.approx(1000.0, rel=1e-12)
    assert w.distance == pytest.approx(300.0, rel=1e-12)
    for plane in ("t", "s"):
        assert w.per_plane[plane] == (pytest.approx(0.0, abs=1e-9), pytest.approx(1000.0, rel=1e-12))
    assert set(w.limits["lo"]) == set(w.limits["hi"]) == {"t", "s"}
    assert findings(two_mirror(500.0, 500.0, 300.0)) == []


def test_window_finding_when_the_limit_is_larger_than_the_distance():
    (f,) = findings(two_mirror(500.0, 500.0, 300.0), min_window_mm=400.0)
    assert f.value == pytest.approx(300.0, rel=1e-12)
    assert f.limit == 400.0 and f.unit == "mm"
    assert f.targets == ("cav", "M1", "M2")
    assert "[0.000, 1000.000] mm" in f.message and "lower edge" in f.message and "both planes" in f.message
    assert f.hint.startswith("lengthen") and "500.000 mm" in f.hint


def test_confocal_point_is_on_the_edge_but_does_not_end_the_window():
    """d = R = 500: g = 0, m = 2 g^2 - 1 = -1 and the round trip is -I (common practice;
    Kogelnik & Li 1966).  |m| = 1 is reported by the half-trace check, as on the edge.  The
    cavity is stable on both sides of d = R (g^2 in (0, 1) for 0 < d < 2R, d != R), so the
    spacing window is still (0, 2R): an isolated retracing point is not an edge."""
    text = two_mirror(500.0, 500.0, 500.0)
    found = findings(text)
    assert [f.targets for f in found] == [("cav",), ("cav",)]       # one per plane, no spacing finding
    for f in found:
        assert f.value == pytest.approx(1.0, abs=1e-12) and f.limit == 0.95
        assert "+-I" in f.message and "confocal" in f.message
    (w,) = windows(text).values()
    assert (w.lo, w.hi) == (pytest.approx(0.0, abs=1e-9), pytest.approx(1000.0, rel=1e-12))
    assert w.distance == pytest.approx(500.0, rel=1e-12)


@pytest.mark.parametrize("d", [499.0, 501.0])
def test_near_confocal_window_is_whole(d):
    """Just off the confocal point the window is still (0, 2R): the interior point d = R,
    where |m| touches 1 with a round trip of -I, is crossed."""
    (w,) = windows(two_mirror(500.0, 500.0, d)).values()
    assert (w.lo, w.hi) == (pytest.approx(0.0, abs=1e-9), pytest.approx(1000.0, rel=1e-12))


def test_near_concentric_cavity():
    """R = 500, d = 999.5: g = -0.999, m = 2 g^2 - 1 = 0.996002 (Kogelnik & Li 1966) above
    0.95 in both planes; the upper edge 2R = 1000 is 0.5 mm away, below 1 mm."""
    found = findings(two_mirror(500.0, 500.0, 999.5))
    g = 1.0 - 999.5 / 500.0
    for f in half_trace(found):
        assert f.value == pytest.approx(2 * g * g - 1, rel=1e-9)
        assert "+1" in f.message
    assert len(half_trace(found)) == 2
    (f,) = spacing(found)
    assert f.value == pytest.approx(0.5, abs=1e-9)
    assert "upper edge" in f.message and f.hint.startswith("shorten")


def test_case_e_is_inside_both_limits():
    """R = 500, d = 990: m = 2 (0.98)^2 - 1 = 0.9208 (Kogelnik & Li 1966) is below 0.95 and
    the edge 2R is 10 mm away: nothing to report."""
    assert findings(two_mirror(500.0, 500.0, 990.0)) == []


def test_plano_concave_window_is_zero_to_r():
    """Flat / R = 100, d = 95: g1 = 1, g2 = 1 - d/R, stable for 0 < d < R (Kogelnik & Li
    1966): window (0, 100), 5 mm from the upper edge; m = 2 g2 - 1 = -0.9."""
    text = two_mirror(None, 100.0, 95.0)
    (w,) = windows(text).values()
    assert (w.lo, w.hi) == (pytest.approx(0.0, abs=1e-9), pytest.approx(100.0, rel=1e-12))
    assert findings(text) == []
    (f,) = findings(text, min_window_mm=10.0)
    assert f.value == pytest.approx(5.0, rel=1e-9) and "upper edge" in f.message


def test_unstable_cavity_is_left_to_cavity_unstable():
    """d = 1100 > 2R: unstable in both planes; this rule says nothing."""
    assert findings(two_mirror(500.0, 500.0, 1100.0)) == []


# --- thermal lens at its design value ---------------------------------------------------

def test_thermal_lens_taken_at_its_design_value():
    """Flat - thin lens P - flat, arms d1 (varied) and d2 = 300: g1 g2 = (1 - d2 P)(1 - d1 P)
    (Kogelnik & Li 1966, the lens folded into equivalent g-parameters).  With P in (0, 1/d2)
    the cavity is stable for d1 < 1/P and stays stable down to d1 = 0 (no lower edge).  The
    design power is the middle of the range in 1/f: P = (1/800 + 1/1000)/2."""
    p = (1.0 / 800.0 + 1.0 / 1000.0) / 2.0
    text = layout(
        mirror("M1", None, at=[100.0, 500.0]),
        optic("X", "crystal", length=0.001, index=1.0, thermal_lens=[800.0, 1000.0]),
        mirror("M2", None),
        cavity("c", "linear", ["M1", rel("X", 200.0), rel("M2", 300.0)], 1064.0, heading=0.0),
    )
    w = windows(text)[("M1", "X")]
    assert w.lo is None
    assert w.hi == pytest.approx(1.0 / p - 0.0005, rel=1e-9)       # the gap is d1 less half the crystal
    assert w.distance == pytest.approx(1.0 / p - 200.0, rel=1e-9)


# --- ring: m linear in the gap --------------------------------------------------------------

def test_triangle_ring_window():
    """A ring with one focusing element of focal length f and perimeter P has m = 1 - P/(2f)
    (Kogelnik & Li 1966), stable for 0 < P < 4f.  M3 (R = 500) at 45 deg: f_t = 250 cos 45,
    f_s = 250 / cos 45 (Kogelnik et al. 1972, from memory; computed here).  Varying M1 -> M2 (200 mm; the rest of the
    ring 2 * 141.421 mm) the ring stays stable until the gap closes and goes unstable first
    in the tangential plane at 4 f_t - rest."""
    els = [("M1", (1000.0, 1000.0), None), ("M2", (1200.0, 1000.0), None), ("M3", (1100.0, 1100.0), 500.0)]
    text = layout(*[mirror(i, r, at=list(at)) for i, at, r in els], cavity("ring", "ring", ["M1", "M2", "M3"]))
    rest = 2.0 * math.hypot(100.0, 100.0)
    f_t, f_s = 250.0 * math.cos(math.pi / 4), 250.0 / math.cos(math.pi / 4)
    w = windows(text)[("M1", "M2")]
    assert w.lo is None
    assert w.per_plane["t"][1] == pytest.approx(4 * f_t - rest, rel=1e-9)
    assert w.per_plane["s"][1] == pytest.approx(4 * f_s - rest, rel=1e-9)
    assert w.hi == pytest.approx(4 * f_t - rest, rel=1e-9) and w.limits["hi"] == ("t",)
    closing = windows(text)[("M3", "M1")]
    assert closing.hi == pytest.approx(4 * f_t - (200.0 + math.hypot(100.0, 100.0)), rel=1e-9)


# --- four-mirror X/Z cavity with a Brewster crystal -----------------------------------------

XTAL_L, XTAL_N, FOLD_R = 10.0, 1.76, 100.0


def compensating_angle(m_folds: int = 2) -> float:
    """Derived from the compensation condition of Kogelnik et al. 1972 (from memory): the
    crystal's N t = L (n^2 - 1)/n^3 equals the folds' (R/2) sin(theta) tan(theta) summed, so
    cos(theta) = (-k + sqrt(k^2 + 4))/2 with k = 2 N t/(m R); computed here, in degrees."""
    nt = XTAL_L * (XTAL_N**2 - 1.0) / XTAL_N**3
    k = 2.0 * nt / (m_folds * FOLD_R)
    return math.degrees(math.acos((-k + math.sqrt(k * k + 4.0)) / 2.0))


THETA_C = compensating_angle()      # 11.2023 deg for L = 10, n = 1.76, R = 100


def xz_half_trace(theta_deg: float, air: float, arms, plane: str) -> float:
    """m = (A + D)/2 of the four-mirror cavity's round trip from OC, built from refphysics'
    matrices: f_t = (R/2) cos(theta), f_s = (R/2)/cos(theta) for the folds and L/n^3 (t),
    L/n (s) of air-equivalent length for the Brewster crystal (Kogelnik et al. 1972, from
    memory); ``air`` is the total air between the folds."""
    th = math.radians(theta_deg)
    f = FOLD_R / 2.0 * (math.cos(th) if plane == "t" else 1.0 / math.cos(th))
    crystal = XTAL_L / XTAL_N**3 if plane == "t" else XTAL_L / XTAL_N
    one_way = [ref.free(arms[0]), ref.lens(f), ref.free(air + crystal), ref.lens(f), ref.free(arms[1])]
    rt = ref.chain(*one_way, *one_way[::-1])       # the flat end mirrors are the identity
    return float(rt[0, 0] + rt[1, 1]) / 2.0


def xz_edges(theta_deg: float, arms, plane: str, lo: float = 90.0, hi: float = 110.0) -> list[float]:
    """Every air spacing in [lo, hi] where |m| = 1: sign changes of m^2 - 1 on a 0.005 mm
    grid, each refined by scipy's brentq."""
    def edge(x):
        return xz_half_trace(theta_deg, x, arms, plane) ** 2 - 1.0
    xs = [lo + i * 0.005 for i in range(int(round((hi - lo) / 0.005)) + 1)]
    vals = [edge(x) for x in xs]
    return [brentq(edge, a, b, xtol=1e-12) for a, b, va, vb in zip(xs, xs[1:], vals, vals[1:]) if va * vb < 0]


def xz_cavity(theta_deg: float, air: float, arms=(500.0, 700.0)) -> str:
    """Flat OC, 500 mm, curved fold M2 (R = 100), Brewster crystal (L = 10 mm, n = 1.76)
    centred between M2 and M3 (R = 100), 700 mm to a flat HR; ``air`` mm of air between the
    folds (the crystal takes its length of the path, centred on its 'at')."""
    half = (air + 10.0) / 2.0
    return layout(
        mirror("OC", None, at=[1000.0, 10000.0]),
        mirror("M2", FOLD_R),
        optic("X1", "crystal", length=XTAL_L, index=XTAL_N, faces="brewster"),
        mirror("M3", FOLD_R),
        mirror("HR", None),
        cavity("c", "linear", ["OC", rel("M2", arms[0], 2 * theta_deg), rel("X1", half),
                               rel("M3", half, -2 * theta_deg), rel("HR", arms[1])], 800.0, heading=0.0),
    )


def fold_edges(w, other: float) -> dict:
    """A fold gap's per-plane edges as total air between the folds (the crystal is plain
    free space in the model, so only the total air counts)."""
    return {p: tuple(None if e is None else e + other for e in w.per_plane[p]) for p in ("t", "s")}


def test_compensated_inner_edge_is_the_same_in_both_planes():
    """At the compensating angle the arm-independent edge, where the crystal's air-equivalent
    spacing equals f1 + f2 (Kogelnik et al. 1972), is R cos(theta) - L/n^3 tangentially and
    R/cos(theta) - L/n sagittally: both 96.2605 mm of air (computed here, and again by the
    root-find on |m| = 1)."""
    assert round(THETA_C, 4) == 11.2023
    th = math.radians(THETA_C)
    inner_t = 100.0 * math.cos(th) - 10.0 / 1.76**3
    inner_s = 100.0 / math.cos(th) - 10.0 / 1.76
    assert inner_t == printed("96.2605") and inner_s == printed("96.2605")
    for plane, inner in (("t", inner_t), ("s", inner_s)):
        assert xz_edges(THETA_C, (500.0, 700.0), plane)[0] == pytest.approx(inner, abs=1e-9)
    ws = windows(xz_cavity(THETA_C, 98.0))
    for key in (("M2", "X1"), ("X1", "M3")):
        e = fold_edges(ws[key], 49.0)
        assert e["t"][0] == pytest.approx(inner_t, abs=1e-9)
        assert e["s"][0] == pytest.approx(inner_s, abs=1e-9)
        assert set(ws[key].limits["lo"]) == {"t", "s"}


def test_compensated_cavity_edges_first_zone():
    """Arms 0.5 / 0.7 m, 98 mm of air between the folds: the zones are T [96.2605, 99.9560],
    S [96.2605, 100.2635] (derived: the root-find on |m| = 1, computed here), so the window
    is [96.2605, 99.9560], limited above by T; 1.74 mm from the lower edge."""
    t_edges = xz_edges(THETA_C, (500.0, 700.0), "t")
    s_edges = xz_edges(THETA_C, (500.0, 700.0), "s")
    assert t_edges[:2] == [printed("96.2605"), printed("99.9560")]
    assert s_edges[:2] == [printed("96.2605"), printed("100.2635")]
    ws = windows(xz_cavity(THETA_C, 98.0))
    w = ws[("M2", "X1")]
    e = fold_edges(w, 49.0)
    assert e["t"] == (pytest.approx(t_edges[0], abs=1e-6), pytest.approx(t_edges[1], abs=1e-6))
    assert e["s"] == (pytest.approx(s_edges[0], abs=1e-6), pytest.approx(s_edges[1], abs=1e-6))
    assert w.lo + 49.0 == pytest.approx(max(t_edges[0], s_edges[0]), abs=1e-6)
    assert w.hi + 49.0 == pytest.approx(t_edges[1], abs=1e-6)
    assert w.limits["hi"] == ("t",)
    assert w.distance == pytest.approx(98.0 - max(t_edges[0], s_edges[0]), abs=1e-6)
    assert spacing(findings(xz_cavity(THETA_C, 98.0))) == []


def test_compensated_cavity_edges_second_zone():
    """104 mm of air: zones T [101.595, 105.291], S [102.046, 106.049] (derived: the
    root-find on |m| = 1, computed here): window [102.046, 105.291], lower edge set by S,
    upper by T; the plan is 1.291 mm below the upper edge, reported when the limit is 1.5 mm."""
    t_edges = xz_edges(THETA_C, (500.0, 700.0), "t")[2:4]
    s_edges = xz_edges(THETA_C, (500.0, 700.0), "s")[2:4]
    assert t_edges == [printed("101.595"), printed("105.291")]
    assert s_edges == [printed("102.046"), printed("106.049")]
    text = xz_cavity(THETA_C, 104.0)
    w = windows(text)[("X1", "M3")]
    e = fold_edges(w, 52.0)
    assert e["t"] == (pytest.approx(t_edges[0], abs=1e-6), pytest.approx(t_edges[1], abs=1e-6))
    assert e["s"] == (pytest.approx(s_edges[0], abs=1e-6), pytest.approx(s_edges[1], abs=1e-6))
    assert w.limits == {"lo": ("s",), "hi": ("t",)}
    assert spacing(findings(text)) == []
    found = spacing(findings(text, min_window_mm=1.5))
    assert [f.targets for f in found] == [("c", "M2", "X1"), ("c", "X1", "M3")]
    for f in found:
        assert f.value == pytest.approx(t_edges[1] - 104.0, abs=1e-6)
        assert "upper edge" in f.message and "tangential plane goes unstable" in f.message
        assert f.hint.startswith("shorten") and "middle of the window" in f.hint


def test_long_arms_give_a_narrow_window():
    """Arms 5 / 7 m: edges T 96.260 / 96.607, S 96.260 / 96.634 (derived: the root-find on
    |m| = 1, computed here; they converge as the arms grow).  At 96.4 mm of air the plan is
    0.14 mm from the inner edge, where both planes go unstable; the window is narrower than
    twice the limit."""
    t_edges = xz_edges(THETA_C, (5000.0, 7000.0), "t", 95.0, 97.0)[:2]
    s_edges = xz_edges(THETA_C, (5000.0, 7000.0), "s", 95.0, 97.0)[:2]
    assert t_edges == [printed("96.260"), printed("96.607")]
    assert s_edges == [printed("96.260"), printed("96.634")]
    text = xz_cavity(THETA_C, 96.4, arms=(5000.0, 7000.0))
    w = windows(text)[("M2", "X1")]
    e = fold_edges(w, 48.2)
    assert e["t"] == (pytest.approx(t_edges[0], abs=1e-6), pytest.approx(t_edges[1], abs=1e-6))
    assert e["s"] == (pytest.approx(s_edges[0], abs=1e-6), pytest.approx(s_edges[1], abs=1e-6))
    found = spacing(findings(text))
    assert len(found) == 2
    f = found[0]
    assert f.value == pytest.approx(96.4 - max(t_edges[0], s_edges[0]), abs=1e-6)
    assert "lower edge" in f.message and "both planes go unstable" in f.message
    assert "only" in f.hint and "wide" in f.hint


def test_under_compensated_inner_edges_differ():
    """At 5 deg (under-compensated) the inner edges split: T 97.785, S 94.700 mm of air
    (derived: R cos(theta) - L/n^3 and R/cos(theta) - L/n, from the focal lengths and
    crystal lengths of Kogelnik et al. 1972, and the root-find on |m| = 1, both computed
    here).  At 98 mm the plan is 0.215 mm above the tangential edge."""
    th = math.radians(5.0)
    assert xz_edges(5.0, (500.0, 700.0), "t")[0] == printed("97.785")
    assert xz_edges(5.0, (500.0, 700.0), "s")[0] == printed("94.700")
    text = xz_cavity(5.0, 98.0)
    w = windows(text)[("M2", "X1")]
    e = fold_edges(w, 49.0)
    assert e["t"][0] == pytest.approx(xz_edges(5.0, (500.0, 700.0), "t")[0], abs=1e-6)
    assert e["s"][0] == pytest.approx(xz_edges(5.0, (500.0, 700.0), "s")[0], abs=1e-6)
    assert e["t"][0] == pytest.approx(100.0 * math.cos(th) - 10.0 / 1.76**3, abs=1e-9)
    assert e["s"][0] == pytest.approx(100.0 / math.cos(th) - 10.0 / 1.76, abs=1e-9)
    assert w.limits["lo"] == ("t",)
    f = spacing(findings(text))[0]
    assert f.value == pytest.approx(98.0 - (100.0 * math.cos(th) - 10.0 / 1.76**3), abs=1e-9)
    assert "tangential plane goes unstable" in f.message
