"""build-yield and alignment-sensitivity: will the cavity work when built, and can it be
kept aligned.

Both read the lab's build tolerances (``[tolerances]`` in the configuration, and each
optic's own ``tolerance``); with none anywhere they say so in one note and check nothing.
They run inside ``check``, so the Monte Carlo here is small (``samples``, 2000 by default:
the yield's 95 % interval is then about +-1.3 % at 90 %); ``benchcheck tolerance`` runs the
full one.
"""

from __future__ import annotations

import math

import numpy as np

from benchcheck import clipping, tolspec
from benchcheck.abcd import PLANES
from benchcheck.findings import NOTE, WARNING, Finding, Option, Rule
from benchcheck.placement import DEFAULT_DIAMETER

PLANE_NAMES = {"t": "tangential", "s": "sagittal"}


def _tolerances(bench) -> tolspec.Tolerances | None:
    tol = getattr(bench, "tolerances", None) or tolspec.Tolerances()
    return tol if tolspec.applies(tol, bench.layout) else None


def _skipped(bench, rule_id: str):
    """One note per layout that has a cavity, at the first cavity."""
    cavities = list(bench.layout.cavities.values())
    if cavities:
        yield Finding(f"{rule_id} skipped: neither the configuration ([tolerances]) nor the layout (an optic's "
                      "'tolerance') gives a build tolerance", (cavities[0].id,), severity=NOTE, loc=cavities[0].loc,
                      hint="state the lab's build tolerances in [tolerances] of benchcheck.toml (README, "
                           "\"Tolerances and alignment\"), or disable the rule")


def _stable(cav) -> bool:
    return all(cav.modes[p].stable for p in PLANES)


def check_yield(bench, options):
    min_yield = options["min_yield"]
    samples = int(options["samples"])
    if not 0.0 <= min_yield <= 1.0:
        raise ValueError(f"rules.build-yield.min_yield must lie in [0, 1], not {min_yield!r}")
    if samples < 100:
        raise ValueError(f"rules.build-yield.samples must be at least 100, not {samples!r}")
    tol = _tolerances(bench)
    if tol is None:
        yield from _skipped(bench, "build-yield")
        return
    from benchcheck.tolerance import run_cavity, wilson_interval   # only where tolerances apply

    rng = np.random.default_rng(int(options["seed"]))
    for cid, cav in bench.solution.cavities.items():
        if not _stable(cav):
            continue   # cavity-unstable reports it
        res = run_cavity(bench.solution, cid, tol, samples, rng, summary=False)
        if res.yield_margin >= min_yield:
            continue
        lo, hi = wilson_interval(res.with_margin, res.samples)
        drivers = [r for r in res.sensitivity if r["output"] in ("m_t", "m_s")]
        drivers.sort(key=lambda r: -r["share"])
        top = ", ".join(dict.fromkeys(r["parameter"] for r in drivers[:4]))
        yield Finding(
            f"cavity \"{cid}\": only {100 * res.yield_margin:.1f} % of {samples} simulated builds are stable with "
            f"|m| <= {tol.margin_max_abs_m:g} in both planes (95 % interval {100 * lo:.1f} to {100 * hi:.1f} %; "
            f"{100 * res.yield_stable:.1f} % stable at all); limit {100 * min_yield:g} %"
            + (f"; the half-trace's spread comes mostly from {top}" if top else ""),
            (cid,), value=res.yield_margin, limit=min_yield, unit="fraction",
            hint="tighten the tolerance of the parameters named (an optic's own 'tolerance'), or move the design "
                 "away from the edge of stability; 'benchcheck tolerance' gives the full picture")


def _aperture(optic, aoi_deg: float, plane: str) -> float:
    """Semi-axis (mm) of the optic's clear aperture across the beam in one plane."""
    a = (optic.diameter or DEFAULT_DIAMETER) / 2.0
    return a * math.cos(math.radians(aoi_deg)) if plane == "t" else a


def check_alignment(bench, options):
    tilt = options["tilt_urad"]
    fraction = options["max_shift_fraction"]
    max_loss = options["max_loss"]
    if not tilt > 0 or not fraction > 0 or not 0 < max_loss < 1:
        raise ValueError("rules.alignment-sensitivity: tilt_urad and max_shift_fraction must be > 0 and max_loss "
                         "in (0, 1)")
    if _tolerances(bench) is None:
        yield from _skipped(bench, "alignment-sensitivity")
        return
    from benchcheck.alignment import cavity_alignment   # only where tolerances apply

    layout = bench.layout
    for cid, cav in bench.solution.cavities.items():
        if not _stable(cav):
            continue
        path = bench.trace.cavities[cid]
        worst: dict = {}
        for resp in cavity_alignment(layout, cav, path):
            for i, (shift_per, _) in resp.per_hit.items():
                hit = cav.hits[i]
                w_um = (hit.w.get(resp.plane) or 0.0) * 1e3
                if not w_um:
                    continue
                shift = abs(shift_per) * tilt
                optic = layout.optics[hit.optic]
                a_um = _aperture(optic, hit.aoi_deg, resp.plane) * 1e3
                loss = float(clipping.edge_clip_fraction(a_um - shift, w_um))
                nominal = float(clipping.edge_clip_fraction(a_um, w_um))
                clips = loss > max_loss and nominal <= max_loss
                ratio = shift / w_um
                if ratio <= fraction and not clips:
                    continue
                key = resp.mirror
                score = (clips, ratio)
                if key not in worst or score > worst[key][0]:
                    worst[key] = (score, resp.plane, hit.optic, shift, w_um, loss, clips)
        for mirror, (_, plane, at, shift, w_um, loss, clips) in worst.items():
            what = (f"and the beam's edge loss at its clear aperture grows to {loss:.2g} (limit {max_loss:g})"
                    if clips else f"limit {fraction:g} of the mode radius")
            yield Finding(
                f"cavity \"{cid}\": tilting \"{mirror}\" by {tilt:g} urad ({PLANE_NAMES[plane]}) moves the cavity "
                f"axis by {shift:.1f} um at \"{at}\", {shift / w_um:.2f} of the mode radius there ({w_um:.0f} um); "
                f"{what}",
                (mirror, cid, at), value=shift / w_um, limit=fraction, unit="fraction of the mode radius",
                hint="the cavity is hard to keep aligned: use a stiffer mount for this mirror, or move the design "
                     "away from the edge of stability (near-planar and near-concentric cavities are the most "
                     "tilt-sensitive)")


RULES = (
    Rule(
        id="build-yield",
        summary="share of simulated builds (the lab's tolerances) that are stable with margin, against a minimum",
        explanation=(
            "A Monte Carlo of each cavity that is stable as planned: every toleranced quantity (positions of the "
            "placed optics, radii of curvature, focal lengths, crystal lengths, indices and tilts, the thermal lens "
            "over its range; README, \"Tolerances and alignment\") is drawn from its distribution, many builds at "
            "once, and a build counts when its half-trace satisfies |m| <= margin_max_abs_m of [tolerances] in "
            "both planes. The yield with its 95 % Wilson interval is compared with min_yield; the parameters that "
            "drive the half-trace (linear regression shares) are named. Seeded, so a run is repeatable. Skipped "
            "with a note when neither the configuration nor the layout states a tolerance."
        ),
        check=check_yield,
        severity=WARNING,
        options=(
            Option("min_yield", 0.9, "smallest accepted share of builds stable with margin (engineering "
                                     "judgement: one build in ten reworked)", "fraction"),
            Option("samples", 2000, "simulated builds per cavity; the check runs inside 'check', so keep it modest "
                                    "('benchcheck tolerance' runs 10000 by default)", "builds"),
            Option("seed", 1, "seed of the random generator", ""),
        ),
    ),
    Rule(
        id="alignment-sensitivity",
        summary="a mirror whose small tilt walks the cavity axis by a large part of the mode radius, or into an "
                "aperture",
        explanation=(
            "For every mirror of each stable cavity, the displacement of the cavity axis at every optic per unit "
            "tilt, in both planes, from 3x3 ray-transfer matrices that carry the misalignment (the axis is the ray "
            "the misaligned round trip reproduces; Siegman, \"Lasers\" 1986, ch. 19). A tilt of tilt_urad that "
            "moves the axis by more than max_shift_fraction of the mode radius at any optic, or far enough that "
            "the beam's loss at the near edge of that optic's clear aperture exceeds max_loss, is reported with "
            "the worst optic. Skipped with a note when neither the configuration nor the layout states a "
            "tolerance."
        ),
        check=check_alignment,
        severity=WARNING,
        options=(
            Option("tilt_urad", 10.0, "mirror tilt to test: the drift or setting resolution of a good kinematic "
                                      "mount over a day (common practice)", "urad"),
            Option("max_shift_fraction", 0.1, "largest accepted axis shift as a fraction of the mode radius; a "
                                              "shift d lowers the overlap with the aligned mode by about (d/w)^2, "
                                              "1 % at 0.1 (Kogelnik 1964, from memory)", "fraction"),
            Option("max_loss", 1e-3, "largest accepted power fraction beyond the near edge of an optic's clear "
                                     "aperture once the axis has moved", "fraction"),
        ),
    ),
)
