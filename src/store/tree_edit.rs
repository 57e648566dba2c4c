//! Editing a tree's attributes (species, street, house number, site, position, planting date, notes)
//! without adding a measurement. The text is checked by the trees-import rules
//! ([`validate_tree_fields`]), so an edit the store accepts is a row the importer would accept, with the
//! same messages; the change is one transaction, audited by the triggers like every write.

use chrono::{DateTime, NaiveDate, Utc};
use rusqlite::{OptionalExtension, params};

use super::{Store, StoreError, timestamp};
use crate::io::species_lookup::SpeciesLookup;
use crate::io::trees_csv::{Column, FieldValue, ValidationContext, validate_tree_fields};
use crate::model::{SiteKind, TreeStatus};
use crate::spatial::ZoneIndex;

/// A tree's attributes as typed: every field is text, empty meaning "none" (species is required).
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct TreeEditText {
    /// Botanical or common name.
    pub species: String,
    pub street: String,
    pub house_number: String,
    /// verge, pit, median, park or yard.
    pub site_kind: String,
    /// Decimal degrees (WGS 84); give both or neither.
    pub lat: String,
    pub lon: String,
    /// YYYY-MM-DD.
    pub planted_on: String,
    pub notes: String,
}

/// A tree's attributes, checked and in their stored form.
#[derive(Debug, Clone, PartialEq)]
pub struct TreeAttributes {
    /// The botanical name as the species list holds it.
    pub species: String,
    pub street: Option<String>,
    pub house_number: Option<String>,
    pub site_kind: Option<SiteKind>,
    pub lon: Option<f64>,
    pub lat: Option<f64>,
    pub planted_on: Option<NaiveDate>,
    pub notes: Option<String>,
}

/// What an edit did.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct TreeEditOutcome {
    /// False when every attribute already had the given value (nothing written, no audit row).
    pub changed: bool,
    /// The tree's zone after the edit.
    pub zone: Option<String>,
}

/// The import column whose errors belong to each attribute (for showing reasons next to fields).
pub const EDIT_COLUMNS: [Column; 8] = [
    Column::Species,
    Column::Street,
    Column::HouseNumber,
    Column::SiteKind,
    Column::Lat,
    Column::Lon,
    Column::PlantedOn,
    Column::Notes,
];

impl TreeEditText {
    /// The text given for an import column (empty text counts as not given).
    fn get(&self, column: Column) -> Option<&str> {
        let text = match column {
            Column::Species => &self.species,
            Column::Street => &self.street,
            Column::HouseNumber => &self.house_number,
            Column::SiteKind => &self.site_kind,
            Column::Lat => &self.lat,
            Column::Lon => &self.lon,
            Column::PlantedOn => &self.planted_on,
            Column::Notes => &self.notes,
            _ => return None,
        };
        let text = text.trim();
        (!text.is_empty()).then_some(text)
    }
}

/// Checks typed attributes by the trees-import rules, as they apply to a tree of `status` on `today`
/// (a future planting date only for a planned tree; position in range and both or neither; known
/// species; known site word). Returns every (column, reason) that fails.
///
/// The import rules check a whole row, measurement included; an edit carries no measurement, so a
/// stand-in DBH of 1 cm (always valid, never stored) fills that column.
pub fn validate_tree_edit(
    text: &TreeEditText,
    species: &SpeciesLookup,
    status: TreeStatus,
    today: NaiveDate,
) -> Result<TreeAttributes, Vec<(String, String)>> {
    let get = |column: Column| -> Option<FieldValue<'_>> {
        let value = match column {
            Column::Status => Some(status.as_str()),
            Column::Dbh => Some("1"),
            other => text.get(other),
        }?;
        Some(FieldValue {
            field: column.name(),
            text: value,
            to_si: 1.0,
        })
    };
    let record = validate_tree_fields(get, ValidationContext { species, today })?;
    Ok(TreeAttributes {
        species: record.species,
        street: record.street,
        house_number: record.house_number,
        site_kind: record.site_kind,
        lon: record.lon,
        lat: record.lat,
        planted_on: record.planted_on,
        notes: record.notes,
    })
}

impl Store {
    /// Changes a tree's attributes (no measurement is added) in one transaction, audited by the
    /// triggers. The text is checked by [`validate_tree_edit`]; the zone is recomputed from the position
    /// (a tree without a position keeps its zone). Nothing is written when nothing changes.
    pub fn edit_tree(
        &mut self,
        tree_id: i64,
        text: &TreeEditText,
        today: NaiveDate,
        actor: &str,
        now: DateTime<Utc>,
    ) -> Result<TreeEditOutcome, StoreError> {
        let status: Option<String> = self
            .conn
            .query_row("SELECT status FROM trees WHERE id = ?1", [tree_id], |r| {
                r.get(0)
            })
            .optional()?;
        let status =
            status.ok_or_else(|| StoreError::Invalid(format!("no tree with id {tree_id}")))?;
        let status = TreeStatus::parse(&status)
            .map_err(|e| StoreError::Invalid(format!("stored tree status: {e}")))?;
        let lookup = SpeciesLookup::new(&self.species()?);
        let attributes = validate_tree_edit(text, &lookup, status, today).map_err(|problems| {
            let reasons: Vec<String> = problems
                .iter()
                .map(|(field, reason)| format!("{field}: {reason}"))
                .collect();
            StoreError::Invalid(format!("tree {tree_id}: {}", reasons.join("; ")))
        })?;
        let zones = ZoneIndex::from_geometry_json(&self.zones()?).map_err(StoreError::Invalid)?;
        let new_zone = match (attributes.lon, attributes.lat) {
            (Some(lon), Some(lat)) => Some(zones.zone_of(lon, lat)),
            _ => None,
        };
        self.write(actor, |tx| {
            let species_id: i64 = tx
                .query_row(
                    "SELECT id FROM species WHERE scientific_name = ?1 COLLATE NOCASE",
                    [&attributes.species],
                    |r| r.get(0),
                )
                .optional()?
                .ok_or_else(|| {
                    StoreError::Invalid(format!(
                        "species: '{}' is not in the species list",
                        attributes.species
                    ))
                })?;
            let zone_id: Option<i64> = match new_zone {
                Some(zone) => zone,
                None => tx.query_row("SELECT zone_id FROM trees WHERE id = ?1", [tree_id], |r| {
                    r.get(0)
                })?,
            };
            let changed = tx.execute(
                "UPDATE trees SET species_id = ?2, street = ?3, house_number = ?4, site_kind = ?5, lon = ?6,
                     lat = ?7, planted_on = ?8, notes = ?9, zone_id = ?10, updated_at = ?11
                 WHERE id = ?1 AND (species_id IS NOT ?2 OR street IS NOT ?3 OR house_number IS NOT ?4
                     OR site_kind IS NOT ?5 OR lon IS NOT ?6 OR lat IS NOT ?7 OR planted_on IS NOT ?8
                     OR notes IS NOT ?9 OR zone_id IS NOT ?10)",
                params![
                    tree_id,
                    species_id,
                    attributes.street,
                    attributes.house_number,
                    attributes.site_kind.map(SiteKind::as_str),
                    attributes.lon,
                    attributes.lat,
                    attributes.planted_on.map(|d| d.to_string()),
                    attributes.notes,
                    zone_id,
                    timestamp(now),
                ],
            )?;
            let zone: Option<String> = match zone_id {
                Some(id) => tx
                    .query_row("SELECT name FROM zones WHERE id = ?1", [id], |r| r.get(0))
                    .optional()?,
                None => None,
            };
            Ok(TreeEditOutcome {
                changed: changed > 0,
                zone,
            })
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::store::audit;

    fn demo() -> Store {
        let mut store = Store::open_in_memory().expect("store");
        crate::cli::demo::load_demo(&mut store).expect("demo");
        store
    }

    fn today() -> NaiveDate {
        NaiveDate::from_ymd_opt(2026, 11, 30).expect("date")
    }

    fn now() -> DateTime<Utc> {
        DateTime::parse_from_rfc3339("2026-11-30T10:00:00Z")
            .expect("time")
            .with_timezone(&Utc)
    }

    fn text_of(store: &Store, id: i64) -> TreeEditText {
        let d = store.tree_detail(id).expect("query").expect("tree");
        TreeEditText {
            species: d.summary.species.clone(),
            street: d.summary.street.clone().unwrap_or_default(),
            house_number: d.summary.house_number.clone().unwrap_or_default(),
            site_kind: d
                .site_kind
                .map(|k| k.as_str().to_string())
                .unwrap_or_default(),
            lat: d.lat.map(|v| v.to_string()).unwrap_or_default(),
            lon: d.lon.map(|v| v.to_string()).unwrap_or_default(),
            planted_on: d.planted_on.clone().unwrap_or_default(),
            notes: d.notes.clone().unwrap_or_default(),
        }
    }

    #[test]
    fn an_edit_changes_the_attributes_in_one_audited_update_and_keeps_the_measurements() {
        let mut store = demo();
        let before = store.tree_detail(1).expect("query").expect("tree");
        let mut text = text_of(&store, 1);
        text.street = "Quill Lane".to_string();
        text.house_number = String::new();
        text.species = "red maple".to_string();
        let outcome = store
            .edit_tree(1, &text, today(), "tester", now())
            .expect("saved");
        assert!(outcome.changed);
        let after = store.tree_detail(1).expect("query").expect("tree");
        assert_eq!(after.summary.street.as_deref(), Some("Quill Lane"));
        assert_eq!(after.summary.house_number, None, "empty text clears");
        assert_eq!(after.summary.species, "Acer rubrum", "common names resolve");
        assert_eq!(after.measurements, before.measurements);
        let audit = audit::entries_for_row(store.conn(), "trees", 1).expect("audit");
        let last = audit.last().expect("an audit row");
        assert_eq!(last.action, "update");
        assert_eq!(last.actor, "tester");
        assert!(
            last.after_json
                .as_deref()
                .is_some_and(|j| j.contains("Quill Lane"))
        );
        // The same text again changes nothing and writes no audit row.
        let again = store
            .edit_tree(1, &text, today(), "tester", now())
            .expect("no-op");
        assert!(!again.changed);
        assert_eq!(
            audit::entries_for_row(store.conn(), "trees", 1)
                .expect("audit")
                .len(),
            audit.len()
        );
    }

    #[test]
    fn bad_text_is_refused_with_the_import_reasons_and_nothing_is_written() {
        let mut store = demo();
        let rows = audit::count(store.conn(), "trees", "update").expect("count");
        let mut text = text_of(&store, 1);
        text.lat = "95".to_string();
        text.planted_on = "2030-01-01".to_string();
        text.site_kind = "roof".to_string();
        let error = store
            .edit_tree(1, &text, today(), "tester", now())
            .expect_err("refused")
            .to_string();
        assert!(error.contains("lat: 95 is out of range"), "{error}");
        assert!(
            error.contains("planted_on: 2030-01-01 is in the future"),
            "{error}"
        );
        assert!(error.contains("site_kind: 'roof' is not one of"), "{error}");
        let mut text = text_of(&store, 1);
        text.lon = String::new();
        let error = store
            .edit_tree(1, &text, today(), "tester", now())
            .expect_err("lat without lon")
            .to_string();
        assert!(error.contains("lat is given without lon"), "{error}");
        assert_eq!(
            audit::count(store.conn(), "trees", "update").expect("count"),
            rows
        );
        assert!(
            store
                .edit_tree(999_999, &text, today(), "t", now())
                .is_err()
        );
    }

    #[test]
    fn the_zone_follows_the_position() {
        let mut store = demo();
        let zones = store.zones().expect("zones");
        let index = ZoneIndex::from_geometry_json(&zones).expect("index");
        let positions = store.tree_positions().expect("positions");
        let here = store.tree_detail(1).expect("query").expect("tree");
        // A tree standing in another zone than tree 1: move tree 1 onto its position.
        let (_, lon, lat) = positions
            .iter()
            .copied()
            .find(|(_, lon, lat)| {
                let zone = index.zone_of(*lon, *lat);
                zone.is_some()
                    && zones
                        .iter()
                        .find(|z| Some(z.0) == zone)
                        .map(|z| z.1.clone())
                        != here.summary.zone
            })
            .expect("a tree in another zone");
        let expected = index
            .zone_of(lon, lat)
            .and_then(|id| zones.iter().find(|z| z.0 == id))
            .map(|z| z.1.clone());
        let mut text = text_of(&store, 1);
        text.lon = lon.to_string();
        text.lat = lat.to_string();
        let outcome = store
            .edit_tree(1, &text, today(), "tester", now())
            .expect("moved");
        assert_eq!(outcome.zone, expected);
        let after = store.tree_detail(1).expect("query").expect("tree");
        assert_eq!(after.summary.zone, expected);
        assert_ne!(after.summary.zone, here.summary.zone);
    }
}
