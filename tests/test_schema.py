"""The layout format's JSON Schema (``benchcheck schema``): every demo layout validates,
and what the loader rejects for a wrong key or type the schema rejects too."""

from __future__ import annotations

import datetime as dt
import json
import sys
from pathlib import Path

import pytest

from benchcheck import LayoutError, solve_text
from benchcheck.cli import main
from benchcheck.loader import OPTIC_KEYS, load_text
from benchcheck.schema import layout_schema, packaged_text, schema_text

if sys.version_info >= (3, 11):
    import tomllib
else:  # pragma: no cover
    import tomli as tomllib

jsonschema = pytest.importorskip("jsonschema")
ROOT = Path(__file__).resolve().parent.parent
DEMOS = sorted((ROOT / "layouts").rglob("*.toml"))


def as_json(value):
    """TOML as a language server hands it to a JSON Schema: dates become ISO strings."""
    if isinstance(value, dict):
        return {k: as_json(v) for k, v in value.items()}
    if isinstance(value, list):
        return [as_json(v) for v in value]
    if isinstance(value, (dt.date, dt.time)):
        return value.isoformat()
    return value


VALIDATOR = jsonschema.Draft7Validator(layout_schema(), format_checker=jsonschema.FormatChecker())


def schema_errors(text: str) -> list:
    return list(VALIDATOR.iter_errors(as_json(tomllib.loads(text))))


def test_the_schema_is_a_valid_draft_7_schema():
    jsonschema.Draft7Validator.check_schema(layout_schema())


def test_the_command_prints_the_packaged_schema(capsys):
    assert main(["schema"]) == 0
    out = capsys.readouterr().out
    assert json.loads(out) == layout_schema()
    assert out == schema_text() == packaged_text(), "regenerate: benchcheck schema > benchcheck/layout-format-1.schema.json"


@pytest.mark.parametrize("path", DEMOS, ids=lambda p: str(p.relative_to(ROOT)))
def test_every_demo_layout_validates(path):
    assert DEMOS, "the demo layouts are missing"
    assert schema_errors(path.read_text()) == []


BASE = """format = 1
[bench]
name = "schema test"
size = [600, 400]

[[optic]]
id = "M1"
kind = "mirror"
at = [100.0, 200.0]
roc = 500.0

[[optic]]
id = "M2"
kind = "mirror"
at = [400.0, 200.0]
reflectivity = 0.98

[[source]]
id = "S"
at = [50.0, 100.0]
heading = 0.0
wavelength_nm = 1064
power_w = 1.0
waist = 0.5

[[cavity]]
id = "c"
kind = "linear"
path = ["M1", "M2"]
wavelength_nm = 1064
"""


def test_the_base_layout_is_good_for_both():
    solve_text(BASE)
    assert schema_errors(BASE) == []


def edit(old: str, new: str, nth: int = 1) -> str:
    assert BASE.count(old) >= nth
    head, *rest = BASE.split(old)
    return old.join([head] + rest[:nth - 1]) + new + old.join(rest[nth - 1:])


BAD = {
    "unknown top-level key": BASE + "\ncolour = \"red\"\n",
    "unknown optic key": edit('roc = 500.0', 'rco = 500.0'),
    "a key of another kind": edit('roc = 500.0', 'roc = 500.0\nfocal_length = 100.0'),
    "unknown kind": edit('kind = "mirror"', 'kind = "mirorr"'),
    "number as a string": edit('roc = 500.0', 'roc = "500"'),
    "fraction above 1": edit('reflectivity = 0.98', 'reflectivity = 1.2'),
    "zero radius": edit('roc = 500.0', 'roc = 0'),
    "point of three": edit('at = [100.0, 200.0]', 'at = [100.0, 200.0, 0.0]'),
    "wrong format": edit('format = 1', 'format = 2'),
    "format missing": edit('format = 1\n', ''),
    "bench size negative": edit('size = [600, 400]', 'size = [600, -400]'),
    "unknown source key": edit('waist = 0.5', 'waist = 0.5\nwaist_mm = 0.5'),
    "source without waist": edit('waist = 0.5\n', ''),
    "wavelength out of range": edit('wavelength_nm = 1064\npower_w', 'wavelength_nm = 0.5\npower_w'),
    "unknown cavity kind": edit('kind = "linear"', 'kind = "bowtie"'),
    "path entry with an unknown key": edit('path = ["M1", "M2"]', 'path = ["M1", { id = "M2", dist = 5.0 }]'),
    "negative distance": edit('path = ["M1", "M2"]', 'path = ["M1", { id = "M2", distance = -5.0 }]'),
    "fold beyond 180": edit('roc = 500.0', 'roc = 500.0\nfold = 190.0'),
    "mount without size": edit('roc = 500.0', 'roc = 500.0\nmount = { width = 20.0 }'),
    "lidt without a threshold": edit('roc = 500.0', 'roc = 500.0\nlidt = { pulse_s = 1e-8 }'),
    "id with a space": edit('id = "M1"', 'id = "M 1"'),
    "waiver without reason": BASE + '\n[[waiver]]\nrule = "x"\ntarget = "M1"\napproved_by = "lead"\n',
    "waiver date as a string": BASE + ('\n[[waiver]]\nrule = "x"\ntarget = "M1"\nreason = "r"\napproved_by = "lead"\n'
                                       'until = "next spring"\n'),
}


@pytest.mark.parametrize("case", list(BAD))
def test_what_the_loader_rejects_the_schema_rejects(case):
    text = BAD[case]
    with pytest.raises(LayoutError):
        solve_text(text)
    assert schema_errors(text), f"the schema accepts: {case}"


@pytest.mark.parametrize("kind", list(OPTIC_KEYS))
def test_every_key_of_another_kind_is_rejected_for_each_kind(kind):
    """The per-kind key tables of the loader, key by key: a key that belongs only to other
    kinds is an error in the loader and in the schema."""
    others = sorted({k for ks in OPTIC_KEYS.values() for k in ks} - set(OPTIC_KEYS[kind]))
    required = {"lens": "focal_length = 100.0", "crystal": "length = 5.0\nindex = 1.5",
                "plate": "thickness = 1.0\nindex = 1.5", "aperture": "diameter = 10.0",
                "splitter": "reflectivity = 0.5", "obstacle": "size = [10.0, 10.0]"}.get(kind, "")
    head = f'format = 1\n[bench]\nname = "k"\nsize = [600, 400]\n[[optic]]\nid = "X"\nkind = "{kind}"\n' \
           f'at = [10.0, 10.0]\n{required}\n'
    load_text(head)
    assert schema_errors(head) == []
    for key in others:
        text = head + f"{key} = 1.0\n"
        with pytest.raises(LayoutError):
            load_text(text)
        assert schema_errors(text), f"the schema accepts '{key}' on a {kind}"
