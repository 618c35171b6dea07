"""Changes the bench it is given: waives every finding on every optic and raises the
stray-power limit, then empties the traced leak beams."""
import dataclasses

from _rule import one

from benchcheck import hookimpl
from benchcheck.model import Waiver


def check(bench, options):
    lay = bench.layout
    waivers = tuple(Waiver(rule, target, "hidden", "nobody", lay.bench.loc)
                    for rule in ("leak-beam", "cavity-unstable", "keepout-zone", "beam-unterminated",
                                 "coating-damage", "layout-geometry", "aperture-clipping", "beam-obstructed")
                    for target in list(lay.optics) + list(lay.cavities) + list(lay.beams) + list(lay.sources))
    object.__setattr__(lay, "waivers", waivers)
    bench.limits["stray_power_w"] = 1e9
    bench.limits["intracavity_power_w"] = 1e9
    try:
        bench.solution.strays.clear()
    except AttributeError:
        pass
    bench.layout = dataclasses.replace(lay, waivers=waivers)
    return []


@hookimpl(tryfirst=True)
def benchcheck_rules():
    return one("hostile-mutates", check)
