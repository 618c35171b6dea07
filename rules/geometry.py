"""layout-geometry: what placement and tracing found wrong with the plan itself."""

from __future__ import annotations

from benchcheck.findings import ERROR, NOTE, WARNING, Finding, Option, Rule

#: issue kind -> (severity, hint)
KINDS = {
    "bend-at-non-folding": (ERROR, "only a mirror or splitter turns a beam: move the optic onto the line, or "
                                   "add the mirror that makes the turn"),
    "fold-mismatch": (WARNING, "move the neighbouring optics, or correct the declared fold"),
    "reflection-off-normal": (ERROR, "this path cannot reflect at that angle from a mirror oriented by another "
                                     "path: check the coordinates of both paths"),
    "splitter-face": (ERROR, "a splitter's own 'fold' sets its face for every path; a path entry's 'fold' only "
                             "says which branch that path follows"),
    "stray-reflection-untraced": (WARNING, "give the plate's tilt by placing it on a beam path, or put a block "
                                           "beside it for its reflection; the laser safety officer decides"),
    "bend-in-passage": (ERROR, "put the source and the optics before the mirror on the line of the leg the beam "
                               "enters (a source's 'coaxial' key keeps it there when the cavity changes), or give "
                               "the path entry a 'fold' if the beam is meant to reflect"),
    "ring-not-closed": (ERROR, "adjust the distances or folds so the last leg returns onto the first optic"),
    "off-table": (ERROR, "move the optic (and its mount) onto the table, or enlarge [bench].size"),
    "heading-mismatch": (WARNING, "remove 'heading' where 'at' coordinates decide, or correct it"),
    "off-axis-crossing": (WARNING, "the second beam should cross the element along its axis; it is modelled as if it did"),
    "grazing": (ERROR, "a beam cannot usefully pass a mirror along its face: check the geometry"),
}


def check(bench, options):
    tol = options["fold_tolerance_deg"]
    for issue in bench.trace.issues:
        severity, hint = KINDS.get(issue.kind, (WARNING, None))
        if issue.kind == "fold-mismatch" and issue.value is not None and issue.limit is not None:
            if abs(((issue.value - issue.limit) + 180.0) % 360.0 - 180.0) <= tol:
                continue
        yield Finding(issue.message, tuple(issue.targets), value=issue.value, limit=issue.limit,
                      unit=issue.unit, hint=hint, severity=severity, loc=issue.loc)
    for note in bench.solution.notes:
        if "overlap along" in note:
            yield Finding(note, (), hint="the gap between two elements is shorter than the material between them",
                          severity=ERROR)
    if options["report_assumptions"]:
        for note in bench.placement.notes:
            yield Finding(str(note), getattr(note, "targets", ()), severity=NOTE, loc=getattr(note, "loc", None))


RULES = (
    Rule(
        id="layout-geometry",
        summary="paths that bend at non-folding optics, fold mismatch, rings that do not close, optics off the table",
        explanation=(
            "Checks the plan as drawn. A lens, crystal, plate or aperture does not turn a beam, so a path that "
            "bends there is an error. Where both neighbours of a mirror are placed by coordinates, the fold they "
            "give is compared with a declared 'fold'. A ring placed by distances and folds must return onto its "
            "first optic; the miss is given in mm and degrees, with the fold at the last element that would close "
            "it, the first element where declared and geometric folds part, and the total turn of the declared "
            "folds. Optics and mounts must stand on the table. A beam reflecting from a mirror that another path "
            "orients must obey the law of reflection; at a splitter the splitter's own 'fold' sets the face, and "
            "the finding, at the splitter's line, gives the fold that would reflect the beam as its path says. A "
            "beam passing a mirror that another path orients goes straight on: a turn there is reported as a "
            "passage at the wrong angle. A tilted plate's reflection of a stray beam, which cannot be traced "
            "without the side of tilt, is reported. Elements whose lengths overlap along a path are errors."
        ),
        check=check,
        severity=ERROR,
        options=(
            Option("fold_tolerance_deg", 0.5, "largest accepted difference between a declared and the geometric fold",
                   "deg"),
            Option("report_assumptions", True, "also report, as notes, what placement had to assume (an optic on "
                                               "no path, a splitter's face angle)"),
        ),
    ),
)
