"""Figures of a prediction: ideal and predicted output over one period, the same with the fix,
and the harmonic spectrum. One writer for the command line and the UI (matplotlib, Agg)."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from partsel.api import CAUTION, Prediction
from partsel.physics.spectrum import spectrum_db


def waveform_figure(pred: Prediction, k: int, path: str | Path) -> Path:
    """Write the figure of part ``k`` of ``pred`` to ``path`` (.png or .svg)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    path = Path(path)
    if path.suffix.lower() not in (".png", ".svg"):
        raise ValueError(f"{path}: use a .png or .svg file name")
    sim = pred.sim
    if sim is None:
        raise ValueError("the prediction has no simulation to plot")
    pn = str(pred.frame["part_number"].iloc[k])
    t_ms = (sim.t_s - sim.t_s[0]) * 1e3
    fig, (ax, ax1, ax2) = plt.subplots(3, 1, figsize=(9, 9), height_ratios=[3, 2, 2])
    ax.plot(t_ms, sim.v_ideal, color="0.6", lw=1.2, ls="--", label="ideal")
    ax.plot(t_ms, sim.v_out[k], color="C0", lw=1.4, label="predicted")
    ax1.plot(t_ms, (sim.v_out[k] - sim.v_ideal) * 1e3, color="C0", lw=1.2, label="predicted")
    if pred.sim_fixed is not None and pred.fix.recommended[k] in ("negative", "positive"):
        rec = str(pred.fix.recommended[k])
        r = getattr(pred.fix, rec).r_ohm[k]
        label = f"with {r:.4g} ohm to the {rec} rail"
        ax.plot(t_ms, pred.sim_fixed.v_out[k], color="C2", lw=1.1, ls="-.", label=label)
        ax1.plot(
            t_ms,
            (pred.sim_fixed.v_out[k] - pred.sim_fixed.v_ideal) * 1e3,
            color="C2",
            lw=1.1,
            label=label,
        )
    ax1.set_ylabel("output − ideal (mV)")
    ax1.set_xlabel("time in period (ms)")
    ax1.legend(loc="upper right", fontsize=8)
    ax1.grid(alpha=0.3)
    if bool(sim.handover[k]):
        th = (sim.handover_time_s[k] - sim.t_s[0]) * 1e3
        ax.axvline(th, color="C3", lw=0.8)
        ax1.axvline(th, color="C3", lw=0.8)
        ax.annotate(
            "handover",
            (th, sim.handover_level_v[k]),
            color="C3",
            xytext=(6, 10),
            textcoords="offset points",
        )
    flat = pred.closed.flat_level_v[k]
    if np.isfinite(flat):
        ax.axhline(flat, color="C3", lw=0.6, ls=":", label="flat level (closed form)")
    ax.set_xlabel("time in period (ms)")
    ax.set_ylabel("output (V)")
    ax.set_title(f"{pn} in {pred.design.name} — {pred.stage.basis} basis")
    ax.legend(loc="upper right", fontsize=8)
    ax.grid(alpha=0.3)
    levels = spectrum_db(sim.v_out[k : k + 1], sim.n_record, sim.harmonics_v.shape[1] - 1)[0]
    h = np.arange(levels.size)
    ax2.bar(h[2:], levels[2:] + 160, bottom=-160, color="C0", width=0.7)
    ax2.set_xlabel("harmonic")
    ax2.set_ylabel("level (dBc)")
    ax2.set_ylim(-160, 0)
    ax2.set_title(f"THD_F {100 * sim.thd_f[k]:.3g} % (harmonics 2..{levels.size - 1})", fontsize=9)
    ax2.grid(alpha=0.3)
    fig.text(0.01, 0.005, CAUTION, fontsize=6, wrap=True)
    fig.tight_layout(rect=(0, 0.03, 1, 1))
    fig.savefig(path)
    plt.close(fig)
    return path
