//! End-to-end tests of tree import and export through the built binary.

mod common;

use common::{TREES_HEADER, empty_inventory, run, stderr, stdout};

fn write(dir: &std::path::Path, name: &str, text: &str) -> String {
    let path = dir.join(name);
    std::fs::write(&path, text).expect("write test file");
    path.to_string_lossy().into_owned()
}

const GOOD_ROWS: &str = "\
a1,Acer rubrum,-84.1,42.7,Elm Row,12,verge,2015-04-20,standing,2025-06-01,30.5,,12.5,3,9,8.5,5,,first tree
a2,Tilia cordata,-84.2,42.8,Ash Lane,7a,pit,,standing,2024-09-14,29.82,22;18;9,10,2.5,7,,,fair,\"comma, and \"\"quotes\"\"\"
a3,Quercus rubra,,,Birch Close,,median,,planned,2026-01-05,4,,,,,,,,'=cmd()
";

#[test]
fn csv_round_trip_store_and_back_is_equal() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = empty_inventory(dir.path());
    let input = format!("{TREES_HEADER}\n{GOOD_ROWS}");
    let file = write(dir.path(), "trees.csv", &input);
    let output = run(dir.path(), &["--db", &db, "import", "trees", &file]);
    assert!(output.status.success(), "{}", stderr(&output));
    let output = run(
        dir.path(),
        &["--db", &db, "export", "trees", "--format", "csv"],
    );
    assert!(output.status.success(), "{}", stderr(&output));
    assert_eq!(stdout(&output), input);
}

#[test]
fn bad_rows_are_all_named_nothing_is_written_and_the_file_is_unchanged() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = empty_inventory(dir.path());
    let csv = format!(
        "{TREES_HEADER}\n\
         g1,Acer rubrum,-84.1,42.7,Elm Row,,,,,2025-06-01,30,,,,,,,,\n\
         b1,Acer rubrm,-84.1,42.7,Elm Row,,,,,2025-06-01,30,,,,,,,,\n\
         b2,Acer rubrum,-84.1,42.7,Elm Row,,,,,2025-06-01,-5,,,,,,,,\n\
         b3,Acer rubrum,-84.1,42.7,Elm Row,,,,,2025-06-01,4000,,,,,,,,\n\
         b4,Acer rubrum,-84.1,42.7,Elm Row,,,,,2025-02-30,30,,,,,,,,\n\
         b5,Acer rubrum,-84.1,91.5,Elm Row,,,,,2025-06-01,30,,,,,,,,\n\
         b6,Acer rubrum,-84.1,42.7,Elm Row,,,,,2025-06-01,thirty,,,,,,,,\n\
         g2,Tilia cordata,-84.1,42.7,Elm Row,,,,,2025-06-01,20,,,,,,,,\n"
    );
    let file = write(dir.path(), "bad.csv", &csv);
    let before = std::fs::read(&db).expect("read inventory");
    let output = run(dir.path(), &["--db", &db, "import", "trees", &file]);
    assert_eq!(output.status.code(), Some(2), "{}", stderr(&output));
    let err = stderr(&output);
    for expected in [
        "bad.csv:3: species: unknown species 'Acer rubrm' (did you mean 'Acer rubrum'?)",
        "bad.csv:4: dbh_cm: -5 cm is not plausible",
        "bad.csv:5: dbh_cm: 4000 cm is not plausible",
        "bad.csv:6: measured_on: '2025-02-30' is not an ISO 8601 date",
        "bad.csv:7: lat: 91.5 is out of range",
        "bad.csv:8: dbh_cm: 'thirty' is not a number",
        "nothing was written: 6 of 8 rows have errors",
    ] {
        assert!(err.contains(expected), "missing '{expected}' in:\n{err}");
    }
    assert!(
        !err.contains("bad.csv:2:") && !err.contains("bad.csv:9:"),
        "good rows reported:\n{err}"
    );
    let after = std::fs::read(&db).expect("read inventory");
    assert!(before == after, "the inventory file changed");
    let export = run(dir.path(), &["--db", &db, "export", "trees"]);
    assert_eq!(
        stdout(&export).lines().count(),
        1,
        "only the header: nothing imported"
    );

    // --keep-good writes exactly the good rows, and the bad ones with reasons to the rejects file.
    let rejects = dir.path().join("rejects.csv");
    let output = run(
        dir.path(),
        &[
            "--db",
            &db,
            "import",
            "trees",
            &file,
            "--keep-good",
            "--rejects",
            rejects.to_str().expect("path"),
        ],
    );
    assert!(output.status.success(), "{}", stderr(&output));
    let export = stdout(&run(dir.path(), &["--db", &db, "export", "trees"]));
    let uids: Vec<&str> = export
        .lines()
        .skip(1)
        .filter_map(|l| l.split(',').next())
        .collect();
    assert_eq!(uids, ["g1", "g2"]);
    let rejected = std::fs::read_to_string(&rejects).expect("rejects written");
    let mut reader = csv::Reader::from_reader(rejected.as_bytes());
    let headers = reader.headers().expect("header").clone();
    assert_eq!(headers.iter().next_back(), Some("reason"));
    let rows: Vec<csv::StringRecord> = reader.records().map(|r| r.expect("row")).collect();
    let rejected_uids: Vec<&str> = rows.iter().map(|r| &r[0]).collect();
    assert_eq!(rejected_uids, ["b1", "b2", "b3", "b4", "b5", "b6"]);
    assert!(rows[0][19].contains("did you mean"));
}

#[test]
fn header_errors_are_file_errors_with_exit_2() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = empty_inventory(dir.path());
    let file = write(
        dir.path(),
        "typo.csv",
        "species,dbh_cm,heigth_m\nAcer rubrum,30,12\n",
    );
    let output = run(dir.path(), &["--db", &db, "import", "trees", &file]);
    assert_eq!(output.status.code(), Some(2));
    assert!(
        stderr(&output).contains("typo.csv:1: unknown column 'heigth_m'"),
        "{}",
        stderr(&output)
    );
}

// NIST SP 811 (2008) B.8: 1 in = 2.54 cm and 1 ft = 0.3048 m exactly; US customary headers are
// converted with exactly these factors.
#[test]
fn us_customary_headers_convert_exactly() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = empty_inventory(dir.path());
    let file = write(
        dir.path(),
        "us.csv",
        "uid,species,dbh_in,height_ft,crown_width_ft,measured_on\nu1,red maple,10,40,25,2025-05-05\nu2,Norway maple,,,,2025-05-05\n",
    );
    // u2 has no DBH at all: a row error, nothing written.
    let output = run(dir.path(), &["--db", &db, "import", "trees", &file]);
    assert_eq!(output.status.code(), Some(2));
    assert!(
        stderr(&output).contains("us.csv:3: dbh_cm: dbh_cm (or stems_cm) is required"),
        "{}",
        stderr(&output)
    );
    let file = write(
        dir.path(),
        "us.csv",
        "uid,species,dbh_in,height_ft,crown_width_ft,measured_on\nu1,red maple,10,40,25,2025-05-05\n",
    );
    let output = run(dir.path(), &["--db", &db, "import", "trees", &file]);
    assert!(output.status.success(), "{}", stderr(&output));
    let export = stdout(&run(dir.path(), &["--db", &db, "export", "trees"]));
    let mut reader = csv::Reader::from_reader(export.as_bytes());
    let row = reader
        .records()
        .next()
        .expect("one row")
        .expect("valid row");
    assert_eq!(&row[1], "Acer rubrum", "species found by its common name");
    assert_eq!(row[10].parse::<f64>().ok(), Some(10.0 * 2.54));
    assert_eq!(row[12].parse::<f64>().ok(), Some(40.0 * 0.3048));
    assert_eq!(row[14].parse::<f64>().ok(), Some(25.0 * 0.3048));
}

#[test]
fn repeated_uid_adds_a_measurement_and_reimport_changes_nothing() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = empty_inventory(dir.path());
    let file = write(
        dir.path(),
        "history.csv",
        &format!(
            "{TREES_HEADER}\nh1,Acer rubrum,,,Elm Row,,,,,2019-06-01,24,,,,,,,,\nh1,Acer rubrum,,,Elm Row,,,,,2025-06-01,28.5,,,,,,,,\n"
        ),
    );
    let output = run(dir.path(), &["--db", &db, "import", "trees", &file]);
    assert!(output.status.success(), "{}", stderr(&output));
    assert!(
        stderr(&output).contains("1 tree added, 0 trees updated, 2 measurements added"),
        "{}",
        stderr(&output)
    );
    let again = run(dir.path(), &["--db", &db, "import", "trees", &file]);
    assert!(
        stderr(&again)
            .contains("0 trees added, 0 trees updated, 0 measurements added, 2 unchanged"),
        "{}",
        stderr(&again)
    );
    let latest = stdout(&run(dir.path(), &["--db", &db, "export", "trees"]));
    assert_eq!(latest.lines().count(), 2);
    assert!(latest.contains(",2025-06-01,28.5,"));
    let history = stdout(&run(
        dir.path(),
        &["--db", &db, "export", "trees", "--history"],
    ));
    assert_eq!(history.lines().count(), 3);
}

#[test]
fn dry_run_writes_nothing() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = empty_inventory(dir.path());
    let file = write(dir.path(), "t.csv", &format!("{TREES_HEADER}\n{GOOD_ROWS}"));
    let output = run(
        dir.path(),
        &["--db", &db, "import", "trees", &file, "--dry-run"],
    );
    assert!(output.status.success(), "{}", stderr(&output));
    assert!(stderr(&output).contains("would import"));
    assert_eq!(
        stdout(&run(dir.path(), &["--db", &db, "export", "trees"]))
            .lines()
            .count(),
        1
    );
}

#[test]
fn geojson_export_parses_with_lon_lat_order() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = empty_inventory(dir.path());
    let file = write(dir.path(), "t.csv", &format!("{TREES_HEADER}\n{GOOD_ROWS}"));
    assert!(
        run(dir.path(), &["--db", &db, "import", "trees", &file])
            .status
            .success()
    );
    let out = dir.path().join("trees.geojson");
    let output = run(
        dir.path(),
        &[
            "--db",
            &db,
            "export",
            "trees",
            "--format",
            "geojson",
            "--out",
            out.to_str().expect("path"),
        ],
    );
    assert!(output.status.success(), "{}", stderr(&output));
    let text = std::fs::read_to_string(&out).expect("geojson written");
    let parsed: geojson::GeoJson = text.parse().expect("valid GeoJSON (geojson crate)");
    let geojson::GeoJson::FeatureCollection(collection) = parsed else {
        panic!("not a FeatureCollection");
    };
    assert_eq!(collection.features.len(), 3);
    let first = &collection.features[0];
    match first.geometry.as_ref().map(|g| &g.value) {
        Some(geojson::GeometryValue::Point { coordinates }) => {
            assert_eq!(
                coordinates.as_slice(),
                &[-84.1, 42.7],
                "RFC 7946: [longitude, latitude]"
            );
        }
        other => panic!("expected a Point, got {other:?}"),
    }
    let props = first.properties.as_ref().expect("properties");
    assert_eq!(props["species"], "Acer rubrum");
    assert_eq!(props["dbh_cm"], 30.5);
    assert!(
        collection.features[2].geometry.is_none(),
        "no coordinates → null geometry"
    );
    assert_eq!(
        collection.features[2].properties.as_ref().expect("p")["notes"],
        "=cmd()"
    );
}

#[test]
fn export_refuses_to_overwrite_the_inventory() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = empty_inventory(dir.path());
    let before = std::fs::read(&db).expect("read");
    let output = run(dir.path(), &["--db", &db, "export", "trees", "--out", &db]);
    assert_eq!(output.status.code(), Some(2));
    assert!(stderr(&output).contains("is the inventory itself"));
    assert!(before == std::fs::read(&db).expect("read"));
}

#[test]
fn missing_inventory_is_a_clear_error() {
    let dir = tempfile::tempdir().expect("temp dir");
    let output = run(dir.path(), &["--db", "nope.db", "export", "trees"]);
    assert_eq!(output.status.code(), Some(2));
    assert!(
        stderr(&output).contains("nope.db does not exist"),
        "{}",
        stderr(&output)
    );
    assert!(
        !dir.path().join("nope.db").exists(),
        "a typo must not create a file"
    );
}

#[test]
fn demo_file_exports_geojson_and_backs_up() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = dir.path().join("x.db");
    let db = db.to_str().expect("path");
    let output = run(dir.path(), &["demo", "--out", db]);
    assert!(output.status.success(), "{}", stderr(&output));
    assert!(stderr(&output).contains("an invented town"));
    let again = run(dir.path(), &["demo", "--out", db]);
    assert_eq!(
        again.status.code(),
        Some(2),
        "an existing file is not replaced without --force"
    );

    let output = run(
        dir.path(),
        &["--db", db, "export", "trees", "--format", "geojson"],
    );
    assert!(output.status.success(), "{}", stderr(&output));
    let parsed: geojson::GeoJson = stdout(&output).parse().expect("valid GeoJSON");
    let geojson::GeoJson::FeatureCollection(collection) = parsed else {
        panic!("not a FeatureCollection");
    };
    assert!(collection.features.len() > 2000, "about 2,500 demo trees");
    for feature in &collection.features {
        if let Some(geojson::GeometryValue::Point { coordinates }) =
            feature.geometry.as_ref().map(|g| &g.value)
        {
            // The invented town lies near 42.7° N, 84.1° W: longitude first, then latitude.
            assert!(
                (-85.0..-83.0).contains(&coordinates[0]) && (42.0..43.5).contains(&coordinates[1])
            );
        }
    }

    let backup = dir.path().join("backup.db");
    let output = run(
        dir.path(),
        &["--db", db, "backup", backup.to_str().expect("path")],
    );
    assert!(output.status.success(), "{}", stderr(&output));
    assert!(stderr(&output).contains("integrity ok"));
}

#[test]
fn without_db_the_demo_is_created_in_the_data_directory() {
    let dir = tempfile::tempdir().expect("temp dir");
    let output = run(dir.path(), &["export", "trees"]);
    assert!(output.status.success(), "{}", stderr(&output));
    assert!(stderr(&output).contains("first run"), "{}", stderr(&output));
    assert!(
        dir.path()
            .join("xdg-data/streetwood/demo-inventory.db")
            .exists()
    );
    assert!(stdout(&output).lines().count() > 2000);
    let second = run(dir.path(), &["export", "trees"]);
    assert!(!stderr(&second).contains("first run"));
}

#[test]
fn history_lists_every_change_and_undo_reverts_an_import() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = empty_inventory(dir.path());
    let first = write(
        dir.path(),
        "a.csv",
        &format!("{TREES_HEADER}\nh1,Acer rubrum,,,Elm Row,,,,,2019-06-01,24,,,,,,,,\n"),
    );
    let second = write(
        dir.path(),
        "b.csv",
        &format!("{TREES_HEADER}\nh1,Acer rubrum,,,Elm Row,,,,removed,2025-06-01,28.5,,,,,,,,\n"),
    );
    assert!(
        run(dir.path(), &["--db", &db, "import", "trees", &first])
            .status
            .success()
    );
    assert!(
        run(dir.path(), &["--db", &db, "import", "trees", &second])
            .status
            .success()
    );
    let history = stdout(&run(dir.path(), &["--db", &db, "history", "h1"]));
    assert!(history.contains("insert  trees"), "{history}");
    assert!(history.contains("update  trees"), "{history}");
    assert!(history.contains(r#""status":"removed""#), "{history}");
    assert_eq!(
        history.matches("insert  measurements").count(),
        2,
        "{history}"
    );

    let listed = stdout(&run(dir.path(), &["--db", &db, "undo", "--list"]));
    assert_eq!(listed.lines().count(), 2, "{listed}");
    let output = run(dir.path(), &["--db", &db, "undo"]);
    assert!(output.status.success(), "{}", stderr(&output));
    let export = stdout(&run(
        dir.path(),
        &["--db", &db, "export", "trees", "--history"],
    ));
    assert_eq!(export.lines().count(), 2, "one measurement left:\n{export}");
    assert!(export.contains(",standing,2019-06-01,24,"), "{export}");
    let output = run(dir.path(), &["--db", &db, "undo", "5"]);
    assert!(
        stderr(&output).contains("nothing more to undo (1 undone)"),
        "{}",
        stderr(&output)
    );
    assert_eq!(
        stdout(&run(dir.path(), &["--db", &db, "export", "trees"]))
            .lines()
            .count(),
        1
    );
}

/// `--out` to a device or pipe writes into it and leaves it what it was (a temporary file renamed over
/// `/dev/null` once replaced the device with a plain file).
#[test]
fn output_to_a_pipe_keeps_the_pipe() {
    use std::os::unix::fs::FileTypeExt;
    let dir = tempfile::tempdir().expect("temp dir");
    let db = empty_inventory(dir.path());
    let fifo = dir.path().join("pipe");
    let made = std::process::Command::new("mkfifo")
        .arg(&fifo)
        .status()
        .expect("mkfifo runs");
    assert!(made.success());
    let reader_path = fifo.clone();
    let reader =
        std::thread::spawn(move || std::fs::read_to_string(reader_path).expect("read the pipe"));
    let output = run(
        dir.path(),
        &[
            "--db",
            &db,
            "export",
            "trees",
            "--out",
            fifo.to_str().expect("path"),
        ],
    );
    assert!(output.status.success(), "{}", stderr(&output));
    let received = reader.join().expect("reader thread");
    assert!(received.starts_with("uid,species,"), "{received}");
    let kind = std::fs::symlink_metadata(&fifo)
        .expect("still there")
        .file_type();
    assert!(kind.is_fifo(), "the pipe is still a pipe");
    assert!(!dir.path().join("pipe.partial").exists());
}
