//! Backup while another program has the inventory open, restore (and what it refuses), and that no
//! output option can overwrite the inventory itself.

mod common;

use std::path::Path;

use common::{TREES_HEADER, empty_inventory, run, stderr};
use streetwood::store::Store;

fn demo(dir: &Path, name: &str) -> String {
    let path = dir.join(name);
    let output = run(dir, &["demo", "--out", path.to_str().expect("path")]);
    assert!(output.status.success(), "{}", stderr(&output));
    path.to_string_lossy().into_owned()
}

fn trees(db: &str) -> i64 {
    Store::open_existing(Path::new(db))
        .expect("open")
        .tree_count()
        .expect("count")
}

#[test]
fn backup_works_while_another_process_reads_and_writes_and_skips_uncommitted_rows() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = demo(dir.path(), "city.db");
    // This test process is the other program: a read transaction and an uncommitted write are open.
    let reader = rusqlite::Connection::open(&db).expect("reader");
    reader.execute_batch("BEGIN").expect("begin");
    let seen: i64 = reader
        .query_row("SELECT count(*) FROM trees", [], |r| r.get(0))
        .expect("read");
    let writer = rusqlite::Connection::open(&db).expect("writer");
    writer
        .execute_batch("BEGIN IMMEDIATE; UPDATE trees SET notes = 'uncommitted' WHERE id = 1;")
        .expect("write lock with a pending change");

    let backup = dir.path().join("copy.db");
    let output = run(
        dir.path(),
        &["--db", &db, "backup", backup.to_str().expect("path")],
    );
    assert!(output.status.success(), "{}", stderr(&output));
    assert!(
        stderr(&output).contains("integrity ok"),
        "{}",
        stderr(&output)
    );
    assert!(!dir.path().join("copy.db.partial").exists());
    writer.execute_batch("ROLLBACK").expect("rollback");
    reader.execute_batch("COMMIT").expect("end read");

    let copy = Store::open_existing(&backup).expect("the backup opens");
    assert_eq!(copy.integrity_check().expect("check"), "ok");
    assert_eq!(copy.tree_count().expect("count"), seen);
    let notes: Option<String> = copy
        .conn()
        .query_row("SELECT notes FROM trees WHERE id = 1", [], |r| r.get(0))
        .expect("row");
    assert_ne!(notes.as_deref(), Some("uncommitted"));

    // An existing backup is replaced only with --force.
    let again = run(
        dir.path(),
        &["--db", &db, "backup", backup.to_str().expect("path")],
    );
    assert_eq!(again.status.code(), Some(2), "{}", stderr(&again));
    assert!(stderr(&again).contains("--force"), "{}", stderr(&again));
}

#[test]
fn restore_checks_the_backup_keeps_the_replaced_inventory_and_refuses_bad_files() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let db = demo(d, "city.db");
    let backup = d.join("city-backup.db");
    let b = backup.to_str().expect("path");
    assert!(run(d, &["--db", &db, "backup", b]).status.success());

    // Change the inventory after the backup: add a tree.
    let csv = d.join("one.csv");
    std::fs::write(
        &csv,
        format!("{TREES_HEADER}\nnew-1,Acer rubrum,,,Late Street,,,,,2026-01-05,12,,,,,,,,\n"),
    )
    .expect("csv");
    let output = run(
        d,
        &["--db", &db, "import", "trees", csv.to_str().expect("p")],
    );
    assert!(output.status.success(), "{}", stderr(&output));
    let after_import = trees(&db);

    // Without --force an existing inventory is left alone (exit 2).
    let refused = run(d, &["--db", &db, "restore", b]);
    assert_eq!(refused.status.code(), Some(2), "{}", stderr(&refused));
    assert!(stderr(&refused).contains("--force"), "{}", stderr(&refused));
    assert_eq!(trees(&db), after_import);

    // With --force: the backup's content, and the replaced inventory kept beside it.
    let output = run(d, &["--db", &db, "restore", b, "--force"]);
    assert!(output.status.success(), "{}", stderr(&output));
    assert_eq!(trees(&db), after_import - 1);
    let kept: Vec<_> = std::fs::read_dir(d)
        .expect("list")
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with("city-before-restore-") && n.ends_with(".db"))
        .collect();
    assert_eq!(kept.len(), 1, "{kept:?}");
    assert_eq!(trees(&d.join(&kept[0]).to_string_lossy()), after_import);
    // The demo's only findings are its three planted measurement mistakes (exit 3); the file is whole.
    let check = run(d, &["--db", &db, "check"]);
    assert!(
        matches!(check.status.code(), Some(0 | 3)),
        "{}",
        stderr(&check)
    );
    assert!(
        String::from_utf8_lossy(&check.stdout).contains("Integrity (PRAGMA integrity_check): ok")
    );

    // Restoring to a new file creates it whole.
    let fresh = d.join("fresh.db");
    let output = run(d, &["--db", fresh.to_str().expect("p"), "restore", b]);
    assert!(output.status.success(), "{}", stderr(&output));
    assert_eq!(trees(&fresh.to_string_lossy()), after_import - 1);

    // Refused, each with exit 2 and the inventory untouched: a damaged backup, a text file, someone
    // else's SQLite file, a backup from a newer Streetwood, the inventory itself.
    let damaged = d.join("damaged.db");
    let mut bytes = std::fs::read(&backup).expect("read");
    let page = 4096;
    for byte in &mut bytes[page * 3..page * 40] {
        *byte = 0x5a;
    }
    std::fs::write(&damaged, &bytes).expect("write");
    let damaged_late = d.join("damaged-late.db");
    let mut bytes = std::fs::read(&backup).expect("read");
    let end = bytes.len();
    for byte in &mut bytes[end - page * 20..end - page * 2] {
        *byte = 0x5a;
    }
    std::fs::write(&damaged_late, &bytes).expect("write");
    let text = d.join("notes.db");
    std::fs::write(&text, "uid,species\n".repeat(200)).expect("write");
    let foreign = d.join("foreign.db");
    let conn = rusqlite::Connection::open(&foreign).expect("open");
    conn.execute_batch("CREATE TABLE recipes (name TEXT); PRAGMA user_version = 3;")
        .expect("schema");
    drop(conn);
    let newer = d.join("newer.db");
    std::fs::copy(&backup, &newer).expect("copy");
    let conn = rusqlite::Connection::open(&newer).expect("open");
    conn.pragma_update(None, "user_version", 999)
        .expect("version");
    drop(conn);
    let before = std::fs::read(&db).expect("read inventory");
    for (file, expected) in [
        (&damaged, "integrity"),
        (&damaged_late, "integrity"),
        (&text, "not a Streetwood inventory"),
        (&foreign, "not a Streetwood inventory"),
        (&newer, "newer Streetwood"),
        (&d.join("city.db"), "the inventory itself"),
        (&d.join("missing.db"), "does not exist"),
    ] {
        let output = run(
            d,
            &["--db", &db, "restore", file.to_str().expect("p"), "--force"],
        );
        assert_eq!(
            output.status.code(),
            Some(2),
            "{}: {}",
            file.display(),
            stderr(&output)
        );
        assert!(
            stderr(&output).contains(expected),
            "{}: expected '{expected}' in {}",
            file.display(),
            stderr(&output)
        );
    }
    assert!(
        std::fs::read(&db).expect("read") == before,
        "a refused restore changed the inventory"
    );
}

#[test]
fn no_output_option_overwrites_the_inventory() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let db = demo(d, "city.db");
    let rejects_csv = d.join("mixed.csv");
    std::fs::write(
        &rejects_csv,
        format!("{TREES_HEADER}\ng1,Acer rubrum,,,A Street,,,,,2026-01-05,12,,,,,,,,\nb1,Nonesuch tree,,,A Street,,,,,2026-01-05,12,,,,,,,,\n"),
    )
    .expect("csv");
    let study = |args: &[&str]| {
        let mut all = vec!["--db", db.as_str(), "study"];
        all.extend_from_slice(args);
        let output = run(d, &all);
        assert!(output.status.success(), "{}", stderr(&output));
    };
    study(&[
        "new",
        "Works",
        "--start-year",
        "2026",
        "--horizon",
        "5",
        "--runs",
        "5",
    ]);
    study(&["add", "Works", "--street", "Foundry Street"]);
    let before = std::fs::read(&db).expect("read");
    let same_by_another_name = format!("{}/./city.db", d.display());
    let r = rejects_csv.to_str().expect("p");
    for target in [db.as_str(), same_by_another_name.as_str()] {
        let attempts: Vec<Vec<&str>> = vec![
            vec!["export", "trees", "--format", "csv", "--out", target],
            vec!["export", "trees", "--format", "geojson", "--out", target],
            vec!["summary", "--format", "html", "--out", target],
            vec!["benefits", "--out", target],
            vec!["study", "run", "Works", "--out", target],
            vec!["check", "--out", target],
            vec!["backup", target, "--force"],
            vec!["import", "trees", r, "--keep-good", "--rejects", target],
        ];
        for args in attempts {
            let mut all = vec!["--db", db.as_str()];
            all.extend_from_slice(&args);
            let output = run(d, &all);
            assert_ne!(output.status.code(), Some(0), "{args:?} succeeded");
            assert!(
                std::fs::read(&db).expect("read") == before,
                "{args:?} changed the inventory: {}",
                stderr(&output)
            );
        }
    }
    assert_eq!(trees(&db), 2497);
    // The demo's only findings are its three planted measurement mistakes (exit 3); the file is whole.
    let check = run(d, &["--db", &db, "check"]);
    assert!(
        matches!(check.status.code(), Some(0 | 3)),
        "{}",
        stderr(&check)
    );
    assert!(
        String::from_utf8_lossy(&check.stdout).contains("Integrity (PRAGMA integrity_check): ok")
    );
}

#[test]
fn init_makes_an_empty_inventory_that_backs_up_and_restores() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let db = empty_inventory(d);
    let copy = d.join("b.db");
    let output = run(d, &["--db", &db, "backup", copy.to_str().expect("p")]);
    assert!(output.status.success(), "{}", stderr(&output));
    let output = run(
        d,
        &["--db", &db, "restore", copy.to_str().expect("p"), "--force"],
    );
    assert!(output.status.success(), "{}", stderr(&output));
    assert_eq!(trees(&db), 0);
}
