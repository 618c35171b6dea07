"""Gaussian beams along a path, and power, against published formulas and sympy.

References: S. A. Self, "Focusing of spherical Gaussian beams", Applied Optics 22, 658
(1983) (thin-lens waist position and magnification); H. Kogelnik and T. Li, Applied
Optics 5, 1550 (1966) (w(z), z_R, the ABCD law); ISO 11146-1:2005, the standard's first
edition (M^2 beams as embedded Gaussians, W(z)^2 = W0^2 + (M^2 lambda/(pi W0))^2 z^2; from
memory);
`sympy.physics.optics.gaussopt` (`FreeSpace`, `ThinLens`, `BeamParameter` with n = 1 and
a float z_r) as an independent numeric reference; A. E. Siegman, "Lasers" (1986), ch. 11
(build-up of a passive cavity on resonance; from memory).  Expected values are derived
from these formulas and computed here (the digits written beside a check are what the
computation gives; no source prints them) or are sympy's result, never taken from
benchcheck.
"""

from __future__ import annotations

import math

import pytest
from sympy.physics.optics import BeamParameter, FreeSpace, ThinLens

import refphysics as ref
from layouts_util import (
    beam, beam_entry, cavity, cavity_entry, hit, layout, mirror, optic, rel, solved, source, waists,
)

WL_NM = 1064.0
WL = WL_NM * ref.NM
REL = 1e-6
PLANES = ("t", "s")
START = [1000.0, 10000.0]


def printed(value: str, scale: float = 1.0):
    """pytest.approx to half a unit in the last printed digit of ``value``."""
    decimals = len(value.split(".")[1]) if "." in value else 0
    return pytest.approx(float(value) * scale, abs=0.5 * 10.0 ** (-decimals) * scale)


def straight_beam(elements: list[tuple[str, float]], extra_optics: list[str], wavelength_nm=WL_NM, **src) -> str:
    """A source at START heading +x, then ``elements`` = [(id, distance from the previous)]."""
    return layout(
        *extra_optics,
        source("S", at=START, heading=0.0, wavelength_nm=wavelength_nm, power_w=1.0, **src),
        beam("b", "S", [rel(i, dist) for i, dist in elements]),
    )


def later_waist(entry: dict, plane: str, after: float) -> dict:
    (w,) = [w for w in waists(entry, plane) if w["s_mm"] > after + 1e-6]
    return w


# --- free propagation ---------------------------------------------------------------------

def test_free_propagation_check_values():
    """w0 = 100 um at 1064 nm: z_R = 29.526247 mm; w(z_R) = 141.4214 um; w(100 mm) = 353.13639
    um (derived from Kogelnik & Li 1966, w(z) = w0 sqrt(1 + (z/z_R)^2), computed here;
    sympy `BeamParameter`'s result agrees)."""
    w0 = 0.1
    z_r = ref.rayleigh(w0, WL)
    assert z_r == printed("29.526247")
    assert ref.w_at(w0, z_r, z_r) * 1e3 == printed("141.4214")
    assert ref.w_at(w0, 100.0, z_r) * 1e3 == printed("353.13639")
    bp = BeamParameter(WL, 100.0, z_r=z_r)
    assert float(bp.w) * 1e3 == printed("353.13639")
    text = straight_beam([("A1", z_r), ("A2", 100.0 - z_r), ("D1", 50.0)],
                         [optic("A1", "aperture", diameter=25.0), optic("A2", "aperture", diameter=25.0),
                          optic("D1", "dump")], waist=w0)
    b = beam_entry(solved(text))
    for p in PLANES:
        assert hit(b, "A1")["w_um"][p] == printed("141.4214")
        assert hit(b, "A2")["w_um"][p] == pytest.approx(353.13639, rel=REL)
        assert hit(b, "D1")["w_um"][p] == pytest.approx(ref.w_at(w0, 150.0, z_r) * 1e3, rel=REL)
        (wst,) = waists(b, p)
        assert wst["s_mm"] == pytest.approx(0.0, abs=1e-9)
        assert wst["w_um"] == pytest.approx(100.0, rel=REL)


def test_m2_beam_rayleigh_range_and_divergence():
    """w0 = 100 um, M^2 = 1.5 at 1064 nm: z_R = pi w0^2/(M^2 lambda) = 19.684164 mm and the
    far-field half-angle M^2 lambda/(pi w0) = 5.080226 mrad (derived from the ISO 11146-1:2005
    embedded Gaussian, from memory, and Kogelnik & Li 1966; computed here): w(z_R) = sqrt(2) w0 and w(z)^2 = w0^2 + (theta z)^2."""
    w0, m2 = 0.1, 1.5
    z_r = ref.rayleigh(w0, WL, m2)
    theta = m2 * WL / (math.pi * w0)
    assert z_r == printed("19.684164")
    assert theta * 1e3 == printed("5.080226")
    far = 10_000.0
    text = straight_beam([("A1", z_r), ("A2", far - z_r), ("D1", 10.0)],
                         [optic("A1", "aperture", diameter=25.0), optic("A2", "aperture", diameter=250.0),
                          optic("D1", "dump")], waist=w0, m2=m2)
    b = beam_entry(solved(text))
    for p in PLANES:
        assert hit(b, "A1")["w_um"][p] == pytest.approx(math.sqrt(2) * 100.0, rel=REL)
        assert hit(b, "A2")["w_um"][p] == pytest.approx(math.sqrt(w0**2 + (theta * far) ** 2) * 1e3, rel=REL)


def test_rayleigh_range_inside_a_medium():
    """Inside index n the Rayleigh range is n times the air value, z_R = pi n w0^2/lambda0
    (Kogelnik & Li 1966): 51.966194 mm for w0 = 100 um, n = 1.76 (computed here).  A source focuses to a
    waist on the entrance face of a long normal-cut crystal; at the crystal's centre,
    z_R(n) inside, the radius is sqrt(2) w0."""
    w0, n = 0.1, 1.76
    z_rn = ref.rayleigh(w0, WL, n=n)
    assert z_rn == printed("51.966194")
    length = 2 * z_rn
    face = 48.0
    text = straight_beam([("X1", face + length / 2), ("D1", length / 2 + 20.0)],
                         [optic("X1", "crystal", length=length, index=n), optic("D1", "dump")],
                         waist=w0, waist_at=face)
    b = beam_entry(solved(text))
    for p in PLANES:
        assert hit(b, "X1")["w_um"][p] == pytest.approx(math.sqrt(2) * 100.0, rel=REL)
        (wst,) = waists(b, p)
        assert wst["s_mm"] == pytest.approx(face, rel=REL)
        assert wst["w_um"] == pytest.approx(100.0, rel=REL)


# --- thin-lens focusing: Self 1983 ------------------------------------------------------

SELF_CASES = [
    # (w0 mm, waist_at mm, lens distance from the source mm, f mm, M^2)
    (0.5, 50.0, 50.0, 100.0, 1.0),      # s = 0: waist on the lens
    (0.5, 0.0, 100.0, 100.0, 1.0),      # s = f: s' = f exactly
    (0.5, 0.0, 200.0, 100.0, 1.0),
    (0.5, -100.0, 300.0, 100.0, 1.0),   # virtual waist behind the source: s = 400
    (0.1, 0.0, 50.0, 100.0, 1.0),       # z_R = 29.5 mm < f
    (0.1, 0.0, 300.0, 100.0, 1.0),      # far object: near-geometric imaging
    (0.1, 20.0, 150.0, 75.0, 1.0),
    (0.3, 0.0, 250.0, 200.0, 1.4),      # M^2 beam: z_R = pi w0^2/(M^2 lambda)
    (1.0, 0.0, 10.0, 500.0, 2.0),
]


@pytest.mark.parametrize("w0, waist_at, dist, f, m2", SELF_CASES)
def test_self_1983_thin_lens_focusing(w0, waist_at, dist, f, m2):
    """Self 1983, eqs. (9)-(10): the output waist lies s' after the lens,
    s'/f = 1 + (s/f - 1)/((s/f - 1)^2 + (z_R/f)^2), with radius m w0,
    m = 1/sqrt((1 - s/f)^2 + (z_R/f)^2); s is the input waist's distance before the lens.
    For M^2 > 1 the embedded Gaussian follows the same law with z_R = pi w0^2/(M^2 lambda)."""
    s = dist - waist_at
    z_r = ref.rayleigh(w0, WL, m2)
    s_out, mag = ref.self_focus(s, z_r, f)
    tail = abs(s_out) + 100.0
    text = straight_beam([("L1", dist), ("D1", tail)], [optic("L1", "lens", focal_length=f), optic("D1", "dump")],
                         waist=w0, waist_at=waist_at, m2=m2)
    b = beam_entry(solved(text))
    for p in PLANES:
        assert hit(b, "L1")["w_um"][p] == pytest.approx(ref.w_at(w0, s, z_r) * 1e3, rel=REL)
        if s_out < 0:
            # a virtual output waist (Self 1983, s' < 0): none after the lens; at the dump the
            # radius is m w0 sqrt(1 + ((tail - s')/z_R')^2) with z_R' = m^2 z_R
            assert [w for w in waists(b, p) if w["s_mm"] > dist + 1e-6] == []
            assert hit(b, "D1")["w_um"][p] == pytest.approx(
                ref.w_at(mag * w0, tail - s_out, mag * mag * z_r) * 1e3, rel=REL)
            continue
        out = later_waist(b, p, dist)
        assert out["s_mm"] == pytest.approx(dist + s_out, rel=REL)
        assert out["w_um"] == pytest.approx(mag * w0 * 1e3, rel=REL)
        if 0 <= waist_at <= dist:
            (inp,) = [w for w in waists(b, p) if w["s_mm"] <= dist + 1e-9 and w["s_mm"] != out["s_mm"]]
            assert inp["s_mm"] == pytest.approx(waist_at, abs=1e-6)
            assert inp["w_um"] == pytest.approx(w0 * 1e3, rel=REL)


def test_self_1983_s_equals_f_images_to_f():
    """Self 1983: an input waist at the front focal plane (s = f) is imaged to the back focal
    plane (s' = f) whatever z_R is."""
    for z_r in (1.0, 100.0, 1e4):
        assert ref.self_focus(100.0, z_r, 100.0)[0] == pytest.approx(100.0, rel=1e-12)


def test_collimated_beam_into_a_lens_check_values():
    """A collimated beam, w = 1 mm at the lens (1064 nm), into f = 100 mm: the waist lies
    99.885426 mm after the lens with w0' = 33.848764 um (derived from Self 1983 with s = 0,
    computed here by refphysics.self_focus).  The
    far-field estimate lambda f/(pi w) = 33.868 um is 0.06 % off, so the exact law is in use."""
    s_out, mag = ref.self_focus(0.0, ref.rayleigh(1.0, WL), 100.0)
    assert s_out == printed("99.885426")
    assert mag * 1e3 == printed("33.848764")
    text = straight_beam([("L1", 30.0), ("D1", 200.0)], [optic("L1", "lens", focal_length=100.0), optic("D1", "dump")],
                         waist=1.0, waist_at=30.0)
    b = beam_entry(solved(text))
    approx_far_field = WL * 100.0 / (math.pi * 1.0) * 1e3
    assert approx_far_field == pytest.approx(33.868, abs=5e-4)
    for p in PLANES:
        out = later_waist(b, p, 30.0)
        assert out["s_mm"] - 30.0 == pytest.approx(99.885426, abs=1e-5)
        assert out["w_um"] == pytest.approx(33.848764, rel=REL)
        assert abs(out["w_um"] - approx_far_field) / approx_far_field > 5e-4


# --- a chain of lenses against sympy -------------------------------------------------------

CHAIN = [("L1", 80.0, 100.0), ("L2", 120.0, -50.0), ("L3", 150.0, 200.0), ("L4", 200.0, 75.0)]


def sympy_chain(w0: float, waist_at: float, wl: float, elements, tail: float):
    """Radius at every element and every waist in the spaces after them, by sympy
    gaussopt: q = z + i z_R with z the distance past the waist (``BeamParameter``, n = 1,
    float z_r), `FreeSpace` and `ThinLens` applied in turn."""
    q = BeamParameter(wl, -waist_at, z_r=ref.rayleigh(w0, wl))
    s = 0.0
    radii, found = {}, []

    def waist_in(q, s0, length):
        z = float(q.z)
        if -z >= 0 and -z <= length:
            found.append((s0 - z, float(q.w_0)))

    for ident, dist, f in elements:
        waist_in(q, s, dist)
        q = FreeSpace(dist) * q
        s += dist
        radii[ident] = float(q.w)
        q = ThinLens(f) * q
    waist_in(q, s, tail)
    q = FreeSpace(tail) * q
    radii["D1"] = float(q.w)
    return radii, found


@pytest.mark.parametrize("w0, waist_at, m2, wavelength_nm", [
    (0.3, -50.0, 1.0, 1064.0),
    (0.3, 40.0, 1.0, 633.0),
    (0.2, 0.0, 1.3, 1064.0),
])
def test_lens_chain_against_sympy(w0, waist_at, m2, wavelength_nm):
    """Four thin lenses (f = 100, -50, 200, 75 mm) after a source: the radius at every lens
    and the waists between them agree with sympy gaussopt.  For M^2 > 1 the embedded
    Gaussian is a Gaussian of wavelength M^2 lambda (ISO 11146-1:2005, from memory)."""
    wl = wavelength_nm * ref.NM
    tail = 400.0
    optics = [optic(i, "lens", focal_length=f) for i, _, f in CHAIN] + [optic("D1", "dump")]
    text = straight_beam([(i, d) for i, d, _ in CHAIN] + [("D1", tail)], optics, wavelength_nm,
                         waist=w0, waist_at=waist_at, m2=m2)
    b = beam_entry(solved(text))
    radii, found = sympy_chain(w0, waist_at, m2 * wl, CHAIN, tail)
    assert len(found) >= 2
    for p in PLANES:
        for ident, w in radii.items():
            assert hit(b, ident)["w_um"][p] == pytest.approx(w * 1e3, rel=REL), ident
        got = [(w["s_mm"], w["w_um"]) for w in waists(b, p)]
        assert len(got) == len(found)
        for (s_got, w_got), (s_ref, w_ref) in zip(got, sorted(found)):
            assert s_got == pytest.approx(s_ref, rel=REL, abs=1e-6)
            assert w_got == pytest.approx(w_ref * 1e3, rel=REL)


def test_astigmatic_source_planes_are_independent():
    """A source with waist_t != waist_s: each plane follows its own Gaussian (Kogelnik & Li
    1966 in each plane of a simple astigmatic beam); sympy gives each plane's radius."""
    wt, ws = 0.4, 0.15
    optics = [optic(i, "lens", focal_length=f) for i, _, f in CHAIN] + [optic("D1", "dump")]
    text = straight_beam([(i, d) for i, d, _ in CHAIN] + [("D1", 300.0)], optics,
                         waist_t=wt, waist_s=ws, waist_at=10.0)
    b = beam_entry(solved(text))
    for p, w0 in (("t", wt), ("s", ws)):
        radii, _ = sympy_chain(w0, 10.0, WL, CHAIN, 300.0)
        for ident, w in radii.items():
            assert hit(b, ident)["w_um"][p] == pytest.approx(w * 1e3, rel=REL), ident


# --- power along a beam ---------------------------------------------------------------------

def test_power_through_mirrors_splitters_and_a_lens():
    """Common practice (energy conservation): the power reaching each optic is the source
    power times the fraction each earlier optic passes on: R for a reflection, 1 - R - A
    for a transmission through a splitter, 1 - A through an absorbing lens."""
    p0 = 10.0
    optics = [
        mirror("M1", None, reflectivity={"1064": 0.99, "532": 0.2}),
        optic("BS1", "splitter", reflectivity=0.3, absorption=0.01, fold=90.0),
        optic("L1", "lens", focal_length=500.0, absorption=0.02),
        mirror("M2", None, reflectivity=0.95),
        optic("BS2", "splitter", reflectivity=0.2),
        optic("PM", "detector"),
    ]
    text = layout(
        *optics,
        source("S", at=START, heading=0.0, wavelength_nm=WL_NM, power_w=p0, waist=0.5),
        beam("b", "S", [rel("M1", 100.0, 90.0), rel("BS1", 100.0), rel("L1", 50.0), rel("M2", 100.0, -90.0),
                        rel("BS2", 100.0, 90.0), rel("PM", 100.0)]),
    )
    b = beam_entry(solved(text))
    expected = {"M1": p0}
    expected["BS1"] = expected["M1"] * 0.99
    expected["L1"] = expected["BS1"] * (1 - 0.3 - 0.01)
    expected["M2"] = expected["L1"] * (1 - 0.02)
    expected["BS2"] = expected["M2"] * 0.95
    expected["PM"] = expected["BS2"] * 0.2
    assert b["power_w"] == pytest.approx(p0)
    for ident, power in expected.items():
        assert hit(b, ident)["power_w"] == pytest.approx(power, rel=1e-8), ident
    assert expected["PM"] == pytest.approx(10 * 0.99 * 0.69 * 0.98 * 0.95 * 0.2, rel=1e-12)


def test_peak_intensity_on_the_beam():
    """Peak intensity of a Gaussian, I0 = 2P/(pi w^2), from integrating the profile
    I0 exp(-2 r^2/w^2) of Kogelnik & Li 1966: 1 W in w = 1 mm is 63.661977 W/cm^2 (computed
    here).  A round 1 mm waist on a detector."""
    assert 2 * 1.0 / (math.pi * 0.1**2) == printed("63.661977")
    text = straight_beam([("PM", 1e-3)], [optic("PM", "detector")], waist=1.0, waist_at=1e-3)
    b = beam_entry(solved(text))
    assert hit(b, "PM")["peak_w_cm2"] == printed("63.661977")


# --- cavities: power ----------------------------------------------------------------------

@pytest.mark.parametrize("r_in, r_end, loss, expected", [
    (0.99, 1.0, 0.01, "100.000"),     # impedance matched: build-up 1/T_in
    (0.99, 0.999, 0.0, "329.35803"),
    (0.99, 0.99, 0.0, "100.000"),
])
def test_passive_linear_cavity_buildup(r_in, r_end, loss, expected):
    """On resonance P_circ/P_in = T_in/(1 - sqrt(R_in R_rest (1 - loss)))^2 (Siegman, Lasers,
    ch. 11, from memory; the field sum E_c = t1 E_in/(1 - r1 r_rest)); check values derived
    from it and computed here by refphysics.buildup: T1 = 1 %, R2 = 1, loss 1 % -> 100;
    R2 = 0.999 -> 329.35803."""
    p_in = 2.0
    gain = ref.buildup(1 - r_in, r_in, r_end, loss)
    assert gain == printed(expected)
    extra = {"loss": loss} if loss else {}
    text = layout(
        mirror("IC", 1000.0, at=START, reflectivity=r_in),
        mirror("M2", 1000.0, reflectivity=r_end),
        cavity("cav", "linear", ["IC", rel("M2", 300.0)], WL_NM, heading=0.0,
               input_coupler="IC", input_power_w=p_in, **extra),
    )
    c = cavity_entry(solved(text))
    assert c["circulating_w"] == pytest.approx(gain * p_in, rel=REL)
    for h in c["hits"]:
        assert h["power_w"] == pytest.approx(gain * p_in, rel=REL)


def test_impedance_matched_cavity_transmits_everything():
    """R1 = R2 = 0.99, lossless: build-up 100 and the power through M2, P_circ T2, equals the
    input power (Siegman ch. 11, from memory)."""
    text = layout(
        mirror("IC", 1000.0, at=START, reflectivity=0.99),
        mirror("M2", 1000.0, reflectivity=0.99),
        optic("PM", "detector"),
        cavity("cav", "linear", ["IC", rel("M2", 300.0)], WL_NM, heading=0.0,
               input_coupler="IC", input_power_w=3.0, output_coupler="M2"),
        beam("tr", "cav", [rel("PM", 100.0)]),
    )
    t = solved(text)
    assert cavity_entry(t)["circulating_w"] == pytest.approx(300.0, rel=REL)
    assert beam_entry(t)["power_w"] == pytest.approx(3.0, rel=REL)
    assert hit(beam_entry(t), "PM")["power_w"] == pytest.approx(3.0, rel=REL)


def test_fold_mirror_loss_counts_twice_in_a_linear_cavity():
    """A fold mirror of a linear cavity is met twice per round trip (docs/design.md §4; Siegman
    ch. 11): R_rest = R_fold^2 R_end in the build-up formula."""
    text = layout(
        mirror("IC", 1000.0, at=START, reflectivity=0.99),
        mirror("FM", None, reflectivity=0.998),
        mirror("M2", 1000.0, reflectivity=0.999),
        cavity("cav", "linear", ["IC", rel("FM", 150.0, 90.0), rel("M2", 150.0)], WL_NM, heading=0.0,
               input_coupler="IC", input_power_w=1.0),
    )
    c = cavity_entry(solved(text))
    assert c["circulating_w"] == pytest.approx(ref.buildup(0.01, 0.99, 0.998**2 * 0.999), rel=REL)


def test_bow_tie_buildup_check_value():
    """Ring: T1 = 0.5 %, three mirrors R = 0.9999 and a crystal with 0.2 % single-pass loss give
    a build-up of 375.18157 (Siegman ch. 11 formula, from memory, computed here; each element
    met once)."""
    gain = ref.buildup(0.005, 0.995, 0.9999**3 * 0.998)
    assert gain == printed("375.18157")
    text = layout(
        mirror("IC", None, at=[300.0, 100.0], reflectivity=0.995),
        mirror("M2", None, at=[600.0, 100.0], reflectivity=0.9999),
        mirror("M3", 100.0, at=[350.0, 130.0], reflectivity=0.9999),
        optic("X1", "crystal", at=[405.0, 130.0], length=10.0, index=1.5, absorption=0.002),
        mirror("M4", 100.0, at=[460.0, 130.0], reflectivity=0.9999),
        cavity("enh", "ring", ["IC", "M2", "M3", "X1", "M4"], 1030.0, input_coupler="IC", input_power_w=2.0),
    )
    c = cavity_entry(solved(text))
    assert c["circulating_w"] == pytest.approx(2.0 * gain, rel=REL)


@pytest.mark.parametrize("refl, absorption, expected", [(0.98, None, 250.0), (0.97, 0.01, 250.0), (0.95, None, 100.0)])
def test_active_cavity_circulating_power(refl, absorption, expected):
    """Laser cavity: one-way circulating power at the output coupler is P_out/T_oc
    (Siegman ch. 11, from memory); 5 W through T = 2 % is 250 W.  T = 1 - R - A.  The
    output beam carries P_out."""
    text = layout(
        mirror("HR", 300.0, at=START),
        mirror("OC", None, reflectivity=refl, absorption=absorption),
        optic("PM", "detector"),
        cavity("cav", "linear", ["HR", rel("OC", 200.0)], WL_NM, heading=0.0, output_coupler="OC", output_power_w=5.0),
        beam("out", "cav", [rel("PM", 100.0)]),
    )
    t = solved(text)
    c = cavity_entry(t)
    assert c["circulating_w"] == pytest.approx(expected, rel=1e-9)
    assert hit(c, "OC")["power_w"] == pytest.approx(expected, rel=1e-9)
    assert beam_entry(t)["power_w"] == pytest.approx(5.0, rel=1e-9)


def test_active_cavity_output_beam_leaves_from_the_mode():
    """Flat OC of a flat/concave cavity (R = 300, d = 200): the output beam starts at the
    mode's waist on the flat mirror, w0 from Kogelnik & Li 1966, and spreads as
    w0 sqrt(1 + (z/z_R)^2) with no substrate."""
    text = layout(
        mirror("HR", 300.0, at=START),
        mirror("OC", None, reflectivity=0.95),
        optic("PM", "detector"),
        cavity("cav", "linear", ["HR", rel("OC", 200.0)], WL_NM, heading=0.0, output_coupler="OC", output_power_w=1.0),
        beam("out", "cav", [rel("PM", 450.0)]),
    )
    k = ref.two_mirror(300.0, None, 200.0, WL)
    assert k["t1"] == pytest.approx(200.0)
    b = beam_entry(solved(text))
    for p in PLANES:
        assert hit(b, "PM")["w_um"][p] == pytest.approx(ref.w_at(k["w0"], 450.0, k["z_r"]) * 1e3, rel=REL)


def test_output_beam_when_the_output_coupler_starts_the_path():
    """Same cavity listed from the flat OC: the output beam leaves the other way, still from
    the waist on the flat mirror (Kogelnik & Li 1966), w(z) = w0 sqrt(1 + (z/z_R)^2)."""
    text = layout(
        mirror("OC", None, at=START, reflectivity=0.95),
        mirror("HR", 300.0),
        optic("PM", "detector"),
        cavity("cav", "linear", ["OC", rel("HR", 200.0)], WL_NM, heading=0.0, output_coupler="OC", output_power_w=1.0),
        beam("out", "cav", [rel("PM", 450.0)]),
    )
    k = ref.two_mirror(None, 300.0, 200.0, WL)
    assert k["t1"] == pytest.approx(0.0, abs=1e-12)
    t = solved(text)
    b = beam_entry(t)
    assert t["geometry"] == []
    for p in PLANES:
        assert hit(b, "PM")["w_um"][p] == pytest.approx(ref.w_at(k["w0"], 450.0, k["z_r"]) * 1e3, rel=REL)
    assert b["power_w"] == pytest.approx(1.0, rel=1e-9)


def test_single_shot_source_reports_peak_fluence():
    """A pulse with energy but no repetition rate: peak fluence 2E/(pi w^2) (derived
    from the Gaussian profile, E = F0 pi w^2 / 2, computed here), here E = 1 mJ,
    w = 0.5 mm -> 0.2546479 J/cm^2 at the source waist, and half of it after a 50 % splitter passed in transmission."""
    text = layout(
        optic("BS", "splitter", at=[200.0, 500.0], reflectivity=0.5, fold=90.0),
        optic("D", "dump", at=[300.0, 500.0]),
        source("S", at=[100.0, 500.0], heading=0.0, wavelength_nm=1064.0, waist=0.5, waist_at=100.0,
               pulse_energy_j=1e-3, pulse_s=10e-9),
        beam("b", "S", ["BS", "D"]),
        size=(1000.0, 1000.0),
    )
    b = beam_entry(solved(text))
    assert hit(b, "BS")["peak_j_cm2"] == pytest.approx(2 * 1e-3 / (math.pi * 0.05**2), rel=1e-6)   # 0.2546479
    assert hit(b, "BS")["power_w"] is None
    z_r = ref.rayleigh(0.5, 1064e-6)
    w_d = ref.w_at(0.5, 100.0, z_r)
    assert hit(b, "D")["peak_j_cm2"] == pytest.approx(2 * 0.5e-3 / (math.pi * (w_d / 10) ** 2), rel=1e-6)
