"""coating-damage: intensity, linear power density and fluence on each optic's surface
against its LIDT divided by the safety factor.

Outside references, each worked out here independently of benchcheck:

- peak intensity of an elliptical Gaussian I0 = 2P/(pi w_x w_y), peak fluence
  F0 = 2E/(pi w^2), twice the "flat-top" average (Siegman, "Lasers" (1986), ch. 17, from
  memory); derived from it and computed in the tests: P = 1 W, w = 1 mm gives
  63.661977 W/cm^2; w_x = 1, w_y = 0.5 mm gives 127.32395 W/cm^2; E = 1 mJ, w = 0.5 mm
  gives 0.2546479 J/cm^2;
- on a surface tilted by theta the footprint grows by 1/cos(theta) in the plane of
  incidence (geometry of projection: 1.082392, 1.414214, 2 at 22.5, 45, 60 degrees);
- CW linear power density is the power over the 1/e^2 beam diameter (vendor practice,
  from memory): a 1 MW/cm rating with a 2 mm diameter allows 200 kW;
- pulse-length scaling F(tau2) = F(tau1) sqrt(tau2/tau1) (Stuart et al., Phys. Rev. B 53,
  1749 (1996); common practice): 10 J/cm^2 at 10 ns is 14.142 J/cm^2 at 20 ns; and
  wavelength scaling F ~ lambda (vendor practice, from memory): 10 J/cm^2 at 1064 nm is
  5 J/cm^2 at 532 nm;
- a laser's one-way circulating power is P_out / T_oc, and a linear cavity's beams run
  both ways at every mirror (Siegman 1986, ch. 11, from memory); the mode sizes of the
  two-mirror cavity from Kogelnik & Li, Applied Optics 5, 1550 (1966);
- the speed of light, exact by the SI definition of the metre.
"""

from __future__ import annotations

import importlib
import math

import pytest

import refphysics as ref
from benchcheck import solve_text
from benchcheck.config import Config
from benchcheck.engine import run_rules
from benchcheck.findings import ERROR, NOTE, WARNING, Bench
from benchcheck.plugins import RuleSet, load_rules
from layouts_util import C_M_S, beam, cavity, layout, mirror, optic, rel, source

RULE_ID = "coating-damage"
_PACK = load_rules(entry_points=False)
RULE = _PACK.rules[RULE_ID][0]
# the pure helpers of the built-in rule module (importable once the pack is loaded, also
# from a source checkout that was not installed)
damage = importlib.import_module("benchcheck.rules.damage")
surface_peak = damage.surface_peak
linear_power_density = damage.linear_power_density
footprint_diameter_cm = damage.footprint_diameter_cm
scaled_fluence_threshold = damage.scaled_fluence_threshold

WL_NM = 1064.0
WL = WL_NM * ref.NM
CM2_PER_MM2 = 1e-2


def printed(value: str):
    """pytest.approx to half a unit in the last printed digit of ``value``."""
    decimals = len(value.split(".")[1]) if "." in value else 0
    return pytest.approx(float(value), abs=0.5 * 10.0 ** (-decimals))


def peak(amount: float, w_x: float, w_y: float) -> float:
    """2X/(pi w_x w_y), radii in mm, per cm^2 (Siegman 1986 ch. 17, from memory)."""
    return 2.0 * amount / (math.pi * w_x * w_y * CM2_PER_MM2)


# --- the formulas against the check values ------------------------------------------------

def test_peak_intensity_and_fluence_check_values():
    assert (peak(1.0, 1.0, 1.0), peak(1.0, 1.0, 0.5)) == (printed("63.661977"), printed("127.32395"))
    assert peak(1e-3, 0.5, 0.5) == printed("0.2546479")
    assert surface_peak(1.0, 1.0, 1.0) == printed("63.661977")
    assert surface_peak(1.0, 1.0, 0.5) == printed("127.32395")
    assert surface_peak(1e-3, 0.5, 0.5) == printed("0.2546479")


@pytest.mark.parametrize("theta_deg, factor", [(22.5, "1.082392"), (45.0, "1.414214"), (60.0, "2.000000")])
def test_a_tilted_surface_lowers_the_peak_by_the_footprint_factor(theta_deg, factor):
    c = math.cos(math.radians(theta_deg))
    assert surface_peak(1.0, 1.0, 1.0) / surface_peak(1.0, 1.0, 1.0, c) == printed(factor)


def test_linear_power_density_check_value_and_the_conservative_diameter():
    # 1 MW/cm over a 2 mm 1/e^2 diameter: 200 kW
    assert linear_power_density(2e5, 1.0, 1.0) == pytest.approx(1e6, rel=1e-12)
    # an elliptical footprint: the smaller 1/e^2 diameter (the larger W/cm)
    assert footprint_diameter_cm(0.5, 1.0) == pytest.approx(0.1)
    c45 = math.cos(math.radians(45.0))
    assert footprint_diameter_cm(0.5, 1.0, c45) == pytest.approx(2.0 * 0.5 / c45 * 0.1)
    assert footprint_diameter_cm(1.0, 0.6, c45) == pytest.approx(0.12)


def test_pulse_length_and_wavelength_scaling_check_values():
    value, why = scaled_fluence_threshold(10.0, 10e-9, 20e-9)
    assert 10.0 * math.sqrt(20e-9 / 10e-9) == printed("14.142")          # the sqrt(tau) law, computed here
    assert value == printed("14.142") and why == []
    value, why = scaled_fluence_threshold(10.0, 10e-9, 10e-9, 1064.0, 532.0)
    assert value == pytest.approx(5.0, rel=1e-12)
    assert len(why) == 1 and "wavelengths differ" in why[0]


def test_scaling_is_flagged_outside_its_range():
    # Stuart et al. 1996: the sqrt(tau) law fails below about 10 ps
    _, why = scaled_fluence_threshold(10.0, 10e-9, 1e-12)
    assert any("outside" in w for w in why) and any("differ by" in w for w in why)
    _, why = scaled_fluence_threshold(10.0, 1e-9, 10e-9)            # x10 exactly: still trusted
    assert why == []
    _, why = scaled_fluence_threshold(10.0, 1e-9, 10.1e-9)
    assert why and "differ by" in why[0]
    _, why = scaled_fluence_threshold(10.0, 10e-9, 10e-9, 1064.0, 1080.0)   # 1.5 %: same design point
    assert why == []


# --- the rule on small layouts -----------------------------------------------------------

def run(text: str, **options):
    sol = solve_text(text)
    bench = Bench(sol.layout, sol, Config().limits)
    opts = RULE.defaults()
    opts.update(options)
    return list(RULE.check(bench, opts))


def line(target, *, waist=1.0, to_first=100.0, wavelength_nm=WL_NM, dump_at=(300.0, 500.0), **src):
    """Source at (0, 500) heading +x, its waist on ``target`` 100 mm on (the radius there
    is the waist; Kogelnik & Li 1966), then a dump."""
    src.setdefault("power_w", 1.0)
    return layout(
        source("S", at=[0.0, 500.0], heading=0.0, wavelength_nm=wavelength_nm, waist=waist, waist_at=to_first, **src),
        target,
        optic("D", "dump", at=list(dump_at)),
        beam("b", "S", [target.split('"')[1], "D"]),
        size=(2000.0, 2000.0),
    )


def lens(lidt, **extra):
    return optic("L", "lens", at=[100.0, 500.0], diameter=25.4, focal_length=1e6, lidt=lidt, **extra)


@pytest.mark.parametrize("rating, severity", [(200.0, None), (100.0, WARNING), (60.0, ERROR)])
def test_cw_intensity_against_the_rating_and_the_safety_factor(rating, severity):
    found = run(line(lens({"w_cm2": rating})))
    expected = 63.661977         # P = 1 W, w = 1 mm
    if severity is None:
        assert found == []
        return
    (f,) = found
    assert f.value == printed(f"{expected:.6f}")
    assert f.limit == pytest.approx(rating / 2.0) and f.unit == "W/cm^2"
    assert f.severity == severity and f.targets == ("L", "b")
    assert "63.7 W/cm^2" in f.message and "safety factor 2" in f.message


def test_a_45_degree_mirror_spreads_the_beam_over_a_larger_footprint():
    m = mirror("M", at=[100.0, 500.0], diameter=25.4, lidt={"w_cm2": 80.0})
    (f,) = run(line(m, dump_at=(100.0, 800.0)))
    assert f.value == pytest.approx(63.661977 / 1.414214, rel=1e-6)
    assert "45.0 deg incidence" in f.message
    # under a rating of 100 W/cm^2 the normal-incidence peak (63.7) would fail, the tilted
    # footprint's 45.0 passes
    m = mirror("M", at=[100.0, 500.0], diameter=25.4, lidt={"w_cm2": 100.0})
    assert run(line(m, dump_at=(100.0, 800.0))) == []


def test_linear_power_density_at_the_vendor_check_value():
    # 200 kW in a 2 mm diameter is exactly a 1 MW/cm rating: at the limit with no margin
    text = line(lens({"w_cm": 1e6}), power_w=2e5)
    assert run(text, safety_factor=1.0) == []
    (f,) = run(line(lens({"w_cm": 1e6}), power_w=2.02e5), safety_factor=1.0)
    assert f.value == pytest.approx(1.01e6, rel=1e-9) and f.unit == "W/cm" and f.severity == ERROR
    (g,) = run(text)                                         # default factor 2: limit 500 kW/cm
    assert g.value == pytest.approx(1e6, rel=1e-9) and g.limit == pytest.approx(5e5) and g.severity == WARNING
    assert "2 mm" in g.message


def test_a_linear_cavity_loads_inner_optics_from_both_directions_and_end_mirrors_once():
    """P_circ = P_out / T_oc = 1 W / 0.01 = 100 W one-way; the mode of the symmetric
    two-mirror cavity (Kogelnik & Li 1966: w1 = 312.68 um on the mirrors, w0 = 270.79 um at
    the centre; a flat fold mirror there leaves it unchanged).  The fold mirror at 5 deg
    incidence carries both directions, 2P cos(5 deg)/(pi w0^2) (derived: the footprint of a
    beam at incidence theta is w/cos(theta) wide in the plane of incidence, computed here);
    an end mirror's rating already covers its own reflection, so it sees the one-way power."""
    mode = ref.two_mirror(500.0, 500.0, 250.0, WL)
    text = layout(
        mirror("M1", 500.0, at=[1000.0, 1000.0], diameter=25.4, lidt={"w_cm2": 2e5}),
        mirror("FM", None, diameter=25.4, lidt={"w_cm2": 2e5}),
        mirror("M2", 500.0, reflectivity=0.99, diameter=25.4),
        cavity("c", "linear", ["M1", rel("FM", 125.0, 10.0), rel("M2", 125.0)], WL_NM, heading=0.0,
               output_coupler="M2", output_power_w=1.0),
    )
    (f,) = run(text)
    assert f.targets[0] == "FM"
    expected = peak(2.0 * 100.0, mode["w0"], mode["w0"]) * math.cos(math.radians(5.0))
    assert f.value == pytest.approx(expected, rel=1e-7)
    assert "2 x 100 W one-way" in f.message and f.severity == WARNING
    assert f.value / 2 < 1e5                                       # one way alone would pass
    assert peak(100.0, mode["w1"], mode["w1"]) < 1e5 < peak(200.0, mode["w1"], mode["w1"])   # M1: passes once


def test_a_pulsed_beam_against_a_fluence_rating():
    # E = 1 mJ on w = 0.5 mm: 0.2546479 J/cm^2; rated 0.4 J/cm^2 at 10 ns, limit 0.2
    pulsed = dict(pulse_energy_j=1e-3, pulse_s=10e-9, rep_hz=10.0, power_w=None)
    (f,) = run(line(lens({"j_cm2": 0.4, "pulse_s": 10e-9}), waist=0.5, **pulsed))
    assert f.value == printed("0.2546479") and f.limit == pytest.approx(0.2) and f.unit == "J/cm^2"
    assert f.severity == WARNING and "approximate" not in f.message
    # at 20 ns the same rating is 0.4 sqrt(2) = 0.566 (Stuart et al. 1996): limit 0.283
    pulsed["pulse_s"] = 20e-9
    assert run(line(lens({"j_cm2": 0.4, "pulse_s": 10e-9}), waist=0.5, **pulsed)) == []
    (g,) = run(line(lens({"j_cm2": 0.3, "pulse_s": 10e-9}), waist=0.5, **pulsed))
    assert g.limit == pytest.approx(0.3 * math.sqrt(2.0) / 2.0, rel=1e-12)
    assert "scaled to 20 ns" in g.message


def test_a_rating_at_another_wavelength_is_scaled_and_flagged():
    # 0.8 J/cm^2 at 1064 nm is 0.4 at 532 nm (vendor practice): limit 0.2 < 0.2546
    pulsed = dict(pulse_energy_j=1e-3, pulse_s=10e-9, rep_hz=10.0, power_w=None)
    rating = {"j_cm2": 0.8, "pulse_s": 10e-9, "wavelength_nm": 1064.0}
    (f,) = run(line(lens(rating), waist=0.5, wavelength_nm=532.0, **pulsed))
    assert f.limit == pytest.approx(0.2, rel=1e-12)
    assert "approximate" in f.message and "wavelengths differ" in f.message


def test_a_pulsed_beam_on_a_cw_rating_is_compared_by_its_average_power_and_noted():
    # 1 mJ x 1 kHz = 1 W average on w = 0.5 mm: 254.6 W/cm^2 against 400 / 2
    pulsed = dict(pulse_energy_j=1e-3, pulse_s=10e-9, rep_hz=1e3, power_w=None)
    found = run(line(lens({"w_cm2": 400.0}), waist=0.5, **pulsed))
    (f,) = [x for x in found if x.severity != NOTE]
    (n,) = [x for x in found if x.severity == NOTE]
    assert f.value == pytest.approx(peak(1.0, 0.5, 0.5), rel=1e-9) and "average power" in f.message
    assert n.value == printed("0.2546479") and "not checked" in n.message


def test_a_cw_beam_on_a_pulsed_rating_is_a_note():
    (n,) = run(line(lens({"j_cm2": 10.0, "pulse_s": 10e-9})))
    assert n.severity == NOTE and n.limit is None
    assert n.value == pytest.approx(63.661977, rel=1e-7)
    assert "only a pulsed LIDT" in n.message


def _pulsed_fold_cavity(pulse_s: float, rating: float) -> str:
    # the two-mirror cavity R = 500, d = 250 with a flat fold mirror halfway: the waist
    # w0 = 270.79 um sits on it (Kogelnik & Li 1966, t1 = d/2), at 5 deg incidence
    return layout(
        mirror("M1", 500.0, at=[1000.0, 1000.0], diameter=25.4),
        mirror("F", diameter=25.4, lidt={"j_cm2": rating, "pulse_s": pulse_s}),
        mirror("M2", 500.0, reflectivity=0.99, diameter=25.4),
        cavity("c", "linear", ["M1", rel("F", 125.0, fold=10.0), rel("M2", 125.0)], WL_NM, heading=0.0,
               output_coupler="M2", output_power_w=1.0, rep_hz=1e6, pulse_s=pulse_s),
    )


def test_a_long_pulse_overlaps_its_return_at_a_fold_mirror():
    # 10 ns is 3 m of light: it meets its own return from the end mirror 125 mm away.
    # E = P_circ / f_rep = 100 W / 1 MHz = 100 uJ; twice the one-way fluence, times cos 5 deg
    mode = ref.two_mirror(500.0, 500.0, 250.0, WL)
    one_way = peak(100e-6, mode["w0"], mode["w0"]) * math.cos(math.radians(5.0))
    (f,) = run(_pulsed_fold_cavity(10e-9, 0.2))
    assert f.value == pytest.approx(2.0 * one_way, rel=1e-7)
    assert "overlaps its return" in f.message


def test_a_short_pulse_meets_a_fold_mirror_one_way_at_a_time():
    # 1 ps is 0.3 mm of light; the return comes 2 x 125 mm / c = 834 ps later
    mode = ref.two_mirror(500.0, 500.0, 250.0, WL)
    one_way = peak(100e-6, mode["w0"], mode["w0"]) * math.cos(math.radians(5.0))
    (f,) = run(_pulsed_fold_cavity(1e-12, 0.05))
    assert f.value == pytest.approx(one_way, rel=1e-7)
    delay_ps = 2.0 * 0.125 / C_M_S * 1e12
    assert f"{delay_ps:.3g} ps later" in f.message and "one-way fluence" in f.message


def test_a_brewster_crystal_is_loaded_at_its_faces():
    # a beam converging to a 0.5 mm waist at 300 mm meets a Brewster rod (10 mm long
    # inside) centred at 100 mm.  Outside each face the beam meets it at Brewster's angle,
    # so the irradiance there is 2P cos(theta_B)/(pi w_t w_s) with the radii in air just
    # outside (Kogelnik & Li 1966: w = w0 sqrt(1 + (z/z_R)^2)).  At the entrance face,
    # 95 mm on, the beam is round; at the exit face it has gone on by the air-equivalent
    # lengths L/n^3 (t) and L/n (s) of a Brewster-cut crystal (Kogelnik et al. 1972, from
    # memory).  The beam converges, so the exit face carries the higher irradiance.
    n, length = 1.76, 10.0
    w0, z_r = 0.5, ref.rayleigh(0.5, WL)
    w_in = ref.w_at(w0, 95.0 - 300.0, z_r)
    w_t = ref.w_at(w0, 95.0 + length / n**3 - 300.0, z_r)
    w_s = ref.w_at(w0, 95.0 + length / n - 300.0, z_r)
    assert w_t * w_s < w_in * w_in
    text = layout(
        source("S", at=[0.0, 500.0], heading=0.0, wavelength_nm=WL_NM, power_w=50.0, waist=w0, waist_at=300.0),
        optic("X", "crystal", diameter=10.0, length=length, index=n, faces="brewster", lidt={"w_cm2": 2000.0}),
        optic("D", "dump"),
        beam("b", "S", [rel("X", 100.0), rel("D", 300.0)]),
        size=(2000.0, 2000.0),
    )
    (f,) = run(text)
    assert f.value == pytest.approx(peak(50.0, w_t, w_s) * math.cos(math.atan(n)), rel=1e-6)
    assert 'face toward "D"' in f.message


def test_through_the_engine_with_a_configured_safety_factor():
    text = line(lens({"w_cm2": 100.0}))
    sol = solve_text(text)
    rules = RuleSet(rules={RULE_ID: (RULE, "benchcheck.rules")})
    (f,) = run_rules(Bench(sol.layout, sol, Config().limits), Config(), rules).findings
    assert f.rule == RULE_ID and f.loc is not None and f.loc.line > 0
    relaxed = Config(rules={RULE_ID: {"options": {"safety_factor": 1.5}}})   # limit 66.7 > 63.7
    assert run_rules(Bench(sol.layout, sol, relaxed.limits), relaxed, rules).findings == []


def test_optics_without_a_rating_are_not_checked():
    assert run(line(optic("L", "lens", at=[100.0, 500.0], diameter=25.4, focal_length=1e6), power_w=1e4)) == []


def test_a_single_pulse_is_checked_by_its_fluence():
    """A source with pulse energy but no repetition rate has no average power; its fluence
    is still known: 2E/(pi w^2) = 2.546 J/cm^2 for 10 mJ on w = 0.5 mm (derived from the
    peak of a Gaussian profile, E = F0 pi w^2 / 2, computed here), above a 1 J/cm^2 rating
    at the same pulse length."""
    found = run(line(lens({"j_cm2": 1.0, "pulse_s": 10e-9}), waist=0.5, power_w=None, pulse_energy_j=0.01,
                     pulse_s=10e-9))
    (f,) = [x for x in found if x.unit == "J/cm^2"]
    assert f.value == pytest.approx(2 * 0.01 / (math.pi * 0.05**2), rel=1e-6) and f.severity == ERROR


def _report_row(text: str, optic_id: str) -> list[str]:
    """The cells of the report's per-optic row for ``optic_id`` (the first such row)."""
    import re

    from benchcheck.report_html import Report

    sol = solve_text(text)
    html = Report(Bench(sol.layout, sol, Config().limits), [], None, _PACK.rules)._optics()
    for row in re.findall(r"<tr>(.*?)</tr>", html):
        cells = [re.sub(r"<[^>]+>", "", c) for c in re.findall(r"<td>(.*?)</td>", row)]
        if cells and cells[0] == optic_id:
            return cells
    raise AssertionError(f"no row for {optic_id}")


def test_the_reports_load_column_is_the_rules_value_over_the_lidt():
    # the fold mirror of the two-directions test: the rule compares 2 x the one-way peak
    # (both directions) with the rating; the report's "load / LIDT" column must show that
    # same number over the LIDT, not the one-way half of it
    text = layout(
        mirror("M1", 500.0, at=[1000.0, 1000.0], diameter=25.4),
        mirror("FM", None, diameter=25.4, lidt={"w_cm2": 2e5}),
        mirror("M2", 500.0, reflectivity=0.99, diameter=25.4),
        cavity("c", "linear", ["M1", rel("FM", 125.0, 10.0), rel("M2", 125.0)], WL_NM, heading=0.0,
               output_coupler="M2", output_power_w=1.0),
    )
    (f,) = run(text)
    cells = _report_row(text, "FM")
    assert float(cells[-1]) == pytest.approx(f.value / 2e5, abs=0.005)
    assert f.value / 2e5 > 0.8          # the one-way half (about 0.43) would be far off


def test_the_reports_clip_loss_is_the_rules_worst_face():
    # a Brewster plate of 1.2 mm clear aperture: inside, the beam crosses the aperture at the
    # refraction angle, so aperture-clipping sees it shortened by cos(theta') in the table
    # plane, on the face where the beam is largest; the report's clip-loss column shows the
    # same number
    text = layout(
        source("S", at=[0.0, 500.0], heading=0.0, wavelength_nm=WL_NM, power_w=1.0, waist=0.5, waist_at=300.0),
        optic("P", "plate", diameter=1.2, thickness=3.0, index=1.5, faces="brewster"),
        optic("D", "dump"),
        beam("b", "S", [rel("P", 100.0), rel("D", 300.0)]),
        size=(2000.0, 2000.0),
    )
    sol = solve_text(text)
    clip_rule = _PACK.rules["aperture-clipping"][0]
    (f,) = clip_rule.check(Bench(sol.layout, sol, Config().limits), clip_rule.defaults())
    cells = _report_row(text, "P")
    assert float(cells[-2]) == pytest.approx(f.value, rel=0.006)     # printed to 3 figures


def test_the_rules_words_match_what_it_computes():
    # the limit is LIDT / safety factor (the check divides), and end mirrors are loaded one way
    assert "divided by a safety factor" in RULE.summary and "times a safety factor" not in RULE.summary
    assert "end mirror is loaded one way" in RULE.explanation
    assert "load every mirror" not in RULE.explanation
