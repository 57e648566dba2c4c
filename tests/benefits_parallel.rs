//! The parallel benefit engine (issue 8, "city scale"): rows computed in batches on a thread pool are
//! the serial rows, in the same order, to the last bit; and so are the CLI's outputs.
//!
//! The inventory is `streetwood gen`'s seeded synthetic town (10,000 trees: two full batches of
//! `BATCH_TREES` and a partial one), imported with the ordinary importers.

mod common;

use std::path::Path;
use std::process::{Command, Output};

use common::{binary, run, stderr, stdout};
use streetwood::science::inventory::{
    BenefitRow, GroupBy, Summarizer, compute_year, species_params,
};
use streetwood::science::tree_year::SpeciesParams;
use streetwood::store::Store;
use streetwood::store::benefits::{BATCH_TREES, Parallelism, THREADS_ENV};

const TREES: usize = 10_000;

/// Generates, initialises and imports the synthetic inventory; returns the inventory path.
fn generated(dir: &Path) -> String {
    let trees = dir.join("trees.csv");
    let weather = dir.join("weather.csv");
    let db = dir.join("inv.db");
    let text = |p: &Path| p.to_str().expect("utf-8 path").to_string();
    let count = TREES.to_string();
    for args in [
        vec![
            "gen",
            "--trees",
            &count,
            "--seed",
            "11",
            "--out",
            &text(&trees),
            "--weather-out",
            &text(&weather),
        ],
        vec!["init", &text(&db)],
        vec!["--db", &text(&db), "import", "trees", &text(&trees)],
        vec![
            "--db",
            &text(&db),
            "import",
            "weather",
            &text(&weather),
            "--station",
            "Gen",
            "--lat",
            "42.7",
            "--elevation",
            "260",
        ],
    ] {
        let output = run(dir, &args);
        assert!(output.status.success(), "{args:?}: {}", stderr(&output));
    }
    text(&db)
}

/// Every row of the year with the given parallelism.
fn rows(store: &Store, parallelism: Parallelism) -> (Vec<BenefitRow>, usize) {
    let setup = store.year_setup(None).expect("a weather year");
    let mut rows = Vec::new();
    let standing = store
        .for_each_benefit_with(&setup, parallelism, |row| {
            rows.push(row);
            Ok::<(), streetwood::store::StoreError>(())
        })
        .expect("benefits");
    (rows, standing)
}

/// A row as text that differs whenever any number's bits differ: Rust's `Debug` for f64 prints the
/// shortest decimal that reads back to the same bits (and keeps the sign of zero).
fn exact(row: &BenefitRow) -> String {
    format!("{row:?}")
}

fn assert_same_rows(what: &str, a: &[BenefitRow], b: &[BenefitRow]) {
    assert_eq!(a.len(), b.len(), "{what}: row count");
    for (x, y) in a.iter().zip(b) {
        assert_eq!(exact(x), exact(y), "{what}: tree {}", x.tree_id);
    }
}

#[test]
fn parallel_rows_are_the_serial_rows_bit_for_bit() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = generated(dir.path());
    let store = Store::open_existing(Path::new(&db)).expect("open");
    let (serial, standing) = rows(&store, Parallelism::Serial);
    assert!(serial.len() > 2 * BATCH_TREES, "{} rows", serial.len());
    assert!(serial.len() <= standing && standing <= TREES);
    // In tree id order.
    assert!(serial.windows(2).all(|w| w[0].tree_id < w[1].tree_id));
    for parallelism in [
        Parallelism::AllCores,
        Parallelism::Threads(2),
        Parallelism::Threads(3),
    ] {
        let (parallel, standing_parallel) = rows(&store, parallelism);
        assert_eq!(standing_parallel, standing);
        assert_same_rows(&format!("{parallelism:?}"), &serial, &parallel);
    }

    // A map applied on the pool (here: the exact text of each row) reaches the caller in tree order.
    let setup = store.year_setup(None).expect("a weather year");
    let mut mapped = Vec::new();
    store
        .for_each_benefit_mapped(
            &setup,
            Parallelism::Threads(3),
            |row| exact(&row),
            |text| {
                mapped.push(text);
                Ok::<(), streetwood::store::StoreError>(())
            },
        )
        .expect("benefits");
    assert_eq!(mapped, serial.iter().map(exact).collect::<Vec<_>>());

    // Summaries add the rows in the same order, so their totals are identical too.
    let summarize = |rows: &[BenefitRow]| {
        let mut s = Summarizer::new(GroupBy::Species);
        rows.iter().for_each(|r| s.add(r));
        format!("{:?}", s.finish())
    };
    let (parallel, _) = rows(&store, Parallelism::Threads(4));
    assert_eq!(summarize(&serial), summarize(&parallel));

    // The streamed engine (its own lighter imputer scan, rows moved out of the trees) gives the rows
    // of the in-memory reference path: every tree loaded, the imputer from `build_imputer`,
    // `benefit_row` per tree.
    let setup = store.year_setup(None).expect("a weather year");
    let (species, trees) = store.inventory_for_year(setup.year).expect("inventory");
    let params: Vec<SpeciesParams> = species
        .iter()
        .map(|s| species_params(s).expect("groups parse"))
        .collect();
    let reference = compute_year(&trees, &params, &setup.weather, &setup.settings);
    assert_same_rows("in-memory reference", &reference, &serial);
}

/// Runs the binary with `STREETWOOD_THREADS` set (or removed), HOME kept in `dir`.
fn run_threads(dir: &Path, threads: Option<&str>, args: &[&str]) -> Output {
    let mut command = Command::new(binary());
    command
        .args(args)
        .current_dir(dir)
        .env("HOME", dir)
        .env("XDG_DATA_HOME", dir.join("xdg-data"))
        .env_remove("STREETWOOD_DB");
    match threads {
        Some(value) => command.env(THREADS_ENV, value),
        None => command.env_remove(THREADS_ENV),
    };
    command.output().expect("the streetwood binary runs")
}

#[test]
fn cli_outputs_are_byte_identical_serial_and_parallel() {
    let dir = tempfile::tempdir().expect("temp dir");
    let db = generated(dir.path());
    for args in [
        vec!["--db", &db, "benefits", "--format", "csv"],
        vec!["--db", &db, "benefits", "--format", "json"],
        vec!["--db", &db, "summary", "--by", "species", "--format", "csv"],
    ] {
        let serial = run_threads(dir.path(), Some("1"), &args);
        assert!(serial.status.success(), "{args:?}: {}", stderr(&serial));
        assert!(stdout(&serial).lines().count() > 2, "{args:?}");
        for threads in [None, Some("0"), Some("3")] {
            let parallel = run_threads(dir.path(), threads, &args);
            assert!(parallel.status.success(), "{args:?}: {}", stderr(&parallel));
            assert!(
                serial.stdout == parallel.stdout,
                "{args:?} with {THREADS_ENV}={threads:?} differs from serial"
            );
        }
    }
    // A value that is not a number of threads is refused with a message naming the variable.
    let refused = run_threads(
        dir.path(),
        Some("many"),
        &["--db", &db, "benefits", "--format", "csv"],
    );
    assert!(!refused.status.success());
    assert!(
        stderr(&refused).contains(THREADS_ENV),
        "{}",
        stderr(&refused)
    );
}

#[test]
fn threads_setting_parses() {
    assert_eq!(Parallelism::parse("1").ok(), Some(Parallelism::Serial));
    assert_eq!(Parallelism::parse(" 0 ").ok(), Some(Parallelism::AllCores));
    assert_eq!(Parallelism::parse("").ok(), Some(Parallelism::Serial));
    assert_eq!(Parallelism::parse("6").ok(), Some(Parallelism::Threads(6)));
    for bad in ["-1", "two", "1.5"] {
        let message = Parallelism::parse(bad).expect_err("refused").to_string();
        assert!(
            message.contains(THREADS_ENV) && message.contains(bad),
            "{message}"
        );
    }
}
