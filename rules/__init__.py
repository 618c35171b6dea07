"""The built-in rule pack, installed as ``benchcheck.rules``.

It registers through the same hook a lab's plugin uses (``benchcheck_rules``); each module
here holds the rules of one topic in a ``RULES`` tuple.
"""

from __future__ import annotations

from benchcheck.hookspecs import hookimpl

from . import astigmatism, clipping, coupling, damage, geometry, margin, obstruction, safety, stability, tolerance

MODULES = (geometry, stability, margin, astigmatism, obstruction, clipping, damage, safety, coupling, tolerance)


@hookimpl
def benchcheck_rules():
    return [rule for module in MODULES for rule in module.RULES]
