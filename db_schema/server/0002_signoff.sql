-- fieldpad central server, migration 0002: supervisors' sign-offs of a day or a round (laptop table of the
-- same name, db_schema/0003_rounds_signoff.sql).  Added by a supervisor, as themselves; never changed.

CREATE TABLE signoff (
    id TEXT PRIMARY KEY,
    site_id TEXT NOT NULL REFERENCES site(id),
    round_id TEXT REFERENCES round(id),
    day TEXT,
    day_start_utc TEXT,
    day_end_utc TEXT,
    signed_by TEXT NOT NULL,
    signed_at TEXT NOT NULL,
    note TEXT,
    CHECK ((round_id IS NULL) <> (day IS NULL)),
    tx XID8 NOT NULL DEFAULT pg_current_xact_id(),
    sent_by NAME NOT NULL DEFAULT current_user,
    received_at TIMESTAMPTZ NOT NULL DEFAULT now()
);
CREATE INDEX signoff_tx ON signoff(tx);

REVOKE ALL ON signoff FROM PUBLIC;
GRANT SELECT ON signoff TO fieldpad_technician, fieldpad_supervisor;
GRANT INSERT ON signoff TO fieldpad_supervisor;
ALTER TABLE signoff ENABLE ROW LEVEL SECURITY;
CREATE POLICY everyone_reads ON signoff FOR SELECT TO fieldpad_technician, fieldpad_supervisor USING (true);
CREATE POLICY sign_as_self ON signoff FOR INSERT TO fieldpad_supervisor
    WITH CHECK (sent_by = current_user AND signed_by = current_user);
