//! `init`, `backup` and `species`.

use std::path::Path;

use clap::ValueEnum;

use super::{CliError, open_store, same_file};
use crate::store::Store;

/// `streetwood settings …`.
#[derive(Debug, clap::Subcommand)]
pub enum SettingsCommand {
    /// List every setting with its value.
    List,
    /// Change one setting (checked before it is stored).
    Set {
        /// The key, e.g. `co2_price_points` or `default_station`.
        key: String,
        /// The new value.
        value: String,
    },
}

/// Output format of list commands.
#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum ListFormat {
    Table,
    Csv,
    Json,
}

/// `streetwood init FILE`: a new, empty inventory (refuses an existing file).
pub fn init(file: &Path) -> Result<(), CliError> {
    if file.exists() {
        return Err(CliError::Input(format!(
            "{} already exists; choose a new file name",
            file.display()
        )));
    }
    let store = Store::open_or_create(file)?;
    eprintln!(
        "created {} (schema version {}, {} species)",
        file.display(),
        store.schema_version()?,
        store.species()?.len()
    );
    Ok(())
}

/// `streetwood backup FILE`.
pub fn backup(inventory: &Path, target: &Path, force: bool) -> Result<(), CliError> {
    if same_file(inventory, target) {
        return Err(CliError::Input(format!(
            "{} is the inventory itself; choose another backup file",
            target.display()
        )));
    }
    if target.exists() && !force {
        return Err(CliError::Input(format!(
            "{} already exists; pass --force to replace it",
            target.display()
        )));
    }
    let store = open_store(inventory)?;
    // Written beside the target, integrity-checked and renamed into place: never half a backup.
    store.backup_file(target)?;
    let copy = crate::store::backup::inspect_backup(target)?;
    eprintln!(
        "backed up {} to {} ({} trees, integrity ok)",
        inventory.display(),
        target.display(),
        copy.trees
    );
    Ok(())
}

/// `streetwood species`.
pub fn species(inventory: &Path, format: ListFormat) -> Result<(), CliError> {
    let store = open_store(inventory)?;
    let list = store.species()?;
    super::with_output(None, inventory, |out| {
        match format {
            ListFormat::Json => {
                serde_json::to_writer_pretty(&mut *out, &list).map_err(anyhow::Error::from)?;
                writeln!(out)?;
            }
            ListFormat::Csv => {
                let mut writer = csv::Writer::from_writer(&mut *out);
                writer
                    .write_record([
                        "scientific_name",
                        "common_name",
                        "family",
                        "leaf_habit",
                        "sg_green",
                        "growth_cm_per_yr",
                        "lai",
                    ])
                    .map_err(anyhow::Error::from)?;
                for s in &list {
                    writer
                        .write_record([
                            s.scientific_name.clone(),
                            s.common_name.clone(),
                            s.family.clone(),
                            s.leaf_habit.to_string(),
                            s.sg_green.to_string(),
                            s.growth_cm_per_yr.to_string(),
                            s.lai.to_string(),
                        ])
                        .map_err(anyhow::Error::from)?;
                }
                writer.flush()?;
            }
            ListFormat::Table => {
                writeln!(
                    out,
                    "{:<28} {:<28} {:<16} {:>5} {:>6}",
                    "botanical name", "common name", "family", "SG", "cm/yr"
                )?;
                for s in &list {
                    writeln!(
                        out,
                        "{:<28} {:<28} {:<16} {:>5.2} {:>6.3}",
                        s.scientific_name, s.common_name, s.family, s.sg_green, s.growth_cm_per_yr
                    )?;
                }
            }
        }
        Ok(())
    })
}

/// `streetwood settings list|set`.
pub fn settings(inventory: &Path, command: &SettingsCommand) -> Result<(), CliError> {
    let mut store = open_store(inventory)?;
    match command {
        SettingsCommand::List => {
            let pairs = store.settings()?;
            super::with_output(None, inventory, |out| {
                for (key, value) in &pairs {
                    writeln!(out, "{key} = {value}")?;
                }
                Ok(())
            })
        }
        SettingsCommand::Set { key, value } => {
            crate::settings::validate(key, value).map_err(CliError::Input)?;
            store.set_setting(key, value, "settings")?;
            eprintln!("{key} = {value}");
            Ok(())
        }
    }
}
