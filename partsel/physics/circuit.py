"""The circuit around the amplifier: supply, signal, closed loop and load network.

All quantities are SI floats (V, A, ohm, F, Hz); temperatures in degrees Celsius. A
:class:`Design` is what a design file describes (see ``partsel.design`` for the file reader and
``data-schema/design.schema.json``); requirements (issue 4) hang off ``Design.requirements``.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any, Literal

import numpy as np

Configuration = Literal["non-inverting", "inverting"]
Coupling = Literal["dc", "ac"]
Waveform = Literal["sine"]


@dataclass(frozen=True)
class Supply:
    """Supply rails, V. A single supply has ``v_neg_v == 0``."""

    v_pos_v: float
    v_neg_v: float = 0.0

    @property
    def total_v(self) -> float:
        """Total supply V+ - V-, V."""
        return self.v_pos_v - self.v_neg_v


@dataclass(frozen=True)
class Signal:
    """Input signal: DC bias plus a sine of peak ``amplitude_v`` at ``frequency_hz``."""

    bias_v: float
    amplitude_v: float
    frequency_hz: float
    waveform: Waveform = "sine"


@dataclass(frozen=True)
class ClosedLoop:
    """Closed-loop configuration.

    ``gain`` is the magnitude of the signal gain, V/V (non-inverting: 1 + R_f/R_g;
    inverting: R_f/R_in). ``reference_v`` is where the gain network returns (bottom of R_g for
    non-inverting; the non-inverting input for inverting); ``None`` means the signal bias, so
    that the output sits at the input bias. ``feedback_ohm`` is R_f, used only to add the
    feedback network's load on the output; ``None`` ignores it.
    """

    configuration: Configuration = "non-inverting"
    gain: float = 1.0
    reference_v: float | None = None
    feedback_ohm: float | None = None


@dataclass(frozen=True)
class Load:
    """Load network on the amplifier output.

    ``r_load_ohm`` to ``reference_v`` (``None``: no resistive load), DC-coupled or through
    ``c_couple_f`` (AC); ``c_load_f`` from the output to ground; optional extra resistors from
    the output to the negative rail (``r_to_neg_ohm``) or to the positive rail
    (``r_to_pos_ohm``), e.g. a pull-down added to stop crossover.
    """

    r_load_ohm: float | None = 10e3
    reference_v: float = 0.0
    coupling: Coupling = "dc"
    c_couple_f: float | None = None
    c_load_f: float = 0.0
    r_to_neg_ohm: float | None = None
    r_to_pos_ohm: float | None = None


@dataclass(frozen=True)
class Design:
    """A circuit in which parts are judged."""

    name: str
    supply: Supply
    signal: Signal
    closed_loop: ClosedLoop = field(default_factory=ClosedLoop)
    load: Load = field(default_factory=Load)
    t_ambient_min_c: float = 25.0
    t_ambient_max_c: float = 25.0
    channels_used: int = 1
    requirements: dict[str, Any] | None = None
    source: str | None = None
    warnings: tuple[str, ...] = field(default=(), compare=False)
    """Implausible values of the design file, for people (the values are kept)."""
    tolerances: dict[tuple[str, str], Any] = field(default_factory=dict)
    """Tolerances and ranges of the design's quantities, by (section, key) of the design file
    (``("load", "resistance")``): :class:`partsel.units.Toleranced` values whose ``nominal``
    is the field's value here. Quantities not listed are exact."""

    # ---- derived quantities of the ideal closed loop -------------------------------------
    @property
    def reference_v(self) -> float:
        """Return point of the gain network, V."""
        r = self.closed_loop.reference_v
        return self.signal.bias_v if r is None else r

    @property
    def noise_gain(self) -> float:
        """Noise gain 1/beta, V/V (non-inverting: G; inverting: 1 + G)."""
        g = self.closed_loop.gain
        return g if self.closed_loop.configuration == "non-inverting" else 1.0 + g

    @property
    def beta(self) -> float:
        """Feedback factor beta = 1 / noise gain."""
        return 1.0 / self.noise_gain

    @property
    def signal_gain(self) -> float:
        """Signed signal gain, V/V."""
        g = self.closed_loop.gain
        return g if self.closed_loop.configuration == "non-inverting" else -g

    @property
    def out_bias_v(self) -> float:
        """Ideal DC output level, V."""
        vr = self.reference_v
        return vr + self.signal_gain * (self.signal.bias_v - vr)

    @property
    def out_amplitude_v(self) -> float:
        """Ideal output peak amplitude, V."""
        return abs(self.signal_gain) * self.signal.amplitude_v

    @property
    def omega(self) -> float:
        """Signal angular frequency, rad/s."""
        return 2.0 * math.pi * self.signal.frequency_hz

    def v_in(self, t_s: np.ndarray) -> np.ndarray:
        """Input source voltage at times ``t_s``, V."""
        return col(self.signal.bias_v) + col(self.signal.amplitude_v) * np.sin(
            col(self.omega) * t_s
        )

    def v_ideal(self, t_s: np.ndarray) -> np.ndarray:
        """Ideal output (infinite loop gain, ideal stage) at times ``t_s``, V."""
        return col(self.out_bias_v) + col(self.signal_gain * self.signal.amplitude_v) * np.sin(
            col(self.omega) * t_s
        )

    def v_plus(self, t_s: np.ndarray) -> np.ndarray:
        """Voltage at the non-inverting input, V."""
        if self.closed_loop.configuration == "non-inverting":
            return self.v_in(t_s)
        return np.zeros_like(np.asarray(t_s, dtype=float)) + col(self.reference_v)

    def v_plus_slope(self, t_s: np.ndarray) -> np.ndarray:
        """Slope of the non-inverting input (the common-mode input of the loop), V/s."""
        if self.closed_loop.configuration == "non-inverting":
            return col(self.signal.amplitude_v * self.omega) * np.cos(col(self.omega) * t_s)
        return np.zeros_like(np.asarray(t_s, dtype=float)) + 0.0 * col(self.omega)

    def v_minus_drive(self, t_s: np.ndarray) -> np.ndarray:
        """Part of the inverting-input voltage not due to the output: v- = this + beta*v_out."""
        beta = self.beta
        if self.closed_loop.configuration == "non-inverting":
            return np.zeros_like(np.asarray(t_s, dtype=float)) + col(
                (1.0 - beta) * self.reference_v
            )
        return col(1.0 - beta) * self.v_in(t_s)

    @property
    def feedback_load_ohm(self) -> float | None:
        """Load of the feedback network on the output (to ``reference_v``), ohm (infinite in
        the rows of a batch where a non-inverting gain is exactly 1)."""
        rf = self.closed_loop.feedback_ohm
        if rf is None:
            return None
        if self.closed_loop.configuration == "non-inverting":
            g = self.closed_loop.gain
            if np.all(np.asarray(g) <= 1.0):
                return None  # follower: R_f ends at the high-impedance inverting input
            if np.ndim(g) == 0 and np.ndim(rf) == 0:
                return rf + rf / (g - 1.0)  # R_f + R_g
            with np.errstate(divide="ignore"):
                return np.where(
                    np.asarray(g) > 1.0, rf + rf / np.maximum(np.asarray(g) - 1.0, 0.0), np.inf
                )
        return rf  # inverting: R_f to the virtual ground at reference_v

    # ---- batches: one design per row of the parts' arrays ----------------------------------
    @property
    def rows(self) -> int | None:
        """Number of rows of a batch design (None: one design for every part).

        A batch holds arrays of shape (N,) in some numeric fields, one value per row of the
        stage arrays it is evaluated with (the spread analysis: one sample of the circuit per
        row); its structure (configuration, coupling, which fields are set) is shared."""
        for value in self.quantities().values():
            if np.ndim(value) > 0:
                return int(np.shape(value)[0])
        return None

    def quantities(self) -> dict[tuple[str, str], Any]:
        """Every design-file quantity of the design by (section, key): floats (None where not
        set), or arrays in a batch."""
        out: dict[tuple[str, str], Any] = {}
        for path, (part, name) in FIELD_ATTR.items():
            holder = self if part is None else getattr(self, part)
            out[path] = getattr(holder, name)
        return out

    def varying(self) -> dict[tuple[str, str], np.ndarray]:
        """The quantities of a batch that hold one value per row."""
        return {k: np.asarray(v) for k, v in self.quantities().items() if np.ndim(v) > 0}

    def with_values(self, values: Mapping[tuple[str, str], Any]) -> Design:
        """A copy with design-file quantities replaced, by (section, key): floats, or arrays
        of shape (N,) for a batch of N rows (see :attr:`rows`)."""
        parts: dict[str | None, dict[str, Any]] = {}
        for path, value in values.items():
            part, name = FIELD_ATTR[path]
            parts.setdefault(part, {})[name] = value
        out = self
        for part, changes in parts.items():
            if part is None:
                out = dataclasses.replace(out, **changes)
            else:
                out = dataclasses.replace(
                    out, **{part: dataclasses.replace(getattr(out, part), **changes)}
                )
        return out

    def take(self, index: np.ndarray) -> Design:
        """The rows ``index`` of a batch (one design: itself)."""
        vary = self.varying()
        if not vary:
            return self
        idx = np.asarray(index)
        return self.with_values({path: value[idx] for path, value in vary.items()})

    def row(self, k: int) -> Design:
        """Row ``k`` of a batch as one design of plain floats (one design: itself)."""
        vary = self.varying()
        if not vary:
            return self
        return self.with_values({path: float(value[k]) for path, value in vary.items()})


#: Where each design-file quantity lives in a :class:`Design`: (section, key) -> (attribute of
#: the design holding it, or None for the design itself; field name).
FIELD_ATTR: dict[tuple[str, str], tuple[str | None, str]] = {
    ("supply", "positive"): ("supply", "v_pos_v"),
    ("supply", "negative"): ("supply", "v_neg_v"),
    ("signal", "bias"): ("signal", "bias_v"),
    ("signal", "amplitude"): ("signal", "amplitude_v"),
    ("signal", "frequency"): ("signal", "frequency_hz"),
    ("amplifier", "gain"): ("closed_loop", "gain"),
    ("amplifier", "reference"): ("closed_loop", "reference_v"),
    ("amplifier", "feedback_resistor"): ("closed_loop", "feedback_ohm"),
    ("load", "resistance"): ("load", "r_load_ohm"),
    ("load", "reference"): ("load", "reference_v"),
    ("load", "coupling_capacitor"): ("load", "c_couple_f"),
    ("load", "capacitance"): ("load", "c_load_f"),
    ("load", "to_negative_rail"): ("load", "r_to_neg_ohm"),
    ("load", "to_positive_rail"): ("load", "r_to_pos_ohm"),
    ("environment", "ambient_min"): (None, "t_ambient_min_c"),
    ("environment", "ambient_max"): (None, "t_ambient_max_c"),
}


def col(value: Any) -> Any:
    """A design value against a grid axis: a plain number as it is, the (N,) array of a batch
    as an (N, 1) column (so that it broadcasts against times of shape (T,) or (N, T))."""
    return value if np.ndim(value) == 0 else np.asarray(value)[:, None]


def pick(value: Any, index: Any) -> Any:
    """A design value for some rows: a plain number as it is, a batch's array at ``index``."""
    return value if np.ndim(value) == 0 else np.asarray(value)[index]
