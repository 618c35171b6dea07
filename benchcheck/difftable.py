"""``benchcheck diff`` as text for the terminal, JSON (format 1, a contract documented in
the README) and Markdown for a pull-request comment.

All three render the same ``revdiff.LayoutDiff`` records group by group, without knowing
what a group holds: a comparator added to ``revdiff.COMPARATORS`` shows up everywhere.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass

from .beamtable import _num as number
from .findings import SAFETY_CAUTION, SEVERITY_RANK, Finding
from .revdiff import Change, GroupDiff, LayoutDiff, exit_status

JSON_FORMAT = 1
#: a Markdown table longer than this is folded into <details>
FOLD_ROWS = 10
_POWER_UNITS = ("W", "W/cm", "W/cm^2", "J/cm^2")


def _n(count: int, word: str, plural: str | None = None) -> str:
    return f"{count} {word if count == 1 else (plural or word + 's')}"


def _num(x):
    """A JSON value: a number (9 digits, null for NaN), a point as [x, y], or a text."""
    if isinstance(x, str):
        return x
    if isinstance(x, tuple):
        return [number(v) for v in x]
    return number(x)


def _value(c: Change, v) -> str:
    if v is None:
        return "none"
    if isinstance(v, str):
        return v
    if c.quantity.point:
        return f"({v[0]:.2f}, {v[1]:.2f})"
    v = v * _scale(c)
    if c.quantity.key == "m":
        return f"{v:+.6f}"
    if c.quantity.key == "margin":
        return f"{v:.6f}"
    return f"{v:.6g}"


#: units shown to people where the JSON unit reads badly (FSR in MHz, not 7.49e+08 Hz)
_SHOWN = {"Hz": (1e-6, "MHz")}


def _scale(c: Change) -> float:
    return _SHOWN.get(c.quantity.unit, (1.0, ""))[0]


def _unit(c: Change) -> str:
    return _SHOWN.get(c.quantity.unit, (1.0, c.quantity.unit))[1]


def _delta(c: Change) -> float | None:
    """new - old for numbers (the shorter way round for a direction); None otherwise."""
    if not isinstance(c.old, (int, float)) or not isinstance(c.new, (int, float)):
        return None
    d = c.new - c.old
    return (d + 180.0) % 360.0 - 180.0 if c.quantity.circular else d


def _change_text(c: Change) -> str:
    unit = f" {_unit(c)}" if _unit(c) else ""
    if c.quantity.point and c.old is not None and c.new is not None:
        return f"moved {math.dist(c.old, c.new):.3g}{unit}"
    d = _delta(c)
    if d is None:
        return ""
    rel = f", {100.0 * d / abs(c.old):+.3g} %" if c.old and not c.quantity.circular else ""
    return f"{d * _scale(c):+.3g}{unit}{rel}"


@dataclass
class _Row:
    """A change as people read it: a tangential and a sagittal change that print the same
    (a round beam) are one row, plane "t, s"."""

    change: Change
    plane: str


def _rows(g: GroupDiff) -> list[_Row]:
    out: list[_Row] = []
    for c in g.changes:
        prev = out[-1].change if out else None
        if (prev is not None and prev.plane == "t" and c.plane == "s" and out[-1].plane == "t"
                and (prev.item, prev.at, prev.quantity) == (c.item, c.at, c.quantity)
                and (_value(c, prev.old), _value(c, prev.new)) == (_value(c, c.old), _value(c, c.new))):
            out[-1].plane = "t, s"
            continue
        out.append(_Row(c, c.plane or ""))
    return out


def _where(g: GroupDiff, r: _Row) -> str:
    c = r.change
    at = f" {g.comparator.at_word} {c.at}" if c.at else ""
    plane = f" ({r.plane})" if r.plane else ""
    return f"{g.comparator.noun} {c.item}{at}{plane}"


def _finding_power(f: Finding, d: LayoutDiff) -> bool:
    return (f.unit or "") in _POWER_UNITS or f.rule in d.safety_rules


def has_power(d: LayoutDiff) -> bool:
    findings = d.findings.added + d.findings.resolved + [n for _, n in d.findings.changed]
    return any(g.power for g in d.groups) or any(_finding_power(f, d) for f in findings)


def _count_changes(diffs: list[LayoutDiff]) -> int:
    return sum(len(g.changes) for d in diffs for g in d.groups)


def verdict(diffs: list[LayoutDiff]) -> str:
    """One line: does the change introduce failing findings, and how much moved."""
    bad = [d for d in diffs if d.errors]
    if bad:
        return f"Could not compare {_n(len(bad), 'layout')}: unusable input (see the errors)."
    introduced = [f for d in diffs for f in d.introduced]
    resolved = sum(len(d.findings.resolved) for d in diffs)
    added = sum(len(d.findings.added) for d in diffs)
    moved = _count_changes(diffs)
    rest = (f"{_n(added, 'finding')} added, {resolved} resolved; {_n(moved, 'quantity', 'quantities')} changed "
            f"in {_n(len(diffs), 'layout')}.")
    if introduced:
        levels = sorted({d.fail_on for d in diffs if d.introduced}, key=lambda s: -SEVERITY_RANK[s])
        return f"Fails: introduces {_n(len(introduced), 'finding')} at or above '{levels[0]}'; {rest}"
    if not diffs:
        return "No layout changed."
    if all(d.empty for d in diffs):
        return f"No change in the physics or the findings of {_n(len(diffs), 'layout')}."
    return f"No new finding at or above the fail level; {rest}"


def _title(d: LayoutDiff) -> str:
    if d.status == "added":
        return f"{d.new_name} (new layout)"
    if d.status == "deleted":
        return f"{d.old_name} (deleted)"
    return f"{d.old_name} -> {d.new_name}"


# --- text -------------------------------------------------------------------------------------

def _finding_line(f: Finding) -> str:
    loc = f"{f.loc.file}:{f.loc.line}:{f.loc.column}: " if f.loc else ""
    sev = f"{f.severity} (waived)" if f.waived else f.severity
    return f"{loc}{sev}: {f.message} [{f.rule}]"


def _finding_value(f: Finding) -> str:
    if f.value is None:
        return "-"
    return f"{f.value:.4g}" + (f" {f.unit}" if f.unit else "")


def text_report(diffs: list[LayoutDiff]) -> str:
    lines: list[str] = []
    for d in diffs:
        lines.append(_title(d))
        if d.errors:
            lines += ["  not compared: unusable input (the errors are on standard error)", ""]
            continue
        for a, b in d.renamed.items():
            lines.append(f"  optic {a} renamed {b}")
        for g in d.groups:
            if g.empty:
                continue
            lines.append(f"  {g.comparator.title.lower()}")
            for what, ids in (("added", g.added), ("removed", g.removed)):
                if ids:
                    lines.append(f"    {what} {g.comparator.noun}{'s' if len(ids) > 1 else ''}: {', '.join(ids)}")
            for r in _rows(g):
                c = r.change
                unit = f" {_unit(c)}" if _unit(c) else ""
                delta = _change_text(c)
                lines.append(f"    {_where(g, r)}: {c.quantity.label} {_value(c, c.old)} -> {_value(c, c.new)}{unit}"
                             + (f" ({delta})" if delta else ""))
        fd = d.findings
        if not fd.empty:
            lines.append("  findings")
            lines += [f"    added: {_finding_line(f)}" for f in fd.added]
            lines += [f"    resolved: {_finding_line(f)}" for f in fd.resolved]
            for o, n in fd.changed:
                lines.append(f"    changed: {_finding_line(n)}")
                lines.append(f"      was {o.severity}{' (waived)' if o.waived else ''}, {_finding_value(o)}; "
                             f"now {n.severity}{' (waived)' if n.waived else ''}, {_finding_value(n)}")
        if d.empty and not d.errors:
            lines.append("  no change beyond the thresholds")
        lines.append("")
    lines.append(verdict(diffs))
    if any(has_power(d) for d in diffs):
        lines.append(SAFETY_CAUTION)
    return "\n".join(lines) + "\n"


# --- JSON -------------------------------------------------------------------------------------

def _change_json(c: Change) -> dict:
    out = {"id": c.item, "at": c.at, "plane": c.plane, "quantity": c.quantity.key,
           "old": _num(c.old), "new": _num(c.new)}
    if c.quantity.point and c.old is not None and c.new is not None:
        out["moved_mm"] = _num(math.dist(c.old, c.new))
    elif _delta(c) is not None:
        out["delta"] = _num(_delta(c))
    return out


def layout_json(d: LayoutDiff) -> dict:
    return {
        "old": d.old_name,
        "new": d.new_name,
        "status": d.status,
        "fail_on": d.fail_on,
        "renamed_optics": [{"old": a, "new": b} for a, b in d.renamed.items()],
        "groups": {g.comparator.key: {"added": list(g.added), "removed": list(g.removed),
                                      "changes": [_change_json(c) for c in g.changes]} for g in d.groups},
        "findings": {"added": [f.as_json() for f in d.findings.added],
                     "resolved": [f.as_json() for f in d.findings.resolved],
                     "changed": [{"old": o.as_json(), "new": n.as_json()} for o, n in d.findings.changed]},
        "introduced": len(d.introduced),
        "errors": list(d.errors),
    }


def json_report(diffs: list[LayoutDiff]) -> str:
    doc = {"format": JSON_FORMAT, "verdict": verdict(diffs), "exit_status": exit_status(diffs),
           "layouts": [layout_json(d) for d in diffs], "caution": SAFETY_CAUTION}
    return json.dumps(doc, indent=2, allow_nan=False) + "\n"


# --- Markdown ---------------------------------------------------------------------------------

def _cell(text) -> str:
    return str(text).replace("\\", "\\\\").replace("|", "\\|").replace("\n", " ")


def _code(text: str) -> str:
    return f"`{text}`" if "`" not in text else _cell(text)


def _table(head: list[str], rows: list[list], summary: str) -> list[str]:
    out = ["| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
    out += ["| " + " | ".join(_cell(x) for x in r) + " |" for r in rows]
    if len(rows) > FOLD_ROWS:
        return ["<details>", f"<summary>{summary}</summary>", ""] + out + ["", "</details>"]
    return out


def _caution() -> list[str]:
    return ["", f"> {SAFETY_CAUTION}"]


def _md_findings(d: LayoutDiff) -> list[str]:
    fd = d.findings
    if fd.empty:
        return []
    out = ["", "#### Findings", ""]
    head = ["severity", "rule", "targets", "line", "message"]

    def row(f: Finding) -> list:
        sev = f"{f.severity} (waived)" if f.waived else f.severity
        return [sev, f.rule, ", ".join(f.targets), f.loc.line if f.loc else "", f.message]

    for what, items in (("Added", fd.added), ("Resolved", fd.resolved)):
        if items:
            out += [f"**{what}** ({len(items)})", ""]
            out += _table(head, [row(f) for f in items], f"{_n(len(items), 'finding')} {what.lower()}") + [""]
    if fd.changed:
        out += [f"**Changed** ({len(fd.changed)})", ""]
        rows = [[n.rule, ", ".join(n.targets),
                 f"{o.severity}{' (waived)' if o.waived else ''}, {_finding_value(o)}",
                 f"{n.severity}{' (waived)' if n.waived else ''}, {_finding_value(n)}", n.message]
                for o, n in fd.changed]
        out += _table(["rule", "targets", "old", "new", "message now"], rows,
                      f"{_n(len(rows), 'finding')} changed") + [""]
    if any(_finding_power(f, d) for f in fd.added + fd.resolved + [n for _, n in fd.changed]):
        out += _caution()[1:]
    return out


def _md_group(g: GroupDiff) -> list[str]:
    comp = g.comparator
    out = ["", f"#### {comp.title}", ""]
    for what, ids in (("Added", g.added), ("Removed", g.removed)):
        if ids:
            out.append(f"{what} {comp.noun}{'s' if len(ids) > 1 else ''}: " + ", ".join(_code(i) for i in ids) + ".")
    if g.changes:
        if g.added or g.removed:
            out.append("")
        rows = [[r.change.item, r.change.at or "", r.plane,
                 r.change.quantity.label + (f" [{_unit(r.change)}]" if _unit(r.change) else ""),
                 _value(r.change, r.change.old), _value(r.change, r.change.new), _change_text(r.change)]
                for r in _rows(g)]
        out += _table([comp.noun, comp.at_word, "plane", "quantity", "old", "new", "change"], rows,
                      f"{_n(len(rows), 'change')}")
    if g.power:
        out += _caution()
    return out


def markdown_report(diffs: list[LayoutDiff]) -> str:
    lines = [f"**benchcheck diff**: {verdict(diffs)}"]
    for d in diffs:
        lines += ["", f"### {_code(_title(d))}"]
        if d.errors:
            lines += ["", "```"] + [e.replace("```", "'''") for e in d.errors] + ["```"]
            continue
        if d.renamed:
            lines += ["", "Renamed optics: " + ", ".join(f"{_code(a)} → {_code(b)}" for a, b in d.renamed.items()) + "."]
        for g in d.groups:
            if not g.empty:
                lines += _md_group(g)
        lines += _md_findings(d)
        if d.empty:
            lines += ["", "No change beyond the thresholds."]
    return "\n".join(lines).rstrip() + "\n"
