"""benchcheck: review an optical bench plan (a TOML layout) before it is built.

The data flow is one way: load -> place -> trace -> unfold -> solve -> (rules) -> report.
"""

__version__ = "0.1.0"

from .api import beam_table, load, solve, solve_file, solve_text  # noqa: E402
from .findings import Finding, Option, Rule  # noqa: E402
from .hookspecs import hookimpl  # noqa: E402
from .model import LayoutError  # noqa: E402

# hookimpl, Rule, Option and Finding are what a rule plugin imports (docs/plugins.md)
__all__ = ["__version__", "beam_table", "load", "solve", "solve_file", "solve_text", "LayoutError",
           "hookimpl", "Rule", "Option", "Finding"]
