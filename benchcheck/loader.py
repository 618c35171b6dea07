"""Read a layout file (format 1) into the validated ``model.Layout``.

Everything the user can get wrong is caught here, once, with the file, line and column of
the key and a sentence saying what was expected, so that later stages can trust their
input.  Nothing here computes optics; cross-references that need geometry (placement,
folds) are checked by ``placement``.
"""

from __future__ import annotations

import dataclasses
import datetime as _dt
import gc
import math
import os
import re
import stat
import sys
from collections.abc import Mapping
from functools import partial
from pathlib import Path
from typing import Any, Iterable

from .model import (
    Beam, Bench, Cavity, Coaxial, Layout, LayoutError, Lidt, Loc, Optic, PathEntry, Source, Spectral,
    Waiver, Zone,
)
from . import tolspec
from .tomlpos import LazyPositions

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover - exercised only on Python 3.10
    import tomli as tomllib

FORMAT_VERSION = 1

OPTIC_KINDS = ("mirror", "lens", "crystal", "plate", "aperture", "splitter", "dump", "detector", "obstacle")
_COMMON = ("id", "kind", "at", "diameter", "mount", "lidt", "note", "tolerance")
OPTIC_KEYS = {
    "mirror": _COMMON + ("roc", "reflectivity", "absorption", "fold", "substrate"),
    "lens": _COMMON + ("focal_length", "absorption"),
    "crystal": _COMMON + ("length", "index", "group_index", "faces", "thermal_lens", "thermal_lens_t", "thermal_lens_s",
                          "absorption"),
    "plate": _COMMON + ("thickness", "index", "group_index", "aoi", "faces", "reflectivity", "absorption"),
    "aperture": _COMMON,
    "splitter": _COMMON + ("reflectivity", "absorption", "fold", "substrate"),
    "dump": _COMMON + ("max_power_w",),
    "detector": _COMMON + ("max_power_w",),
    "obstacle": ("id", "kind", "at", "polygon", "size", "angle", "note"),
}
TOP_KEYS = ("format", "bench", "zone", "optic", "source", "cavity", "beam", "waiver")
BENCH_KEYS = ("name", "size", "note")
ZONE_KEYS = ("id", "kind", "polygon", "note")
ZONE_KINDS = ("keepout", "enclosure")
SOURCE_KEYS = (
    "id", "at", "toward", "heading", "wavelength_nm", "power_w", "pulse_energy_j", "pulse_s",
    "rep_hz", "waist", "waist_t", "waist_s", "waist_at", "m2", "m2_t", "m2_s", "note", "coaxial",
)
#: keys of a source's ``coaxial = { through, toward, distance }``
COAXIAL_KEYS = ("through", "toward", "distance")
CAVITY_KEYS = (
    "id", "kind", "path", "wavelength_nm", "heading", "output_coupler", "output_power_w",
    "input_coupler", "input_power_w", "loss", "rep_hz", "pulse_s", "note",
)
CAVITY_KINDS = ("linear", "ring")
BEAM_KEYS = ("id", "from", "path", "heading", "note")
WAIVER_KEYS = ("rule", "target", "reason", "approved_by", "until")
PATH_ENTRY_KEYS = ("id", "distance", "fold")
MOUNT_KEYS = ("size",)
LIDT_KEYS = ("w_cm", "w_cm2", "j_cm2", "pulse_s", "wavelength_nm")
SUBSTRATE_KEYS = ("thickness", "index")
FACES = ("normal", "brewster")
_ID = re.compile(r"[A-Za-z0-9][A-Za-z0-9_.\-]*")
#: Coordinates and lengths beyond this (mm) are typing errors, not benches.
MAX_EXTENT_MM = 1.0e6
#: Any number beyond this magnitude is rejected before it can overflow the arithmetic.
MAX_MAGNITUDE = 1.0e15
#: A quantity that must be positive or non-zero is at least this large in its unit.
MIN_MAGNITUDE = 1.0e-12
#: femtosecond lasers: pulse lengths go below the general bound (the exposure limits are
#: tabulated down to 1e-13 s)
MIN_PULSE_S = 1.0e-16
#: Smallest waist radius (mm): far below it the paraxial Gaussian beam does not apply.
MIN_WAIST_MM = 1.0e-4
#: Largest |fold| (degrees) at a mirror or splitter: 178 is an angle of incidence of 89
#: degrees, as for a plate's aoi.  Nearer 180 a fold is grazing incidence, and at 180 the
#: beam would go on undeviated, as if it passed through the mirror.
MAX_FOLD_DEG = 178.0
#: Smallest radius of curvature or focal length (mm) taken seriously.
MIN_FOCAL_MM = 1.0e-3
#: Wavelengths accepted, nm: from the far UV to the far infrared.
WAVELENGTH_RANGE_NM = (1.0, 1.0e6)
#: Names people reach for, and the key this format uses instead (for "did you mean").
SYNONYMS = {
    "f": "focal_length", "efl": "focal_length", "focal": "focal_length", "focal_length_mm": "focal_length",
    "r": "roc", "radius": "roc", "radius_of_curvature": "roc", "curvature": "roc", "roc_mm": "roc",
    "n": "index", "refractive_index": "index", "angle": "aoi", "angle_of_incidence": "aoi",
    "incidence": "aoi", "wavelength": "wavelength_nm", "lambda": "wavelength_nm", "lambda_nm": "wavelength_nm",
    "power": "power_w", "p_w": "power_w", "w0": "waist", "waist_radius": "waist", "m_squared": "m2",
    "position": "at", "pos": "at", "xy": "at", "r_oc": "reflectivity", "refl": "reflectivity",
    "transmission": "reflectivity", "aperture": "diameter", "clear_aperture": "diameter", "d": "distance",
    "dist": "distance", "len": "length", "l": "length", "type": "kind", "name": "id", "direction": "heading",
    "to": "toward", "towards": "toward", "source": "from", "origin": "from",
}


#: Largest layout file read (bytes).  A plan of 5,000 optics with coatings, mounts and LIDT
#: is about 0.7 MiB; at 1 MiB the TOML parser alone takes about half a second of CPU (up to
#: 0.7 s on contrived files) and grows in proportion, so a larger file would keep a
#: pre-commit hook waiting for seconds.  It is refused before it is read
#: (benchmarks/bench_load.py has the figures; README, "Layout format").
MAX_LAYOUT_BYTES = 1024 * 1024
#: How the limit is explained where a file is refused.
_TOO_LARGE = (f"layouts larger than {MAX_LAYOUT_BYTES // 2**20} MiB are not read ({MAX_LAYOUT_BYTES:,} bytes; a plan "
              "of 5,000 optics is about 0.7 MiB, and a larger file would take seconds to read)")
#: Most points in one polygon (zone or obstacle outline).
MAX_POLYGON_POINTS = 1000


def load_path(path: str | Path) -> Layout:
    """Load and validate a layout file; raises ``LayoutError`` for anything unusable."""
    name = str(path)
    try:
        info = os.stat(path)
        if stat.S_ISDIR(info.st_mode):
            raise IsADirectoryError
        if not stat.S_ISREG(info.st_mode):
            raise LayoutError("is not a regular file (a device, pipe or socket); a layout is a TOML text file",
                              file=name)
        if info.st_size > MAX_LAYOUT_BYTES:
            raise LayoutError(f"is {info.st_size:,} bytes; {_TOO_LARGE}", file=name)
        with open(path, "rb") as fh:
            # the size found, and one byte more to see growth: a read of the whole limit
            # would allocate (and page in) a 1 MiB buffer for every small file
            data = fh.read(info.st_size + 1)
            if len(data) > info.st_size:     # it grew since: read on, up to the limit
                data += fh.read(MAX_LAYOUT_BYTES + 1 - len(data))
    except IsADirectoryError:
        raise LayoutError("is a folder, not a layout file", file=name) from None
    except OSError as exc:
        raise LayoutError(f"cannot read the file: {exc.strerror or exc}", file=name) from None
    if len(data) > MAX_LAYOUT_BYTES:   # it grew while being read
        raise LayoutError(_TOO_LARGE, file=name)
    return load_bytes(data, name)


def load_bytes(data: bytes, file: str = "<layout>") -> Layout:
    if len(data) > MAX_LAYOUT_BYTES:   # e.g. a revision read from git
        raise LayoutError(f"is {len(data):,} bytes; {_TOO_LARGE}", file=file)
    nul = data.find(b"\x00")
    if nul >= 0:
        raise LayoutError(
            "NUL byte: this is a binary file or UTF-16/32 text; a layout is a UTF-8 TOML text file",
            _byte_loc(data, nul, file),
        )
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise LayoutError(
            f"not UTF-8 text (byte 0x{data[exc.start]:02x}); a layout is a UTF-8 TOML text file",
            _byte_loc(data, exc.start, file),
        ) from None
    if text.startswith("\ufeff"):
        text = text[1:]
    return load_text(text, file)


def _byte_loc(data: bytes, offset: int, file: str) -> Loc:
    line = data[:offset].count(b"\n") + 1
    col = offset - (data.rfind(b"\n", 0, offset) + 1) + 1
    return Loc(file, line, col)


#: No layout needs arrays or inline tables nested deeper than this.
MAX_NESTING = 32


def load_text(text: str, file: str = "<layout>") -> Layout:
    """Validate TOML text; ``file`` is only used in messages."""
    # The parsed document and the records are many small objects without reference cycles;
    # a garbage collection in between would only walk them again (on a plan of 5,000 optics
    # 40 % of the validation time).  They are freed by reference counting as before.
    collecting = gc.isenabled()
    gc.disable()
    try:
        return _load_text(text, file)
    finally:
        if collecting:
            gc.enable()


def _load_text(text: str, file: str) -> Layout:
    deep = _too_deep(text)
    if deep is not None:
        raise LayoutError(f"arrays or inline tables nested more than {MAX_NESTING} deep; a layout needs a few "
                          "levels at most (e.g. polygon = [[x, y], ...])", Loc(file, *deep))
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise _syntax_error(exc, text, file) from None
    except RecursionError:  # pragma: no cover - _too_deep catches these first
        raise LayoutError("the layout is nested too deeply to read", Loc(file, 1, 1)) from None
    except ValueError:  # an integer beyond Python's int-string limit (about 4,300 digits)
        raise _long_integer(text, file) from None
    return _Reader(file, LazyPositions(text), doc).layout(doc)


#: What brackets inside are not structure: comments and strings of every kind (an
#: unterminated one runs to the end of its line, or of the file for a multi-line one).
_NOT_STRUCTURE = re.compile(
    r'#[^\n]*'
    r'|"""[^"\\]*(?:(?:\\[\s\S]|"(?!""))[^"\\]*)*(?:""""{0,2}|\Z)'
    r"|'''[^']*(?:'(?!'')[^']*)*(?:''''{0,2}|\Z)"
    r'|"[^"\\\n]*(?:\\.[^"\\\n]*)*(?:"|\\?(?=\n)|\\?\Z)'
    r"|'[^'\n]*(?:'|(?=\n)|\Z)"
)


def _too_deep(text: str):
    """(line, column) where brackets outside strings and comments first nest too deep.

    A rough scan that only needs to be right for files that nest absurdly deep: strings
    and comments are blanked with one regular expression, then the depth is a running sum
    over the brackets (numpy), floored at zero as a stray closing bracket does not nest.
    """
    if text.count("[") + text.count("{") <= MAX_NESTING:
        return None
    blanked = _NOT_STRUCTURE.sub(lambda m: " " * len(m.group()), text)
    import numpy as np

    raw = blanked.encode("utf-8")        # brackets are ASCII: one byte, never part of another character
    chars = np.frombuffer(raw, dtype=np.uint8)
    opens = (chars == ord("[")) | (chars == ord("{"))
    at = np.flatnonzero(opens | (chars == ord("]")) | (chars == ord("}")))
    total = np.cumsum(np.where(opens[at], 1, -1))
    depth = total - np.minimum(np.minimum.accumulate(total), 0)
    deep = np.flatnonzero(depth > MAX_NESTING)
    if deep.size == 0:
        return None
    offset = len(raw[: int(at[deep[0]])].decode("utf-8"))
    return text.count("\n", 0, offset) + 1, offset - (text.rfind("\n", 0, offset) + 1) + 1


def _long_integer(text: str, file: str) -> LayoutError:
    """The error for a number too long to convert, at the first run of that many digits."""
    limit = sys.get_int_max_str_digits() if hasattr(sys, "get_int_max_str_digits") else 4300
    found = re.search(r"[0-9][0-9_]{%d,}" % max(limit - 1, 1), text)
    offset = found.start() if found else 0
    line = text.count("\n", 0, offset) + 1
    col = offset - (text.rfind("\n", 0, offset) + 1) + 1
    return LayoutError(f"a number with more than {limit} digits; no quantity in a layout needs that many",
                       Loc(file, line, col))


def _syntax_error(exc: Exception, text: str, file: str) -> LayoutError:
    msg = str(exc)
    line = getattr(exc, "lineno", None)
    col = getattr(exc, "colno", None)
    found = re.search(r"\(at line (\d+), column (\d+)\)", msg)
    if found and line is None:
        line, col = int(found.group(1)), int(found.group(2))
    if found:
        msg = msg[: found.start()].strip()
    if line is None:
        line, col = (text.count("\n") + 1, 1) if "end of document" in msg else (1, 1)
    lines = text.split("\n")
    source = lines[line - 1] if 0 < line <= len(lines) else ""
    lowered = msg.lower()
    if "overwrite" in lowered and "=" in source:
        key = source.split("=", 1)[0].strip()
        msg = f"'{key}' is given twice in the same table; each key may appear once"
        col = source.index(key) + 1 if key in source else col
    elif "cannot declare" in lowered:
        msg = f"{msg}: each [table] may appear once (use [[name]] for a list of tables)"
    elif "illegal character" in lowered and ("'\\n'" in msg or "\\n" in msg) and (
            source.count('"') % 2 == 1 or source.count("'") % 2 == 1):
        msg = "unterminated string: the closing quote is missing on this line"
    else:
        msg = msg[:1].lower() + msg[1:]
    return LayoutError("TOML syntax: " + msg, Loc(file, line, col or 1))


class _KeyLocs(Mapping):
    """key -> ``Loc`` for the keys of one table (a record's ``key_locs``); each Loc's line is
    found when first read."""

    __slots__ = ("_file", "_positions", "_path", "_keys")

    def __init__(self, file: str, positions: LazyPositions, path: tuple, keys: tuple) -> None:
        self._file, self._positions, self._path, self._keys = file, positions, path, keys

    def __getitem__(self, key: str) -> Loc:
        if key not in self._keys:
            raise KeyError(key)
        return Loc.pending(self._file, partial(self._positions.nearest, self._path + (key,)))

    def get(self, key: str, default: Any = None) -> Any:
        return self[key] if key in self._keys else default

    def __contains__(self, key: object) -> bool:
        return key in self._keys

    def __iter__(self):
        return iter(self._keys)

    def __len__(self) -> int:
        return len(self._keys)

    def __repr__(self) -> str:
        return repr(dict(self))


class _AllKeyLocs(Mapping):
    """path -> ``Loc`` for every key, table and array element of the file (``Layout.key_locs``),
    read from the text when first asked for."""

    __slots__ = ("_file", "_positions")

    def __init__(self, file: str, positions: LazyPositions) -> None:
        self._file, self._positions = file, positions

    def __getitem__(self, path: tuple) -> Loc:
        return Loc(self._file, *self._positions.map[path])

    def __iter__(self):
        return iter(self._positions.map)

    def __len__(self) -> int:
        return len(self._positions.map)

    def __repr__(self) -> str:
        return repr(dict(self))


def close_matches(word: str, choices, n: int, cutoff: float) -> list:
    """``difflib.get_close_matches``, imported on the first error that suggests a word
    (the loader, the configuration and the rule options all suggest with it; a clean run
    never imports difflib)."""
    import difflib

    return difflib.get_close_matches(word, choices, n=n, cutoff=cutoff)


def _in(unit: str) -> str:
    return f" in {unit}" if unit else ""


def _kind_name(value: Any) -> str:
    if isinstance(value, bool):
        return "a boolean"
    if isinstance(value, (int, float)):
        return f"the number {value!r}"
    if isinstance(value, str):
        return f"the string {value!r}" if len(value) < 40 else "a string"
    if isinstance(value, list):
        return "an array"
    if isinstance(value, dict):
        return "a table"
    if isinstance(value, (_dt.date, _dt.time)):
        return "a date or time"
    return type(value).__name__


class _Reader:
    """Walks the parsed document, converting and checking values against their paths."""

    def __init__(self, file: str, positions: LazyPositions, doc: dict | None = None):
        self.file = file
        self.positions = positions
        #: (section, index) -> id, so messages say optic "M2" rather than optic[3]
        self.ids: dict[tuple, str] = {}
        for section in ("optic", "source", "cavity", "beam", "zone"):
            items = (doc or {}).get(section)
            if isinstance(items, list):
                for i, item in enumerate(items):
                    if isinstance(item, dict) and isinstance(item.get("id"), str):
                        self.ids[(section, i)] = item["id"]

    # -- locations and errors ------------------------------------------------------
    def loc(self, path: tuple) -> Loc:
        """Where *path* is written (or the table holding it); the line is found when first read."""
        return Loc.pending(self.file, partial(self.positions.nearest, tuple(path)))

    def fail(self, path: tuple, message: str) -> LayoutError:
        return LayoutError(message, self.loc(path))

    def name(self, path: tuple) -> str:
        """How a value is named in messages: by the id of its table where it has one."""
        out = ""
        rest = path
        if len(path) >= 2 and isinstance(path[1], int) and (path[0], path[1]) in self.ids:
            out = f'{path[0]} "{self.ids[(path[0], path[1])]}"'
            rest = path[2:]
            if rest:
                out += " "
                first = rest[0]
                out += f"[{first}]" if isinstance(first, int) else str(first)
                rest = rest[1:]
        for part in rest:
            out += f"[{part}]" if isinstance(part, int) else (f".{part}" if out and not out.endswith(" ") else part)
        return out

    def key_locs(self, path: tuple, table: dict) -> Mapping:
        return _KeyLocs(self.file, self.positions, path, tuple(table))

    # -- primitive checks ------------------------------------------------------------
    def table(self, value: Any, path: tuple, allowed: Iterable[str], what: str) -> dict:
        if not isinstance(value, dict):
            raise self.fail(path, f"{self.name(path)} must be a table ({what}), found {_kind_name(value)}")
        allowed = tuple(allowed)
        for key in value:
            if key not in allowed:
                raise self.fail(path + (key,), self._unknown(key, allowed, what))
        return value

    @staticmethod
    def _unknown(key: str, allowed: tuple, what: str) -> str:
        close = close_matches(key, allowed, n=1, cutoff=0.6)
        synonym = SYNONYMS.get(key.lower())
        if synonym in allowed and synonym != key:
            close = [synonym]
        hint = f"; did you mean '{close[0]}'?" if close else f"; allowed keys: {', '.join(allowed)}"
        return f"unknown key '{key}' in {what}{hint}"

    def require(self, table: dict, key: str, path: tuple, what: str) -> Any:
        if key not in table:
            raise self.fail(path, f"{what} needs '{key}'")
        return table[key]

    def number(self, value: Any, path: tuple, unit: str = "", *, low: float | None = None,
               high: float | None = None, low_open: bool = False, nonzero: bool = False,
               tiny: float = MIN_MAGNITUDE) -> float:
        """A finite number in range; ``tiny`` is the smallest magnitude a quantity that must be
        positive or non-zero may have (smaller ones underflow the beam arithmetic)."""
        kind = value.__class__
        if ((kind is float or kind is int) and -MAX_MAGNITUDE <= value <= MAX_MAGNITUDE
                and (low is None or (value > low if low_open else value >= low))
                and (high is None or value <= high)
                and not ((nonzero or (low == 0.0 and low_open)) and -tiny < value < tiny)):
            return float(value)   # the common case, all checks passed; below, which one failed
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise self.fail(path, f"{self.name(path)} must be a number{_in(unit)}, found {_kind_name(value)}")
        try:
            x = float(value)
        except OverflowError:
            raise self.fail(path, f"{self.name(path)} is far too large{_in(unit)} (a {len(str(value))}-digit integer)") from None
        if math.isnan(x) or math.isinf(x):
            raise self.fail(path, f"{self.name(path)} must be a finite number{_in(unit)}, found {value}")
        if abs(x) > MAX_MAGNITUDE:
            raise self.fail(path, f"{self.name(path)} = {value:g} is far too large{_in(unit)}")
        if nonzero and x == 0:
            raise self.fail(path, f"{self.name(path)} must not be zero")
        if low is not None and (x <= low if low_open else x < low):
            op = ">" if low_open else ">="
            raise self.fail(path, f"{self.name(path)} must be {op} {low:g}{_in(unit)}, found {value}")
        if high is not None and x > high:
            raise self.fail(path, f"{self.name(path)} must be <= {high:g}{_in(unit)}, found {value}")
        if (nonzero or (low == 0.0 and low_open)) and abs(x) < tiny:
            raise self.fail(path, f"{self.name(path)} = {value:g} is far too small{_in(unit)}; the smallest accepted is {tiny:g}")
        return x

    def wavelength(self, value: Any, path: tuple) -> float:
        x = self.number(value, path, "nm", low=0.0, low_open=True)
        lo, hi = WAVELENGTH_RANGE_NM
        if not lo <= x <= hi:
            raise self.fail(path, f"{self.name(path)} = {x:g} nm is outside {lo:g} to {hi:g} nm")
        return x

    def fold(self, value: Any, path: tuple) -> float:
        x = self.number(value, path, "degrees")
        if abs(x) > MAX_FOLD_DEG:
            raise self.fail(path, f"{self.name(path)} = {value} degrees is beyond +-{MAX_FOLD_DEG:g}: the fold is the "
                                  "full angle between the arriving and leaving beam (0 sends it back, 90 is a 45-degree "
                                  f"mirror); +-180 would pass the beam on undeviated and beyond +-{MAX_FOLD_DEG:g} the "
                                  f"incidence is grazing (over {MAX_FOLD_DEG / 2:g} degrees)")
        return x

    def string(self, value: Any, path: tuple, choices: tuple | None = None) -> str:
        if not isinstance(value, str):
            raise self.fail(path, f"{self.name(path)} must be a string, found {_kind_name(value)}")
        if choices is not None and value not in choices:
            close = close_matches(value, choices, n=1, cutoff=0.6)
            hint = f" (did you mean \"{close[0]}\"?)" if close else ""
            opts = " | ".join(f'"{c}"' for c in choices)
            raise self.fail(path, f"{self.name(path)} must be one of {opts}, found \"{value}\"{hint}")
        return value

    def ident(self, value: Any, path: tuple) -> str:
        s = self.string(value, path)
        if not _ID.fullmatch(s):
            raise self.fail(path, f"{self.name(path)} must be an id of letters, digits, '_', '-' or '.', "
                                  f"starting with a letter or digit; found \"{s}\"")
        return s

    def point(self, value: Any, path: tuple, what: str = "[x, y] in mm", positive: bool = False) -> tuple[float, float]:
        if not isinstance(value, list) or len(value) != 2:
            raise self.fail(path, f"{self.name(path)} must be {what}, found {_kind_name(value)}"
                                  + (f" of {len(value)} items" if isinstance(value, list) else ""))
        low = 0.0 if positive else -MAX_EXTENT_MM
        return (self.number(value[0], path + (0,), "mm", low=low, low_open=positive, high=MAX_EXTENT_MM),
                self.number(value[1], path + (1,), "mm", low=low, low_open=positive, high=MAX_EXTENT_MM))

    def polygon(self, value: Any, path: tuple) -> tuple[tuple[float, float], ...]:
        if not isinstance(value, list) or len(value) < 3:
            raise self.fail(path, f"{self.name(path)} must be an array of at least 3 points [[x, y], ...] in mm")
        if len(value) > MAX_POLYGON_POINTS:
            raise self.fail(path, f"{self.name(path)} has {len(value)} points; at most {MAX_POLYGON_POINTS} are "
                                  "accepted (a footprint or zone needs a few)")
        return tuple(self.point(p, path + (i,)) for i, p in enumerate(value))

    def array_of_tables(self, doc: dict, key: str) -> list:
        value = doc.get(key, [])
        if not isinstance(value, list) or not all(isinstance(v, dict) for v in value):
            raise self.fail((key,), f"'{key}' must be written as [[{key}]] tables")
        return value

    def fraction(self, value: Any, path: tuple) -> Spectral:
        """A fraction 0..1, or a table keyed by wavelength in nm."""
        if isinstance(value, dict):
            if not value:
                raise self.fail(path, f"{self.name(path)} table is empty; give {{ 780 = 0.99 }} or one number")
            rows = []
            for k, v in value.items():
                try:
                    nm = float(k)
                except ValueError:
                    nm = float("nan")
                if not math.isfinite(nm) or nm <= 0:
                    raise self.fail(path + (k,), f"{self.name(path)} keys must be wavelengths in nm, found \"{k}\"")
                rows.append((nm, self.number(v, path + (k,), "", low=0.0, high=1.0)))
            return Spectral(table=tuple(rows))
        return Spectral(value=self.number(value, path, "", low=0.0, high=1.0))

    def focal_range(self, value: Any, path: tuple) -> tuple[float, ...]:
        values = value if isinstance(value, list) else [value]
        if not 1 <= len(values) <= 2:
            raise self.fail(path, f"{self.name(path)} must be one focal length (mm) or a range [f1, f2]")
        return tuple(self.number(v, path + ((i,) if isinstance(value, list) else ()), "mm", nonzero=True,
                                 tiny=MIN_FOCAL_MM)
                     for i, v in enumerate(values))

    # -- sections ------------------------------------------------------------------
    def layout(self, doc: dict) -> Layout:
        self.table(doc, (), TOP_KEYS, "the layout file")
        if "format" not in doc:
            raise LayoutError("the layout needs 'format = 1' at the top", Loc(self.file, 1, 1))
        fmt = doc["format"]
        if isinstance(fmt, bool) or not isinstance(fmt, int) or fmt != FORMAT_VERSION:
            raise self.fail(("format",), f"unsupported format {fmt!r}: this benchcheck reads format = {FORMAT_VERSION}")
        if "bench" not in doc:
            raise LayoutError("the layout needs a [bench] table with name and size", Loc(self.file, 1, 1))
        bench = self.bench(doc["bench"])
        seen: dict[str, tuple] = {}

        def claim(ident: str, path: tuple) -> None:
            if ident in seen:
                raise self.fail(path, f"id \"{ident}\" is used twice (first at line {self.loc(seen[ident]).line}); "
                                      "ids must be unique")
            seen[ident] = path

        zones = []
        for i, z in enumerate(self.array_of_tables(doc, "zone")):
            zones.append(self.zone(z, ("zone", i)))
            claim(zones[-1].id, ("zone", i, "id"))
        optics = {}
        for i, o in enumerate(self.array_of_tables(doc, "optic")):
            optic = self.optic(o, ("optic", i))
            claim(optic.id, ("optic", i, "id"))
            optics[optic.id] = optic
        sources = {}
        for i, s in enumerate(self.array_of_tables(doc, "source")):
            src = self.source(s, ("source", i))
            claim(src.id, ("source", i, "id"))
            sources[src.id] = src
        cavities = {}
        for i, c in enumerate(self.array_of_tables(doc, "cavity")):
            cav = self.cavity(c, ("cavity", i), optics)
            claim(cav.id, ("cavity", i, "id"))
            cavities[cav.id] = cav
        beams = {}
        for i, b in enumerate(self.array_of_tables(doc, "beam")):
            beam = self.beam(b, ("beam", i), optics, sources, cavities)
            claim(beam.id, ("beam", i, "id"))
            beams[beam.id] = beam
        sources = self._coaxial_refs(sources, optics, cavities)
        waivers = tuple(self.waiver(w, ("waiver", i)) for i, w in enumerate(self.array_of_tables(doc, "waiver")))
        for i, src in enumerate(sources.values()):
            if src.toward is not None and src.toward not in optics:
                raise self._dangling(("source", i, "toward"), src.toward, optics, "an optic")
        self._check_placement_refs(optics, cavities, beams)
        return Layout(
            file=self.file, format=fmt, bench=bench, optics=optics, sources=sources,
            cavities=cavities, beams=beams, zones=tuple(zones), waivers=waivers,
            key_locs=_AllKeyLocs(self.file, self.positions),
        )

    def _dangling(self, path: tuple, ident: str, known: Iterable[str], what: str) -> LayoutError:
        known = list(known)
        close = close_matches(ident, known, n=1, cutoff=0.5)
        hint = f"; did you mean \"{close[0]}\"?" if close else (f"; known: {', '.join(known)}" if known else "")
        return self.fail(path, f"\"{ident}\" is not {what} in this layout{hint}")

    def bench(self, value: Any) -> Bench:
        path = ("bench",)
        t = self.table(value, path, BENCH_KEYS, "[bench]")
        name = self.string(self.require(t, "name", path, "[bench]"), path + ("name",))
        size = self.point(self.require(t, "size", path, "[bench]"), path + ("size",),
                          "[width, height] of the table in mm", positive=True)
        return Bench(name, size, self.loc(path))

    def zone(self, value: dict, path: tuple) -> Zone:
        t = self.table(value, path, ZONE_KEYS, "a [[zone]]")
        ident = self.ident(self.require(t, "id", path, "a [[zone]]"), path + ("id",))
        kind = self.string(self.require(t, "kind", path, f"zone \"{ident}\""), path + ("kind",), ZONE_KINDS)
        poly = self.polygon(self.require(t, "polygon", path, f"zone \"{ident}\""), path + ("polygon",))
        return Zone(ident, kind, poly, self.loc(path))

    def optic(self, value: dict, path: tuple) -> Optic:
        if not isinstance(value, dict):
            raise self.fail(path, "each [[optic]] must be a table")
        ident = self.ident(self.require(value, "id", path, "an [[optic]]"), path + ("id",))
        kind = self.string(self.require(value, "kind", path, f"optic \"{ident}\""), path + ("kind",), OPTIC_KINDS)
        allowed = OPTIC_KEYS[kind]
        for key in value:
            if key not in allowed:
                others = [k for k, keys in OPTIC_KEYS.items() if key in keys]
                if others and close_matches(key, allowed, n=1, cutoff=0.8) == []:
                    raise self.fail(path + (key,), f"'{key}' does not apply to a {kind} (optic \"{ident}\"); "
                                                   f"it is a key of: {', '.join(others)}. Keys for a {kind}: {', '.join(allowed)}")
                raise self.fail(path + (key,), self._unknown(key, allowed, f"optic \"{ident}\" ({kind})"))
        p = lambda k: path + (k,)  # noqa: E731
        fields: dict[str, Any] = {}
        if "at" in value:
            fields["at"] = self.point(value["at"], p("at"))
        if "note" in value:
            fields["note"] = self.string(value["note"], p("note"))
        if kind == "obstacle":
            return self._obstacle(ident, value, path, fields)
        if "diameter" in value:
            fields["diameter"] = self.number(value["diameter"], p("diameter"), "mm", low=0, low_open=True)
        if "mount" in value:
            m = self.table(value["mount"], p("mount"), MOUNT_KEYS, f"the mount of \"{ident}\"")
            fields["mount_size"] = self.point(self.require(m, "size", p("mount"), "mount"), p("mount") + ("size",),
                                              "[width, depth] in mm", positive=True)
        if "lidt" in value:
            fields["lidt"] = self.lidt(value["lidt"], p("lidt"), ident)
        if "tolerance" in value:
            fields["tolerance"] = self.tolerance(value["tolerance"], p("tolerance"), ident, kind)
        if "roc" in value:
            fields["roc"] = self.number(value["roc"], p("roc"), "mm", nonzero=True, tiny=MIN_FOCAL_MM)
        for key in ("reflectivity", "absorption"):
            if key in value:
                fields[key] = self.fraction(value[key], p(key))
        if "fold" in value:
            fields["fold"] = self.fold(value["fold"], p("fold"))
        if "substrate" in value:
            s = self.table(value["substrate"], p("substrate"), SUBSTRATE_KEYS, f"the substrate of \"{ident}\"")
            if "thickness" in s:
                fields["substrate_thickness"] = self.number(s["thickness"], p("substrate") + ("thickness",), "mm", low=0.0)
            if "index" in s:
                fields["substrate_index"] = self.number(s["index"], p("substrate") + ("index",), "", low=1.0)
        if kind == "lens":
            fields["focal_length"] = self.number(self.require(value, "focal_length", path, f"lens \"{ident}\""),
                                                 p("focal_length"), "mm", nonzero=True, tiny=MIN_FOCAL_MM)
        if kind == "crystal":
            fields["length"] = self.number(self.require(value, "length", path, f"crystal \"{ident}\""),
                                           p("length"), "mm", low=0.0, low_open=True)
        if kind == "plate":
            fields["thickness"] = self.number(self.require(value, "thickness", path, f"plate \"{ident}\""),
                                              p("thickness"), "mm", low=0.0, low_open=True)
        if kind in ("crystal", "plate"):
            fields["index"] = self.number(self.require(value, "index", path, f"{kind} \"{ident}\""),
                                          p("index"), "", low=1.0)
            if "group_index" in value:
                fields["group_index"] = self.number(value["group_index"], p("group_index"), "", low=1.0)
            if "faces" in value:
                fields["faces"] = self.string(value["faces"], p("faces"), FACES)
        if "aoi" in value:
            if fields.get("faces") == "brewster":
                raise self.fail(p("aoi"), f"plate \"{ident}\" has faces = \"brewster\", which sets the angle; remove 'aoi'")
            fields["aoi"] = self.number(value["aoi"], p("aoi"), "degrees", low=0.0, high=89.0)
        for key in ("thermal_lens", "thermal_lens_t", "thermal_lens_s"):
            if key in value:
                fields[key] = self.focal_range(value[key], p(key))
        if ("thermal_lens_t" in value) != ("thermal_lens_s" in value):
            raise self.fail(path, f"crystal \"{ident}\": give both thermal_lens_t and thermal_lens_s, or thermal_lens")
        if "thermal_lens" in value and "thermal_lens_t" in value:
            raise self.fail(p("thermal_lens"), f"crystal \"{ident}\": give thermal_lens or thermal_lens_t/_s, not both")
        if "max_power_w" in value:
            fields["max_power_w"] = self.number(value["max_power_w"], p("max_power_w"), "W", low=0.0, low_open=True)
        if kind == "aperture" and "diameter" not in value:
            raise self.fail(path, f"aperture \"{ident}\" needs 'diameter' (mm)")
        if kind == "splitter" and "reflectivity" not in value:
            raise self.fail(path, f"splitter \"{ident}\" needs 'reflectivity' (a fraction, or a table by wavelength)")
        refl, absn = fields.get("reflectivity"), fields.get("absorption")
        if refl and absn and refl.value is not None and absn.value is not None and refl.value + absn.value > 1.0 + 1e-12:
            raise self.fail(p("absorption"), f"reflectivity + absorption of \"{ident}\" exceed 1")
        return Optic(ident, kind, self.loc(path), self.key_locs(path, value), **fields)

    def _obstacle(self, ident: str, value: dict, path: tuple, fields: dict) -> Optic:
        p = lambda k: path + (k,)  # noqa: E731
        if "polygon" in value:
            if "at" in value or "size" in value:
                raise self.fail(path, f"obstacle \"{ident}\": give 'polygon', or 'at' with 'size' (and 'angle'), not both")
            fields["polygon"] = self.polygon(value["polygon"], p("polygon"))
        else:
            if "at" not in value or "size" not in value:
                raise self.fail(path, f"obstacle \"{ident}\" needs 'polygon', or 'at' and 'size' = [w, d] in mm")
            fields["size"] = self.point(value["size"], p("size"), "[w, d] in mm", positive=True)
            if "angle" in value:
                fields["angle"] = self.number(value["angle"], p("angle"), "degrees")
        return Optic(ident, "obstacle", self.loc(path), self.key_locs(path, value), **fields)

    def lidt(self, value: Any, path: tuple, ident: str) -> Lidt:
        t = self.table(value, path, LIDT_KEYS, f"the LIDT of \"{ident}\"")
        out = {k: self.number(v, path + (k,), k.split("_")[-1] if k != "pulse_s" else "s", low=0.0, low_open=True)
               for k, v in t.items()}
        if "j_cm2" in out and "pulse_s" not in out:
            raise self.fail(path, f"a pulsed LIDT (j_cm2) of \"{ident}\" needs pulse_s, the pulse length it was measured at")
        if not any(k in out for k in ("w_cm", "w_cm2", "j_cm2")):
            raise self.fail(path, f"the LIDT of \"{ident}\" needs w_cm, w_cm2 or j_cm2")
        return Lidt(**out)

    def tolerance(self, value: Any, path: tuple, ident: str, kind: str) -> dict:
        """An optic's own build tolerances, over the lab's [tolerances] (README, "Tolerances
        and alignment"): only keys that apply to its kind."""
        allowed = tuple(k for k, key in tolspec.KEYS.items() if kind in key.kinds)
        what = f"the tolerance of \"{ident}\" ({kind})"
        if not allowed:
            raise self.fail(path, f"a {kind} takes no tolerance (optic \"{ident}\")")
        t = self.table(value, path, allowed, what)
        out = {}
        for key, v in t.items():
            try:
                out[key] = tolspec.check_value(tolspec.KEYS[key], v, f"optic \"{ident}\" tolerance.{key}")
            except ValueError as exc:
                raise self.fail(path + (key,), str(exc)) from None
        return out

    def source(self, value: dict, path: tuple) -> Source:
        t = self.table(value, path, SOURCE_KEYS, "a [[source]]")
        ident = self.ident(self.require(t, "id", path, "a [[source]]"), path + ("id",))
        what = f"source \"{ident}\""
        p = lambda k: path + (k,)  # noqa: E731
        f: dict[str, Any] = {}
        if "coaxial" in t:
            for other in ("at", "toward", "heading"):
                if other in t:
                    raise self.fail(p(other), f"{what}: 'coaxial' places and points the source; give it or "
                                              f"'{other}', not both")
            f["at"] = None
            f["coaxial"] = self.coaxial(t["coaxial"], p("coaxial"), what)
        else:
            f["at"] = self.point(self.require(t, "at", path, what + " (or 'coaxial')"), p("at"))
        if "toward" in t and "heading" in t:
            raise self.fail(p("heading"), f"{what}: give 'toward' or 'heading', not both")
        if "toward" in t:
            f["toward"] = self.ident(t["toward"], p("toward"))
        if "heading" in t:
            f["heading"] = self.number(t["heading"], p("heading"), "degrees")
        f["wavelength_nm"] = self.wavelength(self.require(t, "wavelength_nm", path, what), p("wavelength_nm"))
        for key, unit in (("power_w", "W"), ("pulse_energy_j", "J"), ("pulse_s", "s"), ("rep_hz", "Hz")):
            if key in t:
                f[key] = self.number(t[key], p(key), unit, low=0.0, low_open=key != "power_w",
                                     tiny=MIN_PULSE_S if key == "pulse_s" else MIN_MAGNITUDE)
        if "pulse_energy_j" in f and "pulse_s" not in f:
            raise self.fail(p("pulse_energy_j"), f"{what}: a pulsed source needs pulse_s as well")
        if "pulse_energy_j" in f and "power_w" in f and "rep_hz" in f:
            if not math.isclose(f["pulse_energy_j"] * f["rep_hz"], f["power_w"], rel_tol=1e-3):
                raise self.fail(p("power_w"), f"{what}: power_w differs from pulse_energy_j x rep_hz")
        f["waist_t"], f["waist_s"] = self._pair(t, "waist", path, what, "mm", low=0.0, low_open=True, default=None,
                                                tiny=MIN_WAIST_MM)
        f["m2_t"], f["m2_s"] = self._pair(t, "m2", path, what, "", low=1.0, default=1.0)
        smallest = f["wavelength_nm"] * 1e-6
        for key, w in (("waist", f["waist_t"]), ("waist_t", f["waist_t"]), ("waist_s", f["waist_s"])):
            if key in t and w < smallest:
                raise self.fail(p(key), f"{what}: {key} = {w:g} mm is smaller than the wavelength ({smallest:g} mm); "
                                        "a Gaussian beam that small spreads too fast for the paraxial beam "
                                        "formulas (its far-field angle lambda/(pi w0) nears a radian)")
        if "waist_at" in t:
            f["waist_at"] = self.number(t["waist_at"], p("waist_at"), "mm")
        if "note" in t:
            f["note"] = self.string(t["note"], p("note"))
        return Source(ident, self.loc(path), self.key_locs(path, t), **f)

    def coaxial(self, value: Any, path: tuple, what: str) -> Coaxial:
        """``{ through = mirror id, toward = its neighbour on the cavity (optional at an end
        mirror), distance = mm behind the mirror }``; the ids are checked with the cavities."""
        t = self.table(value, path, COAXIAL_KEYS, f"{what}'s 'coaxial' (through, toward, distance)")
        through = self.ident(self.require(t, "through", path, f"{what}'s 'coaxial'"), path + ("through",))
        toward = self.ident(t["toward"], path + ("toward",)) if "toward" in t else ""
        distance = self.number(self.require(t, "distance", path, f"{what}'s 'coaxial'"), path + ("distance",), "mm",
                               low=0.0, low_open=True, high=MAX_EXTENT_MM)
        return Coaxial(through, toward, distance)

    def _coaxial_refs(self, sources: dict, optics: dict, cavities: dict) -> dict:
        """Check every ``coaxial`` against the cavities: ``through`` a mirror or splitter on a
        cavity path, ``toward`` its neighbour there (found where the mirror has one leg)."""
        out = dict(sources)
        for i, src in enumerate(sources.values()):
            co = src.coaxial
            if co is None:
                continue
            path = ("source", i, "coaxial")
            if co.through not in optics:
                raise self._dangling(path + ("through",), co.through, optics, "an optic")
            if optics[co.through].kind not in ("mirror", "splitter"):
                raise self.fail(path + ("through",), f"source \"{src.id}\": 'coaxial' goes through a cavity mirror or "
                                                     f"splitter, and \"{co.through}\" is a {optics[co.through].kind}")
            neighbours = []
            for cav in cavities.values():
                ids = [e.id for e in cav.path]
                for k, ident in enumerate(ids):
                    if ident != co.through:
                        continue
                    near = [k - 1, k + 1] if cav.kind == "ring" else [j for j in (k - 1, k + 1) if 0 <= j < len(ids)]
                    neighbours += [ids[j % len(ids)] for j in near]
            if not neighbours:
                raise self.fail(path + ("through",), f"source \"{src.id}\": \"{co.through}\" is on no cavity path; "
                                                     "'coaxial' places a source on the line of a cavity leg")
            neighbours = list(dict.fromkeys(neighbours))
            if not co.toward:
                if len(neighbours) > 1:
                    raise self.fail(path, f"source \"{src.id}\": \"{co.through}\" starts more than one cavity leg "
                                          f"(toward {', '.join(neighbours)}); say which with 'toward'")
                co = Coaxial(co.through, neighbours[0], co.distance)
            elif co.toward not in neighbours:
                raise self.fail(path + ("toward",), f"source \"{src.id}\": \"{co.toward}\" is not next to "
                                                    f"\"{co.through}\" on a cavity path (its neighbours: "
                                                    f"{', '.join(neighbours)})")
            out[src.id] = dataclasses.replace(src, coaxial=co)
        return out

    def _pair(self, t: dict, key: str, path: tuple, what: str, unit: str, default, **bounds):
        both = (f"{key}_t", f"{key}_s")
        if key in t:
            if any(k in t for k in both):
                raise self.fail(path + (key,), f"{what}: give '{key}' or '{key}_t' and '{key}_s', not both")
            v = self.number(t[key], path + (key,), unit, **bounds)
            return v, v
        if all(k in t for k in both):
            return tuple(self.number(t[k], path + (k,), unit, **bounds) for k in both)
        if any(k in t for k in both):
            raise self.fail(path, f"{what}: give both '{key}_t' and '{key}_s' (or one '{key}')")
        if default is None:
            raise self.fail(path, f"{what} needs '{key}' ({unit}), or '{key}_t' and '{key}_s'")
        return default, default

    def path_entries(self, value: Any, path: tuple, optics: dict, what: str) -> tuple[PathEntry, ...]:
        if not isinstance(value, list) or not value:
            raise self.fail(path, f"{what}: 'path' must be a non-empty array of optic ids or "
                                  "{ id = ..., distance = ..., fold = ... } tables")
        out = []
        for i, item in enumerate(value):
            ip = path + (i,)
            if isinstance(item, dict):
                t = self.table(item, ip, PATH_ENTRY_KEYS, f"a path entry of {what}")
                ident = self.ident(self.require(t, "id", ip, f"a path entry of {what}"), ip + ("id",))
                dist = (self.number(t["distance"], ip + ("distance",), "mm", low=0.0, low_open=True, high=MAX_EXTENT_MM)
                        if "distance" in t else None)
                fold = self.fold(t["fold"], ip + ("fold",)) if "fold" in t else None
            else:
                ident = self.ident(item, ip)
                dist = fold = None
            if ident not in optics:
                raise self._dangling(ip, ident, optics, "an optic")
            optic = optics[ident]
            if optic.kind == "obstacle":
                raise self.fail(ip, f"\"{ident}\" is an obstacle; obstacles have no optical role and cannot be on a path")
            if fold is not None:
                if optic.kind not in ("mirror", "splitter"):
                    raise self.fail(ip + ("fold",), f"\"{ident}\" is a {optic.kind}; only a mirror or splitter folds the beam")
                # a splitter's own fold is its face angle for the path that orients it; another
                # path reflecting there makes its own fold (placement and trace check both)
                if optic.kind == "mirror" and optic.fold is not None and abs(optic.fold - fold) > 1e-9:
                    raise self.fail(ip + ("fold",), f"fold {fold:g} deg here contradicts fold = {optic.fold:g} deg "
                                                    f"on optic \"{ident}\" (line {optic.where('fold').line})")
            out.append(PathEntry(ident, self.loc(ip), dist, fold))
        return tuple(out)

    def cavity(self, value: dict, path: tuple, optics: dict) -> Cavity:
        t = self.table(value, path, CAVITY_KEYS, "a [[cavity]]")
        ident = self.ident(self.require(t, "id", path, "a [[cavity]]"), path + ("id",))
        what = f"cavity \"{ident}\""
        p = lambda k: path + (k,)  # noqa: E731
        kind = self.string(self.require(t, "kind", path, what), p("kind"), CAVITY_KINDS)
        entries = self.path_entries(self.require(t, "path", path, what), p("path"), optics, what)
        ids = [e.id for e in entries]
        if kind == "linear":
            if len(entries) < 2:
                raise self.fail(p("path"), f"{what}: a linear cavity needs at least two mirrors, end to end")
            for end in (0, len(entries) - 1):
                if optics[ids[end]].kind != "mirror":
                    raise self.fail(p("path") + (end,), f"{what}: a linear cavity ends on mirrors; \"{ids[end]}\" is a {optics[ids[end]].kind}")
        elif len(entries) < 3:
            raise self.fail(p("path"), f"{what}: a ring needs at least three elements in travel order")
        limit = 2 if kind == "linear" else 1
        for i, e in enumerate(entries):
            if ids.count(e.id) > 1 and (kind == "ring" or ids.count(e.id) > limit):
                raise self.fail(p("path") + (i,), f"{what}: \"{e.id}\" appears more than once in the path")
            if optics[e.id].kind in ("dump", "detector"):
                raise self.fail(p("path") + (i,), f"{what}: a {optics[e.id].kind} cannot be inside a cavity")
        f: dict[str, Any] = {}
        f["wavelength_nm"] = self.wavelength(self.require(t, "wavelength_nm", path, what), p("wavelength_nm"))
        if "heading" in t:
            f["heading"] = self.number(t["heading"], p("heading"), "degrees")
        for key in ("output_coupler", "input_coupler"):
            if key in t:
                f[key] = self.ident(t[key], p(key))
                if f[key] not in ids:
                    raise self.fail(p(key), f"{what}: {key} \"{f[key]}\" is not on the cavity path ({', '.join(ids)})")
                if optics[f[key]].kind not in ("mirror", "splitter"):
                    raise self.fail(p(key), f"{what}: {key} \"{f[key]}\" must be a mirror")
        for key in ("output_power_w", "input_power_w"):
            if key in t:
                f[key] = self.number(t[key], p(key), "W", low=0.0)
        if "loss" in t:
            f["loss"] = self.number(t["loss"], p("loss"), "", low=0.0, high=0.999999)
        for key, unit in (("rep_hz", "Hz"), ("pulse_s", "s")):
            if key in t:
                f[key] = self.number(t[key], p(key), unit, low=0.0, low_open=True,
                                     tiny=MIN_PULSE_S if key == "pulse_s" else MIN_MAGNITUDE)
        if "note" in t:
            f["note"] = self.string(t["note"], p("note"))
        active = "output_power_w" in f
        passive = "input_power_w" in f or "input_coupler" in f
        if active and passive:
            raise self.fail(path, f"{what}: give output_power_w (active laser) or input_coupler with input_power_w "
                                  "(passive cavity), not both")
        if active and "output_coupler" not in f:
            raise self.fail(p("output_power_w"), f"{what}: output_power_w needs output_coupler, the mirror it leaves by")
        if "input_power_w" in f and "input_coupler" not in f:
            raise self.fail(p("input_power_w"), f"{what}: input_power_w needs input_coupler, the mirror the light "
                                                "enters by")
        if "loss" in f and not passive:
            raise self.fail(p("loss"), f"{what}: 'loss' (extra round-trip loss) applies to passive cavities")
        if ("rep_hz" in f) != ("pulse_s" in f):
            raise self.fail(path, f"{what}: a pulsed cavity needs both rep_hz and pulse_s")
        return Cavity(ident, kind, self.loc(path), self.key_locs(path, t), entries, **f)

    def beam(self, value: dict, path: tuple, optics: dict, sources: dict, cavities: dict) -> Beam:
        t = self.table(value, path, BEAM_KEYS, "a [[beam]]")
        ident = self.ident(self.require(t, "id", path, "a [[beam]]"), path + ("id",))
        what = f"beam \"{ident}\""
        origin = self.ident(self.require(t, "from", path, what), path + ("from",))
        if origin not in sources and origin not in cavities:
            raise self._dangling(path + ("from",), origin, list(sources) + list(cavities), "a source or cavity")
        if origin in cavities and cavities[origin].output_coupler is None:
            raise self.fail(path + ("from",), f"{what} comes from cavity \"{origin}\", which names no output_coupler")
        entries = self.path_entries(self.require(t, "path", path, what), path + ("path",), optics, what)
        heading = self.number(t["heading"], path + ("heading",), "degrees") if "heading" in t else None
        if heading is not None and origin in cavities:
            raise self.fail(path + ("heading",), f"{what} leaves cavity \"{origin}\" through its output coupler, "
                                                 "which sets its direction; remove 'heading'")
        if heading is not None and origin in sources and (sources[origin].heading is not None or sources[origin].toward
                                                         or sources[origin].coaxial):
            raise self.fail(path + ("heading",), f"{what}: source \"{origin}\" already gives the direction")
        note = self.string(t["note"], path + ("note",)) if "note" in t else None
        return Beam(ident, origin, self.loc(path), self.key_locs(path, t), entries, heading, note)

    def waiver(self, value: dict, path: tuple) -> Waiver:
        t = self.table(value, path, WAIVER_KEYS, "a [[waiver]]")
        f = {}
        for key in ("rule", "target", "reason", "approved_by"):
            f[key] = self.string(self.require(t, key, path, "a [[waiver]]"), path + (key,))
            if not f[key].strip():
                raise self.fail(path + (key,), f"waiver '{key}' must not be empty")
        until = t.get("until")
        if until is not None and (isinstance(until, _dt.datetime) or not isinstance(until, _dt.date)):
            raise self.fail(path + ("until",), "waiver 'until' must be a TOML date such as 2027-03-31 (no quotes)")
        return Waiver(loc=self.loc(path), until=until, **f)

    def _check_placement_refs(self, optics: dict, cavities: dict, beams: dict) -> None:
        """A relatively placed optic may be placed once; a mirror folded in-path must be a mirror."""
        placed_at: dict[str, Loc] = {oid: o.where("at") for oid, o in optics.items() if o.at is not None}
        for holder in list(cavities.values()) + list(beams.values()):
            for e in holder.path:
                if e.distance is None:
                    continue
                if e.id in placed_at:
                    raise LayoutError(f"\"{e.id}\" is placed twice: here by distance and at line "
                                      f"{placed_at[e.id].line}; an optic may be placed once", e.loc)
                placed_at[e.id] = e.loc
