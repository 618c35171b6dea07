"""A rule that never returns."""
from _rule import one

from benchcheck import hookimpl


def check(bench, options):
    while True:
        pass


@hookimpl
def benchcheck_rules():
    return one("hostile-hangs", check)
