"""The solved bench as the versioned JSON beam table (docs/design.md §6) and as text.

The JSON is a contract other programs read: keys and units are fixed here and
documented in the README.  Radii are micrometres, positions millimetres, powers watts.
Anything unknown (an unstable plane, a cavity without power data) is ``null``.
"""

from __future__ import annotations

import math

from .abcd import PLANES, SAGITTAL, TANGENTIAL
from .resonator import STATUS_LABEL, STATUS_TEXT
from .solve import BeamResult, CavityResult, HitResult, Solution, StrayResult
from .textsafe import one_line

JSON_FORMAT = 1
SAFETY_CAUTION = (
    "Power figures are advisory. The laser safety officer, IEC 60825-1 / ANSI Z136.1 and local "
    "regulations decide what is safe."
)


def _num(x, digits: int = 9):
    if x is None:
        return None
    x = float(x)
    if math.isnan(x):
        return None
    if math.isinf(x):
        return None
    return float(f"{x:.{digits}g}")


def _um(w_mm):
    return None if w_mm is None else _num(w_mm * 1000.0)


def _hit_json(h: HitResult) -> dict:
    out = {
        "optic": h.optic,
        "s_mm": _num(h.s),
        "aoi_deg": _num(h.aoi_deg),
        "w_um": {p: _um(h.w.get(p)) for p in PLANES},
        "power_w": _num(h.power_w),
        "peak_w_cm2": _num(h.peak_w_cm2),
        "kind": h.kind,
        "action": h.action,
    }
    if h.peak_j_cm2 is not None:
        out["peak_j_cm2"] = _num(h.peak_j_cm2)
    if h.pulse_peak_w_cm2 is not None:
        out["pulse_peak_w_cm2"] = _num(h.pulse_peak_w_cm2)
    if h.counter_propagating:
        out["counter_propagating"] = True
    return out


def _waists_json(waists) -> list:
    return [{"plane": w.plane, "w_um": _um(w.w), "s_mm": _num(w.s)} for w in waists]


def cavity_json(c: CavityResult) -> dict:
    out = {
        "id": c.id,
        "kind": c.kind,
        "stable": {p: c.stable(p) for p in PLANES},
        "m": {p: _num(c.modes[p].m, 12) for p in PLANES},
        "status": {p: c.modes[p].status for p in PLANES},
        "round_trip_mm": _num(c.round_trip_mm),
        "round_trip_s": _num(c.round_trip_s),
        "fsr_hz": _num(c.fsr_hz),
        "gouy_deg": {p: _num(c.gouy_deg(p)) for p in PLANES},
        "tms_hz": {p: _num(c.tms_hz(p)) for p in PLANES},
        "circulating_w": _num(c.circulating_w),
        "passive": c.passive,
        "hits": [_hit_json(h) for h in c.hits],
        "waists": _waists_json(c.waists),
        "notes": list(c.notes),
    }
    if c.enhancement is not None:
        e = c.enhancement
        out["enhancement"] = {
            "finesse": _num(e.finesse), "linewidth_hz": _num(e.linewidth_hz),
            "input_transmission": _num(e.input_transmission), "rest_loss": _num(e.rest_loss),
            "coupling": e.coupling, "buildup": _num(e.buildup),
            "reflected_fraction": _num(e.reflected), "transmitted_fraction": _num(e.transmitted),
            "input_w": _num(e.input_w), "seeds": list(e.seeds), "delivered_w": _num(e.delivered_w),
            "mode_match": _num(e.mode_match), "declared_input_w": _num(e.declared_w),
        }
    if c.thermal is not None:
        t = c.thermal
        out["thermal_lens"] = {
            "stable_over_range": dict(t.stable),
            "m_range": {p: [_num(v, 12) for v in t.m_range[p]] for p in PLANES},
            "design_f_mm": {cid: {p: _num(f) for p, f in d.items()} for cid, d in t.design_f.items()},
        }
    return out


def stray_json(r: StrayResult) -> dict:
    st = r.stray
    end = st.end
    return {
        "id": st.id, "kind": st.kind, "from": st.parent, "optic": st.optic,
        "power_w": _num(r.power_w), "power_is_upper_bound": r.at_most,
        "heading_deg": _num(math.degrees(math.atan2(st.direction[1], st.direction[0]))),
        "ends": {"kind": end.zone_kind or end.kind, "id": end.id, "length_mm": _num(end.length),
                 "at_mm": [_num(end.point[0]), _num(end.point[1])]},
        "passes": list(st.via),
        "power_at_end_w": _num(r.end_power_w),
    }


def stray_text(r: StrayResult) -> str:
    st, end = r.stray, r.stray.end
    power = "power not known" if r.power_w is None else (("at most " if r.at_most else "") + f"{r.power_w:.3g} W")
    what = {"table-edge": "leaves the table", "footprint": f"meets {end.id}", "zone": f"meets {end.zone_kind} {end.id}"}
    via = ""
    if st.via:
        left = "power not known" if r.end_power_w is None else f"{r.end_power_w:.3g} W"
        via = f", passes {', '.join(st.via)} ({left} goes on)"
    return f"  {st.kind} {st.id}: {power}{via}, {what[end.kind]} at ({end.point[0]:.0f}, {end.point[1]:.0f}) mm"


def beam_json(b: BeamResult) -> dict:
    return {
        "id": b.id,
        "from": b.origin,
        "power_w": _num(b.power_w),
        "hits": [_hit_json(h) for h in b.hits],
        "waists": _waists_json(b.waists),
        "ends": _end_json(b),
        "notes": list(b.notes),
    }


def _end_json(b: BeamResult) -> dict:
    """Where the beam stops: on its last optic (a dump or detector), or traced on."""
    last = b.hits[-1]
    if b.into is not None:
        return {"kind": "cavity", "id": b.into, "s_mm": _num(last.s), "at_mm": None,
                "mode_match": _num(b.mode_match)}
    if b.tail is None:
        return {"kind": last.kind, "id": last.optic, "s_mm": _num(last.s), "at_mm": None}
    t = b.tail
    return {"kind": t.zone_kind or t.kind, "id": t.id, "s_mm": _num(last.s + t.length),
            "at_mm": [_num(t.point[0]), _num(t.point[1])]}


def solution_json(sol: Solution) -> dict:
    """The beam table of docs/design.md §6, with a few extra keys (documented in the README)."""
    issues = [
        {"kind": i.kind, "message": i.message, "targets": list(i.targets), "line": i.loc.line,
         "value": _num(i.value), "limit": _num(i.limit), "unit": i.unit}
        for i in sol.trace.issues
    ]
    return {
        "format": JSON_FORMAT,
        "layout": sol.layout.file,
        "bench": sol.layout.bench.name,
        "cavities": [cavity_json(c) for c in sol.cavities.values()],
        "beams": [beam_json(b) for b in sol.beams.values()],
        "strays": [stray_json(r) for r in sol.strays],
        "geometry": issues,
        "notes": list(sol.notes),
        "caution": SAFETY_CAUTION,
    }


# --- text -------------------------------------------------------------------------------

def fmt(x, spec: str, none: str = "-") -> str:
    if x is None or (isinstance(x, float) and (math.isnan(x) or math.isinf(x))):
        return none
    return format(x, spec)


def fmt_si(x: float | None, unit: str, none: str = "-") -> str:
    """A frequency or power with its SI prefix (k, M, G)."""
    if x is None or math.isinf(x) or math.isnan(x):
        return none
    for factor, prefix in ((1e9, "G"), (1e6, "M"), (1e3, "k")):
        if abs(x) >= factor:
            return f"{x / factor:.4g} {prefix}{unit}"
    return f"{x:.4g} {unit}"


def _hits_table(hits: list[HitResult], pulsed: bool) -> list[str]:
    in_pulse = any(h.pulse_peak_w_cm2 is not None for h in hits)
    head = (["optic", "s [mm]", "AOI [deg]", "w_t [um]", "w_s [um]", "w_t/w_s", "P [W]"]
            + (["peak of avg P [W/cm^2]", "peak fluence [J/cm^2]"] if pulsed else ["peak [W/cm^2]"])
            + (["peak in pulse [W/cm^2]"] if in_pulse else []))
    rows = []
    for h in hits:
        wt, ws = h.w.get(TANGENTIAL), h.w.get(SAGITTAL)
        ratio = wt / ws if wt and ws else None
        row = [h.optic, fmt(h.s, ".2f"), fmt(h.aoi_deg, ".2f"), fmt(None if wt is None else wt * 1e3, ".1f"),
               fmt(None if ws is None else ws * 1e3, ".1f"), fmt(ratio, ".3f"), fmt(h.power_w, ".4g"),
               fmt(h.peak_w_cm2, ".3e")]
        if pulsed:
            row.append(fmt(h.peak_j_cm2, ".3e"))
        if in_pulse:
            row.append(fmt(h.pulse_peak_w_cm2, ".3e"))
        rows.append(row)
    return _grid(head, rows)


def _grid(head, rows) -> list[str]:
    widths = [max(len(str(x)) for x in col) for col in zip(head, *rows)]
    fmt = lambda r: "  ".join(str(x).rjust(w) if i else str(x).ljust(w) for i, (x, w) in enumerate(zip(r, widths)))  # noqa: E731
    return ["  " + fmt(head), "  " + "  ".join("-" * w for w in widths)] + ["  " + fmt(r) for r in rows]


def _waist_lines(waists) -> list[str]:
    if not waists:
        return ["  waists: none inside the path"]
    parts = [f"{w.plane}: {w.w * 1e3:.1f} um at s = {w.s:.2f} mm" for w in waists]
    return ["  waists: " + "; ".join(parts)]


def cavity_text(c: CavityResult) -> list[str]:
    lines = [f"cavity {c.id} ({c.kind}{', passive' if c.passive else ''})"]
    for p, name in ((TANGENTIAL, "tangential"), (SAGITTAL, "sagittal")):
        mode = c.modes[p]
        margin = 1.0 - abs(mode.m) if mode.margin is None else mode.margin
        shown = f"{margin:.4f}" if abs(margin) >= 1e-4 or margin == 0.0 else f"{margin:.2e}"
        state = STATUS_LABEL[mode.status]
        lines.append(f"  {name:<10}  m = {mode.m:+.6f}  margin 1-|m| = {shown}  {state}"
                     + (f"  Gouy {c.gouy_deg(p):.2f} deg (mod 360)  TMS {fmt_si(c.tms_hz(p), 'Hz')}" if mode.gouy is not None else ""))
        if mode.status != "stable":
            lines.append(f"    {STATUS_TEXT[mode.status]}")
    lines.append(f"  round trip {c.round_trip_mm:.3f} mm (optical)  FSR {fmt_si(c.fsr_hz, 'Hz')}  "
                 + (f"circulating {c.circulating_w:.4g} W one-way" if c.circulating_w is not None
                    else "circulating power not given (no output or input power in the layout, no seed beam with a power)"))
    if c.enhancement is not None:
        lines += _enhancement_lines(c)
    if c.thermal is not None:
        t = c.thermal
        for p in PLANES:
            lo, hi = t.m_range[p]
            lines.append(f"  thermal-lens range, {p}: m from {lo:+.4f} to {hi:+.4f}: "
                         + ("stable over the whole range" if t.stable[p] else "NOT stable over the whole range"))
    lines += _hits_table(c.hits, c.pulsed)
    if c.kind == "linear":
        lines.append("  (linear cavity: the counter-propagating beams overlap at every optic; power is one-way)")
    lines += _waist_lines(c.waists)
    lines += [f"  note: {n}" for n in c.notes]
    return lines


def _enhancement_lines(c: CavityResult) -> list[str]:
    e = c.enhancement
    fed = (f"{e.input_w:.4g} W in the cavity's mode" if e.input_w is not None else "no input power")
    return [
        f"  on resonance: finesse {fmt(e.finesse, '.1f')}, linewidth {fmt_si(e.linewidth_hz, 'Hz')} (FWHM), "
        f"build-up {fmt(e.buildup, '.4g')} ({fed})",
        f"  input coupler T {e.input_transmission * 100:.3g} % against the rest of the round-trip loss "
        f"{e.rest_loss * 100:.3g} %: {e.coupling}; of the mode-matched light {fmt(e.reflected * 100, '.3g')} % is "
        f"reflected and {fmt(e.transmitted * 100, '.3g')} % leaves through the other mirrors",
    ]


def _end_text(b: BeamResult) -> str:
    last = b.hits[-1]
    if b.into is not None:
        match = f"; mode match {b.mode_match:.4f}" if b.mode_match is not None else ""
        return f"  coupled into cavity {b.into} through {last.optic}{match}"
    if b.tail is None:
        return f"  ends on {last.kind} {last.optic}"
    t = b.tail
    where = f"at ({t.point[0]:.1f}, {t.point[1]:.1f}) mm, {t.length:.1f} mm past {last.optic}"
    if t.kind == "table-edge":
        return f"  ends on no dump or detector: traced on, it leaves the table {where}"
    if t.kind == "zone":
        return f"  ends on no dump or detector: traced on, it meets {t.zone_kind} zone {t.id} {where}"
    return f"  ends on no dump or detector: traced on, it meets the mount of {t.id} {where}"


def beam_text(b: BeamResult) -> list[str]:
    power = f"{b.power_w:.4g} W" if b.power_w is not None else "power not given"
    lines = [f"beam {b.id} (from {b.origin}, {power})"]
    pulsed = any(h.peak_j_cm2 is not None for h in b.hits)
    lines += _hits_table(b.hits, pulsed)
    lines.append(_end_text(b))
    lines += _waist_lines(b.waists)
    lines += [f"  note: {n}" for n in b.notes]
    return lines


def solution_text(sol: Solution) -> str:
    lines = [f"{sol.layout.file}: {sol.layout.bench.name}", ""]
    for c in sol.cavities.values():
        lines += cavity_text(c) + [""]
    for b in sol.beams.values():
        lines += beam_text(b) + [""]
    if sol.strays:
        lines.append("leak and secondary beams:")
        lines += [stray_text(r) for r in sol.strays]
        lines.append("")
    if sol.trace.issues:
        lines.append("geometry:")
        lines += [f"  {i.loc.file}:{i.loc.line}:{i.loc.column}: {i.message}" for i in sol.trace.issues]
        lines.append("")
    if sol.notes:
        lines += ["notes:"] + [f"  {n}" for n in sol.notes] + [""]
    lines.append(SAFETY_CAUTION)
    return "\n".join(one_line(line) for line in lines).rstrip() + "\n"
