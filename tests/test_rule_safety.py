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


# --- leak beams pass through transmissive optics ------------------------------------------

def _strays(text: str) -> dict:
    return {r.stray.id: r for r in solve_text(text).strays}


def test_a_leak_passes_a_lens_inside_its_clear_aperture_and_stops_on_the_dump_behind_it():
    # the HR's 0.1 W leak goes -x along y = 500; a lens (absorption 1 %) at x = 60, then a
    # dump at x = 20: the lens passes 1 - A = 0.99 of it (transmission = 1 - R - A, README)
    extra = (optic("L", "lens", at=[60.0, 500.0], focal_length=200.0, diameter=25.4, absorption=0.01)
             + optic("D2", "dump", at=[20.0, 500.0], mount={"size": [20.0, 5.0]}))
    r = _strays(laser(extra))["c/HR"]
    assert r.stray.via == ("L",) and r.stray.end.kind == "footprint" and r.stray.end.id == "D2"
    assert r.power_w == pytest.approx(0.1, rel=1e-9)
    assert r.end_power_w == pytest.approx(0.1 * 0.99, rel=1e-9)
    # stopped on the dump, not "at the lens": no stray-limit finding; what remains is that
    # 0.1 W crosses 80 mm of open bench above the MPE before the dump (a warning)
    found = run("leak-beam", laser(extra))
    assert [(f.unit, f.severity) for f in found] == [("exposure/MPE", "warning")]
    assert "open bench before it" in found[0].message


def test_a_lens_bends_an_off_axis_leak_toward_its_focus():
    # lens axis along x at y = 505, f = 100 mm; the leak meets it 5 mm below the axis,
    # parallel to it, so it leaves toward the focal point 100 mm on, (-40, 505): at the table
    # edge x = 0, 60 mm on, it is at y = 500 + 5 * 60 / 100 = 503 (paraxial thin lens, Hecht,
    # Optics, ch. 5, from memory: a ray parallel to the axis passes through the focus)
    extra = optic("L", "lens", at=[60.0, 505.0], focal_length=100.0, diameter=25.4)
    st = _strays(laser(extra))["c/HR"].stray
    assert st.via == ("L",) and st.end.kind == "table-edge"
    assert st.end.point == pytest.approx((0.0, 503.0), abs=1e-9)
    (f,) = run("leak-beam", laser(extra))
    assert "passes L" in f.message and f.value == pytest.approx(0.1, rel=1e-9)


def test_a_leak_outside_the_clear_aperture_stops_on_the_mount():
    # 20 mm below the axis of a 25.4 mm lens whose mount is 50.8 mm wide: the mount body
    extra = optic("L", "lens", at=[60.0, 520.0], focal_length=100.0, diameter=25.4)
    st = _strays(laser(extra))["c/HR"].stray
    assert st.via == () and st.end.id == "L"
    (f,) = run("leak-beam", laser(extra))
    assert "the mount of L" in f.message


def test_a_window_passes_a_leak_and_reflects_a_secondary_beam():
    # an untilted window (R = 0.1, no absorption) facing the leak: 0.9 of the 0.1 W goes on,
    # 0.1 of it is reflected straight back as a secondary beam of 0.01 W
    extra = optic("P", "plate", at=[60.0, 500.0], thickness=3.0, index=1.5, reflectivity=0.1, diameter=25.4)
    strays = _strays(laser(extra))
    leak = strays["c/HR"]
    assert leak.stray.via == ("P",) and leak.end_power_w == pytest.approx(0.09, rel=1e-9)
    back = strays["c/HR/P"]
    assert back.stray.kind == "secondary" and back.power_w == pytest.approx(0.01, rel=1e-9)
    assert back.stray.direction == pytest.approx([1.0, 0.0], abs=1e-12)


def test_the_reflection_of_a_tilted_plate_is_reported_not_skipped():
    # a plate tilted by 10 deg: its side of tilt is not in the layout, so its reflection
    # (R = 0.1) cannot be traced; it is a geometry issue instead of a silent omission
    extra = optic("P", "plate", at=[60.0, 500.0], thickness=3.0, index=1.5, aoi=10.0, reflectivity=0.1,
                  diameter=25.4)
    sol = solve_text(laser(extra))
    (issue,) = [i for i in sol.trace.issues if i.kind == "stray-reflection-untraced"]
    assert issue.targets == ("P", "c") and issue.value == pytest.approx(0.1)
    assert "c/HR/P" not in {r.stray.id for r in sol.strays}


def test_the_beam_table_lists_what_a_stray_passes_and_what_reaches_its_end():
    from benchcheck import beam_table

    extra = (optic("L", "lens", at=[60.0, 500.0], focal_length=200.0, diameter=25.4, absorption=0.01)
             + optic("D2", "dump", at=[20.0, 500.0], mount={"size": [20.0, 5.0]}))
    doc = beam_table(solve_text(laser(extra)))
    (leak,) = [s for s in doc["strays"] if s["id"] == "c/HR"]
    assert leak["passes"] == ["L"] and leak["ends"]["id"] == "D2"
    assert leak["power_at_end_w"] == pytest.approx(0.1 * 0.99, rel=1e-9)     # T = 1 - A of the lens
    # the whole path: HR at x = 100 to the dump's face at x = 22.5
    assert leak["ends"]["length_mm"] == pytest.approx(77.5, abs=1e-6)
