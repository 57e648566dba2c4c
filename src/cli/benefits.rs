//! `streetwood benefits`, `summary` and `explain`: the benefit engine over the inventory for one year.

use std::io::Write;
use std::path::{Path, PathBuf};

use clap::ValueEnum;
use serde_json::json;

use super::{CliError, csv_error, open_store, with_output};
use crate::io::csv_safe;
use crate::science::inventory::{BenefitRow, GroupBy, Summarizer, SummaryRow};
pub use crate::store::benefits::{YearRun, YearSetup};

/// The `benefits` columns of DESIGN.md, in order, plus `estimated`.
pub const BENEFIT_COLUMNS: [&str; 16] = [
    "tree_id",
    "uid",
    "species",
    "dbh_cm",
    "height_m",
    "crown_width_m",
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

/// Output formats of `benefits`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum BenefitsFormat {
    Csv,
    Json,
}

/// Output formats of `summary`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum SummaryFormat {
    Csv,
    Json,
    Md,
    /// One self-contained printable HTML file with charts, a map, tables and the methods.
    Html,
}

/// Grouping of `summary`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum SummaryBy {
    Species,
    Street,
    Zone,
    Condition,
    DbhClass,
    None,
}

impl From<SummaryBy> for GroupBy {
    fn from(by: SummaryBy) -> Self {
        match by {
            SummaryBy::Species => GroupBy::Species,
            SummaryBy::Street => GroupBy::Street,
            SummaryBy::Zone => GroupBy::Zone,
            SummaryBy::Condition => GroupBy::Condition,
            SummaryBy::DbhClass => GroupBy::DbhClass,
            SummaryBy::None => GroupBy::None,
        }
    }
}

/// One line stating the year, station and prices behind the value column.
pub fn basis_line(run: &YearRun) -> String {
    run.basis_line()
}

fn warn_partial_year(run: &YearRun) {
    warn_year(
        &run.station.name,
        run.year,
        run.days_held,
        run.standing_trees,
        run.rows.len(),
    );
}

fn warn_year(station: &str, year: i32, days_held: i64, standing: usize, rows: usize) {
    let without = standing.saturating_sub(rows);
    if without > 0 {
        eprintln!(
            "note: {without} of {standing} standing trees have no measurement dated in or before {year} and have no row"
        );
    }
    let in_year = if chrono::NaiveDate::from_ymd_opt(year, 2, 29).is_some() {
        366
    } else {
        365
    };
    if days_held < in_year {
        eprintln!(
            "warning: station '{station}' holds {days_held} of {in_year} days of {year}; missing days count as dry with no ET0"
        );
    }
}

/// Formats a number with six significant digits, no exponent (METHODS.md M13: at least 4).
pub fn number(x: f64) -> String {
    if x == 0.0 || !x.is_finite() {
        return "0".to_string();
    }
    let magnitude = x.abs().log10().floor() as i32;
    let decimals = (5 - magnitude).clamp(0, 12) as usize;
    format!("{x:.decimals$}")
}

fn option(x: Option<f64>) -> String {
    x.map(number).unwrap_or_default()
}

/// `streetwood benefits`.
pub fn benefits(
    inventory: &Path,
    year: Option<i32>,
    format: BenefitsFormat,
    out: Option<&PathBuf>,
) -> Result<(), CliError> {
    let store = open_store(inventory)?;
    let setup = store.year_setup(year)?;
    eprintln!("{}", setup.basis_line());
    let mut rows = 0usize;
    let mut standing = 0usize;
    with_output(out.map(PathBuf::as_path), inventory, |sink| {
        match format {
            BenefitsFormat::Csv => {
                let mut writer = csv::Writer::from_writer(sink);
                writer.write_record(BENEFIT_COLUMNS).map_err(csv_error)?;
                standing = store.for_each_benefit(&setup, |row| {
                    rows += 1;
                    writer.write_record(benefit_cells(&row)).map_err(csv_error)
                })?;
                writer.flush()?;
            }
            BenefitsFormat::Json => {
                // Streamed: the header fields, then one tree at a time.
                let head = json!({
                    "year": setup.year,
                    "station": setup.station.name,
                    "prices": setup.prices,
                    "caution": crate::care::risk::CAUTION,
                });
                let head = serde_json::to_string_pretty(&head).map_err(anyhow::Error::from)?;
                write!(
                    sink,
                    "{},\n  \"trees\": [",
                    head.trim_end().trim_end_matches('}').trim_end()
                )?;
                standing = store.for_each_benefit(&setup, |row| {
                    let separator = if rows == 0 { "\n    " } else { ",\n    " };
                    rows += 1;
                    write!(sink, "{separator}")?;
                    serde_json::to_writer(&mut *sink, &benefit_json(&row))
                        .map_err(anyhow::Error::from)?;
                    Ok::<(), CliError>(())
                })?;
                writeln!(sink, "\n  ]\n}}")?;
            }
        }
        Ok(())
    })?;
    warn_year(
        &setup.station.name,
        setup.year,
        setup.days_held,
        standing,
        rows,
    );
    Ok(())
}

fn benefit_cells(row: &BenefitRow) -> [String; 16] {
    let b = &row.benefits;
    [
        row.tree_id.to_string(),
        csv_safe(&row.uid).into_owned(),
        csv_safe(&row.species).into_owned(),
        number(b.dbh_cm),
        option(b.height_m),
        option(b.crown_width_m),
        number(b.leaf_area_m2),
        number(b.biomass_kg),
        number(b.carbon_kg),
        number(b.co2e_kg),
        number(b.co2e_seq_kg_yr),
        number(b.interception_m3_yr),
        number(b.transpiration_m3_yr),
        number(b.cooling_kwh_yr),
        number(b.value),
        row.estimated().join(";"),
    ]
}

fn benefit_json(row: &BenefitRow) -> serde_json::Value {
    let b = &row.benefits;
    json!({
        "tree_id": row.tree_id,
        "uid": row.uid,
        "species": row.species,
        "dbh_cm": b.dbh_cm,
        "height_m": b.height_m,
        "crown_width_m": b.crown_width_m,
        "leaf_area_m2": b.leaf_area_m2,
        "biomass_kg": b.biomass_kg,
        "carbon_kg": b.carbon_kg,
        "co2e_kg": b.co2e_kg,
        "co2e_seq_kg_yr": b.co2e_seq_kg_yr,
        "interception_m3_yr": b.interception_m3_yr,
        "transpiration_m3_yr": b.transpiration_m3_yr,
        "cooling_kwh_yr": b.cooling_kwh_yr,
        "value": b.value,
        "estimated": row.estimated(),
    })
}

/// Columns of the summary tables: (name, unit, getter).
type SummaryColumn = (&'static str, &'static str, fn(&SummaryRow) -> f64);

const SUMMARY_COLUMNS: [SummaryColumn; 11] = [
    ("mean_dbh_cm", "cm", |r| r.mean_dbh_cm),
    ("crown_projection_m2", "m²", |r| r.crown_projection_m2),
    ("leaf_area_m2", "m²", |r| r.leaf_area_m2),
    ("biomass_kg", "kg", |r| r.biomass_kg),
    ("carbon_kg", "kg", |r| r.carbon_kg),
    ("co2e_kg", "kg", |r| r.co2e_kg),
    ("co2e_seq_kg_yr", "kg/yr", |r| r.co2e_seq_kg_yr),
    ("interception_m3_yr", "m³/yr", |r| r.interception_m3_yr),
    ("transpiration_m3_yr", "m³/yr", |r| r.transpiration_m3_yr),
    ("cooling_kwh_yr", "kWh/yr", |r| r.cooling_kwh_yr),
    ("value", "/yr", |r| r.value),
];

/// `streetwood summary`.
pub fn summary(
    inventory: &Path,
    year: Option<i32>,
    by: SummaryBy,
    format: SummaryFormat,
    out: Option<&PathBuf>,
    top: usize,
) -> Result<(), CliError> {
    let store = open_store(inventory)?;
    if format == SummaryFormat::Html {
        let run = store.year_benefits(year)?;
        warn_partial_year(&run);
        return super::report::write(&store, &run, top, out.map(PathBuf::as_path), inventory);
    }
    let setup = store.year_setup(year)?;
    let mut summarizer = Summarizer::new(by.into());
    let mut rows = 0usize;
    let standing = store.for_each_benefit(&setup, |row| {
        rows += 1;
        summarizer.add(&row);
        Ok::<(), CliError>(())
    })?;
    warn_year(
        &setup.station.name,
        setup.year,
        setup.days_held,
        standing,
        rows,
    );
    let run = &setup;
    let (mut groups, total) = summarizer.finish();
    if by == SummaryBy::None {
        // One group of everything is the total itself.
        groups.clear();
    }
    with_output(out.map(PathBuf::as_path), inventory, |sink| match format {
        SummaryFormat::Csv => {
            let mut writer = csv::Writer::from_writer(sink);
            let mut header = vec!["group", "trees"];
            header.extend(SUMMARY_COLUMNS.iter().map(|(name, _, _)| *name));
            header.push("estimated_trees");
            writer.write_record(&header).map_err(csv_error)?;
            for row in groups.iter().chain(std::iter::once(&total)) {
                let mut cells = vec![csv_safe(&row.group).into_owned(), row.trees.to_string()];
                cells.extend(SUMMARY_COLUMNS.iter().map(|(_, _, get)| number(get(row))));
                cells.push(row.estimated_trees.to_string());
                writer.write_record(&cells).map_err(csv_error)?;
            }
            writer.flush()?;
            Ok(())
        }
        SummaryFormat::Json => {
            let document = json!({
                "year": run.year,
                "station": run.station.name,
                "by": GroupBy::from(by),
                "prices": run.prices,
                "groups": groups,
                "total": total,
                "caution": crate::care::risk::CAUTION,
            });
            serde_json::to_writer_pretty(&mut *sink, &document).map_err(anyhow::Error::from)?;
            writeln!(sink)?;
            Ok(())
        }
        SummaryFormat::Md => write_summary_md(sink, run, by, &groups, &total),
        SummaryFormat::Html => Ok(()),
    })
}

fn md_cell(text: &str) -> String {
    text.replace('|', "\\|").replace(['\n', '\r'], " ")
}

fn write_summary_md(
    sink: &mut dyn Write,
    run: &YearSetup,
    by: SummaryBy,
    groups: &[SummaryRow],
    total: &SummaryRow,
) -> Result<(), CliError> {
    let by_label = match by {
        SummaryBy::Species => "species",
        SummaryBy::Street => "street",
        SummaryBy::Zone => "zone",
        SummaryBy::Condition => "condition",
        SummaryBy::DbhClass => "DBH class",
        SummaryBy::None => "group",
    };
    writeln!(sink, "# Street-tree benefits, {}\n", run.year)?;
    writeln!(sink, "{}.\n", run.basis_line())?;
    let mut header = format!("| {by_label} | trees |");
    let mut rule = "|---|---:|".to_string();
    for (name, unit, _) in SUMMARY_COLUMNS {
        let unit = if name == "value" {
            format!("{}{unit}", run.prices.currency)
        } else {
            unit.to_string()
        };
        header.push_str(&format!(" {name} ({unit}) |"));
        rule.push_str("---:|");
    }
    writeln!(sink, "{header}\n{rule}")?;
    for row in groups.iter().chain(std::iter::once(total)) {
        let name = if std::ptr::eq(row, total) {
            "**total**".to_string()
        } else {
            md_cell(&row.group)
        };
        let mut line = format!("| {name} | {} |", row.trees);
        for (_, _, get) in SUMMARY_COLUMNS {
            line.push_str(&format!(" {} |", grouped_thousands(get(row))));
        }
        writeln!(sink, "{line}")?;
    }
    writeln!(
        sink,
        "\n{} of {} trees have an estimated input (see `streetwood benefits`, column `estimated`). \
         Stored carbon is reported, not valued; cooling is a latent-heat equivalence, not metered savings.\n",
        total.estimated_trees, total.trees
    )?;
    writeln!(sink, "_{}_", crate::care::risk::CAUTION)?;
    Ok(())
}

/// A number with two decimals and thousands separators, for reading.
fn grouped_thousands(x: f64) -> String {
    crate::io::report_html::grouped(x, 2)
}

/// `streetwood explain TREE`.
pub fn explain(inventory: &Path, tree: &str, year: Option<i32>) -> Result<(), CliError> {
    let store = open_store(inventory)?;
    let tree_id = store.find_tree(tree)?.ok_or_else(|| {
        CliError::Input(format!(
            "no tree '{tree}' (give its id, uid or a unique uid prefix)"
        ))
    })?;
    let run = store.year_benefits(year)?;
    let Some(row) = run.rows.iter().find(|r| r.tree_id == tree_id) else {
        return Err(CliError::Input(format!(
            "tree {tree_id} has no benefits in {}: it is not standing, or has no measurement up to that year",
            run.year
        )));
    };
    with_output(None, inventory, |out| {
        writeln!(
            out,
            "Tree {} ({}), {}: {}",
            row.tree_id,
            row.uid,
            row.species,
            basis_line(&run)
        )?;
        let estimated = row.estimated();
        writeln!(
            out,
            "Estimated inputs: {}\n",
            if estimated.is_empty() {
                "none".to_string()
            } else {
                estimated.join(", ")
            }
        )?;
        let steps = row.benefits.explain(&run.prices.currency);
        let width = steps
            .iter()
            .map(|s| s.label.chars().count())
            .max()
            .unwrap_or(10);
        for step in steps {
            writeln!(
                out,
                "{:<width$}  {:>14} {:<10}  {}",
                step.label,
                number(step.value),
                step.unit,
                step.source
            )?;
        }
        writeln!(out, "\n{}", crate::care::risk::CAUTION)?;
        Ok(())
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_keep_six_significant_digits() {
        assert_eq!(number(196.70123456), "196.701");
        assert_eq!(number(0.000123456789), "0.000123457");
        assert_eq!(number(12345.678), "12345.7");
        assert_eq!(number(0.0), "0");
        assert_eq!(grouped_thousands(1234567.891), "1,234,567.89");
        assert_eq!(grouped_thousands(-12.5), "-12.50");
    }
}
