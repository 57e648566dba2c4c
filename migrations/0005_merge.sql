-- Streetwood schema, version 5: field copies and their merge (issue 10). Never edit a shipped migration:
-- add a new numbered file.

-- Who this file is. `file_id` is this file's own identity (a new one in every field copy);
-- `inventory_id` is shared by an inventory and every copy made from it (a merge refuses other inventories).
CREATE TABLE sync_identity (
    id           INTEGER PRIMARY KEY CHECK (id = 1),
    file_id      TEXT NOT NULL CHECK (length(file_id) > 0),
    inventory_id TEXT NOT NULL CHECK (length(inventory_id) > 0),
    created_at   TEXT NOT NULL
);
INSERT INTO sync_identity (id, file_id, inventory_id, created_at)
SELECT 1, u, u, strftime('%Y-%m-%dT%H:%M:%SZ', 'now') FROM (
    SELECT lower(hex(randomblob(4))) || '-' || lower(hex(randomblob(2))) || '-4' ||
           substr(lower(hex(randomblob(2))), 2) || '-' || substr('89ab', 1 + (abs(random()) % 4), 1) ||
           substr(lower(hex(randomblob(2))), 2) || '-' || lower(hex(randomblob(6))) AS u
);

-- The other files this one has exchanged with: a field copy made from it ('copy'), the file it was copied
-- from ('origin'), or a file merged into it ('merged'). `seen_audit_id` is how far this file knows the
-- peer's audit log (the peer's changes with a higher audit id are news to this file); `own_audit_id` is
-- this file's audit high-water mark at that moment, `own_txn` its change number. Bookkeeping, not audited.
CREATE TABLE sync_peers (
    id            INTEGER PRIMARY KEY,
    peer_file_id  TEXT NOT NULL UNIQUE,
    relation      TEXT NOT NULL CHECK (relation IN ('copy', 'origin', 'merged')),
    crew          TEXT,
    peer_path     TEXT,
    seen_audit_id INTEGER NOT NULL CHECK (seen_audit_id >= 0),
    own_audit_id  INTEGER NOT NULL CHECK (own_audit_id >= 0),
    own_txn       INTEGER NOT NULL DEFAULT 0,
    agreed_at     TEXT NOT NULL
);

-- When a merge writes a value that came from another file, the time of the original change (the
-- merge's own audit row carries the merge's time): {"field": "2026-06-01T09:00:00.000Z", ...}.
CREATE TABLE merge_stamps (
    table_name  TEXT NOT NULL,
    uid         TEXT NOT NULL,
    stamps_json TEXT NOT NULL CHECK (json_valid(stamps_json)),
    PRIMARY KEY (table_name, uid)
) WITHOUT ROWID;

-- A stable identity for the rows that are matched across copies. A row whose uid is NULL (written by
-- code that does not set one) is known as '<file_id>:<id>' of the file it was written in; `copy`
-- writes that name into the row before the file is copied, and a merge stores it on rows it brings in.
ALTER TABLE measurements ADD COLUMN uid TEXT;
ALTER TABLE assessments ADD COLUMN uid TEXT;
ALTER TABLE failure_modes ADD COLUMN uid TEXT;
ALTER TABLE mitigation_options ADD COLUMN uid TEXT;
ALTER TABLE work_orders ADD COLUMN uid TEXT;

-- Backfill without auditing every row (the audit triggers are regenerated right after the migrations).
DROP TRIGGER IF EXISTS audit_measurements_update;
DROP TRIGGER IF EXISTS audit_assessments_update;
DROP TRIGGER IF EXISTS audit_failure_modes_update;
DROP TRIGGER IF EXISTS audit_mitigation_options_update;
DROP TRIGGER IF EXISTS audit_work_orders_update;
UPDATE measurements SET uid = (SELECT file_id FROM sync_identity) || ':' || id;
UPDATE assessments SET uid = (SELECT file_id FROM sync_identity) || ':' || id;
UPDATE failure_modes SET uid = (SELECT file_id FROM sync_identity) || ':' || id;
UPDATE mitigation_options SET uid = (SELECT file_id FROM sync_identity) || ':' || id;
UPDATE work_orders SET uid = (SELECT file_id FROM sync_identity) || ':' || id;

CREATE UNIQUE INDEX measurements_uid ON measurements (uid);
CREATE UNIQUE INDEX assessments_uid ON assessments (uid);
CREATE UNIQUE INDEX failure_modes_uid ON failure_modes (uid);
CREATE UNIQUE INDEX mitigation_options_uid ON mitigation_options (uid);
CREATE UNIQUE INDEX work_orders_uid ON work_orders (uid);
