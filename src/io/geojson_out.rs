//! GeoJSON export (RFC 7946): a `FeatureCollection` of `Point` features with `[lon, lat]` coordinates
//! (WGS 84) and the trees-CSV columns as properties. Streams one feature at a time, so a million trees
//! never sit in memory. Trees without coordinates get `"geometry": null`, which RFC 7946 §3.2 allows.

use std::io::Write;

use serde_json::{Map, Value, json};

use crate::model::TreeRecord;

/// Streams a FeatureCollection to `out`.
pub struct GeoJsonWriter<W: Write> {
    out: W,
    first: bool,
}

impl<W: Write> GeoJsonWriter<W> {
    /// Writes the collection's opening.
    pub fn new(mut out: W) -> std::io::Result<Self> {
        out.write_all(b"{\"type\":\"FeatureCollection\",\"features\":[\n")?;
        Ok(GeoJsonWriter { out, first: true })
    }

    /// Writes one tree; `extra` properties (e.g. benefit columns) follow the tree's own.
    pub fn write(
        &mut self,
        uid: &str,
        tree: &TreeRecord,
        extra: &[(&str, Value)],
    ) -> std::io::Result<()> {
        let mut properties = tree_properties(uid, tree);
        for (key, value) in extra {
            properties.insert((*key).to_string(), value.clone());
        }
        let geometry = match (tree.lon, tree.lat) {
            (Some(lon), Some(lat)) => json!({"type": "Point", "coordinates": [lon, lat]}),
            _ => Value::Null,
        };
        let feature = json!({"type": "Feature", "geometry": geometry, "properties": properties});
        if !self.first {
            self.out.write_all(b",\n")?;
        }
        self.first = false;
        serde_json::to_writer(&mut self.out, &feature)?;
        Ok(())
    }

    /// Closes the collection and returns the writer.
    pub fn finish(mut self) -> std::io::Result<W> {
        self.out.write_all(b"\n]}\n")?;
        self.out.flush()?;
        Ok(self.out)
    }
}

/// The trees-CSV columns of one tree as typed JSON properties (numbers as numbers, missing as null).
pub fn tree_properties(uid: &str, tree: &TreeRecord) -> Map<String, Value> {
    let mut p = Map::new();
    let text = |v: &Option<String>| v.clone().map(Value::String).unwrap_or(Value::Null);
    let num = |v: Option<f64>| v.map(Value::from).unwrap_or(Value::Null);
    p.insert("uid".into(), Value::String(uid.to_string()));
    p.insert("species".into(), Value::String(tree.species.clone()));
    p.insert("lon".into(), num(tree.lon));
    p.insert("lat".into(), num(tree.lat));
    p.insert("street".into(), text(&tree.street));
    p.insert("house_number".into(), text(&tree.house_number));
    p.insert(
        "site_kind".into(),
        tree.site_kind
            .map(|s| Value::from(s.as_str()))
            .unwrap_or(Value::Null),
    );
    p.insert(
        "planted_on".into(),
        tree.planted_on
            .map(|d| Value::from(d.to_string()))
            .unwrap_or(Value::Null),
    );
    p.insert(
        "status".into(),
        tree.status
            .map(|s| Value::from(s.as_str()))
            .unwrap_or(Value::Null),
    );
    p.insert(
        "measured_on".into(),
        Value::from(tree.measured_on.to_string()),
    );
    p.insert("dbh_cm".into(), Value::from(tree.dbh_cm()));
    p.insert(
        "stems_cm".into(),
        if tree.multi_stem {
            Value::from(super::format_stems(&tree.stems_cm))
        } else {
            Value::Null
        },
    );
    p.insert("height_m".into(), num(tree.height_m));
    p.insert("crown_base_m".into(), num(tree.crown_base_m));
    p.insert("crown_width_m".into(), num(tree.crown_width_m));
    p.insert("crown_width2_m".into(), num(tree.crown_width2_m));
    p.insert("dieback_pct".into(), num(tree.dieback_pct));
    p.insert(
        "condition".into(),
        tree.condition
            .map(|c| Value::from(c.as_str()))
            .unwrap_or(Value::Null),
    );
    p.insert("notes".into(), text(&tree.notes));
    p
}
