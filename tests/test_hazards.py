"""Laser hazards on the bench: every segment judged against the exposure limit, the rules
whose severity follows the hazard, the caution on every output, and the hazards command.

Expected exposures, eyewear densities and hazard distances are computed here from the
Gaussian beam and the standards' formulas, independently of benchcheck's own code:

- the MPE at 1064 nm for 10 s: H = 18 C_A C_C t^0.75 J/m^2 with C_A = 5, C_C = 1
  (IEC 60825-1:2014 Table A.1, from memory), E = H / t;
- the power through a circular aperture of diameter D centred on a round Gaussian beam of
  1/e^2 radius w: P (1 - exp(-2 (D/2)^2 / w^2)) (the Gaussian integrated over the disc);
- the limiting aperture for 400-1400 nm: 7 mm (IEC 60825-1:2014 Table A.3, from memory);
- OD = log10(exposure / MPE) rounded up (common practice);
- a Gaussian beam w(z)^2 = w0^2 (1 + (z / z_R)^2), z_R = pi w0^2 / lambda (Kogelnik & Li,
  Appl. Opt. 5, 1550, 1966, eq. 21 of its Gaussian-beam section, from memory).
"""

from __future__ import annotations

import csv
import io
import json
import math
from pathlib import Path

import pytest

from benchcheck import solve_text
from benchcheck.cli import main
from benchcheck.hazards import assess
from layouts_util import beam, cavity, layout, mirror, optic, rel, source
from test_rule_safety import run  # one rule on a solved layout, limits overridden

APERTURE_MM = 7.0


@pytest.fixture(autouse=True)
def builtin_rules_only(monkeypatch):
    monkeypatch.setenv("BENCHCHECK_NO_ENTRY_POINTS", "1")


def mpe_1064_cw_w_m2(t: float = 10.0) -> float:
    """IEC 60825-1:2014 Table A.1 (from memory): 18 C_A C_C t^0.75 J/m^2, C_A = 5, C_C = 1."""
    return 18.0 * 5.0 * 1.0 * t ** 0.75 / t


def through_aperture(power: float, w_mm: float, d_mm: float = APERTURE_MM) -> float:
    """Aperture-averaged irradiance (W/m^2) of a round Gaussian beam, computed here."""
    a = d_mm / 2.0
    return power * (1.0 - math.exp(-2.0 * a * a / (w_mm * w_mm))) / (math.pi * (a * 1e-3) ** 2)


WALKWAY = '[[zone]]\nid = "walkway"\nkind = "keepout"\npolygon = [[0, 0], [1200, 0], [1200, 60], [0, 60]]\n'
BOX = '[[zone]]\nid = "box"\nkind = "enclosure"\npolygon = [[50, 100], [1000, 100], [1000, 300], [50, 300]]\n'


def ten_watt_line(zones: str = WALKWAY) -> str:
    """10 W at 1064 nm from a source across 700 mm of bench to a dump, beside a walkway."""
    return layout(
        source("LAS", at=[100.0, 200.0], heading=0.0, wavelength_nm=1064.0, waist=1.0, power_w=10.0),
        optic("D1", "dump", max_power_w=20.0),
        beam("line", "LAS", [rel("D1", 700.0)]),
        zones,
        size=(1200.0, 800.0),
    )


# --- the verdicts ----------------------------------------------------------------------------

def test_an_open_class_4_beam_fails_and_an_enclosed_one_passes():
    (f,) = run("open-beam", ten_watt_line())
    assert f.severity == "error" and f.value == pytest.approx(10.0) and f.limit == pytest.approx(0.5)
    assert "1064 nm" in f.message and "OD" in f.message
    assert run("open-beam", ten_watt_line(WALKWAY + BOX)) == []
    # lifting the enclosure changes the verdict back
    assert [g.severity for g in run("open-beam", ten_watt_line(WALKWAY))] == ["error"]


def test_open_beam_threshold_comes_from_the_configuration():
    (f,) = run("open-beam", ten_watt_line(), open_beam_power_w=20.0)
    assert f.severity == "warning" and f.unit == "exposure/MPE"      # above the MPE, below the limit


def test_exposure_od_and_ratio_against_the_gaussian_aperture_integral():
    """1 W collimated-ish 1064 nm beam, w0 = 0.5 mm at the source: the smallest radius on the
    stretch is the waist itself."""
    text = layout(
        source("S", at=[100.0, 200.0], heading=0.0, wavelength_nm=1064.0, waist=0.5, power_w=1.0),
        optic("D1", "dump"),
        beam("b", "S", [rel("D1", 300.0)]),
        size=(1000.0, 600.0))
    seg = next(s for s in assess(solve_text(text)).segments if s.kind == "beam")
    expected = through_aperture(1.0, 0.5)
    assert seg.w_mm == pytest.approx(0.5, rel=1e-9)
    assert seg.exposure == pytest.approx(expected, rel=1e-9)
    assert seg.mpe == pytest.approx(mpe_1064_cw_w_m2(), rel=1e-9)
    ratio = expected / mpe_1064_cw_w_m2()
    assert seg.ratio == pytest.approx(ratio, rel=1e-9)
    assert seg.od == math.ceil(math.log10(ratio)) == 3
    assert seg.exposure_s == 10.0 and seg.aperture_mm == APERTURE_MM


def passing_mirror(r: float, size=(1000.0, 600.0), zones: str = "") -> str:
    """1 W at 1064 nm, waist 0.2 mm at the source, 200 mm to a flat mirror it passes
    (T = 1 - r), then traced on to the table edge."""
    return layout(
        mirror("M", None, at=[300.0, 300.0], reflectivity=r),
        source("S", at=[100.0, 300.0], heading=0.0, wavelength_nm=1064.0, waist=0.2, power_w=1.0),
        beam("b", "S", ["M"]),
        zones,
        size=size)


def gaussian_nohd_from(start: float, power: float, w0: float, wavelength_mm: float, mpe: float) -> float:
    """Distance past ``start`` (mm from the waist) where the aperture-averaged exposure of a
    diverging Gaussian beam falls to the MPE, by bisection on the exposure itself."""
    zr = math.pi * w0 * w0 / wavelength_mm
    def excess(z):
        w = w0 * math.sqrt(1.0 + (z / zr) ** 2)
        return through_aperture(power, w) - mpe
    lo, hi = start, start + 1e9
    assert excess(lo) > 0 > excess(hi)
    for _ in range(200):
        mid = (lo + hi) / 2.0
        lo, hi = (mid, hi) if excess(mid) > 0 else (lo, mid)
    return lo - start


def test_hazard_distance_of_a_beam_traced_on_past_its_last_optic():
    sol = solve_text(passing_mirror(0.99))
    seg = next(s for s in assess(sol).segments if s.kind == "extension")
    p = 1.0 * (1 - 0.99)
    assert seg.power_w == pytest.approx(p, rel=1e-9)
    expected = gaussian_nohd_from(200.0, p, 0.2, 1064e-6, mpe_1064_cw_w_m2())
    assert seg.nohd_mm == pytest.approx(expected, rel=1e-6)
    # about 6.1 m: far beyond the 700 mm to the table edge, so the hazard leaves the table
    assert seg.length_mm == pytest.approx(700.0) and {"kind": "table-edge", "id": None} in seg.reaches
    # far-field cross-check (NOHD ~ (sqrt(4P/(pi MPE)) - a)/phi with 1/e diameter and full
    # angle, a common laser-safety formula): it takes all the power inside the aperture and
    # the beam as growing linearly from its waist, so it overshoots the exact Gaussian by a
    # few per cent here (3.6 %, computed from the two expressions)
    phi = math.sqrt(2.0) * 1064e-6 / (math.pi * 0.2)       # 1/e full angle (rad)
    far = (math.sqrt(4 * p / (math.pi * mpe_1064_cw_w_m2())) * 1e3 - math.sqrt(2.0) * 0.2) / phi - 200.0
    assert expected < far < 1.05 * expected


def test_hazard_zone_reaching_a_keepout_zone():
    door = '[[zone]]\nid = "door"\nkind = "keepout"\npolygon = [[800, 200], [900, 200], [900, 400], [800, 400]]\n'
    seg = next(s for s in assess(solve_text(passing_mirror(0.99, zones=door))).segments if s.kind == "extension")
    assert {"kind": "keepout", "id": "door"} in seg.reaches


def test_a_beam_below_the_mpe_has_no_hazard_distance():
    sol = solve_text(passing_mirror(0.99999999))     # 10 nW
    seg = next(s for s in assess(sol).segments if s.kind == "extension")
    assert seg.ratio < 1 and seg.od == 0 and seg.nohd_mm == 0.0 and seg.reaches == []


def laser(declared: bool = True, zones: str = "") -> str:
    """P_out 1 W at 1064 nm through a 1 % output coupler: 100 W one-way."""
    return layout(
        mirror("HR", 500.0, at=[100.0, 500.0], reflectivity=0.999),
        mirror("OC", 500.0, reflectivity=0.99),
        cavity("c", "linear", ["HR", rel("OC", 250.0)], 1064.0, heading=0.0, output_coupler="OC",
               output_power_w=1.0),
        optic("D", "dump", max_power_w=5.0) + beam("out", "c", [rel("D", 100.0)]) if declared else "",
        zones,
        size=(1000.0, 1000.0))


def test_an_undeclared_laser_output_is_an_error():
    (f,) = run("undeclared-output", laser(declared=False))
    assert f.severity == "error" and f.value == pytest.approx(1.0, rel=1e-9) and "OC" in f.message
    assert run("undeclared-output", laser()) == []
    # where that output goes, with its hazard figures, is said once, here, not again as a leak
    assert "table edge" in f.message and "x the MPE" in f.message and "hazard distance" in f.message
    assert not [g for g in run("leak-beam", laser(declared=False)) if "c/OC" in g.message]


def test_cavity_legs_count_both_directions():
    legs = [s for s in assess(solve_text(laser())).segments if s.kind == "cavity-leg"]
    assert len(legs) == 1 and legs[0].directions == 2
    assert legs[0].power_w == pytest.approx(100.0, rel=1e-9)
    (f,) = [g for g in run("open-beam", laser()) if g.targets[0] == "c"]
    assert f.severity == "error" and "both directions" in f.message


def test_leaks_escalate_when_they_leave_the_table():
    # the HR leaks 100 W x 1e-3 = 0.1 W out of its back to the table edge at x = 0
    (f,) = [g for g in run("leak-beam", laser()) if "c/HR" in g.message]
    assert f.severity == "error" and f.value == pytest.approx(0.1, rel=1e-9) and "leaves the table" in f.message
    assert "hazard distance" in f.message


def test_leaks_above_the_class_4_level_are_errors_even_on_a_mount():
    # a 1 W leak that stops on a post (not a dump): above the 0.5 W open-beam limit
    post = optic("POST", "obstacle", at=[60.0, 500.0], size=[10.0, 40.0])
    text = laser() + post
    (f,) = [g for g in run("leak-beam", text, open_beam_power_w=0.05) if "c/HR" in g.message]
    assert f.severity == "error" and "open-beam limit" in f.message
    (g,) = [g for g in run("leak-beam", text) if "c/HR" in g.message]
    assert g.severity == "warning"                           # 0.1 W on a post: a warning


def pulsed_splitter(rep_hz: float | None) -> str:
    """10 mJ, 10 ns pulses at 532 nm through a 50 % splitter whose reflection nothing
    follows: a 5 mJ secondary beam goes off the table."""
    fields = dict(at=[100.0, 300.0], heading=0.0, wavelength_nm=532.0, waist=1.0, pulse_energy_j=0.01,
                  pulse_s=1e-8)
    if rep_hz is not None:
        fields["rep_hz"] = rep_hz
    return layout(
        optic("BS", "splitter", at=[300.0, 300.0], reflectivity=0.5, fold=90.0),
        optic("D", "dump"),
        source("P", **fields),
        beam("b", "P", ["BS", rel("D", 200.0)]),
        size=(1000.0, 600.0))


def test_a_stray_of_unknown_average_power_is_judged_by_its_pulse_energy():
    found = run("leak-beam", pulsed_splitter(None))
    (f,) = [g for g in found if "b/BS" in g.message]
    assert f.severity == "error" and "J pulses" in f.message and f.unit == "exposure/MPE"
    # 5 mJ through a 7 mm aperture at w = 1 mm against the single-pulse MPE of 2e-3 J/m^2
    # for 532 nm, 1e-11 s to 5e-6 s (IEC 60825-1:2014 Table A.1, from memory)
    expected = through_aperture(0.005, 1.0) / 2e-3
    seg = next(s for s in assess(solve_text(pulsed_splitter(None))).segments if s.id == "b/BS")
    assert seg.pulse_energy_j == pytest.approx(0.005, rel=1e-9)
    assert seg.w_mm == pytest.approx(1.0, rel=1e-3)          # 200 mm from a 1 mm waist: z_R = 5.9 m
    assert f.value == pytest.approx(expected, rel=2e-3)


def test_a_repetitive_pulse_train_is_judged_per_pulse():
    seg = next(s for s in assess(solve_text(pulsed_splitter(10.0))).segments if s.id == "b/BS")
    assert seg.pulsed and seg.mpe_rule in ("single-pulse", "average-power", "pulse-train")
    # 10 Hz for 0.25 s: N = 2.5; the pulse-train rule gives 2e-3 N^-1/4 J/m^2 (IEC 60825-1:2014
    # A.3 rule 3, from memory) below the single pulse and the average-power rule
    # (18 t^0.75 / N at 0.25 s = 2.55 J/m^2): computed here
    n = 10.0 * 0.25
    assert seg.mpe == pytest.approx(min(2e-3, 2e-3 * n ** -0.25, 18 * 0.25 ** 0.75 / n), rel=1e-6)


def test_a_wavelength_without_a_built_in_limit_is_an_error_that_says_what_to_configure(tmp_path, capsys):
    text = layout(
        source("UV", at=[100.0, 200.0], heading=0.0, wavelength_nm=150.0, waist=1.0, power_w=0.001),
        optic("D1", "dump"),
        beam("b", "UV", [rel("D1", 100.0)]),
        size=(400.0, 400.0))
    (f,) = run("open-beam", text)
    assert f.severity == "error" and "[exposure.mpe]" in f.message and "150 nm" in f.message
    path = tmp_path / "uv.toml"
    path.write_text(text)
    (tmp_path / "benchcheck.toml").write_text("[exposure.mpe]\n150 = { w_cm2 = 1e-4 }\n")
    code = main(["hazards", str(path), "--format", "json"])
    doc = json.loads(capsys.readouterr().out)
    seg = doc["segments"][0]
    assert code == 0 and seg["mpe_source"] == "configuration" and seg["mpe_w_cm2"] == pytest.approx(1e-4)
    # no aperture is tabulated at 150 nm: the smallest, 1 mm, is used and said so; 1 mW of a
    # 1 mm beam through it against 1 W/m^2, computed here
    assert seg["aperture_mm"] == 1.0 and any("aperture" in n for n in seg["notes"])
    assert seg["exposure_over_mpe"] == pytest.approx(through_aperture(0.001, 1.0, d_mm=1.0) / 1.0, rel=1e-5)


# --- the caution and the clean run ------------------------------------------------------------

def test_a_clean_check_says_it_is_not_a_safety_approval(tmp_path, capsys):
    path = tmp_path / "dark.toml"
    path.write_text(layout(optic("D1", "dump", at=[100.0, 100.0]), size=(400.0, 400.0)))
    assert main(["check", str(path), "--jobs", "1"]) == 0
    out = capsys.readouterr().out
    assert "not a safety approval" in out and "laser safety officer" in out
    assert main(["check", str(path), "--jobs", "1", "--format", "github"]) == 0
    out = capsys.readouterr().out
    assert "not a safety approval" in out and "laser safety officer" in out
    # machine outputs too: a reader that shows only the JSON or the SARIF run sees it
    assert main(["check", str(path), "--jobs", "1", "--format", "json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["findings"] == [] and "not a safety approval" in doc["verdict"]
    assert main(["check", str(path), "--jobs", "1", "--format", "sarif"]) == 0
    props = json.loads(capsys.readouterr().out)["runs"][0]["properties"]
    assert "not a safety approval" in props["verdict"] and "laser safety officer" in props["caution"]


def test_sarif_help_of_every_safety_rule_carries_the_caution(tmp_path, capsys):
    path = tmp_path / "line.toml"
    path.write_text(ten_watt_line())
    main(["check", str(path), "--jobs", "1", "--format", "sarif"])
    rules = json.loads(capsys.readouterr().out)["runs"][0]["tool"]["driver"]["rules"]
    safety = [r for r in rules if r["properties"]["safety"]]
    assert {r["id"] for r in safety} >= {"open-beam", "leak-beam", "undeclared-output", "intracavity-power"}
    assert all("laser safety officer" in r["help"]["text"] for r in safety)


def test_beams_text_carries_the_caution_for_a_pulsed_source(tmp_path, capsys):
    path = tmp_path / "pulsed.toml"
    path.write_text(pulsed_splitter(None))
    assert main(["beams", str(path)]) == 0
    assert "laser safety officer" in capsys.readouterr().out


# --- the hazards command ------------------------------------------------------------------

def test_hazards_json_has_the_documented_keys(tmp_path, capsys):
    path = tmp_path / "line.toml"
    path.write_text(ten_watt_line())
    assert main(["hazards", str(path), "--format", "json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["format"] == 1 and doc["layout"] == str(path) and "laser safety officer" in doc["caution"]
    (wl,) = doc["wavelengths"]
    assert {"wavelength_nm", "exposure_s", "mpe_w_cm2", "max_power_w", "od_required", "class_estimate"} <= set(wl)
    assert wl["wavelength_nm"] == 1064 and wl["class_estimate"] == "4" and wl["max_power_w"] == 10
    assert wl["mpe_w_cm2"] == pytest.approx(mpe_1064_cw_w_m2() / 1e4, rel=1e-5)
    seg = next(s for s in doc["segments"] if s["kind"] == "beam")
    assert {"kind", "id", "wavelength_nm", "power_w", "inside_enclosure", "exposure_over_mpe", "od_required",
            "nohd_mm", "reaches"} <= set(seg)
    # 10 W with w = 1 mm at the source: OD from the aperture integral, computed here
    ratio = through_aperture(10.0, 1.0) / mpe_1064_cw_w_m2()
    assert seg["od_required"] == math.ceil(math.log10(ratio)) and seg["inside_enclosure"] is False


def test_hazards_csv_and_text(tmp_path, capsys):
    path = tmp_path / "line.toml"
    path.write_text(ten_watt_line())
    assert main(["hazards", str(path), "--format", "csv"]) == 0
    rows = list(csv.reader(io.StringIO(capsys.readouterr().out)))
    assert "laser safety officer" in rows[0][0] and rows[1][:3] == ["layout", "kind", "id"]
    assert any(r[1] == "beam" for r in rows[2:])
    assert main(["hazards", str(path)]) == 0
    out = capsys.readouterr().out
    assert "1064 nm" in out and "OD needed" in out and "laser safety officer" in out


def test_hazards_exposure_durations_come_from_the_configuration(tmp_path, capsys):
    path = tmp_path / "line.toml"
    path.write_text(ten_watt_line())
    (tmp_path / "benchcheck.toml").write_text("[exposure]\ninvisible_s = 100.0\n")
    main(["hazards", str(path), "--format", "json"])
    wl = json.loads(capsys.readouterr().out)["wavelengths"][0]
    # beyond T2 = 10 s the 1064 nm limit is the irradiance 18 C_A C_C T2^-0.25 W/m^2
    # (IEC 60825-1:2014 Table A.1, from memory), computed here
    assert wl["exposure_s"] == 100 and wl["mpe_w_cm2"] == pytest.approx(90.0 * 10 ** -0.25 / 1e4, rel=1e-5)


@pytest.mark.parametrize("cfg, line, fragment", [
    ("[exposure]\nvisible = 0.25\n", 2, "did you mean 'visible_s'"),
    ("[exposure]\nvisible_s = -1\n", 2, "positive number of seconds"),
    ("[exposure.mpe]\n1550 = { w_cm = 0.1 }\n", 2, "unknown key 'w_cm'"),
    ("[exposure.mpe]\nblue = { w_cm2 = 0.1 }\n", 2, "must be a wavelength in nm"),
    ("[exposure.mpe]\n1550 = { aperture_mm = 7 }\n", 2, "needs w_cm2"),
])
def test_bad_exposure_configuration_is_located(tmp_path, capsys, cfg, line, fragment):
    path = tmp_path / "line.toml"
    path.write_text(ten_watt_line())
    (tmp_path / "benchcheck.toml").write_text(cfg)
    assert main(["hazards", str(path)]) == 2
    err = capsys.readouterr().err
    assert f"benchcheck.toml:{line}:" in err and fragment in err, err


# --- regressions from the review of the hazard rules ----------------------------------------

def open_splitter(enclosures: str = "", **src) -> str:
    """2 W at 1064 nm, w = 1 mm, split 50/50 at BS: the reflected half crosses open bench to
    dump D1, the transmitted half (nothing follows it) to the table edge or dump D2."""
    fields = dict(at=[50.0, 200.0], heading=0.0, wavelength_nm=1064.0, waist=1.0, power_w=2.0)
    fields.update(src)
    return layout(
        optic("BS", "splitter", at=[300.0, 200.0], reflectivity=0.5, fold=90.0),
        optic("D1", "dump", at=[300.0, 350.0]),
        optic("D2", "dump", at=[700.0, 200.0]),
        source("LAS", **fields),
        beam("b", "LAS", [{"id": "BS", "fold": 90.0}, "D1"]),
        enclosures,
        size=(800.0, 400.0))


def test_a_secondary_that_crosses_open_bench_to_a_dump_is_still_judged():
    box = '[[zone]]\nid = "box"\nkind = "enclosure"\npolygon = [[20, 150], [300, 150], [300, 390], [20, 390]]\n'
    (f,) = [g for g in run("leak-beam", open_splitter(box)) if "b/BS" in g.message]
    # 1 W through 387 mm of open bench to D2: above the 0.5 W Class 4 level
    assert f.severity == "error" and f.value == pytest.approx(1.0, rel=1e-9) and "Class 4" in f.message


def test_a_pulsed_secondary_below_the_stray_limit_but_above_the_mpe_is_reported():
    """50 uJ, 10 ns pulses at 10 Hz (0.5 mW average, below the 1 mW stray limit) run off the
    table: far above the per-pulse limit, so an error."""
    text = layout(
        mirror("M1", None, at=[300.0, 200.0], reflectivity=0.99, fold=90.0),
        optic("D1", "dump", at=[300.0, 350.0]),
        source("PL", at=[50.0, 200.0], heading=0.0, wavelength_nm=1064.0, pulse_energy_j=0.005, pulse_s=1e-8,
               rep_hz=10.0, waist=1.0),
        beam("b", "PL", [{"id": "M1", "fold": 90.0}, "D1"]),
        size=(600.0, 400.0))
    (f,) = [g for g in run("leak-beam", text) if "b/M1" in g.message]
    assert f.severity == "error" and f.unit == "exposure/MPE"
    # 5e-5 J through 7 mm at w = 1 mm (z_R = 2.95 m: the waist size over 250 mm, to 0.4 %)
    # against the pulse-train limit 2e-2 C_C N^-1/4 J/m^2, N = 100 pulses in 10 s
    # (IEC 60825-1:2014 Table A.1 and rule 3, from memory), computed here
    expected = through_aperture(5e-5, 1.0) / (2e-2 * 100 ** -0.25)
    assert f.value == pytest.approx(expected, rel=1e-2)


def test_rep_rate_without_pulse_length_is_not_judged_as_cw():
    (f,) = run("open-beam", open_splitter(power_w=1.0, rep_hz=10.0))
    assert f.severity == "error" and "pulse_s" in f.message


def test_a_single_shot_is_said_to_be_judged_as_one_pulse():
    seg = next(s for s in assess(solve_text(open_splitter(power_w=None, pulse_energy_j=0.01, pulse_s=1e-8))).segments
               if s.kind == "beam")
    assert seg.mpe_rule == "single-pulse" and any("single pulse" in n for n in seg.notes)


def test_cw_and_pulsed_light_at_one_wavelength_are_separate_rows():
    text = layout(
        optic("D1", "dump", at=[600.0, 100.0]), optic("D2", "dump", at=[600.0, 300.0]),
        source("CW", at=[50.0, 100.0], heading=0.0, wavelength_nm=532.0, power_w=5.0, waist=1.0),
        source("PUL", at=[50.0, 300.0], heading=0.0, wavelength_nm=532.0, pulse_energy_j=1e-7, pulse_s=1e-8,
               rep_hz=10.0, waist=1.0),
        beam("a", "CW", ["D1"]), beam("b", "PUL", ["D2"]), size=(800.0, 400.0))
    rows = assess(solve_text(text)).wavelengths
    assert [(w.wavelength_nm, w.pulsed) for w in rows] == [(532.0, False), (532.0, True)]
    cw, pulsed = rows
    assert cw.mpe == pytest.approx(18 * 0.25 ** 0.75 / 0.25, rel=1e-9)      # W/m^2, Table A.1 (from memory)
    assert pulsed.max_power_w == pytest.approx(1e-6) and pulsed.max_pulse_energy_j == pytest.approx(1e-7)


def test_abutting_enclosures_cover_a_beam_together_and_partial_cover_counts_the_open_part():
    two = ('[[zone]]\nid = "a"\nkind = "enclosure"\npolygon = [[50, 100], [500, 100], [500, 300], [50, 300]]\n'
           '[[zone]]\nid = "b"\nkind = "enclosure"\npolygon = [[500, 100], [1000, 100], [1000, 300], [500, 300]]\n')
    assert run("open-beam", ten_watt_line(WALKWAY + two)) == []
    part = '[[zone]]\nid = "a"\nkind = "enclosure"\npolygon = [[200, 100], [550, 100], [550, 300], [200, 300]]\n'
    (f,) = run("open-beam", ten_watt_line(WALKWAY + part))
    assert "over 350 mm of open bench" in f.message          # 700 mm, of which 350 mm covered


def test_a_power_exactly_at_the_error_limit_is_not_above_it():
    # 1 W through R = 0.9: 10 W one-way, the default error limit itself
    text = laser().replace("reflectivity = 0.99", "reflectivity = 0.9")
    (f,) = run("intracavity-power", text)
    assert f.severity is None and f.limit == pytest.approx(0.5)


def test_an_unreadable_layout_is_never_called_clean(tmp_path, capsys):
    path = tmp_path / "bad.toml"
    path.write_text("format = 1\n[bench]\nname = 3\n")
    assert main(["check", str(path), "--jobs", "1"]) == 2
    out = capsys.readouterr().out
    assert "not a safety approval" not in out and "laser safety officer" in out
    assert main(["check", str(path), "--jobs", "1", "--format", "json"]) == 2
    verdict = json.loads(capsys.readouterr().out)["verdict"]
    assert "not a safety approval" not in verdict and "never a safety approval" in verdict


def test_tolerance_output_with_power_figures_carries_the_caution(capsys):
    """The tolerance run of a passive cavity prints circulating-power percentiles."""
    from pathlib import Path
    bowtie = Path(__file__).resolve().parent.parent / "layouts" / "bowtie-enhancement.toml"
    assert main(["tolerance", str(bowtie), "--samples", "200"]) == 0
    assert "laser safety officer" in capsys.readouterr().out
    assert main(["tolerance", str(bowtie), "--samples", "200", "--format", "json"]) == 0
    assert "laser safety officer" in json.loads(capsys.readouterr().out)["caution"]


def test_every_open_beam_at_a_wavelength_without_an_mpe_is_reported():
    """Two beams at 170 nm (no built-in limit): each open one is its own error, so that a
    waiver on one cannot hide the other, and 5 W is said to be above the Class 4 level."""
    text = layout(
        optic("BS", "splitter", at=[300.0, 200.0], reflectivity=0.5, fold=90.0),
        optic("D1", "dump", at=[300.0, 350.0]),
        optic("D2", "dump", at=[700.0, 200.0]),
        source("UV", at=[50.0, 200.0], heading=0.0, wavelength_nm=170.0, waist=1.0, power_w=5.0),
        beam("main", "UV", ["BS", "D2"]),
        beam("refl", "UV", [{"id": "BS", "fold": 90.0}, "D1"]),
        size=(800.0, 400.0))
    found = run("open-beam", text)
    assert sorted(f.targets[0] for f in found) == ["main", "refl"]
    assert all(f.severity == "error" and "[exposure.mpe]" in f.message and "Class 4" in f.message for f in found)


def test_an_upper_bound_power_stays_marked_in_the_hazard_figures(tmp_path, capsys):
    bowtie = Path(__file__).resolve().parent.parent / "layouts" / "bowtie-enhancement.toml"
    assert main(["hazards", str(bowtie), "--format", "json"]) == 0
    segs = {s["id"]: s for s in json.loads(capsys.readouterr().out)["segments"]}
    assert segs["enh/IC"]["power_is_upper_bound"] is True         # the cavity's reflection: at most
    assert segs["enh/M2"]["power_is_upper_bound"] is False


@pytest.mark.parametrize("num", [33, 257])
def test_the_samples_along_many_spans_are_numpys_linspace_to_the_last_bit(num):
    """The smallest radius of a segment is taken over np.linspace(s0, s1, 33) plus its
    waists, and beam-obstructed samples each leg at np.linspace(0, length, 257); all the
    stretches of a path are sampled at once, so each row must be numpy's own linspace
    exactly (numpy's result, compared bit for bit), zero-length and subnormal spans
    included."""
    import numpy as np

    from benchcheck.solve import linspace_rows

    rng = np.random.default_rng(9)
    lo = np.concatenate([rng.uniform(-1e3, 1e4, 200), [0.0, 5.0, 1e-320, 100.0, 3.0, -2.5]])
    hi = np.concatenate([lo[:200] + rng.uniform(0.0, 2e3, 200), [0.0, 5.0, 3e-320, 100.0, 1.0, 7.25]])
    rows = linspace_rows(lo, hi, num)
    for i in range(len(lo)):
        expected = np.linspace(lo[i], hi[i], num)
        assert rows[i].tobytes() == expected.tobytes(), (lo[i], hi[i])
    lengths = rng.uniform(1e-6, 5e3, 300)
    from_zero = linspace_rows(np.zeros(len(lengths)), lengths, num)
    for i, length in enumerate(lengths):
        assert from_zero[i].tobytes() == np.linspace(0.0, length, num).tobytes(), length


def test_the_piece_at_a_point_is_found_by_bisection_as_by_looking_at_every_piece():
    """A stray's beam starts from the piece that holds its start (within 1e-6 mm), the one
    whose end (arriving) or start (leaving) is nearest, the first on a tie.  Pieces in path
    order are bisected; every answer must be the one a look at every piece gives (written
    out here), for touching pieces, zero-length pieces, gaps and points just outside."""
    import numpy as np

    from benchcheck.hazards import _piece_at
    from benchcheck.solve import Piece

    def every(pieces, s, arriving):
        best = None
        for p in pieces:
            if p.s0 - 1e-6 <= s <= p.s0 + p.length + 1e-6:
                d = abs((p.s0 + p.length if arriving else p.s0) - s)
                if best is None or d < best[0]:
                    best = (d, p)
        return None if best is None else best[1]

    rng = np.random.default_rng(3)
    for trial in range(60):
        s0, pieces = 0.0, []
        for _ in range(int(rng.integers(1, 40))):
            length = float(rng.choice([0.0, 1e-7, 2.5, 50.0, float(rng.uniform(0, 100))]))
            pieces.append(Piece(s0, length, 1.0, 1.0, complex(-1.0, 5.0), 1e-3, 1.0))
            s0 += length + float(rng.choice([0.0, 0.0, 5e-7, 3.0]))
        if trial % 10 == 9:
            pieces.reverse()        # out of path order: every piece is looked at
        probes = [p.s0 + d for p in pieces for d in (-2e-6, -1e-6, 0.0, 5e-7, 1e-6, 2e-6)]
        probes += [p.s0 + p.length + d for p in pieces for d in (-1e-6, 0.0, 1e-6, 3e-6)]
        probes += list(rng.uniform(-5.0, s0 + 5.0, 30)) + [float("nan")]
        for s in probes:
            for arriving in (True, False):
                assert _piece_at(pieces, float(s), arriving) is every(pieces, float(s), arriving), (trial, s)


def test_the_radius_at_one_point_is_the_smallest_over_a_stretch_of_no_length():
    """A source's class estimate takes its beam size 100 mm out (a stretch from 100 to 100
    mm): that shortcut must give what the sampling of a stretch gives (33 samples, all at
    that point, and any waist there), inside pieces, on their edges and outside them."""
    from benchcheck import solve_file
    from benchcheck.hazards import _smallest_radii, _smallest_radius

    root = Path(__file__).resolve().parent.parent / "layouts"
    for name in ("delivery-line.toml", "two-mirror.toml", "bowtie-enhancement.toml"):
        solution = solve_file(root / name)
        for res in list(solution.beams.values()) + list(solution.cavities.values()):
            edges = [p.s0 for ps in res.profile.values() for p in ps]
            for s in [0.0, 1e-9, 100.0, 250.5, 1e5, -3.0] + edges:
                assert _smallest_radius(res.profile, s, s) == _smallest_radii(res.profile, [(s, s)])[0], (name, s)


def test_the_open_length_of_a_segment_is_what_the_enclosure_leaves_out():
    from shapely.geometry import box

    from benchcheck.hazards import BEAM, Segment, _cover

    def seg(a, b):
        return Segment(BEAM, "s", "b", ("b",), 1064.0, a, b, 1.0)

    cover = box(0.0, 0.0, 100.0, 50.0)
    segs = [seg((10.0, 10.0), (90.0, 10.0)),       # inside
            seg((0.0, 0.0), (100.0, 0.0)),         # along the enclosure's edge: held
            seg((50.0, 25.0), (150.0, 25.0)),      # half out
            seg((200.0, 0.0), (200.0, 30.0)),      # all out
            seg((20.0, 20.0), (20.0, 20.0))]       # no length
    _cover(segs, cover)
    # derived from the rectangle's extent (x <= 100), computed here
    assert [s.inside_enclosure for s in segs] == [True, True, False, False, True]
    assert [s.open_mm for s in segs] == [0.0, 0.0, 50.0, 30.0, 0.0]
    _cover(segs, None)                             # no enclosure: all of each is open
    assert [s.open_mm for s in segs] == [80.0, 100.0, 100.0, 30.0, 0.0]
    assert not any(s.inside_enclosure for s in segs)
