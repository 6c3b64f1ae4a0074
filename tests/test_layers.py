"""The computation layer imports no UI, terminal or database module."""
import pkgutil
import subprocess
import sys

import fieldpad.core


def test_core_is_pure():
    mods = [f"fieldpad.core.{m.name}" for m in pkgutil.iter_modules(fieldpad.core.__path__)]
    assert "fieldpad.core.analysis" in mods
    code = (
        "import sys\n"
        + "".join(f"import {m}\n" for m in mods)
        + "bad = [m for m in ('textual', 'rich', 'sqlite3', 'sqlite_utils') if m in sys.modules]\n"
        + "print(','.join(bad))\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""
