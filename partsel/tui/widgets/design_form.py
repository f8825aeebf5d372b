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
from textual.widget import Widget
from textual.widgets import Collapsible, Input, Label, Select, Static

from partsel.physics.circuit import Design
from partsel.tui import fmt
from partsel.tui.fields import (
    FIELD_BY_ID,
    FIELDS,
    FieldSpec,
    validate_values,
    values_from_design,
)

#: Form groups shown folded at first (opened when one of their fields has a problem); their
#: fields are mounted when the group is first opened, which keeps the screen quick to start.
FOLDED_GROUPS = ("Limits", "Objectives (weights)")
LIMITS_GROUP = "Limits"
#: Before a label: the problem mark of a bad field, or as many spaces.
BAD_MARK = f"{fmt.BAD} "
GOOD_MARK = " " * len(BAD_MARK)
#: Width of the label column: the mark, the longest label and one cell of space after it (a
#: label never runs into its field).
LABEL_WIDTH = len(BAD_MARK) + max(len(f.label) for f in FIELDS) + 1
#: Width of the unit column: the longest unit and one cell of space before it.
UNIT_WIDTH = max(len(f.unit) for f in FIELDS) + 1
#: What the Limits group says about empty limits.
LIMITS_NOTE = (
    "An empty limit uses the default written in it; 'no limit': not checked. "
    "The tooltip names the design file's key."
)


def limits_title(values: Mapping[str, str]) -> str:
    """The Limits group's title: how many limits are set and how many are at their default."""
    set_n = default_n = 0
    for spec in FIELDS:
        if spec.group != LIMITS_GROUP:
            continue
        if (values.get(spec.id) or "").strip():
            set_n += 1
        elif spec.placeholder.startswith("default"):
            default_n += 1
    head = f"{set_n} set" if set_n else "none set"
    return f"{LIMITS_GROUP} · {head} · {default_n} at their default"


def _group_id(group: str) -> str:
    return "group-" + group.split()[0].lower()


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
        #: Text of the fields of folded groups not mounted yet (mounted on first opening).
        self._stash: dict[str, str] = {}
        self._mounted_groups: set[str] = set()
        #: The text of every field as last loaded or saved (unsaved changes: any difference).
        self.saved: dict[str, str] = {}
        #: A note shown under the status line until another design is loaded.
        self.note = ""

    # ---- layout -----------------------------------------------------------------------------
    @staticmethod
    def _field(spec: FieldSpec) -> list[Widget]:
        """The widgets of one field: the row (label, input, unit) and its problem line."""
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
                placeholder=spec.placeholder, id=spec.id, classes="field-input", compact=True
            )
        widget.tooltip = spec.help
        label = Label(GOOD_MARK + spec.label, classes="field-label", id=f"{spec.id}-label")
        label.styles.width = LABEL_WIDTH
        unit = Label(spec.unit, classes="field-unit", id=f"{spec.id}-unit")
        unit.styles.width = UNIT_WIDTH
        row = Horizontal(label, widget, unit, classes="field-row", id=f"{spec.id}-row")
        return [row, Static("", classes="field-error", id=f"{spec.id}-error")]

    def compose(self) -> ComposeResult:
        yield Static("", id="form-status", classes="form-status")
        for group, specs in groupby(FIELDS, key=lambda f: f.group):
            items = list(specs)
            if group == LIMITS_GROUP:
                yield Collapsible(
                    Static(LIMITS_NOTE, classes="group-note", id="limits-note"),
                    title=group,
                    collapsed=True,
                    id=_group_id(group),
                )
            elif group in FOLDED_GROUPS:
                yield Collapsible(title=group, collapsed=True, id=_group_id(group))
            else:
                yield Static(group, classes="form-group")
                for spec in items:
                    yield from self._field(spec)

    def _field_mounted(self, spec: FieldSpec) -> bool:
        return spec.group not in FOLDED_GROUPS or spec.group in self._mounted_groups

    async def open_group(self, group: str) -> None:
        """Unfold a folded group, mounting its fields the first time."""
        box = self.query_one(f"#{_group_id(group)}", Collapsible)
        if group not in self._mounted_groups:
            self._mounted_groups.add(group)
            widgets = [w for spec in FIELDS if spec.group == group for w in self._field(spec)]
            await box.query_one(Collapsible.Contents).mount_all(widgets)
            with self.prevent(Input.Changed, Select.Changed):
                for spec in FIELDS:
                    if spec.group == group:
                        self._set_widget(spec, self._stash.pop(spec.id, ""))
            self._mark({}, self.problems, only_group=group)
        box.collapsed = False

    @on(Collapsible.Expanded)
    async def _expanded(self, event: Collapsible.Expanded) -> None:
        group = next((g for g in FOLDED_GROUPS if _group_id(g) == event.collapsible.id), None)
        if group is not None and group not in self._mounted_groups:
            await self.open_group(group)

    # ---- values -----------------------------------------------------------------------------
    def values(self) -> dict[str, str]:
        """The text of every field, by field id."""
        out: dict[str, str] = {}
        for spec in FIELDS:
            if not self._field_mounted(spec):
                out[spec.id] = self._stash.get(spec.id, "")
            elif spec.kind == "choice":
                v = self.query_one(f"#{spec.id}", Select).value
                out[spec.id] = "" if v is Select.BLANK else str(v)
            else:
                out[spec.id] = self.query_one(f"#{spec.id}", Input).value
        return out

    def _set_widget(self, spec: FieldSpec, text: str) -> None:
        if spec.kind == "choice":
            sel = self.query_one(f"#{spec.id}", Select)
            sel.value = text if text in spec.choices else spec.choices[0]
        else:
            self.query_one(f"#{spec.id}", Input).value = text

    def set_values(self, values: Mapping[str, str], source: str | None = None) -> None:
        """Fill the form (one validation afterwards, not one per field)."""
        self.source = source
        with self.prevent(Input.Changed, Select.Changed):
            for spec in FIELDS:
                text = values.get(spec.id, "")
                if self._field_mounted(spec):
                    self._set_widget(spec, text)
                else:
                    self._stash[spec.id] = text
        self.validate()

    def load_design(self, design: Design, note: str = "") -> None:
        """Fill the form from ``design`` (``note``: shown under the status line)."""
        self.note = note
        values = values_from_design(design)
        self.saved = dict(values)
        self.set_values(values, design.source)

    @property
    def modified(self) -> bool:
        """True when a field differs from the design as last loaded or saved."""
        return self.values() != self.saved

    def mark_saved(self, source: str) -> None:
        """The form's design was written to ``source``: no unsaved changes from here."""
        self.source = source
        self.saved = self.values()
        self.note = ""
        self.validate()

    def set_field(self, field_id: str, text: str) -> None:
        """Set one field as if typed (validated at once)."""
        spec = FIELD_BY_ID[field_id]
        if self._field_mounted(spec):
            self._set_widget(spec, text)  # posts Changed: validated by the handler
        else:
            self._stash[field_id] = text
            self.validate()

    # ---- validation -------------------------------------------------------------------------
    @on(Input.Changed, ".field-input")
    @on(Select.Changed, ".field-input")
    def _changed(self, event: Message) -> None:
        event.stop()
        self.validate()

    def _mark(
        self,
        before: dict[str, list[str]],
        after: dict[str, list[str]],
        only_group: str | None = None,
    ) -> None:
        """Mark the mounted fields whose problems changed from ``before`` to ``after``."""
        for spec in FIELDS:
            if only_group is not None and spec.group != only_group:
                continue
            msgs = after.get(spec.id, [])
            if msgs == before.get(spec.id, []):
                continue
            if not self._field_mounted(spec):
                if msgs:
                    self.call_later(self.open_group, spec.group)
                continue
            self.query_one(f"#{spec.id}-row").set_class(bool(msgs), "bad")
            label = self.query_one(f"#{spec.id}-label", Label)
            label.update((BAD_MARK if msgs else GOOD_MARK) + spec.label)
            err = self.query_one(f"#{spec.id}-error", Static)
            err.update("\n".join(msgs))
            err.set_class(bool(msgs), "shown")
            if msgs and spec.group in FOLDED_GROUPS:
                self.query_one(f"#{_group_id(spec.group)}", Collapsible).collapsed = False

    def validate(self) -> Design | None:
        """Read the form, mark bad fields, post Valid or Invalid; return the design or None."""
        values = self.values()
        result = validate_values(values, self.source)
        before, self.problems = self.problems, result.problems
        self._mark(before, result.problems)
        self.query_one(f"#{_group_id(LIMITS_GROUP)}", Collapsible).title = limits_title(values)
        status = self.query_one("#form-status", Static)
        if result.design is not None:
            text = Text(f"{fmt.OK} design valid", style="green")
            if self.note:
                text.append(f"\n{self.note}", style="")
            status.update(text)
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
            if self.note:
                text.append(f"\n{self.note}", style="")
            status.update(text)
            status.add_class("bad")
            self.post_message(self.Invalid(result.problems))
        return result.design
