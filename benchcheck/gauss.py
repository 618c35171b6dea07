"""Gaussian beams as the reduced complex beam parameter q^ = q/n.

1/q^ = n/R - i*lambda0*M^2/(pi*w^2) (docs/design.md §4; Kogelnik & Li 1966 with Siegman's
reduced slope), so the ABCD law q2 = (A q1 + B)/(C q1 + D) holds with the reduced
matrices of ``abcd`` and the radius needs only the vacuum wavelength.  An M^2 beam is
the embedded Gaussian: it propagates as a Gaussian of wavelength M^2 * lambda0.

All functions broadcast over numpy arrays.  Lengths in mm, wavelengths in mm too (the
callers convert from nm once).
"""

from __future__ import annotations

import numpy as np


def q_at_distance_from_waist(w0, z, wavelength, m2=1.0, index=1.0):
    """q^ at distance ``z`` past a waist of radius ``w0`` in a medium of ``index``."""
    w0 = np.asarray(w0, dtype=float)
    rayleigh = np.pi * np.asarray(index, dtype=float) * w0**2 / (np.asarray(m2, dtype=float) * wavelength)
    return (np.asarray(z, dtype=float) + 1j * rayleigh) / np.asarray(index, dtype=float)


def rayleigh_range(w0, wavelength, m2=1.0, index=1.0):
    """z_R = pi n w0^2 / (M^2 lambda0) (Kogelnik & Li 1966; Siegman ch. 17)."""
    return np.pi * index * np.asarray(w0, dtype=float) ** 2 / (m2 * wavelength)


def radius(q, wavelength, m2=1.0):
    """1/e^2 intensity radius from q^: w^2 = -lambda0 M^2 / (pi Im(1/q^))."""
    inv = 1.0 / np.asarray(q, dtype=complex)
    return np.sqrt(-np.asarray(m2, dtype=float) * wavelength / (np.pi * inv.imag))


def propagate(matrix, q):
    """The ABCD law, q2 = (A q + B) / (C q + D), over arrays of matrices and q."""
    a = matrix[..., 0, 0]
    b = matrix[..., 0, 1]
    c = matrix[..., 1, 0]
    d = matrix[..., 1, 1]
    return (a * q + b) / (c * q + d)


def waist_offset(q):
    """Reduced distance to the waist ahead (positive: the waist is still to come)."""
    return -np.asarray(q, dtype=complex).real


def overlap_1d(q1, q2, wavelength, tilt=0.0):
    """Power coupling between two M^2 = 1 Gaussian beams in one transverse axis.

    With u_j = exp(-a_j x^2), a_j = i pi / (lambda0 q^_j) (so Re a = 1/w^2), and beam 2
    tilted by ``tilt`` radians (a phase exp(i k tilt x)), the Gaussian integral gives
    |<u1|u2>|^2 / (<u1|u1><u2|u2>) = 2 sqrt(Re a1 Re a2) / |A| * exp(-k^2 tilt^2 Re(1/A) / 2)
    with A = conj(a1) + a2 and k = 2 pi / lambda0 (Kogelnik, "Coupling and conversion
    coefficients for optical modes", 1964, from memory; the integral is elementary).  The
    product over both axes is the mode-matching efficiency.
    """
    a1 = 1j * np.pi / (wavelength * np.asarray(q1, dtype=complex))
    a2 = 1j * np.pi / (wavelength * np.asarray(q2, dtype=complex))
    big_a = np.conj(a1) + a2
    k = 2.0 * np.pi / wavelength
    tilt = np.asarray(tilt, dtype=float)
    return 2.0 * np.sqrt(a1.real * a2.real) / np.abs(big_a) * np.exp(-(k * tilt) ** 2 * (1.0 / big_a).real / 2.0)
