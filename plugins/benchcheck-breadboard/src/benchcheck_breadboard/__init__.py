"""benchcheck-breadboard: two rules a lab writes for itself once it bolts optics down.

- ``breadboard-grid``: every mount stands on the breadboard's tapped-hole grid (within a
  clamp's reach), so the plan can be built where it is drawn;
- ``table-edge-clearance``: every mount keeps a margin from the table edge.

Registered by the entry point ``breadboard`` in the group ``benchcheck`` (see this
distribution's ``pyproject.toml``), or, without installing, by naming this module in the
``plugins`` list of ``benchcheck.toml``.  It is the worked example of ``docs/plugins.md``.
"""

from __future__ import annotations

from benchcheck import hookimpl

from .edge import EDGE_RULE
from .grid import GRID_RULE

__version__ = "0.1.0"

RULES = (GRID_RULE, EDGE_RULE)


@hookimpl
def benchcheck_rules():
    """The hook benchcheck calls once per run to learn this plugin's rules."""
    return list(RULES)
