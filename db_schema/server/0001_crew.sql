-- fieldpad central server (PostgreSQL), migration 0001: the crew's record.
--
-- The server holds every row the laptops send, and never changes one: rows are added, never updated or
-- deleted, by anyone but the owner of the schema.  Ids are the laptops' own (UUIDv7 text), so a row sent
-- twice is the same row.  Each table mirrors the laptop table of the same name (db_schema/0001_initial.sql)
-- and adds three columns of the server's own:
--   tx          the transaction that added the row (pg_current_xact_id()): a laptop asks for the rows
--               added since the oldest transaction that was still open when it last asked
--               (pg_snapshot_xmin), so a row committed late by a slow sync is never skipped;
--   sent_by     the role that sent it (current_user, checked by row-level security);
--   received_at when the server took it.
--
-- Roles: fieldpad_technician may read everything and add rows as itself, never update or delete;
-- fieldpad_supervisor reads everything.  A crew's IT makes one login role per technician, named as the
-- technician signs readings, and grants it one of the two (README, "Central server").

CREATE TABLE server_info (
    id TEXT PRIMARY KEY,
    created_at TIMESTAMPTZ NOT NULL DEFAULT now()
);

CREATE TABLE site (
    id TEXT PRIMARY KEY,
    name TEXT NOT NULL,
    description TEXT,
    voltage_standard TEXT NOT NULL,
    phase_labels TEXT NOT NULL,
    colour_set TEXT NOT NULL,
    thresholds_json TEXT NOT NULL,
    label_review_years DOUBLE PRECISION NOT NULL,
    created_at TEXT NOT NULL,
    updated_at TEXT NOT NULL,
    tx XID8 NOT NULL DEFAULT pg_current_xact_id(),
    sent_by NAME NOT NULL DEFAULT current_user,
    received_at TIMESTAMPTZ NOT NULL DEFAULT now()
);

CREATE TABLE board (
    id TEXT PRIMARY KEY,
    site_id TEXT NOT NULL REFERENCES site(id),
    name TEXT NOT NULL,
    location TEXT,
    kind TEXT,
    system TEXT NOT NULL CHECK (system IN ('wye', 'delta', 'high-leg-delta', 'split-phase')),
    nominal_v DOUBLE PRECISION,
    frequency_hz DOUBLE PRECISION,
    af_incident_energy_cal_cm2 DOUBLE PRECISION,
    af_working_distance_mm DOUBLE PRECISION,
    af_boundary_mm DOUBLE PRECISION,
    af_ppe TEXT,
    af_label_date TEXT,
    created_at TEXT NOT NULL,
    updated_at TEXT NOT NULL,
    tx XID8 NOT NULL DEFAULT pg_current_xact_id(),
    sent_by NAME NOT NULL DEFAULT current_user,
    received_at TIMESTAMPTZ NOT NULL DEFAULT now()
);

CREATE TABLE round (
    id TEXT PRIMARY KEY,
    site_id TEXT NOT NULL REFERENCES site(id),
    label TEXT,
    technician TEXT,
    started_at TEXT NOT NULL,
    finished_at TEXT,
    note TEXT,
    tx XID8 NOT NULL DEFAULT pg_current_xact_id(),
    sent_by NAME NOT NULL DEFAULT current_user,
    received_at TIMESTAMPTZ NOT NULL DEFAULT now()
);

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
    void INTEGER NOT NULL CHECK (void IN (0, 1)),
    reason TEXT,
    recorded_at TEXT NOT NULL,
    recorded_by TEXT,
    inputs_json TEXT NOT NULL,
    system TEXT NOT NULL,
    standard TEXT NOT NULL,
    nominal_v DOUBLE PRECISION,
    va DOUBLE PRECISION, vb DOUBLE PRECISION, vc DOUBLE PRECISION,
    va_deg DOUBLE PRECISION, vb_deg DOUBLE PRECISION, vc_deg DOUBLE PRECISION,
    vab DOUBLE PRECISION, vbc DOUBLE PRECISION, vca DOUBLE PRECISION,
    vab_deg DOUBLE PRECISION, vbc_deg DOUBLE PRECISION, vca_deg DOUBLE PRECISION,
    ia DOUBLE PRECISION, ib DOUBLE PRECISION, ic DOUBLE PRECISION,
    ia_deg DOUBLE PRECISION, ib_deg DOUBLE PRECISION, ic_deg DOUBLE PRECISION,
    i_n DOUBLE PRECISION,
    tx XID8 NOT NULL DEFAULT pg_current_xact_id(),
    sent_by NAME NOT NULL DEFAULT current_user,
    received_at TIMESTAMPTZ NOT NULL DEFAULT now()
);
CREATE INDEX reading_versions ON reading(reading_id, version);
CREATE INDEX reading_board ON reading(board_id, taken_at);

CREATE INDEX site_tx ON site(tx);
CREATE INDEX board_tx ON board(tx);
CREATE INDEX round_tx ON round(tx);
CREATE INDEX reading_tx ON reading(tx);

-- Roles (cluster-wide: made once, kept if they exist).
DO $$
BEGIN
    IF NOT EXISTS (SELECT 1 FROM pg_roles WHERE rolname = 'fieldpad_technician') THEN
        CREATE ROLE fieldpad_technician NOLOGIN;
    END IF;
    IF NOT EXISTS (SELECT 1 FROM pg_roles WHERE rolname = 'fieldpad_supervisor') THEN
        CREATE ROLE fieldpad_supervisor NOLOGIN;
    END IF;
END
$$;

REVOKE ALL ON site, board, round, reading, server_info FROM PUBLIC;
GRANT SELECT ON site, board, round, reading, server_info, fieldpad_migrations
    TO fieldpad_technician, fieldpad_supervisor;
-- Add, never change: no UPDATE, DELETE or TRUNCATE for either role.
GRANT INSERT ON site, board, round, reading TO fieldpad_technician;

ALTER TABLE site ENABLE ROW LEVEL SECURITY;
ALTER TABLE board ENABLE ROW LEVEL SECURITY;
ALTER TABLE round ENABLE ROW LEVEL SECURITY;
ALTER TABLE reading ENABLE ROW LEVEL SECURITY;

CREATE POLICY everyone_reads ON site FOR SELECT TO fieldpad_technician, fieldpad_supervisor USING (true);
CREATE POLICY everyone_reads ON board FOR SELECT TO fieldpad_technician, fieldpad_supervisor USING (true);
CREATE POLICY everyone_reads ON round FOR SELECT TO fieldpad_technician, fieldpad_supervisor USING (true);
CREATE POLICY everyone_reads ON reading FOR SELECT TO fieldpad_technician, fieldpad_supervisor USING (true);

-- A technician adds rows as themselves only: the server's own record of who sent a row is the session's
-- role, and a reading version's recorded_by is that role too (no version signed with another name).
CREATE POLICY add_as_self ON site FOR INSERT TO fieldpad_technician
    WITH CHECK (sent_by = current_user);
CREATE POLICY add_as_self ON board FOR INSERT TO fieldpad_technician
    WITH CHECK (sent_by = current_user);
CREATE POLICY add_as_self ON round FOR INSERT TO fieldpad_technician
    WITH CHECK (sent_by = current_user);
CREATE POLICY add_as_self ON reading FOR INSERT TO fieldpad_technician
    WITH CHECK (sent_by = current_user AND recorded_by = current_user);

-- This server's own id: a laptop keeps what it has sent and received per server, not per address.
INSERT INTO server_info (id) VALUES (gen_random_uuid()::text);
