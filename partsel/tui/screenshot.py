"""SVG screenshots with partsel's own frame: a plain rectangle and a title bar that names the
design and the date, left-aligned (no window-control dots, no rounded corners).

The screen is rendered the way Textual renders it for its own screenshots (the compositor's
full update, through a recording rich console); only the frame around it differs, given to
:meth:`rich.console.Console.export_svg` as its ``code_format`` template.
"""

from __future__ import annotations

import datetime as dt
import io
from html import escape
from typing import Any

from rich.console import Console

#: Colours of the frame (partsel-slate, see :mod:`partsel.tui.theme`).
FRAME_BACKGROUND = "#1b1f25"
BAR_BACKGROUND = "#2c323c"
BAR_TEXT = "#e4e0d7"
BAR_RULE = "#c4894b"

#: The SVG template: rich fills the fields in braces; ``{{`` is a literal brace. The title bar
#: sits in the 40 px that rich leaves above the terminal's text.
_TEMPLATE = """\
<svg class="partsel-screenshot" viewBox="0 0 {{width}} {{height}}" \
xmlns="http://www.w3.org/2000/svg">
    <!-- partsel screenshot: {title} -->
    <style>
    .{{unique_id}}-matrix {{{{
        font-family: "Fira Code", "DejaVu Sans Mono", Menlo, Consolas, monospace;
        font-size: {{char_height}}px;
        line-height: {{line_height}}px;
        font-variant-east-asian: full-width;
    }}}}
    .{{unique_id}}-title {{{{
        font-size: 15px;
        font-family: "DejaVu Sans", Helvetica, Arial, sans-serif;
    }}}}
    {{styles}}
    </style>
    <defs>
    <clipPath id="{{unique_id}}-clip-terminal">
      <rect x="0" y="0" width="{{terminal_width}}" height="{{terminal_height}}" />
    </clipPath>
    {{lines}}
    </defs>
    <rect fill="{frame}" x="0" y="0" width="{{width}}" height="{{height}}"/>
    <rect fill="{bar}" x="0" y="0" width="{{width}}" height="34"/>
    <rect fill="{rule}" x="0" y="34" width="{{width}}" height="1"/>
    <text class="{{unique_id}}-title" fill="{text}" x="12" y="23">{title}</text>
    <g transform="translate({{terminal_x}}, {{terminal_y}})" \
clip-path="url(#{{unique_id}}-clip-terminal)">
    {{backgrounds}}
    <g class="{{unique_id}}-matrix">
    {{matrix}}
    </g>
    </g>
</svg>
"""


def screenshot_title(design_name: str | None, date: dt.date | None = None) -> str:
    """``partsel · <design name> · <ISO date>`` (today unless ``date`` is given)."""
    day = (date or dt.date.today()).isoformat()
    parts = ["partsel", design_name or "no design", day]
    return " · ".join(parts)


def svg_template(title: str) -> str:
    """The ``code_format`` for :meth:`rich.console.Console.export_svg` with ``title`` in the
    bar (escaped for XML, braces doubled for :meth:`str.format`)."""
    safe = escape(title).replace("{", "{{").replace("}", "}}")
    return _TEMPLATE.format(
        title=safe, frame=FRAME_BACKGROUND, bar=BAR_BACKGROUND, rule=BAR_RULE, text=BAR_TEXT
    )


def screen_svg(app: Any, title: str) -> str:
    """The current screen of the running ``app`` (with the screens under a dialog) as SVG."""
    width, height = app.size
    console = Console(
        width=width,
        height=height,
        file=io.StringIO(),
        force_terminal=True,
        color_system="truecolor",
        record=True,
        legacy_windows=False,
        safe_box=False,
    )
    render = app.screen._compositor.render_update(full=True, screen_stack=app._background_screens)
    console.print(render)
    return console.export_svg(title=title, code_format=svg_template(title))
