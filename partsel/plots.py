"""Figures of a prediction: ideal and predicted output over one period, the same with the fix,
and the harmonic spectrum with and without the fix. One writer for the command line and the UI
(matplotlib, Agg).

Handovers are marked where the simulation shows them (the hand-over to the sink device, or to
the load alone for class A, and the hand-back to the source device, on both edges of the
signal); a biased stage (class AB / CMOS) has no handover and gets no marker. The title names
the conduction verdict and what limits the output (clipping, slew rate, bandwidth).
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from partsel.api import CAUTION, Prediction
from partsel.physics.simulate import SimResult, abandoned_reason
from partsel.physics.spectrum import spectrum_db
from partsel.present import CONDUCTION_TEXT, quantity

if TYPE_CHECKING:
    from matplotlib.figure import Figure

    from partsel.solver.spread import YieldAnalysis

#: Lowest level of the spectrum plot, dBc.
FLOOR_DBC = -160.0


def _title_note(pred: Prediction, k: int) -> str:
    c = pred.closed
    verdict = str(c.conduction[k])
    note = CONDUCTION_TEXT.get(verdict, verdict)
    limit = str(c.limited_by[k])
    if limit == "clipping":
        note += f"; clips by {1e3 * float(c.clip_depth_v[k]):.0f} mV"
    elif limit:
        note += f"; {limit}-limited"
    return note


def waveform_figure(pred: Prediction, k: int, path: str | Path) -> Path:
    """Write the figure of part ``k`` of ``pred`` to ``path`` (.png or .svg)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    path = Path(path)
    if path.suffix.lower() not in (".png", ".svg"):
        raise ValueError(f"{path}: use a .png or .svg file name")
    fig = figure(pred, k)
    fig.savefig(path)
    plt.close(fig)
    return path


def figure(pred: Prediction, k: int) -> Figure:
    """The figure of part ``k`` of ``pred`` (three axes: waveform, deviation, spectrum)."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    sim = pred.sim
    if sim is None:
        raise ValueError("the prediction has no simulation to plot")
    if sim.abandoned[k]:
        raise ValueError(abandoned_reason(sim, k))
    pn = str(pred.frame["part_number"].iloc[k])
    t_ms = (sim.t_s - sim.t_s[0]) * 1e3
    fixed: SimResult | None = None
    label_fix = ""
    if pred.sim_fixed is not None and pred.fix.recommended[k] in ("negative", "positive"):
        fixed = pred.sim_fixed
        rec = str(pred.fix.recommended[k])
        r = getattr(pred.fix, rec).r_ohm[k]
        label_fix = f"with {quantity(r, 'ohm')} to the {rec} rail"
    fig, (ax, ax1, ax2) = plt.subplots(3, 1, figsize=(9, 9), height_ratios=[3, 2, 2])
    ax.plot(t_ms, sim.v_ideal, color="0.6", lw=1.2, ls="--", label="ideal")
    ax.plot(t_ms, sim.v_out[k], color="C0", lw=1.4, label="predicted")
    ax1.plot(t_ms, (sim.v_out[k] - sim.v_ideal) * 1e3, color="C0", lw=1.2, label="predicted")
    if fixed is not None:
        ax.plot(t_ms, fixed.v_out[k], color="C2", lw=1.1, ls="-.", label=label_fix)
        ax1.plot(t_ms, (fixed.v_out[k] - fixed.v_ideal) * 1e3, color="C2", lw=1.1, label=label_fix)
    # handovers: only where the simulation shows one, each edge; never for a biased stage
    runs = [(False, "C3")] + ([(True, "C1")] if fixed is not None else [])
    for with_fix, color in runs:
        for t_e, level, label in pred.handover_marks(k, fixed=with_fix):
            ax.axvline(t_e, color=color, lw=0.8)
            ax1.axvline(t_e, color=color, lw=0.8)
            ax.annotate(
                label, (t_e, level), color=color, xytext=(6, 10), textcoords="offset points"
            )
    ax1.set_ylabel("output − ideal (mV)")
    ax1.set_xlabel("time in period (ms)")
    ax1.legend(loc="upper right", fontsize=8)
    ax1.grid(alpha=0.3)
    flat = pred.closed.flat_level_v[k]
    if np.isfinite(flat):
        ax.axhline(flat, color="C3", lw=0.6, ls=":", label="flat level (closed form)")
    ax.set_xlabel("time in period (ms)")
    ax.set_ylabel("output (V)")
    ax.set_title(
        f"{pn} in {pred.design.name} — {pred.stage.basis} basis\n{_title_note(pred, k)}",
        fontsize=10,
    )
    ax.legend(loc="upper right", fontsize=8)
    ax.grid(alpha=0.3)
    # spectrum, with the fix beside it
    n_h = sim.harmonics_v.shape[1] - 1
    levels = spectrum_db(sim.v_out[k : k + 1], sim.n_record, n_h, FLOOR_DBC)[0]
    h = np.arange(levels.size)
    width = 0.38 if fixed is not None else 0.7
    shift = width / 2 if fixed is not None else 0.0
    ax2.bar(h[2:] - shift, levels[2:] - FLOOR_DBC, bottom=FLOOR_DBC, color="C0", width=width,
            label=f"predicted, THD_F {100 * sim.thd_f[k]:.3g} %")  # fmt: skip
    if fixed is not None:
        lv_fix = spectrum_db(fixed.v_out[k : k + 1], fixed.n_record, n_h, FLOOR_DBC)[0]
        ax2.bar(h[2:] + shift, lv_fix[2:] - FLOOR_DBC, bottom=FLOOR_DBC, color="C2",
                width=width, label=f"{label_fix}, THD_F {100 * fixed.thd_f[k]:.3g} %")  # fmt: skip
    ax2.set_xlabel("harmonic")
    ax2.set_ylabel("level (dBc)")
    ax2.set_ylim(FLOOR_DBC, 0)
    ax2.set_title(f"THD_F over harmonics 2..{n_h}", fontsize=9)
    ax2.legend(loc="upper right", fontsize=8)
    ax2.grid(alpha=0.3)
    fig.text(0.01, 0.005, CAUTION, fontsize=6, wrap=True)
    fig.tight_layout(rect=(0, 0.03, 1, 1))
    return fig


def spread_figure(
    y: YieldAnalysis, path: str | Path, *, design_name: str = "", limit: int = 6
) -> Path:
    """Write histograms of the THD figure and of the handover level over the boards of a
    Monte Carlo yield (one row per part, at most ``limit`` parts) to ``path`` (.png or .svg):
    the same figures as the terminal UI's Spread tab."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    path = Path(path)
    if path.suffix.lower() not in (".png", ".svg"):
        raise ValueError(f"{path}: use a .png or .svg file name")
    parts = y.parts[:limit] or []
    rows = max(len(parts), 1)
    fig, axes = plt.subplots(rows, 2, figsize=(10, 2.6 * rows + 0.8), squeeze=False)
    if not parts:
        for ax in axes[0]:
            ax.text(0.5, 0.5, "no part analysed", ha="center", va="center")
            ax.set_axis_off()
    for k, p in enumerate(parts):
        ax_t, ax_h = axes[k]
        thd = p.thd[np.isfinite(p.thd) & (p.thd > 0)]
        if thd.size:
            ax_t.hist(100.0 * thd, bins=60, color="tab:blue")
        else:
            ax_t.text(0.5, 0.5, "no THD figure", ha="center", va="center", transform=ax_t.transAxes)
        kind = "bound" if p.thd_bound else "estimate"
        ax_t.set_xlabel(f"THD {kind}, %")
        ax_t.set_ylabel("boards")
        ax_t.set_title(f"{p.part_number}: yield {100 * p.value:.3g} % of {p.samples:,}", fontsize=9)
        lv = p.handover_level
        if lv.size:
            ax_h.hist(lv, bins=60, color="tab:orange")
            ax_h.set_title(f"handover on {100 * p.handover:.3g} % of boards", fontsize=9)
        else:
            ax_h.text(
                0.5, 0.5, "no board hands over", ha="center", va="center",
                transform=ax_h.transAxes,
            )  # fmt: skip
            ax_h.set_xticks([])
            ax_h.set_yticks([])
        ax_h.set_xlabel("handover level, V")
    fig.suptitle(
        f"Spread over {y.samples:,} boards (seed {y.seed})"
        + (f" — {design_name}" if design_name else ""),
        fontsize=10,
    )
    fig.text(0.01, 0.005, CAUTION, fontsize=6, color="0.4")
    fig.tight_layout(rect=(0, 0.02, 1, 0.97))
    fig.savefig(path)
    plt.close(fig)
    return path
