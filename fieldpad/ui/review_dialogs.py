"""The day review's dialogs: what to sign off (the day or one of its rounds), and the export of the day
from the app (CSV, JSON, printable HTML, spreadsheet) into the documents folder."""

from __future__ import annotations

import time
from pathlib import Path

from rich.markup import escape as markup_escape
from rich.text import Text
from textual import work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import ProgressBar, Static

from ..report.export import export_records
from ..storage import sites
from .safe import printable


class SignOffScope(ModalScreen[int | None]):
    """What to sign off: the day (d) or one of its rounds (1-9); Esc cancels."""

    BINDINGS = [
        Binding("escape", "pick(-1)", "Cancel"),
        Binding("d", "pick(0)", "The day", show=False),
        *[Binding(str(k), f"pick({k})", f"Round {k}", show=False) for k in range(1, 10)],
    ]

    def __init__(self, choices: list[str]) -> None:
        super().__init__()
        self.choices = choices

    def compose(self) -> ComposeResult:
        lines = [f"[b]d[/b]  {markup_escape(self.choices[0])}"]
        lines += [f"[b]{k}[/b]  {markup_escape(printable(c))}" for k, c in enumerate(self.choices[1:], start=1)]
        with Vertical(classes="dialog"):
            yield Static("Sign off what? A sign-off is a record of its own: no reading is changed.", classes="question")
            yield Static("\n".join(lines))
            yield Static("a key from the list · Esc cancel", classes="hint")

    def action_pick(self, k: int) -> None:
        if k < 0:
            self.dismiss(None)
        elif k < len(self.choices):
            self.dismiss(k)


class ExportDialog(ModalScreen[None]):
    """Export the day (this site) to CSV, JSON, the printable HTML report or a spreadsheet."""

    BINDINGS = [
        Binding("c", "run('csv')", "CSV"),
        Binding("j", "run('json')", "JSON"),
        Binding("h", "run('html')", "HTML report"),
        Binding("s", "run('xlsx')", "Spreadsheet"),
        Binding("escape", "close", "Close"),
    ]

    def __init__(self, day: str) -> None:
        super().__init__()
        self.day = day

    def compose(self) -> ComposeResult:
        with Vertical(classes="dialog"):
            yield Static(
                f"Export {self.day} (this site): [b]c[/b] CSV · [b]j[/b] JSON · [b]h[/b] printable HTML"
                " · [b]s[/b] spreadsheet (xlsx)",
                classes="question",
            )
            yield ProgressBar(total=3, show_eta=False, id="export-progress")
            yield Static("", id="export-status")

    def action_run(self, fmt: str) -> None:
        self.query_one("#export-status", Static).update("Exporting…")
        self._export(fmt)

    @work(thread=True, exclusive=True)
    def _export(self, fmt: str) -> None:
        from ..report.export import to_csv, to_json
        from ..storage.files import atomic_write_text

        bar = self.query_one(ProgressBar)
        try:
            db = self.app.worker_db()  # its own connection: this runs in a worker thread
            site = sites.get_site(db, self.app.site_id)
            records = export_records(db, day=self.day, site_id=site["id"])
            self.app.call_from_thread(bar.update, progress=1)
            text = None
            if fmt == "xlsx":
                pass  # written straight to its file below
            elif fmt == "csv":
                text = to_csv(records)
            elif fmt == "json":
                text = to_json(records, day=self.day, site=site["name"])
            else:
                from ..report.html import to_html

                text = to_html(db, records, day=self.day, site=site["name"])
            self.app.call_from_thread(bar.update, progress=2)
            folder = export_folder()
            safe_name = "".join(ch if ch.isalnum() or ch in "-_" else "-" for ch in site["name"])[:40]
            # Made at a time of its own: a second export of the same day never replaces the first.
            stamp = time.strftime("%H%M%S")
            path = folder / f"fieldpad-{safe_name}-{self.day}-{stamp}.{fmt}"
            if fmt == "xlsx":
                from ..report.xlsx import write_xlsx

                write_xlsx(db, records, path, day=self.day, site=site["name"], protect=(self.app.db_path,))
            else:
                atomic_write_text(path, text, protect=(self.app.db_path,))
            self.app.call_from_thread(bar.update, progress=3)
            msg = f"Wrote {len(records)} reading(s) to\n{_home_short(path)}"
        except Exception as e:  # disk full, permissions: say so, nothing else is touched
            msg = f"Export failed: {e}"
        # A long path is folded onto the next lines, never cut at the dialog's edge.
        self.app.call_from_thread(self.query_one("#export-status", Static).update, Text(msg, overflow="fold"))

    def action_close(self) -> None:
        self.dismiss(None)


def _home_short(path: Path) -> str:
    """A path as a person reads it: the home folder as ``~``."""
    home = Path.home()
    try:
        return "~/" + str(path.relative_to(home))
    except ValueError:
        return str(path)


def export_folder() -> Path:
    import platformdirs

    folder = Path(platformdirs.user_documents_dir()) / "fieldpad-exports"
    folder.mkdir(parents=True, exist_ok=True)
    return folder
