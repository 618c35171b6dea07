"""Ends its worker process at once inside its rule."""
import os

from _rule import one

from benchcheck import hookimpl


def check(bench, options):
    os._exit(0)


@hookimpl
def benchcheck_rules():
    return one("hostile-os-exit", check)
