"""The check command: configuration discovery, limits, severities, waivers, exit status
and the four output formats (SARIF validated against the OASIS 2.1.0 schema)."""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest

from benchcheck.cli import main

# the SARIF 2.1.0 JSON Schema (draft-07) as OASIS publishes it with the standard
# ("Static Analysis Results Interchange Format (SARIF) Version 2.1.0", OASIS Standard, 2020)
SCHEMA = Path(__file__).resolve().parent / "data" / "sarif-schema-2.1.0.json"

# A plano-concave laser whose output goes to a dump; the HR leaks 0.05 % of 40 W = 20 mW
# out of the back onto a card (an obstacle, not a dump) behind it (P_circ = P_out / T_oc,
# docs/design.md §4).
LAYOUT = """format = 1
[bench]
name = "check test"
size = [900, 400]

[[optic]]
id = "HR"
kind = "mirror"
at = [100.0, 200.0]
roc = 300.0
reflectivity = 0.9995

[[optic]]
id = "OC"
kind = "mirror"
reflectivity = 0.95

[[optic]]
id = "D1"
kind = "dump"
max_power_w = 5.0

[[optic]]
id = "CARD"
kind = "obstacle"
at = [60.0, 200.0]
size = [10.0, 40.0]

[[cavity]]
id = "laser"
kind = "linear"
heading = 0.0
path = ["HR", { id = "OC", distance = 200.0 }]
wavelength_nm = 1064
output_coupler = "OC"
output_power_w = 2.0

[[beam]]
id = "out"
from = "laser"
path = [{ id = "D1", distance = 300.0 }]
"""

# A lab whose room is the laser-controlled area (interlocked door, eyewear): open beams are
# controlled at the room level, so the open-beam rule is off and only leaks are judged.
OPEN_LAB = """[limits]
intracavity_power_w = 100.0
intracavity_error_power_w = 100.0
[rules.open-beam]
enabled = false

[tolerances]
position_mm = 0.2
"""


@pytest.fixture(autouse=True)
def builtin_rules_only(monkeypatch):
    """These tests are about the engine and the built-in pack: installed plugins stay out."""
    monkeypatch.setenv("BENCHCHECK_NO_ENTRY_POINTS", "1")


def write(tmp_path: Path, layout: str = LAYOUT, config: str | None = OPEN_LAB, name: str = "bench.toml",
          config_name: str = "benchcheck.toml") -> Path:
    (tmp_path / ".git").mkdir(exist_ok=True)      # the repository root: the configuration search stops here
    (tmp_path / "layouts").mkdir(exist_ok=True)
    path = tmp_path / "layouts" / name
    path.write_text(layout)
    if config is not None:
        (tmp_path / config_name).write_text(config)
    return path


def run(capsys, *args):
    code = main(["check", *map(str, args), "--jobs", "1"])
    out, err = capsys.readouterr()
    return code, out, err


def json_findings(capsys, *args):
    code, out, err = run(capsys, *args, "--format", "json")
    return code, json.loads(out)


def test_leak_found_with_numbers(tmp_path, capsys):
    code, doc = json_findings(capsys, write(tmp_path))
    leaks = [f for f in doc["findings"] if f["rule"] == "leak-beam"]
    assert len(leaks) == 1
    f = leaks[0]
    # 2 W / 0.05 = 40 W circulating; 0.0005 of it leaks: 0.02 W (docs/design.md §4)
    assert f["value"] == pytest.approx(0.02, rel=1e-9)
    assert f["limit"] == pytest.approx(0.001)
    assert f["unit"] == "W" and f["targets"][0] == "HR"
    assert f["line"] == 6 and f["column"] == 1 and f["file"].endswith("bench.toml")
    assert f["severity"] == "warning" and f["waived"] is False
    assert set(f) >= {"rule", "severity", "message", "targets", "file", "line", "column", "value", "limit",
                      "unit", "hint", "waived"}
    assert doc["format"] == 1 and "laser safety officer" in doc["caution"]
    assert code == 0          # a warning does not fail the default fail level (error)


def test_fail_on_warning(tmp_path, capsys):
    code, _, _ = run(capsys, write(tmp_path), "--fail-on", "warning")
    assert code == 1


def test_limits_come_from_the_configuration(tmp_path, capsys):
    cfg = OPEN_LAB.replace("[limits]\n", "[limits]\nstray_power_w = 0.05\n")
    _, doc = json_findings(capsys, write(tmp_path, config=cfg))
    # 20 mW is below this lab's stray limit: no longer a stray-limit finding (in W), but the
    # leak is still ten times the MPE on open bench, which a stray limit cannot waive
    leaks = [f for f in doc["findings"] if f["rule"] == "leak-beam"]
    assert [f["unit"] for f in leaks] == ["exposure/MPE"] and leaks[0]["severity"] == "warning"


def test_default_limits_without_configuration(tmp_path, capsys):
    code, doc = json_findings(capsys, write(tmp_path, config=None))
    power = [f for f in doc["findings"] if f["rule"] == "intracavity-power"]
    # 40 W is above the default open-bench error limit of 10 W, not just the 0.5 W review limit
    assert power and power[0]["value"] == pytest.approx(40.0) and power[0]["limit"] == pytest.approx(10.0)
    assert power[0]["severity"] == "error"
    # and with no enclosure the 40 W legs and the 2 W output are open beams: errors by default
    assert {f["targets"][0] for f in doc["findings"] if f["rule"] == "open-beam"} == {"laser", "out"}
    assert code == 1


def test_intracavity_power_between_the_two_limits_is_a_warning(tmp_path, capsys):
    cfg = "[limits]\nintracavity_error_power_w = 50.0\n"
    _, doc = json_findings(capsys, write(tmp_path, config=cfg))
    power = [f for f in doc["findings"] if f["rule"] == "intracavity-power"]
    assert power[0]["severity"] == "warning" and power[0]["limit"] == pytest.approx(0.5)


def test_pyproject_tool_table_is_found_walking_up(tmp_path, capsys):
    cfg = ('[project]\nname = "x"\n[tool.benchcheck.limits]\nintracavity_power_w = 100.0\nstray_power_w = 1.0\n'
           '[tool.benchcheck.rules.open-beam]\nenabled = false\n'
           '[tool.benchcheck.tolerances]\nposition_mm = 0.2\n')
    path = write(tmp_path, config=cfg, config_name="pyproject.toml")
    _, doc = json_findings(capsys, path)
    # its limits apply: no intracavity finding, and the leak is judged against 1 W, not 1 mW
    assert {f["rule"] for f in doc["findings"]} == {"leak-beam"}
    assert [f["unit"] for f in doc["findings"]] == ["exposure/MPE"]


def test_nearest_configuration_wins(tmp_path, capsys):
    path = write(tmp_path)
    (tmp_path / "layouts" / "benchcheck.toml").write_text("[rules.leak-beam]\nenabled = false\n"
                                                          "[rules.open-beam]\nenabled = false\n")
    _, doc = json_findings(capsys, path)
    # the nearer file disables leak-beam and sets no limits: the default 0.5 W applies again
    assert not [f for f in doc["findings"] if f["rule"] == "leak-beam"]
    assert [f for f in doc["findings"] if f["rule"] == "intracavity-power"]


def test_severity_override(tmp_path, capsys):
    cfg = OPEN_LAB + '[rules.leak-beam]\nseverity = "error"\n'
    code, doc = json_findings(capsys, write(tmp_path, config=cfg))
    assert [f["severity"] for f in doc["findings"] if f["rule"] == "leak-beam"] == ["error"]
    assert code == 1


@pytest.mark.parametrize("cfg, line, fragment", [
    ("[limits]\nintracavity_powr_w = 1\n", 2, "did you mean 'intracavity_power_w'"),
    ("[rules.leak-beams]\nenabled = false\n", 1, "did you mean 'leak-beam'"),
    ("[rules.leak-beam]\nlimit_w = 3\n", 2, "has no option 'limit_w'"),
    ("[rules.layout-geometry]\nfold_tolerance_deg = \"wide\"\n", 2, "must be a finite number"),
    ("[rules.leak-beam]\nseverity = \"fatal\"\n", 2, "must be one of"),
    ("fail_on = \"never\"\n", 1, "fail_on must be one of"),
    ("[limits]\nstray_power_w = -1\n", 2, "non-negative"),
])
def test_bad_configuration_is_status_2_with_its_line(tmp_path, capsys, cfg, line, fragment):
    code, out, err = run(capsys, write(tmp_path, config=cfg))
    assert code == 2
    assert re.search(rf"benchcheck\.toml:{line}:\d+: error: .*{re.escape(fragment)}", err), err


def test_a_layout_cannot_name_code_to_import(tmp_path, capsys):
    code, _, err = run(capsys, write(tmp_path, layout='plugins = ["os"]\n' + LAYOUT))
    assert code == 2 and "unknown key 'plugins'" in err


WAIVER = """
[[waiver]]
rule = "leak-beam"
target = "HR"
reason = "a card will be clamped behind HR"
approved_by = "bench lead"
until = {until}
"""


def test_active_waiver(tmp_path, capsys):
    code, doc = json_findings(capsys, write(tmp_path, layout=LAYOUT + WAIVER.format(until="2999-01-01")),
                              "--fail-on", "warning")
    leak = [f for f in doc["findings"] if f["rule"] == "leak-beam"][0]
    assert leak["waived"] is True and "card" in leak["waiver_reason"]
    assert code == 0          # the only finding is waived
    # the clean-run sentence says that one finding was waived, not that there were none
    assert "No findings apart from 1 waived: the plan passed the rules that ran" in doc["verdict"]
    assert "not a safety approval" in doc["verdict"]


def test_expired_waiver_applies_no_more_and_is_reported(tmp_path, capsys):
    _, doc = json_findings(capsys, write(tmp_path, layout=LAYOUT + WAIVER.format(until="2001-01-01")))
    leak = [f for f in doc["findings"] if f["rule"] == "leak-beam"][0]
    assert leak["waived"] is False
    expired = [f for f in doc["findings"] if f["rule"] == "waiver-expired"]
    assert expired and "2001-01-01" in expired[0]["message"]


def test_unmatched_waiver_is_reported(tmp_path, capsys):
    text = LAYOUT + WAIVER.format(until="2999-01-01").replace('target = "HR"', 'target = "OC"')
    _, doc = json_findings(capsys, write(tmp_path, layout=text))
    assert [f for f in doc["findings"] if f["rule"] == "waiver-unmatched"]


def test_text_format_is_compiler_style(tmp_path, capsys):
    code, out, _ = run(capsys, write(tmp_path))
    first = out.splitlines()[0]
    assert re.match(r"^.+bench\.toml:6:1: warning: .+ \[leak-beam\]$", first), first
    assert re.search(r"^0 errors, 1 warning, 0 notes in 1 layout$", out, re.M)
    assert "laser safety officer" in out


def test_github_annotations(tmp_path, capsys):
    _, out, _ = run(capsys, write(tmp_path), "--format", "github")
    assert re.match(r"^::warning file=.*bench\.toml,line=6,col=1,title=leak-beam::", out), out


def test_unusable_layout_is_status_2_and_others_still_checked(tmp_path, capsys):
    good = write(tmp_path)
    bad = write(tmp_path, layout="format = 1\n[bench]\nname = 3\n", name="bad.toml")
    code, out, err = run(capsys, good, bad, "--format", "json")
    assert code == 2
    assert "bad.toml:3:" in err
    assert [f for f in json.loads(out)["findings"] if f["rule"] == "leak-beam"]


def test_parallel_run_matches_serial(tmp_path, capsys):
    paths = [write(tmp_path, name=f"b{i}.toml") for i in range(3)]
    serial = main(["check", *map(str, paths), "--format", "json", "--jobs", "1"])
    out1 = json.loads(capsys.readouterr().out)
    parallel = main(["check", *map(str, paths), "--format", "json", "--jobs", "2"])
    out2 = json.loads(capsys.readouterr().out)
    assert serial == parallel and out1 == out2


def test_sarif_validates_against_the_oasis_schema(tmp_path, capsys, monkeypatch):
    jsonschema = pytest.importorskip("jsonschema")
    monkeypatch.chdir(tmp_path)
    text = LAYOUT + WAIVER.format(until="2999-01-01")
    code, out, _ = run(capsys, write(tmp_path, layout=text), "--format", "sarif")
    doc = json.loads(out)
    jsonschema.Draft7Validator(json.loads(SCHEMA.read_text())).validate(doc)
    run0 = doc["runs"][0]
    ids = [r["id"] for r in run0["tool"]["driver"]["rules"]]
    assert "leak-beam" in ids and "cavity-unstable" in ids
    res = [r for r in run0["results"] if r["ruleId"] == "leak-beam"][0]
    loc = res["locations"][0]["physicalLocation"]
    assert loc["artifactLocation"]["uri"] == "layouts/bench.toml"     # relative to the repository root
    assert loc["region"]["startLine"] == 6
    assert res["suppressions"][0]["kind"] == "inSource"
    assert run0["tool"]["driver"]["rules"][res["ruleIndex"]]["id"] == "leak-beam"


def test_rules_command_lists_every_builtin_rule(capsys):
    assert main(["rules", "--format", "json"]) == 0
    doc = json.loads(capsys.readouterr().out)
    ids = {r["id"] for r in doc["rules"]}
    assert {"layout-geometry", "cavity-unstable", "intracavity-power", "leak-beam", "beam-unterminated",
            "keepout-zone"} <= ids
    for r in doc["rules"]:
        assert r["plugin"] and r["summary"] and r["explanation"] and r["severity"] in ("error", "warning", "note")


def test_sarif_fingerprints_tell_findings_apart(capsys):
    """GitHub code scanning merges results with equal fingerprints: the flawed demo's two
    planes of one cavity, and two leaks of one fold mirror, must stay apart."""
    flawed = Path(__file__).resolve().parent.parent / "layouts" / "flawed" / "every-rule-fires.toml"
    _, out, _ = run(capsys, flawed, "--format", "sarif")
    prints = [r["partialFingerprints"]["benchcheck/v1"] for r in json.loads(out)["runs"][0]["results"]]
    assert len(prints) == len(set(prints)) > 11


PLUGIN_WRONG_NAME = """import benchcheck
@benchcheck.hookimpl
def benchcheck_rule():
    return []
"""
PLUGIN_UNMARKED = """def benchcheck_rules():
    return []
"""


@pytest.mark.parametrize("module, source, fragment", [
    ("lab_rules_misnamed", PLUGIN_WRONG_NAME, "unknown hook 'benchcheck_rule'"),
    ("lab_rules_unmarked", PLUGIN_UNMARKED, "provides no benchcheck_rules hook")])
def test_a_plugin_that_provides_no_rules_hook_is_reported(tmp_path, capsys, module, source, fragment):
    """The module sits beside benchcheck.toml: it is found there (the configuration's folder)."""
    (tmp_path / f"{module}.py").write_text(source)
    cfg = f'plugins = ["{module}"]\n' + OPEN_LAB
    code, out, err = run(capsys, write(tmp_path, config=cfg))
    assert code == 2 and module in err and fragment in err


def test_a_failed_plugin_does_not_stop_the_other_rules(tmp_path, capsys):
    """Its configuration section names a rule nobody provided now: the load failure is what
    is reported, and the built-in rules still run."""
    cfg = 'plugins = ["no_such_lab_module"]\n' + OPEN_LAB + "[rules.long-leg]\nmax_leg_mm = 100\n"
    code, out, err = run(capsys, write(tmp_path, config=cfg), "--format", "json")
    assert code == 2 and "no_such_lab_module" in err
    assert [f for f in json.loads(out)["findings"] if f["rule"] == "leak-beam"]


def test_a_folder_search_skips_configuration_files(tmp_path, capsys):
    path = write(tmp_path)
    (tmp_path / "layouts" / "pyproject.toml").write_text('[project]\nname = "x"\n')
    code, out, err = run(capsys, tmp_path, "--format", "json")
    assert json.loads(out)["files"] == [str(path)] and code == 0


def test_summary_counts_unreadable_layouts_and_configuration_errors(tmp_path, capsys):
    good = write(tmp_path)
    bad = write(tmp_path, layout="format = 1\n[bench]\nname = 3\n", name="bad.toml")
    code, out, _ = run(capsys, good, bad)
    assert code == 2
    # the leak warning of the good layout, and the bad layout counted as an error
    assert re.search(r"^1 error \(1 layout could not be read or solved\), 1 warning, 0 notes in 2 layouts$",
                     out, re.M), out
    other = tmp_path / "other"    # a fresh folder: the configuration is read once per path and run
    other.mkdir()
    good = write(other, config=OPEN_LAB + '[rules.no-such-rule]\nenabled = false\n')
    code, out, _ = run(capsys, good)
    assert code == 2
    assert re.search(r"^1 error \(1 problem with the configuration or plugins\), 1 warning", out, re.M), out


def test_github_annotations_carry_the_hint(tmp_path, capsys):
    _, out, _ = run(capsys, write(tmp_path), "--format", "github")
    first = out.splitlines()[0]
    # a newline inside an annotation's message is written %0A (GitHub's workflow-command escaping)
    assert "%0Ahint: put a beam dump or block in its way" in first, first


def test_missing_matplotlib_names_both_ways_to_install(tmp_path, capsys, monkeypatch):
    import builtins

    real_import = builtins.__import__

    def no_matplotlib(name, *args, **kwargs):
        if name == "matplotlib" or name.startswith("matplotlib."):
            raise ImportError("No module named 'matplotlib'")
        return real_import(name, *args, **kwargs)

    monkeypatch.setattr(builtins, "__import__", no_matplotlib)
    code = main(["report", str(write(tmp_path)), "-o", str(tmp_path / "r.html")])
    err = capsys.readouterr().err
    assert code == 2
    assert 'pip install "benchcheck[report]"' in err and 'source checkout' in err and 'pip install ".[report]"' in err
