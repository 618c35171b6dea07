"""Tiny helpers for the reference tests: write a layout as TOML text, solve it through the
public API and pick values out of the JSON beam table (docs/design.md §6).

Nothing here computes optics; the reference values live in the test files, each beside
its source.
"""

from __future__ import annotations

import json
import math

from benchcheck import beam_table, solve_text

#: Speed of light in vacuum, m/s: exact by the SI definition of the metre.
C_M_S = 299_792_458.0


def _value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        if not math.isfinite(v):
            raise ValueError(f"TOML layouts take finite numbers, not {v}")
        return repr(v)
    if isinstance(v, str):
        return json.dumps(v)
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{k} = {_value(x)}" for k, x in v.items()) + " }"
    raise TypeError(f"cannot write {type(v).__name__} as TOML")


def _table(header: str, fields: dict) -> str:
    lines = [f"[[{header}]]"]
    lines += [f"{k} = {_value(v)}" for k, v in fields.items() if v is not None]
    return "\n".join(lines) + "\n"


def optic(ident: str, kind: str, **fields) -> str:
    return _table("optic", {"id": ident, "kind": kind, **fields})


def mirror(ident: str, roc: float | None = None, **fields) -> str:
    """A mirror; ``roc=None`` is a flat mirror (the key is left out)."""
    return optic(ident, "mirror", roc=roc, **fields)


def source(ident: str, **fields) -> str:
    return _table("source", {"id": ident, **fields})


def cavity(ident: str, kind: str, path: list, wavelength_nm: float = 1064.0, **fields) -> str:
    return _table("cavity", {"id": ident, "kind": kind, "path": path, "wavelength_nm": wavelength_nm, **fields})


def beam(ident: str, origin: str, path: list, **fields) -> str:
    return _table("beam", {"id": ident, "from": origin, "path": path, **fields})


def rel(ident: str, distance: float | None = None, fold: float | None = None) -> dict:
    """A path entry placed relatively: ``{ id = ..., distance = ..., fold = ... }``."""
    out: dict = {"id": ident}
    if distance is not None:
        out["distance"] = float(distance)
    if fold is not None:
        out["fold"] = float(fold)
    return out


def layout(*tables: str, size=(20000.0, 20000.0), name: str = "reference test") -> str:
    head = f"format = 1\n\n[bench]\nname = {_value(name)}\nsize = {_value([float(x) for x in size])}\n\n"
    return head + "\n".join(tables)


def solved(text: str) -> dict:
    """The JSON beam table of a layout given as TOML text."""
    return beam_table(solve_text(text))


def cavity_entry(table: dict, ident: str | None = None) -> dict:
    cavs = table["cavities"]
    return cavs[0] if ident is None else next(c for c in cavs if c["id"] == ident)


def beam_entry(table: dict, ident: str | None = None) -> dict:
    beams = table["beams"]
    return beams[0] if ident is None else next(b for b in beams if b["id"] == ident)


def hit(entry: dict, optic_id: str) -> dict:
    return next(h for h in entry["hits"] if h["optic"] == optic_id)


def waists(entry: dict, plane: str) -> list[dict]:
    return [w for w in entry["waists"] if w["plane"] == plane]


def two_mirror(r1: float | None, r2: float | None, d: float, wavelength_nm: float = 1064.0,
               start=(1000.0, 10000.0), **cavity_fields) -> str:
    """Linear two-mirror cavity M1 -> M2 along +x, ``d`` mm apart; ``None`` is a flat mirror."""
    return layout(
        mirror("M1", r1, at=list(start)),
        mirror("M2", r2),
        cavity("cav", "linear", ["M1", rel("M2", d)], wavelength_nm, heading=0.0, **cavity_fields),
    )
