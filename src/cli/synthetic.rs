//! `streetwood gen`: a seeded synthetic inventory for benchmarks and scale tests — streets on a grid of
//! blocks, the built-in species in a street-tree mix, DBH/height/crown distributions of a maturing street
//! population, re-measurements for a share of trees and multi-stem trees — written as a trees CSV, with
//! a year of weather (the demo's invented year) beside it. Invented data, never a real place.

use std::path::Path;

use rand::rngs::Xoshiro256PlusPlus;
use rand::{RngExt, SeedableRng};

use super::{CliError, csv_error, with_output};
use crate::io::trees_csv::{TreesCsvWriter, export_header};
use crate::model::{SiteKind, TreeRecord, TreeStatus};

/// Street-tree mix of the generator: botanical name and relative weight (an invented mix in the spirit
/// of the demo town's; no species above about 10 %).
const MIX: [(&str, f64); 31] = [
    ("Tilia cordata", 10.0),
    ("Gleditsia triacanthos", 9.7),
    ("Acer platanoides", 8.4),
    ("Acer rubrum", 8.0),
    ("Platanus x hispanica", 7.8),
    ("Pyrus calleryana", 5.3),
    ("Quercus rubra", 4.8),
    ("Quercus palustris", 4.3),
    ("Acer saccharum", 3.7),
    ("Celtis occidentalis", 3.5),
    ("Ginkgo biloba", 3.2),
    ("Acer saccharinum", 3.1),
    ("Fraxinus pennsylvanica", 3.0),
    ("Tilia tomentosa", 2.8),
    ("Zelkova serrata", 2.8),
    ("Prunus serrulata", 2.7),
    ("Tilia americana", 2.7),
    ("Platanus occidentalis", 2.2),
    ("Ulmus americana", 1.9),
    ("Liquidambar styraciflua", 1.8),
    ("Fraxinus americana", 1.3),
    ("Quercus alba", 1.3),
    ("Robinia pseudoacacia", 1.2),
    ("Prunus serotina", 1.0),
    ("Ulmus pumila", 1.0),
    ("Quercus virginiana", 0.3),
    ("Pinus strobus", 0.8),
    ("Pinus nigra", 0.5),
    ("Picea pungens", 0.4),
    ("Picea abies", 0.4),
    ("Pseudotsuga menziesii", 0.3),
];

/// The demo's invented year of daily weather, written beside generated inventories.
pub const WEATHER_CSV: &str = include_str!("../../demo-inventory/weather.csv");

/// Options of `streetwood gen`.
#[derive(Debug, Clone)]
pub struct GenOptions {
    pub trees: usize,
    pub seed: u64,
}

fn normal(rng: &mut Xoshiro256PlusPlus) -> f64 {
    // Box–Muller transform (Box & Muller 1958).
    let u1: f64 = rng.random_range(f64::EPSILON..1.0);
    let u2: f64 = rng.random();
    (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
}

fn uid(rng: &mut Xoshiro256PlusPlus) -> String {
    let bytes: [u8; 16] = rng.random();
    uuid::Builder::from_random_bytes(bytes)
        .into_uuid()
        .to_string()
}

fn round1(x: f64) -> f64 {
    (x * 10.0).round() / 10.0
}

/// Generates the trees, calling `emit` for each row (earlier measurements of a tree come first).
pub fn generate(
    options: &GenOptions,
    mut emit: impl FnMut(&TreeRecord) -> Result<(), CliError>,
) -> Result<usize, CliError> {
    let mut rng = Xoshiro256PlusPlus::seed_from_u64(options.seed);
    let total_weight: f64 = MIX.iter().map(|(_, w)| w).sum();
    // Blocks of 120 m with a tree every ~10 m on both sides: ~24 trees per block side pair.
    let per_street = 400usize;
    let origin = (-84.1_f64, 42.7_f64);
    let metres_per_degree_lat = 111_320.0; // mean length of a degree of latitude (from memory)
    let metres_per_degree_lon = metres_per_degree_lat * origin.1.to_radians().cos();
    let mut rows = 0;
    for i in 0..options.trees {
        let street_index = i / per_street;
        let along = (i % per_street) as f64;
        let east_west = street_index.is_multiple_of(2);
        let street = if east_west {
            format!("{} Street", street_index / 2 + 1)
        } else {
            format!("{} Avenue", street_index / 2 + 1)
        };
        let side = (i % 2) as f64;
        let offset_along = along / 2.0 * 10.0 + rng.random_range(-1.5..1.5);
        let offset_across =
            (street_index / 2) as f64 * 120.0 + if side == 0.0 { -6.0 } else { 6.0 };
        let (east_m, north_m) = if east_west {
            (offset_along, offset_across)
        } else {
            (offset_across, offset_along)
        };
        let lon = origin.0 + east_m / metres_per_degree_lon;
        let lat = origin.1 + north_m / metres_per_degree_lat;
        let mut pick = rng.random_range(0.0..total_weight);
        let species = MIX
            .iter()
            .find(|(_, w)| {
                pick -= w;
                pick < 0.0
            })
            .map_or(MIX[0].0, |(name, _)| *name);
        let class: f64 = rng.random();
        let dbh = if class < 0.35 {
            (2.3 + 0.5 * normal(&mut rng)).exp()
        } else if class < 0.8 {
            30.0 + 10.0 * normal(&mut rng)
        } else {
            65.0 + 15.0 * normal(&mut rng)
        }
        .clamp(2.5, 150.0);
        let height = (1.37 + 22.0 * (1.0 - (-0.035 * dbh).exp())) * (1.0 + 0.1 * normal(&mut rng));
        let crown = (0.9 + 0.2 * dbh.powf(0.95)) * (1.0 + 0.12 * normal(&mut rng));
        let dieback = if rng.random_bool(0.9) {
            rng.random_range(0..4) * 5
        } else {
            rng.random_range(4..20) * 5
        };
        let multi = rng.random_bool(0.05);
        let stems = if multi {
            let share: f64 = rng.random_range(0.3..0.7);
            vec![
                round1(dbh * share.sqrt()),
                round1(dbh * (1.0 - share).sqrt()),
            ]
        } else {
            vec![round1(dbh)]
        };
        let day = rng.random_range(0..540);
        let measured_on = chrono::NaiveDate::from_ymd_opt(2024, 3, 1).unwrap_or_default()
            + chrono::Days::new(day);
        let record = TreeRecord {
            uid: Some(uid(&mut rng)),
            species: species.to_string(),
            lon: Some((lon * 1e6).round() / 1e6),
            lat: Some((lat * 1e6).round() / 1e6),
            street: Some(street),
            house_number: Some(format!("{}", (along as u32 / 2) * 2 + 1 + side as u32)),
            site_kind: Some(if rng.random_bool(0.8) {
                SiteKind::Verge
            } else {
                SiteKind::Pit
            }),
            planted_on: None,
            status: Some(TreeStatus::Standing),
            measured_on,
            multi_stem: multi,
            stems_cm: stems,
            height_m: Some(round1(height.clamp(2.0, 40.0))),
            crown_base_m: Some(round1(rng.random_range(1.5..4.0_f64).min(height * 0.5))),
            crown_width_m: Some(round1(crown.clamp(1.0, 30.0))),
            crown_width2_m: Some(round1(
                (crown * (1.0 + 0.1 * normal(&mut rng))).clamp(1.0, 30.0),
            )),
            dieback_pct: Some(f64::from(dieback)),
            condition: None,
            notes: None,
            measured_by: None,
        };
        if rng.random_bool(0.25) {
            let years: u32 = rng.random_range(3..8);
            let shrink = 0.6 * f64::from(years);
            let earlier = TreeRecord {
                measured_on: record.measured_on - chrono::Days::new(u64::from(years) * 365),
                stems_cm: record
                    .stems_cm
                    .iter()
                    .map(|d| round1((d - shrink).max(1.0)))
                    .collect(),
                ..record.clone()
            };
            emit(&earlier)?;
            rows += 1;
        }
        emit(&record)?;
        rows += 1;
    }
    Ok(rows)
}

/// `streetwood gen --trees N --seed S --out FILE.csv [--weather-out FILE.csv]`.
pub fn run(
    options: &GenOptions,
    out: Option<&Path>,
    weather_out: Option<&Path>,
) -> Result<(), CliError> {
    let here = Path::new(".");
    let mut rows = 0;
    with_output(out, here, |sink| {
        let mut writer = TreesCsvWriter::new(sink).map_err(csv_error)?;
        rows = generate(options, |record| {
            let uid = record.uid.clone().unwrap_or_default();
            writer.write(&uid, record).map_err(csv_error)
        })?;
        writer.finish()?;
        Ok(())
    })?;
    if let Some(path) = weather_out {
        with_output(Some(path), here, |sink| {
            sink.write_all(WEATHER_CSV.as_bytes())?;
            Ok(())
        })?;
    }
    eprintln!(
        "generated {} trees ({rows} rows, columns {}) with seed {}: invented data for tests and benchmarks",
        options.trees,
        export_header().len(),
        options.seed
    );
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rows(trees: usize, seed: u64) -> Vec<TreeRecord> {
        let mut out = Vec::new();
        let options = GenOptions { trees, seed };
        let result = generate(&options, |r| {
            out.push(r.clone());
            Ok(())
        });
        assert!(result.is_ok());
        out
    }

    #[test]
    fn the_generator_is_deterministic_by_seed_and_valid() {
        let a = rows(500, 7);
        assert_eq!(a, rows(500, 7));
        assert_ne!(a, rows(500, 8));
        let trees = a
            .iter()
            .map(|r| r.uid.clone())
            .collect::<std::collections::HashSet<_>>()
            .len();
        assert_eq!(trees, 500);
        assert!(
            a.len() > 550 && a.len() < 700,
            "about a quarter re-measured: {}",
            a.len()
        );
        assert!(a.iter().all(|r| r.dbh_cm() > 0.0 && r.dbh_cm() <= 1000.0));
        assert!(a.iter().any(|r| r.multi_stem));
        let names: Vec<&str> = MIX.iter().map(|(n, _)| *n).collect();
        let builtin = crate::store::Store::open_in_memory()
            .and_then(|s| s.species())
            .unwrap_or_default();
        for name in names {
            assert!(
                builtin.iter().any(|s| s.scientific_name == name),
                "{name} is a built-in species"
            );
        }
    }
}
