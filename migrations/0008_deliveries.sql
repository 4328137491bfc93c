-- costdrift store, schema 8: which alert went to whom, so that an alert is
-- mailed once per recipient, again only when it escalates, and a failed
-- delivery is retried with backoff until it goes through.
CREATE TABLE deliveries (
    alert_id        INTEGER NOT NULL REFERENCES alerts (id),
    recipient       TEXT NOT NULL,                                  -- e-mail address, as configured
    severity_sent   TEXT,                                           -- severity of the last message the server took; NULL before the first
    status          TEXT NOT NULL CHECK (status IN ('sent', 'failed')),
    attempts        INTEGER NOT NULL DEFAULT 0,                     -- failed attempts in a row; 0 after a success
    last_error      TEXT,                                           -- the latest failure, one line; never holds the password
    next_attempt_at TEXT,                                           -- RFC 3339, UTC; after a failure, not retried before
    sent_at         TEXT,                                           -- RFC 3339, UTC; the latest successful delivery
    PRIMARY KEY (alert_id, recipient)
);
