//! What the roster and tree card read: a compact index of every tree (for sorting, filtering and
//! searching in memory without loading rows into widgets), visible rows by id, and one tree's detail.

use std::collections::HashMap;

use chrono::NaiveDate;
use rusqlite::{OptionalExtension, params_from_iter};

use super::{Store, StoreError};
use crate::model::{SiteKind, TreeStatus, TreeSummary};
use crate::science::condition::ConditionWord;

/// Sentinel for "no value" in the index's small integer columns.
pub const NONE: u32 = u32::MAX;

/// One tree in the roster index: small numbers only (names live once in the lists beside it).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RosterEntry {
    pub id: i64,
    /// Index into [`RosterIndexData::species`].
    pub species: u32,
    /// Index into [`RosterIndexData::streets`], or [`NONE`].
    pub street: u32,
    /// Leading number of the house number (for sorting), or [`NONE`].
    pub house_number: u32,
    /// Index into [`RosterIndexData::zones`], or [`NONE`].
    pub zone: u32,
    pub status: TreeStatus,
    /// DBH of the latest measurement, cm (NaN when none).
    pub dbh_cm: f32,
    /// Dieback of the latest measurement, % (from the condition word when only that is given; NaN
    /// when neither).
    pub dieback_pct: f32,
    /// Rating of the latest assessment: 0 none, 1 low, 2 moderate, 3 high, 4 extreme.
    pub risk: u8,
    /// Has open or scheduled work.
    pub open_work: bool,
}

/// The roster index and the names its entries point to.
#[derive(Debug, Clone, Default)]
pub struct RosterIndexData {
    /// (species id, botanical name, common name), sorted by botanical name.
    pub species: Vec<(i64, String, String)>,
    /// Distinct streets, sorted.
    pub streets: Vec<String>,
    /// Zone names, sorted.
    pub zones: Vec<String>,
    pub entries: Vec<RosterEntry>,
}

/// A measurement row for the tree card.
#[derive(Debug, Clone, PartialEq)]
pub struct MeasurementRow {
    pub id: i64,
    pub measured_on: NaiveDate,
    pub dbh_cm: f64,
    pub stems_cm: Option<String>,
    pub height_m: Option<f64>,
    pub crown_width_m: Option<f64>,
    pub crown_width2_m: Option<f64>,
    pub crown_base_m: Option<f64>,
    pub dieback_pct: Option<f64>,
    pub condition: Option<ConditionWord>,
    pub measured_by: Option<String>,
}

/// An assessment line for the tree card.
#[derive(Debug, Clone, PartialEq)]
pub struct AssessmentLine {
    pub assessed_on: String,
    pub rating: String,
    pub level: i64,
    pub assessor: Option<String>,
    pub next_due_on: Option<String>,
    pub modes: String,
}

/// A work order line for the tree card.
#[derive(Debug, Clone, PartialEq)]
pub struct WorkLine {
    pub id: i64,
    pub task: String,
    pub priority: i64,
    pub status: String,
    pub due_on: Option<String>,
    pub done_on: Option<String>,
    pub crew: Option<String>,
    pub estimated_cost: Option<f64>,
}

/// Everything the tree card shows.
#[derive(Debug, Clone, PartialEq)]
pub struct TreeDetail {
    pub summary: TreeSummary,
    pub species_id: i64,
    pub lon: Option<f64>,
    pub lat: Option<f64>,
    pub site_kind: Option<SiteKind>,
    pub planted_on: Option<String>,
    pub removed_on: Option<String>,
    pub notes: Option<String>,
    pub measurements: Vec<MeasurementRow>,
    pub assessments: Vec<AssessmentLine>,
    pub work: Vec<WorkLine>,
}

const SUMMARY_SELECT: &str =
    "SELECT t.id, t.uid, s.scientific_name, s.common_name, t.street, t.house_number, t.status,
        m.dbh_cm, m.height_m, m.dieback_pct, m.condition, m.measured_on, z.name
 FROM trees t JOIN species s ON s.id = t.species_id
 LEFT JOIN zones z ON z.id = t.zone_id
 LEFT JOIN measurements m ON m.id =
     (SELECT id FROM measurements WHERE tree_id = t.id ORDER BY measured_on DESC, id DESC LIMIT 1)";

/// The columns of one roster entry (append `WHERE …` / `ORDER BY …`); read by [`read_entry`].
const ENTRY_SELECT: &str = "SELECT t.id, t.species_id, t.street, t.house_number, z.name, t.status, m.dbh_cm,
        m.dieback_pct, m.condition,
        (SELECT rating FROM assessments a WHERE a.tree_id = t.id
         ORDER BY a.assessed_on DESC, a.id DESC LIMIT 1),
        EXISTS (SELECT 1 FROM work_orders w WHERE w.tree_id = t.id AND w.status IN ('open', 'scheduled'))
 FROM trees t
 LEFT JOIN zones z ON z.id = t.zone_id
 LEFT JOIN measurements m ON m.id =
     (SELECT id FROM measurements WHERE tree_id = t.id ORDER BY measured_on DESC, id DESC LIMIT 1)";

/// Positions of names in an index's sorted name lists.
struct EntryNames<'a> {
    species: HashMap<i64, u32>,
    streets: HashMap<&'a str, u32>,
    zones: HashMap<&'a str, u32>,
}

impl<'a> EntryNames<'a> {
    fn new(species: &[(i64, String, String)], streets: &'a [String], zones: &'a [String]) -> Self {
        let positions = |names: &'a [String]| -> HashMap<&'a str, u32> {
            names
                .iter()
                .enumerate()
                .map(|(i, name)| (name.as_str(), i as u32))
                .collect()
        };
        EntryNames {
            species: species
                .iter()
                .enumerate()
                .map(|(i, s)| (s.0, i as u32))
                .collect(),
            streets: positions(streets),
            zones: positions(zones),
        }
    }
}

/// One roster entry from an [`ENTRY_SELECT`] row, and whether every name it points to was listed.
fn read_entry(
    row: &rusqlite::Row<'_>,
    names: &EntryNames<'_>,
) -> rusqlite::Result<(RosterEntry, bool)> {
    let species_id: i64 = row.get(1)?;
    let street: Option<String> = row.get(2)?;
    let house: Option<String> = row.get(3)?;
    let zone: Option<String> = row.get(4)?;
    let status: String = row.get(5)?;
    let dbh: Option<f64> = row.get(6)?;
    let dieback: Option<f64> = row.get(7)?;
    let condition: Option<String> = row.get(8)?;
    let rating: Option<String> = row.get(9)?;
    let dieback = dieback.or_else(|| {
        condition
            .as_deref()
            .and_then(ConditionWord::parse)
            .map(ConditionWord::dieback_pct)
    });
    let mut all_named = true;
    let mut position = |name: Option<u32>, wanted: bool| match name {
        Some(p) => p,
        None => {
            all_named &= !wanted;
            NONE
        }
    };
    let street = street.filter(|s| !s.is_empty());
    let entry = RosterEntry {
        id: row.get(0)?,
        species: position(names.species.get(&species_id).copied(), true),
        street: position(
            street
                .as_deref()
                .and_then(|s| names.streets.get(s).copied()),
            street.is_some(),
        ),
        house_number: house.as_deref().map(leading_number).unwrap_or(NONE),
        zone: position(
            zone.as_deref().and_then(|z| names.zones.get(z).copied()),
            zone.is_some(),
        ),
        status: TreeStatus::parse(&status).unwrap_or(TreeStatus::Standing),
        dbh_cm: dbh.map(|d| d as f32).unwrap_or(f32::NAN),
        dieback_pct: dieback.map(|d| d as f32).unwrap_or(f32::NAN),
        risk: match rating.as_deref() {
            Some("low") => 1,
            Some("moderate") => 2,
            Some("high") => 3,
            Some("extreme") => 4,
            _ => 0,
        },
        open_work: row.get(10)?,
    };
    Ok((entry, all_named))
}

impl Store {
    /// The compact index of every tree, in id order.
    pub fn roster_index(&self) -> Result<RosterIndexData, StoreError> {
        let species: Vec<(i64, String, String)> = {
            let mut stmt = self.conn.prepare(
                "SELECT id, scientific_name, common_name FROM species ORDER BY scientific_name",
            )?;
            stmt.query_map([], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?)))?
                .collect::<Result<_, _>>()?
        };
        let streets: Vec<String> = {
            let mut stmt = self.conn.prepare(
                "SELECT DISTINCT street FROM trees WHERE street IS NOT NULL AND street <> '' ORDER BY street",
            )?;
            stmt.query_map([], |r| r.get(0))?
                .collect::<Result<_, _>>()?
        };
        let zones: Vec<String> = {
            let mut stmt = self.conn.prepare("SELECT name FROM zones ORDER BY name")?;
            stmt.query_map([], |r| r.get(0))?
                .collect::<Result<_, _>>()?
        };
        let names = EntryNames::new(&species, &streets, &zones);
        let mut stmt = self
            .conn
            .prepare(&format!("{ENTRY_SELECT} ORDER BY t.id"))?;
        let mut rows = stmt.query([])?;
        let mut entries = Vec::new();
        while let Some(row) = rows.next()? {
            entries.push(read_entry(row, &names)?.0);
        }
        drop(names);
        Ok(RosterIndexData {
            species,
            streets,
            zones,
            entries,
        })
    }

    /// Brings the entries of these trees (new or changed) up to date in a loaded index, without
    /// reading the other trees: after an edit on a million-tree inventory the roster stays instant.
    /// Returns false, leaving the index usable but stale, when a tree now names a species, street or
    /// zone the index does not list (its name lists would shift); reload the whole index then.
    pub fn roster_update(
        &self,
        index: &mut RosterIndexData,
        ids: &[i64],
    ) -> Result<bool, StoreError> {
        let names = EntryNames::new(&index.species, &index.streets, &index.zones);
        let mut fresh = Vec::with_capacity(ids.len());
        let mut stmt = self
            .conn
            .prepare_cached(&format!("{ENTRY_SELECT} WHERE t.id = ?1"))?;
        for id in ids {
            let mut rows = stmt.query([id])?;
            if let Some(row) = rows.next()? {
                let (entry, all_named) = read_entry(row, &names)?;
                if !all_named {
                    return Ok(false);
                }
                fresh.push(entry);
            }
        }
        drop(names);
        for entry in fresh {
            match index.entries.binary_search_by_key(&entry.id, |e| e.id) {
                Ok(position) => index.entries[position] = entry,
                Err(position) => index.entries.insert(position, entry),
            }
        }
        Ok(true)
    }

    /// The roster rows of these trees, in the order given.
    pub fn roster_rows(&self, ids: &[i64]) -> Result<Vec<TreeSummary>, StoreError> {
        if ids.is_empty() {
            return Ok(Vec::new());
        }
        let placeholders = vec!["?"; ids.len()].join(",");
        let sql = format!("{SUMMARY_SELECT} WHERE t.id IN ({placeholders})");
        let mut stmt = self.conn.prepare_cached(&sql)?;
        let mut found = stmt
            .query_map(params_from_iter(ids.iter()), super::trees::summary_from_row)?
            .collect::<Result<Vec<_>, _>>()?;
        let position = |id: i64| ids.iter().position(|x| *x == id).unwrap_or(usize::MAX);
        found.sort_by_key(|s| position(s.id));
        Ok(found)
    }

    /// Trees whose uid starts with `prefix` (at most `limit`), using the uid index.
    pub fn tree_ids_by_uid_prefix(
        &self,
        prefix: &str,
        limit: usize,
    ) -> Result<Vec<i64>, StoreError> {
        let mut stmt = self.conn.prepare_cached(
            "SELECT id FROM trees WHERE uid >= ?1 AND uid < ?1 || char(1114111) ORDER BY uid LIMIT ?2",
        )?;
        let ids = stmt
            .query_map(
                rusqlite::params![prefix.to_lowercase(), limit as i64],
                |r| r.get(0),
            )?
            .collect::<Result<Vec<i64>, _>>()?;
        Ok(ids)
    }

    /// One tree's card.
    pub fn tree_detail(&self, tree_id: i64) -> Result<Option<TreeDetail>, StoreError> {
        let summary = self
            .conn
            .query_row(
                &format!("{SUMMARY_SELECT} WHERE t.id = ?1"),
                [tree_id],
                super::trees::summary_from_row,
            )
            .optional()?;
        let Some(summary) = summary else {
            return Ok(None);
        };
        let (species_id, lon, lat, site, planted_on, removed_on, notes) = self.conn.query_row(
            "SELECT species_id, lon, lat, site_kind, planted_on, removed_on, notes FROM trees WHERE id = ?1",
            [tree_id],
            |r| {
                Ok((
                    r.get::<_, i64>(0)?,
                    r.get::<_, Option<f64>>(1)?,
                    r.get::<_, Option<f64>>(2)?,
                    r.get::<_, Option<String>>(3)?,
                    r.get::<_, Option<String>>(4)?,
                    r.get::<_, Option<String>>(5)?,
                    r.get::<_, Option<String>>(6)?,
                ))
            },
        )?;
        let measurements = {
            let mut stmt = self.conn.prepare(
                "SELECT id, measured_on, dbh_cm, stems_cm, height_m, crown_width_m, crown_width2_m, crown_base_m,
                        dieback_pct, condition, measured_by
                 FROM measurements WHERE tree_id = ?1 ORDER BY measured_on, id",
            )?;
            stmt.query_map([tree_id], |r| {
                let date: String = r.get(1)?;
                let condition: Option<String> = r.get(9)?;
                Ok(MeasurementRow {
                    id: r.get(0)?,
                    measured_on: date.parse().unwrap_or_default(),
                    dbh_cm: r.get(2)?,
                    stems_cm: r.get(3)?,
                    height_m: r.get(4)?,
                    crown_width_m: r.get(5)?,
                    crown_width2_m: r.get(6)?,
                    crown_base_m: r.get(7)?,
                    dieback_pct: r.get(8)?,
                    condition: condition.as_deref().and_then(ConditionWord::parse),
                    measured_by: r.get(10)?,
                })
            })?
            .collect::<Result<Vec<_>, _>>()?
        };
        let assessments = {
            let mut stmt = self.conn.prepare(
                "SELECT a.assessed_on, a.rating, a.level, a.assessor, a.next_due_on,
                        (SELECT group_concat(f.part || ' ' || f.likelihood_of_failure || '/' || f.likelihood_of_impact
                                             || '/' || f.consequences || ' → ' || f.rating, '; ')
                         FROM failure_modes f WHERE f.assessment_id = a.id)
                 FROM assessments a WHERE a.tree_id = ?1 ORDER BY a.assessed_on DESC, a.id DESC",
            )?;
            stmt.query_map([tree_id], |r| {
                Ok(AssessmentLine {
                    assessed_on: r.get(0)?,
                    rating: r.get(1)?,
                    level: r.get(2)?,
                    assessor: r.get(3)?,
                    next_due_on: r.get(4)?,
                    modes: r.get::<_, Option<String>>(5)?.unwrap_or_default(),
                })
            })?
            .collect::<Result<Vec<_>, _>>()?
        };
        let work = {
            let mut stmt = self.conn.prepare(
                "SELECT id, task, priority, status, due_on, done_on, crew, estimated_cost
                 FROM work_orders WHERE tree_id = ?1 ORDER BY (status IN ('open', 'scheduled')) DESC, due_on, id",
            )?;
            stmt.query_map([tree_id], |r| {
                Ok(WorkLine {
                    id: r.get(0)?,
                    task: r.get(1)?,
                    priority: r.get(2)?,
                    status: r.get(3)?,
                    due_on: r.get(4)?,
                    done_on: r.get(5)?,
                    crew: r.get(6)?,
                    estimated_cost: r.get(7)?,
                })
            })?
            .collect::<Result<Vec<_>, _>>()?
        };
        Ok(Some(TreeDetail {
            summary,
            species_id,
            lon,
            lat,
            site_kind: site.as_deref().and_then(|s| SiteKind::parse(s).ok()),
            planted_on,
            removed_on,
            notes,
            measurements,
            assessments,
            work,
        }))
    }
}

/// The leading digits of a house number (`"12a"` → 12), for sorting.
fn leading_number(text: &str) -> u32 {
    let digits: String = text
        .trim()
        .chars()
        .take_while(char::is_ascii_digit)
        .collect();
    digits.parse().unwrap_or(NONE)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn demo() -> Store {
        let mut store = Store::open_in_memory().expect("store");
        crate::cli::demo::load_demo(&mut store).expect("demo");
        store
    }

    /// Entries as comparable text (DBH and dieback may be NaN).
    fn entries_text(index: &RosterIndexData) -> Vec<String> {
        index.entries.iter().map(|e| format!("{e:?}")).collect()
    }

    // The patched index must equal a full reload: the reference is `roster_index` itself.
    #[test]
    fn an_update_of_a_few_trees_equals_a_full_reload() {
        let store = demo();
        let mut index = store.roster_index().expect("index");
        let street = index.streets[1].clone();
        store
            .conn
            .execute_batch(&format!(
                "UPDATE trees SET street = '{street}', house_number = '7b' WHERE id = 3;
                 UPDATE trees SET status = 'removed' WHERE id = 5;
                 INSERT INTO measurements (tree_id, measured_on, dbh_cm, dieback_pct, created_at)
                     VALUES (8, '2026-11-30', 61.5, 40, '2026-11-30T10:00:00Z');
                 INSERT INTO trees (uid, species_id, street, status, created_at, updated_at)
                     SELECT 'new-one', species_id, street, 'standing', created_at, updated_at
                     FROM trees WHERE id = 2;"
            ))
            .expect("edits");
        let new_id = store.conn.last_insert_rowid();
        let updated = store
            .roster_update(&mut index, &[3, 5, 8, new_id])
            .expect("update");
        assert!(updated);
        let full = store.roster_index().expect("index");
        assert_eq!(entries_text(&index), entries_text(&full));
        assert_eq!(index.streets, full.streets);
    }

    #[test]
    fn a_new_street_name_asks_for_a_full_reload() {
        let store = demo();
        let mut index = store.roster_index().expect("index");
        store
            .conn
            .execute("UPDATE trees SET street = 'Aardvark Row' WHERE id = 4", [])
            .expect("edit");
        assert!(!store.roster_update(&mut index, &[4]).expect("update"));
        assert!(store.roster_index().expect("index").streets[0] == "Aardvark Row");
    }
}
