"""The JSON Schema of layout format 1, for editors that validate and complete TOML.

It is built from the loader's own key tables (``loader.OPTIC_KINDS``, ``OPTIC_KEYS``,
``SOURCE_KEYS`` ...) and limits (``MAX_EXTENT_MM``, ``WAVELENGTH_RANGE_NM`` ...), so a key
the loader learns without a description here fails to build rather than drifting away
silently. The loader stays the judge: the schema catches what an editor can show while
typing (unknown keys, wrong types, out-of-range numbers, missing keys), not what needs the
whole bench (dangling ids, geometry).
"""

from __future__ import annotations

import json
from importlib import resources

from . import loader as L
from . import tolspec

SCHEMA_DIALECT = "http://json-schema.org/draft-07/schema#"
#: The generated schema as shipped inside the package (kept equal by a test).
PACKAGED_NAME = "layout-format-1.schema.json"


# -- value shapes ----------------------------------------------------------------------

def _num(desc: str, unit: str = "", *, low=None, low_open=False, high=None, nonzero=False) -> dict:
    out: dict = {"type": "number", "description": desc + (f" ({unit})" if unit else "")}
    if low is not None:
        out["exclusiveMinimum" if low_open else "minimum"] = low
    if high is not None:
        out["maximum"] = high
    if nonzero:
        out["not"] = {"const": 0}
    return out


def _str(desc: str, choices=None) -> dict:
    out: dict = {"type": "string", "description": desc}
    if choices:
        out["enum"] = list(choices)
    return out


def _ident(desc: str) -> dict:
    pattern = L._ID.pattern      # the loader full-matches it; a JSON Schema pattern searches
    anchored = pattern if pattern.startswith("^") else f"^(?:{pattern})$"
    return {"type": "string", "pattern": anchored, "description": desc}


def _point(desc: str, positive: bool = False) -> dict:
    item = (_num("mm", low=0.0, low_open=True, high=L.MAX_EXTENT_MM) if positive
            else _num("mm", low=-L.MAX_EXTENT_MM, high=L.MAX_EXTENT_MM))
    item.pop("description")
    return {"type": "array", "items": item, "minItems": 2, "maxItems": 2, "description": desc}


def _polygon(desc: str) -> dict:
    return {"type": "array", "items": _point("[x, y] in mm"), "minItems": 3, "description": desc}


def _fraction(desc: str) -> dict:
    frac = {"type": "number", "minimum": 0.0, "maximum": 1.0}
    return {"description": desc + ": a fraction 0..1, or a table keyed by wavelength in nm, { 780 = 0.9998 }",
            "anyOf": [frac, {"type": "object", "minProperties": 1, "additionalProperties": False,
                             "patternProperties": {r"^[0-9]+(\.[0-9]+)?$": frac}}]}


def _focal(desc: str) -> dict:
    one = {"type": "number", "not": {"const": 0}}
    return {"description": desc + " (mm): one focal length, or a range [f1, f2]",
            "anyOf": [one, {"type": "array", "items": one, "minItems": 1, "maxItems": 2}]}


def _wavelength(desc: str) -> dict:
    lo, hi = L.WAVELENGTH_RANGE_NM
    return _num(desc, "nm", low=lo, high=hi)


def _table(keys, specs: dict, desc: str, required=()) -> dict:
    missing = [k for k in keys if k not in specs]
    if missing:
        raise KeyError(f"the schema has no description of {', '.join(missing)} ({desc}); add it to benchcheck/schema.py")
    out = {"type": "object", "description": desc, "properties": {k: specs[k] for k in keys},
           "additionalProperties": False}
    if required:
        out["required"] = list(required)
    return out


# -- what each key means, by the table it is in ------------------------------------------

_NOTE = _str("free text, ignored by the checks")

_OPTIC = {
    "id": _ident("unique id of the optic, e.g. \"M1\""),
    "kind": _str("what the optic is", L.OPTIC_KINDS),
    "at": _point("[x, y] in mm: where the beam meets the surface (a crystal's or plate's centre)"),
    "diameter": _num("clear aperture diameter", "mm", low=0.0, low_open=True),
    "mount": _table(L.MOUNT_KEYS, {"size": _point("[width, depth] of the mount in mm", positive=True)},
                    "footprint on the table: width along the face, depth behind it", required=("size",)),
    "lidt": {**_table(L.LIDT_KEYS, {
        "w_cm": _num("CW damage threshold as linear power density", "W/cm", low=0.0, low_open=True),
        "w_cm2": _num("CW damage threshold as intensity", "W/cm^2", low=0.0, low_open=True),
        "j_cm2": _num("pulsed damage threshold as fluence", "J/cm^2", low=0.0, low_open=True),
        "pulse_s": _num("pulse length the fluence threshold was measured at", "s", low=0.0, low_open=True),
        "wavelength_nm": _num("wavelength the threshold was measured at", "nm", low=0.0, low_open=True),
    }, "laser-induced damage threshold: w_cm, w_cm2, or j_cm2 with pulse_s"),
        "anyOf": [{"required": ["w_cm"]}, {"required": ["w_cm2"]}, {"required": ["j_cm2", "pulse_s"]}]},
    "note": _NOTE,
    "tolerance": _table(tuple(tolspec.KEYS), {
        k.name: ({"type": "boolean", "description": k.help} if isinstance(k.default, bool)
                 else _num(k.help, k.unit, low=0.0))
        for k in tolspec.KEYS.values()},
        "this optic's own build tolerances over the lab's [tolerances] (only the keys that apply to its kind)"),
    "roc": _num("radius of curvature: > 0 concave, < 0 convex, absent = flat", "mm", nonzero=True),
    "reflectivity": _fraction("reflectivity"),
    "absorption": _fraction("absorption (single pass)"),
    "fold": _num("full angle between arriving and leaving beam, + counter-clockwise; a cross-check of the "
                 "geometry (a splitter's face angle)", "degrees", low=-180.0, high=180.0),
    "substrate": _table(L.SUBSTRATE_KEYS, {
        "thickness": _num("substrate thickness", "mm", low=0.0),
        "index": _num("substrate refractive index", low=1.0),
    }, "the glass behind the coated face, seen by a beam passing through"),
    "focal_length": _num("focal length, negative diverges", "mm", nonzero=True),
    "length": _num("length along the beam inside", "mm", low=0.0, low_open=True),
    "index": _num("refractive index", low=1.0),
    "group_index": _num("group index, for the FSR and the round-trip time (default: index)", low=1.0),
    "faces": _str("cut of the faces", L.FACES),
    "thermal_lens": _focal("thermal lens, the same in both planes"),
    "thermal_lens_t": _focal("thermal lens, tangential plane (with thermal_lens_s)"),
    "thermal_lens_s": _focal("thermal lens, sagittal plane (with thermal_lens_t)"),
    "thickness": _num("plate thickness", "mm", low=0.0, low_open=True),
    "aoi": _num("angle of incidence", "degrees", low=0.0, high=89.0),
    "max_power_w": _num("power rating", "W", low=0.0, low_open=True),
    "polygon": _polygon("outline [[x, y], ...] in mm"),
    "size": _point("[w, d] in mm, with at and angle", positive=True),
    "angle": _num("rotation of the outline", "degrees"),
}
#: Keys an optic of each kind must have besides id and kind.
_OPTIC_REQUIRED = {
    "lens": ("focal_length",), "crystal": ("length", "index"), "plate": ("thickness", "index"),
    "aperture": ("diameter",), "splitter": ("reflectivity",),
}

_SOURCE = {
    "id": _ident("unique id of the source"),
    "at": _point("[x, y] in mm where the beam starts"),
    "toward": _ident("id of the optic the source points at (or heading)"),
    "heading": _num("direction, counter-clockwise from +x (or toward)", "degrees"),
    "wavelength_nm": _wavelength("vacuum wavelength"),
    "power_w": _num("average power", "W", low=0.0),
    "pulse_energy_j": _num("pulse energy (with pulse_s)", "J", low=0.0, low_open=True),
    "pulse_s": _num("pulse length", "s", low=0.0, low_open=True),
    "rep_hz": _num("repetition rate", "Hz", low=0.0, low_open=True),
    "waist": _num("1/e^2 waist radius, both planes", "mm", low=0.0, low_open=True),
    "waist_t": _num("1/e^2 waist radius, tangential", "mm", low=0.0, low_open=True),
    "waist_s": _num("1/e^2 waist radius, sagittal", "mm", low=0.0, low_open=True),
    "waist_at": _num("waist position along the beam from the source; negative = behind it", "mm"),
    "m2": _num("beam quality M^2, both planes", low=1.0),
    "m2_t": _num("beam quality M^2, tangential", low=1.0),
    "m2_s": _num("beam quality M^2, sagittal", low=1.0),
    "note": _NOTE,
    "coaxial": _table(L.COAXIAL_KEYS, {
        "through": _ident("the cavity mirror the source's beam enters through"),
        "toward": _ident("the next optic of the cavity leg it runs along (may be left out at an end mirror)"),
        "distance": _num("how far behind the mirror the source stands", "mm", low=0.0, low_open=True),
    }, "stand the source on the extension of a cavity leg, behind the mirror it enters through "
       "(instead of at and toward/heading)", required=("through", "distance")),
}

_PATH_ENTRY = {
    "id": _ident("optic id"),
    "distance": _num("distance from the previous element along the beam", "mm", low=0.0, low_open=True,
                     high=L.MAX_EXTENT_MM),
    "fold": _num("fold at this mirror, + counter-clockwise", "degrees", low=-180.0, high=180.0),
}
_PATH = {"type": "array", "minItems": 1, "description": "optic ids in travel order, or { id, distance, fold } "
         "tables that place an optic relative to the previous one",
         "items": {"anyOf": [_ident("optic id"), _table(L.PATH_ENTRY_KEYS, _PATH_ENTRY, "a relatively placed optic",
                                                        required=("id",))]}}

_CAVITY = {
    "id": _ident("unique id of the cavity"),
    "kind": _str("\"linear\": end mirror ... end mirror; \"ring\": the loop in travel order", L.CAVITY_KINDS),
    "path": _PATH,
    "wavelength_nm": _wavelength("vacuum wavelength"),
    "heading": _num("first direction of a relatively placed path", "degrees"),
    "output_coupler": _ident("mirror the laser output leaves by"),
    "output_power_w": _num("output power of an active laser", "W", low=0.0),
    "input_coupler": _ident("mirror a passive cavity is seeded through"),
    "input_power_w": _num("seed power of a passive cavity", "W", low=0.0),
    "loss": _num("extra round-trip loss of a passive cavity", low=0.0, high=0.999999),
    "rep_hz": _num("repetition rate of a pulsed laser", "Hz", low=0.0, low_open=True),
    "pulse_s": _num("pulse length of a pulsed laser", "s", low=0.0, low_open=True),
    "note": _NOTE,
}

_BEAM = {
    "id": _ident("unique id of the beam"),
    "from": _ident("a source id, or a cavity id (leaves through its output coupler)"),
    "path": _PATH,
    "heading": _num("first direction, where the source gives none", "degrees"),
    "note": _NOTE,
}

_ZONE = {
    "id": _ident("unique id of the zone"),
    "kind": _str("\"keepout\": no beam may enter; \"enclosure\": beams inside are contained", L.ZONE_KINDS),
    "polygon": _polygon("outline [[x, y], ...] in mm"),
    "note": _NOTE,
}

_WAIVER = {
    "rule": {"type": "string", "minLength": 1, "description": "rule id the waiver applies to"},
    "target": {"type": "string", "minLength": 1, "description": "id the waived findings name"},
    "reason": {"type": "string", "minLength": 1, "description": "why the exception is accepted"},
    "approved_by": {"type": "string", "minLength": 1, "description": "who accepted it"},
    "until": {"type": "string", "format": "date",
              "description": "TOML date (no quotes), e.g. 2027-03-31; after it the waiver no longer applies"},
}

_BENCH = {
    "name": _str("name of the bench"),
    "size": _point("[width, height] of the table in mm; origin at the lower-left corner", positive=True),
    "note": _NOTE,
}


def _optic_schema() -> dict:
    union = sorted({k for keys in L.OPTIC_KEYS.values() for k in keys}, key=list(_OPTIC).index)
    base = _table(union, _OPTIC, "an optic, a dump or detector, or an obstacle", required=("id", "kind"))
    base["additionalProperties"] = True          # the kind's own table below closes it
    base["allOf"] = [
        {"if": {"properties": {"kind": {"const": kind}}, "required": ["kind"]},
         "then": _table(keys, _OPTIC, f"a {kind}", required=_OPTIC_REQUIRED.get(kind, ()))}
        for kind, keys in L.OPTIC_KEYS.items()
    ]
    return base


def _array(item: dict, desc: str) -> dict:
    return {"type": "array", "items": item, "description": desc}


def layout_schema() -> dict:
    """The schema as a dictionary (JSON Schema draft-07, which TOML language servers read)."""
    source = _table(L.SOURCE_KEYS, _SOURCE, "a light source", required=("id", "wavelength_nm"))
    source["allOf"] = [{"anyOf": [{"required": ["waist"]}, {"required": ["waist_t", "waist_s"]}]},
                       {"anyOf": [{"required": ["at"]}, {"required": ["coaxial"]}]}]
    top = {
        "format": {"const": L.FORMAT_VERSION, "description": f"layout format version; write format = {L.FORMAT_VERSION}"},
        "bench": _table(L.BENCH_KEYS, _BENCH, "the table", required=("name", "size")),
        "zone": _array(_table(L.ZONE_KEYS, _ZONE, "an area with a meaning for safety",
                              required=("id", "kind", "polygon")), "[[zone]] tables"),
        "optic": _array(_optic_schema(), "[[optic]] tables"),
        "source": _array(source, "[[source]] tables"),
        "cavity": _array(_table(L.CAVITY_KEYS, _CAVITY, "a resonator",
                                required=("id", "kind", "path", "wavelength_nm")), "[[cavity]] tables"),
        "beam": _array(_table(L.BEAM_KEYS, _BEAM, "a beam from a source or out of a cavity",
                              required=("id", "from", "path")), "[[beam]] tables"),
        "waiver": _array(_table(L.WAIVER_KEYS, _WAIVER, "a reviewed, visible exception",
                                required=("rule", "target", "reason", "approved_by")), "[[waiver]] tables"),
    }
    doc = _table(L.TOP_KEYS, top, f"benchcheck optical bench layout, format {L.FORMAT_VERSION}. Lengths in mm, "
                 "angles in degrees; other units are in the key names.", required=("format", "bench"))
    return {"$schema": SCHEMA_DIALECT, "title": f"benchcheck layout format {L.FORMAT_VERSION}",
            **doc}


def schema_text() -> str:
    return json.dumps(layout_schema(), indent=2, ensure_ascii=False) + "\n"


def packaged_text() -> str:
    """The schema file shipped in the package (what editors can point at)."""
    return resources.files("benchcheck").joinpath(PACKAGED_NAME).read_text(encoding="utf-8")
