"""build-yield and alignment-sensitivity on layouts that must and must not trigger them."""

from __future__ import annotations

import math

import pytest

from benchcheck import solve_text, tolspec
from benchcheck.config import Config
from benchcheck.findings import Bench
from benchcheck.plugins import load_rules
from benchcheck.tolerance import wilson_interval
from layouts_util import cavity, layout, mirror, rel, two_mirror

RULES = load_rules(entry_points=False).rules
LAMBDA_MM = 1064e-6
LAB = tolspec.Tolerances(values={**{k.name: k.default for k in tolspec.KEYS.values()}, "position_mm": 0.2,
                                 "roc_percent": 0.0}, source=tolspec.FROM_CONFIG)


def run(rule_id: str, text: str, tolerances=LAB, **options) -> list:
    sol = solve_text(text)
    bench = Bench(sol.layout, sol, Config().limits, tolerances=tolerances)
    rule = RULES[rule_id][0]
    opts = rule.defaults()
    opts.update(options)
    return list(rule.check(bench, opts))


def test_yield_below_the_minimum_is_reported_with_its_value():
    """Plane-concave, L = d near R: |m| = |1 - 2L/R| <= 0.95 means L <= 0.975 R (Kogelnik &
    Li 1966, m = 2 g1 g2 - 1).  Both mirrors move +-t in x (and y, second order), so L
    changes by D = dx2 - dx1, triangular on [-2t, 2t], and the share of builds with margin
    is P(D <= a) = 1 - (2t - a)^2 / (8 t^2) with a = 0.975 R - d in [0, 2t] (the difference
    of two uniform deviations, derived here); the rule's value must lie near it."""
    r, t = 200.0, 0.2
    d = 0.975 * r - 0.1
    found = run("build-yield", two_mirror(None, r, d), samples=4000)
    assert len(found) == 1
    f = found[0]
    a = 0.975 * r - d
    expected = 1 - (2 * t - a) ** 2 / (8 * t * t)
    assert f.limit == 0.9 and f.unit == "fraction"
    lo, hi = wilson_interval(round(f.value * 4000), 4000)
    assert lo - 0.01 <= expected <= hi + 0.01
    assert "cav" in f.targets and "M2 x" in f.message


def test_comfortable_cavity_passes():
    assert run("build-yield", two_mirror(None, 200.0, 100.0)) == []


def test_minimum_is_an_option():
    r = 200.0
    text = two_mirror(None, r, 0.975 * r - 0.1)
    assert run("build-yield", text, min_yield=0.5, samples=2000) == []


def test_skipped_with_one_note_without_tolerances():
    text = two_mirror(None, 200.0, 195.0)
    for rule_id in ("build-yield", "alignment-sensitivity"):
        found = run(rule_id, text, tolerances=tolspec.Tolerances())
        assert len(found) == 1 and found[0].severity == "note" and "skipped" in found[0].message
        # an optic's own tolerance is enough to run the rule
        own = text.replace('[[optic]]\nid = "M2"', '[[optic]]\nid = "M2"\ntolerance = { position_mm = 0.01 }')
        assert all(f.severity != "note" for f in run(rule_id, own, tolerances=tolspec.Tolerances()))


def test_no_note_without_a_cavity():
    text = layout(mirror("M1", None, at=[100.0, 100.0]))
    assert run("build-yield", text, tolerances=tolspec.Tolerances()) == []


def test_near_planar_cavity_is_too_tilt_sensitive():
    """Two concave mirrors R = 20 m, 300 mm apart: g = 0.985.  A tilt t of M1 moves the axis
    at M2 by L t/(1 - g^2) (Hauck, Kortz & Weber 1980; Siegman 1986 ch. 19, from memory);
    the mode radius at a mirror of a symmetric cavity is w^2 = (L lambda/pi)/sqrt(1 - g^2)
    (Kogelnik & Li 1966).  Both computed here; the rule must report their ratio for 10 urad."""
    r, d = 20000.0, 300.0
    g = 1 - d / r
    found = run("alignment-sensitivity", two_mirror(r, r, d))
    assert {f.targets[0] for f in found} == {"M1", "M2"}
    shift = d * 10e-6 / (1 - g * g) * 1e3                      # um
    w = math.sqrt(d * LAMBDA_MM / math.pi / math.sqrt(1 - g * g)) * 1e3
    f = next(f for f in found if f.targets[0] == "M1")
    assert f.value == pytest.approx(shift / w, rel=1e-6)
    assert f.limit == 0.1


def test_confocal_cavity_is_not_reported():
    assert run("alignment-sensitivity", two_mirror(300.0, 300.0, 300.0)) == []


def test_small_aperture_is_clipped_by_the_moved_axis():
    """Near-planar cavity (R = 20 m, 300 mm, g = 0.985) with a 2.6 mm mirror M2: the mode
    radius there is 0.767 mm (w^2 = (L lambda/pi)/sqrt(1 - g^2), Kogelnik & Li 1966), so the
    centred loss at its edge is 1/2 erfc(sqrt2 a/w) = 3.4e-4 (Siegman 1986 ch. 17, from
    memory), below 1e-3; a tilt of 20 urad of either mirror moves the axis at M2 by about
    0.2 mm (L t/(1 - g^2), Hauck et al. 1980), which raises it to about 2e-3.  Computed here."""
    r, d, a = 20000.0, 300.0, 1.3
    g = 1 - d / r
    w = math.sqrt(d * LAMBDA_MM / math.pi / math.sqrt(1 - g * g))
    assert 0.5 * math.erfc(math.sqrt(2) * a / w) < 1e-3
    assert 0.5 * math.erfc(math.sqrt(2) * (a - d * 20e-6 / (1 - g * g)) / w) > 1e-3
    text = layout(mirror("M1", r, at=[1000.0, 10000.0], diameter=25.4), mirror("M2", r, diameter=2 * a),
                  cavity("cav", "linear", ["M1", rel("M2", d)], 1064.0, heading=0.0))
    found = run("alignment-sensitivity", text, tilt_urad=20.0, max_shift_fraction=1.0)
    assert {f.targets[0] for f in found} == {"M1", "M2"}
    assert all("edge loss" in f.message and f.targets[2] == "M2" for f in found)
    assert run("alignment-sensitivity", text, tilt_urad=5.0, max_shift_fraction=1.0) == []
