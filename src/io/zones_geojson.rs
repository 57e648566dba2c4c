//! Zone polygons from GeoJSON (RFC 7946): `Polygon` or `MultiPolygon` features with a `name` property.

use geo::MultiPolygon;
use geojson::{GeoJson, GeometryValue};

use super::{FileError, RowError};

/// One zone read from a file.
#[derive(Debug, Clone)]
pub struct ZoneShape {
    pub name: String,
    pub shape: MultiPolygon<f64>,
    /// The feature's geometry as GeoJSON text, kept as given for storage.
    pub geometry_json: String,
}

/// Why a (Multi)Polygon's positions cannot be used: fewer than two numbers, or a number that is not
/// finite. `None` when all are usable (and for other geometry types, refused elsewhere).
fn bad_position(value: &GeometryValue) -> Option<String> {
    let positions: Vec<&geojson::Position> = match value {
        GeometryValue::Polygon { coordinates } => coordinates.iter().flatten().collect(),
        GeometryValue::MultiPolygon { coordinates } => {
            coordinates.iter().flatten().flatten().collect()
        }
        _ => return None,
    };
    positions.into_iter().find_map(|p| {
        let numbers = p.as_slice();
        if numbers.len() < 2 {
            Some(format!(
                "a position has {} number(s); [lon, lat] needs two",
                numbers.len()
            ))
        } else if numbers.iter().any(|n| !n.is_finite()) {
            Some("a position has a number that is not finite".to_string())
        } else {
            None
        }
    })
}

/// Reads zones; features that are not (Multi)Polygons or have no name are row errors, numbered by
/// feature (1-based) in `line`.
pub fn read_zones(text: &str) -> Result<(Vec<ZoneShape>, Vec<RowError>), FileError> {
    let geojson: GeoJson = text.parse().map_err(|e| FileError {
        line: 0,
        reason: format!("not valid GeoJSON: {e}"),
    })?;
    let GeoJson::FeatureCollection(collection) = geojson else {
        return Err(FileError {
            line: 0,
            reason: "expected a GeoJSON FeatureCollection".to_string(),
        });
    };
    let mut zones = Vec::new();
    let mut errors = Vec::new();
    for (index, feature) in collection.features.into_iter().enumerate() {
        let number = index as u64 + 1;
        let fail = |field: &str, reason: String| RowError {
            line: number,
            field: field.to_string(),
            reason,
        };
        let name = feature
            .properties
            .as_ref()
            .and_then(|p| p.get("name"))
            .and_then(|v| v.as_str())
            .map(str::trim)
            .filter(|n| !n.is_empty());
        let Some(name) = name else {
            errors.push(fail("name", "feature has no 'name' property".to_string()));
            continue;
        };
        let Some(geometry) = feature.geometry else {
            errors.push(fail("geometry", format!("zone '{name}' has no geometry")));
            continue;
        };
        // The geometry conversion indexes [0] and [1] of every position: a position with fewer
        // than two numbers would panic there (found by tests/fuzz_inputs.rs), so it is an error here.
        if let Some(reason) = bad_position(&geometry.value) {
            errors.push(fail("geometry", format!("zone '{name}': {reason}")));
            continue;
        }
        let shape = match &geometry.value {
            GeometryValue::Polygon { .. } => {
                geo::Polygon::try_from(&geometry.value).map(|p| MultiPolygon::new(vec![p]))
            }
            GeometryValue::MultiPolygon { .. } => MultiPolygon::try_from(&geometry.value),
            other => {
                errors.push(fail(
                    "geometry",
                    format!(
                        "zone '{name}' is a {}, not a Polygon or MultiPolygon",
                        other.type_name()
                    ),
                ));
                continue;
            }
        };
        match shape {
            Ok(shape) => zones.push(ZoneShape {
                name: name.to_string(),
                shape,
                geometry_json: serde_json::to_string(&geometry).unwrap_or_default(),
            }),
            Err(e) => errors.push(fail("geometry", format!("zone '{name}': {e}"))),
        }
    }
    Ok((zones, errors))
}
