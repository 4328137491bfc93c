-- costdrift store, schema 17: an object's behaviour rows found by object.
--
-- Only the open row of each object had an index (behaviour_history_current).
-- The rules after an analysis read, for every object, its latest closed row
-- (the behaviour it replaced), and explain and the budgets the row in force
-- in a period; without an index each object scanned every row of every
-- object, a time that grew with the square of the number of objects
-- (minutes at 100,000 objects).
CREATE INDEX behaviour_history_object ON behaviour_history (object, id);
