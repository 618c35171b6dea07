"""Range checks for option values.

benchcheck already checks that a configured value has the kind of its default (a number
for a number, a list for a list); whether it makes sense for the rule is the rule's own
business.  A value that does not is a configuration error, so it is raised: benchcheck
reports it with the rule's and the plugin's name and the run ends with status 2, instead
of a check that silently measures against nonsense.
"""

from __future__ import annotations

import math


def number(options, rule_id: str, name: str, *, positive: bool = False) -> float:
    value = options[name]
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise ValueError(f"rules.{rule_id}.{name} must be a finite number of mm, found {value!r}")
    if positive and value <= 0:
        raise ValueError(f"rules.{rule_id}.{name} must be greater than 0 mm, found {value!r}")
    if not positive and value < 0:
        raise ValueError(f"rules.{rule_id}.{name} must not be negative, found {value!r}")
    return float(value)


def point(options, rule_id: str, name: str) -> tuple[float, float]:
    value = options[name]
    if (not isinstance(value, (list, tuple)) or len(value) != 2
            or not all(isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v) for v in value)):
        raise ValueError(f"rules.{rule_id}.{name} must be [x, y] in mm, found {value!r}")
    return float(value[0]), float(value[1])
