//! Two programs on one inventory. WAL mode lets readers and one writer work at once; a second writer
//! waits up to the store's busy timeout (5 s). Under it the user sees nothing of the wait; past it a
//! clear message and exit 1 (not 2: the command and its input were fine, trying again later works).
//! The other program is this test process holding SQLite transactions, or the TUI in a pty.

mod common;

use std::path::Path;
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use common::{TREES_HEADER, binary, run, stderr, stdout};
use streetwood::store::{BUSY_TIMEOUT, Store};

fn demo(dir: &Path) -> String {
    let path = dir.join("city.db");
    let output = run(dir, &["demo", "--out", path.to_str().expect("path")]);
    assert!(output.status.success(), "{}", stderr(&output));
    path.to_string_lossy().into_owned()
}

fn one_tree_csv(dir: &Path, uid: &str) -> String {
    let path = dir.join(format!("{uid}.csv"));
    std::fs::write(
        &path,
        format!("{TREES_HEADER}\n{uid},Tilia cordata,,,Lock Lane,,,,,2026-01-05,21,,,,,,,,\n"),
    )
    .expect("csv");
    path.to_string_lossy().into_owned()
}

fn no_lock_words(text: &str) {
    for word in ["locked", "busy"] {
        assert!(!text.contains(word), "'{word}' reached the user: {text}");
    }
}

#[test]
fn a_reader_holding_a_snapshot_blocks_neither_import_nor_export_nor_backup() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let db = demo(d);
    let reader = rusqlite::Connection::open(&db).expect("reader");
    reader.execute_batch("BEGIN").expect("begin");
    let before: i64 = reader
        .query_row("SELECT count(*) FROM trees", [], |r| r.get(0))
        .expect("read");

    let csv = one_tree_csv(d, "reader-1");
    let import = run(d, &["--db", &db, "import", "trees", &csv]);
    assert!(import.status.success(), "{}", stderr(&import));
    no_lock_words(&stderr(&import));
    let export = run(d, &["--db", &db, "export", "trees", "--format", "csv"]);
    assert!(export.status.success(), "{}", stderr(&export));
    assert!(stdout(&export).contains("reader-1"));
    let backup = d.join("b.db");
    let output = run(d, &["--db", &db, "backup", backup.to_str().expect("p")]);
    assert!(output.status.success(), "{}", stderr(&output));

    // The reader's snapshot is unchanged until it ends its transaction.
    let during: i64 = reader
        .query_row("SELECT count(*) FROM trees", [], |r| r.get(0))
        .expect("read");
    assert_eq!(during, before);
    reader.execute_batch("COMMIT").expect("end");
    let after: i64 = reader
        .query_row("SELECT count(*) FROM trees", [], |r| r.get(0))
        .expect("read");
    assert_eq!(after, before + 1);
}

#[test]
fn a_writer_waits_out_a_short_lock_and_reports_a_long_one_clearly() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let db = demo(d);
    let holder = rusqlite::Connection::open(&db).expect("holder");
    let spawn_import = |uid: &str| {
        Command::new(binary())
            .args(["--db", &db, "import", "trees", &one_tree_csv(d, uid)])
            .current_dir(d)
            .env("HOME", d)
            .env("XDG_DATA_HOME", d.join("xdg-data"))
            .env_remove("STREETWOOD_DB")
            .stdout(Stdio::piped())
            .stderr(Stdio::piped())
            .spawn()
            .expect("spawn")
    };

    // Short: the other program writes for a second; the import waits and succeeds, silently.
    holder.execute_batch("BEGIN IMMEDIATE").expect("write lock");
    let child = spawn_import("short-wait");
    std::thread::sleep(Duration::from_millis(1000));
    holder.execute_batch("COMMIT").expect("release");
    let output = child.wait_with_output().expect("wait");
    assert!(output.status.success(), "{}", stderr(&output));
    no_lock_words(&stderr(&output));

    // Long: the lock outlives the busy timeout; the import gives up with a clear message, exit 1,
    // and writes nothing.
    holder.execute_batch("BEGIN IMMEDIATE").expect("write lock");
    let started = Instant::now();
    let child = spawn_import("long-wait");
    let output = child.wait_with_output().expect("wait");
    let waited = started.elapsed();
    holder.execute_batch("COMMIT").expect("release");
    assert_eq!(output.status.code(), Some(1), "{}", stderr(&output));
    let message = stderr(&output);
    assert!(
        message.contains("the inventory is busy (another program is writing to it); try again"),
        "{message}"
    );
    assert!(waited >= BUSY_TIMEOUT, "gave up after {waited:?}");
    let store = Store::open_existing(Path::new(&db)).expect("open");
    assert!(store.tree_id_by_uid("short-wait").expect("q").is_some());
    assert!(store.tree_id_by_uid("long-wait").expect("q").is_none());
    assert_eq!(store.integrity_check().expect("check"), "ok");
}

/// The TUI open on the file (a real pty) while the CLI imports, exports and backs up: all succeed.
/// Opening the TUI also made today's rolling backup.
#[test]
fn the_tui_open_on_the_file_does_not_stop_the_cli() {
    use expectrl::Expect;
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let db = demo(d);
    let backups = d.join("rolling");
    let mut command = Command::new(binary());
    command
        .args(["--db", &db])
        .env("TERM", "xterm-256color")
        .env("HOME", d)
        .env("XDG_DATA_HOME", d.join("xdg-data"))
        .env("STREETWOOD_BACKUP_DIR", &backups);
    let mut session = expectrl::session::Session::spawn(command).expect("spawn in a pty");
    session.set_expect_timeout(Some(Duration::from_secs(20)));
    session.expect("2497").expect("the roster is shown");

    let csv = one_tree_csv(d, "beside-tui");
    let import = run(d, &["--db", &db, "import", "trees", &csv]);
    assert!(import.status.success(), "{}", stderr(&import));
    no_lock_words(&stderr(&import));
    let export = run(d, &["--db", &db, "export", "trees", "--format", "geojson"]);
    assert!(export.status.success(), "{}", stderr(&export));
    assert!(stdout(&export).contains("beside-tui"));
    let copy = d.join("while-open.db");
    let backup = run(d, &["--db", &db, "backup", copy.to_str().expect("p")]);
    assert!(backup.status.success(), "{}", stderr(&backup));

    session.send("q").expect("q");
    session.expect(expectrl::Eof).expect("the TUI ends");

    let made: Vec<String> = std::fs::read_dir(&backups)
        .expect("the rolling backup folder exists")
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .collect();
    assert_eq!(made.len(), 1, "{made:?}");
    assert!(
        made[0].starts_with("city-") && made[0].ends_with(".db"),
        "{made:?}"
    );
    // Today's backup runs beside the TUI: it holds the file as it was at some moment while the TUI
    // was open — before or after the CLI's one-tree import — and is whole either way.
    let rolled = Store::open_existing(&backups.join(&made[0])).expect("open the backup");
    let trees = rolled.tree_count().expect("count");
    assert!((2497..=2498).contains(&trees), "{trees}");
    assert_eq!(rolled.integrity_check().expect("check"), "ok");
}
