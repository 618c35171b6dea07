"""mode-astigmatism: how elliptical the mode is where that matters, and the fold angle that
would compensate a Brewster element's astigmatism.

Where it matters: in a crystal (the overlap with a round pump, the conversion efficiency
of a nonlinear crystal), at the output coupler and at the first optic of a beam leaving a
cavity (what the user of the beam gets).  Inside a tilted element the physical tangential
radius is stretched by refraction alone, by cos t2 / cos t1 (= n at Brewster); a pump
entering through the same face is stretched alike and the beam is round again outside, so
the ellipticity compared with the limit is the air-equivalent one, and the physical one is
mentioned.

Compensation (Kogelnik, Ippen, Dienes & Shank, IEEE JQE 8, 373 (1972), from memory): a
Brewster crystal or a tilted plate has a sagittal air-equivalent length longer than the
tangential by N t = d_s - d_t (L (n^2-1)/n^3 for a Brewster crystal of length L); an
off-axis concave mirror has f_s - f_t = (R/2) sin(theta) tan(theta).  Making the two
balance, N t = sum over the off-axis curved mirrors next to the element of
(R_i/2) sin(theta_i) tan(theta_i), puts the arm-independent stability edge (where the
element's air-equivalent spacing equals the sum of the mirrors' focal lengths) at the same
place in both planes.  One fold mirror (three-mirror cavity): 2 N t = R sin tan; two (X/Z
or bow-tie): N t = (R1/2) sin tan + (R2/2) sin tan.  With equal angles,
sin(theta)^2 / cos(theta) = k, k = 2 N t / sum(R_i), so cos(theta) = (-k + sqrt(k^2+4))/2.
Other criteria (a round output beam, equal waists in the crystal) give slightly different
angles, which is why the ellipticity is checked from the solved modes as well.
"""

from __future__ import annotations

import math

from benchcheck.findings import NOTE, WARNING, Finding, Option, Rule
from benchcheck.trace import REFLECT, TRANSMIT
from benchcheck.unfold import internal_length, medium_factors

#: a fold mirror is "off-axis" above this angle of incidence (rad); below it counts as an end mirror
OFF_AXIS_RAD = 1e-6


def stretch(optic, action: str, aoi: float) -> float:
    """Physical tangential radius / air-equivalent radius at a hit: cos t2 / cos t1 inside a
    crystal or plate passed through (the factor the unfolded model carries), else 1."""
    if optic.kind in ("crystal", "plate") and action == TRANSMIT:
        return medium_factors(optic.index, aoi, "t")[1]
    return 1.0


def element_astigmatism(optic, aoi: float) -> float:
    """N t = d_s - d_t (mm): how much longer the element is sagittally than tangentially in
    air-equivalent length (Kogelnik et al. 1972, from memory); zero at normal incidence."""
    if optic.kind not in ("crystal", "plate"):
        return 0.0
    length = internal_length(optic, aoi)
    k_t = medium_factors(optic.index, aoi, "t")[0]
    k_s = medium_factors(optic.index, aoi, "s")[0]
    return length * (k_s - k_t)


def equal_angle(nt: float, radii_sum: float) -> float:
    """The common angle of incidence (rad) at which mirrors of radii summing to
    ``radii_sum`` balance an astigmatism ``nt``: (sum R / 2) sin(t) tan(t) = N t, i.e.
    cos t = (-k + sqrt(k^2 + 4)) / 2 with k = 2 N t / sum R."""
    k = 2.0 * nt / radii_sum
    return math.acos((-k + math.sqrt(k * k + 4.0)) / 2.0)


def mirror_astigmatism(roc: float, aoi: float) -> float:
    """f_s - f_t = (R/2) sin(theta) tan(theta) of an off-axis spherical mirror (mm)."""
    return roc / 2.0 * math.sin(aoi) * math.tan(aoi)


def _ellipticity(where: str, hit, optic, options) -> Finding | None:
    w_t, w_s = hit.w.get("t"), hit.w.get("s")
    if w_t is None or w_s is None or w_s <= 0:
        return None
    scale = stretch(optic, hit.action, math.radians(hit.aoi_deg))
    ratio = w_t / (w_s * scale)
    max_ratio = options["max_ratio"]
    if 1.0 / max_ratio <= ratio <= max_ratio:
        return None
    radii = f"w_t = {w_t * 1e3:.1f} um, w_s = {w_s * 1e3:.1f} um"
    if abs(scale - 1.0) > 1e-12:
        what = (f"w_t/w_s = {ratio:.3f} air-equivalent (the ratio checked; the physical radii inside, {radii}, give "
                f"physically {w_t / w_s:.3f}: refraction at its tilted faces alone stretches the tangential radius "
                f"by cos t2/cos t1 = {scale:.4f})")
    else:
        what = f"w_t/w_s = {ratio:.3f} ({radii}; here the air-equivalent and the physical radii are the same)"
    limit = max_ratio if ratio > 1.0 else 1.0 / max_ratio
    return Finding(
        f"the mode at \"{hit.optic}\" ({where}) is elliptical: {what}, outside [{1.0 / max_ratio:.3f}, "
        f"{max_ratio:g}]",
        (hit.optic,), value=ratio, limit=limit, unit="w_t/w_s",
        hint="off-axis curved mirrors and tilted elements focus the two planes differently: bring the fold angles "
             "of the curved mirrors toward the compensating angle (given where a Brewster element sits between "
             "them), reduce the folds, or move the element toward the focus")


def _neighbours(path, i: int) -> list[int]:
    n = len(path.hits)
    if path.role == "ring":
        return sorted({(i - 1) % n, (i + 1) % n} - {i})
    return [j for j in (i - 1, i + 1) if 0 <= j < n]


def _compensation(cav_id: str, layout, path, tolerance_deg: float):
    for i, hit in enumerate(path.hits):
        optic = layout.optics[hit.optic]
        if hit.action != TRANSMIT:
            continue
        if optic.kind == "crystal" and optic.faces != "brewster":
            continue
        nt = element_astigmatism(optic, hit.aoi)
        if nt <= 0.0:
            continue
        folds = []
        for j in _neighbours(path, i):
            other = path.hits[j]
            mirror = layout.optics[other.optic]
            if (mirror.kind == "mirror" and other.action == REFLECT and mirror.roc is not None and mirror.roc > 0
                    and other.aoi > OFF_AXIS_RAD):
                folds.append((mirror, other.aoi))
        if not folds:
            continue
        radii = sum(m.roc for m, _ in folds)
        target = equal_angle(nt, radii)
        planned_astig = sum(mirror_astigmatism(m.roc, a) for m, a in folds)
        # the common angle that gives the planned mirrors' astigmatism: the planned angle itself
        # when the folds are equal
        planned = equal_angle(planned_astig, radii)
        if abs(math.degrees(planned - target)) <= tolerance_deg:
            continue
        kind = "Brewster crystal" if optic.kind == "crystal" else "tilted plate"
        mirrors = ", ".join(f"\"{m.id}\" (R = {m.roc:g} mm, aoi {math.degrees(a):.2f} deg)" for m, a in folds)
        equal = len({round(math.degrees(a), 6) for _, a in folds}) == 1
        planned_text = (f"planned {math.degrees(planned):.2f} deg" if equal else
                        f"the planned angles act like a common {math.degrees(planned):.2f} deg")
        case = "one curved fold: 2 N t = R sin t tan t" if len(folds) == 1 else \
            "two curved folds: N t = (R1/2) sin t1 tan t1 + (R2/2) sin t2 tan t2"
        yield Finding(
            f"cavity \"{cav_id}\": {kind} \"{optic.id}\" (N t = {nt:.4f} mm) next to {mirrors}: the "
            f"astigmatism-compensating angle of incidence is {math.degrees(target):.4f} deg ({case}; Kogelnik et "
            f"al. 1972), {planned_text}; the mirrors give {planned_astig:.4f} mm against {nt:.4f} mm",
            (optic.id,) + tuple(m.id for m, _ in folds) + (cav_id,),
            value=math.degrees(planned), limit=math.degrees(target), unit="deg", severity=NOTE,
            hint=f"fold the curved mirrors by {2.0 * math.degrees(target):.2f} deg (angle of incidence "
                 f"{math.degrees(target):.2f} deg) to make the arm-independent stability edge coincide in both "
                 "planes; a round output or equal waists in the element need slightly different angles")


def check(bench, options):
    if not options["max_ratio"] > 1.0:
        raise ValueError(f"rules.mode-astigmatism.max_ratio must be > 1 (a ratio and its inverse bound the "
                         f"band), not {options['max_ratio']!r}")
    if not options["angle_tolerance_deg"] >= 0.0:
        raise ValueError("rules.mode-astigmatism.angle_tolerance_deg must be >= 0")
    layout = bench.layout
    sol = bench.solution
    for cav in sol.cavities.values():
        spec = layout.cavities[cav.id]
        for hit in cav.hits:
            optic = layout.optics[hit.optic]
            if optic.kind == "crystal" and hit.action == TRANSMIT:
                found = _ellipticity(f"crystal in cavity \"{cav.id}\"", hit, optic, options)
            elif hit.optic == spec.output_coupler:
                found = _ellipticity(f"output coupler of cavity \"{cav.id}\"", hit, optic, options)
            else:
                found = None
            if found is not None:
                yield found.with_(targets=found.targets + (cav.id,))
        yield from _compensation(cav.id, layout, bench.trace.cavities[cav.id], options["angle_tolerance_deg"])
    for beam in sol.beams.values():
        if beam.origin not in sol.cavities or not beam.hits:
            continue
        first = beam.hits[0]
        found = _ellipticity(f"first optic of beam \"{beam.id}\" from cavity \"{beam.origin}\"", first,
                             layout.optics[first.optic], options)
        if found is not None:
            yield found.with_(targets=found.targets + (beam.id,))


RULES = (
    Rule(
        id="mode-astigmatism",
        summary="mode ellipticity w_t/w_s at the optics where it matters (crystals, outputs)",
        explanation=(
            "Off-axis curved mirrors focus the tangential plane more strongly than the sagittal (f_t = (R/2) cos "
            "theta, f_s = (R/2)/cos theta), and Brewster or tilted elements are shorter tangentially than "
            "sagittally in air-equivalent length; the mode then turns elliptical. The ratio w_t/w_s is checked in "
            "every crystal, at the output coupler and at the first optic of every beam leaving a cavity. Inside a "
            "tilted element the ratio is compared in air-equivalent terms (w_t / (w_s cos t2/cos t1)), because "
            "refraction alone stretches the tangential radius by that factor (n at Brewster) for the pump too; "
            "the physical ratio is given beside it. Where a Brewster crystal or a tilted plate sits next to "
            "off-axis concave mirrors, the fold angle that compensates its astigmatism (Kogelnik, Ippen, Dienes & "
            "Shank 1972) is given as a note when the plan differs from it."
        ),
        check=check,
        severity=WARNING,
        options=(
            Option("max_ratio", 1.1,
                   "largest accepted ellipticity w_t/w_s (and smallest 1/max_ratio). At 1.1 the overlap with a "
                   "round beam of the geometric-mean radius is 99.8 % (per axis 2 w1 w2/(w1^2 + w2^2)); ISO 11146-1 "
                   "calls a beam circular down to an ellipticity of 0.87 (from memory), 1.1 is a little stricter",
                   "w_t/w_s"),
            Option("angle_tolerance_deg", 0.5,
                   "difference between the planned and the astigmatism-compensating angle of incidence above which "
                   "the compensating angle is reported (a fold set by hand on a breadboard is good to a few tenths "
                   "of a degree)", "deg"),
        ),
    ),
)
