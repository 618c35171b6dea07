"""benchcheck: review an optical bench plan (a TOML layout) before it is built.

The data flow is one way: load -> place -> trace -> unfold -> solve -> (rules) -> report.
"""

__version__ = "0.1.0"

from .api import beam_table, load, solve, solve_file, solve_text  # noqa: E402
from .model import LayoutError  # noqa: E402

__all__ = ["__version__", "beam_table", "load", "solve", "solve_file", "solve_text", "LayoutError"]
