"""The design-review report: one well-formed, self-contained HTML file per layout holding
the plan view, plots and tables, with nothing that reaches for the network; and, where
Chromium is installed, a real rendering (headless) that takes a screenshot."""

from __future__ import annotations

import math
import re
import shutil
import subprocess
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest

pytest.importorskip("matplotlib", reason="the report needs the 'report' extra (matplotlib)")

from benchcheck.cli import main  # noqa: E402
from benchcheck.report_html import MARKER  # noqa: E402

ROOT = Path(__file__).resolve().parent.parent
LAYOUTS = sorted((ROOT / "layouts").rglob("*.toml"))
SVG = "{http://www.w3.org/2000/svg}"
CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
CHROMIUM_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                  "--disable-background-networking", "--disable-component-update", "--disable-sync",
                  "--hide-scrollbars"]


@pytest.fixture(autouse=True)
def builtin_rules_only(monkeypatch):
    monkeypatch.setenv("BENCHCHECK_NO_ENTRY_POINTS", "1")


def make(layout: Path, out: Path, capsys) -> str:
    assert main(["report", str(layout), "-o", str(out)]) == 0
    capsys.readouterr()
    return out.read_text(encoding="utf-8")


def parse(html: str) -> ET.Element:
    """The report is written as well-formed XHTML: an XML parser must accept it whole."""
    assert html.startswith(MARKER)
    body = html[len(MARKER):].lstrip()
    assert body.startswith("<!DOCTYPE html>")
    return ET.fromstring(body[len("<!DOCTYPE html>"):])


@pytest.mark.parametrize("layout", LAYOUTS, ids=lambda p: p.name)
def test_report_is_well_formed_and_holds_drawings_and_tables(layout, tmp_path, capsys):
    html = make(layout, tmp_path / "r.html", capsys)
    root = parse(html)
    ids = {e.get("id") for e in root.iter() if e.get("id")}
    assert {"safety", "plan", "findings", "cavities", "beams", "optics"} <= ids
    svgs = list(root.iter(SVG + "svg"))
    assert any(s.get("class") == "plan" for s in svgs)
    plan = next(s for s in svgs if s.get("class") == "plan")
    texts = " ".join(t.text or "" for t in plan.iter(SVG + "text"))
    assert "x (mm)" in texts and "mm" in texts and "x their 1/e" in texts     # scale, axes, exaggeration
    sol_optics = re.findall(r'^id = "([^"]+)"', layout.read_text(), re.M)
    for ident in sol_optics[:3]:
        assert ident in texts or ident in html
    assert "laser safety officer" in html and "IEC 60825-1" in html
    tables = list(root.iter("table"))
    assert tables, "the report has tables"


@pytest.mark.parametrize("layout", LAYOUTS, ids=lambda p: p.name)
def test_nothing_points_to_the_network(layout, tmp_path, capsys):
    html = make(layout, tmp_path / "r.html", capsys)
    assert "<script" not in html and "<link" not in html and "<img" not in html and "@import" not in html
    assert not re.search(r'(?:src|href)\s*=\s*["\']\s*(?:https?:|//)', html)
    assert not re.search(r"url\(\s*['\"]?\s*(?:https?:|//)", html)
    # the only URLs left are XML namespace names, which are identifiers, never fetched
    for url in re.findall(r"https?://[^\s\"'<>)]+", html):
        assert url.startswith(("http://www.w3.org/", "http://purl.org/dc/", "http://creativecommons.org/")), url


def test_findings_are_marked_on_the_drawing_and_linked(tmp_path, capsys):
    html = make(ROOT / "layouts" / "flawed" / "every-rule-fires.toml", tmp_path / "r.html", capsys)
    root = parse(html)
    rows = [a for a in root.iter("a") if (a.get("id") or "").startswith("finding-")]
    assert len(rows) >= 11
    links = {a.get("href") for a in root.iter(SVG + "a")}
    for a in rows:
        assert a.get("href") == "#plan"
    # every finding with a place on the table has its marker linking to its row
    assert len(links & {f"#{a.get('id')}" for a in rows}) >= 11


def test_an_existing_file_that_is_not_a_report_is_not_overwritten(tmp_path, capsys):
    notes = tmp_path / "notes.html"
    notes.write_text("my own notes")
    assert main(["report", str(LAYOUTS[0]), "-o", str(notes)]) == 2
    assert notes.read_text() == "my own notes"
    assert "not a benchcheck report" in capsys.readouterr().err
    make(LAYOUTS[0], tmp_path / "again.html", capsys)
    make(LAYOUTS[0], tmp_path / "again.html", capsys)          # an earlier report is replaced


def render(html: Path, png: Path, width: int = 1200, height: int = 1700) -> None:
    """Headless Chromium screenshot of a report (closed network flags, a fresh profile)."""
    profile = png.parent / "chromium-profile"
    subprocess.run([CHROMIUM, *CHROMIUM_FLAGS, f"--user-data-dir={profile}", f"--window-size={width},{height}",
                    f"--screenshot={png}", html.resolve().as_uri()], check=True, capture_output=True, timeout=180)


@pytest.mark.skipif(CHROMIUM is None, reason="Chromium is not installed (Debian package 'chromium'); .ci/run "
                                             "installs it so this check runs in CI")
def test_renders_in_headless_chromium(tmp_path, capsys):
    html = tmp_path / "report.html"
    make(ROOT / "layouts" / "flawed" / "every-rule-fires.toml", html, capsys)
    png = tmp_path / "report.png"
    render(html, png)
    data = png.read_bytes()
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    assert len(data) > 50_000          # a blank page compresses to a few kB
    target = ROOT / "docs" / "report-screenshot.png"
    if target.parent.is_dir() and not target.exists():
        shutil.copyfile(png, target)   # the README's picture comes from this check


def test_safety_summary_has_eyewear_by_wavelength_and_hazard_zones(tmp_path, capsys):
    """The flawed demo has open class 4 beams at 800 nm: the safety section lists each
    wavelength with its MPE and eyewear OD, the open segments, and the plan view draws their
    hazard zones (the figures themselves are checked against closed forms in test_hazards)."""
    layout = ROOT / "layouts" / "flawed" / "every-rule-fires.toml"
    root = parse(make(layout, tmp_path / "r.html", capsys))
    safety = next(e for e in root.iter() if e.get("id") == "safety")
    text = " ".join(safety.itertext())
    assert "Exposure and eyewear by wavelength" in text and "Open beams" in text
    for wl in ("633 nm", "800 nm", "1064 nm"):
        assert wl in text
    assert "OD 5" in text and "laser safety officer" in text
    plan = next(s for s in root.iter(SVG + "svg") if s.get("class") == "plan")
    titles = [t.text for t in plan.iter(SVG + "title") if t.text and "x MPE" in t.text]
    assert any(t.startswith("osc:") for t in titles)
    assert any("hazard to" in (t.text or "") for t in plan.iter(SVG + "text"))


@pytest.mark.skipif(CHROMIUM is None, reason="Chromium is not installed (Debian package 'chromium'); .ci/run "
                                             "installs it so this check runs in CI")
def test_the_figures_render_in_headless_chromium(tmp_path, capsys):
    """The whole report of the folded demo, page down to its last figure: the plan with its
    inset, the half-trace scan, the caustics of the cavity and the pump beam.  The caustics'
    and scan's dark tangential line colour must show on the page, well below the plan."""
    from PIL import Image

    html = tmp_path / "report.html"
    text = make(ROOT / "layouts" / "folded-brewster.toml", html, capsys)
    assert text.count("<svg") >= 5 and "A: enlarged below" in text
    png = tmp_path / "report.png"
    render(html, png, height=7000)
    image = Image.open(png).convert("RGB")
    pixels = np.asarray(image, dtype=int)
    ink = np.flatnonzero((pixels < 235).any(axis=2).any(axis=1))
    assert ink.size and ink[-1] > 3000, "the page ends before its figures"
    tangential = (np.abs(pixels - np.array([0x1d, 0x3f, 0x63])).sum(axis=2) < 40)
    rows = np.flatnonzero(tangential.any(axis=1))
    assert tangential.sum() > 500 and rows.size and rows[-1] > 2000


def test_paths_in_the_report_are_relative_to_the_repository(tmp_path, capsys):
    """A layout given by its absolute path inside a repository is shown, with its
    configuration and every finding's location, relative to the repository root: the
    report names no folder of the machine it was made on."""
    repo = tmp_path / "lab-repo"
    (repo / ".git").mkdir(parents=True)
    (repo / "benchmarks" / "b2").mkdir(parents=True)
    layout = repo / "benchmarks" / "b2" / "bench.toml"
    shutil.copyfile(ROOT / "layouts" / "flawed" / "every-rule-fires.toml", layout)
    shutil.copyfile(ROOT / "benchcheck.toml", repo / "benchcheck.toml")
    html = make(layout.resolve(), tmp_path / "r.html", capsys)
    assert str(tmp_path) not in html and str(tmp_path.resolve()) not in html
    assert "Layout <code>benchmarks/b2/bench.toml</code>" in html
    assert "configuration <code>benchcheck.toml</code>" in html
    assert re.search(r"<code>benchmarks/b2/bench\.toml:\d+:\d+</code>", html)


def _reviewed(layout: Path):
    """The solved bench and its numbered findings, as the report command makes them."""
    from benchcheck.config import find_config, load_config
    from benchcheck.engine import check_file, config_folder
    from benchcheck.plugins import load_rules

    config = load_config(find_config(layout))
    result = check_file(layout, config, load_rules(config.plugins, search_path=config_folder(config)))
    findings = sorted(result.findings, key=lambda f: (f.severity, f.loc.line if f.loc else 0, f.rule))
    return result.bench.solution, list(enumerate(findings, start=1))


def _overlap(a, b) -> float:
    w = min(a[2], b[2]) - max(a[0], b[0])
    h = min(a[3], b[3]) - max(a[1], b[1])
    return w * h if w > 0 and h > 0 else 0.0


@pytest.mark.parametrize("layout", LAYOUTS, ids=lambda p: p.name)
def test_plan_view_labels_and_markers_overlap_nothing(layout):
    """On every demo bench, in the plan and in its enlarged inset, no two labels or finding
    markers overlap each other and none covers an optic's mount or a source."""
    from benchcheck.planview import plan_drawing

    solution, numbered = _reviewed(layout)
    svg, panels = plan_drawing(solution, numbered)
    assert svg.count("<svg") == 1
    for panel in panels:
        labels = panel["labels"]
        assert labels, "every demo has optics to label"
        for i, (kind_a, text_a, box_a) in enumerate(labels):
            for kind_b, text_b, box_b in labels[i + 1:]:
                assert _overlap(box_a, box_b) == 0.0, f"{kind_a} {text_a!r} overlaps {kind_b} {text_b!r}"
            for optic in panel["optics"]:
                assert _overlap(box_a, optic) == 0.0, f"{kind_a} {text_a!r} covers an optic at {optic}"
    markers = [text for kind, text, _ in panels[0]["labels"] if kind == "marker"]
    if numbered:
        assert markers, "the findings are marked"


def test_a_crowded_bench_gets_an_enlarged_inset():
    """The folded demo's fold mirrors, crystal, pump lens and dump sit within a few
    centimetres: the plan view adds an enlarged inset of that region, marked on the plan."""
    from benchcheck.planview import plan_drawing

    solution, numbered = _reviewed(ROOT / "layouts" / "folded-brewster.toml")
    svg, panels = plan_drawing(solution, numbered)
    assert len(panels) == 2 and "A: enlarged below" in svg and "times larger" in svg
    inset_optics = {text for kind, text, _ in panels[1]["labels"] if kind == "optic"}
    assert {"M2", "X1", "M3"} <= inset_optics


def _relay_line(n: int, per_row: int = 20) -> str:
    """An invented long relay line: rows of f = 200 mm lenses 50 mm apart, turned at each
    row end by two 90-degree fold mirrors, ending on a dump; ``n`` optics in all."""
    out = ["format = 1", "", "[bench]", f'name = "long relay line, {n} optics"',
           f"size = [{per_row * 50.0 + 200.0:.1f}, {(-(-n // per_row)) * 60.0 + 200.0:.1f}]", ""]
    path = []
    for k in range(n):
        row, j = divmod(k, per_row)
        distance = 60.0 if (j == 0 and row > 0) else 50.0
        if k == n - 1:
            out += ["[[optic]]", f'id = "O{k}"', 'kind = "dump"', "diameter = 25.0", ""]
            path.append(f'{{ id = "O{k}", distance = {distance} }}')
        elif j == per_row - 1 or (j == 0 and row > 0):
            fold = 90.0 if (row % 2 == 0) == (j == per_row - 1) else -90.0
            out += ["[[optic]]", f'id = "O{k}"', 'kind = "mirror"', "diameter = 12.7", ""]
            path.append(f'{{ id = "O{k}", distance = {distance}, fold = {fold} }}')
        else:
            out += ["[[optic]]", f'id = "O{k}"', 'kind = "lens"', "focal_length = 200.0", "diameter = 12.7", ""]
            path.append(f'{{ id = "O{k}", distance = {distance} }}')
    out += ["[[source]]", 'id = "LAS"', "at = [50.0, 100.0]", "heading = 0.0", "wavelength_nm = 1064",
            "power_w = 0.5", "waist = 0.2", "waist_at = 0.0", "",
            "[[beam]]", 'id = "line"', 'from = "LAS"', "path = [", *(f"  {p}," for p in path), "]", ""]
    return "\n".join(out)


def test_a_large_bench_labels_what_matters_without_overlap(tmp_path, capsys):
    """On a bench of more optics than LABEL_ALL_UP_TO, the plan labels the optics that
    matter (the first and last of the beam, the dump, every optic a finding names), says
    how many further optics are not labelled, and still no label or marker overlaps another
    or covers an optic; the long caustic says the same of its optics and waists."""
    from benchcheck.planview import LABEL_ALL_UP_TO, plan_drawing

    n = 150
    assert n > LABEL_ALL_UP_TO
    layout = tmp_path / "long.toml"
    layout.write_text(_relay_line(n), encoding="utf-8")
    (tmp_path / "benchcheck.toml").write_text("# defaults\n", encoding="utf-8")
    solution, numbered = _reviewed(layout)
    svg, panels = plan_drawing(solution, numbered)
    labels = panels[0]["labels"]
    optics = {text for kind, text, _ in labels if kind == "optic"}
    named = {t for _, f in numbered for t in f.targets if t in solution.placement.optics}
    assert {"O0", f"O{n - 1}"} | named <= optics
    assert len(optics) < n
    assert f"{n - len(optics)} further optics not labelled; see the optics table" in svg
    for panel in panels:
        boxes = np.array([box for _, _, box in panel["labels"]])
        blocked = np.array(panel["optics"])
        for others, skip_self in ((boxes, True), (blocked, False)):
            w = np.minimum(boxes[:, None, 2], others[None, :, 2]) - np.maximum(boxes[:, None, 0], others[None, :, 0])
            h = np.minimum(boxes[:, None, 3], others[None, :, 3]) - np.maximum(boxes[:, None, 1], others[None, :, 1])
            area = np.clip(w, 0.0, None) * np.clip(h, 0.0, None)
            if skip_self:
                np.fill_diagonal(area, 0.0)
            assert not area.any(), "a label overlaps another label or an optic"
    html = make(layout, tmp_path / "r.html", capsys)
    root = parse(html)
    note = next(a for a in root.iter(SVG + "a") if "further optics" in "".join(a.itertext()))
    assert note.get("href") == "#optics"          # the note links to the table that lists every optic
    assert "further optics (ticks at the foot)" in html and "narrowest: t" in html     # the caustic's axis title and waist
    assert html.count("<tr>") > n            # every optic has its row in the optics table


def test_a_seeded_passive_cavity_shows_its_resonance_figures(tmp_path, capsys):
    """The cavity section gives a passive cavity's finesse, linewidth, coupling, mode match,
    build-up and reflected and transmitted fractions.  Flat input coupler R1 = 0.99 and end
    mirror R2 = 0.999 500 mm apart, seeded with 3 W whose waist is half the cavity's.
    Expected values derived here from the closed forms (Siegman, "Lasers", 1986, ch. 11, from
    memory), rho = sqrt(R1 R2): finesse pi sqrt(rho) / (1 - rho); FWHM (2 FSR / pi)
    arcsin((1 - rho) / (2 sqrt(rho))) with FSR = c / (2 L); build-up T1 / (1 - rho)^2;
    reflected (sqrt(R2) - sqrt(R1))^2 / (1 - rho)^2; transmitted T1 T2 / (1 - rho)^2; mode
    match of coincident waists w and w / 2, (2 r / (1 + r^2))^2 with r = 0.5 (Kogelnik 1964,
    from memory)."""
    from test_enhancement import seeded

    from layouts_util import C_M_S

    r1, r2 = 0.99, 0.999
    rho = math.sqrt(r1 * r2)
    finesse = math.pi * math.sqrt(rho) / (1 - rho)
    fsr = C_M_S / (2 * 0.5)
    fwhm_khz = 2 * fsr / math.pi * math.asin((1 - rho) / (2 * math.sqrt(rho))) / 1e3
    build = (1 - r1) / (1 - rho) ** 2
    reflected = (math.sqrt(r2) - math.sqrt(r1)) ** 2 / (1 - rho) ** 2
    transmitted = (1 - r1) * (1 - r2) / (1 - rho) ** 2
    match = (2 * 0.5 / (1 + 0.25)) ** 2
    layout = tmp_path / "seeded.toml"
    layout.write_text(seeded(r1, r2, 3.0, 3.0, ratio=0.5), encoding="utf-8")
    (tmp_path / "benchcheck.toml").write_text("# defaults\n", encoding="utf-8")
    root = parse(make(layout, tmp_path / "r.html", capsys))
    section = next(e for e in root.iter() if e.get("id") == "cavities")
    table = next(t for t in section.iter("table") if any(th.text == "finesse" for th in t.iter("th")))
    row = ["".join(td.itertext()) for td in next(iter(table.iter("tbody"))).iter("td")]
    assert row[0] == "enh"
    assert row[1] == f"{finesse:.1f}"
    assert row[2] == f"{fwhm_khz:.4g} kHz"
    assert row[3] == "1 % / 0.1 %" and row[4] == "over-coupled"
    assert row[5] == "seed" and row[6] == "3 W (layout: input 3 W)"
    assert row[7] == f"{match:.4f}" and row[8] == f"{3.0 * match:.4g} W"
    assert row[9] == f"{build:.4g}"
    assert row[10] == f"{reflected * 100:.3g}" and row[11] == f"{transmitted * 100:.3g}"


def test_without_a_configuration_file_the_report_says_built_in_defaults(tmp_path, capsys):
    layout = tmp_path / "bench.toml"
    shutil.copyfile(ROOT / "layouts" / "two-mirror.toml", layout)
    html = make(layout, tmp_path / "r.html", capsys)
    assert "configuration built-in defaults (no configuration file found)" in html
    assert "(built-in default)" in html and "repository configuration" not in html
    (tmp_path / "benchcheck.toml").write_text("# the repository's own\n", encoding="utf-8")
    html = make(layout, tmp_path / "r.html", capsys)
    assert "configuration <code>" in html and "(repository configuration)" in html


def test_report_exits_0_on_error_findings_where_check_fails(tmp_path, capsys):
    """The report is a document, `check` the gate: on a layout with unwaived error findings
    `check` exits 1 and `report` writes the report and exits 0 (README, exit status)."""
    layout = ROOT / "layouts" / "flawed" / "every-rule-fires.toml"
    assert main(["check", str(layout)]) == 1
    capsys.readouterr()
    html = make(layout, tmp_path / "r.html", capsys)
    assert '<span class="sev error">error</span>' in html
    # a problem with the configuration: the report is written, the status is 2
    (tmp_path / "bench").mkdir()
    shutil.copyfile(layout, tmp_path / "bench" / "b.toml")
    (tmp_path / "bench" / "benchcheck.toml").write_text("[rules.no-such-rule]\nx = 1\n", encoding="utf-8")
    assert main(["report", str(tmp_path / "bench" / "b.toml"), "-o", str(tmp_path / "bench.html")]) == 2
    assert "no rule 'no-such-rule'" in capsys.readouterr().err
    assert (tmp_path / "bench.html").read_text(encoding="utf-8").startswith(MARKER)
