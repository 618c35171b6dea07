"""Calls sys.exit(0) inside its rule."""
import sys

from _rule import one

from benchcheck import hookimpl


def check(bench, options):
    sys.exit(0)


@hookimpl
def benchcheck_rules():
    return one("hostile-exit", check)
