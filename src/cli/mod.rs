//! The command line: one module per subcommand, each a thin adapter over core + store + io.
//! DESIGN.md "Command line" is the stable contract: exit 0 on success, 2 on bad input (the message
//! names file, line, field and reason), 1 on any other failure.

pub mod admin;
pub mod benefits;
pub mod care;
pub mod check;
pub mod demo;
pub mod export;
pub mod field_entries;
pub mod history;
pub mod import;
pub mod merge;
pub mod report;
pub mod restore;
pub mod study;
pub mod synthetic;
pub mod work;

use std::io::Write;
use std::path::{Path, PathBuf};

use clap::{Parser, Subcommand, ValueEnum};

use crate::store::{Store, StoreError};

/// Streetwood: street-tree inventory, benefits, care and removal studies, offline.
#[derive(Debug, Parser)]
#[command(name = "streetwood", version, about, long_about = None)]
pub struct Cli {
    /// The inventory file (default: the demo inventory in your data directory).
    #[arg(long, global = true, env = "STREETWOOD_DB", value_name = "FILE")]
    pub db: Option<PathBuf>,
    /// Units shown at the edges (inside everything is SI).
    #[arg(long, global = true, value_enum)]
    pub units: Option<Units>,
    #[command(subcommand)]
    pub command: Option<Command>,
}

/// Display units.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Units {
    Metric,
    Us,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Create an empty inventory.
    Init {
        /// The new inventory file.
        file: PathBuf,
    },
    /// Write the demo inventory (an invented town) to a file.
    Demo {
        /// Where to write it.
        #[arg(long, value_name = "FILE")]
        out: PathBuf,
        /// Replace the file if it exists.
        #[arg(long)]
        force: bool,
    },
    /// Import trees, weather or zones.
    #[command(subcommand)]
    Import(import::ImportCommand),
    /// Export trees as CSV or GeoJSON.
    #[command(subcommand)]
    Export(export::ExportCommand),
    /// Copy the inventory to FILE with SQLite's online backup (safe while others use it).
    Backup {
        /// The backup file.
        file: PathBuf,
        /// Replace FILE if it exists.
        #[arg(long)]
        force: bool,
    },
    /// Put a backup in place of the inventory (checked first; --force replaces an existing inventory,
    /// keeping a copy of it beside it).
    Restore {
        /// The backup file.
        file: PathBuf,
        /// Replace the inventory if it exists.
        #[arg(long)]
        force: bool,
    },
    /// Make a field copy of the inventory for a crew (merge it back with `merge`).
    Copy {
        /// The crew the copy is for.
        #[arg(long = "for", value_name = "CREW")]
        crew: String,
        /// The new copy (must not exist).
        file: PathBuf,
    },
    /// Merge a field copy into the inventory (one transaction; conflicts go to the later change).
    Merge {
        /// The copy to merge (only read).
        other: PathBuf,
        /// Report what would change, change nothing.
        #[arg(long)]
        dry_run: bool,
        /// Report format.
        #[arg(long, value_enum, default_value = "text")]
        format: merge::MergeFormat,
        /// Choose the side of each conflict on a full-screen list, review, then merge (the report
        /// goes to standard output as text).
        #[arg(long, short = 'i')]
        interactive: bool,
    },
    /// Check the inventory: integrity, foreign keys, orphan rows, implausible measurements.
    /// Exit 0 when clean, 3 when there are findings to follow up.
    Check {
        /// Output format.
        #[arg(long, value_enum, default_value = "text")]
        format: check::CheckFormat,
        /// Output file (default: standard output).
        #[arg(long, value_name = "FILE")]
        out: Option<PathBuf>,
    },
    /// Save invented trees one write at a time, acknowledging each (crash-safety tests).
    #[command(hide = true)]
    FieldEntries {
        /// How many trees.
        #[arg(long)]
        count: usize,
        /// The uids are PREFIX-0, PREFIX-1, …
        #[arg(long)]
        prefix: String,
    },
    /// Every standing tree's benefits for a year (DESIGN.md columns plus `estimated`).
    Benefits {
        /// The year (default: the latest year with weather at the default station).
        #[arg(long)]
        year: Option<i32>,
        /// Output format.
        #[arg(long, value_enum, default_value = "csv")]
        format: benefits::BenefitsFormat,
        /// Output file (default: standard output).
        #[arg(long, value_name = "FILE")]
        out: Option<PathBuf>,
    },
    /// Benefit totals for a year, by species, street, zone, condition band or overall.
    Summary {
        /// The year (default: the latest year with weather at the default station).
        #[arg(long)]
        year: Option<i32>,
        /// How to group the trees.
        #[arg(long, value_enum, default_value = "species")]
        by: benefits::SummaryBy,
        /// Output format.
        #[arg(long, value_enum, default_value = "md")]
        format: benefits::SummaryFormat,
        /// Output file (default: standard output).
        #[arg(long, value_name = "FILE")]
        out: Option<PathBuf>,
        /// HTML: species shown one by one before the rest are grouped as "other".
        #[arg(long, default_value_t = 10)]
        top: usize,
    },
    /// The whole chain behind one tree's numbers, with the source of each step.
    Explain {
        /// The tree: its id, uid, or a unique uid prefix (6+ characters).
        tree: String,
        /// The year (default: the latest year with weather).
        #[arg(long)]
        year: Option<i32>,
    },
    /// Show or change settings (prices, methods, re-inspection intervals, units).
    #[command(subcommand)]
    Settings(admin::SettingsCommand),
    /// Risk assessments, the watchlist and maintenance-cycle work.
    #[command(subcommand)]
    Care(care::CareCommand),
    /// Work orders and the work queue.
    #[command(subcommand)]
    Work(work::WorkCommand),
    /// Removal studies: what removing trees costs over decades, against replanting plans.
    #[command(subcommand)]
    Study(study::StudyCommand),
    /// Every change of a tree and its records (measurements, assessments, work orders), with before and after.
    History {
        /// The tree: its id, uid, or a unique uid prefix (6+ characters).
        tree: String,
        /// Output format.
        #[arg(long, value_enum, default_value = "text")]
        format: history::HistoryFormat,
    },
    /// Undo the last N changes (a saved tree, an import, a closed work order…); undos are audited too.
    Undo {
        /// How many changes to undo.
        #[arg(default_value_t = 1)]
        count: usize,
        /// Only list the changes that can be undone, newest first.
        #[arg(long)]
        list: bool,
    },
    /// Write a seeded synthetic inventory (invented trees on a grid of streets) for tests and benchmarks.
    Gen {
        /// Number of trees.
        #[arg(long)]
        trees: usize,
        /// Random seed (the same seed gives the same file).
        #[arg(long, default_value_t = 1)]
        seed: u64,
        /// The trees CSV to write (default: standard output).
        #[arg(long, value_name = "FILE")]
        out: Option<PathBuf>,
        /// Also write a year of daily weather (the demo's invented year) to this CSV.
        #[arg(long, value_name = "FILE")]
        weather_out: Option<PathBuf>,
    },
    /// List the species list (botanical and common names, groups, growth rates).
    Species {
        /// Output format.
        #[arg(long, value_enum, default_value = "table")]
        format: admin::ListFormat,
    },
}

/// How a command failed, which decides the exit code.
#[derive(Debug, thiserror::Error)]
pub enum CliError {
    /// Bad input from the user or a file: exit code 2.
    #[error("{0}")]
    Input(String),
    /// Anything else: exit code 1.
    #[error(transparent)]
    Other(#[from] anyhow::Error),
    /// `check` found things to follow up (listed on the output): exit code 3.
    #[error("{0}")]
    Findings(String),
}

impl CliError {
    /// The process exit code for this error.
    pub fn exit_code(&self) -> u8 {
        match self {
            CliError::Input(_) => 2,
            CliError::Other(_) => 1,
            CliError::Findings(_) => 3,
        }
    }
}

impl From<StoreError> for CliError {
    fn from(error: StoreError) -> Self {
        match error {
            StoreError::Row { .. }
            | StoreError::Invalid(_)
            | StoreError::Missing { .. }
            | StoreError::NotAnInventory { .. }
            | StoreError::NewerSchema { .. } => CliError::Input(error.to_string()),
            other => match other.storage_problem() {
                Some(explained) => CliError::Other(anyhow::anyhow!("{explained} ({other})")),
                None => CliError::Other(anyhow::Error::new(other)),
            },
        }
    }
}

impl From<std::io::Error> for CliError {
    fn from(error: std::io::Error) -> Self {
        CliError::Other(error.into())
    }
}

/// Runs a parsed command line that has a subcommand. (No subcommand opens the TUI; see `main`.)
pub fn run(
    cli: &Cli,
    command: &Command,
    now: chrono::DateTime<chrono::Utc>,
) -> Result<(), CliError> {
    match command {
        Command::Init { file } => admin::init(file),
        Command::Demo { out, force } => demo::write_demo(out, *force).map(|summary| {
            eprintln!("{summary}");
        }),
        Command::Import(what) => {
            let inventory = inventory_path(cli)?;
            if let import::ImportCommand::Trees {
                file,
                rejects: Some(rejects),
                ..
            } = what
                && (same_file(rejects, &inventory) || same_file(rejects, file))
            {
                return Err(CliError::Input(format!(
                    "--rejects {} is the inventory or the file being imported; choose another file",
                    rejects.display()
                )));
            }
            import::run(&inventory, what, now)
        }
        Command::Export(what) => export::run(&inventory_path(cli)?, what),
        Command::Backup { file, force } => admin::backup(&inventory_path(cli)?, file, *force),
        Command::Restore { file, force } => {
            let inventory = match &cli.db {
                Some(path) => path.clone(),
                None => default_demo_path()?,
            };
            restore::restore(&inventory, file, *force, now)
        }
        Command::Copy { crew, file } => merge::copy(&inventory_path(cli)?, crew, file, now),
        Command::Merge {
            other,
            dry_run,
            format,
            interactive: false,
        } => merge::merge(&inventory_path(cli)?, other, *dry_run, *format, now),
        // The conflict screen is the TUI's: src/main.rs dispatches it (the CLI never calls the UI).
        Command::Merge {
            dry_run, format, ..
        } => merge::interactive_options(*dry_run, *format).and(Err(CliError::Other(
            anyhow::anyhow!("merge --interactive runs from the streetwood program"),
        ))),
        Command::Check { format, out } => {
            check::check(&inventory_path(cli)?, *format, out.as_ref())
        }
        Command::FieldEntries { count, prefix } => {
            field_entries::field_entries(&inventory_path(cli)?, *count, prefix, now)
        }
        Command::History { tree, format } => history::history(&inventory_path(cli)?, tree, *format),
        Command::Undo { count, list } => history::undo(&inventory_path(cli)?, *count, *list),
        Command::Gen {
            trees,
            seed,
            out,
            weather_out,
        } => synthetic::run(
            &synthetic::GenOptions {
                trees: *trees,
                seed: *seed,
            },
            out.as_deref(),
            weather_out.as_deref(),
        ),
        Command::Species { format } => admin::species(&inventory_path(cli)?, *format),
        Command::Benefits { year, format, out } => {
            benefits::benefits(&inventory_path(cli)?, *year, *format, out.as_ref())
        }
        Command::Summary {
            year,
            by,
            format,
            out,
            top,
        } => benefits::summary(
            &inventory_path(cli)?,
            *year,
            *by,
            *format,
            out.as_ref(),
            *top,
        ),
        Command::Explain { tree, year } => benefits::explain(&inventory_path(cli)?, tree, *year),
        Command::Settings(command) => admin::settings(&inventory_path(cli)?, command),
        Command::Care(command) => care::run(&inventory_path(cli)?, command, now),
        Command::Work(command) => work::run(&inventory_path(cli)?, command, now),
        Command::Study(command) => study::run(&inventory_path(cli)?, command, now),
    }
}

/// The inventory a command works on: `--db` / `STREETWOOD_DB`, else the demo in the data directory
/// (created on first use).
pub fn inventory_path(cli: &Cli) -> Result<PathBuf, CliError> {
    if let Some(path) = &cli.db {
        return Ok(path.clone());
    }
    let path = default_demo_path()?;
    if !path.exists() {
        if let Some(dir) = path.parent() {
            std::fs::create_dir_all(dir)?;
        }
        let summary = demo::write_demo(&path, false)?;
        eprintln!("first run: {summary}");
    }
    Ok(path)
}

/// Where the demo inventory lives when no `--db` is given.
pub fn default_demo_path() -> Result<PathBuf, CliError> {
    let dirs =
        directories::ProjectDirs::from("org", "Streetwood", "streetwood").ok_or_else(|| {
            CliError::Input(
                "no home directory found; pass --db FILE or set STREETWOOD_DB".to_string(),
            )
        })?;
    Ok(dirs.data_dir().join("demo-inventory.db"))
}

/// Where the TUI's rolling daily backups of `inventory` go: `STREETWOOD_BACKUP_DIR` if set, else
/// `<data dir>/backups/<file stem>-<hash of the full path>` (so two `inventory.db` in different folders
/// never share, or prune, each other's backups).
pub fn rolling_backup_dir(inventory: &Path) -> Result<PathBuf, CliError> {
    if let Some(dir) = std::env::var_os("STREETWOOD_BACKUP_DIR").filter(|d| !d.is_empty()) {
        return Ok(PathBuf::from(dir));
    }
    let data = default_demo_path()?
        .parent()
        .map(Path::to_path_buf)
        .ok_or_else(|| CliError::Input("no data directory found".to_string()))?;
    let full = inventory
        .canonicalize()
        .unwrap_or_else(|_| inventory.to_path_buf());
    // FNV-1a (64 bit): a stable, documented hash (std's hasher may change between Rust releases).
    let hash = full
        .to_string_lossy()
        .bytes()
        .fold(0xcbf2_9ce4_8422_2325_u64, |h, b| {
            (h ^ u64::from(b)).wrapping_mul(0x0000_0100_0000_01b3)
        });
    let stem = inventory
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "inventory".to_string());
    Ok(data
        .join("backups")
        .join(format!("{stem}-{:08x}", hash >> 32)))
}

/// Opens an existing inventory for a command. A file SQLite cannot open because it (or its folder,
/// where SQLite keeps FILE-wal and FILE-shm) is read-only is reported as such, not as "not an
/// inventory".
pub fn open_store(path: &Path) -> Result<Store, CliError> {
    Store::open_existing(path).map_err(|error| match error {
        StoreError::NotAnInventory { reason, .. } if read_only_place(path) => {
            CliError::Other(anyhow::anyhow!(
                "{} cannot be opened: it or its folder is read-only for you, and Streetwood writes to the file and keeps FILE-wal and FILE-shm beside it; make both writable, or copy the file somewhere writable ({reason})",
                path.display()
            ))
        }
        other => other.into(),
    })
}

/// True when `path` cannot be opened for writing, or no file can be created beside it.
fn read_only_place(path: &Path) -> bool {
    let denied = |e: &std::io::Error| {
        matches!(
            e.kind(),
            std::io::ErrorKind::PermissionDenied | std::io::ErrorKind::ReadOnlyFilesystem
        )
    };
    if let Err(e) = std::fs::OpenOptions::new().append(true).open(path)
        && denied(&e)
    {
        return true;
    }
    let probe = partial_path(&path.with_extension(format!("probe-{}", std::process::id())));
    match std::fs::OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(&probe)
    {
        Ok(_) => {
            let _ = std::fs::remove_file(&probe);
            false
        }
        Err(e) => denied(&e),
    }
}

/// Writes to `out` through a temporary file renamed into place at the end (so a failed export never
/// leaves half a file), or to stdout. Refuses to overwrite the inventory itself.
pub fn with_output(
    out: Option<&Path>,
    inventory: &Path,
    write: impl FnOnce(&mut dyn Write) -> Result<(), CliError>,
) -> Result<(), CliError> {
    match out {
        None => {
            let stdout = std::io::stdout();
            let mut lock = std::io::BufWriter::new(stdout.lock());
            let result = write(&mut lock).and_then(|()| lock.flush().map_err(CliError::from));
            match result {
                Err(CliError::Other(e)) if is_broken_pipe(&e) => Ok(()),
                other => other,
            }
        }
        Some(path) => {
            if same_file(path, inventory) {
                return Err(CliError::Input(format!(
                    "{} is the inventory itself; choose another output file",
                    path.display()
                )));
            }
            // A device or pipe (`--out /dev/null`, a FIFO) is written in place: renaming a temporary
            // file over it would replace the device with a plain file.
            if let Ok(meta) = std::fs::metadata(path) {
                if meta.is_dir() {
                    return Err(CliError::Input(format!(
                        "{} is a folder; give a file name",
                        path.display()
                    )));
                }
                if !meta.is_file() {
                    let file = std::fs::OpenOptions::new()
                        .write(true)
                        .open(path)
                        .map_err(|e| {
                            CliError::Input(format!("cannot write {}: {e}", path.display()))
                        })?;
                    let mut writer = std::io::BufWriter::new(file);
                    return write(&mut writer)
                        .and_then(|()| writer.flush().map_err(CliError::from));
                }
            }
            let partial = partial_path(path);
            let file = std::fs::File::create(&partial)
                .map_err(|e| CliError::Input(format!("cannot write {}: {e}", partial.display())))?;
            let mut writer = std::io::BufWriter::new(file);
            let result = write(&mut writer).and_then(|()| writer.flush().map_err(CliError::from));
            drop(writer);
            match result {
                Ok(()) => {
                    std::fs::rename(&partial, path)?;
                    Ok(())
                }
                Err(e) => {
                    let _ = std::fs::remove_file(&partial);
                    Err(e)
                }
            }
        }
    }
}

fn partial_path(path: &Path) -> PathBuf {
    let mut name = path
        .file_name()
        .map(|n| n.to_os_string())
        .unwrap_or_default();
    name.push(".partial");
    path.with_file_name(name)
}

/// True when two paths name the same existing file.
pub fn same_file(a: &Path, b: &Path) -> bool {
    match (a.canonicalize(), b.canonicalize()) {
        (Ok(a), Ok(b)) => a == b,
        _ => false,
    }
}

fn is_broken_pipe(error: &anyhow::Error) -> bool {
    error.chain().any(|cause| {
        cause
            .downcast_ref::<std::io::Error>()
            .is_some_and(|e| e.kind() == std::io::ErrorKind::BrokenPipe)
    })
}

/// A CSV writer error as a CLI error (keeping I/O errors such as a closed pipe recognisable).
pub fn csv_error(error: csv::Error) -> CliError {
    match error.into_kind() {
        csv::ErrorKind::Io(io) => CliError::from(io),
        other => CliError::Other(anyhow::anyhow!("CSV: {other:?}")),
    }
}
