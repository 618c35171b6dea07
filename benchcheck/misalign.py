"""3x3 ray-transfer matrices that carry misalignment, and the axis of a misaligned cavity.

A ray is (y, v, 1) with v the reduced slope of ``abcd``; an element is

    [[A, B, E],
     [C, D, F],
     [0, 0, 1]]

where (E, F) is the offset and the kick the element adds to every ray when it is
misaligned (Siegman, "Lasers" 1986, ch. 15 and 19, from memory).  A mirror tilted by a
small angle t deflects the reflected beam by 2t in the plane of the tilt: F = 2t in the
tangential plane for a tilt in the plane of incidence; a tilt about the in-plane axis
deflects it out of the plane by 2t cos(aoi) (sagittal).

The axis of a misaligned stable cavity is the ray that a round trip maps onto itself:
with the round trip [[M, e], [0, 1]], (I - M) x = e, solvable whenever m != 1.  Every
function broadcasts over leading axes, like ``abcd``.
"""

from __future__ import annotations

import numpy as np

from .abcd import TANGENTIAL


def augment(matrix, offset=0.0, kick=0.0) -> np.ndarray:
    """The 3x3 form of a 2x2 reduced matrix (..., 2, 2) with offset E (mm) and kick F."""
    matrix = np.asarray(matrix, dtype=float)
    offset, kick = np.broadcast_arrays(np.asarray(offset, dtype=float), np.asarray(kick, dtype=float))
    shape = np.broadcast_shapes(matrix.shape[:-2], offset.shape)
    out = np.zeros(shape + (3, 3))
    out[..., :2, :2] = matrix
    out[..., 0, 2] = offset
    out[..., 1, 2] = kick
    out[..., 2, 2] = 1.0
    return out


def mirror_tilt_kick(tilt, aoi, plane: str):
    """Slope change (reduced, in air) of the beam reflected by a mirror tilted by ``tilt``
    radians, at angle of incidence ``aoi``: 2 tilt in the tangential plane, 2 tilt cos(aoi)
    in the sagittal plane (the law of reflection, to first order in the tilt)."""
    tilt = np.asarray(tilt, dtype=float)
    return 2.0 * tilt if plane == TANGENTIAL else 2.0 * tilt * np.cos(np.asarray(aoi, dtype=float))


def plate_tilt_offset(thickness, index, aoi):
    """Sideways shift (mm per radian of tilt) of a ray leaving a plane-parallel element of
    ``thickness`` turned about an axis across the plane of incidence, at incidence ``aoi``:
    the derivative of the plate's displacement d = t (sin a - cos a tan a') with Snell's law
    (da'/da = cos a / (n cos a')); t (1 - 1/n) at normal incidence.  The ray's direction does
    not change."""
    t = np.asarray(thickness, dtype=float)
    n = np.asarray(index, dtype=float)
    a = np.asarray(aoi, dtype=float)
    a2 = np.arcsin(np.sin(a) / n)
    da2 = np.cos(a) / (n * np.cos(a2))
    return t * (np.cos(a) + np.sin(a) * np.tan(a2) - np.cos(a) / np.cos(a2) ** 2 * da2)


def kick(amount, offset=0.0) -> np.ndarray:
    """A thin misalignment of zero length: the slope changes by ``amount``, the height by
    ``offset``."""
    return augment(np.eye(2), offset, amount)


def axis_ray(round_trip3) -> np.ndarray:
    """(y, v) of the ray that the 3x3 round trip reproduces; NaN where m = 1 (no unique axis)."""
    rt = np.asarray(round_trip3, dtype=float)
    a = np.eye(2) - rt[..., :2, :2]
    e = rt[..., :2, 2]
    det = a[..., 0, 0] * a[..., 1, 1] - a[..., 0, 1] * a[..., 1, 0]
    with np.errstate(divide="ignore", invalid="ignore"):
        y = (a[..., 1, 1] * e[..., 0] - a[..., 0, 1] * e[..., 1]) / det
        v = (a[..., 0, 0] * e[..., 1] - a[..., 1, 0] * e[..., 0]) / det
    bad = np.abs(det) < 1e-12
    return np.stack([np.where(bad, np.nan, y), np.where(bad, np.nan, v)], axis=-1)


def apply(matrix3, ray) -> np.ndarray:
    """A 3x3 matrix applied to rays (y, v)."""
    m = np.asarray(matrix3, dtype=float)
    ray = np.asarray(ray, dtype=float)
    y = m[..., 0, 0] * ray[..., 0] + m[..., 0, 1] * ray[..., 1] + m[..., 0, 2]
    v = m[..., 1, 0] * ray[..., 0] + m[..., 1, 1] * ray[..., 1] + m[..., 1, 2]
    return np.stack([y, v], axis=-1)
