//! Crash safety: the built binary is killed with SIGKILL (`Child::kill` on Unix) at seeded random
//! moments while it imports a large CSV, and while it saves single entries one transaction at a time.
//! After every kill the file passes `PRAGMA integrity_check`, the import is wholly present or wholly
//! absent, and every entry the program acknowledged is there.

mod common;

use std::io::BufRead;
use std::path::Path;
use std::process::{Child, Command, Stdio};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant};

use common::{binary, empty_inventory, run, stderr};
use streetwood::store::Store;

/// Trees in the generated import: about a second of work in a debug build.
const TREES: usize = 4_000;
const KILLS: usize = 50;
const ENTRY_ROUNDS: usize = 12;

/// SplitMix64 (Steele, Lea & Flood 2014): a seeded stream of kill moments, so a failure can be replayed.
struct Moments(u64);

impl Moments {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        z ^ (z >> 31)
    }

    fn below(&mut self, bound: u64) -> u64 {
        self.next() % bound.max(1)
    }
}

fn spawn(dir: &Path, args: &[&str], stdout: Stdio) -> Child {
    Command::new(binary())
        .args(args)
        .current_dir(dir)
        .env("HOME", dir)
        .env("XDG_DATA_HOME", dir.join("xdg-data"))
        .env_remove("STREETWOOD_DB")
        .stdout(stdout)
        .stderr(Stdio::null())
        .spawn()
        .expect("the streetwood binary starts")
}

fn file_len(path: &Path) -> u64 {
    std::fs::metadata(path).map(|m| m.len()).unwrap_or(0)
}

/// Opens the file as the next program would (recovering the write-ahead log) and checks it.
fn reopen_checked(db: &Path, context: &str) -> Store {
    let store =
        Store::open_existing(db).unwrap_or_else(|e| panic!("{context}: reopen failed: {e}"));
    let check = store.integrity_check().expect("integrity check runs");
    assert_eq!(check, "ok", "{context}: integrity check");
    store
}

#[test]
fn an_import_killed_at_any_moment_is_wholly_present_or_wholly_absent() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let base = empty_inventory(d);
    let csv = d.join("big.csv");
    let output = run(
        d,
        &[
            "gen",
            "--trees",
            &TREES.to_string(),
            "--seed",
            "9",
            "--out",
            csv.to_str().expect("p"),
        ],
    );
    assert!(output.status.success(), "{}", stderr(&output));
    let csv = csv.to_string_lossy().into_owned();

    // One import left alone: how long it takes here, when its pages start reaching the write-ahead
    // log (the write, up to the commit), and what "wholly present" is.
    let reference = d.join("reference.db");
    std::fs::copy(&base, &reference).expect("copy");
    let reference_wal = d.join("reference.db-wal");
    let started = Instant::now();
    let mut child = spawn(
        d,
        &[
            "--db",
            reference.to_str().expect("p"),
            "import",
            "trees",
            &csv,
        ],
        Stdio::null(),
    );
    let mut write_starts_ms = None;
    let mut largest_wal = 0;
    let status = loop {
        if let Some(status) = child.try_wait().expect("poll") {
            break status;
        }
        largest_wal = largest_wal.max(file_len(&reference_wal));
        if write_starts_ms.is_none() && largest_wal > 64 * 1024 {
            write_starts_ms = Some(started.elapsed().as_millis() as u64);
        }
        std::thread::sleep(Duration::from_millis(2));
    };
    let full_ms = started.elapsed().as_millis() as u64;
    assert!(status.success(), "the reference import failed");
    let write_starts_ms = write_starts_ms.unwrap_or(full_ms);
    // The largest log seen (the last connection checkpoints and removes it on close): a lower bound
    // of what the write puts in it.
    let final_wal = largest_wal.max(128 * 1024);
    let whole = {
        let store = reopen_checked(&reference, "reference");
        (
            store.tree_count().expect("count"),
            store.measurement_count().expect("count"),
        )
    };
    assert_eq!(whole.0, TREES as i64);

    let mut moments = Moments(0x5eed_0009);
    let (mut absent, mut present, mut mid_write) = (0, 0, 0);
    for kill in 0..KILLS {
        let db = d.join("killed.db");
        for suffix in ["", "-wal", "-shm"] {
            let _ = std::fs::remove_file(d.join(format!("killed.db{suffix}")));
        }
        std::fs::copy(&base, &db).expect("copy");
        let wal = d.join("killed.db-wal");
        let mut child = spawn(
            d,
            &["--db", db.to_str().expect("p"), "import", "trees", &csv],
            Stdio::null(),
        );
        let started = Instant::now();
        let delay;
        if kill % 2 == 0 {
            // Even kills: any moment of the run and a little past it (some land after the commit).
            delay = moments.below(full_ms + full_ms / 4);
            std::thread::sleep(Duration::from_millis(delay));
            if child.try_wait().expect("poll").is_none() && file_len(&wal) > 64 * 1024 {
                mid_write += 1;
            }
        } else {
            // Odd kills: inside the write, once the log has grown past a random size below what
            // the whole import writes to it.
            let threshold = 64 * 1024 + moments.below(final_wal - 64 * 1024);
            loop {
                if child.try_wait().expect("poll").is_some() {
                    break;
                }
                if file_len(&wal) >= threshold {
                    mid_write += 1;
                    break;
                }
                std::thread::sleep(Duration::from_micros(500));
            }
            delay = started.elapsed().as_millis() as u64;
        }
        let _ = child.kill();
        let status = child.wait().expect("wait");

        let context = format!("kill {kill} after {delay} ms");
        let store = reopen_checked(&db, &context);
        let found = (
            store.tree_count().expect("count"),
            store.measurement_count().expect("count"),
        );
        if found == (0, 0) {
            absent += 1;
            assert!(
                !status.success(),
                "{context}: the import succeeded but nothing is there"
            );
        } else {
            assert_eq!(found, whole, "{context}: a partial import");
            present += 1;
        }
        drop(store);
    }
    eprintln!(
        "{KILLS} kills over {full_ms} ms imports (log from {write_starts_ms} ms, {largest_wal} bytes): {absent} absent, {present} present, {mid_write} inside the write"
    );
    assert_eq!(absent + present, KILLS);
    assert!(absent > 0, "no kill interrupted an import");
    assert!(
        mid_write > 0,
        "no kill landed inside the write (log from {write_starts_ms} of {full_ms} ms)"
    );
}

#[test]
fn every_acknowledged_field_entry_survives_a_kill() {
    let dir = tempfile::tempdir().expect("temp dir");
    let d = dir.path();
    let db = empty_inventory(d);
    let mut moments = Moments(0xf1e1_d106);
    let mut acknowledged_total = 0;
    for round in 0..ENTRY_ROUNDS {
        let prefix = format!("r{round}");
        let mut child = spawn(
            d,
            &[
                "--db",
                &db,
                "field-entries",
                "--count",
                "100000",
                "--prefix",
                &prefix,
            ],
            Stdio::piped(),
        );
        let stdout = child.stdout.take().expect("piped stdout");
        let acked: Arc<Mutex<Vec<String>>> = Arc::default();
        let sink = Arc::clone(&acked);
        let reader = std::thread::spawn(move || {
            for line in std::io::BufReader::new(stdout).lines() {
                let Ok(line) = line else { break };
                if let Some(uid) = line.strip_prefix("saved ") {
                    sink.lock().expect("lock").push(uid.to_string());
                }
            }
        });
        std::thread::sleep(Duration::from_millis(100 + moments.below(300)));
        let _ = child.kill();
        let _ = child.wait();
        reader.join().expect("reader thread");
        let acked = acked.lock().expect("lock").clone();
        let context = format!("round {round} ({} acknowledged)", acked.len());
        let store = reopen_checked(Path::new(&db), &context);
        for uid in &acked {
            assert!(
                store.tree_id_by_uid(uid).expect("query").is_some(),
                "{context}: acknowledged entry {uid} is missing"
            );
        }
        // At most the one entry in flight at the kill was committed without being acknowledged.
        let next = format!("{prefix}-{}", acked.len() + 1);
        assert!(
            store.tree_id_by_uid(&next).expect("query").is_none(),
            "{context}: {next} is there, two past the last acknowledged"
        );
        acknowledged_total += acked.len();
    }
    eprintln!("{ENTRY_ROUNDS} kills, {acknowledged_total} acknowledged entries, all present");
    assert!(acknowledged_total > 0, "no entry was ever acknowledged");
}
