-- fieldpad schema, migration 0007: what this laptop has sent to and received from each central server.
-- Kept per server by the server's own id (server_info.id), never with a password.

CREATE TABLE sync_state (
    server_id TEXT NOT NULL,
    tbl TEXT NOT NULL,
    sent_rowid INTEGER NOT NULL DEFAULT 0,   -- rows of tbl up to this rowid were sent (or are not ours)
    received_tx TEXT NOT NULL DEFAULT '0',   -- the server's transaction mark of the last receive
    PRIMARY KEY (server_id, tbl)
);

CREATE TABLE sync_log (
    server_id TEXT PRIMARY KEY,
    shown_url TEXT,                          -- the address without any password
    synced_at TEXT NOT NULL,
    sent INTEGER NOT NULL,
    received INTEGER NOT NULL
);
