"""coating-damage: peak intensity, linear power density or fluence on each optic's surface
against its laser-induced damage threshold (LIDT) divided by a safety factor.

The quantities and their conventions (peak, not average, values of the Gaussian; the
tilted footprint; the 1/e^2 diameter for linear power density) are spelled out in the
functions below, because a LIDT figure is only meaningful with its definition.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from benchcheck.findings import ERROR, NOTE, WARNING, Finding, Option, Rule

from .clipping import optic_point, paths, surfaces

MM2_TO_CM2 = 1e-2
MM_TO_CM = 0.1
SPEED_OF_LIGHT_MM_S = 299_792_458_000.0

#: Range of pulse lengths where the sqrt(tau) law is trusted, and the largest ratio of
#: pulse lengths it is stretched over (Stuart et al., Phys. Rev. B 53, 1749 (1996): the
#: tau^1/2 law holds above some tens of ps and fails below about 10 ps; measured exponents
#: spread from about 0.3 to 0.6, so a long extrapolation is uncertain).
SCALING_TAU_RANGE_S = (10e-12, 100e-9)
SCALING_TAU_RATIO = 10.0
#: Wavelengths closer than this are the same coating design point (the 2 % of docs/design.md §3).
SCALING_WAVELENGTH = 0.02


# --- what the beam puts on a surface ----------------------------------------------------

def surface_peak(amount: float, w_t_mm: float, w_s_mm: float, cos_face: float = 1.0) -> float:
    """Peak irradiance (W/cm^2 for a power in W) or fluence (J/cm^2 for an energy in J) of
    an elliptical Gaussian on a surface it meets at angle theta: 2 X cos(theta) / (pi w_t
    w_s).  The peak of a Gaussian is twice its "flat-top" average X / (pi w^2); on a tilted
    surface the footprint's in-plane radius is w_t / cos(theta), which lowers it by
    cos(theta) (Siegman, Lasers 1986, ch. 17 for the Gaussian, from memory; the footprint
    is geometry)."""
    return 2.0 * amount * cos_face / (math.pi * w_t_mm * w_s_mm * MM2_TO_CM2)


def footprint_diameter_cm(w_t_mm: float, w_s_mm: float, cos_face: float = 1.0) -> float:
    """The 1/e^2 diameter a linear-power-density LIDT is divided by.

    Vendors divide the power by the 1/e^2 beam diameter (vendor practice, from memory).
    An elliptical footprint has two, 2 w_t / cos(theta) and 2 w_s; the smaller gives the
    larger W/cm, so it is the conservative choice.  The physics agrees that the small one
    dominates: steady surface heating scales as P/w (Lax, J. Appl. Phys. 48, 3919 (1977)),
    and a narrow stripe heats nearly as a round spot of its narrow width does."""
    return min(2.0 * w_t_mm / cos_face, 2.0 * w_s_mm) * MM_TO_CM


def linear_power_density(power_w: float, w_t_mm: float, w_s_mm: float, cos_face: float = 1.0) -> float:
    """P divided by the smaller 1/e^2 footprint diameter (W/cm); see footprint_diameter_cm."""
    return power_w / footprint_diameter_cm(w_t_mm, w_s_mm, cos_face)


def scaled_fluence_threshold(j_cm2: float, spec_pulse_s: float, beam_pulse_s: float,
                             spec_nm: float | None = None, beam_nm: float | None = None):
    """A pulsed LIDT moved to the beam's pulse length and wavelength, with the reasons the
    result is only approximate (an empty list where the scaling is within its range).

    F(tau_beam) = F(tau_spec) sqrt(tau_beam / tau_spec) (common practice; Stuart et al.,
    Phys. Rev. B 53, 1749 (1996)); F(lambda_beam) = F(lambda_spec) lambda_beam /
    lambda_spec (vendor practice, from memory).  Neither holds across a coating's design
    band, near absorption edges, in the UV or for femtosecond pulses."""
    value = j_cm2 * math.sqrt(beam_pulse_s / spec_pulse_s)
    why = []
    lo, hi = SCALING_TAU_RANGE_S
    outside = [t for t in (spec_pulse_s, beam_pulse_s) if not lo <= t <= hi]
    if outside:
        why.append(f"pulse length {_seconds(outside[0])} is outside {_seconds(lo)}-{_seconds(hi)}")
    ratio = max(beam_pulse_s, spec_pulse_s) / min(beam_pulse_s, spec_pulse_s)
    if ratio > SCALING_TAU_RATIO:
        why.append(f"pulse lengths differ by x{ratio:.3g}")
    if spec_nm is not None and beam_nm is not None:
        value *= beam_nm / spec_nm
        if abs(beam_nm - spec_nm) > SCALING_WAVELENGTH * spec_nm:
            why.append(f"wavelengths differ ({spec_nm:g} nm rated, {beam_nm:g} nm used)")
    return value, why


def _seconds(t: float) -> str:
    for unit, scale in (("s", 1.0), ("ms", 1e-3), ("us", 1e-6), ("ns", 1e-9), ("ps", 1e-12), ("fs", 1e-15)):
        if t >= scale * 0.9995:
            return f"{t / scale:.3g} {unit}"
    return f"{t:.3g} s"


# --- the rule ---------------------------------------------------------------------------

def _pulse(bench, kind: str, ident: str, result):
    """(pulse length s or None, wavelength nm) of a cavity or beam."""
    layout = bench.layout
    if kind == "cavity":
        cav = layout.cavities[ident]
        return (cav.pulse_s if result.pulsed else None), cav.wavelength_nm
    wl = bench.trace.beams[ident].wavelength_nm
    origin = result.origin
    if origin in layout.sources:
        return layout.sources[origin].pulse_s, wl
    return layout.cavities[origin].pulse_s, wl


def _overlaps(result, index: int, pulse_s: float | None) -> tuple[bool, str]:
    """Whether the two directions of a linear cavity are on the surface at the same time.

    CW they always are.  A pulse meets an inner element again after it has gone to the
    nearer end mirror and back; it overlaps its own return when that delay is shorter than
    the pulse.  The delay is taken over the geometric distance, never longer than the
    optical one, so a borderline case counts as overlapping (the conservative side)."""
    if pulse_s is None:
        return True, "the linear cavity's two directions overlap there"
    s = result.hits[index].s
    d = min(s - result.hits[0].s, result.hits[-1].s - s)
    if 2.0 * d < SPEED_OF_LIGHT_MM_S * pulse_s:
        return True, "the pulse overlaps its return from the end mirror there"
    return False, (f"the returning pulse passes {2.0 * d / SPEED_OF_LIGHT_MM_S * 1e12:.3g} ps later, after this "
                   f"{_seconds(pulse_s)} pulse: one-way fluence")


def _face(f) -> str:
    return f" at its {f.where}" if f.where else ""


def _incidence(hit) -> str:
    return f" at {hit.aoi_deg:.1f} deg incidence" if hit.aoi_deg > 0.05 else ""


def _severity(value: float, lidt: float) -> str:
    return ERROR if value > lidt else WARNING


@dataclass
class Load:
    """What one LIDT figure of an optic is compared with at one hit: the rule's finding and
    the report's "load / LIDT" column both read this, so they cannot disagree."""

    quantity: str             # "peak intensity" | "linear power density" | "peak fluence"
    unit: str                 # W/cm^2 | W/cm | J/cm^2
    value: float              # on the worst surface, both directions where they overlap
    rated: float              # the LIDT it is compared with (a fluence moved to the beam's pulse and wavelength)
    face: object              # clipping.Surface where the value is largest
    load: str                 # how the value was formed ("2 x 3 W one-way: ...", "one pass")
    spec: str                 # the rating as given, and how it was moved
    caveat: str = ""          # why the comparison is only approximate


def surface_loads(bench, kind: str, ident: str, result, i: int) -> list[Load]:
    """Every comparison of hit ``i`` of a cavity or beam with the optic's LIDT: the peak
    intensity on the surface against a W/cm^2 rating, the power over the smaller footprint
    diameter against a W/cm rating, the peak fluence against a pulsed rating (for a pulsed
    beam with a known energy).  Inner elements of a linear cavity carry both directions."""
    hit = result.hits[i]
    optic = bench.layout.optics[hit.optic]
    lidt = optic.lidt
    if lidt is None or (hit.power_w is None and hit.peak_j_cm2 is None):
        return []
    faces = surfaces(bench, kind, ident, result, i)
    if not faces:
        return []
    pulse_s, wl_nm = _pulse(bench, kind, ident, result)
    both = _both_directions(kind, result, i, hit)
    out = []
    if hit.power_w is not None:
        power = hit.power_w * (2.0 if both else 1.0)
        load = (f"2 x {hit.power_w:.3g} W one-way: the linear cavity's two directions overlap there" if both
                else f"{hit.power_w:.3g} W")
        if pulse_s is not None:
            load = "average power " + load
        cw_note = ""
        if lidt.wavelength_nm is not None and abs(lidt.wavelength_nm - wl_nm) > SCALING_WAVELENGTH * lidt.wavelength_nm:
            cw_note = f"; rated at {lidt.wavelength_nm:g} nm, used at {wl_nm:g} nm (not scaled)"
        if lidt.w_cm2 is not None:
            value, f = max(((surface_peak(power, f.w_t, f.w_s, f.cos_face), f) for f in faces), key=lambda x: x[0])
            out.append(Load("peak intensity", "W/cm^2", value, lidt.w_cm2, f, load,
                            f"LIDT {lidt.w_cm2:g} W/cm^2", cw_note))
        if lidt.w_cm is not None:
            value, f = max(((linear_power_density(power, f.w_t, f.w_s, f.cos_face), f) for f in faces),
                           key=lambda x: x[0])
            out.append(Load("linear power density", "W/cm", value, lidt.w_cm, f, load,
                            f"LIDT {lidt.w_cm:g} W/cm", cw_note))
    if lidt.j_cm2 is not None and pulse_s is not None and hit.peak_j_cm2 is not None:
        value, f = max(((_face_fluence(hit, f), f) for f in faces), key=lambda x: x[0])
        load = "one pass"
        if both:
            overlap, why = _overlaps(result, i, pulse_s)
            if overlap:
                value *= 2.0
                load = f"2 x one pass: {why}"
            else:
                load = why
        rated, approx = scaled_fluence_threshold(lidt.j_cm2, lidt.pulse_s, pulse_s, lidt.wavelength_nm, wl_nm)
        spec = f"LIDT {lidt.j_cm2:g} J/cm^2 at {_seconds(lidt.pulse_s)}"
        if lidt.wavelength_nm is not None:
            spec += f", {lidt.wavelength_nm:g} nm"
        if not math.isclose(rated, lidt.j_cm2, rel_tol=1e-12):
            to = f"{_seconds(pulse_s)}" + (f", {wl_nm:g} nm" if lidt.wavelength_nm is not None else "")
            spec += f" scaled to {to} ({rated:.3g} J/cm^2)"
        if lidt.wavelength_nm is None:
            spec += "; no rated wavelength given, not scaled in wavelength"
        caveat = f"; the scaling is approximate here: {', '.join(approx)}" if approx else ""
        out.append(Load("peak fluence", "J/cm^2", value, rated, f, load, spec, caveat))
    return out


def _both_directions(kind, result, i, hit) -> bool:
    """In a linear cavity both directions cross every inner element.  At an end mirror the
    arriving and the reflected beam are one reflection, as in any test of an HR coating,
    so the one-way power is what its rating compares with."""
    end_mirror = i in (0, len(result.hits) - 1)
    return kind == "cavity" and hit.counter_propagating and not end_mirror


def check(bench, options):
    factor = float(options["safety_factor"])
    if not factor > 0.0:
        raise ValueError(f"rules.coating-damage.safety_factor must be > 0, not {factor!r}")
    for kind, ident, result in paths(bench):
        pulse_s, wl_nm = _pulse(bench, kind, ident, result)
        for i, hit in enumerate(result.hits):
            optic = bench.layout.optics[hit.optic]
            lidt = optic.lidt
            if lidt is None or (hit.power_w is None and hit.peak_j_cm2 is None):
                continue
            faces = surfaces(bench, kind, ident, result, i)
            if not faces:
                continue
            yield from _check_hit(bench, kind, ident, result, i, hit, optic, lidt, faces, pulse_s, factor)


def _check_hit(bench, kind, ident, result, i, hit, optic, lidt, faces, pulse_s, factor):
    who = f"{kind} \"{ident}\""
    target = f"{optic.kind} \"{optic.id}\""
    targets = (optic.id, ident)
    at = optic_point(bench, optic.id)
    pulsed = pulse_s is not None
    for ld in surface_loads(bench, kind, ident, result, i):
        limit = ld.rated / factor
        if ld.value <= limit:
            continue
        how = ""
        if ld.quantity == "linear power density":
            d = footprint_diameter_cm(ld.face.w_t, ld.face.w_s, ld.face.cos_face) * 10.0
            how = f"; divided by the smaller 1/e^2 footprint diameter, {d:.3g} mm"
            hint = (f"a beam {ld.value / limit:.3g} times larger on this optic (W/cm falls as 1/w), "
                    f"{limit / ld.value:.3g} times the power, or a coating rated higher")
        else:
            hint = _hint_size(ld.value, limit, fluence=ld.unit == "J/cm^2")
        yield Finding(
            f"{ld.quantity} {ld.value:.3g} {ld.unit} on {target}{_face(ld.face)}{_incidence(hit)} from {who} "
            f"({ld.load}{how}), above the limit {limit:.3g} {ld.unit} = {ld.spec} / safety factor {factor:g}"
            f"{ld.caveat}",
            targets, value=ld.value, limit=limit, unit=ld.unit, severity=_severity(ld.value, ld.rated), at=at,
            hint=hint)
    if hit.power_w is None:   # a single pulse: only its fluence is known
        if not (lidt.j_cm2 is not None and pulsed):
            return
    has_cw = lidt.w_cm2 is not None or lidt.w_cm is not None
    if lidt.j_cm2 is not None and pulsed and hit.peak_j_cm2 is None:
        yield Finding(
            f"{who} is pulsed ({_seconds(pulse_s)}) but its pulse energy is unknown (give pulse_energy_j, or "
            f"power_w with rep_hz), so the fluence on {target} cannot be compared with its LIDT",
            targets, severity=NOTE, at=at, hint="give the pulse energy or the repetition rate")
    elif lidt.j_cm2 is not None and not pulsed and not has_cw:
        both = _both_directions(kind, result, i, hit)
        power = hit.power_w * (2.0 if both else 1.0)
        load = (f"2 x {hit.power_w:.3g} W one-way: the linear cavity's two directions overlap there" if both
                else f"{hit.power_w:.3g} W")
        value = max(surface_peak(power, f.w_t, f.w_s, f.cos_face) for f in faces)
        yield Finding(
            f"{target} has only a pulsed LIDT ({lidt.j_cm2:g} J/cm^2 at {_seconds(lidt.pulse_s)}), and {who} is "
            f"CW with a peak intensity of {value:.3g} W/cm^2 on it ({load}): a fluence rating says nothing about "
            "CW heating, so this is not checked",
            targets, value=value, unit="W/cm^2", severity=NOTE, at=at,
            hint="ask for a CW rating (W/cm or W/cm^2) of the coating")
    if pulsed and lidt.j_cm2 is None and hit.power_w is not None:
        fluence = None if hit.peak_j_cm2 is None else max(_face_fluence(hit, f) for f in faces)
        what = "unknown" if fluence is None else f"{fluence:.3g} J/cm^2 per pass"
        compared = "its average power was compared with the CW rating; " if has_cw else ""
        yield Finding(
            f"{who} is pulsed ({_seconds(pulse_s)}) and {target} has only a CW LIDT: {compared}the pulse "
            f"fluence on it ({what}) is not checked",
            targets, value=fluence, unit="J/cm^2" if fluence is not None else None, severity=NOTE, at=at,
            hint="ask for a pulsed rating (J/cm^2 with its pulse length and wavelength) of the coating")


def _face_fluence(hit, f) -> float:
    """Peak fluence on one surface from the solver's normal-incidence peak at the hit:
    the pulse energy is the same, spread over that surface's footprint."""
    return hit.peak_j_cm2 * (hit.w["t"] * hit.w["s"]) / (f.w_t * f.w_s) * f.cos_face


def _hint_size(value: float, limit: float, fluence: bool = False) -> str:
    grow = math.sqrt(value / limit)
    what = "pulse energy" if fluence else "power"
    return (f"a beam {grow:.3g} times larger in both planes on this optic, {limit / value:.3g} times the {what}, "
            "or a coating rated higher")


RULES = (
    Rule(
        id="coating-damage",
        summary="peak intensity or fluence against each optic's damage threshold divided by a safety factor",
        explanation=(
            "For every hit on an optic with a 'lidt': a CW rating in W/cm^2 is compared with the peak "
            "irradiance on the surface, 2P cos(aoi)/(pi w_t w_s) (the tilted footprint spreads the beam); a "
            "rating in W/cm with the power over the smaller 1/e^2 diameter of the footprint (the conservative "
            "one of the two); a pulsed rating in J/cm^2 with the peak fluence 2E cos(aoi)/(pi w_t w_s), after "
            "moving the rating to the beam's pulse length by sqrt(tau) (Stuart et al. 1996) and to its "
            "wavelength by lambda (vendor practice), flagged as approximate outside 10 ps-100 ns, over more "
            "than x10 in tau or across more than 2 % in wavelength. A crystal or plate is checked at both "
            "faces. In a linear cavity both directions cross every inner element (fold mirrors, crystals, "
            "plates, lenses): twice the one-way power (and twice the fluence where a pulse overlaps its own "
            "return). An end mirror is loaded one way: its arriving and reflected beams are one reflection, as "
            "in the damage test of an HR coating. A pulsed beam is checked against a CW rating "
            "by its average power, and a CW beam cannot be checked against a pulsed rating alone: both are "
            "said in a note. The limit is the LIDT divided by safety_factor; above the LIDT itself the "
            "finding is an error."
        ),
        check=check,
        severity=WARNING,
        options=(
            Option("safety_factor", 2.0,
                   "the limit is LIDT / safety_factor: a factor of 2 is common practice, covering the spread of "
                   "damage tests (ISO 21254 gives the threshold, not a safe working level), ageing and "
                   "contamination of a surface in use, and hot spots of a real beam over the ideal Gaussian", ""),
        ),
    ),
)
