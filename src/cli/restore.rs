//! `streetwood restore FILE [--force]`: put a backup in place of the inventory, checked first and
//! written whole (see `store::backup`).

use std::path::Path;

use chrono::{DateTime, Utc};

use super::CliError;
use crate::store::Store;
use crate::store::backup;

/// `streetwood restore FILE`: refuses a file that is not a Streetwood inventory, fails the integrity
/// check or was written by a newer Streetwood; replaces an existing inventory only with `--force`
/// (keeping a copy of it beside it).
pub fn restore(
    inventory: &Path,
    source: &Path,
    force: bool,
    now: DateTime<Utc>,
) -> Result<(), CliError> {
    if inventory.exists() && !force {
        // Check the backup first, so the user learns of a bad backup before thinking about --force.
        backup::inspect_backup(source)?;
        return Err(CliError::Input(format!(
            "{} exists; pass --force to replace it with {} (a copy of it is kept beside it)",
            inventory.display(),
            source.display()
        )));
    }
    let stamp = now.format("%Y%m%dT%H%M%SZ").to_string();
    let outcome = backup::restore(source, inventory, &stamp)?;
    // Opening applies the migrations an older backup lacks.
    let store = Store::open_existing(inventory)?;
    let check = store.integrity_check()?;
    eprintln!(
        "restored {} from {}: {} trees, {} measurements (schema version {} → {}), integrity {check}",
        inventory.display(),
        source.display(),
        outcome.restored.trees,
        outcome.restored.measurements,
        outcome.restored.schema_version,
        store.schema_version()?
    );
    if let Some(kept) = outcome.previous_kept_at {
        eprintln!("the inventory it replaced is kept as {}", kept.display());
    }
    Ok(())
}
