//! `streetwood import trees|weather|zones`.

use std::path::{Path, PathBuf};

use chrono::{DateTime, Utc};
use clap::Subcommand;

use super::{CliError, open_store};
use crate::io::species_lookup::SpeciesLookup;
use crate::io::trees_csv::{BadRow, ValidationContext, read_trees_csv, write_rejects};
use crate::io::{weather_csv, zones_geojson};
use crate::model::{StationInfo, ZoneRecord};
use crate::spatial::ZoneIndex;
use crate::store::Store;
use crate::store::trees::TreeImportRow;

#[derive(Debug, Subcommand)]
pub enum ImportCommand {
    /// Import trees from a trees CSV or a GeoJSON FeatureCollection of Points (all or nothing unless
    /// --keep-good).
    Trees {
        /// The CSV file.
        file: PathBuf,
        /// Check everything, write nothing.
        #[arg(long)]
        dry_run: bool,
        /// Write the good rows and put the bad ones (with a reason column) in --rejects.
        #[arg(long, requires = "rejects")]
        keep_good: bool,
        /// Where --keep-good writes the bad rows.
        #[arg(long, value_name = "FILE", requires = "keep_good")]
        rejects: Option<PathBuf>,
    },
    /// Import daily weather for a station (all or nothing).
    Weather {
        /// The weather CSV file.
        file: PathBuf,
        /// Station name (created if new).
        #[arg(long)]
        station: String,
        /// Station latitude, decimal degrees (north positive).
        #[arg(long, allow_hyphen_values = true)]
        lat: f64,
        /// Station longitude, decimal degrees (east positive).
        #[arg(long, allow_hyphen_values = true)]
        lon: Option<f64>,
        /// Station elevation above sea level, m.
        #[arg(long, allow_hyphen_values = true)]
        elevation: f64,
        /// The station is coastal (FAO-56 Hargreaves radiation coefficient 0.19 instead of 0.16).
        #[arg(long)]
        coastal: bool,
        /// Check everything, write nothing.
        #[arg(long)]
        dry_run: bool,
    },
    /// Import zone polygons (GeoJSON features with a `name`) and assign trees to them.
    Zones {
        /// The GeoJSON file.
        file: PathBuf,
    },
}

/// Runs an import subcommand.
pub fn run(inventory: &Path, command: &ImportCommand, now: DateTime<Utc>) -> Result<(), CliError> {
    match command {
        ImportCommand::Trees {
            file,
            dry_run,
            keep_good,
            rejects,
        } => import_trees(
            inventory,
            file,
            *dry_run,
            keep_good.then_some(()).and(rejects.as_deref()),
            now,
        ),
        ImportCommand::Weather {
            file,
            station,
            lat,
            lon,
            elevation,
            coastal,
            dry_run,
        } => {
            let station = StationInfo {
                name: station.clone(),
                lat: *lat,
                lon: *lon,
                elevation_m: *elevation,
                coastal: *coastal,
            };
            import_weather(inventory, file, &station, *dry_run)
        }
        ImportCommand::Zones { file } => import_zones(inventory, file),
    }
}

fn read_file(file: &Path) -> Result<Vec<u8>, CliError> {
    std::fs::read(file).map_err(|e| CliError::Input(format!("cannot read {}: {e}", file.display())))
}

/// Prints every bad row as `FILE:LINE: field: reason`.
fn report_bad_rows(file: &Path, bad: &[BadRow]) {
    for row in bad {
        for error in &row.errors {
            eprintln!("{}:{error}", file.display());
        }
    }
}

/// Imports a trees CSV row by row in one transaction: every bad row is reported; without
/// `--keep-good` one bad row rolls everything back (good rows after it are only checked, not written).
fn import_csv_stream(
    store: &mut Store,
    file: &Path,
    input: impl std::io::Read,
    ctx: ValidationContext<'_>,
    dry_run: bool,
    rejects: Option<&Path>,
    now: DateTime<Utc>,
) -> Result<(), CliError> {
    let rows = crate::io::trees_csv::TreeCsvRows::new(input, ctx)
        .map_err(|e| CliError::Input(format!("{}:{}: {}", file.display(), e.line, e.reason)))?;
    let headers = rows.headers().to_vec();
    let zones = zone_index(store)?;
    let keep_good = rejects.is_some();
    let bad: std::cell::RefCell<Vec<BadRow>> = std::cell::RefCell::new(Vec::new());
    let total = std::cell::Cell::new(0usize);
    let mut good = rows.filter_map(|(line, row)| {
        total.set(total.get() + 1);
        match row {
            Err(row) => {
                bad.borrow_mut().push(row);
                None
            }
            // Once a row is bad an all-or-nothing import will roll back: check the rest, write nothing.
            Ok(_) if !keep_good && !bad.borrow().is_empty() => None,
            Ok(record) => {
                let zone_id = match (record.lon, record.lat) {
                    (Some(lon), Some(lat)) => zones.zone_of(lon, lat),
                    _ => None,
                };
                Some(TreeImportRow {
                    line,
                    record,
                    zone_id,
                })
            }
        }
    });
    let keep = || keep_good || bad.borrow().is_empty();
    let result = store.import_tree_stream(&mut good, &keep, "import", now, dry_run);
    drop(good);
    let bad = bad.into_inner();
    report_bad_rows(file, &bad);
    let outcome = match result {
        Err(crate::store::StoreError::Invalid(_)) if !bad.is_empty() && !keep_good => {
            return Err(CliError::Input(format!(
                "nothing was written: {} of {} rows have errors; fix them, or import the good rows with --keep-good --rejects FILE",
                bad.len(),
                total.get()
            )));
        }
        Err(error) => return Err(prefix_file(file, error)),
        Ok(outcome) => outcome,
    };
    if let (Some(path), false, false) = (rejects, bad.is_empty(), dry_run) {
        let out = std::fs::File::create(path)
            .map_err(|e| CliError::Input(format!("cannot write {}: {e}", path.display())))?;
        write_rejects(out, &headers, &bad).map_err(anyhow::Error::from)?;
    }
    report_outcome(file, &outcome, dry_run, rejects, bad.len());
    Ok(())
}

/// "1 tree", "2 trees".
fn counted(n: usize, noun: &str) -> String {
    format!("{n} {noun}{}", if n == 1 { "" } else { "s" })
}

fn report_outcome(
    file: &Path,
    outcome: &crate::store::trees::ImportOutcome,
    dry_run: bool,
    rejects: Option<&Path>,
    rejected: usize,
) {
    let verb = if dry_run { "would import" } else { "imported" };
    eprintln!(
        "{verb} {}: {} added, {} updated, {} added, {} unchanged{}",
        file.display(),
        counted(outcome.trees_added, "tree"),
        counted(outcome.trees_updated, "tree"),
        counted(outcome.measurements_added, "measurement"),
        outcome.measurements_unchanged,
        if dry_run {
            " (dry run: nothing written)"
        } else {
            ""
        }
    );
    if let (Some(path), true) = (rejects, rejected > 0) {
        eprintln!(
            "{rejected} rows rejected{}",
            if dry_run {
                String::new()
            } else {
                format!(", written with their reasons to {}", path.display())
            }
        );
    }
}

fn import_trees(
    inventory: &Path,
    file: &Path,
    dry_run: bool,
    rejects: Option<&Path>,
    now: DateTime<Utc>,
) -> Result<(), CliError> {
    let mut store = open_store(inventory)?;
    let lookup = SpeciesLookup::new(&store.species()?);
    let ctx = ValidationContext {
        species: &lookup,
        today: now.date_naive(),
    };
    let opened = std::fs::File::open(file)
        .map_err(|e| CliError::Input(format!("cannot read {}: {e}", file.display())))?;
    let mut reader = std::io::BufReader::new(opened);
    let first = std::io::BufRead::fill_buf(&mut reader)
        .map_err(|e| CliError::Input(format!("cannot read {}: {e}", file.display())))?;
    if !is_geojson(file, first) {
        return import_csv_stream(&mut store, file, reader, ctx, dry_run, rejects, now);
    }
    let mut bytes = Vec::new();
    std::io::Read::read_to_end(&mut reader, &mut bytes)
        .map_err(|e| CliError::Input(format!("cannot read {}: {e}", file.display())))?;
    let geojson = true;
    let parsed = if geojson {
        let text = std::str::from_utf8(&bytes)
            .map_err(|_| CliError::Input(format!("{} is not UTF-8 text", file.display())))?;
        let parsed = crate::io::trees_geojson::read_trees_geojson(text, ctx)
            .map_err(|e| CliError::Input(format!("{}: {}", file.display(), e.reason)))?;
        if !parsed.ignored_properties.is_empty() {
            eprintln!(
                "note: properties the trees format does not have were set aside: {}",
                parsed.ignored_properties.join(", ")
            );
        }
        parsed.trees
    } else {
        read_trees_csv(bytes.as_slice(), ctx)
            .map_err(|e| CliError::Input(format!("{}:{}: {}", file.display(), e.line, e.reason)))?
    };
    let total = parsed.good.len() + parsed.bad.len();
    if !parsed.bad.is_empty() {
        if geojson {
            for row in &parsed.bad {
                for error in &row.errors {
                    eprintln!(
                        "{}: feature {}: {}: {}",
                        file.display(),
                        error.line,
                        error.field,
                        error.reason
                    );
                }
            }
        } else {
            report_bad_rows(file, &parsed.bad);
        }
        match rejects {
            None => {
                return Err(CliError::Input(format!(
                    "nothing was written: {} of {total} rows have errors; fix them, or import the good rows with --keep-good --rejects FILE",
                    parsed.bad.len()
                )));
            }
            Some(rejects_path) if !dry_run => {
                let mut out = std::fs::File::create(rejects_path).map_err(|e| {
                    CliError::Input(format!("cannot write {}: {e}", rejects_path.display()))
                })?;
                if geojson {
                    crate::io::trees_geojson::write_rejects(&mut out, &parsed.bad)?;
                } else {
                    write_rejects(out, &parsed.headers, &parsed.bad)
                        .map_err(anyhow::Error::from)?;
                }
            }
            Some(_) => {}
        }
    }
    let rows = with_zones(&store, parsed.good)?;
    let outcome = store
        .import_trees(&rows, "import", now, dry_run)
        .map_err(|e| prefix_file(file, e))?;
    report_outcome(file, &outcome, dry_run, rejects, parsed.bad.len());
    Ok(())
}

/// A `.geojson`/`.json` file, or any file whose first non-blank character is `{`, is read as GeoJSON.
fn is_geojson(file: &Path, bytes: &[u8]) -> bool {
    let extension = file
        .extension()
        .and_then(|e| e.to_str())
        .map(str::to_ascii_lowercase);
    matches!(extension.as_deref(), Some("geojson" | "json"))
        || bytes.iter().find(|b| !b.is_ascii_whitespace()) == Some(&b'{')
}

/// Adds the zone of each row from the stored zone polygons.
pub fn with_zones(
    store: &Store,
    good: Vec<(u64, crate::model::TreeRecord)>,
) -> Result<Vec<TreeImportRow>, CliError> {
    let index = zone_index(store)?;
    Ok(good
        .into_iter()
        .map(|(line, record)| {
            let zone_id = match (record.lon, record.lat) {
                (Some(lon), Some(lat)) => index.zone_of(lon, lat),
                _ => None,
            };
            TreeImportRow {
                line,
                record,
                zone_id,
            }
        })
        .collect())
}

fn zone_index(store: &Store) -> Result<ZoneIndex, CliError> {
    ZoneIndex::from_geometry_json(&store.zones()?)
        .map_err(|e| CliError::Other(anyhow::anyhow!("a stored zone is unreadable: {e}")))
}

fn prefix_file(file: &Path, error: crate::store::StoreError) -> CliError {
    match error {
        crate::store::StoreError::Row { line, message } => CliError::Input(format!(
            "{}:{line}: {message}\nnothing was written",
            file.display()
        )),
        other => other.into(),
    }
}

fn import_weather(
    inventory: &Path,
    file: &Path,
    station: &StationInfo,
    dry_run: bool,
) -> Result<(), CliError> {
    if !(-90.0..=90.0).contains(&station.lat) {
        return Err(CliError::Input(format!(
            "--lat {} is out of range (-90 to 90)",
            station.lat
        )));
    }
    if station
        .lon
        .is_some_and(|lon| !(-180.0..=180.0).contains(&lon))
    {
        return Err(CliError::Input(
            "--lon is out of range (-180 to 180)".to_string(),
        ));
    }
    let mut store = open_store(inventory)?;
    let bytes = read_file(file)?;
    let parsed = weather_csv::read_weather_csv(bytes.as_slice())
        .map_err(|e| CliError::Input(format!("{}:{}: {}", file.display(), e.line, e.reason)))?;
    if !parsed.bad.is_empty() {
        report_bad_rows(file, &parsed.bad);
        return Err(CliError::Input(format!(
            "nothing was written: {} of {} rows have errors",
            parsed.bad.len(),
            parsed.bad.len() + parsed.good.len()
        )));
    }
    let outcome = store
        .import_weather(station, &parsed.good, "import", dry_run)
        .map_err(|e| prefix_file(file, e))?;
    eprintln!(
        "{} {} days for station '{}'{}",
        if dry_run { "would import" } else { "imported" },
        outcome.days_written,
        station.name,
        if dry_run {
            " (dry run: nothing written)"
        } else {
            ""
        }
    );
    Ok(())
}

fn import_zones(inventory: &Path, file: &Path) -> Result<(), CliError> {
    let mut store = open_store(inventory)?;
    let text = String::from_utf8(read_file(file)?)
        .map_err(|_| CliError::Input(format!("{} is not UTF-8 text", file.display())))?;
    let (zones, errors) = zones_geojson::read_zones(&text)
        .map_err(|e| CliError::Input(format!("{}: {}", file.display(), e.reason)))?;
    if !errors.is_empty() {
        for error in &errors {
            eprintln!(
                "{}: feature {}: {}: {}",
                file.display(),
                error.line,
                error.field,
                error.reason
            );
        }
        return Err(CliError::Input(format!(
            "nothing was written: {} features have errors",
            errors.len()
        )));
    }
    let assigned = load_zones(&mut store, &zones, "import")?;
    eprintln!(
        "imported {} zones; {assigned} trees changed zone",
        zones.len()
    );
    Ok(())
}

/// Stores zones and reassigns every tree with coordinates to the zone containing it.
pub fn load_zones(
    store: &mut Store,
    zones: &[zones_geojson::ZoneShape],
    actor: &str,
) -> Result<usize, CliError> {
    let records: Vec<ZoneRecord> = zones
        .iter()
        .map(|z| ZoneRecord {
            name: z.name.clone(),
            geometry_json: z.geometry_json.clone(),
        })
        .collect();
    store.upsert_zones(&records, actor)?;
    let index = zone_index(store)?;
    let assignments: Vec<(i64, Option<i64>)> = store
        .tree_positions()?
        .into_iter()
        .map(|(id, lon, lat)| (id, index.zone_of(lon, lat)))
        .collect();
    Ok(store.assign_zones(&assignments, actor)?)
}
