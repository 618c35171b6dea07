"""The proven range of a polynomial over a box (benchcheck.bernstein) against dense
sampling of the same polynomial written in monomials, evaluated here with numpy."""

from __future__ import annotations

import itertools

import numpy as np
import pytest

from benchcheck import bernstein


def monomial(coef: np.ndarray, t: np.ndarray) -> np.ndarray:
    """sum c[i, j, ...] t0^i t1^j ... for rows of points t (K, n)."""
    out = np.zeros(len(t))
    for idx in itertools.product(*(range(s) for s in coef.shape)):
        out += coef[idx] * np.prod([t[:, a] ** idx[a] for a in range(len(idx))], axis=0)
    return out


@pytest.mark.parametrize("seed", range(6))
@pytest.mark.parametrize("degrees", [(2,), (1, 1), (2, 2), (2, 1, 2), (1, 1, 1, 1)])
def test_range_bounds_every_sample_and_is_reached(seed, degrees):
    rng = np.random.default_rng(seed)
    coef = rng.normal(size=tuple(d + 1 for d in degrees))
    values = monomial(coef, bernstein.nodes(degrees))
    low, high = bernstein.value_range(bernstein.coefficients(values, degrees))
    n = len(degrees)
    axis = np.linspace(0.0, 1.0, 41 if n <= 2 else 11)
    grid = np.array(list(itertools.product(*([axis] * n))))
    samples = np.concatenate([grid, rng.uniform(0.0, 1.0, (50_000, n))])
    v = monomial(coef, samples)
    # proven: nothing sampled lies beyond the bounds
    assert high.bound >= v.max() - 1e-12 and low.bound <= v.min() + 1e-12
    # reached: the values are the polynomial's at the points returned, and no worse than sampling
    assert monomial(coef, high.point[None])[0] == pytest.approx(high.value, abs=1e-12)
    assert monomial(coef, low.point[None])[0] == pytest.approx(low.value, abs=1e-12)
    assert high.value >= v.max() - 1e-12 and low.value <= v.min() + 1e-12
    assert high.bound - high.value <= 1e-9 and low.value - low.bound <= 1e-9
