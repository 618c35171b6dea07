"""breadboard-grid: every mount must stand on the breadboard's tapped-hole grid.

An optic is fixed to the table by a screw into a tapped hole, or by a clamp whose slot
reaches a little way from one.  A mount drawn between holes cannot stand where the plan
puts it: on the day it is moved to the nearest hole, and every beam it steers moves too.
Finding that before the build is cheaper than re-aligning after it.

The point checked is the centre of the mount's footprint, not the optic's ``at``: the
mount's base is what is bolted down, and the layout gives its outline and nothing finer.
For a transmissive optic (lens, crystal, plate, aperture, dump, detector) the footprint is
centred on the optic, so the two agree; for a mirror or splitter ``at`` is the reflecting
face and the footprint reaches ``depth`` behind it, so the centre is half the mount depth
behind the face along its normal.  A lab whose mirror posts sit under the face can say so
with a thinner ``mount = { size = [w, d] }``.

Obstacles are exempt: they describe what already stands on the table (a post, a box, a
wall), not something the plan places.  Sources are not optics and are not checked: a
laser head usually stands on its own base plate.
"""

from __future__ import annotations

import math

from benchcheck import Finding, Option, Rule

from ._options import number, point

RULE_ID = "breadboard-grid"


def hole_indices(origin: float, pitch: float, length: float) -> tuple[int, int] | None:
    """First and last index k of the holes ``origin + k * pitch`` that lie on a table side of
    ``length`` mm (0 to ``length`` inclusive); None when no hole does."""
    slack = 1e-9 * max(1.0, abs(length), abs(origin))
    first = math.ceil((0.0 - origin) / pitch - slack / pitch)
    last = math.floor((length - origin) / pitch + slack / pitch)
    return (first, last) if first <= last else None


def nearest_hole(centre, origin, pitch: float, size) -> tuple[float, float] | None:
    """The tapped hole on the table nearest to ``centre`` (mm), or None if the grid puts no
    hole on the table.

    The holes form the product of one row of x positions and one of y positions, and the
    squared distance is the sum of the squared x and y offsets, so the nearest hole is the
    nearest x position paired with the nearest y position.  Each is the rounded grid index,
    kept to the holes that lie on the table: a mount near the edge is clamped to the last
    real hole, not to one the grid would put beyond the edge.
    """
    out = []
    for c, o, length in zip(centre, origin, size):
        span = hole_indices(o, pitch, length)
        if span is None:
            return None
        k = min(max(round((c - o) / pitch), span[0]), span[1])
        out.append(o + k * pitch)
    return out[0], out[1]


def mount_centre(placed) -> tuple[float, float]:
    """Centre of the mount's footprint on the table (mm): where its base is bolted down."""
    c = placed.footprint.centroid
    return float(c.x), float(c.y)


def check(bench, options):
    pitch = number(options, RULE_ID, "pitch_mm", positive=True)
    origin = point(options, RULE_ID, "origin_mm")
    tolerance = number(options, RULE_ID, "tolerance_mm")
    size = bench.layout.bench.size
    for oid, placed in bench.placement.optics.items():
        optic = placed.optic
        if optic.kind == "obstacle":
            continue
        centre = mount_centre(placed)
        hole = nearest_hole(centre, origin, pitch, size)
        if hole is None:
            yield Finding(
                f"no tapped hole of the grid (pitch {pitch:g} mm, first hole at ({origin[0]:g}, {origin[1]:g}) mm) "
                f"lies on the {size[0]:g} x {size[1]:g} mm table",
                (), hint=f"check pitch_mm and origin_mm in [rules.{RULE_ID}] against the breadboard")
            return
        dx, dy = hole[0] - centre[0], hole[1] - centre[1]
        offset = math.hypot(dx, dy)
        if offset <= tolerance:
            continue
        yield Finding(
            f"the mount of \"{oid}\" ({optic.kind}) is centred at ({centre[0]:.1f}, {centre[1]:.1f}) mm, "
            f"{offset:.1f} mm from the nearest tapped hole at ({hole[0]:.1f}, {hole[1]:.1f}) mm; a clamp reaches "
            f"{tolerance:g} mm",
            (oid,), value=offset, limit=tolerance, unit="mm",
            hint=f"move \"{oid}\" by ({dx:+.1f}, {dy:+.1f}) mm so its mount stands on the hole (the beams it "
                 "meets move with it), or give it an adapter plate and waive this finding",
            at=centre)


GRID_RULE = Rule(
    id=RULE_ID,
    summary="a mount that does not stand on the breadboard's tapped-hole grid",
    explanation=(
        "Every optic's mount is bolted to a tapped hole or clamped near one. The centre of the mount's footprint "
        "(the optic's position for a transmissive optic; half the mount depth behind the face for a mirror or "
        "splitter) is compared with the nearest hole of the grid origin_mm + k * pitch_mm that lies on the table. "
        "A mount farther than tolerance_mm from it (in any direction) is reported with the distance, the hole's "
        "coordinates and the move that puts it there. Obstacles are exempt."
    ),
    check=check,
    severity="warning",
    opt_in=True,                 # off until a repository configures it: see docs/plugins.md
    options=(
        Option("pitch_mm", 25.0, "spacing of the tapped holes, the same along x and y", "mm"),
        Option("origin_mm", [12.5, 12.5], "table coordinates [x, y] of the hole nearest the lower-left corner",
               "mm"),
        Option("tolerance_mm", 2.0, "how far from a hole a mount may stand and still be fixed: a clamp's slot",
               "mm"),
    ),
)
