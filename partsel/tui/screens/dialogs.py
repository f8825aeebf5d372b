"""Small modal dialogs: a file path (with suggestions such as the sample designs)."""

from __future__ import annotations

from pathlib import Path
from typing import ClassVar

from textual import on
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical
from textual.screen import ModalScreen
from textual.widgets import Button, Input, Label, OptionList, Static
from textual.widgets.option_list import Option


class PathDialog(ModalScreen[str | None]):
    """Ask for a file path; enter accepts, escape cancels. Returns the path or None."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "cancel", "Cancel", tooltip="Close without choosing a file"),
        Binding("enter", "accept", "OK", show=True, tooltip="Use the path typed"),
    ]

    def __init__(
        self,
        title: str,
        default: str,
        *,
        suggestions: list[tuple[str, str]] | None = None,
        must_exist: bool = False,
    ) -> None:
        super().__init__()
        self.title_text = title
        self.default = default
        self.suggestions = suggestions or []
        self.must_exist = must_exist

    def compose(self) -> ComposeResult:
        with Vertical(id="dialog"):
            yield Label(self.title_text, classes="dialog-title")
            yield Input(value=self.default, placeholder="file path", id="dialog-path")
            yield Static("", id="dialog-error", classes="field-error")
            if self.suggestions:
                yield Label("or pick one (enter):", classes="dim")
                yield OptionList(
                    *(Option(label, id=path) for label, path in self.suggestions),
                    id="dialog-options",
                )
            with Horizontal(classes="dialog-buttons"):
                yield Button("OK", variant="primary", id="dialog-ok")
                yield Button("Cancel", id="dialog-cancel")

    def on_mount(self) -> None:
        if self.suggestions and not self.default:
            self.query_one(OptionList).focus()
        else:
            self.query_one(Input).focus()

    def action_cancel(self) -> None:
        self.dismiss(None)

    def action_accept(self) -> None:
        self._accept(self.query_one("#dialog-path", Input).value)

    def _accept(self, text: str) -> None:
        text = text.strip()
        if not text:
            self.query_one("#dialog-error", Static).update("give a file path")
            return
        if self.must_exist and not Path(text).expanduser().exists():
            self.query_one("#dialog-error", Static).update(f"no such file: {text}")
            self.query_one("#dialog-error", Static).add_class("shown")
            return
        self.dismiss(str(Path(text).expanduser()))

    @on(Input.Submitted, "#dialog-path")
    def _submitted(self, event: Input.Submitted) -> None:
        event.stop()
        self._accept(event.value)

    @on(OptionList.OptionSelected, "#dialog-options")
    def _picked(self, event: OptionList.OptionSelected) -> None:
        event.stop()
        if event.option.id:
            self._accept(event.option.id)

    @on(Button.Pressed, "#dialog-ok")
    def _ok(self) -> None:
        self.action_accept()

    @on(Button.Pressed, "#dialog-cancel")
    def _cancel(self) -> None:
        self.dismiss(None)
