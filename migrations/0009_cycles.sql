-- costdrift store, schema 9: one row per daemon cycle (sync, then analysis
-- with its alerts and mail), so that `costdrift status` and an operator can
-- see how the unattended daemon has been doing.
CREATE TABLE cycles (
    id          INTEGER PRIMARY KEY,
    started_at  TEXT NOT NULL,                                          -- RFC 3339, UTC
    finished_at TEXT,                                                   -- NULL while running
    status      TEXT NOT NULL CHECK (status IN ('running', 'ok', 'failed')),
    error       TEXT,                                                   -- one line; never holds a password
    stages      TEXT NOT NULL DEFAULT '{}'                              -- JSON: stage name -> seconds taken
);
