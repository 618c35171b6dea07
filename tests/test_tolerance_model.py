"""Each tolerance perturbs the bench as README "Tolerances and alignment" says: one
perturbed build evaluated by the Monte Carlo equals the plan solved with that change written
into the layout (two independent routes through the code: placement, trace and solve for
the edited layout; perturbed copies with array fields for the Monte Carlo)."""

from __future__ import annotations

import math

import numpy as np
import pytest

from benchcheck import solve_text
from benchcheck.tolerance import Parameter, evaluate

M3 = (400.0 + 300.0 * math.cos(math.radians(160.0)), 300.0 + 300.0 * math.sin(math.radians(160.0)))
PLAN = dict(M1=(100.0, 300.0), L1=(180.0, 300.0), P1=(300.0, 300.0), M2=(400.0, 300.0),
            X1=((400.0 + M3[0]) / 2, (300.0 + M3[1]) / 2), M3=M3,
            roc=500.0, f=500.0, length=10.0, index=1.76, faces="brewster", plate_aoi=20.0, thickness=3.0,
            plate_index=1.45, thermal="")


def text(**changes) -> str:
    """Flat M1, lens, tilted plate, curved fold M2 (fold 20 deg), Brewster crystal, flat M3."""
    v = {**PLAN, **changes}
    at = {k: f"[{v[k][0]!r}, {v[k][1]!r}]" for k in ("M1", "L1", "P1", "M2", "X1", "M3")}
    return f"""format = 1
[bench]
name = "tolerance model"
size = [1000, 1000]
[[optic]]
id = "M1"
kind = "mirror"
at = {at["M1"]}
[[optic]]
id = "L1"
kind = "lens"
at = {at["L1"]}
focal_length = {v["f"]!r}
[[optic]]
id = "P1"
kind = "plate"
at = {at["P1"]}
thickness = {v["thickness"]!r}
index = {v["plate_index"]!r}
aoi = {v["plate_aoi"]!r}
[[optic]]
id = "M2"
kind = "mirror"
at = {at["M2"]}
roc = {v["roc"]!r}
[[optic]]
id = "X1"
kind = "crystal"
at = {at["X1"]}
length = {v["length"]!r}
index = {v["index"]!r}
faces = "{v["faces"]}"
{v["thermal"]}
[[optic]]
id = "M3"
kind = "mirror"
at = {at["M3"]}
[[cavity]]
id = "cav"
kind = "linear"
path = ["M1", "L1", "P1", "M2", "X1", "M3"]
wavelength_nm = 1064
"""


def one_build(deviations: dict, **plan):
    sol = solve_text(text(**plan))
    path = sol.trace.cavities["cav"]
    params = [Parameter(o, w, 1.0, "") for (o, w) in deviations]
    x = np.array([[deviations[k] for k in deviations]])
    oriented = {oid for oid, p in sol.placement.optics.items() if p.oriented_by == "cav"}
    return evaluate(sol.layout, path, params, x, oriented)


def assert_same(chunk, edited: str):
    cav = solve_text(edited).cavities["cav"]
    for plane in ("t", "s"):
        assert chunk.m[plane][0] == pytest.approx(cav.modes[plane].m, rel=1e-10, abs=1e-12)
        radii = np.array([h.w[plane] for h in cav.hits], dtype=float)
        assert chunk.radius[plane][0] == pytest.approx(radii, rel=1e-9)


def moved(name: str, dx: float, dy: float) -> tuple:
    return (PLAN[name][0] + dx, PLAN[name][1] + dy)


@pytest.mark.parametrize("optic, dx, dy", [("M2", 0.3, 0.0), ("M2", 0.0, -0.4), ("L1", 0.5, 0.2),
                                           ("X1", -0.3, 0.3), ("M1", 0.2, -0.2), ("M3", -0.25, 0.1)])
def test_position(optic, dx, dy):
    """A moved optic: spacings and the folds the cavity makes follow from the moved points."""
    assert_same(one_build({(optic, "x"): dx, (optic, "y"): dy}), text(**{optic: moved(optic, dx, dy)}))


def test_plan_itself():
    assert_same(one_build({("M2", "x"): 0.0}), text())


def test_radius_and_focal_length():
    assert_same(one_build({("M2", "roc"): 0.01, ("L1", "focal_length"): -0.02}), text(roc=505.0, f=490.0))


def test_crystal_length_and_plate_thickness_index_tilt():
    tilt = 0.01
    assert_same(one_build({("X1", "length"): 0.1, ("P1", "length"): 0.05, ("P1", "index"): 0.003,
                           ("P1", "tilt"): tilt}),
                text(length=10.1, thickness=3.05, plate_index=1.453, plate_aoi=20.0 + math.degrees(tilt)))


def test_brewster_crystal_index_and_tilt():
    """The layout re-solved with another index meets the crystal at that index's Brewster
    angle; the Monte Carlo keeps the mount's angle, so adding the difference of the two
    Brewster angles as a tilt must give the same bench."""
    dn = 0.004
    tilt = math.atan(1.76 + dn) - math.atan(1.76)
    assert_same(one_build({("X1", "index"): dn, ("X1", "tilt"): tilt}), text(index=1.76 + dn))


def test_thermal_lens_in_its_range():
    """The Monte Carlo's thermal-lens column u in [0, 1] is the dioptric power
    P = P_lo + u (P_hi - P_lo) between the range's ends: the same as a layout that gives the
    one focal length 1/P."""
    u = 0.3
    lo, hi = 1.0 / 1.0e6, 1.0 / 400.0
    power = lo + u * (hi - lo)
    assert_same(one_build({("X1", "thermal_lens"): u}, thermal="thermal_lens = [400.0, 1.0e6]"),
                text(thermal=f"thermal_lens = {1.0 / power!r}"))


def seeded(l1=(300.0, 500.0), f=300.0, roc=500.0) -> str:
    """A passive linear cavity (flat input coupler, concave M2) seeded through a lens."""
    return f"""format = 1
[bench]
name = "seeded"
size = [1000, 1000]
[[optic]]
id = "IC"
kind = "mirror"
at = [500.0, 500.0]
reflectivity = 0.99
[[optic]]
id = "M2"
kind = "mirror"
at = [800.0, 500.0]
roc = {roc!r}
[[optic]]
id = "L1"
kind = "lens"
at = [{l1[0]!r}, {l1[1]!r}]
focal_length = {f!r}
[[source]]
id = "S"
at = [100.0, 500.0]
heading = 0.0
wavelength_nm = 1064
power_w = 1.0
waist = 0.3
[[cavity]]
id = "cav"
kind = "linear"
path = ["IC", "M2"]
wavelength_nm = 1064
input_coupler = "IC"
input_power_w = 1.0
[[beam]]
id = "seed"
from = "S"
path = ["L1", "IC"]
"""


def test_mode_match_of_a_seed_beam():
    """The mode match of one perturbed build equals the solver's for the edited layout, and
    the circulating power is the cavity's scaled by that match over the planned one (the
    planned circulating power already counts the planned match).  The lens moves along the beam
    only: a sideways move would tilt the seed in the edited layout, while the Monte Carlo
    takes the seed as aligned onto the cavity's axis (README)."""
    from benchcheck import tolspec
    from benchcheck.tolerance import seed_beam

    sol = solve_text(seeded())
    path = sol.trace.cavities["cav"]
    seed = seed_beam(sol, "cav")
    assert seed is not None and seed.path.id == "seed"
    dev = {("L1", "x"): 0.5, ("L1", "focal_length"): 0.01, ("M2", "roc"): -0.01}
    params = [Parameter(o, w, 1.0, "") for (o, w) in dev]
    x = np.array([list(dev.values())])
    oriented = {oid for oid, p in sol.placement.optics.items() if p.oriented_by == "cav"}
    chunk = evaluate(sol.layout, path, params, x, oriented, seed.at)
    eta = seed.match(sol.layout, params, x, chunk)
    edited = solve_text(seeded(l1=(300.5, 500.0), f=303.0, roc=495.0))
    assert eta[0] == pytest.approx(edited.beams["seed"].mode_match, rel=1e-9)
    # the run reports the match and P_circ x match / planned match
    from benchcheck.tolerance import run
    lab = tolspec.Tolerances(source=tolspec.FROM_DEFAULTS)
    res = run(sol, lab, 2000, 1, with_alignment=False)[0]
    lo, mid, hi = res.coupling["mode_match"]
    assert 0 < lo <= mid <= hi <= 1
    planned = sol.beams["seed"].mode_match
    assert res.coupling["circulating_w"][1] == pytest.approx(mid * sol.cavities["cav"].circulating_w / planned,
                                                             rel=1e-3)
