"""The design form: the circuit and its requirements, with units, validated as you type.

Every change reads the whole form with the design reader (:func:`partsel.design
.design_from_mapping`, via :func:`partsel.tui.fields.validate_values`). A bad field is marked
(✗ and colour) and its problem shown under it; the form then posts :class:`DesignForm.Invalid`
and the app keeps the last good ranking. A good form posts :class:`DesignForm.Valid`.
"""

from __future__ import annotations

from collections.abc import Mapping
from itertools import groupby

from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.containers import Horizontal, VerticalScroll
from textual.message import Message
from textual.widgets import Collapsible, Input, Label, Select, Static

from partsel.physics.circuit import Design
from partsel.tui import fmt
from partsel.tui.fields import FIELDS, FieldSpec, validate_values, values_from_design

#: Form groups shown folded at first (opened when one of their fields has a problem).
FOLDED_GROUPS = ("Limits", "Objectives (weights)")


class DesignForm(VerticalScroll):
    """The design as a form of labelled fields with units."""

    class Valid(Message):
        """The form holds a valid design."""

        def __init__(self, design: Design) -> None:
            super().__init__()
            self.design = design

    class Invalid(Message):
        """The form has problems (by field id; ``""``: not tied to one field)."""

        def __init__(self, problems: dict[str, list[str]]) -> None:
            super().__init__()
            self.problems = problems

    def __init__(self, *, id: str | None = None) -> None:
        super().__init__(id=id)
        self.source: str | None = None
        self.problems: dict[str, list[str]] = {}

    # ---- layout -----------------------------------------------------------------------------
    def _field(self, spec: FieldSpec) -> ComposeResult:
        with Horizontal(classes="field-row", id=f"{spec.id}-row"):
            yield Label(spec.label, classes="field-label", id=f"{spec.id}-label")
            if spec.kind == "choice":
                widget: Input | Select[str] = Select(
                    [(c, c) for c in spec.choices],
                    allow_blank=False,
                    value=spec.choices[0],
                    id=spec.id,
                    classes="field-input",
                    compact=True,
                )
            else:
                widget = Input(
                    placeholder=spec.placeholder,
                    id=spec.id,
                    classes="field-input",
                    compact=True,
                )
            widget.tooltip = spec.help
            yield widget
            yield Label(spec.unit, classes="field-unit")
        yield Static("", classes="field-error", id=f"{spec.id}-error")

    def compose(self) -> ComposeResult:
        yield Static("", id="form-status", classes="form-status")
        for group, specs in groupby(FIELDS, key=lambda f: f.group):
            items = list(specs)
            if group in FOLDED_GROUPS:
                slug = group.split()[0].lower()
                with Collapsible(title=group, collapsed=True, id=f"group-{slug}"):
                    for spec in items:
                        yield from self._field(spec)
            else:
                yield Static(group, classes="form-group")
                for spec in items:
                    yield from self._field(spec)

    # ---- values -----------------------------------------------------------------------------
    def values(self) -> dict[str, str]:
        """The text of every field, by field id."""
        out: dict[str, str] = {}
        for spec in FIELDS:
            if spec.kind == "choice":
                v = self.query_one(f"#{spec.id}", Select).value
                out[spec.id] = "" if v is Select.BLANK else str(v)
            else:
                out[spec.id] = self.query_one(f"#{spec.id}", Input).value
        return out

    def set_values(self, values: Mapping[str, str], source: str | None = None) -> None:
        """Fill the form (one validation afterwards, not one per field)."""
        self.source = source
        with self.prevent(Input.Changed, Select.Changed):
            for spec in FIELDS:
                text = values.get(spec.id, "")
                if spec.kind == "choice":
                    sel = self.query_one(f"#{spec.id}", Select)
                    sel.value = text if text in spec.choices else spec.choices[0]
                else:
                    self.query_one(f"#{spec.id}", Input).value = text
        self.validate()

    def load_design(self, design: Design) -> None:
        """Fill the form from ``design``."""
        self.set_values(values_from_design(design), design.source)

    def set_field(self, field_id: str, text: str) -> None:
        """Set one field as if typed (validated at once)."""
        widget = self.query_one(f"#{field_id}")
        if isinstance(widget, Select):
            widget.value = text
        else:
            assert isinstance(widget, Input)
            widget.value = text

    # ---- validation -------------------------------------------------------------------------
    @on(Input.Changed, ".field-input")
    @on(Select.Changed, ".field-input")
    def _changed(self, event: Message) -> None:
        event.stop()
        self.validate()

    def validate(self) -> Design | None:
        """Read the form, mark bad fields, post Valid or Invalid; return the design or None."""
        result = validate_values(self.values(), self.source)
        before, self.problems = self.problems, result.problems
        for spec in FIELDS:  # touch only the fields whose problems changed
            msgs = result.problems.get(spec.id, [])
            if msgs == before.get(spec.id, []):
                continue
            self.query_one(f"#{spec.id}-row").set_class(bool(msgs), "bad")
            label = self.query_one(f"#{spec.id}-label", Label)
            label.update(f"{fmt.BAD} {spec.label}" if msgs else spec.label)
            err = self.query_one(f"#{spec.id}-error", Static)
            err.update("\n".join(msgs))
            err.set_class(bool(msgs), "shown")
            if msgs and spec.group in FOLDED_GROUPS:
                slug = spec.group.split()[0].lower()
                self.query_one(f"#group-{slug}", Collapsible).collapsed = False
        status = self.query_one("#form-status", Static)
        if result.design is not None:
            status.update(Text(f"{fmt.OK} design valid", style="green"))
            status.remove_class("bad")
            self.post_message(self.Valid(result.design))
        else:
            n = sum(len(v) for v in result.problems.values())
            general = result.problems.get("", [])
            text = Text(
                f"{fmt.BAD} {n} problem{'s' if n != 1 else ''}: the ranking shows the "
                "last valid design",
                style="bold red",
            )
            for msg in general:
                text.append(f"\n{msg}", style="red")
            status.update(text)
            status.add_class("bad")
            self.post_message(self.Invalid(result.problems))
        return result.design
