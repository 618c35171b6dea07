"""Finding and loading rules: the built-in pack, entry points, configured plugins.

The built-in pack (``benchcheck.rules``) is registered through the same hook as any lab's
plugin.  A plugin that cannot be imported is reported by name (distribution and entry
point, or module), and the others still load.
"""

from __future__ import annotations

import importlib
import importlib.util
import os
import sys
from dataclasses import dataclass, field
from importlib import metadata
from pathlib import Path

import pluggy

from . import hookspecs
from .findings import SEVERITIES, Rule

ENTRY_POINT_GROUP = "benchcheck"
BUILTIN = "benchcheck.rules"


@dataclass
class RuleSet:
    """Every rule found, with the plugin it came from, and what failed to load."""

    rules: dict[str, tuple[Rule, str]] = field(default_factory=dict)
    errors: list[str] = field(default_factory=list)


def _builtin_module():
    """``benchcheck.rules``; in a source checkout that was not installed, the ``rules``
    folder beside the package, loaded under the same name."""
    try:
        return importlib.import_module(BUILTIN)
    except ModuleNotFoundError as exc:
        if exc.name != BUILTIN:
            raise
    pack = Path(__file__).resolve().parent.parent / "rules" / "__init__.py"
    spec = importlib.util.spec_from_file_location(BUILTIN, pack, submodule_search_locations=[str(pack.parent)])
    module = importlib.util.module_from_spec(spec)
    sys.modules[BUILTIN] = module
    spec.loader.exec_module(module)
    return module


def plugin_manager(extra_modules: tuple[str, ...] = (), entry_points: bool = True) -> tuple[pluggy.PluginManager, list[str]]:
    pm = pluggy.PluginManager(hookspecs.PROJECT)
    pm.add_hookspecs(hookspecs)
    errors: list[str] = []
    try:
        pm.register(_builtin_module(), name=BUILTIN)
    except Exception as exc:  # noqa: BLE001 - reported, never a traceback
        errors.append(f"built-in rule pack {BUILTIN}: cannot be loaded ({type(exc).__name__}: {exc})")
    if entry_points:
        for ep in metadata.entry_points(group=ENTRY_POINT_GROUP):
            dist = getattr(ep, "dist", None)
            name = f"{dist.name if dist else '?'}:{ep.name}"
            if pm.has_plugin(name):
                continue
            try:
                plugin = ep.load()
                pm.register(plugin, name=name)
                if not any(impl.plugin is plugin for impl in pm.hook.benchcheck_rules.get_hookimpls()):
                    errors.append(f"plugin {name} (entry point {ep.value}): provides no benchcheck_rules hook "
                                  "(is the function named benchcheck_rules and marked @benchcheck.hookimpl?)")
            except Exception as exc:  # noqa: BLE001
                errors.append(f"plugin {name} (entry point {ep.value}): cannot be loaded ({type(exc).__name__}: {exc})")
    for module_name in extra_modules:
        if pm.has_plugin(module_name):
            continue
        try:
            module = importlib.import_module(module_name)
            if not pm.is_registered(module):   # also installed by entry point: once is enough
                pm.register(module, name=module_name)
            if not any(impl.plugin is module for impl in pm.hook.benchcheck_rules.get_hookimpls()):
                errors.append(f"plugin {module_name} (from the configuration): provides no benchcheck_rules hook "
                              "(is the function named benchcheck_rules and marked @benchcheck.hookimpl?)")
        except Exception as exc:  # noqa: BLE001
            errors.append(f"plugin {module_name} (from the configuration): cannot be loaded "
                          f"({type(exc).__name__}: {exc})")
    try:
        pm.check_pending()
    except pluggy.PluginValidationError as exc:
        name = pm.get_name(exc.plugin) or repr(exc.plugin)
        errors.append(f"plugin {name}: {exc} (the hook this version provides: benchcheck_rules)")
    return pm, errors


def collect_rules(pm: pluggy.PluginManager, errors: list[str]) -> RuleSet:
    """Ask every plugin for its rules, one plugin at a time so one failure stays its own."""
    out = RuleSet(errors=list(errors))
    # each registered implementation of the hook, called on its own (pluggy calls them
    # last-registered first; reversed gives registration order: built-ins first)
    for impl in reversed(pm.hook.benchcheck_rules.get_hookimpls()):
        name = impl.plugin_name
        try:
            rules = list(impl.function() or ())
        except Exception as exc:  # noqa: BLE001
            out.errors.append(f"plugin {name}: benchcheck_rules raised {type(exc).__name__}: {exc}")
            continue
        for rule in rules:
            problem = _invalid(rule)
            if problem:
                out.errors.append(f"plugin {name}: {problem}")
            elif rule.id in out.rules:
                out.errors.append(f"plugin {name}: rule id '{rule.id}' is already provided by {out.rules[rule.id][1]}")
            else:
                out.rules[rule.id] = (rule, name)
    return out


def _invalid(rule) -> str | None:
    if not isinstance(rule, Rule):
        return f"returned {type(rule).__name__}, not a benchcheck.Rule"
    if not rule.id or rule.id != rule.id.lower() or " " in rule.id or "_" in rule.id:
        return f"rule id '{rule.id}' is not kebab-case"
    if rule.severity not in SEVERITIES:
        return f"rule '{rule.id}' has default severity '{rule.severity}', not one of {', '.join(SEVERITIES)}"
    if not callable(rule.check):
        return f"rule '{rule.id}' has no callable check"
    return None


#: Set to 1 to ignore installed entry-point plugins (isolating a run, tests, debugging).
NO_ENTRY_POINTS_ENV = "BENCHCHECK_NO_ENTRY_POINTS"


def load_rules(extra_modules: tuple[str, ...] = (), entry_points: bool | None = None,
               search_path: str | None = None) -> RuleSet:
    """Every rule; ``search_path`` (the configuration's folder) is where configured plugin
    modules are also looked for, so a lab's module beside its benchcheck.toml works from
    any working directory, the pre-commit hook included."""
    if entry_points is None:
        entry_points = os.environ.get(NO_ENTRY_POINTS_ENV, "") not in ("1", "true", "yes")
    added = bool(search_path and extra_modules and search_path not in sys.path)
    if added:
        sys.path.insert(0, search_path)
    try:
        pm, errors = plugin_manager(extra_modules, entry_points)
    finally:
        if added:
            sys.path.remove(search_path)
    return collect_rules(pm, errors)
