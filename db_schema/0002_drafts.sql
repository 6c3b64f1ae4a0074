-- fieldpad schema, migration 0002: half-typed sheets survive a crash or a closed terminal,
-- and a view of the current version of each reading.

CREATE TABLE draft (
    board_id TEXT PRIMARY KEY REFERENCES board(id),
    fields_json TEXT NOT NULL,
    updated_at TEXT NOT NULL
);

-- The current version of each reading: the highest version; between two
-- versions of the same number (corrections made on two laptops, then merged)
-- the later recorded one, then the larger id, so every database agrees.
CREATE VIEW reading_current AS
SELECT r.* FROM reading r
WHERE NOT EXISTS (
    SELECT 1 FROM reading s
    WHERE s.reading_id = r.reading_id
      AND (s.version > r.version
           OR (s.version = r.version
               AND (s.recorded_at > r.recorded_at OR (s.recorded_at = r.recorded_at AND s.id > r.id))))
);
