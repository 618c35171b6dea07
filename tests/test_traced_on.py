"""Beams that end on no dump or detector are traced on across the table (docs/design.md §4;
the README's "The JSON beam table", `ends`)
until they meet a footprint, a zone or the table edge; a seed that ends on a passive
cavity's input coupler is coupled into it, with its mode match."""

from __future__ import annotations

import math

import pytest

import refphysics as ref
from layouts_util import beam, beam_entry, cavity, layout, mirror, optic, rel, solved, source, waists

WL_NM = 1064.0
WL = WL_NM * 1e-6


def lens_line(*extra, size=(1000.0, 400.0), lens_at=300.0, f=200.0):
    """Source at (0, 200) heading +x, waist 0.5 mm on it; a thin lens at ``lens_at``; the
    beam's path ends on the lens."""
    return layout(
        optic("L", "lens", focal_length=f, at=[lens_at, 200.0]),
        source("S", at=[0.0, 200.0], heading=0.0, wavelength_nm=WL_NM, waist=0.5, power_w=1.0),
        beam("b", "S", ["L"]),
        *extra, size=size,
    )


def test_beam_ending_on_a_lens_runs_to_the_table_edge_and_shows_its_focus():
    table = solved(lens_line())
    b = beam_entry(table)
    assert b["ends"]["kind"] == "table-edge"
    assert b["ends"]["s_mm"] == pytest.approx(1000.0)
    assert b["ends"]["at_mm"] == pytest.approx([1000.0, 200.0])
    # Self, Applied Optics 22, 658 (1983): waist 300 mm before a 200 mm lens
    s_out, mag = ref.self_focus(300.0, ref.rayleigh(0.5, WL), 200.0)
    for p in ("t", "s"):
        after = [w for w in waists(b, p) if w["s_mm"] > 300.0]
        assert len(after) == 1
        assert after[0]["s_mm"] == pytest.approx(300.0 + s_out, rel=1e-9)
        assert after[0]["w_um"] == pytest.approx(500.0 * mag, rel=1e-7)


def test_a_mount_in_the_way_stops_the_beam():
    # an obstacle whose near face is at x = 700
    table = solved(lens_line(optic("BOX", "obstacle", polygon=[[700.0, 150.0], [760.0, 150.0], [760.0, 250.0],
                                                                [700.0, 250.0]])))
    end = beam_entry(table)["ends"]
    assert end["kind"] == "footprint" and end["id"] == "BOX"
    assert end["s_mm"] == pytest.approx(700.0)


def test_a_keepout_zone_stops_the_beam():
    zone = '[[zone]]\nid = "door"\nkind = "keepout"\npolygon = [[850, 0], [1000, 0], [1000, 400], [850, 400]]\n'
    end = beam_entry(solved(lens_line(zone)))["ends"]
    assert end["kind"] == "keepout" and end["id"] == "door"
    assert end["s_mm"] == pytest.approx(850.0)


def test_a_beam_ending_on_a_dump_is_not_traced_on():
    text = layout(
        optic("D", "dump", at=[300.0, 200.0]),
        source("S", at=[0.0, 200.0], heading=0.0, wavelength_nm=WL_NM, waist=0.5),
        beam("b", "S", ["D"]), size=(1000.0, 400.0))
    end = beam_entry(solved(text))["ends"]
    assert end == {"kind": "dump", "id": "D", "s_mm": 300.0, "at_mm": None}


# --- mode matching into a passive cavity -----------------------------------------------------

def seeded(w_seed: float, waist_at: float) -> str:
    """Flat input coupler IC (thin substrate) and a concave R = 1000 mm end mirror 500 mm
    away: a half-confocal cavity whose waist sits on IC (Kogelnik & Li 1966:
    w0^4 = (lambda d / pi)^2 g2 (1 - g2) / ... with g1 = 1; here w0 = sqrt(lambda z_R / pi),
    z_R^2 = d (R - d)).  A seed from behind IC with its own waist."""
    return layout(
        mirror("IC", None, at=[1000.0, 1000.0], reflectivity=0.99, substrate={"thickness": 0.0, "index": 1.5}),
        mirror("M2", 1000.0, reflectivity=0.9999),
        cavity("enh", "linear", ["IC", rel("M2", 500.0)], WL_NM, heading=0.0, input_coupler="IC", input_power_w=1.0),
        source("S", at=[700.0, 1000.0], heading=0.0, wavelength_nm=WL_NM, waist=w_seed, waist_at=waist_at),
        beam("seed", "S", ["IC"]),
        size=(3000.0, 2000.0),
    )


def cavity_waist() -> float:
    z_r = math.sqrt(500.0 * (1000.0 - 500.0))        # Kogelnik & Li 1966: z_R^2 = d (R - d) for g1 = 1
    return math.sqrt(WL * z_r / math.pi)


def test_a_seed_equal_to_the_cavity_mode_couples_fully():
    end = beam_entry(solved(seeded(cavity_waist(), 300.0)))["ends"]
    assert end["kind"] == "cavity" and end["id"] == "enh"
    assert end["mode_match"] == pytest.approx(1.0, abs=1e-9)


@pytest.mark.parametrize("ratio", [0.5, 0.8, 1.25, 2.0])
def test_waist_size_mismatch(ratio):
    """Two beams with coincident waists w1, w2 = r w1 overlap by (2 r / (1 + r^2)) per axis
    (derived from the Gaussian overlap integral of H. Kogelnik, "Coupling and conversion
    coefficients for optical modes", Quasi-Optics symposium, 1964, from memory; the integral
    is also computed here by quadrature, refphysics.overlap_1d)."""
    assert ref.overlap_1d(1.0, ratio) == pytest.approx(2 * ratio / (1 + ratio**2), rel=1e-9)
    end = beam_entry(solved(seeded(cavity_waist() * ratio, 300.0)))["ends"]
    assert end["mode_match"] == pytest.approx((2 * ratio / (1 + ratio**2)) ** 2, rel=1e-9)
