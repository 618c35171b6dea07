"""beam-obstructed: the clearance between a beam and the mounts and obstacles beside it.

Every expected number is worked out here, independently of benchcheck:

- the power of a Gaussian beam beyond a straight edge at distance delta from its axis is
  1/2 erfc(sqrt(2) delta / w), the integral of the intensity exp(-2 x^2 / w^2) over
  x > delta (Siegman, "Lasers" (1986), ch. 17, from memory; the integral is elementary),
  evaluated with ``math.erfc``;
- beam radii come from the Gaussian-beam formulas of ``refphysics`` (Kogelnik & Li,
  Applied Optics 5, 1550 (1966): w(z) = w0 sqrt(1 + (z/z_R)^2), z_R = pi w0^2 / lambda,
  the two-mirror cavity closed forms, a self-consistent q from a round-trip matrix) and
  thin-lens focusing (Self, Applied Optics 22, 658 (1983));
- clearances from footprint corners written out by hand: an obstacle polygon as given,
  a mirror mount from the layout convention (face on the front edge, ``width`` along the
  face, ``depth`` behind it) with the mirror normal parallel to d_out - d_in (law of
  reflection).
"""

from __future__ import annotations

import math
import re

import pytest

import refphysics as ref
from benchcheck import solve_text
from benchcheck.config import Config
from benchcheck.findings import Bench
from benchcheck.plugins import load_rules
from layouts_util import beam, cavity, layout, mirror, optic, source

WL_NM = 1064.0
WL = WL_NM * ref.NM

RULE = load_rules(entry_points=False).rules["beam-obstructed"][0]


def run(text: str, **options):
    sol = solve_text(text)
    bench = Bench(sol.layout, sol, Config().limits)
    opts = RULE.defaults()
    opts.update(options)
    return list(RULE.check(bench, opts))


def edge(delta: float, w: float) -> float:
    """Gaussian power beyond a straight edge (Siegman 1986, ch. 17, from memory)."""
    return 0.5 * math.erfc(math.sqrt(2.0) * delta / w)


def numbers(text: str, key: str) -> float:
    """The number after ``key`` in a message or hint."""
    m = re.search(re.escape(key) + r"\s*(-?[0-9.]+(?:e[-+]?[0-9]+)?)", text)
    assert m, f"{key!r} not in {text!r}"
    return float(m.group(1))


# --- a collimated beam from a source ----------------------------------------------------

W0 = 0.5                       # mm, waist on the source
Z_R = ref.rayleigh(W0, WL)     # 738.3 mm: the radius grows by a third over the table


def source_line(*extra, power_w=2.0):
    """Source at (50, 500) heading +x, waist 0.5 mm on it, ending on a dump at x = 1050."""
    return layout(
        source("S", at=[50.0, 500.0], heading=0.0, wavelength_nm=WL_NM, waist=W0, power_w=power_w),
        optic("D", "dump", at=[1050.0, 500.0]),
        beam("b", "S", ["D"]),
        *extra, size=(1200.0, 1000.0),
    )


def box(ident, x0, y0, x1, y1):
    return optic(ident, "obstacle", polygon=[[x0, y0], [x1, y0], [x1, y1], [x0, y1]])


def test_a_box_beside_the_beam_clips_the_gaussian_edge_where_the_beam_is_widest():
    # the box's lower face is 1 mm above the axis from x = 450 to 650 (z = 400 to 600 mm
    # from the waist); the beam widens along it, so the worst place is its far corner
    (f,) = run(source_line(box("BOX", 450.0, 501.0, 650.0, 520.0)))
    w = ref.w_at(W0, 600.0, Z_R)
    expected = edge(1.0, w)
    assert 1e-6 < expected < 1e-2          # a warning, not an error
    assert f.severity == "warning"
    assert f.value == pytest.approx(expected, rel=1e-5)
    assert f.limit == 1e-6 and f.unit == "fraction"
    assert f.at == pytest.approx((650.0, 500.0), abs=0.01)
    assert set(f.targets) == {"BOX", "b"}
    assert "obstacle \"BOX\"" in f.message and "beam \"b\"" in f.message
    assert numbers(f.message, "passes") == pytest.approx(1.0, rel=1e-3)        # clearance, mm
    assert numbers(f.message, "beam radius is") == pytest.approx(w * 1e3, abs=0.6)   # um
    assert "(650.0, 500.0)" in f.message
    assert numbers(f.message, "limit") == pytest.approx(1e-6)
    # power: 2 W in the beam times the fraction
    assert numbers(f.message, "about") == pytest.approx(2.0 * expected, rel=1e-2)


def test_the_hint_names_the_smallest_move_that_brings_the_fraction_under_the_limit():
    (f,) = run(source_line(box("BOX", 450.0, 501.0, 650.0, 520.0)))
    move = numbers(f.hint, "move obstacle \"BOX\"")
    w = ref.w_at(W0, 600.0, Z_R)
    # moved up by ``move`` the worst place (still the far corner) is clear; 0.1 mm less is not
    assert edge(1.0 + move, w) <= 1e-6
    assert edge(1.0 + move - 0.1, w) > 1e-6
    assert f"by (+0.0, +{move:.1f}) mm" in f.hint            # away from the beam: +y


def test_limits_come_from_the_options():
    text = source_line(box("BOX", 450.0, 501.0, 650.0, 520.0))
    expected = edge(1.0, ref.w_at(W0, 600.0, Z_R))          # 9.5e-4
    assert run(text, max_fraction=1e-3) == []
    (f,) = run(text, error_fraction=1e-4)
    assert f.severity == "error" and f.value == pytest.approx(expected, rel=1e-5)


def test_a_post_across_the_axis_is_an_error():
    (f,) = run(source_line(box("POST", 500.0, 495.0, 510.0, 505.0)))
    assert f.severity == "error"
    assert "runs into obstacle \"POST\"" in f.message
    # the worst place is the middle of the post, 5 mm inside it on the axis
    assert f.at == pytest.approx((505.0, 500.0), abs=0.05)
    assert f.value == pytest.approx(edge(-5.0, ref.w_at(W0, 455.0, Z_R)))   # = 1 to rounding
    assert f.value > 0.999


def test_a_thin_wall_across_the_axis_is_found_between_samples():
    # 0.05 mm thick: far thinner than the spacing of the uniform samples along 1000 mm
    (f,) = run(source_line(box("FOIL", 700.0, 490.0, 700.05, 510.0)))
    assert f.severity == "error" and f.value >= 0.5
    assert f.at[0] == pytest.approx(700.025, abs=0.03)


def test_a_clear_bench_has_no_finding():
    assert run(source_line()) == []
    # 10 mm away: 1/2 erfc(sqrt(2) * 10 / 0.69) is far below 1e-6
    assert edge(10.0, ref.w_at(W0, 1000.0, Z_R)) < 1e-30
    assert run(source_line(box("BOX", 450.0, 510.0, 650.0, 520.0))) == []


def test_a_source_standing_on_its_housing_is_not_obstructed_by_it():
    head = box("HEAD", 0.0, 480.0, 50.0, 520.0)           # the source sits on its front wall
    assert run(source_line(head)) == []


def test_the_optics_at_the_ends_of_a_leg_are_exempt():
    # the lens mount straddles the beam and the steering mirror's mount lies across the
    # line it arrives on: both are the beam's own optics at the ends of those legs
    text = layout(
        source("S", at=[50.0, 500.0], heading=0.0, wavelength_nm=WL_NM, waist=W0, power_w=2.0),
        optic("L", "lens", focal_length=2000.0, at=[300.0, 500.0], mount={"size": [40.0, 40.0]}),
        mirror("M", at=[600.0, 500.0], fold=90.0, mount={"size": [40.0, 15.0]}),
        optic("D", "dump", at=[600.0, 900.0]),
        beam("b", "S", ["L", "M", "D"]),
        size=(1200.0, 1000.0),
    )
    assert run(text) == []


# --- a beam traced on past its last optic -----------------------------------------------

def lens_then_nothing(*extra):
    """Source at (0, 200), waist 0.5 mm on it; a 200 mm lens at x = 300 ends the path, so the
    beam is traced on to the table edge at x = 1000."""
    return layout(
        optic("L", "lens", focal_length=200.0, at=[300.0, 200.0]),
        source("S", at=[0.0, 200.0], heading=0.0, wavelength_nm=WL_NM, waist=W0, power_w=1.0),
        beam("b", "S", ["L"]),
        *extra, size=(1000.0, 400.0),
    )


def test_the_stretch_a_beam_is_traced_on_is_checked():
    (f,) = run(lens_then_nothing(box("BOX", 700.0, 201.2, 760.0, 230.0)))
    # Self 1983: the waist 300 mm before the lens is imaged s' behind it, magnified by m
    s_out, mag = ref.self_focus(300.0, Z_R, 200.0)
    w0 = W0 * mag
    w = ref.w_at(w0, 760.0 - 300.0 - s_out, ref.rayleigh(w0, WL))      # widest at the far corner
    assert "traced on past L" in f.message
    assert f.at == pytest.approx((760.0, 200.0), abs=0.01)
    assert f.value == pytest.approx(edge(1.2, w), rel=1e-5)


def test_the_mount_a_traced_on_beam_stops_on_is_not_an_obstruction():
    # the beam ends on BLOCK (beam-unterminated reports where it goes); BOX beside it is checked
    assert run(lens_then_nothing(box("BLOCK", 900.0, 150.0, 950.0, 250.0))) == []


# --- cavities ---------------------------------------------------------------------------

def z_fold(m3_y=513.2):
    """Linear cavity M1 (flat, (100, 500)) -> M2 (flat fold, (400, 500)) -> M3 (flat fold)
    -> M4 (R = 1000 mm, output coupler, T = 1 %, 1 W out).  M3 at (150, m3_y) and M4 at
    (400, 2 m3_y - 500) make M3's normal exactly +x; its 25 mm wide, 12 mm deep mount spans
    x 138..150 and reaches down to y = m3_y - 12.5, beside the first leg (y = 500)."""
    mount = {"size": [25.0, 12.0]}
    return layout(
        mirror("M1", at=[100.0, 500.0], mount=mount),
        mirror("M2", at=[400.0, 500.0], mount=mount),
        mirror("M3", at=[150.0, m3_y], mount=mount),
        mirror("M4", 1000.0, at=[400.0, 2.0 * m3_y - 500.0], mount=mount, reflectivity=0.99),
        cavity("z", "linear", ["M1", "M2", "M3", "M4"], WL_NM, output_coupler="M4", output_power_w=1.0),
        size=(600.0, 700.0),
    )


def test_a_z_fold_leg_passing_the_far_fold_mirror_is_clipped_by_its_mount():
    (f,) = run(z_fold())
    # flat folds at near-normal incidence: the mode is that of a flat-concave two-mirror
    # cavity of the same length, waist on the flat M1 (Kogelnik & Li 1966)
    length = 300.0 + 2.0 * math.hypot(250.0, 13.2)
    mode = ref.two_mirror(None, 1000.0, length, WL)
    assert mode["t1"] == pytest.approx(0.0, abs=1e-9)
    w = ref.w_at(mode["w0"], 50.0, mode["z_r"])             # at x = 150, M3's face
    expected = edge(0.7, w)
    assert 1e-6 < expected < 1e-2
    assert set(f.targets) == {"M3", "z"}
    assert "leg M1 -> M2" in f.message and "the mount of mirror \"M3\"" in f.message
    assert f.at == pytest.approx((150.0, 500.0), abs=0.01)
    assert f.value == pytest.approx(expected, rel=1e-4)
    assert f.severity == "warning"
    # M3 is on the path: the hint asks for a smaller mount or a wider angle, by the least
    # amount (to 0.1 mm) that brings the fraction under the limit
    less = numbers(f.hint, "reaches")
    assert edge(0.7 + less, w) <= 1e-6 < edge(0.7 + less - 0.1, w)
    # circulating power P_out / T_oc = 100 W (docs/design.md §4), clipped at that fraction
    assert "100 W circulating each way" in f.message
    assert numbers(f.message, "about") == pytest.approx(100.0 * expected, rel=1e-2)


def test_a_z_fold_with_room_is_clear():
    # 3 mm of clearance is eight mode radii
    assert run(z_fold(m3_y=515.5)) == []


def test_a_ring_is_checked_on_its_closing_leg():
    # triangle M1 (100, 100) -> M2 (500, 100) -> M3 (300, 300) -> back to M1; an obstacle's
    # corner stands 1 mm off the closing leg (the line y = x) at (200, 200), outside the ring
    d = 1.0
    cx, cy = 200.0 - d / math.sqrt(2.0), 200.0 + d / math.sqrt(2.0)
    corner = optic("POST", "obstacle", polygon=[[cx - 20.0, cy], [cx, cy], [cx, cy + 20.0], [cx - 20.0, cy + 20.0]])
    text = layout(
        mirror("M1", at=[100.0, 100.0], mount={"size": [25.0, 12.0]}),
        mirror("M2", at=[500.0, 100.0], mount={"size": [25.0, 12.0]}),
        mirror("M3", 1000.0, at=[300.0, 300.0], mount={"size": [25.0, 12.0]}),
        cavity("ring", "ring", ["M1", "M2", "M3"], WL_NM),
        corner, size=(700.0, 500.0),
    )
    (f,) = run(text)
    assert "leg M3 -> M1" in f.message
    assert f.at == pytest.approx((200.0, 200.0), abs=0.01)
    clearance = numbers(f.message, "passes")
    radius = numbers(f.message, "beam radius is") * 1e-3
    assert clearance == pytest.approx(d, rel=1e-3)
    # the fraction is the Gaussian edge at that clearance and radius (3 figures printed)
    assert f.value == pytest.approx(edge(clearance, radius), rel=2e-2)
    assert "circulating" not in f.message          # no power given: none claimed


def test_without_a_tangential_mode_the_sagittal_radius_is_used():
    # M1 flat (100, 500) -> M2 (R = 100 mm, 90 deg fold, (180, 500)) -> M3 flat (180, 580).
    # At 45 deg incidence f_t = (R/2) cos 45 = 35.4 mm and f_s = (R/2)/cos 45 = 70.7 mm
    # (Kogelnik et al. 1972); with 80 mm arms the flat-lens-flat cavity is unstable in the
    # tangential plane (80 > 2 f_t) and stable in the sagittal one.
    mount = {"size": [25.0, 12.0]}
    text = layout(
        mirror("M1", at=[100.0, 500.0], mount=mount),
        mirror("M2", 100.0, at=[180.0, 500.0], mount=mount),
        mirror("M3", at=[180.0, 580.0], mount=mount),
        cavity("c", "linear", ["M1", "M2", "M3"], WL_NM),
        box("BOX", 120.0, 500.35, 140.0, 510.0),
        size=(400.0, 700.0),
    )
    f_s = 50.0 / math.cos(math.radians(45.0))
    rt = ref.chain(ref.free(80.0), ref.lens(f_s), ref.free(80.0), ref.free(80.0), ref.lens(f_s), ref.free(80.0))
    q = ref.self_consistent_q(rt)                  # at M1, leaving toward M2
    w = ref.w_of_q(q + 40.0, WL)                   # x = 140, the box's far corner
    (f,) = run(text)
    assert "sagittal" in f.message
    assert f.at == pytest.approx((140.0, 500.0), abs=0.01)
    assert f.value == pytest.approx(edge(0.35, w), rel=1e-4)


def test_a_cavity_with_no_mode_in_either_plane_is_skipped():
    # two R = 100 mm mirrors 250 mm apart: g1 g2 = 2.25, unstable (Kogelnik & Li 1966);
    # there is no beam size, so a post across the axis gives no clipped fraction
    text = layout(
        mirror("M1", 100.0, at=[100.0, 500.0]),
        mirror("M2", 100.0, at=[350.0, 500.0]),
        cavity("c", "linear", ["M1", "M2"], WL_NM),
        box("POST", 200.0, 495.0, 210.0, 505.0),
        size=(500.0, 700.0),
    )
    assert run(text) == []


def test_a_beam_leaving_a_cavity_passes_its_own_output_coupler_mount():
    # the output beam leaves through the back of OC, through OC's own mount (the face is its
    # front edge): OC is the leg's start, exempt; a post 0.7 mm off the output beam is not
    mount = {"size": [25.0, 12.0]}
    text = layout(
        mirror("HR", 500.0, at=[100.0, 500.0], mount=mount),
        mirror("OC", at=[300.0, 500.0], mount=mount, reflectivity=0.98),
        optic("D", "dump", at=[800.0, 500.0]),
        cavity("cav", "linear", ["HR", "OC"], WL_NM, output_coupler="OC", output_power_w=1.0),
        beam("out", "cav", ["D"]),
        size=(1000.0, 1000.0),
    )
    assert run(text) == []
    (f,) = run(text + box("POST", 500.0, 500.7, 520.0, 520.0))
    assert "beam \"out\" from cav to D" in f.message and set(f.targets) == {"POST", "out"}
    # the flat OC sits on the waist of the flat-concave cavity (Kogelnik & Li 1966); the
    # beam keeps that waist's Rayleigh range (a flat output coupler of no substrate is no lens)
    mode = ref.two_mirror(500.0, None, 200.0, WL)
    w = ref.w_at(mode["w2"], 220.0, mode["z_r"])            # x = 520, the far corner
    assert f.value == pytest.approx(edge(0.7, w), rel=1e-4)
    # power out: P_out = 1 W
    assert numbers(f.message, "about") == pytest.approx(1.0 * f.value, rel=1e-2)


def _pump_line(second_pass: bool = False) -> str:
    """A 3.5 mm pump beam through a lens L1 (mount 25.4 mm deep, centred on it) and, 20 mm
    on, an aperture A: the lens mount ends 7.3 mm behind A, on the axis of the leg A -> D."""
    if second_pass:     # back from a mirror at 300 mm through the line of L1 to a dump behind S
        parts = [optic("M", "mirror", at=[300.0, 500.0]), optic("D", "dump", at=[-50.0, 500.0]),
                 beam("pump", "S", ["L1", {"id": "M", "fold": 0.0}, "D"])]
    else:
        parts = [optic("A", "aperture", at=[120.0, 500.0], diameter=25.0, mount={"size": [40.0, 4.0]}),
                 optic("D", "dump", at=[400.0, 500.0]), beam("pump", "S", ["L1", "A", "D"])]
    return layout(
        source("S", at=[0.0 if not second_pass else -20.0, 500.0], heading=0.0, wavelength_nm=808.0,
               power_w=5.0, waist=3.5 if not second_pass else 0.5),
        optic("L1", "lens", at=[100.0, 500.0], focal_length=1000.0, diameter=25.4),
        *parts, size=(1000.0, 1000.0))


def test_a_mount_behind_the_start_of_a_leg_does_not_clip_it():
    # before the fix the leg A -> D was "clipped" by L1 7.3 mm behind its start (a 3.4 mm
    # beam: 1/2 erfc(sqrt 2 * 7.3 / 3.43) = 1e-5 > 1e-6): light on that leg never goes there
    assert [f for f in run(_pump_line()) if "L1" in f.targets] == []


def test_a_footprint_abreast_of_the_leg_is_still_found_and_no_angle_hint_on_a_straight_line():
    # a second pass back through the line of L1 (not listed on that leg): L1's mount is abreast
    # of the leg M -> D and in line with it; there is no angle between legs to open
    found = [f for f in run(_pump_line(second_pass=True)) if f.targets[0] == "L1"]
    assert found and found[0].severity == "error"
    assert "open the angle" not in found[0].hint and "in line with this leg" in found[0].hint
