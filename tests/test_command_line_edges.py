"""Small things the command line must get right: paths that do not exist or are named
twice, option defaults and values JSON cannot hold, rule metadata of every configuration
in a mixed folder, and where a plugin that cannot be loaded is listed."""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest

from benchcheck.cli import main

from test_check_command import LAYOUT, OPEN_LAB

ODD_PLUGIN = '''"""A lab plugin whose option default and finding values are not finite (test fixture)."""
import math
from benchcheck import Finding, Option, Rule, hookimpl


def check(bench, options):
    yield Finding("value not measured", (), value=math.nan, limit=math.inf, unit="mm")


@hookimpl
def benchcheck_rules():
    return [Rule("{rid}", "{summary}", "A rule for the tests.", check, severity="note",
                 options=(Option("ratio", math.nan, "not set", ""),))]
'''


@pytest.fixture(autouse=True)
def builtin_rules_only(monkeypatch):
    monkeypatch.setenv("BENCHCHECK_NO_ENTRY_POINTS", "1")


def repo(tmp_path: Path, config: str = OPEN_LAB) -> Path:
    (tmp_path / ".git").mkdir(exist_ok=True)
    (tmp_path / "benchcheck.toml").write_text(config)
    layout = tmp_path / "bench.toml"
    layout.write_text(LAYOUT)
    return layout


def plugin(folder: Path, module: str, rid: str, summary: str) -> None:
    (folder / f"{module}.py").write_text(ODD_PLUGIN.replace("{rid}", rid).replace("{summary}", summary))


def run(capsys, *args):
    code = main([*map(str, args)])
    out, err = capsys.readouterr()
    return code, out, err


def test_a_missing_file_is_an_error_and_not_a_layout(tmp_path, capsys):
    layout = repo(tmp_path)
    missing = tmp_path / "no-such.toml"
    code, out, err = run(capsys, "check", missing, layout, "--jobs", "1")
    assert code == 2
    assert f"{missing}: error: no such file or folder" in err
    assert re.search(r"^\d+ errors? \(1 path named on the command line does not exist\), .* in 1 layout$",
                     out, re.M), out
    code, out, err = run(capsys, "check", missing, layout, "--jobs", "1", "--format", "json")
    doc = json.loads(out)
    assert doc["files"] == [str(layout)] and f"{missing}: error: no such file or folder" in doc["errors"]


def test_a_file_named_twice_is_checked_once(tmp_path, capsys):
    layout = repo(tmp_path)
    code, out, err = run(capsys, "check", layout, layout, tmp_path, "--jobs", "1", "--format", "json")
    doc = json.loads(out)
    assert doc["files"] == [str(layout)]
    assert len([f for f in doc["findings"] if f["rule"] == "leak-beam"]) == 1


def _strict(text: str):
    def refuse(name):
        raise ValueError(f"{name} is not JSON")
    return json.loads(text, parse_constant=refuse)


def test_rules_json_holds_no_nan(tmp_path, capsys, monkeypatch):
    repo(tmp_path, 'plugins = ["odd_lab_rules"]\n')
    plugin(tmp_path, "odd_lab_rules", "odd-rule", "an odd rule")
    monkeypatch.chdir(tmp_path)
    code, out, err = run(capsys, "rules", "--format", "json")
    assert code == 0, err
    rules = {r["id"]: r for r in _strict(out)["rules"]}
    assert rules["odd-rule"]["options"] == [{"name": "ratio", "default": None, "unit": "", "help": "not set"}]


def test_the_report_shows_no_nan_for_a_value_json_gives_as_null(tmp_path, capsys):
    pytest.importorskip("matplotlib", reason="the report needs the 'report' extra (matplotlib)")
    layout = repo(tmp_path, 'plugins = ["odd_lab_rules"]\n' + OPEN_LAB)
    plugin(tmp_path, "odd_lab_rules", "odd-rule", "an odd rule")
    code, out, err = run(capsys, "report", layout, "-o", tmp_path / "r.html")
    assert code == 0, err
    html = (tmp_path / "r.html").read_text(encoding="utf-8")
    row = re.search(r"<tr>(?:(?!</tr>).)*value not measured(?:(?!</tr>).)*</tr>", html, re.S).group(0)
    assert not re.search(r"\b(nan|inf)\b", row), row


def test_sarif_describes_the_rules_of_every_configuration(tmp_path, capsys):
    """A folder whose two parts have their own configuration and plugins: each plugin's
    rule is described with its own summary, not a placeholder."""
    (tmp_path / ".git").mkdir()
    for part, rid in (("a", "lab-a-rule"), ("b", "lab-b-rule")):
        folder = tmp_path / part
        folder.mkdir()
        (folder / "benchcheck.toml").write_text(f'plugins = ["lab_{part}_rules"]\n' + OPEN_LAB)
        (folder / "bench.toml").write_text(LAYOUT)
        plugin(folder, f"lab_{part}_rules", rid, f"the rule of part {part}")
    code, out, err = run(capsys, "check", tmp_path, "--format", "sarif", "--jobs", "1")
    described = {r["id"]: r for r in json.loads(out)["runs"][0]["tool"]["driver"]["rules"]}
    assert described["lab-a-rule"]["shortDescription"]["text"] == "the rule of part a"
    assert described["lab-b-rule"]["shortDescription"]["text"] == "the rule of part b"
    assert described["lab-b-rule"]["properties"]["plugin"] == "lab_b_rules"


def test_a_plugin_that_cannot_be_loaded_is_located_in_the_configuration(tmp_path, capsys):
    layout = repo(tmp_path, '# the lab\'s policy\nfail_on = "error"\nplugins = ["not_a_lab_module"]\n' + OPEN_LAB)
    code, out, err = run(capsys, "check", layout, "--jobs", "1")
    config = tmp_path / "benchcheck.toml"
    assert code == 2
    assert f"{config}:3:1: error: plugin not_a_lab_module (from the configuration): cannot be loaded" in err
