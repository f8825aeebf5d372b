"""Builders of invented output-stage parameters and designs for the physics tests.

The default part is an invented classic bipolar single-supply amplifier (values plausible for
the trade, not taken from any datasheet): 1 MHz gain-bandwidth, 0.5 V/us slew rate, a 1.3 V
dead band, 50 uA internal pull-down, output headroom to V- of a few millivolts at no load rising
to 0.3 V at 50 uA of sink current (design notes section 6).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from partsel.params import PARAM_BY_KEY
from partsel.physics.circuit import ClosedLoop, Design, Load, Signal, Supply
from partsel.physics.spectrum import DEFAULT_HARMONICS, thd
from partsel.physics.stage import Basis, StageParams

#: Typical values of the invented default part, SI units.
DEFAULT_TYP: dict[str, float] = {
    "dead_band": 1.3,
    "stage_current": 50e-6,
    "source_limit": 40e-3,
    "sink_limit": 20e-3,
    "gbw": 1e6,
    "slew_rise": 0.5e6,
    "slew_fall": 0.5e6,
    "supply_current": 350e-6,
    "cm_headroom_neg": -0.3,
    "cm_headroom_pos": 1.5,
    "cap_load_limit": 1e-9,
}

#: Plain (sideless) columns of the default part.
DEFAULT_PLAIN: dict[str, float] = {
    "supply_min_v": 3.0,
    "supply_max_v": 32.0,
    "channels": 1.0,
    "theta_ja_k_per_w": 150.0,
    "junction_max_c": 150.0,
    "min_stable_gain": 1.0,
}

#: Headroom curves (current A, headroom V) of the default part, typical values.
DEFAULT_SWING: dict[str, tuple[tuple[float, float], ...]] = {
    "pos": ((0.0, 1.3), (10e-3, 1.6)),
    "neg": ((0.0, 0.005), (50e-6, 0.3), (1e-3, 0.75), (10e-3, 1.2)),
}


def stage_columns(
    topologies: str | Sequence[str], n: int | None = None, **values: float | Sequence[float]
) -> dict[str, np.ndarray]:
    """Flat catalogue columns of invented parts (the layout of ``StageParams.from_columns``).

    ``topologies`` is one topology for all ``n`` parts or one per part. Keyword ``values``
    override columns: a parameter key (``gbw=2e6``) sets its typical value, a full column name
    (``gbw_min=0.7e6``, ``swing_neg_v1_max=0.4``) sets that column. Scalars apply to every part.
    """
    if isinstance(topologies, str):
        topo = [topologies] * (1 if n is None else n)
    else:
        topo = list(topologies)
    p = len(topo)
    cols: dict[str, np.ndarray] = {"topology": np.array(topo)}
    for key, typ in DEFAULT_TYP.items():
        cols[f"{key}_typ"] = np.full(p, typ)
    for key, val in DEFAULT_PLAIN.items():
        cols[key] = np.full(p, val)
    for rail, points in DEFAULT_SWING.items():
        for k, (i_a, h_v) in enumerate(points):
            cols[f"swing_{rail}_i{k}"] = np.full(p, i_a)
            cols[f"swing_{rail}_v{k}_typ"] = np.full(p, h_v)
    for name, val in values.items():
        col = f"{name}_typ" if name in PARAM_BY_KEY else name
        cols[col] = np.broadcast_to(np.asarray(val, dtype=float), (p,)).copy()
    return cols


def make_stage(
    topologies: str | Sequence[str],
    n: int | None = None,
    basis: Basis = "typical",
    **values: float | Sequence[float],
) -> StageParams:
    """:class:`StageParams` of invented parts, see :func:`stage_columns`."""
    return StageParams.from_columns(stage_columns(topologies, n, **values), basis=basis)


def line_design(
    *,
    v_pos_v: float = 5.0,
    bias_v: float = 2.5,
    out_amplitude_v: float = 1.0,
    frequency_hz: float = 1e3,
    gain: float = 2.0,
    configuration: str = "non-inverting",
    r_load_ohm: float | None = 10e3,
    coupling: str = "ac",
    c_couple_f: float | None = 10e-6,
    reference_v: float = 0.0,
    c_load_f: float = 0.0,
    r_to_neg_ohm: float | None = None,
    r_to_pos_ohm: float | None = None,
) -> Design:
    """An invented single-supply line driver: output ``bias_v +- out_amplitude_v``.

    The input amplitude is ``out_amplitude_v / gain``; the gain network returns to the signal
    bias, so the output sits at ``bias_v``.
    """
    return Design(
        name="test",
        supply=Supply(v_pos_v),
        signal=Signal(bias_v, out_amplitude_v / gain, frequency_hz),
        closed_loop=ClosedLoop(configuration, gain),  # type: ignore[arg-type]
        load=Load(
            r_load_ohm=r_load_ohm,
            reference_v=reference_v,
            coupling=coupling,  # type: ignore[arg-type]
            c_couple_f=c_couple_f,
            c_load_f=c_load_f,
            r_to_neg_ohm=r_to_neg_ohm,
            r_to_pos_ohm=r_to_pos_ohm,
        ),
    )


def residual_peak(v: np.ndarray) -> float:
    """Peak of ``v`` minus its DC and fundamental (one period), as SimResult.residual_peak_v."""
    ph = np.fft.rfft(v)
    keep = np.zeros_like(ph)
    keep[:2] = ph[:2]
    return float(np.max(np.abs(v - np.fft.irfft(keep, n=v.size))))


def thd_f(v: np.ndarray) -> float:
    """THD_F of one period, the harmonic count simulate() uses."""
    return float(thd(v[None, :], 1, min(DEFAULT_HARMONICS, v.size // 2 - 1))[0])
