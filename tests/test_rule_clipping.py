"""aperture-clipping and the clipping numerics (``benchcheck.clipping``).

Outside references, each worked out here independently of benchcheck:

- a round Gaussian through a centred circular aperture: T = 1 - exp(-2 a^2 / w^2)
  (Siegman, "Lasers" (1986), ch. 17, from memory); the trade's check points: an aperture
  of diameter pi w passes about 99 %, exactly 99 % at a = 1.5174 w and 99.9 % at
  a = 1.8585 w (common practice; Siegman section 17.1, from memory);
- an elliptical beam (w_x = 1, w_y = 2) through circles of radius 1, 2, pi passes
  0.590095, 0.945455, 0.998029 (derived: the 1-D integral of the erf of the chord,
  cross-checked by a 2-D quadrature);
- any elliptical case: ``scipy.integrate.dblquad`` of the normalised Gaussian over the
  ellipse, written here from the definition of the 1/e^2 radius;
- a straight edge: the power beyond it is the tail of a normal distribution with
  sigma = w/2 (the Gaussian exp(-2 x^2/w^2)), ``scipy.stats.norm.sf``;
- a tilted aperture is the geometry of projection: a circle of diameter D seen at angle
  theta is an ellipse D cos(theta) x D; equivalently the beam's footprint on the surface
  grows by 1/cos(theta) in the plane of incidence (1.082392, 1.414214, 2 at 22.5, 45,
  60 degrees);
- mode sizes from Kogelnik & Li, Applied Optics 5, 1550 (1966): w(z) = w0 sqrt(1 +
  (z/z_R)^2) and the two-mirror closed forms (``refphysics``).
"""

from __future__ import annotations

import itertools
import math
import re

import numpy as np
import pytest
from scipy import integrate, special, stats

import refphysics as ref
from benchcheck import solve_text
from benchcheck.clipping import (
    diameter_for_loss, edge_clip_fraction, elliptical_loss, elliptical_transmission, round_loss,
    round_transmission,
)
from benchcheck.config import Config
from benchcheck.engine import run_rules
from benchcheck.findings import ERROR, WARNING, Bench
from benchcheck.plugins import RuleSet, load_rules
from layouts_util import beam, cavity, layout, mirror, optic, rel, source

WL_NM = 1064.0
WL = WL_NM * ref.NM
RULE_ID = "aperture-clipping"
RULE = load_rules(entry_points=False).rules[RULE_ID][0]


def printed(value: str):
    """pytest.approx to half a unit in the last printed digit of ``value``."""
    decimals = len(value.split(".")[1]) if "." in value else 0
    return pytest.approx(float(value), abs=0.5 * 10.0 ** (-decimals))


def scipy_transmission(w_x, w_y, a_x, a_y) -> float:
    """T by 2-D quadrature of (2 / (pi w_x w_y)) exp(-2 x^2/w_x^2 - 2 y^2/w_y^2) over the
    ellipse x^2/a_x^2 + y^2/a_y^2 <= 1 (the 1/e^2 radius definition; ISO 11146-1:2005 for a
    Gaussian, from memory)."""
    def density(x, y):
        return 2.0 / (math.pi * w_x * w_y) * math.exp(-2.0 * x * x / (w_x * w_x) - 2.0 * y * y / (w_y * w_y))

    def half_chord(y):
        return a_x * math.sqrt(max(0.0, 1.0 - (y / a_y) ** 2))

    value, _ = integrate.dblquad(density, -a_y, a_y, lambda y: -half_chord(y), half_chord,
                                 epsabs=1e-13, epsrel=1e-12)
    return value


# --- numerics against the references ------------------------------------------------------

@pytest.mark.parametrize("a, expected", [
    (1.0, "0.864665"), (1.5, "0.988891"), (math.pi / 2.0, "0.992808"), (2.0, "0.999665"),
])
def test_round_beam_through_a_circle_matches_the_closed_form_check_values(a, expected):
    # derived from Siegman 1986 ch. 17 (from memory): T = 1 - exp(-2 a^2 / w^2), w = 1,
    # computed here
    assert 1.0 - math.exp(-2.0 * a * a) == printed(expected)
    assert float(round_transmission(1.0, a)) == printed(expected)
    assert elliptical_transmission(1.0, 1.0, a, a) == printed(expected)
    # the quadrature agrees with the closed form far beyond the printed digits
    assert elliptical_loss(1.0, 1.0, a, a) == pytest.approx(math.exp(-2.0 * a * a), rel=1e-12)
    assert float(round_loss(1.0, a)) == pytest.approx(math.exp(-2.0 * a * a), rel=1e-15)


def test_the_pi_w_design_criterion_passes_about_99_percent():
    # common practice (Siegman section 17.1, from memory): D = pi w passes 99.28 %
    assert elliptical_transmission(1.0, 1.0, math.pi / 2.0, math.pi / 2.0) == printed("0.9928")


@pytest.mark.parametrize("loss, radius", [(1e-2, "1.5174"), (1e-3, "1.8585")])
def test_the_aperture_for_a_given_loss_is_the_trade_s_figure(loss, radius):
    # common practice: exactly 99 % at a = 1.5174 w, 99.9 % at a = 1.8585 w (and derived:
    # the inverse of T = 1 - exp(-2 a^2/w^2), computed here)
    assert math.sqrt(0.5 * math.log(1.0 / loss)) == printed(radius)
    assert diameter_for_loss(1.0, 1.0, loss) / 2.0 == printed(radius)
    # and the closed-form inverse a = w sqrt(ln(1/L)/2) of Siegman's T = 1 - exp(-2a^2/w^2)
    assert diameter_for_loss(0.7, 0.7, loss) == pytest.approx(2.0 * 0.7 * math.sqrt(0.5 * math.log(1.0 / loss)),
                                                              rel=1e-8)


@pytest.mark.parametrize("a, expected", [(1.0, "0.590095"), (2.0, "0.945455"), (math.pi, "0.998029")])
def test_elliptical_beam_through_a_circle_matches_the_derived_check_values(a, expected):
    assert elliptical_transmission(1.0, 2.0, a, a) == printed(expected)
    assert elliptical_transmission(2.0, 1.0, a, a) == printed(expected)      # either axis
    assert scipy_transmission(1.0, 2.0, a, a) == printed(expected)           # the check values themselves


@pytest.mark.parametrize("w_x, w_y, a_x, a_y", [
    (1.0, 2.0, 1.0, 1.0),
    (1.0, 1.0, 0.7071, 1.0),       # a circle seen at 45 degrees
    (0.3, 1.7, 0.9, 0.5),
    (2.0, 0.5, 3.0, 0.4),
    (1.0, 1.0, 0.2, 3.0),          # a narrow slit-like aperture
    (0.05, 1.0, 1.0, 0.9),         # a narrow beam in x
    (1.0, 1.0, 2.5, 2.2),          # a small loss, ~1e-4
    (1.0, 3.0, 2.6, 9.0),
])
def test_elliptical_apertures_match_scipy_dblquad(w_x, w_y, a_x, a_y):
    expected = scipy_transmission(w_x, w_y, a_x, a_y)
    assert elliptical_transmission(w_x, w_y, a_x, a_y) == pytest.approx(expected, abs=1e-9)
    # the loss itself, which the rule reports, to the same absolute accuracy
    assert elliptical_loss(w_x, w_y, a_x, a_y) == pytest.approx(1.0 - expected, abs=1e-9)


RHOS = (0.05, 0.3, 1.0, 2.0, 4.0, 8.0, 20.0, 100.0, 1000.0)


def test_the_quadrature_converges_over_every_aperture_to_beam_ratio():
    # the same loss integral in phi (y = a_y sin phi), integrated adaptively by
    # scipy.integrate.quad to 1e-13: the fixed Gauss-Legendre rule and its window must
    # agree from a slit (a/w = 1000 in one axis) to a pinhole (0.05) in either axis
    def quad_loss(rho_x, rho_y):
        def f(phi):
            return (math.cos(phi) * math.exp(-2.0 * (rho_y * math.sin(phi)) ** 2)
                    * special.erfc(math.sqrt(2.0) * rho_x * math.cos(phi)))
        body, _ = integrate.quad(f, 0.0, math.pi / 2.0, epsabs=0.0, epsrel=1e-13, limit=1000)
        return special.erfc(math.sqrt(2.0) * rho_y) + 2.0 * math.sqrt(2.0 / math.pi) * rho_y * body

    for rho_x, rho_y in itertools.product(RHOS, RHOS):
        expected = quad_loss(rho_x, rho_y)
        assert elliptical_loss(1.0, 1.0, rho_x, rho_y) == pytest.approx(expected, rel=1e-11, abs=1e-300)


@pytest.mark.parametrize("rho", [0.3, 1.0, 2.0])
def test_a_very_wide_aperture_is_a_slit(rho):
    # a_x >> w_x: only |y| <= a_y matters, the two normal tails beyond +-a_y
    # (sigma = w/2): 2 norm.sf(2 a_y / w_y)
    slit = 2.0 * stats.norm.sf(2.0 * rho)
    assert elliptical_loss(1.0, 1.0, math.inf, rho) == pytest.approx(slit, rel=1e-12)
    assert elliptical_loss(1.0, 1.0, 1e4, rho) == pytest.approx(slit, abs=1e-8)
    assert elliptical_loss(1.0, 1.0, rho, 1e4) == pytest.approx(slit, abs=1e-8)


def test_small_losses_keep_their_relative_precision():
    # round case far out in the tail: exp(-2 a^2/w^2) to 1e-10 relative, where 1 - T
    # would have lost every digit
    for a in (3.0, 4.0, 5.0):
        assert elliptical_loss(1.0, 1.0, a, a) == pytest.approx(math.exp(-2.0 * a * a), rel=1e-10)
    assert elliptical_loss(1.0, 1.0, 0.0, 1.0) == 1.0
    assert elliptical_loss(0.0, 1.0, 1.0, 1.0) == 0.0


@pytest.mark.parametrize("theta_deg, factor", [(22.5, "1.082392"), (45.0, "1.414214"), (60.0, "2.000000")])
def test_a_tilted_aperture_is_the_footprint_grown_by_one_over_cos(theta_deg, factor):
    # the footprint factor 1/cos(theta) (geometry of projection)
    c = math.cos(math.radians(theta_deg))
    assert 1.0 / c == printed(factor)
    # shrinking the aperture by cos(theta) in one axis is the same as growing the beam
    # by 1/cos(theta) there: the loss is a function of a/w per axis
    assert elliptical_loss(0.8, 0.8, 1.0 * c, 1.0) == pytest.approx(
        1.0 - scipy_transmission(0.8 / c, 0.8, 1.0, 1.0), abs=1e-9)


@pytest.mark.parametrize("delta, w", [(0.0, 1.0), (0.5, 1.0), (1.0, 0.8), (-0.3, 1.0), (2.0, 1.0)])
def test_edge_clip_is_the_normal_tail_beyond_the_edge(delta, w):
    # the intensity exp(-2 x^2/w^2) is a normal density with sigma = w/2
    assert float(edge_clip_fraction(delta, w)) == pytest.approx(stats.norm.sf(delta / (w / 2.0)), rel=1e-12)


def test_edge_clip_broadcasts():
    got = edge_clip_fraction(np.array([0.0, 1.0]), 1.0)
    assert got.shape == (2,)
    assert got[0] == pytest.approx(0.5)


def test_diameter_for_loss_of_an_elliptical_tilted_view_gives_the_loss_asked_for():
    d = diameter_for_loss(0.5, 1.2, 1e-3, squeeze_x=math.cos(math.radians(40.0)))
    got = 1.0 - scipy_transmission(0.5, 1.2, d / 2.0 * math.cos(math.radians(40.0)), d / 2.0)
    assert got == pytest.approx(1e-3, rel=1e-5)


# --- the rule on small layouts -----------------------------------------------------------

def run(text: str, **options):
    sol = solve_text(text)
    bench = Bench(sol.layout, sol, Config().limits)
    opts = RULE.defaults()
    opts.update(options)
    return list(RULE.check(bench, opts))


def number_after(text: str, key: str) -> float:
    m = re.search(re.escape(key) + r"\s*(-?[0-9.]+(?:e[-+]?[0-9]+)?)", text)
    assert m, f"{key!r} not in {text!r}"
    return float(m.group(1))


def line(*optics, waist=1.0, waist_t=None, waist_s=None, to_first=100.0, path=None, power_w=1.0):
    """Source at (0, 500) heading +x with its waist on the first optic (100 mm on), so the
    radius there is exactly the waist (Kogelnik & Li 1966)."""
    waists = dict(waist=waist) if waist_t is None else dict(waist_t=waist_t, waist_s=waist_s)
    return layout(
        source("S", at=[0.0, 500.0], heading=0.0, wavelength_nm=WL_NM, power_w=power_w, waist_at=to_first,
               **waists),
        *optics,
        beam("b", "S", path),
        size=(2000.0, 2000.0),
    )


@pytest.mark.parametrize("diameter, severity", [(2.0, ERROR), (math.pi, WARNING), (4.0, None)])
def test_an_aperture_on_the_waist_loses_the_closed_form_fraction(diameter, severity):
    text = line(optic("A", "aperture", at=[100.0, 500.0], diameter=diameter),
                optic("D", "dump", at=[300.0, 500.0]), path=["A", "D"])
    found = run(text)
    # Siegman 1986 ch. 17: loss exp(-2 a^2 / w^2) with a = D/2, w = 1 mm
    expected = math.exp(-2.0 * (diameter / 2.0) ** 2)
    if severity is None:
        assert expected < 1e-3 and found == []
        return
    (f,) = found
    assert f.value == pytest.approx(expected, rel=1e-9)
    assert f.limit == 1e-3 and f.unit == "fraction"
    assert f.severity == severity
    assert f.targets == ("A", "b")
    assert f"{expected:.3g}" in f.message and f"{expected * 100:.3g} %" in f.message
    assert "w_t = 1000 um, w_s = 1000 um" in f.message
    # hint: the aperture that passes 99.9 % is 2 x 1.8585 w (common practice)
    assert number_after(f.hint, "at least") == printed("3.72")


def test_through_the_engine_with_a_waiver_and_a_configured_limit():
    text = line(optic("A", "aperture", at=[100.0, 500.0], diameter=math.pi),
                optic("D", "dump", at=[300.0, 500.0]), path=["A", "D"])
    sol = solve_text(text)
    rules = RuleSet(rules={RULE_ID: (RULE, "benchcheck.rules")})
    result = run_rules(Bench(sol.layout, sol, Config().limits), Config(), rules)
    (f,) = result.findings
    assert f.rule == RULE_ID and f.severity == WARNING and f.loc is not None
    # D = pi w loses 0.72 % (common practice): above the default 0.1 %, within a 1 % limit
    loose = Config(rules={RULE_ID: {"options": {"max_loss": 0.01}}})
    assert run_rules(Bench(sol.layout, sol, loose.limits), loose, rules).findings == []


def test_a_tilted_mirror_sees_its_aperture_shrunk_by_cos_aoi():
    # 45 deg steering mirror (fold 90): semi-axes 1.5 cos 45 (t) and 1.5 (s) mm
    text = line(mirror("M", at=[100.0, 500.0], diameter=3.0),
                optic("D", "dump", at=[100.0, 800.0]), path=["M", "D"])
    (f,) = run(text)
    expected = 1.0 - scipy_transmission(1.0, 1.0, 1.5 * math.cos(math.radians(45.0)), 1.5)
    assert f.value == pytest.approx(expected, rel=1e-7)
    assert f.severity == ERROR                       # about 4 %: above 1 %
    assert "2.12 x 3 mm ellipse" in f.message and "45.0 deg" in f.message
    # the diameter the hint asks for passes 99.9 % at the same angle
    need = number_after(f.hint, "at least")
    assert 1.0 - scipy_transmission(1.0, 1.0, need / 2.0 * math.cos(math.radians(45.0)), need / 2.0) <= 1e-3
    assert 1.0 - scipy_transmission(1.0, 1.0, (need - 0.02) / 2.0 * math.cos(math.radians(45.0)),
                                    (need - 0.02) / 2.0) > 1e-3
    # the same mirror at normal incidence in the same beam (a lens in its place) loses less
    straight = line(optic("L", "lens", at=[100.0, 500.0], diameter=3.0, focal_length=1e6),
                    optic("D", "dump", at=[300.0, 500.0]), path=["L", "D"])
    (g,) = run(straight)
    assert g.value == pytest.approx(math.exp(-2.0 * 1.5**2), rel=1e-9) and g.value < f.value


def test_a_tilted_plate_clips_as_its_face_seen_from_outside():
    # a 5 mm plate (n = 1.5) at 30 deg, centred on the source's 1 mm waist 100 mm on.  Its
    # entrance face is t / (2 cos theta') before the centre along the beam (Snell); there
    # the beam outside has w = w0 sqrt(1 + (z/z_R)^2) (Kogelnik & Li 1966) and sees the
    # face's circle as an ellipse D cos(30 deg) by D.  Past the waist the beam inside
    # travels the shorter air-equivalent lengths, so the entrance face has the larger beam.
    t, n, aoi, dia = 5.0, 1.5, math.radians(30.0), 3.0
    inside = t / math.cos(math.asin(math.sin(aoi) / n))
    text = line(optic("P", "plate", at=[100.0, 500.0], diameter=dia, thickness=t, index=n, aoi=30.0),
                optic("D", "dump", at=[300.0, 500.0]), path=["P", "D"])
    (f,) = run(text)
    w = ref.w_at(1.0, -inside / 2.0, ref.rayleigh(1.0, WL))
    expected = 1.0 - scipy_transmission(w, w, dia / 2.0 * math.cos(aoi), dia / 2.0)
    assert f.value == pytest.approx(expected, rel=1e-7)
    assert 'face toward "S"' in f.message and "inside, at the refraction angle" in f.message


def test_an_elliptical_beam_through_a_lens():
    text = line(optic("L", "lens", at=[100.0, 500.0], diameter=2.4, focal_length=500.0),
                optic("D", "dump", at=[300.0, 500.0]), waist_t=0.4, waist_s=0.9, path=["L", "D"])
    (f,) = run(text)
    assert f.value == pytest.approx(1.0 - scipy_transmission(0.4, 0.9, 1.2, 1.2), rel=1e-7)
    assert "w_t = 400 um, w_s = 900 um" in f.message


def test_dumps_and_detectors_are_not_clipped_and_large_optics_pass():
    text = line(optic("L", "lens", at=[100.0, 500.0], diameter=25.4, focal_length=500.0),
                optic("D", "detector", at=[300.0, 500.0], diameter=0.5), path=["L", "D"])
    assert run(text) == []


def test_a_cavity_mirror_reports_the_loss_per_pass_and_every_round_trip():
    # Kogelnik & Li 1966 case R1 = R2 = 500, d = 250 at 1064 nm: w1 = 312.68 um on M1
    ref_mode = ref.two_mirror(500.0, 500.0, 250.0, WL)
    text = layout(
        mirror("M1", 500.0, at=[1000.0, 1000.0], diameter=1.0),
        mirror("M2", 500.0, reflectivity=0.99, diameter=25.4),
        cavity("c", "linear", ["M1", rel("M2", 250.0)], WL_NM, heading=0.0, output_coupler="M2", output_power_w=1.0),
    )
    (f,) = run(text)
    assert f.value == pytest.approx(math.exp(-2.0 * 0.5**2 / ref_mode["w1"] ** 2), rel=1e-7)
    assert f.targets == ("M1", "c")
    assert "per pass, met on every round trip" in f.message and "twice" not in f.message


def test_a_fold_mirror_of_a_linear_cavity_is_met_twice_per_round_trip():
    # a flat fold mirror halfway along the same cavity leaves the mode alone: the waist
    # w0 = 270.79 um sits there (Kogelnik & Li 1966 closed form, t1 = d/2)
    ref_mode = ref.two_mirror(500.0, 500.0, 250.0, WL)
    assert ref_mode["t1"] == pytest.approx(125.0)
    text = layout(
        mirror("M1", 500.0, at=[1000.0, 1000.0], diameter=25.4),
        mirror("F", diameter=0.8),
        mirror("M2", 500.0, reflectivity=0.99, diameter=25.4),
        cavity("c", "linear", ["M1", rel("F", 125.0, fold=10.0), rel("M2", 125.0)], WL_NM, heading=0.0,
               output_coupler="M2", output_power_w=1.0),
    )
    (f,) = run(text)
    aoi = math.radians(5.0)                           # a fold of 10 deg is twice the aoi (docs/design.md §3)
    per_pass = 1.0 - scipy_transmission(ref_mode["w0"], ref_mode["w0"], 0.4 * math.cos(aoi), 0.4)
    assert f.value == pytest.approx(per_pass, rel=1e-6)
    assert f"twice per round trip: {1.0 - (1.0 - per_pass) ** 2:.3g}" in f.message


def test_a_brewster_crystal_clips_at_its_faces_as_seen_from_outside():
    # a beam converging to a waist 0.5 mm at 300 mm meets a Brewster-cut rod (n = 1.76,
    # 10 mm long inside, 2 mm cross-section) centred at 100 mm.  Outside, at the entrance
    # face 95 mm from the source, the beam is round, w = w0 sqrt(1 + (z/z_R)^2) (Kogelnik
    # & Li 1966).  The rod's face is the cross-section cut obliquely: an ellipse D/2 by
    # (D/2)/cos(theta') (theta' the internal angle); seen from outside at Brewster's angle
    # theta_B it is (D/2) cos(theta_B)/cos(theta') by D/2 (geometry of projection, Snell).
    n, dia = 1.76, 2.0
    w0, z_r = 0.5, ref.rayleigh(0.5, WL)
    text = layout(
        source("S", at=[0.0, 500.0], heading=0.0, wavelength_nm=WL_NM, power_w=1.0, waist=w0, waist_at=300.0),
        optic("X", "crystal", diameter=dia, length=10.0, index=n, faces="brewster"),
        optic("D", "dump"),
        beam("b", "S", [rel("X", 100.0), rel("D", 300.0)]),
        size=(2000.0, 2000.0),
    )
    (f,) = run(text)
    w_face = ref.w_at(w0, 95.0 - 300.0, z_r)
    theta_b = math.atan(n)
    theta_in = math.asin(math.sin(theta_b) / n)
    a_t = dia / 2.0 * math.cos(theta_b) / math.cos(theta_in)
    expected = 1.0 - scipy_transmission(w_face, w_face, a_t, dia / 2.0)
    assert f.value == pytest.approx(expected, rel=1e-6)
    assert 'face toward "S"' in f.message and "cross-section" in f.message


def test_no_mode_no_finding():
    # R1 = R2 = 100 mm, d = 250: g1 g2 = 2.25, unstable, no mode to clip
    text = layout(
        mirror("M1", 100.0, at=[1000.0, 1000.0], diameter=0.1),
        mirror("M2", 100.0, reflectivity=0.99, diameter=0.1),
        cavity("c", "linear", ["M1", rel("M2", 250.0)], WL_NM, heading=0.0, output_coupler="M2", output_power_w=1.0),
    )
    assert run(text) == []


def test_the_rule_is_registered_in_the_built_in_pack():
    rules = load_rules(entry_points=False)
    assert rules.rules[RULE_ID][1] == "benchcheck.rules"
    assert {o.name for o in RULE.options} == {"max_loss", "error_loss"}
