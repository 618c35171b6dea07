"""Optical elements against published formulas: tilted plates, Brewster-cut crystals,
off-axis mirrors, refracting interfaces, thermal lenses and mirror substrates.

References: H. Kogelnik, E. P. Ippen, A. Dienes and C. V. Shank, "Astigmatically
compensated cavities for CW dye lasers", IEEE J. Quantum Electron. 8, 373 (1972)
(equivalent lengths of a tilted plate and a Brewster-cut crystal, off-axis mirror focal
lengths; from memory; the same exact plate astigmatism is in W. J. Smith, "Modern
Optical Engineering", McGraw-Hill, from memory, edition and page not checked); H. Kogelnik
and T. Li, Applied Optics 5, 1550
(1966) (ray matrices, two-mirror closed forms); A. E. Siegman, "Lasers" (1986), ch. 15
(reduced slope, det = 1; from memory); `sympy.physics.optics.gaussopt` as an independent
numeric reference (non-reduced matrices, used with n = 1 in air only).  Check values are
derived from these formulas and computed in each test (``refphysics.plate_lengths`` for
plates); the digits written beside a check are what that computation gives.
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from sympy.physics.optics import CurvedRefraction, FlatRefraction, FreeSpace

from benchcheck import abcd

import refphysics as ref
from layouts_util import (
    C_M_S, beam, beam_entry, cavity, cavity_entry, hit, layout, mirror, optic, rel, solved, source, waists,
)

WL_NM = 1064.0
WL = WL_NM * ref.NM
REL = 1e-6
PLANES = ("t", "s")


def printed(value: str):
    """pytest.approx to half a unit in the last printed digit of ``value``."""
    decimals = len(value.split(".")[1]) if "." in value else 0
    return pytest.approx(float(value), abs=0.5 * 10.0 ** (-decimals))


def refraction(n: float, aoi: float) -> float:
    """Snell's law from air: sin(theta2) = sin(theta1)/n."""
    return math.asin(math.sin(aoi) / n)


# --- benchcheck.abcd directly -----------------------------------------------------------

@pytest.mark.parametrize("t, n, aoi_deg, d_t, d_s", [
    # derived from the plate formulas (refphysics.plate_lengths), computed in the test:
    # t = 5, n = 1.5, 45 deg
    (5.0, 1.5, 45.0, "2.429772", "3.779645"),
    # at Brewster's angle, tan(theta) = n: t sqrt(n^2+1)/n^4 and t sqrt(n^2+1)/n^2
    (3.0, 1.76, None, "0.632900", "1.960472"),
    (1.0, 1.45, None, "0.398459", "0.837761"),
])
def test_plate_reduced_lengths(t, n, aoi_deg, d_t, d_s):
    aoi = math.atan(n) if aoi_deg is None else math.radians(aoi_deg)
    got_t, got_s = abcd.plate_reduced_lengths(t, n, aoi)
    want_t, want_s = ref.plate_lengths(t, n, aoi)
    assert (want_t, want_s) == (printed(d_t), printed(d_s))
    assert float(got_t) == pytest.approx(want_t, rel=1e-12)
    assert float(got_s) == pytest.approx(want_s, rel=1e-12)
    if aoi_deg is None:
        root = math.sqrt(n * n + 1)
        assert float(got_s) == pytest.approx(t * root / n**2, rel=1e-12)
        assert float(got_t) == pytest.approx(t * root / n**4, rel=1e-12)
        # astigmatic difference N t, N = sqrt(n^2+1)(n^2-1)/n^4 (Kogelnik et al. 1972)
        assert float(got_s - got_t) == pytest.approx(t * root * (n * n - 1) / n**4, rel=1e-12)


def test_brewster_plate_astigmatism_check_values():
    """N t = t sqrt(n^2+1)(n^2-1)/n^4 (Kogelnik et al. 1972, from memory), computed here:
    1.327572 mm for t = 3 mm, n = 1.76; N = 0.439301 for t = 1 mm, n = 1.45;
    theta_B = arctan(1.76) = 60.3955 deg (Brewster's angle, common practice)."""
    def nt(t, n):
        return t * math.sqrt(n * n + 1) * (n * n - 1) / n**4
    assert (nt(3.0, 1.76), nt(1.0, 1.45)) == (printed("1.327572"), printed("0.439301"))
    d_t, d_s = abcd.plate_reduced_lengths(3.0, 1.76, math.atan(1.76))
    assert float(d_s - d_t) == pytest.approx(nt(3.0, 1.76), rel=1e-12)
    d_t, d_s = abcd.plate_reduced_lengths(1.0, 1.45, math.atan(1.45))
    assert float(d_s - d_t) == pytest.approx(nt(1.0, 1.45), rel=1e-12)
    assert math.degrees(float(abcd.brewster_angle(1.76))) == printed("60.3955")


@pytest.mark.parametrize("aoi_deg, f_t, f_s", [
    (10.0, "49.2404", "50.7713"),
    (45.0, "35.3553", "70.7107"),
    (0.0, "50.0000", "50.0000"),
])
def test_mirror_focal_length(aoi_deg, f_t, f_s):
    """f_t = (R/2) cos(theta), f_s = (R/2)/cos(theta) (Kogelnik et al. 1972, from memory),
    R = 100 mm, computed here.  The mirror matrix has C = -1/f in each plane."""
    aoi = math.radians(aoi_deg)
    assert (50.0 * math.cos(aoi), 50.0 / math.cos(aoi)) == (printed(f_t), printed(f_s))
    assert float(abcd.mirror_focal_length(100.0, aoi, "t")) == pytest.approx(50.0 * math.cos(aoi), rel=1e-12)
    assert float(abcd.mirror_focal_length(100.0, aoi, "s")) == pytest.approx(50.0 / math.cos(aoi), rel=1e-12)
    assert float(abcd.mirror_focal_length(100.0, aoi, "t")) == printed(f_t)
    assert float(abcd.mirror_focal_length(100.0, aoi, "s")) == printed(f_s)
    for plane, f in (("t", f_t), ("s", f_s)):
        m = abcd.mirror(100.0, aoi, plane)
        assert m[1, 0] == pytest.approx(-1.0 / float(f), rel=1e-5)
        assert (m[0, 0], m[0, 1], m[1, 1]) == (1.0, 0.0, 1.0)


def test_thin_lens_and_free_space_matrices():
    """Kogelnik & Li 1966: free space [[1, d], [0, 1]] (reduced: d/n), thin lens C = -1/f."""
    assert np.allclose(abcd.free_space(30.0, 1.5), [[1, 20.0], [0, 1]])
    assert np.allclose(abcd.thin_lens(-50.0), [[1, 0], [0.02, 1]])
    assert np.allclose(abcd.mirror(200.0), [[1, 0], [-0.01, 1]])   # f = R/2, concave positive


def test_flat_interface_tilted():
    """Reduced matrices of a tilted flat interface (Kogelnik et al. 1972; Siegman ch. 15, from
    memory): sagittal identity, tangential diag(cos t2/cos t1, cos t1/cos t2)."""
    n, aoi = 1.5, math.radians(45.0)
    t2 = refraction(n, aoi)
    assert np.allclose(abcd.interface(1.0, n, aoi, plane="s"), np.eye(2))
    assert np.allclose(abcd.interface(1.0, n, aoi, plane="t"),
                       np.diag([math.cos(t2) / math.cos(aoi), math.cos(aoi) / math.cos(t2)]))
    assert np.allclose(abcd.interface(1.0, n, 0.0, plane="t"), np.eye(2))


@pytest.mark.parametrize("plane", PLANES)
def test_plate_from_interfaces_gives_the_reduced_length(plane):
    """Entering face, the glass (reduced length L/n, L = t/cos t2) and the leaving face make a
    plain free space of the plate's reduced length: d_t = 2.429772, d_s = 3.779645 mm for
    t = 5, n = 1.5 at 45 deg (refphysics.plate_lengths, computed here)."""
    t, n, aoi = 5.0, 1.5, math.radians(45.0)
    t2 = refraction(n, aoi)
    m = abcd.compose([abcd.interface(1.0, n, aoi, plane=plane),
                      abcd.free_space(t / math.cos(t2), n),
                      abcd.interface(n, 1.0, t2, plane=plane)])
    assert m[0, 0] == pytest.approx(1.0, abs=1e-12)
    assert m[1, 1] == pytest.approx(1.0, abs=1e-12)
    assert m[1, 0] == pytest.approx(0.0, abs=1e-12)
    assert m[0, 1] == printed("2.429772" if plane == "t" else "3.779645")
    assert m[0, 1] == pytest.approx(ref.plate_lengths(t, n, aoi)[0 if plane == "t" else 1], rel=1e-12)


@pytest.mark.parametrize("roc, n1, n2", [(100.0, 1.0, 1.5), (-80.0, 1.0, 1.45), (60.0, 1.76, 1.0), (-40.0, 1.5, 1.2)])
def test_curved_interface_against_sympy(roc, n1, n2):
    """A curved interface at normal incidence: benchcheck's reduced matrix equals sympy's
    non-reduced `CurvedRefraction(R, n1, n2)` (R > 0: centre of curvature after the
    surface) converted to the reduced slope, diag(1, n2) M diag(1, 1/n1)."""
    m = np.array(CurvedRefraction(roc, n1, n2).evalf(), dtype=float)
    reduced = np.diag([1.0, n2]) @ m @ np.diag([1.0, 1.0 / n1])
    assert np.allclose(abcd.interface(n1, n2, 0.0, roc, "t"), reduced, rtol=1e-12, atol=1e-15)
    assert np.allclose(abcd.interface(n1, n2, 0.0, roc, "s"), reduced, rtol=1e-12, atol=1e-15)
    assert reduced[1, 0] == pytest.approx(-(n2 - n1) / roc, rel=1e-12)


def test_every_abcd_matrix_has_unit_determinant():
    """Reduced ray matrices are unimodular (Siegman, Lasers, ch. 15, from memory)."""
    rng = np.random.default_rng(1)
    aois = np.radians([0.0, 5.0, 30.0, 56.3, 70.0])
    built = [abcd.free_space(rng.uniform(0.1, 500, 7), rng.uniform(1.0, 2.5, 7)),
             abcd.thin_lens(np.array([-300.0, -20.0, 15.0, 1e9, np.inf])),
             abcd.lens_power(rng.uniform(-0.1, 0.1, 5)),
             abcd.identity((3,))]
    for plane in PLANES:
        built.append(abcd.mirror(np.array([[-500.0], [50.0], [np.inf]]), aois, plane))
        for (n1, n2), roc in itertools.product([(1.0, 1.5), (1.76, 1.0), (1.45, 1.2)], [np.inf, 100.0, -35.0]):
            inside = abcd.refraction_angle(aois, 1.0, 1.76) if n1 > n2 else aois
            built.append(abcd.interface(n1, n2, inside, roc, plane))
    for m in built:
        assert np.allclose(np.linalg.det(m), 1.0, rtol=0, atol=1e-12), m
    chain = abcd.compose([m.reshape(-1, 2, 2)[0] for m in built])
    assert np.linalg.det(chain) == pytest.approx(1.0, abs=1e-9)


# --- elements inside a cavity -----------------------------------------------------------

def cavity_with(element: str, r1, r2, d: float, a: float, ident: str = "X1") -> str:
    """Linear cavity M1 -> element (centre ``a`` mm from M1) -> M2 (``d`` mm from M1)."""
    return layout(
        mirror("M1", r1, at=[1000.0, 10000.0]),
        element,
        mirror("M2", r2),
        cavity("cav", "linear", ["M1", rel(ident, a), rel("M2", d - a)], WL_NM, heading=0.0),
    )


def medium_cavity_reference(r1, r2, d: float, a: float, length: float, reduced: float, scale: float) -> dict:
    """Mode of M1 - medium - M2, the medium (geometric length ``length`` centred at ``a``)
    replaced by its air-equivalent length ``reduced`` (Kogelnik et al. 1972), from the
    Kogelnik & Li 1966 closed forms with d_eff = d - length + reduced.  Inside the medium
    the physical radius is the model radius times ``scale``.  Returns the spots at M1 and
    M2, at the medium's centre, and the waist (physical radius, geometric position)."""
    d_eff = d - length + reduced
    k = ref.two_mirror(r1, r2, d_eff, WL)
    enter = a - length / 2
    centre_eff = enter + reduced / 2
    w_centre = ref.w_at(k["w0"], centre_eff - k["t1"], k["z_r"]) * scale
    t1 = k["t1"]
    if t1 < enter:
        s_waist, w_waist = t1, k["w0"]
    elif t1 <= enter + reduced:
        s_waist, w_waist = enter + (t1 - enter) * length / reduced, k["w0"] * scale
    else:
        s_waist, w_waist = t1 + length - reduced, k["w0"]
    return dict(k=k, w1=k["w1"], w2=k["w2"], w_centre=w_centre, s_waist=s_waist, w_waist=w_waist,
                theta=k["theta_rt"], d_eff=d_eff)


def matrix_reference(r1, r2, d: float, a: float, length: float, reduced: float) -> dict:
    """The same cavity by an independent matrix round trip (Kogelnik & Li 1966) starting at
    M1: spots at M1, at the medium centre (model radius) and at M2, and the Gouy phase."""
    def mirror_lens(r):
        return ("lens", math.inf if r is None else r / 2)
    air1, air2 = a - length / 2, d - a - length / 2
    out = [("space", air1), ("space", reduced / 2)]
    back = [("space", reduced / 2), ("space", air2), mirror_lens(r2)]
    trip = [mirror_lens(r1)] + out + back
    trip += [("space", air2), ("space", reduced / 2), ("space", reduced / 2), ("space", air1)]
    rt = ref.steps_matrix(trip)
    q0 = ref.self_consistent_q(rt)
    qs, gouy = ref.walk(q0, trip)
    return dict(w1=ref.w_of_q(q0, WL), w_centre=ref.w_of_q(qs[2], WL), w2=ref.w_of_q(qs[4], WL),
                gouy=gouy, m=(rt[0, 0] + rt[1, 1]) / 2)


BREWSTER_CAVITIES = [
    # (R1, R2, d, crystal centre a, L, n)
    (100.0, 100.0, 100.0, 50.0, 10.0, 1.76),     # symmetric: the waist at the crystal centre
    (150.0, 250.0, 100.0, 60.0, 10.0, 1.76),     # asymmetric
    (200.0, None, 150.0, 40.0, 20.0, 1.5),       # concave - flat, waist on the flat mirror
    (100.0, 100.0, 105.0, 52.5, 15.0, 2.2),
]


@pytest.mark.parametrize("r1, r2, d, a, length, n", BREWSTER_CAVITIES)
def test_brewster_crystal_in_a_cavity(r1, r2, d, a, length, n):
    """A Brewster-cut crystal of length L acts as L/n sagittal and L/n^3 tangential
    (Kogelnik et al. 1972); inside it the physical tangential radius is the model radius
    times cos t2/cos t1 = n at Brewster, the sagittal unchanged (same source; docs/design.md §4).
    Expected: Kogelnik & Li closed forms with the equivalent length, and an independent
    matrix round trip; FSR = c / (2 (d - L + n L))."""
    xtal = optic("X1", "crystal", length=length, index=n, faces="brewster")
    c = cavity_entry(solved(cavity_with(xtal, r1, r2, d, a)))
    theta_b = math.atan(n)
    assert hit(c, "X1")["aoi_deg"] == pytest.approx(math.degrees(theta_b), rel=1e-8)
    t2 = refraction(n, theta_b)
    assert math.cos(t2) / math.cos(theta_b) == pytest.approx(n, rel=1e-12)
    for p, reduced, scale in (("t", length / n**3, n), ("s", length / n, 1.0)):
        r = medium_cavity_reference(r1, r2, d, a, length, reduced, scale)
        mx = matrix_reference(r1, r2, d, a, length, reduced)
        assert mx["w1"] == pytest.approx(r["w1"], rel=1e-8)
        assert mx["w_centre"] * scale == pytest.approx(r["w_centre"], rel=1e-8)
        assert mx["gouy"] == pytest.approx(r["theta"], rel=1e-8)
        assert c["stable"][p] is True
        assert c["m"][p] == pytest.approx(r["k"]["m"], abs=1e-9)
        assert hit(c, "M1")["w_um"][p] == pytest.approx(r["w1"] * 1e3, rel=REL)
        assert hit(c, "M2")["w_um"][p] == pytest.approx(r["w2"] * 1e3, rel=REL)
        assert hit(c, "X1")["w_um"][p] == pytest.approx(r["w_centre"] * 1e3, rel=REL)
        assert c["gouy_deg"][p] == pytest.approx(math.degrees(r["theta"]), rel=REL)
        (wst,) = waists(c, p)
        assert wst["w_um"] == pytest.approx(r["w_waist"] * 1e3, rel=REL)
        assert wst["s_mm"] == pytest.approx(r["s_waist"], rel=REL, abs=1e-6)
    optical = 2 * (d - length + n * length)
    assert c["round_trip_mm"] == pytest.approx(optical, rel=1e-8)
    assert c["fsr_hz"] == pytest.approx(C_M_S / (optical * 1e-3), rel=1e-8)


def test_brewster_crystal_check_values():
    """L/n^3 and L/n (Kogelnik et al. 1972, from memory), computed here: L = 10 mm, n = 1.76
    gives d_t = 1.834265 mm and d_s = 5.681818 mm; equal to the Brewster plate of thickness
    t = L n/sqrt(n^2+1) (the crystal's path L = t sqrt(n^2+1)/n)."""
    L, n = 10.0, 1.76
    assert L / n**3 == printed("1.834265")
    assert L / n == printed("5.681818")
    t = L * n / math.sqrt(n * n + 1)
    d_t, d_s = abcd.plate_reduced_lengths(t, n, math.atan(n))
    assert float(d_t) == pytest.approx(L / n**3, rel=1e-12)
    assert float(d_s) == pytest.approx(L / n, rel=1e-12)


@pytest.mark.parametrize("fields, d_t, d_s", [
    (dict(thickness=5.0, index=1.5, aoi=45.0), "2.429772", "3.779645"),
    (dict(thickness=3.0, index=1.76, faces="brewster"), "0.632900", "1.960472"),
    (dict(thickness=1.0, index=1.45, faces="brewster"), "0.398459", "0.837761"),
])
def test_tilted_plate_in_a_cavity(fields, d_t, d_s):
    """A plate of thickness t at incidence theta1 takes the beam over L = t/cos(theta2) and
    acts as the reduced lengths d_t, d_s of Kogelnik et al. 1972 (from memory; computed here
    by refphysics.plate_lengths, the digits beside the cases are what it gives); the
    tangential radius inside is
    the model radius times cos t2/cos t1.  Expected from the Kogelnik & Li 1966 closed
    forms with d - L + d_t (or d_s)."""
    r1, r2, d, a = 120.0, 200.0, 110.0, 55.0
    n, t = fields["index"], fields["thickness"]
    aoi = math.atan(n) if fields.get("faces") == "brewster" else math.radians(fields["aoi"])
    t2 = refraction(n, aoi)
    length = t / math.cos(t2)
    c = cavity_entry(solved(cavity_with(optic("P1", "plate", **fields), r1, r2, d, a, "P1")))
    assert hit(c, "P1")["aoi_deg"] == pytest.approx(math.degrees(aoi), rel=1e-8)
    want_t, want_s = ref.plate_lengths(t, n, aoi)
    assert (want_t, want_s) == (printed(d_t), printed(d_s))
    for p, reduced, scale in (("t", want_t, math.cos(t2) / math.cos(aoi)), ("s", want_s, 1.0)):
        r = medium_cavity_reference(r1, r2, d, a, length, reduced, scale)
        tol = REL
        assert hit(c, "M1")["w_um"][p] == pytest.approx(r["w1"] * 1e3, rel=tol)
        assert hit(c, "M2")["w_um"][p] == pytest.approx(r["w2"] * 1e3, rel=tol)
        assert hit(c, "P1")["w_um"][p] == pytest.approx(r["w_centre"] * 1e3, rel=tol)
        assert c["gouy_deg"][p] == pytest.approx(math.degrees(r["theta"]), rel=tol)
    assert c["round_trip_mm"] == pytest.approx(2 * (d - length + n * length), rel=1e-8)


# --- thermal lens -----------------------------------------------------------------------

@pytest.mark.parametrize("lens_fields, f_t, f_s", [
    (dict(thermal_lens=300.0), 300.0, 300.0),
    (dict(thermal_lens=[150.0]), 150.0, 150.0),
    (dict(thermal_lens_t=250.0, thermal_lens_s=400.0), 250.0, 400.0),
])
def test_thermal_lens_makes_a_flat_flat_cavity_stable(lens_fields, f_t, f_s):
    """A thermal lens is a thin lens at the crystal centre (docs/design.md §4).  Flat - lens -
    flat is then stable for 0 < (1 - d1/f)(1 - d2/f) < 1 with d1, d2 the air-equivalent
    distances to the lens (ray matrices of Kogelnik & Li 1966); mirror spots and Gouy
    phase from an independent matrix round trip.  Normal-cut crystal: L/n in both planes."""
    L, n, a, d = 20.0, 1.82, 80.0, 200.0
    xtal = optic("X1", "crystal", length=L, index=n, **lens_fields)
    c = cavity_entry(solved(cavity_with(xtal, None, None, d, a)))
    d1 = a - L / 2 + L / (2 * n)
    d2 = d - a - L / 2 + L / (2 * n)
    for p, f in (("t", f_t), ("s", f_s)):
        trip = [("space", d1), ("lens", f), ("space", d2), ("space", d2), ("lens", f), ("space", d1)]
        rt = ref.steps_matrix(trip)
        m = (rt[0, 0] + rt[1, 1]) / 2
        assert m == pytest.approx(2 * (1 - d1 / f) * (1 - d2 / f) - 1, abs=1e-12)
        assert abs(m) < 1
        q1 = ref.self_consistent_q(rt)
        qs, gouy = ref.walk(q1, trip)
        assert c["m"][p] == pytest.approx(m, abs=1e-9)
        assert hit(c, "M1")["w_um"][p] == pytest.approx(ref.w_of_q(q1, WL) * 1e3, rel=REL)
        assert hit(c, "X1")["w_um"][p] == pytest.approx(ref.w_of_q(qs[1], WL) * 1e3, rel=REL)
        assert hit(c, "M2")["w_um"][p] == pytest.approx(ref.w_of_q(qs[2], WL) * 1e3, rel=REL)
        assert c["gouy_deg"][p] == pytest.approx(math.degrees(gouy), rel=REL)


def test_without_thermal_lens_flat_flat_is_not_stable():
    """Flat - normal-cut crystal - flat without a lens: g1 = g2 = 1, on the boundary with
    walk-off (Kogelnik & Li 1966)."""
    xtal = optic("X1", "crystal", length=20.0, index=1.82)
    c = cavity_entry(solved(cavity_with(xtal, None, None, 200.0, 80.0)))
    assert c["stable"] == {"t": False, "s": False}
    assert c["status"] == {"t": "marginal-walkoff", "s": "marginal-walkoff"}


def brewster_exact_round_trip(r1, r2, d: float, a: float, length: float, n: float, f_lens: float | None, plane: str):
    """Round trip from M1 through a Brewster-cut crystal with exact (non-reduced) matrices,
    no equivalent lengths: the tilted flat interface diag(cos t2/cos t1, n1 cos t1/(n2 cos t2))
    tangential, diag(1, n1/n2) sagittal (Kogelnik et al. 1972; Siegman ch. 15, from memory),
    propagation L/2 in the glass, and a thin lens of dioptric power 1/f at the centre: on the
    angle inside the glass C = -1/(n f), which is -1/f once refracted out into air (a lens of
    focal length f in air).  Returns the matrices up to M2 and the round trip."""
    t1 = math.atan(n)
    t2 = refraction(n, t1)
    c1, c2 = math.cos(t1), math.cos(t2)
    if plane == "t":
        enter, leave = np.diag([c2 / c1, c1 / (n * c2)]), np.diag([c1 / c2, n * c2 / c1])
    else:
        enter, leave = np.diag([1.0, 1.0 / n]), np.diag([1.0, n])
    lens = np.eye(2) if f_lens is None else ref.lens(n * f_lens)
    inside = ref.chain(ref.free(length / 2), lens, ref.free(length / 2))
    xtal = ref.chain(enter, inside, leave)
    m1 = np.eye(2) if r1 is None else ref.lens(r1 / 2)
    m2 = np.eye(2) if r2 is None else ref.lens(r2 / 2)
    to_m2 = ref.chain(m1, ref.free(a - length / 2), xtal, ref.free(d - a - length / 2))
    rt = ref.chain(to_m2, m2, ref.free(d - a - length / 2), xtal, ref.free(a - length / 2))
    return to_m2, rt


def test_brewster_crystal_exact_interfaces_agree_with_equivalent_lengths():
    """Without a thermal lens the exact interface matrices give the same mode at the mirrors
    as the equivalent lengths L/n^3 (t) and L/n (s) of Kogelnik et al. 1972 that benchcheck
    uses: a check of the reference used in the next test."""
    r1, r2, d, a, length, n = 150.0, 250.0, 100.0, 60.0, 10.0, 1.76
    c = cavity_entry(solved(cavity_with(optic("X1", "crystal", length=length, index=n, faces="brewster"),
                                        r1, r2, d, a)))
    for p in PLANES:
        to_m2, rt = brewster_exact_round_trip(r1, r2, d, a, length, n, None, p)
        q1 = ref.self_consistent_q(rt)
        assert c["m"][p] == pytest.approx((rt[0, 0] + rt[1, 1]) / 2, abs=1e-9)
        assert hit(c, "M1")["w_um"][p] == pytest.approx(ref.w_of_q(q1, WL) * 1e3, rel=REL)
        assert hit(c, "M2")["w_um"][p] == pytest.approx(ref.w_of_q(ref.apply(to_m2, q1), WL) * 1e3, rel=REL)


def test_thermal_lens_in_a_brewster_crystal_by_exact_interfaces():
    """A thermal lens of focal length f (dioptric, round in the crystal's cross-section) at
    the centre of a Brewster-cut crystal, by the exact interface matrices: the mirror spots
    and m in each plane."""
    r1, r2, d, a, length, n, f = 500.0, 500.0, 300.0, 150.0, 10.0, 1.76, 300.0
    c = cavity_entry(solved(cavity_with(optic("X1", "crystal", length=length, index=n, faces="brewster",
                                              thermal_lens=f), r1, r2, d, a)))
    for p in PLANES:
        to_m2, rt = brewster_exact_round_trip(r1, r2, d, a, length, n, f, p)
        q1 = ref.self_consistent_q(rt)
        assert c["m"][p] == pytest.approx((rt[0, 0] + rt[1, 1]) / 2, abs=1e-9), p
        assert hit(c, "M1")["w_um"][p] == pytest.approx(ref.w_of_q(q1, WL) * 1e3, rel=REL), p
        assert hit(c, "M2")["w_um"][p] == pytest.approx(ref.w_of_q(ref.apply(to_m2, q1), WL) * 1e3, rel=REL), p


# --- mirror substrates seen in transmission ---------------------------------------------

def end_pumped(substrate: dict, roc: float = 100.0, a: float = 100.0, b: float = 40.0, waist: float = 0.5) -> str:
    """A beam from a source ``a`` mm behind the curved end mirror M1 of a cavity passes
    through M1's substrate from the back and ends on a dump ``b`` mm inside."""
    return layout(
        mirror("M1", roc, at=[1000.0, 10000.0], substrate=substrate, reflectivity={"1064": 0.999, "808": 0.05}),
        mirror("M2"),
        optic("D1", "dump"),
        cavity("cav", "linear", ["M1", rel("M2", 80.0)], WL_NM, heading=0.0),
        source("P", at=[1000.0 - a, 10000.0], heading=0.0, wavelength_nm=808.0, waist=waist, power_w=2.0),
        beam("pump", "P", ["M1", rel("D1", b)]),
    )


def test_curved_substrate_is_a_negative_lens():
    """A concave mirror used in transmission: with a thin substrate its curved face is a
    plano-concave lens, f = -R/(n - 1) (lensmaker's equation; Kogelnik & Li 1966 lens
    matrix), whichever side the beam comes from.  Checked with sympy `ThinLens`,
    `FreeSpace` and `BeamParameter` (n = 1, float z_r)."""
    from sympy.physics.optics import BeamParameter, ThinLens

    roc, n, a, b, w0 = 100.0, 1.45, 100.0, 40.0, 0.5
    wl = 808.0 * ref.NM
    bm = beam_entry(solved(end_pumped({"thickness": 0.0, "index": n}, roc, a, b, w0)))
    z_r = ref.rayleigh(w0, wl)
    q = FreeSpace(b) * ThinLens(-roc / (n - 1)) * FreeSpace(a) * BeamParameter(wl, 0, z_r=z_r)
    w_expected = float(q.w) * 1e3
    for p in PLANES:
        assert hit(bm, "D1")["w_um"][p] == pytest.approx(w_expected, rel=REL)
    assert hit(bm, "D1")["power_w"] == pytest.approx(2.0 * 0.95, rel=1e-8)   # T = 1 - R at 808 nm


def test_thick_substrate_lies_behind_the_coated_face():
    """A beam from behind crosses the substrate (thickness t) before reaching the coated
    face at M1's position, so of the a = 100 mm from the source, a - t are air.  The thick
    plano-concave lens by sympy: `FlatRefraction(1, n)`, `FreeSpace(t)`,
    `CurvedRefraction(R, n, 1)` (R > 0: centre of curvature after the surface)."""
    from sympy.physics.optics import BeamParameter

    roc, n, t, a, b, w0 = 100.0, 1.45, 6.35, 100.0, 40.0, 0.5
    wl = 808.0 * ref.NM
    bm = beam_entry(solved(end_pumped({"thickness": t, "index": n}, roc, a, b, w0)))
    z_r = ref.rayleigh(w0, wl)
    system = FreeSpace(b) * CurvedRefraction(roc, n, 1) * FreeSpace(t) * FlatRefraction(1, n) * FreeSpace(a - t)
    q = system * BeamParameter(wl, 0, z_r=z_r)   # product in air, where sympy's n = 1 holds
    assert hit(bm, "D1")["w_um"]["t"] == pytest.approx(float(q.w) * 1e3, rel=REL)


def test_cavity_output_through_a_curved_output_coupler():
    """Flat HR - concave OC (R = 300, d = 200): the mode at the OC is that of Kogelnik & Li
    1966 (waist on the flat mirror, q = d + i z_R at the OC); a thin substrate acts as
    the lens f = -R/(n - 1) on the way out (lensmaker's equation), then free space to the
    detector (Kogelnik & Li ABCD law).  The beam carries P_circ T_oc = P_out."""
    R, d, n, L = 300.0, 200.0, 1.5, 250.0
    text = layout(
        mirror("HR", None, at=[1000.0, 10000.0]),
        mirror("OC", R, reflectivity=0.9, substrate={"thickness": 0.0, "index": n}),
        optic("PM", "detector"),
        cavity("cav", "linear", ["HR", rel("OC", d)], WL_NM, heading=0.0, output_coupler="OC", output_power_w=1.5),
        beam("out", "cav", [rel("PM", L)]),
    )
    table = solved(text)
    k = ref.two_mirror(None, R, d, WL)
    q_oc = complex(d, k["z_r"])
    assert ref.w_of_q(q_oc, WL) == pytest.approx(k["w2"], rel=1e-12)
    (q_pm,), _ = ref.walk(ref.apply(ref.lens(-R / (n - 1)), q_oc), [("space", L)])
    bm = beam_entry(table, "out")
    for p in PLANES:
        assert hit(bm, "PM")["w_um"][p] == pytest.approx(ref.w_of_q(q_pm, WL) * 1e3, rel=REL)
    assert hit(bm, "PM")["power_w"] == pytest.approx(1.5, rel=1e-8)
    assert cavity_entry(table)["circulating_w"] == pytest.approx(15.0, rel=1e-8)


def test_splitter_substrate_astigmatism():
    """A beam focused through the flat substrate of a 45 deg splitter (t = 5 mm, n = 1.5)
    gets the plate's reduced lengths d_t = 2.429772 and d_s = 3.779645 mm
    (refphysics.plate_lengths, computed here): wherever the glass sits, the tangential
    waist lies d_s - d_t = 1.349873 mm further downstream than the sagittal one, and both
    have the size the lens gives
    (Self 1983; a flat plate does not change the waist size)."""
    f, s_lens, w0 = 100.0, 50.0, 1.0
    text = layout(
        optic("L1", "lens", focal_length=f),
        optic("BS", "splitter", reflectivity=0.5, fold=90.0, substrate={"thickness": 5.0, "index": 1.5}),
        optic("D1", "dump"),
        source("S", at=[1000.0, 10000.0], heading=0.0, wavelength_nm=WL_NM, waist=w0, power_w=1.0),
        beam("b", "S", [rel("L1", s_lens), rel("BS", 40.0), rel("D1", 200.0)]),
    )
    bm = beam_entry(solved(text))
    assert hit(bm, "BS")["aoi_deg"] == pytest.approx(45.0, abs=1e-9)
    (wt,) = [w for w in waists(bm, "t") if w["s_mm"] > s_lens]
    (ws,) = [w for w in waists(bm, "s") if w["s_mm"] > s_lens]
    d_t, d_s = ref.plate_lengths(5.0, 1.5, math.radians(45.0))
    assert wt["s_mm"] - ws["s_mm"] == pytest.approx(d_s - d_t, abs=2e-6)
    _, mag = ref.self_focus(s_lens, ref.rayleigh(w0, WL), f)
    assert wt["w_um"] == pytest.approx(mag * w0 * 1e3, rel=REL)
    assert ws["w_um"] == pytest.approx(mag * w0 * 1e3, rel=REL)
    assert hit(bm, "D1")["power_w"] == pytest.approx(0.5, rel=1e-8)
