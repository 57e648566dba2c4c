//! `streetwood check` end to end, and hostile text (SQL in names) stored verbatim.

mod common;

use std::path::Path;

use common::{TREES_HEADER, empty_inventory, run, stderr, stdout};
use streetwood::store::Store;

fn write(dir: &Path, name: &str, text: &str) -> String {
    let path = dir.join(name);
    std::fs::write(&path, text).expect("write");
    path.to_string_lossy().into_owned()
}

/// The demo town carries three planted measurement mistakes (demo-inventory/README.md, "Planted
/// mistakes"): `check` lists exactly those, with exit code 3, and finds nothing else wrong.
#[test]
fn check_on_the_demo_reports_the_planted_mistakes() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = dir.path().join("demo.db");
    let db = db.to_str().expect("p");
    assert!(run(dir.path(), &["demo", "--out", db]).status.success());
    let output = run(dir.path(), &["--db", db, "check"]);
    assert_eq!(output.status.code(), Some(3), "{}", stderr(&output));
    let text = stdout(&output);
    for line in [
        "Integrity (PRAGMA integrity_check): ok",
        "Foreign keys: ok",
        "Orphan rows: ok",
        "Implausible measurements (check in the field): 3",
        "(20fd2205-39e5-4423-946e-e8e0e0997b7b): DBH shrank 2.8 cm",
        "(6f8df9fc-ae30-4d07-9232-39ab3d4424b4): DBH grew 13.8 cm in 1094 days",
        "(708b0ba4-3d35-4718-b89d-f846fff540d6): 2024-05-16: height 1.2 m is below breast height",
    ] {
        assert!(text.contains(line), "missing {line:?} in:\n{text}");
    }
    let readme = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/demo-inventory/README.md"
    ))
    .expect("demo README");
    for uid in [
        "20fd2205-39e5-4423-946e-e8e0e0997b7b",
        "6f8df9fc-ae30-4d07-9232-39ab3d4424b4",
        "708b0ba4-3d35-4718-b89d-f846fff540d6",
    ] {
        assert!(readme.contains(uid), "the README names planted tree {uid}");
    }
}

/// Planted problems, each found once, in text, JSON and CSV, with exit code 3.
#[test]
fn planted_problems_are_listed_for_follow_up() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let db = empty_inventory(d);
    // shrink: 30 → 27.5 cm (2.5 cm lost); grow: 20 → 24 cm in a year (4 cm/yr); short: 1.2 m tall
    // with a DBH; fine: 30 → 29 cm (tape error) and 30 → 35 cm over two years (2.5 cm/yr).
    let csv = write(
        d,
        "planted.csv",
        &format!(
            "{TREES_HEADER}\n\
             shrink,Acer rubrum,,,A Row,,,,,2020-06-01,30,,,,,,,,\n\
             shrink,Acer rubrum,,,A Row,,,,,2021-06-01,27.5,,,,,,,,\n\
             grow,Acer rubrum,,,A Row,,,,,2020-06-01,20,,,,,,,,\n\
             grow,Acer rubrum,,,A Row,,,,,2021-06-01,24,,,,,,,,\n\
             short,Acer rubrum,,,A Row,,,,,2021-06-01,3,,1.2,,,,,,\n\
             fine,Acer rubrum,,,A Row,,,,,2020-06-01,30,,,,,,,,\n\
             fine,Acer rubrum,,,A Row,,,,,2021-06-01,29,,,,,,,,\n\
             fine,Acer rubrum,,,A Row,,,,,2023-06-01,34,,,,,,,,\n"
        ),
    );
    let output = run(d, &["--db", &db, "import", "trees", &csv]);
    assert!(output.status.success(), "{}", stderr(&output));
    // An orphan measurement (its tree does not exist) and a tree left without measurements, made
    // behind the store's back as a damaged or hand-edited file would be.
    {
        let conn = rusqlite::Connection::open(&db).expect("open");
        conn.execute_batch(
            "PRAGMA foreign_keys = OFF;
             INSERT INTO measurements (tree_id, measured_on, dbh_cm, created_at)
                 VALUES (9999, '2021-01-01', 10, '2021-01-01T00:00:00Z');
             INSERT INTO trees (uid, species_id, status, created_at, updated_at)
                 VALUES ('bare', (SELECT min(id) FROM species), 'standing', 'x', 'x');",
        )
        .expect("plant damage");
    }

    let output = run(d, &["--db", &db, "check"]);
    assert_eq!(output.status.code(), Some(3), "{}", stderr(&output));
    assert!(
        stderr(&output).contains("5 findings for follow-up"),
        "{}",
        stderr(&output)
    );
    let text = stdout(&output);
    for expected in [
        "Integrity (PRAGMA integrity_check): ok",
        "Foreign keys: 1",
        "measurements row",
        "refers to a row of trees that does not exist",
        "Orphan rows: 1",
        "(bare): tree has no measurement",
        "Implausible measurements (check in the field): 3",
        "(shrink): DBH shrank 2.5 cm, from 30 cm on 2020-06-01 to 27.5 cm on 2021-06-01",
        "(grow): DBH grew 4.0 cm in 365 days",
        "(short): 2021-06-01: height 1.2 m is below breast height (1.37 m)",
    ] {
        assert!(text.contains(expected), "missing '{expected}' in\n{text}");
    }
    assert!(!text.contains("(fine)"), "{text}");

    let json = run(d, &["--db", &db, "check", "--format", "json"]);
    assert_eq!(json.status.code(), Some(3));
    let value: serde_json::Value = serde_json::from_str(&stdout(&json)).expect("JSON");
    assert_eq!(value["clean"], false);
    let kinds: Vec<&str> = value["findings"]
        .as_array()
        .expect("findings")
        .iter()
        .map(|f| f["kind"].as_str().expect("kind"))
        .collect();
    assert_eq!(
        kinds,
        [
            "foreign_key",
            "orphan",
            "implausible",
            "implausible",
            "implausible"
        ]
    );

    let out = d.join("findings.csv");
    let csv = run(
        d,
        &[
            "--db",
            &db,
            "check",
            "--format",
            "csv",
            "--out",
            out.to_str().expect("p"),
        ],
    );
    assert_eq!(csv.status.code(), Some(3));
    let mut reader = csv::Reader::from_path(&out).expect("csv written");
    assert_eq!(
        reader.headers().expect("header").iter().collect::<Vec<_>>(),
        ["kind", "table", "row_id", "tree_id", "tree_uid", "message"]
    );
    let uids: Vec<String> = reader
        .records()
        .map(|r| r.expect("row")[4].to_string())
        .collect();
    assert_eq!(uids, ["", "bare", "shrink", "grow", "short"]);
}

/// SQL in text fields is stored as text (the store binds parameters; it never builds SQL from data),
/// and SQL as a species name is an unknown species, quoted back verbatim.
#[test]
fn hostile_text_is_stored_verbatim() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let db = empty_inventory(d);
    let hostile = "x'); DROP TABLE trees;--";
    let csv = write(
        d,
        "hostile.csv",
        &format!(
            "{TREES_HEADER}\nh1,Acer rubrum,,,\"{hostile}\",\"1\"\" OR 1=1\",,,,2026-01-05,20,,,,,,,,\"{hostile}\"\n"
        ),
    );
    let output = run(d, &["--db", &db, "import", "trees", &csv]);
    assert!(output.status.success(), "{}", stderr(&output));
    let store = Store::open_existing(Path::new(&db)).expect("open");
    let id = store.tree_id_by_uid("h1").expect("q").expect("tree");
    let detail = store.tree_detail(id).expect("q").expect("row");
    assert_eq!(detail.summary.street.as_deref(), Some(hostile));
    let (house, notes): (Option<String>, Option<String>) = store
        .conn()
        .query_row(
            "SELECT house_number, notes FROM trees WHERE id = ?1",
            [id],
            |r| Ok((r.get(0)?, r.get(1)?)),
        )
        .expect("row");
    assert_eq!(house.as_deref(), Some("1\" OR 1=1"));
    assert_eq!(notes.as_deref(), Some(hostile));
    drop(store);

    let as_species = write(
        d,
        "species.csv",
        &format!("species,dbh_cm\n\"{hostile}\",20\n"),
    );
    let output = run(d, &["--db", &db, "import", "trees", &as_species]);
    assert_eq!(output.status.code(), Some(2), "{}", stderr(&output));
    assert!(
        stderr(&output).contains(&format!("unknown species '{hostile}'")),
        "{}",
        stderr(&output)
    );
    let export = run(d, &["--db", &db, "export", "trees"]);
    assert!(stdout(&export).contains(hostile), "{}", stdout(&export));
    let check = run(d, &["--db", &db, "check"]);
    assert_eq!(check.status.code(), Some(0), "{}", stderr(&check));
}
