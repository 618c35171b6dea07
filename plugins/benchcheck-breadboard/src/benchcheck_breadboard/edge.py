"""table-edge-clearance: every mount keeps a margin from the table edge.

A mount at the very edge is knocked by people, sleeves and cables passing the table,
leaves no room for the clamp on its outer side or for an enclosure wall, and holds its
beam close to whoever stands there.  The clearance is measured from the mount's
footprint (the outline benchcheck places on the table), not from the optic's centre: it
is the mount that overhangs.

The clearance of a footprint is the smallest distance from any of its corners to the
nearest edge line of the table: the distance to a straight edge varies linearly along each
side of a polygon, so its smallest value is at a corner.  It is negative when the mount
overhangs the edge (by that many mm); layout-geometry reports the overhang as an area too.

Obstacles are exempt unless ``check_obstacles`` is set: they describe what already stands
on the table (a wall may be bolted to the edge on purpose), not something the plan places.
"""

from __future__ import annotations

from benchcheck import Finding, Option, Rule

from ._options import number

RULE_ID = "table-edge-clearance"


def clearance(footprint, size) -> tuple[float, str, tuple[float, float]]:
    """(clearance in mm, which edge, the corner nearest it) of a footprint on a table of
    ``size`` = (width, height) mm with its origin at the lower-left corner."""
    width, height = size
    best = None
    for x, y in list(footprint.exterior.coords)[:-1]:
        for dist, edge in ((x, "left"), (width - x, "right"), (y, "bottom"), (height - y, "top")):
            if best is None or dist < best[0]:
                best = (float(dist), edge, (float(x), float(y)))
    return best


def check(bench, options):
    limit = number(options, RULE_ID, "min_clearance_mm")
    with_obstacles = options["check_obstacles"]
    size = bench.layout.bench.size
    for oid, placed in bench.placement.optics.items():
        optic = placed.optic
        if optic.kind == "obstacle" and not with_obstacles:
            continue
        gap, edge, corner = clearance(placed.footprint, size)
        if gap >= limit:
            continue
        thing = f"obstacle \"{oid}\"" if optic.kind == "obstacle" else f"the mount of \"{oid}\" ({optic.kind})"
        if gap < 0:
            where = f"overhangs the {edge} table edge by {-gap:.1f} mm"
        else:
            where = f"is {gap:.1f} mm from the {edge} table edge"
        yield Finding(
            f"{thing} {where}; at least {limit:g} mm wanted",
            (oid,), value=gap, limit=limit, unit="mm",
            hint=(f"move \"{oid}\" {limit - gap:.1f} mm farther from the {edge} edge (the beams it meets move with "
                  "it), or use a smaller mount" if optic.kind != "obstacle" else
                  "check the obstacle's outline; if it really stands there, waive this finding"),
            at=corner)


EDGE_RULE = Rule(
    id=RULE_ID,
    summary="a mount closer to the table edge than the lab's margin",
    explanation=(
        "Every optic's mount footprint must keep min_clearance_mm from each edge of the table: a mount at the edge "
        "gets knocked by people and cables passing, leaves no room for a clamp or an enclosure wall, and holds its "
        "beam close to whoever stands there. The clearance is the smallest distance from a corner of the footprint "
        "to the table edge, negative when the mount overhangs it. Obstacles are exempt unless check_obstacles is "
        "true."
    ),
    check=check,
    severity="warning",
    opt_in=True,                 # off until a repository configures it: see docs/plugins.md
    options=(
        Option("min_clearance_mm", 25.0, "smallest distance from any mount to the table edge", "mm"),
        Option("check_obstacles", False, "also hold obstacles (posts, boxes, walls) to the margin"),
    ),
)
