"""Helpers shared by the screens that list things in a DataTable."""

from __future__ import annotations

from textual.widgets import DataTable


def selected_key(table: DataTable) -> str | None:
    """The row key under the cursor, or None when the table is empty."""
    if table.row_count == 0:
        return None
    return table.coordinate_to_cell_key(table.cursor_coordinate).row_key.value
