//! `streetwood copy` and `streetwood merge` end to end: three crews take copies of the demo, work apart,
//! and their work comes together in the office file.

mod common;

use std::path::Path;

use common::{TREES_HEADER, run, stderr, stdout};

fn ok(dir: &Path, args: &[&str]) -> String {
    let output = run(dir, args);
    assert!(
        output.status.success(),
        "{args:?} failed: {}",
        stderr(&output)
    );
    stdout(&output)
}

fn query<T: rusqlite::types::FromSql>(db: &Path, sql: &str) -> T {
    let conn = rusqlite::Connection::open(db).expect("open");
    conn.query_row(sql, [], |r| r.get(0)).expect(sql)
}

fn trees_csv(dir: &Path, name: &str, rows: &[String]) -> String {
    let path = dir.join(name);
    std::fs::write(&path, format!("{TREES_HEADER}\n{}\n", rows.join("\n"))).expect("write csv");
    path.to_string_lossy().into_owned()
}

fn new_tree(uid: &str, street: &str, number: u32) -> String {
    format!(
        "{uid},Tilia cordata,-84.1,42.7,{street},{number},verge,2026-04-01,standing,2026-06-02,6.5,,3.1,,,,,good,"
    )
}

#[test]
fn three_crews_merge_into_the_office_with_the_conflict_reported() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let office = d.join("office.db");
    let o = office.to_str().expect("utf-8");
    ok(d, &["demo", "--out", o]);
    for crew in ["a", "b", "c"] {
        ok(
            d,
            &[
                "--db",
                o,
                "copy",
                "--for",
                &format!("crew {crew}"),
                &format!("{crew}.db"),
            ],
        );
    }
    let trees_before: i64 = query(&office, "SELECT count(*) FROM trees");
    let measurements_before: i64 = query(&office, "SELECT count(*) FROM measurements");
    let tree: String = query(
        &office,
        "SELECT uid FROM trees WHERE status = 'standing' ORDER BY id LIMIT 1",
    );
    let order: i64 = query(
        &office,
        "SELECT id FROM work_orders WHERE status = 'open' AND task = 'prune' ORDER BY id LIMIT 1",
    );
    let order = order.to_string();

    // Crew A: two new trees on Larkspur Close, re-measures the tree, closes the order.
    let a_csv = trees_csv(
        d,
        "a.csv",
        &[
            new_tree("crew-a-1", "Larkspur Close", 2),
            new_tree("crew-a-2", "Larkspur Close", 4),
            format!("{tree},Acer platanoides,,,,,,,,2026-06-03,51.0,,,,,,,,"),
        ],
    );
    ok(d, &["--db", "a.db", "import", "trees", &a_csv]);
    ok(
        d,
        &[
            "--db",
            "a.db",
            "work",
            "done",
            &order,
            "--on",
            "2026-06-03",
            "--notes",
            "done by crew A",
            "--today",
            "2026-06-03",
        ],
    );
    // Crew B: one new tree on Tanner's Walk and the same tree re-measured.
    let b_csv = trees_csv(
        d,
        "b.csv",
        &[
            new_tree("crew-b-1", "Tanners Walk", 7),
            format!("{tree},Acer platanoides,,,,,,,,2026-06-04,51.4,,,,,,,,"),
        ],
    );
    ok(d, &["--db", "b.db", "import", "trees", &b_csv]);
    // Crew C: edits the same order's notes (after crew A closed it on their laptop).
    std::thread::sleep(std::time::Duration::from_millis(20));
    ok(
        d,
        &[
            "--db",
            "c.db",
            "work",
            "edit",
            &order,
            "--notes",
            "bring the long ladder",
        ],
    );

    let report_a = ok(d, &["--db", o, "merge", "a.db"]);
    assert!(report_a.contains("crew crew a"), "{report_a}");
    let report_b = ok(d, &["--db", o, "merge", "b.db", "--format", "json"]);
    let report_b: serde_json::Value = serde_json::from_str(&report_b).expect("json report");
    let counts = |report: &serde_json::Value, table: &str| -> (u64, u64) {
        let t = report["tables"]
            .as_array()
            .expect("tables")
            .iter()
            .find(|t| t["table"] == table)
            .expect("table");
        (
            t["added"].as_u64().expect("n"),
            t["updated"].as_u64().expect("n"),
        )
    };
    assert_eq!(counts(&report_b, "trees"), (1, 0));
    assert_eq!(counts(&report_b, "measurements"), (2, 0));
    assert_eq!(report_b["conflicts"].as_array().expect("list").len(), 0);

    let dry = ok(
        d,
        &["--db", o, "merge", "c.db", "--dry-run", "--format", "json"],
    );
    let report_c = ok(d, &["--db", o, "merge", "c.db", "--format", "json"]);
    let dry: serde_json::Value = serde_json::from_str(&dry).expect("json");
    let report_c: serde_json::Value = serde_json::from_str(&report_c).expect("json report");
    assert_eq!(dry["tables"], report_c["tables"]);
    assert_eq!(dry["dry_run"], true);
    assert_eq!(counts(&report_c, "work_orders"), (0, 1));
    assert_eq!(counts(&report_c, "trees"), (0, 0));
    let conflicts = report_c["conflicts"].as_array().expect("list");
    assert_eq!(conflicts.len(), 1, "{report_c:#}");
    assert_eq!(conflicts[0]["table"], "work_orders");
    assert_eq!(conflicts[0]["field"], "notes");
    assert_eq!(conflicts[0]["other_value"], "bring the long ladder");
    assert!(
        conflicts[0]["target_value"]
            .as_str()
            .expect("text")
            .contains("done by crew A")
    );
    assert_eq!(conflicts[0]["winner"], "other");
    assert_eq!(conflicts[0]["rule"], "later_change");

    // The office by hand: every crew's trees and measurements, the order done with crew C's notes.
    assert_eq!(
        query::<i64>(&office, "SELECT count(*) FROM trees"),
        trees_before + 3
    );
    assert_eq!(
        query::<i64>(&office, "SELECT count(*) FROM measurements"),
        measurements_before + 5
    );
    assert_eq!(
        query::<String>(
            &office,
            "SELECT group_concat(DISTINCT street) FROM trees WHERE uid LIKE 'crew-%' ORDER BY street"
        ),
        "Larkspur Close,Tanners Walk"
    );
    assert_eq!(
        query::<String>(
            &office,
            &format!(
                "SELECT group_concat(m.dbh_cm, ';') FROM (SELECT dbh_cm FROM measurements WHERE tree_id = (SELECT id FROM trees WHERE uid = '{tree}') AND measured_on >= '2026-06-01' ORDER BY measured_on) m"
            )
        ),
        "51.0;51.4"
    );
    let (status, done_on, notes): (String, String, String) = {
        let conn = rusqlite::Connection::open(&office).expect("open");
        conn.query_row(
            &format!("SELECT status, done_on, notes FROM work_orders WHERE id = {order}"),
            [],
            |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?)),
        )
        .expect("order")
    };
    assert_eq!(
        (status.as_str(), done_on.as_str(), notes.as_str()),
        ("done", "2026-06-03", "bring the long ladder")
    );
    // The losing value stays in the audit log (the merge's update row has it as `before`).
    let kept: i64 = query(
        &office,
        &format!(
            "SELECT count(*) FROM audit_log WHERE actor = 'merge' AND table_name = 'work_orders' AND row_id = {order} AND json_extract(before_json, '$.notes') LIKE '%done by crew A%'"
        ),
    );
    assert_eq!(kept, 1);

    // Merging again changes nothing.
    let again = ok(d, &["--db", o, "merge", "c.db", "--format", "json"]);
    let again: serde_json::Value = serde_json::from_str(&again).expect("json");
    for t in again["tables"].as_array().expect("tables") {
        assert_eq!(
            (t["added"].as_u64(), t["updated"].as_u64()),
            (Some(0), Some(0)),
            "{t}"
        );
    }
    println!("{}", ok(d, &["--db", o, "merge", "a.db"]));
}

#[test]
fn bad_merges_are_refused_with_exit_2_and_change_nothing() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    ok(d, &["init", "one.db"]);
    ok(d, &["init", "two.db"]);
    ok(d, &["--db", "one.db", "backup", "one-backup.db"]);
    std::fs::write(
        d.join("notes.db"),
        "not a database at all, just some words here",
    )
    .expect("write");
    let audit = || query::<i64>(&d.join("one.db"), "SELECT count(*) FROM audit_log");
    let before = audit();
    for (other, says) in [
        ("one.db", "inventory itself"),
        ("two.db", "different inventory"),
        ("one-backup.db", "same inventory file"),
        ("notes.db", "not a Streetwood inventory"),
        ("missing.db", "does not exist"),
    ] {
        let output = run(d, &["--db", "one.db", "merge", other]);
        assert_eq!(
            output.status.code(),
            Some(2),
            "{other}: {}",
            stderr(&output)
        );
        assert!(
            stderr(&output).contains(says),
            "{other}: {}",
            stderr(&output)
        );
    }
    let output = run(d, &["--db", "one.db", "copy", "--for", "x", "two.db"]);
    assert_eq!(output.status.code(), Some(2));
    assert!(
        stderr(&output).contains("exists already"),
        "{}",
        stderr(&output)
    );
    assert_eq!(audit(), before);
}

#[test]
fn interactive_merge_refuses_dry_run_and_json_before_opening_a_screen() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    ok(d, &["init", "office.db"]);
    ok(d, &["--db", "office.db", "copy", "--for", "crew a", "a.db"]);
    let audit = || query::<i64>(&d.join("office.db"), "SELECT count(*) FROM audit_log");
    let peers = || query::<i64>(&d.join("office.db"), "SELECT count(*) FROM sync_peers");
    let before = (audit(), peers());
    for (extra, says) in [
        ("--dry-run", "--interactive does not go with --dry-run"),
        (
            "--format=json",
            "--interactive does not go with --format json",
        ),
    ] {
        // No terminal here: a refusal must come before any screen would open.
        let output = run(
            d,
            &["--db", "office.db", "merge", "a.db", "--interactive", extra],
        );
        assert_eq!(
            output.status.code(),
            Some(2),
            "{extra}: {}",
            stderr(&output)
        );
        assert!(
            stderr(&output).contains(says),
            "{extra}: {}",
            stderr(&output)
        );
        assert!(stdout(&output).is_empty(), "{}", stdout(&output));
    }
    assert_eq!((audit(), peers()), before);
}

// Undoing a merge reverts its rows but keeps the sync point, so the user is told what a second merge
// of the same copy will (not) bring back; undoing any other change says nothing of the kind.
#[test]
fn undoing_a_merge_says_what_a_second_merge_will_not_bring_back() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let office = d.join("office.db");
    let o = office.to_str().expect("utf-8");
    ok(d, &["demo", "--out", o]);
    ok(d, &["--db", o, "copy", "--for", "crew a", "a.db"]);
    let csv = trees_csv(d, "a.csv", &[new_tree("UNDO-1", "Wren Walk", 3)]);
    ok(d, &["--db", "a.db", "import", "trees", &csv]);
    ok(d, &["--db", o, "merge", "a.db"]);
    assert_eq!(
        query::<i64>(&office, "SELECT count(*) FROM trees WHERE uid = 'UNDO-1'"),
        1
    );
    let output = run(d, &["--db", o, "undo"]);
    assert!(output.status.success(), "{}", stderr(&output));
    assert!(stderr(&output).contains("by merge"), "{}", stderr(&output));
    assert!(
        stderr(&output).contains("note: undoing a merge does not forget it"),
        "{}",
        stderr(&output)
    );
    assert_eq!(
        query::<i64>(&office, "SELECT count(*) FROM trees WHERE uid = 'UNDO-1'"),
        0
    );
    // An ordinary undo has no such note.
    let csv = trees_csv(d, "b.csv", &[new_tree("UNDO-2", "Wren Walk", 5)]);
    ok(d, &["--db", o, "import", "trees", &csv]);
    let output = run(d, &["--db", o, "undo"]);
    assert!(!stderr(&output).contains("note:"), "{}", stderr(&output));
}
