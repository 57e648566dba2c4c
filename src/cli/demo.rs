//! The demo inventory: an invented town (`demo-inventory/`, made by `cargo run --example make-demo`),
//! embedded in the binary and loaded through the same importers users use.

use std::path::Path;

use chrono::{DateTime, NaiveDate, TimeZone, Utc};
use serde::Deserialize;

use super::CliError;
use super::import::{load_zones, with_zones};
use crate::io::species_lookup::SpeciesLookup;
use crate::io::trees_csv::{ValidationContext, read_trees_csv};
use crate::io::{care_csv, weather_csv, zones_geojson};
use crate::model::StationInfo;
use crate::store::Store;

const TOWN_JSON: &str = include_str!("../../demo-inventory/town.json");
const TREES_CSV: &str = include_str!("../../demo-inventory/trees.csv");
const ZONES_GEOJSON: &str = include_str!("../../demo-inventory/zones.geojson");
const WEATHER_CSV: &str = include_str!("../../demo-inventory/weather.csv");
const ASSESSMENTS_CSV: &str = include_str!("../../demo-inventory/assessments.csv");
const WORK_ORDERS_CSV: &str = include_str!("../../demo-inventory/work_orders.csv");

/// The demo's fixed "today", so the file it builds is the same whatever the clock says.
fn demo_now() -> DateTime<Utc> {
    Utc.with_ymd_and_hms(2026, 11, 30, 12, 0, 0)
        .single()
        .unwrap_or(DateTime::<Utc>::UNIX_EPOCH)
}

#[derive(Debug, Deserialize)]
struct Town {
    name: String,
    station: TownStation,
}

#[derive(Debug, Deserialize)]
struct TownStation {
    name: String,
    lat: f64,
    lon: Option<f64>,
    elevation_m: f64,
    #[serde(default)]
    coastal: bool,
}

/// Writes the demo inventory to `out` and returns a one-line summary.
pub fn write_demo(out: &Path, force: bool) -> Result<String, CliError> {
    if out.exists() {
        if !force {
            return Err(CliError::Input(format!(
                "{} already exists; pass --force to replace it",
                out.display()
            )));
        }
        for suffix in ["", "-wal", "-shm"] {
            let mut name = out.as_os_str().to_os_string();
            name.push(suffix);
            let path = std::path::PathBuf::from(name);
            if path.exists() {
                std::fs::remove_file(&path)?;
            }
        }
    }
    let mut store = Store::open_or_create(out)?;
    let town = load_demo(&mut store)?;
    Ok(format!(
        "wrote the demo inventory of {} (an invented town) to {}: {} trees, {} measurements",
        town,
        out.display(),
        store.tree_count()?,
        store.measurement_count()?
    ))
}

/// Loads the embedded demo files into an (empty) store; returns the town's name.
pub fn load_demo(store: &mut Store) -> Result<String, CliError> {
    let internal =
        |what: &str, detail: String| CliError::Other(anyhow::anyhow!("demo {what}: {detail}"));
    let town: Town =
        serde_json::from_str(TOWN_JSON).map_err(|e| internal("town.json", e.to_string()))?;
    let now = demo_now();
    let actor = "demo";

    let (zones, zone_errors) =
        zones_geojson::read_zones(ZONES_GEOJSON).map_err(|e| internal("zones", e.reason))?;
    if let Some(error) = zone_errors.first() {
        return Err(internal("zones", error.to_string()));
    }

    let weather = weather_csv::read_weather_csv(WEATHER_CSV.as_bytes())
        .map_err(|e| internal("weather", e.reason))?;
    if let Some(bad) = weather.bad.first() {
        return Err(internal("weather", format!("{:?}", bad.errors)));
    }
    let station = StationInfo {
        name: town.station.name.clone(),
        lat: town.station.lat,
        lon: town.station.lon,
        elevation_m: town.station.elevation_m,
        coastal: town.station.coastal,
    };
    store.import_weather(&station, &weather.good, actor, false)?;
    store.set_setting("default_station", &station.name, actor)?;

    let lookup = SpeciesLookup::new(&store.species()?);
    let today: NaiveDate = now.date_naive();
    let trees = read_trees_csv(
        TREES_CSV.as_bytes(),
        ValidationContext {
            species: &lookup,
            today,
        },
    )
    .map_err(|e| internal("trees", e.reason))?;
    if let Some(bad) = trees.bad.first() {
        return Err(internal("trees", format!("{:?}", bad.errors)));
    }
    let rows = with_zones(store, trees.good)?;
    store.import_trees(&rows, actor, now, false)?;
    load_zones(store, &zones, actor)?;

    let (assessments, bad) = care_csv::read_assessments(ASSESSMENTS_CSV.as_bytes())
        .map_err(|e| internal("assessments", e.reason))?;
    if let Some(bad) = bad.first() {
        return Err(internal("assessments", format!("{:?}", bad.errors)));
    }
    store.import_assessments(&assessments, actor, now)?;
    let (orders, bad) = care_csv::read_work_orders(WORK_ORDERS_CSV.as_bytes())
        .map_err(|e| internal("work orders", e.reason))?;
    if let Some(bad) = bad.first() {
        return Err(internal("work orders", format!("{:?}", bad.errors)));
    }
    store.import_work_orders(&orders, actor, now)?;
    Ok(town.name)
}
