"""partsel's own colour theme for the terminal UI (the colours of states also carry symbols,
see :mod:`partsel.tui.fmt`)."""

from __future__ import annotations

from textual.theme import Theme

#: Slate background, copper and sage accents: partsel's own palette.
PARTSEL_THEME = Theme(
    name="partsel-slate",
    primary="#5b8fb9",
    secondary="#c4894b",
    accent="#8fb573",
    foreground="#e4e0d7",
    background="#1b1f25",
    surface="#232830",
    panel="#2c323c",
    success="#7cc47f",
    warning="#e3b448",
    error="#e06a5f",
    dark=True,
)

#: Plot colours (plotext accepts RGB tuples): ideal, predicted, with the fix, markers, extra.
PLOT_IDEAL = (150, 150, 150)
PLOT_PREDICTED = (91, 143, 185)
PLOT_FIXED = (143, 181, 115)
PLOT_MARKER = (224, 106, 95)
PLOT_SERIES = ((91, 143, 185), (196, 137, 75), (143, 181, 115), (180, 120, 200))
