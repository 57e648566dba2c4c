//! What the benefit engine reads: standing trees with every measurement up to a year.

use rusqlite::params;

use super::{Store, StoreError};
use crate::model::{SiteKind, Species, TreeStatus};
use crate::science::condition::ConditionWord;
use crate::science::inventory::InventoryTree;
use crate::science::tree_year::Measurement;

impl Store {
    /// The species list and every standing tree with its measurements dated on or before 31 December
    /// of `year`, in tree id order. `species_index` of each tree points into the returned list.
    pub fn inventory_for_year(
        &self,
        year: i32,
    ) -> Result<(Vec<Species>, Vec<InventoryTree>), StoreError> {
        let species = self.species()?;
        let index_of = |species_id: i64| species.iter().position(|s| s.id == species_id);
        let mut trees: Vec<InventoryTree> = Vec::new();
        let mut tree_stmt = self.conn.prepare(
            "SELECT t.id, t.uid, t.species_id, t.site_kind, t.street, z.name
             FROM trees t LEFT JOIN zones z ON z.id = t.zone_id
             WHERE t.status = 'standing' ORDER BY t.id",
        )?;
        let mut rows = tree_stmt.query([])?;
        while let Some(row) = rows.next()? {
            let species_id: i64 = row.get(2)?;
            let site: Option<String> = row.get(3)?;
            trees.push(InventoryTree {
                tree_id: row.get(0)?,
                uid: row.get(1)?,
                species_index: index_of(species_id).ok_or_else(|| {
                    StoreError::Invalid(format!("tree with unknown species id {species_id}"))
                })?,
                site_kind: site.and_then(|s| SiteKind::parse(&s).ok()),
                status: TreeStatus::Standing,
                street: row.get(4)?,
                zone: row.get(5)?,
                measurements: Vec::new(),
            });
        }
        let mut measurement_stmt = self.conn.prepare(
            "SELECT m.tree_id, m.measured_on, m.stems_cm, m.dbh_cm, m.height_m, m.crown_width_m, m.crown_width2_m,
                    m.crown_base_m, m.dieback_pct, m.condition
             FROM measurements m JOIN trees t ON t.id = m.tree_id
             WHERE t.status = 'standing' AND m.measured_on <= ?1
             ORDER BY m.tree_id, m.measured_on, m.id",
        )?;
        let mut rows = measurement_stmt.query(params![format!("{year:04}-12-31")])?;
        let mut cursor = 0usize;
        while let Some(row) = rows.next()? {
            let tree_id: i64 = row.get(0)?;
            while cursor < trees.len() && trees[cursor].tree_id < tree_id {
                cursor += 1;
            }
            let Some(tree) = trees.get_mut(cursor).filter(|t| t.tree_id == tree_id) else {
                continue;
            };
            let date_text: String = row.get(1)?;
            let measured_on = date_text.parse().map_err(|_| {
                StoreError::Invalid(format!("stored date '{date_text}' is not a date"))
            })?;
            let stems: Option<String> = row.get(2)?;
            let stems_cm = match stems {
                Some(text) => crate::io::parse_stems(&text).map_err(|reason| {
                    StoreError::Invalid(format!("stored stems '{text}': {reason}"))
                })?,
                None => vec![row.get::<_, f64>(3)?],
            };
            let condition: Option<String> = row.get(9)?;
            tree.measurements.push(Measurement {
                measured_on,
                stems_cm,
                height_m: row.get(4)?,
                crown_width_m: row.get(5)?,
                crown_width2_m: row.get(6)?,
                crown_base_m: row.get(7)?,
                dieback_pct: row.get(8)?,
                condition: condition.as_deref().and_then(ConditionWord::parse),
            });
        }
        Ok((species, trees))
    }

    /// A tree's id from an id number or a uid (or a unique uid prefix of at least 6 characters).
    pub fn find_tree(&self, reference: &str) -> Result<Option<i64>, StoreError> {
        let reference = reference.trim();
        if let Ok(id) = reference.parse::<i64>()
            && let Some(found) = self
                .conn
                .query_row("SELECT id FROM trees WHERE id = ?1", [id], |r| r.get(0))
                .ok()
        {
            return Ok(Some(found));
        }
        if let Some(id) = self.tree_id_by_uid(reference)? {
            return Ok(Some(id));
        }
        if reference.len() >= 6 {
            let mut stmt = self
                .conn
                .prepare("SELECT id FROM trees WHERE uid LIKE ?1 || '%' ESCAPE '\\' LIMIT 2")?;
            let escaped = reference
                .replace('\\', "\\\\")
                .replace('%', "\\%")
                .replace('_', "\\_");
            let ids = stmt
                .query_map([escaped], |r| r.get::<_, i64>(0))?
                .collect::<Result<Vec<_>, _>>()?;
            if ids.len() == 1 {
                return Ok(ids.first().copied());
            }
        }
        Ok(None)
    }
}
