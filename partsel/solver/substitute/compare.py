"""Two to four parts side by side: identity, fit, every parameter on one basis, and in a design
the ranking's checks, verdict and fix of each (rows labelled as engineers read them)."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
import pandas as pd

from partsel import present as P
from partsel.errors import InputError
from partsel.params import PARAMS
from partsel.physics.circuit import Design
from partsel.physics.stage import Basis, StageParams
from partsel.solver import checks as C
from partsel.solver.substitute.circuit import evaluate, summary
from partsel.solver.substitute.model import (
    _DIM_UNIT,
    CAUTION,
    EQUAL_RTOL,
    _check_basis,
    _float,
    _num,
    _summaries,
    find_part,
    fmt,
)
from partsel.solver.substitute.rules import _design_basis
from partsel.solver.substitute.values import _resolve_one, _sides
from partsel.solver.table import PartTable

# ---- side-by-side comparison -------------------------------------------------------------------


@dataclass(frozen=True)
class ComparisonRow:
    """One row of a side-by-side comparison: one value per part."""

    key: str
    group: str  #: identity, fit, function, circuit
    unit: str
    label: str  #: the row's name for people (:mod:`partsel.present`)
    values: tuple[Any, ...]
    sides: tuple[str, ...] | None = None  #: side of the range used per part (parameters)
    better: Literal["low", "high"] | None = None  #: which direction is better (None: no order)
    best: tuple[int, ...] = ()  #: indices of the best parts (empty: no order or all equal)
    ok: tuple[bool | None, ...] | None = None  #: in-circuit pass / fail per part

    @property
    def differs(self) -> bool:
        vals = [
            _float(v) if isinstance(v, float | int) and not isinstance(v, bool) else v
            for v in self.values
        ]
        return len({repr(v) for v in vals}) > 1

    def to_dict(self) -> dict[str, Any]:
        def j(v: Any) -> Any:
            if isinstance(v, bool) or v is None or isinstance(v, str | int):
                return v
            return _float(v)

        return {
            "key": self.key,
            "label": self.label or self.key,
            "group": self.group,
            "unit": self.unit,
            "values": [j(v) for v in self.values],
            "sides": None if self.sides is None else list(self.sides),
            "better": self.better,
            "best": list(self.best),
            "ok": None if self.ok is None else list(self.ok),
            "differs": self.differs,
        }


@dataclass(frozen=True)
class Comparison:
    """Result of :func:`compare_parts`."""

    parts: tuple[str, ...]
    basis: Basis
    design_name: str | None
    rows: tuple[ComparisonRow, ...]
    evaluations: tuple[dict[str, Any], ...] | None = None
    """With a design: the ranking's evaluation of each part (verdict, THD estimate, fix)."""

    def to_frame(self) -> pd.DataFrame:
        """Rows = attributes, one column per part, plus ``unit`` and ``best`` (part numbers)."""
        data = []
        for r in self.rows:
            rec: dict[str, Any] = {"key": r.key, "group": r.group, "unit": r.unit}
            for pn, v in zip(self.parts, r.values, strict=True):
                rec[pn] = v
            rec["best"] = ", ".join(self.parts[i] for i in r.best)
            data.append(rec)
        return pd.DataFrame(data).set_index("key")

    def to_dict(self) -> dict[str, Any]:
        """The documented JSON form (``data-schema/substitutes.schema.json``, comparison)."""
        return {
            "format": "partsel.comparison/1",
            "parts": list(self.parts),
            "basis": self.basis,
            "design": self.design_name,
            "rows": [r.to_dict() for r in self.rows],
            "evaluations": None if self.evaluations is None else list(self.evaluations),
            "caution": CAUTION,
        }


def _best(values: Sequence[float], better: str) -> tuple[int, ...]:
    arr = np.array([np.nan if v is None else float(v) for v in values], dtype=float)
    ok = ~np.isnan(arr)
    if ok.sum() < 2:
        return ()
    target = np.nanmax(arr) if better == "high" else np.nanmin(arr)
    tol = EQUAL_RTOL * max(abs(target), 1e-300)
    idx = tuple(int(i) for i in np.flatnonzero(ok & (np.abs(arr - target) <= tol)))
    return () if len(idx) == ok.sum() else idx


def compare_parts(
    catalogue: PartTable | pd.DataFrame,
    parts: Sequence[str],
    design: Design | None = None,
    basis: Basis | None = None,
) -> Comparison:
    """Two to four named parts side by side (values on ``basis``, best marked per row;
    default: the design's basis, else worst-case).

    With a design, the ranking's checks in that design follow (one evaluation of all the
    parts, :func:`partsel.solver.substitute.circuit.evaluate`): margin per check and the
    verdict, THD estimate and fix of each part.
    """
    frame = catalogue.frame if isinstance(catalogue, PartTable) else catalogue
    basis = _check_basis(basis if basis is not None else _design_basis(design))
    if not 2 <= len(parts) <= 4:
        raise InputError(f"compare takes 2 to 4 parts, got {len(parts)}", pointer="/parts")
    rows_idx = [find_part(frame, p) for p in parts]
    if len(set(rows_idx)) != len(rows_idx):
        raise InputError("a part is named twice", pointer="/parts")
    sub = frame.iloc[rows_idx].reset_index(drop=True)
    summ = _summaries(sub)
    rows: list[ComparisonRow] = []

    def ident(key: str, vals: Sequence[Any], unit: str = "", better: str | None = None) -> None:
        best = _best(vals, better) if better else ()
        rows.append(
            ComparisonRow(
                key,
                "identity" if key in _IDENT else "fit",
                unit,
                P.param_label(key),
                tuple(vals),
                better=better,
                best=best,
            )
        )  # type: ignore[arg-type]

    ident("maker", [s.maker for s in summ])
    ident("lifecycle", [s.lifecycle for s in summ])
    ident("topology", [s.topology for s in summ])
    ident("channels", [s.channels for s in summ])
    ident("packages", [";".join(f"{c}:{p}" for c, p in s.packages) for s in summ])
    same_cur = len({s.currency for s in summ}) == 1
    ident(
        "price",
        [s.price for s in summ],
        summ[0].currency if same_cur else "",
        "low" if same_cur else None,
    )
    ident("supply_min_v", [s.supply_min_v for s in summ], "V", "low")
    ident("supply_max_v", [s.supply_max_v for s in summ], "V", "high")
    ident("temp_min_c", [s.temp_min_c for s in summ], "degC", "low")
    ident("temp_max_c", [s.temp_max_c for s in summ], "degC", "high")
    ident("junction_max_c", list(_num(sub, "junction_max_c")), "degC", "high")
    ident("theta_ja_k_per_w", list(_num(sub, "theta_ja_k_per_w")), "K/W", "low")
    msg = _num(sub, "min_stable_gain")
    ident("min_stable_gain", list(np.where(np.isnan(msg), 1.0, msg)), "V/V", "low")
    n = len(sub)
    for pdef in PARAMS:
        s = _sides(sub, pdef.key)
        order = (pdef.worst_side, "typ") if basis == "worst-case" else ("typ", pdef.worst_side)
        other = "max" if pdef.worst_side == "min" else "min"
        vals, sides = [], []
        for k in range(n):
            v, side = _resolve_one(s, k, (*order, other))
            vals.append(v)
            sides.append(side)
        better = "high" if pdef.worse == "low" else "low"
        rows.append(
            ComparisonRow(
                pdef.key,
                "function",
                _DIM_UNIT.get(pdef.dimension, ""),
                P.param_label(pdef.key),
                tuple(vals),
                tuple(sides),
                better,
                _best(vals, better),
            )
        )  # type: ignore[arg-type]
    stage = StageParams.from_columns(sub, basis)
    for rail, fn in (("swing_pos", stage.headroom_pos), ("swing_neg", stage.headroom_neg)):
        used = stage.used.get(rail)
        limit = stage.source_limit_a if rail == "swing_pos" else stage.sink_limit_a
        for i_a in SWING_COMPARE_CURRENTS_A:
            # Beyond a part's current limit its curve says nothing: n/a.
            vals = [
                float(v) if not i_a > lim else math.nan
                for v, lim in zip(fn(np.full(n, i_a)), limit, strict=True)
            ]
            sides = tuple(str(used[k]) if used is not None else "typ" for k in range(n))
            at = P.quantity(i_a, "A") if i_a > 0 else "no load"
            rows.append(
                ComparisonRow(
                    f"{rail}_headroom_at_{fmt(i_a, 'A').replace(' ', '')}",
                    "function",
                    "V",
                    f"{P.param_label(rail)} at {at}",
                    tuple(vals),
                    sides,
                    "low",
                    _best(vals, "low"),
                )
            )
    evaluations = None
    if design is not None:
        own = evaluate(sub, design, basis)
        evaluations = tuple(summary(own, k) for k in range(n))
        for j, c in enumerate(C.CHECKS):
            if c.sense == "is":
                continue
            st = own.checks.status[:, j]
            if np.all(st == C.NA):
                continue
            ignored = np.all(st == C.IGNORED)
            # a check without a limit: compare the value (lower or higher is better)
            vals = own.checks.value[:, j] if ignored else own.checks.margin[:, j]
            better = ("low" if c.sense == "max" else "high") if ignored else "high"
            unit = c.display_unit if ignored else P.difference_unit(c.display_unit)
            label = P.check_label(c.name) + ("" if ignored else ", margin")
            rows.append(
                ComparisonRow(
                    f"circuit_{c.name}" + ("" if ignored else "_margin"),
                    "circuit",
                    unit,
                    label,
                    tuple(float(v) for v in vals),
                    None,
                    better,
                    _best(list(vals), better),
                    tuple(not bool(f) for f in own.checks.failing[:, j]),
                )
            )
        for key, label, fn in (
            ("circuit_verdict", "verdict in the design", lambda e: e["verdict"]),
            ("circuit_fix", "fix resistor", lambda e: e["fix"]["resistance_ohm"]),
            ("circuit_fix_rail", "fix rail", lambda e: e["fix"]["rail"] or "—"),
        ):
            rows.append(
                ComparisonRow(
                    key,
                    "circuit",
                    "ohm" if key == "circuit_fix" else "",
                    label,
                    tuple(fn(e) if fn(e) is not None else math.nan for e in evaluations),
                )
            )
    return Comparison(
        tuple(s.part_number for s in summ),
        basis,
        design.name if design is not None else None,
        tuple(rows),
        evaluations,
    )


_IDENT = frozenset({"maker", "lifecycle", "topology", "channels", "packages", "price"})
#: Output currents at which a comparison shows the swing headroom, A (no load, 1 mA, 10 mA:
#: the points a datasheet's swing curve usually covers; common practice).
SWING_COMPARE_CURRENTS_A: tuple[float, ...] = (0.0, 1e-3, 10e-3)
