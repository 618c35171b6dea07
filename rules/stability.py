"""cavity-unstable: a round trip that is not stable in a plane, over the thermal-lens range."""

from __future__ import annotations

from benchcheck.findings import ERROR, Finding, Rule
from benchcheck.resonator import MARGINAL_WALKOFF, STATUS_TEXT

PLANE_NAMES = {"t": "tangential", "s": "sagittal"}


def m_text(m: float, excess: float | None = None) -> str:
    """m to four decimals, with |m| - 1 beside it where the rounding would hide it."""
    excess = abs(m) - 1.0 if excess is None else excess
    if excess != 0.0 and abs(excess) < 5e-5:
        return f"{m:+.4f} (|m| - 1 = {excess:.2g})"
    return f"{m:+.4f}"


def check(bench, options):
    for cav in bench.solution.cavities.values():
        for plane, name in PLANE_NAMES.items():
            mode = cav.modes[plane]
            if not mode.stable:
                what = "on the boundary, rays walk off" if mode.status == MARGINAL_WALKOFF else "unstable"
                yield Finding(
                    f"cavity \"{cav.id}\" is {what} in the {name} plane: half-trace m = "
                    f"{m_text(mode.m, None if mode.margin is None else -mode.margin)}, "
                    f"|m| must be below 1 ({STATUS_TEXT[mode.status]})",
                    (cav.id,), value=abs(mode.m), limit=1.0, unit="|m|",
                    hint="change a spacing or a mirror radius; 'benchcheck beams' shows m per plane")
            elif cav.thermal is not None and not cav.thermal.stable[plane]:
                lo, hi = cav.thermal.m_range[plane]
                worst = lo if abs(lo) > abs(hi) else hi
                lenses = ", ".join(f"{cid} {r[plane][0]:g} to {r[plane][1]:g} mm"
                                   for cid, r in cav.thermal.lenses.items() if r.get(plane))
                yield Finding(
                    f"cavity \"{cav.id}\" is stable at the design thermal lens but not over the whole range "
                    f"({lenses}) in the {name} plane: m reaches {m_text(worst)}",
                    (cav.id,), value=abs(worst), limit=1.0, unit="|m|",
                    hint="the cavity must stay stable from cold to full pump: shorten the arm that the "
                         "thermal lens destabilises, or narrow the range with better cooling")


RULES = (
    Rule(
        id="cavity-unstable",
        summary="round trip not stable in the tangential or the sagittal plane, over the whole thermal-lens range",
        explanation=(
            "A cavity is stable in a plane when the half-trace m = (A+D)/2 of its round-trip ABCD matrix lies "
            "strictly between -1 and 1 (Kogelnik & Li 1966). Each plane is checked separately, because off-axis "
            "curved mirrors and Brewster elements focus them differently. Where a crystal has a thermal-lens "
            "range, the cavity must be stable at every lens power in it. A round trip equal to +-I (the "
            "symmetric confocal cavity) retraces every ray and is reported by stability-margin, not here."
        ),
        check=check,
        severity=ERROR,
    ),
)
