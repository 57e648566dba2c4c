//! `streetwood copy --for CREW FILE` (a field copy for a crew) and `streetwood merge OTHER.db` (bring a
//! copy's work back). The merge runs in one write transaction; see `store::merge` for the rules.

use std::path::Path;

use clap::ValueEnum;

use super::{CliError, open_store, same_file, with_output};

/// Output formats of the merge report.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum MergeFormat {
    Text,
    Json,
}

/// `streetwood copy --for CREW FILE`.
pub fn copy(
    inventory: &Path,
    crew: &str,
    file: &Path,
    now: chrono::DateTime<chrono::Utc>,
) -> Result<(), CliError> {
    if same_file(file, inventory) {
        return Err(CliError::Input(format!(
            "{} is the inventory itself; choose a new file for the copy",
            file.display()
        )));
    }
    let mut store = open_store(inventory)?;
    let outcome = store.make_copy(file, crew, now)?;
    eprintln!(
        "copied {} trees to {} for crew {} (copy {}, from {}; the two agree up to audit row {}); bring it back with `streetwood merge {}`",
        outcome.trees,
        file.display(),
        outcome.crew,
        outcome.copy_file_id,
        outcome.origin_file_id,
        outcome.audit_id,
        file.display()
    );
    Ok(())
}

/// `streetwood merge OTHER [--dry-run] [--format text|json]`.
pub fn merge(
    inventory: &Path,
    other: &Path,
    dry_run: bool,
    format: MergeFormat,
    now: chrono::DateTime<chrono::Utc>,
) -> Result<(), CliError> {
    if same_file(other, inventory) {
        return Err(CliError::Input(format!(
            "{} is the inventory itself; give another copy to merge",
            other.display()
        )));
    }
    if !other.is_file() {
        return Err(CliError::Input(format!(
            "{} does not exist or is not a file",
            other.display()
        )));
    }
    let mut store = open_store(inventory)?;
    let report = store.merge_from(other, dry_run, now)?;
    with_output(None, inventory, |out| {
        match format {
            MergeFormat::Json => {
                serde_json::to_writer_pretty(&mut *out, &report).map_err(anyhow::Error::from)?;
                writeln!(out)?;
            }
            MergeFormat::Text => write!(out, "{}", report.to_text())?,
        }
        Ok(())
    })
}
