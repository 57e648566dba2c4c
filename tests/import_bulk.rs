//! The bulk import path against the per-row path: the same rows, and the same audit log row by row
//! (ids, tables, actions, JSON text, actor, change number; only the `at` times may differ), on
//! generated inventories and on hand-made rows that take every branch (updates, repeated measurements,
//! stored trees, batches that must be written early, failing rows). Undo of a bulk import.

use chrono::{DateTime, NaiveDate, TimeZone, Utc};
use streetwood::cli::synthetic::{GenOptions, generate};
use streetwood::model::{SiteKind, TreeRecord, TreeStatus, ZoneRecord};
use streetwood::science::condition::ConditionWord;
use streetwood::store::trees::{ImportPath, TreeImportRow};
use streetwood::store::{Store, StoreError};

fn now() -> DateTime<Utc> {
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

fn rows_of(records: Vec<TreeRecord>) -> Vec<TreeImportRow> {
    records
        .into_iter()
        .enumerate()
        .map(|(i, record)| TreeImportRow {
            line: i as u64 + 2,
            record,
            zone_id: None,
        })
        .collect()
}

fn generated(trees: usize, seed: u64) -> Vec<TreeImportRow> {
    let mut records = Vec::new();
    generate(&GenOptions { trees, seed }, |record| {
        records.push(record.clone());
        Ok(())
    })
    .expect("generate");
    rows_of(records)
}

/// A fresh inventory with two zones (so rows can carry zone ids).
fn fresh() -> Store {
    let mut store = Store::open_in_memory().expect("store");
    let square = |x: f64| {
        format!(
            r#"{{"type":"Polygon","coordinates":[[[{x},42.6],[{},42.6],[{},42.8],[{x},42.8],[{x},42.6]]]}}"#,
            x + 0.1,
            x + 0.1
        )
    };
    store
        .upsert_zones(
            &[
                ZoneRecord {
                    name: "West".to_string(),
                    geometry_json: square(-84.2),
                },
                ZoneRecord {
                    name: "East".to_string(),
                    geometry_json: square(-84.1),
                },
            ],
            "planner",
        )
        .expect("zones");
    store
}

/// Every audit row but its time, in id order.
fn audit_rows(store: &Store) -> Vec<String> {
    let mut stmt = store
        .conn()
        .prepare(
            "SELECT json_array(id, table_name, row_id, action, before_json, after_json, actor, txn, undo_of,
                               undone_by)
             FROM audit_log ORDER BY id",
        )
        .expect("prepare");
    stmt.query_map([], |r| r.get::<_, String>(0))
        .expect("query")
        .collect::<Result<Vec<_>, _>>()
        .expect("rows")
}

/// Every row of the tree tables, and the schema (the triggers are put back as they were).
fn contents(store: &Store) -> Vec<String> {
    let mut out = Vec::new();
    for sql in [
        "SELECT json_array(id, uid, species_id, lon, lat, street, house_number, site_kind, planted_on, owner,
                           status, removed_on, zone_id, notes, created_at, updated_at) FROM trees ORDER BY id",
        "SELECT json_array(id, tree_id, measured_on, stems_cm, dbh_cm, height_m, crown_base_m, crown_width_m,
                           crown_width2_m, dieback_pct, condition, measured_by, created_at, uid)
         FROM measurements ORDER BY id",
        "SELECT json_array(type, name, sql) FROM sqlite_master ORDER BY name",
    ] {
        let mut stmt = store.conn().prepare(sql).expect("prepare");
        out.extend(
            stmt.query_map([], |r| r.get::<_, String>(0))
                .expect("query")
                .collect::<Result<Vec<_>, _>>()
                .expect("rows"),
        );
    }
    out
}

fn assert_same_audit(per_row: &Store, bulk: &Store) {
    let (a, b) = (audit_rows(per_row), audit_rows(bulk));
    assert_eq!(a.len(), b.len(), "audit row counts differ");
    for (x, y) in a.iter().zip(&b) {
        assert_eq!(x, y, "audit rows differ");
    }
    assert_eq!(contents(per_row), contents(bulk));
}

/// Imports `rows` into a fresh copy of `setup` by each path; returns both stores and outcomes.
fn both_paths(
    setup: &dyn Fn(&mut Store),
    rows: &[TreeImportRow],
) -> (
    Store,
    Store,
    Result<streetwood::store::trees::ImportOutcome, StoreError>,
    Result<streetwood::store::trees::ImportOutcome, StoreError>,
) {
    let mut per_row = fresh();
    setup(&mut per_row);
    let mut bulk = fresh();
    setup(&mut bulk);
    let a = per_row.import_trees_via(rows, "import", now(), false, ImportPath::PerRow);
    let b = bulk.import_trees_via(rows, "import", now(), false, ImportPath::Bulk);
    (per_row, bulk, a, b)
}

#[test]
fn a_generated_inventory_gives_the_same_rows_and_audit_log_by_both_paths() {
    // 3,000 trees with re-measurements: about 3,700 rows, several batches.
    let rows = generated(3_000, 7);
    let (per_row, bulk, a, b) = both_paths(&|_| {}, &rows);
    let (a, b) = (a.expect("per-row import"), b.expect("bulk import"));
    assert_eq!(a, b);
    assert_eq!(a.trees_added, 3_000);
    assert!(a.measurements_added > 3_000, "{a:?}");
    assert_same_audit(&per_row, &bulk);
    let audited: i64 = bulk
        .conn()
        .query_row(
            "SELECT count(*) FROM audit_log WHERE txn = (SELECT max(txn) FROM audit_log)",
            [],
            |r| r.get(0),
        )
        .expect("count");
    assert_eq!(audited as usize, a.trees_added + a.measurements_added);
}

/// Rows that take every branch: a tree updated by a later row (in the same batch and after it),
/// interleaved re-measurements, a repeated measurement, trees stored before the import and updated or
/// re-measured by it, multi-stem rows, zones, text that JSON must escape.
fn every_branch() -> Vec<TreeImportRow> {
    let mut records = Vec::new();
    let mut a = tree("a", "Acer rubrum", 30.0, "2024-05-01");
    a.site_kind = Some(SiteKind::Verge);
    a.status = Some(TreeStatus::Standing);
    a.notes = Some("line \"one\"\nline two, ünïcode \\ back".to_string());
    records.push(a.clone());
    let mut b = tree("b", "Tilia cordata", 3.0, "2024-05-01");
    b.multi_stem = true;
    b.stems_cm = vec![3.0, 4.0, 12.5];
    b.lon = Some(-84.15);
    b.condition = Some(ConditionWord::Fair);
    b.dieback_pct = Some(12.0);
    records.push(b.clone());
    // a again, later date: only a measurement (interleaved after b).
    records.push(tree("a", "Acer rubrum", 31.0, "2025-05-01"));
    // a repeated measurement of a: unchanged.
    records.push(tree("a", "Acer rubrum", 31.0, "2025-05-01"));
    // b with a new street: an update of a tree of the batch.
    let mut b2 = b.clone();
    b2.street = Some("Oak Lane".to_string());
    b2.measured_on = "2025-06-01".parse().expect("date");
    records.push(b2);
    // A stored tree re-measured (same attributes), and the same measurement again.
    records.push(tree("s1", "Acer rubrum", 41.5, "2024-05-01"));
    records.push(tree("s1", "Acer rubrum", 41.5, "2024-05-01"));
    // A stored tree's stored measurement: unchanged.
    records.push(tree("s2", "Tilia cordata", 25.0, "2023-05-01"));
    // A stored tree changed (species and planting date).
    let mut s2 = tree("s2", "Acer rubrum", 26.0, "2024-05-01");
    s2.planted_on = Some("2001-04-01".parse().expect("date"));
    records.push(s2);
    // Enough new trees to fill more than one batch, some re-measured right away.
    for i in 0..1_300 {
        let mut t = tree(
            &format!("n{i}"),
            "Quercus rubra",
            10.0 + i as f64 / 7.0,
            "2024-07-01",
        );
        t.lon = Some(-84.19 + i as f64 * 1e-4);
        t.height_m = if i % 3 == 0 { None } else { Some(8.5) };
        t.house_number = Some(format!("{i}a"));
        records.push(t.clone());
        if i % 5 == 0 {
            t.measured_on = "2025-07-01".parse().expect("date");
            t.stems_cm = vec![11.0 + i as f64 / 7.0];
            records.push(t);
        }
        if i == 700 {
            // a changed long after its batch was written.
            let mut a3 = tree("a", "Acer rubrum", 33.0, "2026-01-01");
            a3.notes = Some("pruned".to_string());
            records.push(a3);
        }
    }
    let mut rows = rows_of(records);
    for row in &mut rows {
        row.zone_id = match row.record.lon {
            Some(lon) if lon < -84.1 => Some(1),
            Some(_) => Some(2),
            None => None,
        };
    }
    rows
}

/// The trees stored before the rows of [`every_branch`] are imported.
fn stored_before(store: &mut Store) {
    let earlier = rows_of(vec![
        tree("s1", "Acer rubrum", 40.0, "2023-05-01"),
        tree("s2", "Tilia cordata", 25.0, "2023-05-01"),
    ]);
    store
        .import_trees_via(&earlier, "crew-b", now(), false, ImportPath::PerRow)
        .expect("earlier import");
}

#[test]
fn every_branch_gives_the_same_rows_and_audit_log_by_both_paths() {
    let rows = every_branch();
    let (per_row, bulk, a, b) = both_paths(&stored_before, &rows);
    let (a, b) = (a.expect("per-row import"), b.expect("bulk import"));
    assert_eq!(a, b);
    // s1 and s2 gain a zone, s2 then changes species, b its street, a its notes.
    assert_eq!(a.trees_updated, 5, "{a:?}");
    assert_eq!(a.measurements_unchanged, 3, "{a:?}");
    assert_same_audit(&per_row, &bulk);
}

#[test]
fn undo_of_a_bulk_import_reverts_it_whole_as_it_does_a_per_row_import() {
    let rows = every_branch();
    let (mut per_row, mut bulk, a, b) = both_paths(&stored_before, &rows);
    a.expect("per-row import");
    b.expect("bulk import");
    let trees_before = {
        let mut store = fresh();
        stored_before(&mut store);
        (
            store.tree_count().expect("count"),
            store.measurement_count().expect("count"),
        )
    };
    for store in [&mut per_row, &mut bulk] {
        let undone = store.undo_last("planner").expect("undo").expect("a change");
        assert_eq!(undone.actor, "import");
        assert_eq!(
            (
                store.tree_count().expect("count"),
                store.measurement_count().expect("count")
            ),
            trees_before
        );
        let s2_species: String = store
            .conn()
            .query_row(
                "SELECT s.scientific_name FROM trees t JOIN species s ON s.id = t.species_id WHERE uid = 's2'",
                [],
                |r| r.get(0),
            )
            .expect("s2");
        assert_eq!(s2_species, "Tilia cordata", "the update is undone too");
    }
    assert_same_audit(&per_row, &bulk);
}

#[test]
fn the_triggers_audit_writes_after_a_bulk_import_and_after_a_failed_one() {
    let mut store = fresh();
    store
        .import_trees_via(&generated(200, 3), "import", now(), false, ImportPath::Bulk)
        .expect("bulk import");
    let mut bad = generated(200, 4);
    bad[150].record.stems_cm = vec![5_000.0];
    assert!(
        store
            .import_trees_via(&bad, "import", now(), false, ImportPath::Bulk)
            .is_err()
    );
    store
        .import_trees_via(&generated(200, 5), "import", now(), true, ImportPath::Bulk)
        .expect("dry run");
    let before: i64 = store
        .conn()
        .query_row("SELECT count(*) FROM audit_log", [], |r| r.get(0))
        .expect("count");
    store
        .import_trees_via(
            &rows_of(vec![tree("late", "Acer rubrum", 20.0, "2026-05-01")]),
            "field",
            now(),
            false,
            ImportPath::PerRow,
        )
        .expect("one tree");
    let after: i64 = store
        .conn()
        .query_row("SELECT count(*) FROM audit_log", [], |r| r.get(0))
        .expect("count");
    assert_eq!(
        after - before,
        2,
        "the tree and its measurement are audited"
    );
    let triggers: i64 = store
        .conn()
        .query_row(
            "SELECT count(*) FROM sqlite_master WHERE type = 'trigger'
             AND name IN ('audit_trees_insert', 'audit_measurements_insert')",
            [],
            |r| r.get(0),
        )
        .expect("count");
    assert_eq!(triggers, 2);
}

#[test]
fn a_failing_row_is_the_same_row_with_the_same_message_by_both_paths_and_nothing_is_written() {
    // Row 700's measurement fails (DBH above the inventory's check); row 900's tree fails later in
    // the same batch (lon without lat). Row by row, 700 fails first; the bulk path writes trees
    // before measurements, so it must trace the failure back to the first row in file order.
    let mut rows = generated(1_000, 11);
    rows[700].record.stems_cm = vec![5_000.0];
    rows[900].record.uid = Some("fresh-uid".to_string());
    rows[900].record.lat = None;
    let (per_row, bulk, a, b) = both_paths(&|_| {}, &rows);
    let a = a.expect_err("per-row fails");
    let b = b.expect_err("bulk fails");
    match (&a, &b) {
        (
            StoreError::Row {
                line: la,
                message: ma,
            },
            StoreError::Row {
                line: lb,
                message: mb,
            },
        ) => {
            assert_eq!((la, ma), (lb, mb));
            assert_eq!(*la, rows[700].line);
            assert!(ma.contains("dbh_cm"), "{ma}");
        }
        other => panic!("expected row errors, got {other:?}"),
    }
    for store in [&per_row, &bulk] {
        assert_eq!(store.tree_count().expect("count"), 0);
    }
    assert_same_audit(&per_row, &bulk);

    // An unknown species after rows whose batch holds a failing row: the earlier row is reported.
    let mut rows = generated(300, 12);
    rows[100].record.lat = None;
    rows[200].record.species = "Nonexistent species".to_string();
    let (_, _, a, b) = both_paths(&|_| {}, &rows);
    let (a, b) = (a.expect_err("per-row fails"), b.expect_err("bulk fails"));
    assert_eq!(a.to_string(), b.to_string());
    assert!(
        a.to_string()
            .starts_with(&format!("line {}:", rows[100].line)),
        "{a}"
    );
}
