"""Eigenmodes, stability and Gouy phase of a round-trip ABCD matrix.

Kept apart from everything that knows about optics or files: it takes round-trip
matrices (arrays of shape (..., 2, 2)) and returns numbers, so the solver and later a
tolerancing run over many perturbed benches use the same code.

References: stability |m| < 1 with m = (A+D)/2 and the eigenmode
1/q^ = (D-A)/(2B) - i sqrt(1-m^2)/|B| (Kogelnik & Li 1966; Siegman, "Lasers", ch. 21,
from memory); round-trip Gouy phase arccos(m) for B > 0 and 2*pi - arccos(m) for B < 0
(the sign of B is the same at every reference plane: Courant-Snyder form B = beta sin
theta with beta > 0).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .abcd import half_trace

#: |m| within this of 1 is "on the boundary"; so are matrix entries this close to +-I.
BOUNDARY_TOL = 1e-9

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


def classify(matrix: np.ndarray, length_scale: float) -> str:
    """Stability class of one round-trip matrix; ``length_scale`` (mm) sets the B, C tolerance."""
    m = float(half_trace(matrix))
    if abs(abs(m) - 1.0) > BOUNDARY_TOL:
        return STABLE if abs(m) < 1.0 else UNSTABLE
    sign = 1.0 if m > 0 else -1.0
    scale = max(length_scale, 1e-30)
    a, b = matrix[0, 0], matrix[0, 1]
    c, d = matrix[1, 0], matrix[1, 1]
    near_identity = (
        abs(a - sign) < 1e-7
        and abs(d - sign) < 1e-7
        and abs(b) < 1e-7 * scale
        and abs(c) * scale < 1e-7
    )
    return MARGINAL_RETRACE if near_identity else MARGINAL_WALKOFF


def is_stable(matrix) -> np.ndarray:
    """Vectorised strict test |m| < 1 (boundary cases count as not stable)."""
    return np.abs(half_trace(matrix)) < 1.0 - BOUNDARY_TOL


def eigen_q(matrix):
    """Self-reproducing q^ of a stable round trip (NaN where |m| >= 1 or B = 0)."""
    m = half_trace(matrix)
    a = matrix[..., 0, 0]
    b = matrix[..., 0, 1]
    d = matrix[..., 1, 1]
    with np.errstate(invalid="ignore", divide="ignore"):
        root = np.sqrt(1.0 - m**2)
        inv_q = (d - a) / (2.0 * b) - 1j * root / np.abs(b)
        q = 1.0 / inv_q
    ok = (np.abs(m) < 1.0) & (b != 0)
    return np.where(ok, q, np.nan + 1j * np.nan)


def gouy_round_trip(matrix):
    """Round-trip Gouy phase in radians with the branch chosen by the sign of B."""
    m = np.clip(half_trace(matrix), -1.0, 1.0)
    b = matrix[..., 0, 1]
    base = np.arccos(m)
    return np.where(b < 0, 2.0 * np.pi - base, base)


@dataclass(frozen=True)
class PlaneMode:
    """Result for one plane: status, half-trace, q^ at the reference plane, Gouy (rad)."""

    status: str
    m: float
    q: complex | None
    gouy: float | None

    @property
    def stable(self) -> bool:
        return self.status in (STABLE, MARGINAL_RETRACE)


def solve_plane(round_trip: np.ndarray, length_scale: float, halves=()) -> PlaneMode:
    """Mode of one plane.  ``halves`` are (H1, H2) pairs with H2 @ H1 = round trip; on a
    +-I boundary the first stable half whose eigenmode exists gives the mode."""
    status = classify(round_trip, length_scale)
    m = float(half_trace(round_trip))
    if status == STABLE:
        return PlaneMode(status, m, complex(eigen_q(round_trip)), float(gouy_round_trip(round_trip)))
    if status == MARGINAL_RETRACE:
        for h1, h2 in halves:
            if classify(h1, length_scale) == STABLE and classify(h2, length_scale) == STABLE:
                q = complex(eigen_q(h1))
                gouy = float(gouy_round_trip(h1) + gouy_round_trip(h2))
                return PlaneMode(status, m, q, gouy)
        return PlaneMode(status, m, None, None)
    return PlaneMode(status, m, None, None)
