"""Where a configuration may come from, and configuration files that cannot be read.

A configuration names plugin modules to import and sets the limits, so one planted above a
repository (in /tmp, say) must neither run code nor loosen a limit for the layouts below
it.  Every configuration that cannot be read is an error with file, line and column and
exit status 2, never a traceback."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from benchcheck.cli import main
from benchcheck.config import find_config, load_config
from benchcheck.model import LayoutError

from test_check_command import LAYOUT

# imported, it leaves a file behind: the proof that a configuration's plugin ran
PLANTED = """from pathlib import Path
Path(__file__).with_name("PLANTED-RAN").write_text("yes")
"""
LOOSE = 'plugins = ["planted_rules"]\n[limits]\nstray_power_w = 1000.0\nintracavity_power_w = 1000.0\n'


@pytest.fixture(autouse=True)
def builtin_rules_only(monkeypatch):
    monkeypatch.setenv("BENCHCHECK_NO_ENTRY_POINTS", "1")


def plant(folder: Path) -> None:
    (folder / "benchcheck.toml").write_text(LOOSE)
    (folder / "planted_rules.py").write_text(PLANTED)


def check_json(capsys, *args):
    code = main(["check", *map(str, args), "--format", "json", "--jobs", "1"])
    out, err = capsys.readouterr()
    return code, json.loads(out), err


def leak_limits(doc) -> list:
    """The stray-power limits (W) the leak was judged against; its exposure against the MPE,
    which no configured stray limit changes, is left out."""
    return [f["limit"] for f in doc["findings"] if f["rule"] == "leak-beam" and f["unit"] == "W"]


def test_a_configuration_above_the_repository_is_not_used(tmp_path, capsys):
    plant(tmp_path)
    repo = tmp_path / "repo"
    (repo / ".git").mkdir(parents=True)
    (repo / "layouts").mkdir()
    layout = repo / "layouts" / "bench.toml"
    layout.write_text(LAYOUT)
    code, doc, err = check_json(capsys, layout)
    assert not (tmp_path / "PLANTED-RAN").exists()
    assert leak_limits(doc) == [0.001]                 # the default limit, not the planted one
    assert find_config(layout) is None


def test_a_worktree_git_file_marks_the_root_too(tmp_path):
    plant(tmp_path)
    repo = tmp_path / "repo"
    repo.mkdir()
    (repo / ".git").write_text("gitdir: /elsewhere/.git/worktrees/repo\n")
    (repo / "benchcheck.toml").write_text("fail_on = 'warning'\n")
    (repo / "sub").mkdir()
    assert find_config(repo / "sub" / "bench.toml") == (repo / "benchcheck.toml").resolve()


def outside_any_repository(tmp_path: Path) -> Path:
    """A layout in tmp_path/work, below a planted configuration, in no repository."""
    plant(tmp_path)
    work = tmp_path / "work"
    work.mkdir()
    layout = work / "bench.toml"
    layout.write_text(LAYOUT)
    return layout


def test_outside_any_repository_only_the_layouts_own_folder_is_searched(tmp_path, capsys):
    layout = outside_any_repository(tmp_path)
    work = layout.parent
    code, doc, err = check_json(capsys, layout)
    assert not (tmp_path / "PLANTED-RAN").exists() and leak_limits(doc) == [0.001]
    (work / "benchcheck.toml").write_text("[limits]\nstray_power_w = 0.002\n")
    code, doc, err = check_json(capsys, layout)
    assert leak_limits(doc) == [0.002]


def test_a_configuration_named_with_config_is_trusted(tmp_path, capsys):
    layout = outside_any_repository(tmp_path)
    code, doc, err = check_json(capsys, layout, "--config", tmp_path / "benchcheck.toml")
    assert (tmp_path / "PLANTED-RAN").exists()        # the user asked for it
    assert leak_limits(doc) == []                     # 20 mW is below the named 1000 W limit


DEEP = "x = " + "[" * 5000 + "]" * 5000 + "\n"
LONG_INT = "fail_on = 'error'\nrule_timeout_s = " + "9" * 5000 + "\n"


@pytest.mark.parametrize("name, text, line, fragment", [
    ("benchcheck.toml", DEEP, 1, "nested more than"),
    ("benchcheck.toml", LONG_INT, 2, "a number far too long to read"),
    ("pyproject.toml", "[tool.benchcheck]\n" + DEEP, 2, "nested more than"),
    ("pyproject.toml", "[tool.benchcheck]\nfail_on = = 'error'\n", 2, "TOML syntax"),
    ("benchcheck.toml", "fail_on = 'warning'\n\xff\n", 2, "not UTF-8"),
])
def test_a_configuration_that_cannot_be_read_is_located(tmp_path, capsys, name, text, line, fragment):
    (tmp_path / ".git").mkdir()
    (tmp_path / name).write_bytes(text.encode("utf-8", errors="surrogateescape") if "\xff" not in text
                                  else text.encode("latin-1"))
    layout = tmp_path / "bench.toml"
    layout.write_text(LAYOUT)
    for command in (["check", str(layout)], ["report", str(layout), "-o", str(tmp_path / "r.html")]):
        code = main(command + ["--jobs", "1"] * (command[0] == "check"))
        out, err = capsys.readouterr()
        assert code == 2 and "Traceback" not in err, err
        assert f"{tmp_path / name}:{line}:" in err and fragment in err, err


def test_an_unrelated_pyproject_above_is_not_read(tmp_path, capsys):
    """One that does not mention benchcheck, however broken, is nobody's configuration."""
    (tmp_path / ".git").mkdir()
    (tmp_path / "pyproject.toml").write_text("[project]\n" + DEEP + "n = " + "1" * 5000 + "\n")
    (tmp_path / "layouts").mkdir()
    layout = tmp_path / "layouts" / "bench.toml"
    layout.write_text(LAYOUT)
    code, doc, err = check_json(capsys, layout)
    # no configuration error (status 2): the defaults apply, under which the open 40 W legs fail
    assert code == 1 and doc["errors"] == [] and leak_limits(doc) == [0.001]


def test_a_configuration_with_a_byte_order_mark_is_read(tmp_path):
    """Editors on some systems start UTF-8 files with U+FEFF; layouts are read with one."""
    path = tmp_path / "benchcheck.toml"
    path.write_bytes("\ufeff[limits]\nstray_power_w = 0.25\n".encode("utf-8"))
    config = load_config(path)
    assert config.limits["stray_power_w"] == 0.25


@pytest.mark.parametrize("text, fragment", [
    ("rule_timeout_s = 0\n", "rule_timeout_s must be a number of seconds greater than 0"),
    ("rule_timeout_s = 'long'\n", "rule_timeout_s must be a number of seconds greater than 0"),
])
def test_rule_timeout_is_checked(tmp_path, text, fragment):
    path = tmp_path / "benchcheck.toml"
    path.write_text(text)
    with pytest.raises(LayoutError, match=fragment) as exc:
        load_config(path)
    assert exc.value.loc.line == 1


def test_a_configuration_that_is_not_a_regular_file_or_far_too_large_is_refused(tmp_path):
    import os

    big = tmp_path / "benchcheck.toml"
    big.write_text("# " + "x" * (2 * 1024 * 1024) + "\n")
    with pytest.raises(LayoutError, match="larger than 1024 KiB"):
        load_config(big)
    if hasattr(os, "mkfifo"):
        fifo = tmp_path / "fifo.toml"
        os.mkfifo(fifo)
        with pytest.raises(LayoutError, match="not a regular file"):      # not read, so no wait for a writer
            load_config(fifo)
    with pytest.raises(LayoutError, match="not a regular file"):
        load_config(tmp_path)


def test_the_check_looks_where_find_config_looks_and_remembers_it_per_folder(tmp_path):
    """The pool remembers the configuration found for each folder of a run; the answer for
    every job must be what ``find_config`` itself gives for that job's layout (the
    reference), including a layout in a folder that does not exist (searched from that
    folder only, outside a repository: not from the one above it), a linked layout (its
    target's folder), and a git revision's text found from ``start``."""
    from benchcheck.pool import Job, _config_key, _config_path

    (tmp_path / "p" / "sub").mkdir(parents=True)
    (tmp_path / "p" / "benchcheck.toml").write_text('fail_on = "warning"\n', encoding="utf-8")
    (tmp_path / "p" / "a.toml").write_text(LAYOUT, encoding="utf-8")
    (tmp_path / "p" / "sub" / "b.toml").write_text(LAYOUT, encoding="utf-8")
    (tmp_path / "link.toml").symlink_to(tmp_path / "p" / "a.toml")
    paths = [tmp_path / "p" / "a.toml", tmp_path / "p" / "sub" / "b.toml", tmp_path / "p" / "nodir" / "x.toml",
             tmp_path / "p" / "nodir", tmp_path / "link.toml"]
    cache: dict = {}
    for path in paths + paths:          # the second pass answers from what was remembered
        assert _config_path(Job(str(path)), cache) == find_config(path), path
        assert _config_path(Job("rev:a.toml", start=str(path)), cache) == find_config(path), path
        assert _config_key(Job(str(path)), {}) == str(find_config(path)), path
    assert find_config(tmp_path / "p" / "nodir" / "x.toml") is None
    assert find_config(tmp_path / "link.toml") == tmp_path / "p" / "benchcheck.toml"
