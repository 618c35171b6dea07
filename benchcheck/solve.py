"""Solve the unfolded bench: cavity eigenmodes, beam sizes at every hit, waists, power.

Input is the traced layout, output a ``Solution`` of plain numbers that reports and rules
read.  The numerics live in ``abcd``, ``gauss`` and ``resonator``; this module decides
what to multiply and where to look.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from . import abcd, bernstein, gauss, resonator
from .abcd import PLANES, SAGITTAL, TANGENTIAL
from .coatings import absorption_at, pass_factor, reflectivity_at, transmission
from .model import Cavity, Layout, LayoutError
from .placement import Placement, place
from .trace import REFLECT, TRANSMIT, PathTrace, Stray, Trace, trace
from .unfold import (
    Marker, Space, Thin, Train, beam_train, cavity_train, extent, overlap_issues,
    substrate_steps, thermal_design_power, thermal_range,
)

SPEED_OF_LIGHT_MM_S = 299_792_458_000.0
NM_TO_MM = 1e-6
MM2_TO_CM2 = 1e-2


@dataclass
class HitResult:
    optic: str
    kind: str
    s: float                   # mm
    aoi_deg: float
    action: str
    w: dict                    # plane -> 1/e^2 radius in mm (None where no mode)
    power_w: float | None
    peak_w_cm2: float | None
    peak_j_cm2: float | None = None
    #: where the pulse duration is known: the pulse's own spatial peak intensity,
    #: 2E/(pi w_t w_s tau) (W/cm^2), beside ``peak_w_cm2`` that the average power gives
    pulse_peak_w_cm2: float | None = None
    counter_propagating: bool = False
    energy_j: float | None = None      # pulse energy arriving here (pulsed paths only)


@dataclass
class WaistResult:
    plane: str
    w: float                   # mm
    s: float                   # mm


@dataclass
class ThermalScan:
    """Stability over the whole thermal-lens range box (the crystals whose lens is a range)."""

    lenses: dict               # crystal id -> {plane: (f_min, f_max) mm, None for a fixed lens}
    design_f: dict             # crystal id -> {plane: f used for the table (mm)}
    stable: dict               # plane -> bool over the whole range
    m_range: dict              # plane -> (min m, max m)


@dataclass
class Enhancement:
    """What a passive cavity is tuned by, on resonance (see ``PassiveTerms``)."""

    finesse: float
    linewidth_hz: float        # FWHM of the resonance
    input_transmission: float  # T_in
    rest_loss: float           # 1 - R_rest (1 - loss): every other loss of one round trip
    coupling: str              # "impedance-matched" | "under-coupled" | "over-coupled"
    buildup: float             # circulating / mode-matched input power
    reflected: float           # of the mode-matched input power, reflected on resonance
    transmitted: float         # of it, leaving through the other mirrors' transmission
    input_w: float | None      # power in the cavity's mode used for the circulating power (W)
    seeds: tuple = ()          # ids of the beams that feed the cavity
    delivered_w: float | None = None   # what those beams bring to the input coupler (W)
    mode_match: float | None = None    # their mode match (power-weighted where several)
    declared_w: float | None = None    # the layout's input_power_w


@dataclass
class CavityResult:
    id: str
    kind: str
    modes: dict                # plane -> resonator.PlaneMode
    round_trip_mm: float       # optical path length of one round trip
    fsr_hz: float
    circulating_w: float | None
    hits: list[HitResult]
    waists: list[WaistResult]
    thermal: ThermalScan | None
    trains: dict               # plane -> Train (for rules that vary spacings)
    passive: bool = False
    pulsed: bool = False
    notes: list[str] = field(default_factory=list)
    #: plane -> free-propagation pieces on the way out (empty where the plane has no mode)
    profile: dict = field(default_factory=dict)
    enhancement: Enhancement | None = None    # passive cavities only
    round_trip_s: float | None = None         # round-trip time, with the group index where given

    def stable(self, plane: str) -> bool:
        return self.modes[plane].stable

    def gouy_deg(self, plane: str) -> float | None:
        g = self.modes[plane].gouy
        return None if g is None else math.degrees(g)

    def tms_hz(self, plane: str) -> float | None:
        g = self.gouy_deg(plane)
        return None if g is None else self.fsr_hz * g / 360.0


@dataclass
class BeamResult:
    id: str
    origin: str
    hits: list[HitResult]
    waists: list[WaistResult]
    power_w: float | None
    notes: list[str] = field(default_factory=list)
    tail: object | None = None          # raycast.RayEnd where a beam is traced on
    into: str | None = None             # the passive cavity this beam is coupled into
    mode_match: float | None = None     # fraction of its power in that cavity's mode
    profile: dict = field(default_factory=dict)   # plane -> free-propagation pieces
    energy_j: float | None = None       # pulse energy at the origin (pulsed beams only)


@dataclass
class StrayResult:
    """A leak or secondary beam with its power (W; an upper bound where ``at_most``)."""

    stray: Stray
    power_w: float | None
    at_most: bool = False

    @property
    def end_power_w(self) -> float | None:
        """What reaches the end of its path, after every optic it passes (W)."""
        return None if self.power_w is None else self.power_w * self.stray.passed


@dataclass
class Solution:
    layout: Layout
    placement: Placement
    trace: Trace
    cavities: dict[str, CavityResult]
    beams: dict[str, BeamResult]
    notes: list[str] = field(default_factory=list)
    strays: list[StrayResult] = field(default_factory=list)


def solve_layout(layout: Layout) -> Solution:
    """The whole chain after loading: place, trace, unfold, solve."""
    placement = place(layout)
    traced = trace(placement)
    notes = list(placement.notes)
    cavities = {}
    for cid, path in traced.cavities.items():
        cavities[cid] = solve_cavity(layout, layout.cavities[cid], path)
        notes += overlap_issues(layout, path)
    beams = {}
    for bid, path in traced.beams.items():
        beams[bid] = solve_beam(layout, path, cavities, traced)
        notes += overlap_issues(layout, path)
    fed = [cid for cid in cavities if follow_seeds(layout, cavities[cid], beams)]
    for bid, path in traced.beams.items():
        if path.origin in fed:      # a beam out of a cavity whose power changed
            beams[bid] = solve_beam(layout, path, cavities, traced)
    for b in beams.values():
        origin = layout.sources.get(b.origin) or layout.cavities[b.origin]
        for h in b.hits:
            h.pulse_peak_w_cm2 = _in_pulse(h.peak_j_cm2, origin.pulse_s)
    strays = [stray_power(layout, st, cavities, beams) for st in traced.strays]
    return Solution(layout, placement, traced, cavities, beams, notes, strays)


def stray_power(layout: Layout, st: Stray, cavities: dict, beams: dict) -> StrayResult:
    """Leak: circulating power times T; what leaves a passive cavity's input coupler is the
    cavity's reflection, at most the input power.  Secondary: the beam's power at the hit
    times the fraction of the branch it does not follow (docs/design.md §4).  A reflection
    off an optic a stray passes starts with the stray's power there times that optic's R
    (``start_fraction``); where a coating gave no value at the stray's
    wavelength the power is an upper bound."""
    if st.from_cavity:
        cav = layout.cavities[st.parent]
        if st.input_reflection:
            enh = cavities[st.parent].enhancement
            seeded = enh.delivered_w if enh is not None and enh.delivered_w is not None else cav.input_power_w
            return StrayResult(st, None if seeded is None else seeded * st.start_fraction, at_most=True)
        p = cavities[st.parent].circulating_w
    else:
        p = beams[st.parent].hits[st.hit].power_w
    return StrayResult(st, None if p is None else p * st.fraction * st.start_fraction, at_most=bool(st.assumed))



# --- matrices over a train ------------------------------------------------------------

def _product(steps) -> np.ndarray:
    m = abcd.identity()
    for st in steps:
        if not isinstance(st, Marker):
            m = np.matmul(st.matrix(), m)
    return m


def _reduced_length(train: Train) -> float:
    return sum(st.length * st.k for st in train.steps if isinstance(st, Space))


def _halves(train: Train, role: str):
    """(H1, H2) splits of the round trip for a +-I boundary: the repeating halves.  A
    generator: only a round trip on that boundary asks for them."""
    marks = [i for i, st in enumerate(train.steps) if isinstance(st, Marker)]
    if role == "linear":
        k = marks[-1]
        yield _product(train.steps[:k]), _product(train.steps[k:])
    else:
        scale = max(_reduced_length(train), 1e-9)
        for k in marks[1:]:
            h1, h2 = _product(train.steps[:k]), _product(train.steps[k:])
            d = np.abs(h1 - h2)
            if d[0, 0] < 1e-9 and d[1, 1] < 1e-9 and d[0, 1] < 1e-9 * scale and d[1, 0] * scale < 1e-9:
                yield h1, h2


def _advance(st, q: complex) -> complex:
    """q^ after one step: across free space q^ + B (the ABCD law with A = D = 1, C = 0 gives
    exactly that), through a thin element the full law."""
    if isinstance(st, Space):
        return q + st.reduced()
    return complex(gauss.propagate(st.matrix(), q))


@dataclass(frozen=True)
class Piece:
    """One stretch of free propagation along a path: enough to give the beam radius anywhere
    in it (for plots, clearance to mounts, clipping)."""

    s0: float                  # path coordinate where it starts (mm)
    length: float              # geometric length (mm)
    k: float                   # reduced mm per geometric mm
    scale: float               # physical radius / model radius
    q0: complex                # q^ at its start
    wavelength: float          # mm
    m2: float

    def radius(self, s):
        """Physical 1/e^2 radius (mm) at path coordinate(s) ``s`` inside this piece."""
        z = np.clip(np.asarray(s, dtype=float) - self.s0, 0.0, self.length)
        return self.scale * gauss.radius(self.q0 + z * self.k, self.wavelength, self.m2)


def linspace_rows(lo, hi, num: int) -> np.ndarray:
    """Row i is ``np.linspace(lo[i], hi[i], num)`` to the last bit, for many stretches of a
    path at once (the same arithmetic, step by step: k * step + start, the end set to
    stop; where the step underflows to 0, k / div * delta + start).  The hazard assessment
    and beam-obstructed sample every leg of a path this way, then ask ``radius_along``
    once."""
    lo = np.asarray(lo, dtype=float)
    hi = np.asarray(hi, dtype=float)
    div = num - 1
    k = np.arange(num, dtype=float)
    delta = hi - lo
    step = delta / div
    y = np.where((step == 0)[:, None], (k / div)[None, :] * delta[:, None], k[None, :] * step[:, None])
    y += lo[:, None]
    y[:, -1] = hi
    return y


def radius_along(pieces: list[Piece], s) -> np.ndarray:
    """Radius at path coordinates ``s`` (array), from the piece that holds each one; NaN
    outside every piece (inside a thin element there is no free propagation).  Where two
    pieces touch, the earlier one in the list gives the radius."""
    s = np.atleast_1d(np.asarray(s, dtype=float))
    index = _piece_index(pieces)
    if index is None:   # pieces out of order along the path: look in each, in list order
        out = np.full(s.shape, np.nan)
        for piece in pieces:
            inside = (s >= piece.s0 - 1e-9) & (s <= piece.s0 + piece.length + 1e-9) & np.isnan(out)
            if np.any(inside):
                out[inside] = piece.radius(s[inside])
        return out
    s0, length, k, scale, q0, wavelength, m2, start, end = index
    # pieces in path order: the first whose end reaches s is the only candidate
    i = np.minimum(np.searchsorted(end, s, side="left"), len(s0) - 1)
    holds = (s >= start[i]) & (s <= end[i])
    if holds.all():         # the usual case: every point inside a piece, no masking needed
        z = np.clip(s - s0[i], 0.0, length[i])
        return scale[i] * gauss.radius(q0[i] + z * k[i], wavelength[i], m2[i])
    out = np.full(s.shape, np.nan)
    j = i[holds]
    z = np.clip(s[holds] - s0[j], 0.0, length[j])
    out[holds] = scale[j] * gauss.radius(q0[j] + z * k[j], wavelength[j], m2[j])
    return out


#: A few recent piece lists with their columns, so that many queries on one path cost one
#: pass over its pieces (the obstruction rule samples every leg of a long path).
_INDEX_CACHE: dict[int, tuple] = {}
_PIECE_MEMO_SIZE = 16


def per_piece_list(memo: dict, pieces: list, build):
    """``build(pieces)`` for a non-empty list of pieces, remembered in ``memo`` for the
    last few lists asked.  A list is known by its identity, checked against the list, its
    length and its first and last pieces (so a list changed since, or a new list at a
    freed list's address, is built afresh).  Every lookup by path coordinate on a path
    goes through this: the radius columns here, the hazard assessment's piece search."""
    hit = memo.get(id(pieces))
    if hit is not None and hit[0] is pieces and hit[1] == len(pieces) and hit[2] is pieces[0] \
            and hit[3] is pieces[-1]:
        return hit[4]
    value = build(pieces)
    if len(memo) >= _PIECE_MEMO_SIZE:
        memo.pop(next(iter(memo)))
    memo[id(pieces)] = (pieces, len(pieces), pieces[0], pieces[-1], value)
    return value


def _piece_index(pieces) -> tuple | None:
    """The pieces as columns of numpy arrays, or None where they are empty or not in path
    order (starts and ends both non-decreasing)."""
    return per_piece_list(_INDEX_CACHE, pieces, _index_columns) if pieces else None


def _index_columns(pieces) -> tuple | None:
    # the real columns in one array (one row each, contiguous), q^ apart: one pass over
    # the pieces instead of one per column
    s0, length, k, scale, wavelength, m2 = np.array(
        [(p.s0, p.length, p.k, p.scale, p.wavelength, p.m2) for p in pieces], dtype=float).T.copy()
    end = s0 + length
    # neighbours compared directly (for finite coordinates the same test as diff >= 0)
    ordered = bool((s0[1:] >= s0[:-1]).all() and (end[1:] >= end[:-1]).all())
    if not ordered:
        return None
    # with each piece's reach, 1e-9 mm of rounding either side
    return (s0, length, k, scale, np.array([p.q0 for p in pieces]), wavelength, m2, s0 - 1e-9, end + 1e-9)


def _walk(train: Train, q0: complex, wavelength: float, m2: float = 1.0, q_marks: dict | None = None):
    """Propagate q^ through a train: radii (physical, mm) at markers, waists in spaces, and
    the pieces of free propagation on the way out.  ``q_marks``, where given, receives q^
    arriving at each marker's first visit (what ``_q_at_marker`` would walk again for)."""
    at_marks: dict[int, float] = {}
    waists: list[tuple[float, float]] = []
    pieces: list[Piece] = []
    q = q0
    for st in train.steps:
        if isinstance(st, Marker):
            if st.hit not in at_marks:
                at_marks[st.hit] = float(st.scale * gauss.radius(q, wavelength, m2))
                if q_marks is not None:
                    q_marks[st.hit] = q
            continue
        if isinstance(st, Space):
            if st.forward and st.k > 0:
                pieces.append(Piece(st.s0, st.length, st.k, st.scale, q, wavelength, m2))
                z = -q.real / st.k      # gauss.waist_offset of a plain complex
                if -1e-9 <= z <= st.length + 1e-9:
                    z = min(max(z, 0.0), st.length)
                    w0 = st.scale * float(gauss.radius(q + z * st.k, wavelength, m2))
                    waists.append((st.s0 + z, w0))
        q = _advance(st, q)
    return at_marks, waists, pieces


#: Far-field half-angle divergence (rad) above which a focus is beyond the paraxial regime.
PARAXIAL_LIMIT_RAD = 0.1


def paraxial_notes(waists: list[WaistResult], wavelength: float, m2: dict, who: str) -> list[str]:
    """Notes for waists focused beyond the paraxial regime: theta = M^2 lambda / (pi w0)
    above about 0.1 rad (a waist of about three wavelengths), where the paraxial Gaussian
    beam stops describing the focus well (Siegman, Lasers, ch. 17, from memory)."""
    out = []
    for w in waists:
        theta = m2.get(w.plane, 1.0) * wavelength / (math.pi * w.w) if w.w > 0 else math.inf
        if theta > PARAXIAL_LIMIT_RAD:
            out.append(f"{who} is focused beyond the paraxial regime: in the {w.plane} plane the waist at s = "
                       f"{w.s:.2f} mm is {w.w * 1e3:.3g} um ({w.w / wavelength:.2g} wavelengths), a far-field "
                       f"divergence of {theta:.2f} rad (above about {PARAXIAL_LIMIT_RAD:g} rad); the Gaussian-beam "
                       "model's radii and intensities near that focus are estimates")
    return out


def _dedupe_waists(plane: str, raw, tol: float = 1e-6) -> list[WaistResult]:
    out: list[WaistResult] = []
    for s, w in sorted(raw):
        if out and abs(out[-1].s - s) <= tol:
            continue
        out.append(WaistResult(plane, w, s))
    return out


# --- cavities ---------------------------------------------------------------------------

def _thermal_scan(layout: Layout, path: PathTrace, trains: dict) -> ThermalScan | None:
    """Stability over every thermal-lens power in range, exactly.

    The half-trace m is a polynomial in the lens powers of the crystals whose lens is a
    range (a crystal with one fixed focal length is part of the cavity, not a scan axis),
    of degree in each power the number of times the round trip passes that lens (two in a
    linear cavity, one in a ring).  It is evaluated at (degree + 1) powers per lens and
    bounded over the whole range box in the Bernstein form (``bernstein``): the extremes
    of m are found (to 1e-12 at an isolated extreme) with a proven bound that nothing in the
    box lies beyond, for any number of lenses.  Where an extreme reaches |m| = 1, the round trip there is classified
    like any cavity: touching the boundary with a round trip of +-I (the confocal-like
    point) retraces every ray and does not break the range.
    """
    crystals = [h.optic for h in path.hits if layout.optics[h.optic].kind == "crystal"
                and any(thermal_range(layout.optics[h.optic], p) for p in PLANES)]
    crystals = list(dict.fromkeys(crystals))
    if not crystals:
        return None
    lenses, design = {}, {}
    stable, m_range = {}, {}
    for plane in PLANES:
        axes, ranges = [], []
        for cid in crystals:
            vals = thermal_range(layout.optics[cid], plane) or ()
            design.setdefault(cid, {})[plane] = (1.0 / thermal_design_power(vals)
                                                 if thermal_design_power(vals) else math.inf)
            powers = [1.0 / f for f in vals]
            ranged = len(powers) > 1 and max(powers) > min(powers)
            lenses.setdefault(cid, {})[plane] = (min(vals), max(vals)) if ranged else None
            if ranged:
                axes.append(cid)
                ranges.append((min(powers), max(powers)))
        degrees = [sum(1 for st in trains[plane].steps if isinstance(st, Thin) and st.thermal == cid)
                   for cid in axes]
        low = np.array([r[0] for r in ranges])
        span = np.array([r[1] - r[0] for r in ranges])

        def round_trips(unit):
            return _round_trips(trains[plane], axes, low + np.atleast_2d(unit) * span)

        coef = bernstein.coefficients(abcd.half_trace(round_trips(bernstein.nodes(degrees))), degrees)
        lowest, highest = bernstein.value_range(coef)
        scale = max(_reduced_length(trains[plane]), 1e-9)
        ok = True
        for ext, beyond in ((highest, highest.bound >= 1.0), (lowest, lowest.bound <= -1.0)):
            if beyond:
                status = resonator.classify(round_trips(ext.point)[0], scale)
                ok = ok and status in (resonator.STABLE, resonator.MARGINAL_RETRACE)
        stable[plane] = ok
        m_range[plane] = (lowest.value, highest.value)
    return ThermalScan(lenses, design, stable, m_range)


def _round_trips(train: Train, crystals: list, samples: np.ndarray) -> np.ndarray:
    """Round-trip matrices (K, 2, 2) for each row of lens powers (vectorised over rows):
    the plan's train with its thermal lenses of ``crystals`` given those powers (each lens
    as ``unfold.element_steps`` builds it; a lens met backwards has A = D = 1, unchanged)."""
    column = {cid: samples[:, j] for j, cid in enumerate(crystals)}
    steps = [Thin(abcd.lens_power(np.asarray(column[st.thermal]) * st.thermal_factor), st.label, st.thermal,
                  st.thermal_factor)
             if isinstance(st, Thin) and st.thermal in column else st for st in train.steps]
    return np.broadcast_to(_product(steps), (len(samples), 2, 2))


def circulating_power(layout: Layout, cav: Cavity, path: PathTrace) -> float | None:
    """One-way circulating power (W) at the output or input coupler.

    Active: P_out / T_oc.  Passive, on resonance: P_in T_in / (1 - sqrt(R_in R_rest (1-loss)))^2
    with R_rest the product of every other pass factor of one round trip (mirror
    reflectivities, fold mirrors twice in a linear cavity, single-pass transmission of
    crystals, plates and lenses) (Siegman, "Lasers", ch. 11, from memory; the field sum
    E_c = t1 E_in / (1 - r1 r_rest)).  Here P_in is the declared ``input_power_w``; where a
    beam feeds the cavity, ``solve_layout`` replaces it with what that beam delivers.
    """
    wl = cav.wavelength_nm
    if cav.output_power_w is not None:
        oc = layout.optics[cav.output_coupler]
        t = transmission(oc, wl)
        if t <= 0:
            raise LayoutError(f"output coupler \"{oc.id}\" transmits nothing at {wl:g} nm (reflectivity 1)",
                              oc.where("reflectivity"))
        return cav.output_power_w / (t * output_beams(cav, path))
    if cav.input_power_w is None:
        return None
    return cav.input_power_w * passive_terms(layout, cav, path).buildup


def output_beams(cav: Cavity, path: PathTrace) -> int:
    """How many beams leave through the output coupler: two where a linear cavity folds on
    it (the circulating beam meets it going out and coming back), else one.  The layout's
    output_power_w is their sum."""
    ids = [h.optic for h in path.hits]
    k = ids.index(cav.output_coupler)
    return 2 if cav.kind == "linear" and 0 < k < len(ids) - 1 else 1


@dataclass(frozen=True)
class PassiveTerms:
    """A passive cavity on resonance, per unit of power in its mode at the input coupler.

    With the input coupler's amplitude reflectivity r1 = sqrt(R_in) and the rest of the
    round trip's amplitude factor g = sqrt(R_rest (1 - loss)), the fields sum to
    E_c = t1 E_in / (1 - r1 g) inside and E_r = (g (R_in + T_in) - r1) E_in / (1 - r1 g)
    reflected (Siegman, "Lasers", 1986, ch. 11, from memory; R_in + T_in < 1 where the
    coupler absorbs).  Impedance matching is r1 = g: T_in equal to the rest of the
    round-trip loss, and nothing reflected.
    """

    r_in: float
    t_in: float
    rest: float                # R_rest (1 - loss): what the rest of one round trip keeps
    out_t: float               # sum of T over the other mirrors' reflections in one round trip

    @property
    def rho(self) -> float:
        """Round-trip amplitude factor r1 g."""
        return math.sqrt(self.r_in * self.rest)

    @property
    def buildup(self) -> float:
        d = (1.0 - self.rho) ** 2
        return self.t_in / d if d > 0 else math.inf

    @property
    def reflected(self) -> float:
        d = (1.0 - self.rho) ** 2
        g = math.sqrt(self.rest)
        return (g * (self.r_in + self.t_in) - math.sqrt(self.r_in)) ** 2 / d if d > 0 else 1.0

    @property
    def transmitted(self) -> float:
        return self.buildup * self.out_t if math.isfinite(self.buildup) else math.inf

    @property
    def rest_loss(self) -> float:
        return 1.0 - self.rest

    @property
    def finesse(self) -> float:
        """pi sqrt(rho) / (1 - rho) (Siegman ch. 11, from memory)."""
        return math.pi * math.sqrt(self.rho) / (1.0 - self.rho) if self.rho < 1 else math.inf

    def linewidth(self, fsr_hz: float) -> float:
        """Full width at half maximum of the Airy resonance, (2 FSR / pi) arcsin((1 - rho) /
        (2 sqrt(rho))) (Siegman ch. 11, from memory); about FSR / finesse when narrow."""
        x = (1.0 - self.rho) / (2.0 * math.sqrt(self.rho)) if self.rho > 0 else math.inf
        return 2.0 * fsr_hz / math.pi * math.asin(x) if x <= 1.0 else fsr_hz

    @property
    def coupling(self) -> str:
        """Impedance matching: T_in against the rest of the round-trip loss, within 10 %."""
        if self.rest_loss <= 0:
            return "over-coupled"
        ratio = self.t_in / self.rest_loss
        if 0.9 <= ratio <= 1.1:
            return "impedance-matched"
        return "over-coupled" if ratio > 1.0 else "under-coupled"


def passive_terms(layout: Layout, cav: Cavity, path: PathTrace) -> PassiveTerms:
    wl = cav.wavelength_nm
    ic = layout.optics[cav.input_coupler]
    r_in = reflectivity_at(ic, wl, None)
    if r_in is None:
        raise LayoutError(f"input coupler \"{ic.id}\" needs a reflectivity", ic.loc)
    t_in = transmission(ic, wl)
    if t_in <= 0:
        raise LayoutError(f"input coupler \"{ic.id}\" transmits nothing at {wl:g} nm, so no light enters "
                          f"cavity \"{cav.id}\"", ic.where("reflectivity"))
    rest, out_t = 1.0, 0.0
    passes = 2 if cav.kind == "linear" else 1
    for i, hit in enumerate(path.hits):
        if hit.optic == cav.input_coupler:
            continue
        optic = layout.optics[hit.optic]
        n = 1 if (cav.kind == "ring" or i in (0, len(path.hits) - 1)) else passes
        rest *= pass_factor(optic, hit.action, wl) ** n
        if optic.kind in ("mirror", "splitter") and hit.action == REFLECT:
            out_t += n * transmission(optic, wl)
    return PassiveTerms(r_in, t_in, rest * (1.0 - cav.loss), out_t)


def _peak(power, w_t, w_s):
    """2P/(pi w_t w_s) in W/cm^2 (or J/cm^2 for an energy): elliptical Gaussian peak."""
    if power is None or w_t is None or w_s is None:
        return None
    return 2.0 * power / (math.pi * w_t * w_s * MM2_TO_CM2)


def check_wavelengths(layout: Layout, path: PathTrace) -> None:
    """Every optic on a path must give its coating data at the path's wavelength (docs/design.md §3)."""
    for hit in path.hits:
        optic = layout.optics[hit.optic]
        reflectivity_at(optic, path.wavelength_nm, 0.0)
        absorption_at(optic, path.wavelength_nm)


def solve_cavity(layout: Layout, cav: Cavity, path: PathTrace) -> CavityResult:
    check_wavelengths(layout, path)
    for key in ("output_coupler", "input_coupler"):
        ident = getattr(cav, key)
        if ident and any(h.optic == ident and h.action != REFLECT for h in path.hits):
            raise LayoutError(f"cavity \"{cav.id}\" passes through its {key.replace('_', ' ')} \"{ident}\"; light "
                              "couples through a mirror the cavity reflects from (a pick-off that the cavity "
                              "passes is not modelled as a coupler)", cav.where(key))
    wavelength = cav.wavelength_nm * NM_TO_MM
    trains = {p: cavity_train(layout, path, p) for p in PLANES}
    notes: list[str] = []
    modes, radii, waists, profile = {}, {}, [], {}
    for plane, train in trains.items():
        rt = _product(train.steps)
        scale = max(_reduced_length(train), 1e-9)
        mode = resonator.solve_plane(rt, scale, _halves(train, path.role))
        modes[plane] = mode
        if mode.q is not None:
            marks, raw, profile[plane] = _walk(train, mode.q, wavelength)
            radii[plane] = marks
            waists += _dedupe_waists(plane, raw)
        else:
            radii[plane] = {}
            profile[plane] = []
            if mode.status == resonator.MARGINAL_RETRACE:
                notes.append(f"{plane}: the round trip is +-I but no repeating half of it is stable, so every beam "
                             "reproduces itself and there is no unique mode")
        notes += train.notes
    waists.sort(key=lambda w: (w.plane != TANGENTIAL, w.s))
    notes += paraxial_notes(waists, wavelength, {}, f"the mode of cavity \"{cav.id}\"")
    spaces = [st for st in trains[TANGENTIAL].steps if isinstance(st, Space)]
    round_trip = sum(st.length * st.index for st in spaces)
    group_path = sum(st.length * (st.group or st.index) for st in spaces)
    fsr = SPEED_OF_LIGHT_MM_S / group_path if group_path > 0 else math.inf
    phase_only = sorted({h.optic for h in path.hits if layout.optics[h.optic].kind in ("crystal", "plate")
                         and layout.optics[h.optic].group_index is None})
    if phase_only:
        notes.append("the FSR and round-trip time use the phase index of " + ", ".join(phase_only)
                     + " (no group_index given; the group index of a dispersive medium is larger)")
    p_circ = circulating_power(layout, cav, path)
    pulsed = cav.rep_hz is not None
    hits = []
    for i, hit in enumerate(path.hits):
        w = {p: radii[p].get(i) for p in PLANES}
        peak = _peak(p_circ, w[TANGENTIAL], w[SAGITTAL])
        energy = p_circ / cav.rep_hz if pulsed and p_circ is not None else None
        fluence = _peak(energy, w[TANGENTIAL], w[SAGITTAL])
        hits.append(HitResult(hit.optic, hit.kind, hit.s, math.degrees(hit.aoi), hit.action, w, p_circ, peak,
                              fluence, counter_propagating=cav.kind == "linear", energy_j=energy))
    thermal = _thermal_scan(layout, path, trains)
    result = CavityResult(cav.id, cav.kind, modes, round_trip, fsr, p_circ, hits, waists, thermal, trains,
                          passive=cav.passive, pulsed=pulsed, notes=sorted(set(notes)), profile=profile,
                          round_trip_s=group_path / SPEED_OF_LIGHT_MM_S)
    _set_power(result, cav, p_circ)
    if cav.output_power_w is not None and output_beams(cav, path) == 2:
        result.notes.append(f"the output coupler \"{cav.output_coupler}\" is a fold mirror: it emits two beams, one "
                            f"each way, and output_power_w = {cav.output_power_w:g} W is their sum, so each carries "
                            f"{cav.output_power_w / 2:g} W and the circulating power is output_power_w / (2 T)")
    if cav.passive:
        terms = passive_terms(layout, cav, path)
        result.enhancement = Enhancement(
            terms.finesse, terms.linewidth(fsr), terms.t_in, terms.rest_loss, terms.coupling, terms.buildup,
            terms.reflected, terms.transmitted, cav.input_power_w, declared_w=cav.input_power_w)
    return result


def _set_power(result: CavityResult, cav: Cavity, p_circ: float | None) -> None:
    """Circulating power, and each hit's power, peak intensity and fluence from it."""
    result.circulating_w = p_circ
    energy = None if p_circ is None or cav.rep_hz is None else p_circ / cav.rep_hz
    for h in result.hits:
        h.power_w = p_circ
        h.peak_w_cm2 = _peak(p_circ, h.w[TANGENTIAL], h.w[SAGITTAL])
        h.peak_j_cm2 = _peak(energy, h.w[TANGENTIAL], h.w[SAGITTAL])
        h.energy_j = energy
        h.pulse_peak_w_cm2 = _in_pulse(h.peak_j_cm2, cav.pulse_s)


def _in_pulse(fluence: float | None, pulse_s: float | None) -> float | None:
    """Peak intensity within the pulse: peak fluence / duration (a pulse whose peak power is
    E / tau; a Gaussian pulse of full width tau peaks about 0.94 E / tau, from memory)."""
    return None if fluence is None or not pulse_s else fluence / pulse_s


#: A declared input_power_w further than this (relative) from what the seed delivers is noted.
SEED_POWER_TOLERANCE = 0.01


def follow_seeds(layout: Layout, result: CavityResult, beams: dict) -> bool:
    """Where declared beams end on a passive cavity's input coupler, its circulating power
    follows them: the power they deliver there times their mode match (the rest of their
    power is not in the cavity's mode and does not build up).  True where it changed."""
    cav = layout.cavities[result.id]
    enh = result.enhancement
    seeds = [b for b in beams.values() if b.into == result.id]
    if enh is None or not seeds:
        return False
    delivered = [b.hits[-1].power_w for b in seeds]
    names = ", ".join(f"\"{b.id}\"" for b in seeds)
    if any(p is None for p in delivered):
        declared = ("uses input_power_w = " + f"{cav.input_power_w:g} W" if cav.input_power_w is not None
                    else "is not known (no input_power_w either)")
        result.notes.append(f"beam {names} feeds this cavity but its power is not given, so the circulating power "
                            f"{declared}")
        return False
    total = sum(delivered)
    matches = [b.mode_match for b in seeds]
    if any(m is None for m in matches):
        in_mode = total
        how = "its mode match is not known, so all of it is taken as coupled (an upper bound)"
        match = None
    else:
        in_mode = sum(p * m for p, m in zip(delivered, matches))
        match = in_mode / total if total > 0 else None
        how = f"mode match {match:.4f}, so {in_mode:.4g} W is in the cavity's mode"
    enh.seeds = tuple(b.id for b in seeds)
    enh.delivered_w, enh.mode_match, enh.input_w = total, match, in_mode
    result.notes.append(f"the circulating power follows the seed: beam {names} delivers {total:.4g} W to "
                        f"\"{cav.input_coupler}\"; {how}")
    if cav.input_power_w is not None and abs(cav.input_power_w - total) > SEED_POWER_TOLERANCE * max(total, 1e-300):
        result.notes.append(f"input_power_w = {cav.input_power_w:g} W, but beam {names} delivers {total:.4g} W to "
                            f"\"{cav.input_coupler}\"; the delivered power is used")
    _set_power(result, cav, in_mode * enh.buildup)
    return True


# --- beams ------------------------------------------------------------------------------

def solve_beam(layout: Layout, path: PathTrace, cavities: dict, traced: Trace) -> BeamResult:
    check_wavelengths(layout, path)
    notes: list[str] = []
    wl_nm = path.wavelength_nm
    wavelength = wl_nm * NM_TO_MM
    origin = path.origin
    energy = None
    if origin in layout.sources:
        src = layout.sources[origin]
        q0 = {TANGENTIAL: gauss.q_at_distance_from_waist(src.waist_t, -src.waist_at, wavelength, src.m2_t),
              SAGITTAL: gauss.q_at_distance_from_waist(src.waist_s, -src.waist_at, wavelength, src.m2_s)}
        m2 = {TANGENTIAL: src.m2_t, SAGITTAL: src.m2_s}
        power = src.power_w
        if power is None and src.pulse_energy_j is not None and src.rep_hz is not None:
            power = src.pulse_energy_j * src.rep_hz
        if src.pulse_energy_j is not None:
            energy = src.pulse_energy_j
        elif src.pulse_s is not None and src.rep_hz is not None and power is not None:
            energy = power / src.rep_hz
        prefixes = {p: [] for p in PLANES}
        prefix_extent = 0.0
    else:
        cav = layout.cavities[origin]
        result = cavities[origin]
        cpath = traced.cavities[origin]
        k = [h.optic for h in cpath.hits].index(cav.output_coupler)
        oc_hit = cpath.hits[k]
        q0, m2, prefixes = {}, {TANGENTIAL: 1.0, SAGITTAL: 1.0}, {}
        through = _as_transmitted(oc_hit)
        prefix_extent = extent(through, layout.optics[cav.output_coupler])[1]
        for plane in PLANES:
            mode = result.modes[plane]
            q0[plane] = None if mode.q is None else _q_at_marker(result.trains[plane], mode.q, k)
            prefixes[plane] = substrate_steps(through, layout.optics[cav.output_coupler], plane, notes)
        oc = layout.optics[cav.output_coupler]
        power = None if result.circulating_w is None else result.circulating_w * transmission(oc, cav.wavelength_nm)
        if cav.rep_hz is not None and power is not None:
            energy = power / cav.rep_hz
        if any(v is None for v in q0.values()):
            notes.append(f"cavity \"{origin}\" has no mode in every plane, so beam \"{path.id}\" has no size there")
    radii, waists, trains, q_last, profile = {}, [], {}, {}, {}
    for plane in PLANES:
        train = beam_train(layout, path, plane, prefixes[plane], prefix_extent)
        notes += train.notes
        if q0[plane] is None:
            radii[plane] = {}
            profile[plane] = []
            continue
        q_marks: dict[int, complex] = {}
        marks, raw, profile[plane] = _walk(train, complex(q0[plane]), wavelength, m2[plane], q_marks)
        radii[plane] = marks
        waists += _dedupe_waists(plane, raw)
        trains[plane] = train
        last = len(path.hits) - 1
        q_last[plane] = q_marks[last] if last in q_marks else _q_at_marker(train, complex(q0[plane]), last)
    waists.sort(key=lambda w: (w.plane != TANGENTIAL, w.s))
    notes += paraxial_notes(waists, wavelength, m2, f"beam \"{path.id}\"")
    match = None
    if path.into is not None:
        match = mode_match(layout, path, q_last, cavities[path.into], traced, notes)
    hits = []
    kept = 1.0        # fraction of the origin's power (and pulse energy) still in the beam
    for i, hit in enumerate(path.hits):
        optic = layout.optics[hit.optic]
        w = {pl: radii[pl].get(i) for pl in PLANES}
        p = None if power is None else power * kept
        e = None if energy is None else energy * kept
        hits.append(HitResult(hit.optic, hit.kind, hit.s, math.degrees(hit.aoi), hit.action, w, p,
                              _peak(p, w[TANGENTIAL], w[SAGITTAL]), _peak(e, w[TANGENTIAL], w[SAGITTAL]),
                              energy_j=e))
        if hit.action != "end":
            if optic.kind == "mirror" and hit.action == TRANSMIT and optic.reflectivity is None:
                notes.append(f"\"{optic.id}\" gives no reflectivity, so it is taken as a perfect reflector and "
                             f"beam \"{path.id}\" passes it with no power")
            kept *= pass_factor(optic, hit.action, wl_nm)
    return BeamResult(path.id, origin, hits, waists, power, sorted(set(notes)), path.tail, path.into, match, profile,
                      energy_j=energy)


def _q_at_marker(train: Train, q0: complex, hit_index: int, after: bool = False) -> complex:
    """q^ at a hit: arriving, or (``after``) once the element's thin action is applied."""
    q = q0
    found = False
    for st in train.steps:
        if isinstance(st, Marker):
            if found:
                return q
            found = st.hit == hit_index
            if found and not after:
                return q
            continue
        if found and isinstance(st, Space):
            return q
        q = _advance(st, q)
    if found:
        return q
    raise AssertionError("marker not in train")


def mode_match(layout: Layout, path: PathTrace, q_seed: dict, cav: CavityResult,
               traced: Trace, notes: list) -> float | None:
    """Fraction of a seed beam's power that couples into a passive cavity's mode at its
    input coupler (both M^2 = 1 Gaussians; the product of the t and s overlaps)."""
    cpath = traced.cavities[cav.id]
    k = [h.optic for h in cpath.hits].index(path.hits[-1].optic)
    src = layout.sources.get(path.origin)
    if src is not None and (src.m2_t != 1.0 or src.m2_s != 1.0):
        notes.append(f"beam \"{path.id}\" has M^2 > 1: its coupling into the cavity's mode is not computed")
        return None
    # the tilt between the seed and the mode lies in the table plane: the tangential axis
    tilt = math.acos(max(-1.0, min(1.0, float(np.dot(path.hits[-1].d_in, cpath.hits[k].d_out)))))
    eta = 1.0
    wavelength = path.wavelength_nm * NM_TO_MM
    for plane in PLANES:
        mode = cav.modes[plane]
        if mode.q is None or q_seed.get(plane) is None:
            return None
        q_cav = _q_at_marker(cav.trains[plane], mode.q, k, after=True)
        eta *= float(gauss.overlap_1d(q_seed[plane], q_cav, wavelength, tilt if plane == TANGENTIAL else 0.0))
    return eta


def _as_transmitted(hit):
    """The cavity's hit at its output coupler, seen by the beam that passes through it."""
    from dataclasses import replace
    return replace(hit, action=TRANSMIT, from_back=False, s=0.0)
