//! Property tests of the pure benefit engine (`streetwood::science`), over inputs in range
//! (issue 3's remaining test requirements). Each property names what it follows from: the equation
//! forms of METHODS.md (M2, M3, M5, M6, M13) and, for the settings ranges, the validation of
//! `ScienceSettings::apply`. Every property also checks that nothing panics for its inputs.
//!
//! Case counts are kept modest (256 per property) so that `cargo test` stays fast.

use chrono::{Datelike, Duration, NaiveDate};
use proptest::prelude::*;
use proptest::sample::select;
use proptest::test_runner::FileFailurePersistence;
use streetwood::science::biomass::{Allometry, BiomassGroups, ChojnackyGroup, JenkinsGroup};
use streetwood::science::condition::ConditionWord;
use streetwood::science::dimensions::{Imputer, ImputerRow};
use streetwood::science::et0::{
    DailyMet, Et0Site, Humidity, Radiation, daily_et0, extraterrestrial_radiation,
    saturation_vapour_pressure_kpa, wind_at_2m_ms,
};
use streetwood::science::growth::sequestration_kg_c_per_yr;
use streetwood::science::interception::{GashCanopy, RainTable, YearRain, annual_interception_mm};
use streetwood::science::kinds::{LeafHabit, SiteKind, TreeStatus, WaterUse};
use streetwood::science::settings::ScienceSettings;
use streetwood::science::tree_year::{
    Measurement, Skip, SpeciesParams, TreeBenefits, TreeInput, YearContext, tree_year,
};
use streetwood::science::weather::{RainDay, Station, WeatherDay, YearWeather};

const CASES: u32 = 256;

/// 256 cases; a failing case is kept in `tests/science_properties.proptest-regressions` (beside this
/// file; commit it) and replayed first on later runs.
fn config() -> ProptestConfig {
    ProptestConfig {
        cases: CASES,
        failure_persistence: Some(Box::new(FileFailurePersistence::WithSource(
            "proptest-regressions",
        ))),
        ..ProptestConfig::default()
    }
}

fn ymd(y: i32, m: u32, d: u32) -> NaiveDate {
    NaiveDate::from_ymd_opt(y, m, d).expect("valid date")
}

/// Every published allometry of M2: the ten Jenkins 2003 groups and the 31 Chojnacky 2014 rows.
fn all_allometries() -> Vec<(&'static str, Allometry)> {
    JenkinsGroup::ALL
        .iter()
        .map(|g| (g.as_str(), g.allometry()))
        .chain(
            ChojnackyGroup::ALL
                .iter()
                .map(|g| (g.as_str(), g.allometry())),
        )
        .collect()
}

fn finite_nonneg(name: &str, v: f64) -> Result<(), TestCaseError> {
    prop_assert!(v.is_finite() && v >= 0.0, "{name} = {v}");
    Ok(())
}

// ------------------------------------------------------------------------------------------------
// Strategies
// ------------------------------------------------------------------------------------------------

/// Species keys and genera; two share a genus so the imputer's genus step is reachable.
const SPECIES: [(&str, &str); 3] = [
    ("Acer platanoides", "Acer"),
    ("Acer rubrum", "Acer"),
    ("Tilia cordata", "Tilia"),
];

fn species_strategy() -> impl Strategy<Value = SpeciesParams> {
    (
        0..SPECIES.len(),
        select(JenkinsGroup::ALL.to_vec()),
        select(ChojnackyGroup::ALL.to_vec()),
        select(LeafHabit::ALL.to_vec()),
        0.5f64..8.0,
        select(WaterUse::ALL.to_vec()),
        0.0f64..2.0,
    )
        .prop_map(
            |(i, jenkins, chojnacky, leaf_habit, lai, water_use, growth)| SpeciesParams {
                key: SPECIES[i].0.to_string(),
                genus: SPECIES[i].1.to_string(),
                leaf_habit,
                biomass: BiomassGroups { jenkins, chojnacky },
                lai,
                water_use,
                growth_cm_per_yr: growth,
            },
        )
}

fn condition_strategy() -> impl Strategy<Value = Option<ConditionWord>> {
    proptest::option::of(select(vec![
        ConditionWord::Good,
        ConditionWord::Fair,
        ConditionWord::Poor,
        ConditionWord::Dead,
    ]))
}

/// One measurement dated 2014-01-01 … 2026-01-16, 1–3 stems of 0.5–150 cm, optional height, crown
/// spreads, crown base, dieback 0–100 % and condition word.
fn measurement_strategy() -> impl Strategy<Value = Measurement> {
    (
        0i64..4400,
        proptest::collection::vec(0.5f64..150.0, 1..=3),
        proptest::option::of(1.0f64..40.0),
        proptest::option::of(0.5f64..25.0),
        proptest::option::of(0.5f64..25.0),
        proptest::option::of(0.0f64..10.0),
        proptest::option::of(0.0f64..=100.0),
        condition_strategy(),
    )
        .prop_map(
            |(day, stems, height, w1, w2, base, dieback, condition)| Measurement {
                measured_on: ymd(2014, 1, 1) + Duration::days(day),
                stems_cm: stems,
                height_m: height,
                crown_width_m: w1,
                crown_width2_m: w2,
                crown_base_m: base,
                dieback_pct: dieback,
                condition,
            },
        )
}

/// 1–3 measurements: either drawn independently (DBH may shrink or jump: the re-measure path), or a
/// series 1–5.5 years apart whose stems grow 0–3.5 cm/yr (mostly the observed-growth path of M3).
fn measurements_strategy() -> impl Strategy<Value = Vec<Measurement>> {
    prop_oneof![
        proptest::collection::vec(measurement_strategy(), 1..=3),
        (
            measurement_strategy(),
            proptest::collection::vec((365i64..2000, 0.0f64..3.5), 0..=2),
        )
            .prop_map(|(first, later)| {
                let mut series = vec![first];
                for (days, rate) in later {
                    let prev = series[series.len() - 1].clone();
                    let years = days as f64 / 365.25;
                    series.push(Measurement {
                        measured_on: prev.measured_on + Duration::days(days),
                        stems_cm: prev.stems_cm.iter().map(|d| d + rate * years).collect(),
                        ..prev
                    });
                }
                series
            }),
    ]
}

/// Mostly standing trees, sometimes removed or planned ones (which M13 step 1 skips).
fn status_strategy() -> impl Strategy<Value = TreeStatus> {
    prop_oneof![
        8 => Just(TreeStatus::Standing),
        1 => Just(TreeStatus::Removed),
        1 => Just(TreeStatus::Planned),
    ]
}

/// Rows for a small imputer: 0–6 measured trees of the three species.
fn imputer_strategy() -> impl Strategy<Value = Vec<(usize, f64, Option<f64>, Option<f64>)>> {
    proptest::collection::vec(
        (
            0..SPECIES.len(),
            1.0f64..120.0,
            proptest::option::of(2.0f64..35.0),
            proptest::option::of(1.0f64..25.0),
        ),
        0..=6,
    )
}

fn build_imputer(rows: &[(usize, f64, Option<f64>, Option<f64>)]) -> Imputer {
    Imputer::from_rows(rows.iter().map(|&(i, dbh, h, w)| ImputerRow {
        species_key: SPECIES[i].0,
        genus: SPECIES[i].1,
        dbh_cm: dbh,
        height_m: h,
        crown_width_m: w,
    }))
}

/// Settings within the ranges `ScienceSettings::apply` accepts, set through it (so an out-of-range
/// draw would fail loudly instead of testing an impossible state).
fn settings_strategy() -> impl Strategy<Value = ScienceSettings> {
    (
        (any::<bool>(), any::<bool>(), any::<bool>()),
        (0.0f64..=5.0, 0.0f64..=1.0, 0.0f64..=1.0, 0.0f64..0.99),
        (0.0f64..=3.0, 0.0f64..=3.0, 0.0f64..=3.0),
        (0.5f64..10.0, 0.0f64..10.0, 0.0f64..1.0, 0.0f64..=1.0),
        (0.1f64..=0.3, 0.0f64..500.0),
    )
        .prop_map(
            |(
                (jenkins, ff, observed),
                (s_leaf, off_s, off_c, ec),
                (kmc_pit, kmc_verge, kmc_yard),
                (cop, water, elec, share),
                (krs, co2),
            )| {
                let onoff = |b: bool| if b { "on" } else { "off" }.to_string();
                let pairs = vec![
                    (
                        "biomass_method",
                        if jenkins {
                            "jenkins2003"
                        } else {
                            "chojnacky2014"
                        }
                        .to_string(),
                    ),
                    ("growth_frost_free_scaling", onoff(ff)),
                    ("observed_growth", onoff(observed)),
                    ("s_leaf_mm", s_leaf.to_string()),
                    ("leaf_off_storage_share", off_s.to_string()),
                    ("leaf_off_cover_share", off_c.to_string()),
                    ("ec_over_r", ec.to_string()),
                    ("kmc_pit", kmc_pit.to_string()),
                    ("kmc_median", kmc_pit.to_string()),
                    ("kmc_verge", kmc_verge.to_string()),
                    ("kmc_park", kmc_verge.to_string()),
                    ("kmc_yard", kmc_yard.to_string()),
                    ("cop", cop.to_string()),
                    ("water_price_per_m3", water.to_string()),
                    ("electricity_price_per_kwh", elec.to_string()),
                    ("cooling_value_share", share.to_string()),
                    ("krs", krs.to_string()),
                    ("co2_price_points", format!("2020:{co2},2050:{}", co2 * 1.5)),
                ];
                ScienceSettings::from_pairs(pairs).expect("settings drawn within their ranges")
            },
        )
}

/// A synthetic climate: a seasonal temperature cycle, humidity, wind, cloudiness and rain, with
/// days whose values are missing (every `gap_every`-th day one field in turn).
#[derive(Debug, Clone)]
struct Climate {
    year: i32,
    lat_deg: f64,
    elevation_m: f64,
    coastal: bool,
    t_mean: f64,
    t_amplitude: f64,
    t_range: f64,
    rh: f64,
    wind: f64,
    clear_fraction: f64,
    rain_every: u32,
    rain_mm: f64,
    gap_every: u32,
}

fn climate_strategy() -> impl Strategy<Value = Climate> {
    (
        (
            2016i32..=2030,
            -60.0f64..70.0,
            0.0f64..3000.0,
            any::<bool>(),
        ),
        (-8.0f64..28.0, 0.0f64..20.0, 2.0f64..18.0),
        (25.0f64..98.0, 0.3f64..7.0, 0.1f64..0.8),
        (1u32..10, 0.1f64..60.0, select(vec![0u32, 3, 7, 17, 40])),
    )
        .prop_map(
            |(
                (year, lat_deg, elevation_m, coastal),
                (t_mean, t_amplitude, t_range),
                (rh, wind, clear_fraction),
                (rain_every, rain_mm, gap_every),
            )| Climate {
                year,
                lat_deg,
                elevation_m,
                coastal,
                t_mean,
                t_amplitude,
                t_range,
                rh,
                wind,
                clear_fraction,
                rain_every,
                rain_mm,
                gap_every,
            },
        )
}

fn climate_days(c: &Climate) -> Vec<WeatherDay> {
    let first = ymd(c.year, 1, 1);
    let hemisphere = if c.lat_deg >= 0.0 { 1.0 } else { -1.0 };
    first
        .iter_days()
        .take_while(|d| d.year() == c.year)
        .map(|date| {
            let j = date.ordinal();
            let phase = 2.0 * std::f64::consts::PI * (f64::from(j) - 15.0) / 365.0;
            // Deterministic day-to-day wobble in 0..1.
            let wobble = f64::from((j * 37 + 11) % 23) / 22.0;
            let tmean = c.t_mean - hemisphere * c.t_amplitude * phase.cos() + 3.0 * (wobble - 0.5);
            let (ra, daylight) = extraterrestrial_radiation(c.lat_deg, j);
            let cloudless = (c.clear_fraction + 0.3 * wobble).min(1.0);
            let mut day = WeatherDay {
                precip_mm: Some(if j % c.rain_every == 0 {
                    c.rain_mm * (0.2 + 1.6 * wobble)
                } else {
                    0.0
                }),
                tmin_c: Some(tmean - c.t_range / 2.0),
                tmax_c: Some(tmean + c.t_range / 2.0),
                rh_mean_pct: Some((c.rh + 10.0 * (wobble - 0.5)).clamp(0.0, 100.0)),
                wind_2m_ms: Some(c.wind * (0.5 + wobble)),
                solar_mj_m2: Some((0.25 + 0.5 * cloudless) * ra),
                ..WeatherDay::empty(date)
            };
            if j % 11 == 0 {
                // Some days report sunshine hours and dew point instead.
                day.solar_mj_m2 = None;
                day.sunshine_h = Some(daylight * cloudless);
                day.tdew_c = Some(tmean - c.t_range / 2.0 - 2.0 * wobble);
            }
            if c.gap_every > 0 && j % c.gap_every == 0 {
                match (j / c.gap_every) % 6 {
                    0 => day.tmin_c = None,
                    1 => day.tmax_c = None,
                    2 => day.rh_mean_pct = None,
                    3 => day.wind_2m_ms = None,
                    4 => {
                        day.solar_mj_m2 = None;
                        day.sunshine_h = None;
                    }
                    _ => day.precip_mm = None,
                }
            }
            day
        })
        .collect()
}

fn station(c: &Climate) -> Station {
    Station {
        lat_deg: c.lat_deg,
        elevation_m: c.elevation_m,
        coastal: c.coastal,
    }
}

fn check_benefits(b: &TreeBenefits) -> Result<(), TestCaseError> {
    for (name, v) in [
        ("dbh_cm", b.dbh_cm),
        ("leaf_area_m2", b.leaf_area_m2),
        ("biomass_kg", b.biomass_kg),
        ("carbon_kg", b.carbon_kg),
        ("co2e_kg", b.co2e_kg),
        ("co2e_seq_kg_yr", b.co2e_seq_kg_yr),
        ("interception_m3_yr", b.interception_m3_yr),
        ("transpiration_m3_yr", b.transpiration_m3_yr),
        ("cooling_kwh_yr", b.cooling_kwh_yr),
        ("value", b.value),
        ("detail.cpa_m2", b.detail.cpa_m2),
        ("detail.dieback_pct", b.detail.dieback_pct),
        ("detail.agb_kg", b.detail.agb_kg),
        ("detail.growth", b.detail.growth.dbh_cm_per_yr),
        ("detail.lai_effective", b.detail.lai_effective),
        ("detail.interception_mm", b.detail.interception_mm),
        ("detail.et0_sum_mm", b.detail.et0_sum_mm),
        ("detail.kl", b.detail.kl),
        ("detail.transpiration_l", b.detail.transpiration_l),
        ("detail.ac_kwh_e", b.detail.ac_kwh_e),
        ("detail.flow_value.total", b.detail.flow_value.total),
    ] {
        finite_nonneg(name, v)?;
    }
    for (name, v) in [
        ("height_m", b.height_m),
        ("crown_width_m", b.crown_width_m),
        ("detail.crown_height_m", b.detail.crown_height_m),
    ] {
        if let Some(v) = v {
            finite_nonneg(name, v)?;
        }
    }
    prop_assert!(b.detail.dieback_pct <= 100.0);
    // M13 steps 4–9: dead trees keep carbon but have no growth or leaves; no crown → no crown flows.
    if b.dead {
        prop_assert_eq!(b.co2e_seq_kg_yr, 0.0);
        prop_assert_eq!(b.leaf_area_m2, 0.0);
        prop_assert_eq!(b.transpiration_m3_yr, 0.0);
    }
    if b.no_crown {
        prop_assert_eq!(b.detail.cpa_m2, 0.0);
        prop_assert_eq!(b.interception_m3_yr, 0.0);
        prop_assert_eq!(b.transpiration_m3_yr, 0.0);
    }
    Ok(())
}

// ------------------------------------------------------------------------------------------------
// Properties
// ------------------------------------------------------------------------------------------------

proptest! {
    #![proptest_config(config())]

    // METHODS.md M13: every output of one tree-year is finite and ≥ 0 for inputs in range (species
    // from the published groups, 1–3 measurements, optional dimensions, dieback 0–100 %, a small
    // imputer, a synthetic year of weather with gaps, settings within their accepted ranges); a tree
    // is skipped only when it is not standing (step 1) or has no measurement dated ≤ Y.
    #[test]
    fn tree_year_outputs_are_finite_and_non_negative(
        species in species_strategy(),
        measurements in measurements_strategy(),
        site_kind in proptest::option::of(select(SiteKind::ALL.to_vec())),
        status in status_strategy(),
        imputer_rows in imputer_strategy(),
        climate in climate_strategy(),
        settings in settings_strategy(),
    ) {
        let imputer = build_imputer(&imputer_rows);
        let weather = YearWeather::compute(
            climate.year,
            &station(&climate),
            &climate_days(&climate),
            &settings,
        );
        let ctx = YearContext::new(&imputer, &weather, &settings);
        let tree = TreeInput {
            species: &species,
            site_kind,
            status,
            measurements: &measurements,
        };
        let any_dated = measurements
            .iter()
            .any(|m| m.measured_on.year() <= climate.year);
        match tree_year(&tree, &ctx) {
            Ok(b) => {
                prop_assert_eq!(status, TreeStatus::Standing);
                prop_assert!(any_dated);
                prop_assert_eq!(b.year, climate.year);
                check_benefits(&b)?;
            }
            Err(Skip::NotStanding(s)) => {
                prop_assert_ne!(status, TreeStatus::Standing);
                prop_assert_eq!(s, status);
            }
            Err(Skip::NoMeasurement(y)) => {
                prop_assert_eq!(status, TreeStatus::Standing);
                prop_assert!(!any_dated);
                prop_assert_eq!(y, climate.year);
            }
        }
    }

    // METHODS.md M2: AGB = exp(β0 + β1 ln d) with β1 > 0, whole-tree biomass and carbon are
    // non-decreasing in DBH for every Jenkins 2003 group and every Chojnacky 2014 row, finite and ≥ 0.
    #[test]
    fn biomass_and_carbon_are_monotone_in_dbh(d1 in 0.0f64..300.0, step in 0.0f64..100.0) {
        let d2 = d1 + step;
        for (group, a) in all_allometries() {
            let (agb1, agb2) = (a.agb_kg(d1), a.agb_kg(d2));
            finite_nonneg(group, agb1)?;
            finite_nonneg(group, agb2)?;
            prop_assert!(agb1 <= agb2, "{group}: AGB({d1}) = {agb1} > AGB({d2}) = {agb2}");
            let (w1, w2) = (a.whole_tree_biomass_kg(d1), a.whole_tree_biomass_kg(d2));
            prop_assert!(w1 <= w2, "{group}: whole-tree biomass {w1} > {w2}");
            let (c1, c2) = (a.carbon_kg(d1), a.carbon_kg(d2));
            finite_nonneg(group, c1)?;
            prop_assert!(c1 <= c2, "{group}: carbon {c1} > {c2}");
        }
    }

    // METHODS.md M3: annual sequestration C(d + Δd) − C(d) with a DBH growth Δd ≥ 0 that does not
    // depend on d is ≥ 0 and non-decreasing in d, because every published β1 of M2 is > 1 (C is
    // convex in d). Tolerance: rounding of the two carbon values being subtracted (1e-12 × C).
    #[test]
    fn annual_sequestration_is_monotone_in_dbh(
        d1 in 0.1f64..300.0,
        step in 0.0f64..100.0,
        growth in 0.0f64..3.0,
    ) {
        let d2 = d1 + step;
        for (group, a) in all_allometries() {
            prop_assert!(a.b1 > 1.0, "{group}: β1 {} ≤ 1", a.b1);
            let s1 = sequestration_kg_c_per_yr(a, d1, growth);
            let s2 = sequestration_kg_c_per_yr(a, d2, growth);
            let eps = 1e-12 * a.carbon_kg(d2 + growth);
            prop_assert!(s1.is_finite() && s1 >= -eps, "{group}: seq({d1}) = {s1}");
            prop_assert!(
                s1 <= s2 + eps,
                "{group}: seq({d1}, {growth}) = {s1} > seq({d2}, {growth}) = {s2}"
            );
        }
    }

    // METHODS.md M3/M13 step 5 at the tree level: with the model growth rate (one measurement, so
    // no observed increment), a bigger tree of the same species and condition stores and sequesters
    // at least as much, under either biomass method.
    #[test]
    fn tree_year_sequestration_is_monotone_in_dbh(
        species in species_strategy(),
        d1 in 0.5f64..200.0,
        step in 0.0f64..60.0,
        dieback in 0.0f64..=100.0,
        climate in climate_strategy(),
        settings in settings_strategy(),
    ) {
        let imputer = Imputer::default();
        let weather =
            YearWeather::compute(climate.year, &station(&climate), &[], &settings);
        let ctx = YearContext::new(&imputer, &weather, &settings);
        let run = |d: f64| {
            let m = [Measurement {
                measured_on: ymd(climate.year, 1, 1),
                stems_cm: vec![d],
                height_m: None,
                crown_width_m: None,
                crown_width2_m: None,
                crown_base_m: None,
                dieback_pct: Some(dieback),
                condition: None,
            }];
            let tree = TreeInput {
                species: &species,
                site_kind: None,
                status: TreeStatus::Standing,
                measurements: &m,
            };
            tree_year(&tree, &ctx).map(|b| (b.carbon_kg, b.co2e_seq_kg_yr))
        };
        let (c1, s1) = run(d1).expect("a standing tree measured in the year");
        let (c2, s2) = run(d1 + step).expect("a standing tree measured in the year");
        prop_assert!(c1 <= c2, "carbon {c1} > {c2}");
        prop_assert!(s1 <= s2 + 1e-12 * c2 * 44.009 / 12.011, "seq {s1} > {s2}");
    }

    // METHODS.md M5 (revised Gash model, algebra checks): the storm loss satisfies 0 ≤ I ≤ c·Pg ≤ Pg,
    // and I is non-decreasing in Pg, for leaf-on and leafless crowns, LAI 0–12 and every setting in
    // range (s_leaf 0–5 mm, leafless shares 0–1, Ēc/R̄ 0–<1).
    #[test]
    fn gash_storm_loss_is_bounded_by_gross_rain(
        lai in 0.0f64..12.0,
        settings in settings_strategy(),
        leaf_on in any::<bool>(),
        pg in 0.0f64..500.0,
        more in 0.0f64..100.0,
    ) {
        let canopy = if leaf_on {
            GashCanopy::leaf_on(lai, &settings)
        } else {
            GashCanopy::leaf_off(lai, &settings)
        };
        prop_assert!((0.0..=1.0).contains(&canopy.cover), "cover {}", canopy.cover);
        let p_sat = canopy.saturating_rain_mm();
        finite_nonneg("P'g", p_sat)?;
        let i = canopy.storm_loss_mm(pg);
        finite_nonneg("I", i)?;
        prop_assert!(i <= pg, "I {i} > Pg {pg}");
        prop_assert!(i <= canopy.cover * pg * (1.0 + 1e-12), "I {i} > c·Pg {}", canopy.cover * pg);
        let i2 = canopy.storm_loss_mm(pg + more);
        prop_assert!(i <= i2 * (1.0 + 1e-12) + 1e-12, "I({pg}) {i} > I({}) {i2}", pg + more);
    }

    // METHODS.md M5/M13 step 8: a year's interception is a sum of storm losses, so it lies between 0
    // and the year's gross rain, for either leaf habit.
    #[test]
    fn annual_interception_is_bounded_by_annual_rain(
        rain in proptest::collection::vec((0.0f64..200.0, any::<bool>()), 0..60),
        lai in 0.0f64..12.0,
        habit in select(LeafHabit::ALL.to_vec()),
        settings in settings_strategy(),
    ) {
        let days: Vec<RainDay> = rain
            .iter()
            .map(|&(precip_mm, leaf_on)| RainDay { precip_mm, leaf_on })
            .collect();
        let gross: f64 = days.iter().map(|d| d.precip_mm).sum();
        let total = annual_interception_mm(&days, lai, habit, &settings);
        finite_nonneg("annual interception", total)?;
        prop_assert!(total <= gross * (1.0 + 1e-12), "{total} > {gross}");
    }

    // METHODS.md M6: FAO-56 daily ET0 and every intermediate are finite for physically plausible
    // inputs anywhere on Earth (latitude −90…90, elevation −430…5000 m, any day, Tmin −40…35 °C with
    // Tmax ≥ Tmin, every humidity, wind and radiation form including the gap fillings); Ra, Rso,
    // Rs and u2 are ≥ 0, es ≥ ea ≥ 0 when the humidity is a relative humidity (eqs. 17, 19).
    #[test]
    fn daily_et0_is_finite_for_plausible_inputs(
        lat_deg in -90.0f64..=90.0,
        elevation_m in -430.0f64..5000.0,
        day_of_year in 1u32..=366,
        tmin_c in -40.0f64..35.0,
        t_range in 0.0f64..25.0,
        humidity_kind in 0u8..5,
        h1 in 0.0f64..=1.0,
        h2 in 0.0f64..=1.0,
        wind in proptest::option::of(0.0f64..20.0),
        radiation_kind in 0u8..3,
        r in 0.0f64..=1.0,
        krs in 0.1f64..=0.3,
    ) {
        let tmax_c = tmin_c + t_range;
        let (ra, daylight_h) = extraterrestrial_radiation(lat_deg, day_of_year);
        let humidity = match humidity_kind {
            0 => Humidity::VapourPressureKpa(h1 * saturation_vapour_pressure_kpa(tmax_c)),
            1 => Humidity::DewPointC(tmin_c - 30.0 * h1),
            2 => Humidity::RhMaxMinPct { max: 100.0 * h1.max(h2), min: 100.0 * h1.min(h2) },
            3 => Humidity::RhMeanPct(100.0 * h1),
            _ => Humidity::Missing,
        };
        let radiation = match radiation_kind {
            0 => Radiation::SolarMjM2(r * ra),
            1 => Radiation::SunshineHours(r * daylight_h),
            _ => Radiation::Missing,
        };
        let met = DailyMet {
            tmax_c,
            tmin_c,
            humidity,
            wind_2m_ms: wind,
            radiation,
            soil_heat_flux_mj_m2: 0.0,
        };
        let site = Et0Site { lat_deg, elevation_m, krs };
        let d = daily_et0(&met, &site, day_of_year);
        for (name, v) in [
            ("tmean", d.tmean_c),
            ("pressure", d.pressure_kpa),
            ("delta", d.delta_kpa_c),
            ("gamma", d.gamma_kpa_c),
            ("es", d.es_kpa),
            ("ea", d.ea_kpa),
            ("rns", d.rns_mj_m2),
            ("rnl", d.rnl_mj_m2),
            ("rn", d.rn_mj_m2),
            ("et0", d.et0_mm),
        ] {
            prop_assert!(v.is_finite(), "{name} = {v} for {met:?} at {site:?}, day {day_of_year}");
        }
        for (name, v) in [
            ("ra", d.ra_mj_m2),
            ("rso", d.rso_mj_m2),
            ("rs", d.rs_mj_m2),
            ("u2", d.u2_ms),
            ("daylight", d.daylight_h),
        ] {
            finite_nonneg(name, v)?;
        }
        prop_assert!(d.daylight_h <= 24.0);
        if matches!(humidity, Humidity::RhMeanPct(_) | Humidity::RhMaxMinPct { .. }) {
            prop_assert!(d.ea_kpa >= 0.0 && d.ea_kpa <= d.es_kpa * (1.0 + 1e-12));
        }
        // Gap-filled Rs (eq. 50) is capped at Rso (METHODS.md M6).
        if radiation_kind == 2 {
            prop_assert!(d.rs_mj_m2 <= d.rso_mj_m2 * (1.0 + 1e-12));
        }
    }

    // METHODS.md M6 through the weather API: a day's ET0 in YearWeather is None exactly when Tmin or
    // Tmax is missing, and otherwise finite and ≥ 0 (negative FAO-56 values are floored at 0), for
    // any mix of missing and present plausible values; the gap counters add up.
    #[test]
    fn year_weather_et0_is_none_only_without_temperature(
        year in 2016i32..=2030,
        lat_deg in -70.0f64..=70.0,
        elevation_m in 0.0f64..3000.0,
        coastal in any::<bool>(),
        days in proptest::collection::vec(
            (
                0u32..366,
                proptest::option::of(-30.0f64..30.0),
                proptest::option::of(0.0f64..20.0),
                proptest::option::of(0.0f64..=100.0),
                proptest::option::of(0.0f64..15.0),
                proptest::option::of(0.0f64..35.0),
                proptest::option::of(0.0f64..1.0),
                proptest::option::of(0.0f64..16.0),
                proptest::option::of(0.0f64..80.0),
            ),
            1..40,
        ),
    ) {
        let first = ymd(year, 1, 1);
        let days: Vec<WeatherDay> = days
            .into_iter()
            .map(|(offset, tmin, range, rh, wind, rs, dew_frac, sun, precip)| {
                let date = first + Duration::days(i64::from(offset));
                WeatherDay {
                    date,
                    precip_mm: precip,
                    tmin_c: tmin,
                    // Tmax may be missing while Tmin is present and the other way round.
                    tmax_c: range.map(|r| tmin.unwrap_or(10.0) + r),
                    rh_mean_pct: rh,
                    wind_2m_ms: wind,
                    solar_mj_m2: rs,
                    tdew_c: dew_frac.map(|f| tmin.unwrap_or(10.0) - 20.0 * f),
                    sunshine_h: sun,
                }
            })
            .collect();
        let st = Station { lat_deg, elevation_m, coastal };
        let yw = YearWeather::compute(year, &st, &days, &ScienceSettings::default());
        let mut gaps = 0;
        for cd in &yw.days {
            // The last record of a repeated date is the one used (YearWeather::compute).
            let source = days.iter().rev().find(|d| d.date == cd.date);
            let has_temps = source.is_some_and(|d| d.tmin_c.is_some() && d.tmax_c.is_some());
            match cd.et0_mm {
                Some(e) => {
                    prop_assert!(has_temps, "{}: ET0 without temperatures", cd.date);
                    finite_nonneg("ET0", e)?;
                }
                None => {
                    prop_assert!(!has_temps, "{}: no ET0 despite temperatures", cd.date);
                    gaps += 1;
                }
            }
        }
        prop_assert_eq!(yw.et0_gap_days, gaps);
        finite_nonneg("et0_all_mm", yw.et0_all_mm)?;
        finite_nonneg("et0_leaf_on_mm", yw.et0_leaf_on_mm)?;
        prop_assert!(yw.et0_leaf_on_mm <= yw.et0_all_mm * (1.0 + 1e-12));
        finite_nonneg("precip_mm", yw.precip_mm)?;
    }

    // FAO-56 eq. 47: the 2 m wind from any measuring height above the log-law limit is finite and ≥ 0.
    #[test]
    fn wind_height_conversion_is_finite(u in 0.0f64..60.0, z in 0.1f64..100.0) {
        let u2 = wind_at_2m_ms(u, z).expect("heights above 0.095 m are valid");
        finite_nonneg("u2", u2)?;
    }
}

/// Any f64 at all, weighted towards the awkward ones (NaN, ±∞, ±0, the smallest normal, huge).
fn any_number() -> impl Strategy<Value = f64> {
    prop_oneof![
        Just(f64::NAN),
        Just(f64::INFINITY),
        Just(f64::NEG_INFINITY),
        Just(0.0),
        Just(-0.0),
        Just(f64::MIN_POSITIVE),
        Just(f64::MAX),
        Just(-1e300),
        any::<f64>(),
        -1e4f64..1e4,
    ]
}

proptest! {
    #![proptest_config(config())]

    // Robustness beyond the ranges above (not a science property): the engine must not panic on any
    // number a damaged file or a bad import could carry (NaN, ±∞, negative, huge) in a measurement,
    // a species' LAI and growth rate, a station or a weather day; and a day has an ET0 exactly when
    // both its temperatures are finite (WeatherDay::fao56_inputs, METHODS.md M6).
    #[test]
    fn engine_does_not_panic_on_any_number(
        stems in proptest::collection::vec(any_number(), 0..3),
        dims in (
            proptest::option::of(any_number()),
            proptest::option::of(any_number()),
            proptest::option::of(any_number()),
            proptest::option::of(any_number()),
            proptest::option::of(any_number()),
        ),
        lai in any_number(),
        growth in any_number(),
        weather in (
            proptest::option::of(any_number()),
            proptest::option::of(any_number()),
            proptest::option::of(any_number()),
            proptest::option::of(any_number()),
            proptest::option::of(any_number()),
            proptest::option::of(any_number()),
            proptest::option::of(any_number()),
            proptest::option::of(any_number()),
        ),
        lat_deg in any_number(),
        elevation_m in any_number(),
        settings in settings_strategy(),
    ) {
        let (height_m, crown_width_m, crown_width2_m, crown_base_m, dieback_pct) = dims;
        let (precip_mm, tmin_c, tmax_c, rh_mean_pct, wind_2m_ms, solar_mj_m2, tdew_c, sunshine_h) =
            weather;
        let species = SpeciesParams {
            key: SPECIES[0].0.to_string(),
            genus: SPECIES[0].1.to_string(),
            leaf_habit: LeafHabit::Deciduous,
            biomass: BiomassGroups {
                jenkins: JenkinsGroup::SoftMapleBirch,
                chojnacky: ChojnackyGroup::AceraceaeLt050,
            },
            lai,
            water_use: WaterUse::Moderate,
            growth_cm_per_yr: growth,
        };
        let measurements = [Measurement {
            measured_on: ymd(2024, 5, 1),
            stems_cm: stems,
            height_m,
            crown_width_m,
            crown_width2_m,
            crown_base_m,
            dieback_pct,
            condition: None,
        }];
        let day = WeatherDay {
            date: ymd(2024, 6, 1),
            precip_mm,
            tmin_c,
            tmax_c,
            rh_mean_pct,
            wind_2m_ms,
            solar_mj_m2,
            tdew_c,
            sunshine_h,
        };
        let st = Station { lat_deg, elevation_m, coastal: false };
        let yw = YearWeather::compute(2024, &st, &[day], &settings);
        let has_temps = tmin_c.is_some_and(f64::is_finite) && tmax_c.is_some_and(f64::is_finite);
        let et0 = yw.days.iter().find(|d| d.date == day.date).and_then(|d| d.et0_mm);
        prop_assert_eq!(et0.is_some(), has_temps);
        let imputer = Imputer::from_rows([ImputerRow {
            species_key: SPECIES[0].0,
            genus: SPECIES[0].1,
            dbh_cm: measurements[0].dbh_cm(),
            height_m,
            crown_width_m,
        }]);
        let ctx = YearContext::new(&imputer, &yw, &settings);
        let tree = TreeInput {
            species: &species,
            site_kind: None,
            status: TreeStatus::Standing,
            measurements: &measurements,
        };
        let _ = tree_year(&tree, &ctx);
    }
}

/// |a − b| ≤ 1e-9 · max(|a|, |b|) (both zero passes).
fn close_relative(what: &str, table: f64, reference: f64) -> Result<(), TestCaseError> {
    let scale = table.abs().max(reference.abs());
    prop_assert!(
        (table - reference).abs() <= 1e-9 * scale,
        "{what}: table {table} vs day-by-day {reference}"
    );
    Ok(())
}

/// A rain depth for the interception tables: from a few fixed values (ties, zero, negative) or any
/// depth up to 300 mm.
fn rain_depth() -> impl Strategy<Value = f64> {
    prop_oneof![
        select(vec![0.0, -1.0, 0.1, 0.5, 1.0, 2.5, 5.0, 12.0]),
        0.0f64..300.0,
        1e-6f64..1.0,
    ]
}

proptest! {
    #![proptest_config(config())]

    // METHODS.md M5/M13 step 8: the engine's per-year sorted table (RainTable, YearRain) gives the same
    // year of interception as the day-by-day Gash sum (annual_interception_mm), for any rain-day set
    // (empty, ties, zero and negative days — which lose nothing —, days exactly at the leaf-on and
    // leaf-off P′g of the crown), any LAI, either habit and any accepted settings. The closed form is
    // an exact rearrangement [derived], so the two agree up to rounding: within 1e-9 relative (the
    // issue asks for 0.1 %).
    #[test]
    fn interception_table_equals_the_day_by_day_sum(
        rain in proptest::collection::vec((rain_depth(), any::<bool>()), 0..120),
        at_saturation in proptest::collection::vec((0u8..3, any::<bool>()), 0..6),
        lai in prop_oneof![Just(0.0), 0.0f64..12.0, 1e-6f64..0.01],
        habit in select(LeafHabit::ALL.to_vec()),
        settings in settings_strategy(),
    ) {
        let on = GashCanopy::leaf_on(lai, &settings).saturating_rain_mm();
        let off = GashCanopy::leaf_off(lai, &settings).saturating_rain_mm();
        let mut days: Vec<RainDay> = rain
            .iter()
            .map(|&(precip_mm, leaf_on)| RainDay { precip_mm, leaf_on })
            .collect();
        // Days exactly at P′g (leaf-on or leaf-off crown), inserted among the others.
        for &(which, leaf_on) in &at_saturation {
            let precip_mm = match which {
                0 => on,
                1 => off,
                _ => on.max(off),
            };
            let at = (usize::from(which) * 7) % (days.len() + 1);
            days.insert(at, RainDay { precip_mm, leaf_on });
        }
        let reference = annual_interception_mm(&days, lai, habit, &settings);
        let table = YearRain::new(&days).annual_interception_mm(lai, habit, &settings);
        finite_nonneg("table interception", table)?;
        close_relative("year", table, reference)?;

        // One table against one crown state, day by day.
        for canopy in [GashCanopy::leaf_on(lai, &settings), GashCanopy::leaf_off(lai, &settings)] {
            let t = RainTable::new(days.iter().map(|d| d.precip_mm));
            let by_day: f64 = days.iter().map(|d| canopy.storm_loss_mm(d.precip_mm)).sum();
            close_relative("one crown", t.gash_sum_mm(&canopy), by_day)?;
            let positive = days.iter().filter(|d| d.precip_mm > 0.0);
            prop_assert_eq!(t.days(), positive.clone().count());
            close_relative("total", t.total_mm(), positive.map(|d| d.precip_mm).sum())?;
        }
    }

    // The same through the prepared weather: YearWeather::compute's tables and its rain days give the
    // same interception for random stations' years (METHODS.md M13 steps 7–8).
    #[test]
    fn prepared_weather_tables_match_its_rain_days(
        climate in climate_strategy(),
        lai in 0.0f64..12.0,
        habit in select(LeafHabit::ALL.to_vec()),
        settings in settings_strategy(),
    ) {
        let weather = YearWeather::compute(
            climate.year,
            &station(&climate),
            &climate_days(&climate),
            &settings,
        );
        let reference = annual_interception_mm(&weather.rain_days, lai, habit, &settings);
        let table = weather.rain.annual_interception_mm(lai, habit, &settings);
        close_relative("prepared year", table, reference)?;
        prop_assert_eq!(
            weather.rain.leaf_on.days() + weather.rain.leaf_off.days(),
            weather.rain_days.len()
        );
        prop_assert_eq!(weather.rain.all.days(), weather.rain_days.len());
    }
}

// The demo town's invented year of weather (demo-inventory/weather.csv, at the demo station's 42.7° N,
// 260 m): for every species LAI from 0 to 10 in steps of 0.05, both habits, the table and the
// day-by-day sum agree within 1e-9 relative (METHODS.md M5).
#[test]
fn interception_table_on_the_demo_weather() {
    let parsed = streetwood::io::weather_csv::read_weather_csv(
        include_str!("../demo-inventory/weather.csv").as_bytes(),
    )
    .expect("the demo weather parses");
    assert!(parsed.bad.is_empty());
    let days: Vec<WeatherDay> = parsed.good.iter().map(|(_, d)| *d).collect();
    let station = Station {
        lat_deg: 42.7,
        elevation_m: 260.0,
        coastal: false,
    };
    let settings = ScienceSettings::default();
    let mut years: Vec<i32> = days.iter().map(|d| d.date.year()).collect();
    years.dedup();
    assert!(!years.is_empty());
    for year in years {
        let weather = YearWeather::compute(year, &station, &days, &settings);
        assert!(weather.rain_days.len() > 50, "{year}: a wet year");
        for step in 0..=200 {
            let lai = f64::from(step) * 0.05;
            for habit in LeafHabit::ALL.iter().copied() {
                let reference = annual_interception_mm(&weather.rain_days, lai, habit, &settings);
                let table = weather.rain.annual_interception_mm(lai, habit, &settings);
                assert!(
                    (table - reference).abs() <= 1e-9 * reference.abs(),
                    "{year} LAI {lai} {habit:?}: {table} vs {reference}"
                );
                if lai > 0.0 {
                    assert!(reference > 0.0);
                }
            }
        }
    }
}
