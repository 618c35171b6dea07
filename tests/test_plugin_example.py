"""The example plugin ``plugins/benchcheck-breadboard`` and how benchcheck treats plugins
that fail.

The rules' numbers are checked against plane geometry worked out here, not against the
plugin's own arithmetic: the nearest tapped hole is found by trying every hole on the
table; a mirror's mount centre follows from the law of reflection (the normal bisects the
arriving and leaving directions, so it is parallel to d_out - d_in) and the mount
convention of the layout format (face on the front edge, ``depth`` behind it); edge
clearances come from footprint corners written out by hand.

The unit tests need no installation: the plugin's source folder goes on ``sys.path`` when
the distribution is not installed.  The end-to-end test needs it installed
(``pip install ./plugins/benchcheck-breadboard``) and is skipped, saying so, otherwise.
"""

from __future__ import annotations

import json
import math
import os
import re
import subprocess
import sys
import textwrap
from importlib import metadata
from pathlib import Path

import pytest

from benchcheck import solve_text
from benchcheck.cli import main
from benchcheck.config import load_config
from benchcheck.engine import run_rules, validate_options
from benchcheck.findings import Bench
from benchcheck.plugins import NO_ENTRY_POINTS_ENV, collect_rules, plugin_manager

ROOT = Path(__file__).resolve().parent.parent
PLUGIN_DIR = ROOT / "plugins" / "benchcheck-breadboard"

try:
    import benchcheck_breadboard
except ImportError:
    # Only for the import: an in-tree build (pip install ./plugins/...) leaves
    # src/benchcheck_breadboard.egg-info behind, and left on sys.path it would pass for an
    # installed distribution, entry point and all, in every later test of the session.
    sys.path.insert(0, str(PLUGIN_DIR / "src"))
    try:
        import benchcheck_breadboard
    finally:
        sys.path.remove(str(PLUGIN_DIR / "src"))

RULES = {rule.id: rule for rule in benchcheck_breadboard.benchcheck_rules()}
GRID = RULES["breadboard-grid"]
EDGE = RULES["table-edge-clearance"]

SQRT_HALF = math.sqrt(0.5)


# --- helpers ---------------------------------------------------------------------------

def bench_of(text: str, limits=None) -> Bench:
    sol = solve_text(text, file="bench.toml")
    return Bench(sol.layout, sol, dict(limits or {}))


def run(rule, text: str, **options):
    opts = rule.defaults()
    opts.update(options)
    return list(rule.check(bench_of(text), opts))


def by_target(findings):
    out = {}
    for f in findings:
        assert f.targets and f.targets[0] not in out, "one finding per mount"
        out[f.targets[0]] = f
    return out


def brute_force_hole(point, size, pitch=25.0, origin=(12.5, 12.5)):
    """Nearest hole by trying every hole origin + (i, j) * pitch that lies on the table."""
    n = int(max(size) / pitch) + 4
    best = None
    for i in range(-n, n + 1):
        x = origin[0] + i * pitch
        if not 0.0 <= x <= size[0]:
            continue
        for j in range(-n, n + 1):
            y = origin[1] + j * pitch
            if not 0.0 <= y <= size[1]:
                continue
            d = math.hypot(point[0] - x, point[1] - y)
            if best is None or d < best[0]:
                best = (d, (x, y))
    return best


def hole_in_message(message: str) -> tuple[float, float]:
    m = re.search(r"nearest tapped hole at \(([-\d.]+), ([-\d.]+)\) mm", message)
    assert m, message
    return float(m.group(1)), float(m.group(2))


def lens(ident, at, mount=None):
    mount_line = f"mount = {{ size = [{mount[0]!r}, {mount[1]!r}] }}\n" if mount else ""
    return (f'[[optic]]\nid = "{ident}"\nkind = "lens"\nfocal_length = 200.0\n'
            f"at = [{at[0]!r}, {at[1]!r}]\n{mount_line}\n")


def header(size):
    return f'format = 1\n[bench]\nname = "plugin test bench (invented)"\nsize = [{size[0]!r}, {size[1]!r}]\n\n'


# --- the plugin registers like any other ------------------------------------------------

def test_plugin_registers_both_rules_through_the_hook():
    pm, errors = plugin_manager(("benchcheck_breadboard",), entry_points=False)
    ruleset = collect_rules(pm, errors)
    assert ruleset.errors == []
    assert ruleset.rules["breadboard-grid"][1] == "benchcheck_breadboard"
    assert ruleset.rules["table-edge-clearance"][1] == "benchcheck_breadboard"
    # the built-in pack is there too, registered through the same hook
    assert ruleset.rules["leak-beam"][1] == "benchcheck.rules"


def test_documented_defaults():
    assert GRID.defaults() == {"pitch_mm": 25.0, "origin_mm": [12.5, 12.5], "tolerance_mm": 2.0}
    assert EDGE.defaults() == {"min_clearance_mm": 25.0, "check_obstacles": False}
    assert all(o.unit == "mm" for o in GRID.options)


def test_distribution_declares_the_entry_point():
    if sys.version_info >= (3, 11):
        import tomllib
    else:  # pragma: no cover
        import tomli as tomllib
    project = tomllib.loads((PLUGIN_DIR / "pyproject.toml").read_text(encoding="utf-8"))["project"]
    assert project["name"] == "benchcheck-breadboard"
    assert project["entry-points"]["benchcheck"] == {"breadboard": "benchcheck_breadboard"}
    assert any(re.match(r"benchcheck\b(?!-)", d) for d in project["dependencies"])


# --- breadboard-grid --------------------------------------------------------------------

GRID_TABLE = (610.0, 410.0)
#: free-standing lenses (their mounts are centred on them), each a case of the grid
LENS_SPOTS = {
    "ON": (112.5, 62.5),        # on a hole
    "NEAR": (113.9, 61.5),      # 1.7 mm from one: within a clamp's 2 mm
    "OFF": (141.3, 112.5),      # 3.8 mm off along x
    "DIAG": (230.0, 178.0),     # between holes in both directions
    "RIGHT": (605.0, 203.0),    # the grid's next column, x = 612.5, is beyond the 610 mm table
    "TOP": (401.0, 404.0),      # the next row, y = 412.5, is beyond the 410 mm table
}


def test_grid_offsets_are_distances_to_the_nearest_hole_found_by_trying_every_hole():
    text = header(GRID_TABLE) + "".join(lens(k, v, (30.0, 16.0)) for k, v in LENS_SPOTS.items())
    found = by_target(run(GRID, text))
    assert set(found) == {"OFF", "DIAG", "RIGHT", "TOP"}
    for ident, f in found.items():
        spot = LENS_SPOTS[ident]
        dist, hole = brute_force_hole(spot, GRID_TABLE)
        assert f.value == pytest.approx(dist, abs=1e-9)
        assert (f.limit, f.unit) == (2.0, "mm")
        assert hole_in_message(f.message) == pytest.approx(hole, abs=0.05)
        assert f.at == pytest.approx(spot)
        assert f.hint and f"({hole[0] - spot[0]:+.1f}, {hole[1] - spot[1]:+.1f}) mm" in f.hint
    # worked by hand: 141.3 - 137.5 = 3.8; and near the far edges the last hole on the table
    # counts, not the nearer one the grid would put beyond it
    assert found["OFF"].value == pytest.approx(3.8)
    assert found["DIAG"].value == pytest.approx(math.hypot(230.0 - 237.5, 178.0 - 187.5))
    assert found["RIGHT"].value == pytest.approx(math.hypot(605.0 - 587.5, 203.0 - 212.5))
    assert found["TOP"].value == pytest.approx(math.hypot(401.0 - 412.5, 404.0 - 387.5))


# Two beams, each turned by a flat mirror with a 40 x 20 mm mount.  M1 turns right
# (fold -90) and is placed so that its mount centre, not its face, is on the hole
# (412.5, 112.5); M2 turns left (fold +90) with its face at (400, 262.5).
MOUNT_DEPTH = 20.0
M1_CENTRE = (412.5, 112.5)
#: d_in = (1, 0), d_out = (0, -1): the normal is parallel to d_out - d_in = (-1, -1)
M1_NORMAL = (-SQRT_HALF, -SQRT_HALF)
M1_AT = (M1_CENTRE[0] + M1_NORMAL[0] * MOUNT_DEPTH / 2, M1_CENTRE[1] + M1_NORMAL[1] * MOUNT_DEPTH / 2)
M2_AT = (400.0, 262.5)
#: d_in = (1, 0), d_out = (0, 1): the normal is parallel to (-1, 1)
M2_NORMAL = (-SQRT_HALF, SQRT_HALF)
M2_CENTRE = (M2_AT[0] - M2_NORMAL[0] * MOUNT_DEPTH / 2, M2_AT[1] - M2_NORMAL[1] * MOUNT_DEPTH / 2)

MIRRORS = header((800.0, 500.0)) + textwrap.dedent(f"""\
    [[optic]]
    id = "M1"
    kind = "mirror"
    at = [{M1_AT[0]!r}, {M1_AT[1]!r}]
    mount = {{ size = [40.0, {MOUNT_DEPTH!r}] }}

    [[optic]]
    id = "M2"
    kind = "mirror"
    at = [{M2_AT[0]!r}, {M2_AT[1]!r}]
    mount = {{ size = [40.0, {MOUNT_DEPTH!r}] }}

    [[optic]]
    id = "D1"
    kind = "dump"
    at = [{M1_AT[0]!r}, 40.0]

    [[optic]]
    id = "D2"
    kind = "dump"
    at = [{M2_AT[0]!r}, 362.5]

    [[optic]]
    id = "POST"
    kind = "obstacle"
    at = [101.0, 101.0]
    size = [20.0, 20.0]

    [[source]]
    id = "S1"
    at = [30.0, {M1_AT[1]!r}]
    heading = 0.0
    wavelength_nm = 1064
    power_w = 0.1
    waist = 0.5

    [[source]]
    id = "S2"
    at = [30.0, {M2_AT[1]!r}]
    heading = 0.0
    wavelength_nm = 1064
    power_w = 0.1
    waist = 0.5

    [[beam]]
    id = "b1"
    from = "S1"
    path = ["M1", "D1"]

    [[beam]]
    id = "b2"
    from = "S2"
    path = ["M2", "D2"]
    """)


def test_a_mirror_is_judged_by_its_mount_centre_behind_the_face():
    found = by_target(run(GRID, MIRRORS))
    # M1's mount is centred on a hole although its face is not near one
    assert brute_force_hole(M1_AT, (800.0, 500.0))[0] > 2.0
    assert "M1" not in found
    # M2: the face is 12.5 mm from the holes either side of it; what counts is the mount
    # centre, 10 mm behind the face along (1, -1)/sqrt(2): 8.9 mm from (412.5, 262.5)
    dist, hole = brute_force_hole(M2_CENTRE, (800.0, 500.0))
    f = found["M2"]
    assert f.value == pytest.approx(dist, abs=1e-9)
    assert f.at == pytest.approx(M2_CENTRE)
    assert hole_in_message(f.message) == pytest.approx(hole, abs=0.05)
    assert hole == (412.5, 262.5)
    assert f.value == pytest.approx(math.hypot(400.0 + 10 * SQRT_HALF - 412.5, 262.5 - 10 * SQRT_HALF - 262.5))


def test_obstacles_are_exempt_from_the_grid():
    assert "POST" not in by_target(run(GRID, MIRRORS))


def test_grid_options_imperial_breadboard():
    # a 1-inch grid whose first hole is half an inch in from the corner
    pitch, origin = 25.4, (12.7, 12.7)
    text = header(GRID_TABLE) + "".join(lens(k, v, (30.0, 16.0)) for k, v in LENS_SPOTS.items())
    found = by_target(run(GRID, text, pitch_mm=pitch, origin_mm=list(origin), tolerance_mm=0.5))
    for ident, spot in LENS_SPOTS.items():
        dist, hole = brute_force_hole(spot, GRID_TABLE, pitch, origin)
        if dist <= 0.5:
            assert ident not in found
        else:
            assert found[ident].value == pytest.approx(dist, abs=1e-9)
            assert hole_in_message(found[ident].message) == pytest.approx(hole, abs=0.05)
    # and a wide clamp accepts every mount closer than it
    assert run(GRID, text, tolerance_mm=25.0) == []


def test_grid_with_no_hole_on_the_table_says_so_once():
    text = header((20.0, 20.0)) + lens("L1", (10.0, 10.0), (5.0, 5.0)) + lens("L2", (12.0, 8.0), (5.0, 5.0))
    out = run(GRID, text, origin_mm=[22.0, 22.0])
    assert len(out) == 1 and out[0].targets == ()
    assert "no tapped hole" in out[0].message


@pytest.mark.parametrize("options, name", [
    ({"pitch_mm": 0.0}, "pitch_mm"),
    ({"origin_mm": [12.5]}, "origin_mm"),
    ({"tolerance_mm": -1.0}, "tolerance_mm"),
])
def test_grid_option_values_out_of_range_raise(options, name):
    with pytest.raises(ValueError, match=name):
        run(GRID, header(GRID_TABLE) + lens("L1", (100.0, 100.0)), **options)


# --- table-edge-clearance ---------------------------------------------------------------

EDGE_TABLE = (600.0, 400.0)
EDGE_LAYOUT = header(EDGE_TABLE) + textwrap.dedent("""\
    [[optic]]
    id = "L1"
    kind = "lens"
    focal_length = 200.0
    mount = { size = [30.0, 16.0] }

    [[optic]]
    id = "M1"
    kind = "mirror"
    mount = { size = [40.0, 20.0] }

    [[optic]]
    id = "D1"
    kind = "dump"
    mount = { size = [30.0, 20.0] }

    [[optic]]
    id = "L2"
    kind = "lens"
    focal_length = 200.0
    at = [300.0, 40.0]
    mount = { size = [30.0, 16.0] }

    [[optic]]
    id = "L3"
    kind = "lens"
    focal_length = 200.0
    at = [300.0, 200.0]
    mount = { size = [30.0, 16.0] }

    [[optic]]
    id = "WALL"
    kind = "obstacle"
    polygon = [[560.0, 380.0], [590.0, 380.0], [590.0, 400.0], [560.0, 400.0]]

    [[source]]
    id = "SRC"
    at = [10.0, 150.0]
    heading = 0.0
    wavelength_nm = 1064
    power_w = 0.1
    waist = 0.5

    [[beam]]
    id = "b"
    from = "SRC"
    path = [{ id = "L1", distance = 20.0 },
            { id = "M1", distance = 550.0, fold = 90.0 },
            { id = "D1", distance = 200.0 }]
    """)


def corners(centre, axis, across, along):
    """Corners of a mount of ``across`` x ``along`` mm centred at ``centre``, ``along`` being
    measured along the unit vector ``axis``."""
    ax, ay = axis
    px, py = -ay, ax
    return [(centre[0] + sa * along / 2 * ax + sc * across / 2 * px,
             centre[1] + sa * along / 2 * ay + sc * across / 2 * py) for sa in (-1, 1) for sc in (-1, 1)]


def edge_clearance(points, size):
    """Smallest distance from the points to the table's four edge lines, and which edge."""
    return min((d, edge) for x, y in points
               for d, edge in ((x, "left"), (size[0] - x, "right"), (y, "bottom"), (size[1] - y, "top")))


# footprints written out from the layout format (docs/design.md §3): a transmissive optic's
# mount is centred on it, width across the beam and depth along it; a mirror's spans its
# face and reaches depth behind it, along -normal
M1_FACE = (580.0, 150.0)
M1_N = (-SQRT_HALF, SQRT_HALF)                   # d_in = (1, 0), d_out = (0, 1)
FOOTPRINTS = {
    "L1": corners((30.0, 150.0), (1.0, 0.0), 30.0, 16.0),
    "M1": corners((M1_FACE[0] - M1_N[0] * 10.0, M1_FACE[1] - M1_N[1] * 10.0), M1_N, 40.0, 20.0),
    "D1": corners((580.0, 350.0), (0.0, 1.0), 30.0, 20.0),
    "L2": corners((300.0, 40.0), (1.0, 0.0), 30.0, 16.0),     # on no path: drawn facing +x
    "L3": corners((300.0, 200.0), (1.0, 0.0), 30.0, 16.0),
}


def test_edge_clearances_match_the_footprint_corners():
    found = by_target(run(EDGE, EDGE_LAYOUT))
    expected = {k: edge_clearance(v, EDGE_TABLE) for k, v in FOOTPRINTS.items()}
    flagged = {k for k, (d, _) in expected.items() if d < 25.0}
    assert set(found) == flagged == {"L1", "M1", "D1"}
    for ident in flagged:
        dist, edge = expected[ident]
        f = found[ident]
        assert f.value == pytest.approx(dist, abs=1e-9)
        assert (f.limit, f.unit) == (25.0, "mm")
        assert f"{edge} table edge" in f.message
        assert f.hint
    # worked by hand
    assert found["L1"].value == pytest.approx(30.0 - 8.0)          # 22 mm from the left edge
    assert found["D1"].value == pytest.approx(600.0 - 595.0)        # 5 mm from the right edge
    # M1's back corner reaches 580 + 2 * 20 * sqrt(1/2) = 608.3 mm: it overhangs by 8.3 mm
    assert found["M1"].value == pytest.approx(600.0 - (580.0 + 40.0 * SQRT_HALF))
    assert "overhangs the right table edge by 8.3 mm" in found["M1"].message
    assert found["M1"].at == pytest.approx((580.0 + 40.0 * SQRT_HALF, 150.0))


def test_edge_clearance_at_the_limit_passes_and_the_limit_is_an_option():
    # L2's mount reaches y = 40 - 15 = 25 mm: exactly the default margin
    assert "L2" not in by_target(run(EDGE, EDGE_LAYOUT))
    found = by_target(run(EDGE, EDGE_LAYOUT, min_clearance_mm=25.5))
    assert found["L2"].value == pytest.approx(25.0) and found["L2"].limit == 25.5
    assert "bottom table edge" in found["L2"].message
    assert set(by_target(run(EDGE, EDGE_LAYOUT, min_clearance_mm=4.0))) == {"M1"}


def test_obstacles_only_when_asked():
    assert "WALL" not in by_target(run(EDGE, EDGE_LAYOUT))
    f = by_target(run(EDGE, EDGE_LAYOUT, check_obstacles=True))["WALL"]
    assert f.value == pytest.approx(0.0) and "top table edge" in f.message


# --- through the engine: options from benchcheck.toml, install-free ---------------------

def _ruleset():
    pm, errors = plugin_manager(("benchcheck_breadboard",), entry_points=False)
    return collect_rules(pm, errors)


def _line_of(text: str, ident: str) -> int:
    lines = text.splitlines()
    k = lines.index(f'id = "{ident}"')
    while not lines[k].startswith("[["):
        k -= 1
    return k + 1


def test_options_and_switches_come_from_the_configuration(tmp_path):
    cfg = tmp_path / "benchcheck.toml"
    cfg.write_text("[rules.breadboard-grid]\npitch_mm = 25.4\norigin_mm = [12.7, 12.7]\ntolerance_mm = 0.5\n"
                   "severity = \"error\"\n\n[rules.table-edge-clearance]\nenabled = false\n")
    config = load_config(cfg)
    ruleset = _ruleset()
    validate_options(config, ruleset)
    text = header(GRID_TABLE) + "".join(lens(k, v, (30.0, 16.0)) for k, v in LENS_SPOTS.items())
    result = run_rules(bench_of(text, config.limits), config, ruleset)
    assert result.errors == []
    mine = [f for f in result.findings if f.plugin == "benchcheck_breadboard"]
    assert {f.rule for f in mine} == {"breadboard-grid"}
    for f in mine:
        ident = f.targets[0]
        assert f.value == pytest.approx(brute_force_hole(LENS_SPOTS[ident], GRID_TABLE, 25.4, (12.7, 12.7))[0])
        assert f.severity == "error"
        assert (f.loc.file, f.loc.line) == ("bench.toml", _line_of(text, ident))


def test_an_option_out_of_range_is_reported_by_rule_and_plugin_and_the_rest_still_run(tmp_path):
    cfg = tmp_path / "benchcheck.toml"
    cfg.write_text('plugins = ["benchcheck_breadboard"]\n[rules.breadboard-grid]\npitch_mm = 0.0\n')
    config = load_config(cfg)
    ruleset = _ruleset()
    validate_options(config, ruleset)
    result = run_rules(bench_of(EDGE_LAYOUT, config.limits), config, ruleset)
    assert result.errors == [("bench.toml: rule 'breadboard-grid' from plugin benchcheck_breadboard raised "
                              "ValueError: rules.breadboard-grid.pitch_mm must be greater than 0 mm, found 0.0")]
    assert {f.targets[0] for f in result.findings if f.rule == "table-edge-clearance"} == {"L1", "M1", "D1"}


@pytest.mark.parametrize("text, expected", [
    ("", set()),                                                     # installed is not enough
    ("[limits]\nstray_power_w = 0.001\n", set()),
    ("[rules.breadboard-grid]\n", {"breadboard-grid"}),               # a table for the rule turns it on
    ("[rules.table-edge-clearance]\nmin_clearance_mm = 30.0\n", {"table-edge-clearance"}),
    ('plugins = ["benchcheck_breadboard"]\n', {"breadboard-grid", "table-edge-clearance"}),
    ('plugins = ["benchcheck_breadboard"]\n[rules.breadboard-grid]\nenabled = false\n', {"table-edge-clearance"}),
])
def test_the_example_rules_are_off_until_a_configuration_turns_them_on(tmp_path, text, expected):
    """Installing a plugin must not change another repository's results (issue: the demo
    benches gained grid warnings once the example was installed for its tests)."""
    cfg = tmp_path / "benchcheck.toml"
    cfg.write_text(text)
    config = load_config(cfg)
    ruleset = _ruleset()
    assert GRID.opt_in and EDGE.opt_in
    assert validate_options(config, ruleset) == []
    result = run_rules(bench_of(EDGE_LAYOUT, config.limits), config, ruleset)
    assert result.errors == []
    assert {f.rule for f in result.findings if f.plugin == "benchcheck_breadboard"} == expected


# --- plugins that fail: reported by name, the rest still run, exit status 2 -------------

# A 1 W beam that ends on a lens, not a dump: the built-in beam-unterminated reports it.
OPEN_BEAM = header((600.0, 400.0)) + textwrap.dedent("""\
    [[optic]]
    id = "L1"
    kind = "lens"
    focal_length = 200.0

    [[source]]
    id = "SRC"
    at = [50.0, 200.0]
    heading = 0.0
    wavelength_nm = 1064
    power_w = 1.0
    waist = 0.5

    [[beam]]
    id = "b"
    from = "SRC"
    path = [{ id = "L1", distance = 100.0 }]
    """)

RAISING_PLUGIN = '''\
"""A lab plugin with one rule that fails and one that works (test fixture)."""
from benchcheck import Finding, Rule, hookimpl


def explode(bench, options):
    raise RuntimeError("this rule cannot read the bench")


def count_optics(bench, options):
    yield Finding(f"{len(bench.layout.optics)} optic(s) on the bench", ())


@hookimpl
def benchcheck_rules():
    return [Rule("lab-explodes", "always fails", "A rule that raises, for the test.", explode),
            Rule("lab-counts", "counts optics", "A rule that works, for the test.", count_optics, severity="note")]
'''

BROKEN_PLUGIN = '''\
"""A lab plugin whose dependency is missing (test fixture)."""
import lab_dependency_that_is_not_installed  # noqa: F401
'''


@pytest.fixture
def lab_plugin(tmp_path, monkeypatch):
    """Write a plugin module to tmp_path, put it on sys.path, name it in benchcheck.toml
    beside a layout; forget the module afterwards.  Installed plugins stay out of these
    runs: they are about how the engine treats a failing one."""
    monkeypatch.setenv(NO_ENTRY_POINTS_ENV, "1")
    written = []

    def make(name: str, source: str) -> Path:
        (tmp_path / "src").mkdir(exist_ok=True)
        (tmp_path / "src" / f"{name}.py").write_text(source)
        monkeypatch.syspath_prepend(str(tmp_path / "src"))
        (tmp_path / "benchcheck.toml").write_text(f'plugins = ["{name}"]\n')
        (tmp_path / ".git").mkdir(exist_ok=True)     # the repository root: the configuration search stops here
        (tmp_path / "layouts").mkdir(exist_ok=True)
        layout = tmp_path / "layouts" / "bench.toml"
        layout.write_text(OPEN_BEAM)
        written.append(name)
        return layout

    yield make
    for name in written:
        sys.modules.pop(name, None)


def test_a_rule_that_raises_is_reported_by_plugin_name_and_the_others_still_run(lab_plugin, capsys):
    layout = lab_plugin("lab_rules_raising", RAISING_PLUGIN)
    code = main(["check", str(layout), "--format", "json", "--jobs", "1"])
    out, err = capsys.readouterr()
    assert code == 2
    message = (f"{layout}: rule 'lab-explodes' from plugin lab_rules_raising raised RuntimeError: "
               "this rule cannot read the bench")
    assert message in err
    doc = json.loads(out)
    assert message in doc["errors"]
    rules = {f["rule"]: f for f in doc["findings"]}
    assert rules["lab-counts"]["plugin"] == "lab_rules_raising"
    assert rules["lab-counts"]["message"] == "1 optic(s) on the bench"
    assert rules["beam-unterminated"]["plugin"] == "benchcheck.rules"


def test_a_plugin_that_cannot_be_imported_is_reported_by_name_and_the_others_still_run(lab_plugin, capsys):
    layout = lab_plugin("lab_rules_broken", BROKEN_PLUGIN)
    code = main(["check", str(layout), "--jobs", "1"])
    out, err = capsys.readouterr()
    assert code == 2
    assert ("plugin lab_rules_broken (from the configuration): cannot be loaded (ModuleNotFoundError: "
            "No module named 'lab_dependency_that_is_not_installed')") in err
    assert re.search(r"bench\.toml:\d+:\d+: error: beam \"b\" ends on no dump or detector.*\[beam-unterminated\]",
                     out)
    # listing the rules fails the same way, and still lists the ones that loaded
    code = main(["rules", "--config", str(layout.parent.parent / "benchcheck.toml")])
    out, err = capsys.readouterr()
    assert code == 2 and "lab_rules_broken" in err and "beam-unterminated" in out


# --- end to end: the installed distribution, found by its entry point -------------------

def _installed() -> bool:
    try:
        metadata.distribution("benchcheck-breadboard")
    except metadata.PackageNotFoundError:
        return False
    return True


E2E_LAYOUT = header((600.0, 400.0)) + textwrap.dedent("""\
    [[optic]]
    id = "L1"
    kind = "lens"
    focal_length = 200.0
    mount = { size = [30.0, 16.0] }

    [[optic]]
    id = "D1"
    kind = "dump"
    mount = { size = [30.0, 20.0] }

    [[source]]
    id = "SRC"
    at = [40.0, 162.5]
    heading = 0.0
    wavelength_nm = 1064
    power_w = 0.1
    waist = 0.5

    [[beam]]
    id = "b"
    from = "SRC"
    path = [{ id = "L1", distance = 100.0 }, { id = "D1", distance = 440.0 }]
    """)

E2E_CONFIG = """\
[rules.breadboard-grid]
tolerance_mm = 1.0

[rules.table-edge-clearance]
min_clearance_mm = 30.0
"""


@pytest.mark.skipif(not _installed(), reason="the distribution benchcheck-breadboard is not installed here; "
                                             "'pip install ./plugins/benchcheck-breadboard' runs this test")
def test_installed_plugin_is_listed_and_fires_through_the_command_line(tmp_path):
    env = dict(os.environ)
    env.pop(NO_ENTRY_POINTS_ENV, None)                 # this test is about the entry point
    env["PYTHONPATH"] = os.pathsep.join(p for p in (str(ROOT), env.get("PYTHONPATH")) if p)
    (tmp_path / "benchcheck.toml").write_text(E2E_CONFIG)
    layout = tmp_path / "bench.toml"
    layout.write_text(E2E_LAYOUT)

    def benchcheck(*args):
        return subprocess.run([sys.executable, "-m", "benchcheck", *args], cwd=tmp_path, env=env,
                              capture_output=True, text=True, timeout=300, check=False)

    done = benchcheck("rules", "--format", "json")
    assert done.returncode == 0, done.stderr
    listed = {r["id"]: r for r in json.loads(done.stdout)["rules"]}
    for rid in ("breadboard-grid", "table-edge-clearance"):
        assert listed[rid]["plugin"] == "benchcheck-breadboard:breadboard"
    assert {o["name"]: o["default"] for o in listed["breadboard-grid"]["options"]} == GRID.defaults()

    done = benchcheck("check", "bench.toml", "--format", "json", "--fail-on", "warning")
    assert done.returncode == 1, done.stderr
    doc = json.loads(done.stdout)
    assert doc["errors"] == []
    mine = {(f["rule"], f["targets"][0]): f for f in doc["findings"]
            if f["plugin"] == "benchcheck-breadboard:breadboard"}
    # L1 stands at (140, 162.5), its mount centred on it: 2.5 mm from the hole (137.5, 162.5),
    # more than the configured 1 mm.  D1 at (580, 162.5): 7.5 mm from (587.5, 162.5); its
    # mount reaches x = 590, 10 mm from the right edge, under the configured 30 mm.
    assert set(mine) == {("breadboard-grid", "L1"), ("breadboard-grid", "D1"), ("table-edge-clearance", "D1")}
    assert mine[("breadboard-grid", "L1")]["value"] == pytest.approx(brute_force_hole((140.0, 162.5), (600, 400))[0])
    assert mine[("breadboard-grid", "L1")]["value"] == pytest.approx(2.5)
    assert mine[("breadboard-grid", "L1")]["limit"] == 1.0
    assert mine[("breadboard-grid", "D1")]["value"] == pytest.approx(7.5)
    edge = mine[("table-edge-clearance", "D1")]
    assert (edge["value"], edge["limit"], edge["unit"]) == (pytest.approx(10.0), 30.0, "mm")
    assert edge["line"] == _line_of(E2E_LAYOUT, "D1") and edge["severity"] == "warning"

    done = benchcheck("check", "bench.toml")
    assert done.returncode == 0, done.stderr           # warnings only: the default fail level is error
    assert re.search(r"^bench\.toml:\d+:1: warning: the mount of \"L1\" \(lens\) .*\[breadboard-grid\]$",
                     done.stdout, re.MULTILINE)
    assert "[table-edge-clearance]" in done.stdout


@pytest.mark.skipif(not _installed(), reason="the distribution benchcheck-breadboard is not installed here; "
                                             "'pip install ./plugins/benchcheck-breadboard' runs this test")
def test_installing_the_example_changes_nothing_for_the_demo_benches():
    """The README's main job on the good demo layouts, run where the example plugin is
    installed (as the README's test command installs it): not one finding of its rules."""
    env = dict(os.environ)
    env.pop(NO_ENTRY_POINTS_ENV, None)
    env["PYTHONPATH"] = os.pathsep.join(p for p in (str(ROOT), env.get("PYTHONPATH")) if p)
    demos = sorted(str(p) for p in (ROOT / "layouts").glob("*.toml"))
    done = subprocess.run([sys.executable, "-m", "benchcheck", "check", *demos, "--format", "json"], cwd=ROOT,
                          env=env, capture_output=True, text=True, timeout=300, check=False)
    doc = json.loads(done.stdout)
    assert doc["errors"] == [], done.stderr
    assert [f for f in doc["findings"] if f["plugin"] == "benchcheck-breadboard:breadboard"] == []
    done = subprocess.run([sys.executable, "-m", "benchcheck", "rules", "--format", "json"], cwd=ROOT, env=env,
                          capture_output=True, text=True, timeout=300, check=False)
    listed = {r["id"]: r for r in json.loads(done.stdout)["rules"]}
    assert listed["breadboard-grid"]["opt_in"] is True and listed["leak-beam"]["opt_in"] is False


# --- the pre-commit hook that the repository offers -------------------------------------

def test_pre_commit_hook_selects_layouts_and_skips_configuration_files():
    yaml = pytest.importorskip("yaml", reason="PyYAML is not installed; the manifest is plain YAML")
    hooks = {h["id"]: h for h in yaml.safe_load((ROOT / ".pre-commit-hooks.yaml").read_text(encoding="utf-8"))}
    hook = hooks["benchcheck"]
    assert (hook["name"], hook["entry"], hook["language"]) == ("benchcheck check", "benchcheck check", "python")
    files, exclude = re.compile(hook["files"]), re.compile(hook["exclude"])

    def selected(path):          # pre-commit matches both with re.search on the relative path
        return bool(files.search(path)) and not exclude.search(path)

    for path in ("bench.toml", "layouts/b2-ring.toml", "lab/my-pyproject.toml"):
        assert selected(path), path
    for path in ("pyproject.toml", "plugins/x/pyproject.toml", "benchcheck.toml", "lab/benchcheck.toml",
                 "layouts/notes.md", "bench.toml.bak"):
        assert not selected(path), path


def test_the_copy_under_test_is_the_source_in_this_repository():
    """Where the distribution is installed, the unit tests above import the installed copy:
    make sure it is not an older one than the source they are meant to test."""
    tested = Path(benchcheck_breadboard.__file__).resolve().parent
    for source in sorted((PLUGIN_DIR / "src" / "benchcheck_breadboard").glob("*.py")):
        assert (tested / source.name).read_text(encoding="utf-8") == source.read_text(encoding="utf-8"), (
            f"{tested / source.name} differs from {source}: "
            "reinstall with 'pip install ./plugins/benchcheck-breadboard'")


def test_a_module_installed_and_listed_in_the_configuration_loads_once(monkeypatch, tmp_path):
    """Registering the same plugin module twice must not be an error."""
    from benchcheck.plugins import load_rules

    monkeypatch.syspath_prepend(str(tmp_path))
    (tmp_path / "twice_rules.py").write_text(
        "import benchcheck\n"
        "@benchcheck.hookimpl\n"
        "def benchcheck_rules():\n"
        "    return [benchcheck.Rule(id='twice-rule', summary='s', explanation='e', check=lambda b, o: [])]\n")
    ruleset = load_rules(("twice_rules", "twice_rules"), entry_points=False)
    assert ruleset.errors == []
    assert "twice-rule" in ruleset.rules
