"""How far a cavity's axis walks at each optic when one of its mirrors (or a plate or
crystal in it) tilts.

Reads the unfolded round trip of a solved cavity (``solve.CavityResult.trains``), turns
each step into a 3x3 matrix (``misalign``), adds the kick of a tilted mirror wherever the
light reflects from it (twice for a fold mirror of a linear cavity: out and back, the
same kick in the unfolded frame of each pass, as reciprocity requires) and solves for the
ray the round trip reproduces: the misaligned axis.  Its height and slope at every optic,
per unit tilt, are the sensitivities.  Heights are physical (inside a Brewster element
scaled like the beam radius), slopes are physical angles of the axis travelling the way
the path is listed (leaving the first mirror of a linear cavity, arriving at the others).

Linear: the shift is exact to first order in the tilt; the tilt changes nothing else.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import misalign
from .abcd import PLANES, SAGITTAL
from .trace import REFLECT
from .unfold import Marker, Space

#: mm/rad -> um/urad
MM_PER_RAD_TO_UM_PER_URAD = 1e-3


@dataclass
class AxisResponse:
    """The axis of one cavity, per unit tilt of one mirror in one plane, at every hit."""

    mirror: str
    plane: str
    shift_um_per_urad: dict        # optic id -> axis height per tilt (um/urad), first hit of the optic
    tilt_urad_per_urad: dict       # optic id -> axis slope per tilt (urad/urad)
    #: hit index -> (shift, tilt) in the same units, for rules that look at every hit
    per_hit: dict


def _kick_positions(steps: list, hits: list, role: str, optic: str) -> list[tuple[int, int, float]]:
    """(step index, hit index, sign) where a tilt of ``optic`` acts in the round trip.

    A reflection (mirror, splitter): out (and once round a ring) at the hit's marker; back
    in a linear cavity (a fold met again, hit i between the ends) right after the backward
    air gap i, where ``unfold.cavity_train`` puts element i on the return; the same sign.
    A tilted plate or crystal shifts the ray where it leaves: before the air gap after it
    (gap i) on the way out, before gap i - 1 on the way back, with the opposite sign (the
    return retraces the jog)."""
    out = []
    n = len(hits)
    for k, st in enumerate(steps):
        if isinstance(st, Marker) and hits[st.hit].optic == optic and hits[st.hit].action == REFLECT:
            out.append((k, st.hit, 1.0))
        if not isinstance(st, Space) or st.gap is None:
            continue
        i = st.gap
        if st.forward and hits[i].optic == optic and hits[i].action != REFLECT:
            out.append((k, i, 1.0))
        if role == "linear" and not st.forward:
            if 0 < i < n - 1 and hits[i].optic == optic and hits[i].action == REFLECT:
                out.append((k + 1, i, 1.0))
            if 0 < i + 1 < n - 1 and hits[i + 1].optic == optic and hits[i + 1].action != REFLECT:
                out.append((k, i + 1, -1.0))
    return out


def _tilt_action(layout, hit, plane: str) -> tuple[float, float] | None:
    """(offset mm, kick) per radian of tilt of the element at ``hit``; None where this
    model has none (a tilted plate or crystal off normal incidence, sagittal)."""
    optic = layout.optics[hit.optic]
    if hit.action == REFLECT:
        return 0.0, float(misalign.mirror_tilt_kick(1.0, hit.aoi, plane))
    if optic.kind not in ("plate", "crystal"):
        return 0.0, 0.0      # a mirror's substrate passed through: its tilt is not modelled
    if plane == SAGITTAL and hit.aoi > 1e-12:
        return None
    if optic.kind == "plate":
        thickness = optic.thickness
    else:
        thickness = optic.length * float(np.cos(np.arcsin(np.sin(hit.aoi) / optic.index)))
    return float(misalign.plate_tilt_offset(thickness, optic.index, hit.aoi)), 0.0


def _step3(st) -> np.ndarray:
    return misalign.augment(st.matrix())


def axis_response(cavity, path, plane: str, optic: str, layout=None) -> AxisResponse | None:
    """The axis per unit tilt of ``optic`` (every reflection from it, or every pass through
    a tilted plate or crystal) in ``plane``; None where the plane has no mode (then there is
    no axis to speak of)."""
    mode = cavity.modes[plane]
    if not mode.stable:
        return None
    train = cavity.trains[plane]
    steps = train.steps
    hits = path.hits
    kicks: dict = {}
    for k, i, sign in _kick_positions(steps, hits, path.role, optic):
        if hits[i].action == REFLECT:
            action = (0.0, float(misalign.mirror_tilt_kick(1.0, hits[i].aoi, plane)))
        else:
            action = None if layout is None else _tilt_action(layout, hits[i], plane)
            if action is None:
                return None
        e, f = kicks.get(k, (0.0, 0.0))
        kicks[k] = (e + sign * action[0], f + sign * action[1])
    if not kicks:
        return None
    # round trip with the kicks, then the axis at the start
    total = np.eye(3)
    for k, st in enumerate(steps):
        if k in kicks:
            total = misalign.kick(kicks[k][1], kicks[k][0]) @ total
        if not isinstance(st, Marker):
            total = _step3(st) @ total
    if len(steps) in kicks:
        total = misalign.kick(kicks[len(steps)][1], kicks[len(steps)][0]) @ total
    ray = misalign.axis_ray(total)
    if not np.all(np.isfinite(ray)):
        return None
    per_hit = {}
    leaving_first = path.role == "linear"   # the first end mirror: report the ray leaving it
    for k, st in enumerate(steps):
        if k in kicks and not isinstance(st, Marker):
            ray = misalign.apply(misalign.kick(kicks[k][1], kicks[k][0]), ray)
        if isinstance(st, Marker):
            if st.hit not in per_hit:
                k_next = next((s.k for s in steps[k + 1:] if isinstance(s, Space)), 1.0)
                shift = float(ray[0]) * st.scale * MM_PER_RAD_TO_UM_PER_URAD
                tilt = float(ray[1]) * st.scale * k_next
                per_hit[st.hit] = [shift, tilt]
            if k in kicks:
                ray = misalign.apply(misalign.kick(kicks[k][1], kicks[k][0]), ray)
            continue
        if leaving_first and isinstance(st, Space):
            per_hit[0][1] = float(ray[1]) * st.scale * st.k
            leaving_first = False
        ray = misalign.apply(_step3(st), ray)
    shift, tilt = {}, {}
    for i, h in enumerate(hits):
        if i in per_hit and h.optic not in shift:
            shift[h.optic], tilt[h.optic] = per_hit[i]
    return AxisResponse(optic, plane, shift, tilt, per_hit)


def tilting_elements(layout, path) -> list[str]:
    """Ids of the mirrors and splitters a cavity reflects from, then the plates and crystals
    it passes, in path order."""
    mirrors = [h.optic for h in path.hits
               if h.action == REFLECT and layout.optics[h.optic].kind in ("mirror", "splitter")]
    slabs = [h.optic for h in path.hits if h.action != REFLECT and layout.optics[h.optic].kind in ("plate", "crystal")]
    return list(dict.fromkeys(mirrors + slabs))


def cavity_alignment(layout, cavity, path) -> list[AxisResponse]:
    """Every reflecting optic, plate and crystal of a cavity, both planes (planes without a
    mode, and sagittal tilts of elements met off normal incidence, left out)."""
    out = []
    for optic in tilting_elements(layout, path):
        for plane in PLANES:
            r = axis_response(cavity, path, plane, optic, layout)
            if r is not None:
                out.append(r)
    return out


def alignment_json(responses: list[AxisResponse]) -> list[dict]:
    return [{"mirror": r.mirror, "plane": r.plane,
             "axis_shift_um_per_urad": {k: _round(v) for k, v in r.shift_um_per_urad.items()},
             "axis_tilt_urad_per_urad": {k: _round(v) for k, v in r.tilt_urad_per_urad.items()}}
            for r in responses]


def _round(x: float) -> float:
    return float(f"{x:.6g}")
