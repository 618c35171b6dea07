"""The Python entry points: load a layout from a path or a string and solve it.

>>> from benchcheck import solve_text
>>> sol = solve_text(open("layouts/two-mirror.toml").read())      # doctest: +SKIP
>>> sol.cavities["main"].modes["t"].m                              # doctest: +SKIP
"""

from __future__ import annotations

from pathlib import Path

from .loader import load_path, load_text
from .model import Layout
from .solve import Solution, solve_layout


def load(path: str | Path) -> Layout:
    return load_path(path)


def solve(layout: Layout) -> Solution:
    return solve_layout(layout)


def solve_file(path: str | Path) -> Solution:
    return solve_layout(load_path(path))


def solve_text(text: str, file: str = "<string>") -> Solution:
    return solve_layout(load_text(text, file))


def beam_table(solution: Solution) -> dict:
    """The same dictionary that ``benchcheck beams --format json`` prints."""
    from .beamtable import solution_json   # only the beam table needs it: a quicker start for check

    return solution_json(solution)
