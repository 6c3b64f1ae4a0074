"""fieldpad: switchboard and panelboard readings, checked on the spot and kept for the record."""

__version__ = "0.1.0"
