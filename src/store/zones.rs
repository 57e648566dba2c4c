//! Zones (named polygons) and the assignment of trees to them.

use rusqlite::params;

use super::{Store, StoreError};
use crate::model::ZoneRecord;

impl Store {
    /// Adds or replaces zones by name. Returns their ids in the same order.
    pub fn upsert_zones(
        &mut self,
        zones: &[ZoneRecord],
        actor: &str,
    ) -> Result<Vec<i64>, StoreError> {
        self.write(actor, |tx| {
            let mut ids = Vec::new();
            for zone in zones {
                tx.execute(
                    "INSERT INTO zones (name, geometry_json) VALUES (?1, ?2)
                     ON CONFLICT (name) DO UPDATE SET geometry_json = excluded.geometry_json
                     WHERE geometry_json IS NOT excluded.geometry_json",
                    params![zone.name, zone.geometry_json],
                )?;
                ids.push(tx.query_row(
                    "SELECT id FROM zones WHERE name = ?1",
                    [&zone.name],
                    |r| r.get(0),
                )?);
            }
            Ok(ids)
        })
    }

    /// Every zone as (id, name, geometry JSON).
    pub fn zones(&self) -> Result<Vec<(i64, String, String)>, StoreError> {
        let mut stmt = self
            .conn
            .prepare("SELECT id, name, geometry_json FROM zones ORDER BY name")?;
        let rows = stmt
            .query_map([], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?)))?
            .collect::<Result<Vec<_>, _>>()?;
        Ok(rows)
    }

    /// Every tree with coordinates as (id, lon, lat).
    pub fn tree_positions(&self) -> Result<Vec<(i64, f64, f64)>, StoreError> {
        let mut stmt = self.conn.prepare(
            "SELECT id, lon, lat FROM trees WHERE lon IS NOT NULL AND lat IS NOT NULL ORDER BY id",
        )?;
        let rows = stmt
            .query_map([], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?)))?
            .collect::<Result<Vec<_>, _>>()?;
        Ok(rows)
    }

    /// Sets each listed tree's zone (only rows that change are written, and audited).
    pub fn assign_zones(
        &mut self,
        assignments: &[(i64, Option<i64>)],
        actor: &str,
    ) -> Result<usize, StoreError> {
        self.write(actor, |tx| {
            let mut update = tx.prepare_cached(
                "UPDATE trees SET zone_id = ?2 WHERE id = ?1 AND zone_id IS NOT ?2",
            )?;
            let mut changed = 0;
            for (tree_id, zone_id) in assignments {
                changed += update.execute(params![tree_id, zone_id])?;
            }
            Ok(changed)
        })
    }
}
