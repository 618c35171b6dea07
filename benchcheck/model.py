"""The validated layout: plain, immutable records in the layout's own units (mm, degrees).

Every record carries the ``Loc`` of the table it came from, and ``key_locs`` for its
keys, so that any later stage (placement, rules, reports) can point the user at the
line they wrote without knowing anything about TOML.
"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass, field, fields
from operator import attrgetter
from typing import Callable, Mapping

from .textsafe import one_line


def _record(cls):
    """``@dataclass(frozen=True)`` with the same ``==``, ``hash`` and ``repr``, made of shared
    functions: ``dataclass`` writes and compiles each method anew for every class, and for
    the records of this module that was a third of the time ``import benchcheck.model``
    took (every command imports it)."""
    cls = dataclass(frozen=True, eq=False, repr=False)(cls)
    names = tuple(f.name for f in fields(cls))
    values = attrgetter(*names) if len(names) > 1 else (lambda obj: (getattr(obj, names[0]),))

    def __eq__(self, other):
        if other.__class__ is self.__class__:
            return values(self) == values(other)
        return NotImplemented

    def __hash__(self):
        return hash(values(self))

    def __repr__(self):
        return f"{self.__class__.__qualname__}(" + ", ".join(
            f"{n}={v!r}" for n, v in zip(names, values(self))) + ")"

    for method in (__eq__, __hash__, __repr__):
        method.__qualname__ = f"{cls.__qualname__}.{method.__name__}"
        setattr(cls, method.__name__, method)
    return cls


@_record
class Loc:
    """A place in a file: 1-based line and column (characters)."""

    file: str
    line: int
    column: int

    def __str__(self) -> str:
        return f"{self.file}:{self.line}:{self.column}"

    @classmethod
    def pending(cls, file: str, where: "Callable[[], tuple[int, int]]") -> "Loc":
        """A Loc whose line and column ``where()`` works out the first time either is read.

        The loader hands one of these to every record: finding the line of each key costs a
        second pass over the text, which a layout without errors or findings never needs.
        Read, compared, hashed, printed or pickled, it behaves as ``Loc(file, *where())``."""
        loc = object.__new__(cls)
        d = loc.__dict__
        d["file"] = file
        d["_where"] = where
        return loc

    def __getattr__(self, name: str):
        # only reached for a pending Loc's line or column not yet worked out
        where = self.__dict__.get("_where") if name in ("line", "column") else None
        if where is None:
            raise AttributeError(f"'Loc' object has no attribute '{name}'")
        line, column = where()
        d = self.__dict__
        d["line"], d["column"] = line, column
        del d["_where"]
        return d[name]


class LayoutError(Exception):
    """A layout (or configuration) the tool cannot use; the CLI prints it and exits 2."""

    def __init__(self, message: str, loc: Loc | None = None, file: str | None = None):
        super().__init__(message)
        self.message = message
        self.loc = loc
        self.file = loc.file if loc else file

    def __str__(self) -> str:
        """One line: control characters in the file name or message are escaped."""
        if self.loc:
            return one_line(f"{self.loc}: error: {self.message}")
        if self.file:
            return one_line(f"{self.file}: error: {self.message}")
        return one_line(f"error: {self.message}")


#: A beam uses a wavelength-keyed entry within this fraction of its wavelength (docs/design.md §3).
WAVELENGTH_MATCH = 0.02


@_record
class Spectral:
    """One number for every wavelength, or a table keyed by wavelength in nm."""

    value: float | None = None
    table: tuple[tuple[float, float], ...] = ()

    def at(self, wavelength_nm: float) -> float | None:
        """The entry within 2 % of ``wavelength_nm``; None when there is none."""
        if self.value is not None:
            return self.value
        best = None
        for nm, v in self.table:
            err = abs(nm - wavelength_nm) / wavelength_nm
            if err <= WAVELENGTH_MATCH and (best is None or err < best[0]):
                best = (err, v)
        return None if best is None else best[1]

    def describe(self) -> str:
        if self.value is not None:
            return f"{self.value:g}"
        return ", ".join(f"{nm:g} nm" for nm, _ in self.table)


@_record
class Lidt:
    """Laser-induced damage threshold as the coating's data sheet gives it (one or more of w_cm, w_cm2, j_cm2)."""

    w_cm: float | None = None          # CW, linear power density
    w_cm2: float | None = None         # CW, intensity
    j_cm2: float | None = None         # pulsed, fluence
    pulse_s: float | None = None
    wavelength_nm: float | None = None


@_record
class Optic:
    """One ``[[optic]]``: where it sits, what it does to the beam, and its ratings."""

    id: str
    kind: str
    loc: Loc
    key_locs: Mapping[str, Loc]
    at: tuple[float, float] | None = None
    roc: float | None = None                    # mirror: >0 concave; None = flat
    diameter: float | None = None               # clear aperture (mm)
    reflectivity: Spectral | None = None
    absorption: Spectral | None = None
    fold: float | None = None                   # declared full fold angle (deg)
    mount_size: tuple[float, float] | None = None
    lidt: Lidt | None = None
    substrate_thickness: float | None = None
    substrate_index: float | None = None
    length: float | None = None                 # crystal, along the beam inside
    index: float | None = None                  # crystal, plate
    group_index: float | None = None            # crystal, plate: for FSR and round-trip time
    faces: str = "normal"                       # crystal, plate: "normal" | "brewster"
    thermal_lens: tuple[float, ...] | None = None       # focal lengths (mm): one value or a range
    thermal_lens_t: tuple[float, ...] | None = None
    thermal_lens_s: tuple[float, ...] | None = None
    focal_length: float | None = None           # lens
    thickness: float | None = None              # plate
    aoi: float | None = None                    # plate: angle of incidence (deg)
    polygon: tuple[tuple[float, float], ...] | None = None   # obstacle
    size: tuple[float, float] | None = None                  # obstacle
    angle: float = 0.0                                       # obstacle rotation (deg)
    max_power_w: float | None = None            # dump, detector rating
    note: str | None = None
    #: this optic's own build tolerances over the lab's (keys of ``tolspec.KEYS``, their units)
    tolerance: Mapping[str, float | bool] | None = None

    def where(self, key: str) -> Loc:
        return self.key_locs.get(key, self.loc)


@_record
class PathEntry:
    """One element of a cavity's or beam's ``path``: an optic id, with the distance and fold given there."""

    id: str
    loc: Loc
    distance: float | None = None
    fold: float | None = None


@_record
class Coaxial:
    """A source placed on a cavity leg's line: ``distance`` mm behind the mirror ``through``
    (on the far side from the leg), shining through it along the leg toward ``toward``."""

    through: str
    toward: str
    distance: float                              # mm behind the mirror's face


@_record
class Source:
    """One ``[[source]]``: a laser beam's start, waist and power."""

    id: str
    loc: Loc
    key_locs: Mapping[str, Loc]
    at: tuple[float, float] | None               # None where ``coaxial`` places it
    wavelength_nm: float
    waist_t: float
    waist_s: float
    waist_at: float = 0.0
    m2_t: float = 1.0
    m2_s: float = 1.0
    toward: str | None = None
    heading: float | None = None
    power_w: float | None = None
    pulse_energy_j: float | None = None
    pulse_s: float | None = None
    rep_hz: float | None = None
    note: str | None = None
    coaxial: Coaxial | None = None

    def where(self, key: str) -> Loc:
        return self.key_locs.get(key, self.loc)


@_record
class Cavity:
    """One ``[[cavity]]``: its mirrors in travel order, wavelength and coupling."""

    id: str
    kind: str                                    # "linear" | "ring"
    loc: Loc
    key_locs: Mapping[str, Loc]
    path: tuple[PathEntry, ...]
    wavelength_nm: float
    heading: float | None = None
    output_coupler: str | None = None
    output_power_w: float | None = None
    input_coupler: str | None = None
    input_power_w: float | None = None
    loss: float = 0.0
    rep_hz: float | None = None
    pulse_s: float | None = None
    note: str | None = None

    @property
    def passive(self) -> bool:
        return self.input_coupler is not None

    def where(self, key: str) -> Loc:
        return self.key_locs.get(key, self.loc)


@_record
class Beam:
    """One ``[[beam]]``: an open path from a source or out of a cavity's output coupler."""

    id: str
    origin: str                                  # the `from` key: a source or cavity id
    loc: Loc
    key_locs: Mapping[str, Loc]
    path: tuple[PathEntry, ...]
    heading: float | None = None
    note: str | None = None

    def where(self, key: str) -> Loc:
        return self.key_locs.get(key, self.loc)


@_record
class Zone:
    """One ``[[zone]]``: a keep-out area or an enclosure, as a polygon in mm."""

    id: str
    kind: str                                    # "keepout" | "enclosure"
    polygon: tuple[tuple[float, float], ...]
    loc: Loc


@_record
class Waiver:
    """One ``[[waiver]]``: a finding accepted by someone, for a reason, maybe until a date."""

    rule: str
    target: str
    reason: str
    approved_by: str
    loc: Loc
    until: _dt.date | None = None


@_record
class Bench:
    """The ``[bench]`` table: the table's name and extent."""

    name: str
    size: tuple[float, float]
    loc: Loc


@_record
class Layout:
    """A whole layout file, validated; optics, sources, cavities and beams by id."""

    file: str
    format: int
    bench: Bench
    optics: Mapping[str, Optic]
    sources: Mapping[str, Source]
    cavities: Mapping[str, Cavity]
    beams: Mapping[str, Beam]
    zones: tuple[Zone, ...] = ()
    waivers: tuple[Waiver, ...] = ()
    key_locs: Mapping[tuple, Loc] = field(default_factory=dict)
