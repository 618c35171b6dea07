"""Mirror-tilt sensitivity of the cavity axis (3x3 ray-transfer matrices) against closed forms
for two mirrors, an independent sympy computation for a folded cavity, and the law of
reflection in three dimensions for the sagittal kick."""

from __future__ import annotations

import math

import numpy as np
import pytest
import sympy
from sympy.physics.optics import FreeSpace, ThinLens

from benchcheck import misalign, solve_text
from benchcheck.alignment import cavity_alignment
from layouts_util import cavity, layout, mirror, optic, rel, two_mirror

UM_PER_URAD = 1e-3   # mm per rad -> um per urad


def responses(text: str, cid: str = "cav") -> dict:
    sol = solve_text(text)
    out = cavity_alignment(sol.layout, sol.cavities[cid], sol.trace.cavities[cid])
    return {(r.mirror, r.plane): r for r in out}


@pytest.mark.parametrize("r1, r2, d", [(500.0, 300.0, 200.0), (1000.0, 1000.0, 300.0), (400.0, -800.0, 150.0),
                                       (300.0, 200.0, 420.0)])
def test_two_mirror_axis_shift_closed_form(r1, r2, d):
    """Axis displacement at the mirrors of a two-mirror cavity for a tilt t1 of M1 or t2 of M2
    (Hauck, Kortz & Weber, Appl. Opt. 19, 598 (1980); Siegman, "Lasers" 1986, ch. 19; from
    memory):  dx1 = L (g2 t1 + t2) / (1 - g1 g2),  dx2 = L (t1 + g1 t2) / (1 - g1 g2).
    The axis tilt is (dx2 - dx1)/L, the slope of the line between the two points."""
    g1, g2 = 1 - d / r1, 1 - d / r2
    assert 0 < g1 * g2 < 1
    res = responses(two_mirror(r1, r2, d))
    den = 1 - g1 * g2
    expected = {"M1": {"M1": d * g2 / den, "M2": d / den}, "M2": {"M1": d / den, "M2": d * g1 / den}}
    for tilted, shifts in expected.items():
        for plane in ("t", "s"):
            r = res[(tilted, plane)]
            for optic, value in shifts.items():
                assert r.shift_um_per_urad[optic] == pytest.approx(value * UM_PER_URAD, rel=1e-9)
            slope = (shifts["M2"] - shifts["M1"]) / d
            assert r.tilt_urad_per_urad["M1"] == pytest.approx(slope, rel=1e-9, abs=1e-12)
            assert r.tilt_urad_per_urad["M2"] == pytest.approx(slope, rel=1e-9, abs=1e-12)


@pytest.mark.parametrize("r1, r2, d", [(500.0, 300.0, 200.0), (300.0, 200.0, 420.0)])
def test_two_mirror_axis_through_the_centres_of_curvature(r1, r2, d):
    """Geometric check (derived here): the axis of two spherical mirrors is the line through
    their centres of curvature C1 (at z = R1) and C2 (at z = d - R2).  Tilting M1 by t about
    its vertex moves C1 sideways by R1 t; the line through the moved C1 and C2 meets the
    mirrors at the heights below."""
    res = responses(two_mirror(r1, r2, d))
    c1, c2 = r1, d - r2
    height_c1 = r1 * 1.0            # per radian of tilt
    at = lambda z: height_c1 * (z - c2) / (c1 - c2)  # noqa: E731
    assert abs(res[("M1", "t")].shift_um_per_urad["M1"]) == pytest.approx(abs(at(0.0)) * UM_PER_URAD, rel=1e-9)
    assert abs(res[("M1", "t")].shift_um_per_urad["M2"]) == pytest.approx(abs(at(d)) * UM_PER_URAD, rel=1e-9)


def test_near_planar_cavity_is_the_most_sensitive():
    """Common practice: near-planar cavities (g1 g2 -> 1) are hard to align; the shift per
    tilt grows as 1/(1 - g1 g2)."""
    near_planar = responses(two_mirror(20000.0, 20000.0, 300.0))[("M1", "t")].shift_um_per_urad["M2"]
    confocal = responses(two_mirror(300.0, 300.0, 300.0))[("M1", "t")].shift_um_per_urad["M2"]
    assert abs(near_planar) > 10 * abs(confocal)


FOLD_DEG = 20.0


def folded(l1: float, l2: float, r: float) -> str:
    """Flat M1, curved fold mirror M2 (full fold 20 deg), flat M3."""
    return layout(
        mirror("M1", None, at=[1000.0, 10000.0]),
        mirror("M2", r),
        mirror("M3", None),
        cavity("cav", "linear", ["M1", rel("M2", l1, FOLD_DEG), rel("M3", l2)], 1064.0, heading=0.0),
    )


def sympy_axis(l1, l2, r, plane: str, tilts: dict) -> dict:
    """The misaligned axis of flat M1 -> curved fold M2 -> flat M3, from one pass with
    sympy's own ray matrices (sympy.physics.optics.gaussopt FreeSpace, ThinLens) embedded
    in 3x3 form, and a different condition from the code's round trip: the axis meets each
    end mirror along its normal.  A reflection from a mirror tilted by t adds 2t to the
    slope (2t cos(aoi) out of the plane of incidence), so a ray is sent back on itself by a
    flat end mirror when it leaves the first with slope +t1 and reaches the last with slope
    -t3.  The fold mirror: f_t = (R/2) cos(aoi), f_s = (R/2)/cos(aoi) (Kogelnik, Ippen,
    Dienes & Shank, IEEE JQE 8, 373, 1972)."""
    aoi = sympy.rad(sympy.Rational(FOLD_DEG) / 2)
    f = r / 2 * (sympy.cos(aoi) if plane == "t" else 1 / sympy.cos(aoi))
    kick_factor = 2 if plane == "t" else 2 * sympy.cos(aoi)

    def aug(m):
        return sympy.Matrix([[m[0, 0], m[0, 1], 0], [m[1, 0], m[1, 1], 0], [0, 0, 1]])

    def kick(k):
        return sympy.Matrix([[1, 0, 0], [0, 1, k], [0, 0, 1]])

    x1 = sympy.Symbol("x1")
    t1, t2, t3 = (sympy.nsimplify(tilts.get(k, 0)) for k in ("M1", "M2", "M3"))
    start = sympy.Matrix([x1, t1, 1])
    at_m2 = aug(FreeSpace(l1)) * start
    at_m3 = aug(FreeSpace(l2)) * kick(kick_factor * t2) * aug(ThinLens(f)) * at_m2
    sol = sympy.solve(sympy.Eq(at_m3[1], -t3), x1)[0]
    return {"M1": float(sol), "M2": float(at_m2[0].subs(x1, sol)), "M3": float(at_m3[0].subs(x1, sol)),
            "slope_m3": float(at_m3[1].subs(x1, sol))}


@pytest.mark.parametrize("l1, l2, r", [(80.0, 60.0, 200.0), (200.0, 100.0, 500.0)])
@pytest.mark.parametrize("plane", ["t", "s"])
@pytest.mark.parametrize("tilted", ["M1", "M2", "M3"])
def test_folded_cavity_against_sympy(l1, l2, r, plane, tilted):
    res = responses(folded(l1, l2, r))[(tilted, plane)]
    ref = sympy_axis(l1, l2, r, plane, {tilted: 1})
    for optic in ("M1", "M2", "M3"):
        assert res.shift_um_per_urad[optic] == pytest.approx(ref[optic] * UM_PER_URAD, rel=1e-9, abs=1e-12)
    assert res.tilt_urad_per_urad["M3"] == pytest.approx(ref["slope_m3"], rel=1e-9, abs=1e-12)


def test_sagittal_kick_is_the_law_of_reflection():
    """Out-of-plane tilt t of a mirror met at incidence a deflects the reflected beam out of
    the plane by 2 t cos(a) to first order: reflect d about the tilted normal in 3D
    (r = d - 2 (d.n) n, the law of reflection) and measure the elevation, computed here."""
    for aoi_deg in (0.0, 10.0, 30.0, 45.0):
        a = math.radians(aoi_deg)
        t = 1e-7
        d = np.array([math.sin(a), 0.0, -math.cos(a)])          # incoming, plane of incidence x-z
        n = np.array([0.0, 0.0, 1.0])
        # tilt the normal about the x axis (the in-plane axis of the mirror face)
        n_t = np.array([0.0, -math.sin(t), math.cos(t)])
        r0 = d - 2 * d.dot(n) * n
        r1 = d - 2 * d.dot(n_t) * n_t
        elevation = math.asin(r1[1]) - math.asin(r0[1])
        assert float(misalign.mirror_tilt_kick(t, a, "s")) == pytest.approx(abs(elevation), rel=1e-6)
        # in the plane of incidence: rotate the normal about y
        n_p = np.array([math.sin(t), 0.0, math.cos(t)])
        r2 = d - 2 * d.dot(n_p) * n_p
        turn = math.atan2(r2[0], r2[2]) - math.atan2(r0[0], r0[2])
        assert float(misalign.mirror_tilt_kick(t, a, "t")) == pytest.approx(abs(turn), rel=1e-6)


def test_axis_ray_of_a_known_round_trip():
    """(I - M) x = e solved by hand for M = [[0, 1], [-1, 0]] (a quarter turn), e = (1, 0):
    x = (1/2, -1/2)."""
    rt = misalign.augment(np.array([[0.0, 1.0], [-1.0, 0.0]]), 1.0, 0.0)
    assert misalign.axis_ray(rt) == pytest.approx([0.5, -0.5])
    # m = +1 (free space): no unique axis
    assert np.all(np.isnan(misalign.axis_ray(misalign.augment(np.array([[1.0, 5.0], [0.0, 1.0]]), 0.0, 1.0))))


def plate_cavity(r1, r2, d, thickness, index, aoi=0.0) -> str:
    return layout(
        mirror("M1", r1, at=[1000.0, 10000.0]),
        mirror("M2", r2),
        optic("P1", "plate", thickness=thickness, index=index, aoi=aoi),
        cavity("cav", "linear", ["M1", rel("P1", d / 3), rel("M2", 2 * d / 3)], 1064.0, heading=0.0),
    )


@pytest.mark.parametrize("r1, r2, d", [(500.0, 300.0, 200.0), (1000.0, 1000.0, 300.0)])
def test_tilted_plate_jogs_the_axis_between_the_centres_of_curvature(r1, r2, d):
    """Derived here: a plate of thickness t and index n tilted by e shifts a ray crossing
    it at angle u to its normal by -c (u - e), c = t (1 - 1/n) (small angles, Snell's law).
    The axis meets each mirror along its normal, so its segment on the M1 side lies on a
    line x = s (z - R1) through the centre of curvature C1, the one on the M2 side on
    x = s (z - (d - R2)); the jog between them, s (R1 + R2 - d), equals -c (s - e):
    s = c e / (R1 + R2 - d + c), and the axis meets M1 at -s R1 and M2 at s R2."""
    t, n = 6.0, 1.5
    res = responses(plate_cavity(r1, r2, d, t, n))
    c = t * (1 - 1 / n)
    s = c / (r1 + r2 - d + c)
    for plane in ("t", "s"):
        r = res[("P1", plane)]
        assert abs(r.shift_um_per_urad["M1"]) == pytest.approx(s * r1 * UM_PER_URAD, rel=1e-9)
        assert abs(r.shift_um_per_urad["M2"]) == pytest.approx(s * r2 * UM_PER_URAD, rel=1e-9)
        assert r.shift_um_per_urad["M1"] * r.shift_um_per_urad["M2"] < 0
        assert abs(r.tilt_urad_per_urad["M2"]) == pytest.approx(s, rel=1e-9)


def test_plate_tilt_offset_is_the_derivative_of_the_displacement():
    """d(a) = t sin(a - a')/cos a' (the displacement of a ray by a plane-parallel plate,
    Snell's law), differentiated numerically here; t (1 - 1/n) at normal incidence."""
    t, n = 3.0, 1.45
    assert float(misalign.plate_tilt_offset(t, n, 0.0)) == pytest.approx(t * (1 - 1 / n), rel=1e-12)
    for aoi_deg in (10.0, 30.0, 55.0):
        a = math.radians(aoi_deg)

        def disp(x):
            x2 = math.asin(math.sin(x) / n)
            return t * math.sin(x - x2) / math.cos(x2)
        h = 1e-6
        numeric = (disp(a + h) - disp(a - h)) / (2 * h)
        assert float(misalign.plate_tilt_offset(t, n, a)) == pytest.approx(numeric, rel=1e-7)


def test_tilted_plate_off_normal_has_no_sagittal_entry():
    res = responses(plate_cavity(500.0, 300.0, 200.0, 3.0, 1.45, aoi=20.0))
    assert ("P1", "t") in res and ("P1", "s") not in res
