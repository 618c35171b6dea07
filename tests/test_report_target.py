"""``report -o`` never destroys a file: no fixed temporary name, nothing written through a
link, only a regular file replaced, never an input of the run, a clear error for a folder
that does not exist."""

from __future__ import annotations

import os
import shutil
import stat
import subprocess
import sys
from pathlib import Path

import pytest

pytest.importorskip("matplotlib", reason="the report needs the 'report' extra (matplotlib)")

from benchcheck import outfile  # noqa: E402
from benchcheck.cli import main  # noqa: E402
from benchcheck.report_html import MARKER  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
LAYOUT = ROOT / "layouts" / "two-mirror.toml"


@pytest.fixture(autouse=True)
def builtin_rules_only(monkeypatch):
    monkeypatch.setenv("BENCHCHECK_NO_ENTRY_POINTS", "1")


def report(capsys, out, *extra, layout=LAYOUT):
    code = main(["report", str(layout), "-o", str(out), *extra])
    return code, capsys.readouterr().err


def test_the_temporary_file_is_fresh_and_a_link_beside_the_target_is_left_alone(tmp_path, capsys):
    victim = tmp_path / "victim.txt"
    victim.write_text("precious")
    (tmp_path / "review.html.tmp").symlink_to(victim)
    own = tmp_path / "review.html.part"
    own.write_text("the user's own file")
    code, err = report(capsys, tmp_path / "review.html")
    assert code == 0, err
    assert victim.read_text() == "precious"
    assert (tmp_path / "review.html.tmp").is_symlink() and own.read_text() == "the user's own file"
    assert (tmp_path / "review.html").read_text(encoding="utf-8").startswith(MARKER)
    left = sorted(p.name for p in tmp_path.iterdir())
    assert left == ["review.html", "review.html.part", "review.html.tmp", "victim.txt"]   # no temporary left
    mode = stat.S_IMODE(os.stat(tmp_path / "review.html").st_mode)
    umask = os.umask(0)
    os.umask(umask)
    assert mode == 0o666 & ~umask                 # an ordinary file, not a private temporary one


def test_a_symlink_target_is_refused_even_with_force(tmp_path, capsys):
    earlier = tmp_path / "earlier.html"
    earlier.write_text(MARKER + "\nan earlier report")
    link = tmp_path / "review.html"
    link.symlink_to(earlier)
    for extra in ((), ("--force",)):
        code, err = report(capsys, link, *extra)
        assert code == 2 and f"{link}: error: is a symbolic link" in err
        assert link.is_symlink() and earlier.read_text() == MARKER + "\nan earlier report"


def test_a_folder_target_is_refused(tmp_path, capsys):
    (tmp_path / "review.html").mkdir()
    code, err = report(capsys, tmp_path / "review.html", "--force")
    assert code == 2 and "is a folder" in err


def test_a_device_is_refused(capsys):
    code, err = report(capsys, Path(os.devnull))
    assert code == 2 and "is a device" in err


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="no named pipes on this system")
def test_a_fifo_is_refused_without_waiting_on_it(tmp_path):
    fifo = tmp_path / "review.html"
    os.mkfifo(fifo)
    env = dict(os.environ, BENCHCHECK_NO_ENTRY_POINTS="1")
    env["PYTHONPATH"] = os.pathsep.join(p for p in (str(ROOT), env.get("PYTHONPATH")) if p)
    done = subprocess.run([sys.executable, "-m", "benchcheck", "report", str(LAYOUT), "-o", str(fifo), "--force"],
                          capture_output=True, text=True, timeout=120, env=env, check=False)
    assert done.returncode == 2 and "is a FIFO" in done.stderr
    assert stat.S_ISFIFO(os.lstat(fifo).st_mode)


def test_an_input_layout_is_never_overwritten_even_with_force(tmp_path, capsys):
    layout = tmp_path / "bench.toml"
    shutil.copyfile(LAYOUT, layout)
    before = layout.read_bytes()
    code, err = report(capsys, layout, "--force", layout=layout)
    assert code == 2 and "is an input of this run" in err
    assert layout.read_bytes() == before
    (tmp_path / "hard.toml").hardlink_to(layout)              # the same file under another name
    code, err = report(capsys, tmp_path / "hard.toml", "--force", layout=layout)
    assert code == 2 and layout.read_bytes() == before


def test_a_missing_folder_is_a_clear_error(tmp_path, capsys):
    code, err = report(capsys, tmp_path / "no-such-folder" / "review.html")
    assert code == 2 and "the folder" in err and "does not exist" in err and "Traceback" not in err


def test_only_the_head_of_an_existing_target_is_read(tmp_path, monkeypatch):
    big = tmp_path / "big.html"
    with open(big, "wb") as fh:
        fh.write(MARKER.encode("utf-8"))
        fh.truncate(64 * 1024 * 1024)                       # sparse: 64 MiB on paper
    asked = []
    real_read = os.read

    def read(fd, n):
        asked.append(n)
        return real_read(fd, n)

    monkeypatch.setattr(outfile.os, "read", read)
    assert outfile.refusal(big, MARKER, (), force=False) is None
    assert asked and sum(asked) <= outfile.HEAD_BYTES
