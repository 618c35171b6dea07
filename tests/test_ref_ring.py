"""Ring cavities (triangle, bow-tie, bow-tie with a Brewster crystal) against an
independent matrix calculation written here.

References: H. Kogelnik and T. Li, Applied Optics 5, 1550 (1966) (ray matrices, the
self-consistent q of a round trip, FSR = c / round-trip length for a ring); H. Kogelnik,
E. P. Ippen, A. Dienes and C. V. Shank, IEEE J. Quantum Electron. 8, 373 (1972)
(off-axis mirror f_t = (R/2) cos(theta), f_s = (R/2)/cos(theta); Brewster crystal L/n
sagittal, L/n^3 tangential, physical tangential radius n times the model's; from
memory); Gouy phase summed along the mode (Siegman, Lasers, ch. 17, from memory).
Angles of incidence come from the mirror coordinates by the law of reflection.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

import refphysics as ref
from layouts_util import C_M_S, cavity, cavity_entry, hit, layout, mirror, optic, solved, waists

WL_NM = 1064.0
WL = WL_NM * ref.NM
REL = 1e-6
PLANES = ("t", "s")


def ring_reference(elements: list[dict], plane: str) -> dict:
    """Round trip from the first element (a mirror), once round in order.  ``elements``:
    {"id", "at", "roc"} for mirrors, {"id", "at", "length", "index"} for Brewster crystals.
    Returns m, the radius (physical) at every element, the Gouy phase, the perimeter and the
    angles of incidence."""
    pts = [np.array(e["at"], float) for e in elements]
    n = len(elements)
    aoi = {}
    for i, e in enumerate(elements):
        if "length" in e:
            continue
        a = pts[i] - pts[i - 1]
        b = pts[(i + 1) % n] - pts[i]
        cos_dev = float(np.dot(a, b) / (np.linalg.norm(a) * np.linalg.norm(b)))
        aoi[e["id"]] = (math.pi - math.acos(max(-1.0, min(1.0, cos_dev)))) / 2   # half the fold
    half = {e["id"]: (e["length"] / 2 if "length" in e else 0.0) for e in elements}
    steps, marks, scales = [], {}, {}
    for i, e in enumerate(elements):
        if "length" in e:
            k = 3 if plane == "t" else 1
            steps.append(("space", e["length"] / 2 / e["index"] ** k))
            marks[e["id"]] = len(steps)
            scales[e["id"]] = e["index"] if plane == "t" else 1.0
            steps.append(("space", e["length"] / 2 / e["index"] ** k))
        else:
            marks[e["id"]] = len(steps)
            scales[e["id"]] = 1.0
            if e.get("roc") is not None:
                th = aoi[e["id"]]
                f = e["roc"] / 2 * math.cos(th) if plane == "t" else e["roc"] / 2 / math.cos(th)
                steps.append(("lens", f))
        nxt = elements[(i + 1) % n]
        gap = float(np.linalg.norm(pts[(i + 1) % n] - pts[i])) - half[e["id"]] - half[nxt["id"]]
        steps.append(("space", gap))
    rt = ref.steps_matrix(steps)
    m = (rt[0, 0] + rt[1, 1]) / 2
    perimeter = sum(float(np.linalg.norm(pts[(i + 1) % n] - pts[i])) for i in range(n))
    optical = perimeter + sum(e["length"] * (e["index"] - 1) for e in elements if "length" in e)
    out = dict(m=m, aoi=aoi, perimeter=perimeter, optical=optical)
    if abs(m) >= 1:
        return out
    q0 = ref.self_consistent_q(rt)
    qs, gouy = ref.walk(q0, steps)
    qs = [q0] + qs
    out["w"] = {ident: ref.w_of_q(qs[k], WL) * scales[ident] for ident, k in marks.items()}
    out["gouy"] = gouy
    return out


def ring_layout(elements: list[dict]) -> str:
    tables = []
    for e in elements:
        if "length" in e:
            tables.append(optic(e["id"], "crystal", at=list(e["at"]), length=e["length"], index=e["index"],
                                faces="brewster"))
        else:
            tables.append(mirror(e["id"], e.get("roc"), at=list(e["at"])))
    return layout(*tables, cavity("ring", "ring", [e["id"] for e in elements], WL_NM))


TRIANGLE = [
    dict(id="M1", at=(1000.0, 1000.0)),
    dict(id="M2", at=(1200.0, 1000.0)),
    dict(id="M3", at=(1100.0, 1100.0), roc=500.0),
]


def bow_tie(x: float, crystal: bool = False) -> list[dict]:
    els = [dict(id="IC", at=(300.0, 100.0)), dict(id="M2", at=(600.0, 100.0)),
           dict(id="M3", at=(350.0, 130.0), roc=100.0)]
    if crystal:
        els.append(dict(id="X1", at=(350.0 + x / 2, 130.0), length=10.0, index=1.76))
    els.append(dict(id="M4", at=(350.0 + x, 130.0), roc=100.0))
    return els


@pytest.mark.parametrize("elements", [
    pytest.param(TRIANGLE, id="triangle"),
    pytest.param(bow_tie(104.0), id="bow-tie"),
    pytest.param(bow_tie(107.0), id="bow-tie-2"),
    pytest.param(bow_tie(112.0, crystal=True), id="bow-tie-brewster"),
])
def test_ring_mode_against_matrices(elements):
    """Each plane against the independent round trip: half-trace m, radius at every element
    (physical inside the crystal), the Gouy phase summed along the mode, the angles of
    incidence, and FSR = c / (optical perimeter)."""
    c = cavity_entry(solved(ring_layout(elements)))
    for p in PLANES:
        r = ring_reference(elements, p)
        assert abs(r["m"]) < 1, "the cases are chosen stable"
        assert c["stable"][p] is True
        assert c["m"][p] == pytest.approx(r["m"], abs=1e-9)
        for ident, w in r["w"].items():
            assert hit(c, ident)["w_um"][p] == pytest.approx(w * 1e3, rel=REL), ident
        assert c["gouy_deg"][p] == pytest.approx(math.degrees(r["gouy"]), rel=REL)
    for ident, a in r["aoi"].items():
        assert hit(c, ident)["aoi_deg"] == pytest.approx(math.degrees(a), abs=1e-7), ident
    assert c["round_trip_mm"] == pytest.approx(r["optical"], rel=1e-8)
    assert c["fsr_hz"] == pytest.approx(C_M_S / (r["optical"] * 1e-3), rel=1e-8)


def test_triangle_ring_closed_form():
    """A ring with one focusing element of focal length f and perimeter P has
    m = 1 - P/(2f) (ray matrices, Kogelnik & Li 1966), and by symmetry its waist lies
    half-way round from the lens, here the middle of M1 - M2 (s = 100 mm)."""
    c = cavity_entry(solved(ring_layout(TRIANGLE)))
    perimeter = 200.0 + 2 * math.hypot(100.0, 100.0)
    th = math.radians(45.0)
    for p, f in (("t", 250.0 * math.cos(th)), ("s", 250.0 / math.cos(th))):
        assert c["m"][p] == pytest.approx(1 - perimeter / (2 * f), abs=1e-9)
        (w,) = waists(c, p)
        assert w["s_mm"] == pytest.approx(100.0, rel=REL)
        # the self-consistent q of the round trip that starts at the waist
        rt = ref.steps_matrix([("space", perimeter / 2), ("lens", f), ("space", perimeter / 2)])
        q = ref.self_consistent_q(rt)
        assert q.real == pytest.approx(0.0, abs=1e-9)
        assert w["w_um"] == pytest.approx(ref.w_of_q(q, WL) * 1e3, rel=REL)
    assert hit(c, "M3")["aoi_deg"] == pytest.approx(45.0, abs=1e-9)
    assert c["fsr_hz"] == pytest.approx(C_M_S / (perimeter * 1e-3), rel=1e-8)
