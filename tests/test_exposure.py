"""Exposure limits, eyewear OD, hazard distance and class estimate (benchcheck.exposure).

Expected values are computed here from the standards' formulas as recalled (IEC 60825-1:2014
Annex A Table A.1 / A.3, ANSI Z136.1-2014 Tables 5a/6; "from memory"), from closed forms of
the Gaussian beam, from numpy integration, or are commonly quoted figures of the trade
("common practice").  Nothing is compared with an earlier output of the module.
Advisory: the laser safety officer, IEC 60825-1 / ANSI Z136.1 and local regulations decide.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from benchcheck import exposure as ex

AREA_7MM_M2 = math.pi * (3.5e-3) ** 2  # area of the 7 mm limiting aperture, computed here


# ---------------------------------------------------------------- commonly quoted limits


def test_visible_cw_at_aversion_time():
    # derived from H = 18 t**0.75 J/m^2 (IEC 60825-1:2014 Table A.1, 400-700 nm, from
    # memory), computed here: E = 18 * 0.25**0.75 / 0.25 W/m^2
    expected = 18.0 * 0.25**0.75 / 0.25
    assert expected == pytest.approx(25.456, rel=1e-4)
    assert ex.mpe_w_m2(532.0, 0.25) == pytest.approx(expected, rel=1e-9)
    # "about 2.5 mW/cm^2 for visible CW at 0.25 s" (common practice)
    assert 2.4 < ex.mpe_w_m2(632.8, 0.25) / 1e4 * 1e3 < 2.6


def test_1064_cw_ten_seconds():
    # derived from H = 18 C_A C_C t**0.75 with C_A = 5, C_C = 1 (IEC 60825-1:2014
    # Table A.1, 1050-1400 nm, from memory), computed here at t = 10 s
    expected = 18.0 * 5.0 * 1.0 * 10.0**0.75 / 10.0
    assert expected == pytest.approx(50.61, rel=1e-3)
    assert ex.mpe_w_m2(1064.0, 10.0) == pytest.approx(expected, rel=1e-9)
    # "about 5 mW/cm^2 at 1064 nm for 10 s" (common practice)
    assert 4.9 < ex.mpe_w_m2(1064.0, 10.0) / 1e4 * 1e3 < 5.3


def test_seven_mm_pupil_passes_about_one_milliwatt_at_the_visible_limit():
    # the origin of the 1 mW Class 2 limit: MPE(0.25 s) x area of a 7 mm pupil is about
    # 0.98 mW (common practice); area computed here
    p = ex.mpe_w_m2(600.0, 0.25) * AREA_7MM_M2
    assert p == pytest.approx(0.98e-3, rel=0.01)


def test_visible_long_exposure_thermal_limit_is_about_one_milliwatt_per_cm2():
    # t > T2 = 10 s (point source): E = 18 T2**-0.25 W/m^2 (IEC 60825-1:2014 Table A.1,
    # from memory), computed here; "about 1 mW/cm^2" (common practice)
    expected = 18.0 * 10.0**-0.25
    for t in (30.0, 1000.0, 3e4):
        assert ex.mpe_w_m2(650.0, t) == pytest.approx(expected, rel=1e-9)
    assert ex.mpe_w_m2(650.0, 1000.0) / 1e4 == pytest.approx(1e-3, rel=0.02)


def test_blue_light_photochemical_limit_takes_over_at_long_times():
    # photochemical E = 1 C_B W/m^2 beyond 100 s, C_B = 1 (400-450 nm) and
    # 10**(0.02 (lam - 450)) (450-600 nm) (IEC 60825-1:2014 Table A.1 and notes, from
    # memory); the lower of photochemical and thermal applies, computed here
    thermal = 18.0 * 10.0**-0.25
    assert ex.mpe_w_m2(430.0, 1000.0) == pytest.approx(1.0, rel=1e-9)
    assert ex.mpe_w_m2(480.0, 1000.0) == pytest.approx(10.0 ** (0.02 * 30.0), rel=1e-9)
    assert ex.mpe_w_m2(560.0, 1000.0) == pytest.approx(thermal, rel=1e-9)  # C_B = 158
    # 10-100 s: H = 100 C_B J/m^2 (from memory)
    assert ex.mpe_j_m2(430.0, 50.0) == pytest.approx(100.0, rel=1e-9)


def test_short_pulse_plateaus():
    # IEC 60825-1:2014 / ANSI Z136.1-2014 Table 5a (from memory): 2e-3 C_A J/m^2 for
    # 1e-11 s <= t < 5 us (400-1050 nm); 2e-2 C_C J/m^2 for t < 13 us (1050-1400 nm)
    assert ex.mpe_j_m2(532.0, 1e-8) == pytest.approx(2e-3, rel=1e-12)
    assert ex.mpe_j_m2(1064.0, 1e-8) == pytest.approx(2e-2, rel=1e-12)
    c_a_800 = 10.0 ** (0.002 * 100.0)
    assert ex.mpe_j_m2(800.0, 1e-9) == pytest.approx(2e-3 * c_a_800, rel=1e-12)
    # the plateaus meet the t**0.75 law near the breakpoints, within 5 % (computed here)
    assert 18.0 * 5e-6**0.75 == pytest.approx(2e-3, rel=0.05)
    assert 90.0 * 13e-6**0.75 == pytest.approx(2e-2, rel=0.05)


def test_ultraviolet_and_infrared_cornea_limits():
    # from memory, IEC 60825-1:2014 Table A.1:
    # 180-302.5 nm photochemical 30 J/m^2
    assert ex.mpe_j_m2(266.0, 1.0) == pytest.approx(30.0)
    # 315-400 nm: 5.6e3 t**0.25 J/m^2 below 10 s, 1e4 J/m^2 to 1000 s, 10 W/m^2 beyond
    assert ex.mpe_j_m2(355.0, 1.0) == pytest.approx(5.6e3)
    assert ex.mpe_j_m2(355.0, 100.0) == pytest.approx(1e4)
    assert ex.mpe_w_m2(355.0, 1e4) == pytest.approx(10.0)
    # 302.5-315 nm: C2 = 10**(0.2 (lam - 295)) J/m^2 after T1
    assert ex.mpe_j_m2(310.0, 100.0) == pytest.approx(10.0**3.0)
    # 1400 nm - 1 mm: E = 1000 W/m^2 beyond 10 s; 1500-1800 nm 1e4 J/m^2 to 10 s
    assert ex.mpe_w_m2([1550.0, 2000.0, 10600.0], 100.0) == pytest.approx([1e3] * 3)
    assert ex.mpe_j_m2(1550.0, 1e-6) == pytest.approx(1e4)
    assert ex.mpe_j_m2(10600.0, 1.0) == pytest.approx(5.6e3)


# ---------------------------------------------------------------- continuity and ranges


@pytest.mark.parametrize("edge", [700.0, 1150.0, 1200.0])
def test_continuous_across_retinal_band_edges(edge):
    # C_A and C_C are continuous at 700, 1150 and 1200 nm (10**0.9 = 7.94 ~ 8; from
    # memory), so the MPE is, at every duration
    t = np.logspace(-12, 4, 60)
    below = ex.mpe_j_m2(edge - 1e-6, t)
    above = ex.mpe_j_m2(edge, t)
    np.testing.assert_allclose(below, above, rtol=0.01)


def test_continuous_at_1050_for_long_exposures_and_the_standards_step_for_short_pulses():
    # C_A(1050-) = 10**0.7 = 5.01 against C_A = 5 above (from memory): continuous from the
    # 13 us breakpoint on
    t = np.logspace(np.log10(13e-6), 4, 40)
    np.testing.assert_allclose(ex.mpe_j_m2(1049.999, t), ex.mpe_j_m2(1050.0, t), rtol=0.005)
    # below 5 us the tables step by 2e-2 / (2e-3 * 5.01) = 2.0 at 1050 nm (from memory)
    r = ex.mpe_j_m2(1050.0, 1e-9) / ex.mpe_j_m2(1049.999, 1e-9)
    assert r == pytest.approx(2e-2 / (2e-3 * 10.0**0.7), rel=1e-3)


def test_step_at_1400_nm_from_retina_to_cornea():
    # at 1400 nm the hazard changes from retina to cornea and the standards step (from
    # memory): 18 C_A C_C T2**-0.25 = 405 W/m^2 below, 1000 W/m^2 above, at 100 s;
    # computed here.  Both sides are defined.
    below = 18.0 * 5.0 * 8.0 * 10.0**-0.25
    assert ex.mpe_w_m2(1399.999, 100.0) == pytest.approx(below, rel=1e-9)
    assert ex.mpe_w_m2(1400.0, 100.0) == pytest.approx(1000.0, rel=1e-9)
    assert ex.limiting_aperture_mm(1399.999, 100.0) == 7.0
    assert ex.limiting_aperture_mm(1400.0, 100.0) == 3.5


def test_nan_where_there_is_no_builtin_limit():
    lam = np.array([100.0, 179.9, 180.0, 1e6, 1.01e6, np.nan])
    expected = np.array([False, False, True, True, False, False])
    np.testing.assert_array_equal(ex.builtin_limit(lam), expected)
    h = ex.mpe_j_m2(lam, 1.0)
    np.testing.assert_array_equal(np.isnan(h), ~expected)
    assert np.isnan(ex.mpe_w_m2(532.0, 0.0))   # no duration, no limit
    assert np.isnan(ex.mpe_w_m2(532.0, -1.0))
    assert np.isnan(ex.limiting_aperture_mm(150.0, 1.0))
    assert np.isnan(ex.default_exposure_s(2e6))
    cf = ex.correction_factors([350.0, 650.0, 1500.0])
    assert np.all(np.isnan(cf["C_A"][[0, 2]])) and cf["C_A"][1] == 1.0
    assert np.isnan(cf["C_B"][1]) and np.all(np.isnan(cf["C_C"]))
    assert np.isnan(cf["T2_s"][0]) and cf["T2_s"][1] == 10.0


def test_correction_factors():
    # IEC 60825-1:2014 Table A.1 notes (from memory); the same C_A, C_C and T2 = 10 s for
    # alpha < 1.5 mrad are printed in the Norwegian Labour Inspection Authority's
    # "Regulations concerning action and limit values", section 11-5 (parameters as listed
    # by ICNIRP, implementing Directive 2006/25/EC); values computed here
    cf = ex.correction_factors([500.0, 900.0, 1100.0, 1175.0, 1300.0])
    np.testing.assert_allclose(cf["C_A"], [1.0, 10.0 ** 0.4, 5.0, 5.0, 5.0])
    assert cf["C_B"][0] == pytest.approx(10.0 ** 1.0)
    np.testing.assert_allclose(cf["C_C"][1:], [1.0, 1.0, 10.0 ** (0.018 * 25.0), 8.0])
    # T1 = 10**(0.8 (lam - 295)) 1e-15 s at 310 nm = 1 ms
    assert ex.correction_factors(310.0)["T1_s"] == pytest.approx(1e-3)


@pytest.mark.parametrize("lam", [266.0, 308.0, 355.0, 450.0, 532.0, 800.0, 1064.0, 1300.0,
                                 1450.0, 1550.0, 2100.0, 10600.0])
def test_radiant_exposure_limit_does_not_fall_with_time(lam):
    # the standards' H(t) is non-decreasing (common practice), except small steps where
    # the tables' rounded entries meet (from memory, computed here): the 2e-3 J/m^2
    # plateau against 18 (5e-6)**0.75 = 1.90e-3 at 5 us (5 %), 2e-2 against
    # 90 (13e-6)**0.75 = 1.93e-2 at 13 us (4 %), and the blue-light photochemical
    # 100 C_B J/m^2 against the thermal 18 * 10**0.75 = 101.2 J/m^2 at 10 s (1.2 %)
    assert 18.0 * 5e-6**0.75 / 2e-3 > 0.95 and 90.0 * 13e-6**0.75 / 2e-2 > 0.95
    t = np.logspace(-14, 4.5, 400)
    h = ex.mpe_j_m2(lam, t)
    assert np.all(np.isfinite(h))
    assert np.all(np.diff(h) >= -0.052 * h[:-1])
    # and grows overall by many decades (the limit is not a constant)
    assert h[-1] > 1e3 * h[0]


def test_default_exposure_and_limiting_aperture():
    # 0.25 s aversion response in the visible, 10 s elsewhere (common practice)
    np.testing.assert_array_equal(ex.default_exposure_s([350.0, 532.0, 699.0, 700.0, 1064.0]),
                                  [10.0, 0.25, 0.25, 10.0, 10.0])
    # IEC 60825-1:2014 Table A.3 (from memory): 7 mm retinal, 1 mm UV, IR time-dependent
    ap = ex.limiting_aperture_mm([355.0, 532.0, 1064.0, 1550.0, 1550.0, 1550.0, 2e5],
                                 [1.0, 0.25, 10.0, 0.1, 1.0, 100.0, 1.0])
    np.testing.assert_allclose(ap, [1.0, 7.0, 7.0, 1.0, 1.5, 3.5, 11.0])
    # 1.5 t**0.375 meets 1 mm near 0.35 s and 3.5 mm near 10 s (computed here)
    assert ex.limiting_aperture_mm(1550.0, 0.35) == pytest.approx(1.0, rel=0.02)
    assert ex.limiting_aperture_mm(1550.0, 9.999) == pytest.approx(3.5, rel=0.02)


def test_broadcasting_over_arrays():
    lam = np.array([[450.0], [1064.0], [1550.0]])
    t = np.array([1e-9, 1e-3, 0.25, 10.0])
    for f in (ex.mpe_j_m2, ex.mpe_w_m2, ex.limiting_aperture_mm):
        assert f(lam, t).shape == (3, 4)
    assert isinstance(ex.mpe_w_m2(532.0, 0.25), float)
    h, rule = ex.pulse_train_mpe_j_m2(lam, 1e-8, np.array([1.0, 1e3, 1e6, np.nan]), 0.25)
    assert h.shape == rule.shape == (3, 4)
    assert ex.aperture_fraction(np.array([1.0, 2.0, 3.0])[:, None], np.array([7.0, 3.5])).shape == (3, 2)
    assert ex.od_required(np.array([[1.0], [1e3]]), np.array([1.0, 2.0, 3.0])).shape == (2, 3)
    n = ex.nohd_mm(np.array([0.01, 1.0])[:, None], 1.0, 0.0, np.array([np.inf, 1e3, 1e4]), 25.0, 7.0)
    assert n.shape == (2, 3)



def test_one_limit_at_a_time_is_remembered_exactly():
    """A scalar question is answered from a memo keyed on (wavelength, duration): every
    answer must be what the same scalar gives computed afresh (``mpe_j_m2.__wrapped__``,
    ``limiting_aperture_mm.__wrapped__``, bypassing the memo), NaN where that is NaN, and
    the memo must tell apart every wavelength and every duration it is asked.  (A whole array may differ from
    the scalar in the last bit, as numpy's vector loops round powers differently.)"""
    lam = [150.0, 180.0, 266.0, 302.5, 310.0, 315.0, 355.0, 400.0, 450.0, 532.0, 600.0, 700.0, 808.0, 1050.0,
           1064.0, 1150.0, 1180.0, 1200.0, 1400.0, 1550.0, 2000.0, 3000.0, 1e5, 1e6, 2e6, math.nan]
    t = [-1.0, 0.0, 1e-14, 1e-13, 1e-11, 1e-9, 1e-7, 5e-6, 13e-6, 1e-3, 0.25, 0.35, 1.0, 10.0, 100.0, 1e3,
         3e4, 1e5, math.inf, math.nan]

    def same(a, b):
        return a == b or (np.isnan(a) and np.isnan(b))

    fresh_mpe, fresh_aperture = ex.mpe_j_m2.__wrapped__, ex.limiting_aperture_mm.__wrapped__
    for _ in range(2):      # the second pass is answered from the memo
        for wl in lam:
            for tt in t:
                one = ex.mpe_j_m2(wl, tt)
                assert same(one, fresh_mpe(np.asarray(wl), np.asarray(tt))), (wl, tt)
                assert same(ex.mpe_w_m2(wl, tt), fresh_mpe(np.asarray(wl), np.asarray(tt)) / tt), (wl, tt)
                assert same(ex.limiting_aperture_mm(wl, tt), fresh_aperture(np.asarray(wl), np.asarray(tt)))
    # different durations and wavelengths are different answers, not one remembered answer
    assert len({float(ex.mpe_j_m2(1064.0, tt)) for tt in (1e-9, 1e-3, 0.25, 10.0)}) == 4
    assert len({float(ex.mpe_j_m2(wl, 10.0)) for wl in (450.0, 808.0, 1064.0, 1550.0)}) == 4
    # integers, 0-d arrays and numpy scalars are the same question as the float
    assert ex.mpe_j_m2(1064, 10) == ex.mpe_j_m2(1064.0, 10.0) == ex.mpe_j_m2(np.asarray(1064.0), np.float32(10.0))
    assert isinstance(ex.mpe_j_m2(1064.0, 10.0), float)

# ---------------------------------------------------------------- repetitive pulses


def test_pulse_train_rules_and_most_restrictive():
    # the three rules of IEC 60825-1:2014 / ANSI Z136.1-2014 (from memory), computed here
    # from the single-exposure law: 532 nm, 10 ns pulses, 0.25 s
    lam, tp, te = 532.0, 1e-8, 0.25
    single = 2e-3                                    # plateau, J/m^2
    for rep in (10.0, 1e3, 1e5):
        n = rep * te
        rule1 = single
        rule2 = 18.0 * te**0.75 / n
        rule3 = single * n**-0.25
        h, rule = ex.pulse_train_mpe_j_m2(lam, tp, rep, te)
        assert h == pytest.approx(min(rule1, rule2, rule3), rel=1e-9)
        names = ["single-pulse", "average-power", "pulse-train"]
        assert rule == names[int(np.argmin([rule1, rule2, rule3]))]
    # one pulse: the single-pulse rule
    h, rule = ex.pulse_train_mpe_j_m2(1064.0, 1e-8, None, 10.0)
    assert h == pytest.approx(2e-2) and rule == "single-pulse"
    # outside 400-1400 nm no N**-0.25: 1550 nm, 1 ns, 1 kHz, 10 s -> average power rule
    h, rule = ex.pulse_train_mpe_j_m2(1550.0, 1e-9, 1e3, 10.0)
    assert h == pytest.approx(min(1e4, 1e4 / 1e4)) and rule == "average-power"


def test_pulse_train_never_exceeds_any_single_rule():
    # whatever the grouping, the per-pulse limit is at most each of rules 1 and 2 (common
    # practice: the most restrictive applies)
    lam = np.array([450.0, 532.0, 905.0, 1064.0, 1300.0])[:, None]
    rep = np.array([1.0, 1e2, 1e4, 1e6, 8e7])
    h, _ = ex.pulse_train_mpe_j_m2(lam, 1e-12, rep, 0.25)
    assert np.all(h <= ex.mpe_j_m2(lam, 1e-12) * (1 + 1e-12))
    assert np.all(h <= ex.mpe_j_m2(lam, 0.25) / (rep * 0.25) * (1 + 1e-12))
    assert np.all(h > 0)


# ---------------------------------------------------------------- apertures


@pytest.mark.parametrize("w,d", [(0.5, 7.0), (3.5, 7.0), (10.0, 7.0), (2.0, 1.0), (30.0, 50.0)])
def test_aperture_fraction_against_numerical_integration(w, d):
    # numpy trapezoid integration of the Gaussian intensity 2/(pi w^2) exp(-2 r^2/w^2) over
    # a square grid masked to the disc, computed here
    n = 2001
    x = np.linspace(-d / 2, d / 2, n)
    xx, yy = np.meshgrid(x, x)
    inten = 2.0 / (np.pi * w**2) * np.exp(-2.0 * (xx**2 + yy**2) / w**2)
    inside = xx**2 + yy**2 <= (d / 2) ** 2
    dx = x[1] - x[0]
    numeric = float(np.sum(inten * inside) * dx * dx)
    assert ex.aperture_fraction(w, d) == pytest.approx(numeric, rel=5e-3)


def test_aperture_averaged_irradiance():
    # a beam much smaller than the aperture: all the power over the area, computed here
    assert ex.aperture_averaged_w_m2(1e-3, 0.0, 7.0) == pytest.approx(1e-3 / AREA_7MM_M2)
    assert ex.aperture_averaged_w_m2(1e-3, 0.01, 7.0) == pytest.approx(1e-3 / AREA_7MM_M2)
    # a large beam: the peak irradiance 2P/(pi w^2) (Gaussian peak, computed here)
    w = 500.0
    peak = 2.0 * 1.0 / (math.pi * (w * 1e-3) ** 2)
    assert ex.aperture_averaged_w_m2(1.0, w, 7.0) == pytest.approx(peak, rel=1e-3)


# ---------------------------------------------------------------- eyewear OD


def test_od_required_for_a_collimated_beam():
    # 1 W at 1064 nm, w = 1 mm, 10 s: E = P (1 - exp(-2 a^2/w^2)) / (pi a^2), MPE from
    # 18 C_A t**0.75 / t (from memory), OD = ceil(log10(E/MPE)), all computed here
    a = 3.5e-3
    e = 1.0 * (1.0 - math.exp(-2.0 * 3.5**2 / 1.0**2)) / (math.pi * a**2)
    mpe = 90.0 * 10.0**0.75 / 10.0
    expected = math.ceil(math.log10(e / mpe))
    assert expected == 3                             # E / MPE = 513
    got = ex.od_required(ex.aperture_averaged_w_m2(1.0, 1.0, 7.0), ex.mpe_w_m2(1064.0, 10.0))
    assert got == expected
    # 10 W: E / MPE = 5130 -> OD 4; a 30 mm wide 10 W beam: E = 10 * 0.0267 / (pi a^2),
    # E / MPE = 137 -> OD 3 (computed here)
    e30 = 10.0 * (1.0 - math.exp(-2.0 * 3.5**2 / 30.0**2)) / (math.pi * a**2)
    got = ex.od_required(ex.aperture_averaged_w_m2(10.0, [1.0, 30.0], 7.0), ex.mpe_w_m2(1064.0, 10.0))
    np.testing.assert_array_equal(got, [math.ceil(math.log10(10 * e / mpe)),
                                        math.ceil(math.log10(e30 / mpe))])
    assert list(got) == [4, 3]


def test_od_required_edges_and_bad_input():
    # definition: ceil(log10(ratio)) above the MPE, 0 at or below (common practice)
    np.testing.assert_array_equal(ex.od_required([0.5, 1.0, 10.0, 10.5, 1e6], 1.0), [0, 0, 1, 2, 6])
    assert ex.od_required(1.0 + 1e-9, 1.0) == 1
    with pytest.raises(ValueError, match="configure an MPE"):
        ex.od_required(1.0, ex.mpe_w_m2(2e6, 10.0))   # no built-in limit: never OD 0



def test_od_required_one_segment_at_a_time_agrees_with_arrays():
    """One exposure and one MPE take a shorter path than arrays (once per segment): it
    must give the array's answer everywhere, powers of ten and a hair either side
    included, and refuse the same bad input (definition as above, common practice)."""
    ratios = [0.0, 0.5, 1.0, 1.0 + 1e-15, 1.0 + 1e-9, 9.999999999999, 10.0, 10.0 * (1 + 1e-15), 10.5, 99.9,
              100.0, 1e3, 1e3 * (1 - 1e-13), 1e6, 3.7e11, 1e300]
    for mpe in (1e-3, 0.7, 1.0, 25.456, 5e4):
        exposures = np.array([r * mpe for r in ratios])
        arrays = ex.od_required(exposures, mpe)
        for e, od in zip(exposures, arrays):
            one = ex.od_required(float(e), mpe)
            assert one == od and type(one) is np.int64, (e, mpe)
    for e, m in ((1.0, math.nan), (1.0, 0.0), (1.0, -2.0), (1.0, math.inf), (math.nan, 1.0), (-1.0, 1.0)):
        with pytest.raises(ValueError, match="od_required"):
            ex.od_required(e, m)
        with pytest.raises(ValueError, match="od_required"):
            ex.od_required(np.array([e]), m)


# ---------------------------------------------------------------- hazard distance


def _aperture_avg(p, w_mm, d_mm):
    a = d_mm / 2.0
    return p * (1.0 - math.exp(-2.0 * a * a / (w_mm * w_mm))) / (math.pi * (a * 1e-3) ** 2)


def _bisect_hazard_end(p, w0, s0, zr, mpe, d, hi):
    """Last s where the aperture-averaged exposure is above the MPE, by bisection on the
    Gaussian w(s) = w0 sqrt(1 + ((s - s0)/zr)^2), computed here."""
    f = lambda s: _aperture_avg(p, w0 * math.sqrt(1.0 + ((s - s0) / zr) ** 2), d) - mpe  # noqa: E731
    lo = max(s0, 0.0)
    assert f(lo) > 0 and f(hi) < 0
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if f(mid) > 0 else (lo, mid)
    return 0.5 * (lo + hi)


def test_nohd_collimated_beam():
    mpe = 18.0 * 5.0 * 10.0**0.75 / 10.0    # 1064 nm 10 s (from memory), computed here
    # above the MPE at its waist and never spreading: the hazard never ends
    assert ex.nohd_mm(1.0, 1.0, 0.0, np.inf, mpe, 7.0) == math.inf
    # a 10 uW beam: below the MPE even when all of it enters the pupil -> 0
    assert 10e-6 / AREA_7MM_M2 < mpe
    assert ex.nohd_mm(10e-6, 1.0, 0.0, np.inf, mpe, 7.0) == 0.0
    # a collimated beam so wide it is below the MPE everywhere -> 0 (checked here)
    assert _aperture_avg(1.0, 200.0, 7.0) < mpe
    assert ex.nohd_mm(1.0, 200.0, 0.0, np.inf, mpe, 7.0) == 0.0


@pytest.mark.parametrize("p,w0,s0,zr", [
    (1.0, 1.0, 0.0, 2950.0),       # 1064 nm, w0 = 1 mm: z_R = pi w0^2 / lambda
    (10.0, 0.5, 300.0, 738.0),     # waist ahead of the start
    (0.1, 0.05, -50.0, 7.4),       # strongly diverging, waist behind the start
])
def test_nohd_diverging_beam_against_bisection(p, w0, s0, zr):
    mpe = 18.0 * 5.0 * 10.0**0.75 / 10.0
    expected = _bisect_hazard_end(p, w0, s0, zr, mpe, 7.0, hi=1e9)
    got = ex.nohd_mm(p, w0, s0, zr, mpe, 7.0)
    assert got == pytest.approx(expected, rel=1e-6)
    # just beyond it the exposure is below the MPE, just before above (computed here)
    w = lambda s: w0 * math.sqrt(1.0 + ((s - s0) / zr) ** 2)  # noqa: E731
    assert _aperture_avg(p, w(got * 1.001), 7.0) < mpe < _aperture_avg(p, w(got * 0.999), 7.0)


def test_nohd_closed_form_far_field():
    # far field w ~ w0 s / z_R and a beam much larger than the pupil:
    # E ~ 2 P / (pi w^2) = MPE  ->  s ~ z_R / w0 sqrt(2 P / (pi MPE)) (closed form,
    # computed here); the module's exact form agrees to 0.1 % for a 100 W beam
    p, w0, zr, mpe = 100.0, 1.0, 2950.0, 50.61
    s_far = zr / w0 * math.sqrt(2.0 * p / (math.pi * mpe)) * 1e3
    assert ex.nohd_mm(p, w0, 0.0, zr, mpe, 7.0) == pytest.approx(s_far, rel=1e-3)


def test_nohd_hazard_region_behind_the_start_is_zero():
    # waist far behind s = 0, and the beam already below the MPE at s = 0 (computed here)
    mpe, zr, w0 = 50.61, 10.0, 0.1
    s0 = -1e5
    w_at_0 = w0 * math.sqrt(1.0 + (s0 / zr) ** 2)
    assert _aperture_avg(0.01, w_at_0, 7.0) < mpe
    assert ex.nohd_mm(0.01, w0, s0, zr, mpe, 7.0) == 0.0


# ---------------------------------------------------------------- class estimate


@pytest.mark.parametrize("lam,p,cls", [
    (632.8, 0.2e-3, "1"),      # below the 0.39 mW Class 1 AEL, visible (common practice)
    (632.8, 0.9e-3, "2"),      # "Class 2: up to 1 mW visible CW" (common practice)
    (532.0, 4.5e-3, "3R"),     # "Class 3R: up to 5 mW visible CW" (common practice)
    (532.0, 0.1, "3B"),        # "Class 3B: up to 0.5 W CW" (common practice)
    (1064.0, 10.0, "4"),       # above 0.5 W (common practice)
    (1064.0, 1e-3, "1"),       # below 3.9e-4 C_4 C_7 W = 1.95 mW (from memory)
    (1550.0, 5e-3, "1"),       # below about 10 mW at 1550 nm (common practice)
    (355.0, 0.2, "3B"),
])
def test_class_estimate_cw(lam, p, cls):
    got, detail = ex.class_estimate(lam, p, 1.0)
    assert got == cls
    assert "simplified" in detail and "manufacturer" in detail["caution"]


def test_class_estimate_expanded_beam_is_1m():
    # 5 mW at 1064 nm with w = 10 mm at 100 mm: through 7 mm 5 mW * (1 - exp(-2*3.5^2/10^2))
    # = 1.08 mW < 1.95 mW (Class 1 AEL, from memory), but the 50 mm condition-1 aperture
    # collects it all (computed here) -> 1M
    through = 5e-3 * (1.0 - math.exp(-2.0 * 3.5**2 / 10.0**2))
    assert through < 1.95e-3 < 5e-3
    got, detail = ex.class_estimate(1064.0, 5e-3, 10.0)
    assert got == "1M"
    assert detail["fraction_condition3"] == pytest.approx(through / 5e-3)
    # diverging so much that at 2 m the 50 mm aperture sees little: Class 1
    got, _ = ex.class_estimate(1064.0, 5e-3, 10.0, w_mm_at_2000mm=200.0)
    assert got == "1"


def test_class_estimate_pulsed_and_vectorised():
    # a Q-switched 1064 nm laser, 1 mJ 10 ns at 10 Hz (10 mW average): far above the
    # Class 3R per-pulse level (5 x 2e-2 J/m^2 x 3.85e-5 m^2 = 3.9 uJ, from memory),
    # far below 0.5 W and 0.15 J per pulse (Class 3B AEL, from memory) -> 3B
    got, detail = ex.class_estimate(1064.0, None, 1.0, pulse_energy_j=1e-3, pulse_s=1e-8, rep_hz=10.0)
    assert got == "3B"
    assert detail["average_power_w"] == pytest.approx(1e-2)
    # a power_w of 0 beside the pulse train does not hide it (energy x rep = 10 mW)
    got0, detail0 = ex.class_estimate(1064.0, 0.0, 1.0, pulse_energy_j=1e-3, pulse_s=1e-8, rep_hz=10.0)
    assert got0 == "3B" and detail0["average_power_w"] == pytest.approx(1e-2)
    # 100 uJ at 100 kHz is 10 W average: above the 0.5 W Class 3B AEL (common practice)
    got, _ = ex.class_estimate(1064.0, None, 1.0, pulse_energy_j=1e-4, pulse_s=1e-8, rep_hz=1e5)
    assert got == "4"
    assert detail["ael_class1_j_per_pulse"] <= 2e-2 * AREA_7MM_M2
    # a 0.3 J pulse is above the 3B per-pulse AEL -> 4
    got, _ = ex.class_estimate(1064.0, None, 1.0, pulse_energy_j=0.3, pulse_s=1e-8)
    assert got == "4"
    cls, _ = ex.class_estimate([632.8, 1064.0, 2e6], [0.2e-3, 10.0, 1e-6], [1.0, 1.0, 1.0])
    assert list(cls) == ["1", "4", "4"]           # no built-in limit: assumed 4, said so


def test_class_estimate_bad_input():
    with pytest.raises(ValueError, match="power_w"):
        ex.class_estimate(532.0, None, 1.0)
    with pytest.raises(ValueError, match="pulse_s"):
        ex.class_estimate(532.0, None, 1.0, pulse_energy_j=1e-3, rep_hz=10.0)
    # asked twice (the second answer would come from the memo), the error is the same
    for _ in range(2):
        with pytest.raises(ValueError, match="power_w"):
            ex.class_estimate(532.0, math.nan, 1.0)


def test_class_estimate_of_one_source_is_remembered_exactly():
    """One source's estimate comes from a memo keyed on every argument: it must be what
    the uncached estimate (``_class_estimate``) gives, detail for detail, for CW and
    pulsed sources; a caller changing its detail must not change the next answer; and an
    absent pulse energy (CW) is not the same question as a NaN one."""
    def same(a, b):
        if isinstance(a, (str, type(None))) or isinstance(b, (str, type(None))):
            return a == b
        return bool(np.all((np.asarray(a) == np.asarray(b)) | (np.isnan(np.asarray(a, dtype=float))
                                                               & np.isnan(np.asarray(b, dtype=float)))))

    cases = [(532.0, 1e-4, 1.0, None, None, None, None), (532.0, 5e-3, 0.5, None, None, None, None),
             (1064.0, 2.0, 0.8, None, None, None, 3.0), (1064.0, 0.0, 0.8, 1e-3, 1e-8, 1e3, None),
             (355.0, 0.01, 0.2, 1e-6, 5e-9, None, None), (1550.0, 0.3, 2.0, None, None, None, None),
             (800.0, math.nan, 0.3, 2e-9, 1e-13, 8e7, None), (2e6, 1.0, 1.0, None, None, None, None)]
    for _ in range(2):
        for wl, p, w100, e, tp, rep, w2000 in cases:
            cls, detail = ex.class_estimate(wl, p, w100, pulse_energy_j=e, pulse_s=tp, rep_hz=rep, w_mm_at_2000mm=w2000)
            cls0, detail0 = ex._class_estimate(wl, p, w100, e, tp, rep, w2000)
            assert cls == cls0 and detail.keys() == detail0.keys(), (wl, p)
            for key in detail:
                assert same(detail[key], detail0[key]), (wl, p, key)
            detail["fraction_condition3"] = "changed by a caller"
    cls, detail = ex.class_estimate(1064.0, 2.0, 0.8)
    assert detail["fraction_condition3"] != "changed by a caller"
    with pytest.raises(ValueError, match="pulse_s"):
        ex.class_estimate(1064.0, 2.0, 0.8, pulse_energy_j=math.nan)   # NaN energy: pulsed, unlike None


def test_one_beam_averaged_over_the_aperture_is_the_array_result_to_the_last_bit():
    # the scalar shortcut must give exactly what the array code gives for the same beam
    rng = np.random.default_rng(7)
    power = 10.0 ** rng.uniform(-6, 3, 400)
    w = 10.0 ** rng.uniform(-3, 2, 400)
    aperture = rng.choice([1.0, 3.5, 7.0, 11.0, 50.0], 400)
    whole = ex.aperture_averaged_w_m2(power, w, aperture)
    for k in range(400):
        one = ex.aperture_averaged_w_m2(float(power[k]), float(w[k]), float(aperture[k]))
        assert one == whole[k] and isinstance(one, np.float64), (power[k], w[k], aperture[k])
    # w = 0 passes all of it: derived from P / (pi (D/2)^2) with D = 7 mm, computed here
    assert ex.aperture_averaged_w_m2(1.0, 0.0, 7.0) == pytest.approx(1.0 / (np.pi * 3.5e-3**2), rel=1e-15)
