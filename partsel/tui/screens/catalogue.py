"""The catalogue view: browse and search every part, add or edit one, write the catalogue back
to files.

A part is edited as its record in the catalogue file format (YAML), checked as you type with
the same validation as catalogue files (:func:`partsel.catalogue.validate_document`); every
problem names its field as a JSON pointer into the record. Saving stores the one part in one
transaction (an edit made against a version that has moved on is refused), so nothing is ever
half-saved.
"""

from __future__ import annotations

import copy
from pathlib import Path
from typing import TYPE_CHECKING, Any, ClassVar

import numpy as np
import yaml
from rich.text import Text
from textual import on
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.screen import ModalScreen, Screen
from textual.widgets import Button, DataTable, Footer, Input, Label, Select, Static, TextArea

from partsel.catalogue import export_catalogue, get_part, load_documents, validate_document
from partsel.catalogue.files import parse_text
from partsel.errors import InputError, Problem
from partsel.tui import fmt

if TYPE_CHECKING:
    from partsel.tui.app import PartselApp

#: Label of the record being edited, in problems.
EDIT_LABEL = "part editor"
#: Largest number of catalogue rows put into the table (search to narrow).
MAX_CATALOGUE_ROWS = 500

_COLUMNS = (
    ("part_number", "Part", 10),
    ("maker", "Maker", 22),
    ("topology", "Stage", 17),
    ("channels", "Ch", 2),
    ("lifecycle", "Lifecycle", 19),
    ("price", "Price", 6),
    ("packages", "Packages", 28),
    ("description", "Description", 60),
)


def record_problems(text: str) -> tuple[dict[str, Any] | None, list[Problem]]:
    """Read a record's YAML text and validate it as a one-part catalogue file.

    Returns the record (None when the text is not a record) and its problems, with pointers
    into the record (``/output/dead_band/min``).
    """
    try:
        data = parse_text(text, file=EDIT_LABEL, suffix=".yaml")
    except InputError as exc:
        return None, list(exc.problems)
    if not isinstance(data, dict):
        return None, [Problem("a part record is a mapping of fields (part_number: …)")]
    _doc, problems = validate_document({"parts": [data]}, file=EDIT_LABEL)
    out = [Problem(p.message, None, p.record, p.pointer.removeprefix("/parts/0")) for p in problems]
    return data, out


def store_record(app: PartselApp, record: dict[str, Any], version: int) -> str:
    """Store one validated record (``version``: the version it was read at; 0 for a new part).

    Uses the catalogue's versioned edit when it has one (refused if the part moved on), else a
    one-part load, which is one transaction as well. Returns a message for people.
    """
    assert app.engine is not None
    try:
        from partsel.catalogue import edit_part
    except ImportError:  # a catalogue without record versions
        edit_part = None
    if edit_part is not None:
        result = edit_part(app.engine, record, version, user=app.user, source="partsel ui")
        if not result.changed:
            return f"{record['part_number']}: nothing changed"
        return f"{record['part_number']}: stored as version {result.version}"
    existing = get_part(app.engine, record["part_number"])
    if version == 0 and existing is not None:
        raise InputError(
            "a part with this number is already in the catalogue",
            record=record["part_number"],
            pointer="/part_number",
        )
    if version and existing is not None and existing.version != version:
        raise InputError(
            f"the part changed since it was opened (version {version}, now "
            f"{existing.version}); reopen it",
            record=record["part_number"],
        )
    doc, problems = validate_document({"parts": [record]}, file=EDIT_LABEL)
    if doc is None:
        raise InputError(problems=problems)
    report = load_documents(app.engine, [doc])
    return f"{record['part_number']}: {'added' if report.added else 'stored'}"


class PartEditorScreen(ModalScreen[str | None]):
    """Edit one part record; ctrl+s stores it only when it is valid (the screen's result: the
    part number stored, or None)."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding(
            "ctrl+s",
            "save",
            "Save part",
            priority=True,
            tooltip="Store the part (refused while it has problems)",
        ),
        Binding("escape", "cancel", "Cancel", tooltip="Close without storing anything"),
    ]

    app: PartselApp  # type: ignore[assignment]

    def __init__(self, record: dict[str, Any], version: int, *, title: str) -> None:
        super().__init__()
        self.record = record
        self.version = version
        self.title_text = title
        self.problems: list[Problem] = []

    def compose(self) -> ComposeResult:
        with Vertical(id="editor") as box:
            box.border_title = self.title_text
            yield Static(
                "The part record in the catalogue file format (YAML); checked as you type with "
                "the rules of catalogue files. ctrl+s stores it, escape discards it.",
                classes="dim",
            )
            text = yaml.safe_dump(self.record, sort_keys=False, allow_unicode=True, width=100)
            yield TextArea(text, id="record", show_line_numbers=True, tab_behavior="indent")
            with VerticalScroll(id="editor-problems"):
                yield Static("", id="problems")
            with Horizontal(classes="dialog-buttons"):
                yield Button("Save part", variant="primary", id="editor-save")
                yield Button("Cancel", id="editor-cancel")

    def on_mount(self) -> None:
        self.query_one(TextArea).focus()
        self.check()

    @property
    def text(self) -> str:
        return self.query_one(TextArea).text

    def check(self) -> dict[str, Any] | None:
        """Validate the text; show the problems; return the record if it is valid."""
        record, self.problems = record_problems(self.text)
        out = Text()
        if not self.problems:
            out.append(f"{fmt.OK} valid record", style="green")
        else:
            n = len(self.problems)
            out.append(
                f"{fmt.BAD} {n} problem{'s' if n != 1 else ''}; nothing can be stored "
                "until they are fixed\n",
                style="bold red",
            )
            for p in self.problems:
                where = p.pointer or "(record)"
                out.append(f"  {where}: ", style="bold")
                out.append(f"{p.message}\n")
        self.query_one("#problems", Static).update(out)
        return record if not self.problems else None

    @on(TextArea.Changed, "#record")
    def _changed(self) -> None:
        self.check()

    def action_save(self) -> None:
        record = self.check()
        if record is None:
            self.notify("the record has problems: nothing stored", severity="error")
            return
        old_pn = self.record.get("part_number")
        if self.version and str(record["part_number"]).casefold() != str(old_pn).casefold():
            self.notify(
                "the part number cannot change in an edit: add the new part instead",
                severity="error",
            )
            return
        try:
            message = store_record(self.app, record, self.version)
        except InputError as exc:
            self.query_one("#problems", Static).update(Text(str(exc), style="red"))
            self.notify(str(exc), title="not stored", severity="error", timeout=10)
            return
        self.notify(message)
        self.dismiss(str(record["part_number"]))

    def action_cancel(self) -> None:
        self.dismiss(None)

    @on(Button.Pressed, "#editor-save")
    def _save_pressed(self) -> None:
        self.action_save()

    @on(Button.Pressed, "#editor-cancel")
    def _cancel_pressed(self) -> None:
        self.dismiss(None)


class ExportCatalogueDialog(ModalScreen[tuple[str, str] | None]):
    """Ask for a folder and a file format."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "cancel", "Cancel", tooltip="Close without writing")
    ]

    def __init__(self, default: str) -> None:
        super().__init__()
        self.default = default

    def compose(self) -> ComposeResult:
        with Vertical(id="dialog"):
            yield Label("Write the catalogue to files (one per maker)", classes="dialog-title")
            yield Input(value=self.default, placeholder="folder", id="export-folder")
            yield Select(
                [("YAML", "yaml"), ("JSON", "json")],
                value="yaml",
                allow_blank=False,
                id="export-format",
            )
            with Horizontal(classes="dialog-buttons"):
                yield Button("Write", variant="primary", id="export-ok")
                yield Button("Cancel", id="export-cancel")

    def _accept(self) -> None:
        folder = self.query_one("#export-folder", Input).value.strip()
        if folder:
            self.dismiss((folder, str(self.query_one("#export-format", Select).value)))

    @on(Input.Submitted, "#export-folder")
    def _submitted(self) -> None:
        self._accept()

    @on(Button.Pressed, "#export-ok")
    def _ok(self) -> None:
        self._accept()

    @on(Button.Pressed, "#export-cancel")
    def action_cancel(self) -> None:
        self.dismiss(None)


class CatalogueScreen(Screen[None]):
    """Every part of the catalogue, searchable."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("escape", "app.pop_screen", "Back", tooltip="Back to the ranking"),
        Binding("ctrl+f", "search", "Search", priority=True, tooltip="Search the catalogue"),
        Binding(
            "ctrl+n",
            "add",
            "Add part",
            priority=True,
            tooltip="Add a part (starting from a copy of the highlighted one)",
        ),
        Binding(
            "ctrl+o",
            "edit",
            "Edit part",
            priority=True,
            tooltip="Edit the highlighted part (also: enter)",
        ),
        Binding(
            "ctrl+s",
            "write_files",
            "Write files",
            priority=True,
            tooltip="Write the catalogue to files, one per maker",
        ),
    ]

    app: PartselApp  # type: ignore[assignment]

    def compose(self) -> ComposeResult:
        with Vertical(id="catalogue") as box:
            box.border_title = "Catalogue"
            with Horizontal(classes="rank-bar"):
                yield Input(
                    placeholder="search: words in part, maker, stage, package, text…",
                    id="cat-search",
                    compact=True,
                )
            yield Static("", id="cat-status")
            table = DataTable(id="cat-table", cursor_type="row", zebra_stripes=True)
            for key, label, width in _COLUMNS:
                table.add_column(label, key=key, width=width)
            yield table
            with VerticalScroll(id="cat-detail"):
                yield Static("", id="cat-record")
        yield Footer(compact=True)

    def on_mount(self) -> None:
        self.fill()
        self.query_one("#cat-table", DataTable).focus()

    def _matching(self) -> np.ndarray:
        frame = self.app.frame
        words = self.query_one("#cat-search", Input).value.lower().split()
        if not words:
            return np.arange(len(frame))
        hay = frame["part_number"].astype(str)
        for name in ("maker", "family", "description", "topology", "lifecycle", "packages"):
            if name in frame:
                hay = hay + " " + frame[name].fillna("").astype(str)
        hay = hay.str.lower()
        keep = np.ones(len(frame), dtype=bool)
        for w in words:
            keep &= hay.str.contains(w, regex=False).to_numpy()
        return np.flatnonzero(keep)

    def fill(self, select: str | None = None) -> None:
        frame = self.app.frame
        rows = self._matching()
        table = self.query_one("#cat-table", DataTable)
        table.clear()
        for k in rows[:MAX_CATALOGUE_ROWS]:
            rec = frame.iloc[int(k)]
            cells: list[str] = []
            for key, _label, _w in _COLUMNS:
                v = rec.get(key, "")
                if key == "price":
                    cells.append(f"{v:.2f}" if fmt.finite(v) else "—")
                elif key == "topology":
                    cells.append(str(v))
                else:
                    cells.append(
                        "" if v is None or (isinstance(v, float) and np.isnan(v)) else str(v)
                    )
            table.add_row(*cells, key=str(rec["part_number"]))
        status = f"{len(rows)} of {len(frame)} parts"
        if len(rows) > MAX_CATALOGUE_ROWS:
            status += f" · first {MAX_CATALOGUE_ROWS} shown (search to narrow)"
        if self.app.engine is None:
            status += " · read-only (no database)"
        self.query_one("#cat-status", Static).update(status)
        if select is not None and select in table.rows:
            table.move_cursor(row=table.get_row_index(select))
        self.show_record(self.current)

    @property
    def current(self) -> str | None:
        table = self.query_one("#cat-table", DataTable)
        if table.row_count == 0:
            return None
        return str(table.coordinate_to_cell_key(table.cursor_coordinate).row_key.value)

    def show_record(self, part_number: str | None) -> None:
        out = self.query_one("#cat-record", Static)
        if part_number is None:
            out.update("")
            return
        record = self.app.record(part_number)
        if record is None:
            out.update(Text("record not available", style="dim"))
            return
        out.update(yaml.safe_dump(record, sort_keys=False, allow_unicode=True, width=100))

    @on(Input.Changed, "#cat-search")
    def _search(self) -> None:
        self.fill()

    @on(Input.Submitted, "#cat-search")
    def _search_done(self) -> None:
        self.query_one("#cat-table", DataTable).focus()

    @on(DataTable.RowHighlighted, "#cat-table")
    def _highlighted(self, event: DataTable.RowHighlighted) -> None:
        self.show_record(event.row_key.value if event.row_key is not None else None)

    @on(DataTable.RowSelected, "#cat-table")
    def _selected(self) -> None:
        self.action_edit()

    def action_search(self) -> None:
        self.query_one("#cat-search", Input).focus()

    def _editable(self) -> bool:
        if self.app.engine is None:
            self.notify("no database: the catalogue is read-only here", severity="error")
            return False
        return True

    def action_add(self) -> None:
        if not self._editable():
            return
        base = self.app.record(self.current) if self.current else None
        record = copy.deepcopy(base) if base else {}
        record["part_number"] = "NEW-PART-1"
        record.pop("notes", None)
        self.app.push_screen(PartEditorScreen(record, 0, title="Add a part"), self._stored)

    def action_edit(self) -> None:
        pn = self.current
        if pn is None or not self._editable():
            return
        assert self.app.engine is not None
        stored = get_part(self.app.engine, pn)
        if stored is None:
            self.notify(f"{pn} is no longer in the catalogue", severity="error")
            return
        self.app.push_screen(
            PartEditorScreen(
                stored.record, stored.version, title=f"Edit {pn} (version {stored.version})"
            ),
            self._stored,
        )

    def _stored(self, part_number: str | None) -> None:
        if not part_number:
            return
        self.app.reload_catalogue()
        self.fill(select=part_number)

    def action_write_files(self) -> None:
        if not self._editable():
            return
        default = str(self.app.work_dir / "catalogue-export")
        self.app.push_screen(ExportCatalogueDialog(default), self.write_files)

    def write_files(self, choice: tuple[str, str] | None) -> list[Path]:
        """Write the catalogue to ``choice = (folder, format)``; return the files."""
        if choice is None or self.app.engine is None:
            return []
        folder, fmt_name = choice
        target = self.app._resolve(Path(folder))
        try:
            files = export_catalogue(self.app.engine, target, fmt_name)  # type: ignore[arg-type]
        except OSError as exc:
            self.notify(str(exc), title="not written", severity="error", timeout=10)
            return []
        self.notify(f"wrote {len(files)} files to {target}")
        return files
