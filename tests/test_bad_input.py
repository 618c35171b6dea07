"""The bad-input contract of ``benchcheck beams`` (docs/design.md §3, format 1).

Any malformed layout must end with exit status 2 and ONE error line on stderr of the form
``FILE:LINE:COL: error: MESSAGE`` that names the offending key or table and says what was
expected; never a Python traceback, never an "internal error", and the layout file is left
byte-for-byte as it was.  Good input exits 0.

Every malformed layout in the table below is the small valid layout ``BASE`` with exactly
one change.  The expected line is the line of the key (or table header) that is wrong in
the *changed* file; the fragments are pieces the message must contain.

Where there is no line to point at (a missing file, an empty folder) the error keeps the
same shape without the position: ``FILE: error: MESSAGE``.
"""

from __future__ import annotations

import contextlib
import io
import os
import random
import re
import subprocess
import sys
import warnings
from dataclasses import dataclass
from pathlib import Path

import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from benchcheck.cli import main

REPO = Path(__file__).resolve().parents[1]
DEMO_LAYOUTS = sorted((REPO / "layouts").glob("*.toml"))

# A small valid layout touching every section of format 1.  Line numbers in CASES refer
# to this text (after the one change each case makes): keep it as it is, or fix them all.
BASE = """\
# Base layout for the bad-input tests: small, valid, and touching every section.
format = 1

[bench]
name = "Bad-input base bench"
size = [800, 300]

[[zone]]
id = "aisle"
kind = "keepout"
polygon = [[0, 280], [800, 280], [800, 300], [0, 300]]

[[optic]]
id = "HR"
kind = "mirror"
at = [100.0, 150.0]
roc = 300.0
reflectivity = 0.9995
diameter = 25.4
mount = { size = [30.0, 20.0] }
lidt = { w_cm = 1.0e5 }

[[optic]]
id = "X1"
kind = "crystal"
length = 10.0
index = 1.8
faces = "normal"
thermal_lens = [400.0, 1.0e6]

[[optic]]
id = "OC"
kind = "mirror"
reflectivity = { 1064 = 0.95 }
diameter = 25.4
substrate = { thickness = 6.35, index = 1.45 }

[[optic]]
id = "L1"
kind = "lens"
focal_length = 200.0

[[optic]]
id = "D1"
kind = "dump"
diameter = 25.0
max_power_w = 10.0

[[optic]]
id = "D2"
kind = "dump"
diameter = 25.0

[[optic]]
id = "POST"
kind = "obstacle"
at = [400.0, 40.0]
size = [12.0, 12.0]

[[source]]
id = "PROBE"
at = [50.0, 250.0]
heading = 0.0
wavelength_nm = 633
power_w = 0.001
waist = 0.4
m2 = 1.0

[[cavity]]
id = "laser"
kind = "linear"
heading = 0.0
path = ["HR", { id = "X1", distance = 50.0 }, { id = "OC", distance = 150.0 }]
wavelength_nm = 1064
output_coupler = "OC"
output_power_w = 1.0

[[beam]]
id = "out"
from = "laser"
path = [{ id = "L1", distance = 100.0 }, { id = "D1", distance = 200.0 }]

[[beam]]
id = "probe"
from = "PROBE"
path = [{ id = "D2", distance = 300.0 }]

[[waiver]]
rule = "aperture-clipping"
target = "OC"
reason = "test case"
approved_by = "bench lead"
until = 2030-01-01
"""

ERROR_LINE = re.compile(r"^(?P<file>.+?):(?P<line>\d+):(?P<col>\d+): error: (?P<msg>\S.*)$")
HUGE_INT = "1" + "0" * 400  # a valid TOML integer that no float can hold


def one_change(old: str, new: str) -> str:
    """BASE with the single occurrence of ``old`` replaced by ``new``."""
    assert BASE.count(old) == 1, f"{old!r} occurs {BASE.count(old)} times in BASE"
    return BASE.replace(old, new)


@dataclass(frozen=True)
class Case:
    id: str
    text: str
    line: int
    fragments: tuple[str, ...]


def case(ident: str, old: str, new: str, line: int, *fragments: str) -> Case:
    return Case(ident, one_change(old, new), line, fragments)


CASES = [
    # -- TOML syntax ------------------------------------------------------------------
    case("syntax-unterminated-string", 'name = "Bad-input base bench"', 'name = "Bad-input base bench', 5,
         "TOML syntax", "string"),
    case("syntax-missing-value", "roc = 300.0", "roc = ", 17, "TOML syntax"),
    case("syntax-two-decimal-points", "roc = 300.0", "roc = 300.0.0", 17, "TOML syntax"),
    case("syntax-non-ascii-bare-key", "roc = 300.0", "r\u00f6c = 300.0", 17, "TOML syntax"),
    case("syntax-unclosed-header", "[[cavity]]", "[[cavity]", 69, "TOML syntax"),
    case("syntax-unclosed-inline-table", "lidt = { w_cm = 1.0e5 }", "lidt = { w_cm = 1.0e5 ", 21,
         "TOML syntax", "inline table"),
    case("syntax-bad-date", "until = 2030-01-01", "until = 2030-13-01", 93, "TOML syntax"),
    case("syntax-duplicate-key", "roc = 300.0", "roc = 300.0\nroc = 200.0", 18, "roc"),
    case("syntax-duplicate-table", '[[optic]]\nid = "X1"', '[bench]\n[[optic]]\nid = "X1"', 23, "bench"),
    # -- unknown keys, with "did you mean" where close ------------------------------------
    case("unknown-top-level-key", "format = 1", "formta = 1", 2, "'formta'", "did you mean 'format'"),
    case("unknown-table-header", "[[source]]", "[[sources]]", 60, "'sources'", "did you mean 'source'"),
    case("unknown-optic-key", "roc = 300.0", "rco = 300.0", 17, "'rco'", "did you mean 'roc'"),
    case("unknown-bench-key", "size = [800, 300]", "sise = [800, 300]", 6, "did you mean 'size'"),
    case("unknown-source-key", "wavelength_nm = 633", "wavelenght_nm = 633", 64, "did you mean 'wavelength_nm'"),
    case("unknown-cavity-key", 'output_coupler = "OC"', 'outputcoupler = "OC"', 75,
         "did you mean 'output_coupler'"),
    case("unknown-zone-key", "polygon = [[0, 280]", "polgon = [[0, 280]", 11, "did you mean 'polygon'"),
    case("unknown-mount-key", "mount = { size = [30.0, 20.0] }", "mount = { sizes = [30.0, 20.0] }", 20,
         "did you mean 'size'"),
    case("unknown-lidt-key", "lidt = { w_cm = 1.0e5 }", "lidt = { wcm = 1.0e5 }", 21, "did you mean 'w_cm'"),
    case("unknown-key-in-subtable-header", "lidt = { w_cm = 1.0e5 }", "[optic.lidt]\nwcm = 1.0e5", 22,
         "did you mean 'w_cm'"),
    case("unknown-path-entry-key", '{ id = "X1", distance = 50.0 }', '{ id = "X1", distanse = 50.0 }', 73,
         "did you mean 'distance'"),
    case("unknown-waiver-key", 'approved_by = "bench lead"', 'aproved_by = "bench lead"', 92,
         "did you mean 'approved_by'"),
    case("unknown-key-no-close-match", 'kind = "lens"', 'kind = "lens"\ncolour = "red"', 41,
         "unknown key 'colour'"),
    case("key-of-another-kind", "roc = 300.0", "focal_length = 300.0", 17, "'focal_length'",
         "does not apply to a mirror"),
    # -- wrong types -----------------------------------------------------------------------
    case("number-as-string", "roc = 300.0", 'roc = "300"', 17, "roc", "must be a number"),
    case("number-as-date", "roc = 300.0", "roc = 2020-01-01", 17, "roc", "must be a number"),
    case("number-as-table", "diameter = 25.4\nmount", "diameter = { mm = 25.4 }\nmount", 19, "diameter",
         "must be a number"),
    case("number-as-boolean", "heading = 0.0\npath", "heading = true\npath", 72, "heading", "boolean"),
    case("point-as-string", "at = [100.0, 150.0]", 'at = "100, 150"', 16, "at", "[x, y]"),
    case("point-one-item", "at = [100.0, 150.0]", "at = [100.0]", 16, "at", "[x, y]"),
    case("point-nested-arrays", "at = [400.0, 40.0]", "at = [[[[[400.0]]]]]", 57, "at", "[x, y]"),
    case("size-item-string", "size = [800, 300]", 'size = [800, "300"]', 6, "size", "must be a number"),
    case("kind-typo", 'kind = "mirror"\nat', 'kind = "miror"\nat', 15, "kind", 'did you mean "mirror"'),
    case("kind-not-a-string", 'kind = "crystal"', "kind = 3", 25, "kind", "must be a string"),
    case("bench-name-not-a-string", 'name = "Bad-input base bench"', "name = 5", 5, "name", "must be a string"),
    case("path-string", 'path = ["HR", { id = "X1", distance = 50.0 }, { id = "OC", distance = 150.0 }]',
         'path = "HR X1 OC"', 73, "path", "non-empty array"),
    case("path-empty", 'path = [{ id = "D2", distance = 300.0 }]', "path = []", 86, "path", "non-empty array"),
    case("waiver-date-as-string", "until = 2030-01-01", 'until = "2030-01-01"', 93, "until", "TOML date"),
    case("array-of-tables-as-table", "[[waiver]]", "[waiver]", 88, "[[waiver]]"),
    case("bench-as-array-of-tables", "[bench]", "[[bench]]", 4, "bench", "must be a table"),
    case("id-with-space", 'id = "X1"\nkind', 'id = "X 1"\nkind', 24, "id", "must be an id"),
    case("id-empty", 'id = "PROBE"', 'id = ""', 61, "id", "must be an id"),
    # -- NaN and infinity ---------------------------------------------------------------------
    case("nan", "roc = 300.0", "roc = nan", 17, "roc", "must be a finite number"),
    case("inf", "diameter = 25.4\nmount", "diameter = inf\nmount", 19, "diameter", "must be a finite number"),
    case("minus-inf", "heading = 0.0\nwavelength_nm", "heading = -inf\nwavelength_nm", 63, "heading",
         "must be a finite number"),
    case("nan-in-wavelength-table", "reflectivity = { 1064 = 0.95 }", "reflectivity = { 1064 = nan }", 34,
         "reflectivity", "must be a finite number"),
    case("nan-in-point", "at = [400.0, 40.0]", "at = [400.0, nan]", 57, "at", "must be a finite number"),
    # -- negative or zero lengths -----------------------------------------------------------
    case("length-negative", "length = 10.0", "length = -10.0", 26, "length", "must be > 0"),
    case("length-zero", "length = 10.0", "length = 0.0", 26, "length", "must be > 0"),
    case("diameter-zero", "diameter = 25.0\nmax_power_w", "diameter = 0\nmax_power_w", 46, "diameter",
         "must be > 0"),
    case("distance-negative", '{ id = "D2", distance = 300.0 }', '{ id = "D2", distance = -300.0 }', 86,
         "distance", "must be > 0"),
    case("distance-zero", '{ id = "L1", distance = 100.0 }', '{ id = "L1", distance = 0 }', 81, "distance",
         "must be > 0"),
    case("mount-size-negative", "size = [30.0, 20.0]", "size = [30.0, -20.0]", 20, "size", "must be > 0"),
    case("bench-size-zero", "size = [800, 300]", "size = [0, 300]", 6, "size", "must be > 0"),
    case("obstacle-size-negative", "size = [12.0, 12.0]", "size = [-12.0, 12.0]", 58, "size", "must be > 0"),
    case("waist-zero", "waist = 0.4", "waist = 0", 66, "waist", "must be > 0"),
    case("wavelength-negative", "wavelength_nm = 1064", "wavelength_nm = -1064", 74, "wavelength_nm",
         "must be > 0"),
    case("substrate-thickness-negative", "thickness = 6.35", "thickness = -6.35", 36, "thickness", "must be >= 0"),
    case("roc-zero", "roc = 300.0", "roc = 0", 17, "roc", "must not be zero"),
    case("focal-length-zero", "focal_length = 200.0", "focal_length = 0.0", 41, "focal_length",
         "must not be zero"),
    case("thermal-lens-zero", "thermal_lens = [400.0, 1.0e6]", "thermal_lens = [0.0, 1.0e6]", 29,
         "thermal_lens", "must not be zero"),
    case("power-negative", "output_power_w = 1.0", "output_power_w = -1.0", 76, "output_power_w",
         "must be >= 0"),
    # -- out-of-range fractions and other ranges ------------------------------------------------
    case("fraction-above-one", "reflectivity = 0.9995", "reflectivity = 1.5", 18, "reflectivity", "must be <= 1"),
    case("fraction-negative", "reflectivity = 0.9995", "reflectivity = -0.1", 18, "reflectivity",
         "must be >= 0"),
    case("fraction-table-above-one", "reflectivity = { 1064 = 0.95 }", "reflectivity = { 1064 = 1.2 }", 34,
         "reflectivity", "must be <= 1"),
    case("fraction-table-bad-wavelength", "reflectivity = { 1064 = 0.95 }", "reflectivity = { green = 0.95 }", 34,
         "reflectivity", "wavelengths in nm"),
    case("reflectivity-plus-absorption", "reflectivity = 0.9995\n", "reflectivity = 0.9995\nabsorption = 0.01\n",
         19, "absorption", "exceed 1"),
    case("fold-out-of-range", "roc = 300.0\n", "roc = 300.0\nfold = 270.0\n", 18, "fold", "beyond +-178"),
    case("m2-below-one", "m2 = 1.0", "m2 = 0.5", 67, "m2", "must be >= 1"),
    case("index-below-one", "index = 1.8", "index = 0.5", 27, "index", "must be >= 1"),
    case("substrate-index-below-one", "index = 1.45", "index = 0.5", 36, "index", "must be >= 1"),
    case("faces-typo", 'faces = "normal"', 'faces = "nomral"', 28, "faces", 'did you mean "normal"'),
    # -- format and [bench] -----------------------------------------------------------------
    case("format-2", "format = 1", "format = 2", 2, "unsupported format 2"),
    case("format-as-string", "format = 1", 'format = "1"', 2, "unsupported format"),
    case("format-as-float", "format = 1", "format = 1.0", 2, "unsupported format"),
    case("format-missing", "format = 1\n", "", 1, "format = 1"),
    case("bench-missing", '[bench]\nname = "Bad-input base bench"\nsize = [800, 300]\n', "", 1, "[bench]"),
    # -- duplicated ids ---------------------------------------------------------------------
    case("duplicate-optic-id", 'id = "OC"\nkind', 'id = "HR"\nkind', 32, '"HR"', "used twice", "line 14"),
    case("duplicate-id-across-sections", 'id = "PROBE"', 'id = "POST"', 61, '"POST"', "used twice"),
    case("duplicate-beam-id", 'id = "probe"', 'id = "out"', 84, '"out"', "used twice"),
    # -- dangling ids -----------------------------------------------------------------------
    case("dangling-path-id", 'path = ["HR", ', 'path = ["HRR", ', 73, '"HRR"', 'did you mean "HR"'),
    case("dangling-beam-origin", 'from = "laser"', 'from = "lazer"', 80, '"lazer"', 'did you mean "laser"'),
    case("dangling-toward", "heading = 0.0\nwavelength_nm", 'toward = "D9"\nwavelength_nm', 63, '"D9"',
         "not an optic"),
    case("output-coupler-off-path", 'output_coupler = "OC"', 'output_coupler = "D1"', 75, "output_coupler",
         "not on the cavity path"),
    case("obstacle-on-path", '{ id = "D2", distance', '{ id = "POST", distance', 86, '"POST"', "obstacle"),
    case("optic-without-position", 'path = [{ id = "D2", distance = 300.0 }]', 'path = ["D1"]', 49, '"D2"',
         "no position"),
    case("optic-placed-twice", 'id = "OC"\nkind = "mirror"\n', 'id = "OC"\nkind = "mirror"\nat = [300.0, 150.0]\n',
         74, '"OC"', "placed twice"),
    # -- huge numbers -----------------------------------------------------------------------
    case("huge-integer", "roc = 300.0", f"roc = {HUGE_INT}", 17, "roc"),
    case("huge-distance", '{ id = "L1", distance = 100.0 }', '{ id = "L1", distance = 1e308 }', 81, "distance"),
    case("huge-position", "at = [100.0, 150.0]", "at = [1e308, 150.0]", 16, "at"),
    case("huge-diameter", "diameter = 25.0\nmax_power_w", "diameter = 1e308\nmax_power_w", 46, "diameter"),
    case("huge-waist", "waist = 0.4", "waist = 1e308", 66, "waist"),
    # ... and their reciprocals: accepted, they overflow the numerics further on
    case("tiny-waist", "waist = 0.4", "waist = 1e-308", 66, "waist"),
    case("tiny-roc", "roc = 300.0", "roc = 1e-308", 17, "roc"),
    case("tiny-focal-length", "focal_length = 200.0", "focal_length = 1e-308", 41, "focal_length"),
    case("tiny-thermal-lens", "thermal_lens = [400.0, 1.0e6]", "thermal_lens = [1e-308, 1.0e6]", 29,
         "thermal_lens"),
    case("tiny-wavelength", "wavelength_nm = 633", "wavelength_nm = 1e-308", 64, "wavelength_nm"),
    # -- deeply nested arrays ------------------------------------------------------------------
    case("deeply-nested-array", "at = [400.0, 40.0]", "at = " + "[" * 5000 + "]" * 5000, 57, "at"),
    # -- a source placed on a cavity leg's line ('coaxial') --------------------------------------
    case("coaxial-and-heading", "at = [50.0, 250.0]", 'coaxial = { through = "HR", distance = 20.0 }', 63,
         "'coaxial' places and points the source", "'heading', not both"),
    case("coaxial-through-a-crystal", "at = [50.0, 250.0]\nheading = 0.0",
         'coaxial = { through = "X1", distance = 20.0 }\nnote = "pump"', 62, "cavity mirror or splitter",
         "is a crystal"),
    case("coaxial-through-unknown", "at = [50.0, 250.0]\nheading = 0.0",
         'coaxial = { through = "HRR", distance = 20.0 }\nnote = "pump"', 62, '"HRR" is not an optic'),
    case("coaxial-toward-not-next", "at = [50.0, 250.0]\nheading = 0.0",
         'coaxial = { through = "OC", toward = "HR", distance = 20.0 }\nnote = "pump"', 62,
         '"HR" is not next to "OC"', "X1"),
    case("coaxial-unknown-key", "at = [50.0, 250.0]\nheading = 0.0",
         'coaxial = { through = "HR", distanse = 20.0 }\nnote = "pump"', 62, "did you mean 'distance'"),
    case("coaxial-no-distance", "at = [50.0, 250.0]\nheading = 0.0",
         'coaxial = { through = "HR" }\nnote = "pump"', 62, "distance"),
    case("coaxial-negative-distance", "at = [50.0, 250.0]\nheading = 0.0",
         'coaxial = { through = "HR", distance = -5.0 }\nnote = "pump"', 62, "distance"),
    case("deeply-nested-inline-table", "at = [400.0, 40.0]", "at = " + "{ a = " * 3000 + "1" + " }" * 3000, 57,
         "at"),
]

assert len({c.id for c in CASES}) == len(CASES), "case ids must be unique"


# -- running the CLI ------------------------------------------------------------------------


def run_inprocess(args: list[str]) -> tuple[int, str, str]:
    """Run ``main`` in this process; warnings count as stderr lines, as a user would see them."""
    out, err = io.StringIO(), io.StringIO()
    with warnings.catch_warnings(record=True) as caught, \
            contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        warnings.simplefilter("always")
        try:
            code = main(args)
        except SystemExit as exc:  # argparse; main() itself should return
            code = exc.code if isinstance(exc.code, int) else 2
    hidden_by_default = (DeprecationWarning, PendingDeprecationWarning, ImportWarning, ResourceWarning)
    shown = "".join(f"{w.filename}:{w.lineno}: {w.category.__name__}: {w.message}\n" for w in caught
                    if not issubclass(w.category, hidden_by_default))
    return code, out.getvalue(), shown + err.getvalue()


def run_subprocess(args: list[str], cwd: Path) -> subprocess.CompletedProcess:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO) + os.pathsep + env.get("PYTHONPATH", "")
    return subprocess.run([sys.executable, "-m", "benchcheck", "beams", *args], cwd=cwd, env=env,
                          capture_output=True, text=True, timeout=120)


def snapshot(folder: Path) -> dict[str, tuple[bytes, int]]:
    """Every file in ``folder`` with its bytes and modification time: a rewrite shows too."""
    return {p.name: (p.read_bytes(), p.stat().st_mtime_ns) for p in sorted(folder.iterdir()) if p.is_file()}


def assert_located_error(code: int, out: str, err: str, file: str, line: int | None = None,
                         fragments: tuple[str, ...] = ()) -> re.Match:
    """Exit 2, nothing on stdout, exactly one ``FILE:LINE:COL: error: MESSAGE`` line on stderr."""
    assert "Traceback" not in err, err
    assert code == 2, f"exit status {code}, stderr:\n{err}"
    assert out.strip() == "", f"output for a rejected layout:\n{out[:500]}"
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert len(lines) == 1, f"expected one error line, got {len(lines)}:\n{err[:2000]}"
    found = ERROR_LINE.match(lines[0])
    assert found, f"not FILE:LINE:COL: error: MESSAGE: {lines[0]!r}"
    assert found["file"] == file, lines[0]
    assert "internal error" not in found["msg"], lines[0]
    if line is not None:
        assert int(found["line"]) == line, f"expected line {line}: {lines[0]}"
    assert int(found["col"]) >= 1
    for frag in fragments:
        assert frag in found["msg"], f"{frag!r} missing from: {found['msg']}"
    return found


def write(tmp_path: Path, content: str | bytes, name: str = "layout.toml") -> Path:
    path = tmp_path / name
    if isinstance(content, str):
        path.write_bytes(content.encode("utf-8"))
    else:
        path.write_bytes(content)
    return path


# -- good input ------------------------------------------------------------------------------


@pytest.mark.parametrize("fmt", ["text", "json"])
def test_base_layout_is_valid(tmp_path, fmt):
    path = write(tmp_path, BASE)
    code, out, err = run_inprocess(["beams", str(path), "--format", fmt])
    assert (code, err) == (0, ""), err
    assert "laser" in out and "probe" in out


@pytest.mark.parametrize("demo", DEMO_LAYOUTS, ids=lambda p: p.name)
@pytest.mark.parametrize("fmt", ["text", "json"])
def test_demo_layouts_are_valid_and_untouched(tmp_path, demo, fmt):
    path = write(tmp_path, demo.read_bytes(), demo.name)  # a copy: never risk the repository's files
    before = snapshot(tmp_path)
    code, out, err = run_inprocess(["beams", str(path), "--format", fmt])
    assert (code, err) == (0, ""), err
    assert out
    assert snapshot(tmp_path) == before


def test_read_only_layout_is_read(tmp_path):
    path = write(tmp_path, BASE)
    path.chmod(0o444)
    try:
        code, _, err = run_inprocess(["beams", str(path)])
    finally:
        path.chmod(0o644)
    assert (code, err) == (0, ""), err


# -- the table of malformed layouts ------------------------------------------------------------


def test_enough_cases():
    assert len(CASES) >= 40


@pytest.mark.parametrize("bad", CASES, ids=lambda c: c.id)
def test_malformed_layout_inprocess(tmp_path, bad):
    path = write(tmp_path, bad.text)
    before = snapshot(tmp_path)
    code, out, err = run_inprocess(["beams", str(path)])
    assert snapshot(tmp_path) == before, "the layout (or its folder) was modified"
    assert_located_error(code, out, err, str(path), bad.line, bad.fragments)


SUBPROCESS_CASES = ["syntax-unterminated-string", "unknown-optic-key", "nan", "length-negative",
                    "format-2", "duplicate-optic-id", "dangling-beam-origin", "huge-integer",
                    "huge-distance", "deeply-nested-array"]


@pytest.mark.parametrize("fmt", ["text", "json"])
@pytest.mark.parametrize("ident", SUBPROCESS_CASES)
def test_malformed_layout_subprocess(tmp_path, ident, fmt):
    bad = next(c for c in CASES if c.id == ident)
    path = write(tmp_path, bad.text)
    before = snapshot(tmp_path)
    proc = run_subprocess([path.name, "--format", fmt], cwd=tmp_path)
    assert snapshot(tmp_path) == before
    assert "Traceback" not in proc.stderr, proc.stderr
    assert proc.returncode == 2, proc.stderr
    assert_located_error(proc.returncode, proc.stdout, proc.stderr, path.name, bad.line, bad.fragments)


def test_base_layout_subprocess(tmp_path):
    path = write(tmp_path, BASE)
    proc = run_subprocess([path.name, "--format", "json"], cwd=tmp_path)
    assert (proc.returncode, proc.stderr) == (0, "")
    assert proc.stdout.lstrip().startswith("{")


# -- binary junk and encodings -------------------------------------------------------------------

NOT_TEXT = ("UTF-8", "UTF-16", "NUL", "binary", "text file")


def _latin1() -> bytes:
    return BASE.replace("base bench", "B\u00e4nk \u00e9t\u00e9").encode("latin-1")


JUNK = {
    "random-bytes-0": random.Random(0).randbytes(512),
    "random-bytes-1": random.Random(1).randbytes(4096),
    "random-bytes-2": random.Random(2).randbytes(7),
    "png-header": b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR\x00\x00\x00\x10\x00\x00\x00\x10\x08\x02\x00\x00\x00",
    "nul-bytes-only": b"\x00" * 64,
    "nul-bytes-after-text": b"format = 1\n\x00\x00\x00",
    "utf-16-with-bom": BASE.encode("utf-16"),
    "utf-16-le-without-bom": BASE.encode("utf-16-le"),
    "utf-32": BASE.encode("utf-32"),
    "gzip-header": b"\x1f\x8b\x08\x00\x00\x00\x00\x00\x00\x03" + bytes(range(256)),
}


@pytest.mark.parametrize("name", list(JUNK))
def test_binary_junk(tmp_path, name):
    path = write(tmp_path, JUNK[name])
    before = snapshot(tmp_path)
    code, out, err = run_inprocess(["beams", str(path)])
    assert snapshot(tmp_path) == before
    found = assert_located_error(code, out, err, str(path))
    assert any(word in found["msg"] for word in NOT_TEXT), (
        f"the message should say the file is not a text (UTF-8 TOML) file: {found['msg']}")


def test_latin1_text_points_at_the_byte(tmp_path):
    path = write(tmp_path, _latin1())
    code, out, err = run_inprocess(["beams", str(path)])
    found = assert_located_error(code, out, err, str(path), 5, ("UTF-8",))
    assert int(found["col"]) == len('name = "Bad-input B') + 1


def test_bom_prefixed_layout_is_accepted(tmp_path):
    path = write(tmp_path, b"\xef\xbb\xbf" + BASE.encode())
    code, out, err = run_inprocess(["beams", str(path)])
    assert (code, err) == (0, ""), err
    assert path.read_bytes().startswith(b"\xef\xbb\xbf")


def test_bom_does_not_shift_positions(tmp_path):
    path = write(tmp_path, b"\xef\xbb\xbf" + one_change("format = 1", "formta = 1").encode())
    code, out, err = run_inprocess(["beams", str(path)])
    found = assert_located_error(code, out, err, str(path), 2, ("did you mean 'format'",))
    assert int(found["col"]) == 1


def test_crlf_layout_is_accepted(tmp_path):
    path = write(tmp_path, BASE.replace("\n", "\r\n").encode())
    code, _, err = run_inprocess(["beams", str(path)])
    assert (code, err) == (0, ""), err


def test_crlf_positions(tmp_path):
    path = write(tmp_path, one_change("roc = 300.0", "rco = 300.0").replace("\n", "\r\n").encode())
    code, out, err = run_inprocess(["beams", str(path)])
    found = assert_located_error(code, out, err, str(path), 17, ("did you mean 'roc'",))
    assert int(found["col"]) == 1


@pytest.mark.parametrize("content", [b"", b"\n\n", b"# only a comment\n", b"\xef\xbb\xbf"],
                         ids=["empty", "blank-lines", "comment-only", "bom-only"])
def test_empty_file(tmp_path, content):
    path = write(tmp_path, content)
    code, out, err = run_inprocess(["beams", str(path)])
    assert_located_error(code, out, err, str(path), 1, ("format = 1",))


def test_huge_nesting_subprocess(tmp_path):
    """Far past the recursion limit, in a fresh interpreter: a located error, no crash."""
    path = write(tmp_path, one_change("at = [400.0, 40.0]", "at = " + "[" * 200_000 + "]" * 200_000))
    proc = run_subprocess([path.name], cwd=tmp_path)
    assert "Traceback" not in proc.stderr and "Fatal Python error" not in proc.stderr, proc.stderr[-2000:]
    assert_located_error(proc.returncode, proc.stdout, proc.stderr, path.name, 57, ("at",))


# -- files that are not there, and folders ------------------------------------------------------


def test_missing_file(tmp_path):
    path = tmp_path / "no-such-layout.toml"
    code, out, err = run_inprocess(["beams", str(path)])
    assert code == 2 and out == ""
    assert "Traceback" not in err
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"{path}: error: "), err
    assert "No such file" in lines[0] or "not found" in lines[0] or "does not exist" in lines[0], err
    assert not path.exists()


def test_missing_file_subprocess(tmp_path):
    proc = run_subprocess(["no-such-layout.toml"], cwd=tmp_path)
    assert proc.returncode == 2 and "Traceback" not in proc.stderr
    assert proc.stderr.startswith("no-such-layout.toml: error: "), proc.stderr


def test_folder_without_layouts(tmp_path):
    folder = tmp_path / "empty-folder"
    folder.mkdir()
    code, out, err = run_inprocess(["beams", str(folder)])
    assert code == 2 and out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith(f"{folder}: error: "), f"the error should name the folder first: {lines[0]!r}"


def test_folder_with_a_bad_layout_names_the_file(tmp_path):
    folder = tmp_path / "bench"
    folder.mkdir()
    bad = write(folder, one_change("roc = 300.0", "rco = 300.0"), "bad.toml")
    before = snapshot(folder)
    code, out, err = run_inprocess(["beams", str(folder)])
    assert snapshot(folder) == before
    assert_located_error(code, out, err, str(bad), 17, ("did you mean 'roc'",))


def test_folder_named_like_a_layout_is_not_read_as_one(tmp_path):
    (tmp_path / "sub.toml").mkdir()
    good = write(tmp_path, BASE, "good.toml")
    code, _, err = run_inprocess(["beams", str(tmp_path)])
    assert (code, err) == (0, ""), err
    assert good.read_text() == BASE


# -- property test: mutate the valid layout ---------------------------------------------------------

NUMBER = re.compile(r"(?<![\w.\"-])-?\d+(?:\.\d+)?(?:e[+-]?\d+)?(?![\w.\"-])")
ID_DEF = re.compile(r'^id = "([^"]+)"$', re.M)
REPLACEMENTS = ['"x"', '"1"', "nan", "-nan", "inf", "-inf", "-1", "0", "0.0", "1e308", "-1e308", "1e-308",
                "true", "[]", "{}", "[1, 2, 3]", HUGE_INT]


@st.composite
def mutants(draw) -> bytes:
    text = BASE
    for _ in range(draw(st.integers(1, 2))):
        lines = text.split("\n")
        kind = draw(st.sampled_from(["delete", "duplicate", "number", "swap-defs", "swap-all", "truncate"]))
        if kind == "delete":
            del lines[draw(st.integers(0, len(lines) - 1))]
            text = "\n".join(lines)
        elif kind == "duplicate":
            i = draw(st.integers(0, len(lines) - 1))
            lines.insert(i, lines[i])
            text = "\n".join(lines)
        elif kind == "number":
            spots = list(NUMBER.finditer(text))
            if spots:
                m = spots[draw(st.integers(0, len(spots) - 1))]
                text = text[: m.start()] + draw(st.sampled_from(REPLACEMENTS)) + text[m.end():]
        elif kind in ("swap-defs", "swap-all"):
            ids = sorted(set(ID_DEF.findall(text)))
            if len(ids) >= 2:
                a, b = draw(st.lists(st.sampled_from(ids), min_size=2, max_size=2, unique=True))
                if kind == "swap-defs":  # swap two definitions; references now point elsewhere
                    pat = re.compile(rf'^id = "({re.escape(a)}|{re.escape(b)})"$', re.M)
                else:  # swap every quoted mention
                    pat = re.compile(rf'"({re.escape(a)}|{re.escape(b)})"')
                text = pat.sub(lambda m: m.group(0).replace(m.group(1), b if m.group(1) == a else a), text)
        else:
            data = text.encode()
            return data[: draw(st.integers(0, len(data)))]
    return text.encode()


@pytest.fixture(scope="module")
def mutant_dir(tmp_path_factory):
    return tmp_path_factory.mktemp("mutants")


def _run_mutant(folder: Path, data: bytes) -> tuple[Path, int, str, str]:
    path = folder / "mutant.toml"
    path.write_bytes(data)
    try:
        code, out, err = run_inprocess(["beams", str(path), "--format", "json"])
    except BaseException as exc:  # noqa: BLE001 - the point: nothing may escape main()
        pytest.fail(f"main() raised {type(exc).__name__}: {exc}\n--- layout ---\n{data.decode(errors='replace')}")
    assert path.read_bytes() == data, "the layout was modified"
    assert sorted(p.name for p in folder.iterdir()) == ["mutant.toml"], "files were written next to the layout"
    return path, code, out, err


PROPERTY = settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow],
                    derandomize=True)


# Mutants found by earlier runs, kept so that every run tries them.
KNOWN_MUTANTS = [
    one_change("roc = 300.0", f"roc = {HUGE_INT}").encode(),
    one_change("waist = 0.4", "waist = 1e-308").encode(),
]


def known_examples(test):
    for data in KNOWN_MUTANTS:
        test = example(data=data)(test)
    return test


@PROPERTY
@given(data=mutants())
@known_examples
def test_mutants_exit_0_or_2_without_traceback(mutant_dir, data):
    path, code, out, err = _run_mutant(mutant_dir, data)
    assert code in (0, 2), f"exit {code}\n{err}"
    assert "Traceback" not in err, err
    if code == 2:
        assert err.startswith(str(path)), err
        assert ": error: " in err, err


@PROPERTY
@given(data=mutants())
@known_examples
def test_mutants_get_one_located_error_or_a_clean_run(mutant_dir, data):
    """Stricter: a rejected mutant gets one ``FILE:LINE:COL: error:`` line that is not an
    internal error; an accepted one runs with nothing on stderr (no numeric warnings)."""
    path, code, out, err = _run_mutant(mutant_dir, data)
    if code == 0:
        assert err == "", f"accepted, but stderr:\n{err[:2000]}\n--- layout ---\n{data.decode(errors='replace')}"
    else:
        try:
            assert_located_error(code, out, err, str(path))
        except AssertionError as exc:
            raise AssertionError(f"{exc}\n--- layout ---\n{data.decode(errors='replace')}") from None
