-- costdrift store, schema 18: the accountant's decisions.
--
-- What the accountant decides about a cost object (its formula pinned, a
-- period left out of its fit, a proposed formula approved or declined, a
-- note on an alert) is kept as it was made, one row per decision, and never
-- changed or deleted: undoing one (unpin, include) is a decision of its own
-- that names the row it replaces. The current state is what the views below
-- read from the rows; the whole table is the audit trail.
CREATE TABLE decisions (
    id        INTEGER PRIMARY KEY,
    made_at   TEXT NOT NULL,                -- RFC 3339, UTC
    made_by   TEXT NOT NULL,                -- --by, else the operating-system user
    object    TEXT NOT NULL,                -- the cost object ("6200/WELD"), or an alert's object
    kind      TEXT NOT NULL CHECK (kind IN ('pin', 'unpin', 'exclude', 'include', 'approve', 'decline', 'note')),
    period    TEXT NOT NULL DEFAULT '',     -- exclude and include: the period; '' otherwise
    alert_id  INTEGER,                      -- note: the alert it is written on
    payload   TEXT NOT NULL DEFAULT '{}',   -- JSON: a pin's formula, an approval's formula
    reason    TEXT NOT NULL,
    replaces  INTEGER REFERENCES decisions (id) -- the decision in force that this one replaced, if any
);
CREATE INDEX decisions_object ON decisions (object, kind, id);
CREATE INDEX decisions_alert ON decisions (alert_id, id) WHERE alert_id IS NOT NULL;

CREATE TRIGGER decisions_no_update BEFORE UPDATE ON decisions
BEGIN
    SELECT RAISE(ABORT, 'decisions are kept as made: record a new decision instead');
END;
CREATE TRIGGER decisions_no_delete BEFORE DELETE ON decisions
BEGIN
    SELECT RAISE(ABORT, 'decisions are kept as made: record a new decision instead');
END;

-- The formula pinned on each object now: its latest pin or unpin, when that
-- is a pin. A pin whose until has passed is still listed; the analysis
-- raises an alert for it and the budgets stop using it.
CREATE VIEW current_pins AS
SELECT d.object,
       json_extract(d.payload, '$.class')  AS class,
       json_extract(d.payload, '$.driver') AS driver,
       json_extract(d.payload, '$.lag')    AS lag,
       json_extract(d.payload, '$.fixed')  AS fixed_per_period,
       json_extract(d.payload, '$.rate')   AS variable_rate,
       json_extract(d.payload, '$.until')  AS until,
       d.made_by, d.made_at, d.reason, d.id AS decision_id
FROM decisions d
WHERE d.kind = 'pin'
  AND d.id = (SELECT MAX(id) FROM decisions x WHERE x.object = d.object AND x.kind IN ('pin', 'unpin'));

-- The periods left out of each object's fit now: the latest exclude or
-- include of the object and period, when that is an exclude.
CREATE VIEW current_exclusions AS
SELECT d.object, d.period, d.made_by, d.made_at, d.reason, d.id AS decision_id
FROM decisions d
WHERE d.kind = 'exclude'
  AND d.id = (SELECT MAX(id) FROM decisions x WHERE x.object = d.object AND x.period = d.period AND x.kind IN ('exclude', 'include'));

-- The latest approve or decline of each object, and the behaviour row it
-- was about (payload behaviour_id).
CREATE VIEW current_approvals AS
SELECT d.object, d.kind,
       json_extract(d.payload, '$.behaviour_id') AS behaviour_id,
       json_extract(d.payload, '$.class')        AS class,
       json_extract(d.payload, '$.driver')       AS driver,
       json_extract(d.payload, '$.lag')          AS lag,
       json_extract(d.payload, '$.fixed')        AS fixed_per_period,
       json_extract(d.payload, '$.rate')         AS variable_rate,
       d.made_by, d.made_at, d.reason, d.id AS decision_id
FROM decisions d
WHERE d.kind IN ('approve', 'decline')
  AND d.id = (SELECT MAX(id) FROM decisions x WHERE x.object = d.object AND x.kind IN ('approve', 'decline'));

-- The formula each object's budgets keep while approval is required: its
-- latest approve.
CREATE VIEW approved_formulas AS
SELECT d.object,
       json_extract(d.payload, '$.behaviour_id') AS behaviour_id,
       json_extract(d.payload, '$.class')        AS class,
       json_extract(d.payload, '$.driver')       AS driver,
       json_extract(d.payload, '$.lag')          AS lag,
       json_extract(d.payload, '$.fixed')        AS fixed_per_period,
       json_extract(d.payload, '$.rate')         AS variable_rate,
       d.made_by, d.made_at, d.reason, d.id AS decision_id
FROM decisions d
WHERE d.kind = 'approve'
  AND d.id = (SELECT MAX(id) FROM decisions x WHERE x.object = d.object AND x.kind = 'approve');

-- What waits for approval (with analysis.approval: required): each object
-- whose current behaviour row is neither the one last approved nor the one
-- last declined, oldest first. A behaviour row is one class, driver and
-- formula: the analysis opens a new row when any of them changes.
CREATE VIEW proposals AS
SELECT b.object, b.id AS behaviour_id, b.class, b.driver, b.lag, b.fixed_per_period, b.variable_rate,
       b.valid_from_run_at AS proposed_at,
       a.behaviour_id AS approved_behaviour_id
FROM behaviour_history b
LEFT JOIN approved_formulas a ON a.object = b.object
WHERE b.valid_to_run_at IS NULL
  AND b.class <> 'insufficient_data'
  AND b.id IS NOT (SELECT behaviour_id FROM current_approvals c WHERE c.object = b.object)
ORDER BY b.valid_from_run_at, b.object;

-- Every decision, newest first, with what it replaced.
CREATE VIEW decision_log AS
SELECT d.id, d.made_at, d.made_by, d.object, d.kind, d.period, d.alert_id, d.payload, d.reason,
       d.replaces, r.kind AS replaced_kind, r.made_at AS replaced_made_at, r.made_by AS replaced_made_by
FROM decisions d
LEFT JOIN decisions r ON r.id = d.replaces
ORDER BY d.id DESC;
