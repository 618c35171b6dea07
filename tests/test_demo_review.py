"""The demo layouts as a reviewer sees them: the four good benches pass every built-in rule
under the repository's benchcheck.toml, and the deliberately flawed draft makes every
built-in rule fire."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from benchcheck.cli import main

ROOT = Path(__file__).resolve().parent.parent
GOOD = sorted((ROOT / "layouts").glob("*.toml"))
FLAWED = ROOT / "layouts" / "flawed" / "every-rule-fires.toml"
BUILTIN = {"layout-geometry", "cavity-unstable", "stability-margin", "aperture-clipping", "beam-obstructed",
           "mode-match", "seed-power",
           "mode-astigmatism", "coating-damage", "intracavity-power", "leak-beam", "beam-unterminated",
           "keepout-zone", "open-beam", "undeclared-output",
           "build-yield", "alignment-sensitivity"}


@pytest.fixture(autouse=True)
def builtin_rules_only(monkeypatch):
    monkeypatch.setenv("BENCHCHECK_NO_ENTRY_POINTS", "1")


def findings(capsys, *paths):
    code = main(["check", *map(str, paths), "--format", "json", "--jobs", "1"])
    return code, json.loads(capsys.readouterr().out)


def test_every_builtin_rule_is_installed(capsys):
    assert main(["rules", "--format", "json"]) == 0
    assert {r["id"] for r in json.loads(capsys.readouterr().out)["rules"]} == BUILTIN


def test_good_demos_pass_review(capsys):
    code, doc = findings(capsys, *GOOD)
    assert [f["message"] for f in doc["findings"]] == []
    assert code == 0 and doc["errors"] == []


def test_flawed_demo_makes_every_builtin_rule_fire(capsys):
    code, doc = findings(capsys, FLAWED)
    assert {f["rule"] for f in doc["findings"]} == BUILTIN
    assert code == 1
    for f in doc["findings"]:
        assert f["file"].endswith("every-rule-fires.toml") and f["line"] >= 1 and f["message"]
