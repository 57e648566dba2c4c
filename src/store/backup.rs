//! Backups and restore. Every copy goes through SQLite's online backup API (a consistent snapshot,
//! safe while other programs read and write the inventory) into `TARGET.partial`, is checked with
//! `PRAGMA integrity_check`, synced, and only then renamed into place: a crash or a full disk never
//! leaves half a backup under the real name.
//!
//! A restore over an existing inventory writes the backup's pages into the inventory through the same
//! backup API inside one write transaction of the inventory (all or nothing, and other programs that
//! have the file open see either the old or the restored inventory), after keeping a copy of what was
//! there. The TUI's rolling daily backups ([`Store::rolling_backup`]) keep the newest N files.

use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use chrono::NaiveDate;
use rusqlite::backup::{Backup, StepResult};
use rusqlite::{Connection, OpenFlags};

use super::{BUSY_TIMEOUT, Store, StoreError, migrate};

/// Tables every Streetwood inventory has (a file without them is someone else's database).
const REQUIRED_TABLES: [&str; 5] = ["species", "trees", "measurements", "settings", "audit_log"];

/// What a backup file holds, as [`inspect_backup`] found it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct BackupInfo {
    pub schema_version: i64,
    pub trees: i64,
    pub measurements: i64,
}

/// What [`restore`] did.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RestoreOutcome {
    pub restored: BackupInfo,
    /// Where the inventory that was replaced was kept (`None` when there was none).
    pub previous_kept_at: Option<PathBuf>,
}

impl Store {
    /// Writes a consistent copy of the inventory to `target` (refusing the inventory itself): written to
    /// `target.partial`, integrity-checked, synced and renamed into place, so `target` is either the old
    /// file or a whole, checked backup.
    pub fn backup_file(&self, target: &Path) -> Result<(), StoreError> {
        if let Some(own) = self.path.as_deref()
            && same_existing_file(own, target)
        {
            return Err(StoreError::Invalid(format!(
                "{} is the inventory itself; choose another backup file",
                target.display()
            )));
        }
        copy_to_new_file(&self.conn, target)
    }

    /// The rolling daily backup: once per `today`, a copy of this inventory as
    /// `dir/<file stem>-YYYY-MM-DD.db`, then only the newest `keep` such files are kept (older ones of
    /// this stem are deleted; other files in `dir` are never touched). `keep` 0 turns it off. Returns the
    /// file written, `None` when today's exists already (or the store is in memory).
    pub fn rolling_backup(
        &self,
        dir: &Path,
        today: NaiveDate,
        keep: usize,
    ) -> Result<Option<PathBuf>, StoreError> {
        let Some(stem) = self
            .path
            .as_deref()
            .and_then(Path::file_stem)
            .map(|s| s.to_string_lossy().into_owned())
        else {
            return Ok(None);
        };
        if keep == 0 {
            return Ok(None);
        }
        std::fs::create_dir_all(dir).map_err(|e| io_error("create the backup folder", dir, e))?;
        let target = dir.join(format!("{stem}-{}.db", today.format("%Y-%m-%d")));
        let written = if target.exists() {
            None
        } else {
            self.backup_file(&target)?;
            Some(target)
        };
        prune_rolling(dir, &stem, keep)?;
        Ok(written)
    }
}

/// The dated rolling backups of `stem` in `dir`, newest first.
pub fn rolling_backups(dir: &Path, stem: &str) -> Result<Vec<(NaiveDate, PathBuf)>, StoreError> {
    let prefix = format!("{stem}-");
    let mut found = Vec::new();
    let entries = match std::fs::read_dir(dir) {
        Ok(entries) => entries,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return Ok(found),
        Err(e) => return Err(io_error("list the backup folder", dir, e)),
    };
    for entry in entries.flatten() {
        let name = entry.file_name().to_string_lossy().into_owned();
        let date = name
            .strip_prefix(&prefix)
            .and_then(|rest| rest.strip_suffix(".db"))
            .filter(|d| d.len() == 10)
            .and_then(|d| NaiveDate::parse_from_str(d, "%Y-%m-%d").ok());
        if let Some(date) = date {
            found.push((date, entry.path()));
        }
    }
    found.sort_by_key(|(date, _)| std::cmp::Reverse(*date));
    Ok(found)
}

fn prune_rolling(dir: &Path, stem: &str, keep: usize) -> Result<(), StoreError> {
    for (_, old) in rolling_backups(dir, stem)?.into_iter().skip(keep) {
        std::fs::remove_file(&old).map_err(|e| io_error("remove the old backup", &old, e))?;
    }
    Ok(())
}

/// Opens `path` read-only and checks that it is a whole Streetwood inventory this build can read:
/// an SQLite file with the inventory's tables and a schema version no newer than this build's, that
/// passes `PRAGMA integrity_check`. Changes nothing in the file.
pub fn inspect_backup(path: &Path) -> Result<BackupInfo, StoreError> {
    let conn = open_read_only(path)?;
    inspect(&conn, path)
}

fn open_read_only(path: &Path) -> Result<Connection, StoreError> {
    if !path.is_file() {
        return Err(StoreError::Invalid(format!(
            "{} does not exist or is not a file",
            path.display()
        )));
    }
    let conn = Connection::open_with_flags(
        path,
        OpenFlags::SQLITE_OPEN_READ_ONLY | OpenFlags::SQLITE_OPEN_NO_MUTEX,
    )?;
    conn.busy_timeout(BUSY_TIMEOUT)?;
    Ok(conn)
}

fn inspect(conn: &Connection, path: &Path) -> Result<BackupInfo, StoreError> {
    let shown = path.display().to_string();
    let not_inventory = |reason: String| StoreError::NotAnInventory {
        path: shown.clone(),
        reason,
    };
    let tables: Vec<String> = conn
        .prepare("SELECT name FROM sqlite_master WHERE type = 'table'")
        .and_then(|mut stmt| {
            stmt.query_map([], |r| r.get::<_, String>(0))?
                .collect::<Result<Vec<_>, _>>()
        })
        .map_err(|e| match e.sqlite_error_code() {
            Some(rusqlite::ErrorCode::DatabaseCorrupt) => StoreError::Invalid(format!(
                "{shown} fails the integrity check ({e}); it was not used"
            )),
            _ => not_inventory(e.to_string()),
        })?;
    let version = migrate::current_version(conn)?;
    if version > migrate::latest_version() {
        return Err(StoreError::NewerSchema {
            found: version,
            supported: migrate::latest_version(),
        });
    }
    let missing: Vec<&str> = REQUIRED_TABLES
        .iter()
        .copied()
        .filter(|t| !tables.iter().any(|have| have == t))
        .collect();
    if version == 0 || !missing.is_empty() {
        return Err(not_inventory(if missing.is_empty() {
            "it has no Streetwood schema version".to_string()
        } else {
            format!("it has no {} table", missing.join(", "))
        }));
    }
    let problems = integrity_problems(conn)?;
    if !problems.is_empty() {
        return Err(StoreError::Invalid(format!(
            "{shown} fails the integrity check ({}); it was not used",
            problems.join("; ")
        )));
    }
    let count = |table: &str| -> Result<i64, StoreError> {
        Ok(conn.query_row(&format!("SELECT count(*) FROM {table}"), [], |r| r.get(0))?)
    };
    Ok(BackupInfo {
        schema_version: version,
        trees: count("trees")?,
        measurements: count("measurements")?,
    })
}

/// The rows of `PRAGMA integrity_check` other than `ok` (at most 20).
pub(crate) fn integrity_problems(conn: &Connection) -> Result<Vec<String>, StoreError> {
    let mut stmt = conn.prepare("PRAGMA integrity_check(20)")?;
    let rows = stmt
        .query_map([], |r| r.get::<_, String>(0))?
        .collect::<Result<Vec<_>, _>>()?;
    Ok(rows.into_iter().filter(|r| r != "ok").collect())
}

/// Restores the backup `source` into `target`. The backup is checked first ([`inspect_backup`]).
/// A missing `target` is created whole (copy, check, rename); an existing one is first copied to
/// `<target stem>-before-restore-<stamp>.db` beside it, then overwritten with the backup's pages in one
/// write transaction (waiting up to the busy timeout for other writers), and checked again.
pub fn restore(source: &Path, target: &Path, stamp: &str) -> Result<RestoreOutcome, StoreError> {
    if same_existing_file(source, target) {
        return Err(StoreError::Invalid(format!(
            "{} is the inventory itself; give the backup file to restore",
            source.display()
        )));
    }
    let src = open_read_only(source)?;
    let restored = inspect(&src, source)?;
    if !target.exists() {
        for side in [sidecar(target, "-wal"), sidecar(target, "-shm")] {
            if side.exists() {
                return Err(StoreError::Invalid(format!(
                    "{} exists without {}; move it away before restoring",
                    side.display(),
                    target.display()
                )));
            }
        }
        copy_to_new_file(&src, target)?;
        return Ok(RestoreOutcome {
            restored,
            previous_kept_at: None,
        });
    }
    let kept = keep_previous(target, stamp)?;
    let mut dst = Connection::open_with_flags(
        target,
        OpenFlags::SQLITE_OPEN_READ_WRITE | OpenFlags::SQLITE_OPEN_NO_MUTEX,
    )?;
    dst.busy_timeout(BUSY_TIMEOUT)?;
    let page_size = |c: &Connection| -> Result<i64, StoreError> {
        Ok(c.query_row("PRAGMA page_size", [], |r| r.get(0))?)
    };
    let wal: String = dst.query_row("PRAGMA journal_mode", [], |r| r.get(0))?;
    if wal.eq_ignore_ascii_case("wal") && page_size(&src)? != page_size(&dst)? {
        return Err(StoreError::Invalid(format!(
            "{} has another page size than {}; restore to a new file name instead",
            source.display(),
            target.display()
        )));
    }
    run_backup(&src, &mut dst)?;
    let problems = integrity_problems(&dst)?;
    if !problems.is_empty() {
        return Err(StoreError::Invalid(format!(
            "the restored {} fails the integrity check ({}); the previous inventory is kept at {}",
            target.display(),
            problems.join("; "),
            kept.display()
        )));
    }
    Ok(RestoreOutcome {
        restored,
        previous_kept_at: Some(kept),
    })
}

/// Copies the inventory about to be replaced beside it. A file SQLite cannot read (the reason one
/// restores) is copied byte for byte instead, with its write-ahead log if there is one.
fn keep_previous(target: &Path, stamp: &str) -> Result<PathBuf, StoreError> {
    let stem = target
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "inventory".to_string());
    let kept = target.with_file_name(format!("{stem}-before-restore-{stamp}.db"));
    if kept.exists() {
        return Err(StoreError::Invalid(format!(
            "{} exists already; wait a second and try again",
            kept.display()
        )));
    }
    let through_sqlite = Connection::open_with_flags(
        target,
        OpenFlags::SQLITE_OPEN_READ_ONLY | OpenFlags::SQLITE_OPEN_NO_MUTEX,
    )
    .map_err(StoreError::from)
    .and_then(|conn| {
        conn.busy_timeout(BUSY_TIMEOUT)?;
        copy_to_new_file(&conn, &kept)
    });
    if through_sqlite.is_err() {
        let _ = std::fs::remove_file(partial_path(&kept));
        std::fs::copy(target, &kept)
            .map_err(|e| io_error("keep a copy of the current inventory", &kept, e))?;
        let wal = sidecar(target, "-wal");
        if wal.exists() {
            std::fs::copy(&wal, sidecar(&kept, "-wal"))
                .map_err(|e| io_error("keep a copy of the current inventory", &kept, e))?;
        }
    }
    Ok(kept)
}

/// The backup API from `src` into a fresh `target.partial`, checked, synced, renamed to `target`.
fn copy_to_new_file(src: &Connection, target: &Path) -> Result<(), StoreError> {
    let partial = partial_path(target);
    remove_partial(&partial);
    let result = (|| -> Result<(), StoreError> {
        let mut dst = Connection::open(&partial)?;
        run_backup(src, &mut dst)?;
        let problems = integrity_problems(&dst)?;
        if !problems.is_empty() {
            return Err(StoreError::Invalid(format!(
                "the copy failed its integrity check ({}); nothing was written to {}",
                problems.join("; "),
                target.display()
            )));
        }
        // A backup is a single self-contained file: no write-ahead log for readers to create beside it.
        let _: String = dst.query_row("PRAGMA journal_mode = DELETE", [], |r| r.get(0))?;
        dst.close().map_err(|(_, e)| StoreError::from(e))?;
        std::fs::File::open(&partial)
            .and_then(|f| f.sync_all())
            .map_err(|e| io_error("write", &partial, e))?;
        std::fs::rename(&partial, target).map_err(|e| io_error("write", target, e))?;
        if let Some(dir) = target.parent().filter(|d| !d.as_os_str().is_empty()) {
            // Makes the rename itself durable (best effort: not every platform opens folders).
            if let Ok(folder) = std::fs::File::open(dir) {
                let _ = folder.sync_all();
            }
        }
        Ok(())
    })();
    if result.is_err() {
        remove_partial(&partial);
    }
    result
}

/// Copies every page of `src` into `dst` in one step (one read snapshot of `src`, one write
/// transaction of `dst`), retrying while another program holds a lock, up to the busy timeout.
fn run_backup(src: &Connection, dst: &mut Connection) -> Result<(), StoreError> {
    let started = Instant::now();
    let backup = Backup::new(src, dst)?;
    loop {
        match backup.step(-1)? {
            StepResult::Done => return Ok(()),
            StepResult::More => {}
            StepResult::Busy | StepResult::Locked => {
                if started.elapsed() > BUSY_TIMEOUT {
                    return Err(StoreError::Busy);
                }
                std::thread::sleep(Duration::from_millis(50));
            }
            _ => {}
        }
    }
}

fn remove_partial(partial: &Path) {
    for path in [
        partial.to_path_buf(),
        sidecar(partial, "-journal"),
        sidecar(partial, "-wal"),
        sidecar(partial, "-shm"),
    ] {
        let _ = std::fs::remove_file(path);
    }
}

fn partial_path(path: &Path) -> PathBuf {
    sidecar(path, ".partial")
}

fn sidecar(path: &Path, suffix: &str) -> PathBuf {
    let mut name = path
        .file_name()
        .map(|n| n.to_os_string())
        .unwrap_or_default();
    name.push(suffix);
    path.with_file_name(name)
}

fn same_existing_file(a: &Path, b: &Path) -> bool {
    match (a.canonicalize(), b.canonicalize()) {
        (Ok(a), Ok(b)) => a == b,
        _ => false,
    }
}

fn io_error(what: &str, path: &Path, error: std::io::Error) -> StoreError {
    StoreError::Invalid(format!("cannot {what} {}: {error}", path.display()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rolling_backups_keep_the_newest_and_skip_a_day_already_done() {
        let dir = tempfile::tempdir().expect("temp dir");
        let store = Store::open_or_create(&dir.path().join("city.db")).expect("store");
        let backups = dir.path().join("backups");
        std::fs::create_dir_all(&backups).expect("dir");
        std::fs::write(backups.join("other-2020-01-01.db"), b"not ours").expect("write");
        std::fs::write(backups.join("city-notes.txt"), b"not a backup").expect("write");
        let day = |d: u32| NaiveDate::from_ymd_opt(2026, 5, d).expect("date");
        for d in 1..=5 {
            let written = store.rolling_backup(&backups, day(d), 3).expect("backup");
            assert_eq!(written, Some(backups.join(format!("city-2026-05-0{d}.db"))));
        }
        assert_eq!(
            store.rolling_backup(&backups, day(5), 3).expect("again"),
            None
        );
        let kept: Vec<NaiveDate> = rolling_backups(&backups, "city")
            .expect("list")
            .into_iter()
            .map(|(d, _)| d)
            .collect();
        assert_eq!(kept, [day(5), day(4), day(3)]);
        assert!(backups.join("other-2020-01-01.db").exists());
        assert!(backups.join("city-notes.txt").exists());
        let info = inspect_backup(&backups.join("city-2026-05-05.db")).expect("a whole backup");
        assert_eq!(info.schema_version, migrate::latest_version());
        assert_eq!(
            store.rolling_backup(&backups, day(6), 0).expect("off"),
            None
        );
    }

    #[test]
    fn inspect_refuses_what_is_not_a_readable_inventory() {
        let dir = tempfile::tempdir().expect("temp dir");
        let text = dir.path().join("notes.db");
        std::fs::write(
            &text,
            "just some text, long enough to be a header of something else",
        )
        .expect("write");
        assert!(matches!(
            inspect_backup(&text),
            Err(StoreError::NotAnInventory { .. })
        ));
        let other = dir.path().join("other.db");
        let conn = Connection::open(&other).expect("open");
        conn.execute_batch("CREATE TABLE x (a); PRAGMA user_version = 2;")
            .expect("schema");
        drop(conn);
        let error = inspect_backup(&other).expect_err("refused");
        assert!(error.to_string().contains("no species"), "{error}");
        let newer = dir.path().join("newer.db");
        drop(Store::open_or_create(&newer).expect("store"));
        let conn = Connection::open(&newer).expect("open");
        conn.pragma_update(None, "user_version", migrate::latest_version() + 1)
            .expect("version");
        drop(conn);
        assert!(matches!(
            inspect_backup(&newer),
            Err(StoreError::NewerSchema { .. })
        ));
    }
}
