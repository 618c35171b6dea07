"""Cavities a hair from the stability boundary: near-confocal, near-concentric and
near-hemispherical, L = R (1 +- eps) (2R for concentric), eps from 1e-2 down to 1e-12.

Expected status from the two-mirror criterion of H. Kogelnik and T. Li, Applied Optics 5,
1550 (1966): g_i = 1 - L/R_i, stable when 0 < g1 g2 < 1, computed here from the lengths
the layout declares.  The symmetric cavity's waist w0^2 = (lambda L / 2 pi) sqrt((1+g)/(1-g))
and mirror spot w1^2 = (lambda L / pi) / sqrt(1 - g^2), and the half-symmetric (flat/concave) one's w0^2 = (lambda/pi) sqrt(L (R - L)) at the flat
mirror are the same paper's closed forms (from memory), computed here.
"""

from __future__ import annotations

import math

import pytest

from layouts_util import cavity, cavity_entry, layout, mirror, solved, two_mirror, waists

WL_NM = 1064.0
WL = WL_NM * 1e-6
R = 100.0
EPS = [10.0 ** -k for k in range(2, 13)]


def kogelnik_li_status(g1g2: float) -> str:
    if 0.0 < g1g2 < 1.0:
        return "stable"
    if g1g2 < 0.0 or g1g2 > 1.0:
        return "unstable"
    return "boundary"


def check_status(c: dict, g1g2: float) -> None:
    """One status for one cavity in every place it shows: status, stable flag and mode."""
    want = kogelnik_li_status(g1g2)
    for p in ("t", "s"):
        assert c["status"][p] == want, (p, g1g2, c["m"][p])
        assert c["stable"][p] == (want == "stable")
        has_mode = c["gouy_deg"][p] is not None and all(h["w_um"][p] is not None for h in c["hits"])
        assert has_mode == (want == "stable")


@pytest.mark.parametrize("sign", [1.0, -1.0])
@pytest.mark.parametrize("eps", EPS)
def test_near_confocal(eps, sign):
    length = R * (1.0 + sign * eps)
    g = 1.0 - length / R
    c = cavity_entry(solved(two_mirror(R, R, length)))
    check_status(c, g * g)
    w0_ref = math.sqrt(WL * length / (2.0 * math.pi) * math.sqrt((1.0 + g) / (1.0 - g)))
    # near -I the mode is ill-conditioned: rounding of about 1e-16 in the round trip's entries
    # becomes a relative error of about 1e-16/eps in the mode (common practice for a nearly
    # degenerate eigenproblem)
    rel = max(1e-6, 1e-15 / eps)
    for p in ("t", "s"):
        (w0,) = waists(c, p)
        assert w0["w_um"] == pytest.approx(w0_ref * 1e3, rel=rel)
        # the spot on the mirrors, w1^2 = (lambda L / pi) / sqrt(1 - g^2) (same paper); the
        # waist's place is ill-conditioned at the confocal point (the mirror's wavefront
        # radius is stationary in it), so only sizes are compared
        w1_ref = math.sqrt(WL * length / math.pi / math.sqrt(1.0 - g * g))
        assert c["hits"][0]["w_um"][p] == pytest.approx(w1_ref * 1e3, rel=rel)


@pytest.mark.parametrize("sign", [1.0, -1.0])
@pytest.mark.parametrize("eps", EPS)
def test_near_concentric(eps, sign):
    length = 2.0 * R * (1.0 + sign * eps)
    g = 1.0 - length / R
    check_status(cavity_entry(solved(two_mirror(R, R, length))), g * g)


@pytest.mark.parametrize("sign", [1.0, -1.0])
@pytest.mark.parametrize("eps", EPS)
def test_near_hemispherical(eps, sign):
    length = R * (1.0 + sign * eps)
    g1g2 = 1.0 * (1.0 - length / R)
    c = cavity_entry(solved(two_mirror(None, R, length)))
    check_status(c, g1g2)
    if g1g2 > 0:
        w0_ref = math.sqrt(WL / math.pi * math.sqrt(length * (R - length)))
        assert c["hits"][0]["w_um"]["t"] == pytest.approx(w0_ref * 1e3, rel=1e-3)


@pytest.mark.parametrize("fold_deg", [20.0, 37.0, 61.0, 90.0, 113.0])
def test_confocal_folded_on_a_flat_mirror_with_rounded_coordinates(fold_deg):
    """Symmetric confocal cavity (R = 100 mm) folded on a flat mirror half-way, every
    coordinate rounded to 1 um: L differs from R by a fraction of a micrometre (or not at
    all).  The flat fold adds no focusing, so g1 = g2 = 1 - L/R with L the unfolded length,
    computed here from the rounded coordinates."""
    rnd = lambda v: round(v, 3)   # noqa: E731
    m1 = (1000.0, 1000.0)
    fold = (rnd(m1[0] + R / 2.0), m1[1])
    turn = math.radians(180.0 - fold_deg)
    m2 = (rnd(fold[0] + R / 2.0 * math.cos(turn)), rnd(fold[1] + R / 2.0 * math.sin(turn)))
    length = math.dist(m1, fold) + math.dist(fold, m2)
    g = 1.0 - length / R
    text = layout(
        mirror("M1", R, at=list(m1)),
        mirror("F", None, at=list(fold)),
        mirror("M2", R, at=list(m2)),
        cavity("c", "linear", ["M1", "F", "M2"], WL_NM),
        size=(3000.0, 3000.0),
    )
    c = cavity_entry(solved(text))
    if g == 0.0:
        assert c["status"] == {"t": "marginal-retrace", "s": "marginal-retrace"}
    else:
        check_status(c, g * g)


def test_exact_confocal_and_exact_hemispherical_stay_on_the_boundary():
    """g1 g2 = 0 exactly: the confocal round trip is -I (retrace), the hemispherical one is
    not (walk-off) (Kogelnik & Li 1966; common practice)."""
    assert cavity_entry(solved(two_mirror(R, R, R)))["status"]["t"] == "marginal-retrace"
    assert cavity_entry(solved(two_mirror(None, R, R)))["status"]["t"] == "marginal-walkoff"
    assert cavity_entry(solved(two_mirror(R, R, 2 * R)))["status"]["t"] == "marginal-walkoff"


def test_cavity_unstable_shows_an_excess_that_rounding_would_hide():
    """L = R (1 + 1e-9) hemispherical: g1 g2 = -1e-9 < 0, unstable (Kogelnik & Li 1966);
    m = 2 g1 g2 - 1, so |m| - 1 = 2e-9, computed here."""
    from benchcheck import solve_text
    from benchcheck.config import Config
    from benchcheck.findings import Bench
    from benchcheck.plugins import load_rules

    rule = load_rules(entry_points=False).rules["cavity-unstable"][0]
    sol = solve_text(two_mirror(None, R, R * (1 + 1e-9)))
    found = list(rule.check(Bench(sol.layout, sol, Config().limits), rule.defaults()))
    assert len(found) == 2
    for f in found:
        assert "m = -1.0000 (|m| - 1 = 2e-09)" in f.message
