"""Writes to standard output at import and in its rule, as a debugging print would."""
from _rule import one

from benchcheck import Finding, hookimpl

print("hostile_prints imported {")


def check(bench, options):
    print("] not JSON")
    yield Finding("the printing rule ran", ())


@hookimpl
def benchcheck_rules():
    return one("hostile-prints", check, severity="note")
