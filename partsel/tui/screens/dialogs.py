"""Small modal dialogs: a file path (with suggestions such as the sample designs) and a yes/no
question."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import ClassVar

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical
from textual.events import Key
from textual.screen import ModalScreen
from textual.widgets import Button, Input, Label, OptionList, Static
from textual.widgets.option_list import Option


class PathDialog(ModalScreen[str | None]):
    """Ask for a file path; enter accepts, escape cancels. Returns the path or None.

    The path field has the focus: typed text and enter use that path; ``down`` moves to the
    suggestions. A relative path is read from ``base`` (default: the current folder).
    ``check`` (optional) is called with the resolved path before the dialog closes; a message
    it returns is shown under the path and the dialog stays open.
    """

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
        base: Path | None = None,
        check: Callable[[Path], str | None] | None = None,
        purpose: str = "",
    ) -> None:
        super().__init__()
        self.title_text = title
        self.default = default
        self.suggestions = suggestions or []
        self.must_exist = must_exist
        self.base = base
        self.check = check
        #: What the dialog is for ("screenshot", "open"...): lets the app find it on the stack.
        self.purpose = purpose

    def compose(self) -> ComposeResult:
        with Vertical(id="dialog"):
            yield Label(self.title_text, classes="dialog-title")
            yield Input(value=self.default, placeholder="file path", id="dialog-path")
            yield Static("", id="dialog-error", classes="field-error")
            if self.suggestions:
                yield Label("or pick one (down, then enter):", classes="dim")
                yield OptionList(
                    *(Option(label, id=path) for label, path in self.suggestions),
                    id="dialog-options",
                )
            with Horizontal(classes="dialog-buttons"):
                yield Button("OK", variant="primary", id="dialog-ok")
                yield Button("Cancel", id="dialog-cancel")

    def on_mount(self) -> None:
        self.query_one("#dialog-path", Input).focus()

    def resolve(self, text: str) -> Path:
        """The path that ``text`` names (``~`` expanded, relative to ``base``)."""
        path = Path(text).expanduser()
        if not path.is_absolute() and self.base is not None:
            path = self.base / path
        return path

    def action_cancel(self) -> None:
        self.dismiss(None)

    def action_accept(self) -> None:
        self._accept(self.query_one("#dialog-path", Input).value)

    def _error(self, message: str) -> None:
        err = self.query_one("#dialog-error", Static)
        err.update(Text(message))  # plain text: a file's "[section]" is not markup
        err.set_class(bool(message), "shown")

    def _accept(self, text: str) -> None:
        text = text.strip()
        if not text:
            self._error("give a file path")
            return
        path = self.resolve(text)
        if self.must_exist and not path.exists():
            self._error(f"no such file: {path}")
            return
        if self.check is not None:
            problem = self.check(path)
            if problem:
                self._error(problem)
                return
        self.dismiss(str(path))

    @on(Input.Submitted, "#dialog-path")
    def _submitted(self, event: Input.Submitted) -> None:
        event.stop()
        self._accept(event.value)

    @on(Input.Changed, "#dialog-path")
    def _typed(self, event: Input.Changed) -> None:
        event.stop()
        self._error("")

    def key_down(self, event: Key) -> None:
        """From the path field, ``down`` moves to the suggestions (the first highlighted)."""
        if self.focused is self.query_one("#dialog-path", Input) and self.suggestions:
            event.stop()
            event.prevent_default()
            options = self.query_one(OptionList)
            options.focus()
            options.highlighted = 0

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


class ConfirmDialog(ModalScreen[bool]):
    """A question with two answers: ``yes`` (the first button, key ``y``) or ``no`` (the
    second, ``n`` or escape). Returns True for yes."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("y", "answer(True)", "Yes", tooltip="Go ahead"),
        Binding("n,escape", "answer(False)", "No", tooltip="Keep things as they are"),
    ]

    def __init__(self, question: str, yes: str, no: str) -> None:
        super().__init__()
        self.question = question
        self.yes = yes
        self.no = no

    def compose(self) -> ComposeResult:
        with Vertical(id="dialog"):
            yield Label(Text(self.question), id="confirm-question", classes="dialog-title")
            with Horizontal(classes="dialog-buttons"):
                yield Button(f"{self.yes} (y)", variant="warning", id="confirm-yes")
                yield Button(f"{self.no} (n)", variant="primary", id="confirm-no")

    def on_mount(self) -> None:
        self.query_one("#confirm-no", Button).focus()

    def action_answer(self, yes: bool) -> None:
        self.dismiss(yes)

    @on(Button.Pressed, "#confirm-yes")
    def _yes(self) -> None:
        self.dismiss(True)

    @on(Button.Pressed, "#confirm-no")
    def _no(self) -> None:
        self.dismiss(False)
