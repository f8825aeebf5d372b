"""The part view: one part's verdict and prediction in the current design.

The summary, the margins and the catalogue data come from the ranking at once; the waveforms
and the spectrum come from the time-domain simulation (:meth:`partsel.api.Session.predict`),
which the app runs in a worker and hands over with :meth:`PartView.show_simulation`. The Spread
tab runs the Monte Carlo yield and the corner search of the part when it is opened
(:meth:`partsel.api.Session.spread_yield` and :meth:`~partsel.api.Session.corners`, in a
worker of its own, kept per design and part).
"""

from __future__ import annotations

from typing import Any

import numpy as np
import yaml
from rich.text import Text
from textual import work
from textual.app import ComposeResult
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.widgets import Static, TabbedContent, TabPane

from partsel import present as P
from partsel.api import CAUTION, Prediction
from partsel.physics.simulate import abandoned_reason
from partsel.physics.spectrum import spectrum_db
from partsel.solver import Ranking
from partsel.solver import checks as C
from partsel.solver.export import part_checks
from partsel.solver.messages import check_message, failing_messages
from partsel.tui import fmt, theme
from partsel.tui.rows import RankingView
from partsel.tui.widgets.margins import MarginBars
from partsel.tui.widgets.plots import HistogramPlot, SpectrumPlot, WavePlot

#: The caution in one line, for the part pane of the main screen.
SHORT_CAUTION = (
    "Macro-model estimates, not a transistor-level model: confirm on the bench or in a full "
    "simulation."
)
#: Boards per part in the Spread tab (``partsel yield -n`` for more; the design's
#: ``yield_samples`` when smaller).
SPREAD_SAMPLES = 2000
#: Sections of a catalogue record shown as the part's output-stage data.
RECORD_SECTIONS = ("output", "dynamics", "supply", "input", "packages", "temperature", "price")


def summary_text(r: Ranking, i: int) -> Text:
    """Verdict, crossover, fix and cost of part ``i``, and its key margin in words."""
    t, p, fx, ch = r.table, r.prediction, r.fix, r.checks
    out = Text()
    out.append(str(t.part_number[i]), style="bold")
    out.append(f"  {t.text('maker')[i]} · {t.topology[i]} · ")
    ch_n = t.channels[i]
    out.append(f"{int(ch_n) if fmt.finite(ch_n) else '?'} ch · {t.lifecycle[i]}\n")
    if r.feasible[i]:
        out.append(f"{fmt.OK} feasible", style="bold green")
        out.append(f", rank {r.rank[i]} of {r.n_feasible}, score {r.score[i]:.1f}")
        if fx.applied[i]:
            out.append(" (with the fix fitted)")
    else:
        j = int(r.binding[i])
        n = int(r.n_failing[i])
        out.append(f"{fmt.BAD} rejected", style="bold red")
        out.append(f", fails {n} check{'s' if n != 1 else ''}")
        if j >= 0:
            name = C.CHECKS[j].name
            out.append(f": {fmt.check_label(name)}: {check_message(r, i, name)}")
        if n > 1:
            others = [fmt.check_label(n) for n, _ in failing_messages(r, i)[1:]]
            out.append(f"; also fails {', '.join(others)}")
    out.append("\n")
    words = RankingView(r).margin_words(i)
    if words:
        out.append(words + "\n", style="dim")
    v = str(p.conduction[i])
    if v == "changes-mode":
        out.append(f"{fmt.WARN} hands over", style="yellow")
        out.append(
            f" at {fmt.quantity(p.handover_out_v[i], 'V')} · glitch "
            f"{fmt.quantity(p.glitch_v[i], 'V')} · THD est. {fmt.thd(p.thd_estimate[i])} · "
            f"held near {fmt.quantity(p.flat_level_v[i], 'V')}"
        )
    else:
        out.append(fmt.CONDUCTION_LABEL[v])
        out.append(
            f" · least source current {fmt.quantity(p.min_source_a[i], 'A')} of "
            f"{fmt.quantity(p.stage_current_a[i], 'A')}"
        )
    out.append("\n")
    if not fx.needed[i]:
        out.append("fix not needed")
    elif fx.works[i]:
        out.append("fix " + P.fix_summary(fx, i, symbols=True), style="bold")
        out.append(
            f" (+{fmt.quantity(fx.extra_supply_a[i], 'A')}/ch; THD est. with it "
            f"{fmt.thd(fx.thd_with_fix[i])}; {P.fix_rule(fx, i)})"
        )
    else:
        out.append(f"{fmt.BAD} no fix resistor works: {fx.reason[i]}", style="red")
    out.append(
        f" · supply {fmt.quantity(ch.value[i, C.IDX['supply_current']], 'A')}"
        f" · price {fmt.quantity(ch.value[i, C.IDX['price']], 'currency unit')}"
    )
    return out


def record_text(record: dict[str, Any] | None) -> Text:
    """The output-stage sections of a catalogue record, as given in the catalogue."""
    if record is None:
        return Text("catalogue record not available", style="dim")
    shown = {k: record[k] for k in RECORD_SECTIONS if k in record}
    text = yaml.safe_dump(shown, sort_keys=False, allow_unicode=True, width=90)
    out = Text(text)
    if record.get("notes"):
        out.append(f"notes: {record['notes']}\n", style="italic")
    return out


#: Spread analyses of (ranking, part) shown lately, so that a part revisited is not drawn again.
SPREAD_CACHE: dict[tuple[Any, ...], tuple[Ranking, Any, Any]] = {}


class PartView(Vertical):
    """Summary, plots, margins and catalogue data of one part."""

    def compose(self) -> ComposeResult:
        yield Static("", classes="part-head")
        with TabbedContent(classes="part-tabs"):
            with TabPane("Waveform", classes="tab-wave"):
                yield WavePlot(classes="plot-wave")
            with TabPane("With fix", classes="tab-fix"):
                yield WavePlot(classes="plot-fix")
            with TabPane("Spectrum", classes="tab-spectrum"):
                yield SpectrumPlot(classes="plot-spectrum")
            with TabPane("Margins", classes="tab-margins"), VerticalScroll():
                yield MarginBars(classes="margins")
            with TabPane("Output stage", classes="tab-stage"), VerticalScroll():
                yield Static("", classes="stage-data")
            with TabPane("Spread", classes="tab-spread"), Vertical():
                with VerticalScroll(classes="spread-scroll"):
                    yield Static("", classes="spread-text")
                with Horizontal(classes="spread-plots"):
                    yield HistogramPlot(classes="plot-thd-hist")
                    yield HistogramPlot(classes="plot-level-hist")
        caution = CAUTION if self.full else SHORT_CAUTION
        yield Static(Text(caution, style="italic"), classes="caution")

    def __init__(self, *, full: bool = False, id: str | None = None) -> None:
        """``full``: the view has a screen of its own (the whole caution is shown)."""
        super().__init__(id=id)
        self.full = full
        self.part_number: str | None = None
        self._ranking: Ranking | None = None
        self._spread_key: tuple[Any, ...] | None = None

    def show_empty(self, message: str) -> None:
        """No part to show."""
        self.part_number = None
        self.query_one(".part-head", Static).update(Text(message, style="dim"))
        for plot in self.query(WavePlot):
            plot.show_message(message)
        self.query_one(SpectrumPlot).show_message(message)
        self.query_one(MarginBars).update("")
        self.query_one(".stage-data", Static).update("")
        self._spread_message(message)

    def show_part(self, r: Ranking, i: int, record: dict[str, Any] | None) -> None:
        """What the ranking knows of part ``i``: summary, margins, catalogue data."""
        self.part_number = str(r.table.part_number[i])
        self.query_one(".part-head", Static).update(summary_text(r, i))
        self.query_one(MarginBars).show(part_checks(r, i))
        self.query_one(".stage-data", Static).update(record_text(record))
        self._ranking = r
        if self._spread_open():
            self.request_spread()
        else:
            self._spread_message(f"{self.part_number}: open this tab to draw its boards")

    # ---- the Spread tab ---------------------------------------------------------------------
    def _spread_open(self) -> bool:
        tabs = self.query_one(TabbedContent)
        pane = tabs.query(".tab-spread").first()
        return bool(pane.id) and tabs.active == pane.id

    def on_tabbed_content_tab_activated(self, event: TabbedContent.TabActivated) -> None:
        if event.pane.has_class("tab-spread"):
            self.request_spread()

    def _spread_message(self, message: str) -> None:
        self.query_one(".spread-text", Static).update(Text(message, style="dim"))
        for plot in self.query(HistogramPlot):
            plot.show_message("")

    def request_spread(self) -> None:
        """Show the spread of the part shown (computed once per design and part)."""
        r, pn = self._ranking, self.part_number
        if r is None or pn is None:
            return
        key = (id(r), pn)
        cached = SPREAD_CACHE.get(key)
        if cached is not None and cached[0] is r:  # (an id is only unique while r lives)
            self.show_spread(key, cached[1], cached[2])
            return
        self._spread_key = key
        n = min(SPREAD_SAMPLES, r.requirements.yield_samples)
        self._spread_message(f"{pn}: drawing {n:,} boards and searching the corners…")
        self._spread_worker(key, r, pn, n)

    @work(thread=True, exclusive=True, group="spread", exit_on_error=False)
    def _spread_worker(self, key: tuple[Any, ...], r: Ranking, pn: str, n: int) -> None:
        session = self.app.session  # type: ignore[attr-defined]
        try:
            y = session.spread_yield(r.design, [pn], samples=n, basis=r.requirements.basis)
            c = session.corners(r.design, pn, basis=r.requirements.basis)
        except Exception as exc:  # shown in the tab; the UI stays up
            self.app.call_from_thread(self._spread_message, f"{pn}: spread failed: {exc}")
            return
        SPREAD_CACHE[key] = (r, y, c)
        while len(SPREAD_CACHE) > 16:
            SPREAD_CACHE.pop(next(iter(SPREAD_CACHE)))
        self.app.call_from_thread(self.show_spread, key, y, c)

    def show_spread(self, key: tuple[Any, ...], y: Any, c: Any) -> None:
        """The yield, the worst corners and the histograms of one part."""
        from partsel.spread_report import corners_text, yield_text

        if self._ranking is None or key != (id(self._ranking), self.part_number):
            return  # another part is shown by now
        target = self._ranking.requirements.limit("min_yield")
        text = Text(yield_text(y, self._ranking.design.name, target).strip() + "\n\n")
        text.append(corners_text(c, self._ranking.design.name))
        self.query_one(".spread-text", Static).update(text)
        p = y.parts[0]
        thd_kind = "bound" if p.thd_bound else "estimate"
        self.query_one(".plot-thd-hist", HistogramPlot).draw(
            100.0 * p.thd, title=f"THD {thd_kind} over {p.samples:,} boards, %",
            xlabel="THD, %", color=theme.PLOT_PREDICTED,
        )  # fmt: skip
        level = self.query_one(".plot-level-hist", HistogramPlot)
        if p.handover_level.size:
            level.draw(
                p.handover_level, title=f"handover level on {100 * p.handover:.3g} % of boards, V",
                xlabel="V", color=theme.PLOT_MARKER,
            )  # fmt: skip
        else:
            level.show_message("no board hands over")

    def show_plot_message(self, message: str) -> None:
        """A message in place of the plots (simulation pending or off)."""
        for plot in self.query(WavePlot):
            plot.show_message(message)
        self.query_one(SpectrumPlot).show_message(message)

    def show_simulation(self, pred: Prediction, k: int, r: Ranking, i: int) -> None:
        """The simulated waveforms of part ``k`` of ``pred`` (part ``i`` of the ranking)."""
        sim = pred.sim
        if sim is None:
            self.show_plot_message("no simulation")
            return
        if sim.abandoned[k]:
            self.show_plot_message(abandoned_reason(sim, k))
            return
        pn = str(pred.frame["part_number"].iloc[k])
        t_ms = (sim.t_s - sim.t_s[0]) * 1e3
        markers = [(t, label) for t, _, label in pred.handover_marks(k)]
        flat = pred.closed.flat_level_v[k]
        wave = self.query_one(".plot-wave", WavePlot)
        wave.draw(
            t_ms,
            sim.v_ideal,
            [(sim.v_out[k], "predicted", theme.PLOT_PREDICTED)],
            title=f"{pn}: THD_F {fmt.percent(sim.thd_f[k], 3)}, peak deviation "
            f"{fmt.quantity(sim.deviation_peak_v[k], 'V')}"
            + (" — handover marked" if markers else " — no handover"),
            markers_ms=markers,
            level_v=float(flat) if markers and np.isfinite(flat) else None,
        )
        levels = spectrum_db(sim.v_out[k : k + 1], sim.n_record, sim.harmonics_v.shape[1] - 1)[0]
        spectra = [(levels, "as designed", theme.PLOT_PREDICTED)]
        fixplot = self.query_one(".plot-fix", WavePlot)
        rec = str(pred.fix.recommended[k])
        if pred.sim_fixed is not None and rec in ("negative", "positive"):
            simf = pred.sim_fixed
            r_fix = float(getattr(pred.fix, rec).r_ohm[k])
            label = f"with {fmt.quantity(r_fix, 'ohm')} to {fmt.rail_label(rec)}"
            fixplot.draw(
                t_ms,
                simf.v_ideal,
                [
                    (sim.v_out[k], "as designed", theme.PLOT_PREDICTED),
                    (simf.v_out[k], label, theme.PLOT_FIXED),
                ],
                title=f"{label}: THD_F {fmt.percent(simf.thd_f[k], 3)}, handover "
                + ("yes" if simf.handover[k] else "no"),
            )
            lf = spectrum_db(simf.v_out[k : k + 1], simf.n_record, simf.harmonics_v.shape[1] - 1)
            spectra.append((lf[0], label, theme.PLOT_FIXED))
        elif rec == "none":
            fixplot.show_message(f"{pn}: no fix resistor works: {pred.fix.reason[k]}")
        else:
            fixplot.show_message(f"{pn}: no fix needed (the stage stays in one mode)")
        self.query_one(SpectrumPlot).draw(
            spectra, title=f"{pn}: harmonics 2.., dBc (THD_F {fmt.percent(sim.thd_f[k], 3)})"
        )
