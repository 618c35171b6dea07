"""A one-rule plugin around a check function (shared by the hostile modules)."""
from benchcheck import Rule


def one(rule_id, check, **kw):
    return [Rule(rule_id, "a misbehaving rule", "A rule that misbehaves, for the tests.", check, **kw)]
