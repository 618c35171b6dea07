"""Repository configuration: ``benchcheck.toml``, or ``[tool.benchcheck]`` in
``pyproject.toml``, found by walking up from the layout.

Limits and rule options live here, never in a layout: a layout can carry a waiver, which
is reported, but cannot loosen a limit.

```toml
fail_on = "error"                 # error | warning | note
plugins = ["mylab_rules"]         # extra plugin modules to import

[limits]
intracavity_power_w = 0.5
stray_power_w = 0.001

[rules.coating-damage]
enabled = true
severity = "error"
safety_factor = 2.0
```
"""

from __future__ import annotations

import difflib
import sys
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .findings import SEVERITIES
from .model import LayoutError, Loc
from .tomlpos import key_positions

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

CONFIG_NAME = "benchcheck.toml"

#: Safety limits, their defaults and meaning.  Advisory: the laser safety officer sets them.
LIMITS = {
    "intracavity_power_w": (0.5, "W", "one-way circulating power above which an open bench is flagged "
                                      "(0.5 W is the Class 3B limit for CW, from memory)"),
    "stray_power_w": (0.001, "W", "leak, secondary and unterminated beams above this power must end on a dump, "
                                  "a detector or inside an enclosure (1 mW: the visible Class 2 limit, from memory)"),
}
#: ``benchcheck diff`` shows a change of a number only when it exceeds both the relative
#: threshold (a fraction of the larger of the old and new value) and the absolute one of
#: its unit.  Defaults and meaning; set in [diff] and [diff.absolute].
DIFF_RELATIVE = (0.01, "fraction of the larger of the old and new value")
DIFF_ABSOLUTE = {
    "fraction": (1e-4, "half-trace m, margin 1-|m|, mode match, load over LIDT"),
    "um": (0.1, "mode and beam radii, waist radii"),
    "mm": (0.01, "positions of optics, waists and beam ends; round-trip length"),
    "deg": (0.01, "folds, facing of optics, Gouy phase"),
    "hz": (0.0, "free spectral range"),
    "w": (0.0, "powers"),
    "w_cm2": (0.0, "peak intensities"),
    "w_cm": (0.0, "linear power densities"),
    "j_cm2": (0.0, "peak fluences"),
}
TOP_KEYS = ("fail_on", "plugins", "limits", "rules", "diff")
RULE_KEYS = ("enabled", "severity")


@dataclass
class Config:
    path: str | None = None
    fail_on: str = "error"
    plugins: tuple[str, ...] = ()
    limits: dict[str, float] = field(default_factory=lambda: {k: v[0] for k, v in LIMITS.items()})
    #: rule id -> {"enabled": bool, "severity": str | None, "options": {...}, "loc": Loc}
    rules: dict[str, dict] = field(default_factory=dict)
    #: thresholds of ``benchcheck diff``: {"relative": float, "absolute": {unit: float}}
    diff: dict = field(default_factory=lambda: {"relative": DIFF_RELATIVE[0],
                                                "absolute": {k: v[0] for k, v in DIFF_ABSOLUTE.items()}})

    def enabled(self, rule_id: str) -> bool:
        return self.rules.get(rule_id, {}).get("enabled", True)

    def severity(self, rule_id: str) -> str | None:
        return self.rules.get(rule_id, {}).get("severity")

    def options(self, rule_id: str) -> dict[str, Any]:
        return dict(self.rules.get(rule_id, {}).get("options", {}))


def find_config(start: Path) -> Path | None:
    """The nearest benchcheck.toml, or pyproject.toml with [tool.benchcheck], at or above ``start``."""
    here = start.resolve()
    if here.is_file():
        here = here.parent
    for folder in (here, *here.parents):
        candidate = folder / CONFIG_NAME
        if candidate.is_file():
            return candidate
        pyproject = folder / "pyproject.toml"
        if pyproject.is_file():
            try:
                data = tomllib.loads(pyproject.read_text(encoding="utf-8"))
            except (OSError, UnicodeDecodeError, tomllib.TOMLDecodeError):
                continue
            if isinstance(data.get("tool"), dict) and "benchcheck" in data["tool"]:
                return pyproject
    return None


def load_config(path: Path | None) -> Config:
    if path is None:
        return Config()
    name = str(path)
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise LayoutError(f"cannot read the configuration: {exc}", file=name) from None
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        from .loader import _syntax_error
        raise _syntax_error(exc, text, name) from None
    positions = key_positions(text)
    prefix: tuple = ()
    if path.name == "pyproject.toml":
        doc = doc.get("tool", {}).get("benchcheck", {})
        prefix = ("tool", "benchcheck")
    return _parse(doc, name, positions, prefix)


def _parse(doc: dict, file: str, positions: dict, prefix: tuple) -> Config:
    def loc(*path) -> Loc:
        p = prefix + path
        while p:
            if p in positions:
                return Loc(file, *positions[p])
            p = p[:-1]
        return Loc(file, 1, 1)

    def fail(path: tuple, msg: str) -> LayoutError:
        return LayoutError(msg, loc(*path))

    def unknown(key: str, allowed, where: str, path: tuple) -> LayoutError:
        close = difflib.get_close_matches(key, list(allowed), n=1, cutoff=0.6)
        hint = f"; did you mean '{close[0]}'?" if close else f"; allowed: {', '.join(allowed)}"
        return fail(path, f"unknown key '{key}' in {where}{hint}")

    if not isinstance(doc, dict):
        raise fail((), "the benchcheck configuration must be a table")
    cfg = Config(path=file)
    for key in doc:
        if key not in TOP_KEYS:
            raise unknown(key, TOP_KEYS, "the benchcheck configuration", (key,))
    if "fail_on" in doc:
        if doc["fail_on"] not in SEVERITIES:
            raise fail(("fail_on",), f"fail_on must be one of {', '.join(SEVERITIES)}")
        cfg.fail_on = doc["fail_on"]
    if "plugins" in doc:
        plugins = doc["plugins"]
        if not isinstance(plugins, list) or not all(isinstance(p, str) and p for p in plugins):
            raise fail(("plugins",), "plugins must be a list of importable module names")
        cfg.plugins = tuple(plugins)
    limits = doc.get("limits", {})
    if not isinstance(limits, dict):
        raise fail(("limits",), "[limits] must be a table")
    for key, value in limits.items():
        if key not in LIMITS:
            raise unknown(key, LIMITS, "[limits]", ("limits", key))
        if isinstance(value, bool) or not isinstance(value, (int, float)) or not value >= 0 or value == float("inf"):
            raise fail(("limits", key), f"limits.{key} must be a non-negative number in {LIMITS[key][1]}")
        cfg.limits[key] = float(value)
    _parse_diff(doc.get("diff", {}), cfg, fail, unknown)
    rules = doc.get("rules", {})
    if not isinstance(rules, dict):
        raise fail(("rules",), "[rules] must hold one table per rule id, e.g. [rules.coating-damage]")
    for rule_id, table in rules.items():
        if not isinstance(table, dict):
            raise fail(("rules", rule_id), f"[rules.{rule_id}] must be a table")
        entry: dict[str, Any] = {"options": {}, "loc": loc("rules", rule_id), "option_locs": {}}
        for key, value in table.items():
            if key == "enabled":
                if not isinstance(value, bool):
                    raise fail(("rules", rule_id, key), f"rules.{rule_id}.enabled must be true or false")
                entry["enabled"] = value
            elif key == "severity":
                if value not in SEVERITIES:
                    raise fail(("rules", rule_id, key), f"rules.{rule_id}.severity must be one of {', '.join(SEVERITIES)}")
                entry["severity"] = value
            else:
                entry["options"][key] = value
                entry["option_locs"][key] = loc("rules", rule_id, key)
        cfg.rules[rule_id] = entry
    return cfg


def _parse_diff(table, cfg: Config, fail, unknown) -> None:
    def number(value, path: tuple, what: str) -> float:
        if isinstance(value, bool) or not isinstance(value, (int, float)) or not value >= 0 or value == float("inf"):
            raise fail(path, f"{what} must be a non-negative number")
        return float(value)

    if not isinstance(table, dict):
        raise fail(("diff",), "[diff] must be a table")
    for key, value in table.items():
        if key == "relative":
            cfg.diff["relative"] = number(value, ("diff", key), f"diff.relative ({DIFF_RELATIVE[1]})")
        elif key == "absolute":
            if not isinstance(value, dict):
                raise fail(("diff", key), "[diff.absolute] must be a table of thresholds by unit")
            for unit, v in value.items():
                if unit not in DIFF_ABSOLUTE:
                    raise unknown(unit, DIFF_ABSOLUTE, "[diff.absolute]", ("diff", key, unit))
                cfg.diff["absolute"][unit] = number(v, ("diff", key, unit),
                                                    f"diff.absolute.{unit} ({DIFF_ABSOLUTE[unit][1]})")
        else:
            raise unknown(key, ("relative", "absolute"), "[diff]", ("diff", key))
