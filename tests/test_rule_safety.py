"""The safety rules on small benches, powers checked by hand: a beam's power drops by R or
T at each optic (docs/design.md §4), a leak carries P_circ T, an active cavity circulates
P_out / T_oc."""

from __future__ import annotations

import pytest

from benchcheck import LayoutError, solve_text
from benchcheck.config import Config
from benchcheck.findings import Bench
from benchcheck.plugins import load_rules
from layouts_util import beam, cavity, layout, mirror, optic, rel, source

RULES = load_rules(entry_points=False).rules


def run(rule_id: str, text: str, **limits):
    sol = solve_text(text)
    lim = dict(Config().limits)
    lim.update(limits)
    rule = RULES[rule_id][0]
    return list(rule.check(Bench(sol.layout, sol, lim), rule.defaults()))


def ends_on_mirror(r: float) -> str:
    """1 W from a source, ending on a mirror it passes (R = r): traced on to the table edge."""
    return layout(
        mirror("M", None, at=[300.0, 500.0], reflectivity=r),
        source("S", at=[100.0, 500.0], heading=0.0, wavelength_nm=1064.0, waist=0.5, power_w=1.0),
        beam("b", "S", ["M"]),
        size=(1000.0, 1000.0),
    )


def test_unterminated_beam_carries_what_passes_its_last_optic():
    (f,) = run("beam-unterminated", ends_on_mirror(0.9999))
    assert f.value == pytest.approx(1e-4, rel=1e-9)          # 1 W x (1 - R)
    assert f.severity == "warning"                             # below the 1 mW stray limit
    (g,) = run("beam-unterminated", ends_on_mirror(0.5))
    assert g.value == pytest.approx(0.5) and g.severity == "error"


def test_keepout_zone_reports_the_power_on_the_leg_that_enters():
    # 1 W source -> 50 % splitter passed straight (0.5 W on) -> into the zone
    text = layout(
        optic("BS", "splitter", at=[300.0, 500.0], reflectivity=0.5, fold=90.0),
        source("S", at=[100.0, 500.0], heading=0.0, wavelength_nm=1064.0, waist=0.5, power_w=1.0),
        beam("b", "S", ["BS"]),
        '[[zone]]\nid = "door"\nkind = "keepout"\npolygon = [[600, 400], [700, 400], [700, 600], [600, 600]]\n',
        size=(1000.0, 1000.0),
    )
    found = [f for f in run("keepout-zone", text) if "beam \"b\"" in f.message]
    assert len(found) == 1 and found[0].value == pytest.approx(0.5)


def test_a_zone_that_crosses_itself_is_an_input_error():
    text = layout(
        '[[zone]]\nid = "bad"\nkind = "keepout"\npolygon = [[500, 50], [600, 150], [600, 50], [500, 150]]\n',
        size=(1000.0, 1000.0))
    with pytest.raises(LayoutError, match="crosses itself"):
        solve_text(text)


def laser(enclosure: str = "") -> str:
    """P_out 1 W through a 1 % output coupler: 100 W one-way; the HR (T = 1e-3) leaks 0.1 W
    out of its back, to the table edge at x = 0."""
    return layout(
        mirror("HR", 500.0, at=[100.0, 500.0], reflectivity=0.999),
        mirror("OC", 500.0, reflectivity=0.99),
        optic("D", "dump", max_power_w=5.0),
        cavity("c", "linear", ["HR", rel("OC", 250.0)], 1064.0, heading=0.0, output_coupler="OC",
               output_power_w=1.0),
        beam("out", "c", [rel("D", 100.0)]),
        enclosure,
        size=(1000.0, 1000.0),
    )


BOX = '[[zone]]\nid = "box"\nkind = "enclosure"\npolygon = [[20, 400], [500, 400], [500, 600], [20, 600]]\n'


def test_leak_through_the_hr():
    (f,) = run("leak-beam", laser())
    assert f.value == pytest.approx(0.1, rel=1e-9) and f.unit == "W"
    assert run("leak-beam", laser(BOX)) == []                  # inside the enclosure all the way


def test_intracavity_power_on_an_open_bench_only():
    (f,) = run("intracavity-power", laser(), intracavity_power_w=50.0, intracavity_error_power_w=200.0)
    assert f.value == pytest.approx(100.0, rel=1e-9) and f.limit == 50.0 and f.severity is None
    assert run("intracavity-power", laser(BOX), intracavity_power_w=50.0) == []
    # above the second limit it is an error on open bench, and still nothing inside the box
    (g,) = run("intracavity-power", laser(), intracavity_power_w=50.0, intracavity_error_power_w=80.0)
    assert g.severity == "error" and g.limit == 80.0
    assert run("intracavity-power", laser(BOX), intracavity_power_w=50.0, intracavity_error_power_w=80.0) == []
