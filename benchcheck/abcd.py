"""Reduced ray-transfer (ABCD) matrices, built from parameters with numpy broadcasting.

Every builder takes scalars or arrays and returns an array of shape ``(..., 2, 2)``: the
same code serves one bench or a million perturbed copies of it (tolerancing), so nothing
here is a one-off scalar object.  The ray vector is (y, n*theta): every matrix has
determinant 1 (Siegman, "Lasers" 1986, ch. 15, reduced slope; from memory).

Lengths are millimetres, angles radians.  Positive ``roc`` is concave (focusing), the
convention of Kogelnik & Li 1966.  The tangential plane is the table plane, which holds
every fold.
"""

from __future__ import annotations

import math

import numpy as np

TANGENTIAL = "t"
SAGITTAL = "s"
PLANES = (TANGENTIAL, SAGITTAL)


def _scalar(x) -> bool:
    return isinstance(x, (float, int)) or (type(x) is np.ndarray and x.ndim == 0)


def _mat(a, b, c, d) -> np.ndarray:
    if _scalar(a) and _scalar(b) and _scalar(c) and _scalar(d):
        # one bench: a plain 2x2 (the same numbers; broadcasting costs more than the work)
        return np.array(((a, b), (c, d)), dtype=float)
    a, b, c, d = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (a, b, c, d)))
    out = np.empty(a.shape + (2, 2))
    out[..., 0, 0] = a
    out[..., 0, 1] = b
    out[..., 1, 0] = c
    out[..., 1, 1] = d
    return out


def _inverse(x):
    """1/x, and 0 where x is infinite (a flat face, no lens).  One finite, non-zero value
    takes plain float division (correctly rounded, as numpy's), without the array
    machinery and error-state switching that cost more than the work."""
    if _scalar(x):
        v = float(x)
        if math.isinf(v):
            return 0.0
        if v != 0.0:
            return 1.0 / v
    x = np.asarray(x, dtype=float)
    with np.errstate(divide="ignore"):
        return np.where(np.isinf(x), 0.0, 1.0 / x)


def identity(shape=()) -> np.ndarray:
    return _mat(np.ones(shape), 0.0, 0.0, 1.0)


def free_space(length, index=1.0) -> np.ndarray:
    """Propagation over ``length`` in a medium of ``index``: B = L/n."""
    length = np.asarray(length, dtype=float)
    return _mat(1.0, length / np.asarray(index, dtype=float), 0.0, 1.0)


def thin_lens(focal_length) -> np.ndarray:
    """Thin lens, C = -1/f (f > 0 converging).  ``inf`` gives the identity."""
    return _mat(1.0, 0.0, -np.asarray(_inverse(focal_length), dtype=float), 1.0)


def lens_power(power) -> np.ndarray:
    """Thin lens given by its power 1/f (1/mm); zero power is the identity."""
    return _mat(1.0, 0.0, -np.asarray(power, dtype=float), 1.0)


def mirror_focal_length(roc, aoi, plane: str):
    """Effective focal length of a spherical mirror met at angle of incidence ``aoi``.

    f_t = (R/2) cos(aoi), f_s = (R/2) / cos(aoi): Kogelnik, Ippen, Dienes & Shank,
    IEEE JQE 8, 373 (1972) (from memory; also the Coddington equations).
    """
    roc = np.asarray(roc, dtype=float)
    cos = np.cos(np.asarray(aoi, dtype=float))
    return roc / 2.0 * cos if plane == TANGENTIAL else roc / 2.0 / cos


def mirror(roc, aoi=0.0, plane: str = TANGENTIAL) -> np.ndarray:
    """Curved mirror in the unfolded path; ``roc = inf`` is a flat mirror (identity)."""
    cos = np.cos(np.asarray(aoi, dtype=float))
    inv_r = _inverse(roc)
    power = 2.0 * inv_r / cos if plane == TANGENTIAL else 2.0 * inv_r * cos
    return _mat(1.0, 0.0, -power, 1.0)


def refraction_angle(aoi, n1, n2):
    """Snell's law; returns the angle inside the second medium (radians)."""
    s = np.asarray(n1, dtype=float) * np.sin(np.asarray(aoi, dtype=float)) / np.asarray(n2, dtype=float)
    return np.arcsin(np.clip(s, -1.0, 1.0))


def interface(n1, n2, aoi=0.0, roc=np.inf, plane: str = TANGENTIAL) -> np.ndarray:
    """A refracting surface, possibly tilted and curved, in reduced form.

    ``roc`` > 0 when the centre of curvature lies after the surface (in the direction of
    travel).  Sagittal: C = -(n2 cos t2 - n1 cos t1)/R; tangential additionally scales the
    ray height by cos t2 / cos t1 and divides the power by cos t1 cos t2 (the Coddington
    equations, e.g. Smith, "Modern Optical Engineering"; Kogelnik et al. 1972, from memory).
    At normal incidence both reduce to C = -(n2 - n1)/R.
    """
    n1 = np.asarray(n1, dtype=float)
    n2 = np.asarray(n2, dtype=float)
    t1 = np.asarray(aoi, dtype=float)
    t2 = refraction_angle(t1, n1, n2)
    c1, c2 = np.cos(t1), np.cos(t2)
    inv_r = _inverse(roc)
    power = (n2 * c2 - n1 * c1) * inv_r
    if plane == TANGENTIAL:
        return _mat(c2 / c1, 0.0, -power / (c1 * c2), c1 / c2)
    return _mat(1.0, 0.0, -power, 1.0)


def brewster_angle(index):
    """Angle of incidence (radians) at which tan(aoi) = n, from air."""
    return np.arctan(np.asarray(index, dtype=float))


def plate_reduced_lengths(thickness, index, aoi):
    """Reduced (air-equivalent) lengths (d_t, d_s) of a tilted plane-parallel plate.

    d_s = t/(n cos t2), d_t = t cos^2 t1/(n cos^3 t2); Kogelnik et al. 1972 (from
    memory), checked against the exact plate astigmatism in Smith, "Modern Optical
    Engineering".
    """
    t = np.asarray(thickness, dtype=float)
    n = np.asarray(index, dtype=float)
    t1 = np.asarray(aoi, dtype=float)
    t2 = refraction_angle(t1, 1.0, n)
    d_s = t / (n * np.cos(t2))
    d_t = t * np.cos(t1) ** 2 / (n * np.cos(t2) ** 3)
    return d_t, d_s


def compose(matrices) -> np.ndarray:
    """Product of matrices listed in the order the light meets them (right to left)."""
    total = None
    for m in matrices:
        total = m if total is None else np.matmul(m, total)
    return identity() if total is None else total


def half_trace(m: np.ndarray) -> np.ndarray:
    return (m[..., 0, 0] + m[..., 1, 1]) / 2.0
