"""The catalogue held in memory for ranking: one pandas frame, arrays resolved once per basis.

:class:`PartTable` wraps the flat parts frame (``partsel.catalogue.parts_frame``; columns in
``partsel.catalogue.columns``) and caches what every ranking needs: the output-stage parameters
on each basis (:class:`partsel.physics.stage.StageParams`), the stage-current corners of the
worst-case basis, the input parameters not held by the stage model (offset, noise, bias current),
and package codes as boolean columns. Build it once per catalogue; every ranking after that
reuses it ("warm").
"""

from __future__ import annotations

from collections.abc import Mapping
from functools import cached_property

import numpy as np
import pandas as pd

from partsel.params import PARAM_BY_KEY, TemperatureCurve
from partsel.physics.stage import Basis, StageParams

#: Casefolded part number -> parameter key -> its temperature curve (specs at one
#: temperature absent).
TemperatureData = Mapping[str, Mapping[str, TemperatureCurve]]

#: Corners of the stage current swept on the worst-case basis (see :mod:`partsel.solver.solve`).
CORNERS: tuple[str, ...] = ("min", "typ", "max")


def _col(frame: pd.DataFrame, name: str) -> np.ndarray:
    if name in frame:
        return np.asarray(frame[name], dtype=float)
    return np.full(len(frame), np.nan)


def resolve(frame: pd.DataFrame, key: str, order: tuple[str, ...]) -> tuple[np.ndarray, np.ndarray]:
    """Values of parameter ``key`` taking the first side of ``order`` that is given.

    ``order`` holds ``"min"``, ``"typ"``, ``"max"`` and ``"mid"`` (mean of min and max).
    Returns the values (NaN where none is given) and the side used per part.
    """
    sides = {s: _col(frame, f"{key}_{s}") for s in ("min", "typ", "max")}
    sides["mid"] = 0.5 * (sides["min"] + sides["max"])
    out = np.full(len(frame), np.nan)
    used = np.full(len(frame), "none", dtype=object)
    for side in order:
        take = np.isnan(out) & ~np.isnan(sides[side])
        out[take] = sides[side][take]
        used[take] = side
    return out, used


def basis_order(key: str, basis: Basis) -> tuple[str, ...]:
    """Side preference of ``key`` on ``basis`` (the same rule as the stage model uses)."""
    if basis == "typical":
        return ("typ", "mid", "min", "max")
    worst = PARAM_BY_KEY[key].worst_side
    other = "max" if worst == "min" else "min"
    return (worst, "typ", other)


class PartTable:
    """The parts of a catalogue as arrays along one part axis (row order of ``frame``)."""

    def __init__(self, frame: pd.DataFrame, temperature: TemperatureData | None = None) -> None:
        self.frame = frame.reset_index(drop=True)
        #: the specs of each part given at two or more ambients (read by the spread analysis;
        #: the ranking itself judges every spec at the conditions it is stated at)
        self.temperature: TemperatureData = temperature or {}
        self._stage: dict[str, StageParams] = {}
        self._param: dict[tuple[str, str], tuple[np.ndarray, np.ndarray]] = {}

    @property
    def n(self) -> int:
        """Number of parts."""
        return len(self.frame)

    # ---- identity and meta ----------------------------------------------------------------
    @cached_property
    def part_number(self) -> np.ndarray:
        """Part numbers (object array)."""
        return np.asarray(self.frame["part_number"].astype(str), dtype=object)

    @cached_property
    def part_key(self) -> np.ndarray:
        """Casefolded part numbers: the tie-break of every ordering."""
        return np.asarray([p.strip().casefold() for p in self.part_number], dtype=object)

    @cached_property
    def key_order(self) -> np.ndarray:
        """Position of each part in casefolded part-number order (an int tie-break key)."""
        order = np.argsort(self.part_key, kind="stable")
        out = np.empty(self.n, dtype=np.int64)
        out[order] = np.arange(self.n)
        return out

    def text(self, name: str) -> np.ndarray:
        """A text column as an object array ('' where missing)."""
        if name not in self.frame:
            return np.full(self.n, "", dtype=object)
        return np.asarray(self.frame[name].fillna("").astype(str), dtype=object)

    def number(self, name: str) -> np.ndarray:
        """A numeric column as floats (NaN where missing)."""
        return _col(self.frame, name)

    @cached_property
    def channels(self) -> np.ndarray:
        """Channels per package (float, NaN where missing)."""
        return self.number("channels")

    @cached_property
    def lifecycle(self) -> np.ndarray:
        """Lifecycle state per part."""
        return self.text("lifecycle")

    @cached_property
    def topology(self) -> np.ndarray:
        """Topology per part."""
        return self.text("topology")

    @cached_property
    def package_codes(self) -> dict[str, np.ndarray]:
        """Package code -> boolean array of the parts that offer it."""
        codes: dict[str, list[int]] = {}
        for i, text in enumerate(self.text("packages")):
            for item in text.split(";"):
                code = item.split(":", 1)[0].strip()
                if code:
                    codes.setdefault(code, []).append(i)
        out = {}
        for code, rows in codes.items():
            mask = np.zeros(self.n, dtype=bool)
            mask[rows] = True
            out[code] = mask
        return out

    def offers_package(self, codes: tuple[str, ...]) -> np.ndarray:
        """True where a part offers at least one of ``codes`` (case-insensitive)."""
        wanted = {c.strip().casefold() for c in codes}
        mask = np.zeros(self.n, dtype=bool)
        for code, rows in self.package_codes.items():
            if code.casefold() in wanted:
                mask |= rows
        return mask

    # ---- electrical parameters ------------------------------------------------------------
    def stage(self, basis: Basis) -> StageParams:
        """Output-stage parameters on ``basis`` (cached)."""
        if basis not in self._stage:
            self._stage[basis] = StageParams.from_columns(self.frame, basis)
        return self._stage[basis]

    def param(self, key: str, basis: Basis) -> tuple[np.ndarray, np.ndarray]:
        """Values of a parameter of :data:`partsel.params.PARAMS` on ``basis``, side used."""
        k = (key, basis)
        if k not in self._param:
            self._param[k] = resolve(self.frame, key, basis_order(key, basis))
        return self._param[k]

    def stage_current_corner(self, corner: str) -> np.ndarray:
        """Stage current at a corner of its range: ``min`` / ``max`` (falling back to the
        typical, then the other side) or ``typ`` (the typical basis' value)."""
        order = {
            "min": ("min", "typ", "max"),
            "typ": ("typ", "mid", "min", "max"),
            "max": ("max", "typ", "min"),
        }[corner]
        return self.param_order("stage_current", order)

    def param_order(self, key: str, order: tuple[str, ...]) -> np.ndarray:
        """Values of ``key`` with an explicit side preference (cached)."""
        k = (key, "/".join(order))
        if k not in self._param:
            self._param[k] = resolve(self.frame, key, order)
        return self._param[k][0]
