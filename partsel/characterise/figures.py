"""One figure per characterisation bench (PNG, matplotlib's Agg canvas, no pyplot state).

Each figure shows what the bench measured and how: the open-loop gain and phase with the
band the GBW was read over, the V+ supply current against the current pulled into the output
with the knee, the headroom curves with the catalogue's points, the offset against the
common-mode input with the range found, the slew step with its 20 % and 80 % levels, the
dead-band sines with the deviation from the input; the operating-point benches (supply, short
circuits) show their circuit and result as text. File names are the bench names.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from partsel import present as P
from partsel.characterise.record import bench_circuit

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

    from partsel.characterise.run import Characterisation


def _figure(rows: int = 1) -> Figure:
    from matplotlib.figure import Figure

    return Figure(figsize=(8, 3.2 * rows + 0.8), layout="constrained")


def _save(fig: Figure, path: Path) -> Path:
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    FigureCanvasAgg(fig)
    fig.savefig(path, dpi=100)
    return path


def _text(ax: Axes, lines: list[str]) -> None:
    ax.axis("off")
    ax.text(0.0, 1.0, "\n".join(lines), va="top", ha="left", family="monospace", fontsize=7,
            transform=ax.transAxes)  # fmt: skip


def _title(fig: Figure, r: Characterisation, name: str) -> None:
    b = r.benches[name]
    fig.suptitle(f"{r.models.name}: {name} — {b.title}", fontsize=9)


def _open_loop(r: Characterisation, fig: Figure) -> None:
    t = r.tables["open_loop"]["ac.txt"]
    f, mag, ph = t["frequency"], t["vdb(out)"], np.degrees(np.unwrap(t["vp(out)"]))
    ax1, ax2 = fig.subplots(2, 1, sharex=True)
    ax1.semilogx(f, mag)
    ax1.axhline(0.0, color="grey", lw=0.5)
    lo, hi = r.open_loop.region_hz
    ax1.axvspan(lo, hi, color="tab:green", alpha=0.15, label="GBW read here")
    ax1.set_ylabel("gain, dB")
    ax1.legend(fontsize=7)
    ax1.set_title(
        f"GBW {P.quantity(r.open_loop.gbw_hz, 'Hz')}, unity gain at "
        f"{P.quantity(r.open_loop.unity_hz, 'Hz')}, phase margin "
        f"{r.open_loop.phase_margin_deg:.0f}°",
        fontsize=8,
    )
    ax2.semilogx(f, ph - 360.0 * np.round(ph[0] / 360.0))
    ax2.set_ylabel("phase, °")
    ax2.set_xlabel("frequency, Hz")


def _knee(r: Characterisation, fig: Figure) -> None:
    k = r.knee
    ax = fig.subplots()
    m = (k.ix_a >= 0) & (k.ix_a <= min(k.regulated_to_a, 5 * k.stage_current_a))
    ax.plot(k.ix_a[m] * 1e6, k.supply_a[m] * 1e6)
    ax.axvline(k.stage_current_a * 1e6, color="tab:red", lw=0.8,
               label=f"stage current {P.quantity(k.stage_current_a, 'A')}")  # fmt: skip
    ax.set_xlabel("current pulled into the output, uA")
    ax.set_ylabel("V+ supply current, uA")
    ax.set_title(f"{r.topology.value}; slope at no load {k.slope_at_zero:.2f}", fontsize=8)
    ax.legend(fontsize=7)


def _swing(r: Characterisation, fig: Figure, rail: str) -> None:
    c = r.swing_pos if rail == "pos" else r.swing_neg
    ax = fig.subplots()
    ax.plot(c.current_a * 1e3, c.headroom_v, label="measured")
    pts = np.array(c.points)
    ax.plot(pts[:, 0] * 1e3, pts[:, 1], "o-", ms=4, lw=0.8, label="catalogue points")
    ax.set_xlabel(f"{'source' if rail == 'pos' else 'sink'} current, mA")
    ax.set_ylabel(f"headroom to {'V+' if rail == 'pos' else 'V-'}, V")
    ax.legend(fontsize=7)


def _cm(r: Characterisation, fig: Figure) -> None:
    c = r.common_mode
    ax = fig.subplots()
    ax.plot(c.vcm_v, np.clip(c.offset_v * 1e3, -50, 50))
    for v in (c.low_v, c.high_v):
        ax.axvline(v, color="tab:red", lw=0.8)
    ax.set_xlabel("common-mode input, V")
    ax.set_ylabel("offset (clipped at ±50 mV), mV")
    ax.set_title(f"range {c.low_v:.3f} V to {c.high_v:.3f} V", fontsize=8)


def _slew(r: Characterisation, fig: Figure) -> None:
    t = r.tables["slew"]["tran.txt"]
    ax = fig.subplots()
    ax.plot(t["time"] * 1e6, t["v(inp)"], lw=0.6, label="input")
    ax.plot(t["time"] * 1e6, t["v(out)"], label="output")
    ax.set_xlabel("time, us")
    ax.set_ylabel("V")
    ax.set_title(
        f"rising {P.quantity(r.slew.rise_v_per_s, 'V/s')}, falling "
        f"{P.quantity(r.slew.fall_v_per_s, 'V/s')} (20–80 %)",
        fontsize=8,
    )
    ax.legend(fontsize=7)


def _deadband(r: Characterisation, fig: Figure, name: str) -> None:
    t = r.tables[name]["tran.txt"]
    tt, vo, vi = t["time"], t["v(out)"], t["v(inp)"]
    ax1, ax2 = fig.subplots(2, 1, sharex=True)
    ax1.plot(tt * 1e3, vi, lw=0.6, label="input")
    ax1.plot(tt * 1e3, vo, label="output")
    ax1.set_ylabel("V")
    ax1.legend(fontsize=7)
    ax2.plot(tt * 1e3, (vo - (vo[0] - vi[0]) - vi) * 1e3)
    ax2.set_ylabel("output − input, mV")
    ax2.set_xlabel("time, ms")
    d = r.dead_band
    if d is not None:
        k = 0 if name == "deadband_1" else 1
        note = (
            f"glitch {d.glitch_v[k] * 1e3:.3g} mV at {P.si(d.slopes_v_per_s[k], 'V/s')}"
            + (f": dead band {d.value_v:.3g} V" if k == 0 else
               f"; with it the closed form gives {d.closed_form_v * 1e3:.3g} mV "
               f"({100 * d.closed_form_error:+.1f} %), the simulation "
               f"{d.simulated_v * 1e3:.3g} mV ({100 * d.simulated_error:+.1f} %)")
        )  # fmt: skip
        ax1.set_title(note, fontsize=8)


def _op(r: Characterisation, fig: Figure, name: str) -> None:
    ax = fig.subplots()
    if name == "supply":
        q = r.quiescent
        result = [
            f"supply current {P.quantity(q.supply_current_a, 'A')}",
            f"offset {P.quantity(q.offset_v, 'V')}, bias current "
            f"{P.quantity(q.bias_current_a, 'A')}",
        ]
    else:
        lim = r.source_limit_a if name == "short_pos" else r.sink_limit_a
        word = "source" if name == "short_pos" else "sink"
        result = [f"{word} current limit {P.quantity(lim, 'A')}"]
    _text(ax, [*result, "", *bench_circuit(r.benches[name].deck)])


def write_figures(result: Characterisation, folder: Path) -> list[Path]:
    """One PNG per bench of ``result`` in ``folder`` (created); the files written."""
    folder.mkdir(parents=True, exist_ok=True)
    out = []
    for name in result.benches:
        two = name in ("open_loop", "deadband_1", "deadband_2")
        fig = _figure(2 if two else 1)
        if name == "open_loop":
            _open_loop(result, fig)
        elif name == "knee":
            _knee(result, fig)
        elif name in ("swing_pos", "swing_neg"):
            _swing(result, fig, name.split("_")[1])
        elif name == "input_cm":
            _cm(result, fig)
        elif name == "slew":
            _slew(result, fig)
        elif name.startswith("deadband"):
            _deadband(result, fig, name)
        else:
            _op(result, fig, name)
        _title(fig, result, name)
        out.append(_save(fig, folder / f"{name}.png"))
    return out
