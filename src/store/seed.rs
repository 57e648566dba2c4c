//! Seed data written when a file is created or upgraded: the built-in species list (a copy of
//! `../shared/species-reference.csv`, source columns kept) and the settings' defaults. Both insert only
//! what is missing, so a user's changes are never overwritten.

use rusqlite::{Transaction, params};
use serde::Deserialize;

use super::StoreError;

/// The built-in species list, embedded at compile time.
pub const SPECIES_REFERENCE_CSV: &str = include_str!("species-reference.csv");

#[derive(Debug, Deserialize)]
struct SpeciesReferenceRow {
    scientific_name: String,
    common_name: String,
    family_2014: String,
    leaf_habit: String,
    sg_green: f64,
    jenkins_group: String,
    chojnacky_group: String,
    growth_cm_per_yr: f64,
    growth_source: String,
    water_use: String,
    lai: f64,
}

pub(super) fn seed_species(tx: &Transaction<'_>) -> Result<(), StoreError> {
    let mut reader = csv::Reader::from_reader(SPECIES_REFERENCE_CSV.as_bytes());
    let mut insert = tx.prepare_cached(
        "INSERT OR IGNORE INTO species (scientific_name, common_name, genus, family, leaf_habit, sg_green,
             jenkins_group, chojnacky_group, growth_cm_per_yr, growth_source, water_use, lai, builtin, source)
         VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, 1, ?13)",
    )?;
    for row in reader.deserialize::<SpeciesReferenceRow>() {
        let row = row.map_err(|e| StoreError::Invalid(format!("built-in species list: {e}")))?;
        let genus = row
            .scientific_name
            .split_whitespace()
            .next()
            .unwrap_or_default()
            .to_string();
        let source = format!(
            "built-in list; sg_green: US forest inventory species reference table; growth: {}",
            row.growth_source
        );
        insert.execute(params![
            row.scientific_name,
            row.common_name,
            genus,
            row.family_2014,
            row.leaf_habit,
            row.sg_green,
            row.jenkins_group,
            row.chojnacky_group,
            row.growth_cm_per_yr,
            row.growth_source,
            row.water_use,
            row.lai,
            source,
        ])?;
    }
    Ok(())
}

pub(super) fn seed_settings(tx: &Transaction<'_>) -> Result<(), StoreError> {
    let mut insert =
        tx.prepare_cached("INSERT OR IGNORE INTO settings (key, value) VALUES (?1, ?2)")?;
    for (key, value) in crate::settings::default_pairs() {
        insert.execute(params![key, value])?;
    }
    Ok(())
}

/// True when a default setting is missing (a file made by an older build that knew fewer settings).
pub(super) fn settings_missing(conn: &rusqlite::Connection) -> Result<bool, StoreError> {
    let mut query = conn.prepare_cached("SELECT 1 FROM settings WHERE key = ?1")?;
    for (key, _) in crate::settings::default_pairs() {
        if !query.exists([key])? {
            return Ok(true);
        }
    }
    Ok(false)
}
