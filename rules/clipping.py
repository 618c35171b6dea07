"""aperture-clipping: the power a beam loses at an optic's own clear aperture.

Also home of ``surfaces``, which says where a beam meets the surfaces of an optic (with
what radii and at what angle); coating-damage reads the same surfaces.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from benchcheck.clipping import diameter_for_loss, elliptical_loss
from benchcheck.findings import ERROR, WARNING, Finding, Option, Rule
from benchcheck.unfold import internal_length

#: optics that absorb or measure the beam: what misses their face is not "lost" from a path
NOT_CLIPPED = ("dump", "detector", "obstacle")
#: optics with two faces and a length, where the solver reports the beam at the centre
THICK = ("crystal", "plate")


@dataclass(frozen=True)
class Surface:
    """A beam where it crosses one surface of an optic.

    ``w_t``, ``w_s``: physical 1/e^2 radii (mm) in the medium the beam is in on the side
    they are given for (inside a crystal or plate: inside).  ``cos_face``: cosine of the
    angle between that beam and the surface normal, so that the footprint on the surface
    has radii w_t / cos_face and w_s.  ``cos_aperture``: how much the optic's clear
    aperture shrinks in the tangential plane as that beam sees it.
    """

    w_t: float
    w_s: float
    cos_face: float
    cos_aperture: float
    where: str = ""


def _path_perimeter(bench, kind: str, ident: str) -> float:
    """A ring's profile carries the first element's entrance piece one perimeter on."""
    if kind != "cavity":
        return 0.0
    path = bench.trace.cavities[ident]
    return sum(path.segments) if path.role == "ring" else 0.0


def _face_radius(pieces, start: float, end: float, at_start: bool, perimeter: float):
    """Radius at the entrance (``at_start``) or exit face of the material between path
    coordinates ``start`` and ``end``: the solver keeps two free-propagation pieces there,
    from the entrance face to the centre and from the centre to the exit face."""
    half = 0.5 * (end - start)
    tol = 1e-7 * max(1.0, abs(end), perimeter)
    shifts = (0.0, perimeter) if perimeter else (0.0,)
    for p in pieces:
        if abs(p.length - half) > tol:
            continue
        for shift in shifts:
            if at_start and abs(p.s0 - shift - start) <= tol:
                return float(p.radius(p.s0))
            if not at_start and abs(p.s0 + p.length - shift - end) <= tol:
                return float(p.radius(p.s0 + p.length))
    return None


def _neighbours(bench, kind: str, ident: str, result, index: int) -> tuple[str | None, str | None]:
    """Ids of what comes before and after hit ``index`` along the path (a ring wraps round)."""
    hits = result.hits
    ring = kind == "cavity" and bench.trace.cavities[ident].role == "ring"
    before = hits[index - 1].optic if index > 0 or ring else (result.origin if kind == "beam" else None)
    after = hits[(index + 1) % len(hits)].optic if index + 1 < len(hits) or ring else None
    return before, after


def surfaces(bench, kind: str, ident: str, result, index: int) -> list[Surface]:
    """The surfaces hit ``index`` of a cavity or beam (``kind`` "cavity" or "beam") meets.

    A mirror, lens, splitter or aperture: one surface, the beam at the hit, seen at its
    angle of incidence.  A crystal or plate: both faces, with the physical radii inside
    (the solver reports the beam at the centre, where a focused mode is smallest; the
    radius of a Gaussian along a free stretch is largest at one of its ends, so the faces
    are where it clips and the centre is not).  Inside, the beam meets a face at the
    refraction angle theta' (sin theta' = sin aoi / n): the footprint seen from inside,
    w_t / cos theta', is the one seen from outside, w_t,out / cos aoi, because
    w_t,in = w_t,out cos theta' / cos aoi (Kogelnik et al. 1972, from memory).  A plate's
    clear aperture lies in its face, so the inside beam sees it shrunk by cos theta'.  A
    crystal's diameter is its cross-section across its length, the direction the beam
    travels inside, also for Brewster-cut ends: the inside beam sees it whole.
    """
    hit = result.hits[index]
    w_t, w_s = hit.w.get("t"), hit.w.get("s")
    if w_t is None or w_s is None:
        return []
    optic = bench.layout.optics[hit.optic]
    aoi = math.radians(hit.aoi_deg)
    if optic.kind not in THICK:
        c = math.cos(aoi)
        return [Surface(w_t, w_s, c, c)]
    inner = math.asin(math.sin(aoi) / optic.index)
    c_in = math.cos(inner)
    half = internal_length(optic, aoi) / 2.0
    start, end = hit.s - half, hit.s + half
    perimeter = _path_perimeter(bench, kind, ident)
    before, after = _neighbours(bench, kind, ident, result, index)
    out = []
    for at_start, near in ((True, before), (False, after)):
        where = f"face toward \"{near}\"" if near else ("first face" if at_start else "second face")
        r_t = _face_radius(result.profile.get("t", []), start, end, at_start, perimeter)
        r_s = _face_radius(result.profile.get("s", []), start, end, at_start, perimeter)
        out.append(Surface(w_t if r_t is None else r_t, w_s if r_s is None else r_s,
                           c_in, 1.0 if optic.kind == "crystal" else c_in, where))
    return out


def paths(bench):
    """(kind, id, result) for every cavity and beam of the solved bench."""
    for cid, res in bench.solution.cavities.items():
        yield "cavity", cid, res
    for bid, res in bench.solution.beams.items():
        yield "beam", bid, res


def optic_point(bench, optic_id):
    """Where the optic stands on the table (mm), for drawings of a finding."""
    placed = bench.placement.optics.get(optic_id)
    return None if placed is None else (float(placed.point[0]), float(placed.point[1]))


def _um(w_mm: float) -> str:
    return f"{w_mm * 1e3:.0f} um" if w_mm >= 0.0995 else f"{w_mm * 1e3:.3g} um"


def _passes_per_round_trip(bench, cid: str, index: int) -> int:
    """How often one round trip meets hit ``index``: once in a ring and at the end mirrors
    of a linear cavity, twice at every other element of a linear cavity."""
    path = bench.trace.cavities[cid]
    if path.role == "ring" or index in (0, len(path.hits) - 1):
        return 1
    return 2


def check(bench, options):
    max_loss = float(options["max_loss"])
    error_loss = float(options["error_loss"])
    for name, value in (("max_loss", max_loss), ("error_loss", error_loss)):
        if not 0.0 < value < 1.0:
            raise ValueError(f"rules.aperture-clipping.{name} must lie strictly between 0 and 1, not {value!r}")
    for kind, ident, result in paths(bench):
        for i, hit in enumerate(result.hits):
            worst = clip_loss(bench, kind, ident, result, i)
            if worst is None or worst[0] <= max_loss:
                continue
            loss, face = worst
            optic = bench.layout.optics[hit.optic]
            yield _finding(bench, kind, ident, i, hit, optic, loss, face, max_loss, error_loss)


def clip_loss(bench, kind: str, ident: str, result, i: int):
    """(fraction lost, Surface) at the optic's own clear aperture for hit ``i``, on the
    face where the loss is largest; None where the optic has no aperture to clip or the
    path has no mode in some plane.  The rule and the report's per-optic table both read it."""
    optic = bench.layout.optics[result.hits[i].optic]
    if optic.diameter is None or optic.kind in NOT_CLIPPED:
        return None
    faces = surfaces(bench, kind, ident, result, i)
    if not faces:
        return None          # no mode in some plane: nothing to integrate
    radius = optic.diameter / 2.0
    worst = None
    for f in faces:
        loss = elliptical_loss(f.w_t, f.w_s, radius * f.cos_aperture, radius)
        if worst is None or loss > worst[0]:
            worst = (loss, f)
    return worst


def _finding(bench, kind, ident, index, hit, optic, loss, face, max_loss, error_loss):
    where = f" at its {face.where}" if face.where else ""
    seen_t = optic.diameter * face.cos_aperture
    if optic.kind == "crystal":
        seen = f"its {optic.diameter:g} mm cross-section, seen whole along its length"
    elif face.cos_aperture < 1.0 - 1e-12:
        angle = "inside, at the refraction angle" if optic.kind == "plate" else f"at {hit.aoi_deg:.1f} deg incidence"
        seen = (f"its {optic.diameter:g} mm clear aperture, seen {angle} as a {seen_t:.3g} x {optic.diameter:.3g} mm "
                "ellipse (t x s)")
    else:
        seen = f"its {optic.diameter:g} mm clear aperture"
    radii = f"beam radii w_t = {_um(face.w_t)}, w_s = {_um(face.w_s)}"
    if face.where:
        radii += " inside"
    if kind == "cavity":
        n = _passes_per_round_trip(bench, ident, index)
        per = (f"per pass, met on every round trip of cavity \"{ident}\""
               + (f" (twice per round trip: {1.0 - (1.0 - loss) ** 2:.3g} per round trip)" if n == 2 else ""))
    else:
        per = f"of beam \"{ident}\""
    message = (f"{optic.kind} \"{optic.id}\" clips {loss:.3g} ({loss * 100:.3g} %) {per}{where}: {seen}; "
               f"{radii}; limit {max_loss:g} ({max_loss * 100:g} %)")
    hint = _hint(optic, face, max_loss)
    return Finding(message, (optic.id, ident), value=loss, limit=max_loss, unit="fraction", hint=hint,
                   severity=ERROR if loss > error_loss else WARNING, at=optic_point(bench, optic.id))


def _round_up(x: float, digits: int = 3) -> float:
    """``x`` rounded up to ``digits`` significant figures: a printed "at least" must pass."""
    scale = 10.0 ** (math.floor(math.log10(x)) - digits + 1)
    return math.ceil(x / scale - 1e-9) * scale


def _hint(optic, face, max_loss) -> str:
    need = _round_up(diameter_for_loss(face.w_t, face.w_s, max_loss, face.cos_aperture, 1.0))
    what = {"crystal": "a crystal cross-section", "aperture": "an opening"}.get(optic.kind, "a clear aperture")
    text = (f"{what} of at least {need:.3g} mm (now {optic.diameter:g} mm) keeps the loss within the limit, "
            "or make the beam smaller there")
    if optic.kind == "aperture":
        text += "; if the clipping is intended (a mode-selecting iris), record a waiver"
    return text


RULES = (
    Rule(
        id="aperture-clipping",
        summary="power lost at an optic's own clear aperture (projected at its angle of incidence)",
        explanation=(
            "For every hit of every cavity and beam on an optic with a 'diameter' (dumps and detectors "
            "excepted), the fraction of the Gaussian beam (radii w_t, w_s at that hit) outside the clear "
            "aperture. Tilted at incidence aoi, a round aperture of diameter D looks to the beam like an "
            "ellipse of semi-axes (D/2) cos(aoi) in the table plane and D/2 across it. A crystal or plate is "
            "checked at both faces with the radii inside it, where a focused beam is largest; a crystal's "
            "diameter is its cross-section, which the beam inside sees whole also with Brewster-cut ends. "
            "The loss is an integral over the ellipse (Siegman, Lasers 1986, ch. 17 for the round case: "
            "T = 1 - exp(-2 a^2/w^2)). It ignores diffraction ripple after a hard edge, which a clipped beam "
            "carries downstream. In a cavity the loss is per pass and is paid on every round trip (twice at "
            "the inner elements of a linear cavity)."
        ),
        check=check,
        severity=WARNING,
        options=(
            Option("max_loss", 1e-3,
                   "largest fraction of the beam an aperture may stop per pass. 1e-3 is an aperture of about "
                   "3.7 w for a round beam, between Siegman's D = pi w design criterion (99.3 % passes; "
                   "Lasers 1986, section 17.1, from memory) and the D = 4 w (99.97 %) that suppliers quote; "
                   "for a high-finesse passive cavity set it lower (each 1e-4 of loss costs build-up)",
                   "fraction"),
            Option("error_loss", 1e-2,
                   "per-pass loss above which the finding is an error: 1 % is an aperture smaller than about "
                   "3 w, which fails even the D = pi w criterion (common practice)", "fraction"),
        ),
    ),
)
