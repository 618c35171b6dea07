"""Safety rules: intracavity power, leak and secondary beams, beams that end nowhere, and
beams that enter keep-out zones.

Every figure is advisory: the laser safety officer, IEC 60825-1 / ANSI Z136.1 and local
regulations decide.  Limits come from ``[limits]`` in the repository configuration.
"""

from __future__ import annotations

import math

import numpy as np
import shapely
from shapely import STRtree

from benchcheck import hazards
from benchcheck.coatings import transmission
from benchcheck.findings import ERROR, WARNING, Finding, Rule
from benchcheck.hazards import BEAM, CAVITY_LEG, EXTENSION, LEAK, SECONDARY


#: a power exactly at a limit (up to rounding) is not above it
_TOL = 1e-9


def _w(p):
    return "unknown power" if p is None else f"{p:.3g} W"


# --- intracavity-power -----------------------------------------------------------------

def check_intracavity(bench, options):
    limit = bench.limits["intracavity_power_w"]
    hard = bench.limits.get("intracavity_error_power_w", math.inf)
    legs = {}
    for seg in bench.hazards.segments:
        if seg.kind == CAVITY_LEG:
            legs.setdefault(seg.parent, []).append(seg)
    for cav in bench.solution.cavities.values():
        p = cav.circulating_w
        if p is None or p <= limit * (1 + _TOL):
            continue
        if legs.get(cav.id) and all(seg.inside_enclosure for seg in legs[cav.id]):
            continue   # not an open bench: the whole cavity is inside an enclosure
        both = " in each direction (a linear cavity holds both)" if cav.kind == "linear" else ""
        if p > hard * (1 + _TOL):
            yield Finding(
                f"cavity \"{cav.id}\" circulates {p:.3g} W one-way{both} on open bench, above the limit of "
                f"{hard:g} W for an open bench",
                (cav.id,), value=p, limit=hard, unit="W", severity=ERROR,
                hint="enclose the cavity (interlocked cover); the laser safety officer must review it before build")
            continue
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


def _class4(bench, seg) -> bool:
    """Power or pulse energy at the level where an open beam is an error (Class 4 level)."""
    p_lim = bench.limits.get("open_beam_power_w", 0.5)
    e_lim = bench.limits.get("open_beam_energy_j", 0.03)
    return (seg.power_w is not None and seg.power_w > p_lim) or \
        (seg.pulse_energy_j is not None and seg.pulse_energy_j > e_lim)


def _amount(seg) -> str:
    if seg.pulse_energy_j is not None:
        avg = "" if seg.power_w is None else f", {seg.power_w:.3g} W average"
        return f"{seg.pulse_energy_j:.3g} J pulses{avg}"
    return _w(seg.power_w)


def _figures(seg) -> str:
    """Exposure against the MPE, eyewear OD and hazard distance, in words."""
    if seg.ratio is None:
        return ""
    if seg.pulsed:
        rule = {"single-pulse": "single pulse", "average-power": "average-power rule",
                "pulse-train": "pulse-train rule"}.get(seg.mpe_rule, seg.mpe_rule)
        basis = f"{seg.mpe / 1e4:.3g} J/cm^2 per {seg.pulse_s:.3g} s pulse, {rule}"
    else:
        basis = f"{seg.mpe / 1e4:.3g} W/cm^2 for {seg.exposure_s:g} s"
    out = f"; {seg.ratio:.3g} x the MPE ({basis}, {seg.aperture_mm:g} mm aperture)"
    if seg.od:
        out += f", eyewear OD {seg.od} needed"
    if seg.nohd_mm is not None and seg.nohd_mm > 0:
        nohd = "unbounded (the beam stays hazardous)" if not math.isfinite(seg.nohd_mm) else \
            f"{seg.nohd_mm / 1000:.3g} m" if seg.nohd_mm >= 1000 else f"{seg.nohd_mm:.0f} mm"
        out += f", hazard distance {nohd}"
        beyond = [("the table edge" if r["kind"] == "table-edge" else f"keep-out zone \"{r['id']}\"")
                  for r in seg.reaches]
        if beyond:
            out += " reaching " + " and ".join(beyond)
    return out


def _stray_segments(bench):
    return {seg.id: seg for seg in bench.hazards.segments if seg.kind in (LEAK, SECONDARY)}


def _main_output(bench, st) -> bool:
    """The output of a laser that no [[beam]] declares: undeclared-output reports it."""
    cav = bench.layout.cavities.get(st.parent)
    return (st.kind == "leak" and st.from_cavity and st.depth == 0 and cav is not None
            and cav.output_coupler == st.optic
            and not st.id.endswith("/back") and not any(b.origin == cav.id for b in bench.layout.beams.values()))


def check_leaks(bench, options):
    """Every leak and secondary beam that crosses open bench: judged against the stray
    limit (it must end on a dump), the MPE and the Class 4 level, wherever it ends."""
    limit = bench.limits["stray_power_w"]
    segs = _stray_segments(bench)
    for r in bench.solution.strays:
        st = r.stray
        seg = segs.get(st.id)
        what = f"{st.kind} beam {st.id}"
        arriving = r.end_power_w       # after every optic it passes on the way
        rating = _rating(bench, st.end, arriving, what, (st.optic, st.parent))
        if rating:
            yield rating
        if (seg is not None and seg.inside_enclosure) or _main_output(bench, st):
            continue   # inside an enclosure all the way; a laser's own output has its own rule
        stopped, where = _ends_safely(bench, st.end)
        leaves = st.end.kind == "table-edge" or (st.end.kind == "zone" and st.end.zone_kind == "keepout")
        at = tuple(st.end.point)
        bound = "up to " if r.at_most else ""
        passes = ""
        if st.via and arriving is not None:
            passes = (f", passes {', '.join(st.via)} (inside the clear aperture; {bound}{arriving:.3g} W goes on)"
                      + (f" where no coating value at {st.wavelength_nm:g} nm was given for "
                         f"{', '.join(st.assumed)}, taken as passing all" if st.assumed else ""))
        goes = f"{what} leaves \"{st.optic}\" with {{amount}}{passes} and goes {st.end.length:.0f} mm to {where} " \
               f"at ({at[0]:.0f}, {at[1]:.0f}) mm"
        judged = seg is not None and seg.ratio is not None
        if r.power_w is None and not judged:
            # never skipped: what cannot be judged is reported
            why = seg.problem if seg is not None and seg.problem else "its power is not known"
            feed = ("give the cavity's output_power_w (or input_power_w)" if st.from_cavity
                    else "give the source's power_w, or pulse_energy_j with rep_hz and pulse_s")
            yield Finding(f"{goes.format(amount='unknown power')}, and its hazard cannot be judged: {why}",
                          (st.optic, st.parent), severity=ERROR, at=at, hint=feed + ", so its hazard can be judged")
            continue
        class4 = seg is not None and _class4(bench, seg)
        above_mpe = judged and seg.ratio > 1.0
        over_stray = arriving is not None and arriving > limit
        figures = _figures(seg) if seg is not None else ""
        amount = (("up to " if r.at_most else "") + f"{r.power_w:.3g} W") if seg is None else \
            ("up to " if r.at_most else "") + _amount(seg)
        open_note = "" if not stopped else " (open bench before it)"
        if class4:
            lim_w = bench.limits.get("open_beam_power_w", 0.5)
            yield Finding(
                f"{goes.format(amount=amount)}{open_note}, above the open-beam limit (Class 4 level){figures}",
                (st.optic, st.parent), value=r.power_w if r.power_w is not None else seg.ratio,
                limit=lim_w if r.power_w is not None else 1.0, unit="W" if r.power_w is not None else "exposure/MPE",
                severity=ERROR, at=at,
                hint="enclose its whole path, or stop it on a rated dump right where it leaves the optic")
        elif over_stray and not stopped:
            why = "" if not leaves else " (it leaves the table)" if st.end.kind == "table-edge" else \
                " (it enters a keep-out zone)"
            yield Finding(
                f"{goes.format(amount=amount)}{why}; limit {limit:g} W{figures}",
                (st.optic, st.parent), value=arriving, limit=limit, unit="W",
                severity=ERROR if leaves else WARNING, at=at,
                hint="put a beam dump or block in its way, or enclose that part of the bench")
        elif above_mpe:
            yield Finding(
                f"{goes.format(amount=amount)}{open_note}{' (it runs off the bench)' if leaves else ''}{figures}",
                (st.optic, st.parent), value=seg.ratio, limit=1.0, unit="exposure/MPE",
                severity=ERROR if leaves else WARNING, at=at,
                hint="dump it where it leaves the optic, or enclose its path; the laser safety officer decides")


# --- open-beam ---------------------------------------------------------------------------

def _stretch(seg) -> str:
    """A segment's ends by optic (or source, cavity) name."""
    if seg.kind == EXTENSION:
        return f"{seg.id.split(':', 1)[1].rsplit('-', 1)[0]} onward"
    a, b = seg.id.split(":", 1)[1].rsplit("-", 1) if seg.kind == BEAM else seg.id.split(":", 1)[1].split("-", 1)
    return f"{a}-{b}"


def _group(segs) -> str:
    """The cavity or beam, with the open stretches by optic name."""
    first = segs[0]
    if first.kind == EXTENSION:
        return f"beam \"{first.parent}\" past its last optic"
    name = "cavity" if first.kind == CAVITY_LEG else "beam"
    return f"{name} \"{first.parent}\" ({', '.join(_stretch(s) for s in segs)})"


def check_open_beams(bench, options):
    """Cavity legs, beams and traced-on stretches outside every enclosure: one finding per
    cavity, beam or traced-on stretch, with the worst of its open segments."""
    told = set()
    groups: dict = {}
    for seg in bench.hazards.segments:
        if seg.kind in (LEAK, SECONDARY):
            continue   # leak-beam judges those
        if seg.problem and "no built-in exposure limit" in seg.problem and seg.inside_enclosure:
            # enclosed, but the wavelength still needs a limit (eyewear for work with covers
            # open): said once per wavelength; open segments are reported one by one below
            key = round(seg.wavelength_nm, 3)
            if key not in told:
                told.add(key)
                yield Finding(f"{_group([seg])} at {seg.wavelength_nm:g} nm: {seg.problem}", seg.targets,
                              severity=ERROR, hint="add the MPE your laser safety officer uses for this wavelength "
                                                   "to the repository configuration")
            continue
        if not seg.inside_enclosure:
            groups.setdefault((seg.parent, seg.kind), []).append(seg)
    for segs in groups.values():
        first = segs[0]
        where = _group(segs)
        length = f"{sum(s.length_mm if s.open_mm is None else s.open_mm for s in segs):.0f} mm"
        both = " (both directions)" if first.directions == 2 else ""
        unknown = [s for s in segs if s.problem]
        if unknown:
            strongest = max(segs, key=lambda s: (s.pulse_energy_j or 0.0, s.power_w or 0.0))
            level = (f", carrying up to {_amount(strongest)}, above the open-beam limit (Class 4 level)"
                     if _class4(bench, strongest) else "")
            no_mpe = "no built-in exposure limit" in unknown[0].problem
            yield Finding(f"{where} at {first.wavelength_nm:g} nm runs {length} on open bench{level} and its hazard "
                          f"cannot be judged: {unknown[0].problem}", first.targets, severity=ERROR,
                          hint="add the MPE your laser safety officer uses for this wavelength to the repository "
                               "configuration" if no_mpe else
                               "give the power (or pulse energy, pulse_s and rep_hz) of what feeds it", at=_mid(first))
            continue
        worst = max(segs, key=lambda s: s.ratio)
        strongest = max(segs, key=lambda s: (s.pulse_energy_j or 0.0, s.power_w or 0.0))
        ends = ""
        if first.kind == EXTENSION:
            ends = "; it runs to the table edge" if first.end_kind == "table-edge" else \
                f"; it runs into keep-out zone \"{first.end_id}\"" if first.end_zone_kind == "keepout" else \
                f"; it stops on {first.end_id}" if first.end_id else ""
        if _class4(bench, strongest):
            e_lim = bench.limits.get("open_beam_energy_j", 0.03)
            p_lim = bench.limits.get("open_beam_power_w", 0.5)
            by_energy = strongest.pulse_energy_j is not None and strongest.pulse_energy_j > e_lim
            value, limit, unit = (strongest.pulse_energy_j, e_lim, "J") if by_energy else (strongest.power_w, p_lim, "W")
            yield Finding(
                f"{where} at {first.wavelength_nm:g} nm carries up to {_amount(strongest)}{both} over {length} of open "
                f"bench, above the open-beam limit of {limit:g} {unit}{_figures(worst)}{ends}",
                first.targets, value=value, limit=limit, unit=unit, severity=ERROR,
                hint="enclose this part of the bench (a box or beam tube), or lower the power; the laser safety "
                     "officer decides the controls", at=_mid(strongest))
        elif worst.ratio is not None and worst.ratio > 1.0:
            yield Finding(
                f"{where} at {first.wavelength_nm:g} nm carries up to {_amount(strongest)}{both} over {length} of open "
                f"bench{_figures(worst)}{ends}",
                first.targets, value=worst.ratio, limit=1.0, unit="exposure/MPE", severity=WARNING,
                hint="enclose or tube this stretch, or plan eyewear of the stated OD with the laser safety officer",
                at=_mid(worst))


def _mid(seg):
    return ((seg.start[0] + seg.end[0]) / 2.0, (seg.start[1] + seg.end[1]) / 2.0)


# --- undeclared-output -------------------------------------------------------------------

def check_undeclared_output(bench, options):
    """An active cavity's output must be followed by a [[beam]] to where it stops."""
    declared = {b.origin for b in bench.layout.beams.values()}
    for cav in bench.layout.cavities.values():
        if cav.output_coupler is None or cav.id in declared:
            continue
        res = bench.solution.cavities[cav.id]
        p = None if res.circulating_w is None else res.circulating_w * transmission(
            bench.layout.optics[cav.output_coupler], cav.wavelength_nm)
        goes = ""
        for seg in bench.hazards.segments:
            if seg.kind == LEAK and seg.parent == cav.id and seg.id.split("/")[1] == cav.output_coupler \
                    and not seg.id.endswith("/back"):
                end = "the table edge" if seg.end_kind == "table-edge" else (seg.end_id or "something")
                goes = f"; traced on, it goes {seg.length_mm:.0f} mm to {end}{_figures(seg)}"
                break
        yield Finding(
            f"cavity \"{cav.id}\" sends {_w(p)} out through its output coupler \"{cav.output_coupler}\", but no "
            f"[[beam]] declares where that output goes{goes}",
            (cav.id, cav.output_coupler), value=p, unit="W", severity=ERROR,
            hint=f"add a [[beam]] with from = \"{cav.id}\" whose path ends on a dump, a detector or the next "
                 "experiment")


# --- beam-unterminated -------------------------------------------------------------------

def tail_power(bench, b):
    return hazards.tail_power(bench.layout, b, bench.trace.beams[b.id].wavelength_nm)


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
    shapes = hazards.zone_polygons(bench.solution)
    polys = [shapes[z.id] for z in zones]
    tree = STRtree(polys)
    items = list(_all_lines(bench))
    if not items:
        return
    # every line built and tested against the zones in one call each
    coords = np.array([tuple(map(float, p)) for *_, pts in items for p in pts], dtype=float)
    lines = shapely.linestrings(coords, indices=np.repeat(np.arange(len(items)), [len(it[3]) for it in items]))
    which, near = tree.query(lines, predicate="intersects")
    for i, k in zip(which.tolist(), near.tolist()):
        label, targets, power, pts = items[i]
        line = lines[i]
        zone, poly = zones[k], polys[k]
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
            "is not on an open bench and is not reported. Above limits.intracavity_error_power_w on open bench "
            "it is an error. A finding means the plan needs the laser safety officer's review (enclosure, "
            "interlocks, eyewear) before build."
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
            "enclosure: a warning, and an error when it leaves the table or enters a keep-out zone. Wherever it "
            "ends, a stray that crosses open bench above limits.open_beam_power_w (or a pulse above "
            "limits.open_beam_energy_j) is an error, and one above the MPE a warning (an error where it runs "
            "off the bench). A stray of unknown average power is judged by its pulse energy against the pulsed "
            "exposure limit, and one whose power and energy are both unknown is an error. The message gives "
            "the exposure against the MPE, the eyewear OD and the hazard distance. A dump or detector's "
            "max_power_w is checked against what it receives."
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
    Rule(
        id="open-beam",
        summary="a cavity leg or beam outside every enclosure at a hazardous level",
        explanation=(
            "Every cavity leg (a linear cavity's in both directions), declared beam and traced-on stretch that "
            "no enclosure zone covers is judged as an eye would meet it: its power (or pulse energy) through the "
            "limiting aperture of IEC 60825-1 / ANSI Z136.1 (7 mm for 400-1400 nm) at its smallest 1/e^2 radius, "
            "against the ocular MPE for the exposure duration of [exposure] (0.25 s visible, 10 s otherwise). "
            "Above limits.open_beam_power_w (or a pulse above limits.open_beam_energy_j; the Class 4 level) it is "
            "an error; above the MPE a warning. The message gives the exposure against the MPE, the eyewear OD "
            "needed and, for a beam that runs off the bench, the nominal ocular hazard distance and whether it "
            "reaches a keep-out zone or the table edge. A stretch whose power is unknown, or a wavelength with no "
            "MPE (configure one under [exposure.mpe]), is an error: never skipped. Advisory: the laser safety "
            "officer, IEC 60825-1 / ANSI Z136.1 and local regulations decide."
        ),
        check=check_open_beams, severity=ERROR, safety=True,
    ),
    Rule(
        id="undeclared-output",
        summary="an active cavity's output that no [[beam]] follows",
        explanation=(
            "The main output of a laser (what leaves through its output coupler) must be accounted for: a [[beam]] "
            "from the cavity routes it to a dump, a detector or the next experiment. Without one, that output is "
            "an open beam of unknown destination; the leak-beam rule traces where it goes."
        ),
        check=check_undeclared_output, severity=ERROR, safety=True,
    ),
)
