"""The results of substitute vetting: reasons, comparisons, candidates and the vetting itself
(plain dataclasses with their documented JSON form, ``data-schema/substitutes.schema.json``),
and the small helpers the rules share."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from functools import lru_cache
from typing import Any, Literal

import numpy as np
import pandas as pd

from partsel import present as P
from partsel.errors import InputError
from partsel.params import Topology
from partsel.physics.stage import Basis

Verdict = Literal["drop-in", "fits-this-circuit", "review", "unsuitable"]
#: Verdict classes, best first.
VERDICTS: tuple[Verdict, ...] = ("drop-in", "fits-this-circuit", "review", "unsuitable")
Severity = Literal["fail", "review", "circuit-ok", "info"]
#: Severities of a reason, worst first; the worst one present sets the verdict.
SEVERITIES: tuple[Severity, ...] = ("fail", "review", "circuit-ok", "info")
_VERDICT_OF: dict[str, Verdict] = {
    "fail": "unsuitable",
    "review": "review",
    "circuit-ok": "fits-this-circuit",
}
Aspect = Literal["form", "fit", "function", "behaviour", "circuit"]
Change = Literal["better", "equal", "worse", "unknown", "n/a"]
BASES: tuple[Basis, ...] = ("worst-case", "typical")

#: Printed with every vetting and comparison (and in their JSON).
CAUTION = (
    "Verdicts compare catalogue values and partsel's behavioural macro-model predictions: "
    "confirm a substitute against its datasheet and on the bench before release, and follow "
    "your organisation's design rules where safety is involved."
)

#: A candidate whose gain-bandwidth is at least this many times the incumbent's is flagged when
#: the output drives a capacitance (partsel's choice: a load pole that sat a factor of three
#: above the incumbent's loop crossover then sits at the candidate's, and the phase margin
#: there is gone; common practice for a single-pole loop with an output-resistance pole).
GBW_FLAG_RATIO = 3.0
#: Relative tolerance within which two catalogue values count as equal (parsing round-off).
EQUAL_RTOL = 1e-6
#: Fraction of the incumbent's own spread (the distance between its typical and its guaranteed
#: value) within which a candidate's parameter counts as equal: a difference smaller than what
#: production spread already allows is not a change worth a review (partsel's choice).
SPREAD_FRACTION = 0.1
#: Relative change of an in-circuit margin (or, for a figure without a limit, of its value)
#: below which it counts as unchanged (partsel's choice: 5 %, inside the accuracy of the
#: macro-model's estimates).
CIRCUIT_RTOL = 0.05
#: Absolute change below which an in-circuit figure counts as unchanged, per unit (partsel's
#: choice: 10 mV of swing or input margin, 1 uA of current, 2 K of junction temperature).
CIRCUIT_ATOL: dict[str, float] = {
    "V": 10e-3,
    "A": 1e-6,
    "degC": 2.0,
}
#: Stated with every vetting (and in its JSON): the tolerances above, in words.
TOLERANCES = (
    "parameters within 10 % of the incumbent's own typical-to-guaranteed spread count as "
    "equal; in-circuit margins within 5 % or 10 mV, 1 uA, 2 K count as unchanged"
)
#: The order of the candidates, stated with every vetting.
SORT_ORDER = (
    "best verdict first (drop-in, fits this circuit, review, unsuitable), then fewer failures, "
    "fewer review questions and worse or unknown parameters, more better parameters, lower "
    "price, part number"
)

#: SI unit of each parameter dimension (partsel.units.SI_UNIT, repeated here so that the solver
#: does not import pint).
_DIM_UNIT: dict[str, str] = {
    "voltage": "V",
    "current": "A",
    "frequency": "Hz",
    "slew": "V/s",
    "capacitance": "F",
    "noise_voltage": "V/rtHz",
}
#: What each output stage does, for the topology flag (design notes section 2).
_TOPOLOGY_TEXT: dict[str, str] = {
    Topology.CLASS_A.value: "a class-A follower: it sinks at most its bias current, and the "
    "output flattens where the load must sink more",
    Topology.CLASS_B_PULLDOWN.value: "a class-B stage with a pull-down: it crosses a dead band "
    "(a crossover glitch) where the load must sink more than the pull-down current",
    Topology.CLASS_AB.value: "a class-AB stage: no dead band, but a quiescent output current, "
    "and its own swing and supply current",
    Topology.CMOS_RAIL.value: "a CMOS rail-to-rail stage: no dead band; its swing to the rails "
    "shrinks with the load current",
}


def _pct(new: float, old: float) -> str:
    """Relative change ``(new - old) / |old|`` as a signed percentage ('' when meaningless)."""
    if not (math.isfinite(new) and math.isfinite(old)) or old == 0:
        return ""
    return f" ({(new - old) / abs(old) * 100:+.0f} %)"


def _float(x: Any) -> float | None:
    """A JSON-friendly float (None for NaN / inf / missing)."""
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def _num(frame: pd.DataFrame, name: str) -> np.ndarray:
    """Float column ``name`` (NaN when the frame has no such column)."""
    if name in frame.columns:
        col = pd.to_numeric(frame[name], errors="coerce")
        return np.array(col.to_numpy(dtype=float, na_value=np.nan), dtype=float)  # a copy
    return np.full(len(frame), np.nan)


def _txt(frame: pd.DataFrame, name: str, default: str = "") -> list[str]:
    """Text column ``name`` as a list of str ('' for missing values)."""
    if name not in frame.columns:
        return [default] * len(frame)
    return [
        "" if (v is None or (isinstance(v, float) and math.isnan(v))) else str(v)
        for v in frame[name].tolist()
    ]


@lru_cache(maxsize=65536)
def parse_packages(text: str) -> tuple[tuple[str, str], ...]:
    """The ``packages`` column (``'CODE:PINOUT;CODE:PINOUT'``) as (code, pinout) pairs."""
    out = []
    for item in str(text or "").split(";"):
        item = item.strip()
        if not item:
            continue
        code, _, pinout = item.partition(":")
        out.append((code.strip(), pinout.strip()))
    return tuple(out)


def fmt(value: float | None, unit: str) -> str:
    """A value for people (:func:`partsel.present.quantity`)."""
    return P.quantity(value, unit)


def find_part(frame: pd.DataFrame, part_number: str) -> int:
    """Row position of ``part_number`` in ``frame`` (case-insensitive, trimmed).

    Raises :class:`~partsel.errors.InputError` for an unknown part number.
    """
    key = str(part_number).strip().casefold()
    keys = [s.strip().casefold() for s in _txt(frame, "part_number")]
    try:
        return keys.index(key)
    except ValueError:
        raise InputError(f"unknown part number {part_number!r}", pointer="/part_number") from None


def _check_basis(basis: str) -> Basis:
    if basis not in BASES:
        raise InputError(
            f"unknown basis {basis!r}: use 'worst-case' or 'typical'", pointer="/basis"
        )
    return basis  # type: ignore[return-value]


# ---- results -----------------------------------------------------------------------------------


@dataclass(frozen=True)
class Reason:
    """One reason behind a verdict."""

    aspect: Aspect
    severity: Severity
    code: str  #: stable identifier for scripts, e.g. ``"topology"``, ``"circuit-swing_low"``
    message: str  #: one sentence for people

    def to_dict(self) -> dict[str, Any]:
        return {
            "aspect": self.aspect,
            "severity": self.severity,
            "code": self.code,
            "message": self.message,
        }


@dataclass(frozen=True)
class ParamComparison:
    """One parameter of a candidate against the incumbent's; SI units."""

    key: str
    unit: str
    worse: Literal["low", "high"]  #: which direction is pessimistic
    incumbent: float
    candidate: float
    side_incumbent: str  #: side of the range used ('min', 'typ', 'max', 'value', 'none')
    side_candidate: str
    change: Change
    note: str = ""  #: '', 'typical', 'no-guarantee', 'mixed' (see :func:`_pair_all`)
    at_current_a: float | None = None  #: swing headroom: the output current compared at

    @property
    def delta(self) -> float:
        """Candidate minus incumbent (SI)."""
        return self.candidate - self.incumbent

    @property
    def ratio(self) -> float | None:
        """Candidate over incumbent where both are positive."""
        if self.incumbent > 0 and self.candidate > 0:
            return self.candidate / self.incumbent
        return None

    def text(self) -> str:
        """``key a vs b (+x %)`` for people."""
        return (
            f"{P.param_label(self.key)} {fmt(self.candidate, self.unit)} vs "
            f"{fmt(self.incumbent, self.unit)}{_pct(self.candidate, self.incumbent)}"
        )

    def to_dict(self) -> dict[str, Any]:
        return {
            "parameter": self.key,
            "unit": self.unit,
            "worse": self.worse,
            "incumbent": _float(self.incumbent),
            "candidate": _float(self.candidate),
            "side_incumbent": self.side_incumbent,
            "side_candidate": self.side_candidate,
            "change": self.change,
            "delta": _float(self.delta),
            "ratio": _float(self.ratio),
            "note": self.note,
            "at_current_a": _float(self.at_current_a),
        }


# ---- vetting -----------------------------------------------------------------------------------


@dataclass(frozen=True)
class PartSummary:
    """Identity, form and fit of one part, as plain data."""

    part_number: str
    maker: str
    lifecycle: str
    topology: str
    channels: int
    packages: tuple[tuple[str, str], ...]
    supply_min_v: float
    supply_max_v: float
    temp_min_c: float
    temp_max_c: float
    price: float
    currency: str

    def to_dict(self) -> dict[str, Any]:
        return {
            "part_number": self.part_number,
            "maker": self.maker,
            "lifecycle": self.lifecycle,
            "topology": self.topology,
            "channels": self.channels,
            "packages": [{"code": c, "pinout": p} for c, p in self.packages],
            "supply_min_v": _float(self.supply_min_v),
            "supply_max_v": _float(self.supply_max_v),
            "temp_min_c": _float(self.temp_min_c),
            "temp_max_c": _float(self.temp_max_c),
            "price": _float(self.price),
            "currency": self.currency,
        }


def _summaries(frame: pd.DataFrame) -> list[PartSummary]:
    cols = {
        n: _txt(frame, n) for n in ("part_number", "maker", "lifecycle", "topology", "packages")
    }
    cur = _txt(frame, "currency")
    nums = {
        n: _num(frame, n)
        for n in ("channels", "supply_min_v", "supply_max_v", "temp_min_c", "temp_max_c", "price")
    }
    out = []
    for k in range(len(frame)):
        ch = nums["channels"][k]
        out.append(
            PartSummary(
                part_number=cols["part_number"][k],
                maker=cols["maker"][k],
                lifecycle=cols["lifecycle"][k],
                topology=cols["topology"][k],
                channels=int(ch) if math.isfinite(ch) else 0,
                packages=parse_packages(cols["packages"][k]),
                supply_min_v=float(nums["supply_min_v"][k]),
                supply_max_v=float(nums["supply_max_v"][k]),
                temp_min_c=float(nums["temp_min_c"][k]),
                temp_max_c=float(nums["temp_max_c"][k]),
                price=float(nums["price"][k]),
                currency=cur[k],
            )
        )
    return out


@dataclass(frozen=True)
class CircuitComparison:
    """One check of the ranking (:mod:`partsel.solver.checks`) for a candidate against the
    incumbent's, in the design. Values and margins in the check's unit; statuses are the
    ranking's (``pass``, ``fail``, ``fixed``...)."""

    check: str
    unit: str
    incumbent: float
    candidate: float
    incumbent_margin: float
    candidate_margin: float
    incumbent_status: str
    candidate_status: str
    change: Change  #: of the margin (or of the value, for a figure the design sets no limit on)

    @property
    def incumbent_ok(self) -> bool:
        return self.incumbent_status not in ("fail", "unknown")

    @property
    def candidate_ok(self) -> bool:
        return self.candidate_status not in ("fail", "unknown")

    def to_dict(self) -> dict[str, Any]:
        return {
            "check": self.check,
            "unit": self.unit,
            "incumbent": _float(self.incumbent),
            "candidate": _float(self.candidate),
            "incumbent_margin": _float(self.incumbent_margin),
            "candidate_margin": _float(self.candidate_margin),
            "incumbent_status": self.incumbent_status,
            "candidate_status": self.candidate_status,
            "incumbent_ok": self.incumbent_ok,
            "candidate_ok": self.candidate_ok,
            "change": self.change,
        }


@dataclass(frozen=True)
class Candidate:
    """One candidate substitute with its verdict and the comparisons behind it."""

    part: PartSummary
    verdict: Verdict
    reasons: tuple[Reason, ...]
    function: tuple[ParamComparison, ...]
    circuit: tuple[CircuitComparison, ...] | None  #: None without a design
    common_packages: tuple[str, ...]  #: package codes shared with the same pinout
    circuit_pass: bool | None  #: the ranking finds it feasible in the design (None: no design)
    in_circuit: dict[str, Any] | None = None
    """The ranking's evaluation of the candidate in the design (verdict, conduction, THD
    estimate, fix; the same as ``partsel rank``), None without a design."""

    @property
    def part_number(self) -> str:
        return self.part.part_number

    def counts(self) -> dict[str, int]:
        """How many parameters are better, equal, worse, unknown."""
        out = {"better": 0, "equal": 0, "worse": 0, "unknown": 0}
        for c in self.function:
            if c.change in out:
                out[c.change] += 1
        return out

    def sort_key(self) -> tuple[Any, ...]:
        """Order of fitness: verdict; failures; form, fit and behaviour questions plus worse
        or unknown parameters; other questions; better parameters; price; part number."""
        n = self.counts()
        fails = sum(r.severity == "fail" for r in self.reasons)
        heavy = sum(r.severity == "review" and r.aspect != "function" for r in self.reasons)
        light = sum(r.severity == "review" and r.aspect == "function" for r in self.reasons)
        price = self.part.price if math.isfinite(self.part.price) else math.inf
        return (
            VERDICTS.index(self.verdict),
            fails,
            heavy + n["worse"] + n["unknown"],
            light,
            -n["better"],
            price,
            self.part_number.casefold(),
        )

    def to_dict(self) -> dict[str, Any]:
        return {
            **self.part.to_dict(),
            "verdict": self.verdict,
            "reasons": [r.to_dict() for r in self.reasons],
            "common_packages": list(self.common_packages),
            "counts": self.counts(),
            "function": [c.to_dict() for c in self.function],
            "circuit": None if self.circuit is None else [c.to_dict() for c in self.circuit],
            "circuit_pass": self.circuit_pass,
            "in_circuit": self.in_circuit,
        }


@dataclass(frozen=True)
class Vetting:
    """Result of :func:`vet_substitutes`: the candidates, best first."""

    incumbent: PartSummary
    basis: Basis
    design_name: str | None
    package: str | None
    candidates: tuple[Candidate, ...]
    incumbent_circuit: tuple[dict[str, Any], ...] | None  #: the incumbent's checks in the design
    considered: int  #: how many catalogue parts were examined
    incumbent_in_circuit: dict[str, Any] | None = None  #: the ranking's evaluation of it
    sort: str = SORT_ORDER
    tolerances: str = TOLERANCES

    def best(self, verdicts: Sequence[str] = ("drop-in", "fits-this-circuit")) -> list[Candidate]:
        """The candidates whose verdict is one of ``verdicts``, best first."""
        return [c for c in self.candidates if c.verdict in verdicts]

    def to_frame(self) -> pd.DataFrame:
        """One row per candidate: rank, part number, verdict, counts, reasons (joined)."""
        rows = []
        for k, c in enumerate(self.candidates, 1):
            n = c.counts()
            rows.append(
                {
                    "rank": k,
                    "part_number": c.part_number,
                    "maker": c.part.maker,
                    "verdict": c.verdict,
                    "lifecycle": c.part.lifecycle,
                    "topology": c.part.topology,
                    "price": c.part.price,
                    "better": n["better"],
                    "equal": n["equal"],
                    "worse": n["worse"],
                    "unknown": n["unknown"],
                    "circuit_pass": c.circuit_pass,
                    "circuit_verdict": None if c.in_circuit is None else c.in_circuit["verdict"],
                    "reasons": " | ".join(r.message for r in c.reasons if r.severity != "info"),
                }
            )
        cols = [
            "rank",
            "part_number",
            "maker",
            "verdict",
            "lifecycle",
            "topology",
            "price",
            "better",
            "equal",
            "worse",
            "unknown",
            "circuit_pass",
            "circuit_verdict",
            "reasons",
        ]
        return pd.DataFrame(rows, columns=cols)

    def to_dict(self) -> dict[str, Any]:
        """The documented JSON form (``data-schema/substitutes.schema.json``)."""
        return {
            "format": "partsel.substitutes/1",
            "incumbent": self.incumbent.to_dict(),
            "basis": self.basis,
            "design": self.design_name,
            "package": self.package,
            "considered": self.considered,
            "incumbent_circuit": None
            if self.incumbent_circuit is None
            else list(self.incumbent_circuit),
            "incumbent_in_circuit": self.incumbent_in_circuit,
            "sort": self.sort,
            "tolerances": self.tolerances,
            "candidates": [{"rank": k, **c.to_dict()} for k, c in enumerate(self.candidates, 1)],
            "caution": CAUTION,
        }
