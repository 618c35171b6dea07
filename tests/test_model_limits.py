"""Where the model stops, said where it matters: foci beyond the paraxial regime, the Gouy
phase modulo 360 degrees, the FSR from the group index where one is given, and an output
coupler used as a fold mirror (two output beams whose sum is output_power_w)."""

from __future__ import annotations

import math

import pytest

from benchcheck import solve_text
from benchcheck.beamtable import solution_text
from benchcheck.cli import main
from layouts_util import (
    C_M_S, beam, beam_entry, cavity, cavity_entry, layout, mirror, optic, rel, solved, source, two_mirror,
)

WL_NM = 1064.0
WL = WL_NM * 1e-6


def focused(f_mm: float) -> str:
    """A collimated 1 mm waist (at the lens) focused by a thin lens onto a dump."""
    return layout(
        optic("L", "lens", focal_length=f_mm),
        optic("D", "dump"),
        source("S", at=[100.0, 500.0], heading=0.0, wavelength_nm=WL_NM, waist=1.0, waist_at=50.0, power_w=0.1),
        beam("b", "S", [rel("L", 50.0), rel("D", 3.0 * f_mm)]),
        size=(2000.0, 1000.0),
    )


@pytest.mark.parametrize("f_mm, noted", [(5.0, True), (50.0, False)])
def test_a_focus_beyond_the_paraxial_regime_is_noted(f_mm, noted):
    """Collimated waist w0 at a thin lens: the new waist w0' = w0 / sqrt(1 + (z_R/f)^2)
    (Self, Applied Optics 22, 658 (1983), s = 0), divergence lambda / (pi w0'), computed
    here: 0.20 rad for f = 5 mm, 0.017 rad for f = 50 mm."""
    z_r = math.pi * 1.0**2 / WL
    w_focus = 1.0 / math.sqrt(1.0 + (z_r / f_mm) ** 2)
    theta = WL / (math.pi * w_focus)
    b = beam_entry(solved(focused(f_mm)))
    notes = [n for n in b["notes"] if "paraxial" in n]
    assert bool(notes) == noted
    if noted:
        assert f"{theta:.2f} rad" in notes[0] and "estimates" in notes[0]


def test_gouy_phase_is_said_to_be_modulo_360():
    text = solution_text(solve_text(two_mirror(500.0, 500.0, 900.0)))
    assert "deg (mod 360)" in text
    c = cavity_entry(solved(two_mirror(500.0, 500.0, 900.0)))
    assert all(0.0 <= c["gouy_deg"][p] < 360.0 for p in ("t", "s"))


def crystal_cavity(**crystal) -> str:
    return layout(
        mirror("M1", 500.0, at=[1000.0, 1000.0]),
        optic("X", "crystal", length=10.0, index=1.5, **crystal),
        mirror("M2", 500.0),
        cavity("c", "linear", ["M1", rel("X", 100.0), rel("M2", 100.0)], WL_NM, heading=0.0),
        size=(3000.0, 2000.0),
    )


def test_fsr_uses_the_group_index_where_given():
    """FSR = c / (round-trip group path), 2 (190 + n_g 10) mm (common practice); the optical
    round trip stays the phase path 2 (190 + n 10)."""
    c = cavity_entry(solved(crystal_cavity(group_index=1.6)))
    group_path = 2 * (190.0 + 1.6 * 10.0)
    assert c["fsr_hz"] == pytest.approx(C_M_S * 1e3 / group_path, rel=1e-9)
    assert c["round_trip_s"] == pytest.approx(group_path * 1e-3 / C_M_S, rel=1e-9)
    assert c["round_trip_mm"] == pytest.approx(2 * (190.0 + 1.5 * 10.0), rel=1e-9)
    assert not any("phase index" in n for n in c["notes"])
    plain = cavity_entry(solved(crystal_cavity()))
    assert plain["fsr_hz"] == pytest.approx(C_M_S * 1e3 / (2 * (190.0 + 15.0)), rel=1e-9)
    assert any("phase index of X" in n for n in plain["notes"])


@pytest.mark.parametrize("key, value, fragment", [
    ("group_index", 0.5, "group_index"),
    ("group_index", "1.6", "group_index"),
])
def test_a_bad_group_index_is_an_error_with_its_line(tmp_path, capsys, key, value, fragment):
    text = crystal_cavity(**{key: value})
    path = tmp_path / "bad.toml"
    path.write_text(text)
    line = next(i for i, s in enumerate(text.splitlines(), 1) if s.startswith(key))
    assert main(["beams", str(path)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith(f"{path}:{line}:") and fragment in err[0]
    assert path.read_text() == text


def test_group_index_on_a_mirror_is_an_unknown_key(tmp_path, capsys):
    text = layout(mirror("M1", 500.0, at=[1000.0, 1000.0], group_index=1.5), mirror("M2", 500.0),
                  cavity("c", "linear", ["M1", rel("M2", 100.0)], WL_NM, heading=0.0))
    path = tmp_path / "bad.toml"
    path.write_text(text)
    assert main(["beams", str(path)]) == 2
    assert "'group_index'" in capsys.readouterr().err


def test_output_coupler_as_a_fold_emits_two_beams_that_share_output_power():
    """A linear cavity folded on its output coupler (T = 2 %): the circulating beam meets it
    going out and coming back, so two beams leave, each T P_circ; output_power_w is their sum,
    P_circ = P_out / (2 T) (Siegman, Lasers, ch. 11: output through a mirror is T times the
    power incident on it, from memory)."""
    text = layout(
        mirror("HR", 500.0, at=[1000.0, 1000.0]),
        mirror("OC", None, reflectivity=0.98),
        mirror("M2", 500.0),
        optic("D", "dump"),
        cavity("c", "linear", ["HR", rel("OC", 150.0, 90.0), rel("M2", 150.0)], WL_NM, heading=0.0,
               output_coupler="OC", output_power_w=2.0),
        beam("out", "c", [rel("D", 100.0)]),
        size=(3000.0, 2000.0),
    )
    t = solved(text)
    c = cavity_entry(t)
    assert c["circulating_w"] == pytest.approx(2.0 / (2 * 0.02), rel=1e-9)
    assert beam_entry(t)["power_w"] == pytest.approx(1.0, rel=1e-9)
    (other,) = [s for s in t["strays"] if s["optic"] == "OC"]
    assert other["power_w"] == pytest.approx(1.0, rel=1e-9)
    assert any("two beams" in n and "their sum" in n for n in c["notes"])
