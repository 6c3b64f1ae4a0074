import pytest
from hypothesis import settings

from fieldpad.storage import sites
from fieldpad.storage.db import open_db

# Property tests check values, not speed: no per-example deadline (a slow CI machine must not fail them).
settings.register_profile("fieldpad", deadline=None)
settings.load_profile("fieldpad")

BAL = {
    "va": "277",
    "vb": "277",
    "vc": "277",
    "va_deg": "0",
    "vb_deg": "-120",
    "vc_deg": "120",
    "ia": "100",
    "ib": "100",
    "ic": "100",
    "ia_deg": "-30",
    "ib_deg": "-150",
    "ic_deg": "90",
}


@pytest.fixture
def db_path(tmp_path):
    return tmp_path / "field.db"


@pytest.fixture
def db(db_path):
    d = open_db(db_path)
    yield d
    d.close()


@pytest.fixture
def board(db):
    sid = sites.create_site(db, "North Cold Store")
    return sites.create_board(db, sid, "MDB-1", system="wye", nominal_v=480)
