"""What a rule is, what it receives, and what it reports.

This is the contract between the engine and every rule, built-in or a lab's plugin (see
the plugin author guide in ``docs/plugins.md``).  A rule reads the solved bench and yields
``Finding`` objects; it never writes the bench and never parses files.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace
from functools import cached_property
from typing import Any, Callable, Iterable, Mapping

from .model import Layout, Loc
from .solve import Solution

ERROR = "error"
WARNING = "warning"
NOTE = "note"
SEVERITIES = (ERROR, WARNING, NOTE)
#: higher is worse; used for --fail-on
SEVERITY_RANK = {NOTE: 1, WARNING: 2, ERROR: 3}

SAFETY_CAUTION = (
    "Advisory only: the laser safety officer, IEC 60825-1 / ANSI Z136.1 and local regulations decide "
    "what is safe."
)


@dataclass(frozen=True)
class Option:
    """A rule option: its default, unit and what it means.  Values come from the
    repository configuration ([rules.<rule-id>] in benchcheck.toml), never from a layout."""

    name: str
    default: Any
    help: str
    unit: str = ""


@dataclass(frozen=True)
class Rule:
    """A check.  ``check(bench, options)`` yields findings; ``options`` holds every
    declared option, defaults filled in from the configuration."""

    id: str
    summary: str
    explanation: str
    check: Callable[["Bench", Mapping[str, Any]], Iterable["Finding"]]
    severity: str = WARNING
    options: tuple[Option, ...] = ()
    #: safety rules carry the caution that they are advisory
    safety: bool = False
    #: off until a repository's configuration turns it on (a ``[rules.<id>]`` table, or the
    #: plugin's module under ``plugins``): installing a plugin then changes no other
    #: repository's results
    opt_in: bool = False

    def defaults(self) -> dict[str, Any]:
        return {o.name: o.default for o in self.options}


@dataclass(frozen=True)
class Finding:
    """One problem, with the measured value, the limit and their unit where there are some.

    Rules fill ``targets`` (ids; the first that has a location in the layout gives file,
    line and column unless ``loc`` is given), ``message``, and where measured ``value``,
    ``limit``, ``unit``; ``hint`` says how to fix it.  The engine fills ``rule``,
    ``severity`` (unless the rule set one), the location, ``waived`` and ``plugin``.
    """

    message: str
    targets: tuple[str, ...] = ()
    value: float | None = None
    limit: float | None = None
    unit: str | None = None
    hint: str | None = None
    severity: str | None = None
    loc: Loc | None = None
    rule: str = ""
    waived: bool = False
    waiver_reason: str | None = None
    plugin: str | None = None
    #: a point on the table (mm) where the problem is, for drawings
    at: tuple[float, float] | None = None

    def with_(self, **changes) -> "Finding":
        return replace(self, **changes)

    def as_json(self) -> dict:
        loc = self.loc
        out = {
            "rule": self.rule,
            "severity": self.severity,
            "message": self.message,
            "targets": list(self.targets),
            "file": loc.file if loc else None,
            "line": loc.line if loc else None,
            "column": loc.column if loc else None,
            "value": _num(self.value),
            "limit": _num(self.limit),
            "unit": self.unit,
            "hint": self.hint,
            "waived": self.waived,
        }
        if self.waiver_reason:
            out["waiver_reason"] = self.waiver_reason
        if self.plugin:
            out["plugin"] = self.plugin
        if self.at is not None:
            out["at_mm"] = [_num(self.at[0]), _num(self.at[1])]
        return out


def _num(x):
    if x is None:
        return None
    x = float(x)
    return None if math.isnan(x) or math.isinf(x) else float(f"{x:.9g}")


@dataclass
class Bench:
    """What a rule receives: the validated layout and every stage computed from it.

    - ``layout``: the records of the layout file (``benchcheck.model``);
    - ``placement``: positions, orientations and mount footprints (shapely polygons);
    - ``trace``: hits, segments, geometric issues, leak and secondary beams (``strays``);
    - ``solution``: cavity modes, beam sizes and powers (``benchcheck.solve``);
    - ``limits``: the repository's safety limits (``[limits]`` in the configuration);
    - ``exposure``: how exposures are judged (``[exposure]``, a ``hazards.Policy``);
    - ``hazards``: every segment of beam judged against the exposure limits
      (``benchcheck.hazards.Assessment``), computed once on first use.
    - ``tolerances``: the lab's build tolerances (``[tolerances]``; ``benchcheck.tolspec``),
      None where the caller gives none.
    """

    layout: Layout
    solution: Solution
    limits: Mapping[str, Any] = field(default_factory=dict)
    exposure: Any = None

    @cached_property
    def hazards(self):
        from .hazards import assess
        return assess(self.solution, self.exposure)
    tolerances: Any = None

    @property
    def placement(self):
        return self.solution.placement

    @property
    def trace(self):
        return self.solution.trace

    @property
    def file(self) -> str:
        return self.layout.file

    def loc(self, ident: str) -> Loc | None:
        """File, line and column of the table that defines ``ident``."""
        lay = self.layout
        for table in (lay.optics, lay.sources, lay.cavities, lay.beams):
            if ident in table:
                return table[ident].loc
        for z in lay.zones:
            if z.id == ident:
                return z.loc
        return None
