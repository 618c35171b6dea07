"""Where no plugin code can run, a check, a rules listing and a report run in the command's
own process (a quicker start for pre-commit); the results, messages and exit status must
be exactly those of a run through a worker process.  Where a configuration lists plugins
or an entry point of the group is installed, the worker processes are still used, so a
plugin still cannot turn a failure into a pass.  And the quick look for installed entry
points says what importlib.metadata says."""

from __future__ import annotations

import json
import os
import re
import shutil
import sys
import zipfile
from importlib import metadata
from pathlib import Path

import pytest

from benchcheck import plugins, pool
from benchcheck.cli import main
from benchcheck.plugins import ENTRY_POINT_GROUP, NO_ENTRY_POINTS_ENV, entry_points_installed

ROOT = Path(__file__).resolve().parent.parent
DEMOS = sorted((ROOT / "layouts").glob("*.toml"))
FLAWED = ROOT / "layouts" / "flawed" / "every-rule-fires.toml"
SMALL = ROOT / "layouts" / "two-mirror.toml"
HOSTILE = Path(__file__).resolve().parent / "plugins_hostile"


@pytest.fixture(autouse=True)
def isolated(monkeypatch):
    monkeypatch.setenv(NO_ENTRY_POINTS_ENV, "1")


@pytest.fixture
def paths(monkeypatch):
    """Which way each run went: "here" (this process) or "workers"."""
    taken: list[str] = []
    here, workers = pool._run_here, pool._run_workers

    def spy_here(*a, **k):
        taken.append("here")
        return here(*a, **k)

    def spy_workers(*a, **k):
        taken.append("workers")
        return workers(*a, **k)

    monkeypatch.setattr(pool, "_run_here", spy_here)
    monkeypatch.setattr(pool, "_run_workers", spy_workers)
    return taken


def both_ways(capture, monkeypatch, paths, argv: list[str]):
    """(exit status, stdout, stderr) of ``argv`` in this process, then through workers."""
    code_here = main(argv)
    here = capture.readouterr()
    with monkeypatch.context() as m:
        m.setattr(pool, "_plugin_free", lambda jobs, cache: False)
        code_workers = main(argv)
    workers = capture.readouterr()
    assert paths == ["here", "workers"]
    return (code_here, here.out, here.err), (code_workers, workers.out, workers.err)


@pytest.mark.parametrize("fmt", ["text", "json", "sarif", "github"])
def test_the_flawed_bench_gives_the_same_report_both_ways(capsys, monkeypatch, paths, fmt):
    here, workers = both_ways(capsys, monkeypatch, paths, ["check", str(FLAWED), "--format", fmt])
    assert here == workers
    assert here[0] == 1 and here[1].count("error") >= 8


@pytest.mark.parametrize("fmt", ["text", "json", "sarif"])
def test_every_demo_layout_gives_the_same_report_both_ways(capsys, monkeypatch, paths, fmt):
    argv = ["check", *map(str, DEMOS), str(FLAWED), "--format", fmt, "--jobs", "1"]
    here, workers = both_ways(capsys, monkeypatch, paths, argv)
    assert here == workers
    assert here[0] == 1
    if fmt == "json":
        assert sorted(json.loads(here[1])["files"]) == sorted(map(str, [*DEMOS, FLAWED]))


def test_unusable_input_gives_the_same_messages_both_ways(tmp_path, capsys, monkeypatch, paths):
    (tmp_path / ".git").mkdir()
    (tmp_path / "broken.toml").write_text('format = 1\n[bench]\nname = "x"\nsize = [100, \n')
    shutil.copyfile(FLAWED, tmp_path / "flawed.toml")
    argv = ["check", str(tmp_path / "broken.toml"), str(tmp_path / "flawed.toml"), str(tmp_path / "gone.toml"),
            "--jobs", "1", "--format", "json"]
    here, workers = both_ways(capsys, monkeypatch, paths, argv)
    assert here == workers
    assert here[0] == 2
    assert "broken.toml:5:1: error: TOML syntax" in here[2] and "gone.toml: error: no such file or folder" in here[2]


def test_a_bad_configuration_gives_the_same_messages_both_ways(tmp_path, capsys, monkeypatch, paths):
    (tmp_path / ".git").mkdir()
    (tmp_path / "benchcheck.toml").write_text('fail_on = "sometimes"\n')
    shutil.copyfile(FLAWED, tmp_path / "bench.toml")
    here, workers = both_ways(capsys, monkeypatch, paths, ["check", str(tmp_path / "bench.toml")])
    assert here == workers
    assert here[0] == 2 and "benchcheck.toml:1:" in here[2]


@pytest.mark.parametrize("fmt", ["text", "json"])
def test_the_rules_listing_is_the_same_both_ways(capsys, monkeypatch, paths, fmt):
    here, workers = both_ways(capsys, monkeypatch, paths, ["rules", "--format", fmt])
    assert here == workers
    assert here[0] == 0 and "leak-beam" in here[1]


def test_the_report_is_the_same_both_ways(tmp_path, capsys, monkeypatch, paths):
    pytest.importorskip("matplotlib")
    runs = {}
    for way in ("here", "workers"):
        out = tmp_path / f"{way}.html"
        with monkeypatch.context() as m:
            if way == "workers":
                m.setattr(pool, "_plugin_free", lambda jobs, cache: False)
            code = main(["report", str(SMALL), "-o", str(out)])
        said = capsys.readouterr()
        # the report says when it was written; its plots' ids count the figures drawn
        # before in the process (a user's run draws its own from 1)
        html = re.sub(r"\d{4}-\d\d-\d\d \d\d:\d\d(:\d\d)?", "T", out.read_text())
        html = re.sub(r"\bfig\d+-", "fig-", html)
        runs[way] = (code, said.out.replace(way, "WAY"), said.err, html)
    assert paths == ["here", "workers"]
    assert runs["here"] == runs["workers"]
    assert runs["here"][0] == 0 and "WAY.html (" in runs["here"][1]


def test_several_layouts_with_several_jobs_still_use_workers(capsys, paths):
    assert main(["check", *map(str, DEMOS), "--jobs", "2"]) == 0
    assert paths == ["workers"]


# --- plugin code stays in watched worker processes -------------------------------------

def repo(tmp_path: Path, config: str) -> Path:
    (tmp_path / ".git").mkdir(parents=True)
    (tmp_path / "benchcheck.toml").write_text(config)
    layout = tmp_path / "bench.toml"
    shutil.copyfile(FLAWED, layout)
    return layout


def test_a_configured_plugin_runs_in_a_worker_even_for_one_layout(tmp_path, capsys, monkeypatch, paths):
    monkeypatch.syspath_prepend(str(HOSTILE))
    layout = repo(tmp_path, 'plugins = ["hostile_exit_at_import"]\n')
    assert main(["check", str(layout), "--jobs", "1"]) == 2
    assert paths == ["workers"]
    assert "plugin hostile_exit_at_import (from the configuration): cannot be loaded (called sys.exit(0))" \
        in capsys.readouterr().err


def test_one_configuration_with_plugins_sends_the_whole_run_to_workers(tmp_path, capsys, monkeypatch, paths):
    monkeypatch.syspath_prepend(str(HOSTILE))
    plain = repo(tmp_path / "a", "")
    with_plugin = repo(tmp_path / "b", 'plugins = ["hostile_exit_at_import"]\n')
    assert main(["check", str(plain), str(with_plugin), "--jobs", "1"]) == 2
    assert paths == ["workers"]


def test_a_configuration_that_gains_plugins_meanwhile_goes_to_workers(tmp_path, capsys, monkeypatch):
    """The configuration is read to decide; should the check find plugins listed all the
    same (a file changed between), the plugin is not imported here: the run goes to
    workers."""
    monkeypatch.syspath_prepend(str(HOSTILE))
    layout = repo(tmp_path, 'plugins = ["hostile_exit_at_import"]\n')
    real = pool._plugin_free
    monkeypatch.setattr(pool, "_plugin_free", lambda jobs, cache: real(jobs, {}) or True)
    taken = []
    workers = pool._run_workers
    monkeypatch.setattr(pool, "_run_workers", lambda *a, **k: taken.append(1) or workers(*a, **k))
    assert main(["check", str(layout), "--jobs", "1"]) == 2
    assert taken == [1]
    assert "hostile_exit_at_import" not in sys.modules
    assert "called sys.exit(0)" in capsys.readouterr().err


def _fake_distribution(site: Path, body: str, module: str | None = None) -> None:
    info = site / "hostile_dist-1.0.dist-info"
    info.mkdir(parents=True)
    (info / "METADATA").write_text("Metadata-Version: 2.1\nName: hostile-dist\nVersion: 1.0\n")
    (info / "entry_points.txt").write_text(body)
    if module:
        shutil.copyfile(HOSTILE / f"{module}.py", site / f"{module}.py")


def test_an_installed_entry_point_runs_in_a_worker(tmp_path, capsys, monkeypatch, paths):
    site = tmp_path / "site"
    _fake_distribution(site, "[benchcheck]\nhostile = hostile_exit_at_import\n", "hostile_exit_at_import")
    monkeypatch.syspath_prepend(str(site))
    monkeypatch.delenv(NO_ENTRY_POINTS_ENV)
    assert main(["check", str(FLAWED), "--format", "json"]) == 2
    assert paths == ["workers"]
    err = capsys.readouterr().err
    assert "plugin hostile-dist:hostile (entry point hostile_exit_at_import): cannot be loaded (called sys.exit(0))" \
        in err
    assert "hostile_exit_at_import" not in sys.modules


def test_turned_off_entry_points_leave_the_check_in_process(tmp_path, capsys, monkeypatch, paths):
    site = tmp_path / "site"
    _fake_distribution(site, "[benchcheck]\nhostile = hostile_exit_at_import\n", "hostile_exit_at_import")
    monkeypatch.syspath_prepend(str(site))
    assert main(["check", str(FLAWED)]) == 1
    assert paths == ["here"]
    assert "hostile" not in capsys.readouterr().err


def test_the_example_plugin_when_installed_runs_in_a_worker(capsys, monkeypatch, paths):
    try:
        metadata.distribution("benchcheck-breadboard")
    except metadata.PackageNotFoundError:
        pytest.skip("the example plugin is not installed (pip install ./plugins/benchcheck-breadboard)")
    assert plugins._scan_entry_points(sys.path) is True
    monkeypatch.delenv(NO_ENTRY_POINTS_ENV)
    main(["rules", "--format", "json"])
    assert paths == ["workers"]
    assert "benchcheck-breadboard:breadboard" in capsys.readouterr().out


# --- the quick look for entry points agrees with importlib.metadata --------------------

def metadata_says(monkeypatch, path: list[str]) -> bool:
    """What the worker's importlib.metadata would find on ``path``: an entry point of the
    group, or a failure to list them (which the worker then reports)."""
    with monkeypatch.context() as m:
        m.setattr(sys, "path", path)
        try:
            return bool(list(metadata.entry_points(group=ENTRY_POINT_GROUP)))
        except Exception:  # noqa: BLE001
            return True


def quick_look(monkeypatch, path: list[str]) -> tuple[bool, bool | None]:
    with monkeypatch.context() as m:
        m.setattr(sys, "path", path)
        return entry_points_installed(), plugins._scan_entry_points(path)


def write(path: Path, text: str | bytes) -> None:
    path.parent.mkdir(parents=True, exist_ok=True)
    if isinstance(text, bytes):
        path.write_bytes(text)
    else:
        path.write_text(text, encoding="utf-8")


EP = "entry_points.txt"
CASES = {
    # name: ({file below the folder on the path: content}, what the scan alone answers)
    "nothing": ({"pkg/__init__.py": ""}, False),
    "dist-info": ({f"lab_rules-1.0.dist-info/{EP}": "[benchcheck]\nlab = lab_rules\n"}, True),
    "other groups only": ({f"tool-2.0.dist-info/{EP}": "[console_scripts]\ntool = tool:main\n"}, False),
    "egg-info": ({f"lab_rules.egg-info/{EP}": "[benchcheck]\nlab = lab_rules\n"}, True),
    "comments only": ({f"a-1.dist-info/{EP}": "[benchcheck]\n# lab = lab_rules\n\n"}, False),
    "spaces around": ({f"a-1.dist-info/{EP}": "  [benchcheck]  \n   lab = lab_rules  \n"}, True),
    "double brackets": ({f"a-1.dist-info/{EP}": "[[benchcheck]]\nlab = lab_rules\n"}, True),
    "spaces inside": ({f"a-1.dist-info/{EP}": "[ benchcheck ]\nlab = lab_rules\n"}, False),
    "similar group": ({f"a-1.dist-info/{EP}": "[benchcheck.extra]\nlab = lab_rules\n[xbenchcheck]\nb = c\n"},
                      False),
    "before any section": ({f"a-1.dist-info/{EP}": "lab = lab_rules\n[other]\nx = y\n"}, False),
    "later section": ({f"a-1.dist-info/{EP}": "[other]\nx = y\n[benchcheck]\nlab = lab_rules\n"}, True),
    "empty value": ({f"a-1.dist-info/{EP}": "[benchcheck]\nlab =\n"}, True),
    "line without =": ({f"a-1.dist-info/{EP}": "[other]\nnot an entry\n"}, None),
    "not UTF-8": ({f"a-1.dist-info/{EP}": b"[other]\nx = caf\xe9\n"}, None),
    "entry_points.txt a folder": ({f"a-1.dist-info/{EP}/x": ""}, False),
    "dist-info a file": ({"a-1.dist-info": "[benchcheck]\nlab = lab_rules\n"}, False),
    "upper-case suffix": ({f"A-1.DIST-INFO/{EP}": "[benchcheck]\nlab = lab_rules\n",
                           "A-1.DIST-INFO/METADATA": "Metadata-Version: 2.1\nName: A\nVersion: 1\n"}, None),
    "two distributions": ({f"a-1.dist-info/{EP}": "[other]\nx = y\n",
                           f"b-1.dist-info/{EP}": "[benchcheck]\nlab = lab_rules\n"}, True),
}


@pytest.mark.parametrize("case", sorted(CASES))
def test_the_quick_look_agrees_with_importlib_metadata(tmp_path, monkeypatch, case):
    files, scan = CASES[case]
    for name, text in files.items():
        write(tmp_path / name, text)
    expected = metadata_says(monkeypatch, [str(tmp_path)])
    assert quick_look(monkeypatch, [str(tmp_path)]) == (expected, scan)


@pytest.mark.parametrize("pkg_info", [True, False])
def test_an_egg_folder_on_the_path_is_left_to_importlib_metadata(tmp_path, monkeypatch, pkg_info):
    """An egg's EGG-INFO folder gets its name from its PKG-INFO, which importlib.metadata
    must read (and fails on where it is missing)."""
    for name, body in (("declares.egg", "[benchcheck]\nlab = lab_rules\n"),
                       ("other.egg", "[console_scripts]\nlab = lab_rules:main\n")):
        egg = tmp_path / name
        write(egg / "EGG-INFO" / EP, body)
        if pkg_info:
            write(egg / "EGG-INFO" / "PKG-INFO", "Metadata-Version: 1.1\nName: lab-rules\nVersion: 1.0\n")
        expected = metadata_says(monkeypatch, [str(egg)])
        assert expected is (name == "declares.egg" or not pkg_info)
        assert quick_look(monkeypatch, [str(egg)]) == (expected, None)


def test_a_zip_archive_on_the_path_is_read_by_importlib_metadata(tmp_path, monkeypatch):
    archive = tmp_path / "bundle.zip"
    with zipfile.ZipFile(archive, "w") as z:
        z.writestr(f"lab_rules-1.0.dist-info/{EP}", "[benchcheck]\nlab = lab_rules\n")
        z.writestr("lab_rules-1.0.dist-info/METADATA", "Metadata-Version: 2.1\nName: lab-rules\nVersion: 1.0\n")
    assert metadata_says(monkeypatch, [str(archive)]) is True
    assert quick_look(monkeypatch, [str(archive)]) == (True, None)


def test_a_shadowed_declaration_still_counts(tmp_path, monkeypatch):
    """importlib.metadata reads only the first copy of a distribution on the path; the
    quick look also counts a later copy: it may start a worker for nothing, never skip one."""
    first, second = tmp_path / "first", tmp_path / "second"
    write(first / "lab_rules-1.0.dist-info" / EP, "[other]\nx = y\n")
    write(second / "lab_rules-2.0.dist-info" / EP, "[benchcheck]\nlab = lab_rules\n")
    assert metadata_says(monkeypatch, [str(first), str(second)]) is False
    assert quick_look(monkeypatch, [str(first), str(second)]) == (True, True)


def test_missing_and_unreadable_path_entries(tmp_path, monkeypatch):
    path = [str(tmp_path / "gone"), str(tmp_path / "gone.zip"), ""]
    monkeypatch.chdir(tmp_path)
    assert metadata_says(monkeypatch, path) is False
    assert quick_look(monkeypatch, path) == (False, False)


def test_another_finder_of_distributions_is_left_to_importlib_metadata(tmp_path, monkeypatch):
    class Finder:
        @staticmethod
        def find_spec(*args):
            return None

        @staticmethod
        def find_distributions(context=None):
            return iter(())

    monkeypatch.setattr(sys, "meta_path", [*sys.meta_path, Finder])
    assert plugins._scan_entry_points([str(tmp_path)]) is None


def test_the_quick_look_agrees_on_this_interpreter(monkeypatch):
    scan = plugins._scan_entry_points(sys.path)
    assert scan in (metadata_says(monkeypatch, list(sys.path)), None)
    assert entry_points_installed() == metadata_says(monkeypatch, list(sys.path))


# --- the command line's help, laid out without importing shutil -------------------------

@pytest.mark.parametrize("columns", [None, "57", "200", "0", "wide"])
def test_the_help_is_laid_out_as_argparse_lays_it_out(monkeypatch, columns):
    """The same text as argparse's own formatter (which asks shutil for the width) gives,
    for the main help and every command's."""
    import argparse

    from benchcheck import cli

    if columns is None:
        monkeypatch.delenv("COLUMNS", raising=False)
    else:
        monkeypatch.setenv("COLUMNS", columns)

    def helps():
        parser = cli.build_parser()
        sub = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
        return [parser.format_help()] + [p.format_help() for p in sub.choices.values()]

    ours = helps()
    monkeypatch.setattr(cli, "_Formatter", argparse.HelpFormatter)
    theirs = helps()
    assert ours == theirs
    assert len(ours) == 9 and all("usage: benchcheck" in h for h in ours)


def test_what_the_check_prints_goes_to_standard_error_both_ways(capfd, monkeypatch, paths):
    """Built-in code does not print, but should it ever, standard output still holds the
    report alone, in this process as in a worker (whose output is caught at the file
    descriptors)."""
    import benchcheck.engine

    real = benchcheck.engine.run_rules

    def chatty(*a, **k):
        print("a stray line")
        return real(*a, **k)

    monkeypatch.setattr(benchcheck.engine, "run_rules", chatty)
    here, workers = both_ways(capfd, monkeypatch, paths, ["check", str(FLAWED), "--format", "json"])
    assert here == workers
    assert "a stray line" in here[2] and json.loads(here[1])["findings"]


# --- the command line's own start ------------------------------------------------------------

def _fresh(code: str) -> str:
    import subprocess
    import sys as _sys

    env = {k: v for k, v in os.environ.items() if k not in ("OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS",
                                                             "OMP_NUM_THREADS")}
    return subprocess.run([_sys.executable, "-c", code], capture_output=True, text=True, env=env,
                          check=True).stdout.strip()


def test_importing_the_command_line_does_not_import_numpy():
    """The command line sets numpy's BLAS threads before numpy starts; that needs an import
    of benchcheck.cli that leaves numpy alone."""
    assert _fresh("import sys, benchcheck.cli; print('numpy' in sys.modules)") == "False"


def test_the_command_line_runs_blas_on_one_thread_unless_the_user_says_otherwise():
    code = ("import os, benchcheck.cli as c; c._one_blas_thread(); "
            "print(os.environ['OPENBLAS_NUM_THREADS'], os.environ['OMP_NUM_THREADS'])")
    assert _fresh(code) == "1 1"
    assert _fresh("import os; os.environ['OPENBLAS_NUM_THREADS'] = '4'; " + code) == "4 1"


def test_the_api_names_stay_functions_after_their_modules_are_imported():
    """``benchcheck.solve`` is the documented function, also once the module solve.py
    (imported by every check) is loaded."""
    out = _fresh("import benchcheck.solve, benchcheck.api, benchcheck; from benchcheck import solve, load; "
                 "print(solve is benchcheck.api.solve, load is benchcheck.api.load, "
                 "benchcheck.solve is benchcheck.api.solve)")
    assert out == "True True True"
    # a submodule is still reached from the package, as when the package imported them all
    assert _fresh("import benchcheck; print(benchcheck.model.Loc.__name__, benchcheck.findings.Rule.__name__)") \
        == "Loc Rule"
