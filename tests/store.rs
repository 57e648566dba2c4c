//! Store tests: migrations, schema version checks, seeding, audit rows for every write.

use chrono::{NaiveDate, TimeZone, Utc};
use streetwood::model::TreeRecord;
use streetwood::store::trees::TreeImportRow;
use streetwood::store::{Store, StoreError, audit, migrate};

fn now() -> chrono::DateTime<Utc> {
    Utc.with_ymd_and_hms(2026, 6, 1, 9, 0, 0)
        .single()
        .expect("valid time")
}

fn tree(uid: &str, species: &str, dbh: f64, on: &str) -> TreeRecord {
    TreeRecord {
        uid: Some(uid.to_string()),
        species: species.to_string(),
        lon: Some(-84.1),
        lat: Some(42.7),
        street: Some("Elm Row".to_string()),
        house_number: None,
        site_kind: None,
        planted_on: None,
        status: None,
        measured_on: on.parse::<NaiveDate>().expect("date"),
        stems_cm: vec![dbh],
        multi_stem: false,
        height_m: Some(10.0),
        crown_base_m: None,
        crown_width_m: None,
        crown_width2_m: None,
        dieback_pct: None,
        condition: None,
        notes: None,
        measured_by: Some("crew-a".to_string()),
    }
}

#[test]
fn migrations_apply_on_an_empty_file_and_reopening_is_idempotent() {
    let dir = tempfile::tempdir().expect("temp dir");
    let path = dir.path().join("inv.db");
    let store = Store::open_or_create(&path).expect("create");
    assert_eq!(
        store.schema_version().expect("version"),
        migrate::latest_version()
    );
    assert_eq!(
        store.species().expect("species").len(),
        31,
        "the built-in list of species-reference.csv"
    );
    let settings = store.settings().expect("settings");
    assert!(settings.iter().any(|(k, v)| k == "units" && v == "metric"));
    assert!(
        settings
            .iter()
            .any(|(k, v)| k == "reinspect_months_high" && v == "6")
    );
    let audit_rows_after_create: i64 = store
        .conn()
        .query_row("SELECT count(*) FROM audit_log", [], |r| r.get(0))
        .expect("count");
    drop(store);

    let store = Store::open_existing(&path).expect("reopen");
    assert_eq!(
        store.schema_version().expect("version"),
        migrate::latest_version()
    );
    assert_eq!(
        store.species().expect("species").len(),
        31,
        "no duplicate seeding"
    );
    let audit_rows_after_reopen: i64 = store
        .conn()
        .query_row("SELECT count(*) FROM audit_log", [], |r| r.get(0))
        .expect("count");
    assert_eq!(
        audit_rows_after_create, audit_rows_after_reopen,
        "reopening writes nothing"
    );
    assert_eq!(store.integrity_check().expect("check"), "ok");
    let fk_problems: i64 = store
        .conn()
        .query_row("SELECT count(*) FROM pragma_foreign_key_check", [], |r| {
            r.get(0)
        })
        .expect("fk check");
    assert_eq!(fk_problems, 0);
    let journal: String = store
        .conn()
        .query_row("PRAGMA journal_mode", [], |r| r.get(0))
        .expect("mode");
    assert_eq!(journal, "wal");
    let foreign_keys: i64 = store
        .conn()
        .query_row("PRAGMA foreign_keys", [], |r| r.get(0))
        .expect("fk");
    assert_eq!(foreign_keys, 1);
}

#[test]
fn a_file_from_a_newer_version_is_refused() {
    let dir = tempfile::tempdir().expect("temp dir");
    let path = dir.path().join("future.db");
    drop(Store::open_or_create(&path).expect("create"));
    {
        let conn = rusqlite::Connection::open(&path).expect("raw open");
        conn.pragma_update(None, "user_version", 999)
            .expect("bump version");
    }
    match Store::open_existing(&path) {
        Err(StoreError::NewerSchema {
            found: 999,
            supported,
        }) => assert_eq!(supported, migrate::latest_version()),
        Err(other) => panic!("wrong error: {other}"),
        Ok(_) => panic!("a newer file must be refused"),
    }
    let message = Store::open_existing(&path)
        .err()
        .map(|e| e.to_string())
        .unwrap_or_default();
    assert!(message.contains("newer Streetwood"), "{message}");
}

#[test]
fn an_older_file_is_migrated_forward() {
    // A file at version 0 (an empty SQLite file, as a first release would meet it) gets every migration.
    let dir = tempfile::tempdir().expect("temp dir");
    let path = dir.path().join("old.db");
    drop(rusqlite::Connection::open(&path).expect("empty sqlite file"));
    let store = Store::open_existing(&path).expect("migrated");
    assert_eq!(
        store.schema_version().expect("version"),
        migrate::latest_version()
    );
}

#[test]
fn foreign_sqlite_files_and_non_sqlite_files_are_refused() {
    let dir = tempfile::tempdir().expect("temp dir");
    let other = dir.path().join("other.db");
    {
        let conn = rusqlite::Connection::open(&other).expect("open");
        conn.execute_batch("CREATE TABLE accounts (id INTEGER);")
            .expect("create");
    }
    let message = Store::open_existing(&other)
        .err()
        .map(|e| e.to_string())
        .unwrap_or_default();
    assert!(
        message.contains("is not a Streetwood inventory"),
        "{message}"
    );
    let text = dir.path().join("notes.txt");
    std::fs::write(
        &text,
        "this is not a database at all, just some text for the test",
    )
    .expect("write");
    let message = Store::open_existing(&text)
        .err()
        .map(|e| e.to_string())
        .unwrap_or_default();
    assert!(
        message.contains("is not a Streetwood inventory"),
        "{message}"
    );
}

#[test]
fn every_write_leaves_an_audit_row_with_before_and_after() {
    let mut store = Store::open_in_memory().expect("store");
    let rows = vec![
        TreeImportRow {
            line: 2,
            record: tree("t1", "Acer rubrum", 30.0, "2024-05-01"),
            zone_id: None,
        },
        TreeImportRow {
            line: 3,
            record: tree("t2", "Tilia cordata", 20.0, "2024-05-01"),
            zone_id: None,
        },
        TreeImportRow {
            line: 4,
            record: tree("t1", "Acer rubrum", 31.0, "2025-05-01"),
            zone_id: None,
        },
    ];
    let outcome = store
        .import_trees(&rows, "crew-a", now(), false)
        .expect("import");
    assert_eq!((outcome.trees_added, outcome.measurements_added), (2, 3));
    assert_eq!(
        audit::count(store.conn(), "trees", "insert").expect("count"),
        2
    );
    assert_eq!(
        audit::count(store.conn(), "measurements", "insert").expect("count"),
        3
    );

    let id = store
        .tree_id_by_uid("t1")
        .expect("query")
        .expect("t1 exists");
    let removed_on = NaiveDate::from_ymd_opt(2026, 5, 30).expect("date");
    store
        .mark_removed(id, removed_on, "storm damage", "crew-b", now())
        .expect("remove");
    let history = audit::entries_for_row(store.conn(), "trees", id).expect("history");
    assert_eq!(history.len(), 2);
    let update = &history[1];
    assert_eq!(
        (update.action.as_str(), update.actor.as_str()),
        ("update", "crew-b")
    );
    let before: serde_json::Value =
        serde_json::from_str(update.before_json.as_deref().expect("before")).expect("json");
    let after: serde_json::Value =
        serde_json::from_str(update.after_json.as_deref().expect("after")).expect("json");
    assert_eq!(before["status"], "standing");
    assert_eq!(after["status"], "removed");
    assert_eq!(after["removed_on"], "2026-05-30");
    assert_eq!(history[0].actor, "crew-a");

    store
        .set_setting("units", "us", "planner")
        .expect("setting");
    assert_eq!(
        audit::count(store.conn(), "settings", "update").expect("count"),
        1
    );
    assert!(
        store.set_setting("unitz", "us", "planner").is_err(),
        "unknown keys are refused"
    );
}

#[test]
fn a_failing_row_rolls_the_whole_import_back() {
    let mut store = Store::open_in_memory().expect("store");
    let mut bad = tree("t9", "Acer rubrum", 30.0, "2024-05-01");
    bad.species = "Nonexistent species".to_string();
    let rows = vec![
        TreeImportRow {
            line: 2,
            record: tree("t1", "Acer rubrum", 30.0, "2024-05-01"),
            zone_id: None,
        },
        TreeImportRow {
            line: 3,
            record: bad,
            zone_id: None,
        },
    ];
    match store.import_trees(&rows, "crew", now(), false) {
        Err(StoreError::Row { line: 3, message }) => {
            assert!(message.contains("species"), "{message}")
        }
        other => panic!("expected a row error on line 3, got {other:?}"),
    }
    assert_eq!(store.tree_count().expect("count"), 0);
    assert_eq!(
        audit::count(store.conn(), "trees", "insert").expect("count"),
        0
    );
}

#[test]
fn backup_copies_a_consistent_file() {
    let dir = tempfile::tempdir().expect("temp dir");
    let path = dir.path().join("inv.db");
    let mut store = Store::open_or_create(&path).expect("create");
    let rows = vec![TreeImportRow {
        line: 2,
        record: tree("t1", "Acer rubrum", 30.0, "2024-05-01"),
        zone_id: None,
    }];
    store
        .import_trees(&rows, "crew", now(), false)
        .expect("import");
    let copy_path = dir.path().join("copy.db");
    store.backup_to(&copy_path).expect("backup");
    let copy = Store::open_existing(&copy_path).expect("open copy");
    assert_eq!(copy.tree_count().expect("count"), 1);
    assert_eq!(copy.integrity_check().expect("check"), "ok");
    assert!(
        store.backup_to(&path).is_err(),
        "backing up onto itself is refused"
    );
}

#[test]
fn undo_reverts_the_latest_change_whole_and_is_itself_audited() {
    let mut store = Store::open_in_memory().expect("store");
    assert!(
        store.undoable_changes(5).expect("list").is_empty(),
        "seeding is not undoable"
    );
    let first = vec![TreeImportRow {
        line: 2,
        record: tree("t1", "Acer rubrum", 30.0, "2024-05-01"),
        zone_id: None,
    }];
    store
        .import_trees(&first, "crew-a", now(), false)
        .expect("import");
    let second = vec![TreeImportRow {
        line: 2,
        record: tree("t2", "Tilia cordata", 20.0, "2024-05-01"),
        zone_id: None,
    }];
    store
        .import_trees(&second, "crew-b", now(), false)
        .expect("import");
    let t1 = store.tree_id_by_uid("t1").expect("q").expect("t1");
    store
        .mark_removed(
            t1,
            NaiveDate::from_ymd_opt(2026, 5, 30).expect("date"),
            "storm",
            "crew-c",
            now(),
        )
        .expect("remove");

    let changes = store.undoable_changes(5).expect("list");
    assert_eq!(changes.len(), 3);
    assert_eq!(changes[0].actor, "crew-c");
    assert!(
        changes[1]
            .describe()
            .contains("insert 1 trees, insert 1 measurements"),
        "{}",
        changes[1].describe()
    );

    // Undo the removal: the tree stands again, exactly as before.
    let undone = store
        .undo_last("tester")
        .expect("undo")
        .expect("something undone");
    assert_eq!(undone.actor, "crew-c");
    let detail = store.tree_detail(t1).expect("q").expect("t1");
    assert_eq!(detail.summary.status.as_str(), "standing");
    assert_eq!(detail.removed_on, None);
    // Undo crew-b's tree: its tree and measurement rows go, the audit log keeps them.
    store
        .undo_last("tester")
        .expect("undo")
        .expect("something undone");
    assert_eq!(store.tree_id_by_uid("t2").expect("q"), None);
    assert_eq!(store.tree_count().expect("count"), 1);
    assert_eq!(
        audit::count(store.conn(), "trees", "delete").expect("count"),
        1
    );
    let remaining = store.undoable_changes(5).expect("list");
    assert_eq!(remaining.len(), 1);
    assert_eq!(remaining[0].actor, "crew-a");
    assert_eq!(store.integrity_check().expect("check"), "ok");
}

#[test]
fn undo_refuses_when_a_row_changed_behind_its_back() {
    let mut store = Store::open_in_memory().expect("store");
    let rows = vec![TreeImportRow {
        line: 2,
        record: tree("t1", "Acer rubrum", 30.0, "2024-05-01"),
        zone_id: None,
    }];
    store
        .import_trees(&rows, "crew-a", now(), false)
        .expect("import");
    // A write that bypasses the audit triggers (as a foreign program might).
    store
        .conn()
        .execute_batch("DROP TRIGGER audit_trees_update; UPDATE trees SET street = 'Changed Row';")
        .expect("raw write");
    let message = store
        .undo_last("tester")
        .err()
        .map(|e| e.to_string())
        .unwrap_or_default();
    assert!(message.contains("was changed again since"), "{message}");
    assert_eq!(store.tree_count().expect("count"), 1, "nothing was undone");
}
