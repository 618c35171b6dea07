"""Two-mirror (and folded) linear cavities against Kogelnik & Li's closed forms.

References: H. Kogelnik and T. Li, "Laser beams and resonators", Applied Optics 5, 1550
(1966), two-mirror section (spot sizes, waist, stability 0 < g1 g2 < 1, one-way Gouy
phase arccos(+-sqrt(g1 g2))); A. E. Siegman, "Lasers" (1986), ch. 19 (same, from
memory); mode spacing FSR x Gouy/2pi (Siegman p. 762, eq. 23, from memory);
H. Kogelnik, E. P. Ippen, A. Dienes and C. V. Shank, IEEE J. Quantum Electron. 8, 373
(1972) for the off-axis curved mirror, f_t = (R/2) cos(theta), f_s = (R/2)/cos(theta)
(from memory).
The expected values are computed here from those formulas (tests/refphysics.py), never
taken from benchcheck.
"""

from __future__ import annotations

import math

import pytest

import refphysics as ref
from layouts_util import (
    C_M_S, cavity, cavity_entry, hit, layout, mirror, rel, solved, two_mirror, waists,
)

WL_NM = 1064.0
WL = WL_NM * ref.NM
REL = 1e-6          # closed forms; the JSON keeps 9 significant digits
PLANES = ("t", "s")

# Cases A-H: (R1, R2, d) in mm, and a check row for the same cavity at 1064 nm (w in um,
# t1 and z_R in mm, theta_rt in rad, FSR and mode spacing in MHz).  The rows are derived
# from the Kogelnik & Li 1966 closed forms (no paper prints them) and written out so a
# reader sees the numbers; the first test recomputes each row here from the closed forms
# in refphysics, to the digits shown, so a typo in either shows up.  benchcheck is
# compared with the closed forms.
CASES = {
    "A-symmetric": ((500.0, 500.0, 250.0),
                    dict(w1="312.6803", w2="312.6803", w0="270.7891", t1="125.000", z_r="216.50635",
                         theta="2.094395", fsr="599.5849", tms="199.8616")),
    "B-flat-concave": ((None, 1000.0, 500.0),
                       dict(w1="411.5105", w2="581.9637", w0="411.5105", t1="0", z_r="500.000",
                            theta="1.570796", fsr="299.7925", tms="74.9481")),
    "C-near-hemispherical": ((None, 100.0, 95.0),
                             dict(w1="85.9151", w2="384.2238", w0="85.9151", t1="0", z_r="21.79449",
                                  theta="2.690566", fsr="1577.8550", tms="675.6641")),
    "D-asymmetric": ((400.0, 1000.0, 200.0),
                     dict(w1="332.5853", w2="262.9318", w0="257.6195", t1="160.000", z_r="195.95918",
                          theta="1.772154", fsr="749.4811", tms="211.3890")),
    "E-near-concentric": ((500.0, 500.0, 990.0),
                          dict(w1="1298.0448", w2="1298.0448", w0="129.8045", t1="495.000", z_r="49.74937",
                               theta="5.882516", fsr="151.4103", tms="141.7551")),
    "F-very-near-concentric": ((500.0, 500.0, 999.0),
                               dict(w1="2313.515", w2="2313.515", w0="73.1598", t1="499.5", z_r="15.8035",
                                    theta="6.156673")),
    "H-long-radius": ((10000.0, 10000.0, 100.0),
                      dict(w1="489.9848", w2="489.9848", w0="488.7583", t1="50.000", z_r="705.33680",
                           theta="0.283079", fsr="1498.9623", tms="67.5334")),
}
#: Case F is ill-conditioned (g1 g2 = 0.996): a looser tolerance.
CASE_REL = {"F-very-near-concentric": 1e-4}


def printed(value: str, scale: float = 1.0):
    """pytest.approx to half a unit in the last printed digit of ``value``."""
    decimals = len(value.split(".")[1]) if "." in value else 0
    return pytest.approx(float(value) * scale, abs=0.5 * 10.0 ** (-decimals) * scale)


def fsr_hz(round_trip_mm: float) -> float:
    """FSR = c / (optical round-trip length) (Siegman, Lasers, ch. 11, from memory)."""
    return C_M_S / (round_trip_mm * 1e-3)


# --- the reference values themselves -----------------------------------------------------

@pytest.mark.parametrize("case", list(CASES))
def test_closed_forms_reproduce_the_check_rows(case):
    """Kogelnik & Li 1966 closed forms, as coded in refphysics, give the check rows
    (derived, computed here)."""
    (r1, r2, d), row = CASES[case]
    k = ref.two_mirror(r1, r2, d, WL)
    assert k["w1"] * 1e3 == printed(row["w1"])
    assert k["w2"] * 1e3 == printed(row["w2"])
    assert k["w0"] * 1e3 == printed(row["w0"])
    assert k["t1"] == printed(row["t1"])
    assert k["z_r"] == printed(row["z_r"])
    assert k["theta_rt"] == printed(row["theta"])
    if "fsr" in row:
        assert fsr_hz(2 * d) == printed(row["fsr"], 1e6)
        assert fsr_hz(2 * d) * k["theta_rt"] / (2 * math.pi) == printed(row["tms"], 1e6)


@pytest.mark.parametrize("case", list(CASES))
def test_gouy_closed_form_equals_the_accumulated_phase(case):
    """Round-trip Gouy 2 arccos(+-sqrt(g1 g2)) (Kogelnik & Li 1966) equals the Gouy phase
    summed along the mode, arctan(z/z_R) from M1 to M2 and back (Siegman ch. 17)."""
    (r1, r2, d), _ = CASES[case]
    k = ref.two_mirror(r1, r2, d, WL)
    q_m1 = complex(-k["t1"], k["z_r"])   # at M1, the waist t1 ahead
    _, one_way = ref.walk(q_m1, [("space", d)])
    assert 2 * one_way == pytest.approx(k["theta_rt"], rel=1e-12)


# --- benchcheck against the closed forms ------------------------------------------------

def check_two_mirror(c: dict, r1, r2, d: float, rel: float = REL, m1: str = "M1", m2: str = "M2") -> None:
    """A cavity entry of the beam table against the Kogelnik & Li 1966 two-mirror closed
    forms (spots, waist, m = 2 g1 g2 - 1, round-trip Gouy 2 psi), FSR = c/(2d) and the
    mode spacing FSR theta_rt/(2 pi) (Siegman p. 762, from memory)."""
    k = ref.two_mirror(r1, r2, d, WL)
    for p in PLANES:
        assert c["stable"][p] is True
        assert c["status"][p] == "stable"
        assert c["m"][p] == pytest.approx(k["m"], abs=1e-9)
        assert hit(c, m1)["w_um"][p] == pytest.approx(k["w1"] * 1e3, rel=rel)
        assert hit(c, m2)["w_um"][p] == pytest.approx(k["w2"] * 1e3, rel=rel)
        assert c["gouy_deg"][p] == pytest.approx(math.degrees(k["theta_rt"]), rel=rel)
        fsr = fsr_hz(2 * d)
        assert c["tms_hz"][p] == pytest.approx(fsr * k["theta_rt"] / (2 * math.pi), rel=rel)
        if 0.0 <= k["t1"] <= d:
            (wst,) = waists(c, p)
            assert wst["w_um"] == pytest.approx(k["w0"] * 1e3, rel=rel)
            assert wst["s_mm"] == pytest.approx(k["t1"], rel=rel, abs=1e-6 * d)
        else:
            assert waists(c, p) == [], "the waist lies outside the mirrors"
    assert c["round_trip_mm"] == pytest.approx(2 * d, rel=1e-8)
    assert c["fsr_hz"] == pytest.approx(fsr_hz(2 * d), rel=1e-8)


@pytest.mark.parametrize("case", list(CASES))
def test_two_mirror_cases(case):
    """Kogelnik & Li 1966 two-mirror closed forms, cases A-H (G, confocal, below)."""
    (r1, r2, d), _ = CASES[case]
    c = cavity_entry(solved(two_mirror(r1, r2, d, WL_NM)))
    check_two_mirror(c, r1, r2, d, CASE_REL.get(case, REL))


@pytest.mark.parametrize("r1, r2, d", [
    (200.0, -500.0, 100.0),    # concave-convex, g1 = 0.5, g2 = 1.2: stable, waist behind M2
    (-500.0, 200.0, 100.0),    # the same reversed: waist behind M1
    (300.0, 300.0, 50.0),      # short, near-planar symmetric
    (400.0, 300.0, 600.0),     # both g < 0: g1 = -0.5, g2 = -1, g1 g2 = 0.5
])
def test_more_stable_two_mirror_cavities(r1, r2, d):
    """Kogelnik & Li 1966 two-mirror closed forms beyond the tabulated cases."""
    assert 0 < ref.g(r1, d) * ref.g(r2, d) < 1
    c = cavity_entry(solved(two_mirror(r1, r2, d, WL_NM)))
    check_two_mirror(c, r1, r2, d)


def test_concave_convex_waist_outside():
    """Kogelnik & Li 1966: for R1 = 200, R2 = -500, d = 100 the waist is t1 = 120 mm from
    M1, beyond the convex M2, so no waist lies between the mirrors."""
    k = ref.two_mirror(200.0, -500.0, 100.0, WL)
    assert k["t1"] == pytest.approx(120.0)
    c = cavity_entry(solved(two_mirror(200.0, -500.0, 100.0, WL_NM)))
    assert c["waists"] == []
    assert hit(c, "M1")["w_um"]["t"] > hit(c, "M2")["w_um"]["t"]


def test_near_concentric_takes_the_second_gouy_branch():
    """Case E (R = 500, d = 990): both g < 0, so the one-way Gouy phase is
    arccos(-sqrt(g1 g2)) = 168.5 deg and the round trip 337.04 deg, not the 22.96 deg that
    arccos of the half-trace alone gives (Kogelnik & Li 1966; Siegman ch. 19)."""
    c = cavity_entry(solved(two_mirror(500.0, 500.0, 990.0, WL_NM)))
    expected = 2 * math.degrees(math.acos(-0.98))
    assert expected == pytest.approx(337.043318, rel=1e-8)
    for p in PLANES:
        assert c["gouy_deg"][p] == pytest.approx(expected, rel=REL)
        assert c["m"][p] == pytest.approx(2 * 0.98**2 - 1, abs=1e-9)


def test_symmetric_confocal_cavity():
    """Symmetric confocal cavity, R = d = 500 mm: the round trip is -I (Kogelnik & Li 1966;
    Siegman ch. 19); the mode of the repeating half gives mirror spots sqrt(lambda d/pi),
    waist sqrt(lambda d/(2 pi)) at the centre, Gouy 180 deg per round trip and mode spacing
    FSR/2."""
    d = 500.0
    c = cavity_entry(solved(two_mirror(d, d, d, WL_NM)))
    w_m = math.sqrt(WL * d / math.pi) * 1e3
    w_0 = math.sqrt(WL * d / (2 * math.pi)) * 1e3
    assert w_m == pytest.approx(411.5105, abs=5e-5)
    assert w_0 == pytest.approx(290.9818, abs=5e-5)
    fsr = fsr_hz(2 * d)
    for p in PLANES:
        assert c["status"][p] == "marginal-retrace"
        assert c["m"][p] == pytest.approx(-1.0, abs=1e-12)
        assert hit(c, "M1")["w_um"][p] == pytest.approx(w_m, rel=REL)
        assert hit(c, "M2")["w_um"][p] == pytest.approx(w_m, rel=REL)
        (wst,) = waists(c, p)
        assert wst["w_um"] == pytest.approx(w_0, rel=REL)
        assert wst["s_mm"] == pytest.approx(d / 2, rel=REL)
        assert c["gouy_deg"][p] == pytest.approx(180.0, rel=REL)
        assert c["tms_hz"][p] == pytest.approx(fsr / 2, rel=REL)
    assert c["fsr_hz"] == pytest.approx(fsr, rel=1e-8)


@pytest.mark.parametrize("d", [499.9, 500.1])
def test_confocal_limit_is_continuous(d):
    """Just off confocal the ordinary closed forms hold and approach the confocal values
    (Kogelnik & Li 1966): the mirror spot stays within 0.1 % of sqrt(lambda d/pi)."""
    c = cavity_entry(solved(two_mirror(500.0, 500.0, d, WL_NM)))
    check_two_mirror(c, 500.0, 500.0, d)
    assert hit(c, "M1")["w_um"]["t"] == pytest.approx(math.sqrt(WL * d / math.pi) * 1e3, rel=1e-3)


@pytest.mark.parametrize("r1, r2, d", [
    (100.0, 100.0, 250.0),     # g = -1.5, beyond concentric
    (200.0, -100.0, 50.0),     # concave-convex, g1 g2 = 1.125
    (500.0, 500.0, 1100.0),    # g = -1.2
    (-300.0, -300.0, 100.0),   # convex-convex, g = 4/3
    (1000.0, None, 1200.0),    # g1 = -0.2, g2 = 1: g1 g2 < 0
])
def test_unstable_two_mirror(r1, r2, d):
    """Outside 0 < g1 g2 < 1 there is no confined mode (Kogelnik & Li 1966): m = 2 g1 g2 - 1
    has |m| > 1, and the table has nulls for every radius and phase."""
    m = 2 * ref.g(r1, d) * ref.g(r2, d) - 1
    assert abs(m) > 1
    c = cavity_entry(solved(two_mirror(r1, r2, d, WL_NM)))
    for p in PLANES:
        assert c["stable"][p] is False
        assert c["status"][p] == "unstable"
        assert c["m"][p] == pytest.approx(m, abs=1e-9)
        assert c["gouy_deg"][p] is None
        assert all(h["w_um"][p] is None for h in c["hits"])
    assert c["waists"] == []
    assert c["fsr_hz"] == pytest.approx(fsr_hz(2 * d), rel=1e-8)


@pytest.mark.parametrize("r1, r2, d", [
    (None, None, 300.0),       # flat-flat: g1 g2 = 1
    (250.0, 250.0, 500.0),     # concentric d = 2R: g1 = g2 = -1
    (None, 300.0, 300.0),      # hemispherical d = R: g1 g2 = 0 but the round trip is not -I
])
def test_boundary_with_walkoff(r1, r2, d):
    """On the edge g1 g2 = 0 or 1 (Kogelnik & Li 1966), with a round trip that is not +-I,
    rays walk off: not stable, no mode, nulls for the radii."""
    m = 2 * ref.g(r1, d) * ref.g(r2, d) - 1
    assert abs(m) == pytest.approx(1.0, abs=1e-12)
    c = cavity_entry(solved(two_mirror(r1, r2, d, WL_NM)))
    for p in PLANES:
        assert c["status"][p] == "marginal-walkoff"
        assert c["stable"][p] is False
        assert c["gouy_deg"][p] is None
        assert all(h["w_um"][p] is None for h in c["hits"])
    assert c["waists"] == []


@pytest.mark.parametrize("ratio, stable", [
    (0.05, True), (0.5, True), (0.99, True), (1.01, True), (1.5, True), (1.99, True),
    (2.01, False), (3.0, False),
])
def test_symmetric_cavity_is_stable_for_d_below_2r(ratio, stable):
    """Common practice: a symmetric two-mirror cavity is stable for 0 < d < 2R."""
    c = cavity_entry(solved(two_mirror(250.0, 250.0, 250.0 * ratio, WL_NM)))
    assert c["stable"] == {"t": stable, "s": stable}


def test_one_metre_cavity_round_trip_time():
    """Common practice: one round trip of a 1 m linear cavity takes about 6.7 ns, so its
    FSR is about 150 MHz; exactly c/(2d) = 149.896229 MHz."""
    c = cavity_entry(solved(two_mirror(2000.0, 2000.0, 1000.0, WL_NM)))
    assert 1.0 / c["fsr_hz"] == pytest.approx(6.7e-9, rel=0.01)
    assert c["fsr_hz"] == pytest.approx(150e6, rel=0.001)
    assert c["fsr_hz"] == pytest.approx(C_M_S / 2.0, rel=1e-8)
    assert c["round_trip_mm"] == pytest.approx(2000.0, rel=1e-8)


# --- the same cavity with a fold mirror -------------------------------------------------

def folded(r1, r2, d: float, a: float, fold: float, r_fold=None) -> str:
    """M1 -> FM (``a`` mm from M1, full fold angle ``fold``) -> M2, total length d."""
    return layout(
        mirror("M1", r1, at=[1000.0, 10000.0]),
        mirror("FM", r_fold),
        mirror("M2", r2),
        cavity("cav", "linear", ["M1", rel("FM", a, fold), rel("M2", d - a)], WL_NM, heading=0.0),
    )


@pytest.mark.parametrize("case", ["A-symmetric", "D-asymmetric", "E-near-concentric"])
@pytest.mark.parametrize("where, fold", [(0.5, 90.0), (0.5, -90.0), (0.3, 90.0)])
def test_flat_fold_mirror_changes_nothing(case, where, fold):
    """A flat mirror has no power at any angle (Kogelnik et al. 1972: f = R cos/2 with
    R infinite), so a 45 deg flat fold leaves the Kogelnik & Li 1966 mode as it is; the
    spot on the fold mirror is w(z) = w0 sqrt(1 + ((z - t1)/z_R)^2) there."""
    (r1, r2, d), _ = CASES[case]
    a = where * d
    c = cavity_entry(solved(folded(r1, r2, d, a, fold)))
    check_two_mirror(c, r1, r2, d)
    k = ref.two_mirror(r1, r2, d, WL)
    fm = hit(c, "FM")
    assert fm["aoi_deg"] == pytest.approx(45.0, abs=1e-9)
    assert fm["s_mm"] == pytest.approx(a, rel=1e-8)
    for p in PLANES:
        assert fm["w_um"][p] == pytest.approx(ref.w_at(k["w0"], a - k["t1"], k["z_r"]) * 1e3, rel=REL)


def test_folded_symmetric_confocal_cavity():
    """The symmetric confocal cavity (R = d = 500 mm) folded by a flat 45 deg mirror at
    200 mm is still a round trip of -I (Kogelnik & Li 1966): the same confocal spots
    sqrt(lambda d/pi), waist sqrt(lambda d/(2 pi)) at d/2, and 180 deg of Gouy phase."""
    d = 500.0
    c = cavity_entry(solved(folded(d, d, d, 200.0, -90.0)))
    for p in PLANES:
        assert c["status"][p] == "marginal-retrace"
        for m in ("M1", "M2"):
            assert hit(c, m)["w_um"][p] == pytest.approx(math.sqrt(WL * d / math.pi) * 1e3, rel=REL)
        (wst,) = waists(c, p)
        assert wst["s_mm"] == pytest.approx(d / 2, rel=REL)
        assert wst["w_um"] == pytest.approx(math.sqrt(WL * d / (2 * math.pi)) * 1e3, rel=REL)
        assert c["gouy_deg"][p] == pytest.approx(180.0, rel=REL)


def fold_reference(d1: float, d2: float, f: float) -> dict:
    """Flat M1 - focusing element f (d1 from M1) - flat M2 (d2 further), by ray matrices
    (Kogelnik & Li 1966): round trip from M1, its self-consistent q, spots at the three
    mirrors, Gouy phase summed along the round trip, m = (A + D)/2."""
    trip = [("space", d1), ("lens", f), ("space", d2), ("space", d2), ("lens", f), ("space", d1)]
    rt = ref.steps_matrix(trip)
    m = (rt[0, 0] + rt[1, 1]) / 2
    out = dict(m=m)
    if abs(m) >= 1:
        return out
    q1 = ref.self_consistent_q(rt)
    qs, gouy = ref.walk(q1, trip)
    assert abs(qs[-1] - q1) < 1e-9 * abs(q1)
    out.update(w_m1=ref.w_of_q(q1, WL), w_fm=ref.w_of_q(qs[0], WL), w_m2=ref.w_of_q(qs[2], WL),
               gouy=gouy, q1=q1, q2=qs[2])
    return out


@pytest.mark.parametrize("d1, d2, theta_deg", [
    (200.0, 52.0, 10.0),
    (200.0, 55.0, 10.0),
    (500.0, 52.6, 15.0),
    (80.0, 70.0, 5.0),
])
def test_curved_fold_mirror(d1, d2, theta_deg):
    """Flat - curved fold (R = 100 mm, angle of incidence theta) - flat: in each plane the
    fold mirror is a lens of f_t = (R/2) cos(theta), f_s = (R/2)/cos(theta) (Kogelnik,
    Ippen, Dienes & Shank 1972); the mode comes from an independent matrix calculation
    (Kogelnik & Li 1966).  The flat end mirrors hold the waists."""
    roc = 100.0
    th = math.radians(theta_deg)
    focal = {"t": roc / 2 * math.cos(th), "s": roc / 2 / math.cos(th)}
    c = cavity_entry(solved(folded(None, None, d1 + d2, d1, 2 * theta_deg, r_fold=roc)))
    assert hit(c, "FM")["aoi_deg"] == pytest.approx(theta_deg, abs=1e-9)
    for p in PLANES:
        r = fold_reference(d1, d2, focal[p])
        assert abs(r["m"]) < 1, "the case is chosen stable in both planes"
        assert c["m"][p] == pytest.approx(r["m"], abs=1e-9)
        assert c["stable"][p] is True
        assert hit(c, "M1")["w_um"][p] == pytest.approx(r["w_m1"] * 1e3, rel=REL)
        assert hit(c, "FM")["w_um"][p] == pytest.approx(r["w_fm"] * 1e3, rel=REL)
        assert hit(c, "M2")["w_um"][p] == pytest.approx(r["w_m2"] * 1e3, rel=REL)
        assert c["gouy_deg"][p] == pytest.approx(math.degrees(r["gouy"]), rel=REL)
        # flat end mirrors: plane wavefront, so the waists are on them
        assert r["q1"].real == pytest.approx(0.0, abs=1e-9) and r["q2"].real == pytest.approx(0.0, abs=1e-9)
        got = sorted((w["s_mm"], w["w_um"]) for w in waists(c, p))
        assert len(got) == 2
        assert got[0][0] == pytest.approx(0.0, abs=1e-6)
        assert got[0][1] == pytest.approx(r["w_m1"] * 1e3, rel=REL)
        assert got[1][0] == pytest.approx(d1 + d2, rel=1e-8)
        assert got[1][1] == pytest.approx(r["w_m2"] * 1e3, rel=REL)
    assert c["fsr_hz"] == pytest.approx(fsr_hz(2 * (d1 + d2)), rel=1e-8)


def test_curved_fold_mirror_stable_in_one_plane_only():
    """With d1 = 200, d2 = 50 and theta = 10 deg the tangential focal length 49.24 mm is
    shorter than d2 and the sagittal 50.77 mm longer: (1 - d1/f)(1 - d2/f) lies in (0, 1)
    for t only (Kogelnik et al. 1972 focal lengths; flat-lens-flat stability from the
    matrices of Kogelnik & Li 1966), so t is stable and s is not."""
    roc, th = 100.0, math.radians(10.0)
    f_t, f_s = roc / 2 * math.cos(th), roc / 2 / math.cos(th)
    c = cavity_entry(solved(folded(None, None, 250.0, 200.0, 20.0, r_fold=roc)))
    rt = fold_reference(200.0, 50.0, f_t)
    rs = fold_reference(200.0, 50.0, f_s)
    assert abs(rt["m"]) < 1 < abs(rs["m"])
    assert c["stable"] == {"t": True, "s": False}
    assert c["status"]["s"] == "unstable"
    assert c["m"]["t"] == pytest.approx(rt["m"], abs=1e-9)
    assert c["m"]["s"] == pytest.approx(rs["m"], abs=1e-9)
    assert hit(c, "FM")["w_um"]["t"] == pytest.approx(rt["w_fm"] * 1e3, rel=REL)
    assert hit(c, "FM")["w_um"]["s"] is None
    assert c["gouy_deg"]["s"] is None
    assert waists(c, "s") == []


def test_off_axis_focal_lengths_check_values():
    """R = 100 mm at 10 deg: f_t = 49.2404, f_s = 50.7713 mm; at 45 deg 35.3553 and
    70.7107 mm (derived from f_t = (R/2) cos(theta), f_s = (R/2)/cos(theta) of Kogelnik et
    al. 1972, from memory; computed here and compared to the digits shown).  The same
    numbers by an independent route: the Coddington equations for a spherical mirror at
    incidence theta, 1/s' + 1/s = 2/(R cos) tangentially and 2 cos/R sagittally (common
    practice, from memory), give the image of an object at infinity at those distances."""
    for deg, ft, fs in ((10.0, "49.2404", "50.7713"), (45.0, "35.3553", "70.7107")):
        th = math.radians(deg)
        assert 50.0 * math.cos(th) == printed(ft)
        assert 50.0 / math.cos(th) == printed(fs)
        assert 1.0 / (2.0 / (100.0 * math.cos(th))) == printed(ft)     # Coddington, tangential
        assert 1.0 / (2.0 * math.cos(th) / 100.0) == printed(fs)       # Coddington, sagittal


def test_matrix_reference_agrees_with_two_mirror_closed_form():
    """Cross-check of the two references: with d2 = 0 a flat end mirror behind a lens f is,
    by the matrices of Kogelnik & Li 1966, a mirror of power 2/f, i.e. R = f; so flat - lens
    f = 1000 - flat over d1 = 500 is case B (flat / R = 1000, d = 500) of the closed forms."""
    f, d1 = 1000.0, 500.0
    r = fold_reference(d1, 0.0, f)
    k = ref.two_mirror(None, f, d1, WL)
    assert r["w_m1"] == pytest.approx(k["w1"], rel=1e-8)
    assert r["w_fm"] == pytest.approx(k["w2"], rel=1e-8)
    assert r["gouy"] == pytest.approx(k["theta_rt"], rel=1e-8)
    assert r["m"] == pytest.approx(k["m"], abs=1e-12)
