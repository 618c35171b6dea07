"""stability-margin: how close a stable cavity is to an edge of stability.

Two measures, because they answer different questions in a review:

- the half-trace m = (A+D)/2 of the round trip per plane, against a limit below 1: a
  cavity with |m| near 1 has a mode whose size and axis react strongly to every small
  change (w^4 ~ B^2 / (1 - m^2), Kogelnik & Li 1966);
- for every free spacing (each air gap between consecutive elements of the path), the
  window in mm over which that spacing alone may change with the cavity stable in both
  planes, and how far the plan sits from the nearer edge.  This is the number a builder
  can act on: it is compared with how well a spacing can be set on a breadboard.

The window is exact, not sampled.  A gap of air length x enters the round trip as free
space [[1, x], [0, 1]] once in a ring and twice (out and back) in a linear cavity, so m is
a polynomial in x of degree 1 or 2 (the rest of the round trip is fixed, the thermal lens
at its design value, the angles of incidence as planned).  Its crossings of +1 and -1 are
the only places where stability can change; the status between and at them is then read
from the round trip itself, built with the gap's free-space steps replaced by an array of
trial lengths (one broadcast matrix product per plane).  A point where |m| touches 1 with
a round trip of +-I (the symmetric confocal cavity, d = R) is stable on both sides and
retraces every ray, so it does not end the window; a touch with walk-off does.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass

import numpy as np

from benchcheck import abcd, resonator
from benchcheck.abcd import PLANES
from benchcheck.findings import WARNING, Finding, Option, Rule
from benchcheck.resonator import MARGINAL_RETRACE, STABLE
from benchcheck.unfold import Marker, Space, extent

PLANE_NAMES = {"t": "tangential", "s": "sagittal"}
#: planes whose own edges lie this close (mm) to the window's edge are both named as limiting it
SAME_EDGE_MM = 1e-3
_OK = (STABLE, MARGINAL_RETRACE)


@dataclass(frozen=True)
class Gap:
    """One air gap of a cavity path: between ``first`` and ``second`` (ids), ``length`` mm
    of air (the segment less the material of the two elements), starting at path
    coordinate ``s0``."""

    first: str
    second: str
    length: float
    s0: float
    index: int                 # the train's gap index (unfold.Space.gap)


@dataclass(frozen=True)
class Window:
    """Range (mm) of one gap's air length with the cavity stable in both planes.

    ``lo``/``hi`` are the stability edges around the plan; ``lo`` is None where the cavity
    stays stable until the gap closes (the elements touch), ``hi`` None where no edge lies
    above.  ``per_plane`` holds each plane's own edges (same convention) and ``limits`` the
    planes that set each edge of the combined window."""

    gap: Gap
    lo: float | None
    hi: float | None
    per_plane: dict
    limits: dict

    @property
    def distance(self) -> float:
        """Distance (mm) from the plan to the nearer stability edge; inf without edges."""
        out = math.inf
        if self.lo is not None:
            out = min(out, self.gap.length - self.lo)
        if self.hi is not None:
            out = min(out, self.hi - self.gap.length)
        return max(out, 0.0)


def air_gaps(layout, path) -> list[Gap]:
    """The air gaps between consecutive elements, measured as the unfolded train measures
    them (``unfold.extent`` gives the material on either side of each hit point)."""
    hits = path.hits
    n = len(hits)
    count = n - 1 if path.role == "linear" else n
    out = []
    for i in range(1, count + 1):
        a, b = hits[i - 1], hits[i % n]
        after = extent(a, layout.optics[a.optic])[1]
        before = extent(b, layout.optics[b.optic])[0]
        out.append(Gap(a.optic, b.optic, path.segments[i - 1] - after - before, a.s + after, i - 1))
    return out


def step_matrices(steps: list) -> list:
    """Each step's matrix (None for a marker), built once per train and shared by the scans
    of all its gaps."""
    return [None if isinstance(st, Marker) else st.matrix() for st in steps]


#: the start of every product (shared: read-only)
_IDENTITY = abcd.identity()
_IDENTITY.flags.writeable = False


class TrainParts:
    """What the scans of every gap of one round-trip train share: each step's matrix, where
    each gap's air-space steps are (the spaces the train marks with that gap's index: out
    and back in a linear cavity), the reduced length, and the products of its first steps
    (the part before a gap is one of them)."""

    def __init__(self, steps: list):
        self.steps = steps
        self.mats = step_matrices(steps)
        self.gaps: dict[int, list[int]] = {}
        for i, st in enumerate(steps):
            if isinstance(st, Space) and st.gap is not None:
                self.gaps.setdefault(st.gap, []).append(i)
        self.reduced = sum(st.length * st.k for st in steps if isinstance(st, Space))
        self._prefix = [_IDENTITY]

    def prefix(self, k: int) -> np.ndarray:
        """The product of the first ``k`` steps (light order), from the identity as
        ``_fixed_products`` takes it; the chain is extended as far as asked, once."""
        chain = self._prefix
        m = chain[-1]
        for st in self.mats[len(chain) - 1:k]:
            if st is not None:
                m = np.matmul(st, m)
            chain.append(m)
        return chain[k]


def _fixed_products(steps: list, where: list[int], mats: list | None = None,
                    shared: TrainParts | None = None) -> list[np.ndarray]:
    """Products of the steps before, between and after the gap's steps (light order); the
    first from ``shared``'s chain where given."""
    mats = step_matrices(steps) if mats is None else mats
    bounds = [-1] + where + [len(steps)]
    out = []
    for a, b in itertools.pairwise(bounds):
        if a < 0 and shared is not None:
            out.append(shared.prefix(b))
            continue
        m = _IDENTITY
        for st in mats[a + 1:b]:
            if st is not None:
                m = np.matmul(st, m)
        out.append(m)
    return out


class GapScan:
    """The round trip of one plane as a function of one gap's air length."""

    def __init__(self, train, gap: Gap, role: str, shared: TrainParts | None = None):
        """``shared``: ``TrainParts(train.steps)`` where the caller scans several gaps."""
        steps = train.steps
        shared = TrainParts(steps) if shared is None else shared
        self.gap = gap
        self.plane = train.plane
        self.where = shared.gaps.get(gap.index, [])
        expected = 2 if role == "linear" else 1
        if len(self.where) != expected:
            raise RuntimeError(f"air gap {gap.first} -> {gap.second} found {len(self.where)} times in the "
                               f"{train.plane} round trip, expected {expected}")
        self.parts = _fixed_products(steps, self.where, shared.mats, shared)
        # the B, C tolerance of the +-I test scales with the round trip's reduced length
        self._scale_fixed = shared.reduced - len(self.where) * gap.length

    def round_trips(self, x) -> np.ndarray:
        """Round-trip matrices (..., 2, 2) for air lengths ``x`` (mm, array): the gap's
        free-space steps replaced by the trial lengths, one broadcast product."""
        space = abcd.free_space(np.asarray(x, dtype=float))
        m = self.parts[0]
        for part in self.parts[1:]:
            m = np.matmul(part, np.matmul(space, m))
        return m

    def coefficients(self) -> tuple[float, float, float]:
        """(a, b, c) of m(x) = a x^2 + b x + c.

        With S(x) = I + x N, N = [[0, 1], [0, 0]], and tr(N Y) = Y[1, 0], N Y N = Y[1, 0] N:
        ring, M = P1 S P0:        2m = tr Q + x Q10,  Q = P0 P1;
        linear, M = P2 S P1 S P0: 2m = tr(P1 Q) + x ((P1 Q)10 + (Q P1)10) + x^2 P1_10 Q10,
        Q = P0 P2 (traces are cyclic).
        """
        if len(self.parts) == 2:
            q = self.parts[0] @ self.parts[1]
            return 0.0, q[1, 0] / 2.0, (q[0, 0] + q[1, 1]) / 2.0
        p0, p1, p2 = self.parts
        q = p0 @ p2
        p1q, qp1 = p1 @ q, q @ p1
        return p1[1, 0] * q[1, 0] / 2.0, (p1q[1, 0] + qp1[1, 0]) / 2.0, (p1q[0, 0] + p1q[1, 1]) / 2.0

    def candidates(self) -> list[float]:
        """Where stability can change: the real roots of m = +1 and m = -1, and the vertex
        of the parabola (where |m| may touch 1 without crossing it)."""
        a, b, c = self.coefficients()
        out = []
        for target in (1.0, -1.0):
            out += _real_roots(a, b, c - target)
        if a != 0.0:
            out.append(-b / (2.0 * a))
        return sorted(x for x in out if math.isfinite(x))

    def statuses(self, x: np.ndarray) -> list[str]:
        """``resonator.classify`` of each probe, all at once."""
        return _statuses([self], [np.asarray(x, dtype=float)])[0]

    def probes(self) -> tuple[list, list]:
        """The probes of ``window``: walking out from the plan, each side is a sequence of
        the middle of the next stretch between candidate points, then the point itself,
        and finally a point beyond the last candidate.  Returns (sides, probes), each
        with the upper side first."""
        x0 = self.gap.length
        eps = 1e-12 * max(1.0, abs(x0))
        pts = self.candidates()
        sides = [[p for p in pts if p > x0 + eps], [p for p in reversed(pts) if p < x0 - eps]]
        probes = []
        for sign, side in zip((1.0, -1.0), sides):
            seq, prev = [], x0
            for p in side:
                seq += [(prev + p) / 2.0, p]
                prev = p
            seq.append(prev + sign * max(1.0, abs(prev)))
            probes.append(seq)
        return sides, probes

    def edges(self, sides: list, probes: list, status: list[str]) -> tuple[float, float]:
        """(lo, hi) from the status of every probe of ``probes()`` (upper side first)."""
        up = len(probes[0])
        hi = _walk(self.gap.length, sides[0], [s in _OK for s in status[:up]], 1.0)
        lo = _walk(self.gap.length, sides[1], [s in _OK for s in status[up:]], -1.0)
        return lo, hi

    def window(self) -> tuple[float, float]:
        """(lo, hi) of the stable stretch around the plan in this plane; +-inf where none.
        All probes of both sides are evaluated in one broadcast product."""
        sides, probes = self.probes()
        return self.edges(sides, probes, self.statuses(np.array(probes[0] + probes[1])))


def _statuses(scans: list[GapScan], xs: list[np.ndarray]) -> list[list[str]]:
    """The status of each scan's round trip at its trial lengths ``xs`` (one array per
    scan): the scans' fixed products stacked row by row, so that all of them (every gap
    of a cavity, both planes) take one broadcast product and one classification."""
    counts = [len(x) for x in xs]
    rows = np.repeat(np.arange(len(scans)), counts)
    x = np.concatenate(xs)
    nparts = len(scans[0].parts)
    parts = [np.stack([sc.parts[k] for sc in scans])[rows] for k in range(nparts)]
    space = abcd.free_space(x)
    m = parts[0]
    for part in parts[1:]:
        m = np.matmul(part, np.matmul(space, m))
    fixed = np.array([sc._scale_fixed for sc in scans])[rows]
    passes = np.array([len(sc.where) for sc in scans])[rows]
    scales = np.maximum(fixed + passes * x, 1e-9)
    flat = resonator.classify_many(m, scales)
    out, start = [], 0
    for n in counts:
        out.append(flat[start:start + n])
        start += n
    return out


def _walk(x0: float, side: list[float], ok: list[bool], sign: float) -> float:
    """The first edge met walking from ``x0`` through the candidate points ``side``;
    ``ok`` holds the status of each probe (middle, point, ..., beyond) in that order."""
    prev = x0
    for i, p in enumerate(side):
        if not ok[2 * i]:
            return prev
        if not ok[2 * i + 1]:
            return p
        prev = p
    return prev if not ok[-1] else sign * math.inf


def _real_roots(a: float, b: float, c: float) -> list[float]:
    """Real roots of a x^2 + b x + c (the cancellation-free form of the quadratic formula)."""
    if a == 0.0:
        return [] if b == 0.0 else [-c / b]
    disc = b * b - 4.0 * a * c
    if disc < 0.0:
        return []
    q = -0.5 * (b + math.copysign(math.sqrt(disc), b))
    roots = [q / a]
    if q != 0.0:
        roots.append(c / q)
    return roots


def spacing_windows(cav, layout, path) -> list[Window]:
    """The stability window of every air gap of a cavity stable in both planes."""
    out = []
    shared = {plane: TrainParts(cav.trains[plane].steps) for plane in PLANES}
    gaps = [gap for gap in air_gaps(layout, path) if gap.length >= 0]   # overlaps: layout-geometry
    scans = [GapScan(cav.trains[plane], gap, path.role, shared[plane]) for gap in gaps for plane in PLANES]
    plans = [sc.probes() for sc in scans]
    status = _statuses(scans, [np.array(probes[0] + probes[1]) for _, probes in plans]) if scans else []
    found = {(sc.gap.index, sc.plane): sc.edges(*plan, st) for sc, plan, st in zip(scans, plans, status)}
    for gap in gaps:
        per_plane = {}
        for plane in PLANES:
            lo, hi = found[gap.index, plane]
            # a lower edge below zero is no edge: the gap closes before the cavity goes unstable
            tol = 1e-9 * max(1.0, gap.length)
            per_plane[plane] = (None if lo < -tol else max(float(lo), 0.0), None if math.isinf(hi) else float(hi))
        los = [v[0] for v in per_plane.values() if v[0] is not None]
        his = [v[1] for v in per_plane.values() if v[1] is not None]
        lo = max(los) if los else None
        hi = min(his) if his else None
        limits = {
            "lo": tuple(p for p in PLANES if lo is not None and per_plane[p][0] is not None
                        and abs(per_plane[p][0] - lo) <= SAME_EDGE_MM),
            "hi": tuple(p for p in PLANES if hi is not None and per_plane[p][1] is not None
                        and abs(per_plane[p][1] - hi) <= SAME_EDGE_MM),
        }
        out.append(Window(gap, lo, hi, per_plane, limits))
    return out


def _planes_go(names: tuple) -> str:
    if len(names) == 2:
        return "both planes go"
    return f"the {PLANE_NAMES[names[0]]} plane goes"


def _half_trace_findings(cav, max_abs_m: float):
    for plane, name in PLANE_NAMES.items():
        mode = cav.modes[plane]
        if not mode.stable:
            continue   # cavity-unstable reports it
        if mode.status == MARGINAL_RETRACE:
            yield Finding(
                f"cavity \"{cav.id}\" is on the edge of stability in the {name} plane: half-trace m = "
                f"{mode.m:+.4f} with a round trip of +-I (every ray retraces itself, as in a symmetric confocal "
                f"cavity): the transverse modes are degenerate, so the round trip alone does not pick the mode "
                f"(the one shown is that of the repeating half of the cavity)",
                (cav.id,), value=abs(mode.m), limit=max_abs_m, unit="|m|",
                hint="if the degenerate (confocal) design is intended, waive this finding; otherwise move a "
                     "spacing off the confocal point")
        elif abs(mode.m) > max_abs_m:
            # for two mirrors m = 2 g1 g2 - 1 (Kogelnik & Li 1966): m -> +1 as g1 g2 -> 1 (planar or
            # concentric), m -> -1 as g1 g2 -> 0 (confocal or hemispherical)
            edge = ("+1, like a near-planar or near-concentric two-mirror cavity" if mode.m > 0 else
                    "-1, like a near-confocal or near-hemispherical two-mirror cavity")
            yield Finding(
                f"cavity \"{cav.id}\" is close to an edge of stability in the {name} plane: half-trace m = "
                f"{mode.m:+.4f}, limit |m| <= {max_abs_m:g}; m approaches {edge}",
                (cav.id,), value=abs(mode.m), limit=max_abs_m, unit="|m|",
                hint="move the spacings toward the middle of their stability windows, or choose mirror radii "
                     "that put the design further inside the stable zone")


def _window_text(w: Window) -> str:
    lo = "0 (the gap closes first)" if w.lo is None else f"{w.lo:.3f}"
    hi = "no upper edge" if w.hi is None else f"{w.hi:.3f}"
    return f"[{lo}, {hi}] mm"


def _window_finding(cav, w: Window, min_window: float) -> Finding:
    g = w.gap
    below = w.lo is not None and (w.hi is None or g.length - w.lo <= w.hi - g.length)
    side, planes = ("lower", w.limits["lo"]) if below else ("upper", w.limits["hi"])
    message = (f"cavity \"{cav.id}\": the air spacing {g.first} -> {g.second} (planned {g.length:.3f} mm) keeps "
               f"the cavity stable in both planes only within {_window_text(w)}; the plan is {w.distance:.3f} mm "
               f"from the {side} edge, where {_planes_go(planes)} unstable (limit {min_window:g} mm)")
    if w.lo is not None and w.hi is not None:
        width = w.hi - w.lo
        centre = (w.lo + w.hi) / 2.0
        if width < 2.0 * min_window:
            hint = (f"the whole window is only {width:.3f} mm wide, so no setting of this spacing alone keeps "
                    f"{min_window:g} mm from both edges; widen it with other radii or spacings (its middle is "
                    f"{centre:.3f} mm)")
        else:
            verb = "lengthen" if below else "shorten"
            hint = (f"{verb} this spacing toward the middle of the window, {centre:.3f} mm "
                    f"({abs(centre - g.length):.3f} mm {'longer' if below else 'shorter'})")
    elif below:
        hint = f"lengthen this spacing by at least {min_window - w.distance:.3f} mm (no edge lies above it)"
    else:
        hint = f"shorten this spacing by at least {min_window - w.distance:.3f} mm"
    return Finding(message, (cav.id, g.first, g.second), value=w.distance, limit=min_window, unit="mm",
                   hint=hint)


def check(bench, options):
    max_abs_m = options["max_abs_m"]
    min_window = options["min_window_mm"]
    if not 0.0 < max_abs_m <= 1.0:
        raise ValueError(f"rules.stability-margin.max_abs_m must lie in (0, 1], not {max_abs_m!r}")
    if not min_window >= 0.0:
        raise ValueError(f"rules.stability-margin.min_window_mm must be >= 0, not {min_window!r}")
    for cav in bench.solution.cavities.values():
        yield from _half_trace_findings(cav, max_abs_m)
        if not all(cav.modes[p].stable for p in PLANES):
            continue
        path = bench.trace.cavities[cav.id]
        for w in spacing_windows(cav, bench.layout, path):
            if w.distance < min_window:
                yield _window_finding(cav, w, min_window)


RULES = (
    Rule(
        id="stability-margin",
        summary="too close to an edge of stability: the half-trace m against a limit, and the distance (mm) each "
                "free spacing may move before the cavity goes unstable",
        explanation=(
            "A cavity can be stable on paper and still unusable: near an edge of stability the mode size and "
            "direction react strongly to every small change (w^4 ~ B^2/(1-m^2), Kogelnik & Li 1966). Two checks. "
            "(1) The half-trace m = (A+D)/2 of the round trip, per plane, against max_abs_m; a round trip equal to "
            "+-I (the symmetric confocal cavity, |m| = 1, every ray retraces itself) is reported here as on the "
            "edge. (2) For every air gap between consecutive elements of a cavity that is stable in both planes, "
            "the window over which that gap alone may change (in a linear cavity both of its passes change "
            "together) with the cavity stable in both planes, found exactly from the crossings of m = +-1, with "
            "the thermal lens at its design value and the angles of incidence as planned; the distance from the "
            "plan to the nearer edge is compared with min_window_mm. An isolated confocal point inside a window "
            "does not end it. The whole thermal-lens range is checked by cavity-unstable."
        ),
        check=check,
        severity=WARNING,
        options=(
            Option("max_abs_m", 0.95,
                   "largest accepted |half-trace| per plane. w^4 ~ B^2/(1-m^2) gives dw/w = m dm/(2(1-m^2)): at "
                   "|m| = 0.95 a change of m by 0.01 changes the mode radius by about 5 %; for a two-mirror cavity "
                   "the limit is 0.025 < g1 g2 < 0.975 (engineering judgement, not a standard). A round trip of +-I "
                   "(|m| = 1, confocal) is always reported", "|m|"),
            Option("min_window_mm", 1.0,
                   "smallest accepted distance from a planned spacing to the nearer stability edge. A spacing set "
                   "on a breadboard with a rule and posts is good to a few tenths of a millimetre, and a 1 m "
                   "aluminium base grows 0.23 mm over 10 K; 1 mm leaves room for both (common practice)", "mm"),
        ),
    ),
)
