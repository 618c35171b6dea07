"""Cases a careful reviewer would try: thermal-lens gaps, elements met backwards, couplers
the cavity passes through, seeds that arrive tilted, rings that start inside a crystal."""

from __future__ import annotations

import math

import pytest

import refphysics as ref
from benchcheck import LayoutError, solve_text
from layouts_util import (
    beam, beam_entry, cavity, cavity_entry, layout, mirror, optic, rel, solved, source,
)

WL_NM = 1064.0
WL = WL_NM * 1e-6


def flat_lens_flat(d1: float, d2: float, f_range) -> str:
    return layout(
        mirror("M1", None, at=[100.0, 500.0]),
        optic("X", "crystal", length=0.001, index=1.0, thermal_lens=list(f_range)),
        mirror("M2", None),
        cavity("c", "linear", ["M1", rel("X", d1), rel("M2", d2)], WL_NM, heading=0.0),
    )


def test_thermal_range_with_an_unstable_middle_is_not_stable():
    """Flat - lens (power P) - flat, arms d1 = 100 and d2 = 300 mm: g1 g2 = (1 - d2 P)(1 - d1 P)
    (Kogelnik & Li 1966 with the lens folded into equivalent g-parameters), negative for
    1/300 < P < 1/100 mm^-1.  The ends f = 400 and 90 mm are stable; the middle is not.
    The most negative g1 g2 is at P = 1/150: -1/3, so m = 2 g1 g2 - 1 = -5/3."""
    c = cavity_entry(solved(flat_lens_flat(100.0, 300.0, (90.0, 400.0))))
    scan = c["thermal_lens"]
    assert scan["stable_over_range"] == {"t": False, "s": False}
    assert scan["m_range"]["t"][0] == pytest.approx(-5.0 / 3.0, rel=1e-9)
    for f in (400.0, 90.0):
        p = 1.0 / f
        g1g2 = (1 - 300.0 * p) * (1 - 100.0 * p)
        assert 0 < g1g2 < 1


def test_thermal_range_entirely_stable():
    # P from 1/2000 to 1/1000: g1 g2 = (1 - 300 P)(1 - 100 P) stays within (0, 1)
    c = cavity_entry(solved(flat_lens_flat(100.0, 300.0, (1000.0, 2000.0))))
    assert c["thermal_lens"]["stable_over_range"] == {"t": True, "s": True}
    lo = 2 * (1 - 300 / 1000) * (1 - 100 / 1000) - 1
    hi = 2 * (1 - 300 / 2000) * (1 - 100 / 2000) - 1
    assert c["thermal_lens"]["m_range"]["t"] == pytest.approx([lo, hi], rel=1e-9)


def test_splitter_substrate_in_a_linear_cavity_equals_the_tilted_plate():
    """A 45-degree splitter's 20 mm substrate, passed both ways in a linear cavity, is a
    tilted plate: d_t = t cos^2 t1 / (n cos^3 t2), d_s = t / (n cos t2) (Kogelnik et al.
    1972, from memory) - on the way back as on the way out."""
    t, n = 20.0, 1.5
    t1 = math.radians(45.0)
    t2 = math.asin(math.sin(t1) / n)
    d_eff = {"t": t * math.cos(t1) ** 2 / (n * math.cos(t2) ** 3), "s": t / (n * math.cos(t2))}
    inside = t / math.cos(t2)
    text = layout(
        mirror("M1", 500.0, at=[100.0, 500.0]),
        optic("S", "splitter", at=[300.0, 500.0], fold=90.0, reflectivity=0.01,
              substrate={"thickness": t, "index": n}),
        mirror("M2", 500.0, at=[500.0 + inside, 500.0]),
        cavity("c", "linear", ["M1", "S", "M2"], WL_NM),
    )
    c = cavity_entry(solved(text))
    for p in ("t", "s"):
        d = 200.0 + 200.0 + d_eff[p]          # air before, air after (substrate behind the face)
        g = 1 - d / 500.0
        assert c["m"][p] == pytest.approx(2 * g * g - 1, abs=1e-9)


def test_a_coupler_the_cavity_passes_through_is_refused():
    text = layout(
        mirror("M1", 500.0, at=[100.0, 500.0]),
        optic("S", "splitter", at=[300.0, 500.0], fold=90.0, reflectivity=0.01),
        mirror("M2", 500.0, at=[500.0, 500.0]),
        cavity("c", "linear", ["M1", "S", "M2"], WL_NM, output_coupler="S", output_power_w=1.0),
    )
    with pytest.raises(LayoutError, match="passes through its output coupler"):
        solve_text(text)


def test_passive_cavity_whose_input_coupler_transmits_nothing_is_refused():
    text = layout(
        mirror("IC", None, at=[100.0, 500.0], reflectivity=1.0),
        mirror("M2", 1000.0, reflectivity=1.0),
        cavity("c", "linear", ["IC", rel("M2", 500.0)], WL_NM, heading=0.0, input_coupler="IC", input_power_w=1.0),
    )
    with pytest.raises(LayoutError, match="transmits nothing"):
        solve_text(text)


def seeded_tilted(tilt_deg: float) -> str:
    """Half-confocal cavity (flat IC, R = 1000 mm at 500 mm): its waist is on IC with
    z_R^2 = d (R - d) (Kogelnik & Li 1966).  A seed with that waist, on IC, arriving from
    behind at ``tilt_deg`` to the cavity axis."""
    z_r = math.sqrt(500.0 * 500.0)
    w0 = math.sqrt(WL * z_r / math.pi)
    a = math.radians(tilt_deg)
    back = 300.0
    return layout(
        mirror("IC", None, at=[1000.0, 1000.0], reflectivity=0.99, substrate={"thickness": 0.0, "index": 1.5}),
        mirror("M2", 1000.0, reflectivity=0.9999),
        cavity("enh", "linear", ["IC", rel("M2", 500.0)], WL_NM, heading=0.0, input_coupler="IC", input_power_w=1.0),
        source("S", at=[1000.0 - back * math.cos(a), 1000.0 - back * math.sin(a)], toward="IC", wavelength_nm=WL_NM,
               waist=w0, waist_at=back),
        beam("seed", "S", ["IC"]),
        size=(3000.0, 2000.0),
    ), w0


@pytest.mark.parametrize("tilt_deg", [0.0, 0.01, 0.02, 0.04])
def test_tilted_seed_loses_coupling(tilt_deg):
    """Matched waists tilted by theta overlap by exp(-(theta/theta0)^2), theta0 = lambda/(pi w0)
    (derived from the Gaussian overlap integral with a linear phase of H. Kogelnik, "Coupling
    and conversion coefficients for optical modes", Quasi-Optics symposium, 1964, from
    memory; the integral is also computed here by quadrature, refphysics.overlap_1d)."""
    text, w0 = seeded_tilted(tilt_deg)
    theta = math.radians(tilt_deg)
    assert ref.overlap_1d(w0, w0, theta, WL) == pytest.approx(math.exp(-(theta * math.pi * w0 / WL) ** 2), rel=1e-8)
    end = beam_entry(solved(text))["ends"]
    theta0 = WL / (math.pi * w0)
    assert end["kind"] == "cavity"
    assert end["mode_match"] == pytest.approx(math.exp(-(math.radians(tilt_deg) / theta0) ** 2), rel=1e-6)


def test_seed_from_the_coated_side_is_not_coupled_in():
    text = layout(
        mirror("IC", None, at=[1000.0, 1000.0], reflectivity=0.99),
        mirror("M2", 1000.0, reflectivity=0.9999),
        cavity("enh", "linear", ["IC", rel("M2", 500.0)], WL_NM, heading=0.0, input_coupler="IC", input_power_w=1.0),
        source("S", at=[1200.0, 1100.0], toward="IC", wavelength_nm=WL_NM, waist=0.3),
        beam("seed", "S", ["IC"]),
        size=(3000.0, 2000.0),
    )
    assert beam_entry(solved(text))["ends"]["kind"] != "cavity"


def test_ring_starting_inside_a_crystal_reports_positions_once_round():
    text = layout(
        optic("X", "crystal", at=[400.0, 500.0], length=10.0, index=1.8, faces="brewster"),
        mirror("A", 300.0, at=[600.0, 500.0]),
        mirror("B", None, at=[600.0, 700.0]),
        mirror("C", 300.0, at=[200.0, 500.0]),
        cavity("r", "ring", ["X", "A", "B", "C"], 800.0),
        size=(2000.0, 2000.0),
    )
    c = cavity_entry(solved(text))
    perimeter = 200.0 + 200.0 + math.hypot(400.0, 200.0) + 200.0
    for w in c["waists"]:
        assert 0.0 <= w["s_mm"] <= perimeter


def test_lens_crossed_off_axis_is_reported():
    text = layout(
        optic("L", "lens", at=[300.0, 500.0], focal_length=100.0),
        optic("D1", "dump", at=[600.0, 500.0]),
        optic("D2", "dump", at=[600.0, 560.0]),
        source("S1", at=[100.0, 500.0], heading=0.0, wavelength_nm=WL_NM, waist=0.5),
        source("S2", at=[100.0, 440.0], toward="L", wavelength_nm=WL_NM, waist=0.5),
        beam("b1", "S1", ["L", "D1"]),
        beam("b2", "S2", ["L", "D2"]),
        size=(2000.0, 2000.0),
    )
    sol = solve_text(text)
    off = [i for i in sol.trace.issues if i.kind == "off-axis-crossing"]
    assert len(off) == 1 and off[0].value == pytest.approx(math.degrees(math.atan2(60.0, 200.0)))


def test_beam_along_a_mirror_face_is_reported_and_stays_finite():
    """A beam crossing cavity mirror M2 parallel to its face (normal along -x, beam along +y)."""
    text = layout(
        mirror("M1", 500.0, at=[100.0, 500.0]),
        mirror("M2", 500.0, at=[300.0, 500.0], substrate={"thickness": 5.0, "index": 1.5}),
        cavity("c", "linear", ["M1", "M2"], WL_NM),
        source("S", at=[300.0, 300.0], toward="M2", wavelength_nm=WL_NM, waist=0.5),
        beam("b", "S", ["M2"]),
        size=(2000.0, 2000.0),
    )
    sol = solve_text(text)
    graze = [i for i in sol.trace.issues if i.kind == "grazing"]
    assert graze and graze[0].value == pytest.approx(90.0)
    w = sol.beams["b"].hits[0].w
    assert all(math.isfinite(v) for v in w.values())


def test_thermal_range_through_a_retracing_point_stays_stable():
    """Flat - lens - flat with 100 mm each side: at f = 100 mm the round trip is -I (every
    ray retraces: the confocal-like point, docs/design.md §4), stable on both sides, so a range
    through it is stable: g1 g2 = (1 - 100 P)^2 in [0, 1) for P up to 1/60 except the
    touching point P = 1/100 (Kogelnik & Li 1966, equivalent g-parameters)."""
    c = cavity_entry(solved(flat_lens_flat(100.0, 100.0, (60.0, 1e4))))
    assert c["thermal_lens"]["stable_over_range"] == {"t": True, "s": True}
    assert c["thermal_lens"]["m_range"]["t"][0] == pytest.approx(-1.0, abs=1e-9)


def test_margin_names_the_edges_the_way_the_two_mirror_cavity_does():
    """m = 2 g1 g2 - 1 (Kogelnik & Li 1966): near-concentric (g = -0.995) -> +1, near-confocal
    (g = 0.005) -> -1."""
    from benchcheck.config import Config
    from benchcheck.findings import Bench
    from benchcheck.plugins import load_rules

    rule = load_rules(entry_points=False).rules["stability-margin"][0]
    for d, words in ((199.5, "near-planar or near-concentric"), (99.5, "near-confocal or near-hemispherical")):
        text = layout(mirror("M1", 100.0, at=[100.0, 100.0]), mirror("M2", 100.0),
                      cavity("c", "linear", ["M1", rel("M2", d)], WL_NM, heading=0.0), size=(2000.0, 2000.0))
        sol = solve_text(text)
        found = list(rule.check(Bench(sol.layout, sol, Config().limits), rule.defaults()))
        assert any(words in f.message for f in found), [f.message for f in found]
