"""The site and board settings forms (F2 saves, what stopped a save said in place), the site picker, and
what they offer: system types, voltage standards, phase colour sets, thresholds, lengths typed in inches."""

from __future__ import annotations

import json
import re

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import DataTable, Input, Label, Select, Static

from ..core.fields import SYSTEMS
from ..core.thresholds import Thresholds
from ..storage import sites
from ..storage.db import StorageError
from .field_input import FieldInput, TypingTargetScreen
from .key_strip import KeyStrip
from .palette import ALARM
from .safe import printable
from .tables import selected_key

#: How each system type of the core (``core.fields.SYSTEMS``) is offered in the board form.
SYSTEM_LABELS = {
    "wye": "3-phase 4-wire wye",
    "delta": "3-phase 3-wire delta (line-to-line only)",
    "high-leg-delta": "4-wire high-leg delta",
    "split-phase": "120/240 V split-phase",
}
SYSTEM_CHOICES = [(SYSTEM_LABELS[code], code) for code in SYSTEMS]


INCH_MM = 25.4  # exact, by definition of the inch (1959 international yard and pound agreement)
_INCHES = re.compile(r'^\s*([0-9]+(?:[.,][0-9]+)?)\s*(?:in|inch|inches|")\s*$', re.IGNORECASE)


def inches_to_mm(text: str) -> str:
    """A length typed in inches ("18 in", '18"', "18 inches") as millimetres; any other text unchanged.

    >>> inches_to_mm("18 in"), inches_to_mm("455")
    ('457.2', '455')
    """
    m = _INCHES.match(text or "")
    if not m:
        return text
    return f"{float(m.group(1).replace(',', '.')) * INCH_MM:.1f}"


class FormScroll(VerticalScroll, can_focus=False):
    """The form's scrolling area: not a Tab stop (Tab goes from field to field)."""


class SettingsForm(TypingTargetScreen, ModalScreen[str | None]):
    """A form that saves with F2 and says, in place, what stopped the save.  It opens scrolled to the top
    (title and first field in view), and names fields by their labels in its messages."""

    #: field -> its label on the form (for messages in the technician's words).
    LABELS: dict[str, str] = {}

    AUTO_FOCUS = None  # on_mount focuses the name field and scrolls to the top
    # Not priority bindings: a priority binding runs before the keys typed just ahead of it reach the
    # field, so a fast "…0 F2" could save without the last characters.
    BINDINGS = [
        Binding("f2", "save", "Save"),
        Binding("ctrl+s", "save", "Save", show=False),
        Binding("escape", "cancel", "Cancel"),
    ]

    def show_problems(self, error: StorageError) -> None:
        problems = getattr(error, "problems", None)
        text = "NOT SAVED: " + (
            "; ".join(f"{self.label_of(f)}: {self.words(f, r)}" for f, r in problems) if problems else str(error)
        )
        box = self.query_one("#form-error", Static)
        box.update(Text(text, f"bold {ALARM}"))
        box.scroll_visible()  # the form is taller than an 80x24 screen: bring the reason into view

    def label_of(self, field: str) -> str:
        return self.LABELS.get(field, field.replace("_", " ")).rstrip(" *")

    @staticmethod
    def words(field: str, reason: str) -> str:
        """A storage reason with the internal field name replaced by "it"."""
        return reason.replace(f"{field}: ", "").replace(field, "it")

    def on_mount(self) -> None:
        self.query_one("#name", Input).focus()
        # Focusing the name field scrolls it into view; the form then opens at its top, title in view.
        self.call_after_refresh(lambda: self.query_one(FormScroll).scroll_home(animate=False))

    def action_cancel(self) -> None:
        self.dismiss(None)


class BoardForm(SettingsForm):
    """Create or edit a board, with its arc-flash label data."""

    FIELDS = [
        ("name", "Name / tag *"),
        ("location", "Location"),
        ("kind", "Kind (switchboard, panelboard, MCC…)"),
        ("nominal_v", "Nominal voltage, line-to-line (V)"),
        ("frequency_hz", "Frequency (Hz)"),
        ("af_incident_energy_cal_cm2", "Arc-flash label: incident energy (cal/cm²)"),
        ("af_working_distance_mm", "Label: working distance (mm, or inches: 18 in)"),
        ("af_boundary_mm", "Label: arc-flash boundary (mm, or inches: 36 in)"),
        ("af_ppe", "Label: PPE category, or 'none posted'"),
        ("af_label_date", "Label date (YYYY-MM-DD)"),
    ]

    LABELS = {**dict(FIELDS), "system": "System", "voltage_standard": "Voltage limits", "colour_set": "Phase colours"}

    def __init__(self, site_id: str, board_id: str | None = None) -> None:
        super().__init__()
        self.site_id = site_id
        self.board_id = board_id

    def compose(self) -> ComposeResult:
        board = sites.get_board(self.app.db, self.board_id) if self.board_id else {}
        with FormScroll(classes="form"):
            yield Static(("[b]Edit board[/b]" if self.board_id else "[b]New board[/b]") + " — F2 to save")
            yield Label("System")
            yield Select(SYSTEM_CHOICES, value=board.get("system", "wye"), allow_blank=False, id="system", compact=True)
            for field, label in self.FIELDS:
                yield Label(label)
                v = board.get(field)
                yield FieldInput(
                    value="" if v is None else (f"{v:g}" if isinstance(v, float) else str(v)), id=field, compact=True
                )
            yield Label("Voltage limits for this board (overrides the site's)")
            yield Select(
                BOARD_STANDARDS,
                value=board.get("voltage_standard") or "",
                allow_blank=False,
                id="voltage_standard",
                compact=True,
            )
            yield Label("Phase colours for this board (overrides the site's)")
            yield Select(
                BOARD_COLOURS, value=board.get("colour_set") or "", allow_blank=False, id="colour_set", compact=True
            )
            yield Static(id="form-error")
        yield KeyStrip()

    def action_save(self) -> None:
        values = {f: self.query_one(f"#{f}", Input).value for f, _ in self.FIELDS}
        for f in ("af_working_distance_mm", "af_boundary_mm"):
            values[f] = inches_to_mm(values[f])
        values["system"] = self.query_one("#system", Select).value
        for f in ("voltage_standard", "colour_set"):
            values[f] = self.query_one(f"#{f}", Select).value or None
        try:
            if self.board_id:
                sites.update_board(self.app.db, self.board_id, **values)
                bid = self.board_id
            else:
                name = values.pop("name")
                system = values.pop("system")
                bid = sites.create_board(self.app.db, self.site_id, name, system=system, **values)
        except StorageError as e:  # bad values, or a database that cannot be written
            self.show_problems(e)
            return
        self.dismiss(bid)


STANDARD_CHOICES = [("ANSI C84.1 Range A / B", "ansi"), ("IEC 60038 ±10 %", "iec")]
COLOUR_CHOICES = [
    ("IEC 60445: brown, black, grey; blue neutral", "iec60445"),
    ("208Y/120: black, red, blue; white neutral", "na-208y120"),
    ("480Y/277: brown, orange, yellow; grey neutral", "na-480y277"),
]
BOARD_STANDARDS = [("as the site", "")] + STANDARD_CHOICES
BOARD_COLOURS = [("as the site", "")] + COLOUR_CHOICES

#: Threshold fields shown in the site form: (name, label).
THRESHOLD_FIELDS = [
    ("vuf_pct", "VUF warning above (%)"),
    ("lvur_pct", "NEMA unbalance: derate motors above (%)"),
    ("lvur_max_pct", "NEMA unbalance: motors not recommended above (%)"),
    ("iur_pct", "Current unbalance warning above (%)"),
    ("neutral_ratio", "Neutral / highest phase: warning above"),
    ("neutral_overload_ratio", "Neutral / highest phase: alarm above"),
    ("neutral_mismatch_ratio", "Neutral measured vs computed: note above (ratio)"),
    ("collapse_ratio", "Phase lost below (fraction of the highest)"),
    ("dominance", "Rotation: one sequence at least N times the other"),
]


class SiteForm(SettingsForm):
    """Create a site, or edit its settings and its threshold overrides."""

    LABELS = {
        "name": "Site name",
        "description": "Address or description",
        "voltage_standard": "Voltage limits",
        "phase_labels": "Phase labels",
        "colour_set": "Phase colours",
        "label_review_years": "Arc-flash label review interval (years)",
        **{name: label for name, label in THRESHOLD_FIELDS},
    }

    def __init__(self, site_id: str | None = None) -> None:
        super().__init__()
        self.site_id = site_id

    def compose(self) -> ComposeResult:
        site = sites.get_site(self.app.db, self.site_id) if self.site_id else {}
        overrides = json.loads(site.get("thresholds_json") or "{}")
        defaults = Thresholds()
        with FormScroll(classes="form"):
            yield Static("[b]Site settings[/b] — F2 to save" if self.site_id else "[b]New site[/b] — F2 to save")
            yield Label("Site name *")
            yield FieldInput(value=site.get("name") or "", id="name")
            yield Label("Address or description")
            yield FieldInput(value=site.get("description") or "", id="description")
            yield Label("Voltage limits for warnings")
            yield Select(
                STANDARD_CHOICES,
                value=site.get("voltage_standard", "ansi"),
                allow_blank=False,
                id="voltage_standard",
                compact=True,
            )
            yield Label("Phase labels")
            yield Select(
                [("A / B / C", "ABC"), ("L1 / L2 / L3", "L123")],
                value=site.get("phase_labels", "ABC"),
                allow_blank=False,
                id="phase_labels",
                compact=True,
            )
            yield Label("Phase colours")
            yield Select(
                COLOUR_CHOICES,
                value=site.get("colour_set", "iec60445"),
                allow_blank=False,
                id="colour_set",
                compact=True,
            )
            yield Label("Arc-flash label review interval (years)")
            yield FieldInput(value=f"{site.get('label_review_years', 5.0):g}", id="label_review_years")
            yield Static("[b]Thresholds[/b] (empty = the default shown, from the standard named in each finding)")
            for name, label in THRESHOLD_FIELDS:
                yield Label(f"{label} — default {getattr(defaults, name):g}")
                v = overrides.get(name)
                yield FieldInput(
                    value="" if v is None else f"{v:g}", placeholder=f"{getattr(defaults, name):g}", id=f"th-{name}"
                )
            yield Static(id="form-error")
        yield KeyStrip()

    def action_save(self) -> None:
        values = {
            "name": self.query_one("#name", Input).value,
            "description": self.query_one("#description", Input).value,
            "voltage_standard": self.query_one("#voltage_standard", Select).value,
            "phase_labels": self.query_one("#phase_labels", Select).value,
            "colour_set": self.query_one("#colour_set", Select).value,
            "label_review_years": self.query_one("#label_review_years", Input).value or "5",
            "thresholds": {name: self.query_one(f"#th-{name}", Input).value for name, _ in THRESHOLD_FIELDS},
        }
        try:
            if self.site_id:
                sites.update_site(self.app.db, self.site_id, **values)
                sid = self.site_id
            else:
                sid = sites.create_site(self.app.db, **values)
        except StorageError as e:  # bad values, or a database that cannot be written
            self.show_problems(e)
            return
        self.dismiss(sid)


class SitePicker(ModalScreen[str | None]):
    BINDINGS = [
        Binding("n", "new", "New site"),
        Binding("e", "edit", "Edit settings"),
        Binding("escape", "cancel", "Cancel"),
    ]

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog"):
            yield Static("[b]Sites[/b] — Enter to choose, n new site, e settings and thresholds")
            yield DataTable(id="sites", cursor_type="row")
        yield KeyStrip()

    def on_mount(self) -> None:
        t = self.query_one(DataTable)
        t.add_columns("site", "boards")
        listed = sites.list_sites(self.app.db)
        for s in listed:
            # Two sites of one name (one from each laptop): told apart by id, never mixed.
            twin = sum(o["name"] == s["name"] for o in listed) > 1
            t.add_row(
                printable(s["name"]) + (f" (id {s['id'][:13]}…)" if twin else ""),
                str(len(sites.list_boards(self.app.db, s["id"]))),
                key=s["id"],
            )
        t.focus()

    def on_data_table_row_selected(self, event: DataTable.RowSelected) -> None:
        self.dismiss(event.row_key.value)

    def action_new(self) -> None:
        self.app.push_screen(SiteForm(), lambda sid: self.dismiss(sid) if sid else None)

    def action_edit(self) -> None:
        sid = selected_key(self.query_one(DataTable))
        if sid:
            self.app.push_screen(SiteForm(sid), lambda changed: self.dismiss(changed) if changed else None)

    def action_cancel(self) -> None:
        self.dismiss(None)
