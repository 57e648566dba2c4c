//! Counts for the year summary: risk ratings of standing trees and open work by priority.

use super::{Store, StoreError};

impl Store {
    /// Standing trees per latest risk rating (trees never assessed are not counted), highest first.
    pub fn risk_rating_counts(&self) -> Result<Vec<(String, i64)>, StoreError> {
        let mut stmt = self.conn.prepare(
            "SELECT a.rating, count(*) FROM trees t
             JOIN assessments a ON a.id =
                 (SELECT id FROM assessments WHERE tree_id = t.id ORDER BY assessed_on DESC, id DESC LIMIT 1)
             WHERE t.status = 'standing'
             GROUP BY a.rating
             ORDER BY CASE a.rating WHEN 'extreme' THEN 0 WHEN 'high' THEN 1 WHEN 'moderate' THEN 2 ELSE 3 END",
        )?;
        let rows = stmt
            .query_map([], |r| Ok((r.get(0)?, r.get(1)?)))?
            .collect::<Result<Vec<_>, _>>()?;
        Ok(rows)
    }

    /// Open (open or scheduled) work orders per priority: (priority, count, summed estimated cost).
    pub fn open_work_by_priority(&self) -> Result<Vec<(i64, i64, f64)>, StoreError> {
        let mut stmt = self.conn.prepare(
            "SELECT priority, count(*), coalesce(sum(estimated_cost), 0.0) FROM work_orders
             WHERE status IN ('open', 'scheduled') GROUP BY priority ORDER BY priority",
        )?;
        let rows = stmt
            .query_map([], |r| Ok((r.get(0)?, r.get(1)?, r.get(2)?)))?
            .collect::<Result<Vec<_>, _>>()?;
        Ok(rows)
    }
}
