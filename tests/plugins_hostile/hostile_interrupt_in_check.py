"""Raises KeyboardInterrupt inside its rule, as if the user had pressed Ctrl-C."""
from _rule import one

from benchcheck import hookimpl


def check(bench, options):
    raise KeyboardInterrupt


@hookimpl
def benchcheck_rules():
    return one("hostile-interrupt", check)
