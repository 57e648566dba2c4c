//! A full disk and a read-only file: a clear message, exit 1 (the input was fine; the place is not),
//! and nothing half-written — the inventory passes its integrity check and holds nothing of the
//! failed write.
//!
//! "Disk full" is a file size limit (`ulimit -f` in a child shell), which binds root too. With
//! SIGXFSZ ignored the write fails with EFBIG, as on a full disk; left at its default the signal kills
//! the program mid-write, like a crash. Read-only: tests usually run as root, whom file permissions
//! do not stop, so as root the program runs as `nobody` through `setpriv` (util-linux).

mod common;

use std::os::unix::fs::PermissionsExt;
use std::path::Path;
use std::process::{Command, Output};

use common::{binary, empty_inventory, run, stderr};
use streetwood::store::Store;

/// 512-byte blocks: 2 MB, enough for the empty inventory, far too little for the import's log.
const LIMIT_BLOCKS: u32 = 4_000;

fn sh(dir: &Path, script: &str) -> Output {
    Command::new("sh")
        .arg("-c")
        .arg(script)
        .current_dir(dir)
        .env("HOME", dir)
        .env("XDG_DATA_HOME", dir.join("xdg-data"))
        .env_remove("STREETWOOD_DB")
        .output()
        .expect("sh runs")
}

fn generated(dir: &Path, trees: usize) -> String {
    let csv = dir.join("many.csv");
    let output = run(
        dir,
        &[
            "gen",
            "--trees",
            &trees.to_string(),
            "--out",
            csv.to_str().expect("p"),
        ],
    );
    assert!(output.status.success(), "{}", stderr(&output));
    csv.to_string_lossy().into_owned()
}

fn assert_untouched(db: &str) {
    let store = Store::open_existing(Path::new(db)).expect("reopen");
    assert_eq!(store.integrity_check().expect("check"), "ok");
    assert_eq!(
        store.tree_count().expect("count"),
        0,
        "part of the failed write was kept"
    );
    assert_eq!(store.measurement_count().expect("count"), 0);
}

#[test]
fn a_full_disk_fails_clearly_and_writes_nothing() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let db = empty_inventory(d);
    let csv = generated(d, 3_000);
    let bin = binary();
    let bin = bin.to_str().expect("path");
    assert!(std::fs::metadata(&db).expect("db").len() < u64::from(LIMIT_BLOCKS) * 512);

    // EFBIG, as a full disk gives ENOSPC: an error the program reports.
    let output = sh(
        d,
        &format!(
            "trap '' XFSZ; ulimit -f {LIMIT_BLOCKS}; exec '{bin}' --db '{db}' import trees '{csv}'"
        ),
    );
    assert_eq!(output.status.code(), Some(1), "{}", stderr(&output));
    let message = stderr(&output);
    assert!(
        message.contains("writing to the disk failed") && message.contains("nothing was written"),
        "{message}"
    );
    assert_untouched(&db);

    // SIGXFSZ at its default: killed in the middle of writing.
    let output = sh(
        d,
        &format!("ulimit -f {LIMIT_BLOCKS}; exec '{bin}' --db '{db}' import trees '{csv}'"),
    );
    assert!(!output.status.success());
    assert_untouched(&db);

    // An export that hits the limit (64 KB: room for FILE-shm, not for the CSV) leaves neither the
    // output nor its partial file.
    let big = d.join("big.db");
    let output = run(d, &["--db", big.to_str().expect("p"), "restore", &db]);
    assert!(output.status.success(), "{}", stderr(&output));
    let output = run(
        d,
        &["--db", big.to_str().expect("p"), "import", "trees", &csv],
    );
    assert!(output.status.success(), "{}", stderr(&output));
    let out = d.join("export.csv");
    let output = sh(
        d,
        &format!(
            "trap '' XFSZ; ulimit -f 128; exec '{bin}' --db '{}' export trees --out '{}'",
            big.display(),
            out.display()
        ),
    );
    assert_eq!(output.status.code(), Some(1), "{}", stderr(&output));
    assert!(
        stderr(&output).contains("File too large"),
        "{}",
        stderr(&output)
    );
    assert!(!out.exists() && !d.join("export.csv.partial").exists());
}

fn running_as_root() -> bool {
    Command::new("id")
        .arg("-u")
        .output()
        .is_ok_and(|o| String::from_utf8_lossy(&o.stdout).trim() == "0")
}

/// Runs the binary so that file permissions bind: as itself, or as `nobody` when root.
fn run_unprivileged(dir: &Path, args: &[&str]) -> Output {
    let mut command = if running_as_root() {
        let mut c = Command::new("setpriv");
        c.args(["--reuid=65534", "--regid=65534", "--clear-groups"])
            .arg(binary());
        c
    } else {
        Command::new(binary())
    };
    command
        .args(args)
        .current_dir(dir)
        .env("HOME", dir)
        .env("XDG_DATA_HOME", dir.join("xdg-data"))
        .env_remove("STREETWOOD_DB")
        .output()
        .expect("setpriv (util-linux) runs the program as nobody; tests run as root need it")
}

fn chmod(path: &Path, mode: u32) {
    std::fs::set_permissions(path, std::fs::Permissions::from_mode(mode)).expect("chmod");
}

#[test]
fn a_read_only_file_or_folder_fails_clearly_and_writes_nothing() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    chmod(d, 0o755);
    let csv = d.join("one.csv");
    std::fs::write(
        &csv,
        format!(
            "{}\nro-1,Tilia cordata,,,Lock Lane,,,,,2026-01-05,21,,,,,,,,\n",
            common::TREES_HEADER
        ),
    )
    .expect("csv");
    chmod(&csv, 0o644);
    let csv = csv.to_string_lossy().into_owned();

    // A read-only file in a folder the program may write to: reading works, writing is refused.
    let open_dir = d.join("open");
    std::fs::create_dir(&open_dir).expect("dir");
    let db = empty_inventory(&open_dir);
    chmod(&open_dir, 0o777);
    chmod(Path::new(&db), 0o444);
    let export = run_unprivileged(d, &["--db", &db, "export", "trees"]);
    assert!(export.status.success(), "{}", stderr(&export));
    let import = run_unprivileged(d, &["--db", &db, "import", "trees", &csv]);
    assert_eq!(import.status.code(), Some(1), "{}", stderr(&import));
    assert!(
        stderr(&import).contains("the inventory is read-only")
            && stderr(&import).contains("nothing was written"),
        "{}",
        stderr(&import)
    );
    let settings = run_unprivileged(d, &["--db", &db, "settings", "set", "units", "us"]);
    assert_eq!(settings.status.code(), Some(1), "{}", stderr(&settings));
    chmod(Path::new(&db), 0o644);
    assert_untouched(&db);

    // A read-only file in a read-only folder (no room for FILE-wal and FILE-shm): said so, not
    // "not an inventory".
    let closed_dir = d.join("closed");
    std::fs::create_dir(&closed_dir).expect("dir");
    let db = empty_inventory(&closed_dir);
    chmod(Path::new(&db), 0o444);
    chmod(&closed_dir, 0o555);
    let import = run_unprivileged(d, &["--db", &db, "import", "trees", &csv]);
    chmod(&closed_dir, 0o755);
    chmod(Path::new(&db), 0o644);
    assert_eq!(import.status.code(), Some(1), "{}", stderr(&import));
    let message = stderr(&import);
    assert!(message.contains("read-only for you"), "{message}");
    assert!(
        !message.contains("is not a Streetwood inventory ("),
        "{message}"
    );
    assert_untouched(&db);
}
