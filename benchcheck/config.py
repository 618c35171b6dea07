"""Repository configuration: ``benchcheck.toml``, or ``[tool.benchcheck]`` in
``pyproject.toml``, found by walking up from the layout to the root of its repository.

The configuration names plugin modules to import, so where it may come from is a matter
of trust: running ``check`` on a repository runs the plugins that repository lists, and no
others.  The search never leaves the layout's repository (the nearest folder holding a
``.git`` folder or file); outside any repository only the layout's own folder is searched.
A configuration anywhere else is used only when named with ``--config``.

Limits and rule options live here, never in a layout: a layout can carry a waiver, which
is reported, but cannot loosen a limit.

```toml
fail_on = "error"                 # error | warning | note
plugins = ["mylab_rules"]         # extra plugin modules to import

[limits]
intracavity_power_w = 0.5
intracavity_error_power_w = 10.0
stray_power_w = 0.001
open_beam_power_w = 0.5
open_beam_energy_j = 0.03

[exposure]                        # how exposures are judged (advisory)
visible_s = 0.25
invisible_s = 10.0
[exposure.mpe]                    # a lab's own MPE figures, by wavelength in nm
1550 = { w_cm2 = 0.1 }

[rules.coating-damage]
enabled = true
severity = "error"
safety_factor = 2.0
```
"""

from __future__ import annotations

import re
import sys
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .findings import SEVERITIES
from .hazards import MpeOverride, Policy
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
    "intracavity_error_power_w": (10.0, "W", "one-way circulating power above which an open-bench cavity is an "
                                             "error, not a warning (a policy choice of the lab)"),
    "stray_power_w": (0.001, "W", "leak, secondary and unterminated beams above this power must end on a dump, "
                                  "a detector or inside an enclosure (1 mW: the visible Class 2 limit, from memory)"),
    "open_beam_power_w": (0.5, "W", "average power above which a beam outside every enclosure is an error (0.5 W: "
                                    "the Class 3B limit for CW, IEC 60825-1:2014, from memory)"),
    "open_beam_energy_j": (0.03, "J", "pulse energy above which a pulsed beam outside every enclosure is an error "
                                      "(0.03 J: the lowest Class 3B single-pulse limit of IEC 60825-1:2014 between "
                                      "400 and 1400 nm, from memory; the lowest, so that it errs on the safe side)"),
}
#: [exposure]: how exposures are judged; durations in s
EXPOSURE = {
    "visible_s": (0.25, "s", "exposure duration for 400-700 nm (the aversion response, common practice)"),
    "invisible_s": (10.0, "s", "exposure duration outside 400-700 nm (common practice for unintended viewing)"),
}
MPE_KEYS = {"w_cm2": "W/cm^2", "j_cm2": "J/cm^2", "aperture_mm": "mm"}
TOP_KEYS = ("fail_on", "plugins", "limits", "exposure", "rules", "rule_timeout_s", "tolerances", "diff")
#: a configuration is a few KiB; anything far larger is not one (and is not read into memory)
MAX_CONFIG_BYTES = 1024 * 1024
#: how long one plugin step (an import, the hook, one rule on one layout) may take, s
RULE_TIMEOUT_S = 60.0
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
RULE_KEYS = ("enabled", "severity")


@dataclass
class Config:
    path: str | None = None
    fail_on: str = "error"
    plugins: tuple[str, ...] = ()
    limits: dict[str, float] = field(default_factory=lambda: {k: v[0] for k, v in LIMITS.items()})
    #: how exposures are judged (hazards.Policy)
    exposure: Policy = field(default_factory=Policy)
    #: rule id -> {"enabled": bool, "severity": str | None, "options": {...}, "loc": Loc}
    rules: dict[str, dict] = field(default_factory=dict)
    #: a plugin's import, hook or one rule on one layout running longer is stopped, s
    rule_timeout_s: float = RULE_TIMEOUT_S
    #: where ``plugins`` is written, for messages about the modules it lists
    plugins_loc: Loc | None = None
    #: the lab's build tolerances ([tolerances]); source "none" when the section is absent
    tolerances: tolspec.Tolerances = field(default_factory=tolspec.Tolerances)
    #: thresholds of ``benchcheck diff``: {"relative": float, "absolute": {unit: float}}
    diff: dict = field(default_factory=lambda: {"relative": DIFF_RELATIVE[0],
                                                "absolute": {k: v[0] for k, v in DIFF_ABSOLUTE.items()}})

    def enabled(self, rule_id: str) -> bool:
        return self.rules.get(rule_id, {}).get("enabled", True)

    def severity(self, rule_id: str) -> str | None:
        return self.rules.get(rule_id, {}).get("severity")

    def options(self, rule_id: str) -> dict[str, Any]:
        return dict(self.rules.get(rule_id, {}).get("options", {}))


def repository_root(start: Path) -> Path | None:
    """The nearest folder at or above ``start`` that holds ``.git`` (a folder, or the file
    of a worktree or submodule); None outside any repository."""
    here = start.resolve()
    for folder in (here, *here.parents):
        if (folder / ".git").exists():
            return folder
    return None


def find_config(start: Path) -> Path | None:
    """The nearest benchcheck.toml, or pyproject.toml with [tool.benchcheck], from
    ``start`` up to its repository's root (only ``start``'s own folder outside a
    repository).  A pyproject.toml that mentions benchcheck but cannot be read is an
    error with its location; one that does not mention it is not read further."""
    here = start.resolve()
    if here.is_file() or not here.exists():
        here = here.parent
    root = repository_root(here)
    folders = [here]
    if root is not None:
        folders += [f for f in here.parents if f == root or root in f.parents]
    for folder in folders:
        candidate = folder / CONFIG_NAME
        if candidate.is_file():
            return candidate
        pyproject = folder / "pyproject.toml"
        if pyproject.is_file():
            try:
                data = pyproject.read_bytes()
            except OSError:
                continue
            if b"benchcheck" not in data:
                continue
            doc = _toml(data, str(pyproject))
            if isinstance(doc.get("tool"), dict) and "benchcheck" in doc["tool"]:
                return pyproject
    return None


def _toml(data: bytes, name: str) -> dict:
    """Parse configuration bytes as the loader reads a layout (UTF-8, an optional BOM);
    every failure is a ``LayoutError`` with a location, never a traceback."""
    from .loader import MAX_NESTING, _byte_loc, _syntax_error, _too_deep

    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise LayoutError(f"not UTF-8 text (byte 0x{data[exc.start]:02x}); a configuration is a UTF-8 TOML "
                          "text file", _byte_loc(data, exc.start, name)) from None
    if text.startswith("\ufeff"):
        text = text[1:]
    deep = _too_deep(text)
    if deep is not None:
        raise LayoutError(f"arrays or inline tables nested more than {MAX_NESTING} deep; a configuration needs "
                          "two levels at most", Loc(name, *deep))
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise _syntax_error(exc, text, name) from None
    except RecursionError:
        raise LayoutError("the configuration is nested too deeply to read", Loc(name, 1, 1)) from None
    except ValueError as exc:   # e.g. an integer of more digits than Python converts
        digits = re.search(r"\d[\d_]{999,}", text)
        at = _text_loc(text, digits.start(), name) if digits else Loc(name, 1, 1)
        what = "a number far too long to read" if digits else f"a value that cannot be read ({exc})"
        raise LayoutError(f"{what}; a configuration holds short numbers", at) from None


def _text_loc(text: str, offset: int, file: str) -> Loc:
    line = text.count("\n", 0, offset) + 1
    return Loc(file, line, offset - (text.rfind("\n", 0, offset) + 1) + 1)


def load_config(path: Path | None) -> Config:
    if path is None:
        return Config()
    name = str(path)
    try:
        if not path.is_file():
            raise LayoutError("is not a regular file; a configuration is a TOML text file", file=name)
        if path.stat().st_size > MAX_CONFIG_BYTES:
            raise LayoutError(f"is larger than {MAX_CONFIG_BYTES // 1024} KiB; a configuration is a few KiB of "
                              "TOML text", file=name)
        data = path.read_bytes()
    except OSError as exc:
        raise LayoutError(f"cannot read the configuration: {exc.strerror or exc}", file=name) from None
    doc = _toml(data, name)
    text = data.decode("utf-8").lstrip("\ufeff")
    try:
        positions = key_positions(text)
    except Exception:  # noqa: BLE001 - the scanner must never turn a good file into a crash
        positions = {}
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
        from .loader import close_matches

        close = close_matches(key, list(allowed), n=1, cutoff=0.6)
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
        cfg.plugins_loc = loc("plugins")
    if "rule_timeout_s" in doc:
        t = doc["rule_timeout_s"]
        if isinstance(t, bool) or not isinstance(t, (int, float)) or not 0 < t < float("inf"):
            raise fail(("rule_timeout_s",), "rule_timeout_s must be a number of seconds greater than 0")
        cfg.rule_timeout_s = float(t)
    limits = doc.get("limits", {})
    if not isinstance(limits, dict):
        raise fail(("limits",), "[limits] must be a table")
    for key, value in limits.items():
        if key not in LIMITS:
            raise unknown(key, LIMITS, "[limits]", ("limits", key))
        if isinstance(value, bool) or not isinstance(value, (int, float)) or not value >= 0 or value == float("inf"):
            raise fail(("limits", key), f"limits.{key} must be a non-negative number in {LIMITS[key][1]}")
        cfg.limits[key] = float(value)
    cfg.exposure = _exposure(doc.get("exposure", {}), fail, unknown)
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
    if "tolerances" in doc:
        cfg.tolerances = _tolerances(doc["tolerances"], fail, unknown)
    return cfg


def _positive(value) -> bool:
    return not isinstance(value, bool) and isinstance(value, (int, float)) and 0 < value < float("inf")


def _exposure(table, fail, unknown) -> Policy:
    """[exposure]: durations, and [exposure.mpe] with a lab's own limits by wavelength."""
    if not isinstance(table, dict):
        raise fail(("exposure",), "[exposure] must be a table")
    values = {k: v[0] for k, v in EXPOSURE.items()}
    overrides = []
    for key, value in table.items():
        if key == "mpe":
            if not isinstance(value, dict):
                raise fail(("exposure", "mpe"), "[exposure.mpe] must be a table keyed by wavelength in nm, "
                                                "e.g. 1550 = { w_cm2 = 0.1 }")
            for nm, entry in value.items():
                path = ("exposure", "mpe", nm)
                try:
                    wavelength = float(nm)
                except ValueError:
                    wavelength = float("nan")
                if not 0 < wavelength < 1e7:
                    raise fail(path, f"exposure.mpe key '{nm}' must be a wavelength in nm, e.g. 1550")
                if not isinstance(entry, dict) or not entry:
                    raise fail(path, f"exposure.mpe.{nm} must be a table such as {{ w_cm2 = 0.1 }} "
                                     "(CW) or { j_cm2 = 1e-6 } (per pulse)")
                for k, v in entry.items():
                    if k not in MPE_KEYS:
                        raise unknown(k, MPE_KEYS, f"exposure.mpe.{nm}", path + (k,))
                    if not _positive(v):
                        raise fail(path + (k,), f"exposure.mpe.{nm}.{k} must be a positive number in {MPE_KEYS[k]}")
                if "w_cm2" not in entry and "j_cm2" not in entry:
                    raise fail(path, f"exposure.mpe.{nm} needs w_cm2 (CW) or j_cm2 (per pulse)")
                overrides.append(MpeOverride(wavelength, *(float(entry[k]) if k in entry else None
                                                           for k in ("w_cm2", "j_cm2", "aperture_mm"))))
        elif key in EXPOSURE:
            if not _positive(value):
                raise fail(("exposure", key), f"exposure.{key} must be a positive number of seconds")
            values[key] = float(value)
        else:
            raise unknown(key, tuple(EXPOSURE) + ("mpe",), "[exposure]", ("exposure", key))
    return Policy(values["visible_s"], values["invisible_s"], tuple(overrides))
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
