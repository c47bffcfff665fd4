-- Rollup rows are rewritten on every write that touches their block (ten times a second per
-- channel at 100 ms batches). With room left on the page the new version stays there: a HOT
-- update (no index entry) whose WAL record holds only the changed middle of the row.
ALTER TABLE "rollups" SET (fillfactor = 50);
