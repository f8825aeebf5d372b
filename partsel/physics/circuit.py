"""The circuit around the amplifier: supply, signal, closed loop and load network.

All quantities are SI floats (V, A, ohm, F, Hz); temperatures in degrees Celsius. A
:class:`Design` is what a design file describes (see ``partsel.design`` for the file reader and
``data-schema/design.schema.json``); requirements (issue 4) hang off ``Design.requirements``.
"""

from __future__ import annotations

import math
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
        return self.signal.bias_v + self.signal.amplitude_v * np.sin(self.omega * t_s)

    def v_ideal(self, t_s: np.ndarray) -> np.ndarray:
        """Ideal output (infinite loop gain, ideal stage) at times ``t_s``, V."""
        return self.out_bias_v + self.signal_gain * self.signal.amplitude_v * np.sin(
            self.omega * t_s
        )

    def v_plus(self, t_s: np.ndarray) -> np.ndarray:
        """Voltage at the non-inverting input, V."""
        if self.closed_loop.configuration == "non-inverting":
            return self.v_in(t_s)
        return np.full_like(np.asarray(t_s, dtype=float), self.reference_v)

    def v_plus_slope(self, t_s: np.ndarray) -> np.ndarray:
        """Slope of the non-inverting input (the common-mode input of the loop), V/s."""
        if self.closed_loop.configuration == "non-inverting":
            return self.signal.amplitude_v * self.omega * np.cos(self.omega * t_s)
        return np.zeros_like(np.asarray(t_s, dtype=float))

    def v_minus_drive(self, t_s: np.ndarray) -> np.ndarray:
        """Part of the inverting-input voltage not due to the output: v- = this + beta*v_out."""
        beta = self.beta
        if self.closed_loop.configuration == "non-inverting":
            return np.full_like(np.asarray(t_s, dtype=float), (1.0 - beta) * self.reference_v)
        return (1.0 - beta) * self.v_in(t_s)

    @property
    def feedback_load_ohm(self) -> float | None:
        """Load of the feedback network on the output (to ``reference_v``), ohm."""
        rf = self.closed_loop.feedback_ohm
        if rf is None:
            return None
        if self.closed_loop.configuration == "non-inverting":
            g = self.closed_loop.gain
            if g <= 1.0:
                return None  # follower: R_f ends at the high-impedance inverting input
            return rf + rf / (g - 1.0)  # R_f + R_g
        return rf  # inverting: R_f to the virtual ground at reference_v
