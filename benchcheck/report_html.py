"""The design-review report: one self-contained HTML file (no network, no scripts, no fonts
or images to fetch), readable on screen and printable on A4 or Letter.

It puts together what the other stages computed: the plan view, beam-size plots, the
stability diagram and spacing windows, tables per cavity and per optic, the findings (each
linked to its marker on the drawing), waivers, and a safety summary for the laser safety
officer.  Nothing here computes optics beyond looking numbers up.
"""

from __future__ import annotations

import datetime as _dt
import math
from html import escape
from pathlib import Path

from . import __version__
from .beamtable import fmt, fmt_si
from .findings import SAFETY_CAUTION, Bench
from .planview import STYLE, plan_svg
from .resonator import STATUS_LABEL

#: First line of every report: an existing file that starts with it may be replaced.
MARKER = "<!-- benchcheck design-review report -->"
SEVERITY_ORDER = {"error": 0, "warning": 1, "note": 2}


def _f(x, spec: str, none: str = "–") -> str:
    return fmt(x, spec, none)


def _si(x, unit: str) -> str:
    return fmt_si(x, unit, "–")


def _table(head: list[str], rows: list[list[str]], cls: str = "") -> str:
    """An HTML table; cells are already escaped HTML."""
    if not rows:
        return '<p class="none">None.</p>'
    h = "".join(f"<th>{c}</th>" for c in head)
    body = "\n".join("<tr>" + "".join(f"<td>{c}</td>" for c in r) + "</tr>" for r in rows)
    return f'<table class="{cls}"><thead><tr>{h}</tr></thead><tbody>\n{body}\n</tbody></table>'


def _lidt_text(lidt) -> str:
    if lidt is None:
        return "–"
    parts = []
    if lidt.w_cm is not None:
        parts.append(f"{lidt.w_cm:.3g} W/cm")
    if lidt.w_cm2 is not None:
        parts.append(f"{lidt.w_cm2:.3g} W/cm²")
    if lidt.j_cm2 is not None:
        extra = f" at {lidt.pulse_s:.3g} s" if lidt.pulse_s else ""
        extra += f", {lidt.wavelength_nm:g} nm" if lidt.wavelength_nm else ""
        parts.append(f"{lidt.j_cm2:.3g} J/cm²{extra}")
    return escape("; ".join(parts))


def _rule_module(name: str):
    """A module of the built-in rule pack (benchcheck.rules.NAME): the report shows the
    numbers the rules compute, from the same functions."""
    import importlib

    try:
        return importlib.import_module(f"benchcheck.rules.{name}")
    except ImportError:   # a source checkout: the rule pack is loaded by the plugin manager
        from .plugins import _builtin_module
        _builtin_module()
        return importlib.import_module(f"benchcheck.rules.{name}")


def _loss_text(loss) -> str:
    if loss is None:
        return "–"
    return "&lt; 1e-9" if loss < 1e-9 else f"{loss:.2e}"


def _ratio_text(loads, factor: float) -> str:
    """The largest load over its LIDT among the ratings of the optic: the value the
    coating-damage rule compares (both directions where they overlap, the worst surface,
    a pulsed rating moved to the beam's pulse length), divided by the rating itself."""
    if not loads:
        return "–"
    worst = max(ld.value / ld.rated for ld in loads)
    text = f"{worst:.2g}"
    return f"<strong>{text}</strong>" if worst > 1.0 / (factor or 1.0) else text


def shown_root(layout_file: str) -> Path:
    """Paths in the report are relative to the layout's repository (the nearest folder
    holding .git), else to the current folder: never a machine's absolute path when the
    files lie inside either."""
    here = Path(layout_file).resolve().parent
    for folder in (here, *here.parents):
        if (folder / ".git").exists():
            return folder
    return Path.cwd().resolve()


def shown_path(file: str, root: Path) -> str:
    """``file`` relative to ``root`` where it lies inside it, else as given."""
    try:
        return Path(file).resolve().relative_to(root).as_posix()
    except (ValueError, OSError):
        return file


class Report:
    def __init__(self, bench: Bench, findings: list, config_path: str | None, rules: dict):
        self.bench = bench
        self.solution = bench.solution
        self.layout = bench.layout
        self.findings = sorted(findings, key=lambda f: (SEVERITY_ORDER.get(f.severity, 3), f.waived,
                                                          f.loc.line if f.loc else 0, f.rule))
        self.numbered = list(enumerate(self.findings, start=1))
        #: ids the findings name: drawn and labelled in full on a long path's caustic
        self.named = {t for f in self.findings for t in f.targets}
        self.root = shown_root(self.layout.file)
        self.config_path = config_path
        self.rules = rules

    def _option(self, rule_id: str, name: str):
        """A rule option as the repository's configuration sets it (else its default)."""
        from .config import load_config

        value = self.rules[rule_id][0].defaults()[name] if rule_id in self.rules else None
        if self.config_path:
            try:
                value = load_config(Path(self.config_path)).options(rule_id).get(name, value)
            except Exception:  # noqa: BLE001 - the check run has reported a bad configuration already
                pass
        return value

    # -- sections ----------------------------------------------------------------------
    def html(self, generated: _dt.datetime | None = None) -> str:
        from . import plots
        from .report_tolerance import tolerance_section

        generated = generated or _dt.datetime.now().replace(microsecond=0)
        sol = self.solution
        name = escape(self.layout.bench.name)
        counts = {s: sum(1 for f in self.findings if f.severity == s and not f.waived) for s in SEVERITY_ORDER}
        waived = sum(1 for f in self.findings if f.waived)
        summary = (f'{counts["error"]} error{"s" * (counts["error"] != 1)}, {counts["warning"]} '
                   f'warning{"s" * (counts["warning"] != 1)}, {counts["note"]} note{"s" * (counts["note"] != 1)}'
                   + (f", {waived} waived" if waived else ""))
        parts = [
            MARKER,
            "<!DOCTYPE html>",
            '<html lang="en"><head><meta charset="utf-8"/>',
            '<meta name="viewport" content="width=device-width, initial-scale=1"/>',
            f"<title>Bench review: {name}</title>",
            f"<style>{CSS}</style></head><body>",
            f'<header><h1>Bench review: {name}</h1>'
            f'<p class="meta">Layout <code>{escape(shown_path(self.layout.file, self.root))}</code> · configuration '
            + (f'<code>{escape(shown_path(self.config_path, self.root))}</code> · ' if self.config_path else
               'built-in defaults (no configuration file found) · ') +
            f'benchcheck {escape(__version__)} · '
            f'{generated.isoformat(sep=" ")}</p>'
            f'<p class="summary">{summary}</p></header>',
            '<nav><a href="#safety">Safety</a> · <a href="#plan">Plan view</a> · <a href="#findings">Findings</a>'
            ' · <a href="#cavities">Cavities</a> · <a href="#beams">Beams</a> · <a href="#optics">Optics</a>'
            ' · <a href="#tolerances">Tolerances</a></nav>',
            self._safety(),
            '<section id="plan"><h2>Plan view</h2>',
            f'<figure class="wide">{plan_svg(sol, self.numbered, self.bench.hazards)}<figcaption>{self._legend()}'
            '</figcaption></figure>',
            "</section>",
            self._findings(),
            self._cavities(plots),
            self._beams(plots),
            self._optics(),
            tolerance_section(self.bench),
            f'<footer><p>{escape(SAFETY_CAUTION)}</p></footer>',
            "</body></html>",
        ]
        return "\n".join(parts) + "\n"

    def _legend(self) -> str:
        items = [
            (f'<span class="swatch" style="border-top:3px solid {STYLE["cavity"]}"></span>', "cavity legs (solid)"),
            (f'<span class="swatch" style="border-top:2px solid {STYLE["beam"]}"></span>', "beams (solid, thin)"),
            (f'<span class="swatch" style="border-top:2px dashed {STYLE["stray"]}"></span>',
             "leak and secondary beams (dashed, arrow at the end)"),
            (f'<span class="swatch" style="background:{STYLE["mount"]}"></span>', "mount footprints"),
            (f'<span class="swatch" style="border:2px dashed {STYLE["enclosure"]}"></span>', "enclosures"),
            ('<span class="swatch hatch"></span>', "keep-out zones"),
            (f'<span class="swatch" style="background:{STYLE["hazard"]};opacity:0.45"></span>',
             "hazard zone of an open beam above the MPE (wide band; labelled with its hazard distance where it runs on past the "
             "drawing)"),
            ('<span class="dot">n</span>', "finding n: circle error, diamond warning, square note, hollow waived "
                                            "(links to its row)"),
        ]
        return " ".join(f'<span class="key">{s} {escape(t)}</span>' for s, t in items)

    def _enclosure_of(self, points) -> str | None:
        """The enclosure that covers a stretch (the hazard assessment's own test)."""
        from shapely.geometry import Polygon

        from .hazards import enclosed

        for z in self.layout.zones:
            if z.kind == "enclosure" and enclosed(Polygon(z.polygon), points):
                return z.id
        return None

    def _exposure_tables(self) -> str:
        """Per wavelength: exposure, MPE, worst power, eyewear OD, class estimate; then every
        segment on open bench with its exposure against the MPE and hazard distance."""
        from .hazardtable import M2_TO_CM2, _nohd, _power

        a = self.bench.hazards
        rows = []
        for w in a.wavelengths:
            unit = "J/cm²" if w.pulsed else "W/cm²"
            mpe = "none built in" if w.mpe is None else f"{w.mpe / M2_TO_CM2:.3g} {unit}"
            rows.append([f"{w.wavelength_nm:g} nm", f"{w.exposure_s:g} s", escape(mpe),
                         escape(_power(w.max_power_w, w.max_pulse_energy_j)),
                         "–" if w.od is None else f"<strong>OD {w.od}</strong>", escape(w.class_estimate or "–"),
                         escape(w.problem or "")])
        per_wl = _table(["wavelength", "exposure", "MPE", "worst power or pulse", "eyewear", "class (estimate)",
                         "cannot judge"], rows)
        src = _table(["source or output", "kind", "wavelength", "power", "class (estimate)"],
                     [[escape(s.id), escape(s.kind), f"{s.wavelength_nm:g} nm",
                       escape(_power(s.power_w, s.pulse_energy_j)), escape(s.class_estimate or "–")]
                      for s in a.sources])
        open_rows = []
        for seg in a.segments:
            if seg.inside_enclosure:
                continue
            reach = ", ".join("table edge" if r["kind"] == "table-edge" else f"keep-out {r['id']}"
                              for r in seg.reaches)
            ratio = "–" if seg.ratio is None else f"{seg.ratio:.3g}"
            if seg.ratio is not None and seg.ratio > 1:
                ratio = f"<strong>{ratio}</strong>"
            open_rows.append([escape(seg.kind), escape(seg.id), f"{seg.wavelength_nm:g} nm",
                              escape(_power(seg.power_w, seg.pulse_energy_j)), f"{seg.length_mm:.0f} mm", ratio,
                              "–" if seg.od is None else str(seg.od), escape(_nohd(seg)), escape(reach or "–"),
                              escape(seg.problem or "")])
        opened = _table(["kind", "segment", "wavelength", "power", "length", "exposure / MPE", "OD",
                         "hazard distance", "reaches", "cannot judge"], open_rows) if open_rows else \
            "<p>No segment lies outside an enclosure.</p>"
        return (f'<h3>Exposure and eyewear by wavelength</h3>{per_wl}'
                f'<p class="small">Eyewear covers the worst segment at each wavelength, enclosed or not (alignment '
                f'is done with covers open). Class estimates are simplified from IEC 60825-1:2014 and never '
                f'replace the manufacturer\'s classification.</p>{src}'
                f'<h3>Open beams</h3>{opened}'
                f'<p class="small">{escape(a.caution)}</p>')

    def _safety(self) -> str:
        from .reporters import not_an_approval

        sol = self.solution
        clean = "" if any(not f.waived for f in self.findings) else f" {escape(not_an_approval(self.findings))}"
        limits = self.bench.limits
        rows = []
        for c in sol.cavities.values():
            both = " each way" if c.kind == "linear" else ""
            path = sol.trace.cavities[c.id]
            pts = [tuple(h.point) for h in path.hits] + ([tuple(path.hits[0].point)] if path.role == "ring" else [])
            box = self._enclosure_of(pts)
            power = "not given" if c.circulating_w is None else f"{c.circulating_w:.4g} W{both}"
            if c.circulating_w is None:
                status = "–"
            elif box:
                status = f"inside enclosure {escape(box)}: the open-bench limit does not apply"
            elif c.circulating_w > limits["intracavity_power_w"]:
                status = "<strong>above, on an open bench</strong>"
            else:
                status = "below"
            rows.append([escape(c.id), escape(c.kind), power, status])
        cav_table = _table(["cavity", "kind", "circulating (one-way)",
                            f"open-bench limit {limits['intracavity_power_w']:g} W"], rows)
        beam_rows = [self._beam_row(b) for b in sol.beams.values()]
        beam_table = _table(["beam", "power", "pulse energy", "ends", "status"], beam_rows)
        stray_rows = []
        for r in sol.strays:
            st, end = r.stray, r.stray.end
            power = "–" if r.power_w is None else f'{"≤ " if r.at_most else ""}{r.power_w:.3g} W'
            where, status = self._stray_status(st, end, r.power_w, limits["stray_power_w"])
            stray_rows.append([escape(st.kind), escape(st.id), power, escape(where), status])
        stray_table = _table(["kind", "beam", "power", "where it goes", "status"], stray_rows)
        return (f'<section id="safety"><h2>Safety summary</h2>'
                f'<p class="caution"><strong>{escape(SAFETY_CAUTION)}</strong> The figures below come from the '
                f'plan, not from measurement.{clean}</p>'
                f'{self._exposure_tables()}'
                f'<h3>Circulating power</h3>{cav_table}'
                f'<h3>Beams</h3>{beam_table}'
                f'<h3>Leak and secondary beams</h3>{stray_table}'
                f'<p class="small">Stray-power limit {limits["stray_power_w"]:g} W '
                f'({"repository configuration" if self.config_path else "built-in default"}). '
                f'A leak is contained when it stays inside an enclosure; one that crosses open bench is open even '
                f'where a dump, a detector or an enclosure wall stops it at the end.</p></section>')

    def _beam_row(self, b) -> list[str]:
        last = b.hits[-1]
        optic = self.layout.optics[last.optic]
        energy = "–"
        if last.peak_j_cm2 is not None and last.w["t"] and last.w["s"]:
            e = last.peak_j_cm2 * math.pi * last.w["t"] * last.w["s"] * 1e-2 / 2.0
            energy = f"{e:.3g} J at {escape(last.optic)}"
        power = "–" if b.power_w is None else f"{b.power_w:.3g} W"
        if b.into is not None:
            ends = f"coupled into cavity {escape(b.into)} through {escape(last.optic)}"
            status = "contained in the cavity"
        elif b.tail is None:
            rating = optic.max_power_w
            got = last.power_w
            ends = f"{escape(optic.kind)} {escape(optic.id)}" + (f", rated {rating:g} W" if rating else "")
            if rating is not None and got is not None and got > rating:
                status = f"<strong>{got:.3g} W on it: over its rating</strong>"
            else:
                status = "terminated" + (f" ({got:.3g} W on it)" if got is not None else "")
        else:
            t = b.tail
            stopped = t.kind == "zone" and t.zone_kind == "enclosure"
            where = {"table-edge": "leaves the table", "footprint": f"meets the mount of {t.id}",
                     "zone": f"meets {t.zone_kind} zone {t.id}"}[t.kind]
            ends = (f"not on a dump: traced on from {escape(last.optic)}, {escape(where)} at "
                    f"({t.point[0]:.0f}, {t.point[1]:.0f}) mm")
            status = "stopped by the enclosure wall" if stopped else "<strong>unterminated</strong>"
        return [escape(b.id), power, energy, ends, status]

    def _stray_status(self, st, end, power, limit) -> tuple[str, str]:
        at = f"({end.point[0]:.0f}, {end.point[1]:.0f}) mm"
        box = self._enclosure_of(st.path_points())
        if end.kind == "footprint":
            optic = self.layout.optics[end.id]
            where = f"{optic.kind} {end.id} at {at}, {end.length:.0f} mm on"
            on_dump = optic.kind in ("dump", "detector")
        elif end.kind == "zone":
            where = f"{end.zone_kind} zone {end.id} at {at}, {end.length:.0f} mm on"
            on_dump = False
        else:
            where = f"table edge at {at}, {end.length:.0f} mm on"
            on_dump = False
        if st.via:
            where = f"through {', '.join(st.via)} to the " + where
        small = power is not None and power * st.passed <= limit      # what reaches the end
        if box:
            return where, f"contained (inside enclosure {escape(box)})"
        if on_dump:
            return where, "stopped on a dump or detector, open path before it"
        if end.kind == "zone" and end.zone_kind == "enclosure":
            status = "stopped by the outside of an enclosure wall after open bench"
        else:
            status = "not stopped"
        return where, (status + " (below the stray limit)" if small else f"<strong>{status}</strong>")

    def _findings(self) -> str:
        rows = []
        for n, f in self.numbered:
            loc = f"{escape(shown_path(f.loc.file, self.root))}:{f.loc.line}:{f.loc.column}" if f.loc else "–"
            sev = f'<span class="sev {escape(f.severity)}">{escape(f.severity)}</span>'
            if f.waived:
                sev += ' <span class="waived">waived</span>'
            unit = escape(f.unit or "")
            value, limit = (x if x is not None and math.isfinite(x) else None for x in (f.value, f.limit))
            if value is not None and limit is not None:
                measured = f"{value:.4g} / {limit:.4g} {unit}"
            elif value is not None:
                measured = f"{value:.4g} {unit}"
            else:
                measured = "–"
            extra = f'<div class="hint">{escape(f.waiver_reason or "")}</div>' if f.waived else (
                f'<div class="hint">{escape(f.hint)}</div>' if f.hint else "")
            rows.append([f'<a id="finding-{n}" href="#plan" class="num {escape(f.severity)}'
                         f'{" waived-num" if f.waived else ""}">{n}</a>', sev,
                         f"<code>{escape(f.rule)}</code>", escape(f.message) + extra, measured,
                         f"<code>{loc}</code>"])
        table = _table(["#", "severity", "rule", "finding", "value / limit", "where"], rows, "findings")
        waivers = []
        today = _dt.date.today()
        for w in self.layout.waivers:
            matched = any(f.waived and f.rule == w.rule and w.target in f.targets for f in self.findings)
            status = ("expired" if w.until is not None and w.until < today else "active" if matched else "matches nothing")
            waivers.append([f"<code>{escape(w.rule)}</code>", escape(w.target), escape(w.reason), escape(w.approved_by),
                            escape(w.until.isoformat()) if w.until else "–", escape(status)])
        wt = _table(["rule", "target", "reason", "approved by", "until", "status"], waivers)
        return f'<section id="findings"><h2>Findings</h2>{table}<h3>Waivers</h3>{wt}</section>'

    def _cavities(self, plots) -> str:
        sol = self.solution
        if not sol.cavities:
            return '<section id="cavities"><h2>Cavities</h2><p class="none">None.</p></section>'
        rows = []
        for c in sol.cavities.values():
            for plane, name in (("t", "tangential"), ("s", "sagittal")):
                mode = c.modes[plane]
                rows.append([escape(c.id) if plane == "t" else "", name, f"{mode.m:+.4f}",
                             escape(STATUS_LABEL[mode.status].lower()), _f(c.gouy_deg(plane), ".2f"), _si(c.tms_hz(plane), "Hz"),
                             _si(c.fsr_hz, "Hz") if plane == "t" else "",
                             (("not given" if c.circulating_w is None else f"{c.circulating_w:.4g} W")
                              if plane == "t" else "")])
        table = _table(["cavity", "plane", "m = (A+D)/2", "status", "Gouy (deg)", "mode spacing", "FSR",
                        "circulating"], rows) + self._enhancement()
        figs = []
        for c in sol.cavities.values():
            windows = self._windows(c)
            scan = plots.stability_scan_svg(sol, c.id, windows)
            if scan:
                figs.append(f'<figure class="wide">{scan}<figcaption>Cavity {escape(c.id)}: half-trace of both '
                            f'planes against what brings it nearest to an edge (the thermal lens over its range, or '
                            f'the spacing with the narrowest window, named on the axis); stable where both curves '
                            f'stay in the shaded band; the plan dotted.</figcaption></figure>')
            prof = plots.caustic_svg(sol, c.id, "cavity", self.named)
            if prof:
                figs.append(f'<figure class="wide">{prof}<figcaption>Cavity {escape(c.id)}: the mode along the path '
                            f'(a linear cavity once, end to end; a ring once round), tangential radius above the axis, '
                            f'sagittal below, to scale; the crystal and the tightest aperture in red.</figcaption></figure>')
            if windows:
                svg = plots.windows_svg(windows)
                figs.append(f'<figure class="wide">{svg}<figcaption>Cavity {escape(c.id)}: how far each air '
                            f'spacing may move with the cavity stable in both planes.</figcaption></figure>')
        return f'<section id="cavities"><h2>Cavities</h2>{table}{"".join(figs)}</section>'

    def _enhancement(self) -> str:
        """The passive (seeded) cavities on resonance: what the solver computed for them
        (the same figures as ``benchcheck beams``)."""
        rows = []
        for c in self.solution.cavities.values():
            e = c.enhancement
            if e is None:
                continue
            seeds = ", ".join(escape(b) for b in e.seeds) or "none"
            fed = "–" if e.delivered_w is None else f"{e.delivered_w:.4g} W"
            if e.declared_w is not None:
                fed += f" (layout: input {e.declared_w:.4g} W)"
            rows.append([escape(c.id), _f(e.finesse, ".1f"), _si(e.linewidth_hz, "Hz"),
                         f"{e.input_transmission * 100:.3g} % / {e.rest_loss * 100:.3g} %", escape(e.coupling),
                         seeds, fed, _f(e.mode_match, ".4f"), "–" if e.input_w is None else f"{e.input_w:.4g} W",
                         _f(e.buildup, ".4g"), _f(None if e.reflected is None else e.reflected * 100, ".3g"),
                         _f(None if e.transmitted is None else e.transmitted * 100, ".3g")])
        if not rows:
            return ""
        table = _table(["cavity", "finesse", "linewidth (FWHM)", "input coupler T / rest of round-trip loss",
                        "coupling", "seeded by", "delivered to the input coupler", "mode match", "in the cavity's mode",
                        "build-up", "reflected (%)", "transmitted (%)"], rows)
        return (f'<h3>Passive cavities on resonance</h3>{table}<p class="small">Build-up: circulating power over '
                f'the power in the cavity\'s mode (delivered power times mode match). Reflected and transmitted: '
                f'fractions of that mode-matched input power, on resonance; transmitted means leaving through the '
                f'other mirrors. Impedance-matched when the input coupler\'s transmission equals the rest of the '
                f'round-trip loss.</p>')

    def _windows(self, cav):
        if not (cav.stable("t") and cav.stable("s")):
            return []
        spacing_windows = _rule_module("margin").spacing_windows
        try:
            return spacing_windows(cav, self.layout, self.solution.trace.cavities[cav.id])
        except Exception:  # noqa: BLE001 - the drawing is optional; the rule reports its own failure
            return []

    def _beams(self, plots) -> str:
        sol = self.solution
        figs = []
        for b in sol.beams.values():
            prof = plots.caustic_svg(sol, b.id, "beam", self.named)
            if prof:
                figs.append(f'<figure class="wide">{prof}<figcaption>Beam {escape(b.id)} from '
                            f'{escape(b.origin)}: tangential radius above the axis, sagittal below, to scale, '
                            f'with each optic at its place.</figcaption></figure>')
        body = "".join(figs) or '<p class="none">None.</p>'
        return f'<section id="beams"><h2>Beams</h2>{body}</section>'

    def _optics(self) -> str:
        sol = self.solution
        rows = []
        clipping, damage = _rule_module("clipping"), _rule_module("damage")
        factor = self._option("coating-damage", "safety_factor")
        for role, results in (("cavity", sol.cavities), ("beam", sol.beams)):
            for res in results.values():
                for i, h in enumerate(res.hits):
                    optic = self.layout.optics[h.optic]
                    clipped = clipping.clip_loss(self.bench, role, res.id, res, i)
                    loss = None if clipped is None else clipped[0]
                    loads = damage.surface_loads(self.bench, role, res.id, res, i)
                    peak = (f"{h.peak_j_cm2:.3g} J/cm²" if h.peak_j_cm2 is not None else
                            f"{h.peak_w_cm2:.3g} W/cm²" if h.peak_w_cm2 is not None else "–")
                    rows.append([escape(h.optic), escape(optic.kind), f"{escape(role)} {escape(res.id)}",
                                 _f(h.aoi_deg, ".2f"), _f(None if h.w["t"] is None else h.w["t"] * 1e3, ".1f"),
                                 _f(None if h.w["s"] is None else h.w["s"] * 1e3, ".1f"),
                                 _f(h.power_w, ".4g"), peak, _lidt_text(optic.lidt),
                                 _loss_text(loss), _ratio_text(loads, factor)])
        table = _table(["optic", "kind", "on", "AOI (deg)", "w_t (µm)", "w_s (µm)", "power (W)",
                        "peak of the beam", "LIDT", "clip loss", "load / LIDT"], rows, "optics")
        return (f'<section id="optics"><h2>Optics</h2>{table}<p class="small">Peak of the beam: 2P/(π w_t w_s) '
                f'(or the fluence 2E/(π w_t w_s)), one-way, at the hit point (a crystal\'s centre). Load / LIDT: what '
                f'coating-damage compares, over the rating: the peak on the worst surface (the footprint grows by '
                f'1/cos of the angle of incidence), both directions on the inner optics of a linear cavity (one way '
                f'on its end mirrors), W/cm ratings against P over the smaller 1/e² footprint diameter, a pulsed '
                f'rating moved to the beam\'s pulse length and wavelength; in bold above 1 / the safety factor, '
                f'where coating-damage reports it. Clip loss: what aperture-clipping computes, the power outside the '
                f'clear aperture projected at the angle of incidence, on the worst face.</p></section>')


CSS = """
:root { --ink: #222; --muted: #5c5a55; --rule: #d8d4cb; }
* { box-sizing: border-box; }
body { font: 14px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif;
       color: var(--ink); margin: 0 auto; max-width: 1100px; padding: 18px 22px 40px; background: #fff; }
h1 { font-size: 22px; margin: 0 0 4px; } h2 { font-size: 18px; border-bottom: 2px solid var(--ink);
  padding-bottom: 2px; margin-top: 28px; } h3 { font-size: 15px; margin: 18px 0 6px; }
.meta, .small, figcaption { color: var(--muted); font-size: 12px; }
.summary { font-weight: 600; }
nav { border-top: 1px solid var(--rule); border-bottom: 1px solid var(--rule); padding: 6px 0; font-size: 13px; }
a { color: #0b5fa5; }
table { border-collapse: collapse; width: 100%; font-size: 12.5px; margin: 6px 0 10px; }
th, td { border-bottom: 1px solid var(--rule); padding: 4px 6px; text-align: left; vertical-align: top; }
th { background: #f3f1ec; font-weight: 600; }
td code, p code { font-size: 11.5px; }
.findings td:first-child { width: 2.2em; }
.num { display: inline-block; min-width: 1.7em; text-align: center; border-radius: 1em; background: #44546a;
       color: #fff; text-decoration: none; font-weight: 600; border: 1.5px solid transparent; }
.num.error { background: #b3261e; } .num.warning { background: #8a5a00; border-radius: 3px; }
.num.note { background: #44546a; border-radius: 0; }
.num.waived-num { background: #fff; color: #44546a; border-color: #44546a; }
.sev { font-weight: 700; text-transform: uppercase; font-size: 11px; letter-spacing: .03em; }
.sev.error { color: #b3261e; } .sev.warning { color: #8a5a00; } .sev.note { color: #44546a; }
.waived { font-size: 11px; border: 1px solid var(--muted); padding: 0 3px; border-radius: 3px; }
.hint { color: var(--muted); font-size: 12px; margin-top: 2px; }
.caution { border-left: 5px solid #b3261e; background: #fbf1ef; padding: 8px 12px; }
figure { margin: 12px 0; } figure svg { width: 100%; height: auto; }
figure.narrow { max-width: 380px; display: inline-block; vertical-align: top; margin-right: 18px; }
svg.plan text { font-family: system-ui, Arial, sans-serif; }
svg .small { font-size: 10px; fill: #5c5a55; } svg .tiny { font-size: 9px; }
svg .label { font-size: 10px; font-weight: 600; fill: #222; }
svg .mark { font-size: 9px; font-weight: 700; fill: #fff; }
.key { display: inline-block; margin: 2px 12px 2px 0; white-space: nowrap; }
.swatch { display: inline-block; width: 22px; height: 10px; vertical-align: middle; }
.swatch.hatch { background: repeating-linear-gradient(45deg, #d08a00 0 2px, transparent 2px 6px); border: 1px solid #d08a00; }
.dot { display: inline-block; width: 16px; height: 16px; border-radius: 8px; background: #44546a; color: #fff;
       font-size: 10px; text-align: center; line-height: 16px; font-weight: 700; }
.none { color: var(--muted); }
footer { margin-top: 30px; border-top: 1px solid var(--rule); color: var(--muted); font-size: 12px; }
@media print {
  @page { margin: 14mm; }
  body { max-width: none; padding: 0; font-size: 10.5pt; }
  nav { display: none; }
  a { color: inherit; text-decoration: none; }
  section, figure, tr { break-inside: avoid; page-break-inside: avoid; }
  h2 { break-after: avoid; page-break-after: avoid; }
  #plan { break-before: page; }
}
"""
