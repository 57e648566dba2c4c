//! Rainfall interception by a crown: the revised Gash analytical model per rain day (METHODS.md M5).
//!
//! Gash, Lloyd & Lachaud 1995, J. Hydrology 170:79–86, applied per unit crown projection with one rain
//! day = one storm [published method; equations from memory, thresholds corroborated by public code].
//! Trunk storage is ignored: stemflow reaches the ground.

use serde::{Deserialize, Serialize};

use super::kinds::LeafHabit;
use super::settings::ScienceSettings;
use super::weather::RainDay;

/// Beer–Lambert extinction coefficient k = 0.5 (Monsi & Saeki 1953) [published method; k = 0.5
/// common practice].
pub const EXTINCTION_K: f64 = 0.5;

/// Canopy cover within the crown projection, c = 1 − exp(−k·LAI) (Monsi & Saeki 1953) [published
/// method].
pub fn canopy_cover(lai: f64) -> f64 {
    1.0 - (-EXTINCTION_K * lai.max(0.0)).exp()
}

/// The parameters of the revised Gash model for one crown state (per unit crown projection).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct GashCanopy {
    /// Canopy cover c (0–1).
    pub cover: f64,
    /// Canopy storage S (mm over the crown projection).
    pub storage_mm: f64,
    /// Ēc/R̄, wet-canopy evaporation over rainfall rate per unit cover.
    pub ec_over_r: f64,
}

impl GashCanopy {
    /// Leaf-on crown: c = 1 − e^(−0.5·LAI), S = s_leaf × LAI (s_leaf 0.2 mm, Dickinson 1984, as used in
    /// land-surface models) \[published\].
    pub fn leaf_on(lai: f64, settings: &ScienceSettings) -> Self {
        GashCanopy {
            cover: canopy_cover(lai),
            storage_mm: settings.s_leaf_mm * lai.max(0.0),
            ec_over_r: settings.ec_over_r,
        }
    }

    /// Leafless deciduous crown: storage × 0.12 and cover × 0.3 of the leaf-on crown (leafless crowns
    /// hold 6–17 % of leaf-on, Xiao & McPherson 2016 [published range; midpoint derived]; settings).
    pub fn leaf_off(lai: f64, settings: &ScienceSettings) -> Self {
        let on = Self::leaf_on(lai, settings);
        GashCanopy {
            cover: on.cover * settings.leaf_off_cover_share,
            storage_mm: on.storage_mm * settings.leaf_off_storage_share,
            ec_over_r: on.ec_over_r,
        }
    }

    /// Rain needed to saturate the canopy, P′g = −(R̄/Ēc) · Sc · ln(1 − Ēc/R̄), Sc = S / c
    /// (Gash et al. 1995) [published method]. As Ēc/R̄ → 0 this tends to Sc. No cover → 0.
    pub fn saturating_rain_mm(&self) -> f64 {
        if self.cover <= 0.0 {
            return 0.0;
        }
        let sc = self.storage_mm / self.cover;
        let x = self.ec_over_r;
        if x <= 0.0 { sc } else { -sc * (-x).ln_1p() / x }
    }

    /// Storm loss (mm over the crown projection) for gross rain Pg (Gash et al. 1995):
    /// Pg < P′g → I = c·Pg; Pg ≥ P′g → I = c·P′g + c·(Ēc/R̄)·(Pg − P′g).
    pub fn storm_loss_mm(&self, gross_rain_mm: f64) -> f64 {
        storm_loss(
            self.cover,
            self.ec_over_r,
            self.saturating_rain_mm(),
            gross_rain_mm,
        )
    }
}

fn storm_loss(cover: f64, ec_over_r: f64, p_sat: f64, pg: f64) -> f64 {
    if pg <= 0.0 || cover <= 0.0 {
        0.0
    } else if pg < p_sat {
        cover * pg
    } else {
        cover * p_sat + cover * ec_over_r * (pg - p_sat)
    }
}

/// A year's interception (mm over the crown projection) of a crown with effective leaf area index
/// `lai`: Σ over rain days of the Gash storm loss, with the leaf-on crown on leaf-on days (evergreens:
/// every day) and the leafless crown otherwise (METHODS.md M13 step 8). The straightforward day-by-day
/// sum: the reference that [`YearRain::annual_interception_mm`] (what the engine uses, one binary
/// search per tree) is tested against.
pub fn annual_interception_mm(
    rain_days: &[RainDay],
    lai: f64,
    habit: LeafHabit,
    settings: &ScienceSettings,
) -> f64 {
    if lai <= 0.0 {
        return 0.0;
    }
    let on = GashCanopy::leaf_on(lai, settings);
    let off = GashCanopy::leaf_off(lai, settings);
    let (on_sat, off_sat) = (on.saturating_rain_mm(), off.saturating_rain_mm());
    let evergreen = habit == LeafHabit::Evergreen;
    rain_days
        .iter()
        .map(|day| {
            if evergreen || day.leaf_on {
                storm_loss(on.cover, on.ec_over_r, on_sat, day.precip_mm)
            } else {
                storm_loss(off.cover, off.ec_over_r, off_sat, day.precip_mm)
            }
        })
        .sum()
}

/// A set of rain days sorted once, so that the year's Gash sum of any crown costs one binary search
/// (METHODS.md M5, M13 step 8).
///
/// For one crown state the storm loss is I = c · g(Pg) with (Gash, Lloyd & Lachaud 1995, J. Hydrology
/// 170:79–86) [published method; equations from memory]
///
///   g(Pg) = Pg                       when Pg < P′g,
///   g(Pg) = P′g + x · (Pg − P′g)     when Pg ≥ P′g,        x = Ēc/R̄,
///
/// and I = 0 when Pg ≤ 0. Over a set of days D with Pg > 0, split at P′g (strictly below / at or above,
/// as the model does):
///
///   Σ_D I = c · [ Σ_{Pg<P′g} Pg + (1 − x) · P′g · #{Pg ≥ P′g} + x · Σ_{Pg≥P′g} Pg ]   [derived]
///
/// (the second line of g is (1 − x)·P′g + x·Pg, summed term by term). With the days' rain sorted
/// ascending, #{Pg < P′g} is one binary search, and the two partial sums are a prefix sum and a suffix
/// sum held in the table. The rearrangement is exact in real arithmetic; in floating point it differs
/// from the day-by-day sum only by rounding (both are sums of at most 366 non-negative terms, relative
/// error a few 1e-14), so [`annual_interception_mm`] remains the reference it is tested against.
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct RainTable {
    /// The days' gross rain (mm), positive and finite, ascending.
    sorted_mm: Vec<f64>,
    /// `below_mm[i]` = Σ of the `i` smallest days (`below_mm[0]` = 0), summed smallest first.
    below_mm: Vec<f64>,
    /// `above_mm[i]` = Σ of the days from index `i` up (`above_mm[n]` = 0), summed smallest first.
    above_mm: Vec<f64>,
}

impl RainTable {
    /// The table of the given days' gross rain. Days without positive, finite rain are left out: a
    /// storm of Pg ≤ 0 loses nothing (the model's I = 0), and the prepared weather holds no other
    /// (`YearWeather` keeps only finite values).
    pub fn new(rain_mm: impl IntoIterator<Item = f64>) -> Self {
        let mut sorted_mm: Vec<f64> = rain_mm
            .into_iter()
            .filter(|p| p.is_finite() && *p > 0.0)
            .collect();
        sorted_mm.sort_by(f64::total_cmp);
        let n = sorted_mm.len();
        let mut below_mm = Vec::with_capacity(n + 1);
        let mut sum = 0.0;
        below_mm.push(sum);
        for p in &sorted_mm {
            sum += p;
            below_mm.push(sum);
        }
        // Suffix sums are accumulated on their own (not as total − prefix), so neither partial sum
        // suffers cancellation: both are sums of non-negative terms.
        let mut above_mm = vec![0.0; n + 1];
        let mut sum = 0.0;
        for i in (0..n).rev() {
            sum += sorted_mm[i];
            above_mm[i] = sum;
        }
        RainTable {
            sorted_mm,
            below_mm,
            above_mm,
        }
    }

    /// Number of days with rain in the table.
    pub fn days(&self) -> usize {
        self.sorted_mm.len()
    }

    /// Σ gross rain of the days, mm.
    pub fn total_mm(&self) -> f64 {
        self.below_mm.last().copied().unwrap_or(0.0)
    }

    /// Σ over the days of the Gash storm loss of `canopy` (mm over the crown projection), by the
    /// closed form above [derived]: exactly [`GashCanopy::storm_loss_mm`] summed over the days, up to
    /// rounding.
    pub fn gash_sum_mm(&self, canopy: &GashCanopy) -> f64 {
        if canopy.cover <= 0.0 {
            return 0.0;
        }
        let p_sat = canopy.saturating_rain_mm();
        let x = canopy.ec_over_r;
        // Days strictly below P′g: the model's `Pg < P′g` branch.
        let k = self.sorted_mm.partition_point(|p| *p < p_sat);
        let below = self.below_mm.get(k).copied().unwrap_or(0.0);
        let saturated = self.sorted_mm.len() - k;
        let g = if saturated == 0 {
            below
        } else {
            let above = self.above_mm.get(k).copied().unwrap_or(0.0);
            below + (1.0 - x) * p_sat * saturated as f64 + x * above
        };
        canopy.cover * g
    }
}

/// A year's rain days as the interception model reads them: one [`RainTable`] of the leaf-on days, one
/// of the leaf-off days and one of all days (evergreens: every day with the leaf-on crown), built once
/// per year with the prepared weather (METHODS.md M13 step 7).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
pub struct YearRain {
    pub leaf_on: RainTable,
    pub leaf_off: RainTable,
    pub all: RainTable,
}

impl YearRain {
    /// The tables of a year's rain days.
    pub fn new(rain_days: &[RainDay]) -> Self {
        let rain = |on: Option<bool>| {
            RainTable::new(
                rain_days
                    .iter()
                    .filter(move |d| on.is_none_or(|on| d.leaf_on == on))
                    .map(|d| d.precip_mm),
            )
        };
        YearRain {
            leaf_on: rain(Some(true)),
            leaf_off: rain(Some(false)),
            all: rain(None),
        }
    }

    /// A year's interception (mm over the crown projection) of a crown with effective leaf area
    /// index `lai`: the same quantity as [`annual_interception_mm`] over the days the tables were built
    /// from (METHODS.md M13 step 8), in O(log days) per tree instead of O(days) [derived; see
    /// [`RainTable`]]. Evergreens: all days with the leaf-on crown; deciduous: leaf-on days with the
    /// leaf-on crown plus leaf-off days with the leafless crown.
    pub fn annual_interception_mm(
        &self,
        lai: f64,
        habit: LeafHabit,
        settings: &ScienceSettings,
    ) -> f64 {
        if lai <= 0.0 {
            return 0.0;
        }
        let on = GashCanopy::leaf_on(lai, settings);
        match habit {
            LeafHabit::Evergreen => self.all.gash_sum_mm(&on),
            LeafHabit::Deciduous => {
                let off = GashCanopy::leaf_off(lai, settings);
                self.leaf_on.gash_sum_mm(&on) + self.leaf_off.gash_sum_mm(&off)
            }
        }
    }
}

/// Volume (m³) of a depth (mm) over an area (m²): 1 mm over 1 m² = 1 L \[definition\].
pub fn depth_to_m3(depth_mm: f64, area_m2: f64) -> f64 {
    depth_mm * area_m2 / 1000.0
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn canopy() -> GashCanopy {
        GashCanopy::leaf_on(4.0, &ScienceSettings::default())
    }

    // Algebra checks of the revised Gash model (METHODS.md M5): I ≤ Pg; I → c·Pg as Pg → 0;
    // dI/dPg = c·Ēc/R̄ past saturation; continuous at P′g.
    #[test]
    fn gash_algebra() {
        let g = canopy();
        let p_sat = g.saturating_rain_mm();
        assert!(p_sat > 0.0);
        for i in 1..=400 {
            let pg = f64::from(i) * 0.25;
            let loss = g.storm_loss_mm(pg);
            assert!(loss <= pg && loss >= 0.0, "Pg {pg}: I {loss}");
        }
        assert_relative_eq!(g.storm_loss_mm(1e-6) / 1e-6, g.cover, max_relative = 1e-9);
        let (a, b) = (p_sat + 5.0, p_sat + 15.0);
        let slope = (g.storm_loss_mm(b) - g.storm_loss_mm(a)) / (b - a);
        assert_relative_eq!(slope, g.cover * g.ec_over_r, max_relative = 1e-9);
        let eps = 1e-9;
        assert_relative_eq!(
            g.storm_loss_mm(p_sat - eps),
            g.storm_loss_mm(p_sat + eps),
            max_relative = 1e-6
        );
        // As Ēc/R̄ → 0 the saturating rain tends to Sc = S/c.
        let tiny = GashCanopy {
            ec_over_r: 1e-9,
            ..g
        };
        assert_relative_eq!(
            tiny.saturating_rain_mm(),
            g.storage_mm / g.cover,
            max_relative = 1e-6
        );
    }

    // Check values: c = 1 − e^(−2) = 0.8647 at LAI 4 (Beer–Lambert); S = 0.2 × 4 = 0.8 mm (Dickinson
    // 1984); leafless 0.3 c and 0.12 S (METHODS.md M5).
    #[test]
    fn canopy_parameters() {
        let s = ScienceSettings::default();
        let on = GashCanopy::leaf_on(4.0, &s);
        assert_relative_eq!(on.cover, 0.864_664_716_763_387_3, max_relative = 1e-12);
        assert_relative_eq!(on.storage_mm, 0.8, max_relative = 1e-12);
        let off = GashCanopy::leaf_off(4.0, &s);
        assert_relative_eq!(off.cover, 0.3 * on.cover, max_relative = 1e-12);
        assert_relative_eq!(off.storage_mm, 0.096, max_relative = 1e-12);
        assert_eq!(
            annual_interception_mm(
                &[RainDay {
                    precip_mm: 5.0,
                    leaf_on: true
                }],
                0.0,
                LeafHabit::Evergreen,
                &s
            ),
            0.0
        );
        assert_relative_eq!(depth_to_m3(10.0, 50.0), 0.5);
    }

    /// A Davis, California-like rain year (Mediterranean, ≈ 470 mm; monthly normals from memory),
    /// storms per month with exponentially distributed depths (deterministic quantiles), frosts
    /// ending 10 Feb and resuming 28 Nov.
    fn davis_like_year() -> Vec<RainDay> {
        // (month, mm, rain days)
        let months = [
            (1, 97.0, 11),
            (2, 90.0, 10),
            (3, 70.0, 9),
            (4, 30.0, 5),
            (5, 15.0, 2),
            (6, 5.0, 1),
            (10, 25.0, 3),
            (11, 55.0, 7),
            (12, 80.0, 10),
        ];
        let mut days = Vec::new();
        for (month, total, n) in months {
            let mean = total / f64::from(n);
            for i in 0..n {
                let q = (f64::from(i) + 0.5) / f64::from(n);
                let depth = -mean * (1.0 - q).ln();
                // Day of month i*2+1: leaf-off in January, to 10 Feb, and from 28 Nov.
                let dom = i * 2 + 1;
                let leaf_on = !(month == 1
                    || (month == 2 && dom <= 10)
                    || (month == 12)
                    || (month == 11 && dom >= 28));
                days.push(RainDay {
                    precip_mm: depth,
                    leaf_on,
                });
            }
        }
        days
    }

    // Outside check: measured annual interception by isolated urban trees — Davis CA Bradford pear
    // ≈ 15 %, cork oak ≈ 27 % of gross rain (Xiao et al. 2000, Hydrol. Processes 14:763–784); Oakland
    // lemon 27.0 %, ginkgo 25.2 %, sweet gum 14.3 % (Xiao & McPherson, Urban Ecosystems) [published].
    // The model's annual fraction for comparable crowns and rain must lie in 10–35 % (METHODS.md M5).
    #[test]
    fn annual_fraction_is_within_measured_urban_range() {
        let s = ScienceSettings::default();
        let year = davis_like_year();
        let gross: f64 = year.iter().map(|d| d.precip_mm).sum();
        let evergreen = annual_interception_mm(&year, 4.0, LeafHabit::Evergreen, &s) / gross;
        let deciduous = annual_interception_mm(&year, 4.0, LeafHabit::Deciduous, &s) / gross;
        assert!(
            (0.10..=0.35).contains(&evergreen),
            "evergreen (cork oak-like) {evergreen}"
        );
        assert!(
            (0.10..=0.35).contains(&deciduous),
            "deciduous (pear-like) {deciduous}"
        );
        // As measured, the leafless-in-winter crown intercepts less than the evergreen one.
        assert!(deciduous < evergreen);
    }

    // The closed form of `RainTable` [derived] against the day-by-day sum on the Davis-like year, and
    // at the boundary: a day exactly at P′g takes the model's saturated branch (Pg ≥ P′g), days of
    // Pg ≤ 0 lose nothing, an empty year loses nothing.
    #[test]
    fn rain_table_matches_the_day_by_day_sum() {
        let s = ScienceSettings::default();
        let year = davis_like_year();
        let tables = YearRain::new(&year);
        for habit in [LeafHabit::Evergreen, LeafHabit::Deciduous] {
            for lai in [0.0, 0.3, 1.0, 4.0, 7.5] {
                let reference = annual_interception_mm(&year, lai, habit, &s);
                let table = tables.annual_interception_mm(lai, habit, &s);
                assert_relative_eq!(table, reference, max_relative = 1e-12);
            }
        }
        let g = canopy();
        let p_sat = g.saturating_rain_mm();
        let rain = [p_sat, p_sat, 0.0, -3.0, p_sat * 0.5, p_sat * 2.0];
        let t = RainTable::new(rain);
        assert_eq!(t.days(), 4);
        let by_day: f64 = rain.iter().map(|p| g.storm_loss_mm(*p)).sum();
        // c·(P′g/2) + 2·c·P′g + c·(P′g + x·P′g)
        let hand = g.cover * (0.5 * p_sat + 3.0 * p_sat + g.ec_over_r * p_sat);
        assert_relative_eq!(t.gash_sum_mm(&g), by_day, max_relative = 1e-12);
        assert_relative_eq!(t.gash_sum_mm(&g), hand, max_relative = 1e-12);
        assert_eq!(RainTable::new([]).gash_sum_mm(&g), 0.0);
        assert_eq!(
            YearRain::new(&[]).annual_interception_mm(4.0, LeafHabit::Deciduous, &s),
            0.0
        );
    }
}
