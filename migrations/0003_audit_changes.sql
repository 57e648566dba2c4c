-- Streetwood schema, version 3: every write transaction is numbered, and its audit rows carry the number,
-- so one change (a saved tree, an import, a closed work order) can be listed and undone whole.
-- Never edit a shipped migration: add a new numbered file.

ALTER TABLE audit_context ADD COLUMN txn INTEGER NOT NULL DEFAULT 0;
-- While an undo runs: the number of the change it reverts.
ALTER TABLE audit_context ADD COLUMN undo_of INTEGER;

-- Rows written before version 3 keep txn 0 (one undivided past, never undone).
ALTER TABLE audit_log ADD COLUMN txn INTEGER NOT NULL DEFAULT 0;
-- On the rows of an undo: the change it reverted.
ALTER TABLE audit_log ADD COLUMN undo_of INTEGER;
-- On reverted rows: the change (an undo) that reverted them.
ALTER TABLE audit_log ADD COLUMN undone_by INTEGER;
CREATE INDEX audit_log_txn ON audit_log (txn);
