"""Each rule gets its own copy of its options: what one rule changes in them reaches no
other rule and no later layout (benchcheck.engine.run_rules)."""

from __future__ import annotations

from pathlib import Path

from benchcheck.api import solve_file
from benchcheck.config import Config
from benchcheck.engine import run_rules
from benchcheck.findings import Bench, Finding, Option, Rule
from benchcheck.plugins import BUILTIN, RuleSet

DEMO = Path(__file__).resolve().parents[1] / "layouts" / "two-mirror.toml"


def test_a_rule_that_changes_its_options_changes_them_for_itself_only():
    seen = []

    def greedy(bench, options):
        seen.append((list(options["names"]), options["limit"], dict(options["table"])))
        options["names"].append("added")
        options["table"]["added"] = 1
        options["limit"] = -1.0
        yield Finding("looked", ("HR",))

    rule = Rule("greedy", "changes its options", "a rule that writes into its options", greedy,
                options=(Option("names", ["HR"], "ids"), Option("limit", 2.5, "a number", "W"),
                         Option("table", {"a": [1]}, "a table")))
    ruleset = RuleSet(rules={"greedy": (rule, BUILTIN)})
    config = Config()
    config.rules["greedy"] = {"options": {"table": {"b": [2]}}}
    solution = solve_file(DEMO)
    bench = Bench(solution.layout, solution)
    for _ in range(3):
        result = run_rules(bench, config, ruleset)
        assert [f.message for f in result.findings] == ["looked"]
    assert seen == [(["HR"], 2.5, {"b": [2]})] * 3
    assert rule.options[0].default == ["HR"] and config.rules["greedy"]["options"] == {"table": {"b": [2]}}
