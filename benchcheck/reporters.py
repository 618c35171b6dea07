"""Findings as text (compiler style), JSON, SARIF 2.1.0 and GitHub workflow annotations.

The JSON and SARIF shapes are contracts (docs/design.md §6): keys are documented in the
README and only added to within a format version.
"""

from __future__ import annotations

import math
import os
import re
from pathlib import Path
from typing import Iterable

from . import __version__
from .engine import FileResult
from .findings import SAFETY_CAUTION, SEVERITY_RANK, Finding, Rule
from .textsafe import one_line

JSON_FORMAT = 1
SARIF_SCHEMA = "https://docs.oasis-open.org/sarif/sarif/v2.1.0/errata01/os/schemas/sarif-schema-2.1.0.json"
SARIF_LEVEL = {"error": "error", "warning": "warning", "note": "note"}


def _dumps(doc: dict) -> str:
    import json   # the JSON formats only: a quicker start for the text report pre-commit shows

    return json.dumps(doc, indent=2, allow_nan=False) + "\n"


def all_findings(results: Iterable[FileResult]) -> list[Finding]:
    return [f for r in results for f in r.findings]


def exit_status(results: list[FileResult]) -> int:
    """2 for unusable input; 1 when an unwaived finding reaches its file's fail level."""
    if any(r.errors for r in results):
        return 2
    for r in results:
        floor = SEVERITY_RANK[r.fail_on]
        if any(not f.waived and SEVERITY_RANK.get(f.severity, 0) >= floor for f in r.findings):
            return 1
    return 0


#: said on a run with nothing to report: a clean check is not a sign-off
NOT_AN_APPROVAL = ("No findings: the plan passed the rules that ran. This is not a safety approval; "
                   "'benchcheck hazards' lists the exposure figures for the laser safety officer's review.")


def not_an_approval(findings: Iterable[Finding]) -> str:
    """NOT_AN_APPROVAL, saying how many findings were waived where some were."""
    waived = sum(1 for f in findings if f.waived)
    if not waived:
        return NOT_AN_APPROVAL
    return NOT_AN_APPROVAL.replace("No findings:", f"No findings apart from {waived} waived:", 1)


def clean(results: list[FileResult]) -> bool:
    """Every input was read and no unwaived finding remains: the run that must still say
    that it is no approval."""
    return not any(not f.waived for f in all_findings(results)) and not any(r.errors for r in results)


def verdict(results: list[FileResult]) -> str:
    """One sentence for machine outputs, whose readers may show nothing else."""
    if clean(results):
        return not_an_approval(all_findings(results))
    return "Findings or input problems remain (see 'findings' and 'errors'). " \
           "Passing the rules is never a safety approval."


# --- text -------------------------------------------------------------------------------

def input_errors(results: list[FileResult]) -> tuple[int, int]:
    """(layouts that could not be read or solved, distinct configuration or plugin
    problems): the errors that are no rule's finding, counted once each (a bad
    configuration repeats in every file's result)."""
    unreadable = sum(1 for r in results if r.unreadable)
    # a path that does not exist is no layout and no configuration problem (said on stderr)
    setup = {e for r in results if not r.unreadable and r.layout for e in r.errors}
    return unreadable, len(setup)


def text_report(results: list[FileResult], rules: dict) -> str:
    lines = []
    findings = all_findings(results)
    for f in findings:
        loc = f.loc
        sev = f"{f.severity} (waived)" if f.waived else f.severity
        lines.append(f"{loc.file}:{loc.line}:{loc.column}: {sev}: {f.message} [{f.rule}]")
        if f.waived and f.waiver_reason:
            lines.append(f"    waived: {f.waiver_reason}")
        elif f.hint:
            lines.append(f"    hint: {f.hint}")
    counts = {s: sum(1 for f in findings if f.severity == s and not f.waived) for s in ("error", "warning", "note")}
    waived = sum(1 for f in findings if f.waived)
    unreadable, setup = input_errors(results)
    missing = sum(1 for r in results if not r.layout)
    counts["error"] += unreadable + setup + missing
    parts = [f"{n} {s}{'s' if n != 1 else ''}" for s, n in counts.items()]
    why = []
    if missing:
        why.append(f"{missing} path{'s' if missing != 1 else ''} named on the command line "
                   f"{'do' if missing != 1 else 'does'} not exist")
    if unreadable:
        why.append(f"{unreadable} layout{'s' if unreadable != 1 else ''} could not be read or solved")
    if setup:
        why.append(f"{setup} problem{'s' if setup != 1 else ''} with the configuration or plugins")
    if why:
        parts[0] += f" ({'; '.join(why)})"
    summary = ", ".join(parts) + (f"; {waived} waived" if waived else "")
    files = sum(1 for r in results if r.layout)
    lines.append(f"{summary} in {files} layout{'s' if files != 1 else ''}")
    if clean(results):
        lines.append(not_an_approval(findings))
    lines.append(SAFETY_CAUTION)
    return "\n".join(one_line(line) for line in lines) + "\n"


# --- JSON -------------------------------------------------------------------------------

def json_report(results: list[FileResult], rules: dict) -> str:
    findings = all_findings(results)
    doc = {
        "format": JSON_FORMAT,
        "findings": [f.as_json() for f in findings],
        "files": [r.file for r in results if r.layout],
        "errors": list(dict.fromkeys(e for r in results for e in r.errors)),
        "verdict": verdict(results),
        "caution": SAFETY_CAUTION,
    }
    return _dumps(doc)


# --- SARIF ------------------------------------------------------------------------------

def repository_root(start: Path) -> Path:
    """The nearest folder holding .git at or above ``start``; else ``start``."""
    from .config import repository_root as root_of

    return root_of(start) or start.resolve()


def _relative(file: str, root: Path) -> str:
    try:
        return Path(file).resolve().relative_to(root).as_posix()
    except ValueError:
        return Path(file).as_posix()


def sarif_report(results: list[FileResult], rules: dict, root: Path | None = None) -> str:
    root = root or repository_root(Path.cwd())
    ids = sorted(rules)
    index = {rid: i for i, rid in enumerate(ids)}
    driver_rules = [_sarif_rule(rules[rid][0], rules[rid][1]) for rid in ids]
    extra = sorted({f.rule for f in all_findings(results)} - set(ids))
    for rid in extra:   # engine findings (waivers)
        index[rid] = len(driver_rules)
        driver_rules.append({"id": rid, "name": rid, "shortDescription": {"text": rid.replace("-", " ")},
                             "defaultConfiguration": {"level": "warning"}})
    out_results = []
    for f in all_findings(results):
        res = {
            "ruleId": f.rule,
            "ruleIndex": index[f.rule],
            "level": SARIF_LEVEL.get(f.severity, "warning"),
            "message": {"text": f.message + (f" Hint: {f.hint}" if f.hint else "")},
            "locations": [{"physicalLocation": {
                "artifactLocation": {"uri": _relative(f.loc.file, root), "uriBaseId": "SRCROOT"},
                "region": {"startLine": max(1, f.loc.line), "startColumn": max(1, f.loc.column)},
            }}],
            "partialFingerprints": {"benchcheck/v1": _fingerprint(f)},
            "properties": {"targets": list(f.targets), "value": f.as_json()["value"],
                           "limit": f.as_json()["limit"], "unit": f.unit},
        }
        if f.waived:
            res["suppressions"] = [{"kind": "inSource", "justification": f.waiver_reason or "waived in the layout"}]
        out_results.append(res)
    notifications = [{"level": "error", "message": {"text": e}}
                     for e in dict.fromkeys(e for r in results for e in r.errors)]
    run = {
        "tool": {"driver": {"name": "benchcheck", "version": __version__, "semanticVersion": __version__,
                            "rules": driver_rules}},
        "originalUriBaseIds": {"SRCROOT": {"uri": root.as_uri() + "/"}},
        "results": out_results,
        "invocations": [{"executionSuccessful": not notifications,
                         "toolExecutionNotifications": notifications}],
        "properties": {"verdict": verdict(results), "caution": SAFETY_CAUTION},
    }
    doc = {"$schema": SARIF_SCHEMA, "version": "2.1.0", "runs": [run]}
    return _dumps(doc)


def _fingerprint(f: Finding) -> str:
    """Stable across runs while the problem stays the same (numbers may change), distinct
    between two problems of one rule on the same targets (the two planes of a cavity, the
    two leaks of a fold mirror): the message with its numbers taken out."""
    import hashlib   # SARIF only: a few ms of start spared for the other formats

    words = re.sub(r"[-+]?\d[\d.,]*(?:e[-+]?\d+)?", "#", f.message)
    digest = hashlib.sha1(words.encode("utf-8")).hexdigest()[:16]
    return f"{f.rule}:{'/'.join(f.targets)}:{digest}"


def _sarif_rule(rule: Rule, plugin: str) -> dict:
    options = "; ".join(f"{o.name} = {o.default!r}{(' ' + o.unit) if o.unit else ''}: {o.help}" for o in rule.options)
    text = rule.explanation + (f" Options: {options}." if options else "") + \
        (f" {SAFETY_CAUTION}" if rule.safety else "")
    return {
        "id": rule.id,
        "name": "".join(part.capitalize() for part in rule.id.split("-")),
        "shortDescription": {"text": rule.summary},
        "fullDescription": {"text": rule.explanation},
        "help": {"text": text},
        "defaultConfiguration": {"level": SARIF_LEVEL[rule.severity]},
        "properties": {"plugin": plugin, "safety": rule.safety},
    }


# --- GitHub workflow annotations ------------------------------------------------------

def _escape_data(s: str) -> str:
    """Line breaks in the workflow command's own encoding; other control characters escaped."""
    s = s.replace("%", "%25").replace("\r", "%0D")
    return "%0A".join(one_line(part) for part in s.split("\n"))


def _escape_property(s: str) -> str:
    return _escape_data(s).replace(":", "%3A").replace(",", "%2C")


def github_report(results: list[FileResult], rules: dict, root: Path | None = None) -> str:
    root = root or repository_root(Path.cwd())
    lines = []
    for f in all_findings(results):
        if f.waived:
            continue
        level = {"error": "error", "warning": "warning"}.get(f.severity, "notice")
        file = _escape_property(_relative(f.loc.file, root))
        title = _escape_property(f.rule)
        hint = f"\nhint: {f.hint}" if f.hint else ""
        lines.append(f"::{level} file={file},line={f.loc.line},col={f.loc.column},title={title}::"
                     f"{_escape_data(f.message + hint)}")
    for e in dict.fromkeys(e for r in results for e in r.errors):
        lines.append(f"::error::{_escape_data(e)}")
    if clean(results):
        lines.append(f"::notice title=benchcheck::{_escape_data(not_an_approval(all_findings(results)))}")
    lines.append(f"::notice title=benchcheck::{_escape_data(SAFETY_CAUTION)}")
    return "\n".join(lines) + ("\n" if lines else "")


def rules_text(rules: dict) -> str:
    out = []
    for rid in sorted(rules):
        rule, plugin = rules[rid]
        opt_in = "  (opt-in: off until the configuration turns it on)" if rule.opt_in else ""
        out.append(f"{rid}  [{rule.severity}]  from {plugin}{'  (safety)' if rule.safety else ''}{opt_in}")
        out.append(f"    {rule.summary}")
        for o in rule.options:
            unit = f" {o.unit}" if o.unit else ""
            out.append(f"    option {o.name} = {o.default!r}{unit}: {o.help}")
        out.append("")
        out += _wrap(rule.explanation, "    ")
        out.append("")
    return "\n".join(one_line(line) for line in out)


def rules_json(rules: dict) -> str:
    doc = {"format": JSON_FORMAT, "rules": [
        {"id": rid, "plugin": rules[rid][1], "severity": rules[rid][0].severity, "summary": rules[rid][0].summary,
         "explanation": rules[rid][0].explanation, "safety": rules[rid][0].safety,
         "options": [{"name": o.name, "default": _json_safe(o.default), "unit": o.unit, "help": o.help}
                     for o in rules[rid][0].options],
         "opt_in": rules[rid][0].opt_in}
        for rid in sorted(rules)]}
    return _dumps(doc)


def _json_safe(x, depth: int = 0):
    """An option default as valid JSON: NaN and infinities as null (as finding values are),
    anything JSON has no type for as its repr."""
    if isinstance(x, float):
        return x if math.isfinite(x) else None
    if x is None or isinstance(x, (bool, int, str)):
        return x
    if depth < 8 and isinstance(x, (list, tuple)):
        return [_json_safe(v, depth + 1) for v in x]
    if depth < 8 and isinstance(x, dict):
        return {str(k): _json_safe(v, depth + 1) for k, v in x.items()}
    return repr(x)


def _wrap(text: str, indent: str, width: int = 92) -> list[str]:
    words, lines, cur = text.split(), [], indent
    for w in words:
        if len(cur) + len(w) + 1 > width and cur.strip():
            lines.append(cur.rstrip())
            cur = indent
        cur += w + " "
    if cur.strip():
        lines.append(cur.rstrip())
    return lines


def workers() -> int:
    return max(1, os.cpu_count() or 1)
