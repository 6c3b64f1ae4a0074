"""The board list (home screen); the site and board forms it opens are ``forms.py``."""

from __future__ import annotations

import re
import time

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.screen import Screen
from textual.widgets import DataTable, Static

from ..storage import rounds, sites, versions
from ..storage.db import StorageError
from ..storage.ids import local_text
from .forms import BoardForm, SitePicker
from .key_strip import KeyStrip
from .messages import OpenDayReview, OpenHistory, OpenSheet
from .palette import ALARM, WARN
from .safe import markup_safe, printable
from .tables import selected_key

#: The system type in the board list, short enough for 80 columns.
SYSTEM_SHORT = {"wye": "wye", "delta": "delta", "high-leg-delta": "hi-leg Δ", "split-phase": "split-ph"}


class BoardList(Screen):
    """Home: the site's boards, what has been read in the current round."""

    BINDINGS = [
        Binding("enter", "open", "Open sheet", show=True),
        Binding("n", "new_board", "New board"),
        Binding("e", "edit_board", "Edit"),
        Binding("h", "history", "History"),
        Binding("r", "round", "Round"),
        Binding("s", "sites", "Sites"),
        Binding("v", "review", "Day review"),
        Binding("y", "sync", "Sync"),
        Binding("f1", "help", "Help"),
        Binding("q", "app.quit", "Quit"),
        Binding("slash", "jump", "Go to", show=False),
        # Priority: the table's own Home/End only scroll, without moving the cursor.
        Binding("home", "first", "First", show=False, priority=True),
        Binding("end", "last", "Last", show=False, priority=True),
    ]

    #: Seconds between two typed characters of one board name (type-to-jump).
    JUMP_PAUSE_S = 1.2

    def __init__(self) -> None:
        super().__init__()
        self._jump = ""
        self._jump_at = 0.0
        self._marks_for: tuple = ()
        self._opening = False  # a sheet was asked for and is not on screen yet

    def compose(self) -> ComposeResult:
        yield Static(id="home-title")
        yield Static(id="home-caution")
        yield DataTable(id="boards", cursor_type="row", zebra_stripes=True)
        yield Static(id="home-hint")
        yield Static(id="home-sync")
        yield KeyStrip()

    def on_mount(self) -> None:
        t = self.query_one(DataTable)
        # Widths that keep every column in view at 80 columns (the round column last).
        t.add_column("board", key="board")
        t.add_column("check", key="check", width=7)
        t.add_column("location", key="location", width=18)
        t.add_column("system", key="system", width=8)
        for name in ("V", "last reading", "round"):
            t.add_column(name, key=name)
        self.query_one("#home-caution", Static).update(
            Text(
                "⚠ Energised equipment: qualified persons, permit, PPE per each arc-flash label. "
                "Local codes govern. fieldpad never shows that equipment is safe."
            )
        )
        t.focus()  # the rows are filled when the screen becomes current (on_screen_resume)

    def on_screen_resume(self) -> None:
        self._opening = False
        self.reload()

    def reload(self) -> None:
        app = self.app
        self._show_sync()
        site = sites.get_site(app.db, app.site_id)
        rnd = app.round_id
        title = f"[b]{markup_safe(site['name'])}[/b] — boards"
        if rnd:
            done, total = rounds.round_progress(app.db, rnd)
            name = rounds.round_name(rounds.get_round(app.db, rnd))
            title += f" · {markup_safe(name[:32] + ('…' if len(name) > 32 else ''))}: {done}/{total} boards read"
        else:
            title += " · no round (r: start one)"
        if app.db.read_only:
            title = f"[b {WARN}]READ-ONLY[/] · " + title
        self.query_one("#home-title", Static).update(title)
        t = self.query_one(DataTable)
        keep = self._selected()  # the board under the cursor stays under it (walking 40 boards)
        t.clear()
        read_in_round = set()
        if rnd:
            read_in_round = rounds.boards_read_in_round(app.db, rnd)
        self.boards = sites.list_boards(app.db, app.site_id)
        latest = []
        for b in self.boards:
            last = versions.previous_reading(app.db, b["id"])
            latest.append(last)
            twin = sum(o["name"] == b["name"] for o in self.boards) > 1  # one from each laptop: told apart by id
            t.add_row(
                printable(b["name"]) + (f" (id {b['id'][:13]}…)" if twin else ""),
                "",
                printable(b["location"]),
                SYSTEM_SHORT[b["system"]],
                f"{b['nominal_v']:g}" if b["nominal_v"] else "",
                local_text(last["taken_at"]) if last else "—",
                "✔ done" if b["id"] in read_in_round else ("to do" if rnd else ""),
                key=b["id"],
            )
        keys = [b["id"] for b in self.boards]
        if keep in keys:
            t.move_cursor(row=keys.index(keep), animate=False)
        self._mark_findings(site, latest)
        hint = "Enter: open sheet · type a name (capitals) or /: go to · r: round · F1: help"
        if t.row_count == 0:
            hint = "No boards yet: press n to create the first board of this site."
        self.query_one("#home-hint", Static).update(hint)

    def _selected(self) -> str | None:
        return selected_key(self.query_one(DataTable))

    # ---- markers: the worst finding of each board's latest reading ---------------------------
    def _mark_findings(self, site: dict, latest: list) -> None:
        """Fill the "check" column once the list is on screen: the analysis (numpy) loads in a worker
        thread, so the first screen does not wait for it."""
        rows = [(b["id"], r) for b, r in zip(self.boards, latest) if r is not None]
        if rows:
            self._marks_for = tuple(r["id"] for _, r in rows)
            self.run_worker(
                lambda: self._compute_marks(site, rows, self._marks_for), thread=True, exclusive=True, group="marks"
            )

    def _compute_marks(self, site: dict, rows: list, token: tuple) -> None:
        from ..report.export import analyze_rows

        results = analyze_rows(
            [{**r, "thresholds_json": site["thresholds_json"], "phase_labels": site["phase_labels"]} for _, r in rows]
        )
        marks = {}
        for (bid, _), res in zip(rows, results):
            sev = {f["severity"] for f in res["findings"]}
            marks[bid] = (
                ("▲ ALARM", f"bold {ALARM}")
                if "alarm" in sev
                else (("△ WARN", f"bold {WARN}") if "warning" in sev else ("", ""))
            )
        self.app.call_from_thread(self._show_marks, marks, token)

    def _show_marks(self, marks: dict, token: tuple) -> None:
        if token != self._marks_for or not self.is_attached:
            return  # the list was reloaded since: a newer worker fills it
        t = self.query_one(DataTable)
        for bid, (text, style) in marks.items():
            try:
                t.update_cell(bid, "check", Text(text, style) if text else "")
            except Exception:  # noqa: BLE001 - a row removed by a reload in between
                continue

    # ---- the crew's server: sync in a worker, never waiting in front of the technician ----------
    def _show_sync(self, note: Text | None = None) -> None:
        """One line: when this laptop last synced and how many of this technician's versions wait (only
        where a server is set)."""
        line = self.query_one("#home-sync", Static)
        app = self.app
        if not app.server:
            line.display = False
            return
        from ..storage.server import last_sync, pending_count

        line.display = True
        last = last_sync(app.db)
        waiting = pending_count(app.db, app.technician)
        t = Text("Server: ", "bold")
        t.append(f"last sync {local_text(last['synced_at'], '%m-%d %H:%M')}" if last else "never synced")
        if waiting is None:
            waiting = app.db.conn.execute(
                "SELECT COUNT(*) FROM reading WHERE recorded_by IS ?", [app.technician]
            ).fetchone()[0]
        t.append(
            f" · {waiting} version(s) of yours wait" if waiting else " · nothing of yours waits",
            f"bold {WARN}" if waiting else "",
        )
        t.append(" · y: sync now" if not getattr(self, "_syncing", False) else " · syncing…")
        if note is not None:
            t.append(" · ")
            t.append_text(note)
        line.update(t)

    def action_sync(self) -> None:
        app = self.app
        if not app.server:
            self.notify(
                "No server set: start fieldpad with --server URL, or set FIELDPAD_SERVER. Everything "
                "stays on this laptop meanwhile.",
                timeout=8,
            )
            return
        if getattr(self, "_syncing", False):
            self.notify("A sync is already running.")
            return
        self._syncing = True
        self._show_sync()
        self.run_worker(self._sync_in_worker, thread=True, exclusive=True, group="sync")

    def _sync_in_worker(self) -> None:
        from ..storage.server import sync

        app = self.app
        try:
            rep = sync(app.sync_db(), app.server)
        except StorageError as e:
            app.call_from_thread(self._synced, None, str(e))
        except Exception as e:  # noqa: BLE001 - a sync never takes the app down; the message says what
            app.call_from_thread(self._synced, None, f"{type(e).__name__}: {e}")
        else:
            app.call_from_thread(self._synced, rep, None)

    def _synced(self, rep, error: str | None) -> None:
        self._syncing = False
        if error:
            self.notify(f"NOT SYNCED: {printable(error)}", severity="error", timeout=12)
            note = Text("last try failed: nothing lost, try again later", f"bold {WARN}")
        else:
            sent, got = sum(rep.sent.values()), sum(rep.received.values())
            self.notify(
                f"Synced with the server as {printable(rep.role)}: sent {sent} row(s), received {got}."
                + (f" {rep.not_mine} version(s) recorded by others are theirs to send." if rep.not_mine else ""),
                timeout=8,
            )
            note = None
        if self.is_attached and self.app.screen is self:
            self.reload()
            if note is not None:
                self._show_sync(note)

    # ---- moving around ---------------------------------------------------------------------
    def on_key(self, event) -> None:
        """Type a board's name (capitals, digits, "-"; the lowercase letters are the screen's keys) to
        jump to it."""
        if event.key == "enter" and not self._opening and self.query_one(DataTable).row_count:
            # Enter opens the sheet a few turns of the event loop later: what is typed behind it is the
            # sheet's (the table's own Enter still runs: no stop here).
            self._opening = True
            self.app.typed_ahead = []
            return
        if self._opening:
            # Typed right behind Enter, while the sheet opens: kept for the sheet, in order.
            self.app.typed_ahead.append((event.key, event.character if event.is_printable else None))
            event.stop()
            event.prevent_default()
            return
        ch = event.character
        if not ch or not event.is_printable or not (ch.isupper() or ch.isdigit() or ch in "-_."):
            return
        now = time.monotonic()
        self._jump = (self._jump if now - self._jump_at < self.JUMP_PAUSE_S else "") + ch
        self._jump_at = now
        self._go_to(self._jump)
        event.stop()
        event.prevent_default()

    def _go_to(self, text: str) -> bool:
        t = self.query_one(DataTable)
        names = [b["name"] or "" for b in getattr(self, "boards", [])]

        def bare(name: str) -> str:  # "MSB2" finds "MSB-2": dashes, spaces and dots are not typed
            return re.sub(r"[-_. /]", "", name.lower())

        low = bare(text)
        hit = next((k for k, n in enumerate(names) if bare(n).startswith(low)), None)
        if hit is None:
            hit = next((k for k, n in enumerate(names) if low in bare(n)), None)
        if hit is None:
            self.query_one("#home-hint", Static).update(Text(f"No board named like {text!r}.", f"bold {WARN}"))
            return False
        t.move_cursor(row=hit, animate=False)
        self.query_one("#home-hint", Static).update(f"Board {printable(names[hit])} · Enter: open its sheet")
        return True

    def action_jump(self) -> None:
        from .dialogs import AskText

        self.app.push_screen(
            AskText("Go to the board whose name begins with (or contains):", required=False),
            lambda text: self._go_to(text) if text else None,
        )

    def action_first(self) -> None:
        self.query_one(DataTable).move_cursor(row=0, animate=False)

    def action_last(self) -> None:
        t = self.query_one(DataTable)
        t.move_cursor(row=max(0, t.row_count - 1), animate=False)

    def on_data_table_row_selected(self, event: DataTable.RowSelected) -> None:
        self.action_open()

    def action_open(self) -> None:
        bid = self._selected()
        if bid is None:
            self.notify("No board selected: press n to create one.")
            return
        if not self._opening:  # opened by the palette or a test's action, not by the Enter key
            self._opening = True
            self.app.typed_ahead = []
        self.post_message(OpenSheet(bid))

    def action_new_board(self) -> None:
        self.app.push_screen(BoardForm(self.app.site_id), lambda bid: self.reload())

    def action_edit_board(self) -> None:
        bid = self._selected()
        if bid:
            self.app.push_screen(BoardForm(self.app.site_id, bid), lambda _: self.reload())

    def action_history(self) -> None:
        bid = self._selected()
        if bid:
            self.post_message(OpenHistory(bid))

    def action_round(self) -> None:
        app = self.app
        if app.round_id:
            read = rounds.boards_read_in_round(app.db, app.round_id)
            unread = [b["name"] for b in sites.list_boards(app.db, app.site_id) if b["id"] not in read]
            if unread:
                from .dialogs import Ask

                shown = ", ".join(printable(n) for n in unread[:12]) + (
                    f" and {len(unread) - 12} more" if len(unread) > 12 else ""
                )
                self.app.push_screen(
                    Ask(f"{len(unread)} board(s) NOT read in this round: {shown}.\nFinish the round anyway? (y/n)"),
                    lambda yes: (
                        self._round(True) if yes else self.notify("Round still open: the unread boards show 'to do'.")
                    ),
                )
                return
        self._round()

    def _round(self, confirmed: bool = False) -> None:
        app = self.app
        try:
            if app.round_id:
                rounds.finish_round(app.db, app.round_id)
                done, total = rounds.round_progress(app.db, app.round_id)
                app.round_id = None
                self.notify(f"Round finished: {done} of {total} boards read.")
            else:
                self._ask_round_name()
                return
        except StorageError as e:
            self.notify(
                f"NOT SAVED: the round was not {'finished' if app.round_id else 'started'}: {e}",
                severity="error",
                timeout=12,
            )
        self.reload()

    def _ask_round_name(self) -> None:
        """A new round's name or purpose; Enter alone gives it the suggested "Round N — date time"."""
        from .dialogs import AskText

        app = self.app
        if app.db.read_only:  # say so now, not after a name has been typed
            self.notify(
                f"NOT SAVED: the round was not started: the database is read-only ({app.db.read_only_reason})",
                severity="error",
                timeout=12,
            )
            return
        suggested = rounds.default_label(app.db, app.site_id)

        def named(text) -> None:
            if text is None:
                return
            try:
                app.round_id = rounds.start_round(app.db, app.site_id, app.technician, label=text or suggested)
                self.notify(f"Round started: {printable(text or suggested)}. Readings saved now belong to it.")
            except StorageError as e:
                self.notify(f"NOT SAVED: the round was not started: {e}", severity="error", timeout=12)
            self.reload()

        app.push_screen(
            AskText(
                f"Start a round: type its name or purpose.\nEnter alone calls it: {markup_safe(suggested)}",
                placeholder=suggested,
                required=False,
            ),
            named,
        )

    def action_sites(self) -> None:
        def chosen(sid):
            if sid:
                self.app.site_id = sid
                self.app.round_id = None
                self.reload()

        self.app.push_screen(SitePicker(), chosen)

    def action_review(self) -> None:
        self.post_message(OpenDayReview())

    def action_help(self) -> None:
        from .dialogs import help_page

        self.app.push_screen(help_page())
