"""The hazard assessment as text for the safety officer, as JSON (format 1) and as CSV.

The JSON is a contract: keys are documented in the README ("Laser hazards") and only
added to within a format version.  Irradiance limits are given per cm^2, as the standards'
tables print them.
"""

from __future__ import annotations

import csv
import io
import json
import math

import numpy as np

from .hazards import CAUTION, Assessment, Segment
from .textsafe import one_line

JSON_FORMAT = 1
M2_TO_CM2 = 1e4


def _num(x, digits: int = 6):
    if x is None:
        return None
    x = float(x)
    if not math.isfinite(x):
        return None
    return float(f"{x:.{digits}g}")


def _mpe_key(pulsed: bool) -> str:
    return "mpe_j_cm2" if pulsed else "mpe_w_cm2"


def segment_json(s: Segment) -> dict:
    out = {
        "kind": s.kind, "id": s.id, "parent": s.parent, "wavelength_nm": _num(s.wavelength_nm),
        "power_w": _num(s.power_w), "power_is_upper_bound": s.at_most,
        "pulse_energy_j": _num(s.pulse_energy_j), "pulse_s": _num(s.pulse_s),
        "rep_hz": _num(s.rep_hz), "w_um": _num(None if s.w_mm is None else s.w_mm * 1000.0),
        "start_mm": [_num(s.start[0]), _num(s.start[1])], "end_mm": [_num(s.end[0]), _num(s.end[1])],
        "length_mm": _num(s.length_mm), "directions": s.directions, "inside_enclosure": s.inside_enclosure,
        "exposure_s": _num(s.exposure_s), "aperture_mm": _num(s.aperture_mm),
        _mpe_key(s.pulsed): _num(None if s.mpe is None else s.mpe / M2_TO_CM2),
        "mpe_rule": s.mpe_rule, "mpe_source": s.mpe_source,
        "exposure_over_mpe": _num(s.ratio), "od_required": s.od,
        "nohd_mm": _num(s.nohd_mm), "nohd_unbounded": s.nohd_mm is not None and math.isinf(s.nohd_mm),
        "reaches": list(s.reaches),
        "ends": None if s.end_kind is None else {"kind": s.end_kind, "id": s.end_id},
        "problem": s.problem, "notes": list(s.notes),
    }
    return out


def assessment_json(layout_file: str, bench_name: str, a: Assessment) -> dict:
    return {
        "format": JSON_FORMAT,
        "layout": layout_file,
        "bench": bench_name,
        "wavelengths": [{
            "wavelength_nm": _num(w.wavelength_nm), "exposure_s": _num(w.exposure_s), "pulsed": w.pulsed,
            _mpe_key(w.pulsed): _num(None if w.mpe is None else w.mpe / M2_TO_CM2), "mpe_source": w.mpe_source,
            "max_power_w": _num(w.max_power_w), "max_pulse_energy_j": _num(w.max_pulse_energy_j),
            "od_required": w.od, "class_estimate": w.class_estimate, "problem": w.problem,
        } for w in a.wavelengths],
        "sources": [{
            "id": s.id, "kind": s.kind, "wavelength_nm": _num(s.wavelength_nm), "power_w": _num(s.power_w),
            "pulse_energy_j": _num(s.pulse_energy_j), "class_estimate": s.class_estimate,
            "detail": _plain(s.detail),
        } for s in a.sources],
        "segments": [segment_json(s) for s in a.segments],
        "caution": CAUTION,
    }


def _plain(x):
    """Detail dictionaries as JSON-safe values (numbers rounded, non-finite as null)."""
    if isinstance(x, dict):
        return {str(k): _plain(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_plain(v) for v in x]
    if isinstance(x, (bool, np.bool_)) or x is None or isinstance(x, str):
        return x if not isinstance(x, np.bool_) else bool(x)
    try:
        return _num(float(x))
    except (TypeError, ValueError):
        return str(x)


def dumps(docs: list[dict], many: bool) -> str:
    payload = {"format": JSON_FORMAT, "layouts": docs, "caution": CAUTION} if many else docs[0]
    return json.dumps(payload, indent=2, allow_nan=False) + "\n"


# --- text --------------------------------------------------------------------------------

def _power(p, e) -> str:
    if e is not None:
        return f"{e:.3g} J/pulse" + ("" if p is None else f" ({p:.3g} W avg)")
    return "unknown" if p is None else f"{p:.3g} W"


def _nohd(s: Segment) -> str:
    if s.nohd_mm is None:
        return "-"
    if math.isinf(s.nohd_mm):
        return "unbounded"
    return f"{s.nohd_mm / 1000:.3g} m" if s.nohd_mm >= 1000 else f"{s.nohd_mm:.0f} mm"


def _table(head: list[str], rows: list[list[str]]) -> list[str]:
    widths = [max(len(r[i]) for r in [head] + rows) for i in range(len(head))]
    fmt = "  ".join("{:<%d}" % w for w in widths)
    return ["  " + fmt.format(*head).rstrip()] + ["  " + fmt.format(*r).rstrip() for r in rows]


def assessment_text(layout_file: str, bench_name: str, a: Assessment) -> str:
    lines = [f"{layout_file}: {bench_name}", "", "per wavelength (eyewear must cover work with enclosures open):"]
    rows = []
    for w in a.wavelengths:
        unit = "J/cm^2" if w.pulsed else "W/cm^2"
        mpe = "none" if w.mpe is None else f"{w.mpe / M2_TO_CM2:.3g} {unit}"
        rows.append([f"{w.wavelength_nm:g} nm", f"{w.exposure_s:g} s", mpe + (" (configured)" if w.mpe_source ==
                                                                             "configuration" else ""),
                     _power(w.max_power_w, w.max_pulse_energy_j), "-" if w.od is None else str(w.od),
                     w.class_estimate or "-"])
    lines += _table(["wavelength", "exposure", "MPE", "worst power", "OD needed", "class (est.)"], rows)
    problems = [w for w in a.wavelengths if w.problem]
    for w in problems:
        lines.append(f"  ! {w.wavelength_nm:g} nm: {w.problem}")
    lines += ["", "class estimates (simplified; not the manufacturer's classification):"]
    rows = [[s.id, s.kind, f"{s.wavelength_nm:g} nm", _power(s.power_w, s.pulse_energy_j), s.class_estimate or "-"]
            for s in a.sources]
    lines += _table(["id", "kind", "wavelength", "power", "class (est.)"], rows) if rows else ["  (no sources)"]
    open_segs = [s for s in a.segments if not s.inside_enclosure]
    lines += ["", f"on open bench ({len(open_segs)} of {len(a.segments)} segments; the rest are inside enclosures):"]
    rows = []
    for s in open_segs:
        ratio = "?" if s.ratio is None else f"{s.ratio:.3g}"
        reach = ", ".join("table edge" if r["kind"] == "table-edge" else r["id"] for r in s.reaches) or "-"
        rows.append([s.kind, s.id, f"{s.wavelength_nm:g} nm",
                     ("<= " if s.at_most else "") + _power(s.power_w, s.pulse_energy_j),
                     f"{s.length_mm:.0f} mm", ratio, "-" if s.od is None else str(s.od), _nohd(s), reach])
    lines += _table(["kind", "segment", "wavelength", "power", "length", "exposure/MPE", "OD", "hazard dist.",
                     "reaches"], rows) if rows else ["  (none)"]
    for s in a.segments:
        if s.problem:
            lines.append(f"  ! {s.id}: cannot be judged: {s.problem}")
    lines += ["", CAUTION, ""]
    return "\n".join(one_line(line) for line in lines)


# --- CSV ---------------------------------------------------------------------------------

CSV_COLUMNS = ("layout", "kind", "id", "parent", "wavelength_nm", "power_w", "power_is_upper_bound", "pulse_energy_j",
               "inside_enclosure",
               "length_mm", "w_um", "exposure_s", "aperture_mm", "mpe_w_cm2", "mpe_j_cm2", "exposure_over_mpe",
               "od_required", "nohd_mm", "reaches", "problem")


def assessment_csv(docs: list[dict]) -> str:
    buf = io.StringIO()
    buf.write(f"# {CAUTION}\n")      # a comment line above the header, for readers that skip them
    writer = csv.writer(buf, lineterminator="\n")
    writer.writerow(CSV_COLUMNS)
    for doc in docs:
        for s in doc["segments"]:
            row = dict(s, layout=doc["layout"])
            row["reaches"] = ";".join(r["id"] or r["kind"] for r in s["reaches"])
            row["nohd_mm"] = "inf" if s["nohd_unbounded"] else s["nohd_mm"]
            writer.writerow(["" if row.get(c) is None else row.get(c) for c in CSV_COLUMNS])
    return buf.getvalue()
