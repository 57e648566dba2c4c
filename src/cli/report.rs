//! `streetwood summary --format html`: loads what the year report needs and writes it.

use std::path::Path;

use crate::io::year_report::{ReportInputs, build};
use crate::store::Store;
use crate::store::benefits::YearRun;

use super::CliError;

/// The report's inputs besides the year, from the store.
pub fn inputs(
    store: &Store,
    top: usize,
    today: chrono::NaiveDate,
) -> Result<ReportInputs, CliError> {
    Ok(ReportInputs {
        risk: store.risk_rating_counts()?,
        work: store.open_work_by_priority()?,
        positions: store.tree_positions()?,
        inventory: store
            .path()
            .map(|p| p.display().to_string())
            .unwrap_or_default(),
        top,
        today,
    })
}

/// Writes the report to `out` (or standard output).
pub fn write(
    store: &Store,
    run: &YearRun,
    top: usize,
    out: Option<&Path>,
    inventory: &Path,
) -> Result<(), CliError> {
    let html = build(run, inputs(store, top, chrono::Local::now().date_naive())?)
        .map_err(|e| CliError::Other(anyhow::anyhow!(e)))?;
    super::with_output(out, inventory, |sink| {
        sink.write_all(html.as_bytes())?;
        Ok(())
    })
}
