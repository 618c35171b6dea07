"""Plugins that misbehave cannot turn a failing bench into a pass, hide the built-in
findings, take a built-in rule's id, change what other rules see, or corrupt the JSON and
SARIF output.  Each case runs the flawed demo bench (errors from the built-in rules) in a
throw-away repository whose benchcheck.toml names one module of ``tests/plugins_hostile``;
the built-in findings must be exactly those of a run without the plugin, and the exit
status 2 with the plugin and its rule named.

Runs that could end the test process itself (``os._exit``) go through a subprocess."""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from benchcheck.cli import main
from benchcheck.config import Config
from benchcheck.engine import check_file
from benchcheck.plugins import NO_ENTRY_POINTS_ENV, load_rules

ROOT = Path(__file__).resolve().parent.parent
HOSTILE = Path(__file__).resolve().parent / "plugins_hostile"
FLAWED = ROOT / "layouts" / "flawed" / "every-rule-fires.toml"


@pytest.fixture(autouse=True)
def isolated(monkeypatch):
    monkeypatch.setenv(NO_ENTRY_POINTS_ENV, "1")
    monkeypatch.syspath_prepend(str(HOSTILE))


def repo(tmp_path: Path, config: str) -> Path:
    (tmp_path / ".git").mkdir()
    (tmp_path / "benchcheck.toml").write_text(config)
    layout = tmp_path / "bench.toml"
    shutil.copyfile(FLAWED, layout)
    return layout


def run_json(capsys, layout: Path, *extra: str):
    code = main(["check", str(layout), "--format", "json", "--jobs", "1", *extra])
    out, err = capsys.readouterr()
    return code, json.loads(out), err


def builtin(doc: dict) -> list:
    return sorted((f["rule"], f["message"], tuple(f["targets"]), f["waived"]) for f in doc["findings"]
                  if f.get("plugin") == "benchcheck.rules")


@pytest.fixture(scope="module")
def baseline(tmp_path_factory):
    """The built-in findings of the flawed bench with no plugin, computed once."""
    layout = repo(tmp_path_factory.mktemp("baseline"), "")
    result = check_file(layout, Config(), load_rules(entry_points=False))
    assert result.errors == []
    assert sum(1 for f in result.findings if f.severity == "error") >= 8     # the flawed demo fails
    return builtin({"findings": [f.as_json() for f in result.findings]})


def test_sys_exit_at_import_is_a_failure_of_the_plugin(tmp_path, capsys, baseline):
    code, doc, err = run_json(capsys, repo(tmp_path, 'plugins = ["hostile_exit_at_import"]\n'))
    assert code == 2
    assert "plugin hostile_exit_at_import (from the configuration): cannot be loaded (called sys.exit(0))" in err
    assert "benchcheck.toml:1:1: error: plugin hostile_exit_at_import" in err    # where it is listed
    assert builtin(doc) == baseline


@pytest.mark.parametrize("module, rule, words", [
    ("hostile_exit_in_check", "hostile-exit", "called sys.exit(0)"),
    ("hostile_interrupt_in_check", "hostile-interrupt", "raised KeyboardInterrupt"),
])
def test_exit_and_interrupt_inside_a_rule_are_failures_of_that_rule(tmp_path, capsys, baseline, module, rule,
                                                                   words):
    layout = repo(tmp_path, f'plugins = ["{module}"]\n')
    code, doc, err = run_json(capsys, layout)
    assert code == 2
    message = f"{layout}: rule '{rule}' from plugin {module} {words}"
    assert message in err and message in doc["errors"]
    assert builtin(doc) == baseline


def test_malformed_findings_are_reported_and_the_good_ones_kept(tmp_path, capsys, baseline):
    layout = repo(tmp_path, 'plugins = ["hostile_bad_findings"]\n')
    code, doc, err = run_json(capsys, layout)
    assert code == 2
    assert (f"{layout}: rule 'hostile-bad-findings' from plugin hostile_bad_findings yielded a Finding whose "
            "targets are None, not a tuple of ids (strings) (and 4 more); left out") in err
    mine = [f for f in doc["findings"] if f["rule"] == "hostile-bad-findings"]
    assert [(f["message"], f["value"], f["limit"]) for f in mine] == [("the good one", 1.0, 2.0)]
    assert builtin(doc) == baseline


@pytest.mark.parametrize("fmt", ["json", "sarif"])
def test_a_plugin_that_prints_does_not_corrupt_the_output(tmp_path, fmt):
    layout = repo(tmp_path, 'plugins = ["hostile_prints"]\n')
    done = _subprocess(tmp_path, "check", str(layout), "--format", fmt)
    doc = json.loads(done.stdout)            # the whole of standard output is one JSON document
    assert done.returncode == 1, done.stderr
    assert "hostile_prints imported {" in done.stderr and "] not JSON" in done.stderr
    if fmt == "json":
        assert any(f["rule"] == "hostile-prints" for f in doc["findings"])


def _subprocess(cwd: Path, *args: str) -> subprocess.CompletedProcess:
    env = dict(os.environ)
    env[NO_ENTRY_POINTS_ENV] = "1"
    env["PYTHONPATH"] = os.pathsep.join([str(ROOT), str(HOSTILE)] + [p for p in [env.get("PYTHONPATH")] if p])
    return subprocess.run([sys.executable, "-m", "benchcheck", *args], cwd=cwd, env=env, capture_output=True,
                          text=True, timeout=120, check=False)


def test_os_exit_at_import_leaves_the_plugin_out(tmp_path, capsys, baseline):
    layout = repo(tmp_path, 'plugins = ["hostile_os_exit_at_import"]\n[rules.its-rule]\nenabled = true\n')
    done = _subprocess(tmp_path, "check", str(layout), "--format", "json")
    assert done.returncode == 2, done.stderr
    assert "Traceback" not in done.stderr
    assert "no rule 'its-rule'" not in done.stderr      # its section is not a problem of its own
    doc = json.loads(done.stdout)
    assert ("error: plugin hostile_os_exit_at_import ended the worker process (os._exit or a crash; exit status 0) "
            "while being imported; it is left out of this run") in doc["errors"]
    assert builtin(doc) == baseline


def test_os_exit_in_a_rule_keeps_every_other_finding_of_every_layout(tmp_path, capsys, baseline):
    layout = repo(tmp_path, 'plugins = ["hostile_os_exit_in_check", "hostile_prints"]\n')
    second = tmp_path / "second.toml"
    shutil.copyfile(FLAWED, second)
    done = _subprocess(tmp_path, "check", str(layout), str(second), "--format", "json", "--jobs", "2")
    assert done.returncode == 2, done.stderr
    assert "Traceback" not in done.stderr
    doc = json.loads(done.stdout)
    assert any(e.endswith("rule 'hostile-os-exit' from plugin hostile_os_exit_in_check ended the worker process "
                          "(os._exit or a crash; exit status 0); it is left out of this run") for e in doc["errors"])
    for path in (str(layout), str(second)):
        mine = {"findings": [f for f in doc["findings"] if f["file"] == path]}
        assert builtin(mine) == baseline
        assert [f["rule"] for f in mine["findings"] if f["plugin"] == "hostile_prints"] == ["hostile-prints"]


def test_a_rule_that_never_returns_is_stopped_after_the_configured_time(tmp_path, capsys, baseline):
    layout = repo(tmp_path, 'plugins = ["hostile_hangs"]\nrule_timeout_s = 1.5\n')
    code, doc, err = run_json(capsys, layout)
    assert code == 2
    assert (f"{layout}: rule 'hostile-hangs' from plugin hostile_hangs did not finish within 1.5 s and was stopped "
            "(rule_timeout_s in the configuration, or --rule-timeout)") in err
    assert builtin(doc) == baseline
    code, doc, err = run_json(capsys, layout, "--rule-timeout", "0.5")     # the command line overrides it
    assert code == 2 and "did not finish within 0.5 s" in err


def test_a_plugin_cannot_take_a_builtin_rule_id(tmp_path, capsys, baseline):
    layout = repo(tmp_path, 'plugins = ["hostile_shadows"]\n')
    code, doc, err = run_json(capsys, layout)
    assert code == 2
    assert ("error: plugin hostile_shadows: rule id 'leak-beam' is a built-in rule; the rule of plugin "
            "hostile_shadows is left out (give it another id)") in err
    assert builtin(doc) == baseline
    assert any(f["rule"] == "leak-beam" for f in doc["findings"])


def test_a_plugin_that_changes_the_bench_changes_nothing_else(tmp_path, capsys, baseline):
    layout = repo(tmp_path, 'plugins = ["hostile_mutates", "hostile_prints"]\n')
    code, doc, err = run_json(capsys, layout)
    assert code == 1, err                     # still failing: the errors are neither hidden nor waived
    assert builtin(doc) == baseline
    assert not any(f["waived"] for f in doc["findings"])


def test_objects_that_raise_when_read_or_copied_are_failures_of_their_rule(tmp_path, capsys, baseline):
    layout = repo(tmp_path, 'plugins = ["hostile_tricky_objects"]\n')
    code, doc, err = run_json(capsys, layout)
    assert code == 2, err
    assert (f"{layout}: rule 'hostile-slippery' from plugin hostile_tricky_objects yielded a Finding that cannot be "
            "read (RuntimeError: no targets for you); left out") in err
    assert (f"{layout}: rule 'hostile-uncopyable' from plugin hostile_tricky_objects raised RuntimeError: "
            "cannot be copied") in err
    assert [f["message"] for f in doc["findings"] if f["plugin"] == "hostile_tricky_objects"] == ["a plain finding"]
    assert builtin(doc) == baseline
    code = main(["rules", "--format", "json", "--config", str(tmp_path / "benchcheck.toml")])
    listed = {r["id"]: r for r in json.loads(capsys.readouterr().out)["rules"]}
    assert code == 0 and listed["hostile-uncopyable"]["options"][0]["default"].startswith("<hostile_tricky_objects.")


def test_an_import_that_never_finishes_is_stopped_and_rules_still_listed(tmp_path, capsys):
    repo(tmp_path, 'plugins = ["hostile_hangs_at_import", "hostile_prints"]\nrule_timeout_s = 1\n')
    code = main(["rules", "--format", "json", "--config", str(tmp_path / "benchcheck.toml")])
    out, err = capsys.readouterr()
    assert code == 2
    assert ("error: plugin hostile_hangs_at_import did not finish within 1 s and was stopped (rule_timeout_s in the "
            "configuration, or --rule-timeout) while being imported; it is left out of this run") in err
    ids = {r["id"] for r in json.loads(out)["rules"]}
    assert {"hostile-prints", "leak-beam"} <= ids


# --- diff is a gate too ------------------------------------------------------------------------

def _git_repo_with_change(tmp_path: Path, config: str) -> Path:
    """A repository whose committed layout is a good demo and whose working copy is the
    flawed one: 'diff --rev HEAD' must show the new errors."""
    layout = repo(tmp_path, config)
    shutil.copyfile(ROOT / "layouts" / "two-mirror.toml", layout)
    shutil.rmtree(tmp_path / ".git")
    git = ["git", "-c", "user.name=t", "-c", "user.email=t@example.invalid"]
    subprocess.run(git + ["init", "-q"], cwd=tmp_path, check=True)
    subprocess.run(git + ["add", "bench.toml"], cwd=tmp_path, check=True)
    subprocess.run(git + ["commit", "-qm", "good"], cwd=tmp_path, check=True)
    shutil.copyfile(FLAWED, layout)
    return layout


@pytest.mark.parametrize("how", ["files", "rev"])
def test_a_plugin_that_ends_the_process_cannot_pass_a_diff(tmp_path, how):
    """os._exit(0) in a plugin's rule once made 'diff' exit 0 with no output: the diff's
    checks ran in its own process."""
    layout = _git_repo_with_change(tmp_path, 'plugins = ["hostile_os_exit_in_check"]\n')
    good = tmp_path / "good.toml"
    shutil.copyfile(ROOT / "layouts" / "two-mirror.toml", good)
    args = ["diff", str(good), str(layout)] if how == "files" else ["diff", "--rev", "HEAD"]
    done = _subprocess(tmp_path, *args, "--format", "json")
    assert done.returncode == 2, (done.returncode, done.stdout, done.stderr)
    doc = json.loads(done.stdout)
    assert "rule 'hostile-os-exit' from plugin hostile_os_exit_in_check ended the worker process" in done.stderr
    # the flawed bench's new errors are all still there
    added = [f for d in doc["layouts"] for f in d["findings"]["added"]] if "layouts" in doc else \
        doc["findings"]["added"]
    assert sum(1 for f in added if f["severity"] == "error") >= 8, doc


def test_a_plugin_that_prints_does_not_corrupt_the_diff_json(tmp_path):
    layout = _git_repo_with_change(tmp_path, 'plugins = ["hostile_prints"]\n')
    done = _subprocess(tmp_path, "diff", "HEAD:bench.toml", str(layout), "--format", "json")
    json.loads(done.stdout)
    assert done.returncode == 1, done.stderr
    assert "] not JSON" in done.stderr
