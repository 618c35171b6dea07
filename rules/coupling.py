"""mode-match and seed-power: how a passive cavity is fed by the beam that seeds it.

A passive (enhancement) cavity builds up only the part of the seed that is in its mode;
the rest is reflected at the input coupler.  The mode match is the overlap of the seed
with the cavity's eigenmode at the input coupler (beam table, ``ends.mode_match``).
"""

from __future__ import annotations

from benchcheck.findings import WARNING, Finding, Option, Rule
from benchcheck.solve import SEED_POWER_TOLERANCE


def check_mode_match(bench, options):
    minimum = options["min_mode_match"]
    for beam in bench.solution.beams.values():
        if beam.into is None or beam.mode_match is None or beam.mode_match >= minimum:
            continue
        cav = bench.solution.cavities[beam.into]
        yield Finding(
            f"beam \"{beam.id}\" couples {beam.mode_match * 100:.1f} % of its power into the mode of passive cavity "
            f"\"{cav.id}\" at \"{beam.hits[-1].optic}\"; the minimum is {minimum * 100:.0f} %",
            (beam.id, cav.id), value=beam.mode_match, limit=minimum, unit="fraction",
            hint="match the seed's waist size and place to the cavity's mode (see 'benchcheck beams' for both): "
                 "move or change the mode-matching lenses, and check that the seed arrives on the cavity axis")


def check_seed_power(bench, options):
    tolerance = options["tolerance"]
    for cav in bench.solution.cavities.values():
        e = cav.enhancement
        if e is None or e.delivered_w is None or e.declared_w is None:
            continue
        if abs(e.declared_w - e.delivered_w) <= tolerance * e.delivered_w:
            continue
        seeds = ", ".join(f"\"{s}\"" for s in e.seeds)
        yield Finding(
            f"cavity \"{cav.id}\" declares input_power_w = {e.declared_w:g} W, but beam {seeds} delivers "
            f"{e.delivered_w:.4g} W to its input coupler; the circulating power uses the delivered power",
            (cav.id,) + tuple(e.seeds), value=e.declared_w, limit=e.delivered_w, unit="W",
            hint="correct input_power_w, or the seed's power and the losses on its way")


RULES = (
    Rule(
        id="mode-match",
        summary="a seed beam that couples less than a minimum fraction of its power into a passive cavity's mode",
        explanation=(
            "Only the part of a seed beam that overlaps the cavity's eigenmode builds up in an enhancement cavity; "
            "the rest is reflected at the input coupler. The mode match is the product of the tangential and "
            "sagittal overlaps of the seed (M^2 = 1) with the mode at the input coupler, including a tilt between "
            "them in the table plane (Kogelnik, 'Coupling and conversion coefficients for optical modes', 1964). "
            "A seed with M^2 > 1 has no computed mode match and is not checked."
        ),
        check=check_mode_match,
        severity=WARNING,
        options=(
            Option("min_mode_match", 0.8,
                   "smallest accepted fraction of the seed's power in the cavity's mode (0.8 to 0.95 is what a "
                   "careful mode-matching telescope reaches on a bench; common practice)", "fraction"),
        ),
    ),
    Rule(
        id="seed-power",
        summary="a passive cavity's declared input_power_w that differs from what its seed beam delivers",
        explanation=(
            "Where a declared beam ends on a passive cavity's input coupler, the cavity's circulating power follows "
            "that beam: the power it delivers there, times its mode match. A declared input_power_w that differs "
            "from the delivered power is then out of date, or the seed's losses are not what was planned."
        ),
        check=check_seed_power,
        severity=WARNING,
        options=(
            Option("tolerance", SEED_POWER_TOLERANCE,
                   "accepted relative difference between declared and delivered power (the beam table notes "
                   "a difference above 1 %)",
                   "fraction"),
        ),
    ),
)
