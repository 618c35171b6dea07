"""Pulsed cavities and sources: the pulse's own peak intensity beside the peak of the
average power and the peak fluence.

References: Gaussian beam profile I0 exp(-2 r^2 / w^2), so a pulse of energy E has peak
fluence F0 = 2E / (pi w_t w_s) and, over a duration tau (peak power E / tau), peak
intensity 2E / (pi w_t w_s tau) (common practice; Siegman, Lasers, ch. 17, from memory);
the mode of a flat/concave cavity w0^2 = (lambda / pi) sqrt(d (R - d)) on the flat mirror
and w2^2 = (lambda R / pi) sqrt(d / (R - d)) on the curved one (Kogelnik & Li, Applied
Optics 5, 1550 (1966), from memory); circulating power P_out / T_oc.  Computed here.
"""

from __future__ import annotations

import math

import pytest

from benchcheck import solve_text
from benchcheck.beamtable import solution_text
from layouts_util import beam, beam_entry, cavity, cavity_entry, hit, layout, mirror, optic, rel, solved, source

WL_NM = 1064.0
WL = WL_NM * 1e-6


def q_switched(pulse_s: float | None) -> str:
    return layout(
        mirror("HR", 300.0, at=[1000.0, 1000.0]),
        mirror("OC", None, reflectivity=0.8),
        optic("D", "dump"),
        cavity("qs", "linear", ["HR", rel("OC", 200.0)], WL_NM, heading=0.0, output_coupler="OC",
               output_power_w=2.0, rep_hz=1e3, pulse_s=pulse_s),
        beam("out", "qs", [rel("D", 50.0)]),
        size=(3000.0, 2000.0),
    )


def test_q_switched_cavity_gives_the_pulse_peak():
    d, r = 200.0, 300.0
    p_circ = 2.0 / 0.2
    energy = p_circ / 1e3
    w_flat = math.sqrt(WL / math.pi * math.sqrt(d * (r - d)))            # mm
    w_curved = math.sqrt(WL * r / math.pi * math.sqrt(d / (r - d)))
    tau = 20e-9
    t = solved(q_switched(tau))
    c = cavity_entry(t)
    for optic_id, w in (("OC", w_flat), ("HR", w_curved)):
        h = hit(c, optic_id)
        area_cm2 = math.pi * (w / 10.0) ** 2
        assert h["peak_w_cm2"] == pytest.approx(2 * p_circ / area_cm2, rel=1e-8)
        assert h["peak_j_cm2"] == pytest.approx(2 * energy / area_cm2, rel=1e-8)
        assert h["pulse_peak_w_cm2"] == pytest.approx(2 * energy / (area_cm2 * tau), rel=1e-8)
    # the output beam carries P_out: its pulses have E = P_out / rep
    out = hit(beam_entry(t), "D")
    assert out["pulse_peak_w_cm2"] == pytest.approx(out["peak_j_cm2"] / tau, rel=1e-8)
    assert out["peak_j_cm2"] == pytest.approx(out["peak_w_cm2"] / 1e3, rel=1e-8)
    text = solution_text(solve_text(q_switched(tau)))
    assert "peak of avg P [W/cm^2]" in text and "peak fluence [J/cm^2]" in text and "peak in pulse [W/cm^2]" in text


def test_a_cw_cavity_has_no_pulse_figures():
    text = q_switched(None).replace("rep_hz = 1000.0\n", "")
    c = cavity_entry(solved(text))
    assert all("pulse_peak_w_cm2" not in h and "peak_j_cm2" not in h for h in c["hits"])
    assert "peak in pulse" not in solution_text(solve_text(text))


def test_pulsed_source_pulse_peak():
    """E = 1 mJ, tau = 10 ns, w = 0.5 mm at the detector (its waist): 2E / (pi w^2 tau)."""
    text = layout(
        optic("D", "detector", at=[300.0, 500.0]),
        source("S", at=[100.0, 500.0], heading=0.0, wavelength_nm=WL_NM, waist=0.5, waist_at=200.0,
               pulse_energy_j=1e-3, pulse_s=10e-9, rep_hz=10.0),
        beam("b", "S", ["D"]),
        size=(1000.0, 1000.0),
    )
    h = hit(beam_entry(solved(text)), "D")
    area = math.pi * 0.05 ** 2
    assert h["pulse_peak_w_cm2"] == pytest.approx(2 * 1e-3 / (area * 10e-9), rel=1e-8)
    assert h["peak_w_cm2"] == pytest.approx(2 * 1e-2 / area, rel=1e-8)     # 10 mW average
