"""The tolerance section of the HTML review: yield, mode-radius histograms, the sensitivity
ranking as a chart and the mirror-tilt table.

A section of its own (``tolerance_section``), called once from ``report_html``; the numbers
come from ``tolerance`` and ``alignment`` with the report's fixed sample count and seed, so
the same bench gives the same report.
"""

from __future__ import annotations

from html import escape

import numpy as np

from . import tolspec
from .tolerance import run, wilson_interval

REPORT_SAMPLES = 10_000
REPORT_SEED = 1
#: parameters shown per output in the sensitivity chart
TOP = 6
#: the planes told apart by line style as well as colour (the drawings read in greyscale)
LINE = {"t": dict(color="#0b5fa5", linestyle="-", linewidth=1.6),
        "s": dict(color="#c2571a", linestyle="--", linewidth=1.6)}


def _pct(x: float) -> str:
    return f"{100.0 * x:.1f} %"


def _histogram_svg(focus: dict) -> str | None:
    """Mode radius at the focus optics (crystals, else the tightest mode), both planes."""
    from .plots import _pyplot, _svg

    if not focus:
        return None
    plt = _pyplot()
    fig, axes = plt.subplots(1, len(focus), figsize=(3.6 * len(focus), 2.4), squeeze=False)
    for ax, (optic, planes) in zip(axes[0], focus.items()):
        both = np.concatenate([planes["t"], planes["s"]])
        bins = np.linspace(both.min(), both.max(), 41) if both.max() > both.min() else 10
        ax.hist(planes["t"], bins=bins, histtype="step", label="tangential", **LINE["t"])
        ax.hist(planes["s"], bins=bins, histtype="step", label="sagittal", **LINE["s"])
        ax.set_xlabel(f"mode radius at {optic} (µm)")
        ax.set_ylabel("builds")
        ax.legend(fontsize=7, frameon=False)
    return _svg(fig)


def _sensitivity_svg(rows: list[dict]) -> str | None:
    """Horizontal bars: the share of each output's variance explained by each parameter."""
    from .plots import _pyplot, _svg

    by_output: dict = {}
    for r in rows:
        by_output.setdefault(r["output"], []).append(r)
    if not by_output:
        return None
    plt = _pyplot()
    n = len(by_output)
    fig, axes = plt.subplots(1, n, figsize=(2.6 * n + 0.8, 0.28 * TOP + 1.0), squeeze=False)
    for ax, (output, items) in zip(axes[0], by_output.items()):
        items = sorted(items, key=lambda r: -r["share"])[:TOP]
        ax.barh(range(len(items)), [100 * r["share"] for r in items], color="#dcebf5", edgecolor="#0b5fa5",
                hatch="//")
        ax.set_yticks(range(len(items)))
        ax.set_yticklabels([r["parameter"] for r in items], fontsize=7)
        ax.invert_yaxis()
        ax.set_xlim(0, 100)
        ax.set_title(output, fontsize=8)
        ax.set_xlabel("share of variance (%)", fontsize=7)
        ax.grid(axis="y", visible=False)
    return _svg(fig)


def _alignment_table(res) -> str:
    from .report_html import _table

    if not res.alignment:
        return '<p class="none">No mirror, or no mode: no alignment table.</p>'
    optics = list(dict.fromkeys(k for r in res.alignment for k in r.shift_um_per_urad))
    rows = [[escape(r.mirror), r.plane] + [f"{abs(r.shift_um_per_urad[o]):.3g}" if o in r.shift_um_per_urad else "–"
                                            for o in optics] for r in res.alignment]
    return (_table(["tilted mirror", "plane"] + [escape(o) for o in optics], rows)
            + '<p class="small">Shift of the cavity axis at each optic, µm per µrad of tilt (magnitude; 3×3 '
              'ray-transfer matrices with the misalignment terms, the axis being the ray the misaligned round '
              'trip reproduces).</p>')


def tolerance_section(bench) -> str:
    """``<section id="tolerances">``: what the lab's build tolerances do to each cavity."""
    from .report_html import _table

    title = '<section id="tolerances"><h2>Tolerances and alignment</h2>'
    sol = bench.solution
    tol = getattr(bench, "tolerances", None) or tolspec.Tolerances()
    if not sol.cavities:
        return title + '<p class="none">No cavity.</p></section>'
    if not tolspec.applies(tol, bench.layout):
        return (title + '<p class="none">Neither the configuration ([tolerances]) nor the layout (an optic\'s '
                "'tolerance') states a build tolerance: nothing simulated.</p></section>")
    dist = "uniform on [−t, t]" if tol.distribution == tolspec.UNIFORM else "normal with σ = t/2"
    parts = [title, f'<p>{REPORT_SAMPLES:,} simulated builds per cavity (seed {REPORT_SEED}), tolerances {dist}, '
                    f'from the {escape(tol.source)}. Percentiles over the builds stable in both planes; '
                    'sensitivity by linear regression on the sampled deviations (shares of variance).</p>']
    for res in run(sol, tol, REPORT_SAMPLES, REPORT_SEED):
        lo, hi = wilson_interval(res.stable, res.samples)
        mlo, mhi = wilson_interval(res.with_margin, res.samples)
        parts.append(f"<h3>Cavity {escape(res.id)}</h3>")
        parts.append(_table(["builds", "share", "95 % interval (Wilson)"], [
            ["stable in both planes", _pct(res.yield_stable), f"{_pct(lo)} – {_pct(hi)}"],
            [f"stable with |m| ≤ {res.margin_max_abs_m:g}", _pct(res.yield_margin), f"{_pct(mlo)} – {_pct(mhi)}"]]))
        if res.coupling:
            v = res.coupling["mode_match"]
            line = (f'<p>Mode match of beam {escape(res.coupling["beam"])} (5th / 50th / 95th percentile): '
                    f'{v[0]:.4f} / {v[1]:.4f} / {v[2]:.4f}')
            if "circulating_w" in res.coupling:
                c = res.coupling["circulating_w"]
                line += f'; circulating power in the mode {c[0]:.4g} / {c[1]:.4g} / {c[2]:.4g} W'
            parts.append(line + ".</p>")
        hist = _histogram_svg(res.focus)
        if hist:
            parts.append(f'<figure class="narrow">{hist}<figcaption>Mode radius over the stable builds at '
                         f'{escape(", ".join(res.focus))}: tangential solid, sagittal dashed.</figcaption></figure>')
        chart = _sensitivity_svg(res.sensitivity)
        if chart:
            fit = ", ".join(f"{escape(k)} {v:.2f}" for k, v in res.fit_r2.items())
            parts.append(f'<figure>{chart}<figcaption>What drives the spread: the {TOP} largest shares per '
                         f'output (R² of the linear fit: {fit}).</figcaption></figure>')
        parts.append(_alignment_table(res))
    parts.append("</section>")
    return "\n".join(parts)
