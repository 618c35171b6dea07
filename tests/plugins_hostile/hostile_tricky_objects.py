"""A Finding subclass whose fields raise when read, an option default that cannot be
copied, and one plain finding from a second rule."""
from benchcheck import Finding, Option, Rule, hookimpl


class Slippery(Finding):
    def __getattribute__(self, name):
        if name == "targets":
            raise RuntimeError("no targets for you")
        return super().__getattribute__(name)


class Uncopyable:
    def __deepcopy__(self, memo):
        raise RuntimeError("cannot be copied")


def slippery(bench, options):
    yield Slippery("a slippery finding")


def uncopyable(bench, options):
    return []


def plain(bench, options):
    yield Finding("a plain finding", ())


@hookimpl
def benchcheck_rules():
    return [Rule("hostile-slippery", "s", "A rule for the tests.", slippery),
            Rule("hostile-uncopyable", "u", "A rule for the tests.", uncopyable,
                 options=(Option("thing", Uncopyable(), "an option that cannot be copied"),)),
            Rule("hostile-plain", "p", "A rule for the tests.", plain, severity="note")]
