//! Trees from GeoJSON (RFC 7946): `Point` features whose properties carry the trees-CSV columns, read
//! with the same validation as the CSV. The point's `[lon, lat]` gives the position (properties `lon`
//! and `lat`, when present, must agree with it). Properties the trees format does not know (a GIS adds
//! its own, our benefit exports add theirs) are set aside and reported, not refused.

use geojson::{GeoJson, GeometryValue};
use serde_json::Value;

use super::trees_csv::{
    BadRow, Column, FieldValue, ParsedTrees, ValidationContext, validate_tree_fields,
};
use super::{FileError, RowError};

/// What reading a GeoJSON file gave: the rows (numbered by feature, 1-based) and the property names
/// that were set aside.
#[derive(Debug, Clone, Default)]
pub struct ParsedGeoJsonTrees {
    pub trees: ParsedTrees,
    pub ignored_properties: Vec<String>,
}

fn property_text(value: &Value) -> Result<Option<String>, String> {
    match value {
        Value::Null => Ok(None),
        Value::String(s) if s.trim().is_empty() => Ok(None),
        Value::String(s) => Ok(Some(s.clone())),
        Value::Number(n) => Ok(Some(n.to_string())),
        Value::Bool(_) | Value::Array(_) | Value::Object(_) => {
            Err("must be a number or a text".to_string())
        }
    }
}

/// Reads a FeatureCollection of trees.
pub fn read_trees_geojson(
    text: &str,
    ctx: ValidationContext<'_>,
) -> Result<ParsedGeoJsonTrees, FileError> {
    let geojson: GeoJson = text.parse().map_err(|e| FileError {
        line: 0,
        reason: format!("not valid GeoJSON: {e}"),
    })?;
    let GeoJson::FeatureCollection(collection) = geojson else {
        return Err(FileError {
            line: 0,
            reason: "expected a GeoJSON FeatureCollection of Point features".to_string(),
        });
    };
    let mut parsed = ParsedGeoJsonTrees::default();
    parsed.trees.headers = vec!["feature".to_string()];
    for (index, feature) in collection.features.iter().enumerate() {
        let number = index as u64 + 1;
        let raw = vec![serde_json::to_string(feature).unwrap_or_default()];
        let mut errors: Vec<RowError> = Vec::new();
        let mut fail = |field: &str, reason: String| {
            errors.push(RowError {
                line: number,
                field: field.to_string(),
                reason,
            })
        };
        let point = match feature.geometry.as_ref().map(|g| &g.value) {
            Some(GeometryValue::Point { coordinates }) if coordinates.len() >= 2 => {
                Some((coordinates[0], coordinates[1]))
            }
            Some(other) => {
                fail(
                    "geometry",
                    format!(
                        "a {} is not a tree position (a Point is)",
                        other.type_name()
                    ),
                );
                None
            }
            None => None,
        };
        // (column, property name as given, text, factor to SI)
        let mut fields: Vec<(Column, String, String, f64)> = Vec::new();
        if let Some(properties) = &feature.properties {
            for (key, value) in properties {
                let Some((column, to_si)) = Column::from_header(key) else {
                    if !parsed.ignored_properties.contains(key) {
                        parsed.ignored_properties.push(key.clone());
                    }
                    continue;
                };
                match property_text(value) {
                    Ok(Some(text)) => fields.push((column, key.clone(), text, to_si)),
                    Ok(None) => {}
                    Err(reason) => fail(key, reason),
                }
            }
        }
        if let Some((lon, lat)) = point {
            for (column, value) in [(Column::Lon, lon), (Column::Lat, lat)] {
                match fields.iter().find(|(c, _, _, _)| *c == column) {
                    Some((_, name, text, _)) => {
                        let given = text.trim().parse::<f64>().ok();
                        if given.is_none_or(|g| (g - value).abs() > 1e-9) {
                            fail(name, format!("does not match the Point geometry ({value})"));
                        }
                    }
                    None => {
                        fields.push((column, column.name().to_string(), value.to_string(), 1.0))
                    }
                }
            }
        }
        let get = |column: Column| {
            fields
                .iter()
                .find(|(c, _, _, _)| *c == column)
                .map(|(_, name, text, to_si)| FieldValue {
                    field: name.as_str(),
                    text,
                    to_si: *to_si,
                })
        };
        match validate_tree_fields(get, ctx) {
            Ok(tree) if errors.is_empty() => parsed.trees.good.push((number, tree)),
            Ok(_) => parsed.trees.bad.push(BadRow {
                line: number,
                raw,
                errors,
            }),
            Err(problems) => {
                errors.extend(problems.into_iter().map(|(field, reason)| RowError {
                    line: number,
                    field,
                    reason,
                }));
                parsed.trees.bad.push(BadRow {
                    line: number,
                    raw,
                    errors,
                });
            }
        }
    }
    Ok(parsed)
}

/// Writes rejected features as a FeatureCollection, each with a `reason` property.
pub fn write_rejects(out: &mut dyn std::io::Write, bad: &[BadRow]) -> std::io::Result<()> {
    let mut features = Vec::new();
    for row in bad {
        let mut feature: Value = row
            .raw
            .first()
            .and_then(|raw| serde_json::from_str(raw).ok())
            .unwrap_or_else(
                || serde_json::json!({"type": "Feature", "geometry": null, "properties": {}}),
            );
        let reasons: Vec<String> = row
            .errors
            .iter()
            .map(|e| format!("{}: {}", e.field, e.reason))
            .collect();
        if let Some(properties) = feature.get_mut("properties").and_then(Value::as_object_mut) {
            properties.insert("reason".to_string(), Value::from(reasons.join("; ")));
        }
        features.push(feature);
    }
    serde_json::to_writer_pretty(
        &mut *out,
        &serde_json::json!({"type": "FeatureCollection", "features": features}),
    )?;
    writeln!(out)
}
