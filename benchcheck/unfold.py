"""Unfold traced paths into tangential and sagittal trains of reduced ABCD steps.

A train is a flat list of steps: ``Space`` (free propagation, with what is needed to
report physical radii and waists inside media), ``Thin`` (a matrix of zero length) and
``Marker`` (where a hit is reported).  Building steps from optic parameters is the only
place that knows how each kind of optic acts on a beam; the solver only multiplies.

Media use the air-equivalent ("reduced length") model of Kogelnik et al., IEEE JQE 8, 373
(1972): a Brewster-cut crystal of length L is L/n sagittal and L/n^3 tangential; inside
it the physical tangential radius is larger than the model's by cos(t2)/cos(t1) (= n at
Brewster), which ``Space.scale`` carries.  A thermal lens is round in the crystal's own
cross-section, so in the model's tangential coordinates its power is multiplied by
scale^2 (see ``element_steps``).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from . import abcd
from .abcd import SAGITTAL, TANGENTIAL
from .model import Layout, Optic
from .trace import REFLECT, TRANSMIT, Hit, PathTrace


@dataclass
class Space:
    length: float               # geometric mm along the beam
    k: float                    # reduced (air-equivalent) mm per geometric mm
    scale: float = 1.0          # physical radius / model radius inside this medium
    index: float = 1.0
    s0: float = 0.0             # path coordinate (mm) where it starts
    forward: bool = True        # False on the return half of a linear cavity
    #: for the air between two elements: the index of that gap along the path (the gap
    #: after hit i is gap i), so a rule can vary one spacing, out and back together
    gap: int | None = None
    #: group index of the medium where given (FSR, round-trip time); None: use ``index``
    group: float | None = None

    def matrix(self) -> np.ndarray:
        """[[1, length * k], [0, 1]], built once per space and length (a train's products,
        the stability windows and the beam walks all ask for it); read-only, since it is
        shared."""
        b = self.length * self.k
        cached = self.__dict__.get("_matrix")
        if cached is not None and cached[0] == b:
            return cached[1]
        m = abcd.free_space(b)
        m.flags.writeable = False
        self.__dict__["_matrix"] = (b, m)
        return m

    def reduced(self):
        """B = length * k of ``matrix()`` (the matrix is [[1, B], [0, 1]]): crossing free
        space adds it to q^, with no matrix to build."""
        return self.length * self.k


@dataclass
class Thin:
    m: np.ndarray
    label: str
    #: for a thermal lens: the crystal id, so the solver can vary its power
    thermal: str | None = None
    #: for a thermal lens: the factor its power is taken with here (``element_steps``), so
    #: that a varied power P gives ``lens_power(P * thermal_factor)``
    thermal_factor: float = 1.0

    def matrix(self) -> np.ndarray:
        return self.m


@dataclass
class Marker:
    hit: int                    # index into the path's hits
    s: float
    scale: float = 1.0          # physical radius / model radius at this point


@dataclass
class Train:
    plane: str
    steps: list = field(default_factory=list)
    #: indices of the steps that are Markers, in order (for splitting a round trip)
    notes: list[str] = field(default_factory=list)


def thermal_design_power(values: tuple[float, ...] | None) -> float:
    """Dioptric power (1/mm) used for the beam table: the value, or mid-range in 1/f."""
    if not values:
        return 0.0
    powers = [1.0 / f for f in values]
    return sum(powers) / len(powers)


def thermal_range(optic: Optic, plane: str) -> tuple[float, ...] | None:
    if optic.thermal_lens_t is not None:
        return optic.thermal_lens_t if plane == TANGENTIAL else optic.thermal_lens_s
    return optic.thermal_lens


def _num(x):
    """A 0-d result as a plain float; arrays (many perturbed benches at once) unchanged."""
    return float(x) if np.ndim(x) == 0 else x


def medium_factors(index, aoi, plane: str):
    """(k, scale) of a medium entered from air at angle ``aoi`` through a flat face.

    k_s = 1/n, k_t = cos^2 t1 / (n cos^2 t2); scale_t = cos t2 / cos t1 (Kogelnik et al.
    1972, from memory; the plate formulas d = k * t / cos t2 follow).  Broadcasts over
    arrays of index and aoi.
    """
    t2 = abcd.refraction_angle(aoi, 1.0, index)
    if plane == SAGITTAL:
        return _num(1.0 / np.asarray(index, dtype=float)), 1.0
    c1, c2 = np.cos(aoi), np.cos(t2)
    return _num(c1 * c1 / (index * c2 * c2)), _num(c2 / c1)


def internal_length(optic: Optic, aoi):
    """Geometric length (mm) a beam travels inside a crystal or plate."""
    if optic.kind == "crystal":
        return optic.length
    return _num(optic.thickness / np.cos(abcd.refraction_angle(aoi, 1.0, optic.index)))


def substrate_length(hit: Hit, optic: Optic) -> float:
    """Geometric length inside a mirror's or splitter's substrate for a beam passing it."""
    if optic.substrate_index is None or not optic.substrate_thickness or hit.aoi > math.radians(89.0):
        return 0.0
    t2 = math.asin(math.sin(hit.aoi) / optic.substrate_index)
    return optic.substrate_thickness / math.cos(t2)


def extent(hit: Hit, optic: Optic) -> tuple[float, float]:
    """Geometric length an element takes from the air before and after its hit point.

    A crystal or plate is centred on its hit point.  A mirror's or splitter's substrate lies
    behind the coated face, which is the hit point: before it for a beam arriving from the
    back, after it for one leaving through the back.
    """
    if optic.kind in ("crystal", "plate") and hit.action == TRANSMIT:
        half = internal_length(optic, hit.aoi) / 2.0
        return half, half
    if optic.kind in ("mirror", "splitter") and hit.action == TRANSMIT:
        inside = substrate_length(hit, optic)
        return (inside, 0.0) if hit.from_back else (0.0, inside)
    return 0.0, 0.0


def element_steps(hit: Hit, optic: Optic, plane: str, thermal_powers: dict, notes: list) -> tuple[list, list, float]:
    """Steps before and after the hit point of one element, and the radius scale there."""
    kind = optic.kind
    if kind == "mirror" and hit.action == REFLECT:
        if optic.roc is None:
            return [], [], 1.0
        return [], [Thin(abcd.mirror(optic.roc, hit.aoi, plane), f"mirror {optic.id}")], 1.0
    if kind == "splitter" and hit.action == REFLECT:
        return [], [], 1.0
    if kind in ("mirror", "splitter"):
        steps = substrate_steps(hit, optic, plane, notes)
        return (steps, [], 1.0) if hit.from_back else ([], steps, 1.0)
    if kind == "lens":
        return [], [Thin(abcd.thin_lens(optic.focal_length), f"lens {optic.id}")], 1.0
    if kind in ("crystal", "plate"):
        k, scale = medium_factors(optic.index, hit.aoi, plane)
        half = internal_length(optic, hit.aoi) / 2.0
        pre = [Space(half, k, scale, optic.index, hit.s - half, group=optic.group_index)]
        post = []
        if kind == "crystal" and thermal_range(optic, plane):
            power = thermal_powers.get((optic.id, plane))
            if power is None:
                power = thermal_design_power(thermal_range(optic, plane))
            # the lens is round in the crystal's own cross-section; in the air-equivalent
            # tangential coordinates (heights smaller by 1/scale) its power grows by scale^2
            post.append(Thin(abcd.lens_power(np.asarray(power) * scale**2), f"thermal lens {optic.id}",
                             thermal=optic.id, thermal_factor=scale**2))
        post.append(Space(half, k, scale, optic.index, hit.s, group=optic.group_index))
        return pre, post, scale
    return [], [], 1.0   # aperture, dump, detector: no action on the beam's shape


def substrate_steps(hit: Hit, optic: Optic, plane: str, notes: list) -> list:
    """A beam passing through a mirror or splitter: its substrate as a (tilted) thick lens.

    The reflecting face carries the curvature (roc > 0: centre of curvature on the front
    side); the back face is flat.  Refraction by the Coddington equations in ``abcd.interface``.
    """
    n = optic.substrate_index
    t = optic.substrate_thickness
    if n is None:
        if optic.roc is not None:
            notes.append(f"\"{optic.id}\" is curved but gives no substrate index: the beam passing through it is "
                         "taken without the substrate's lens (add substrate = {{ thickness = ..., index = ... }})")
        return []
    t = t or 0.0
    aoi = hit.aoi
    if aoi > math.radians(89.0):
        notes.append(f"a beam runs along the face of \"{optic.id}\" ({math.degrees(aoi):.1f} deg incidence); its "
                     "substrate is not taken as a lens")
        return []
    t2 = math.asin(math.sin(aoi) / n)
    roc = math.inf if optic.roc is None else optic.roc
    if hit.from_back:   # flat back face first, curved front face last; centre of curvature lies ahead
        first = abcd.interface(1.0, n, aoi, math.inf, plane)
        last = abcd.interface(n, 1.0, t2, roc, plane)
    else:               # curved front face first; its centre of curvature lies behind the beam
        first = abcd.interface(1.0, n, aoi, -roc, plane)
        last = abcd.interface(n, 1.0, t2, math.inf, plane)
    length = t / math.cos(t2)
    inside = Space(length, 1.0 / n, 1.0, n, hit.s - length if hit.from_back else hit.s)
    return [Thin(first, f"substrate face {optic.id}"), inside, Thin(last, f"substrate face {optic.id}")]


def _air(length, s0, forward: bool = True, gap: int | None = None) -> Space:
    return Space(_num(np.maximum(length, 0.0)), 1.0, 1.0, 1.0, s0, forward, gap)


def _element_parts(layout: Layout, path: PathTrace, plane: str, thermal_powers: dict, notes: list):
    parts = []
    for i, hit in enumerate(path.hits):
        optic = layout.optics[hit.optic]
        pre, post, scale = element_steps(hit, optic, plane, thermal_powers, notes)
        parts.append((pre, Marker(i, hit.s, scale), post, extent(hit, optic)))
    return parts


def _reversed_steps(steps: list) -> list:
    """The same steps met backwards (the return half of a linear cavity).

    A reduced matrix [[A, B], [C, D]] traversed in reverse is [[D, B], [C, A]] (the
    reversal theorem for det-1 ray matrices; Siegman, "Lasers", ch. 15, from memory): a
    tilted interface's height scaling inverts, a curved one's power stays.
    """
    out = []
    for st in reversed(steps):
        if isinstance(st, Space):
            out.append(Space(st.length, st.k, st.scale, st.index, st.s0, False, group=st.group))
        elif isinstance(st, Thin):
            m = st.m.copy()
            m[..., 0, 0], m[..., 1, 1] = st.m[..., 1, 1], st.m[..., 0, 0]
            out.append(Thin(m, st.label, st.thermal, st.thermal_factor))
    return out


def cavity_train(layout: Layout, path: PathTrace, plane: str, thermal_powers: dict | None = None) -> Train:
    """Round trip of a cavity from its first element (before any action there).

    Linear: there and back between the end mirrors; markers only on the way out.
    Ring: once round in travel order.
    """
    thermal_powers = thermal_powers or {}
    train = Train(plane)
    parts = _element_parts(layout, path, plane, thermal_powers, train.notes)
    steps: list = []
    n = len(parts)
    if path.role == "linear":
        pre0, mark0, post0, _ = parts[0]
        steps += [mark0] + post0
        for i in range(1, n):
            gap = path.segments[i - 1] - parts[i - 1][3][1] - parts[i][3][0]
            steps.append(_air(gap, path.hits[i - 1].s + parts[i - 1][3][1], gap=i - 1))
            pre, mark, post, _ = parts[i]
            steps += pre + [mark] + post
        back = []
        for i in range(n - 1, 0, -1):
            gap = path.segments[i - 1] - parts[i - 1][3][1] - parts[i][3][0]
            if i < n - 1:
                pre, _, post, _ = parts[i]
                back += _reversed_steps(pre + post)
            back.append(_air(gap, path.hits[i - 1].s + parts[i - 1][3][1], forward=False, gap=i - 1))
        steps += back + _reversed_steps(pre0)
    else:
        pre0, mark0, post0, _ = parts[0]
        steps += [mark0] + post0
        for i in range(1, n + 1):
            j = i % n
            gap = path.segments[i - 1] - parts[i - 1][3][1] - parts[j][3][0]
            steps.append(_air(gap, path.hits[i - 1].s + parts[i - 1][3][1], gap=i - 1))
            if j:
                pre, mark, post, _ = parts[j]
                steps += pre + [mark] + post
        perimeter = sum(path.segments)
        steps += [Space(st.length, st.k, st.scale, st.index, st.s0 + perimeter, st.forward, group=st.group)
                  if isinstance(st, Space) else st for st in pre0]
    train.steps = steps
    return train


def beam_train(layout: Layout, path: PathTrace, plane: str, prefix: list | None = None,
               prefix_extent: float = 0.0) -> Train:
    """From the beam's origin through every hit; ``prefix`` steps (the output coupler's
    substrate for a beam leaving a cavity, ``prefix_extent`` mm long) come first."""
    train = Train(plane)
    parts = _element_parts(layout, path, plane, {}, train.notes)
    steps = list(prefix or [])
    prev_ext = prefix_extent
    prev_s = 0.0
    for i, (pre, mark, post, (before, after)) in enumerate(parts):
        gap = path.segments[i] - prev_ext - before
        steps.append(_air(gap, prev_s + prev_ext))
        steps += pre + [mark] + post
        prev_ext, prev_s = after, path.hits[i].s
    if path.tail is not None and path.tail.length > prev_ext:
        steps.append(_air(path.tail.length - prev_ext, prev_s + prev_ext))
    train.steps = steps
    return train


def overlap_issues(layout: Layout, path: PathTrace) -> list[str]:
    """Elements whose lengths overlap along the path (a crystal longer than its gap)."""
    out = []
    hits = path.hits
    n = len(hits)
    pairs = [(i, i + 1) for i in range(n - 1)]
    if path.role == "ring":
        pairs.append((n - 1, 0))
    for a, b in pairs:
        ea = extent(hits[a], layout.optics[hits[a].optic])[1]
        eb = extent(hits[b], layout.optics[hits[b].optic])[0]
        seg = path.segments[a] if path.role != "beam" else path.segments[a + 1]
        if ea + eb > seg + 1e-9:
            out.append(f"\"{hits[a].optic}\" and \"{hits[b].optic}\" overlap along \"{path.id}\": "
                       f"{seg:.2f} mm apart but {ea + eb:.2f} mm of material between their centres")
    return out
