//! Tree dimensions (METHODS.md M1) and the imputation of missing height and crown width (M3).

use std::borrow::Cow;
use std::collections::HashMap;
use std::f64::consts::PI;

/// Equivalent DBH of a multi-stem tree, d_eq = √(Σ dᵢ²), in cm [common practice] (METHODS.md M1).
pub use super::units::equivalent_dbh_cm;

/// Mean crown width W (m): the mean of the two perpendicular spreads, or the one given
/// [common practice] (METHODS.md M1). Non-positive or non-finite spreads count as missing.
pub fn mean_crown_width_m(spread1_m: Option<f64>, spread2_m: Option<f64>) -> Option<f64> {
    let ok = |w: Option<f64>| w.filter(|w| w.is_finite() && *w > 0.0);
    match (ok(spread1_m), ok(spread2_m)) {
        (Some(a), Some(b)) => Some((a + b) / 2.0),
        (Some(a), None) | (None, Some(a)) => Some(a),
        (None, None) => None,
    }
}

/// Crown projection area CPA = π W² / 4 (m²), the area of a circle of diameter W
/// (Lindsey & Bassuk 1991, J. Arboric. 17(6):141–149, write CPA = 0.785 D²) \[published\].
pub fn crown_projection_area_m2(crown_width_m: f64) -> f64 {
    PI * crown_width_m * crown_width_m / 4.0
}

/// Crown height Hc = tree height − crown base height (m); a missing crown base gives
/// Hc = 0.5 × height [common practice] (METHODS.md M1). Never negative.
pub fn crown_height_m(height_m: f64, crown_base_m: Option<f64>) -> f64 {
    match crown_base_m.filter(|b| b.is_finite() && *b >= 0.0) {
        Some(base) => (height_m - base).max(0.0),
        None => 0.5 * height_m,
    }
}

/// Where a dimension came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum DimensionSource {
    /// Measured on the tree itself.
    Measured,
    /// Median ratio to DBH among measured trees of the same species.
    SpeciesRatio,
    /// Median ratio to DBH among measured trees of the same genus.
    GenusRatio,
    /// Median ratio to DBH among all measured trees of the inventory.
    InventoryRatio,
}

impl DimensionSource {
    /// True for every source except a measurement.
    pub fn is_estimated(self) -> bool {
        self != DimensionSource::Measured
    }

    /// Short human description for the tree card.
    pub fn describe(self) -> &'static str {
        match self {
            Self::Measured => "measured",
            Self::SpeciesRatio => "estimated from the species' median ratio to DBH",
            Self::GenusRatio => "estimated from the genus' median ratio to DBH",
            Self::InventoryRatio => "estimated from the inventory's median ratio to DBH",
        }
    }
}

/// A dimension value with its origin.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Dimension {
    pub value: f64,
    pub source: DimensionSource,
}

impl Dimension {
    /// True when the value was imputed rather than measured (METHODS.md M1: flagged as estimated).
    pub fn estimated(&self) -> bool {
        self.source.is_estimated()
    }
}

/// One measured tree fed to the [`Imputer`]: its latest measurement (METHODS.md M3).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ImputerRow<'a> {
    /// Species key (the botanical name).
    pub species_key: &'a str,
    pub genus: &'a str,
    pub dbh_cm: f64,
    pub height_m: Option<f64>,
    /// Mean crown width W (m).
    pub crown_width_m: Option<f64>,
}

#[derive(Debug, Clone, Default, PartialEq)]
struct RatioMedians {
    by_species: HashMap<String, f64>,
    by_genus: HashMap<String, f64>,
    all: Option<f64>,
}

#[derive(Default)]
struct RatioSamples {
    by_species: HashMap<String, Vec<f64>>,
    by_genus: HashMap<String, Vec<f64>>,
    all: Vec<f64>,
}

impl RatioSamples {
    fn push(&mut self, species: &str, genus: &str, ratio: f64) {
        push_sample(&mut self.by_species, species, ratio);
        push_sample(&mut self.by_genus, &norm_genus(genus), ratio);
        self.all.push(ratio);
    }

    fn into_medians(self) -> RatioMedians {
        RatioMedians {
            by_species: self
                .by_species
                .into_iter()
                .filter_map(|(k, mut v)| median(&mut v).map(|m| (k, m)))
                .collect(),
            by_genus: self
                .by_genus
                .into_iter()
                .filter_map(|(k, mut v)| median(&mut v).map(|m| (k, m)))
                .collect(),
            all: median(&mut { self.all }),
        }
    }
}

impl RatioMedians {
    fn lookup(&self, species: &str, genus: &str) -> Option<(f64, DimensionSource)> {
        if let Some(r) = self.by_species.get(species) {
            return Some((*r, DimensionSource::SpeciesRatio));
        }
        if let Some(r) = self.by_genus.get(norm_genus(genus).as_ref()) {
            return Some((*r, DimensionSource::GenusRatio));
        }
        self.all.map(|r| (r, DimensionSource::InventoryRatio))
    }
}

fn push_sample(map: &mut HashMap<String, Vec<f64>>, key: &str, ratio: f64) {
    match map.get_mut(key) {
        Some(samples) => samples.push(ratio),
        None => {
            map.insert(key.to_string(), vec![ratio]);
        }
    }
}

/// Genus key: trimmed, lower case; borrowed when already normal (no allocation per tree).
fn norm_genus(genus: &str) -> Cow<'_, str> {
    let trimmed = genus.trim();
    if trimmed.bytes().any(|b| b.is_ascii_uppercase()) {
        Cow::Owned(trimmed.to_ascii_lowercase())
    } else {
        Cow::Borrowed(trimmed)
    }
}

/// Median of finite values (sorts in place); `None` for an empty slice.
pub fn median(values: &mut [f64]) -> Option<f64> {
    if values.is_empty() {
        return None;
    }
    values.sort_by(f64::total_cmp);
    let n = values.len();
    Some(if n % 2 == 1 {
        values[n / 2]
    } else {
        (values[n / 2 - 1] + values[n / 2]) / 2.0
    })
}

/// Imputation of missing height and crown width from ratios to DBH (METHODS.md M3) [common practice]:
/// the median height/DBH and crown-width/DBH ratio among measured trees of the same species, then of
/// the same genus, then of all trees. Built once from the latest measurement of each tree; pure.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Imputer {
    height_per_cm: RatioMedians,
    width_per_cm: RatioMedians,
}

impl Imputer {
    /// Builds the ratio medians. Rows without a positive DBH are ignored; a height or crown width
    /// contributes only when it is positive and finite. The caller passes one row per tree (its latest
    /// measurement), as METHODS.md M3 says.
    pub fn from_rows<'a, I>(rows: I) -> Self
    where
        I: IntoIterator<Item = ImputerRow<'a>>,
    {
        let mut heights = RatioSamples::default();
        let mut widths = RatioSamples::default();
        for row in rows {
            if !(row.dbh_cm.is_finite() && row.dbh_cm > 0.0) {
                continue;
            }
            if let Some(h) = row.height_m.filter(|h| h.is_finite() && *h > 0.0) {
                heights.push(row.species_key, row.genus, h / row.dbh_cm);
            }
            if let Some(w) = row.crown_width_m.filter(|w| w.is_finite() && *w > 0.0) {
                widths.push(row.species_key, row.genus, w / row.dbh_cm);
            }
        }
        Imputer {
            height_per_cm: heights.into_medians(),
            width_per_cm: widths.into_medians(),
        }
    }

    /// Height (m): the measured value when given, otherwise DBH × median height/DBH ratio (species,
    /// then genus, then all trees). `None` when nothing is measured and no ratio exists.
    pub fn height_m(
        &self,
        species_key: &str,
        genus: &str,
        dbh_cm: f64,
        measured_m: Option<f64>,
    ) -> Option<Dimension> {
        resolve(&self.height_per_cm, species_key, genus, dbh_cm, measured_m)
    }

    /// Mean crown width W (m): the measured value when given, otherwise DBH × median
    /// crown-width/DBH ratio. `None` means the tree gets no crown-based benefits (`no_crown`, M3).
    pub fn crown_width_m(
        &self,
        species_key: &str,
        genus: &str,
        dbh_cm: f64,
        measured_m: Option<f64>,
    ) -> Option<Dimension> {
        resolve(&self.width_per_cm, species_key, genus, dbh_cm, measured_m)
    }
}

fn resolve(
    medians: &RatioMedians,
    species: &str,
    genus: &str,
    dbh_cm: f64,
    measured: Option<f64>,
) -> Option<Dimension> {
    if let Some(value) = measured.filter(|v| v.is_finite() && *v > 0.0) {
        return Some(Dimension {
            value,
            source: DimensionSource::Measured,
        });
    }
    if !(dbh_cm.is_finite() && dbh_cm > 0.0) {
        return None;
    }
    medians
        .lookup(species, genus)
        .map(|(ratio, source)| Dimension {
            value: ratio * dbh_cm,
            source,
        })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    // Outside check: Pythagorean sum, 3-4-5 triangle; a single stem is its own DBH.
    #[test]
    fn equivalent_dbh_is_root_sum_of_squares() {
        assert_relative_eq!(equivalent_dbh_cm(&[30.0, 40.0]), 50.0, max_relative = 1e-12);
        assert_relative_eq!(equivalent_dbh_cm(&[22.0]), 22.0, max_relative = 1e-12);
        assert_relative_eq!(
            equivalent_dbh_cm(&[22.0, 18.0, 9.0]),
            (22.0f64 * 22.0 + 18.0 * 18.0 + 81.0).sqrt(),
            max_relative = 1e-12
        );
        assert_eq!(equivalent_dbh_cm(&[]), 0.0);
    }

    // Outside check: Lindsey & Bassuk 1991 write CPA = 0.785 D² (0.785 = π/4 to three places).
    #[test]
    fn crown_projection_area_matches_lindsey_bassuk() {
        let d = 20.0 * crate::science::units::M_PER_FOOT; // their 20 ft crown
        assert_relative_eq!(
            crown_projection_area_m2(d),
            0.785 * d * d,
            max_relative = 1e-3
        );
        assert_relative_eq!(crown_projection_area_m2(2.0), PI, max_relative = 1e-12);
    }

    #[test]
    fn crown_width_and_crown_height_rules() {
        assert_eq!(mean_crown_width_m(Some(6.0), Some(8.0)), Some(7.0));
        assert_eq!(mean_crown_width_m(None, Some(8.0)), Some(8.0));
        assert_eq!(mean_crown_width_m(Some(0.0), None), None);
        assert_eq!(crown_height_m(12.0, Some(3.0)), 9.0);
        assert_eq!(crown_height_m(12.0, None), 6.0);
        assert_eq!(crown_height_m(2.0, Some(3.0)), 0.0);
    }

    #[test]
    fn median_of_odd_and_even_samples() {
        assert_eq!(median(&mut [3.0, 1.0, 2.0]), Some(2.0));
        assert_eq!(median(&mut [4.0, 1.0, 3.0, 2.0]), Some(2.5));
        assert_eq!(median(&mut []), None);
    }

    fn row<'a>(
        sp: &'a str,
        genus: &'a str,
        d: f64,
        h: Option<f64>,
        w: Option<f64>,
    ) -> ImputerRow<'a> {
        ImputerRow {
            species_key: sp,
            genus,
            dbh_cm: d,
            height_m: h,
            crown_width_m: w,
        }
    }

    #[test]
    fn imputer_falls_back_species_then_genus_then_all() {
        let imputer = Imputer::from_rows([
            row("Acer rubrum", "Acer", 20.0, Some(10.0), Some(6.0)), // h/d 0.5, w/d 0.3
            row("Acer rubrum", "Acer", 40.0, Some(16.0), None),      // h/d 0.4
            row("Acer rubrum", "Acer", 10.0, Some(6.0), None),       // h/d 0.6
            row("Acer saccharum", "Acer", 50.0, None, Some(10.0)),   // w/d 0.2
            row("Tilia cordata", "Tilia", 30.0, Some(30.0), None),   // h/d 1.0
        ]);
        // Measured wins and is not estimated.
        let h = imputer.height_m("Acer rubrum", "Acer", 30.0, Some(11.0));
        assert_eq!(h.map(|d| (d.value, d.estimated())), Some((11.0, false)));
        // Species median of 0.4, 0.5, 0.6 = 0.5.
        let h = imputer
            .height_m("Acer rubrum", "Acer", 30.0, None)
            .map(|d| (d.value, d.source));
        assert_eq!(h, Some((15.0, DimensionSource::SpeciesRatio)));
        // Acer saccharum has no measured height: genus Acer median 0.5.
        let h = imputer
            .height_m("Acer saccharum", "acer", 30.0, None)
            .map(|d| d.source);
        assert_eq!(h, Some(DimensionSource::GenusRatio));
        // Unknown genus: all trees 0.4, 0.5, 0.6, 1.0 → 0.55.
        let h = imputer.height_m("Ulmus americana", "Ulmus", 20.0, None);
        assert_relative_eq!(h.map_or(0.0, |d| d.value), 11.0, max_relative = 1e-12);
        assert_eq!(h.map(|d| d.source), Some(DimensionSource::InventoryRatio));
        // Widths: species, genus (0.3, 0.2 → 0.25).
        let w = imputer.crown_width_m("Acer platanoides", "Acer", 40.0, None);
        assert_relative_eq!(w.map_or(0.0, |d| d.value), 10.0, max_relative = 1e-12);
    }

    #[test]
    fn imputer_with_nothing_measured_gives_no_crown() {
        let imputer = Imputer::from_rows([row("Acer rubrum", "Acer", 20.0, None, None)]);
        assert_eq!(
            imputer.crown_width_m("Acer rubrum", "Acer", 20.0, None),
            None
        );
        assert_eq!(imputer.height_m("Acer rubrum", "Acer", 20.0, None), None);
        assert!(
            imputer
                .crown_width_m("Acer rubrum", "Acer", 20.0, Some(5.0))
                .is_some()
        );
    }
}
