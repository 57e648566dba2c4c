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
        /// GeoJSON: add each standing tree's benefits of the year as properties.
        #[arg(long)]
        with_benefits: bool,
        /// The benefits' year (default: the latest year of weather held).
        #[arg(long, requires = "with_benefits")]
        year: Option<i32>,
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
            with_benefits,
            year,
        } => {
            if *with_benefits {
                if *format != TreeFormat::Geojson || *history {
                    return Err(CliError::Input(
                        "--with-benefits goes with --format geojson (latest measurements); for a CSV use `streetwood benefits`"
                            .to_string(),
                    ));
                }
                export_geojson_with_benefits(inventory, out.as_deref(), *year)
            } else {
                export_trees(inventory, *format, out.as_deref(), *history)
            }
        }
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

/// The benefit properties added by `--with-benefits` (names that do not clash with the tree's own).
pub const BENEFIT_PROPERTIES: [&str; 13] = [
    "benefits_year",
    "height_used_m",
    "crown_width_used_m",
    "leaf_area_m2",
    "biomass_kg",
    "carbon_kg",
    "co2e_kg",
    "co2e_seq_kg_yr",
    "interception_m3_yr",
    "transpiration_m3_yr",
    "cooling_kwh_yr",
    "value",
    "estimated",
];

fn export_geojson_with_benefits(
    inventory: &Path,
    out: Option<&Path>,
    year: Option<i32>,
) -> Result<(), CliError> {
    let store = open_store(inventory)?;
    let run = store.year_benefits(year)?;
    eprintln!("{}", super::benefits::basis_line(&run));
    let by_tree: std::collections::HashMap<i64, &crate::science::inventory::BenefitRow> =
        run.rows.iter().map(|r| (r.tree_id, r)).collect();
    with_output(out, inventory, |sink| {
        let mut writer = GeoJsonWriter::new(sink)?;
        store.for_each_tree_record(false, |tree| {
            let values: Vec<serde_json::Value> = match by_tree.get(&tree.tree_id) {
                Some(row) => {
                    let b = &row.benefits;
                    vec![
                        serde_json::Value::from(run.year),
                        serde_json::json!(b.height_m),
                        serde_json::json!(b.crown_width_m),
                        b.leaf_area_m2.into(),
                        b.biomass_kg.into(),
                        b.carbon_kg.into(),
                        b.co2e_kg.into(),
                        b.co2e_seq_kg_yr.into(),
                        b.interception_m3_yr.into(),
                        b.transpiration_m3_yr.into(),
                        b.cooling_kwh_yr.into(),
                        b.value.into(),
                        row.estimated().join(";").into(),
                    ]
                }
                None => vec![serde_json::Value::Null; BENEFIT_PROPERTIES.len()],
            };
            let extra: Vec<(&str, serde_json::Value)> =
                BENEFIT_PROPERTIES.iter().copied().zip(values).collect();
            writer
                .write(&tree.uid, &tree.record, &extra)
                .map_err(CliError::from)
        })?;
        writer.finish()?;
        Ok(())
    })
}
