"""The beams command on the demo layouts: exit status, the text table, and the JSON beam
table's keys exactly as the README's "The JSON beam table" names them."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

from benchcheck.cli import main

ROOT = Path(__file__).resolve().parent.parent
DEMOS = sorted((ROOT / "layouts").glob("*.toml"))

CAVITY_KEYS = {"id", "kind", "stable", "m", "round_trip_mm", "fsr_hz", "gouy_deg", "circulating_w", "hits", "waists"}
BEAM_KEYS = {"id", "hits", "waists"}
HIT_KEYS = {"optic", "s_mm", "aoi_deg", "w_um", "power_w", "peak_w_cm2"}
WAIST_KEYS = {"plane", "w_um", "s_mm"}


def test_there_are_four_demo_layouts():
    names = {p.name for p in DEMOS}
    assert {"two-mirror.toml", "folded-brewster.toml", "bowtie-enhancement.toml", "delivery-line.toml"} <= names


@pytest.mark.parametrize("path", DEMOS, ids=lambda p: p.name)
def test_demo_text_table(path, capsys):
    assert main(["beams", str(path)]) == 0
    out = capsys.readouterr().out
    assert "w_t [um]" in out and "w_s [um]" in out and "s [mm]" in out
    assert "laser safety officer" in out          # the safety caution travels with power figures


@pytest.mark.parametrize("path", DEMOS, ids=lambda p: p.name)
def test_demo_json_has_the_design_keys(path, capsys):
    assert main(["beams", str(path), "--format", "json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["format"] == 1
    assert doc["cavities"] or doc["beams"]
    for cav in doc["cavities"]:
        assert CAVITY_KEYS <= set(cav)
        assert set(cav["stable"]) == {"t", "s"} and set(cav["m"]) == {"t", "s"} and set(cav["gouy_deg"]) == {"t", "s"}
        assert cav["kind"] in ("linear", "ring")
        for hit in cav["hits"]:
            assert HIT_KEYS <= set(hit) and set(hit["w_um"]) == {"t", "s"}
        for w in cav["waists"]:
            assert set(w) == WAIST_KEYS and w["plane"] in ("t", "s")
    for beam in doc["beams"]:
        assert BEAM_KEYS <= set(beam)
        for hit in beam["hits"]:
            assert HIT_KEYS <= set(hit)


def test_every_demo_cavity_is_stable_and_sane(capsys):
    """The demos are meant to be good benches: stable in both planes, no geometry problems."""
    for path in DEMOS:
        assert main(["beams", str(path), "--format", "json"]) == 0
        doc = json.loads(capsys.readouterr().out)
        assert doc["geometry"] == [], path.name
        for cav in doc["cavities"]:
            assert cav["stable"] == {"t": True, "s": True}, path.name


def test_folder_and_several_files_give_a_list(capsys):
    assert main(["beams", str(ROOT / "layouts"), "--format", "json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    assert doc["format"] == 1 and len(doc["layouts"]) == len(list((ROOT / "layouts").rglob("*.toml")))


def test_no_layouts_found_is_status_2(tmp_path, capsys):
    assert main(["beams", str(tmp_path)]) == 2
    assert ": error: no layout files" in capsys.readouterr().err


def test_no_command_prints_help(capsys):
    assert main([]) == 2


def test_console_entry_point_runs_as_module():
    done = subprocess.run([sys.executable, "-m", "benchcheck", "beams", str(DEMOS[0]), "--format", "json"],
                          capture_output=True, text=True, cwd=ROOT, timeout=120)
    assert done.returncode == 0, done.stderr
    assert json.loads(done.stdout)["format"] == 1
