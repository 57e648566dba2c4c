//! Reading and changing settings.

use rusqlite::{OptionalExtension, params};

use super::{Store, StoreError};

impl Store {
    /// Every setting as (key, value), sorted by key.
    pub fn settings(&self) -> Result<Vec<(String, String)>, StoreError> {
        let mut stmt = self
            .conn
            .prepare("SELECT key, value FROM settings ORDER BY key")?;
        let rows = stmt
            .query_map([], |row| Ok((row.get(0)?, row.get(1)?)))?
            .collect::<Result<Vec<_>, _>>()?;
        Ok(rows)
    }

    /// One setting's value.
    pub fn setting(&self, key: &str) -> Result<Option<String>, StoreError> {
        Ok(self
            .conn
            .query_row("SELECT value FROM settings WHERE key = ?1", [key], |row| {
                row.get(0)
            })
            .optional()?)
    }

    /// Changes a known setting (unknown keys are refused, so a typo is never stored).
    pub fn set_setting(&mut self, key: &str, value: &str, actor: &str) -> Result<(), StoreError> {
        if !crate::settings::default_pairs()
            .iter()
            .any(|(k, _)| *k == key)
        {
            return Err(StoreError::Invalid(format!("unknown setting '{key}'")));
        }
        self.write(actor, |tx| {
            tx.execute(
                "INSERT INTO settings (key, value) VALUES (?1, ?2)
                 ON CONFLICT (key) DO UPDATE SET value = excluded.value WHERE value <> excluded.value",
                params![key, value],
            )?;
            Ok(())
        })
    }
}
