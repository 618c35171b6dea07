"""Placement and tracing against hand geometry (plane trigonometry).

The fold convention is docs/design.md §3: fold is the full angle between the arriving and
leaving beam (twice the angle of incidence), positive when the beam turns left, and the new
heading is old + sign(fold) * (180 - |fold|).
"""

from __future__ import annotations

import math

import pytest

from benchcheck import solve_text
from benchcheck.placement import fold_for_turn, turn_for_fold

HEAD = 'format = 1\n[bench]\nname = "g"\nsize = [2000, 2000]\n'


def mirror(ident, at=None, roc=None, extra=""):
    s = f'[[optic]]\nid = "{ident}"\nkind = "mirror"\n'
    if at:
        s += f"at = [{at[0]!r}, {at[1]!r}]\n"
    if roc:
        s += f"roc = {roc!r}\n"
    return s + extra


def kinds(sol):
    return [i.kind for i in sol.trace.issues]


@pytest.mark.parametrize("fold, turn", [(90, 90), (-90, -90), (20, 160), (-20, -160), (0, 180), (170, 10)])
def test_fold_to_heading_change(fold, turn):
    # a 45-degree steering mirror turns the beam by 90 degrees (fold = +-90); a small
    # fold is almost a retro-reflection (docs/design.md §3)
    assert turn_for_fold(fold) % 360 == pytest.approx(turn % 360)
    assert fold_for_turn(turn) == pytest.approx(fold)


def test_relative_placement_positions_and_angles():
    """Start at (100, 100) heading 0; 200 mm to M2, fold +90 (turn left); 150 mm to M3."""
    text = HEAD + mirror("M1", (100.0, 100.0)) + mirror("M2") + mirror("M3") + """
[[cavity]]
id = "c"
kind = "linear"
heading = 0.0
wavelength_nm = 1000
path = ["M1", { id = "M2", distance = 200.0, fold = 90.0 }, { id = "M3", distance = 150.0 }]
"""
    sol = solve_text(text)
    p = {k: v.point for k, v in sol.placement.optics.items()}
    assert p["M2"] == pytest.approx([300.0, 100.0])
    assert p["M3"] == pytest.approx([300.0, 250.0])
    hits = sol.trace.cavities["c"].hits
    assert [h.s for h in hits] == pytest.approx([0.0, 200.0, 350.0])
    assert math.degrees(hits[1].aoi) == pytest.approx(45.0)
    assert hits[1].fold == pytest.approx(90.0)
    assert hits[0].fold == 0.0 and hits[2].fold == 0.0
    # the mirror's normal bisects arriving (+x) and leaving (+y) directions: (-1, 1)/sqrt 2
    n = sol.placement.optics["M2"].direction
    assert n == pytest.approx([-math.sqrt(0.5), math.sqrt(0.5)])
    assert sol.trace.issues == []


def test_fold_mismatch_is_reported_with_numbers():
    # M2 at (300,100), M3 at (300,250): the geometry folds by +90; 80 is declared
    text = HEAD + mirror("M1", (100.0, 100.0)) + mirror("M2", (300.0, 100.0), extra="fold = 80.0\n") \
        + mirror("M3", (300.0, 250.0)) + """
[[cavity]]
id = "c"
kind = "linear"
wavelength_nm = 1000
path = ["M1", "M2", "M3"]
"""
    sol = solve_text(text)
    issue = [i for i in sol.trace.issues if i.kind == "fold-mismatch"][0]
    assert issue.value == pytest.approx(90.0) and issue.limit == 80.0
    assert issue.loc.line > 1


def test_bend_at_a_lens_is_reported():
    # the beam goes (0,100) -> lens (100,100) -> dump at (200, 150): it turns by atan(50/100)
    text = HEAD + """
[[optic]]
id = "L"
kind = "lens"
at = [100.0, 100.0]
focal_length = 100.0
[[optic]]
id = "D"
kind = "dump"
at = [200.0, 150.0]
[[source]]
id = "S"
at = [0.0, 100.0]
heading = 0.0
wavelength_nm = 1000
waist = 0.5
[[beam]]
id = "b"
from = "S"
path = ["L", "D"]
"""
    sol = solve_text(text)
    issue = [i for i in sol.trace.issues if i.kind == "bend-at-non-folding"][0]
    assert issue.value == pytest.approx(math.degrees(math.atan2(50, 100)))


def test_ring_that_does_not_close_reports_the_miss():
    # square ring with 200 mm sides placed relatively; the last fold is 95 instead of 90,
    # so the beam leaving M4 misses M1 by 200 * sin(5 deg) sideways
    text = HEAD + mirror("M1", (500.0, 500.0)) + mirror("M2") + mirror("M3") + mirror("M4") + """
[[cavity]]
id = "r"
kind = "ring"
heading = 0.0
wavelength_nm = 1000
path = ["M1", { id = "M2", distance = 200.0, fold = 90.0 }, { id = "M3", distance = 200.0, fold = 90.0 },
        { id = "M4", distance = 200.0, fold = 95.0 }]
"""
    sol = solve_text(text)
    issue = [i for i in sol.trace.issues if i.kind == "ring-not-closed"][0]
    assert issue.value == pytest.approx(200.0 * math.sin(math.radians(5.0)), rel=1e-9)


def square_ring(m2_fold: float = 90.0, m4_fold: float = 90.0) -> str:
    """A square ring of 200 mm sides placed relatively from M1 (declared fold 90)."""
    return HEAD + mirror("M1", (500.0, 500.0), extra="fold = 90.0\n") + mirror("M2") + mirror("M3") + mirror("M4") + f"""
[[cavity]]
id = "r"
kind = "ring"
heading = 0.0
wavelength_nm = 1000
path = ["M1", {{ id = "M2", distance = 200.0, fold = {m2_fold!r} }}, {{ id = "M3", distance = 200.0, fold = 90.0 }},
        {{ id = "M4", distance = 200.0, fold = {m4_fold!r} }}]
"""


def test_closed_relative_ring_has_no_issue():
    sol = solve_text(square_ring())
    assert sol.trace.issues == []
    assert sol.cavities["r"].round_trip_mm == pytest.approx(800.0)


def test_optic_off_the_table_and_overhanging_mount():
    text = 'format = 1\n[bench]\nname = "g"\nsize = [500, 300]\n' + mirror("M1", (5.0, 150.0)) \
        + mirror("M2", (700.0, 150.0)) + """
[[cavity]]
id = "c"
kind = "linear"
wavelength_nm = 1000
path = ["M1", "M2"]
"""
    sol = solve_text(text)
    msgs = [i.message for i in sol.trace.issues if i.kind == "off-table"]
    assert any("M2" in m and "off the" in m for m in msgs)
    assert any("M1" in m and "overhangs" in m for m in msgs)


def test_heading_that_contradicts_the_geometry():
    text = HEAD + mirror("M1", (100.0, 100.0)) + mirror("M2", (100.0, 300.0)) + """
[[cavity]]
id = "c"
kind = "linear"
heading = 0.0
wavelength_nm = 1000
path = ["M1", "M2"]
"""
    sol = solve_text(text)
    issue = [i for i in sol.trace.issues if i.kind == "heading-mismatch"][0]
    assert issue.value == pytest.approx(90.0)


def test_pump_through_a_cavity_mirror_sees_the_geometric_angle():
    """A beam crossing a cavity's fold mirror meets it at the angle between its direction
    and the mirror normal that the cavity set (law of reflection, plane geometry)."""
    text = HEAD + mirror("M1", (100.0, 100.0)) + mirror("M2", (300.0, 100.0)) + mirror("M3", (400.0, 200.0)) + """
[[optic]]
id = "D"
kind = "dump"
at = [500.0, 100.0]
[[source]]
id = "P"
at = [100.0, 300.0]
toward = "M2"
wavelength_nm = 532
waist = 0.5
[[cavity]]
id = "c"
kind = "linear"
wavelength_nm = 1000
path = ["M1", "M2", "M3"]
[[beam]]
id = "pump"
from = "P"
path = ["M2"]
"""
    sol = solve_text(text)
    # cavity: arrives along +x, leaves toward (1,1): turn 45, fold 135, aoi 22.5 deg;
    # normal = (d_out - d_in) normalised, pointing at 112.5 deg
    # pump heading from (100,300) to (300,100): -45 deg; angle to the normal line: 22.5 deg
    hit = sol.trace.beams["pump"].hits[0]
    assert math.degrees(hit.aoi) == pytest.approx(180.0 - (112.5 + 45.0), abs=1e-9)
    assert hit.action == "end" or hit.action == "transmit"


SPLITTER = HEAD + """
[[optic]]
id = "BS"
kind = "splitter"
at = [200.0, 100.0]
reflectivity = 0.5
{face}
[[optic]]
id = "D1"
kind = "dump"
at = [400.0, 100.0]

[[optic]]
id = "D2"
kind = "dump"

[[source]]
id = "S1"
at = [50.0, 100.0]
heading = 0.0
wavelength_nm = 633
power_w = 0.0001
waist = 0.5

[[source]]
id = "S2"
at = [200.0, 300.0]
heading = -90.0
wavelength_nm = 633
power_w = 0.0001
waist = 0.5

[[beam]]
id = "a"
from = "S1"
path = ["BS", "D1"]

[[beam]]
id = "b"
from = "S2"
path = [{{ id = "BS", fold = 90.0 }}, {{ id = "D2", distance = 150.0 }}]
"""


def test_splitter_face_names_the_splitters_fold_and_its_line():
    """Beam "a" passes BS along +x and sets its face: with the default 90 deg fold the
    reflected branch of "a" would leave along +y, so the normal is along (-1, 1).  Beam "b"
    comes down (-y) and its entry's fold = 90 sends it along +x; the law of reflection
    off that face sends it along -x instead, 180 deg away.  The face that reflects -y into
    +x has its normal along (1, 1); off it "a" (+x) reflects into -y, a right turn of 90
    deg: fold = -90 (plane geometry, computed here)."""
    sol = solve_text(SPLITTER.format(face=""))
    issue = next(i for i in sol.trace.issues if i.kind == "splitter-face")
    assert issue.value == pytest.approx(180.0)
    assert "its own 'fold' key, which is not given" in issue.message
    assert "'fold = -90' on \"BS\"" in issue.message
    assert issue.loc.line == 6            # the splitter's [[optic]] table, not [bench]
    assert not [i for i in sol.trace.issues if i.kind == "reflection-off-normal"]
    note = next(n for n in sol.placement.notes if "BS" in n)
    assert note.loc.line == 6 and note.targets == ("BS",)
    # with the suggested face the geometry is consistent
    fixed = solve_text(SPLITTER.format(face="fold = -90.0\n"))
    assert not [i for i in fixed.trace.issues if i.kind in ("splitter-face", "reflection-off-normal", "fold-mismatch")]


def test_a_splitters_fold_is_checked_on_the_path_that_sets_its_face():
    # beam "a" reflects at BS by its entry's fold = 90 while BS says fold = -90: the
    # geometry follows the entry, so BS's own key disagrees by 180 deg
    text = SPLITTER.format(face="fold = -90.0\n").replace('path = ["BS", "D1"]',
                                                         'path = [{ id = "BS", fold = 90.0 }, { id = "D3", distance = 100.0 }]')
    text += '[[optic]]\nid = "D3"\nkind = "dump"\n'
    sol = solve_text(text)
    bad = [i for i in sol.trace.issues if i.kind == "fold-mismatch" and i.targets == ("BS", "a")]
    assert len(bad) == 1 and bad[0].limit == -90.0 and bad[0].loc.line == 11   # BS's fold key


def test_ring_not_closed_says_which_fold_closes_it_and_where_folds_part():
    # the square ring of test_ring_that_does_not_close_reports_the_miss, with M1 declared
    # 90 deg: M4 declared 95 deg sends the beam 5 deg off M1, and 90 deg would close it
    # (a square turns by 90 deg at each corner, plane geometry); the declared folds turn
    # by 90 + 90 + 85 + 90 = 355 deg, 5 deg short of a whole turn
    text = square_ring(m4_fold=95.0)
    issue = [i for i in solve_text(text).trace.issues if i.kind == "ring-not-closed"][0]
    assert "a fold of 90.000 deg at \"M4\" (declared 95) would send it onto \"M1\"" in issue.message
    assert "first part at \"M4\" (90.000 deg on the table, 95 declared)" in issue.message
    assert "turn the beam by 355.000 deg in all, -5.000 deg from a whole turn" in issue.message
    # the mistake made earlier, at M2 (85 instead of 90, a turn of 180 - 85 = 95 deg): the
    # ring follows the declared folds up to M4, and the total, 365 deg, shows the 5 deg
    issue = [i for i in solve_text(square_ring(m2_fold=85.0)).trace.issues if i.kind == "ring-not-closed"][0]
    assert "turn the beam by 365.000 deg in all, +5.000 deg from a whole turn" in issue.message


def folded_with_pump(fold: float, pump: str) -> str:
    """OC at (100, 500) heading +x; 100 mm to the fold mirror FM (fold ``fold``), then the
    crystal X 50 mm and the end mirror M1 100 mm on.  A pump through FM along FM -> X."""
    return HEAD + mirror("OC", (100.0, 500.0), extra="reflectivity = 0.95\n") + mirror("FM", extra="reflectivity = { 1064 = 0.999, 808 = 0.05 }\n") \
        + mirror("M1") + '[[optic]]\nid = "X"\nkind = "crystal"\nlength = 10.0\nindex = 1.8\n' \
        + '[[optic]]\nid = "L1"\nkind = "lens"\nfocal_length = 100.0\n' + pump + f"""
[[cavity]]
id = "c"
kind = "linear"
heading = 0.0
wavelength_nm = 1064
path = ["OC", {{ id = "FM", distance = 100.0, fold = {fold!r} }}, {{ id = "X", distance = 50.0 }},
        {{ id = "M1", distance = 100.0 }}]

[[beam]]
id = "pump"
from = "P"
path = [{{ id = "L1", distance = 30.0 }}, "FM", "X", "M1"]
"""


COAXIAL_PUMP = """[[source]]
id = "P"
coaxial = { through = "FM", toward = "X", distance = 80.0 }
wavelength_nm = 808
power_w = 1.0
waist = 0.2
"""


@pytest.mark.parametrize("fold", [30.0, 40.0, -25.0])
def test_a_coaxial_source_stays_on_the_leg_when_the_fold_changes(fold):
    # FM at (200, 500); the leg FM -> X leaves at heading 0 + sign(fold)(180 - |fold|), so
    # the source stands 80 mm behind FM on that line, at FM - 80 u (plane geometry)
    sol = solve_text(folded_with_pump(fold, COAXIAL_PUMP))
    heading = math.radians(math.copysign(180.0 - abs(fold), fold))
    u = (math.cos(heading), math.sin(heading))
    assert sol.placement.sources["P"] == pytest.approx([200.0 - 80.0 * u[0], 500.0 - 80.0 * u[1]], abs=1e-9)
    assert sol.placement.optics["L1"].point == pytest.approx([200.0 - 50.0 * u[0], 500.0 - 50.0 * u[1]], abs=1e-9)
    assert sol.trace.issues == []
    assert [h.action for h in sol.trace.beams["pump"].hits[:3]] == ["transmit"] * 3


def test_a_pump_placed_by_coordinates_breaks_when_the_fold_changes_and_says_it_passes():
    # the same source placed by 'at' where the coaxial one stands for a fold of 30 deg; the
    # fold becomes 40 deg, so at FM the pump turns by 10 deg (the leg turned by 10 deg)
    heading = math.radians(150.0)
    at = (200.0 - 80.0 * math.cos(heading), 500.0 - 80.0 * math.sin(heading))
    pump = COAXIAL_PUMP.replace('coaxial = { through = "FM", toward = "X", distance = 80.0 }',
                                f"at = [{at[0]!r}, {at[1]!r}]\nheading = 150.0")
    assert solve_text(folded_with_pump(30.0, pump)).trace.issues == []
    sol = solve_text(folded_with_pump(40.0, pump))
    (issue,) = [i for i in sol.trace.issues if i.targets == ("FM", "pump")]
    assert issue.kind == "bend-in-passage" and issue.value == pytest.approx(10.0, abs=1e-9)
    assert "passes through mirror \"FM\"" in issue.message and "reflect" not in issue.message


def test_coaxial_through_a_fold_mirror_must_say_which_leg():
    from benchcheck import LayoutError

    pump = COAXIAL_PUMP.replace('toward = "X", ', "")
    with pytest.raises(LayoutError, match="more than one cavity leg .toward OC, X.; say which with 'toward'"):
        solve_text(folded_with_pump(30.0, pump))
