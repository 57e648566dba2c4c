//! `streetwood history TREE` and `streetwood undo [N]`.

use std::path::Path;

use clap::ValueEnum;

use super::{CliError, open_store, with_output};

/// Output formats of `history`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum HistoryFormat {
    Text,
    Json,
}

/// `streetwood history TREE`: every change of a tree and its records, with before and after.
pub fn history(inventory: &Path, tree: &str, format: HistoryFormat) -> Result<(), CliError> {
    let store = open_store(inventory)?;
    let tree_id = store.find_tree(tree)?.ok_or_else(|| {
        CliError::Input(format!(
            "no tree '{tree}' (give its id, uid or a unique uid prefix)"
        ))
    })?;
    let entries = store.tree_history(tree_id)?;
    with_output(None, inventory, |out| {
        match format {
            HistoryFormat::Json => {
                serde_json::to_writer_pretty(&mut *out, &entries).map_err(anyhow::Error::from)?;
                writeln!(out)?;
            }
            HistoryFormat::Text => {
                writeln!(out, "History of tree {tree_id} ({} changes)", entries.len())?;
                for e in &entries {
                    writeln!(
                        out,
                        "{}  {:<7} {} {}  by {}",
                        e.at, e.action, e.table_name, e.row_id, e.actor
                    )?;
                    if let Some(before) = &e.before_json {
                        writeln!(out, "    before: {before}")?;
                    }
                    if let Some(after) = &e.after_json {
                        writeln!(out, "    after:  {after}")?;
                    }
                }
            }
        }
        Ok(())
    })
}

/// `streetwood undo [N]`: reverts the last N changes, newest first (each undo is itself audited).
pub fn undo(inventory: &Path, count: usize, list: bool) -> Result<(), CliError> {
    let mut store = open_store(inventory)?;
    if list {
        let changes = store.undoable_changes(count.max(10))?;
        if changes.is_empty() {
            eprintln!("nothing to undo");
        }
        return with_output(None, inventory, |out| {
            for change in &changes {
                writeln!(out, "{}", change.describe())?;
            }
            Ok(())
        });
    }
    for done in 0..count {
        match store.undo_last("undo")? {
            Some(change) => {
                eprintln!("undone: {}", change.describe());
                if let Some(caveat) = change.undo_caveat() {
                    eprintln!("note: {caveat}");
                }
            }
            None => {
                eprintln!("nothing more to undo ({done} undone)");
                break;
            }
        }
    }
    Ok(())
}
