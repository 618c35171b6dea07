"""Read layouts out of git: one file at a revision (git's own ``REV:path``), and the list of
layouts changed between a revision and the working tree.

Plain ``git`` through subprocess, so that whatever git the user has (and its
configuration: safe directories, alternates, worktrees) decides; nothing is parsed here
but git's own output.  Every failure is a ``GitError`` whose message says what to do.
"""

from __future__ import annotations

import os
import subprocess
from dataclasses import dataclass
from pathlib import Path


class GitError(Exception):
    """A revision, path or repository git cannot give us; the CLI prints it and exits 2."""


@dataclass(frozen=True)
class Revision:
    """A layout's text at a revision."""

    name: str           # "REV:path", for messages
    data: bytes
    #: where the same path is in the working tree (its configuration is used)
    worktree_path: Path


@dataclass(frozen=True)
class Changed:
    """One layout changed between a revision and the working tree."""

    status: str                 # "modified" | "added" | "deleted" | "renamed"
    old: str | None             # path at the revision, relative to the repository root
    new: str | None             # path in the working tree, relative to the repository root


def _git(args: list[str], what: str, cwd: str | Path | None = None) -> subprocess.CompletedProcess:
    try:
        return subprocess.run(["git", *args], cwd=cwd, capture_output=True, check=False)
    except FileNotFoundError:
        raise GitError(f"{what}: error: git is not installed or not on PATH; it is needed to read revisions") from None
    except OSError as exc:
        raise GitError(f"{what}: error: cannot run git ({exc})") from None


def _stderr(proc: subprocess.CompletedProcess) -> str:
    return proc.stderr.decode("utf-8", "replace").strip().splitlines()[0] if proc.stderr.strip() else ""


def toplevel(what: str) -> Path:
    """The root of the working tree we are in."""
    proc = _git(["rev-parse", "--show-toplevel"], what)
    if proc.returncode != 0:
        raise GitError(f"{what}: error: not inside a git repository ({Path.cwd()}); run benchcheck diff inside "
                       "the repository, or compare two files")
    return Path(proc.stdout.decode("utf-8").strip())


def verify(rev: str, what: str) -> None:
    """An unknown revision is an error that names it."""
    if rev.startswith("-"):
        raise GitError(f"{what}: error: '{rev}' is not a revision (it starts with '-')")
    proc = _git(["rev-parse", "--verify", "--quiet", f"{rev}^{{commit}}"], what)
    if proc.returncode != 0:
        raise GitError(f"{what}: error: unknown revision '{rev}' (not a commit, branch or tag of this repository)")


def is_revision_spec(spec: str) -> bool:
    """``REV:path`` unless a file of that name exists (a file always wins)."""
    return ":" in spec and not Path(spec).exists()


def read_revision(spec: str) -> Revision:
    """The bytes of ``path`` at ``rev`` for ``spec`` = ``REV:path``.  As in git, the path is
    relative to the repository root unless it starts with ``./`` or ``../`` (then to the
    current folder); an empty REV (``:path``) is the index."""
    rev, _, path = spec.partition(":")
    if not path:
        raise GitError(f"{spec}: error: expected REV:path, e.g. HEAD:layouts/bench.toml (the path is missing)")
    root = toplevel(spec)
    if rev:
        verify(rev, spec)
    kind = _git(["cat-file", "-t", spec], spec)
    if kind.returncode != 0:
        where = f"revision '{rev}'" if rev else "the index"
        raise GitError(f"{spec}: error: no file '{path}' in {where} (paths are relative to the repository root "
                       "unless they start with ./)")
    if kind.stdout.decode().strip() != "blob":
        raise GitError(f"{spec}: error: '{path}' is a folder in that revision, not a layout file")
    proc = _git(["show", spec], spec)
    if proc.returncode != 0:
        raise GitError(f"{spec}: error: git show failed: {_stderr(proc)}")
    local = Path(path) if path.startswith(("./", "../")) else root / path
    return Revision(spec, proc.stdout, Path(os.path.abspath(local)))


def changed_files(rev: str, paths: list[str]) -> tuple[Path, list[Changed]]:
    """Files changed between ``rev`` and the working tree (tracked files that differ, and
    untracked ones not ignored), limited to ``paths``; names relative to the root."""
    what = f"--rev {rev}"
    root = toplevel(what)
    verify(rev, what)
    spec = ["--", *paths] if paths else []
    proc = _git(["diff", "--name-status", "-z", "-M", rev, *spec], what)
    if proc.returncode != 0:
        raise GitError(f"{what}: error: git diff failed: {_stderr(proc)}")
    words = proc.stdout.decode("utf-8", "surrogateescape").split("\0")
    out: list[Changed] = []
    i = 0
    while i < len(words) and words[i]:
        code = words[i][0]
        if code in "RC":
            a, b = words[i + 1], words[i + 2]
            out.append(Changed("renamed", a, b) if code == "R" else Changed("added", None, b))
            i += 3
            continue
        name = words[i + 1]
        status = {"A": "added", "D": "deleted"}.get(code, "modified")
        out.append(Changed(status, None if status == "added" else name, None if status == "deleted" else name))
        i += 2
    untracked = _git(["ls-files", "--others", "--exclude-standard", "--full-name", "-z", *spec], what)
    if untracked.returncode == 0:
        out += [Changed("added", None, n) for n in untracked.stdout.decode("utf-8", "surrogateescape").split("\0") if n]
    return root, out
