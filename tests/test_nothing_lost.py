"""Nothing saved is lost on one laptop: read-only and full file systems (real tmpfs mounts), backups and
exports that appear whole or not at all, commands that do not invent a database, messages that name the
real file and are safe on a terminal.

The mounts need root (CI runs as root); where mounting is refused the test says so and skips.
"""

import contextlib
import json
import os
import subprocess
import sys
import uuid
from pathlib import Path

import pytest
from cli_runner import run_cli
from conftest import BAL

from fieldpad.report.export import export_records
from fieldpad.storage import sites, versions
from fieldpad.storage.db import StorageError, WriteError, check_file, open_db


def cli(*args, stdin=None):
    return run_cli(*args, stdin=stdin)


@contextlib.contextmanager
def tmpfs(folder: Path, size: str):
    folder.mkdir(parents=True, exist_ok=True)
    r = subprocess.run(
        ["mount", "-t", "tmpfs", "-o", f"size={size}", "tmpfs", str(folder)], capture_output=True, text=True
    )
    if r.returncode != 0:
        pytest.skip(
            f"cannot mount a tmpfs here ({r.stderr.strip() or 'not root'}); "
            "the read-only and full file-system cases need it"
        )
    try:
        yield folder
    finally:
        subprocess.run(["umount", "-l", str(folder)], check=False)


def remount_ro(folder: Path):
    subprocess.run(["mount", "-o", "remount,ro", str(folder)], check=True)


def filled(path: Path, n=3) -> str:
    db = open_db(path)
    bid = sites.create_board(db, sites.create_site(db, "Tide Mill"), "DB-7")
    for _ in range(n):
        versions.save_reading(db, bid, BAL, technician="T")
    db.close()
    return bid


def fill_disk(folder: Path):
    with open(folder / "ballast", "wb") as f, contextlib.suppress(OSError):
        while True:
            f.write(b"\0" * 65536)
            f.flush()


# ---- not writable is not damaged ---------------------------------------------------------------------


@pytest.mark.parametrize("shm_left", [False, True], ids=["closed-cleanly", "wal-and-shm-left"])
def test_read_only_file_system_opens_for_reading_and_says_why(tmp_path, shm_left):
    with tmpfs(tmp_path / "stick", "4m") as stick:
        p = stick / "site.db"
        if shm_left:  # files copied while the app still had the database open: -wal and -shm beside it
            live = tmp_path / "live.db"
            bid = filled(live)
            keeper = open_db(live)
            versions.save_reading(keeper, bid, BAL)
            for side in ("", "-wal", "-shm"):
                (stick / f"site.db{side}").write_bytes(Path(f"{live}{side}").read_bytes())
            keeper.close()
        else:
            bid = filled(p)
        remount_ro(stick)
        db = open_db(p)
        assert db.read_only and "read-only file system" in db.read_only_reason
        assert len(export_records(db)) == (4 if shm_left else 3)
        with pytest.raises(WriteError, match="read-only"):
            versions.save_reading(db, bid, BAL)
        db.close()
        chk = cli("db", "check", "--db", str(p))
        assert chk.returncode == 0, chk.stdout + chk.stderr
        assert "healthy" in chk.stdout and "cannot be written" in chk.stdout
        assert "damaged or not" not in chk.stdout and "restore the" not in chk.stdout
        info = cli("db", "info", "--db", str(p))
        assert info.returncode == 0 and "writable: no (it is on a read-only file system" in info.stdout
        exp = cli("export", "--db", str(p), "--format", "csv")
        assert exp.returncode == 0 and len(exp.stdout.strip().splitlines()) == (5 if shm_left else 4)


def test_read_only_folder_is_not_damaged(tmp_path):
    # A folder where the -shm file cannot be created.  Root ignores permission bits, so the folder is a
    # read-only bind of a writable one: the same file, seen through a mount that refuses writes.
    src = tmp_path / "src"
    src.mkdir()
    filled(src / "site.db")
    ro = tmp_path / "ro"
    ro.mkdir()
    r = subprocess.run(["mount", "--bind", "-o", "ro", str(src), str(ro)], capture_output=True, text=True)
    if r.returncode != 0:
        pytest.skip(f"cannot bind-mount here ({r.stderr.strip()})")
    try:
        subprocess.run(["mount", "-o", "remount,bind,ro", str(ro)], check=True)
        db = open_db(ro / "site.db")
        assert db.read_only and len(export_records(db)) == 3
        db.close()
        assert check_file(ro / "site.db") == []
    finally:
        subprocess.run(["umount", "-l", str(ro)], check=False)


def test_full_file_system_keeps_what_is_saved_and_says_full(tmp_path):
    with tmpfs(tmp_path / "full", "2m") as disk:
        p = disk / "site.db"
        bid = filled(p, 3)
        db = open_db(p)
        fill_disk(disk)
        with pytest.raises(WriteError, match="full") as err:
            for _ in range(500):
                versions.save_reading(db, bid, BAL, note="z" * 4000)
        assert "NOT SAVED" not in str(err.value)  # the caller says what was not saved, once
        saved = db["reading"].count
        db.close()
        # Reopened on the full disk: readable, never "damaged".
        again = open_db(p)
        assert again["reading"].count == saved >= 3
        again.close()
        chk = cli("db", "check", "--db", str(p))
        assert chk.returncode == 0 and "damaged or not" not in chk.stdout, chk.stdout
        # A backup onto the full disk: refused, nothing under the name, no part file, and a retry says
        # the same thing (not "already exists").
        for _ in range(2):
            b = cli("db", "backup", str(disk / "copy.db"), "--db", str(p))
            assert b.returncode == 1 and "full" in b.stderr and "already exists" not in b.stderr, b.stderr
            assert not (disk / "copy.db").exists()
            assert not [n for n in os.listdir(disk) if n.endswith(".part")]
        os.unlink(disk / "ballast")
        assert cli("db", "backup", str(disk / "copy.db"), "--db", str(p)).returncode == 0
        assert check_file(disk / "copy.db") == []


# ---- backups and exports: whole or not at all --------------------------------------------------------


@pytest.mark.parametrize("content", [b"", b"hello, not a database\n" * 10], ids=["empty", "text"])
def test_db_check_never_calls_an_empty_or_foreign_file_ok(tmp_path, content):
    p = tmp_path / "backup.db"
    p.write_bytes(content)
    r = cli("db", "check", "--db", str(p))
    assert r.returncode == 1 and "ok" not in r.stdout.split(), r.stdout + r.stderr
    assert p.read_bytes() == content


def test_backup_is_checked_private_and_never_overwrites(tmp_path, db, board):
    from fieldpad.storage.db import backup

    versions.save_reading(db, board, BAL)
    dest = backup(db, tmp_path / "copy.db")
    assert check_file(dest) == [] and dest.stat().st_mode & 0o777 == 0o600
    with pytest.raises(StorageError, match="already exists"):
        backup(db, dest)
    assert not [n for n in os.listdir(tmp_path) if n.endswith(".part")]


def test_export_names_the_real_file_cleans_stale_parts_and_refuses_special_files(tmp_path, db, board):
    versions.save_reading(db, board, BAL)
    dbp = tmp_path / "field.db"
    stale = tmp_path / ".fp-999999999-dead.part"  # left by a killed run (no such process)
    stale.write_text("half")
    long_name = "e" * 245 + ".json"  # 250 bytes: a valid name, with room for no long temporary prefix
    r = cli("export", "--db", str(dbp), "--format", "json", "-o", str(tmp_path / long_name))
    assert r.returncode == 0, r.stderr
    assert len(json.loads((tmp_path / long_name).read_text())["readings"]) == 1
    assert not stale.exists()
    fifo = tmp_path / "pipe"
    os.mkfifo(fifo)
    r = cli("export", "--db", str(dbp), "--format", "csv", "-o", str(fifo))
    assert r.returncode == 1 and "not a regular file" in r.stderr and str(fifo) in r.stderr
    assert Path(fifo).is_fifo()
    r = cli("export", "--db", str(dbp), "--format", "csv", "-o", str(tmp_path / "no-such-dir" / "x.csv"))
    assert r.returncode == 1 and ".part" not in r.stderr and "x.csv" in r.stderr


def test_export_to_a_full_disk_names_the_final_file(tmp_path, db, board):
    versions.save_reading(db, board, BAL)
    with tmpfs(tmp_path / "full", "1m") as disk:
        fill_disk(disk)
        r = cli("export", "--db", str(tmp_path / "field.db"), "--format", "html", "-o", str(disk / "day.html"))
        assert r.returncode == 1 and "day.html" in r.stderr and ".part" not in r.stderr and "full" in r.stderr
        assert not os.path.exists(disk / "day.html")
        assert not [n for n in os.listdir(disk) if n.endswith(".part")]


# ---- commands do not invent a database; messages name the file and are terminal-safe -----------------


@pytest.mark.parametrize(
    "args", [["export", "--format", "csv"], ["db", "info"], ["db", "backup", "b.db"], ["db", "check"]]
)
def test_reading_commands_refuse_a_path_with_no_database(tmp_path, args):
    typo = tmp_path / "no" / "such" / "fieldpd.db"
    r = cli(*args, "--db", str(typo))
    assert r.returncode == 1 and "no database at" in r.stderr and str(typo) in r.stderr
    assert not (tmp_path / "no").exists()


def test_export_of_a_site_that_does_not_exist_is_an_error(tmp_path, db, board):
    versions.save_reading(db, board, BAL)
    r = cli("export", "--db", str(tmp_path / "field.db"), "--format", "csv", "--site", "North Cold Stor")
    assert r.returncode == 2 and r.stdout == ""
    assert "no site named 'North Cold Stor'" in r.stderr and "North Cold Store" in r.stderr


def test_compute_into_a_closed_pipe_is_quiet(tmp_path):
    recs = [dict(BAL) for _ in range(20000)]
    (tmp_path / "big.json").write_text(json.dumps(recs))
    r = subprocess.run(
        f"{sys.executable} -m fieldpad compute {tmp_path / 'big.json'} | head -c 10",
        shell=True,
        capture_output=True,
        text=True,
        timeout=120,
        executable="/bin/bash",
    )
    assert "Traceback" not in r.stderr and "Broken pipe" not in r.stderr, r.stderr[-500:]
    r = subprocess.run(
        f"set -o pipefail; {sys.executable} -m fieldpad compute {tmp_path / 'big.json'} | head -c 10 >/dev/null",
        shell=True,
        capture_output=True,
        text=True,
        timeout=120,
        executable="/bin/bash",
    )
    assert r.returncode == 0, r.stderr[-500:]


def test_merge_warnings_and_messages_are_terminal_safe(tmp_path):
    evil = "MDB\x1b]52;c;cm0gLXJmIH4=\x07-1\u202e\x9b31m"
    a, b = tmp_path / "a.db", tmp_path / "b.db"
    for p in (a, b):
        d = open_db(p)
        sites.create_board(d, sites.create_site(d, "Quay", site_id="01900000-0000-7000-8000-0000000000aa"), evil)
        d.close()
    r = cli("merge", str(b), "--db", str(a))
    assert r.returncode == 0, r.stderr
    for ch in ("\x1b", "\x07", "\u202e", "\x9b"):
        assert ch not in r.stderr and ch not in r.stdout
    assert "warning: board" in r.stderr
    bad = tmp_path / "bad.csv"
    bad.write_text("site,board,taken_at,v\x1b[2Ja\n")
    r = cli("import", str(bad), "--db", str(a))
    assert r.returncode == 2 and "\x1b" not in r.stderr


def test_open_does_not_create_a_stray_file_for_a_missing_folder_with_create_false(tmp_path):
    with pytest.raises(StorageError, match="no database at"):
        open_db(tmp_path / f"{uuid.uuid4()}" / "x.db", create=False)
    assert os.listdir(tmp_path) == []


@pytest.mark.parametrize("name", ["laptop #2.db", "what?.db", "100%25.db"])
def test_merge_reads_the_other_file_only_and_takes_any_name(tmp_path, name):
    main, other = tmp_path / "main.db", tmp_path / name
    filled(main, 1)
    filled(other, 2)
    keeper = open_db(other)  # the other laptop's app still has it open: its -wal exists
    versions.save_reading(keeper, sites.list_boards(keeper, sites.list_sites(keeper)[0]["id"])[0]["id"], BAL)
    before = {side: Path(f"{other}{side}").read_bytes() for side in ("", "-wal")}
    r = cli("merge", str(other), "--db", str(main))
    assert r.returncode == 0, r.stderr
    assert "added" in r.stdout and "3 reading(s)" in r.stdout
    after = {side: Path(f"{other}{side}").read_bytes() for side in ("", "-wal")}
    assert after == before  # not checkpointed, not grown: merge wrote nothing to it
    keeper.close()
    assert sorted(os.listdir(tmp_path)) == sorted(["main.db", name])


def test_merge_into_itself_is_refused_at_once(tmp_path):
    p = tmp_path / "self.db"
    filled(p, 1)
    r = cli("merge", str(p), "--db", str(p))
    assert r.returncode == 1 and "the database being merged into" in r.stderr


@pytest.mark.parametrize("fmt", ["csv", "json"])
def test_every_note_the_app_stores_imports_back_from_its_export(tmp_path, fmt):
    from test_robustness import HOSTILE

    src = tmp_path / "src.db"
    d = open_db(src)
    bid = sites.create_board(d, sites.create_site(d, "Hostile\x1b[2J Yard"), "DB\u202e-1")
    for note in HOSTILE + ["line one\nline two", "\x9b31m C1", "\ttab first", "'quoted' by hand?"]:
        versions.save_reading(d, bid, BAL, note=note, technician="T\x07")
    notes = sorted(r["note"] for r in d.query("SELECT note FROM reading"))
    d.close()
    out = tmp_path / f"day.{fmt}"
    assert cli("export", "--db", str(src), "--format", fmt, "-o", str(out)).returncode == 0
    dst = tmp_path / "dst.db"
    r = cli("import", str(out), "--db", str(dst))
    assert r.returncode == 0, r.stderr
    d = open_db(dst)
    assert sorted(r["note"] for r in d.query("SELECT note FROM reading")) == notes
    assert {r["name"] for r in d.query("SELECT name FROM site")} == {"Hostile\x1b[2J Yard"}
    d.close()


def test_json_constants_and_duplicate_keys_name_the_record_and_field(tmp_path):
    data = '[{"va": 277, "vb": 277, "vc": 277}, {"va": NaN, "vb": 277, "vb": 270, "vc": -Infinity}]'
    r = cli("compute", stdin=data)
    assert r.returncode == 2 and r.stdout == ""
    lines = r.stderr.splitlines()
    assert "record 2: va: NaN is not allowed in JSON readings (not a finite number)" in lines
    assert "record 2: vb: is given twice in this record; give it once" in lines
    assert "record 2: vc: -Infinity is not allowed in JSON readings (not a finite number)" in lines
    assert not any(line.startswith("record 1") for line in lines)


@pytest.mark.parametrize(
    "taken_at, why", [("2026-03-29T02:30:00", "does not exist"), ("2026-10-25T02:30:00", "happened twice")]
)
def test_local_times_that_a_clock_change_makes_unclear_are_refused(tmp_path, taken_at, why):
    # Europe/Berlin: clocks forward 2026-03-29 02:00 -> 03:00, back 2026-10-25 03:00 -> 02:00 (EU summer-time
    # rule, Directive 2000/84/EC art. 2-3: last Sunday of March and of October at 01:00 UTC).
    f = tmp_path / "r.csv"
    f.write_text(f"site,board,taken_at,va,vb,vc\nS,B,{taken_at},277,277,277\n")
    db = tmp_path / "x.db"
    r = subprocess.run(
        [sys.executable, "-m", "fieldpad", "import", str(f), "--db", str(db)],
        capture_output=True,
        text=True,
        timeout=120,
        env={**os.environ, "TZ": "Europe/Berlin"},
    )
    assert r.returncode == 2 and f"line 2: taken_at: '{taken_at}' {why}" in r.stderr, r.stderr
    ok = f.read_text().replace(taken_at, taken_at + "+01:00")
    f.write_text(ok)
    r = subprocess.run(
        [sys.executable, "-m", "fieldpad", "import", str(f), "--db", str(db)],
        capture_output=True,
        text=True,
        timeout=120,
        env={**os.environ, "TZ": "Europe/Berlin"},
    )
    assert r.returncode == 0, r.stderr


def test_export_and_backup_never_write_over_a_database_or_its_files(tmp_path):
    p = tmp_path / "y.db"
    filled(p, 3)
    other = tmp_path / "other.db"
    filled(other, 1)
    before = p.read_bytes()
    for target in (p, Path(f"{p}-wal"), Path(f"{p}-shm"), Path(f"{p}-journal"), other):
        r = cli("export", "--format", "csv", "-o", target, "--db", p)
        assert r.returncode == 1 and str(target) in r.stderr, (target, r.stderr)
        assert "database" in r.stderr or "SQLite" in r.stderr
    for target in (Path(f"{p}-journal"), Path(f"{p}-wal"), p):
        r = cli("db", "backup", target, "--db", p)
        assert r.returncode == 1 and "backup not written" in r.stderr, (target, r.stderr)
    assert p.read_bytes() == before and check_file(other) == []
    assert not Path(f"{p}-journal").exists()
    d = open_db(p)
    assert d["reading"].count == 3
    d.close()
    fifo = tmp_path / "fifo"
    os.mkfifo(fifo)
    r = cli("db", "backup", fifo, "--db", p)
    assert r.returncode == 1 and "not a regular file" in r.stderr and "'-'" not in r.stderr


def test_messages_show_control_characters_as_visible_escapes(tmp_path, db, board):
    versions.save_reading(db, board, BAL)
    r = cli("export", "--db", tmp_path / "field.db", "--format", "csv", "--site", "Yard\x1b]52;c;eA==\x07\u202e")
    assert r.returncode == 2
    assert "\x1b" not in r.stderr and "\\x1b]52;c;eA==\\x07\\u202e" in r.stderr
