"""mode-astigmatism: mode ellipticity where it matters, and the compensating fold angle.

References: H. Kogelnik, E. P. Ippen, A. Dienes and C. V. Shank, "Astigmatically
compensated cavities for CW dye lasers", IEEE J. Quantum Electron. 8, 373 (1972) (from
memory): off-axis mirror f_t = (R/2) cos(theta), f_s = (R/2)/cos(theta); a Brewster crystal
of length L is L/n sagittal and L/n^3 tangential, N t = L (n^2-1)/n^3; a Brewster plate of
thickness t has N t = t sqrt(n^2+1) (n^2-1)/n^4; compensation 2 N t = R sin(theta) tan(theta)
with one curved fold (three-mirror cavity) and N t = (R1/2) sin tan + (R2/2) sin tan with
two (four-mirror); with equal angles cos(theta) = (-k + sqrt(k^2+4))/2, k = 2 N t/(m R).
Every check value is derived from these formulas and computed in the test; the digits
written beside a check are what that computation gives (no paper prints them).  The
tilted plate at any angle: air-equivalent lengths t/(n cos(theta')) sagittal and
t cos^2(theta)/(n cos^3(theta')) tangential (derived from Snell's law and the Coddington
equations at a flat face, common practice; W. J. Smith, "Modern
Optical Engineering", McGraw-Hill, gives the same exact plate astigmatism: from memory,
edition and page not checked).  Mode radii: an independent round trip by the ABCD law
(Kogelnik & Li, Applied Optics 5, 1550 (1966)) in ``refphysics``.
"""

from __future__ import annotations

import importlib
import math

import pytest

import refphysics as ref
from benchcheck import solve_text
from benchcheck.config import Config
from benchcheck.findings import NOTE, Bench
from benchcheck.plugins import load_rules
from layouts_util import beam, cavity, layout, mirror, optic, rel

# the built-in pack as the engine loads it (``benchcheck.rules``, also from a source checkout)
RULE = load_rules(entry_points=False).rules["mode-astigmatism"][0]
_astigmatism = importlib.import_module("benchcheck.rules.astigmatism")
element_astigmatism, equal_angle = _astigmatism.element_astigmatism, _astigmatism.equal_angle
WL_NM = 800.0
N_XTAL, L_XTAL = 1.76, 10.0


def printed(value: str):
    """pytest.approx to half a unit in the last printed digit of ``value``."""
    decimals = len(value.split(".")[1]) if "." in value else 0
    return pytest.approx(float(value), abs=0.5 * 10.0 ** (-decimals))


def findings(text: str, **options) -> list:
    sol = solve_text(text)
    bench = Bench(sol.layout, sol, Config().limits)
    opts = RULE.defaults()
    opts.update(options)
    return list(RULE.check(bench, opts))


def notes(found):
    return [f for f in found if f.unit == "deg"]


def ratios(found):
    return {f.targets[0]: f for f in found if f.unit == "w_t/w_s"}


def crystal():
    return optic("X1", "crystal", length=L_XTAL, index=N_XTAL, faces="brewster")


def brewster_plate():
    return optic("X1", "plate", thickness=1.0, index=1.45, faces="brewster")


def four_mirror(theta_deg: float, element: str | None = None, air: float = 98.0, theta2_deg: float | None = None,
                with_beam: bool = False) -> str:
    """X/Z cavity: flat OC, 500 mm, fold M2 (R = 100), the element centred between the folds
    (``air`` mm of air plus 10 mm of element path), fold M3 (R = 100), 700 mm, flat HR."""
    theta2_deg = theta_deg if theta2_deg is None else theta2_deg
    half = (air + 10.0) / 2.0
    tables = [
        mirror("OC", None, at=[1000.0, 10000.0], reflectivity=0.98),
        mirror("M2", 100.0), element or crystal(), mirror("M3", 100.0), mirror("HR", None),
        cavity("c", "linear", ["OC", rel("M2", 500.0, 2 * theta_deg), rel("X1", half),
                               rel("M3", half, -2 * theta2_deg), rel("HR", 700.0)], WL_NM, heading=0.0,
               output_coupler="OC", output_power_w=1.0),
    ]
    if with_beam:
        tables += [optic("D1", "dump", max_power_w=10.0), beam("out", "c", [rel("D1", 300.0)])]
    return layout(*tables)


def three_mirror(theta_deg: float, element: str | None = None) -> str:
    """Flat HR end mirror, the element 30 mm from it, one curved fold M (R = 100) 60 mm
    further, 500 mm to a flat OC."""
    return layout(
        mirror("HR", None, at=[1000.0, 10000.0]),
        element or crystal(), mirror("M", 100.0), mirror("OC", None, reflectivity=0.98),
        cavity("c", "linear", ["HR", rel("X1", 30.0), rel("M", 60.0, 2 * theta_deg), rel("OC", 500.0)], WL_NM,
               heading=0.0, output_coupler="OC", output_power_w=1.0),
    )


# --- the element's astigmatism and the compensating angle -----------------------------------

def test_element_astigmatism_check_values():
    """N t = d_s - d_t, derived from the formulas of Kogelnik et al. 1972 (from memory) and
    computed here: Brewster crystal L = 10, n = 1.76: L (n^2-1)/n^3 = 3.847554 mm; Brewster
    plates t = 1, n = 1.45: 0.439301 mm and t = 3, n = 1.76: 1.327572 mm
    (t sqrt(n^2+1)(n^2-1)/n^4); plate t = 5, n = 1.5 at 45 deg: d_s - d_t =
    t/(n cos(theta')) - t cos^2(theta)/(n cos^3(theta')) = 3.779645 - 2.429772 mm."""
    def brewster_nt(t, n):
        return t * math.sqrt(n * n + 1) * (n * n - 1) / n**4
    assert brewster_nt(1.0, 1.45) == printed("0.439301")
    assert brewster_nt(3.0, 1.76) == printed("1.327572")
    inside = math.asin(math.sin(math.radians(45.0)) / 1.5)        # Snell's law
    d_s = 5.0 / (1.5 * math.cos(inside))
    d_t = 5.0 * math.cos(math.radians(45.0)) ** 2 / (1.5 * math.cos(inside) ** 3)
    assert (d_s, d_t) == (printed("3.779645"), printed("2.429772"))
    cases = [
        (crystal(), "3.847554"),
        (brewster_plate(), "0.439301"),
        (optic("X1", "plate", thickness=3.0, index=1.76, faces="brewster"), "1.327572"),
    ]
    for element, expected in cases:
        sol = solve_text(four_mirror(11.0, element))
        path = sol.trace.cavities["c"]
        h = next(h for h in path.hits if h.optic == "X1")
        assert element_astigmatism(sol.layout.optics["X1"], h.aoi) == printed(expected)
    assert L_XTAL * (N_XTAL**2 - 1) / N_XTAL**3 == printed("3.847554")
    sol = solve_text(four_mirror(11.0, optic("X1", "plate", thickness=5.0, index=1.5, aoi=45.0)))
    assert element_astigmatism(sol.layout.optics["X1"], math.radians(45.0)) == pytest.approx(d_s - d_t, abs=1e-9)


@pytest.mark.parametrize("nt, mirrors, expected", [
    (3.847554, 2, "11.2023"),      # Brewster crystal, four-mirror
    (3.847554, 1, "15.7902"),      # Brewster crystal, three-mirror
    (0.439301, 1, "5.3666"),       # Brewster plate t = 1, n = 1.45, three-mirror
    (0.439301, 2, "3.7962"),       # same, four-mirror
])
def test_equal_angle_check_values(nt, mirrors, expected):
    """cos(theta) = (-k + sqrt(k^2+4))/2, k = 2 N t/(m R), R = 100: derived from the
    compensation condition of Kogelnik et al. 1972 (from memory); the angle is recomputed
    here from that closed form and the balance checked below."""
    k = 2.0 * nt / (mirrors * 100.0)
    assert math.degrees(math.acos((-k + math.sqrt(k * k + 4.0)) / 2.0)) == printed(expected)
    theta = equal_angle(nt, mirrors * 100.0)
    assert math.degrees(theta) == printed(expected)
    # and it balances: m (R/2) sin(theta) tan(theta) = N t
    assert mirrors * 50.0 * math.sin(theta) * math.tan(theta) == pytest.approx(nt, rel=1e-12)


# --- the note in a layout -------------------------------------------------------------------

@pytest.mark.parametrize("layout_of, element, expected", [
    (four_mirror, crystal, "11.2023"),
    (three_mirror, crystal, "15.7902"),
    (four_mirror, brewster_plate, "3.7962"),
    (three_mirror, brewster_plate, "5.3666"),
])
def test_compensating_angle_is_noted(layout_of, element, expected):
    """Planned at 8 deg (more than 0.5 deg from each compensating angle): a note with the
    planned aoi as value and the compensating aoi as limit."""
    (f,) = notes(findings(layout_of(8.0, element())))
    assert f.severity == NOTE and f.unit == "deg"
    assert f.value == pytest.approx(8.0, abs=1e-9)
    assert f.limit == printed(expected)
    assert f.targets[0] == "X1" and f.targets[-1] == "c"
    assert "Kogelnik" in f.message


def test_no_note_within_tolerance():
    """11.0 deg is 0.20 deg from 11.2023 (within 0.5); 10.5 deg is 0.70 deg away."""
    assert notes(findings(four_mirror(11.0))) == []
    assert notes(findings(four_mirror(11.2023))) == []
    assert len(notes(findings(four_mirror(10.5)))) == 1
    assert notes(findings(four_mirror(10.5), angle_tolerance_deg=1.0)) == []


def test_unequal_angles_that_balance_are_not_noted():
    """M2 at 9 deg, M3 at the angle that makes (R/2)(sin t2 tan t2 + sin t3 tan t3) = N t
    (Kogelnik et al. 1972, two-mirror form, from memory; solved here): compensated, no note; the same two angles
    swapped by 3 deg are not."""
    nt = L_XTAL * (N_XTAL**2 - 1) / N_XTAL**3
    s = 2 * nt / 100.0 - math.sin(math.radians(9.0)) * math.tan(math.radians(9.0))
    theta3 = math.degrees(math.acos((-s + math.sqrt(s * s + 4)) / 2))
    assert theta3 > 12.0
    assert notes(findings(four_mirror(9.0, theta2_deg=theta3))) == []
    (f,) = notes(findings(four_mirror(9.0, theta2_deg=theta3 - 3.0)))
    assert "act like a common" in f.message


def test_normal_cut_crystal_gets_no_note():
    normal = optic("X1", "crystal", length=10.0, index=1.76)
    assert notes(findings(four_mirror(5.0, normal))) == []


# --- ellipticity ----------------------------------------------------------------------------

def reference_radii(theta_deg: float, air: float = 98.0) -> dict:
    """Model (air-equivalent) radii per plane at OC, at the crystal centre and 300 mm past
    the flat OC, from an independent round trip from OC (Kogelnik & Li 1966 ABCD law;
    Kogelnik et al. 1972 element values)."""
    th = math.radians(theta_deg)
    out = {}
    wl = WL_NM * ref.NM
    for p in ("t", "s"):
        f = 50.0 * math.cos(th) if p == "t" else 50.0 / math.cos(th)
        red = L_XTAL / N_XTAL**3 if p == "t" else L_XTAL / N_XTAL
        to_centre = [("space", 500.0), ("lens", f), ("space", air / 2), ("space", red / 2)]
        rest = [("space", red / 2), ("space", air / 2), ("lens", f), ("space", 700.0)]
        one = to_centre + rest
        trip = one + one[::-1]
        q0 = ref.self_consistent_q(ref.steps_matrix(trip))
        qs, _ = ref.walk(q0, trip)
        out[p] = dict(oc=ref.w_of_q(q0, wl), centre=ref.w_of_q(qs[len(to_centre) - 1], wl),
                      out=ref.w_of_q(q0 + 300.0, wl))
    return out


def test_ellipticity_at_the_crystal_output_coupler_and_output_beam():
    """Under-compensated at 5 deg: in the crystal the air-equivalent w_t/w_s (= model radii
    ratio; physically n times larger, Kogelnik et al. 1972) is far below 1/1.1, at the OC
    and on the dump 300 mm past it far above 1.1."""
    r = reference_radii(5.0)
    found = ratios(findings(four_mirror(5.0, with_beam=True)))
    assert set(found) == {"X1", "OC", "D1"}
    x = found["X1"]
    assert x.value == pytest.approx(r["t"]["centre"] / r["s"]["centre"], rel=1e-6)
    assert x.limit == pytest.approx(1 / 1.1)
    physical = N_XTAL * r["t"]["centre"] / r["s"]["centre"]
    assert f"physically {physical:.3f}" in x.message
    # which ratio is which: the checked one is the air-equivalent ratio, the radii printed
    # beside it are the physical ones
    assert f"w_t/w_s = {x.value:.3f} air-equivalent (the ratio checked; the physical radii inside, w_t = " in x.message
    assert "air-equivalent and the physical radii are the same" in found["OC"].message
    assert found["OC"].value == pytest.approx(r["t"]["oc"] / r["s"]["oc"], rel=1e-6)
    assert found["OC"].limit == 1.1
    assert found["D1"].value == pytest.approx(r["t"]["out"] / r["s"]["out"], rel=1e-6)
    assert found["D1"].targets == ("D1", "out")


def test_compensated_cavity_is_round_enough():
    """At the compensating angle every checked ratio lies inside [1/1.1, 1.1] by the
    independent round trip, and the rule reports none."""
    r = reference_radii(11.2023)
    for where in ("oc", "centre", "out"):
        assert 1 / 1.1 < r["t"][where] / r["s"][where] < 1.1
    assert findings(four_mirror(11.2023, with_beam=True)) == []


def test_max_ratio_option():
    """The crystal's air-equivalent ratio at the compensating angle (independent round trip)
    is reported once the limit is set inside it."""
    r = reference_radii(11.2023)
    ratio = r["t"]["centre"] / r["s"]["centre"]
    tight = 1.0 + 0.5 * abs(1.0 / ratio - 1.0) if ratio < 1 else 1.0 + 0.5 * (ratio - 1.0)
    found = ratios(findings(four_mirror(11.2023), max_ratio=tight))
    assert found["X1"].value == pytest.approx(ratio, rel=1e-6)
