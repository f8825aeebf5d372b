"""The actions list (ctrl+p): partsel's own actions of the current screen, by name, with their
keys. The framework's generic entries (cursor and editing keys of the focused widget, theme,
maximise, its own screenshot) are left out: every entry is an action that partsel defines."""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from typing import Any

from textual.app import ComposeResult, SystemCommand
from textual.binding import Binding
from textual.command import CommandInput, CommandList, CommandPalette
from textual.containers import Horizontal, Vertical
from textual.screen import Screen
from textual.widgets import Label, LoadingIndicator

#: Title of the list and the hint in its search field.
TITLE = "Actions"
PLACEHOLDER = "type a few letters of an action (its key is in brackets)"


def _own_bindings(node: Any) -> set[tuple[str, str]]:
    """(action, description) of the bindings that partsel's own classes declare on ``node``."""
    out: set[tuple[str, str]] = set()
    for cls in type(node).__mro__:
        if not cls.__module__.startswith("partsel."):
            continue
        for b in cls.__dict__.get("BINDINGS", ()):
            if isinstance(b, Binding) and b.description:
                out.add((b.action, b.description))
    return out


def binding_commands(app: Any, screen: Screen) -> Iterator[SystemCommand]:
    """One entry per partsel action that has a key on ``screen`` right now."""
    seen: set[str] = set()
    own: dict[int, set[tuple[str, str]]] = {}
    for _key, active in screen.active_bindings.items():
        b, node = active.binding, active.node
        if not b.description or b.action in seen:
            continue
        mine = own.setdefault(id(node), _own_bindings(node))
        if (b.action, b.description) not in mine or b.action == "command_palette":
            continue
        seen.add(b.action)

        def run(node: Any = node, action: str = b.action) -> None:
            app.call_later(node.run_action, action)

        key = b.key_display or app.get_key_display(b)
        yield SystemCommand(f"{b.description} ({key})", b.tooltip or b.description, run)


def actions(app: Any, screen: Screen) -> Iterable[SystemCommand]:
    """The actions list of ``screen``: its keys, then the screen's extra commands."""
    yield from binding_commands(app, screen)
    extra = getattr(screen, "palette_commands", None)
    if extra is not None:
        yield from extra()


class ActionPalette(CommandPalette):
    """The command palette with partsel's title and no search icon."""

    def __init__(self) -> None:
        super().__init__(placeholder=PLACEHOLDER, id="--command-palette")

    def compose(self) -> ComposeResult:
        with Vertical(id="--container"):
            yield Label(TITLE, id="palette-title")
            with Horizontal(id="--input"):
                yield CommandInput(placeholder=self._placeholder, select_on_focus=False)
            with Vertical(id="--results"):
                yield CommandList()
                yield LoadingIndicator()
