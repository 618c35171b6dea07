"""The range of a polynomial over a box, with a guaranteed bound (Bernstein form).

Used for a cavity's half-trace over its thermal-lens ranges: m is a polynomial in the lens
powers, of degree at most the number of times each lens is passed in a round trip (two in
a linear cavity, one in a ring).  A polynomial written in the Bernstein basis of a box lies
between its smallest and largest coefficient there, and its corner coefficients are its
values at the corners (the convex-hull property; Farouki & Rajan, Computer Aided Geometric
Design 4, 191 (1987), from memory).  Halving the box (de Casteljau) tightens the bound
quadratically, so a branch-and-bound search finds the maximum to a set tolerance and proves
that nothing in the box lies above the bound it returns, for any number of variables.

Numerics only: the caller supplies the polynomial's values at a grid of nodes.
"""

from __future__ import annotations

from dataclasses import dataclass
from math import comb

import numpy as np

#: Stop refining once the bound is within this of the best value found.
TOLERANCE = 1e-12
#: Coefficients kept per refinement level (boxes x coefficients per box).
BUDGET = 100_000
MAX_LEVELS = 400


def nodes(degrees) -> np.ndarray:
    """Grid points (K, n) of the unit box at which to evaluate the polynomial: d + 1
    equally spaced values per axis of degree d, C order (last axis fastest)."""
    axes = [np.linspace(0.0, 1.0, d + 1) if d else np.zeros(1) for d in degrees]
    grid = np.meshgrid(*axes, indexing="ij")
    return np.stack([g.ravel() for g in grid], axis=-1) if axes else np.zeros((1, 0))


def coefficients(values, degrees) -> np.ndarray:
    """Bernstein coefficients (d1+1, ..., dn+1) on the unit box from values at ``nodes``."""
    coef = np.asarray(values, dtype=float).reshape(tuple(d + 1 for d in degrees))
    for axis, d in enumerate(degrees):
        t = np.linspace(0.0, 1.0, d + 1) if d else np.zeros(1)
        k = np.arange(d + 1)
        basis = np.array([[comb(d, j) * ti**j * (1 - ti) ** (d - j) for j in k] for ti in t])
        coef = np.moveaxis(np.tensordot(np.linalg.inv(basis), coef, axes=([1], [axis])), 0, axis)
    return coef


def _split(coef: np.ndarray, axis: int):
    """de Casteljau at the middle of ``axis`` (an axis of the per-box coefficient block;
    boxes are along axis 0): the coefficients of the lower and upper halves."""
    b = np.moveaxis(coef, axis, -1)
    d = b.shape[-1] - 1
    rows = [b]
    for _ in range(d):
        prev = rows[-1]
        rows.append((prev[..., :-1] + prev[..., 1:]) / 2.0)
    lower = np.stack([r[..., 0] for r in rows], axis=-1)
    upper = np.stack([rows[d - j][..., j] for j in range(d + 1)], axis=-1)
    return np.moveaxis(lower, -1, axis), np.moveaxis(upper, -1, axis)


@dataclass(frozen=True)
class Maximum:
    value: float               # the largest value found (at a corner of some sub-box)
    point: np.ndarray          # where, in unit-box coordinates (n,)
    bound: float               # nothing in the box exceeds this (up to rounding)


def maximum(coef: np.ndarray, tolerance: float = TOLERANCE) -> Maximum:
    """Maximum of the polynomial with Bernstein coefficients ``coef`` over the unit box."""
    n = coef.ndim
    if n == 0:
        return Maximum(float(coef), np.zeros(0), float(coef))
    corner_index = [np.array([0, s - 1]) if s > 1 else np.array([0]) for s in coef.shape]
    boxes = coef[None, ...]
    lows = np.zeros((1, n))
    width = np.ones(n)
    best, best_point = -np.inf, np.zeros(n)
    bound = -np.inf                 # largest upper bound of the boxes dropped so far
    splittable = [a for a in range(n) if coef.shape[a] > 1]
    level = 0
    while len(boxes):
        corners = boxes[(slice(None),) + np.ix_(*corner_index)].reshape(len(boxes), -1)
        k = np.unravel_index(np.argmax(corners), corners.shape)
        if corners[k] > best:
            best = float(corners[k])
            pick = np.unravel_index(k[1], tuple(len(c) for c in corner_index))
            best_point = lows[k[0]] + np.array([corner_index[a][pick[a]] > 0 for a in range(n)]) * width
        upper = boxes.reshape(len(boxes), -1).max(axis=1)
        keep = upper > best + tolerance
        bound = max(bound, float(upper[~keep].max()) if np.any(~keep) else -np.inf)
        boxes, lows, upper = boxes[keep], lows[keep], upper[keep]
        if not len(boxes) or not splittable:
            break
        level += 1
        per_box = boxes[0].size
        limit = max(1, BUDGET // (2 * per_box))
        if level > MAX_LEVELS:
            bound = max(bound, float(upper.max()))
            break
        if len(boxes) > limit:
            order = np.argsort(upper)[::-1]
            bound = max(bound, float(upper[order[limit:]].max()))
            boxes, lows = boxes[order[:limit]], lows[order[:limit]]
        axis = splittable[level % len(splittable)]
        lower_half, upper_half = _split(boxes, axis + 1)
        width = width.copy()
        width[axis] /= 2.0
        shifted = lows.copy()
        shifted[:, axis] += width[axis]
        boxes = np.concatenate([lower_half, upper_half])
        lows = np.concatenate([lows, shifted])
    return Maximum(best, best_point, max(bound, best))


def value_range(coef: np.ndarray, tolerance: float = TOLERANCE) -> tuple[Maximum, Maximum]:
    """(minimum, maximum) of the polynomial over the unit box; the minimum's ``value`` and
    ``bound`` are given with their sign restored (the bound is then a lower bound)."""
    low = maximum(-coef, tolerance)
    return Maximum(-low.value, low.point, -low.bound), maximum(coef, tolerance)
