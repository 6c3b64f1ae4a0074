-- fieldpad central server, migration 0003: the crew's shared history (laptop migration
-- db_schema/0004_crew_identity.sql): site and board settings field by field, joins of two ids found to be
-- one, and the extra parents of a version that settled a conflict.  Rows only ever added, as everywhere here.
-- The site and board rows stay as first sent (they give ids their place); what a site or board is now is
-- computed from setting_version, on every laptop and in every export, the same way.

ALTER TABLE site ADD COLUMN joined_into TEXT;
ALTER TABLE board ADD COLUMN joined_into TEXT;

CREATE TABLE setting_version (
    id TEXT PRIMARY KEY,
    entity TEXT NOT NULL CHECK (entity IN ('site', 'board')),
    entity_id TEXT NOT NULL,
    field TEXT NOT NULL,
    value_json TEXT NOT NULL,
    recorded_at TEXT NOT NULL,
    recorded_by TEXT,
    tx XID8 NOT NULL DEFAULT pg_current_xact_id(),
    sent_by NAME NOT NULL DEFAULT current_user,
    received_at TIMESTAMPTZ NOT NULL DEFAULT now()
);
CREATE INDEX setting_version_field ON setting_version(entity, entity_id, field);

CREATE TABLE id_join (
    id TEXT PRIMARY KEY,
    entity TEXT NOT NULL CHECK (entity IN ('site', 'board')),
    keep_id TEXT NOT NULL,
    other_id TEXT NOT NULL CHECK (other_id <> keep_id),
    recorded_at TEXT NOT NULL,
    recorded_by TEXT,
    reason TEXT,
    tx XID8 NOT NULL DEFAULT pg_current_xact_id(),
    sent_by NAME NOT NULL DEFAULT current_user,
    received_at TIMESTAMPTZ NOT NULL DEFAULT now()
);

CREATE TABLE version_parent (
    id TEXT PRIMARY KEY,
    version_id TEXT NOT NULL REFERENCES reading(id),
    parent_id TEXT NOT NULL REFERENCES reading(id),
    recorded_at TEXT NOT NULL,
    tx XID8 NOT NULL DEFAULT pg_current_xact_id(),
    sent_by NAME NOT NULL DEFAULT current_user,
    received_at TIMESTAMPTZ NOT NULL DEFAULT now()
);

CREATE INDEX setting_version_tx ON setting_version(tx);
CREATE INDEX id_join_tx ON id_join(tx);
CREATE INDEX version_parent_tx ON version_parent(tx);

REVOKE ALL ON setting_version, id_join, version_parent FROM PUBLIC;
GRANT SELECT ON setting_version, id_join, version_parent TO fieldpad_technician, fieldpad_supervisor;
GRANT INSERT ON setting_version, id_join, version_parent TO fieldpad_technician;
ALTER TABLE setting_version ENABLE ROW LEVEL SECURITY;
ALTER TABLE id_join ENABLE ROW LEVEL SECURITY;
ALTER TABLE version_parent ENABLE ROW LEVEL SECURITY;
CREATE POLICY everyone_reads ON setting_version FOR SELECT TO fieldpad_technician, fieldpad_supervisor USING (true);
CREATE POLICY everyone_reads ON id_join FOR SELECT TO fieldpad_technician, fieldpad_supervisor USING (true);
CREATE POLICY everyone_reads ON version_parent FOR SELECT TO fieldpad_technician, fieldpad_supervisor USING (true);
-- The app records settings without a name (recorded_by NULL); one with a name is the sender's own.
CREATE POLICY add_as_self ON setting_version FOR INSERT TO fieldpad_technician
    WITH CHECK (sent_by = current_user AND (recorded_by IS NULL OR recorded_by = current_user));
CREATE POLICY add_as_self ON id_join FOR INSERT TO fieldpad_technician
    WITH CHECK (sent_by = current_user AND (recorded_by IS NULL OR recorded_by = current_user));
CREATE POLICY add_as_self ON version_parent FOR INSERT TO fieldpad_technician
    WITH CHECK (sent_by = current_user);
