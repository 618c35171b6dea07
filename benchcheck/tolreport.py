"""Text and JSON (format 1) of a tolerance run; the numbers come from ``tolerance`` and
``alignment``, nothing is computed here beyond rounding."""

from __future__ import annotations

from . import tolspec
from .findings import SAFETY_CAUTION
from .abcd import PLANES
from .alignment import alignment_json
from .tolerance import PERCENTILES, wilson_interval

FORMAT = 1
INTERVAL = "Wilson score interval, 95 %"
METHOD = ("linear least-squares regression of each output on the sampled deviations over the builds stable in "
          "both planes; share = b_j^2 var(x_j) / var(y); for independent parameters the shares of an output add up to the fit's R^2")
#: rows of the sensitivity ranking printed per output in the text form
TEXT_TOP = 3


def _r(x: float, digits: int = 6) -> float:
    return float(f"{x:.{digits}g}")


def _trio(values) -> list[float]:
    return [_r(v, 5) for v in values]


def cavity_json(res) -> dict:
    lo, hi = wilson_interval(res.stable, res.samples)
    mlo, mhi = wilson_interval(res.with_margin, res.samples)
    return {
        "id": res.id,
        "parameters": [{"parameter": p.label, "tolerance": _r(p.tol), "unit": p.unit} for p in res.parameters],
        "yield": {"stable": _r(res.yield_stable), "with_margin": _r(res.yield_margin),
                  "ci95": [_r(lo), _r(hi)], "with_margin_ci95": [_r(mlo), _r(mhi)],
                  "margin_max_abs_m": res.margin_max_abs_m},
        "radius_um": {oid: {p: _trio(v) for p, v in planes.items()} for oid, planes in res.radius_um.items()},
        "ratio_t_s": {oid: _trio(v) for oid, v in res.ratio.items()},
        "sensitivity": [{"parameter": r["parameter"], "output": r["output"], "share": _r(r["share"], 4)}
                        for r in res.sensitivity],
        "sensitivity_fit_r2": {k: _r(v, 4) for k, v in res.fit_r2.items()},
        "alignment": alignment_json(res.alignment),
        **({"seed_beam": {k: (_trio(v) if isinstance(v, list) else v) for k, v in res.coupling.items()}}
           if res.coupling else {}),
    }


def tolerance_json(file: str, results: list, samples: int, seed: int, tolerances: tolspec.Tolerances,
                   notes: list[str]) -> dict:
    return {
        "format": FORMAT,
        "layout": file,
        "samples": samples,
        "seed": seed,
        "distribution": tolerances.distribution,
        "tolerances_from": tolerances.source,
        "percentiles": list(PERCENTILES),
        "interval": INTERVAL,
        "sensitivity_method": METHOD,
        "cavities": [cavity_json(r) for r in results],
        "notes": notes,
        "caution": SAFETY_CAUTION,
    }


def _pct(x: float) -> str:
    return f"{100.0 * x:.1f} %"


def tolerance_text(file: str, results: list, samples: int, seed: int, tolerances: tolspec.Tolerances,
                   notes: list[str]) -> str:
    dist = "uniform on [-t, t]" if tolerances.distribution == tolspec.UNIFORM else "normal, sigma = t/2"
    lines = [f"{file}: {samples} builds per cavity, seed {seed}, tolerances {dist} "
             f"(from {tolerances.source})"]
    lines += [f"  note: {n}" for n in notes]
    for res in results:
        lo, hi = wilson_interval(res.stable, res.samples)
        mlo, mhi = wilson_interval(res.with_margin, res.samples)
        lines.append(f"cavity {res.id}: {len(res.parameters)} toleranced parameters")
        lines.append(f"  yield, stable in both planes:   {_pct(res.yield_stable)}  (95 % {_pct(lo)} to {_pct(hi)})")
        lines.append(f"  yield, |m| <= {res.margin_max_abs_m:g} in both planes: {_pct(res.yield_margin)}  "
                     f"(95 % {_pct(mlo)} to {_pct(mhi)}; {INTERVAL})")
        if res.radius_um:
            lines.append("  mode radius (um), 5th / 50th / 95th percentile of the stable builds:")
            lines.append(f"    {'optic':<10} {'tangential':>26} {'sagittal':>26}")
            for oid, planes in res.radius_um.items():
                cells = [" / ".join(f"{v:.0f}" if v >= 100 else f"{v:.1f}" for v in planes[p]) if p in planes else "-"
                         for p in PLANES]
                lines.append(f"    {oid:<10} {cells[0]:>26} {cells[1]:>26}")
        for oid, v in res.ratio.items():
            lines.append(f"  w_t/w_s at {oid}: {v[0]:.3f} / {v[1]:.3f} / {v[2]:.3f}")
        if res.coupling:
            v = res.coupling["mode_match"]
            lines.append(f"  mode match of beam {res.coupling['beam']}: {v[0]:.4f} / {v[1]:.4f} / {v[2]:.4f}")
            if "circulating_w" in res.coupling:
                v = res.coupling["circulating_w"]
                lines.append(f"  circulating power in the mode (W): {v[0]:.4g} / {v[1]:.4g} / {v[2]:.4g}")
        if res.sensitivity:
            lines.append("  what drives the spread (share of the variance, linear regression; R^2 of the fit):")
            by_output: dict = {}
            for row in res.sensitivity:
                by_output.setdefault(row["output"], []).append(row)
            for output, rows in by_output.items():
                top = ", ".join(f"{r['parameter']} {_pct(r['share'])}" for r in rows[:TEXT_TOP])
                lines.append(f"    {output:<12} R^2 {res.fit_r2.get(output, 0.0):.2f}: {top}")
        elif res.stable < res.samples:
            lines.append("  too few stable builds for a sensitivity ranking")
        if res.alignment:
            lines.append("  axis shift (um per urad of tilt of each mirror, plate or crystal), largest over the cavity's optics:")
            for r in res.alignment:
                worst = max(r.shift_um_per_urad.items(), key=lambda kv: abs(kv[1]))
                lines.append(f"    {r.mirror:<10} {r.plane}: {abs(worst[1]):.3g} at {worst[0]}")
    if any("circulating_w" in (res.coupling or {}) for res in results):
        lines.append(SAFETY_CAUTION)      # power figures are shown
    return "\n".join(lines) + "\n"
