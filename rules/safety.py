"""Safety rules: intracavity power, leak and secondary beams, beams that end nowhere, and
beams that enter keep-out zones.

Every figure is advisory: the laser safety officer, IEC 60825-1 / ANSI Z136.1 and local
regulations decide.  Limits come from ``[limits]`` in the repository configuration.
"""

from __future__ import annotations

import numpy as np
from shapely import STRtree
from shapely.geometry import LineString, Polygon

from benchcheck.coatings import pass_factor
from benchcheck.findings import ERROR, WARNING, Finding, Rule


def _w(p):
    return "unknown power" if p is None else f"{p:.3g} W"


# --- intracavity-power -----------------------------------------------------------------

def check_intracavity(bench, options):
    limit = bench.limits["intracavity_power_w"]
    enclosures = [Polygon(z.polygon) for z in bench.layout.zones if z.kind == "enclosure"]
    for cav in bench.solution.cavities.values():
        p = cav.circulating_w
        if p is None or p <= limit:
            continue
        path = bench.trace.cavities[cav.id]
        legs = LineString([tuple(h.point) for h in path.hits] + ([tuple(path.hits[0].point)] if path.role == "ring" else []))
        if any(e.covers(legs) for e in enclosures):
            continue   # not an open bench: the whole cavity is inside an enclosure
        both = " in each direction (a linear cavity holds both)" if cav.kind == "linear" else ""
        yield Finding(
            f"cavity \"{cav.id}\" circulates {p:.3g} W one-way{both}, above the open-bench limit of {limit:g} W",
            (cav.id,), value=p, limit=limit, unit="W",
            hint="enclose the cavity, or review the plan with the laser safety officer before build")


# --- leak-beam ---------------------------------------------------------------------------

def _ends_safely(bench, end):
    """(stopped, where): a dump or detector, or an enclosure wall, stops a stray beam."""
    if end.kind == "footprint":
        optic = bench.layout.optics[end.id]
        if optic.kind in ("dump", "detector"):
            return True, f"{optic.kind} {end.id}"
        return False, f"the mount of {end.id} ({optic.kind})"
    if end.kind == "zone":
        if end.zone_kind == "enclosure":
            return True, f"the wall of enclosure {end.id}"
        return False, f"keep-out zone {end.id}"
    return False, "the table edge"


def _rating(bench, end, power, what, targets):
    if end.kind != "footprint" or power is None:
        return None
    optic = bench.layout.optics[end.id]
    if optic.kind in ("dump", "detector") and optic.max_power_w is not None and power > optic.max_power_w:
        return Finding(
            f"{what} puts {power:.3g} W on {optic.kind} \"{optic.id}\", rated for {optic.max_power_w:g} W",
            targets + (optic.id,), value=power, limit=optic.max_power_w, unit="W", severity=ERROR,
            hint="use a dump rated for the power, or attenuate the beam before it", at=tuple(end.point))
    return None


def check_leaks(bench, options):
    limit = bench.limits["stray_power_w"]
    enclosures = [Polygon(z.polygon) for z in bench.layout.zones if z.kind == "enclosure"]
    for r in bench.solution.strays:
        st = r.stray
        what = f"{st.kind} beam {st.id}"
        arriving = r.end_power_w       # after every optic it passes on the way
        rating = _rating(bench, st.end, arriving, what, (st.optic, st.parent))
        if rating:
            yield rating
        if arriving is None or arriving <= limit:
            continue
        stopped, where = _ends_safely(bench, st.end)
        line = LineString(st.path_points())
        if stopped or any(e.covers(line) for e in enclosures):
            continue   # on a dump or detector, or inside an enclosure all the way
        bound = "up to " if r.at_most else ""
        passes = ""
        if st.via:
            passes = (f", passes {', '.join(st.via)} (inside the clear aperture; {bound}{arriving:.3g} W goes on)"
                      + (f" where no coating value at {st.wavelength_nm:g} nm was given for "
                         f"{', '.join(st.assumed)}, taken as passing all" if st.assumed else ""))
        yield Finding(
            f"{what} leaves \"{st.optic}\" with {bound}{r.power_w:.3g} W{passes} and goes {st.end.length:.0f} mm "
            f"to {where} at ({st.end.point[0]:.0f}, {st.end.point[1]:.0f}) mm; limit {limit:g} W",
            (st.optic, st.parent), value=r.power_w, limit=limit, unit="W",
            hint="put a beam dump or block in its way, or enclose that part of the bench", at=tuple(st.end.point))


# --- beam-unterminated -------------------------------------------------------------------

def tail_power(bench, b):
    """Power a beam carries past its last optic: what arrives there times what that optic
    passes on in the traced-on direction."""
    last = b.hits[-1]
    if last.power_w is None:
        return None
    optic = bench.layout.optics[last.optic]
    return last.power_w * pass_factor(optic, last.action, bench.trace.beams[b.id].wavelength_nm)


def check_unterminated(bench, options):
    limit = bench.limits["stray_power_w"]
    for b in bench.solution.beams.values():
        last = b.hits[-1]
        power = tail_power(bench, b) if b.tail is not None else last.power_w
        severity = ERROR if power is None or power > limit else WARNING
        if b.into is None and b.tail is not None:
            stopped, where = _ends_safely(bench, b.tail)
            at = (b.tail.point[0], b.tail.point[1])
            if stopped:
                yield Finding(
                    f"beam \"{b.id}\" ends on no dump or detector in its path; traced on from \"{last.optic}\" it "
                    f"stops on {where} carrying {_w(power)}",
                    (b.id, last.optic), value=power, limit=limit, unit="W", severity=WARNING,
                    hint="end the beam's path on that dump or detector", at=at)
            else:
                leaves = "leaves the table" if b.tail.kind == "table-edge" else f"meets {where}"
                yield Finding(
                    f"beam \"{b.id}\" ends on no dump or detector: traced on from \"{last.optic}\" it {leaves} at "
                    f"({at[0]:.0f}, {at[1]:.0f}) mm carrying {_w(power)}",
                    (b.id, last.optic), value=power, limit=limit, unit="W", severity=severity,
                    hint="end the beam's path on a dump or detector", at=at)
        elif b.into is None:
            rating = _rating_for_last(bench, b)
            if rating:
                yield rating


def _rating_for_last(bench, b):
    last = b.hits[-1]
    optic = bench.layout.optics[last.optic]
    if optic.kind in ("dump", "detector") and optic.max_power_w is not None and last.power_w is not None \
            and last.power_w > optic.max_power_w:
        return Finding(
            f"beam \"{b.id}\" puts {last.power_w:.3g} W on {optic.kind} \"{optic.id}\", rated for {optic.max_power_w:g} W",
            (optic.id, b.id), value=last.power_w, limit=optic.max_power_w, unit="W", severity=ERROR,
            hint="use a dump rated for the power, or attenuate the beam before it")
    return None


def _beam_points(bench, beam_id):
    path = bench.trace.beams[beam_id]
    pts = [tuple(path.start)] + [tuple(h.point) for h in path.hits]
    if path.tail is not None:
        pts.append(tuple(path.tail.point))
    return pts


# --- keepout-zone ------------------------------------------------------------------------

def _all_lines(bench):
    """(label, targets, power, points) for every beam on the table."""
    sol = bench.solution
    for cid, path in bench.trace.cavities.items():
        pts = [tuple(h.point) for h in path.hits]
        if path.role == "ring":
            pts.append(pts[0])
        yield f"cavity \"{cid}\"", (cid,), sol.cavities[cid].circulating_w, pts
    for bid, path in bench.trace.beams.items():
        b = sol.beams[bid]
        pts = _beam_points(bench, bid)
        powers = [h.power_w for h in b.hits] + ([tail_power(bench, b)] if path.tail is not None else [])
        for i in range(len(pts) - 1):      # each leg with the power it carries
            yield f"beam \"{bid}\"", (bid,), powers[i], [pts[i], pts[i + 1]]
    for r in sol.strays:
        st = r.stray
        yield f"{st.kind} beam {st.id}", (st.optic, st.parent), r.power_w, st.path_points()


def check_keepout(bench, options):
    zones = [z for z in bench.layout.zones if z.kind == "keepout"]
    if not zones:
        return
    polys = [Polygon(z.polygon) for z in zones]
    tree = STRtree(polys)
    for label, targets, power, pts in _all_lines(bench):
        line = LineString(pts)
        for k in tree.query(line, predicate="intersects"):
            zone, poly = zones[int(k)], polys[int(k)]
            inside = line.intersection(poly)
            entry = _first_point(inside, np.asarray(pts[0], dtype=float))
            how = f"enters keep-out zone \"{zone.id}\" ({inside.length:.0f} mm of its path)" if inside.length > 0.5 \
                else f"reaches keep-out zone \"{zone.id}\""
            yield Finding(
                f"{label} {how} carrying {_w(power)}",
                targets + (zone.id,), value=power, unit="W",
                hint="re-route the beam or block it before the zone", at=entry)


def _first_point(geom, origin):
    coords = []
    for part in getattr(geom, "geoms", [geom]):
        coords += list(getattr(part, "coords", []))
    if not coords:
        return None
    c = min(coords, key=lambda p: (p[0] - origin[0]) ** 2 + (p[1] - origin[1]) ** 2)
    return (float(c[0]), float(c[1]))


RULES = (
    Rule(
        id="intracavity-power",
        summary="circulating power above the lab's limit for an open bench",
        explanation=(
            "Compares each cavity's one-way circulating power (active: P_out / T_oc; passive: the build-up on "
            "resonance) with limits.intracavity_power_w from the repository configuration. In a linear cavity "
            "the same power also travels the other way. A cavity whose every leg lies inside an enclosure zone "
            "is not on an open bench and is not reported. A finding means the plan needs the laser safety "
            "officer's review (enclosure, interlocks, eyewear) before build."
        ),
        check=check_intracavity, severity=WARNING, safety=True,
    ),
    Rule(
        id="leak-beam",
        summary="leak and secondary beams above a power limit that no dump or enclosure stops",
        explanation=(
            "Every cavity mirror with T > 0 leaks the circulating power times T out of its back face, along the "
            "arriving direction (twice for a fold mirror of a linear cavity); a passive cavity's input coupler "
            "sends back the cavity's reflection, at most the input power. At a splitter, or a mirror a beam "
            "passes, the branch no [[beam]] follows is a secondary beam. Each is traced across the table to the "
            "first thing that stops light: it passes a lens, window, plate, crystal, aperture or mirror met inside "
            "the clear aperture (reduced by its transmission; a lens bends it by -h/f; a mirror's, splitter's or "
            "untilted plate's reflection is a further secondary beam) and stops on a mount outside the clear "
            "aperture, a dump, a detector, an obstacle, a zone or the table edge. Where the power reaching that "
            "end is above limits.stray_power_w it must be a dump or detector, or the beam must stay inside an "
            "enclosure. A dump or detector's max_power_w is checked against what it receives."
        ),
        check=check_leaks, severity=WARNING, safety=True,
    ),
    Rule(
        id="beam-unterminated",
        summary="a beam that leaves the table or enclosure, or ends on no dump or detector",
        explanation=(
            "A [[beam]] should end on a dump or a detector, or be coupled into a passive cavity through its "
            "input coupler. One that ends elsewhere is traced on to what it meets: the table edge, a mount, a "
            "zone. Above limits.stray_power_w this is an error, below it a warning; one that stops on a dump, "
            "a detector or an enclosure wall it was not routed to is a warning. A dump or detector receiving "
            "more than its max_power_w is an error."
        ),
        check=check_unterminated, severity=ERROR, safety=True,
    ),
    Rule(
        id="keepout-zone",
        summary="a beam that enters a keep-out zone",
        explanation=(
            "No beam may enter a zone of kind \"keepout\" (an aisle, a door, a seat): cavity legs, beams (with "
            "the stretch they are traced on) and leak and secondary beams are checked, with the power they "
            "carry and the length inside the zone."
        ),
        check=check_keepout, severity=ERROR, safety=True,
    ),
)
