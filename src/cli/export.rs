//! `streetwood export trees --format csv|geojson`.

use std::path::{Path, PathBuf};

use clap::{Subcommand, ValueEnum};

use super::{CliError, open_store, with_output};
use crate::io::geojson_out::GeoJsonWriter;
use crate::io::trees_csv::TreesCsvWriter;

#[derive(Debug, Subcommand)]
pub enum ExportCommand {
    /// Export every tree with its latest measurement (or all measurements with --history).
    Trees {
        /// Output format.
        #[arg(long, value_enum, default_value = "csv")]
        format: TreeFormat,
        /// Output file (default: standard output).
        #[arg(long, value_name = "FILE")]
        out: Option<PathBuf>,
        /// One row per measurement, oldest first (re-importing it rebuilds the history).
        #[arg(long)]
        history: bool,
    },
}

/// Tree export formats.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum TreeFormat {
    Csv,
    Geojson,
}

/// Runs an export subcommand.
pub fn run(inventory: &Path, command: &ExportCommand) -> Result<(), CliError> {
    match command {
        ExportCommand::Trees {
            format,
            out,
            history,
        } => export_trees(inventory, *format, out.as_deref(), *history),
    }
}

fn export_trees(
    inventory: &Path,
    format: TreeFormat,
    out: Option<&Path>,
    history: bool,
) -> Result<(), CliError> {
    let store = open_store(inventory)?;
    with_output(out, inventory, |sink| {
        match format {
            TreeFormat::Csv => {
                let mut writer = TreesCsvWriter::new(sink).map_err(super::csv_error)?;
                store.for_each_tree_record(history, |tree| {
                    writer
                        .write(&tree.uid, &tree.record)
                        .map_err(super::csv_error)
                })?;
                writer.finish()?;
            }
            TreeFormat::Geojson => {
                let mut writer = GeoJsonWriter::new(sink)?;
                store.for_each_tree_record(history, |tree| {
                    writer
                        .write(&tree.uid, &tree.record, &[])
                        .map_err(CliError::from)
                })?;
                writer.finish()?;
            }
        }
        Ok(())
    })
}
