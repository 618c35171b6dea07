"""Coating and material data at a wavelength: reflectivity, absorption, what passes.

docs/design.md §3: a value is one number for every wavelength or a table keyed by
wavelength; a path uses the entry within 2 % of its wavelength, and a missing entry is an
error naming the wavelengths given.
"""

from __future__ import annotations

from .model import LayoutError, Optic


def reflectivity_at(optic: Optic, wavelength_nm: float, default: float | None) -> float | None:
    spec = optic.reflectivity
    if spec is None:
        return default
    value = spec.at(wavelength_nm)
    if value is None:
        raise LayoutError(f"\"{optic.id}\" gives reflectivity for {spec.describe()} but not for {wavelength_nm:g} nm "
                          "(within 2 %)", optic.where("reflectivity"))
    return value


def absorption_at(optic: Optic, wavelength_nm: float) -> float:
    spec = optic.absorption
    if spec is None:
        return 0.0
    value = spec.at(wavelength_nm)
    if value is None:
        raise LayoutError(f"\"{optic.id}\" gives absorption for {spec.describe()} but not for {wavelength_nm:g} nm "
                          "(within 2 %)", optic.where("absorption"))
    return value


def transmission(optic: Optic, wl: float) -> float:
    """Fraction transmitted: 1 - R - A (a mirror without reflectivity reflects all)."""
    r = reflectivity_at(optic, wl, 1.0 if optic.kind == "mirror" else 0.0)
    return max(0.0, 1.0 - r - absorption_at(optic, wl))


def pass_factor(optic: Optic, action: str, wl: float) -> float:
    """Fraction of power that stays in the beam at one pass of an element."""
    if optic.kind in ("mirror", "splitter"):
        if action == "reflect":
            return reflectivity_at(optic, wl, 1.0 if optic.kind == "mirror" else None) or 0.0
        return transmission(optic, wl)
    if optic.kind == "plate":
        return max(0.0, 1.0 - (reflectivity_at(optic, wl, 0.0) or 0.0) - absorption_at(optic, wl))
    if optic.kind in ("crystal", "lens"):
        return 1.0 - absorption_at(optic, wl)
    return 1.0
