"""The fieldpad Textual app: one App, screens in their own modules, styles in fieldpad.tcss."""
from __future__ import annotations

import getpass
import os
import tempfile
from datetime import date, timedelta
from pathlib import Path

from textual.app import App, SystemCommand

from ..storage import repo
from ..storage.db import open_db


class FieldpadApp(App):
    CSS_PATH = "fieldpad.tcss"
    TITLE = "fieldpad"
    ENABLE_COMMAND_PALETTE = True

    def __init__(self, db_path, *, technician: str | None = None, note: str | None = None) -> None:
        super().__init__()
        self.db_path = Path(db_path)
        self.db = open_db(self.db_path)
        self.technician = technician or _who()
        self.site_id: str | None = None
        self.round_id: str | None = None
        self.start_note = note

    def on_mount(self) -> None:
        sites = repo.list_sites(self.db)
        if sites:
            self._open_site(sites[0]["id"])
        else:
            from .boards import SiteForm
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
        open_rounds = [r for r in repo.list_rounds(self.db, site_id) if not r["finished_at"]]
        self.round_id = open_rounds[0]["id"] if open_rounds else None
        self.push_screen(BoardList())

    def get_system_commands(self, screen):
        yield from super().get_system_commands(screen)
        for binding in getattr(screen, "BINDINGS", []):
            if binding.show and binding.description:
                yield SystemCommand(binding.description, f"key {binding.key}",
                                    lambda b=binding: self.run_action(b.action, screen))

    def on_unmount(self) -> None:
        self.db.close()


def _who() -> str | None:
    try:
        return os.environ.get("FIELDPAD_TECHNICIAN") or getpass.getuser()
    except Exception:
        return None


def run_app(db_arg, demo: bool = False, technician: str | None = None) -> int:
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
    app = FieldpadApp(path, note=note, technician=technician)
    app.run()
    if demo:
        print(f"The demo database is kept in {path} (delete it when done).")
    return 0
