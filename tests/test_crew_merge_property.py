"""Property: random histories on three laptops (new readings and boards, corrections, voids, renames, label
edits, joins of two boards, settled conflicts, rounds started and finished, merges of each other's files along
the way), merged in every order and repeatedly, give databases identical by content, and no version of
anything is lost.  Real database files, as the laptops keep them."""

import itertools
import json
import shutil

from conftest import BAL
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from fieldpad.storage import rounds, settings_history, sites, versions
from fieldpad.storage.db import check, open_db
from fieldpad.storage.merge import merge_file

#: Everything a laptop records and shares (drafts are a laptop's own and are not merged).
SHARED = ("site", "board", "round", "reading", "setting_version", "id_join", "version_parent")


def content(db) -> dict:
    out = {t: sorted(json.dumps(r, sort_keys=True) for r in db[t].rows) for t in SHARED}
    out["current"] = sorted(r["id"] for r in db.query("SELECT id FROM reading_current"))
    out["conflicts"] = sorted(versions.conflicts(db))
    return out


def ids(db) -> set:
    return {
        (t, r[0])
        for t in ("reading", "setting_version", "id_join", "version_parent")
        for r in db.conn.execute(f"SELECT id FROM {t}")
    }


OPS = st.lists(
    st.one_of(
        st.tuples(st.just("save"), st.integers(0, 5), st.integers(200, 300)),
        st.tuples(st.just("correct"), st.integers(0, 5), st.integers(200, 300)),
        st.tuples(st.just("void"), st.integers(0, 5), st.just(0)),
        st.tuples(st.just("rename"), st.integers(0, 5), st.integers(0, 3)),
        st.tuples(st.just("label"), st.integers(0, 5), st.integers(0, 4)),
        st.tuples(st.just("board"), st.integers(0, 5), st.just(0)),
        st.tuples(st.just("pull"), st.integers(0, 2), st.just(0)),
        st.tuples(st.just("settle"), st.integers(0, 5), st.integers(0, 3)),
        st.tuples(st.just("join"), st.integers(0, 5), st.integers(0, 5)),
        st.tuples(st.just("start"), st.integers(0, 5), st.integers(0, 3)),
        st.tuples(st.just("finish"), st.integers(0, 5), st.integers(0, 3)),
    ),
    max_size=10,
)


def play(db, name, ops, paths):
    site = sites.list_sites(db)[0]["id"]
    for op, k, x in ops:
        boards = [b["id"] for b in sites.list_boards(db, site)]
        readings = [r["reading_id"] for r in db.query("SELECT reading_id FROM reading_current ORDER BY reading_id")]
        if op == "save" or (op in ("correct", "void") and not readings):
            versions.save_reading(db, boards[k % len(boards)], {**BAL, "va": str(x)}, technician=name)
        elif op == "correct":
            versions.correct_reading(db, readings[k % len(readings)], {**BAL, "vb": str(x)}, reason="re-read", by=name)
        elif op == "void":
            versions.void_reading(db, readings[k % len(readings)], reason="wrong board", by=name)
        elif op == "rename":
            sites.update_board(db, boards[k % len(boards)], name=f"MDB-{k}{'abcd'[x]}", by=name)
        elif op == "label":
            sites.update_board(
                db, boards[k % len(boards)], af_incident_energy_cal_cm2=[1.2, 4, 8, 25, 38][x], af_ppe=str(x), by=name
            )
        elif op == "board":
            sites.create_board(db, site, f"DB-{k}", by=name)
        elif op == "settle":
            found = versions.conflicts(db)
            if found:
                rid = sorted(found)[k % len(found)]
                versions.settle_reading(db, rid, found[rid][x % len(found[rid])], reason="checked", by=name)
        elif op == "start":
            rounds.start_round(db, site, name, label=f"R{x}")
        elif op == "finish":
            found = [r["id"] for r in rounds.list_rounds(db, site)]
            if found:
                rounds.finish_round(db, sorted(found)[k % len(found)], note=f"{name} {x}")
        elif op == "join":
            keep, other = boards[k % len(boards)], boards[x % len(boards)]
            if keep != other:
                settings_history.join(db, "board", keep, other, by=name)
        elif paths[k] != paths[name]:
            merge_file(db, paths[k])


@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(OPS, OPS, OPS, OPS, OPS, OPS)
def test_three_laptops_merged_in_every_order_agree_and_lose_nothing(
    tmp_path_factory, ops_a, ops_b, ops_c, later_a, later_b, later_c
):
    d = tmp_path_factory.mktemp("crew")
    base = open_db(d / "base.db")
    sid = sites.create_site(base, "Fernwick")
    for k in range(2):
        bid = sites.create_board(base, sid, f"MDB-{k}", af_incident_energy_cal_cm2=1.2, af_ppe="1")
        versions.save_reading(base, bid, BAL)
    base.close()
    paths = {}
    for k, name in enumerate("ABC"):
        shutil.copy(d / "base.db", d / f"{name}.db")
        paths[k] = paths[name] = d / f"{name}.db"
    laptops = {name: open_db(paths[name]) for name in "ABC"}
    for name, ops in zip("ABC", (ops_a, ops_b, ops_c)):
        play(laptops[name], name, ops, paths)
    for name in "ABC":  # the crew meets and merges: conflicts are now seen (and some settled) on each laptop
        play(laptops[name], name, [("pull", k, 0) for k in range(3)], paths)
    for name, ops in zip("ABC", (later_a, later_b, later_c)):
        play(laptops[name], name, [("settle", 0, 0), *ops], paths)
    every = set().union(*(ids(db) for db in laptops.values()))
    for db in laptops.values():
        db.close()

    results = []
    for order in itertools.permutations("ABC"):
        out = d / f"merged-{''.join(order)}.db"
        shutil.copy(paths[order[0]], out)
        db = open_db(out)
        for name in (*order[1:], *order[1:], order[0]):  # each once, then all again
            merge_file(db, paths[name])
        results.append(db)
    fresh = open_db(d / "fresh.db")  # a new laptop that merges the three
    for name in "CAB":
        merge_file(fresh, paths[name])
    results.append(fresh)
    first = content(results[0])
    for db in results:
        assert content(db) == first
        assert ids(db) >= every  # no version of any reading or setting lost
        assert check(db) == []
    # Merging the merged databases into each other changes nothing.
    results[1].close()
    merge_file(results[0], d / "merged-ACB.db")
    assert content(results[0]) == first
    for db in results:
        db.close()
