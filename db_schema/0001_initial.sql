-- fieldpad schema, migration 0001: sites, boards, rounds and reading versions.
-- IDs are UUIDv7 text (time-ordered, globally unique: databases merge without clashes).
-- Times are UTC ISO 8601 text ending in Z.

CREATE TABLE site (
    id TEXT PRIMARY KEY,
    name TEXT NOT NULL,
    description TEXT,
    voltage_standard TEXT NOT NULL DEFAULT 'ansi' CHECK (voltage_standard IN ('ansi', 'iec')),
    phase_labels TEXT NOT NULL DEFAULT 'ABC' CHECK (phase_labels IN ('ABC', 'L123')),
    colour_set TEXT NOT NULL DEFAULT 'iec60445',
    thresholds_json TEXT NOT NULL DEFAULT '{}',
    label_review_years REAL NOT NULL DEFAULT 5,
    created_at TEXT NOT NULL,
    updated_at TEXT NOT NULL
);

CREATE TABLE board (
    id TEXT PRIMARY KEY,
    site_id TEXT NOT NULL REFERENCES site(id),
    name TEXT NOT NULL,
    location TEXT,
    kind TEXT,
    system TEXT NOT NULL DEFAULT 'wye'
        CHECK (system IN ('wye', 'delta', 'high-leg-delta', 'split-phase')),
    nominal_v REAL,
    frequency_hz REAL,
    af_incident_energy_cal_cm2 REAL,
    af_working_distance_mm REAL,
    af_boundary_mm REAL,
    af_ppe TEXT,
    af_label_date TEXT,
    created_at TEXT NOT NULL,
    updated_at TEXT NOT NULL
);
CREATE INDEX board_site ON board(site_id, name);

CREATE TABLE round (
    id TEXT PRIMARY KEY,
    site_id TEXT NOT NULL REFERENCES site(id),
    label TEXT,
    technician TEXT,
    started_at TEXT NOT NULL,
    finished_at TEXT,
    note TEXT
);
CREATE INDEX round_site ON round(site_id, started_at);

-- One row per version of a reading.  A correction or a void is a new row with
-- the same reading_id, a higher version and a reason; nothing is updated or
-- deleted by normal use.
CREATE TABLE reading (
    id TEXT PRIMARY KEY,
    reading_id TEXT NOT NULL,
    version INTEGER NOT NULL CHECK (version >= 1),
    supersedes TEXT REFERENCES reading(id),
    board_id TEXT NOT NULL REFERENCES board(id),
    round_id TEXT REFERENCES round(id),
    taken_at TEXT NOT NULL,
    technician TEXT,
    instrument TEXT,
    note TEXT,
    void INTEGER NOT NULL DEFAULT 0 CHECK (void IN (0, 1)),
    reason TEXT,
    recorded_at TEXT NOT NULL,
    recorded_by TEXT,
    inputs_json TEXT NOT NULL,
    system TEXT NOT NULL,
    standard TEXT NOT NULL,
    nominal_v REAL,
    va REAL, vb REAL, vc REAL, va_deg REAL, vb_deg REAL, vc_deg REAL,
    vab REAL, vbc REAL, vca REAL, vab_deg REAL, vbc_deg REAL, vca_deg REAL,
    ia REAL, ib REAL, ic REAL, ia_deg REAL, ib_deg REAL, ic_deg REAL,
    i_n REAL
);
CREATE INDEX reading_versions ON reading(reading_id, version);
CREATE INDEX reading_board ON reading(board_id, taken_at);
CREATE INDEX reading_taken ON reading(taken_at);
