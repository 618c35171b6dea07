"""Writing an output file without ever destroying one the user wrote.

The report goes to a fresh temporary file created exclusively (``O_EXCL``) in the target's
folder, which is then renamed over the target: nothing is written through a link, no
fixed ``.tmp`` name is consumed, and an interrupted run leaves the old file whole.  Only a
regular file may be replaced, only when it is an earlier output (its first bytes carry
``marker``) or ``force`` is given, and never an input of the run, forced or not.
"""

from __future__ import annotations

import os
import stat
import tempfile
from pathlib import Path

#: how much of an existing target is read to recognise an earlier output
HEAD_BYTES = 4096


def refusal(out: Path, marker: str, inputs: tuple[Path, ...], force: bool) -> str | None:
    """Why ``out`` may not be written (a whole message), or None."""
    folder = out.parent if str(out.parent) else Path(".")
    if not folder.is_dir():
        what = "does not exist" if not folder.exists() else "is not a folder"
        return f"{out}: error: the folder '{folder}' {what}; create it first or choose another -o"
    try:
        st = os.lstat(out)
    except FileNotFoundError:
        return None
    except OSError as exc:
        return f"{out}: error: cannot be examined ({exc.strerror or exc})"
    kind = _kind(st.st_mode)
    if kind:
        return f"{out}: error: is {kind}; the report is written only to a regular file; choose another -o"
    for given in inputs:
        try:
            if given is not None and os.path.samefile(given, out):
                return f"{out}: error: is an input of this run ({given}); it is never overwritten, even with --force"
        except OSError:
            continue
    if force:
        return None
    if not _starts_with(out, marker):
        return f"{out}: error: exists and is not a benchcheck report; choose another -o or pass --force"
    return None


def _kind(mode: int) -> str | None:
    if stat.S_ISLNK(mode):
        return "a symbolic link"
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a FIFO (named pipe)"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    if not stat.S_ISREG(mode):
        return "not a regular file"
    return None


def _starts_with(path: Path, marker: str) -> bool:
    """Whether the file's first bytes are ``marker``: at most HEAD_BYTES read, never
    following a link or blocking on a FIFO swapped in meanwhile."""
    flags = os.O_RDONLY | getattr(os, "O_NOFOLLOW", 0) | getattr(os, "O_NONBLOCK", 0)
    try:
        fd = os.open(path, flags)
    except OSError:
        return False
    try:
        if not stat.S_ISREG(os.fstat(fd).st_mode):
            return False
        head = os.read(fd, min(HEAD_BYTES, max(len(marker.encode("utf-8")), 1)))
    except OSError:
        return False
    finally:
        os.close(fd)
    return head.decode("utf-8", errors="replace") == marker


def write_replacing(out: Path, text: str) -> None:
    """Write ``text`` to a fresh file beside ``out`` and rename it over ``out``; the
    temporary file is removed on any failure.  Raises OSError."""
    folder = out.parent if str(out.parent) else Path(".")
    fd, tmp = tempfile.mkstemp(prefix=f".{out.name}.", suffix=".part", dir=folder)
    try:
        with os.fdopen(fd, "w", encoding="utf-8") as fh:
            fh.write(text)
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)   # mkstemp makes it private; a report is an ordinary file
        os.replace(tmp, out)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
