//! Schema migrations: the numbered `.sql` files of `migrations/`, embedded at compile time and applied
//! in order, each in its own transaction, with `PRAGMA user_version` recording how many have run.
//!
//! A hand runner (about forty lines) rather than a migration crate: the two maintained crates pin an
//! older rusqlite than ours (`../shared/STACK.md`), and this is all we need.

use include_dir::{Dir, include_dir};
use rusqlite::Connection;

use super::StoreError;

static MIGRATIONS: Dir<'static> = include_dir!("$CARGO_MANIFEST_DIR/migrations");

/// The embedded migrations as (file name, SQL), sorted by file name.
pub fn migrations() -> Vec<(&'static str, &'static str)> {
    let mut files: Vec<(&'static str, &'static str)> = MIGRATIONS
        .files()
        .filter_map(|file| {
            let name = file.path().to_str()?;
            let sql = file.contents_utf8()?;
            name.ends_with(".sql").then_some((name, sql))
        })
        .collect();
    files.sort_by_key(|(name, _)| *name);
    files
}

/// The schema version this build of Streetwood writes.
pub fn latest_version() -> i64 {
    migrations().len() as i64
}

/// The schema version recorded in a file.
pub fn current_version(conn: &Connection) -> Result<i64, StoreError> {
    Ok(conn.pragma_query_value(None, "user_version", |row| row.get(0))?)
}

/// Applies every migration the file has not seen yet. Refuses a file written by a newer Streetwood.
/// Returns the number of migrations applied.
pub fn migrate(conn: &mut Connection) -> Result<usize, StoreError> {
    let found = current_version(conn)?;
    let latest = latest_version();
    if found > latest {
        return Err(StoreError::NewerSchema {
            found,
            supported: latest,
        });
    }
    let pending: Vec<_> = migrations().into_iter().skip(found as usize).collect();
    for (offset, (name, sql)) in pending.iter().enumerate() {
        let tx = conn.transaction()?;
        tx.execute_batch(sql)
            .map_err(|source| StoreError::Migration {
                name: (*name).to_string(),
                source,
            })?;
        tx.pragma_update(None, "user_version", found + offset as i64 + 1)?;
        tx.commit()?;
    }
    Ok(pending.len())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn migration_files_are_numbered_contiguously_from_one() {
        for (index, (name, _)) in migrations().iter().enumerate() {
            let expected = format!("{:04}_", index + 1);
            assert!(
                name.starts_with(&expected),
                "{name} should start with {expected}"
            );
        }
        assert!(latest_version() >= 1);
    }
}
