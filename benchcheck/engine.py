"""Run every enabled rule on a solved bench; apply severities, locations and waivers.

A rule that raises is reported by name and the other rules still run; the run then ends
with status 2.  Waivers in the layout turn a finding into a reported, waived one; an
expired or unmatched waiver is itself reported.
"""

from __future__ import annotations

import datetime as _dt
import difflib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .config import Config, find_config, load_config
from .findings import WARNING, Bench, Finding, Rule
from .loader import load_bytes, load_path, load_text
from .model import LayoutError
from .plugins import RuleSet, load_rules
from .solve import solve_layout

#: Engine findings about waivers (not rules of any plugin).
WAIVER_EXPIRED = "waiver-expired"
WAIVER_UNMATCHED = "waiver-unmatched"


@dataclass
class FileResult:
    file: str
    findings: list[Finding] = field(default_factory=list)
    #: unusable input or failing plugins: messages; any of these means exit status 2
    errors: list[str] = field(default_factory=list)
    #: the fail level of the configuration that applies to this file
    fail_on: str = "error"
    #: the solved bench the rules read (None where the layout could not be used)
    bench: Bench | None = None


def validate_options(config: Config, ruleset: RuleSet) -> list[LayoutError]:
    """Configuration names only rules that exist and options they declare, with values of
    the declared type.  Returns the problems (each with its line in the configuration); the
    rules they concern are not run, the others are.  A section for a rule that no plugin
    provided is not a problem of its own while a plugin failed to load (that failure is
    reported instead)."""
    problems: list[LayoutError] = []
    for rule_id, entry in config.rules.items():
        if rule_id not in ruleset.rules:
            if ruleset.errors:
                continue
            close = difflib.get_close_matches(rule_id, list(ruleset.rules), n=1, cutoff=0.6)
            hint = f"; did you mean '{close[0]}'?" if close else ""
            problems.append(LayoutError(f"no rule '{rule_id}' is installed{hint} (see 'benchcheck rules')",
                                        entry["loc"]))
            continue
        rule = ruleset.rules[rule_id][0]
        declared = {o.name: o for o in rule.options}
        for key, value in entry["options"].items():
            where = entry["option_locs"].get(key, entry["loc"])
            if key not in declared:
                close = difflib.get_close_matches(key, list(declared) + ["enabled", "severity"], n=1, cutoff=0.6)
                hint = f"; did you mean '{close[0]}'?" if close else (
                    f"; its options: {', '.join(declared)}" if declared else "; it has no options")
                problems.append(LayoutError(f"rule '{rule_id}' has no option '{key}'{hint}", where))
                config.rules[rule_id]["invalid"] = True
            elif not _same_kind(declared[key].default, value):
                problems.append(LayoutError(f"rules.{rule_id}.{key} must be {_kind(declared[key].default)}, "
                                            f"found {value!r}", where))
                config.rules[rule_id]["invalid"] = True
    return problems


def _same_kind(default: Any, value: Any) -> bool:
    if isinstance(default, bool) or isinstance(value, bool):
        return isinstance(default, bool) and isinstance(value, bool)
    if isinstance(default, (int, float)):
        return isinstance(value, (int, float)) and value == value and abs(value) != float("inf")
    return isinstance(value, type(default))


def _kind(default: Any) -> str:
    if isinstance(default, bool):
        return "true or false"
    if isinstance(default, (int, float)):
        return "a finite number"
    return f"a {type(default).__name__}"


def run_rules(bench: Bench, config: Config, ruleset: RuleSet, today: _dt.date | None = None) -> FileResult:
    out = FileResult(bench.file)
    for rule_id, (rule, plugin) in ruleset.rules.items():
        if not config.enabled(rule_id) or config.rules.get(rule_id, {}).get("invalid"):
            continue
        options = rule.defaults()
        options.update(config.options(rule_id))
        try:
            produced = list(rule.check(bench, options) or ())
        except Exception as exc:  # noqa: BLE001 - a plugin's failure is reported by name
            out.errors.append(f"{bench.file}: rule '{rule_id}' from plugin {plugin} raised "
                              f"{type(exc).__name__}: {exc}")
            continue
        for f in produced:
            if not isinstance(f, Finding):
                out.errors.append(f"{bench.file}: rule '{rule_id}' from plugin {plugin} yielded "
                                  f"{type(f).__name__}, not a benchcheck.Finding")
                break
            out.findings.append(_complete(f, rule, plugin, bench, config))
    out.findings = apply_waivers(out.findings, bench, today or _dt.date.today())
    out.findings.sort(key=lambda f: (f.loc.line if f.loc else 0, f.loc.column if f.loc else 0, f.rule))
    return out


def _complete(f: Finding, rule: Rule, plugin: str, bench: Bench, config: Config) -> Finding:
    loc = f.loc
    if loc is None:
        for t in f.targets:
            loc = bench.loc(t)
            if loc:
                break
    if loc is None:
        loc = bench.layout.bench.loc
    severity = config.severity(rule.id) or f.severity or rule.severity
    return f.with_(rule=rule.id, severity=severity, loc=loc, plugin=plugin)


def apply_waivers(findings: list[Finding], bench: Bench, today: _dt.date) -> list[Finding]:
    out = []
    used = set()
    waivers = list(bench.layout.waivers)
    for f in findings:
        match = None
        for i, w in enumerate(waivers):
            if w.rule == f.rule and w.target in f.targets:
                match = i
                break
        if match is None:
            out.append(f)
            continue
        w = waivers[match]
        used.add(match)
        if w.until is not None and w.until < today:
            out.append(f)
            continue
        out.append(f.with_(waived=True, waiver_reason=f"{w.reason} (approved by {w.approved_by}"
                                                      + (f", until {w.until.isoformat()})" if w.until else ")")))
    for i, w in enumerate(waivers):
        if w.until is not None and w.until < today:
            out.append(Finding(
                f"waiver for {w.rule} on \"{w.target}\" expired on {w.until.isoformat()}; it no longer applies",
                (w.target,), severity=WARNING, loc=w.loc, rule=WAIVER_EXPIRED,
                hint="review the exception again and set a new 'until', or fix the layout and remove the waiver"))
        elif i not in used:
            out.append(Finding(
                f"waiver for {w.rule} on \"{w.target}\" matches no finding",
                (w.target,), severity=WARNING, loc=w.loc, rule=WAIVER_UNMATCHED,
                hint="remove it, or correct its rule id or target"))
    return out


def check_file(path: Path, config: Config | None = None, ruleset: RuleSet | None = None,
               today: _dt.date | None = None) -> FileResult:
    """Load, solve and check one layout; unusable input is an error, never an exception."""
    return _check(str(path), lambda: load_path(path), Path(path), config, ruleset, today)


def check_text(data: str | bytes, file: str, config: Config | None = None, ruleset: RuleSet | None = None,
               today: _dt.date | None = None) -> FileResult:
    """The same for a layout that is not a file of the working tree (a git revision's
    text): ``file`` names it in messages; the configuration is the caller's (default: the
    built-in one), since a text has no folder to find one from."""
    load = (lambda: load_bytes(data, file)) if isinstance(data, bytes) else (lambda: load_text(data, file))
    return _check(file, load, None, config or Config(), ruleset, today)


def _check(name: str, load, path: Path | None, config: Config | None, ruleset: RuleSet | None,
           today: _dt.date | None) -> FileResult:
    try:
        if config is None:
            config = load_config(find_config(path))
        if ruleset is None:
            ruleset = load_rules(config.plugins, search_path=config_folder(config))
        problems = [str(p) for p in validate_options(config, ruleset)]
        layout = load()
        solution = solve_layout(layout)
    except LayoutError as exc:
        return FileResult(name, errors=[str(exc)])
    except RecursionError:
        return FileResult(name, errors=[f"{name}: error: the layout is nested too deeply to read"])
    except Exception as exc:  # noqa: BLE001
        return FileResult(name, errors=[f"{name}: internal error while solving ({type(exc).__name__}: {exc}); "
                                        "please report it with this layout"])
    bench = Bench(layout, solution, dict(config.limits))
    result = run_rules(bench, config, ruleset, today)
    # plugin and configuration problems are not this layout's: said once, whatever the file
    result.errors = [f"error: {e}" for e in ruleset.errors] + problems + result.errors
    result.fail_on = config.fail_on
    result.bench = bench
    return result


def config_folder(config: Config) -> str | None:
    """Where configured plugin modules may also be found: beside the configuration file."""
    return str(Path(config.path).resolve().parent) if config.path else None
