"""Passive (enhancement) cavities fed by a declared seed beam: the circulating power follows
the seed, and the figures an enhancement cavity is tuned by.

References (Siegman, "Lasers", 1986, ch. 11, from memory), with r1 = sqrt(R1) the input
coupler's amplitude reflectivity, T1 its transmission and g = sqrt(R_rest (1 - loss)) the
amplitude factor of the rest of one round trip, rho = r1 g:
- build-up P_circ / P_in = T1 / (1 - rho)^2;
- reflected on resonance (g (R1 + T1) - r1)^2 / (1 - rho)^2, zero when impedance matched
  (r1 = g, T1 equal to the rest of the round-trip loss for a lossless coupler);
- transmitted through an end mirror of transmission T2 (two-mirror cavity) T1 T2 / (1 - rho)^2;
- finesse pi sqrt(rho) / (1 - rho), linewidth (FWHM) (2 FSR / pi) arcsin((1 - rho) / (2 sqrt(rho))).
Mode match of two coincident waists w and r w: (2 r / (1 + r^2))^2 over both axes (Gaussian
overlap integral; Kogelnik 1964, from memory).  All computed here.
"""

from __future__ import annotations

import math

import pytest

from benchcheck import solve_text
from benchcheck.config import Config
from benchcheck.findings import Bench
from benchcheck.plugins import load_rules
from layouts_util import C_M_S, beam, beam_entry, cavity, cavity_entry, layout, mirror, rel, solved, source

WL_NM = 1064.0
WL = WL_NM * 1e-6
D = 500.0              # IC (flat) to M2 (R = 1000 mm)


def cavity_waist() -> float:
    z_r = math.sqrt(D * (1000.0 - D))        # Kogelnik & Li 1966: z_R^2 = d (R - d) for g1 = 1
    return math.sqrt(WL * z_r / math.pi)


def seeded(r1: float, r2: float, seed_power: float | None, declared: float, ratio: float = 1.0,
           loss: float = 0.0, lens_absorption: float | None = None) -> str:
    """Flat input coupler IC and a concave end mirror 500 mm away; a seed from behind IC with
    its waist ``ratio`` times the cavity's, on IC, through a lossy window ``W`` on the way."""
    extra = {"loss": loss} if loss else {}
    tables = [
        mirror("IC", None, at=[1000.0, 1000.0], reflectivity=r1, substrate={"thickness": 0.0, "index": 1.5}),
        mirror("M2", 1000.0, reflectivity=r2),
        cavity("enh", "linear", ["IC", rel("M2", D)], WL_NM, heading=0.0, input_coupler="IC",
               input_power_w=declared, **extra),
        source("S", at=[700.0, 1000.0], heading=0.0, wavelength_nm=WL_NM, waist=cavity_waist() * ratio,
               waist_at=300.0, power_w=seed_power),
    ]
    if lens_absorption is not None:
        tables.append(f'[[optic]]\nid = "W"\nkind = "lens"\nat = [800.0, 1000.0]\nfocal_length = 1.0e9\n'
                      f'absorption = {lens_absorption!r}\n')
        tables.append(beam("seed", "S", ["W", "IC"]))
    else:
        tables.append(beam("seed", "S", ["IC"]))
    return layout(*tables, size=(3000.0, 2000.0))


def buildup(r1, rest):
    rho = math.sqrt(r1 * rest)
    return (1 - r1) / (1 - rho) ** 2


def findings(text: str, rule_id: str) -> list:
    rule = load_rules(entry_points=False).rules[rule_id][0]
    sol = solve_text(text)
    return list(rule.check(Bench(sol.layout, sol, Config().limits), rule.defaults()))


@pytest.mark.parametrize("ratio", [1.0, 0.5, 2.0])
def test_circulating_power_follows_the_seed_and_its_mode_match(ratio):
    eta = (2 * ratio / (1 + ratio**2)) ** 2
    t = solved(seeded(0.99, 0.999, 3.0, 3.0, ratio))
    c = cavity_entry(t)
    assert beam_entry(t)["ends"]["mode_match"] == pytest.approx(eta, rel=1e-9)
    expected = 3.0 * eta * buildup(0.99, 0.999)
    assert c["circulating_w"] == pytest.approx(expected, rel=1e-9)
    assert all(h["power_w"] == pytest.approx(expected, rel=1e-9) for h in c["hits"])
    e = c["enhancement"]
    assert e["seeds"] == ["seed"] and e["delivered_w"] == pytest.approx(3.0)
    assert e["mode_match"] == pytest.approx(eta, rel=1e-9)
    assert e["input_w"] == pytest.approx(3.0 * eta, rel=1e-9)
    assert any("follows the seed" in n for n in c["notes"])


def test_losses_on_the_way_reduce_what_the_seed_delivers():
    """A window absorbing 10 % on the way: 2.7 W of 3 W arrive; the declared 3 W is out of
    date, which the notes and the seed-power rule say."""
    text = seeded(0.99, 0.999, 3.0, 3.0, lens_absorption=0.1)
    c = cavity_entry(solved(text))
    assert c["enhancement"]["delivered_w"] == pytest.approx(2.7, rel=1e-12)
    assert c["circulating_w"] == pytest.approx(2.7 * buildup(0.99, 0.999), rel=1e-9)
    assert any("input_power_w = 3 W" in n and "2.7 W" in n for n in c["notes"])
    # what leaves the input coupler backwards is at most what the seed brings (off resonance)
    (back,) = [st for st in solved(text)["strays"] if st["optic"] == "IC"]
    assert back["power_w"] == pytest.approx(2.7, rel=1e-9) and back["power_is_upper_bound"]
    (f,) = findings(text, "seed-power")
    assert f.value == pytest.approx(3.0) and f.limit == pytest.approx(2.7) and f.unit == "W"
    assert findings(seeded(0.99, 0.999, 3.0, 3.0), "seed-power") == []


def test_a_seed_without_power_leaves_the_declared_input():
    c = cavity_entry(solved(seeded(0.99, 0.999, None, 2.0)))
    assert c["circulating_w"] == pytest.approx(2.0 * buildup(0.99, 0.999), rel=1e-9)
    assert any("power is not given" in n for n in c["notes"])


@pytest.mark.parametrize("r1, r2, loss, coupling", [
    (0.99, 0.999, 0.0, "over-coupled"),
    (0.99, 0.99, 0.0, "impedance-matched"),
    (0.999, 0.99, 0.0, "under-coupled"),
    (0.99, 1.0, 0.01, "impedance-matched"),
])
def test_finesse_linewidth_matching_reflection_transmission(r1, r2, loss, coupling):
    c = cavity_entry(solved(seeded(r1, r2, 1.0, 1.0, loss=loss)))
    e = c["enhancement"]
    rest = r2 * (1 - loss)
    rho = math.sqrt(r1 * rest)
    g = math.sqrt(rest)
    t1 = 1 - r1
    fsr = C_M_S * 1e3 / (2 * D)                      # c / (2 d), d in mm
    assert c["fsr_hz"] == pytest.approx(fsr, rel=1e-12)
    assert e["finesse"] == pytest.approx(math.pi * math.sqrt(rho) / (1 - rho), rel=1e-9)
    assert e["linewidth_hz"] == pytest.approx(2 * fsr / math.pi * math.asin((1 - rho) / (2 * math.sqrt(rho))),
                                              rel=1e-9)
    assert e["linewidth_hz"] == pytest.approx(fsr / e["finesse"], rel=1e-3)      # narrow: FSR / finesse
    assert e["input_transmission"] == pytest.approx(t1, rel=1e-12)
    assert e["rest_loss"] == pytest.approx(1 - rest, rel=1e-12)
    assert e["coupling"] == coupling
    assert e["buildup"] == pytest.approx(t1 / (1 - rho) ** 2, rel=1e-9)
    assert e["reflected_fraction"] == pytest.approx((g * (r1 + t1) - math.sqrt(r1)) ** 2 / (1 - rho) ** 2,
                                                    rel=1e-9, abs=1e-12)
    assert e["transmitted_fraction"] == pytest.approx(t1 * (1 - r2) / (1 - rho) ** 2, rel=1e-9, abs=1e-12)
    if coupling == "impedance-matched" and loss == 0:
        # lossless and matched: nothing reflected, everything through M2 (Siegman ch. 11)
        assert e["reflected_fraction"] == pytest.approx(0.0, abs=1e-12)
        assert e["transmitted_fraction"] == pytest.approx(1.0, rel=1e-9)


def test_text_table_shows_the_enhancement_figures():
    from benchcheck.beamtable import solution_text
    out = solution_text(solve_text(seeded(0.99, 0.999, 3.0, 3.0)))
    assert "finesse" in out and "(FWHM)" in out and "over-coupled" in out and "reflected" in out


@pytest.mark.parametrize("ratio, fires", [(1.0, False), (0.5, True), (0.7, False)])
def test_mode_match_rule(ratio, fires):
    """Default minimum 0.8: r = 0.5 couples 0.64, r = 0.7 couples 0.8878."""
    found = findings(seeded(0.99, 0.999, 1.0, 1.0, ratio), "mode-match")
    assert bool(found) == fires
    if fires:
        (f,) = found
        assert f.value == pytest.approx((2 * ratio / (1 + ratio**2)) ** 2, rel=1e-9) and f.limit == 0.8
        assert f.targets == ("seed", "enh")


def test_input_power_may_be_left_to_the_seed():
    text = seeded(0.99, 0.999, 3.0, 3.0).replace("input_power_w = 3.0\n", "")
    assert "input_power_w" not in text
    c = cavity_entry(solved(text))
    assert c["circulating_w"] == pytest.approx(3.0 * buildup(0.99, 0.999), rel=1e-9)
    assert c["enhancement"]["declared_input_w"] is None
    assert findings(text, "seed-power") == []


def test_without_seed_power_or_input_power_the_circulating_power_is_unknown():
    text = seeded(0.99, 0.999, None, 3.0).replace("input_power_w = 3.0\n", "")
    c = cavity_entry(solved(text))
    assert c["circulating_w"] is None
    assert any("is not known" in n for n in c["notes"])
    from benchcheck.beamtable import solution_text
    assert "circulating power not given" in solution_text(solve_text(text))


def test_input_power_without_an_input_coupler_is_an_error(tmp_path, capsys):
    from benchcheck.cli import main
    text = seeded(0.99, 0.999, 3.0, 3.0).replace('input_coupler = "IC"\n', "")
    path = tmp_path / "bad.toml"
    path.write_text(text)
    line = next(i for i, s in enumerate(text.splitlines(), 1) if s.startswith("input_power_w"))
    assert main(["beams", str(path)]) == 2
    err = capsys.readouterr().err.strip()
    assert err.startswith(f"{path}:{line}:") and "input_coupler" in err
