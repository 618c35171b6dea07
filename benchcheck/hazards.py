"""Laser hazards of every stretch of beam on the table.

A safety review asks, for each piece of beam a person could put an eye into: what
wavelength, how much power or pulse energy, how far above the exposure limit (MPE) it is
when averaged over the limiting aperture, which eyewear optical density it needs, whether
an enclosure holds it, and, for a beam that runs off into the room, how far its hazard
reaches.  This module answers that from the solved bench: it cuts every cavity leg,
declared beam, traced-on extension and leak or secondary beam into segments, takes the
smallest 1/e^2 radius along each from the solved Gaussian beams, and hands the numbers to
``exposure`` (the standards' formulas).  Rules (``rules/safety.py``), the ``hazards``
command and the report all read the one ``Assessment`` made here.

Everything here is advisory: the laser safety officer, IEC 60825-1 / ANSI Z136.1 and local
regulations decide.  Where a figure cannot be judged (no power, no pulse data, no MPE at a
wavelength) the segment says why in ``problem``; it is never dropped.
"""

from __future__ import annotations

import math
from bisect import bisect_left, bisect_right
from dataclasses import dataclass, field

import numpy as np
import shapely
from shapely.geometry import LineString, Polygon
from shapely.ops import substring, unary_union

from . import exposure, gauss
from .abcd import PLANES
from .coatings import pass_factor
from .model import WAVELENGTH_MATCH
from .raycast import TABLE_EDGE, ZONE
from .solve import linspace_rows, per_piece_list, radius_along

NM_TO_MM = 1e-6
M2_TO_CM2 = 1e4

CAUTION = (
    "Advisory only: every hazard figure here is an estimate from the plan. The laser safety officer, "
    "IEC 60825-1 / ANSI Z136.1 and local regulations decide what is safe, which eyewear is worn and "
    "how the area is controlled."
)

#: segment kinds
CAVITY_LEG = "cavity-leg"
BEAM = "beam"
EXTENSION = "extension"
LEAK = "leak"
SECONDARY = "secondary"
#: the smallest limiting aperture of IEC 60825-1 Table A.3 (mm, from memory), used where no
#: aperture is tabulated
SMALLEST_APERTURE_MM = 1.0
#: samples of the beam radius along a segment (the waist inside it is added exactly)
_SAMPLES = 33


@dataclass(frozen=True)
class MpeOverride:
    """A lab's own exposure limit at one wavelength (from the repository configuration)."""

    wavelength_nm: float
    w_cm2: float | None = None         # CW / average-power MPE at the configured exposure time
    j_cm2: float | None = None         # per-pulse MPE for the pulses on this bench
    aperture_mm: float | None = None   # limiting aperture to average over


@dataclass(frozen=True)
class Policy:
    """How exposures are judged: the exposure durations and any configured MPE figures."""

    visible_s: float = 0.25            # 400-700 nm: the aversion response (common practice)
    invisible_s: float = 10.0          # elsewhere (common practice for unintended viewing)
    overrides: tuple[MpeOverride, ...] = ()

    def exposure_s(self, wavelength_nm: float) -> float:
        return self.visible_s if 400.0 <= wavelength_nm <= 700.0 else self.invisible_s

    def override(self, wavelength_nm: float) -> MpeOverride | None:
        best = None
        for o in self.overrides:
            err = abs(o.wavelength_nm - wavelength_nm) / wavelength_nm
            if err <= WAVELENGTH_MATCH and (best is None or err < best[0]):
                best = (err, o)
        return None if best is None else best[1]


@dataclass(frozen=True)
class Gaussian:
    """Where a free beam's waist is and how fast it grows, along the segment (mm from its
    start), for the hazard distance."""

    w0: float
    waist_at: float
    rayleigh: float


@dataclass
class Segment:
    kind: str
    id: str
    parent: str
    targets: tuple[str, ...]
    wavelength_nm: float
    start: tuple[float, float]
    end: tuple[float, float]
    power_w: float | None              # average power (one way)
    pulse_energy_j: float | None = None
    pulse_s: float | None = None
    rep_hz: float | None = None
    w_mm: float | None = None          # smallest 1/e^2 radius along it (None: unknown)
    directions: int = 1                # 2 for a leg of a linear cavity (both ways, same figures)
    #: what stops it, for segments that run into the room: table-edge | footprint | zone
    end_kind: str | None = None
    end_id: str | None = None
    end_zone_kind: str | None = None
    inside_enclosure: bool = False
    open_mm: float | None = None       # length outside every enclosure
    beam: tuple[Gaussian, ...] = ()    # per plane, at the start (segments that run off only)
    # --- the judgement ---
    exposure_s: float | None = None
    pulsed: bool = False
    aperture_mm: float | None = None
    mpe: float | None = None           # W/m^2 (CW) or J/m^2 per pulse (pulsed)
    mpe_rule: str | None = None
    mpe_source: str | None = None      # "built-in" | "configuration"
    exposure: float | None = None      # same unit as mpe, averaged over the aperture
    ratio: float | None = None         # exposure / MPE
    od: int | None = None
    nohd_mm: float | None = None
    reaches: list = field(default_factory=list)   # [{"kind": "table-edge"|"keepout", "id"}]
    problem: str | None = None         # why it cannot be judged (never silently skipped)
    #: the power is an upper bound (a passive cavity's reflection, an unknown coating)
    at_most: bool = False
    notes: list[str] = field(default_factory=list)
    #: the corners where it is not straight (a stray bent by a lens it passes)
    points: tuple = ()

    @property
    def polyline(self) -> list:
        return list(self.points) if len(self.points) > 2 else [self.start, self.end]

    @property
    def length_mm(self) -> float:
        pts = np.asarray(self.polyline, dtype=float)
        return float(np.hypot(*np.diff(pts, axis=0).T).sum())

    @property
    def runs_off(self) -> bool:
        """It is not stopped by an optic of the bench: the table edge or a keep-out zone."""
        return self.end_kind == TABLE_EDGE or (self.end_kind == ZONE and self.end_zone_kind == "keepout")

    @property
    def mpe_unit(self) -> str:
        return "J/m^2" if self.pulsed else "W/m^2"


@dataclass
class Source:
    """The class estimate of a source or a cavity's output."""

    id: str
    kind: str                          # "source" | "cavity-output"
    wavelength_nm: float
    power_w: float | None
    pulse_energy_j: float | None
    class_estimate: str | None
    detail: dict


@dataclass
class Wavelength:
    wavelength_nm: float
    exposure_s: float
    pulsed: bool
    mpe: float | None                  # W/m^2 or J/m^2
    mpe_source: str | None
    max_power_w: float | None
    max_pulse_energy_j: float | None
    od: int | None
    class_estimate: str | None
    problem: str | None = None


@dataclass
class Assessment:
    segments: list[Segment]
    sources: list[Source]
    wavelengths: list[Wavelength]
    caution: str = CAUTION


# --- building the segments ------------------------------------------------------------------

def zone_polygons(solution) -> dict:
    """Every zone's polygon by id: those the trace built for its ray casts, so that a bench
    builds each once."""
    layout, table = solution.layout, solution.trace.table
    if table is not None and len(table.zone_shapes) == len(layout.zones):
        return table.zone_shapes
    return {z.id: Polygon(z.polygon) for z in layout.zones}


def enclosures(layout, polygons: dict | None = None):
    """All enclosure zones as one cover (two boxes that abut count as one), built once per
    bench; None where there is no enclosure.  ``polygons``: the zones' polygons by id,
    where the caller has them (``zone_polygons``)."""
    polys = [Polygon(z.polygon) if polygons is None else polygons[z.id] for z in layout.zones
             if z.kind == "enclosure"]
    return unary_union(polys) if polys else None


def _line(points):
    pts = [tuple(map(float, p)) for p in points]
    if len(pts) > 1 and pts[0] != pts[-1]:
        return LineString(pts)
    from shapely.geometry import Point
    return Point(pts[0])


def enclosed(cover, points) -> bool:
    """A stretch of beam is enclosed when the cover holds all of it."""
    return cover is not None and cover.covers(_line(points))


def tail_power(layout, b, wavelength_nm):
    """Power a beam carries past its last optic: what arrives there times what that optic
    passes on in the traced-on direction."""
    last = b.hits[-1]
    if last.power_w is None:
        return None
    return last.power_w * pass_factor(layout.optics[last.optic], last.action, wavelength_nm)


def _tail_energy(layout, b, wavelength_nm):
    last = b.hits[-1]
    if last.energy_j is None:
        return None
    return last.energy_j * pass_factor(layout.optics[last.optic], last.action, wavelength_nm)


def _smallest_radius(profile: dict, s0: float, s1: float) -> float | None:
    """Smallest 1/e^2 radius (mm, either plane) between path coordinates s0 and s1."""
    if s0 == s1:
        # every sample of an empty stretch (and any waist in it) is s0 itself: the radius
        # there, in the smaller plane, is the smallest
        best = None
        for plane in PLANES:
            pieces = profile.get(plane) or []
            if not pieces:
                return None
            w = float(radius_along(pieces, np.array([float(s0)]))[0])
            if not math.isnan(w):
                best = w if best is None else min(best, w)
        return best
    return _smallest_radii(profile, [(s0, s1)])[0]


def _smallest_radii(profile: dict, spans) -> list[float | None]:
    """``_smallest_radius`` of each (s0, s1) span of one path, with one radius look-up per
    plane for all of them (a path's legs share its pieces; the radius at a point does not
    depend on the other points asked).  The samples are those of ``np.linspace(s0, s1,
    _SAMPLES)`` span by span (``linspace_rows``) plus the waists inside each span."""
    if not spans:
        return []
    lo = np.array([float(a) for a, _ in spans])
    hi = np.array([float(b) for _, b in spans])
    best = np.full(len(spans), np.nan)
    samples = linspace_rows(lo, hi, _SAMPLES)   # the same in both planes
    for plane in PLANES:
        pieces = profile.get(plane) or []
        if not pieces:
            return [None] * len(spans)    # a plane without a mode: size unknown
        waists = np.sort(_waists(pieces))
        # which waists fall in which span (by bisection: linear time on long paths)
        first = np.searchsorted(waists, lo, side="left")
        count = np.maximum(np.searchsorted(waists, hi, side="right") - first, 0)
        inside = int(count.sum())
        if inside:
            owner = np.repeat(np.arange(len(spans)), count)
            at = np.repeat(first - (np.cumsum(count) - count), count) + np.arange(inside)
            w = radius_along(pieces, np.concatenate([samples.ravel(), waists[at]]))
        else:                             # no waist inside any span: the samples alone
            w = radius_along(pieces, samples.ravel())
        m = np.fmin.reduce(w[:samples.size].reshape(samples.shape), axis=1)   # NaN only where all are
        if inside:
            np.fmin.at(m, owner, w[samples.size:])
        best = np.fmin(best, m)
    return [None if math.isnan(v) else v for v in best.tolist()]


def _waists(pieces) -> np.ndarray:
    """Path coordinates of the waists inside the pieces (z = -Re q^ / k into a piece of
    reduced length factor k > 0, kept where 0 <= z <= its length), in piece order."""
    out = []
    for p in pieces:       # one pass in plain floats: four numpy columns cost more than the arithmetic
        k = float(p.k)
        if k > 0:
            z = -complex(p.q0).real / k
            if 0.0 <= z <= float(p.length):
                out.append(float(p.s0) + z)
    return np.array(out, dtype=float)


def _piece_at(pieces, s: float, arriving: bool):
    """The free-propagation piece that arrives at (``arriving``) or leaves from ``s``: of the
    pieces that hold ``s`` (within 1e-6 mm), the one whose end (or start) is nearest, the
    first in the list on a tie.  Pieces in path order are searched by bisection (a long
    path has thousands of pieces and a stray for every few of them)."""
    cols = _piece_columns(pieces)
    if cols is None or not math.isfinite(s):
        best = None
        for p in pieces:
            edge = p.s0 + p.length if arriving else p.s0
            inside = p.s0 - 1e-6 <= s <= p.s0 + p.length + 1e-6
            if not inside:
                continue
            d = abs(edge - s)
            if best is None or d < best[0]:
                best = (d, p)
        return None if best is None else best[1]
    s0, end, lower, upper = cols
    # holding s is lower <= s <= upper; both columns are non-decreasing, so the pieces that
    # hold s are one run of the list
    i, j = bisect_left(upper, s), bisect_right(lower, s)
    if i >= j:
        return None
    edge = end if arriving else s0
    return pieces[min(range(i, j), key=lambda k: abs(edge[k] - s))]     # the first on a tie


#: The columns of a few recent piece lists (see ``_piece_at``), by list identity.
_COLUMNS: dict[int, tuple] = {}


def _piece_columns(pieces):
    """(s0, end, s0 - 1e-6, end + 1e-6) of pieces in path order, as lists of floats (a
    stray asks a few of them: plain bisection beats numpy's per-call cost), or None where
    the starts or ends go backwards (then every piece is looked at)."""
    return per_piece_list(_COLUMNS, pieces, _columns) if pieces else None


def _columns(pieces):
    s0 = [float(p.s0) for p in pieces]
    end = [a + float(p.length) for a, p in zip(s0, pieces)]
    lower, upper = [a - 1e-6 for a in s0], [b + 1e-6 for b in end]
    ordered = all(b - a >= 0.0 for col in (lower, upper) for a, b in zip(col, col[1:]))
    return (s0, end, lower, upper) if ordered else None


def _gaussian(piece, s: float, reverse: bool = False) -> Gaussian | None:
    """The free beam in air at path coordinate ``s`` of a piece (reversed: travelling back)."""
    if piece is None or piece.k <= 0 or abs(piece.scale - 1.0) > 1e-9 or abs(piece.k - 1.0) > 1e-9:
        return None              # only beams in air leave the bench
    q = complex(piece.q0 + (s - piece.s0) * piece.k)
    if reverse:
        q = -q.conjugate()
    zr = q.imag
    if not zr > 0:
        return None
    w0 = float(gauss.radius(1j * zr, piece.wavelength, piece.m2))
    return Gaussian(w0, -q.real, zr)


def _min_radius_of(beams: tuple[Gaussian, ...], length: float) -> float | None:
    if not beams:
        return None
    out = []
    for g in beams:
        z = min(max(g.waist_at, 0.0), length)
        out.append(g.w0 * math.sqrt(1.0 + ((z - g.waist_at) / g.rayleigh) ** 2))
    return min(out)


def _pulse_of(layout, origin: str):
    """(pulse_s, rep_hz) of a source or a cavity."""
    if origin in layout.sources:
        src = layout.sources[origin]
        return src.pulse_s, src.rep_hz
    if origin in layout.cavities:
        cav = layout.cavities[origin]
        return cav.pulse_s, cav.rep_hz
    return None, None


def segments(solution, w100: dict | None = None) -> list[Segment]:
    """Every segment of beam on the table, not yet judged.  ``w100``, where given, receives
    each beam's ``_smallest_radius`` at 100 mm from its origin (the class estimate's
    measurement distance), found in the one radius look-up of the beam's legs."""
    layout, traced = solution.layout, solution.trace
    cover = enclosures(layout, zone_polygons(solution))
    out: list[Segment] = []
    for cid, path in traced.cavities.items():
        cav, res = layout.cavities[cid], solution.cavities[cid]
        pulse_s, rep_hz = cav.pulse_s, cav.rep_hz
        hits = path.hits
        pairs = list(zip(range(len(hits) - 1), range(1, len(hits))))
        if path.role == "ring":
            pairs.append((len(hits) - 1, 0))
        total = sum(path.segments)
        radii = _smallest_radii(res.profile, [(hits[i].s, hits[j].s if j > i else total) for i, j in pairs])
        for (i, j), w_mm in zip(pairs, radii):
            a, b = hits[i], hits[j]
            seg = Segment(CAVITY_LEG, f"{cid}:{a.optic}-{b.optic}", cid, (cid,), path.wavelength_nm,
                          _xy(a.point), _xy(b.point), res.circulating_w,
                          None if res.circulating_w is None or rep_hz is None else res.circulating_w / rep_hz,
                          pulse_s, rep_hz, w_mm,
                          directions=2 if path.role == "linear" else 1)
            out.append(seg)
    for bid, path in traced.beams.items():
        res = solution.beams[bid]
        pulse_s, rep_hz = _pulse_of(layout, res.origin)
        pts = [_xy(path.start)] + [_xy(h.point) for h in path.hits]
        s_at = [0.0] + [h.s for h in path.hits]
        spans = [(s_at[k], s_at[k + 1]) for k in range(len(path.hits))]
        if path.tail is not None:
            spans.append((path.hits[-1].s, path.hits[-1].s + path.tail.length))
        if w100 is not None and res.profile:
            radii = _smallest_radii(res.profile, spans + [(100.0, 100.0)])
            w100[bid] = radii.pop()
        else:
            radii = _smallest_radii(res.profile, spans)
        for k in range(len(path.hits)):
            a_name = res.origin if k == 0 else path.hits[k - 1].optic
            seg = Segment(BEAM, f"{bid}:{a_name}-{path.hits[k].optic}", bid, (bid,), path.wavelength_nm,
                          # what travels into hit k is what arrives there (solve gives it per hit)
                          pts[k], pts[k + 1], res.hits[k].power_w, res.hits[k].energy_j, pulse_s, rep_hz,
                          radii[k], end_kind="optic", end_id=path.hits[k].optic)
            out.append(seg)
        if path.tail is not None:
            last = path.hits[-1]
            end = path.tail
            seg = Segment(EXTENSION, f"{bid}:{last.optic}-onward", bid, (bid, last.optic), path.wavelength_nm,
                          _xy(last.point), _xy(end.point), tail_power(layout, res, path.wavelength_nm),
                          _tail_energy(layout, res, path.wavelength_nm), pulse_s, rep_hz,
                          radii[-1],
                          end_kind=end.kind, end_id=end.id, end_zone_kind=end.zone_kind)
            beams = []
            for plane in PLANES:
                g = _gaussian(_piece_at(res.profile.get(plane) or [], last.s + 1e-6, arriving=False), last.s)
                if g is not None:
                    beams.append(g)
            seg.beam = tuple(beams) if len(beams) == len(PLANES) else ()
            out.append(seg)
    for r in solution.strays:
        out.append(_stray_segment(solution, r))
    _cover(out, cover)
    return out


def _stray_segment(solution, r) -> Segment:
    """A leak or secondary beam along the polyline it follows (it may pass optics inside
    their clear aperture), with its power where it starts."""
    layout, traced = solution.layout, solution.trace
    st = r.stray
    if st.from_cavity:
        path, res = traced.cavities[st.parent], solution.cavities[st.parent]
        pulse_s, rep_hz = layout.cavities[st.parent].pulse_s, layout.cavities[st.parent].rep_hz
    else:
        path, res = traced.beams[st.parent], solution.beams[st.parent]
        pulse_s, rep_hz = _pulse_of(layout, res.origin)
    parent_energy = res.hits[st.hit].energy_j
    energy = None
    if st.input_reflection:
        for b in solution.beams.values():
            if b.into == st.parent and b.hits[-1].energy_j is not None:
                energy = b.hits[-1].energy_j * st.start_fraction
    elif parent_energy is not None:
        energy = parent_energy * st.fraction * st.start_fraction
    points = tuple(st.path_points())
    seg = Segment(st.kind, st.id, st.parent, (st.optic, st.parent), st.wavelength_nm, points[0], points[-1],
                  r.power_w, energy, pulse_s, rep_hz,
                  end_kind=st.end.kind, end_id=st.end.id, end_zone_kind=st.end.zone_kind, points=points,
                  at_most=r.at_most)
    focusing = [v for v in st.via if layout.optics[v].kind == "lens" or layout.optics[v].roc is not None]
    branch = st.depth > 0 or st.start_fraction != 1.0
    beams = []
    if not focusing and not branch:
        hit = path.hits[st.hit]
        reverse = _arrives_backwards(path, st)
        for plane in PLANES:
            piece = _piece_at(res.profile.get(plane) or [], hit.s, arriving=not reverse)
            g = _gaussian(piece, hit.s, reverse=reverse)
            if g is not None:
                beams.append(g)
    seg.beam = tuple(beams) if len(beams) == len(PLANES) else ()
    if seg.beam:
        seg.w_mm = _min_radius_of(seg.beam, seg.length_mm)
    elif focusing or branch:
        seg.w_mm = None
        what = f"it passes {', '.join(focusing)}, which focuses it" if focusing else "it is a reflection off an " \
            "optic another stray passes"
        seg.notes.append(f"{what}: its size is not modelled, so all of it is taken through the aperture and "
                         "its hazard distance as unbounded where it is hazardous")
    else:
        w = [v for v in res.hits[st.hit].w.values() if v is not None]
        seg.w_mm = min(w) if len(w) == len(PLANES) else None
        seg.notes.append("its divergence is not known here, so it is taken as collimated at the size it has "
                         f"on \"{st.optic}\"")
    if st.optic in layout.optics and layout.optics[st.optic].roc is not None and st.kind == "leak":
        seg.notes.append(f"the lens of \"{st.optic}\"'s curved substrate is not applied to this leak")
    return seg


def _arrives_backwards(path, st) -> bool:
    """True when the light leaking at a cavity mirror travels the path backwards (a linear
    cavity's return half); the forward beam arrives along the leg from the previous hit."""
    if path.role != "linear":
        return False
    i = st.hit
    d = np.asarray(st.direction, dtype=float)
    here = np.asarray(path.hits[i].point, dtype=float)
    if i + 1 < len(path.hits):
        back = here - np.asarray(path.hits[i + 1].point, dtype=float)
        n = np.linalg.norm(back)
        if n > 0 and np.dot(back / n, d) > 0.999:
            return True
    return False


def _cover(segs: list[Segment], cover) -> None:
    """Whether the enclosures hold each segment, and how much of it (mm) they leave open:
    the geometry of all segments made and tested in one vectorised shapely call each."""
    if not segs:
        return
    lines = np.empty(len(segs), dtype=object)
    plain = []
    for k, seg in enumerate(segs):
        pts = seg.polyline
        if len(pts) > 1 and tuple(map(float, pts[0])) != tuple(map(float, pts[-1])):
            plain.append(k)
        else:
            lines[k] = _line(pts)          # a point: a segment of no length
    if plain:
        counts = [len(segs[k].polyline) for k in plain]
        coords = np.array([tuple(map(float, p)) for k in plain for p in segs[k].polyline], dtype=float)
        lines[plain] = shapely.linestrings(coords, indices=np.repeat(np.arange(len(plain)), counts))
    if cover is None:
        inside = np.zeros(len(segs), dtype=bool)
        open_mm = shapely.length(lines)
    else:
        inside = shapely.covers(cover, lines)
        # what the cover holds whole leaves nothing open: the overlay is worked out only
        # for the others (most segments of an enclosed bench are inside)
        open_mm = np.zeros(len(segs))
        out = ~inside
        if out.any():
            open_mm[out] = shapely.length(shapely.difference(lines[out], cover))
    for seg, held, length in zip(segs, inside.tolist(), open_mm.tolist()):
        seg.inside_enclosure = bool(held)
        seg.open_mm = float(length)


def _xy(p) -> tuple[float, float]:
    return (float(p[0]), float(p[1]))


# --- judging them ------------------------------------------------------------------------------

def judge(seg: Segment, policy: Policy, keepouts: dict) -> None:
    """Fill in the exposure, MPE, ratio, OD and hazard distance of one segment."""
    wl = seg.wavelength_nm
    seg.exposure_s = policy.exposure_s(wl)
    over = policy.override(wl)
    t = seg.exposure_s
    seg.aperture_mm = float(over.aperture_mm) if over and over.aperture_mm else \
        float(exposure.limiting_aperture_mm(wl, t))
    if not math.isfinite(seg.aperture_mm):
        # no tabulated aperture here: the smallest of the standards' apertures, which
        # averages least and so errs on the side of the eye
        seg.aperture_mm = SMALLEST_APERTURE_MM
        seg.notes.append(f"no limiting aperture is built in at {wl:g} nm: {SMALLEST_APERTURE_MM:g} mm is used "
                         "(set aperture_mm under [exposure.mpe])")
    amount = _mpe(seg, wl, t, over)
    if seg.mpe is None and seg.problem is None:
        what = "per-pulse (j_cm2)" if seg.pulsed else "CW (w_cm2)"
        seg.problem = (f"benchcheck has no built-in exposure limit at {wl:g} nm: set a {what} MPE for it under "
                       f"[exposure.mpe] in the repository configuration")
        return
    if amount is None or seg.mpe is None:
        return                 # the problem says what is missing (the MPE is shown where known)
    if seg.w_mm is None:
        seg.notes.append("its size is not known, so all of it is taken through the limiting aperture")
    seg.exposure = float(exposure.aperture_averaged_w_m2(amount, seg.w_mm or 0.0, seg.aperture_mm))
    seg.ratio = seg.exposure / seg.mpe
    seg.od = int(exposure.od_required(seg.exposure, seg.mpe))
    if seg.runs_off and not seg.inside_enclosure:
        _hazard_distance(seg, amount, keepouts)


def _mpe(seg: Segment, wl: float, t: float, over: MpeOverride | None):
    """Set the segment's MPE (per pulse for pulsed light) and return what to compare with
    it (energy per pulse or power), or None with ``problem`` saying what is missing."""
    # any pulse datum makes the light pulsed: judging a pulse train as CW would be far too lax
    seg.pulsed = seg.pulse_energy_j is not None or seg.rep_hz is not None or seg.pulse_s is not None
    if not seg.pulsed:
        if over is not None and over.w_cm2 is not None:
            seg.mpe, seg.mpe_rule, seg.mpe_source = over.w_cm2 * M2_TO_CM2, "configured", "configuration"
        else:
            if over is not None:
                seg.notes.append(f"the configured MPE at {over.wavelength_nm:g} nm gives no w_cm2: the built-in "
                                 "CW limit is used")
            seg.mpe, seg.mpe_rule, seg.mpe_source = float(exposure.mpe_w_m2(wl, t)), "cw", "built-in"
        _finite_mpe(seg)
        if seg.power_w is None:
            seg.problem = "its power is not known"
        return seg.power_w
    energy = seg.pulse_energy_j
    if energy is None and seg.power_w is not None and seg.rep_hz:
        energy = seg.power_w / seg.rep_hz
    seg.pulse_energy_j = energy
    if over is not None and over.j_cm2 is not None:
        seg.mpe, seg.mpe_rule, seg.mpe_source = over.j_cm2 * M2_TO_CM2, "configured", "configuration"
    elif seg.pulse_s is None:
        seg.problem = "it is pulsed (rep_hz) but its pulse length is not known: give pulse_s"
        return None
    else:
        if over is not None:
            seg.notes.append(f"the configured MPE at {over.wavelength_nm:g} nm gives no j_cm2: the built-in "
                             "per-pulse limit is used")
        if seg.rep_hz:
            mpe, rule = exposure.pulse_train_mpe_j_m2(wl, seg.pulse_s, seg.rep_hz, t)
            seg.mpe, seg.mpe_rule = float(mpe), str(np.asarray(rule).item())
        else:
            seg.mpe, seg.mpe_rule = float(exposure.mpe_j_m2(wl, seg.pulse_s)), "single-pulse"
            seg.notes.append("no rep_hz: judged as a single pulse; a pulse train has a lower limit per pulse, so "
                             "give rep_hz if the source repeats")
        seg.mpe_source = "built-in"
    _finite_mpe(seg)
    if energy is None:
        seg.problem = "its pulse energy is not known: give pulse_energy_j, or power_w with rep_hz"
    return energy


def _finite_mpe(seg: Segment) -> None:
    if seg.mpe is None or not math.isfinite(seg.mpe) or seg.mpe <= 0:
        seg.mpe = None


def _hazard_distance(seg: Segment, amount: float, keepouts: dict) -> None:
    """NOHD from the segment's start along the beam, and what the hazard zone reaches."""
    if seg.beam:
        seg.nohd_mm = max(float(exposure.nohd_mm(amount, g.w0, g.waist_at, g.rayleigh, seg.mpe, seg.aperture_mm))
                          for g in seg.beam)
    else:
        seg.nohd_mm = math.inf if seg.ratio is not None and seg.ratio > 1.0 else 0.0
    if not seg.nohd_mm > 0:
        return
    length = seg.length_mm
    reach = min(seg.nohd_mm, length)
    if reach > 0:
        line = substring(LineString(seg.polyline), 0.0, reach)
        for zid, poly in keepouts.items():
            if poly.intersects(line) or (seg.end_kind == ZONE and seg.end_id == zid):
                seg.reaches.append({"kind": "keepout", "id": zid})
    if seg.end_kind == TABLE_EDGE and seg.nohd_mm > length + 1e-6:
        seg.reaches.append({"kind": "table-edge", "id": None})


# --- sources, wavelengths ----------------------------------------------------------------------

def _classify_sources(solution, w100: dict | None = None) -> list[Source]:
    """``w100``: the beams' radii at 100 mm where ``segments`` found them already."""
    layout = solution.layout
    out = []
    for bid, b in solution.beams.items():
        origin = b.origin
        if origin in layout.sources:
            src = layout.sources[origin]
            kind, wl = "source", src.wavelength_nm
        else:
            kind, wl = "cavity-output", layout.cavities[origin].wavelength_nm
        if any(s.id == origin for s in out):
            continue
        pulse_s, rep_hz = _pulse_of(layout, origin)
        if not b.profile:
            w = None
        elif w100 is not None and bid in w100:
            w = w100[bid]
        else:
            w = _smallest_radius(b.profile, 100.0, 100.0)
        out.append(_source(origin, kind, wl, b.power_w, b.energy_j, pulse_s, rep_hz, w))
    for cid, cav in layout.cavities.items():
        if cav.output_coupler is None or any(s.id == cid for s in out):
            continue
        res = solution.cavities[cid]
        power = None
        for r in solution.strays:
            if r.stray.parent == cid and r.stray.optic == cav.output_coupler:
                power = r.power_w if power is None else max(power, r.power_w or 0.0)
        energy = None if power is None or cav.rep_hz is None else power / cav.rep_hz
        k = [h.optic for h in solution.trace.cavities[cid].hits].index(cav.output_coupler)
        w = [v for v in res.hits[k].w.values() if v is not None]
        out.append(_source(cid, "cavity-output", cav.wavelength_nm, power, energy, cav.pulse_s, cav.rep_hz,
                           min(w) if w else None))
    return out


def _source(ident, kind, wl, power, energy, pulse_s, rep_hz, w100) -> Source:
    if power is None and energy is None:
        return Source(ident, kind, wl, power, energy, None, {"problem": "no power or pulse energy is known"})
    if energy is not None and pulse_s is None:
        return Source(ident, kind, wl, power, energy, None,
                      {"problem": "it is pulsed but its pulse length is not known: give pulse_s"})
    cls, detail = exposure.class_estimate(wl, power if power is not None else 0.0,
                                          w100 if w100 is not None else 0.0,
                                          pulse_energy_j=energy, pulse_s=pulse_s, rep_hz=rep_hz)
    detail = dict(detail)
    if w100 is None:
        detail["size"] = "beam size unknown: taken as fully collected by the measurement aperture"
    return Source(ident, kind, wl, power, energy, cls, detail)


_CLASS_ORDER = ("1", "1M", "2", "2M", "3R", "3B", "4")


def _wavelengths(segs: list[Segment], sources: list[Source], policy: Policy) -> list[Wavelength]:
    groups: dict[tuple, list[Segment]] = {}
    for s in segs:        # one row per wavelength and kind of emission (CW or pulsed)
        key = next((k for k in groups if k[1] == s.pulsed and abs(k[0] - s.wavelength_nm) <= WAVELENGTH_MATCH * k[0]),
                   (s.wavelength_nm, s.pulsed))
        groups.setdefault(key, []).append(s)
    out = []
    for wl, pulsed in sorted(groups):
        group = groups[(wl, pulsed)]
        judged = [s for s in group if s.ratio is not None]
        worst = max(judged, key=lambda s: s.ratio) if judged else None
        powers = [s.power_w for s in group if s.power_w is not None]
        energies = [s.pulse_energy_j for s in group if s.pulse_energy_j is not None]
        classes = [src.class_estimate for src in sources
                   if src.class_estimate and abs(src.wavelength_nm - wl) <= WAVELENGTH_MATCH * wl]
        problems = sorted({s.problem for s in group if s.problem})
        out.append(Wavelength(
            wl, policy.exposure_s(wl), pulsed,
            worst.mpe if worst else next((s.mpe for s in group if s.mpe is not None), None),
            worst.mpe_source if worst else None,
            max(powers) if powers else None, max(energies) if energies else None,
            max(s.od for s in judged) if judged else None,
            max(classes, key=_CLASS_ORDER.index) if classes else None,
            "; ".join(problems) if problems else None))
    return out


def assess(solution, policy: Policy | None = None) -> Assessment:
    """Every segment on the table judged against the exposure limits, the class estimate of
    each source and cavity output, and a summary per wavelength."""
    policy = policy or Policy()
    polygons = zone_polygons(solution)
    keepouts = {z.id: polygons[z.id] for z in solution.layout.zones if z.kind == "keepout"}
    w100: dict = {}
    segs = segments(solution, w100)
    for s in segs:
        judge(s, policy, keepouts)
    sources = _classify_sources(solution, w100)
    return Assessment(segs, sources, _wavelengths(segs, sources, policy))
