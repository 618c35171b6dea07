"""Tolerance Monte Carlo: many perturbed builds of each cavity at once.

For one cavity, every toleranced quantity (``tolspec``) becomes a column of a sample
matrix; a chunk of rows is turned into perturbed copies of the optics and of the traced
path whose fields are numpy arrays, and ``unfold.cavity_train`` builds the round trip from
them exactly as it does for the plan, so the numeric core (``abcd``, ``gauss``,
``resonator``) evaluates the whole chunk with broadcasting.  No Python loop runs per
sample; chunks bound the memory of the intermediate matrices.

How a tolerance perturbs the placed bench (README, "Tolerances and alignment"):

- ``position_mm``: each table coordinate of each optic's placed point moves independently
  (relatively placed optics move where they were placed; their neighbours do not follow).
  The cavity is taken as realigned through the moved points: segment lengths and the angle
  of incidence at each fold it orients follow from them; end mirrors of a linear cavity stay
  at normal incidence.
- ``roc_percent``, ``focal_length_percent``: relative changes of a radius or focal length.
- ``length_mm``: a crystal's length or a plate's thickness; ``index_delta``: its index;
  ``tilt_deg``: its angle of incidence (a Brewster face or a tilted plate away from plan).
- ``thermal_lens_range``: the thermal lens power uniform in its declared range.

A source's beam that seeds a passive cavity is perturbed with it (``Seed``): the optics on
its path take draws like the cavity's, and its overlap with each build's mode gives the
mode match; the seed is taken as aligned onto the cavity's axis.

Statistics: yields with the Wilson score interval at 95 %; percentiles over the builds
stable in both planes; the sensitivity ranking by a linear regression of each output on
the sampled deviations over those builds (see ``Sensitivity``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from . import gauss, resonator, tolspec
from .abcd import PLANES, SAGITTAL, TANGENTIAL
from .trace import REFLECT
from .unfold import Marker, Space, beam_train, cavity_train, thermal_range

#: Rows evaluated at once.  Fixed, so that a seed gives the same samples on every machine.
CHUNK = 16384
#: Builds that enter the sensitivity regression at most: its shares are then known to well
#: under 1 % (the builds are independent, so the first ones are a fair subsample), and its
#: cost no longer grows with --samples.
REGRESSION_MAX = 20_000
#: 95 % two-sided standard normal quantile (common practice).
Z95 = 1.959963984540054
PERCENTILES = (5.0, 50.0, 95.0)
NM_TO_MM = 1e-6


@dataclass(frozen=True)
class Parameter:
    """One toleranced quantity: ``optic``, what (``x``, ``y``, ``roc``, ``focal_length``,
    ``length``, ``index``, ``tilt``, ``thermal_lens``), +-``tol`` in ``unit``."""

    optic: str
    what: str
    tol: float
    unit: str

    @property
    def label(self) -> str:
        return f"{self.optic} {self.what}"


def parameters(layout, path, tolerances: tolspec.Tolerances, extra=()) -> list[Parameter]:
    """The toleranced quantities of one cavity, in path order (each optic once), then those
    of the optics in ``extra`` (ids: a seed beam's path) not on the cavity."""
    out = []
    for oid in dict.fromkeys([h.optic for h in path.hits] + list(extra)):
        optic = layout.optics[oid]
        tol = tolerances.for_optic(optic)
        if tol.get("position_mm", 0.0) > 0:
            out += [Parameter(oid, "x", tol["position_mm"], "mm"), Parameter(oid, "y", tol["position_mm"], "mm")]
        if optic.kind == "mirror" and optic.roc is not None and tol.get("roc_percent", 0.0) > 0:
            out.append(Parameter(oid, "roc", tol["roc_percent"] / 100.0, "fraction"))
        if optic.kind == "lens" and tol.get("focal_length_percent", 0.0) > 0:
            out.append(Parameter(oid, "focal_length", tol["focal_length_percent"] / 100.0, "fraction"))
        if optic.kind in ("crystal", "plate"):
            if tol.get("length_mm", 0.0) > 0:
                out.append(Parameter(oid, "length", tol["length_mm"], "mm"))
            if tol.get("index_delta", 0.0) > 0:
                out.append(Parameter(oid, "index", tol["index_delta"], ""))
            if tol.get("tilt_deg", 0.0) > 0:
                out.append(Parameter(oid, "tilt", math.radians(tol["tilt_deg"]), "rad"))
        if optic.kind == "crystal" and tol.get("thermal_lens_range") and _has_thermal_range(optic):
            out.append(Parameter(oid, "thermal_lens", 1.0, "fraction of range"))
    return out


def _has_thermal_range(optic) -> bool:
    for plane in PLANES:
        vals = thermal_range(optic, plane)
        if vals and len(vals) == 2 and vals[0] != vals[1]:
            return True
    return False


def draw(params: list[Parameter], n: int, rng: np.random.Generator, distribution: str) -> np.ndarray:
    """Deviations (n, len(params)): uniform on [-t, t] or normal with sigma = t/2; a thermal
    lens column is the position in its range, uniform on [0, 1] whatever the distribution."""
    x = np.empty((n, len(params)))
    for j, p in enumerate(params):
        if p.what == "thermal_lens":
            x[:, j] = rng.uniform(0.0, 1.0, n)
        elif distribution == tolspec.NORMAL:
            x[:, j] = rng.normal(0.0, p.tol / 2.0, n)
        else:
            x[:, j] = rng.uniform(-p.tol, p.tol, n)
    return x


# --- one chunk of perturbed builds -------------------------------------------------------

def _perturbed(layout, path, params: list[Parameter], x: np.ndarray, oriented: set):
    """The layout (the optics on ``path`` perturbed) and the traced path with array fields
    for the rows of ``x``, and the thermal-lens powers to use."""
    col = {(p.optic, p.what): x[:, j] for j, p in enumerate(params)}
    zero = np.zeros(len(x))
    optics = dict(layout.optics)
    thermal = {}
    # only the optics on this path: nothing else of the layout is read by its train
    for oid in dict.fromkeys(h.optic for h in path.hits):
        o = layout.optics[oid]
        changes = {}
        if (oid, "roc") in col:
            changes["roc"] = o.roc * (1.0 + col[(oid, "roc")])
        if (oid, "focal_length") in col:
            changes["focal_length"] = o.focal_length * (1.0 + col[(oid, "focal_length")])
        if (oid, "length") in col:
            key = "length" if o.kind == "crystal" else "thickness"
            changes[key] = np.maximum(getattr(o, key) + col[(oid, "length")], 1e-6)
        if (oid, "index") in col:
            changes["index"] = np.maximum(o.index + col[(oid, "index")], 1.0)
        if changes:
            optics[oid] = replace(o, **changes)
        if (oid, "thermal_lens") in col:
            u = col[(oid, "thermal_lens")]
            for plane in PLANES:
                vals = thermal_range(o, plane)
                if vals:
                    powers = [1.0 / f for f in vals]
                    lo, hi = min(powers), max(powers)
                    thermal[(oid, plane)] = lo + u * (hi - lo)
    n = len(path.hits)
    first = 1 if path.role == "beam" else 0        # a beam's points start at its source
    px, py = np.empty((len(x), n + first)), np.empty((len(x), n + first))
    if first:
        px[:, 0], py[:, 0] = path.start[0], path.start[1]
    for i, h in enumerate(path.hits):
        px[:, first + i] = h.point[0] + col.get((h.optic, "x"), zero)
        py[:, first + i] = h.point[1] + col.get((h.optic, "y"), zero)
    # every leg at once, closing leg included: leg k runs from point k to point k + 1
    # (the norm's sum over x and y written out, in the order np.linalg.norm adds them)
    lx, ly = np.empty_like(px), np.empty_like(py)
    lx[:, :-1], lx[:, -1] = px[:, 1:] - px[:, :-1], px[:, 0] - px[:, -1]
    ly[:, :-1], ly[:, -1] = py[:, 1:] - py[:, :-1], py[:, 0] - py[:, -1]
    lengths = np.sqrt(lx * lx + ly * ly)
    segs = [lengths[:, k] for k in range(n if path.role == "ring" else n + first - 1)]
    fold_aoi = None
    hits = []
    for i, h in enumerate(path.hits):
        aoi = h.aoi
        if path.role == "beam":
            j, last = i + 1, i == n - 1       # point 0 is the beam's start
            turns = not last
        else:
            j, last = i, False
            turns = not (path.role == "linear" and i in (0, n - 1))
        if h.action == REFLECT and turns and h.optic in oriented:
            if fold_aoi is None:
                # the fold at every point: half the angle between the legs in and out
                with np.errstate(invalid="ignore", divide="ignore"):
                    ux, uy = lx / lengths, ly / lengths
                    dot = np.empty_like(ux)      # leg in (k - 1) . leg out (k) at point k
                    dot[:, 1:] = ux[:, :-1] * ux[:, 1:] + uy[:, :-1] * uy[:, 1:]
                    dot[:, 0] = ux[:, -1] * ux[:, 0] + uy[:, -1] * uy[:, 0]
                    fold_aoi = 0.5 * np.arccos(np.clip(-dot, -1.0, 1.0))
            aoi = fold_aoi[:, j]
        elif (h.optic, "tilt") in col:
            aoi = np.abs(h.aoi + col[(h.optic, "tilt")])
        hits.append(replace(h, aoi=aoi))
    return replace(layout, optics=optics), replace(path, hits=hits, segments=segs), thermal


def _step_terms(steps) -> list:
    """Each step of a train as what the builds need of it: None for a marker, the reduced
    length B (scalar or (n,)) for free space, the matrix of a thin element.  Free space is
    [[1, B], [0, 1]]: multiplying by it is a shift, so no matrix is built for it."""
    return [None if isinstance(st, Marker) else (st.reduced() if isinstance(st, Space) else st.matrix())
            for st in steps]


def _chain(terms):
    """Round-trip elements (A, B, C, D) from ``_step_terms`` that may hold arrays.

    A free-space step adds B times the lower row to the upper one (1 * x + B * y, with the
    exact 1 and 0 of its matrix dropped: the same numbers)."""
    a, b, c, d = 1.0, 0.0, 0.0, 1.0
    for m in terms:
        if m is None:
            continue
        if not isinstance(m, np.ndarray) or m.ndim < 2:
            a, b = a + m * c, b + m * d
            continue
        ma, mb, mc, md = m[..., 0, 0], m[..., 0, 1], m[..., 1, 0], m[..., 1, 1]
        a, b, c, d = ma * a + mb * c, ma * b + mb * d, mc * a + md * c, mc * b + md * d
    return a, b, c, d


def _advance(term, q):
    """q^ through one step of ``_step_terms``: q + B across free space (the ABCD law with
    A = D = 1, C = 0), the full law through a thin element."""
    if not isinstance(term, np.ndarray) or term.ndim < 2:
        return q + term
    return gauss.propagate(term, q)


@dataclass
class Chunk:
    """Outputs of a chunk of builds: half-traces (plane -> (n,)) and physical radii (mm) at
    every hit (plane -> (n, hits)); NaN where a plane has no mode.  ``q_after``: q^ of the
    mode just after the action of the hit asked for (plane -> (n,)), else empty."""

    m: dict
    radius: dict
    q_after: dict = field(default_factory=dict)
    #: plane -> (n,) bool: stable by the resonator's boundary test
    stable: dict = field(default_factory=dict)


def evaluate(layout, path, params: list[Parameter], x: np.ndarray, oriented: set,
             q_after: int | None = None) -> Chunk:
    lay, pth, thermal = _perturbed(layout, path, params, x, oriented)
    wavelength = path.wavelength_nm * NM_TO_MM
    n = len(x)
    ms, radii, q_out, oks = {}, {}, {}, {}
    for plane in PLANES:
        train = cavity_train(lay, pth, plane, thermal)
        mats = _step_terms(train.steps)
        a, b, c, d = (np.broadcast_to(v, (n,)) for v in _chain(mats))
        rt = np.empty((n, 2, 2))                  # (filled, not stacked: stacking costs more)
        rt[:, 0, 0], rt[:, 0, 1], rt[:, 1, 0], rt[:, 1, 1] = a, b, c, d
        ms[plane] = (a + d) / 2.0
        q = resonator.eigen_q(rt)
        scale = np.maximum(sum(np.asarray(st.length, dtype=float) * st.k for st in train.steps
                               if isinstance(st, Space)), 1e-9)
        ok = resonator.is_stable(rt, scale)       # the same boundary test as the nominal solve
        oks[plane] = ok
        q = np.where(ok, q, np.nan + 1j * np.nan)
        r = np.full((n, len(path.hits)), np.nan)
        seen = set()
        waiting = False
        # past the last marker (the whole way back of a linear cavity) nothing more is read
        last = max((k for k, m in enumerate(mats) if m is None), default=-1)
        with np.errstate(invalid="ignore"):
            for k, (st, m) in enumerate(zip(train.steps, mats)):
                if k > last and not waiting:
                    break
                if m is None:
                    if st.hit not in seen:
                        seen.add(st.hit)
                        r[:, st.hit] = st.scale * gauss.radius(q, wavelength)
                        waiting = st.hit == q_after
                    continue
                if waiting and isinstance(st, Space):
                    q_out[plane] = np.broadcast_to(q, (n,))
                    waiting = False
                q = _advance(m, q)
        radii[plane] = r
    return Chunk(ms, radii, q_out, oks)


def seed_q(layout, path, params: list[Parameter], x: np.ndarray, oriented: set, source) -> dict:
    """q^ of a source's beam arriving at its last hit (plane -> (n,)), for each build."""
    lay, pth, _ = _perturbed(layout, path, params, x, oriented)
    wavelength = path.wavelength_nm * NM_TO_MM
    out = {}
    for plane in PLANES:
        w0, m2 = (source.waist_t, source.m2_t) if plane == TANGENTIAL else (source.waist_s, source.m2_s)
        q = gauss.q_at_distance_from_waist(w0, -source.waist_at, wavelength, m2)
        last = len(path.hits) - 1
        steps = beam_train(lay, pth, plane).steps
        for st, term in zip(steps, _step_terms(steps)):
            if isinstance(st, Marker):
                if st.hit == last:
                    break
                continue
            q = _advance(term, q)
        out[plane] = np.broadcast_to(q, (len(x),))
    return out


# --- statistics ----------------------------------------------------------------------------

def wilson_interval(k: int, n: int, z: float = Z95) -> tuple[float, float]:
    """Wilson score interval for a binomial proportion k/n (Wilson, J. Am. Stat. Assoc. 22,
    209, 1927; from memory)."""
    if n <= 0:
        return 0.0, 1.0
    p = k / n
    denom = 1.0 + z * z / n
    centre = (p + z * z / (2.0 * n)) / denom
    half = z * math.sqrt(p * (1.0 - p) / n + z * z / (4.0 * n * n)) / denom
    lo = 0.0 if k == 0 else max(0.0, centre - half)
    hi = 1.0 if k == n else min(1.0, centre + half)
    return lo, hi


class Sensitivity:
    """Share of each output's spread explained by each parameter: a least-squares fit
    y = b0 + sum_j b_j x_j over the builds stable in both planes (the first
    ``REGRESSION_MAX`` of them), accumulated chunk by chunk (normal equations), and
    share_j = b_j^2 var(x_j) / var(y).

    For independent parameters and a response that is linear over the tolerance box the
    shares add up to the fit's R^2 (reported), the rest being curvature and interactions;
    where they add up to more, the kept builds have made the parameters correlated.
    Limits: a response that is not monotonic over the box (a quantity at an extremum, the
    mode near the edge of stability) has a small linear share however strongly it depends
    on the parameter; the builds kept are only the stable ones, which correlates the
    parameters near an edge; two parameters that act alike share the credit."""

    def __init__(self, n_params: int, outputs: list[str]):
        self.outputs = outputs
        k = n_params + 1
        self.xx = np.zeros((k, k))
        self.xy = np.zeros((k, len(outputs)))
        self.y1 = np.zeros(len(outputs))
        self.y2 = np.zeros(len(outputs))
        self.n = 0

    def add(self, x: np.ndarray, y: np.ndarray) -> None:
        finite = np.isfinite(y)
        keep = finite[:, 0].copy()           # every output finite (column by column: faster)
        for j in range(1, y.shape[1]):
            keep &= finite[:, j]
        x, y = x[keep][:REGRESSION_MAX - self.n], y[keep][:REGRESSION_MAX - self.n]
        if not len(x):
            return
        xa = np.hstack([np.ones((len(x), 1)), x])
        self.xx += xa.T @ xa
        self.xy += xa.T @ y
        self.y1 += y.sum(axis=0)
        self.y2 += (y * y).sum(axis=0)
        self.n += len(x)

    def shares(self, params: list[Parameter]) -> tuple[list[dict], dict]:
        if self.n < len(params) + 2:
            return [], {}
        coef, *_ = np.linalg.lstsq(self.xx, self.xy, rcond=None)
        n = self.n
        mean_x = self.xx[0, 1:] / n
        var_x = np.diag(self.xx)[1:] / n - mean_x**2
        var_y = self.y2 / n - (self.y1 / n) ** 2
        rows, fit = [], {}
        for o, name in enumerate(self.outputs):
            if not var_y[o] > 1e-300:
                continue
            share = coef[1:, o] ** 2 * var_x / var_y[o]
            b = coef[:, o]
            residual = self.y2[o] - 2.0 * b @ self.xy[:, o] + b @ self.xx @ b
            fit[name] = float(np.clip(1.0 - residual / (var_y[o] * n), 0.0, 1.0))
            for j in np.argsort(-share):
                rows.append({"parameter": params[j].label, "output": name, "share": float(share[j])})
        return rows, fit


# --- one cavity ------------------------------------------------------------------------------

@dataclass
class CavityTolerance:
    id: str
    samples: int
    stable: int
    with_margin: int
    parameters: list[Parameter]
    #: optic id -> plane -> [p5, p50, p95] (um); only optics with a mode in that plane
    radius_um: dict
    #: crystal id -> [p5, p50, p95] of w_t/w_s
    ratio: dict
    sensitivity: list[dict]
    fit_r2: dict
    #: the optics whose radius the report draws (crystals, else the smallest mode) -> plane -> radii (um)
    focus: dict = field(default_factory=dict)
    margin_max_abs_m: float = 0.95
    alignment: list = field(default_factory=list)
    #: a passive cavity's seed: {"beam", "mode_match": [p5, p50, p95], "circulating_w": [...]}
    coupling: dict = field(default_factory=dict)

    @property
    def yield_stable(self) -> float:
        return self.stable / self.samples if self.samples else 0.0

    @property
    def yield_margin(self) -> float:
        return self.with_margin / self.samples if self.samples else 0.0


@dataclass
class Seed:
    """A source's beam coupled into a passive cavity: its traced path, the index of the
    input coupler in the cavity's path, the optics it orients, the tilt between seed and mode."""

    path: object
    source: object
    at: int
    oriented: set
    tilt: float

    def match(self, layout, params, x, chunk: Chunk) -> np.ndarray:
        """Mode match of each build: the product of the tangential and sagittal overlaps of
        the seed with the cavity's mode just inside the input coupler (as ``solve.mode_match``)."""
        qs = seed_q(layout, self.path, params, x, self.oriented, self.source)
        wavelength = self.path.wavelength_nm * NM_TO_MM
        eta = np.ones(len(x))
        for p in PLANES:
            with np.errstate(invalid="ignore"):
                eta = eta * gauss.overlap_1d(qs[p], chunk.q_after[p], wavelength,
                                             self.tilt if p == TANGENTIAL else 0.0)
        return eta


def seed_beam(solution, cavity_id: str) -> Seed | None:
    """The first beam from a source (M^2 = 1) that ends on this passive cavity's input
    coupler, as the solver couples it; None where there is none."""
    layout = solution.layout
    cpath = solution.trace.cavities[cavity_id]
    for bid, bpath in solution.trace.beams.items():
        src = layout.sources.get(bpath.origin)
        if bpath.into != cavity_id or src is None or src.m2_t != 1.0 or src.m2_s != 1.0:
            continue
        k = [h.optic for h in cpath.hits].index(bpath.hits[-1].optic)
        tilt = math.acos(max(-1.0, min(1.0, float(np.dot(bpath.hits[-1].d_in, cpath.hits[k].d_out)))))
        oriented = {oid for oid, p in solution.placement.optics.items() if p.oriented_by == bid}
        return Seed(bpath, src, k, oriented, tilt)
    return None


def focus_optics(layout, path, cavity) -> list[str]:
    """Where the mode size matters most: the crystals of the cavity, else the optic with
    the smallest mode (the tightest focus)."""
    crystals = [h.optic for h in path.hits if layout.optics[h.optic].kind == "crystal"]
    if crystals:
        return list(dict.fromkeys(crystals))
    best, size = None, math.inf
    for hit in cavity.hits:
        ws = [w for w in hit.w.values() if w is not None]
        if ws and max(ws) < size:
            best, size = hit.optic, max(ws)
    return [best] if best else []


def run_cavity(solution, cavity_id: str, tolerances: tolspec.Tolerances, samples: int, rng: np.random.Generator,
               progress=None, summary: bool = True) -> CavityTolerance:
    """The Monte Carlo of one cavity; ``progress(done, total)`` is called after each chunk.

    ``summary=False`` (the build-yield rule): the same builds, yields and sensitivity
    ranking, without the percentiles of radii, ratios and mode match (``radius_um``,
    ``ratio``, ``focus`` and ``coupling`` left empty), which cost a sort of every column."""
    layout = solution.layout
    path = solution.trace.cavities[cavity_id]
    cavity = solution.cavities[cavity_id]
    hit_optics = [h.optic for h in path.hits]
    seed = seed_beam(solution, cavity_id)
    params = parameters(layout, path, tolerances, [h.optic for h in seed.path.hits] if seed else ())
    oriented = {oid for oid, p in solution.placement.optics.items() if p.oriented_by == cavity_id}
    first = {oid: hit_optics.index(oid) for oid in dict.fromkeys(hit_optics)}
    crystals = [oid for oid in first if layout.optics[oid].kind == "crystal"]
    focus = focus_optics(layout, path, cavity)
    outputs = ["m_t", "m_s"] + [f"w_{p}@{oid}" for oid in focus for p in PLANES] + (["mode_match"] if seed else [])
    sens = Sensitivity(len(params), outputs)
    kept = {p: [] for p in PLANES}
    matches = []
    stable = margin = 0
    done = 0
    while done < samples:
        n = min(CHUNK, samples - done)
        x = draw(params, n, rng, tolerances.distribution)
        ch = evaluate(layout, path, params, x, oriented, seed.at if seed else None)
        both = np.ones(n, bool)
        inside = np.ones(n, bool)
        for p in PLANES:
            both &= ch.stable[p]
            inside &= np.abs(ch.m[p]) <= tolerances.margin_max_abs_m
        stable += int(both.sum())
        margin += int((both & inside).sum())
        y = [ch.m[TANGENTIAL], ch.m[SAGITTAL]] + [ch.radius[p][:, first[oid]] * 1e3 for oid in focus for p in PLANES]
        if seed:
            eta = seed.match(layout, params, x, ch)
            y.append(eta)
            matches.append(eta[both].astype(np.float32))
        columns, y = y, np.empty((n, len(y)))
        for j, column in enumerate(columns):
            y[:, j] = column
        y[~both] = np.nan
        sens.add(x, y)
        for p in PLANES if summary else ():
            kept[p].append(ch.radius[p][both].astype(np.float32))
        done += n
        if progress is not None:
            progress(done, samples)
    rows, fit = sens.shares(params)
    if not summary:
        return CavityTolerance(cavity_id, samples, stable, margin, params, {}, {}, rows, fit, {},
                               tolerances.margin_max_abs_m)
    radius_um, ratio, focus_samples = {}, {}, {}
    all_r = {p: (np.concatenate(kept[p]) if kept[p] else np.empty((0, len(hit_optics)), np.float32)) for p in PLANES}
    # every optic's column at once: the same order statistics as one column at a time
    pct, finite = {}, {}
    for p in PLANES:
        if len(all_r[p]):
            cols = all_r[p][:, list(first.values())].astype(float) * 1e3
            pct[p] = np.percentile(cols, PERCENTILES, axis=0).T.tolist()
            finite[p] = np.all(np.isfinite(cols), axis=0).tolist()
    for j, (oid, i) in enumerate(first.items()):
        entry = {p: pct[p][j] for p in pct if finite[p][j]}
        if entry:
            radius_um[oid] = entry
        if oid in focus and len(all_r[TANGENTIAL]):
            focus_samples[oid] = {p: all_r[p][:, i].astype(float) * 1e3 for p in PLANES}
    for oid in crystals:
        i = first[oid]
        if len(all_r[TANGENTIAL]):
            r = all_r[TANGENTIAL][:, i].astype(float) / all_r[SAGITTAL][:, i].astype(float)
            ratio[oid] = [float(v) for v in np.percentile(r, PERCENTILES)]
    coupling = {}
    if seed and matches:
        eta = np.concatenate(matches).astype(float)
        if len(eta) and np.all(np.isfinite(eta)):
            coupling = {"beam": seed.path.id, "mode_match": [float(v) for v in np.percentile(eta, PERCENTILES)]}
            if cavity.circulating_w is not None and math.isfinite(cavity.circulating_w):
                # the planned circulating power already counts the planned mode match where
                # a seed feeds the cavity: each build scales it by its own match over that one
                enh = getattr(cavity, "enhancement", None)
                planned = enh.mode_match if enh is not None and enh.mode_match else None
                full = cavity.circulating_w / planned if planned else cavity.circulating_w
                coupling["circulating_w"] = [float(v) for v in np.percentile(eta * full, PERCENTILES)]
    return CavityTolerance(cavity_id, samples, stable, margin, params, radius_um, ratio, rows, fit,
                           focus_samples, tolerances.margin_max_abs_m, coupling=coupling)


def run(solution, tolerances: tolspec.Tolerances, samples: int, seed: int, progress=None,
        with_alignment: bool = True) -> list[CavityTolerance]:
    """Every cavity of a solved layout; one generator seeded with ``seed`` draws them all in
    file order, so a seed reproduces the run."""
    from .alignment import cavity_alignment

    rng = np.random.default_rng(seed)
    out = []
    for cid in solution.cavities:
        result = run_cavity(solution, cid, tolerances, samples, rng,
                            None if progress is None else (lambda d, t, c=cid: progress(c, d, t)))
        if with_alignment:
            result.alignment = cavity_alignment(solution.layout, solution.cavities[cid], solution.trace.cavities[cid])
        out.append(result)
    return out
