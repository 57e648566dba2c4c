//! Pure geometry over WGS 84 coordinates: which zone a tree stands in.

use geo::{BoundingRect, Intersects, MultiPolygon, Point, Rect};

/// Zone polygons indexed for point lookups (bounding boxes first, then the exact test).
#[derive(Debug, Clone, Default)]
pub struct ZoneIndex {
    zones: Vec<(i64, MultiPolygon<f64>, Option<Rect<f64>>)>,
}

impl ZoneIndex {
    /// Builds the index from (zone id, shape) pairs; earlier zones win where zones overlap.
    pub fn new(zones: impl IntoIterator<Item = (i64, MultiPolygon<f64>)>) -> Self {
        ZoneIndex {
            zones: zones
                .into_iter()
                .map(|(id, shape)| {
                    let rect = shape.bounding_rect();
                    (id, shape, rect)
                })
                .collect(),
        }
    }

    /// Builds the index from stored zones: (id, name, GeoJSON geometry text of a Polygon or MultiPolygon).
    pub fn from_geometry_json(zones: &[(i64, String, String)]) -> Result<Self, String> {
        let mut shapes = Vec::new();
        for (id, name, json) in zones {
            let geometry: geojson::Geometry = json
                .parse::<geojson::Geometry>()
                .map_err(|e| format!("zone '{name}': {e}"))?;
            let shape = match &geometry.value {
                geojson::GeometryValue::Polygon { .. } => {
                    geo::Polygon::try_from(&geometry.value).map(|p| MultiPolygon::new(vec![p]))
                }
                _ => MultiPolygon::try_from(&geometry.value),
            }
            .map_err(|e| format!("zone '{name}': {e}"))?;
            shapes.push((*id, shape));
        }
        Ok(ZoneIndex::new(shapes))
    }

    /// The zone containing the point (a point on a boundary counts as inside).
    pub fn zone_of(&self, lon: f64, lat: f64) -> Option<i64> {
        let point = Point::new(lon, lat);
        self.zones
            .iter()
            .filter(|(_, _, rect)| rect.is_some_and(|r| r.intersects(&point)))
            .find(|(_, shape, _)| shape.intersects(&point))
            .map(|(id, _, _)| *id)
    }

    /// True when no zones are known.
    pub fn is_empty(&self) -> bool {
        self.zones.is_empty()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use geo::polygon;

    #[test]
    fn hand_placed_points_fall_in_the_right_zone() {
        let west = polygon![(x: 0.0, y: 0.0), (x: 1.0, y: 0.0), (x: 1.0, y: 1.0), (x: 0.0, y: 1.0)];
        let east = polygon![(x: 1.0, y: 0.0), (x: 2.0, y: 0.0), (x: 2.0, y: 1.0), (x: 1.0, y: 1.0)];
        let index = ZoneIndex::new([
            (1, MultiPolygon::new(vec![west])),
            (2, MultiPolygon::new(vec![east])),
        ]);
        assert_eq!(index.zone_of(0.5, 0.5), Some(1));
        assert_eq!(index.zone_of(1.5, 0.25), Some(2));
        assert_eq!(
            index.zone_of(1.0, 0.5),
            Some(1),
            "a shared edge goes to the first zone"
        );
        assert_eq!(index.zone_of(2.5, 0.5), None);
    }
}
