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

import math
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


def _affine(st) -> tuple[float, float, float, float]:
    """(A, B, C, D) of one step of a solved (scalar) train as plain floats."""
    m = st.matrix()
    return float(m[0, 0]), float(m[0, 1]), float(m[1, 0]), float(m[1, 1])


def _step_entries(steps: list) -> list:
    """Each step's (A, B, C, D), None for a marker: read once per train, shared by every
    tilting optic (a free space needs no matrix: A = D = 1, C = 0, B = reduced length)."""
    out = []
    for st in steps:
        if isinstance(st, Marker):
            out.append(None)
        elif isinstance(st, Space):
            out.append((1.0, float(st.length * st.k), 0.0, 1.0))
        else:
            out.append(_affine(st))
    return out


def _next_k(steps: list) -> list[float]:
    """For each step, the reduced-length factor k of the first free space after it (1 where
    none follows): the slope of the ray leaving a marker is read in that medium."""
    out = [1.0] * len(steps)
    k_next = 1.0
    for i in range(len(steps) - 1, -1, -1):
        out[i] = k_next
        if isinstance(steps[i], Space):
            k_next = steps[i].k
    return out


def axis_response(cavity, path, plane: str, optic: str, layout=None, _entries=None) -> AxisResponse | None:
    """The axis per unit tilt of ``optic`` (every reflection from it, or every pass through
    a tilted plate or crystal) in ``plane``; None where the plane has no mode (then there is
    no axis to speak of).

    Works on plain floats: a round trip is a few dozen 3x3 products of one ray's worth of
    numbers, where numpy's per-call cost would dominate.  Each matrix [[A, B, E], [C, D, F],
    [0, 0, 1]] is kept as (A, B, C, D, E, F); a kick is the identity with (E, F) set."""
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
    entries = _step_entries(steps) if _entries is None else _entries
    # round trip with the kicks (a kick before the step at its index), then the axis at the start
    ta, tb, tc, td, te, tf = 1.0, 0.0, 0.0, 1.0, 0.0, 0.0
    for k, m in enumerate(entries):
        if k in kicks:
            ke, kf = kicks[k]
            te, tf = te + ke, tf + kf
        if m is not None:
            a, b, c, d = m
            ta, tb, tc, td, te, tf = (a * ta + b * tc, a * tb + b * td, c * ta + d * tc, c * tb + d * td,
                                      a * te + b * tf, c * te + d * tf)
    if len(steps) in kicks:
        ke, kf = kicks[len(steps)]
        te, tf = te + ke, tf + kf
    ray = _axis_ray(ta, tb, tc, td, te, tf)
    if ray is None:
        return None
    y, v = ray
    per_hit = {}
    k_after = _next_k(steps)
    leaving_first = path.role == "linear"   # the first end mirror: report the ray leaving it
    for k, st in enumerate(steps):
        m = entries[k]
        if k in kicks and m is not None:
            y, v = y + kicks[k][0], v + kicks[k][1]
        if m is None:
            if st.hit not in per_hit:
                per_hit[st.hit] = [y * st.scale * MM_PER_RAD_TO_UM_PER_URAD, v * st.scale * k_after[k]]
            if k in kicks:
                y, v = y + kicks[k][0], v + kicks[k][1]
            continue
        if leaving_first and isinstance(st, Space):
            per_hit[0][1] = v * st.scale * st.k
            leaving_first = False
        a, b, c, d = m
        y, v = a * y + b * v, c * y + d * v
    shift, tilt = {}, {}
    for i, h in enumerate(hits):
        if i in per_hit and h.optic not in shift:
            shift[h.optic], tilt[h.optic] = per_hit[i]
    return AxisResponse(optic, plane, shift, tilt, per_hit)


def _axis_ray(a, b, c, d, e, f) -> tuple[float, float] | None:
    """The ray (y, v) that the round trip [[a, b, e], [c, d, f], [0, 0, 1]] reproduces,
    (I - M) x = (e, f) (as ``misalign.axis_ray``); None where there is no unique one."""
    i00, i01, i10, i11 = 1.0 - a, -b, -c, 1.0 - d
    det = i00 * i11 - i01 * i10
    if not abs(det) >= 1e-12:
        return None
    y = (i11 * e - i01 * f) / det
    v = (i00 * f - i10 * e) / det
    if not (math.isfinite(y) and math.isfinite(v)):
        return None
    return y, v


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
    entries = {p: _step_entries(cavity.trains[p].steps) for p in PLANES if cavity.modes[p].stable}
    for optic in tilting_elements(layout, path):
        for plane in PLANES:
            r = axis_response(cavity, path, plane, optic, layout, entries.get(plane))
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
