"""Finding and loading rules: the built-in pack, entry points, configured plugins.

The built-in pack (``benchcheck.rules``) is registered through the same hook as any lab's
plugin, but first, and its rules are taken before any other plugin is imported: a plugin
can neither take a built-in rule's id nor change a built-in rule by patching its module at
import.  A plugin that cannot be imported (whatever it raises, ``SystemExit`` and
``KeyboardInterrupt`` included) is reported by name, with the configuration line that
lists it, and the others still load.
"""

from __future__ import annotations

import importlib
import importlib.util
import os
import sys
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

import pluggy

from . import hookspecs
from .findings import SEVERITIES, Option, Rule
from .model import Loc

ENTRY_POINT_GROUP = "benchcheck"
BUILTIN = "benchcheck.rules"

#: called with (what, plugin name) before plugin code runs: "import" or "hook"; the
#: supervisor of a worker process uses it to name the plugin that ended the process
Progress = Callable[[str, str], None]


@dataclass
class RuleSet:
    """Every rule found, with the plugin it came from, and what failed to load."""

    rules: dict[str, tuple[Rule, str]] = field(default_factory=dict)
    #: complete messages ("error: ..." or "file:line:col: error: ..."), one per problem
    errors: list[str] = field(default_factory=list)
    #: plugin name -> the module that holds it (for plugins listed in a configuration)
    modules: dict[str, str] = field(default_factory=dict)
    #: some plugins were left out on purpose (they ended or hung a worker process before)
    incomplete: bool = False


def describe(exc: BaseException) -> str:
    """What plugin code raised, in words; never raises itself (a hostile ``__str__``)."""
    if isinstance(exc, SystemExit):
        return f"called sys.exit({_safe_repr(exc.code)})"
    try:
        text = str(exc)
    except BaseException:  # noqa: BLE001
        text = "(its message cannot be printed)"
    return f"{type(exc).__name__}: {text}" if text else type(exc).__name__


def _safe_repr(x) -> str:
    try:
        return repr(x)
    except BaseException:  # noqa: BLE001
        return "?"


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


def _no_progress(what: str, name: str) -> None:
    return None


def plugin_manager(extra_modules: tuple[str, ...] = (), entry_points: bool = True, *,
                   exclude: tuple[str, ...] = (), where: Loc | None = None,
                   progress: Progress = _no_progress) -> tuple[pluggy.PluginManager, list[str]]:
    """The plugin manager with the built-in pack, the installed entry points and the
    configured modules registered, in that order.  ``exclude`` names plugins left out
    (ones that ended a worker process before); ``where`` is the configuration's
    ``plugins`` line, for messages about the modules it lists."""
    pm = pluggy.PluginManager(hookspecs.PROJECT)
    pm.add_hookspecs(hookspecs)
    errors: list[str] = []
    pm.benchcheck_modules = {}
    try:
        builtin = _builtin_module()
        pm.register(builtin, name=BUILTIN)
        # taken now, before any plugin module is imported and could patch the pack
        pm.benchcheck_builtin = list(builtin.benchcheck_rules())
    except Exception as exc:  # noqa: BLE001 - reported, never a traceback
        errors.append(f"error: built-in rule pack {BUILTIN}: cannot be loaded ({describe(exc)})")
        pm.benchcheck_builtin = []
    if entry_points:
        for ep in _entry_points(errors):
            dist = getattr(ep, "dist", None)
            name = f"{dist.name if dist else '?'}:{ep.name}"
            if pm.has_plugin(name) or name in exclude:
                continue
            progress("import", name)
            try:
                plugin = ep.load()
                pm.register(plugin, name=name)
            except BaseException as exc:  # noqa: BLE001 - SystemExit and KeyboardInterrupt too
                errors.append(f"error: plugin {name} (entry point {ep.value}): cannot be loaded ({describe(exc)})")
                continue
            pm.benchcheck_modules[name] = getattr(plugin, "__name__", ep.value.split(":")[0])
            if not _has_hook(pm, plugin):
                errors.append(f"error: plugin {name} (entry point {ep.value}): provides no benchcheck_rules hook "
                              "(is the function named benchcheck_rules and marked @benchcheck.hookimpl?)")
    at = f"{where}: error: " if where else "error: "
    for module_name in extra_modules:
        if pm.has_plugin(module_name) or module_name in exclude:
            continue
        progress("import", module_name)
        try:
            module = importlib.import_module(module_name)
            if not pm.is_registered(module):   # also installed by entry point: once is enough
                pm.register(module, name=module_name)
                pm.benchcheck_modules[module_name] = module_name
        except BaseException as exc:  # noqa: BLE001
            errors.append(f"{at}plugin {module_name} (from the configuration): cannot be loaded ({describe(exc)})")
            continue
        if not _has_hook(pm, module):
            errors.append(f"{at}plugin {module_name} (from the configuration): provides no benchcheck_rules hook "
                          "(is the function named benchcheck_rules and marked @benchcheck.hookimpl?)")
    try:
        pm.check_pending()
    except pluggy.PluginValidationError as exc:
        name = pm.get_name(exc.plugin) or repr(exc.plugin)
        errors.append(f"error: plugin {name}: {exc} (the hook this version provides: benchcheck_rules)")
    return pm, errors


def _entry_points(errors: list[str]):
    from importlib import metadata   # 15-20 ms to import: only where entry points are loaded

    try:
        return list(metadata.entry_points(group=ENTRY_POINT_GROUP))
    except Exception as exc:  # noqa: BLE001 - a broken distribution's metadata
        errors.append(f"error: the installed plugins cannot be listed ({describe(exc)})")
        return []


def _has_hook(pm: pluggy.PluginManager, plugin) -> bool:
    return any(impl.plugin is plugin for impl in pm.hook.benchcheck_rules.get_hookimpls())


def collect_rules(pm: pluggy.PluginManager, errors: list[str], progress: Progress = _no_progress) -> RuleSet:
    """Ask every plugin for its rules, one plugin at a time so one failure stays its own.
    The built-in rules come first and keep their ids; a plugin that offers one of them,
    or an id another plugin took before it, is named in the message."""
    out = RuleSet(errors=list(errors), modules=dict(getattr(pm, "benchcheck_modules", {})))
    builtin = getattr(pm, "benchcheck_builtin", None)
    impls = pm.hook.benchcheck_rules.get_hookimpls()
    # registration order (built-ins first), whatever tryfirst/trylast a plugin asks for
    order = {id(p): i for i, (_, p) in enumerate(pm.list_name_plugin())}
    for impl in sorted(impls, key=lambda impl: order.get(id(impl.plugin), len(order))):
        name = impl.plugin_name
        if name == BUILTIN and builtin is not None:
            rules = builtin
        else:
            progress("hook", name)
            try:
                rules = list(impl.function() or ())
            except BaseException as exc:  # noqa: BLE001
                out.errors.append(f"error: plugin {name}: benchcheck_rules {raised(exc)}")
                continue
        for rule in rules:
            try:
                problem = _invalid(rule)
                if not problem and name != BUILTIN:
                    rule = plain_rule(rule, rule.check)
            except BaseException as exc:  # noqa: BLE001 - a Rule whose fields raise when read
                problem = f"returned a Rule that cannot be read ({describe(exc)})"
            if problem:
                out.errors.append(f"error: plugin {name}: {problem}")
            elif rule.id in out.rules:
                first = out.rules[rule.id][1]
                what = "a built-in rule" if first == BUILTIN else f"already provided by {first}"
                out.errors.append(f"error: plugin {name}: rule id '{rule.id}' is {what}; "
                                  f"the rule of plugin {name} is left out (give it another id)")
            else:
                out.rules[rule.id] = (rule, name)
    return out


def plain_rule(rule: Rule, check) -> Rule:
    """``rule`` as a record of the base class with plain fields and the given check: a
    plugin's subclass or property cannot act up later, and what the check is replaced by
    pickles without the plugin's modules."""
    options = tuple(Option(str.__str__(o.name), o.default, str.__str__(o.help) if isinstance(o.help, str) else "",
                           str.__str__(o.unit) if isinstance(o.unit, str) else "") for o in rule.options)
    return Rule(id=str.__str__(rule.id), summary=str.__str__(rule.summary), explanation=str.__str__(rule.explanation),
                check=check, severity=str.__str__(rule.severity), options=options, safety=bool(rule.safety),
                opt_in=bool(rule.opt_in))


def raised(exc: BaseException) -> str:
    """"raised ValueError: ..." or "called sys.exit(0)": what plugin code did."""
    text = describe(exc)
    return text if text.startswith("called ") else f"raised {text}"


def _invalid(rule) -> str | None:
    if not isinstance(rule, Rule):
        return f"returned {type(rule).__name__}, not a benchcheck.Rule"
    if not isinstance(rule.id, str) or not rule.id or rule.id != rule.id.lower() or " " in rule.id or "_" in rule.id:
        return f"rule id {_safe_repr(rule.id)} is not kebab-case"
    if rule.severity not in SEVERITIES:
        return f"rule '{rule.id}' has default severity {_safe_repr(rule.severity)}, not one of {', '.join(SEVERITIES)}"
    if not callable(rule.check):
        return f"rule '{rule.id}' has no callable check"
    if not isinstance(rule.summary, str) or not isinstance(rule.explanation, str):
        return f"rule '{rule.id}' needs a summary and an explanation that are strings"
    if not isinstance(rule.options, (tuple, list)) or not all(
            isinstance(o, Option) and isinstance(o.name, str) and o.name for o in rule.options):
        return f"rule '{rule.id}' has options that are not a tuple of benchcheck.Option with names"
    return None


#: Set to 1 to ignore installed entry-point plugins (isolating a run, tests, debugging).
NO_ENTRY_POINTS_ENV = "BENCHCHECK_NO_ENTRY_POINTS"


def entry_points_wanted() -> bool:
    return os.environ.get(NO_ENTRY_POINTS_ENV, "") not in ("1", "true", "yes")


def entry_points_installed() -> bool:
    """Whether ``importlib.metadata.entry_points(group="benchcheck")`` lists anything (or
    fails), answered from the distributions' ``entry_points.txt`` files on ``sys.path``
    without importing ``importlib.metadata`` (15-20 ms, most of a pre-commit run's spare
    time).  Where the files alone cannot tell, importlib.metadata is asked after all."""
    found = _scan_entry_points(sys.path)
    if found is not None:
        return found
    errors: list[str] = []      # a failure counts as installed: the worker that loads them reports it
    return bool(_entry_points(errors)) or bool(errors)


def _scan_entry_points(paths) -> bool | None:
    """True when a ``*.dist-info`` or ``*.egg-info`` folder in ``paths`` declares an entry
    point in the group, False when none does, None when something is there that
    importlib.metadata reads differently or may fail on: a zip archive, an egg, another
    finder of distributions, an unusual folder name, an unreadable or malformed
    ``entry_points.txt`` (in any group).  It errs towards True: a
    declaration shadowed by an earlier copy of the same distribution still counts.  Which
    folders and lines count follows importlib.metadata (``Lookup``, ``Sectioned``)."""
    from importlib.machinery import PathFinder

    if any(getattr(f, "find_distributions", None) is not None and f is not PathFinder for f in sys.meta_path):
        return None
    for entry in paths:
        if not isinstance(entry, str):
            return None
        root = entry or "."
        try:
            children = os.listdir(root)
        except OSError:
            if os.path.isfile(root):
                return None
            continue
        egg = os.path.basename(entry).lower().endswith(".egg")
        for child in children:
            low = child.lower()
            if egg and low == "egg-info":
                return None          # named by its PKG-INFO, which importlib.metadata reads (or fails on)
            if not low.endswith((".dist-info", ".egg-info")):
                continue
            if os.path.splitext(child)[1] not in (".dist-info", ".egg-info"):
                return None          # the same for an unusual spelling of the suffix
            declared = _declares(os.path.join(root, child, "entry_points.txt"))
            if declared is not False:
                return declared
    return False


def _declares(path: str) -> bool | None:
    """Whether one ``entry_points.txt`` has an entry in the group; None where
    importlib.metadata would fail on it (not UTF-8, a line without ``=``)."""
    try:
        with open(path, encoding="utf-8") as f:
            text = f.read()
    except (FileNotFoundError, IsADirectoryError, NotADirectoryError, PermissionError):
        return False        # what importlib.metadata takes for no entry points
    except (OSError, ValueError):
        return None
    section = None
    for line in map(str.strip, text.splitlines()):
        if not line or line.startswith("#"):
            continue
        if line.startswith("[") and line.endswith("]"):
            section = line.strip("[]")
        elif section is not None:
            if section == ENTRY_POINT_GROUP:
                return True
            if "=" not in line:
                return None
    return False


def load_rules(extra_modules: tuple[str, ...] = (), entry_points: bool | None = None,
               search_path: str | None = None, *, exclude: tuple[str, ...] = (), where: Loc | None = None,
               progress: Progress = _no_progress) -> RuleSet:
    """Every rule; ``search_path`` (the configuration's folder) is where configured plugin
    modules are also looked for, so a lab's module beside its benchcheck.toml works from
    any working directory, the pre-commit hook included."""
    if entry_points is None:
        entry_points = entry_points_wanted()
    added = bool(search_path and extra_modules and search_path not in sys.path)
    if added:
        sys.path.insert(0, search_path)
    try:
        pm, errors = plugin_manager(extra_modules, entry_points, exclude=exclude, where=where, progress=progress)
    finally:
        if added and search_path in sys.path:
            sys.path.remove(search_path)
    ruleset = collect_rules(pm, errors, progress)
    ruleset.incomplete = bool(exclude)
    return ruleset
