"""The fieldpad Textual app: one App, screens in their own modules, styles in fieldpad.tcss."""

from __future__ import annotations

import asyncio
import contextlib
import getpass
import os
import signal
import tempfile
from datetime import date, timedelta
from pathlib import Path

from textual.app import App, SystemCommand

from ..storage import rounds, sites
from ..storage.db import open_db
from .messages import OpenDayReview, OpenHistory, OpenSheet


class FieldpadApp(App):
    CSS_PATH = "fieldpad.tcss"
    TITLE = "fieldpad"
    ENABLE_COMMAND_PALETTE = True

    def __init__(
        self, db_path, *, technician: str | None = None, note: str | None = None, server: str | None = None
    ) -> None:
        super().__init__()
        #: The crew's central server (a libpq URI), if any: ``--server`` or ``$FIELDPAD_SERVER``.
        self.server = server or os.environ.get("FIELDPAD_SERVER") or None
        self._sync_db = None
        self.db_path = Path(db_path)
        self.db = open_db(self.db_path)
        self.technician = technician or _who()
        self.site_id: str | None = None
        self.round_id: str | None = None
        self.start_note = note
        self._worker_db = None
        #: Keys typed on the board list right behind Enter, before the sheet was on screen (the sheet types them).
        self.typed_ahead: list[tuple[str, str | None]] = []

    def worker_db(self):
        """The connection for work in a worker thread (exports), opened once and kept for the app's life:
        one connection per thread, never opened and closed again and again."""
        if self._worker_db is None:
            self._worker_db = open_db(self.db_path, create=False)
        return self._worker_db

    def sync_db(self):
        """The connection a sync runs on, in its worker thread: its own, opened once and kept (a connection
        is never shared between threads, nor opened and closed again and again)."""
        if self._sync_db is None:
            self._sync_db = open_db(self.db_path, create=False)
        return self._sync_db

    def on_mount(self) -> None:
        loop = asyncio.get_running_loop()
        for sig in (signal.SIGHUP, signal.SIGTERM):
            with contextlib.suppress(NotImplementedError, RuntimeError, ValueError):
                loop.add_signal_handler(sig, self._hang_up)
        if self.db.read_only:
            self.notify(
                f"READ-ONLY: this database cannot be written because {self.db.read_only_reason}. "
                "Everything can be looked at and exported; nothing new can be saved here.",
                severity="warning",
                timeout=10,
            )
        known = sites.list_sites(self.db)
        if known:
            self._open_site(known[0]["id"])
        else:
            from .forms import SiteForm

            self.push_screen(SiteForm(), self._first_site)
        if self.start_note:
            self.notify(self.start_note, timeout=6)

    def _first_site(self, site_id: str | None) -> None:
        if not site_id:
            self.exit(message="No site created; nothing was changed.")
            return
        self._open_site(site_id)

    def _open_site(self, site_id: str) -> None:
        from .boards import BoardList

        self.site_id = site_id
        open_rounds = [r for r in rounds.list_rounds(self.db, site_id) if not r["finished_at"]]
        self.round_id = open_rounds[0]["id"] if open_rounds else None
        self.push_screen(BoardList())

    # ---- screens ask for screens (ui/messages.py); only the app knows them all --------------
    def on_open_sheet(self, message: OpenSheet) -> None:
        from .sheet import ReadingSheet

        self.push_screen(
            ReadingSheet(
                message.board_id,
                round_id=None if message.correcting else self.round_id,
                correcting=message.correcting,
                technician=self.technician,
            )
        )

    def on_open_history(self, message: OpenHistory) -> None:
        from .history import BoardHistory

        self.push_screen(BoardHistory(message.board_id))

    def on_open_day_review(self, message: OpenDayReview) -> None:
        from .review import DayReview

        self.push_screen(DayReview())

    def get_system_commands(self, screen):
        yield from super().get_system_commands(screen)
        for binding in getattr(screen, "BINDINGS", []):
            if binding.show and binding.description:
                yield SystemCommand(
                    binding.description, f"key {binding.key}", lambda b=binding: self.run_action(b.action, screen)
                )

    # ---- leaving: nothing typed is lost -------------------------------------------------
    def _unsaved_sheets(self):
        """Screens holding typed values that are not saved as a reading (sheets say so themselves)."""
        return [s for s in self.screen_stack if getattr(s, "has_unsaved", None) and s.has_unsaved()]

    async def action_quit(self) -> None:
        sheets = self._unsaved_sheets()
        if not sheets:
            self.exit()
            return
        kept = all([s.flush_draft() for s in sheets])
        from .dialogs import Ask

        if kept:
            question = (
                "Quit fieldpad? What is typed on the sheet is NOT saved as a reading; it is kept "
                "as a draft and offered back when you open the board again. (y/n)"
            )
        else:
            question = (
                "Quit fieldpad and LOSE what is typed? It is not saved, and it could not be kept as a "
                "draft (see the status line). (y/n)"
            )
        self.push_screen(Ask(question), lambda yes: self.exit() if yes else None)

    def _hang_up(self) -> None:
        """The terminal went away (SIGHUP) or we are asked to stop (SIGTERM): keep drafts, then exit."""
        for s in self._unsaved_sheets():
            s.flush_draft()
        self.exit(return_code=1, message="fieldpad stopped by a signal; typed values were kept as drafts.")

    def on_unmount(self) -> None:
        for extra in (self._worker_db, self._sync_db):
            if extra is not None:
                extra.close()
        self.db.close()


def _who() -> str | None:
    try:
        return os.environ.get("FIELDPAD_TECHNICIAN") or getpass.getuser()
    except Exception:
        return None


def run_app(db_arg, demo: bool = False, technician: str | None = None, server: str | None = None) -> int:
    note = None
    if demo:
        from ..demo_site import build_demo

        folder = Path(tempfile.mkdtemp(prefix="fieldpad-demo-"))
        path = Path(db_arg) if db_arg else folder / "demo.db"
        if path.exists():
            raise SystemExit(f"fieldpad demo: {path} exists; the demo writes a fresh file only")
        build_demo(path, day=date.today() - timedelta(days=1))
        note = f"DEMO site (invented data) in {path}: your own database is not touched."
    else:
        from ..storage.db import resolve_path

        path = resolve_path(db_arg)
    app = FieldpadApp(path, note=note, technician=technician, server=server)
    app.run()
    if demo:
        print(f"The demo database is kept in {path} (delete it when done).")
    return app.return_code or 0  # an error inside the app exits non-zero
