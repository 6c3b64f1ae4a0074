"""Parts of the scripting commands that are not argument parsing (which lives in ``fieldpad/cli.py``)."""
