"""Run every enabled rule on a solved bench; apply severities, locations and waivers.

A rule that raises is reported by name and the other rules still run; the run then ends
with status 2.  Waivers in the layout turn a finding into a reported, waived one; an
expired or unmatched waiver is itself reported.
"""

from __future__ import annotations

import copy
import datetime as _dt
import math
import numbers
import pickle
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable

from .config import Config, find_config, load_config
from .findings import SEVERITIES, WARNING, Bench, Finding, Rule
from .loader import close_matches, load_bytes, load_path, load_text
from .model import LayoutError, Loc
from .plugins import BUILTIN, RuleSet, describe, load_rules, raised
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
    #: the layout itself could not be read or solved (its errors say why)
    unreadable: bool = False
    #: False for a path named on the command line that does not exist: not counted as a layout
    layout: bool = True


def validate_options(config: Config, ruleset: RuleSet) -> list[LayoutError]:
    """Configuration names only rules that exist and options they declare, with values of
    the declared type.  Returns the problems (each with its line in the configuration); the
    rules they concern are not run, the others are.  A section for a rule that no plugin
    provided is not a problem of its own while a plugin failed to load or was left out (that
    failure is reported instead)."""
    problems: list[LayoutError] = []
    for rule_id, entry in config.rules.items():
        if rule_id not in ruleset.rules:
            if ruleset.errors or ruleset.incomplete:
                continue
            close = close_matches(rule_id, list(ruleset.rules), n=1, cutoff=0.6)
            hint = f"; did you mean '{close[0]}'?" if close else ""
            problems.append(LayoutError(f"no rule '{rule_id}' is installed{hint} (see 'benchcheck rules')",
                                        entry["loc"]))
            continue
        rule = ruleset.rules[rule_id][0]
        declared = {o.name: o for o in rule.options}
        for key, value in entry["options"].items():
            where = entry["option_locs"].get(key, entry["loc"])
            if key not in declared:
                close = close_matches(key, list(declared) + ["enabled", "severity"], n=1, cutoff=0.6)
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


def run_rules(bench: Bench, config: Config, ruleset: RuleSet, today: _dt.date | None = None, *,
              skip: frozenset[str] = frozenset(), progress: Callable[[str], None] | None = None) -> FileResult:
    """Every enabled rule on ``bench``.  The built-in rules read the bench itself, first;
    each plugin gets its own copy, so nothing a plugin changes reaches a built-in rule,
    another plugin or the waivers.  Whatever plugin code raises (``SystemExit`` and
    ``KeyboardInterrupt`` too) and every malformed finding is an error naming the rule and
    the plugin; the other rules' findings are kept.  ``skip`` holds rules not to run (the
    supervisor's: ones that ended or hung a worker process); ``progress(rule_id)`` is
    called before each rule runs."""
    out = FileResult(bench.file)
    snapshot: bytes | None = None
    taken = False
    copies: dict[str, Bench] = {}
    for rule_id, (rule, plugin) in sorted(ruleset.rules.items(), key=lambda kv: kv[1][1] != BUILTIN):
        if rule_id in skip or not rule_enabled(config, ruleset, rule_id) or config.rules.get(rule_id, {}).get("invalid"):
            continue
        if plugin == BUILTIN:
            given = bench
        else:
            if plugin not in copies:
                if not taken:
                    snapshot, taken = _snapshot(bench), True
                copies[plugin] = pickle.loads(snapshot) if isinstance(snapshot, bytes) else copy.deepcopy(bench)
            given = copies[plugin]
        if progress is not None:
            progress(rule_id)
        who = f"{bench.file}: rule '{rule_id}' from plugin {plugin}"
        try:
            options = _fresh(rule.defaults())
            options.update(_fresh(config.options(rule_id)))
            produced = list(rule.check(given, options) or ())
        except BaseException as exc:  # noqa: BLE001 - a plugin's failure is reported by name, even sys.exit
            out.errors.append(f"{who} {raised(exc)}")
            continue
        bad = []
        for f in produced:
            try:
                problem = finding_problem(f)
                plain = None if problem else _plain(f)
            except BaseException as exc:  # noqa: BLE001 - a Finding whose fields raise when read
                problem = f"a Finding that cannot be read ({describe(exc)})"
            if problem:
                bad.append(problem)
                continue
            out.findings.append(_complete(plain, rule, plugin, bench, config))
        if bad:
            more = f" (and {len(bad) - 1} more)" if len(bad) > 1 else ""
            out.errors.append(f"{who} yielded {bad[0]}{more}; left out")
    out.findings = apply_waivers(out.findings, bench, today or _dt.date.today())
    out.findings.sort(key=lambda f: (f.loc.line if f.loc else 0, f.loc.column if f.loc else 0, f.rule))
    return out


#: Values a deep copy gives back as they are (nothing in them can be changed)
_ATOMIC = frozenset({int, float, bool, str, type(None)})


def _fresh(options: dict) -> dict:
    """A deep copy of a rule's options, so that nothing a rule changes in them reaches the
    next rule or layout; plain numbers and strings (nearly every option) are taken as they
    are, which is what ``copy.deepcopy`` does with them, without its bookkeeping."""
    return {k: v if type(v) in _ATOMIC else copy.deepcopy(v) for k, v in options.items()}


def _snapshot(bench: Bench) -> bytes | None:
    """The bench as bytes, from which each plugin gets its own copy (faster than a deep
    copy per plugin); None where something in it does not pickle (then deep copies)."""
    try:
        return pickle.dumps(bench, protocol=pickle.HIGHEST_PROTOCOL)
    except Exception:  # noqa: BLE001
        return None


def rule_enabled(config: Config, ruleset: RuleSet, rule_id: str) -> bool:
    """An opt-in rule runs only where the configuration asks for it: a ``[rules.<id>]``
    table (without ``enabled = false``), or its plugin's module listed under ``plugins``."""
    rule, plugin = ruleset.rules[rule_id]
    entry = config.rules.get(rule_id)
    if entry is not None and "enabled" in entry:
        return entry["enabled"]
    if not getattr(rule, "opt_in", False):
        return True
    return entry is not None or ruleset.modules.get(plugin, plugin) in config.plugins


def _is_number(x: Any) -> bool:
    return isinstance(x, numbers.Real) and not isinstance(x, bool)


def finding_problem(f: Any) -> str | None:
    """Why ``f`` cannot be reported as it is, or None: the contract of ``Finding``
    checked field by field where a rule hands it over."""
    if not isinstance(f, Finding):
        return f"{type(f).__name__}, not a benchcheck.Finding"
    if not isinstance(f.message, str) or not f.message.strip():
        return f"a Finding whose message is {_short(f.message)}, not a non-empty string"
    if not isinstance(f.targets, (tuple, list)) or not all(isinstance(t, str) for t in f.targets):
        return f"a Finding whose targets are {_short(f.targets)}, not a tuple of ids (strings)"
    for name in ("value", "limit"):
        x = getattr(f, name)
        if x is not None and not _is_number(x):
            return f"a Finding whose {name} is {_short(x)}, not a number or None"
    for name in ("unit", "hint", "severity"):
        x = getattr(f, name)
        if x is not None and not isinstance(x, str):
            return f"a Finding whose {name} is {_short(x)}, not a string or None"
    if f.severity is not None and f.severity not in SEVERITIES:
        return f"a Finding whose severity is {_short(f.severity)}, not one of {', '.join(SEVERITIES)}"
    loc = f.loc
    if loc is not None and not (isinstance(loc, Loc) and isinstance(loc.file, str)
                                and all(isinstance(n, int) and not isinstance(n, bool) and n >= 0
                                        for n in (loc.line, loc.column))):
        return f"a Finding whose loc is {_short(loc)}, not a benchcheck.model.Loc (file, line, column)"
    at = f.at
    if at is not None:
        try:
            ok = len(at) == 2 and all(_is_number(c) and math.isfinite(c) for c in at)
        except Exception:  # noqa: BLE001 - not a sequence
            ok = False
        if not ok:
            return f"a Finding whose at is {_short(at)}, not a finite (x, y) in mm"
    return None


def _short(x: Any) -> str:
    try:
        text = repr(x)
    except BaseException:  # noqa: BLE001
        text = f"a {type(x).__name__}"
    return text if len(text) <= 60 else text[:57] + "..."


def _plain(f: Finding) -> Finding:
    """The same finding as plain values of the base class: safe to compare, print, and
    send from a worker process to one that never imported the plugin."""
    def text(x):
        return None if x is None else str.__str__(x)

    def num(x):
        return None if x is None else float(x)

    loc = f.loc
    return Finding(text(f.message), tuple(str.__str__(t) for t in f.targets), value=num(f.value),
                   limit=num(f.limit), unit=text(f.unit), hint=text(f.hint), severity=text(f.severity),
                   loc=None if loc is None else Loc(str.__str__(loc.file), int(loc.line), int(loc.column)),
                   at=None if f.at is None else (float(f.at[0]), float(f.at[1])))


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
               today: _dt.date | None = None, *, skip: frozenset[str] = frozenset(),
               progress: Callable[[str], None] | None = None) -> FileResult:
    """Load, solve and check one layout; unusable input is an error, never an exception."""
    return _check(str(path), lambda: load_path(path), Path(path), config, ruleset, today, skip, progress)


def check_text(data: str | bytes, file: str, config: Config | None = None, ruleset: RuleSet | None = None,
               today: _dt.date | None = None, *, skip: frozenset[str] = frozenset(),
               progress: Callable[[str], None] | None = None) -> FileResult:
    """The same for a layout that is not a file of the working tree (a git revision's
    text): ``file`` names it in messages; the configuration is the caller's (default: the
    built-in one), since a text has no folder to find one from."""
    load = (lambda: load_bytes(data, file)) if isinstance(data, bytes) else (lambda: load_text(data, file))
    return _check(file, load, None, config or Config(), ruleset, today, skip, progress)


def _check(name: str, load, path: Path | None, config: Config | None, ruleset: RuleSet | None,
           today: _dt.date | None, skip: frozenset[str] = frozenset(),
           progress: Callable[[str], None] | None = None) -> FileResult:
    try:
        if config is None:
            config = load_config(find_config(path))
        if ruleset is None:
            ruleset = load_rules(config.plugins, search_path=config_folder(config), where=config.plugins_loc)
        problems = [str(p) for p in validate_options(config, ruleset)]
    except LayoutError as exc:      # the configuration, not the layout
        return FileResult(name, errors=[str(exc)])
    try:
        layout = load()
        solution = solve_layout(layout)
    except LayoutError as exc:
        return FileResult(name, errors=[str(exc)], unreadable=True)
    except RecursionError:
        return FileResult(name, errors=[f"{name}: error: the layout is nested too deeply to read"], unreadable=True)
    except Exception as exc:  # noqa: BLE001
        return FileResult(name, errors=[f"{name}: internal error while solving ({type(exc).__name__}: {exc}); "
                                        "please report it with this layout"], unreadable=True)
    bench = Bench(layout, solution, dict(config.limits), config.exposure, tolerances=config.tolerances)
    result = run_rules(bench, config, ruleset, today, skip=skip, progress=progress)
    # plugin and configuration problems are not this layout's: said once, whatever the file
    result.errors = list(ruleset.errors) + problems + result.errors
    result.fail_on = config.fail_on
    result.bench = bench
    return result


def config_folder(config: Config) -> str | None:
    """Where configured plugin modules may also be found: beside the configuration file."""
    return str(Path(config.path).resolve().parent) if config.path else None
