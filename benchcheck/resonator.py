"""Eigenmodes, stability and Gouy phase of a round-trip ABCD matrix.

Kept apart from everything that knows about optics or files: it takes round-trip
matrices (arrays of shape (..., 2, 2)) and returns numbers, so the solver and later a
tolerancing run over many perturbed benches use the same code.

References: stability |m| < 1 with m = (A+D)/2 and the eigenmode
1/q^ = (D-A)/(2B) - i sqrt(1-m^2)/|B| (Kogelnik & Li 1966; Siegman, "Lasers", ch. 21,
from memory); round-trip Gouy phase arccos(m) for B > 0 and 2*pi - arccos(m) for B < 0
(the sign of B is the same at every reference plane: Courant-Snyder form B = beta sin
theta with beta > 0).  With det = 1, 1 - m^2 = -((A-D)/2)^2 - BC: the stability test
and sqrt(1 - m^2) are taken in that form, which stays accurate near +-I.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .abcd import half_trace

#: Rounding allowance of the discriminant, relative to the round trip's first-order
#: distance from +-I (see ``discriminant``): a few hundred units in the last place.
ROUNDING = 1e-13
#: A round trip on the boundary whose entries (B, C scaled by the cavity length) are this
#: close to +-I retraces every ray.
RETRACE_TOL = 1e-9

STABLE = "stable"
UNSTABLE = "unstable"
MARGINAL_RETRACE = "marginal-retrace"  # round trip = +-I: every ray retraces itself
MARGINAL_WALKOFF = "marginal-walkoff"  # |m| = 1 but not +-I: rays walk off

STATUS_LABEL = {
    STABLE: "STABLE",
    UNSTABLE: "UNSTABLE",
    MARGINAL_RETRACE: "MARGINAL (round trip +-I)",
    MARGINAL_WALKOFF: "MARGINAL, NOT STABLE (walk-off)",
}

STATUS_TEXT = {
    STABLE: "stable",
    UNSTABLE: "unstable: |m| > 1, rays diverge from the axis",
    MARGINAL_RETRACE: (
        "on the stability boundary with a round trip of +-I: every ray retraces itself "
        "(as in a symmetric confocal cavity); the mode shown is that of the repeating half"
    ),
    MARGINAL_WALKOFF: (
        "on the stability boundary (|m| = 1) but the round trip is not +-I: rays walk off, "
        "not stable"
    ),
}


def discriminant(matrix, length_scale=1.0):
    """(m^2 - 1, its rounding allowance) of round-trip matrices (..., 2, 2).

    With det = 1, m^2 - 1 = ((A - D)/2)^2 + B C.  Near +-I (a near-confocal cavity, L = R(1 +
    eps)) 1 - |m| is O(eps^2) while A - D, B and C are O(eps): taken from m, the margin
    drowns in the rounding of A + D once eps is below 1e-8; taken from the entries, each
    term is a product of two O(eps) numbers and keeps its relative accuracy down to eps of
    about 1e-15.  The allowance is ``ROUNDING`` times those first-order terms (B and C
    scaled by ``length_scale``), so the boundary band and the +-I test below agree: a round
    trip within the band is within about ``ROUNDING`` of +-I or on a walk-off edge.
    """
    matrix = np.asarray(matrix, dtype=float)
    scale = np.maximum(np.asarray(length_scale, dtype=float), 1e-30)
    a, b = matrix[..., 0, 0], matrix[..., 0, 1] / scale
    c, d = matrix[..., 1, 0] * scale, matrix[..., 1, 1]
    half_diff = (a - d) / 2.0
    disc = half_diff * half_diff + b * c
    allowance = ROUNDING * (np.abs(half_diff) + np.abs(b) + np.abs(c))
    return disc, allowance


def classify(matrix: np.ndarray, length_scale: float) -> str:
    """Stability class of one round-trip matrix; ``length_scale`` (mm) scales B and C.

    Stable when m^2 - 1 < 0 beyond its rounding allowance (|m| < 1 by any margin the
    numbers resolve), unstable when > 0; otherwise on the boundary, where a round trip of
    +-I retraces and any other walks off."""
    disc, allowance = (float(x) for x in discriminant(matrix, length_scale))
    return _classify(matrix, length_scale, disc, allowance)


def _classify(matrix: np.ndarray, length_scale: float, disc: float, allowance: float) -> str:
    """``classify`` given the discriminant and allowance it computes."""
    if disc < -allowance:
        return STABLE
    if disc > allowance:
        return UNSTABLE
    return MARGINAL_RETRACE if _retraces(matrix, length_scale) else MARGINAL_WALKOFF


def _retraces(matrix, length_scale):
    """Whether a round trip on the boundary is +-I (the sign of its half-trace) within
    RETRACE_TOL, B and C scaled by ``length_scale``: it then retraces, else it walks off.
    One matrix or a stack (K, 2, 2) with K length scales: ``classify`` and
    ``classify_many`` decide by this one test."""
    sign = np.where(half_trace(matrix) > 0, 1.0, -1.0)
    scale = np.maximum(length_scale, 1e-30)
    a, b = matrix[..., 0, 0], matrix[..., 0, 1]
    c, d = matrix[..., 1, 0], matrix[..., 1, 1]
    return ((np.abs(a - sign) < RETRACE_TOL) & (np.abs(d - sign) < RETRACE_TOL)
            & (np.abs(b) < RETRACE_TOL * scale) & (np.abs(c) * scale < RETRACE_TOL))


def classify_many(matrices, length_scales) -> list[str]:
    """``classify`` of each matrix of a stack (K, 2, 2), each with its own length scale,
    in a handful of array operations (the same comparisons on the same numbers)."""
    matrices = np.asarray(matrices, dtype=float)
    disc, allowance = discriminant(matrices, length_scales)
    near_identity = _retraces(matrices, np.asarray(length_scales, dtype=float))
    stable, unstable = (disc < -allowance).tolist(), (disc > allowance).tolist()
    return [STABLE if s else UNSTABLE if u else MARGINAL_RETRACE if n else MARGINAL_WALKOFF
            for s, u, n in zip(stable, unstable, near_identity.tolist())]


def is_stable(matrix, length_scale=1.0) -> np.ndarray:
    """Vectorised strict test (boundary cases count as not stable), as ``classify``."""
    disc, allowance = discriminant(matrix, length_scale)
    return disc < -allowance


def margin(matrix, length_scale=1.0):
    """1 - |m| from the discriminant: (1 - m^2) / (1 + |m|), accurate near +-I."""
    disc, _ = discriminant(matrix, length_scale)
    return -disc / (1.0 + np.abs(half_trace(matrix)))


def eigen_q(matrix, disc=None):
    """Self-reproducing q^ of a stable round trip (NaN where not stable or B = 0).
    ``disc``: ``discriminant(matrix)[0]`` where the caller has it."""
    a = matrix[..., 0, 0]
    b = matrix[..., 0, 1]
    d = matrix[..., 1, 1]
    if disc is None:
        disc, _ = discriminant(matrix)
    with np.errstate(invalid="ignore", divide="ignore"):
        root = np.sqrt(-disc)
        inv_q = (d - a) / (2.0 * b) - 1j * root / np.abs(b)
        q = 1.0 / inv_q
    ok = (disc < 0) & (b != 0)
    return np.where(ok, q, np.nan + 1j * np.nan)


def gouy_round_trip(matrix, disc=None):
    """Round-trip Gouy phase in radians with the branch chosen by the sign of B;
    arccos(m) as atan2(sqrt(1 - m^2), m), so that it stays accurate near m = +-1.
    ``disc``: ``discriminant(matrix)[0]`` where the caller has it."""
    m = half_trace(matrix)
    b = matrix[..., 0, 1]
    if disc is None:
        disc, _ = discriminant(matrix)
    base = np.arctan2(np.sqrt(np.maximum(-disc, 0.0)), m)
    return np.where(b < 0, 2.0 * np.pi - base, base)


@dataclass(frozen=True)
class PlaneMode:
    """Result for one plane: status, half-trace, q^ at the reference plane, Gouy (rad),
    and 1 - |m| computed from the discriminant (resolved where m itself rounds to +-1)."""

    status: str
    m: float
    q: complex | None
    gouy: float | None
    margin: float | None = None

    @property
    def stable(self) -> bool:
        return self.status in (STABLE, MARGINAL_RETRACE)


def solve_plane(round_trip: np.ndarray, length_scale: float, halves=()) -> PlaneMode:
    """Mode of one plane.  ``halves`` are (H1, H2) pairs with H2 @ H1 = round trip; on a
    +-I boundary the first stable half whose eigenmode exists gives the mode."""
    disc, allowance = discriminant(round_trip, length_scale)
    status = _classify(round_trip, length_scale, float(disc), float(allowance))
    m = float(half_trace(round_trip))
    edge = float(-disc / (1.0 + np.abs(half_trace(round_trip))))     # margin(round_trip, length_scale)
    if status == STABLE:
        plain, _ = discriminant(round_trip)
        return PlaneMode(status, m, complex(eigen_q(round_trip, plain)), float(gouy_round_trip(round_trip, plain)),
                         edge)
    if status == MARGINAL_RETRACE:
        for h1, h2 in halves:
            if classify(h1, length_scale) == STABLE and classify(h2, length_scale) == STABLE:
                q = complex(eigen_q(h1))
                gouy = float(gouy_round_trip(h1) + gouy_round_trip(h2))
                return PlaneMode(status, m, q, gouy, 0.0)
        return PlaneMode(status, m, None, None, 0.0)
    return PlaneMode(status, m, None, None, edge)
