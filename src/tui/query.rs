//! The query facade: everything views read, as domain structs. The only door from `tui/` to the store.

use crate::model::TreeSummary;
use crate::store::{Store, StoreError};

/// Read-only queries for the views.
pub struct Query<'a> {
    store: &'a Store,
}

impl<'a> Query<'a> {
    /// Wraps an open store.
    pub fn new(store: &'a Store) -> Self {
        Query { store }
    }

    /// Ids of every tree in roster order (the index virtual scrolling walks over).
    pub fn roster_ids(&self) -> Result<Vec<i64>, StoreError> {
        self.store.tree_ids()
    }

    /// The roster rows from `first_id` on (ids ascending), at most `limit`.
    pub fn roster_rows_from(
        &self,
        first_id: i64,
        limit: usize,
    ) -> Result<Vec<TreeSummary>, StoreError> {
        self.store.roster_page(first_id - 1, limit)
    }

    /// A short name for the open file.
    pub fn file_label(&self) -> String {
        self.store
            .path()
            .map(|p| p.display().to_string())
            .unwrap_or_else(|| "(in memory)".to_string())
    }
}
