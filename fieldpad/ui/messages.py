"""Requests from one screen to open another.  Screens never import each other: they post one of these,
it bubbles up to the app, and the app (``FieldpadApp``) pushes the screen asked for."""

from __future__ import annotations

from textual.message import Message


class OpenSheet(Message):
    """Open a board's reading sheet (``correcting``: the reading id a correction starts from)."""

    def __init__(self, board_id: str, correcting: str | None = None) -> None:
        super().__init__()
        self.board_id = board_id
        self.correcting = correcting


class OpenHistory(Message):
    """Open a board's history of readings."""

    def __init__(self, board_id: str) -> None:
        super().__init__()
        self.board_id = board_id


class OpenDayReview(Message):
    """Open the day review of the current site."""
