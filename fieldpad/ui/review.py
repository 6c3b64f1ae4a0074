"""The supervisor's screens: the day review and the round comparison (their dialogs: ``review_dialogs.py``)."""

from __future__ import annotations

from datetime import date, timedelta

from rich.text import Text
from textual.app import ComposeResult
from textual.binding import Binding
from textual.screen import Screen
from textual.widgets import DataTable, Static

from ..report.export import day_range_utc, export_records
from ..storage import rounds, signoffs, sites, versions
from ..storage.db import StorageError
from ..storage.ids import local_text
from .corrections import SEVERITY_RANK, worst_before
from .dialogs import AskText, TextPage
from .key_strip import KeyStrip
from .palette import ALARM, INFO, WARN
from .results_view import finding_words, findings_text, results_text
from .review_dialogs import ExportDialog, SignOffScope
from .safe import printable
from .sheet_model import field_words
from .tables import selected_key

SORTS = ("time", "board", "worst finding", "VUF", "NEMA")


def worst(rec) -> str | None:
    return rec["findings"][0]["severity"] if rec["findings"] else None


def _f(x, fmt="{:.2f}"):
    return "" if x is None else fmt.format(x)


class DayReview(Screen):
    BINDINGS = [
        Binding("f", "findings_only", "Findings only"),
        Binding("s", "sign_off", "Sign off"),
        Binding("b", "filter_board", "Board"),
        Binding("t", "filter_tech", "Technician"),
        Binding("o", "sort", "Sort"),
        Binding("left_square_bracket", "day(-1)", "Prev day"),
        Binding("right_square_bracket", "day(1)", "Next day"),
        Binding("c", "compare", "Compare rounds"),
        Binding("x", "export", "Export"),
        Binding("f1", "help", "Help"),
        Binding("escape", "back", "Back"),
    ]
    #: Kept on the key strip at 80 columns with back/quit/save/help (ui/key_strip.py).
    STRIP_KEEP = ("Compare rounds", "Export")

    def __init__(self) -> None:
        super().__init__()
        self.findings_only = False
        self.board_filter = ""
        self.tech_filter = ""
        self.sort = 0
        self.records: list = []
        self.signoffs: list = []
        self.late: dict = {}  # reading_id -> the sign-off a later version of it came after

    def compose(self) -> ComposeResult:
        yield Static(id="review-title")
        yield DataTable(id="review", cursor_type="row", zebra_stripes=True)
        yield Static(id="review-signoff")
        yield Static(id="review-hint")
        yield KeyStrip()

    def on_mount(self) -> None:
        days = versions.reading_days(self.app.db, self.app.site_id)
        self.day = date.fromisoformat(days[0]) if days else date.today()
        t = self.query_one(DataTable)
        # The worst finding, in words, beside the board: in view at 80 columns (who and which round last).
        t.add_columns("time", "board", "worst finding", "VUF%", "NEMA%", "rot", "IN A", "by", "rnd")
        self.reload()
        t.focus()

    def reload(self) -> None:
        site = sites.get_site(self.app.db, self.app.site_id)
        self.records = export_records(self.app.db, day=self.day.isoformat(), site_id=site["id"])
        shown = [
            r
            for r in self.records
            if (not self.findings_only or r["findings"])
            and (not self.board_filter or self.board_filter.lower() in (r["board"] or "").lower())
            and (not self.tech_filter or self.tech_filter.lower() in (r["technician"] or "").lower())
        ]
        key = SORTS[self.sort]
        if key == "board":
            shown.sort(key=lambda r: (r["board"], r["taken_at"]))
        elif key == "worst finding":
            shown.sort(key=lambda r: (SEVERITY_RANK[worst(r)], r["taken_at"]))
        elif key in ("VUF", "NEMA"):
            f = "vuf_pct" if key == "VUF" else "lvur_pct"
            shown.sort(key=lambda r: -(r["results"][f] if r["results"][f] is not None else -1))
        else:
            shown.sort(key=lambda r: r["taken_at"])
        self._load_signoffs(site)
        was = worst_before(self.app.db, site, shown)
        t = self.query_one(DataTable)
        t.clear()
        for r in shown:
            res = r["results"]
            w = r["findings"][0] if r["findings"] else None
            taken = local_text(r["taken_at"], "%H:%M")
            cell = (
                Text(
                    finding_words(w, phase=False),
                    f"bold {ALARM}" if w["severity"] == "alarm" else WARN if w["severity"] == "warning" else INFO,
                )
                if w
                else Text("")
            )
            if r["reading_id"] in was:  # corrected: what an earlier version of it showed, worse than now
                cell = Text(f"✎ was {finding_words(was[r['reading_id']], phase=False)} ", f"bold {WARN}") + cell
            if r.get("conflict"):  # two laptops changed the same version: for the supervisor to settle
                cell = Text("⚠ CONFLICT ", f"bold {ALARM}") + cell
            t.add_row(
                Text(taken + "*", f"bold {WARN}") if r["reading_id"] in self.late else taken,
                printable(r["board"]),
                cell,
                _f(res["vuf_pct"]),
                _f(res["lvur_pct"]),
                res["rotation"] or "",
                _f(_neutral(r), "{:.0f}"),
                printable(r["technician"])[:14],
                _short(printable(r["round"]), 12),
                key=r["reading_id"],
            )
        filters = []
        if self.findings_only:
            filters.append("findings only")
        if self.board_filter:
            filters.append(f"board ~ {printable(self.board_filter)}")
        if self.tech_filter:
            filters.append(f"by ~ {printable(self.tech_filter)}")
        title = Text(
            f"Day review {self.day.isoformat()} · {printable(site['name'])} · {len(shown)} of "
            f"{len(self.records)} readings · sorted by {key}",
            "bold",
        )
        if filters:
            title.append(" · " + ", ".join(filters))
        self.query_one("#review-title", Static).update(title)
        self.query_one("#review-signoff", Static).update(self._signoff_line())
        self.query_one("#review-hint", Static).update(
            "Enter: in full · [ ]: day · s: sign off · c: compare · x: export · F1: help"
            if self.records
            else "No readings on this day: [ and ] change the day."
        )

    def _load_signoffs(self, site) -> None:
        """The sign-offs of this day and its rounds, and which readings changed after one of them."""
        start, end = day_range_utc(self.day.isoformat())
        self.signoffs = signoffs.signoffs_for_range(self.app.db, site["id"], start, end)
        self.late = {}
        if not self.signoffs:
            return
        for row in versions.current_readings(self.app.db, day_start_utc=start, day_end_utc=end, site_id=site["id"]):
            for v in versions.history(self.app.db, row["reading_id"]) if row["version"] > 1 else [row]:
                so = signoffs.signed_before(
                    self.signoffs,
                    site_id=site["id"],
                    round_id=row["round_id"],
                    taken_at=v["taken_at"],
                    recorded_at=v["recorded_at"],
                )
                if so:
                    self.late[row["reading_id"]] = so
                    break

    def _signoff_line(self) -> Text:
        if not self.signoffs:
            return Text("Not signed off · s: sign off the day or a round", WARN)
        t = Text("Signed off: ", "bold")
        t.append(
            " · ".join(
                f"{printable(signoffs.scope_text(so))} by {printable(so['signed_by'])} "
                f"{local_text(so['signed_at'], '%m-%d %H:%M')}"
                for so in self.signoffs
            )
        )
        if self.late:
            t.append(f"  * {len(self.late)} changed after sign-off", f"bold {WARN}")
        return t

    def _selected(self):
        rid = selected_key(self.query_one(DataTable))
        return next((r for r in self.records if r["reading_id"] == rid), None)

    def on_data_table_row_selected(self, event: DataTable.RowSelected) -> None:
        rec = self._selected()
        if rec is None:
            return
        t = Text()
        t.append(
            f"{printable(rec['board'])} · {local_text(rec['taken_at'], '%Y-%m-%d %H:%M')} · "
            f"{printable(rec['technician'])} · version {rec['version']}\n\n",
            "bold",
        )
        labels = sites.site_labels(sites.get_site(self.app.db, self.app.site_id))
        t.append(
            "Entered: "
            + ", ".join(
                f"{field_words(k, labels)} {v:g}" + ("°" if k.endswith("_deg") else "")
                for k, v in rec["inputs"].items()
                if isinstance(v, float)
            )
            + "\n\n"
        )
        t.append_text(
            results_text(
                rec["results"],
                rec["inputs"].get("system") or "wye",
                labels,
                {k: str(v) for k, v in rec["inputs"].items() if v is not None},
            )
        )
        t.append("\n")
        t.append_text(findings_text(rec["findings"], detail=True))
        t.append("\nVersions:\n", "bold")
        site = sites.get_site(self.app.db, self.app.site_id)
        for v in versions.history(self.app.db, rec["reading_id"]):
            t.append(
                f"  v{v['version']} {local_text(v['recorded_at'])} by {printable(v['recorded_by']) or '—'}"
                + (f": {printable(v['reason'])}" if v["reason"] else "")
                + (
                    " ⚠ competing" + (" (shown)" if v["is_current"] else "")
                    if v["is_head"] and rec.get("conflict")
                    else ""
                )
            )
            so = signoffs.signed_before(
                self.signoffs,
                site_id=site["id"],
                round_id=v["round_id"],
                taken_at=v["taken_at"],
                recorded_at=v["recorded_at"],
            )
            if so:
                t.append(
                    f" — {'corrected' if v['version'] > 1 else 'added'} after sign-off "
                    f"({printable(signoffs.describe(so))})",
                    f"bold {WARN}",
                )
            t.append("\n")
        if rec.get("conflict"):
            t.append(
                "⚠ CONFLICT: two laptops changed the same version. Settle with a new version: fieldpad settle "
                f"{rec['reading_id']} VERSION_ID --reason TEXT\n",
                f"bold {ALARM}",
            )
        if rec["round"]:
            t.append(f"\nRound: {printable(rec['round'])}\n")
        self.app.push_screen(TextPage(t, "Reading in full"))

    def action_findings_only(self) -> None:
        self.findings_only = not self.findings_only
        self.reload()

    def action_filter_board(self) -> None:
        self._ask_filter("board_filter", "boards whose name")

    def action_filter_tech(self) -> None:
        self._ask_filter("tech_filter", "technicians whose name")

    def _ask_filter(self, attr: str, what: str) -> None:
        def done(text) -> None:
            if text is not None:
                setattr(self, attr, text)
                self.reload()

        self.app.push_screen(
            AskText(f"Show only {what} contains (empty = all):", required=False, value=getattr(self, attr)), done
        )

    def action_sort(self) -> None:
        self.sort = (self.sort + 1) % len(SORTS)
        self.reload()

    def action_day(self, step: int) -> None:
        self.day += timedelta(days=step)
        self.reload()

    def action_sign_off(self) -> None:
        """Sign off the day or one of its rounds: what, then who (the app's technician suggested), then a note."""
        if self.app.db.read_only:
            self.notify(
                f"NOT SAVED: the database is read-only ({self.app.db.read_only_reason})", severity="error", timeout=12
            )
            return
        site = sites.get_site(self.app.db, self.app.site_id)
        start, end = day_range_utc(self.day.isoformat())
        choices = [("the whole day " + self.day.isoformat(), {"day": self.day.isoformat()})]
        choices += [
            (f"round “{rounds.round_name(r)}”", {"round_id": r["id"]})
            for r in rounds.rounds_of_day(self.app.db, site["id"], start, end)
        ][:9]

        def chosen(pick) -> None:
            if pick is None:
                return
            what, scope = choices[pick]

            suggested = self.app.technician or ""

            def named(name) -> None:
                if name is None:
                    return
                name = name or suggested  # Enter alone: the suggested name; typing replaces it

                def noted(note) -> None:
                    if note is None:
                        return
                    try:
                        signoffs.sign_off(self.app.db, site["id"], by=name, note=note or None, **scope)
                    except StorageError as e:
                        self.notify(f"NOT SAVED: the sign-off was not recorded: {e}", severity="error", timeout=12)
                        return
                    self.notify(f"Signed off {what} by {printable(name)}.")
                    self.reload()

                self.app.push_screen(
                    AskText(f"Sign off {what}: a note (optional, Enter to sign):", required=False), noted
                )

            self.app.push_screen(
                AskText(
                    f"Sign off {what}. Signed by (type your name"
                    + (f"; Enter alone signs as {printable(suggested)}):" if suggested else "):"),
                    suggested or "name (required)",
                    required=not suggested,
                ),
                named,
            )

        self.app.push_screen(SignOffScope([c[0] for c in choices]), chosen)

    def action_compare(self) -> None:
        self.app.push_screen(RoundCompare())

    def action_export(self) -> None:
        self.app.push_screen(ExportDialog(self.day.isoformat()))

    def action_help(self) -> None:
        from .dialogs import help_page

        self.app.push_screen(help_page())

    def action_back(self) -> None:
        self.app.pop_screen()


def _short(text: str, width: int) -> str:
    return text if len(text) <= width else text[: width - 1] + "…"


#: A change between rounds worth a look (common practice): percentage points of unbalance, amps of neutral.
DRIFT_PP = 0.5
DRIFT_NEUTRAL_RATIO = 0.25
DRIFT_NEUTRAL_MIN_A = 5.0


class RoundCompare(Screen):
    """The same boards in two rounds, changes marked, so a drifting board stands out."""

    BINDINGS = [
        Binding("a", "cycle(0)", "Round A"),
        Binding("b", "cycle(1)", "Round B"),
        Binding("escape", "back", "Back"),
    ]

    def compose(self) -> ComposeResult:
        yield Static(id="compare-title")
        yield DataTable(id="compare", cursor_type="row", zebra_stripes=True)
        yield Static("▲ worth a look: unbalance ±0.5 pt, neutral ±25 % (≥5 A), rotation, new alarm", id="compare-hint")
        yield KeyStrip()

    def on_mount(self) -> None:
        self.rounds = rounds.list_rounds(self.app.db, self.app.site_id)  # newest first
        self.pick = [1, 0] if len(self.rounds) >= 2 else [0, 0]
        self.query_one(DataTable).add_columns("board", "VUF% A→B", "NEMA% A→B", "IN A→B", "rot A→B", "findings B")
        self.reload()
        self.query_one(DataTable).focus()

    def _label(self, r) -> str:
        return f"{printable(r['label']) or 'round'} {local_text(r['started_at'])}"

    def reload(self) -> None:
        t = self.query_one(DataTable)
        t.clear()
        if not self.rounds:
            self.query_one("#compare-title", Static).update("No rounds at this site yet.")
            return
        ra, rb = self.rounds[self.pick[0]], self.rounds[self.pick[1]]
        self.query_one("#compare-title", Static).update(
            Text(f"Compare A: {self._label(ra)}  with  B: {self._label(rb)}   (a / b: other rounds)", "bold")
        )
        latest = {}
        for side, r in (("a", ra), ("b", rb)):
            for rec in export_records(self.app.db, round_id=r["id"]):
                latest.setdefault(rec["board_id"], {})[side] = rec  # later readings of a round replace earlier
        for board_id in sorted(latest, key=lambda k: (next(iter(latest[k].values()))["board"], k)):
            a, b = latest[board_id].get("a"), latest[board_id].get("b")
            board = (a or b)["board"]
            cells, drift = [], False
            for key in ("vuf_pct", "lvur_pct"):
                va = a["results"][key] if a else None
                vb = b["results"][key] if b else None
                d = va is not None and vb is not None and abs(vb - va) > DRIFT_PP
                drift |= d
                cells.append(Text(_pair(_f(va), _f(vb)) + (" ▲" if d else ""), f"bold {WARN}" if d else ""))
            na = _neutral(a)
            nb = _neutral(b)
            d = (
                na is not None
                and nb is not None
                and abs(nb - na) > max(DRIFT_NEUTRAL_RATIO * max(na, nb), DRIFT_NEUTRAL_MIN_A)
            )
            drift |= d
            cells.append(
                Text(_pair(_f(na, "{:.0f}"), _f(nb, "{:.0f}")) + (" ▲" if d else ""), f"bold {WARN}" if d else "")
            )
            rot_a = a["results"]["rotation"] if a else None
            rot_b = b["results"]["rotation"] if b else None
            d = bool(rot_a and rot_b and rot_a != rot_b)
            cells.append(Text(f"{rot_a or '—'}→{rot_b or '—'}" + (" ▲" if d else ""), f"bold {ALARM}" if d else ""))
            alarms_a = {f["code"] for f in a["findings"] if f["severity"] == "alarm"} if a else set()
            alarms_b = {f["code"] for f in b["findings"] if f["severity"] == "alarm"} if b else set()
            new = alarms_b - alarms_a
            cells.append(
                Text(
                    ", ".join(sorted(new)) + " NEW ▲" if new else (worst(b) or "") if b else "not read",
                    f"bold {ALARM}" if new else "",
                )
            )
            t.add_row(Text(printable(board) + (" ▲" if drift or new else ""), "bold" if drift or new else ""), *cells)

    def action_cycle(self, which: int) -> None:
        if self.rounds:
            self.pick[which] = (self.pick[which] + 1) % len(self.rounds)
            self.reload()

    def action_back(self) -> None:
        self.app.pop_screen()


def _pair(a: str, b: str) -> str:
    return f"{a or '—'}→{b or '—'}" if (a or b) else "—"


def _neutral(rec):
    """Measured neutral if entered, else the phasor sum (unless a CT is reversed: then it is not known)."""
    if rec is None:
        return None
    if rec["inputs"].get("i_n") is not None:
        return rec["inputs"]["i_n"]
    if any(f["code"] == "CT_REVERSED" for f in rec["findings"]):
        return None
    return rec["results"]["i_n_calc"]
