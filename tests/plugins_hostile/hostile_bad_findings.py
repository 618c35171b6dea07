"""Yields findings with malformed fields, and one good one."""
import math

from _rule import one

from benchcheck import Finding, hookimpl


def check(bench, options):
    yield Finding("targets None", None)
    yield Finding("loc a string", ("M1",), loc="x")
    yield Finding("value a string", ("M1",), value="12 mm")
    yield Finding("a NaN position", ("M1",), at=(math.nan, 0.0))
    yield Finding("a fatal severity", ("M1",), severity="fatal")
    yield Finding("the good one", (), value=1.0, limit=2.0, unit="mm")


@hookimpl
def benchcheck_rules():
    return one("hostile-bad-findings", check)
