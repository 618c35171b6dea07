"""Build tolerances as data: which keys exist, their defaults and units, and to which optics
each applies.

Shared by the configuration reader (``[tolerances]`` in ``benchcheck.toml``), the layout
loader (an optic's own ``tolerance = { ... }``) and the Monte Carlo (``tolerance.py``), so
the three never disagree on a name.  No TOML and no numerics here.

How each tolerance perturbs the placed bench is documented in README.md, section
"Tolerances and alignment"; in short: positions move each placed optic (after placement,
relatively placed optics as placed) and the cavity is taken as realigned through the moved
points, which sets its spacings and the angles of incidence at its folds.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Mapping

UNIFORM = "uniform"
NORMAL = "normal"
DISTRIBUTIONS = (UNIFORM, NORMAL)


@dataclass(frozen=True)
class Key:
    name: str
    default: float | bool
    unit: str
    kinds: tuple[str, ...]
    help: str


#: Every tolerance a lab can state.  A tolerance +-t is a uniform distribution on [-t, t]
#: (or normal with sigma = t/2); 0 turns one off.  Defaults are a typical breadboard built
#: with catalogue optics (common practice).
KEYS: dict[str, Key] = {k.name: k for k in (
    Key("position_mm", 0.2, "mm", ("mirror", "lens", "crystal", "plate", "aperture", "splitter"),
        "each table coordinate (x and y) of an optic's placed position, independently; spacings and the "
        "angles of incidence at the folds follow from the moved positions"),
    Key("roc_percent", 1.0, "%", ("mirror",),
        "radius of curvature of a curved mirror, relative"),
    Key("focal_length_percent", 1.0, "%", ("lens",),
        "focal length of a lens, relative"),
    Key("length_mm", 0.1, "mm", ("crystal", "plate"),
        "a crystal's length, a plate's thickness"),
    Key("index_delta", 0.001, "", ("crystal", "plate"),
        "refractive index (absolute)"),
    Key("tilt_deg", 0.5, "deg", ("crystal", "plate"),
        "angle of incidence on a crystal or plate (its mount's rotation in the table plane)"),
    Key("thermal_lens_range", True, "", ("crystal",),
        "true: a crystal's thermal lens takes any dioptric power in its declared range (uniformly); "
        "false: its design value"),
)}

#: Keys of the [tolerances] section that are not per-optic tolerances.
DISTRIBUTION_KEY = Key("distribution", UNIFORM, "", (),
                       "\"uniform\" on [-t, t] (default) or \"normal\" with sigma = t/2")
MARGIN_KEY = Key("margin_max_abs_m", 0.95, "|m|", (),
                 "a build counts as stable with margin when |half-trace| is at most this in both planes "
                 "(the default is stability-margin's max_abs_m)")
SECTION_KEYS = (DISTRIBUTION_KEY.name, MARGIN_KEY.name) + tuple(KEYS)


def check_value(key: Key, value, label: str):
    """One tolerance value checked against its key: true/false, or a finite number >= 0 in
    the key's unit.  Raises ValueError with a sentence naming ``label``."""
    if isinstance(key.default, bool):
        if not isinstance(value, bool):
            raise ValueError(f"{label} must be true or false, found {value!r}")
        return value
    unit = f" in {key.unit}" if key.unit else ""
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not 0.0 <= value < 1e6:
        raise ValueError(f"{label} must be a number >= 0{unit} (a tolerance +-t), found {value!r}")
    if key.name.endswith("_percent") and value >= 50.0:
        raise ValueError(f"{label} = {value:g} % is not a build tolerance; give a few percent at most")
    return float(value)


#: Where the lab's values came from.
FROM_CONFIG = "configuration"
FROM_NOWHERE = "none"
FROM_DEFAULTS = "built-in defaults"


@dataclass(frozen=True)
class Tolerances:
    """The lab's build capability: values per key, the distribution, the margin.

    ``source`` says where ``values`` came from: the configuration's ``[tolerances]``
    section; ``none`` (no section: only optics that state their own tolerance are
    perturbed, every other value is 0); or benchcheck's defaults, which the ``tolerance``
    command uses, and says so, when neither the configuration nor the layout gives any."""

    values: Mapping[str, float | bool] = field(default_factory=lambda: {k.name: k.default for k in KEYS.values()})
    distribution: str = UNIFORM
    margin_max_abs_m: float = MARGIN_KEY.default
    source: str = FROM_NOWHERE

    def for_optic(self, optic) -> dict:
        """The tolerances that apply to one optic, each key only where it applies to the
        optic's kind: its own override over the lab's values (over nothing when the
        configuration gives none)."""
        own = dict(getattr(optic, "tolerance", None) or {})
        out = {}
        for name, key in KEYS.items():
            if optic.kind not in key.kinds:
                continue
            if name in own:
                out[name] = own[name]
            elif self.source == FROM_NOWHERE:
                out[name] = False if isinstance(key.default, bool) else 0.0
            else:
                out[name] = self.values.get(name, key.default)
        return out

    def with_defaults(self) -> "Tolerances":
        """The same distribution and margin with benchcheck's default values."""
        return Tolerances(distribution=self.distribution, margin_max_abs_m=self.margin_max_abs_m,
                          source=FROM_DEFAULTS)


def declared_anywhere(layout) -> bool:
    """True when at least one optic of the layout states its own tolerance."""
    return any(getattr(o, "tolerance", None) for o in layout.optics.values())


def applies(tolerances: Tolerances, layout) -> bool:
    """Whether the configuration or the layout gives any tolerance at all."""
    return tolerances.source != FROM_NOWHERE or declared_anywhere(layout)
