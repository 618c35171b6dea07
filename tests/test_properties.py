"""Properties that must hold for any bench, checked on generated layouts (hypothesis).

- every reduced ABCD matrix, and every train product, has determinant 1 (reduced-slope
  convention, Siegman "Lasers" 1986 ch. 15, from memory);
- the round-trip half-trace m = (A+D)/2 does not depend on where the round trip starts
  (the trace of a product is invariant under cyclic permutation: linear algebra);
- a bench placed relatively (distance, fold, heading) and the same bench placed with
  absolute coordinates give the same numbers.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

hypothesis = pytest.importorskip("hypothesis")
from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

from benchcheck import abcd, beam_table, solve_text  # noqa: E402
from benchcheck.abcd import PLANES  # noqa: E402
from benchcheck.unfold import Marker  # noqa: E402

ROC = st.one_of(st.none(), st.floats(80.0, 3000.0), st.floats(-3000.0, -80.0))
FOLD = st.one_of(st.floats(4.0, 40.0), st.floats(-40.0, -4.0))
DIST = st.floats(40.0, 400.0)


def _mirror(ident, roc, at=None, extra=""):
    lines = ['[[optic]]', f'id = "{ident}"', 'kind = "mirror"']
    if at is not None:
        lines.append(f"at = [{at[0]!r}, {at[1]!r}]")
    if roc is not None:
        lines.append(f"roc = {roc!r}")
    return "\n".join(lines) + "\n" + extra


def _header(size=(20000, 20000)):
    return f'format = 1\n[bench]\nname = "generated"\nsize = [{size[0]}, {size[1]}]\n'


@st.composite
def folded_linear(draw):
    """A linear cavity of 2-5 mirrors placed relatively, with an optional crystal."""
    n = draw(st.integers(2, 5))
    rocs = [draw(ROC) for _ in range(n)]
    dists = [draw(DIST) for _ in range(n - 1)]
    folds = [draw(FOLD) for _ in range(n - 2)]
    crystal = draw(st.one_of(st.none(), st.tuples(st.floats(2.0, 20.0), st.floats(1.2, 2.5),
                                                   st.sampled_from(["normal", "brewster"]))))
    return rocs, dists, folds, crystal


def _relative_layout(rocs, dists, folds, crystal):
    text = _header()
    text += _mirror("M0", rocs[0], at=(10000.0, 10000.0))
    for i in range(1, len(rocs)):
        text += _mirror(f"M{i}", rocs[i])
    entries = ['"M0"']
    for i in range(1, len(rocs)):
        d = dists[i - 1]
        if crystal is not None and i == 1:
            length, index, faces = crystal
            d = max(d, length + 10.0)
            text += (f'[[optic]]\nid = "X"\nkind = "crystal"\nlength = {length!r}\nindex = {index!r}\n'
                     f'faces = "{faces}"\n')
            entries.append(f'{{ id = "X", distance = {d / 2!r} }}')
            d = d / 2
        fold = f", fold = {folds[i - 1]!r}" if i < len(rocs) - 1 else ""
        entries.append(f'{{ id = "M{i}", distance = {d!r}{fold} }}')
    text += ('[[cavity]]\nid = "c"\nkind = "linear"\nheading = 17.0\nwavelength_nm = 1064\n'
             f"path = [{', '.join(entries)}]\n")
    return text


def _absolute_from(solution, rocs, crystal):
    """The same bench with every optic at the coordinates the placement found."""
    text = _header()
    for i, roc in enumerate(rocs):
        p = solution.placement.optics[f"M{i}"].point
        text += _mirror(f"M{i}", roc, at=(float(p[0]), float(p[1])))
    ids = [f'"M{i}"' for i in range(len(rocs))]
    if crystal is not None:
        length, index, faces = crystal
        p = solution.placement.optics["X"].point
        text += (f'[[optic]]\nid = "X"\nkind = "crystal"\nlength = {length!r}\nindex = {index!r}\n'
                 f'faces = "{faces}"\nat = [{float(p[0])!r}, {float(p[1])!r}]\n')
        ids.insert(1, '"X"')
    text += ('[[cavity]]\nid = "c"\nkind = "linear"\nwavelength_nm = 1064\n'
             f"path = [{', '.join(ids)}]\n")
    return text


def _close(a, b, rel=1e-7, abs_=1e-9):
    if a is None or b is None:
        return a is None and b is None
    return math.isclose(a, b, rel_tol=rel, abs_tol=abs_)


@settings(max_examples=120, deadline=None)
@given(folded_linear())
def test_relative_and_absolute_placement_agree(case):
    rocs, dists, folds, crystal = case
    rel_sol = solve_text(_relative_layout(rocs, dists, folds, crystal))
    abs_sol = solve_text(_absolute_from(rel_sol, rocs, crystal))
    a = beam_table(rel_sol)["cavities"][0]
    b = beam_table(abs_sol)["cavities"][0]
    for p in PLANES:
        assert a["stable"][p] == b["stable"][p]
        assert _close(a["m"][p], b["m"][p], abs_=1e-8)
        assert _close(a["gouy_deg"][p], b["gouy_deg"][p], rel=1e-6, abs_=1e-6)
    assert _close(a["round_trip_mm"], b["round_trip_mm"])
    for ha, hb in zip(a["hits"], b["hits"]):
        assert ha["optic"] == hb["optic"]
        assert _close(ha["s_mm"], hb["s_mm"], abs_=1e-6)
        assert _close(ha["aoi_deg"], hb["aoi_deg"], rel=1e-6, abs_=1e-6)
        for p in PLANES:
            assert _close(ha["w_um"][p], hb["w_um"][p], rel=1e-5)


def _train_products(solution):
    for cav in solution.cavities.values():
        for plane, train in cav.trains.items():
            mats = [st_.matrix() for st_ in train.steps if not isinstance(st_, Marker)]
            yield cav, plane, mats


@settings(max_examples=120, deadline=None)
@given(folded_linear())
def test_every_matrix_and_product_has_unit_determinant(case):
    sol = solve_text(_relative_layout(*case))

    def det_ok(m):
        # rounding in AD - BC grows with the size of the two products, not with 1
        scale = max(1.0, abs(m[0, 0] * m[1, 1]) + abs(m[0, 1] * m[1, 0]))
        return abs(np.linalg.det(m) - 1.0) <= 1e-13 * scale

    for _, _, mats in _train_products(sol):
        for m in mats:
            assert det_ok(m)
        assert det_ok(abcd.compose(mats))


@settings(max_examples=120, deadline=None)
@given(folded_linear(), st.integers(0, 50))
def test_half_trace_independent_of_start(case, shift):
    sol = solve_text(_relative_layout(*case))
    for cav, plane, mats in _train_products(sol):
        k = shift % len(mats)
        rotated = mats[k:] + mats[:k]
        m0 = float(abcd.half_trace(abcd.compose(mats)))
        m1 = float(abcd.half_trace(abcd.compose(rotated)))
        assert math.isclose(m0, m1, rel_tol=1e-9, abs_tol=1e-9 * max(1.0, abs(m0)))
        assert math.isclose(cav.modes[plane].m, m0, rel_tol=1e-12, abs_tol=1e-12)


RING = """
format = 1
[bench]
name = "ring"
size = [2000, 2000]
[[optic]]
id = "A"
kind = "mirror"
at = [100.0, 100.0]
roc = {ra!r}
[[optic]]
id = "B"
kind = "mirror"
at = [{bx!r}, 100.0]
roc = {rb!r}
[[optic]]
id = "C"
kind = "mirror"
at = [{cx!r}, {cy!r}]
[[optic]]
id = "X"
kind = "crystal"
at = [{xx!r}, 100.0]
length = 8.0
index = 1.8
faces = "brewster"
[[cavity]]
id = "r"
kind = "ring"
path = [{path}]
wavelength_nm = 800
"""


@settings(max_examples=80, deadline=None)
@given(st.floats(100, 2000), st.floats(100, 2000), st.floats(200, 800), st.floats(-300, 300),
       st.floats(100, 800), st.integers(0, 3))
def test_ring_half_trace_same_from_every_starting_optic(ra, rb, bx, cx_off, cy, start):
    """Rotating the ring's path list moves the reference plane; m must not change."""
    order = ['"A"', '"X"', '"B"', '"C"']
    text = lambda o: RING.format(ra=ra, rb=rb, bx=bx + 100.0, cx=100.0 + bx / 2 + cx_off,  # noqa: E731
                                 cy=100.0 + cy, xx=100.0 + bx / 2, path=", ".join(o))
    base = beam_table(solve_text(text(order)))["cavities"][0]
    rot = order[start:] + order[:start]
    moved = beam_table(solve_text(text(rot)))["cavities"][0]
    for p in PLANES:
        assert math.isclose(base["m"][p], moved["m"][p], rel_tol=1e-9, abs_tol=1e-9)
        assert base["stable"][p] == moved["stable"][p]
        if base["stable"][p]:
            assert math.isclose(base["gouy_deg"][p], moved["gouy_deg"][p], rel_tol=1e-7)
            # the mode at each optic is a property of the cavity, not of the start
            wa = {h["optic"]: h["w_um"][p] for h in base["hits"]}
            wb = {h["optic"]: h["w_um"][p] for h in moved["hits"]}
            for k in wa:
                assert math.isclose(wa[k], wb[k], rel_tol=1e-6)
