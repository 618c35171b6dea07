"""The plugin hooks (pluggy).  Built-in rules and a lab's plugins use the same ones.

A plugin is a module (or object) with functions marked ``@benchcheck.hookimpl``, made
known by an entry point in the group ``benchcheck`` or by the ``plugins`` list of the
repository configuration.  A layout file never names code to import.
"""

from __future__ import annotations

from typing import Sequence

import pluggy

PROJECT = "benchcheck"

hookspec = pluggy.HookspecMarker(PROJECT)
hookimpl = pluggy.HookimplMarker(PROJECT)


@hookspec
def benchcheck_rules() -> Sequence["benchcheck.findings.Rule"]:  # type: ignore[name-defined]  # noqa: F821
    """Return the rules this plugin provides.

    Each is a ``benchcheck.Rule``: a stable kebab-case ``id``, a one-line ``summary``, a
    paragraph ``explanation``, a default ``severity``, declared ``options`` with defaults
    and units, and ``check(bench, options)`` which yields ``benchcheck.Finding`` objects.
    Rule ids must be unique across all plugins.
    """
