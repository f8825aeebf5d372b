"""Plots drawn with textual-plotext: waveforms over one period and harmonic spectra."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from textual_plotext import PlotextPlot

from partsel.tui import theme

Color = tuple[int, int, int]

#: Lowest level shown in a spectrum, dBc (harmonics below it sit on the floor).
SPECTRUM_FLOOR_DB = -120.0


class _Plot(PlotextPlot):
    """A plotext plot with a message shown instead of data when there is none."""

    #: The title drawn last (what the plot shows, for people and tests).
    title_text: str = ""

    def show_message(self, text: str) -> None:
        """Clear the plot and show ``text`` as its title."""
        self.title_text = text
        plt = self.plt
        plt.clear_data()
        plt.clear_figure()
        plt.title(text)
        plt.xticks([])
        plt.yticks([])
        self.refresh()


class WavePlot(_Plot):
    """Output voltage over one period: the ideal and one or more predicted waveforms."""

    def draw(
        self,
        t_ms: np.ndarray,
        ideal: np.ndarray | None,
        series: Sequence[tuple[np.ndarray, str, Color]],
        *,
        title: str,
        markers_ms: Sequence[tuple[float, str]] = (),
        level_v: float | None = None,
    ) -> None:
        """Draw ``series`` (values, label, colour) against ``t_ms``.

        ``markers_ms``: vertical lines (time, label) such as the handover instant;
        ``level_v``: a horizontal line (the flat level the load holds the output at).
        """
        plt = self.plt
        plt.clear_data()
        plt.clear_figure()
        x = [float(v) for v in t_ms]
        if ideal is not None:
            plt.plot(
                x,
                [float(v) for v in ideal],
                label="ideal",
                color=theme.PLOT_IDEAL,
                marker="braille",
            )
        for y, label, color in series:
            plt.plot(x, [float(v) for v in y], label=label, color=color, marker="braille")
        for t, label in markers_ms:
            plt.vline(float(t), color=theme.PLOT_MARKER)
            if label:
                # at the foot of the plot, right of its line: clear of the legend (top left)
                low = min(float(np.min(s[0])) for s in series) if series else 0.0
                plt.text(label, x=float(t), y=low, color=theme.PLOT_MARKER, alignment="left")
        if level_v is not None and np.isfinite(level_v):
            plt.hline(float(level_v), color=theme.PLOT_MARKER)
        plt.title(title)
        self.title_text = title
        plt.xlabel("time in period (ms)")
        plt.ylabel("V")
        self.refresh()


class SpectrumPlot(_Plot):
    """Harmonic levels relative to the fundamental (dBc), as designed and with the fix."""

    def draw(self, series: Sequence[tuple[np.ndarray, str, Color]], *, title: str) -> None:
        """``series``: levels in dBc of harmonics 0..H (label, colour); harmonics 2.. shown."""
        plt = self.plt
        plt.clear_data()
        plt.clear_figure()
        if not series:
            self.show_message(title)
            return
        n = min(len(s[0]) for s in series)
        h = list(range(2, min(n, 16)))
        ys = [
            [max(float(v), SPECTRUM_FLOOR_DB) - SPECTRUM_FLOOR_DB for v in s[0][2 : len(h) + 2]]
            for s in series
        ]
        labels = [s[1] for s in series]
        colors = [s[2] for s in series]
        if len(ys) == 1:
            plt.bar(h, ys[0], label=labels[0], color=colors[0], width=0.6)
        else:
            plt.multiple_bar(h, ys, labels=labels, color=colors, width=0.8)
        ticks = [0.0, 20.0, 40.0, 60.0, 80.0, 100.0, 120.0]
        plt.yticks(ticks, [f"{t + SPECTRUM_FLOOR_DB:.0f}" for t in ticks])
        plt.ylim(0, -SPECTRUM_FLOOR_DB)
        plt.xticks(h, [str(k) for k in h])
        plt.title(title)
        self.title_text = title
        plt.xlabel("harmonic")
        plt.ylabel("dBc")
        self.refresh()


class HistogramPlot(_Plot):
    """A histogram of one figure over the boards of a Monte Carlo yield (the Spread tab)."""

    def draw(self, values: np.ndarray, *, title: str, xlabel: str, color: Color) -> None:
        """Bars of ``values`` (finite ones) in :data:`HIST_BINS` bins."""
        x = np.asarray(values, dtype=float)
        x = x[np.isfinite(x)]
        if x.size == 0:
            self.show_message(title)
            return
        plt = self.plt
        plt.clear_data()
        plt.clear_figure()
        plt.hist([float(v) for v in x], bins=HIST_BINS, color=color)
        plt.title(title)
        self.title_text = title
        plt.xlabel(xlabel)
        plt.ylabel("boards")
        self.refresh()


#: Bins of a histogram plot.
HIST_BINS = 30
