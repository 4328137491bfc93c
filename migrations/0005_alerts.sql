-- costdrift store, schema 5: alerts that are updated while their condition
-- lasts, resolve themselves when it clears, and can be acknowledged.

ALTER TABLE alerts ADD COLUMN evidence TEXT;                          -- JSON: test, statistic, p-value, R², n, old and new formula, …
ALTER TABLE alerts ADD COLUMN ack_until TEXT;                         -- period; acknowledged until it has passed (NULL: until the condition changes)
ALTER TABLE alerts ADD COLUMN occurrences INTEGER NOT NULL DEFAULT 1; -- evaluations that raised the alert, the first included
ALTER TABLE alerts ADD COLUMN resolved_at TEXT;                       -- RFC 3339, UTC; NULL unless resolved

-- Each evaluation resolves the open alerts of the kinds it evaluated.
CREATE INDEX alerts_kind_status ON alerts (kind, status);

-- The view keeps its columns, in their order, and gains the evidence and
-- how often the alert was raised.
DROP VIEW open_alerts;
CREATE VIEW open_alerts AS
SELECT id, kind, object, severity, status, period, message, created_at, updated_at,
       evidence, occurrences, fingerprint
FROM alerts
WHERE status = 'open';
