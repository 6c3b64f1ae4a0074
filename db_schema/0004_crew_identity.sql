-- fieldpad schema, migration 0004: one crew, one record across laptops.
--
-- Every row of the tables below is written once and never updated or deleted, has a global id
-- (UUIDv7, or for rows derived from an older database an id made from its content) and a recorded
-- time, so a set of databases (and later a central server) come together as the union of their rows.
-- The site and board tables are now the settings as they stand: each field's latest history row
-- (latest recorded_at, then largest id), recomputed from the history by storage/sites.py.

-- The history of site and board settings, one row per field set (generic over the fields of
-- storage/sites.py SITE_FIELDS and BOARD_FIELDS, so a new board field needs no new table).
CREATE TABLE setting_version (
    id TEXT PRIMARY KEY,
    entity TEXT NOT NULL CHECK (entity IN ('site', 'board')),
    entity_id TEXT NOT NULL,
    field TEXT NOT NULL,
    value_json TEXT NOT NULL,   -- the column's value as JSON: null, a number or a text
    recorded_at TEXT NOT NULL,
    recorded_by TEXT
);
CREATE INDEX setting_version_field ON setting_version(entity, entity_id, field, recorded_at, id);

-- Two sites (or two boards) found to be the same one: OTHER is shown as KEEP from then on, on every
-- laptop that has this row.  Recorded, never applied by rewriting readings.
CREATE TABLE id_join (
    id TEXT PRIMARY KEY,
    entity TEXT NOT NULL CHECK (entity IN ('site', 'board')),
    keep_id TEXT NOT NULL,
    other_id TEXT NOT NULL CHECK (other_id <> keep_id),
    recorded_at TEXT NOT NULL,
    recorded_by TEXT,
    reason TEXT
);

-- A version that settles a conflict supersedes every competing version: the first through
-- reading.supersedes, the others through rows here.
CREATE TABLE version_parent (
    id TEXT PRIMARY KEY,
    version_id TEXT NOT NULL REFERENCES reading(id),
    parent_id TEXT NOT NULL REFERENCES reading(id),
    recorded_at TEXT NOT NULL
);
CREATE INDEX version_parent_parent ON version_parent(parent_id);

-- Where a joined site or board is now shown (derived from id_join; NULL: it stands on its own).
ALTER TABLE site ADD COLUMN joined_into TEXT;
ALTER TABLE board ADD COLUMN joined_into TEXT;
CREATE INDEX board_joined ON board(joined_into);

CREATE INDEX reading_supersedes ON reading(supersedes);

-- A head is a version no other version supersedes.  Two heads of one reading: two laptops changed
-- the same version, a conflict until a version supersedes both.
CREATE VIEW reading_head AS
SELECT r.* FROM reading r
WHERE NOT EXISTS (SELECT 1 FROM reading s WHERE s.supersedes = r.id)
  AND NOT EXISTS (SELECT 1 FROM version_parent p WHERE p.parent_id = r.id);

-- The current version of each reading, the same on every laptop: of its heads, the latest recorded,
-- then the largest id (the version number no longer decides).
DROP VIEW reading_current;
CREATE VIEW reading_current AS
SELECT h.* FROM reading_head h
WHERE NOT EXISTS (
    SELECT 1 FROM reading o
    WHERE o.reading_id = h.reading_id AND o.id <> h.id
      AND (o.recorded_at > h.recorded_at OR (o.recorded_at = h.recorded_at AND o.id > h.id))
      AND NOT EXISTS (SELECT 1 FROM reading s WHERE s.supersedes = o.id)
      AND NOT EXISTS (SELECT 1 FROM version_parent p WHERE p.parent_id = o.id)
);
