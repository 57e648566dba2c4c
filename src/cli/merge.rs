//! `streetwood copy --for CREW FILE` (a field copy for a crew) and `streetwood merge OTHER.db` (bring a
//! copy's work back). The merge runs in one write transaction; see `store::merge` for the rules.

use std::path::Path;

use clap::ValueEnum;

use crate::store::merge::{MergeChoices, MergeReport};

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
    check_other(inventory, other)?;
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

fn check_other(inventory: &Path, other: &Path) -> Result<(), CliError> {
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
    Ok(())
}

/// `--interactive` asks a person at the screen: it does not go with `--dry-run` (the screen is the
/// look before merging; Esc leaves with nothing written) nor `--format json` (made for scripts).
pub fn interactive_options(dry_run: bool, format: MergeFormat) -> Result<(), CliError> {
    if dry_run {
        return Err(CliError::Input(
            "--interactive does not go with --dry-run: the conflict screen shows the merge before anything is written, and Esc leaves it with nothing written; for a report without a screen use `merge OTHER --dry-run`".to_string(),
        ));
    }
    if format == MergeFormat::Json {
        return Err(CliError::Input(
            "--interactive does not go with --format json: the interactive merge prints its report as text; for JSON merge without --interactive".to_string(),
        ));
    }
    Ok(())
}

/// `streetwood merge OTHER --interactive`: the plan (a dry run), then `choose` (the TUI's conflict
/// screen, passed in by `main.rs` so the CLI does not call the UI) picks sides or cancels (`None`), then
/// the merge with those choices in one write transaction and the text report on standard output. A
/// cancel writes nothing.
pub fn merge_interactive(
    inventory: &Path,
    other: &Path,
    dry_run: bool,
    format: MergeFormat,
    now: chrono::DateTime<chrono::Utc>,
    choose: impl FnOnce(&MergeReport) -> anyhow::Result<Option<MergeChoices>>,
) -> Result<(), CliError> {
    interactive_options(dry_run, format)?;
    check_other(inventory, other)?;
    let mut store = open_store(inventory)?;
    let plan = store.merge_plan(other, now)?;
    let choices = match choose(&plan).map_err(CliError::Other)? {
        Some(choices) => choices,
        None => {
            eprintln!("merge cancelled: nothing was written");
            return Ok(());
        }
    };
    let report = store.merge_from_with(other, now, &choices)?;
    with_output(None, inventory, |out| {
        write!(out, "{}", report.to_text())?;
        Ok(())
    })
}
