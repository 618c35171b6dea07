"""How far a cavity's axis walks at each optic when one of its mirrors tilts.

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
from .abcd import PLANES
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


def _kick_positions(steps: list, hits: list, role: str, optic: str) -> list[tuple[int, int]]:
    """(step index, hit index) where the light reflects from ``optic`` in the round trip.

    Out (and once round a ring): at the hit's marker.  Back in a linear cavity (a fold met
    again on the way back, hit i between the ends): right after the backward air gap i,
    where ``unfold.cavity_train`` puts element i on the return."""
    out = []
    n = len(hits)
    for k, st in enumerate(steps):
        if isinstance(st, Marker) and hits[st.hit].optic == optic:
            out.append((k, st.hit))
        elif role == "linear" and isinstance(st, Space) and not st.forward and st.gap is not None:
            i = st.gap
            if 0 < i < n - 1 and hits[i].optic == optic:
                out.append((k + 1, i))
    return out


def _step3(st) -> np.ndarray:
    return misalign.augment(st.matrix())


def axis_response(cavity, path, plane: str, optic: str) -> AxisResponse | None:
    """The axis per unit tilt of ``optic`` (every reflection from it) in ``plane``; None
    where the plane has no mode (then there is no axis to speak of)."""
    mode = cavity.modes[plane]
    if not mode.stable:
        return None
    train = cavity.trains[plane]
    steps = train.steps
    hits = path.hits
    kicks = {}
    for k, i in _kick_positions(steps, hits, path.role, optic):
        kicks.setdefault(k, 0.0)
        kicks[k] += float(misalign.mirror_tilt_kick(1.0, hits[i].aoi, plane))
    if not kicks:
        return None
    # round trip with the kicks, then the axis at the start
    total = np.eye(3)
    for k, st in enumerate(steps):
        if k in kicks:
            total = misalign.kick(kicks[k]) @ total
        if not isinstance(st, Marker):
            total = _step3(st) @ total
    if len(steps) in kicks:
        total = misalign.kick(kicks[len(steps)]) @ total
    ray = misalign.axis_ray(total)
    if not np.all(np.isfinite(ray)):
        return None
    per_hit = {}
    leaving_first = path.role == "linear"   # the first end mirror: report the ray leaving it
    for k, st in enumerate(steps):
        if k in kicks and not isinstance(st, Marker):
            ray = misalign.apply(misalign.kick(kicks[k]), ray)
        if isinstance(st, Marker):
            if st.hit not in per_hit:
                k_next = next((s.k for s in steps[k + 1:] if isinstance(s, Space)), 1.0)
                shift = float(ray[0]) * st.scale * MM_PER_RAD_TO_UM_PER_URAD
                tilt = float(ray[1]) * st.scale * k_next
                per_hit[st.hit] = [shift, tilt]
            if k in kicks:
                ray = misalign.apply(misalign.kick(kicks[k]), ray)
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


def tilting_mirrors(layout, path) -> list[str]:
    """Ids of the mirrors and splitters a cavity reflects from, in path order."""
    return list(dict.fromkeys(h.optic for h in path.hits
                              if h.action == "reflect" and layout.optics[h.optic].kind in ("mirror", "splitter")))


def cavity_alignment(layout, cavity, path) -> list[AxisResponse]:
    """Every reflecting optic of a cavity, both planes (planes without a mode left out)."""
    out = []
    for optic in tilting_mirrors(layout, path):
        for plane in PLANES:
            r = axis_response(cavity, path, plane, optic)
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
