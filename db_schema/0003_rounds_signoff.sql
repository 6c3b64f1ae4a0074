-- fieldpad schema, migration 0003: rounds carry a name or purpose, and a supervisor's sign-off of a
-- round or of a day is a record of its own (readings are never edited to sign them).

-- A round started before rounds had names gets one, in the order the site's rounds were started:
-- "Round N — YYYY-MM-DD HH:MM" (the start in this laptop's local time).  Rounds with a label keep it.
UPDATE round SET label = (
    SELECT 'Round ' || n.k || ' — ' || strftime('%Y-%m-%d %H:%M', round.started_at, 'localtime')
    FROM (SELECT id, ROW_NUMBER() OVER (PARTITION BY site_id ORDER BY started_at, id) AS k FROM round) n
    WHERE n.id = round.id)
WHERE label IS NULL OR trim(label) = '';

-- One row per sign-off.  Either a round (round_id) or a local calendar day (day, with the UTC range that
-- day had on the laptop that signed, so the signed readings are the same whatever laptop reads this later).
-- A second sign-off of the same round or day is a new row; none is updated or deleted by normal use.
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
    CHECK (day IS NULL OR (day_start_utc IS NOT NULL AND day_end_utc IS NOT NULL))
);
CREATE INDEX signoff_site ON signoff(site_id, signed_at);
CREATE INDEX signoff_round ON signoff(round_id);
