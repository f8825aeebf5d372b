"""The prediction figure (partsel.plots): handover markers where the simulation shows them,
on both edges; none for a biased stage; the spectrum with and without the fix.

A class-B stage that must sink more than its pull-down current hands over twice a period, to
the sink device on the falling edge and back on the rising one (design notes section 3, common
practice); a class-AB stage keeps both devices on and has no handover to mark.
"""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt
import numpy as np
import pandas as pd
from matplotlib.container import BarContainer
from physics_helpers import line_design, stage_columns

from partsel.api import Prediction, Session
from partsel.plots import figure, waveform_figure


def _prediction(topologies: list[str]) -> Prediction:
    """The prediction of invented parts through the API every door uses (simulated as designed
    and with the recommended fix)."""
    frame = pd.DataFrame(stage_columns(topologies))
    frame["part_number"] = [f"P{k}" for k in range(len(topologies))]
    design = line_design()  # 10 kohm AC-coupled, 1 V peak: class B sinks 100 uA > 50 uA
    with Session(frame) as session:
        return session.predict(design, basis="typical")


def _vertical_lines(ax: plt.Axes) -> list[float]:
    xs = []
    for line in ax.get_lines():
        x = np.asarray(line.get_xdata(), dtype=float)
        if x.size == 2 and x[0] == x[1]:
            xs.append(float(x[0]))
    return xs


def test_class_b_handovers_marked_on_both_edges_and_spectrum_with_fix() -> None:
    pred = _prediction(["class-b-pulldown", "class-ab"])
    sim = pred.sim
    assert sim is not None and sim.handover[0]
    edges = sim.handover_edges_s[0]
    assert np.isfinite(edges).all()  # hand-over and hand-back in the record
    fig = figure(pred, 0)
    ax, ax1, ax2 = fig.axes[:3]
    want = sorted((edges - sim.t_s[0]) * 1e3)
    assert sorted(_vertical_lines(ax)) == want  # the fix's simulation hands over nowhere
    assert sorted(_vertical_lines(ax1)) == want
    labels = {t.get_text() for t in ax.texts}
    assert {"handover", "hand-back"} <= labels
    bars = [c for c in ax2.containers if isinstance(c, BarContainer)]
    assert len(bars) == 2  # predicted and with the recommended fix
    assert "changes conduction mode" in ax.get_title()
    plt.close(fig)


def test_biased_stage_gets_no_handover_marker(tmp_path) -> None:
    pred = _prediction(["class-b-pulldown", "class-ab"])
    assert pred.sim is not None and not pred.sim.handover[1]
    fig = figure(pred, 1)
    ax, _, ax2 = fig.axes[:3]
    assert _vertical_lines(ax) == []
    assert not any(t.get_text() in ("handover", "hand-back") for t in ax.texts)
    assert len([c for c in ax2.containers if isinstance(c, BarContainer)]) == 1  # no fix
    assert "biased stage" in ax.get_title()
    plt.close(fig)
    out = waveform_figure(pred, 1, tmp_path / "ab.svg")
    assert b"<svg" in out.read_bytes()[:2000]
