//! `streetwood field-entries` (hidden): saves invented trees one at a time through the same store call
//! the TUI's field log uses (one write transaction per tree), printing `saved UID` after each commit.
//! The crash-safety test kills it at random moments and checks that every acknowledged entry is there.

use std::io::Write;
use std::path::Path;

use chrono::{DateTime, Utc};

use super::{CliError, open_store};
use crate::model::TreeRecord;
use crate::store::trees::TreeImportRow;

/// Saves `count` trees with uids `PREFIX-0`, `PREFIX-1`, …, acknowledging each on stdout once it is
/// committed.
pub fn field_entries(
    inventory: &Path,
    count: usize,
    prefix: &str,
    now: DateTime<Utc>,
) -> Result<(), CliError> {
    let mut store = open_store(inventory)?;
    let species = store
        .species()?
        .into_iter()
        .next()
        .map(|s| s.scientific_name)
        .ok_or_else(|| CliError::Input("the species list is empty".to_string()))?;
    let stdout = std::io::stdout();
    for i in 0..count {
        let uid = format!("{prefix}-{i}");
        let record = TreeRecord {
            uid: Some(uid.clone()),
            species: species.clone(),
            lon: Some(-84.1 + i as f64 * 1e-5),
            lat: Some(42.7),
            street: Some("Field Entry Row".to_string()),
            house_number: Some(i.to_string()),
            site_kind: None,
            planted_on: None,
            status: None,
            measured_on: now.date_naive(),
            stems_cm: vec![10.0 + (i % 50) as f64],
            multi_stem: false,
            height_m: Some(8.0),
            crown_base_m: None,
            crown_width_m: None,
            crown_width2_m: None,
            dieback_pct: None,
            condition: None,
            notes: Some(format!("entry {i}")),
            measured_by: Some("field test".to_string()),
        };
        let row = TreeImportRow {
            line: i as u64 + 1,
            record,
            zone_id: None,
        };
        store.import_trees(&[row], "field", now, false)?;
        let mut lock = stdout.lock();
        writeln!(lock, "saved {uid}")?;
        lock.flush()?;
    }
    Ok(())
}
