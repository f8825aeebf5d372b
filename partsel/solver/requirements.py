"""Requirements of a design: hard limits, soft objectives with weights, value basis.

This module is the one registry of requirement fields: the design-file reader
(:mod:`partsel.design`) builds the JSON Schema of the ``[requirements]`` section from
:data:`LIMITS` and :data:`OBJECTIVES`, parses quantity strings to SI floats and hands the result
(the *canonical mapping*, SI numbers only) to :meth:`Requirements.from_mapping`, which fills the
defaults and checks physical sense. Pure Python: no unit parsing here.

Canonical mapping (what ``Design.requirements`` holds)::

    {
        "basis": "worst-case",               # or "typical"
        "conduction": "fix-allowed",         # "no-change" | "fix-allowed" | "allowed"
        "fix_series": "E24",
        "limits": {"max_thd": 0.001, "max_supply_current": 0.002, "lifecycle": ["active"]},
        "objectives": {"thd": 2.0, "price": 1.0},
        "pareto": ["thd", "price"],
    }

Conduction modes (design notes sections 3 and 5):

* ``no-change``: the stage must stay in one conduction mode as designed, the source device
  keeping at least ``min_source_fraction`` of its stage current at the worst instant;
* ``fix-allowed``: as ``no-change``, but a part that changes mode passes if partsel's fix
  resistor (of at least ``min_fix_resistance``) keeps it in one mode and every check passes
  with the resistor fitted;
* ``allowed``: a change of mode is accepted; the part is judged as designed (its predicted
  glitch and THD then count against ``max_glitch`` / ``max_thd``), or with the fix where the
  fix makes it pass.

Each mode admits every part the one before admits, so switching modes in that order never
removes a feasible part.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, Literal

from partsel.errors import InputError, Problem, json_pointer
from partsel.params import Lifecycle

Basis = Literal["typical", "worst-case"]
Conduction = Literal["no-change", "fix-allowed", "allowed"]
Sense = Literal["min", "max"]

BASES: tuple[Basis, ...] = ("worst-case", "typical")
CONDUCTION_MODES: tuple[Conduction, ...] = ("no-change", "fix-allowed", "allowed")
#: IEC 60063 series a fix resistor may be taken from.
FIX_SERIES: tuple[str, ...] = ("E6", "E12", "E24", "E48", "E96", "E192")
#: Channel counts of a package.
CHANNEL_COUNTS: tuple[int, ...] = (1, 2, 4)

#: Default margin of the source device (fraction of its stage current), the same as the fix
#: sizing's default (partsel.physics.fix.DEFAULT_MARGIN; a stage barely in source mode still
#: distorts, design notes section 4).
DEFAULT_SOURCE_FRACTION = 0.5


#: Unit labels of the dimensions used by requirement limits (as in partsel.units.UNIT_LABEL).
DIMENSION_UNIT: dict[str, str] = {
    "voltage": "V",
    "current": "A",
    "resistance": "ohm",
    "dimensionless": "1",
    "noise_voltage": "V/rtHz",
    "price": "currency unit",
}


@dataclass(frozen=True)
class LimitDef:
    """One numeric hard limit of ``[requirements.limits]``.

    Attributes
    ----------
    key: field name in the design file.
    dimension: a key of ``partsel.units.SI_UNIT`` (the reader converts to that SI unit).
    sense: ``"min"``: the part's value must be at least the limit; ``"max"``: at most.
    check: name of the check (:mod:`partsel.solver.checks`) the limit belongs to.
    description: one line for people and the schema.
    example: a quantity string for the schema.
    default: SI value used when the field is absent (None: the check is not required).
    floor: for ``min`` limits, the lowest value that still makes physical sense (a relaxation
        hint never goes below it); for ``max`` limits the value must be above it.
    """

    key: str
    dimension: str
    sense: Sense
    check: str
    description: str
    example: str
    default: float | None = None
    floor: float = 0.0
    floor_inclusive: bool = True

    @property
    def unit(self) -> str:
        """SI unit label of the limit."""
        return DIMENSION_UNIT[self.dimension]


LIMITS: tuple[LimitDef, ...] = (
    LimitDef("min_swing_margin", "voltage", "min", "swing",
             "Least distance between the output's extremes and the levels the part can reach "
             "at the current flowing then (both rails), >= 0", "50 mV", 0.0),
    LimitDef("min_cm_margin", "voltage", "min", "input_cm",
             "Least distance between the input's extremes and the part's common-mode range "
             "(both ends), >= 0", "100 mV", 0.0),
    LimitDef("min_slew_ratio", "dimensionless", "min", "slew",
             "Available slew rate over the slew rate the sine needs (2 pi f A), >= 1", "2",
             1.0, floor=1.0),
    LimitDef("min_bandwidth_ratio", "dimensionless", "min", "bandwidth",
             "Closed-loop bandwidth (GBW / noise gain) over the signal frequency, >= 1", "10",
             1.0, floor=1.0),
    LimitDef("max_cap_load_ratio", "dimensionless", "max", "cap_load",
             "Largest load capacitance as a multiple of the part's stated capacitive-load limit "
             "(unset: a load above the stated limit is only flagged), > 0", "1",
             floor_inclusive=False),
    LimitDef("max_gain_error", "dimensionless", "max", "gain_error",
             "Largest relative gain error at the signal frequency (single-pole loop), > 0",
             "1 %"),
    LimitDef("max_thd", "dimensionless", "max", "thd",
             "Largest closed-form THD_F estimate of the output stage (ratio; '0.1 %' is "
             "0.001), > 0",
             "0.1 %", floor_inclusive=False),
    LimitDef("max_glitch", "voltage", "max", "glitch",
             "Largest predicted crossover glitch (deviation from the ideal output), > 0",
             "10 mV", floor_inclusive=False),
    LimitDef("min_source_fraction", "dimensionless", "min", "conduction",
             "Fraction of its stage current the source device of a class-A/B stage must still "
             "carry at the worst instant (also the fix's sizing margin), 0 <= x < 1", "0.5",
             DEFAULT_SOURCE_FRACTION),
    LimitDef("min_fix_resistance", "resistance", "min", "fix_resistor",
             "Smallest fix resistor accepted (with conduction = 'fix-allowed' or 'allowed'), > 0",
             "1 kohm", floor_inclusive=False),
    LimitDef("max_supply_current", "current", "max", "supply_current",
             "Largest mean current from the positive rail for the design's channels: quiescent "
             "current of every package used, plus load current, plus the fix resistor's, > 0",
             "1 mA", floor_inclusive=False),
    LimitDef("max_price", "price", "max", "price",
             "Largest price for the design's channels (unit price times packages needed), "
             "in the catalogue's currency, > 0", "0.50", floor_inclusive=False),
    LimitDef("max_offset", "voltage", "max", "offset",
             "Largest input offset voltage, > 0", "2 mV", floor_inclusive=False),
    LimitDef("max_noise", "noise_voltage", "max", "noise",
             "Largest input voltage noise density, > 0", "30 nV/rtHz", floor_inclusive=False),
    LimitDef("max_bias_current", "current", "max", "bias_current",
             "Largest input bias current, > 0", "100 nA", floor_inclusive=False),
    LimitDef("min_yield", "dimensionless", "min", "yield",
             "Least Monte Carlo yield: the fraction of boards (samples of the parts' min / typ "
             "/ max and the design's tolerances, partsel.solver.spread) meeting every check, "
             "0 < x <= 1; computed for the parts feasible on the basis", "99.9 %",
             floor_inclusive=False),
)  # fmt: skip

LIMIT_BY_KEY: dict[str, LimitDef] = {d.key: d for d in LIMITS}


@dataclass(frozen=True)
class ChoiceDef:
    """A categorical hard limit of ``[requirements.limits]``: a list of accepted values."""

    key: str
    check: str
    description: str
    values: tuple[str, ...] | tuple[int, ...] | None  #: allowed items (None: any string)
    example: list[Any]


CHOICES: tuple[ChoiceDef, ...] = (
    ChoiceDef("lifecycle", "lifecycle", "Accepted production states",
              tuple(str(x) for x in Lifecycle), ["active"]),
    ChoiceDef("packages", "package", "Accepted package codes (the part must offer one of them)",
              None, ["SO-8", "MSOP-8"]),
    ChoiceDef("channels", "channels", "Accepted channel counts per package", CHANNEL_COUNTS, [2]),
)  # fmt: skip

CHOICE_BY_KEY: dict[str, ChoiceDef] = {d.key: d for d in CHOICES}


@dataclass(frozen=True)
class ObjectiveDef:
    """One soft objective: a per-part metric, its direction and its scale for the score.

    The score uses ``log10(clip(metric, floor, cap))``; ``floor`` is the value below which
    differences carry no meaning for the choice (partsel's choice, stated per objective), ``cap``
    the value above which a margin adds nothing.
    """

    name: str
    direction: Sense  #: "min": smaller is better; "max": larger is better
    unit: str
    description: str
    floor: float
    cap: float = float("inf")


OBJECTIVES: tuple[ObjectiveDef, ...] = (
    ObjectiveDef("thd", "min", "1",
                 "Lowest THD_F estimate (closed form; with the fix if fitted)",
                 1e-5),
    ObjectiveDef("glitch", "min", "V", "Smallest predicted crossover glitch", 1e-5),
    ObjectiveDef("supply_current", "min", "A",
                 "Lowest mean supply current for the design's channels (with the fix)", 1e-9),
    ObjectiveDef("price", "min", "currency unit",
                 "Lowest price for the design's channels", 1e-3),
    ObjectiveDef("dissipation", "min", "W",
                 "Lowest dissipation in the amplifier package(s) (with the fix)", 1e-6),
    ObjectiveDef("offset", "min", "V", "Lowest input offset voltage", 1e-6),
    ObjectiveDef("noise", "min", "V/rtHz", "Lowest input voltage noise density", 1e-9),
    ObjectiveDef("slew_margin", "max", "1", "Largest slew-rate ratio (available / needed)",
                 1.0, 100.0),
    ObjectiveDef("bandwidth_margin", "max", "1",
                 "Largest closed-loop bandwidth over the signal frequency", 1.0, 100.0),
    ObjectiveDef("swing_margin", "max", "V",
                 "Largest output swing margin (the smaller of the two rails)", 1e-3, 10.0),
    ObjectiveDef("min_margin", "max", "1",
                 "Largest smallest margin ratio over every numeric check", 1.0, 100.0),
    ObjectiveDef("yield", "max", "1",
                 "Highest Monte Carlo yield (fraction of boards meeting every check; scored "
                 "on -log10(yield), so 99 % against 99.9 % counts like 99.9 % against 99.99 %: "
                 "about the fallout)", 1e-3, 1.0),
)  # fmt: skip

OBJECTIVE_BY_NAME: dict[str, ObjectiveDef] = {d.name: d for d in OBJECTIVES}

#: Objectives and weights used when a design gives none.
DEFAULT_OBJECTIVES: tuple[tuple[str, float], ...] = (
    ("thd", 1.0),
    ("supply_current", 1.0),
    ("price", 1.0),
)

#: Keys of the canonical mapping.
TOP_KEYS: tuple[str, ...] = (
    "basis",
    "conduction",
    "fix_series",
    "fix_tolerance",
    "limits",
    "objectives",
    "pareto",
    "yield_samples",
    "yield_seed",
)

#: Boards a yield is estimated from unless the design says otherwise (``yield_samples``), and
#: the seed of their draws (``yield_seed``): fixed, so that every door gives the same yield.
DEFAULT_YIELD_SAMPLES = 10_000
DEFAULT_YIELD_SEED = 13
#: Bounds of ``yield_samples``.
YIELD_SAMPLES_RANGE = (100, 1_000_000)


@dataclass(frozen=True)
class Requirements:
    """Requirements with defaults filled; SI floats (None: limit not required)."""

    basis: Basis = "worst-case"
    conduction: Conduction = "fix-allowed"
    fix_series: str = "E24"
    limits: Mapping[str, float | None] = field(
        default_factory=lambda: {d.key: d.default for d in LIMITS}
    )
    choices: Mapping[str, tuple[Any, ...] | None] = field(
        default_factory=lambda: {d.key: None for d in CHOICES}
    )
    objectives: tuple[tuple[str, float], ...] = DEFAULT_OBJECTIVES
    pareto: tuple[str, ...] = ()
    fix_tolerance: float | None = None
    """Relative tolerance of the fix resistor (None: the usual tolerance of its series,
    partsel.physics.eseries.SERIES_TOLERANCE)."""
    yield_samples: int = DEFAULT_YIELD_SAMPLES
    yield_seed: int = DEFAULT_YIELD_SEED
    origin: Mapping[str, str] = field(default_factory=dict, compare=False)
    """Where the options came from: ``basis``, ``fix_series``, ``conduction`` and
    ``min_source_fraction`` -> ``"design file"``, ``"override"`` (a command-line option or the
    UI's toggle) or ``"default"`` (absent: the default)."""

    def source(self, key: str) -> str:
        """Where option ``key`` came from (see :attr:`origin`)."""
        return self.origin.get(key, "default")

    def override(self, **changes: Any) -> Requirements:
        """A copy with options set by the user over the design file's (``basis``,
        ``fix_series``, ``conduction``, ``min_source_fraction``); None leaves one as it is."""
        kw: dict[str, Any] = {}
        origin = dict(self.origin)
        limits: dict[str, Any] = {}
        for key, value in changes.items():
            if value is None:
                continue
            if key == "min_source_fraction":
                limits[key] = value
            else:
                kw[key] = value
            origin[key] = "override"
        if limits:
            kw["limits"] = limits
        return self.replace(**kw, origin=origin)

    def limit(self, key: str) -> float | None:
        """SI value of limit ``key`` (None when not required)."""
        return self.limits.get(key, LIMIT_BY_KEY[key].default)

    def choice(self, key: str) -> tuple[Any, ...] | None:
        """Accepted values of categorical limit ``key`` (None: any)."""
        return self.choices.get(key)

    @property
    def pareto_objectives(self) -> tuple[str, ...]:
        """Objectives of the Pareto set: as given, else the (up to) three heaviest."""
        if self.pareto:
            return self.pareto
        ranked = sorted(
            enumerate(self.objectives), key=lambda iw: (-iw[1][1], iw[0])
        )  # heaviest first, then in the order given
        names = tuple(name for _, (name, w) in ranked if w > 0)[:3]
        return names

    def replace(self, **changes: Any) -> Requirements:
        """A copy with some fields changed (``limits`` / ``choices`` merged key by key)."""
        kw: dict[str, Any] = {
            "basis": self.basis,
            "conduction": self.conduction,
            "fix_series": self.fix_series,
            "limits": dict(self.limits),
            "choices": dict(self.choices),
            "objectives": self.objectives,
            "pareto": self.pareto,
            "fix_tolerance": self.fix_tolerance,
            "yield_samples": self.yield_samples,
            "yield_seed": self.yield_seed,
            "origin": dict(self.origin),
        }
        for key, value in changes.items():
            if key in ("limits", "choices"):
                kw[key] = {**kw[key], **value}
            else:
                kw[key] = value
        return Requirements(**kw)

    def to_mapping(self) -> dict[str, Any]:
        """Canonical mapping with every default spelled out (SI numbers; None: not required)."""
        limits: dict[str, Any] = {d.key: self.limit(d.key) for d in LIMITS}
        for d in CHOICES:
            c = self.choice(d.key)
            limits[d.key] = None if c is None else list(c)
        return {
            "basis": self.basis,
            "conduction": self.conduction,
            "fix_series": self.fix_series,
            "limits": limits,
            "objectives": dict(self.objectives),
            "pareto": list(self.pareto_objectives),
            "fix_tolerance": self.fix_tolerance,
            "yield_samples": self.yield_samples,
            "yield_seed": self.yield_seed,
        }

    @property
    def needs_yield(self) -> bool:
        """The ranking computes a yield: ``min_yield`` is set or ``yield`` has a weight."""
        return self.limit("min_yield") is not None or any(
            name == "yield" and w > 0 for name, w in self.objectives
        )

    @property
    def fix_tolerance_used(self) -> float:
        """The fix resistor's relative tolerance: as given, else its series' usual one."""
        if self.fix_tolerance is not None:
            return self.fix_tolerance
        from partsel.physics.eseries import SERIES_TOLERANCE

        return SERIES_TOLERANCE[self.fix_series.upper()]

    @classmethod
    def from_mapping(
        cls, data: Mapping[str, Any] | None, *, file: str | None = None, record: str | None = None
    ) -> Requirements:
        """Build from a canonical mapping (SI numbers); None gives every default.

        Raises
        ------
        InputError
            Every problem found, each with its JSON pointer under ``/requirements``.
        """
        if data is None:
            return cls()
        problems: list[Problem] = []

        def bad(message: str, *path: str | int) -> None:
            problems.append(Problem(message, file, record, json_pointer("requirements", *path)))

        if not isinstance(data, Mapping):
            raise InputError("requirements must be a table", file=file, record=record,
                             pointer="/requirements")  # fmt: skip
        for key in data:
            if key not in TOP_KEYS:
                bad(f"unknown field {key!r}; allowed here: {', '.join(TOP_KEYS)}", key)
        basis = data.get("basis", "worst-case")
        if basis not in BASES:
            bad(f"unknown basis {basis!r}; use {' or '.join(BASES)}", "basis")
        conduction = data.get("conduction", "fix-allowed")
        if conduction not in CONDUCTION_MODES:
            bad(f"unknown conduction mode {conduction!r}; use {', '.join(CONDUCTION_MODES)}",
                "conduction")  # fmt: skip
        series = data.get("fix_series", "E24")
        if series not in FIX_SERIES:
            bad(f"unknown series {series!r}; use {', '.join(FIX_SERIES)}", "fix_series")

        limits: dict[str, float | None] = {d.key: d.default for d in LIMITS}
        choices: dict[str, tuple[Any, ...] | None] = {d.key: None for d in CHOICES}
        raw_limits = data.get("limits", {}) or {}
        if not isinstance(raw_limits, Mapping):
            bad("limits must be a table", "limits")
            raw_limits = {}
        for key, value in raw_limits.items():
            if key in LIMIT_BY_KEY:
                d = LIMIT_BY_KEY[key]
                if value is None:
                    limits[key] = None
                    continue
                if isinstance(value, bool) or not isinstance(value, int | float):
                    bad(f"expected an SI number, got {value!r}", "limits", key)
                    continue
                v = float(value)
                ok = v >= d.floor if d.floor_inclusive else v > d.floor
                if key == "min_source_fraction" and not v < 1.0:
                    ok = False
                if key == "min_yield" and not v <= 1.0:
                    ok = False
                if not ok:
                    rel = ">=" if d.floor_inclusive else ">"
                    extra = {"min_source_fraction": " and < 1", "min_yield": " and <= 1"}.get(
                        key, ""
                    )
                    bad(f"must be {rel} {d.floor:g}{extra}, got {v:g}", "limits", key)
                    continue
                limits[key] = v
            elif key in CHOICE_BY_KEY:
                c = CHOICE_BY_KEY[key]
                if value is None:
                    continue
                if isinstance(value, str | int) or not isinstance(value, Sequence) or not value:
                    bad("expected a non-empty list", "limits", key)
                    continue
                items: list[Any] = []
                for i, item in enumerate(value):
                    if c.values is not None and item not in c.values:
                        allowed = ", ".join(str(x) for x in c.values)
                        bad(f"unknown value {item!r}; allowed: {allowed}", "limits", key, i)
                    elif c.values is None and not (isinstance(item, str) and item.strip()):
                        bad("expected a non-empty text", "limits", key, i)
                    elif item not in items:
                        items.append(item)
                choices[key] = tuple(items)
            else:
                allowed = ", ".join([*LIMIT_BY_KEY, *CHOICE_BY_KEY])
                bad(f"unknown limit {key!r}; allowed: {allowed}", "limits", key)

        objectives: list[tuple[str, float]] = []
        raw_obj = data.get("objectives")
        if raw_obj is None:
            objectives = list(DEFAULT_OBJECTIVES)
        elif not isinstance(raw_obj, Mapping):
            bad("objectives must be a table of weights", "objectives")
        else:
            for name, w in raw_obj.items():
                if name not in OBJECTIVE_BY_NAME:
                    bad(f"unknown objective {name!r}; allowed: {', '.join(OBJECTIVE_BY_NAME)}",
                        "objectives", name)  # fmt: skip
                elif isinstance(w, bool) or not isinstance(w, int | float) or not w >= 0:
                    bad(f"a weight is a number >= 0, got {w!r}", "objectives", name)
                else:
                    objectives.append((name, float(w)))
            if raw_obj and not problems and not any(w > 0 for _, w in objectives):
                bad("at least one objective needs a weight > 0", "objectives")

        pareto: tuple[str, ...] = ()
        raw_p = data.get("pareto")
        if raw_p is not None:
            if isinstance(raw_p, str) or not isinstance(raw_p, Sequence):
                bad("expected a list of two or three objective names", "pareto")
            else:
                for i, name in enumerate(raw_p):
                    if name not in OBJECTIVE_BY_NAME:
                        bad(f"unknown objective {name!r}; allowed: {', '.join(OBJECTIVE_BY_NAME)}",
                            "pareto", i)  # fmt: skip
                if len(set(map(str, raw_p))) != len(raw_p) or not 2 <= len(raw_p) <= 3:
                    bad("expected two or three different objective names", "pareto")
                pareto = tuple(raw_p)
        fix_tol = data.get("fix_tolerance")
        if fix_tol is not None and (
            isinstance(fix_tol, bool) or not isinstance(fix_tol, int | float)
            or not 0.0 <= float(fix_tol) < 1.0
        ):  # fmt: skip
            bad(f"a relative tolerance from 0 up to below 100 %, got {fix_tol!r}", "fix_tolerance")
            fix_tol = None
        samples = data.get("yield_samples", DEFAULT_YIELD_SAMPLES)
        lo_n, hi_n = YIELD_SAMPLES_RANGE
        if isinstance(samples, bool) or not isinstance(samples, int) or not lo_n <= samples <= hi_n:
            bad(f"a whole number of boards from {lo_n} to {hi_n:,}, got {samples!r}",
                "yield_samples")  # fmt: skip
            samples = DEFAULT_YIELD_SAMPLES
        seed = data.get("yield_seed", DEFAULT_YIELD_SEED)
        if isinstance(seed, bool) or not isinstance(seed, int) or not 0 <= seed < 2**63:
            bad(f"a whole number >= 0, got {seed!r}", "yield_seed")
            seed = DEFAULT_YIELD_SEED
        if problems:
            raise InputError(problems=problems)
        origin = {k: "design file" for k in ("basis", "conduction", "fix_series") if k in data}
        if "min_source_fraction" in raw_limits:
            origin["min_source_fraction"] = "design file"
        req = cls(
            basis=basis,
            conduction=conduction,
            fix_series=series,
            limits=limits,
            choices=choices,
            objectives=tuple(objectives),
            pareto=pareto,
            fix_tolerance=None if fix_tol is None else float(fix_tol),
            yield_samples=int(samples),
            yield_seed=int(seed),
            origin=origin,
        )
        if len(req.pareto_objectives) < 2 and not pareto:
            # fewer than two weighted objectives: complete the Pareto set from the defaults
            names = list(req.pareto_objectives)
            for name, _ in DEFAULT_OBJECTIVES:
                if len(names) >= 2:
                    break
                if name not in names:
                    names.append(name)
            req = req.replace(pareto=tuple(names))
        return req
