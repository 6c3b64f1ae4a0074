"""A board's history: its readings (current versions), each one's versions, correct and void."""

from __future__ import annotations

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.screen import Screen
from textual.widgets import DataTable, Static

from ..report.export import analyze_rows
from ..storage import sites, versions
from ..storage.db import StorageError
from ..storage.ids import local_text
from .corrections import worst_before
from .dialogs import AskReason, AskText, TextPage
from .key_strip import KeyStrip
from .messages import OpenSheet
from .results_view import finding_words
from .safe import printable, short_id
from .sheet_model import field_words
from .tables import selected_key


class BoardHistory(Screen):
    BINDINGS = [
        Binding("enter", "versions", "Versions"),
        Binding("c", "correct", "Correct"),
        Binding("x", "void", "Void"),
        Binding("s", "settle", "Settle conflict"),
        Binding("escape", "back", "Back"),
    ]

    def __init__(self, board_id: str) -> None:
        super().__init__()
        self.board_id = board_id

    def compose(self) -> ComposeResult:
        yield Static(id="history-title")
        yield DataTable(id="history", cursor_type="row", zebra_stripes=True)
        yield Static(
            "Enter: all versions · c: correct · x: void (both keep the old version) · s: settle a conflict",
            id="history-hint",
        )
        yield KeyStrip()

    def on_mount(self) -> None:
        board = sites.get_board(self.app.db, self.board_id)
        self.site = sites.get_site(self.app.db, board["site_id"])
        self.query_one("#history-title", Static).update(
            Text(f"History of {printable(board['name'])} (last 50 readings, newest first)", "bold")
        )
        table = self.query_one(DataTable)
        # The worst finding (or VOID and its reason) early: in view at 80 columns; who saved it last.
        table.add_columns("taken", "id", "ver", "worst finding", "VUF %", "NEMA %", "rot", "by")
        table.focus()  # the rows are filled when the screen becomes current (on_screen_resume)

    def reload(self) -> None:
        table = self.query_one(DataTable)
        keep = self._selected()  # the cursor stays on its reading (a popup closed, a void done)
        table.clear()
        rows = versions.board_history(self.app.db, self.board_id, 50)
        self.rows = {r["reading_id"]: r for r in rows}
        results = analyze_rows(
            [
                {**r, "thresholds_json": self.site["thresholds_json"], "phase_labels": self.site["phase_labels"]}
                for r in rows
            ]
        )
        competing = versions.conflicts(self.app.db, {r["reading_id"] for r in rows})
        was = worst_before(
            self.app.db,
            self.site,
            [
                {
                    "reading_id": r["reading_id"],
                    "version": r["version"],
                    "version_id": r["id"],
                    "findings": res["findings"],
                }
                for r, res in zip(rows, results)
            ],
        )
        for r, res in zip(rows, results):
            worst = res["findings"][0] if res["findings"] else None
            worst_text = finding_words(worst) if worst else ""
            if r["reading_id"] in was:  # corrected: what an earlier version showed, worse than now
                worst_text = f"✎ was {finding_words(was[r['reading_id']], phase=False)} " + worst_text
            if r["void"]:
                worst_text = "VOID: " + printable(r["reason"])
            if r["reading_id"] in competing:  # two laptops changed the same version
                worst_text = "⚠ CONFLICT (Enter: versions) " + worst_text
            table.add_row(
                local_text(r["taken_at"]),
                short_id(r["reading_id"]),
                str(r["version"]),
                worst_text,
                _f(res["vuf_pct"]),
                _f(res["lvur_pct"]),
                res["rotation"] or "",
                printable(r["technician"]),
                key=r["reading_id"],
            )
        keys = [r["reading_id"] for r in rows]
        if keep in keys:
            table.move_cursor(row=keys.index(keep), animate=False)

    def _selected(self) -> str | None:
        return selected_key(self.query_one(DataTable))

    def on_data_table_row_selected(self, event: DataTable.RowSelected) -> None:
        self.action_versions()

    def action_versions(self) -> None:
        rid = self._selected()
        if not rid:
            return
        t = Text()
        every = versions.history(self.app.db, rid)
        forked = sum(x["is_head"] for x in every) > 1
        for v in every:
            t.append(
                f"version {v['version']}  recorded {local_text(v['recorded_at'], '%Y-%m-%d %H:%M:%S')}"
                f" by {printable(v['recorded_by']) or '—'}"
                + (" ⚠ competing" + (" (shown)" if v["is_current"] else "") if v["is_head"] and forked else "")
                + "\n",
                "bold",
            )
            if v["reason"]:
                t.append(f"  {'VOID' if v['void'] else 'reason'}: {printable(v['reason'])}\n")
            labels = sites.site_labels(self.site)
            t.append(
                "  "
                + ", ".join(f"{field_words(k, labels)} {printable(val)}" for k, val in versions.inputs_of(v).items())
                + "\n\n"
            )
        self.app.push_screen(TextPage(t, "Every version of this reading (nothing is overwritten)"))

    def action_correct(self) -> None:
        rid = self._selected()
        if rid:
            self.post_message(OpenSheet(self.board_id, correcting=rid))

    def action_void(self) -> None:
        rid = self._selected()
        if rid:
            r = self.rows.get(rid, {})
            what = (
                f"the reading of {local_text(r.get('taken_at'))} by {printable(r.get('technician')) or '—'} "
                f"(reading {short_id(rid)}, version {r.get('version')})"
            )
            self.app.push_screen(
                AskReason(f"Void {what}? Why? (it stays in the history)"), lambda reason: self._void(rid, reason)
            )

    def _void(self, rid: str, reason: str | None) -> None:
        if reason:
            try:
                versions.void_reading(self.app.db, rid, reason=reason, by=self.app.technician)
            except StorageError as e:
                self.notify(f"NOT SAVED: the reading was not voided: {e}", severity="error", timeout=12)
                return
            self.reload()
            self.notify(f"Reading {short_id(rid)} marked void; every version is kept.")

    def action_settle(self) -> None:
        """Competing versions (two laptops changed the same one): the supervisor picks the one that stands."""
        rid = self._selected()
        if not rid:
            return
        tops = versions.heads(self.app.db, rid)
        if len(tops) < 2:
            self.notify("This reading has no competing versions: nothing to settle.")
            return
        lines = "\n".join(
            f"{k}: v{v['version']} {local_text(v['recorded_at'])} by {printable(v['recorded_by']) or '—'}"
            + (" VOID" if v["void"] else "")
            + f" — {printable(v['reason']) or ''}"
            for k, v in enumerate(tops, 1)
        )

        def chosen(answer: str | None) -> None:
            if answer is None:
                return
            if not answer.isdigit() or not 1 <= int(answer) <= len(tops):
                self.notify(f"Give a number from 1 to {len(tops)}.", severity="warning")
                return
            keep = tops[int(answer) - 1]["id"]
            self.app.push_screen(
                AskReason("Why does this version stand? (every version is kept)"),
                lambda reason: self._settle(rid, keep, reason),
            )

        self.app.push_screen(
            AskText(f"Competing versions of this reading:\n{lines}\nWhich one stands? (number)"), chosen
        )

    def _settle(self, rid: str, keep: str, reason: str | None) -> None:
        if reason:
            try:
                versions.settle_reading(self.app.db, rid, keep, reason=reason, by=self.app.technician)
            except StorageError as e:
                self.notify(f"NOT SAVED: the conflict was not settled: {e}", severity="error", timeout=12)
                return
            self.reload()
            self.notify("Conflict settled with a new version; every version is kept.")

    def on_screen_resume(self) -> None:
        self.reload()

    def action_back(self) -> None:
        self.app.pop_screen()


def _f(x):
    return "" if x is None else f"{x:.2f}"
