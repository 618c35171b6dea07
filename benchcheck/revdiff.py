"""What an edit of a layout does to the physics: two solved revisions compared, matched by id.

A reporting stage: it reads two solved benches and their findings (from the engine) and
says which numbers moved beyond a threshold, which optics, cavities and beams came or
went, and which findings were added, resolved or changed.  Each group of quantities is a
``Comparator`` whose ``extract`` turns a solved bench into plain numbers keyed by id;
comparing, thresholds, renames and every output format are shared, so a new group (the
laser-hazard figures, say) is one extractor appended to ``COMPARATORS``.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Callable, Mapping

from .abcd import PLANES
from .config import DIFF_ABSOLUTE, Config, find_config, load_config
from .engine import FileResult
from .findings import SEVERITY_RANK, Bench, Finding
from .gitread import GitError, changed_files, is_revision_spec, read_revision
from .model import LayoutError
from .placement import heading_of
from .reporters import _fingerprint

# --- quantities and thresholds ----------------------------------------------------------


@dataclass(frozen=True)
class Quantity:
    """One kind of number compared.  ``key`` is its JSON name, unit in the name as in the
    beam table (``w_um``, ``fsr_hz``); ``tol`` names its absolute threshold (a key of
    ``[diff.absolute]``), or None for a value compared as text (a status, where a beam
    ends); ``power``: a power figure, shown with the safety caution."""

    key: str
    label: str
    unit: str = ""
    tol: str | None = "fraction"
    power: bool = False
    #: an angle in degrees (a direction, a fold): compared modulo 360, absolute threshold only
    circular: bool = False
    #: a point [x, y]: compared by the distance between old and new
    point: bool = False
    #: the value is an optic id (a renamed optic is not a change)
    names_optic: bool = False


QUANTITIES: dict[str, Quantity] = {}


def quantity(*args, **kwargs) -> Quantity:
    """Declare a quantity (also for a comparator added later)."""
    q = Quantity(*args, **kwargs)
    QUANTITIES[q.key] = q
    return q


KIND = quantity("kind", "kind", tol=None)
AT_MM = quantity("at_mm", "position", "mm", "mm", point=True)
FACING = quantity("facing_deg", "facing", "deg", "deg", circular=True)
FOLD = quantity("fold_deg", "fold", "deg", "deg", circular=True)
M = quantity("m", "half-trace m")
MARGIN = quantity("margin", "margin 1-|m|")
STATUS = quantity("status", "status", tol=None)
GOUY = quantity("gouy_deg", "Gouy phase", "deg", "deg")
THERMAL_LO = quantity("m_thermal_min", "lowest m over the thermal-lens range")
THERMAL_HI = quantity("m_thermal_max", "highest m over the thermal-lens range")
FSR = quantity("fsr_hz", "FSR", "Hz", "hz")
ROUND_TRIP = quantity("round_trip_mm", "round trip", "mm", "mm")
CIRCULATING = quantity("circulating_w", "circulating power", "W", "w", power=True)
W = quantity("w_um", "radius w", "um", "um")
S = quantity("s_mm", "position s", "mm", "mm")
POWER = quantity("power_w", "power", "W", "w", power=True)
ENDS = quantity("ends", "ends on", tol=None)
END_ID = quantity("end_id", "ends on id", tol=None, names_optic=True)
END_S = quantity("end_s_mm", "length to its end", "mm", "mm")
END_AT = quantity("end_at_mm", "end point", "mm", "mm", point=True)
MODE_MATCH = quantity("mode_match", "mode match")
PEAK = quantity("peak_w_cm2", "peak intensity", "W/cm^2", "w_cm2", power=True)
LINEAR = quantity("linear_w_cm", "linear power density", "W/cm", "w_cm", power=True)
FLUENCE = quantity("peak_j_cm2", "peak fluence", "J/cm^2", "j_cm2", power=True)
LOAD = quantity("load_over_lidt", "load / LIDT", power=True)


@dataclass(frozen=True)
class Thresholds:
    """A number changed when |new - old| exceeds both ``relative`` x max(|old|, |new|) and
    the absolute threshold of its unit."""

    relative: float
    absolute: Mapping[str, float]

    @classmethod
    def from_config(cls, config: Config, relative: float | None = None,
                    absolute: Mapping[str, float] | None = None) -> "Thresholds":
        ab = dict(config.diff["absolute"])
        ab.update(absolute or {})
        return cls(config.diff["relative"] if relative is None else relative, ab)

    def changed(self, q: Quantity, old: Any, new: Any) -> bool:
        if old is None or new is None or q.tol is None:
            return old != new
        if q.point:
            delta = math.dist(old, new)
            size = max(math.hypot(*old), math.hypot(*new))
        elif q.circular:
            delta = abs((new - old + 180.0) % 360.0 - 180.0)
            size = 360.0
        else:
            delta = abs(new - old)
            size = max(abs(old), abs(new))
        if q.circular or q.point:     # a position or direction has no natural scale: absolute only
            return delta > self.absolute.get(q.tol, 0.0)
        return delta > self.absolute.get(q.tol, 0.0) and delta > self.relative * size


# --- what is compared --------------------------------------------------------------------

#: (at, plane, quantity key) -> value; ``at`` is where along the path (an optic id, "waist 1",
#: None for the whole item), ``plane`` "t", "s" or None.
Figures = dict[tuple[str | None, str | None, str], Any]


@dataclass(frozen=True)
class Comparator:
    """One group of quantities: ``extract(bench)`` gives {item id: Figures} for a solved
    bench.  ``noun`` names an item ("cavity"); ``rename(id, renames)`` gives an old item's
    id after optics were renamed (None: ids are not optic ids); ``at_optics``: the ``at``
    keys are optic ids (renames apply to them too); ``at_word`` joins item and ``at`` in
    text."""

    key: str
    title: str
    noun: str
    extract: Callable[[Bench], dict[str, Figures]]
    rename: Callable[[str, Mapping[str, str]], str] | None = None
    at_optics: bool = True
    at_word: str = "at"
    #: items one side lacks are listed as added or removed; else (items that merely have
    #: figures on one side, as an optic no beam reached before) their figures change from none
    lists_items: bool = True


def _occurrences(hits) -> list[str]:
    """Hit labels: the optic's id, with "#2", "#3" where a path meets it again."""
    seen: dict[str, int] = {}
    out = []
    for h in hits:
        seen[h.optic] = seen.get(h.optic, 0) + 1
        out.append(h.optic if seen[h.optic] == 1 else f"{h.optic}#{seen[h.optic]}")
    return out


def _um(w_mm):
    return None if w_mm is None else w_mm * 1e3


def _path_figures(result) -> Figures:
    """Radii at each optic and the waists, common to cavities and beams."""
    out: Figures = {}
    for label, h in zip(_occurrences(result.hits), result.hits):
        for p in PLANES:
            out[(label, p, W.key)] = _um(h.w.get(p))
    count = {p: 0 for p in PLANES}
    waists: dict[str, dict] = {}          # "waist n" -> plane -> WaistResult, in order
    for waist in result.waists:
        count[waist.plane] += 1
        waists.setdefault(f"waist {count[waist.plane]}", {})[waist.plane] = waist
    for at, by_plane in waists.items():
        for q, value in ((W, lambda w: _um(w.w)), (S, lambda w: w.s)):
            for p in PLANES:
                if p in by_plane:
                    out[(at, p, q.key)] = value(by_plane[p])
    return out


def placement_figures(bench: Bench) -> dict[str, Figures]:
    out: dict[str, Figures] = {}
    for oid, placed in bench.placement.optics.items():
        figs: Figures = {(None, None, KIND.key): placed.optic.kind,
                         (None, None, AT_MM.key): (float(placed.point[0]), float(placed.point[1]))}
        if placed.optic.kind != "obstacle":
            figs[(None, None, FACING.key)] = heading_of(placed.direction) % 360.0
        out[oid] = figs
    for paths in (bench.trace.cavities, bench.trace.beams):
        for pid, path in paths.items():
            for h in path.hits:
                if h.fold is not None:
                    out[h.optic][(pid, None, FOLD.key)] = h.fold
    return out


def cavity_figures(bench: Bench) -> dict[str, Figures]:
    out: dict[str, Figures] = {}
    for cid, c in bench.solution.cavities.items():
        figs: Figures = {}
        for p in PLANES:
            figs[(None, p, STATUS.key)] = c.modes[p].status
        for p in PLANES:
            figs[(None, p, M.key)] = c.modes[p].m
        for p in PLANES:
            figs[(None, p, MARGIN.key)] = 1.0 - abs(c.modes[p].m)
        for p in PLANES:
            figs[(None, p, GOUY.key)] = c.gouy_deg(p)
        if c.thermal is not None:
            for p in PLANES:
                figs[(None, p, THERMAL_LO.key)], figs[(None, p, THERMAL_HI.key)] = c.thermal.m_range[p]
        figs[(None, None, FSR.key)] = c.fsr_hz
        figs[(None, None, ROUND_TRIP.key)] = c.round_trip_mm
        figs[(None, None, CIRCULATING.key)] = c.circulating_w
        figs.update(_path_figures(c))
        out[cid] = figs
    return out


def _end(b) -> tuple[str, str | None, float | None, tuple[float, float] | None]:
    """Where a beam stops, as the beam table says it: kind, id, s and the point."""
    last = b.hits[-1]
    if b.into is not None:
        return "cavity", b.into, last.s, None
    if b.tail is None:
        return last.kind, last.optic, last.s, None
    t = b.tail
    return t.zone_kind or t.kind, t.id, last.s + t.length, (float(t.point[0]), float(t.point[1]))


def beam_figures(bench: Bench) -> dict[str, Figures]:
    out: dict[str, Figures] = {}
    for bid, b in bench.solution.beams.items():
        figs: Figures = {(None, None, POWER.key): b.power_w}
        what, ident, s, point = _end(b)
        figs[(None, None, ENDS.key)] = what
        figs[(None, None, END_ID.key)] = ident
        figs[(None, None, END_S.key)] = s
        if point is not None:
            figs[(None, None, END_AT.key)] = point
        if b.into is not None:
            figs[(None, None, MODE_MATCH.key)] = b.mode_match
        figs.update(_path_figures(b))
        out[bid] = figs
    return out


def _optic_id(ident: str, renames: Mapping[str, str]) -> str:
    return renames.get(ident, ident)


def _stray_id(ident: str, renames: Mapping[str, str]) -> str:
    """A leak's id is parent/optic (and /out or /back): the optic part may be renamed."""
    parts = ident.split("/")
    if len(parts) > 1:
        parts[1] = renames.get(parts[1], parts[1])
    return "/".join(parts)


def stray_figures(bench: Bench) -> dict[str, Figures]:
    """Leak and secondary beams: their power and where they go."""
    out: dict[str, Figures] = {}
    for r in bench.solution.strays:
        end = r.stray.end
        out[r.stray.id] = {(None, None, POWER.key): r.power_w,
                           (None, None, ENDS.key): end.zone_kind or end.kind,
                           (None, None, END_ID.key): end.id,
                           (None, None, END_S.key): end.length,
                           (None, None, END_AT.key): (float(end.point[0]), float(end.point[1]))}
    return out


def _hit_loads(bench: Bench, kind: str, ident: str, result, i: int) -> list[tuple[Quantity, float, float | None]]:
    """(quantity, value on the worst surface, the LIDT figure of that kind or None) for hit
    ``i`` of a cavity or beam: peak intensity 2P cos(aoi)/(pi w_t w_s), power over the
    smaller footprint diameter, peak fluence; one-way, from the coating-damage rule's own
    functions."""
    from .plugins import _builtin_module

    _builtin_module()           # the rule pack, also in a source checkout that was not installed
    from .rules.clipping import surfaces
    from .rules.damage import _face_fluence, linear_power_density, surface_peak

    hit = result.hits[i]
    if hit.power_w is None and hit.peak_j_cm2 is None:
        return []
    faces = surfaces(bench, kind, ident, result, i)
    if not faces:
        return []
    lidt = bench.layout.optics[hit.optic].lidt
    out: list[tuple[Quantity, float, float | None]] = []
    if hit.power_w is not None:
        out.append((PEAK, max(surface_peak(hit.power_w, f.w_t, f.w_s, f.cos_face) for f in faces),
                    lidt.w_cm2 if lidt else None))
        out.append((LINEAR, max(linear_power_density(hit.power_w, f.w_t, f.w_s, f.cos_face) for f in faces),
                    lidt.w_cm if lidt else None))
    if hit.peak_j_cm2 is not None:
        out.append((FLUENCE, max(_face_fluence(hit, f) for f in faces), lidt.j_cm2 if lidt else None))
    return out


def optic_load_figures(bench: Bench) -> dict[str, Figures]:
    """Per optic, the worst load any cavity or beam puts on its surfaces, and the largest of
    these over the LIDT figure of the same kind, as given (no safety factor, no pulse-length
    scaling, one-way: the coating-damage rule does those, and its findings are compared too)."""
    worst: dict[str, Figures] = {}

    def keep(oid: str, q: Quantity, value: float) -> None:
        figs = worst.setdefault(oid, {})
        key = (None, None, q.key)
        figs[key] = max(figs.get(key, value), value)

    for kind, paths in (("cavity", bench.solution.cavities), ("beam", bench.solution.beams)):
        for ident, result in paths.items():
            for i, hit in enumerate(result.hits):
                for q, value, rated in _hit_loads(bench, kind, ident, result, i):
                    keep(hit.optic, q, value)
                    if rated:
                        keep(hit.optic, LOAD, value / rated)
    return worst


RATIO = quantity("exposure_over_mpe", "exposure / MPE", power=True)
NOHD = quantity("nohd_mm", "hazard distance (NOHD)", "mm", "mm", power=True)
OD = quantity("od_required", "eyewear OD", tol=None, power=True)
OPEN = quantity("inside_enclosure", "inside an enclosure", tol=None, power=True)
PROBLEM = quantity("hazard_problem", "cannot be judged", tol=None, power=True)
CLASS = quantity("class_estimate", "class estimate", tol=None, power=True)


def _segment_id(ident: str, renames: Mapping[str, str]) -> str:
    """Hazard segments are named parent:A-B (A, B optics, or the source or cavity first),
    parent:A-onward, or like a stray parent/optic: the optic parts may be renamed."""
    if ":" not in ident:
        return _stray_id(ident, renames)
    parent, rest = ident.split(":", 1)
    if rest.endswith("-onward"):
        return f"{parent}:{renames.get(rest[:-7], rest[:-7])}-onward"
    for k in range(len(rest)):
        if rest[k] == "-" and (rest[:k] in renames or rest[k + 1:] in renames):
            return f"{parent}:{renames.get(rest[:k], rest[:k])}-{renames.get(rest[k + 1:], rest[k + 1:])}"
    return ident


def hazard_figures(bench: Bench) -> dict[str, Figures]:
    """Per segment of beam (README "Laser hazards"): exposure over the MPE, eyewear OD,
    hazard distance, whether an enclosure holds it, and why it cannot be judged; per source
    and cavity output its class estimate."""
    out: dict[str, Figures] = {}
    for seg in bench.hazards.segments:
        nohd = seg.nohd_mm if seg.nohd_mm is None or seg.nohd_mm != float("inf") else 1e12
        out[seg.id] = {(None, None, RATIO.key): seg.ratio, (None, None, NOHD.key): nohd,
                       (None, None, OD.key): seg.od, (None, None, OPEN.key): seg.inside_enclosure,
                       (None, None, PROBLEM.key): seg.problem}
    for src in bench.hazards.sources:
        out[f"{src.id} (class)"] = {(None, None, CLASS.key): src.class_estimate}
    return out


#: The groups compared, in the order reports show them.
COMPARATORS: list[Comparator] = [
    Comparator("placement", "Placement", "optic", placement_figures, rename=_optic_id, at_optics=False,
               at_word="on"),
    Comparator("cavities", "Cavities", "cavity", cavity_figures),
    Comparator("beams", "Beams", "beam", beam_figures),
    Comparator("strays", "Leak and secondary beams", "leak beam", stray_figures, rename=_stray_id),
    Comparator("optics", "Load on optics", "optic", optic_load_figures, rename=_optic_id, lists_items=False),
    Comparator("hazards", "Laser hazards", "segment", hazard_figures, rename=_segment_id),
]


# --- comparing ------------------------------------------------------------------------------

@dataclass
class Change:
    item: str                   # the id in the new revision
    at: str | None
    plane: str | None
    quantity: Quantity
    old: Any
    new: Any


@dataclass
class GroupDiff:
    comparator: Comparator
    added: list[str] = field(default_factory=list)
    removed: list[str] = field(default_factory=list)
    changes: list[Change] = field(default_factory=list)

    @property
    def empty(self) -> bool:
        return not (self.added or self.removed or self.changes)

    @property
    def power(self) -> bool:
        return any(c.quantity.power for c in self.changes)


def find_renames(old: Bench, new: Bench, thresholds: Thresholds) -> dict[str, str]:
    """Optic ids that changed and nothing else: an optic gone and one new of the same kind at
    the same place (within the position threshold), one to one."""
    gone = [o for o in old.layout.optics if o not in new.layout.optics]
    came = [o for o in new.layout.optics if o not in old.layout.optics]
    tol = thresholds.absolute.get("mm", 0.0)
    out: dict[str, str] = {}
    for g in gone:
        og = old.placement.optics[g]
        same = [c for c in came if c not in out.values() and new.layout.optics[c].kind == og.optic.kind
                and math.dist(new.placement.optics[c].point, og.point) <= tol]
        if len(same) == 1:
            out[g] = same[0]
    return out


def _rename(label: str | None, renames: Mapping[str, str]) -> str | None:
    if label is None:
        return None
    base, sep, n = label.partition("#")
    return renames.get(base, base) + sep + n


def compare_group(comp: Comparator, old: Bench | None, new: Bench | None, thresholds: Thresholds,
                  renames: Mapping[str, str]) -> GroupDiff:
    before = comp.extract(old) if old is not None else {}
    after = comp.extract(new) if new is not None else {}
    if comp.rename is not None:
        before = {comp.rename(k, renames): v for k, v in before.items()}
    if comp.at_optics:
        before = {k: {(_rename(at, renames), p, q): v for (at, p, q), v in figs.items()}
                  for k, figs in before.items()}
    before = {k: {key: renames.get(v, v) if QUANTITIES[key[2]].names_optic else v for key, v in figs.items()}
              for k, figs in before.items()}
    if comp.lists_items:
        out = GroupDiff(comp, added=[k for k in after if k not in before],
                        removed=[k for k in before if k not in after])
        items = [k for k in after if k in before]
    else:
        out = GroupDiff(comp)
        items = list(after) + [k for k in before if k not in after] if old is not None and new is not None else []
    for item in items:
        was, figs = before.get(item, {}), after.get(item, {})
        for key in list(was) + [k for k in figs if k not in was]:
            q = QUANTITIES[key[2]]
            a, b = was.get(key), figs.get(key)
            if _changed(thresholds, q, a, b):
                out.changes.append(Change(item, key[0], key[1], q, a, b))
    return out


def _changed(thresholds: Thresholds, q: Quantity, a, b) -> bool:
    if isinstance(a, float) and math.isnan(a):
        a = None
    if isinstance(b, float) and math.isnan(b):
        b = None
    return thresholds.changed(q, a, b)


@dataclass
class FindingsDiff:
    added: list[Finding] = field(default_factory=list)
    resolved: list[Finding] = field(default_factory=list)
    #: (old, new): same rule and targets, a different value, severity or waiver
    changed: list[tuple[Finding, Finding]] = field(default_factory=list)

    @property
    def empty(self) -> bool:
        return not (self.added or self.resolved or self.changed)


#: absolute thresholds for a finding's value, by the unit the rule names
_FINDING_UNITS = {"W": "w", "W/cm^2": "w_cm2", "W/cm": "w_cm", "J/cm^2": "j_cm2", "mm": "mm", "um": "um",
                  "deg": "deg", "Hz": "hz"}


def compare_findings(old: list[Finding], new: list[Finding], thresholds: Thresholds,
                     renames: Mapping[str, str]) -> FindingsDiff:
    """Matched by rule and targets (old targets renamed), then by the message with its
    numbers taken out (the two planes of one cavity stay apart), then in order."""
    def key(f: Finding, rename: bool) -> tuple:
        targets = tuple(renames.get(t, t) for t in f.targets) if rename else f.targets
        return f.rule, targets

    pool: dict[tuple, list[Finding]] = {}
    for f in old:
        pool.setdefault(key(f, True), []).append(f)
    out = FindingsDiff()
    unmatched = []
    for f in new:
        cands = pool.get(key(f, False), [])
        same = [c for c in cands if _words(c, renames) == _words(f, {})]
        pick = same[0] if same else None
        if pick is None:
            unmatched.append(f)
            continue
        cands.remove(pick)
        _pair(pick, f, thresholds, out)
    for f in unmatched:      # the wording changed too: pair what is left in order
        cands = pool.get(key(f, False), [])
        if cands:
            _pair(cands.pop(0), f, thresholds, out)
        else:
            out.added.append(f)
    out.resolved = [f for fs in pool.values() for f in fs]
    return out


def _words(f: Finding, renames: Mapping[str, str]) -> str:
    g = f.with_(targets=tuple(renames.get(t, t) for t in f.targets))
    for a, b in renames.items():
        g = g.with_(message=g.message.replace(f'"{a}"', f'"{b}"'))
    return _fingerprint(g)


def _pair(old: Finding, new: Finding, thresholds: Thresholds, out: FindingsDiff) -> None:
    q = Quantity("value", "value", new.unit or "", _FINDING_UNITS.get(new.unit or "", "fraction"))
    if (old.severity != new.severity or old.waived != new.waived or old.unit != new.unit
            or _changed(thresholds, q, old.value, new.value)):
        out.changed.append((old, new))


# --- one layout, two revisions ------------------------------------------------------------

@dataclass
class LayoutDiff:
    old_name: str | None        # None: the layout is new
    new_name: str | None        # None: the layout was deleted
    groups: list[GroupDiff] = field(default_factory=list)
    findings: FindingsDiff = field(default_factory=FindingsDiff)
    renamed: dict[str, str] = field(default_factory=dict)
    errors: list[str] = field(default_factory=list)
    fail_on: str = "error"
    #: unwaived findings of the new revision at or above the fail level that were not there
    #: (or not at that level, or waived) before
    introduced: list[Finding] = field(default_factory=list)
    #: ids of the rules that speak of power or hazards (their findings carry the caution)
    safety_rules: set[str] = field(default_factory=set)

    @property
    def status(self) -> str:
        return "added" if self.old_name is None else "deleted" if self.new_name is None else "changed"

    @property
    def empty(self) -> bool:
        return not self.renamed and self.findings.empty and all(g.empty for g in self.groups)


def diff_results(old: FileResult | None, new: FileResult | None, thresholds: Thresholds,
                 fail_on: str = "error", comparators: list[Comparator] | None = None) -> LayoutDiff:
    """Compare two checked revisions (None for a side that does not exist)."""
    out = LayoutDiff(old.file if old else None, new.file if new else None, fail_on=fail_on)
    for r in (old, new):
        if r is not None:
            out.errors += [e for e in r.errors if e not in out.errors]
    ob = old.bench if old else None
    nb = new.bench if new else None
    if (old is not None and ob is None) or (new is not None and nb is None):
        return out
    out.renamed = find_renames(ob, nb, thresholds) if ob is not None and nb is not None else {}
    out.groups = [compare_group(c, ob, nb, thresholds, out.renamed) for c in (comparators or COMPARATORS)]
    out.findings = compare_findings(old.findings if old else [], new.findings if new else [], thresholds,
                                    out.renamed)
    floor = SEVERITY_RANK[fail_on]

    def failing(f: Finding | None) -> bool:
        return f is not None and not f.waived and SEVERITY_RANK.get(f.severity, 0) >= floor

    out.introduced = [f for f in out.findings.added if failing(f)]
    out.introduced += [n for o, n in out.findings.changed if failing(n) and not failing(o)]
    return out


def exit_status(diffs: list[LayoutDiff]) -> int:
    """As ``check``: 2 for unusable input, 1 when a revision introduces a failing finding."""
    if any(d.errors for d in diffs):
        return 2
    return 1 if any(d.introduced for d in diffs) else 0


# --- from the command line's arguments ------------------------------------------------------

@dataclass(frozen=True)
class Side:
    name: str
    data: bytes | None = None          # a revision's text; None: read the file ``path``
    path: Path | None = None           # the working-tree path (its configuration applies)


def side_from_spec(spec: str) -> Side:
    """A file, or git's ``REV:path``; raises GitError or LayoutError."""
    if is_revision_spec(spec):
        rev = read_revision(spec)
        return Side(rev.name, rev.data, rev.worktree_path)
    path = Path(spec)
    if not path.exists():
        raise LayoutError("no such file (for a git revision write REV:path, e.g. HEAD:layouts/bench.toml)",
                          file=spec)
    return Side(spec, None, path)


@dataclass
class Options:
    config: str | None = None
    relative: float | None = None
    absolute: dict[str, float] = field(default_factory=dict)
    fail_on: str | None = None

    @classmethod
    def from_command_line(cls, config: str | None, relative: float | None, absolute: list[str],
                          fail_on: str | None) -> "Options":
        """``--absolute UNIT=VALUE`` items checked; ValueError says what was expected."""
        limits: dict[str, float] = {}
        for item in absolute:
            unit, _, text = (x.strip() for x in item.partition("="))
            try:
                value = float(text)
            except ValueError:
                value = -1.0
            if unit not in DIFF_ABSOLUTE or not 0.0 <= value < math.inf:
                raise ValueError(f"--absolute {item}: expected UNIT=NUMBER >= 0 with UNIT one of "
                                 f"{', '.join(DIFF_ABSOLUTE)}")
            limits[unit] = value
        if relative is not None and not 0.0 <= relative < math.inf:
            raise ValueError(f"--relative {relative}: expected a fraction >= 0, e.g. 0.01")
        return cls(config, relative, limits, fail_on)


def diff_sides(old: Side | None, new: Side | None, opts: Options) -> LayoutDiff:
    """Both sides checked with one configuration (``--config``, else the one found from
    the new side's working-tree path), so that a change of policy never shows as a change
    of the layout.  The checks run as ``check`` runs them (benchcheck/pool.py): where the
    configuration or an installed package brings plugin code, in watched worker processes,
    so that nothing a plugin does can hide a new finding or end this command."""
    from .pool import Job, run_jobs

    anchor = (new or old).path
    try:   # here only for the thresholds and the fail level: plugins are never imported here
        config = load_config(Path(opts.config) if opts.config else find_config(anchor))
    except LayoutError as exc:
        return LayoutDiff(old.name if old else None, new.name if new else None, errors=[str(exc)])
    sides = [s for s in (old, new) if s is not None]
    jobs = [Job(s.name, opts.config, start=str(anchor), keep_bench=True, data=s.data) for s in sides]
    outcome = run_jobs(jobs, len(jobs))
    results = iter(outcome.results)
    before = next(results) if old is not None else None
    after = next(results) if new is not None else None
    thresholds = Thresholds.from_config(config, opts.relative, opts.absolute)
    out = diff_results(before, after, thresholds, opts.fail_on or config.fail_on)
    out.safety_rules = {rid for rid, (rule, _) in outcome.rules.items() if rule.safety}
    return out


def diff_specs(old: str, new: str, opts: Options) -> LayoutDiff:
    try:
        a, b = side_from_spec(old), side_from_spec(new)
    except (GitError, LayoutError) as exc:
        return LayoutDiff(old, new, errors=[str(exc)])
    return diff_sides(a, b, opts)


def diff_revision(rev: str, paths: list[str], opts: Options) -> list[LayoutDiff]:
    """Every layout changed between ``rev`` and the working tree (under ``paths``)."""
    from .cli import NOT_LAYOUTS

    try:
        root, changed = changed_files(rev, paths)
    except GitError as exc:
        return [LayoutDiff(f"{rev}:", None, errors=[str(exc)])]

    def layout_name(p: str | None) -> bool:
        if p is None:
            return True
        parts = Path(p).parts
        return (p.endswith(".toml") and parts[-1] not in NOT_LAYOUTS
                and not any(x.startswith(".") for x in parts[:-1]))

    out = []
    for ch in changed:
        if not (layout_name(ch.old) and layout_name(ch.new)):
            continue
        try:
            old = None if ch.old is None else side_from_spec(f"{rev}:{ch.old}")
        except GitError as exc:
            out.append(LayoutDiff(f"{rev}:{ch.old}", ch.new, errors=[str(exc)]))
            continue
        if old is not None and _FULL_HASH.fullmatch(rev):    # a merge base in CI: short, as git shows it
            old = Side(f"{rev[:12]}:{ch.old}", old.data, old.path)
        new = None if ch.new is None else Side(_relative(root / ch.new), None, root / ch.new)
        out.append(diff_sides(old, new, opts))
    return out


_FULL_HASH = re.compile(r"[0-9a-f]{40}|[0-9a-f]{64}")


def _relative(path: Path) -> str:
    try:
        return str(path.resolve().relative_to(Path.cwd().resolve()))
    except ValueError:
        return str(path)
