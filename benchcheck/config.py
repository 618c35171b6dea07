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
from . import tolspec
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
TOP_KEYS = ("fail_on", "plugins", "limits", "rules", "tolerances")
RULE_KEYS = ("enabled", "severity")


@dataclass
class Config:
    path: str | None = None
    fail_on: str = "error"
    plugins: tuple[str, ...] = ()
    limits: dict[str, float] = field(default_factory=lambda: {k: v[0] for k, v in LIMITS.items()})
    #: rule id -> {"enabled": bool, "severity": str | None, "options": {...}, "loc": Loc}
    rules: dict[str, dict] = field(default_factory=dict)
    #: the lab's build tolerances ([tolerances]); source "none" when the section is absent
    tolerances: tolspec.Tolerances = field(default_factory=tolspec.Tolerances)

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
    if "tolerances" in doc:
        cfg.tolerances = _tolerances(doc["tolerances"], fail, unknown)
    return cfg


def _tolerances(table, fail, unknown) -> tolspec.Tolerances:
    """[tolerances]: the lab's build capability; keys not given take benchcheck's defaults."""
    where = ("tolerances",)
    if not isinstance(table, dict):
        raise fail(where, "[tolerances] must be a table, e.g. position_mm = 0.2")
    values = {k.name: k.default for k in tolspec.KEYS.values()}
    distribution = tolspec.UNIFORM
    margin = tolspec.MARGIN_KEY.default
    for key, value in table.items():
        path = where + (key,)
        if key == tolspec.DISTRIBUTION_KEY.name:
            if value not in tolspec.DISTRIBUTIONS:
                raise fail(path, "tolerances.distribution must be \"uniform\" (on [-t, t]) or \"normal\" "
                                 f"(sigma = t/2), found {value!r}")
            distribution = value
        elif key == tolspec.MARGIN_KEY.name:
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not 0.0 < value <= 1.0:
                raise fail(path, f"tolerances.{key} must be a number in (0, 1] (|half-trace|), found {value!r}")
            margin = float(value)
        elif key in tolspec.KEYS:
            try:
                values[key] = tolspec.check_value(tolspec.KEYS[key], value, f"tolerances.{key}")
            except ValueError as exc:
                raise fail(path, str(exc)) from None
        else:
            raise unknown(key, tolspec.SECTION_KEYS, "[tolerances]", path)
    return tolspec.Tolerances(values, distribution, margin, tolspec.FROM_CONFIG)

