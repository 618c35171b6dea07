"""Thermal-lens ranges with several lenses: the range check against an independent dense
sampling of the half-trace.

The reference here is the test's own ray-matrix product (free space [[1, d], [0, 1]], thin
lens [[1, 0], [-P, 1]]; Kogelnik & Li, Applied Optics 5, 1550 (1966)): for a linear cavity
between two flat mirrors, with the one-way matrix [[A, B], [C, D]] from one end mirror to
the other, the round trip is [[D, B], [C, A]] [[A, B], [C, D]] and its half-trace is
m = 2 A D - 1 (derived from the reversal of a det-1 ray matrix, computed here).  Stable
means |m| < 1.  The cavities are invented for these tests; the lens powers of one crystal
span the range named in the issue (2397.63 mm to 202.77 mm).
"""

from __future__ import annotations

import numpy as np
import pytest

from layouts_util import cavity, cavity_entry, layout, mirror, optic, rel, solved

WL_NM = 1064.0


def reference_m(spacings, powers) -> np.ndarray:
    """Half-trace of flat - d0 - lens P0 - d1 - lens P1 ... - d_n - flat, for rows of powers
    (K, n); m = 2 A D - 1 of the one-way matrix (see the module docstring)."""
    powers = np.atleast_2d(powers)
    k = len(powers)
    a = np.ones(k); b = np.full(k, float(spacings[0])); c = np.zeros(k); d = np.ones(k)
    for j in range(powers.shape[1]):
        p = powers[:, j]
        a, b, c, d = a, b, c - p * a, d - p * b            # thin lens
        gap = float(spacings[j + 1])
        a, b, c, d = a + gap * c, b + gap * d, c, d         # free space
    return 2.0 * a * d - 1.0


def flat_lenses_flat(spacings, lenses) -> str:
    """Flat mirrors at both ends, thin crystals (length 1 um, index 1) as thermal lenses;
    ``lenses`` are the crystals' ``thermal_lens`` values."""
    path = ["M1"]
    tables = [mirror("M1", None, at=[100.0, 500.0])]
    for j, f in enumerate(lenses):
        tables.append(optic(f"X{j + 1}", "crystal", length=0.001, index=1.0, thermal_lens=f))
        path.append(rel(f"X{j + 1}", spacings[j]))
    tables.append(mirror("M2", None))
    path.append(rel("M2", spacings[-1]))
    tables.append(cavity("c", "linear", path, WL_NM, heading=0.0))
    return layout(*tables)


# the issue's example: one crystal over 2397.63 .. 202.77 mm and a second with a fixed lens
ISSUE_SPACINGS = (318.4, 86.0, 283.0)
ISSUE_RANGE = [2397.63, 202.77]
ISSUE_FIXED = 961.0


def test_fixed_lens_beside_a_range_dense_sampling_finds_the_unstable_band():
    """Dense sampling (2 000 001 powers across the range, the fixed lens at 1/961 mm^-1):
    m dips to about -1.00015 in a band about 5e-5 mm^-1 wide, while both ends are stable."""
    p = np.linspace(1.0 / ISSUE_RANGE[0], 1.0 / ISSUE_RANGE[1], 2_000_001)
    m = reference_m(ISSUE_SPACINGS, np.column_stack([p, np.full_like(p, 1.0 / ISSUE_FIXED)]))
    assert abs(m[0]) < 1 and abs(m[-1]) < 1
    assert m.min() == pytest.approx(-1.00015, abs=2e-6)

    c = cavity_entry(solved(flat_lenses_flat(ISSUE_SPACINGS, [ISSUE_RANGE, ISSUE_FIXED])))
    scan = c["thermal_lens"]
    assert scan["stable_over_range"] == {"t": False, "s": False}
    for plane in ("t", "s"):
        lo, hi = scan["m_range"][plane]
        # exact extremes: never above the sampled minimum, and the sampling is fine enough
        # (step 2.4e-9 mm^-1) to be within 1e-9 of it
        assert lo <= m.min() + 1e-12 and lo == pytest.approx(m.min(), abs=1e-9)
        assert hi == pytest.approx(m.max(), abs=1e-9)
    # the fixed lens is not a scan axis: only X1 is listed as a range
    assert set(scan["design_f_mm"]) == {"X1", "X2"}
    assert scan["design_f_mm"]["X2"]["t"] == pytest.approx(ISSUE_FIXED)


def test_fixed_lens_beside_a_range_fires_cavity_unstable():
    from benchcheck import solve_text
    from benchcheck.config import Config
    from benchcheck.findings import Bench
    from benchcheck.plugins import load_rules

    rule = load_rules(entry_points=False).rules["cavity-unstable"][0]
    sol = solve_text(flat_lenses_flat(ISSUE_SPACINGS, [ISSUE_RANGE, ISSUE_FIXED]))
    found = list(rule.check(Bench(sol.layout, sol, Config().limits), rule.defaults()))
    assert len(found) == 2
    for f in found:
        assert "X1 202.77 to 2397.63 mm" in f.message and "X2" not in f.message
        assert f.value == pytest.approx(1.00015, abs=2e-6)


FOUR_SPACINGS = (323.8, 2.0, 2.0, 2.0, 317.1)
FOUR_RANGE = [779.0, 3231.0]


def box_samples(f_range, seed: int) -> np.ndarray:
    """200 000 seeded random points of the four-lens power box plus a 21-point grid per axis
    (which holds the corners, where a ring's or a monotone m has its extremes)."""
    lo, hi = 1.0 / max(f_range), 1.0 / min(f_range)
    axis = np.linspace(lo, hi, 21)
    grid = np.stack(np.meshgrid(axis, axis, axis, axis, indexing="ij"), axis=-1).reshape(-1, 4)
    return np.concatenate([np.random.default_rng(seed).uniform(lo, hi, (200_000, 4)), grid])


def test_four_equal_ranges_dense_sampling_finds_the_unstable_part():
    """Four crystals 2 mm apart, each over 779 .. 3231 mm: 200 000 random points of the
    range box (seeded) find about 4 % of it unstable (a grid of 8 points per axis misses it); the check must say so and give the
    extremes of m."""
    m = reference_m(FOUR_SPACINGS, box_samples(FOUR_RANGE, 20261202))
    unstable = np.mean(np.abs(m[:200_000]) >= 1.0)
    assert 0.03 < unstable < 0.06

    c = cavity_entry(solved(flat_lenses_flat(FOUR_SPACINGS, [FOUR_RANGE] * 4)))
    scan = c["thermal_lens"]
    assert scan["stable_over_range"] == {"t": False, "s": False}
    m_lo, m_hi = scan["m_range"]["t"]
    # the exact extremes bound every sample, and random sampling comes close to them
    assert m_lo <= m.min() + 1e-12 and m_lo == pytest.approx(m.min(), abs=1e-4)
    assert m_hi >= m.max() - 1e-12 and m_hi == pytest.approx(m.max(), abs=1e-4)


def test_four_equal_ranges_a_stable_box_is_stable_with_its_extremes():
    """The same four crystals over a narrower range 2500 .. 3231 mm: every sampled point is
    stable and the reported extremes agree with the sampling's."""
    rng_f = [2500.0, 3231.0]
    m = reference_m(FOUR_SPACINGS, box_samples(rng_f, 7))
    assert np.all(np.abs(m) < 1.0)
    scan = cavity_entry(solved(flat_lenses_flat(FOUR_SPACINGS, [rng_f] * 4)))["thermal_lens"]
    assert scan["stable_over_range"] == {"t": True, "s": True}
    m_lo, m_hi = scan["m_range"]["s"]
    assert m_lo <= m.min() + 1e-12 and m_lo == pytest.approx(m.min(), abs=1e-4)
    assert m_hi >= m.max() - 1e-12 and m_hi == pytest.approx(m.max(), abs=1e-4)


def test_only_fixed_lenses_give_the_single_value():
    """Two fixed lenses, no range: m at the design is the whole range."""
    spacings = (100.0, 50.0, 120.0)
    expected = float(reference_m(spacings, [[1.0 / 800.0, 1.0 / 600.0]])[0])
    scan = cavity_entry(solved(flat_lenses_flat(spacings, [800.0, 600.0])))["thermal_lens"]
    assert scan["m_range"]["t"] == pytest.approx([expected, expected], abs=1e-12)
    assert scan["stable_over_range"] == {"t": True, "s": True}


def ring_m(leg: float, side: float, powers) -> np.ndarray:
    """Half-trace (A + D)/2 of a rectangular ring of flat mirrors (legs ``leg`` and ``side``)
    with a thin lens in the middle of each long leg, from the first corner: the test's own
    matrix product (flat mirrors act as nothing on the ray)."""
    powers = np.atleast_2d(powers)
    out = []
    for p1, p2 in powers:
        s = lambda d: np.array([[1.0, d], [0.0, 1.0]])          # noqa: E731
        lens = lambda p: np.array([[1.0, 0.0], [-p, 1.0]])      # noqa: E731
        m = s(side) @ s(leg / 2) @ lens(p2) @ s(leg / 2) @ s(side) @ s(leg / 2) @ lens(p1) @ s(leg / 2)
        out.append((m[0, 0] + m[1, 1]) / 2.0)
    return np.array(out)


@pytest.mark.parametrize("f_range, stable", [([400.0, 900.0], True), ([150.0, 900.0], False)])
def test_ring_with_two_ranges_against_a_dense_grid(f_range, stable):
    """Ring: each lens is passed once, m is linear in each power and its extremes are at the
    corners of the box; a 101 x 101 grid (with the corners) is the reference."""
    leg, side = 400.0, 60.0
    tables = [
        mirror("M1", None, at=[100.0, 100.0]), mirror("M2", None, at=[100.0 + leg, 100.0]),
        mirror("M3", None, at=[100.0 + leg, 100.0 + side]), mirror("M4", None, at=[100.0, 100.0 + side]),
        optic("X1", "crystal", at=[100.0 + leg / 2, 100.0], length=0.001, index=1.0, thermal_lens=f_range),
        optic("X2", "crystal", at=[100.0 + leg / 2, 100.0 + side], length=0.001, index=1.0, thermal_lens=f_range),
        cavity("r", "ring", ["M1", "X1", "M2", "M3", "X2", "M4"], WL_NM),
    ]
    axis = np.linspace(1.0 / max(f_range), 1.0 / min(f_range), 101)
    grid = np.stack(np.meshgrid(axis, axis, indexing="ij"), axis=-1).reshape(-1, 2)
    m = ring_m(leg, side, grid)
    assert bool(np.all(np.abs(m) < 1.0)) == stable
    scan = cavity_entry(solved(layout(*tables)))["thermal_lens"]
    assert scan["stable_over_range"] == {"t": stable, "s": stable}
    assert scan["m_range"]["t"] == pytest.approx([m.min(), m.max()], abs=1e-9)
