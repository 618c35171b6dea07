"""Reference optics for the tests, written here independently of benchcheck.

Each function names the published source of its formula (the numbers the tests get from
these functions are derived values, computed here).  Everything is in millimetres (wavelengths
too: pass ``nm * 1e-6``) and radians.  Matrices here are ordinary (non-reduced) 2x2 ray
matrices in air, multiplied right to left in the order the light meets the elements;
inside a medium only the air-equivalent ("reduced") length L/n of Kogelnik, Ippen,
Dienes & Shank 1972 is used, so q stays the air q.  Nothing in this module imports
benchcheck.
"""

from __future__ import annotations

import math

import numpy as np

NM = 1e-6  # mm per nm


# --- Gaussian beams: Kogelnik & Li, Applied Optics 5, 1550 (1966), section on Gaussian beams ---

def rayleigh(w0: float, wl: float, m2: float = 1.0, n: float = 1.0) -> float:
    """z_R = pi n w0^2 / (M^2 lambda0) (Kogelnik & Li 1966; the M^2 embedded-Gaussian form
    of ISO 11146-1:2005, from memory)."""
    return math.pi * n * w0 * w0 / (m2 * wl)


def w_at(w0: float, z: float, z_r: float) -> float:
    """w(z) = w0 sqrt(1 + (z/z_R)^2) (Kogelnik & Li 1966)."""
    return w0 * math.sqrt(1.0 + (z / z_r) ** 2)


def w_of_q(q: complex, wl: float, m2: float = 1.0) -> float:
    """1/q = 1/R - i lambda/(pi w^2) in air (Kogelnik & Li 1966), M^2 as an embedded Gaussian."""
    return math.sqrt(-m2 * wl / (math.pi * (1.0 / q).imag))


# --- ray matrices (Kogelnik & Li 1966, table of ray matrices; Siegman, Lasers, ch. 15) ---

def free(d: float) -> np.ndarray:
    return np.array([[1.0, d], [0.0, 1.0]])


def lens(f: float) -> np.ndarray:
    return np.array([[1.0, 0.0], [-1.0 / f, 1.0]])


def chain(*mats: np.ndarray) -> np.ndarray:
    """Product of matrices given in the order the light meets them."""
    out = np.eye(2)
    for m in mats:
        out = m @ out
    return out


def apply(m: np.ndarray, q: complex) -> complex:
    """ABCD law q2 = (A q + B)/(C q + D) (Kogelnik & Li 1966)."""
    return (m[0, 0] * q + m[0, 1]) / (m[1, 0] * q + m[1, 1])


def self_consistent_q(rt: np.ndarray) -> complex:
    """The q that a round trip reproduces: the root of C q^2 + (D - A) q - B = 0 with
    Im q > 0 (Kogelnik & Li 1966, resonator modes by the ABCD law).  Solved here with
    numpy's polynomial roots, not with the eigenmode formula benchcheck uses."""
    a, b, c, d = rt[0, 0], rt[0, 1], rt[1, 0], rt[1, 1]
    roots = np.roots([c, d - a, -b])
    good = [complex(r) for r in roots if complex(r).imag > 0]
    if len(good) != 1:
        raise ValueError(f"no single confined mode: roots {roots}")
    return good[0]


def walk(q: complex, steps) -> tuple[list[complex], float]:
    """Propagate ``q`` through ``steps``, each ("space", L) (air-equivalent length) or
    ("lens", f), by the ABCD law; return q after every step and the Gouy phase (rad)
    accumulated on the spaces, psi = arctan(z/z_R) summed segment by segment (Siegman,
    Lasers, ch. 17, from memory).  Thin lenses add no Gouy phase."""
    out, gouy = [], 0.0
    for kind, value in steps:
        if kind == "space":
            z, zr = q.real, q.imag
            gouy += math.atan2(z + value, zr) - math.atan2(z, zr)
            q = q + value
        elif kind == "lens":
            q = apply(lens(value), q)
        else:
            raise ValueError(kind)
        out.append(q)
    return out, gouy


def steps_matrix(steps) -> np.ndarray:
    """The ray matrix of the same ``steps`` (light meets them in order)."""
    return chain(*[free(v) if k == "space" else lens(v) for k, v in steps])


# --- tilted plates and Brewster elements ---

def plate_lengths(t: float, n: float, aoi: float) -> tuple[float, float]:
    """Air-equivalent lengths (d_t, d_s) of a plate of thickness t, index n at incidence
    ``aoi`` (rad): with sin(theta') = sin(aoi)/n (Snell's law) and the path t/cos(theta')
    inside, d_s = t/(n cos(theta')) and d_t = t cos^2(aoi)/(n cos^3(theta')) (the Coddington
    equations at two flat faces, common practice; the equivalent lengths of Kogelnik,
    Ippen, Dienes & Shank, IEEE JQE 8, 373 (1972), from memory)."""
    inside = math.asin(math.sin(aoi) / n)
    return (t * math.cos(aoi) ** 2 / (n * math.cos(inside) ** 3), t / (n * math.cos(inside)))


# --- two-mirror resonator: Kogelnik & Li 1966, section "Resonators with two mirrors" ---

def g(r: float | None, d: float) -> float:
    """g = 1 - d/R; a flat mirror (R infinite) has g = 1."""
    return 1.0 if r is None else 1.0 - d / r


def two_mirror(r1: float | None, r2: float | None, d: float, wl: float) -> dict:
    """Kogelnik & Li 1966 two-mirror closed forms: mirror spots w1, w2, waist w0 and its
    distance t1 from M1, Rayleigh range of the mode, one-way Gouy phase psi =
    arccos(+-sqrt(g1 g2)) (+ for g1, g2 > 0, - for both < 0), round-trip Gouy 2 psi and
    the half-trace m = 2 g1 g2 - 1 of the round trip (also Siegman, Lasers, ch. 19, from
    memory).  Valid for 0 < g1 g2 < 1."""
    g1, g2 = g(r1, d), g(r2, d)
    p = g1 * g2
    if not 0.0 < p < 1.0:
        raise ValueError(f"not stable: g1 g2 = {p}")
    scale = wl * d / math.pi
    w1 = (scale**2 * g2 / (g1 * (1.0 - p))) ** 0.25
    w2 = (scale**2 * g1 / (g2 * (1.0 - p))) ** 0.25
    denom = g1 + g2 - 2.0 * p
    w0 = (scale**2 * p * (1.0 - p) / denom**2) ** 0.25
    t1 = d * g2 * (1.0 - g1) / denom
    sign = 1.0 if g1 > 0 else -1.0
    psi = math.acos(sign * math.sqrt(p))
    return dict(g1=g1, g2=g2, w1=w1, w2=w2, w0=w0, t1=t1, z_r=math.pi * w0**2 / wl,
                psi=psi, theta_rt=2.0 * psi, m=2.0 * p - 1.0)


# --- thin-lens focusing: S. A. Self, Applied Optics 22, 658 (1983) ---

def self_focus(s: float, z_r: float, f: float) -> tuple[float, float]:
    """Self 1983, eqs. (9)-(10) (equation numbers from memory) in normalised form: an input waist a distance ``s`` before a
    thin lens of focal length ``f`` (Rayleigh range ``z_r``) is imaged to a waist ``s'``
    after the lens, magnified by m = w0'/w0:
        s'/f = 1 + (s/f - 1) / ((s/f - 1)^2 + (z_r/f)^2)
        m    = 1 / sqrt((1 - s/f)^2 + (z_r/f)^2)
    """
    u = s / f - 1.0
    r = z_r / f
    s_out = f * (1.0 + u / (u * u + r * r))
    mag = 1.0 / math.sqrt(u * u + r * r)
    return s_out, mag


# --- mode matching: the overlap integral of two Gaussian modes ---

def overlap_1d(w1: float, w2: float, tilt: float = 0.0, wl: float = 1.0) -> float:
    """Power coupling |integral u1 u2* dx|^2 of two 1-D fundamental Gaussians with coincident
    plane waists w1, w2, the second tilted by ``tilt`` rad (a linear phase k tilt x), by
    scipy's numerical quadrature: the overlap integral of mode matching (H. Kogelnik,
    "Coupling and conversion coefficients for optical modes", Proc. Symposium on
    Quasi-Optics, Polytechnic Institute of Brooklyn, 1964; from memory)."""
    from scipy.integrate import quad

    def u(x, w):
        return (2.0 / math.pi) ** 0.25 / math.sqrt(w) * math.exp(-x * x / (w * w))

    k = 2.0 * math.pi / wl
    span = 8.0 * max(w1, w2)
    re = quad(lambda x: u(x, w1) * u(x, w2) * math.cos(k * tilt * x), -span, span, limit=200)[0]
    im = quad(lambda x: u(x, w1) * u(x, w2) * math.sin(k * tilt * x), -span, span, limit=200)[0]
    return re * re + im * im


# --- power build-up (Siegman, Lasers, ch. 11, from memory; field sum of a Fabry-Perot) ---

def buildup(t_in: float, r_in: float, r_rest: float, loss: float = 0.0) -> float:
    """P_circ / P_in on resonance = T_in / (1 - sqrt(R_in R_rest (1 - loss)))^2."""
    return t_in / (1.0 - math.sqrt(r_in * r_rest * (1.0 - loss))) ** 2
