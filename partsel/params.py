"""The electrical parameters of a part record: one registry for every layer.

Each :class:`ParamDef` names a min/typ/max quantity of the part record, where it sits in a
catalogue file (``path``), its dimension (and so its SI unit) and which side of its range is
pessimistic (``worse``). The catalogue layer, the JSON Schema, the solver's worst-case basis and
the substitute comparison all read this table, so a new parameter is added in one place.

Flat column names in the parameter table (a pandas frame, one row per part) are
``f"{key}_{side}"`` with side in ``min``, ``typ``, ``max``; values are SI floats (NaN when the
datasheet gives none). Output swing headroom curves are stored as up to :data:`MAX_SWING_POINTS`
(current, headroom) points per rail: ``swing_pos_i{k}`` (A) and ``swing_pos_v{k}_{side}`` (V),
likewise ``swing_neg_*``.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import StrEnum
from typing import Literal

Side = Literal["min", "typ", "max"]
SIDES: tuple[Side, ...] = ("min", "typ", "max")

#: Largest number of (current, headroom) points kept per rail.
MAX_SWING_POINTS = 6

#: One spec at several ambients: ``(temperature_c, min, typ, max)`` per temperature, in rising
#: temperature order (NaN for a side not given); read from the catalogue's
#: ``temperature_points`` by :func:`partsel.catalogue.normalise.temperature_curves`.
TemperatureCurve = tuple[tuple[float, float, float, float], ...]


class Topology(StrEnum):
    """Output-stage topology (trade terms)."""

    CLASS_A = "class-a"
    """Single-ended follower with a constant-current sink of ``stage_current``."""
    CLASS_B_PULLDOWN = "class-b-pulldown"
    """Quasi-class-B: source follower plus internal pull-down ``stage_current``; a separate sink
    device conducts only when the load must sink more than the pull-down current."""
    CLASS_AB = "class-ab"
    """Biased complementary bipolar followers with quiescent current ``stage_current``."""
    CMOS_RAIL = "cmos-rail-to-rail"
    """Class-AB controlled CMOS common-source output; swing limited by on-resistance."""


class Lifecycle(StrEnum):
    """Production status of a part."""

    ACTIVE = "active"
    NOT_FOR_NEW_DESIGNS = "not-for-new-designs"
    OBSOLETE = "obsolete"


@dataclass(frozen=True)
class ParamDef:
    """One min/typ/max electrical parameter of a part.

    Attributes
    ----------
    key: flat name, used for frame columns (``f"{key}_{side}"``).
    path: location in a catalogue record, e.g. ``("output", "stage_current")``.
    dimension: a key of :data:`partsel.units.SI_UNIT`.
    worse: ``"low"`` if a lower value is pessimistic (so the worst case is the minimum),
        ``"high"`` if a higher value is.
    description: one line for people and for the JSON Schema.
    nonnegative: a negative value makes no physical sense.
    """

    key: str
    path: tuple[str, ...]
    dimension: str
    worse: Literal["low", "high"]
    description: str
    nonnegative: bool = True

    @property
    def worst_side(self) -> Side:
        """The side of the range used on the guaranteed (worst-case) basis."""
        return "min" if self.worse == "low" else "max"


PARAMS: tuple[ParamDef, ...] = (
    ParamDef(
        "supply_current",
        ("supply", "current_per_channel"),
        "current",
        "high",
        "Quiescent supply current per channel, no load",
    ),
    ParamDef(
        "cm_headroom_neg",
        ("input", "cm_headroom_neg"),
        "voltage",
        "high",
        "Lowest input common-mode voltage above the negative rail "
        "(V_cm,min = V- + value; negative means the range extends beyond the rail)",
        nonnegative=False,
    ),
    ParamDef(
        "cm_headroom_pos",
        ("input", "cm_headroom_pos"),
        "voltage",
        "high",
        "Distance of the highest input common-mode voltage below the positive rail "
        "(V_cm,max = V+ - value; negative means beyond the rail)",
        nonnegative=False,
    ),
    ParamDef(
        "offset_voltage",
        ("input", "offset_voltage"),
        "voltage",
        "high",
        "Input offset voltage, magnitude",
    ),
    ParamDef(
        "bias_current",
        ("input", "bias_current"),
        "current",
        "high",
        "Input bias current, magnitude",
    ),
    ParamDef(
        "noise_density",
        ("input", "noise_density"),
        "noise_voltage",
        "high",
        "Input voltage noise density (at the frequency in its conditions, usually 1 kHz)",
    ),
    ParamDef(
        "gbw",
        ("dynamics", "gbw"),
        "frequency",
        "low",
        "Gain-bandwidth product (unity-gain frequency of the open-loop gain)",
    ),
    ParamDef("slew_rise", ("dynamics", "slew_rise"), "slew", "low", "Slew rate, rising output"),
    ParamDef(
        "slew_fall",
        ("dynamics", "slew_fall"),
        "slew",
        "low",
        "Slew rate, falling output (magnitude)",
    ),
    ParamDef(
        "cap_load_limit",
        ("dynamics", "cap_load_limit"),
        "capacitance",
        "low",
        "Largest load capacitance the part drives stably at its minimum stable gain",
    ),
    ParamDef(
        "dead_band",
        ("output", "dead_band"),
        "voltage",
        "high",
        "Drive-node dead band between source and sink device conduction "
        "(class B; zero for biased stages)",
    ),
    ParamDef(
        "stage_current",
        ("output", "stage_current"),
        "current",
        "low",
        "Internal pull-down current (class B), sink bias current (class A) or output "
        "quiescent current (class AB / CMOS)",
    ),
    ParamDef(
        "source_limit",
        ("output", "source_limit"),
        "current",
        "low",
        "Largest output current the part can source (current limit)",
    ),
    ParamDef(
        "sink_limit",
        ("output", "sink_limit"),
        "current",
        "low",
        "Largest output current the part can sink (current limit)",
    ),
)

PARAM_BY_KEY: dict[str, ParamDef] = {p.key: p for p in PARAMS}


def column(key: str, side: Side) -> str:
    """Frame column of parameter ``key`` on ``side``."""
    return f"{key}_{side}"
