"""benchcheck diff: two revisions of a layout compared, from files and from git.

The known edit is checked against H. Kogelnik and T. Li, "Laser beams and resonators",
Applied Optics 5, 1550 (1966), two-mirror resonator: g_i = 1 - L/R_i and the spot size on
mirror 1, w1^2 = (lambda L / pi) sqrt(g2 / (g1 (1 - g1 g2))) (mirror 2 by exchanging the
indices); the half-trace of the round trip is (A + D)/2 = 2 g1 g2 - 1 (derived from the
same paper's round-trip matrix; its stability condition 0 < g1 g2 < 1 is -1 < m < 1).
Every expected value is computed here from those formulas.
"""

from __future__ import annotations

import json
import math
import os
import subprocess
from pathlib import Path

import pytest

from benchcheck.cli import main
from benchcheck.config import load_config
from benchcheck.model import LayoutError

ROOT = Path(__file__).resolve().parent.parent
DEMOS = sorted((ROOT / "layouts").rglob("*.toml"))
WL_NM = 1064.0
R1 = 300.0          # concave end mirror (mm); the other mirror is flat


@pytest.fixture(autouse=True)
def builtin_rules_only(monkeypatch):
    monkeypatch.setenv("BENCHCHECK_NO_ENTRY_POINTS", "1")


def run(capsys, *args):
    code = main(["diff", *map(str, args)])
    out, err = capsys.readouterr()
    return code, out, err


def run_json(capsys, *args):
    code, out, err = run(capsys, *args, "--format", "json")
    return code, json.loads(out), err


def plano_concave(length: float, output_w: float = 1.0, extra: str = "", oc_id: str = "OC",
                  beam_to: str = "PM", pm_rating: float = 5.0) -> str:
    """HR (concave R1) at (100, 200); a flat output coupler ``length`` mm along +x; the
    output goes 300 mm on to a power meter.  The whole table is under a cover, so that the
    layout is clean unless a test makes it otherwise."""
    return f"""format = 1
[bench]
name = "diff test"
size = [2000, 600]

[[zone]]
id = "cover"
kind = "enclosure"
polygon = [[1, 1], [1999, 1], [1999, 599], [1, 599]]

[[optic]]
id = "HR"
kind = "mirror"
at = [100.0, 200.0]
roc = {R1}
lidt = {{ w_cm = 1.0e4 }}

[[optic]]
id = "{oc_id}"
kind = "mirror"
reflectivity = 0.9

[[optic]]
id = "{beam_to}"
kind = "detector"
max_power_w = {pm_rating}
{extra}
[[cavity]]
id = "laser"
kind = "linear"
heading = 0.0
path = ["HR", {{ id = "{oc_id}", distance = {length} }}]
wavelength_nm = {WL_NM}
output_coupler = "{oc_id}"
output_power_w = {output_w}

[[beam]]
id = "out"
from = "laser"
path = [{{ id = "{beam_to}", distance = 300.0 }}]
"""


def write(folder: Path, name: str, text: str) -> Path:
    path = folder / name
    path.write_text(text)
    return path


def changes(doc: dict, group: str, quantity: str | None = None, layout: int = 0) -> list[dict]:
    out = doc["layouts"][layout]["groups"][group]["changes"]
    return [c for c in out if quantity is None or c["quantity"] == quantity]


def one(doc, group, quantity, at=None, plane=None, ident=None) -> dict:
    found = [c for c in changes(doc, group, quantity)
             if c["at"] == at and c["plane"] == plane and (ident is None or c["id"] == ident)]
    assert len(found) == 1, found
    return found[0]


ALL_THRESHOLDS_ZERO = ("--relative", "0", "--absolute", "fraction=0", "--absolute", "um=0", "--absolute", "mm=0",
                       "--absolute", "deg=0")


# --- the same layout ---------------------------------------------------------------------

@pytest.mark.parametrize("path", DEMOS, ids=lambda p: p.name)
def test_a_layout_against_itself_is_empty(capsys, path):
    code, doc, err = run_json(capsys, path, path, *ALL_THRESHOLDS_ZERO)
    assert code == 0, err
    (lay,) = doc["layouts"]
    assert lay["errors"] == [] and lay["renamed_optics"] == []
    assert all(g == {"added": [], "removed": [], "changes": []} for g in lay["groups"].values())
    assert lay["findings"] == {"added": [], "resolved": [], "changed": []}
    assert doc["verdict"].startswith("No change")


# --- a known edit against Kogelnik & Li ------------------------------------------------------

def kogelnik_li(length: float) -> dict:
    """Plano-concave two-mirror cavity (mirror 1: R1, mirror 2 flat, g2 = 1), computed here
    from Kogelnik & Li 1966: spot sizes on both mirrors (um) and the half-trace m."""
    lam = WL_NM * 1e-6                      # mm
    g1, g2 = 1.0 - length / R1, 1.0
    scale = lam * length / math.pi
    w1 = math.sqrt(scale * math.sqrt(g2 / (g1 * (1.0 - g1 * g2)))) * 1e3
    w2 = math.sqrt(scale * math.sqrt(g1 / (g2 * (1.0 - g1 * g2)))) * 1e3
    return {"m": 2.0 * g1 * g2 - 1.0, "w_HR": w1, "w_OC": w2}


@pytest.mark.parametrize("length, dl", [(200.0, 1.5), (120.0, -7.0), (250.0, 20.0)])
def test_moving_one_mirror_along_its_leg(tmp_path, capsys, length, dl):
    old = write(tmp_path, "old.toml", plano_concave(length))
    new = write(tmp_path, "new.toml", plano_concave(length + dl))
    before, after = kogelnik_li(length), kogelnik_li(length + dl)
    code, doc, err = run_json(capsys, old, new, *ALL_THRESHOLDS_ZERO)
    assert code == 0, err
    for plane in ("t", "s"):
        m = one(doc, "cavities", "m", plane=plane)
        assert m["old"] == pytest.approx(before["m"], rel=1e-7)
        assert m["new"] == pytest.approx(after["m"], rel=1e-7)
        margin = one(doc, "cavities", "margin", plane=plane)
        assert margin["new"] == pytest.approx(1.0 - abs(after["m"]), rel=1e-7)
        for optic in ("HR", "OC"):
            w = one(doc, "cavities", "w_um", at=optic, plane=plane)
            assert w["old"] == pytest.approx(before[f"w_{optic}"], rel=1e-7)
            assert w["new"] == pytest.approx(after[f"w_{optic}"], rel=1e-7)
            assert w["delta"] == pytest.approx(after[f"w_{optic}"] - before[f"w_{optic}"], rel=1e-5)
    moved = one(doc, "placement", "at_mm", ident="OC")
    assert moved["moved_mm"] == pytest.approx(abs(dl), rel=1e-9)
    assert moved["old"] == pytest.approx([100.0 + length, 200.0])
    # the output coupler moved; the mirror that stayed is not listed
    assert [c["id"] for c in changes(doc, "placement", "at_mm")] == ["OC", "PM"]


def test_thresholds_hide_a_small_edit(tmp_path, capsys):
    """0.001 mm on 200 mm moves m by about 7e-6 and the radii by far less than 1 %: under
    the default thresholds (1 %, 1e-4 in m, 0.1 um, 0.01 mm) nothing is shown."""
    old = write(tmp_path, "old.toml", plano_concave(200.0))
    new = write(tmp_path, "new.toml", plano_concave(200.001))
    code, doc, err = run_json(capsys, old, new)
    assert code == 0
    assert all(not g["changes"] for g in doc["layouts"][0]["groups"].values())
    # the same edit with the thresholds at zero is seen
    code, doc, err = run_json(capsys, old, new, *ALL_THRESHOLDS_ZERO)
    assert changes(doc, "cavities", "m")


def test_thresholds_from_the_configuration(tmp_path, capsys):
    old = write(tmp_path, "old.toml", plano_concave(200.0))
    new = write(tmp_path, "new.toml", plano_concave(205.0))
    # the radius at HR changes by about 1.9 % (Kogelnik & Li above): shown at 1 %, hidden at 5 %
    w_hr = kogelnik_li(200.0)["w_HR"], kogelnik_li(205.0)["w_HR"]
    assert 0.01 < abs(w_hr[1] - w_hr[0]) / w_hr[1] < 0.05
    code, doc, _ = run_json(capsys, old, new)
    assert [c for c in changes(doc, "cavities", "w_um") if c["at"] == "HR"]
    write(tmp_path, "benchcheck.toml", "[diff]\nrelative = 0.05\n[diff.absolute]\nmm = 10.0\n")
    code, doc, _ = run_json(capsys, old, new)
    assert not [c for c in changes(doc, "cavities", "w_um") if c["at"] == "HR"]
    assert not changes(doc, "placement")           # 5 mm is under the 10 mm threshold
    # the command line wins over the configuration
    code, doc, _ = run_json(capsys, old, new, "--relative", "0.001")
    assert [c for c in changes(doc, "cavities", "w_um") if c["at"] == "HR"]


def test_a_bad_diff_section_is_an_error(tmp_path, capsys):
    cfg = write(tmp_path, "benchcheck.toml", "[diff]\nrelative = 0.01\n[diff.absolute]\nmicrons = 1.0\n")
    with pytest.raises(LayoutError) as exc:
        load_config(cfg)
    assert exc.value.loc.line == 4 and "unknown key 'microns'" in str(exc.value)
    lay = write(tmp_path, "a.toml", plano_concave(200.0))
    code, out, err = run(capsys, lay, lay)
    assert code == 2 and "benchcheck.toml:4:1: error: unknown key 'microns' in [diff.absolute]" in err
    write(tmp_path, "benchcheck.toml", "[diff]\nrelative = -1\n")
    code, out, err = run(capsys, lay, lay)
    assert code == 2 and "diff.relative" in err and "non-negative" in err


# --- renamed, added and removed ---------------------------------------------------------------

APERTURE = """
[[optic]]
id = "A1"
kind = "aperture"
at = [500.0, 200.0]
diameter = 6.0
"""
DUMP = """
[[optic]]
id = "D9"
kind = "dump"
at = [900.0, 500.0]
"""


def test_renamed_added_and_removed_optics(tmp_path, capsys):
    old = write(tmp_path, "old.toml", plano_concave(200.0, extra=DUMP))
    new = write(tmp_path, "new.toml", plano_concave(200.0, oc_id="M2", extra=APERTURE))
    code, doc, err = run_json(capsys, old, new, *ALL_THRESHOLDS_ZERO)
    lay = doc["layouts"][0]
    assert lay["renamed_optics"] == [{"old": "OC", "new": "M2"}]
    assert lay["groups"]["placement"]["added"] == ["A1"]
    assert lay["groups"]["placement"]["removed"] == ["D9"]
    # the renamed mirror is the same mirror: the cavity did not change
    assert lay["groups"]["cavities"] == {"added": [], "removed": [], "changes": []}
    code, out, _ = run(capsys, old, new)
    assert "optic OC renamed M2" in out and "added optic: A1" in out and "removed optic: D9" in out


def test_added_and_removed_cavities_and_beams(tmp_path, capsys):
    old_text = plano_concave(200.0)
    new_text = old_text.replace('id = "out"', 'id = "main"') + """
[[optic]]
id = "E1"
kind = "mirror"
at = [100.0, 450.0]
roc = 500.0

[[optic]]
id = "E2"
kind = "mirror"

[[cavity]]
id = "ref"
kind = "linear"
heading = 0.0
path = ["E1", { id = "E2", distance = 100.0 }]
wavelength_nm = 1064
"""
    old = write(tmp_path, "old.toml", old_text)
    new = write(tmp_path, "new.toml", new_text)
    code, doc, err = run_json(capsys, old, new)
    groups = doc["layouts"][0]["groups"]
    assert groups["cavities"]["added"] == ["ref"] and groups["cavities"]["removed"] == []
    assert groups["beams"]["added"] == ["main"] and groups["beams"]["removed"] == ["out"]
    assert groups["placement"]["added"] == ["E1", "E2"]


# --- findings and the exit status -------------------------------------------------------------

def test_findings_added_resolved_changed_and_exit_status(tmp_path, capsys):
    """The power meter is rated 5 W: an output of 20 W puts 20 W on it (beam-unterminated,
    an error), 8 W puts 8 W on it (the same finding with another value)."""
    base = write(tmp_path, "base.toml", plano_concave(200.0, output_w=1.0))
    hot = write(tmp_path, "hot.toml", plano_concave(200.0, output_w=20.0))
    warm = write(tmp_path, "warm.toml", plano_concave(200.0, output_w=8.0))
    code, doc, _ = run_json(capsys, base, hot)
    lay = doc["layouts"][0]
    assert code == 1 and lay["introduced"] == 1
    (added,) = [f for f in lay["findings"]["added"] if f["rule"] == "beam-unterminated"]
    assert added["severity"] == "error" and added["value"] == pytest.approx(20.0)
    assert doc["verdict"].startswith("Fails")
    # the other way round the finding is resolved and nothing is introduced
    code, doc, _ = run_json(capsys, hot, base)
    assert code == 0 and [f["rule"] for f in doc["layouts"][0]["findings"]["resolved"]].count("beam-unterminated") == 1
    # a finding already there, with another value: changed, not introduced
    code, doc, _ = run_json(capsys, warm, hot)
    (pair,) = [p for p in doc["layouts"][0]["findings"]["changed"] if p["new"]["rule"] == "beam-unterminated"]
    assert (pair["old"]["value"], pair["new"]["value"]) == (pytest.approx(8.0), pytest.approx(20.0))
    assert code == 0 and doc["layouts"][0]["introduced"] == 0
    # --fail-on note: the same comparison fails only on what is new
    code, _, _ = run(capsys, base, hot, "--fail-on", "note")
    assert code == 1


def test_power_figures_carry_the_caution(tmp_path, capsys):
    base = write(tmp_path, "base.toml", plano_concave(200.0, output_w=1.0))
    hot = write(tmp_path, "hot.toml", plano_concave(200.0, output_w=20.0))
    caution = ("Advisory only: the laser safety officer, IEC 60825-1 / ANSI Z136.1 and local regulations "
               "decide what is safe.")
    code, out, _ = run(capsys, base, hot, "--format", "markdown")
    first = out.splitlines()[0]
    assert first.startswith("**benchcheck diff**: Fails")
    assert out.count(caution) >= 2                 # under the cavity table (power) and the findings
    assert "| circulating power [W] | 10 | 200 |" in out
    code, out, _ = run(capsys, base, hot)
    assert caution in out
    # a change with no power figure in it carries none
    a = write(tmp_path, "a.toml", plano_concave(200.0).replace("roc = 300.0", "roc = 300.0\ndiameter = 25.0"))
    code, out, _ = run(capsys, base, a, "--format", "markdown")
    assert caution not in out


def test_long_tables_fold_into_details(tmp_path, capsys):
    """The folded demo with its curved mirror M3 moved 0.5 mm closer to the crystal: an
    astigmatic cavity, so the two planes change differently and the table is long."""
    demo = ROOT / "layouts" / "folded-brewster.toml"
    text = demo.read_text()
    edited = text.replace('{ id = "M3", distance = 54.0, fold = -22.4 }', '{ id = "M3", distance = 53.5, fold = -22.4 }')
    assert edited != text
    new = write(tmp_path, "folded.toml", edited)
    code, out, _ = run(capsys, demo, new, "--format", "markdown", "--config", ROOT / "benchcheck.toml")
    assert "<details>" in out and "</details>" in out
    assert out.index("<details>") < out.index("| osc |")
    # a short table stays open
    old = write(tmp_path, "old.toml", plano_concave(200.0))
    new = write(tmp_path, "new.toml", plano_concave(240.0))
    code, out, _ = run(capsys, old, new, "--format", "markdown")
    assert "<details>" not in out and "| laser | HR | t, s | radius w [um] |" in out


def test_unusable_input_exits_2(tmp_path, capsys):
    good = write(tmp_path, "good.toml", plano_concave(200.0))
    bad = write(tmp_path, "bad.toml", plano_concave(200.0).replace("roc =", "rco ="))
    code, out, err = run(capsys, good, bad)
    assert code == 2 and "bad.toml:" in err and "rco" in err
    code, out, err = run(capsys, good, tmp_path / "missing.toml")
    assert code == 2 and "missing.toml: error: no such file" in err
    code, out, err = run(capsys, good)
    assert code == 2 and "OLD NEW" in err


# --- git ----------------------------------------------------------------------------------------

def git(repo: Path, *args: str) -> str:
    return subprocess.run(["git", "-c", "user.name=Bench Reviewer", "-c", "user.email=reviewer@example.invalid",
                           "-c", "commit.gpgsign=false", *args], cwd=repo, check=True, capture_output=True,
                          text=True).stdout


@pytest.fixture
def repo(tmp_path, monkeypatch):
    monkeypatch.setenv("GIT_CEILING_DIRECTORIES", str(tmp_path))
    for var in ("GIT_DIR", "GIT_WORK_TREE", "GIT_INDEX_FILE"):
        monkeypatch.delenv(var, raising=False)
    root = tmp_path / "repo"
    root.mkdir()
    git(root, "init", "-q")
    (root / "layouts").mkdir()
    write(root / "layouts", "laser.toml", plano_concave(200.0))
    write(root / "layouts", "old-line.toml", plano_concave(150.0))
    (root / "notes.txt").write_text("not a layout\n")
    git(root, "add", ".")
    git(root, "commit", "-q", "-m", "first plan")
    monkeypatch.chdir(root)
    return root


def test_a_revision_against_the_same_working_tree_file_is_empty(repo, capsys):
    code, doc, err = run_json(capsys, "HEAD:layouts/laser.toml", "layouts/laser.toml", *ALL_THRESHOLDS_ZERO)
    assert code == 0, err
    lay = doc["layouts"][0]
    assert all(g == {"added": [], "removed": [], "changes": []} for g in lay["groups"].values())
    assert lay["findings"] == {"added": [], "resolved": [], "changed": []}
    code, doc, err = run_json(capsys, "--rev", "HEAD")
    assert code == 0 and doc["layouts"] == []


def test_two_revisions_of_a_file(repo, capsys):
    write(repo / "layouts", "laser.toml", plano_concave(230.0))
    git(repo, "commit", "-q", "-am", "longer cavity")
    code, doc, err = run_json(capsys, "HEAD~1:layouts/laser.toml", "HEAD:layouts/laser.toml")
    assert code == 0, err
    lay = doc["layouts"][0]
    assert (lay["old"], lay["new"]) == ("HEAD~1:layouts/laser.toml", "HEAD:layouts/laser.toml")
    m = one(doc, "cavities", "m", plane="t")
    assert (m["old"], m["new"]) == (pytest.approx(kogelnik_li(200.0)["m"]), pytest.approx(kogelnik_li(230.0)["m"]))
    # a revision against the working tree, and a path relative to the current folder
    write(repo / "layouts", "laser.toml", plano_concave(200.0))
    os.chdir(repo / "layouts")
    code, doc, err = run_json(capsys, "HEAD:./laser.toml", "laser.toml")
    m = one(doc, "cavities", "m", plane="t")
    assert (m["old"], m["new"]) == (pytest.approx(kogelnik_li(230.0)["m"]), pytest.approx(kogelnik_li(200.0)["m"]))


def test_findings_of_a_revision_point_at_it(repo, capsys):
    write(repo / "layouts", "laser.toml", plano_concave(200.0, output_w=20.0))
    git(repo, "commit", "-q", "-am", "more power")
    code, doc, _ = run_json(capsys, "HEAD:layouts/laser.toml", "HEAD~1:layouts/laser.toml")
    resolved = doc["layouts"][0]["findings"]["resolved"]
    assert code == 0 and resolved and all(f["file"] == "HEAD:layouts/laser.toml" for f in resolved)


def test_every_layout_changed_since_a_revision(repo, capsys):
    write(repo / "layouts", "laser.toml", plano_concave(210.0))
    git(repo, "rm", "-q", "layouts/old-line.toml")
    write(repo / "layouts", "new-line.toml", plano_concave(100.0))      # untracked
    (repo / "notes.txt").write_text("changed, still not a layout\n")
    code, doc, err = run_json(capsys, "--rev", "HEAD")
    assert code == 0, err
    status = {(d["old"], d["new"]): d["status"] for d in doc["layouts"]}
    assert status == {("HEAD:layouts/laser.toml", "layouts/laser.toml"): "changed",
                      ("HEAD:layouts/old-line.toml", None): "deleted",
                      (None, "layouts/new-line.toml"): "added"}
    added = next(d for d in doc["layouts"] if d["status"] == "added")
    assert added["groups"]["cavities"]["added"] == ["laser"]
    deleted = next(d for d in doc["layouts"] if d["status"] == "deleted")
    assert deleted["groups"]["beams"]["removed"] == ["out"]
    # limited to a path
    code, doc, err = run_json(capsys, "--rev", "HEAD", "layouts/laser.toml")
    assert [d["new"] for d in doc["layouts"]] == ["layouts/laser.toml"]
    # a full commit hash (a merge base in CI) is shown short
    sha = git(repo, "rev-parse", "HEAD").strip()
    code, doc, err = run_json(capsys, "--rev", sha, "layouts/laser.toml")
    assert [d["old"] for d in doc["layouts"]] == [f"{sha[:12]}:layouts/laser.toml"]
    # nothing changed there
    code, doc, err = run_json(capsys, "--rev", "HEAD", "notes.txt")
    assert code == 0 and doc["layouts"] == [] and doc["verdict"] == "No layout changed."


def test_a_new_layout_with_a_failing_finding_fails(repo, capsys):
    write(repo / "layouts", "hot.toml", plano_concave(200.0, output_w=20.0))
    code, out, err = run(capsys, "--rev", "HEAD")
    assert code == 1 and "layouts/hot.toml (new layout)" in out


def test_git_errors(repo, capsys, tmp_path):
    code, out, err = run(capsys, "HEAD~5:layouts/laser.toml", "layouts/laser.toml")
    assert code == 2 and "unknown revision 'HEAD~5'" in err
    code, out, err = run(capsys, "HEAD:layouts/nothing.toml", "layouts/laser.toml")
    assert code == 2 and "no file 'layouts/nothing.toml' in revision 'HEAD'" in err
    code, out, err = run(capsys, "HEAD:layouts", "layouts/laser.toml")
    assert code == 2 and "is a folder" in err
    code, out, err = run(capsys, "--rev", "no-such-branch")
    assert code == 2 and "unknown revision 'no-such-branch'" in err
    outside = tmp_path / "outside"
    outside.mkdir()
    os.chdir(outside)
    code, out, err = run(capsys, "HEAD:layouts/laser.toml", str(repo / "layouts" / "laser.toml"))
    assert code == 2 and "not inside a git repository" in err
    code, out, err = run(capsys, "--rev", "HEAD")
    assert code == 2 and "not inside a git repository" in err
    assert "Traceback" not in err


def test_a_fold_change(tmp_path, capsys):
    """The folded demo with the fold at M3 opened from 22.4 to 23.0 degrees: M3's fold on
    the cavity changes by the same amount (the layout places HR relatively, so the
    geometric fold is the declared one) and HR, placed after it, moves."""
    demo = ROOT / "layouts" / "folded-brewster.toml"
    text = demo.read_text()
    edited = text.replace('{ id = "M3", distance = 54.0, fold = -22.4 }', '{ id = "M3", distance = 54.0, fold = -23.0 }')
    assert edited != text
    new = write(tmp_path, "folded.toml", edited)
    code, doc, _ = run_json(capsys, demo, new, "--config", ROOT / "benchcheck.toml")
    fold = one(doc, "placement", "fold_deg", at="osc", ident="M3")
    assert (fold["old"], fold["new"]) == (pytest.approx(-22.4, abs=1e-6), pytest.approx(-23.0, abs=1e-6))
    assert fold["delta"] == pytest.approx(-0.6, abs=1e-6)
    hr = one(doc, "placement", "at_mm", ident="HR")
    # HR is 700 mm beyond M3: turning the leg by 0.6 deg moves it by 2 x 700 x sin(0.3 deg) (chord)
    assert hr["moved_mm"] == pytest.approx(2 * 700.0 * math.sin(math.radians(0.3)), rel=1e-6)


def test_a_leak_beam_gets_stronger(tmp_path, capsys):
    """HR reflectivity 0.9995 -> 0.999 with 10 W circulating (1 W out of a 10 % coupler):
    the leak through HR goes from 5 mW to 10 mW (P_circ x T, T = 1 - R; the beam-power
    convention of the README)."""
    old = write(tmp_path, "old.toml", plano_concave(200.0).replace("roc = 300.0", "roc = 300.0\nreflectivity = 0.9995"))
    new = write(tmp_path, "new.toml", plano_concave(200.0).replace("roc = 300.0", "roc = 300.0\nreflectivity = 0.999"))
    code, doc, _ = run_json(capsys, old, new)
    leak = one(doc, "strays", "power_w", ident="laser/HR")
    assert (leak["old"], leak["new"]) == (pytest.approx(10.0 * 0.0005), pytest.approx(10.0 * 0.001))


def test_bad_threshold_options(tmp_path, capsys):
    lay = write(tmp_path, "a.toml", plano_concave(200.0))
    for args in (("--absolute", "microns=1"), ("--absolute", "um=-1"), ("--absolute", "um"), ("--relative", "-0.1")):
        code, out, err = run(capsys, lay, lay, *args)
        assert code == 2 and err.startswith("error: --") and "Traceback" not in err


def test_a_renamed_mirror_keeps_its_leak(tmp_path, capsys):
    leaky = plano_concave(200.0).replace("roc = 300.0", "roc = 300.0\nreflectivity = 0.999")
    renamed = leaky.replace('id = "HR"', 'id = "END"').replace('path = ["HR"', 'path = ["END"')
    assert renamed.count('"END"') == 2
    old = write(tmp_path, "old.toml", leaky)
    new = write(tmp_path, "new.toml", renamed)
    code, doc, _ = run_json(capsys, old, new, *ALL_THRESHOLDS_ZERO)
    lay = doc["layouts"][0]
    assert lay["renamed_optics"] == [{"old": "HR", "new": "END"}]
    assert all(g == {"added": [], "removed": [], "changes": []} for g in lay["groups"].values())
    assert lay["findings"]["added"] == lay["findings"]["resolved"] == []


def test_load_on_the_end_mirror(tmp_path, capsys):
    """One-way circulating power P = P_out / T_oc = 1 W / 0.1 = 10 W (README, power
    convention); on HR at normal incidence the peak intensity of a round Gaussian is
    2P / (pi w^2) (Siegman, Lasers 1986, ch. 17, from memory) and the linear power density
    P / (2w) (the 1/e^2 diameter, vendor practice, from memory), w from Kogelnik & Li."""
    old = write(tmp_path, "old.toml", plano_concave(200.0))
    new = write(tmp_path, "new.toml", plano_concave(240.0))
    code, doc, _ = run_json(capsys, old, new, *ALL_THRESHOLDS_ZERO)
    power_w = 1.0 / 0.1
    for side, length in (("old", 200.0), ("new", 240.0)):
        w_cm = kogelnik_li(length)["w_HR"] * 1e-4
        peak = one(doc, "optics", "peak_w_cm2", ident="HR")[side]
        assert peak == pytest.approx(2.0 * power_w / (math.pi * w_cm ** 2), rel=1e-6)
        load = one(doc, "optics", "load_over_lidt", ident="HR")[side]
        assert load == pytest.approx(power_w / (2.0 * w_cm) / 1.0e4, rel=1e-6)     # LIDT 1e4 W/cm


def test_lifting_the_cover_shows_in_the_hazard_figures(tmp_path, capsys):
    """The same laser with its cover removed: every segment leaves the enclosure, and the
    output beam (1 W at 1064 nm over open bench) fails the open-beam rule, so the revision
    introduces an error. The segment's exposure over the MPE is unchanged (the beam is the
    same); what changes is whether it is enclosed."""
    covered = plano_concave(200.0)
    lifted = covered.replace('kind = "enclosure"', 'kind = "keepout"').replace(
        "polygon = [[1, 1], [1999, 1], [1999, 599], [1, 599]]", "polygon = [[1, 560], [1999, 560], [1999, 599], [1, 599]]")
    old = write(tmp_path, "old.toml", covered)
    new = write(tmp_path, "new.toml", lifted)
    code, doc, _ = run_json(capsys, old, new)
    assert code == 1
    enclosed = one(doc, "hazards", "inside_enclosure", ident="out:laser-PM")
    assert (enclosed["old"], enclosed["new"]) == (True, False)
    assert any(f["rule"] == "open-beam" for f in doc["layouts"][0]["findings"]["added"])
    code, out, _ = run(capsys, old, new, "--format", "markdown")
    assert "Laser hazards" in out and "laser safety officer" in out
