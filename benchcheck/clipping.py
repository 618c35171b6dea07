"""Power a Gaussian beam loses at a hard aperture or edge: numerics only.

A centred elliptical Gaussian beam (1/e^2 intensity radii ``w_x``, ``w_y``) meets a
centred elliptical aperture (semi-axes ``a_x``, ``a_y``) whose axes are the beam's own.
That is the case of every optic on the bench: folds lie in the table plane, so the
tangential and sagittal axes of the beam are those of a tilted round aperture too.

The transmitted fraction is the integral of the normalised intensity over the ellipse:
a Gaussian line profile across y times the erf of the chord it leaves open in x,

    T = int_{-a_y}^{a_y} sqrt(2/pi)/w_y exp(-2 y^2/w_y^2) erf(sqrt2 a_x sqrt(1 - y^2/a_y^2) / w_x) dy

(the centred-circle result of Siegman, "Lasers" 1986, ch. 17, from memory, written for an
elliptical beam and generalised here to an elliptical aperture).  Losses that matter are
small (1e-3 and below), and 1 - T loses their digits to cancellation, so this module
integrates the loss itself: the Gaussian tail beyond |y| = a_y plus the erfc of the chord,

    L = erfc(sqrt2 a_y/w_y) + int_{-a_y}^{a_y} sqrt(2/pi)/w_y exp(-2 y^2/w_y^2) erfc(...) dy,

which keeps its relative precision (about 1e-13) for every loss above about 1e-65; a
smaller loss is returned to within that absolute amount.

Nothing here knows of layouts, optics or rules: radii and semi-axes in any one length
unit, fractions out.
"""

from __future__ import annotations

import functools
import math

import numpy as np

def _erfc(x) -> np.ndarray:
    """erfc on numpy arrays, from the standard library's correctly rounded scalar version,
    element by element (the quadrature needs about a hundred values per aperture; a plain
    map over a list costs a third of ``np.vectorize``'s per-element overhead)."""
    x = np.asarray(x, dtype=float)
    return np.fromiter(map(math.erfc, x.ravel().tolist()), float, x.size).reshape(x.shape)

#: Beyond K normalised radii (a/w = K) a Gaussian factor is below exp(-2 K^2) = 6e-71:
#: the quadrature window is cut there, so a narrow feature of the integrand (a large
#: aperture in one axis) always fills the window instead of falling between nodes.
_CUT = 9.0

#: Gauss-Legendre nodes per window.  Inside the window the integrand varies on the scale
#: of the window itself (at most _CUT Gaussian widths across it); 128 nodes give the loss
#: to about 1e-13 relative for a/w from 0.05 to 1000 in either axis (the tests compare
#: with scipy's adaptive quad and dblquad).
_NODES = 128


@functools.cache
def _gauss_legendre() -> tuple[np.ndarray, np.ndarray]:
    """Nodes and weights, computed on first use: an eigenvalue problem of _NODES rows that
    a check whose beams clear every aperture never needs (it cost ~20 ms at import)."""
    from numpy.polynomial.legendre import leggauss

    return leggauss(_NODES)


def round_transmission(w, a):
    """Fraction of a round Gaussian beam (1/e^2 radius ``w``) passed by a centred circular
    aperture of radius ``a``: T = 1 - exp(-2 a^2 / w^2) (Siegman, "Lasers" 1986, ch. 17,
    from memory).  Broadcasts over arrays."""
    return -np.expm1(-2.0 * np.square(np.asarray(a, dtype=float) / np.asarray(w, dtype=float)))


def round_loss(w, a):
    """The fraction the same aperture stops, exp(-2 a^2 / w^2), without cancellation."""
    return np.exp(-2.0 * np.square(np.asarray(a, dtype=float) / np.asarray(w, dtype=float)))


def edge_clip_fraction(clearance, w):
    """Fraction of a Gaussian beam (1/e^2 radius ``w`` across the edge) cut off by a
    straight opaque edge at ``clearance`` from the beam axis: 1/2 erfc(sqrt2 delta / w).

    The beam's profile across a straight edge is the 1-D Gaussian sqrt(2/pi)/w
    exp(-2 x^2/w^2), whatever its size along the edge; a negative clearance (the edge past
    the axis) cuts more than half.  Broadcasts over arrays; two plain numbers give a float
    (the same arithmetic, without numpy's per-call cost)."""
    if isinstance(clearance, float) and isinstance(w, float) and w != 0.0:
        return 0.5 * math.erfc(math.sqrt(2.0) * clearance / w)
    x = math.sqrt(2.0) * np.asarray(clearance, dtype=float) / np.asarray(w, dtype=float)
    return 0.5 * _erfc(x)


def elliptical_loss(w_x: float, w_y: float, a_x: float, a_y: float) -> float:
    """Fraction of a centred elliptical Gaussian beam stopped by a centred elliptical
    aperture with the same axes (semi-axes ``a_x``, ``a_y``; radii ``w_x``, ``w_y``).

    Gauss-Legendre quadrature of the loss integral in the module docstring, after the
    substitution y = a_y sin(phi): the chord sqrt(1 - y^2/a_y^2) becomes cos(phi) and the
    square-root behaviour at |y| = a_y, which slows any polynomial rule, disappears.  In
    normalised radii rho = a/w the integrand is

        2 sqrt(2/pi) rho_y cos(phi) exp(-2 rho_y^2 sin^2 phi) erfc(sqrt2 rho_x cos phi)

    on 0 <= phi <= pi/2 (it is even in phi).  Its first factor is negligible beyond
    sin(phi) = K/rho_y and its erfc below cos(phi) = K/rho_x; the nodes are put only in
    the window between, where the integrand is smooth on the window's own scale.
    """
    for name, v in (("w_x", w_x), ("w_y", w_y), ("a_x", a_x), ("a_y", a_y)):
        if not v >= 0.0:   # also rejects NaN
            raise ValueError(f"{name} must be >= 0, got {v!r}")
    if a_x == 0.0 or a_y == 0.0:
        return 1.0
    if w_x == 0.0 or w_y == 0.0:
        return 0.0          # a beam of no extent passes any open aperture whole
    rho_x, rho_y = a_x / w_x, a_y / w_y
    if math.isinf(rho_y):
        return 0.0 if math.isinf(rho_x) else float(_erfc(math.sqrt(2.0) * rho_x))
    tail = math.erfc(math.sqrt(2.0) * rho_y)
    hi = math.asin(_CUT / rho_y) if rho_y > _CUT else 0.5 * math.pi
    lo = math.acos(_CUT / rho_x) if rho_x > _CUT else 0.0
    if lo >= hi:
        # the two Gaussian factors are never both above exp(-2 K^2) at once
        return tail
    half = 0.5 * (hi - lo)
    nodes, weights = _gauss_legendre()
    phi = lo + half * (nodes + 1.0)
    c, s = np.cos(phi), np.sin(phi)
    f = c * np.exp(-2.0 * (rho_y * s) ** 2) * _erfc(math.sqrt(2.0) * rho_x * c)
    body = 2.0 * math.sqrt(2.0 / math.pi) * rho_y * half * float(np.dot(weights, f))
    return min(1.0, tail + body)


def elliptical_transmission(w_x: float, w_y: float, a_x: float, a_y: float) -> float:
    """Fraction passed: 1 - ``elliptical_loss`` (see there)."""
    return 1.0 - elliptical_loss(w_x, w_y, a_x, a_y)


def diameter_for_loss(w_x: float, w_y: float, loss: float,
                      squeeze_x: float = 1.0, squeeze_y: float = 1.0, rel_tol: float = 1e-9) -> float:
    """Smallest diameter D of a round aperture, seen by the beam as an ellipse of
    semi-axes (D/2) squeeze_x and (D/2) squeeze_y (a tilt shrinks one axis by cos aoi),
    that stops at most ``loss`` of the beam.

    The loss falls monotonically with D, and is bracketed by the round results for the
    circles inscribed in and circumscribing the aperture in normalised coordinates
    (x/w_x, y/w_y), exp(-2 rho_max^2) <= L <= exp(-2 rho_min^2); bisection in log D then
    converges without any starting guess."""
    if not 0.0 < loss < 1.0:
        raise ValueError(f"loss must lie strictly between 0 and 1, got {loss!r}")
    if not (w_x > 0.0 and w_y > 0.0 and squeeze_x > 0.0 and squeeze_y > 0.0):
        raise ValueError("beam radii and squeeze factors must be > 0")
    rho_needed = math.sqrt(0.5 * math.log(1.0 / loss))
    per_d = (0.5 * squeeze_x / w_x, 0.5 * squeeze_y / w_y)      # rho per mm of diameter
    d_lo, d_hi = rho_needed / max(per_d), rho_needed / min(per_d)
    if d_hi <= d_lo * (1.0 + rel_tol):
        return d_hi
    lo, hi = math.log(d_lo), math.log(d_hi)
    while hi - lo > rel_tol:
        mid = 0.5 * (lo + hi)
        d = math.exp(mid)
        if elliptical_loss(w_x, w_y, 0.5 * d * squeeze_x, 0.5 * d * squeeze_y) > loss:
            lo = mid
        else:
            hi = mid
    return math.exp(hi)
