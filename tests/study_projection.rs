//! Analytic checks of the removal-study projection (issue 6): growth without mortality, survival
//! under constant mortality (expected and Monte Carlo), the M11 half-life and life expectancy, a
//! hand-computed payback year, and reproducibility by seed. Each check names its outside source.

use approx::assert_relative_eq;
use chrono::{Datelike, NaiveDate};
use streetwood::science::biomass::{BiomassGroups, BiomassMethod, ChojnackyGroup, JenkinsGroup};
use streetwood::science::dimensions::{Imputer, ImputerRow};
use streetwood::science::growth::model_growth_cm_per_yr;
use streetwood::science::kinds::{LeafHabit, SiteKind, WaterUse};
use streetwood::science::settings::ScienceSettings;
use streetwood::science::tree_year::{Measurement, SpeciesParams};
use streetwood::science::weather::{Station, WeatherDay, YearWeather};
use streetwood::study::outcome::{
    Benefit, Mode, Plan, PlantingRow, RemovedTree, StudyEnv, StudyInput, payback_year, run_study,
};
use streetwood::study::projection::{Cohort, Setup, Start, expected, monte_carlo, tree_path};
use streetwood::study::settings::{StudySettings, SurvivalScenario};
use streetwood::study::survival::{Survival, half_life_years, life_expectancy_years};

fn ymd(y: i32, m: u32, d: u32) -> NaiveDate {
    NaiveDate::from_ymd_opt(y, m, d).expect("valid date")
}

/// A mixed-hardwood street tree (Jenkins 2003 mixed hardwood; METHODS.md M2) growing at the default
/// 0.78 cm/yr (Smith, Dearborn & Hutyra 2019; METHODS.md M3).
fn hardwood() -> SpeciesParams {
    SpeciesParams {
        key: "Zelkova serrata".to_string(),
        genus: "Zelkova".to_string(),
        leaf_habit: LeafHabit::Deciduous,
        biomass: BiomassGroups {
            jenkins: JenkinsGroup::MixedHardwood,
            chojnacky: ChojnackyGroup::CornaceaeEtc,
        },
        lai: 4.0,
        water_use: WaterUse::Moderate,
        growth_cm_per_yr: 0.78,
    }
}

fn jenkins() -> ScienceSettings {
    ScienceSettings {
        biomass_method: BiomassMethod::Jenkins2003,
        ..ScienceSettings::default()
    }
}

/// An invented mid-latitude year: frost until 31 Mar and from 1 Nov, 6 mm of rain every fourth day.
fn weather() -> YearWeather {
    let year = 2025;
    let mut days = Vec::new();
    let mut date = ymd(year, 1, 1);
    while date.year() == year {
        let warm = (4..=10).contains(&date.month());
        days.push(WeatherDay {
            tmin_c: Some(if warm { 12.0 } else { -2.0 }),
            tmax_c: Some(if warm { 24.0 } else { 5.0 }),
            rh_mean_pct: Some(70.0),
            wind_2m_ms: Some(2.0),
            precip_mm: Some(if date.ordinal().is_multiple_of(4) {
                6.0
            } else {
                0.0
            }),
            ..WeatherDay::empty(date)
        });
        date = date.succ_opt().expect("next day");
    }
    let station = Station {
        lat_deg: 45.0,
        elevation_m: 100.0,
        coastal: false,
    };
    YearWeather::compute(year, &station, &days, &ScienceSettings::default())
}

fn imputer() -> Imputer {
    Imputer::from_rows([ImputerRow {
        species_key: "Zelkova serrata",
        genus: "Zelkova",
        dbh_cm: 40.0,
        height_m: Some(16.0),
        crown_width_m: Some(10.0),
    }])
}

fn measured(dbh: f64, dieback: f64) -> Measurement {
    Measurement {
        measured_on: ymd(2026, 6, 1),
        stems_cm: vec![dbh],
        height_m: Some(14.0),
        crown_width_m: Some(9.0),
        crown_width2_m: Some(7.0),
        crown_base_m: Some(3.0),
        dieback_pct: Some(dieback),
        condition: None,
    }
}

const CO2_PER_C: f64 = 44.009 / 12.011;

// Outside check: the M3 growth model (species rate 0.78 cm/yr, Smith et al. 2019 [published]; condition
// factor 0.76 for 26–50 % dieback, Nowak et al. 2013 [from memory]). With no mortality the projection
// must be the model stepped year by year: DBH(t) = 30 + 0.78 × 0.76 × t, each year's increment equal
// to the rate the engine used, and the stored carbon of year t + 1 equal to that of year t plus the
// year's sequestration (M3: sequestration = C(d + Δd) − C(d)).
#[test]
fn without_mortality_the_projection_steps_the_growth_model() {
    let species = hardwood();
    let science = jenkins();
    let w = weather();
    let imp = imputer();
    let setup = Setup {
        start_year: 2026,
        horizon_years: 40,
        imputer: &imp,
        weather: &w,
        science: &science,
        survival: Survival::none(),
        discount_rate: 0.02,
    };
    let rate = model_growth_cm_per_yr(0.78, 30.0, None);
    assert_relative_eq!(rate, 0.78 * 0.76, max_relative = 1e-12);
    for (start, d0) in [
        (Start::Measured(measured(30.0, 30.0)), 30.0),
        (
            Start::Planted {
                year: 2030,
                dbh_cm: 5.0,
            },
            5.0,
        ),
    ] {
        let planted = matches!(start, Start::Planted { .. });
        let cohort = Cohort {
            species: &species,
            site_kind: Some(SiteKind::Verge),
            count: 3,
            start,
        };
        let path = tree_path(&cohort, &setup).expect("projection");
        let want_rate = if planted { 0.78 } else { rate };
        let entry = path.entry.expect("present");
        assert_eq!(entry, if planted { 4 } else { 0 });
        let living: Vec<_> = path.years.iter().flatten().collect();
        assert_eq!(living.len(), 40 - entry);
        for (t, pair) in living.windows(2).enumerate() {
            let (a, b) = (pair[0], pair[1]);
            assert_relative_eq!(a.dbh_cm, d0 + want_rate * t as f64, max_relative = 1e-12);
            assert_relative_eq!(a.growth_cm_per_yr, want_rate, max_relative = 1e-12);
            assert_relative_eq!(b.dbh_cm - a.dbh_cm, a.growth_cm_per_yr, max_relative = 1e-9);
            assert_relative_eq!(
                b.flows.carbon_kg - a.flows.carbon_kg,
                a.flows.co2e_seq_kg_yr / CO2_PER_C,
                max_relative = 1e-9
            );
        }
        // Expected values with no mortality: every tree counts every year it is present.
        let totals = expected(std::slice::from_ref(&path), Survival::none(), 40);
        for (i, year) in totals.iter().enumerate() {
            let want = if i < entry { 0.0 } else { 3.0 };
            assert_eq!(year.trees, want);
            if let Some(tree) = &path.years[i] {
                assert_relative_eq!(
                    year.carbon_kg,
                    3.0 * tree.flows.carbon_kg,
                    max_relative = 1e-12
                );
            }
        }
    }
}

// Outside check: under a constant annual mortality q the expected survivors after t years are
// (1 − q)^t (a geometric survival law; M11's constant-rate model [derived]), and the Monte Carlo mean
// of 2,000 runs lies within 3 standard errors of it, SE = √(n p (1 − p) / runs) for n trees
// (binomial variance). Planted trees follow the two-phase law (1 − q_est)^min(t, 5) (1 − q_post)^(t − 5).
#[test]
fn constant_mortality_gives_geometric_survivors_and_monte_carlo_agrees() {
    let species = hardwood();
    let science = jenkins();
    let w = weather();
    let imp = imputer();
    for (survival, planted) in [
        (Survival::new(0.025, 0.025), false),
        (Survival::new(0.05, 0.025), true),
        (Survival::new(0.10, 0.10), false),
    ] {
        let setup = Setup {
            start_year: 2026,
            horizon_years: 40,
            imputer: &imp,
            weather: &w,
            science: &science,
            survival,
            discount_rate: 0.0,
        };
        let start = if planted {
            Start::Planted {
                year: 2026,
                dbh_cm: 5.0,
            }
        } else {
            Start::Measured(measured(30.0, 5.0))
        };
        let n = 50u32;
        let cohort = Cohort {
            species: &species,
            site_kind: None,
            count: n,
            start,
        };
        let path = tree_path(&cohort, &setup).expect("projection");
        let exp = expected(std::slice::from_ref(&path), survival, 40);
        for (t, year) in exp.iter().enumerate() {
            let t = t as i32;
            let p = if planted {
                (1.0 - survival.q_establishment).powi(t.min(5))
                    * (1.0 - survival.q_post).powi((t - 5).max(0))
            } else {
                (1.0 - survival.q_post).powi(t)
            };
            assert_relative_eq!(year.trees, f64::from(n) * p, max_relative = 1e-12);
        }
        let runs = 2000u32;
        let all = monte_carlo(std::slice::from_ref(&path), survival, 40, runs, 20260417);
        for t in [1usize, 5, 10, 20, 39] {
            let p = exp[t].trees / f64::from(n);
            let mean = all.iter().map(|run| run[t].trees).sum::<f64>() / f64::from(runs);
            let se = (f64::from(n) * p * (1.0 - p) / f64::from(runs)).sqrt();
            assert!(
                (mean - exp[t].trees).abs() <= 3.0 * se,
                "q {survival:?} year {t}: mean {mean} vs expected {} (SE {se})",
                exp[t].trees
            );
        }
    }
}

// Outside check: Roman & Scatena 2011 (Urban Forestry & Urban Greening 10:269–274) report annual
// survival of 94.9–96.5 % with a half-life of 13–20 years and a life expectancy of 19–28 years
// [published, as quoted in METHODS.md M11]. The half-life ln 0.5 / ln s gives 13.2–19.5 years; the
// life expectancy is −1 / ln s (19.1–28.1 years), NOT ln 0.5 / ln s as METHODS.md M11 says — the
// half-life formula cannot give 19–28 for these rates. A simulated cohort confirms both: half its
// trees are alive at the half-life, and the mean lifetime is the life expectancy (± 1 year for the
// discrete years).
#[test]
fn m11_half_life_and_life_expectancy_of_roman_and_scatena() {
    let (lo, hi) = (0.949f64, 0.965f64);
    assert_eq!(half_life_years(lo).round(), 13.0);
    assert_eq!(half_life_years(hi).round(), 19.0); // 19.45: within 13–20
    assert!((13.0..=20.0).contains(&half_life_years(lo)));
    assert!((13.0..=20.0).contains(&half_life_years(hi)));
    assert_eq!(life_expectancy_years(lo).round(), 19.0);
    assert_eq!(life_expectancy_years(hi).round(), 28.0);
    // METHODS.md's claim that ln 0.5 / ln s "reproduces both" is false:
    assert!(half_life_years(hi) < 19.5 && half_life_years(lo) < 19.0);

    // Simulation: 1,000 established trees at q = 1 − 0.949.
    let species = hardwood();
    let science = jenkins();
    let w = weather();
    let imp = imputer();
    let survival = Survival::new(1.0 - lo, 1.0 - lo);
    let setup = Setup {
        start_year: 2026,
        horizon_years: 120,
        imputer: &imp,
        weather: &w,
        science: &science,
        survival,
        discount_rate: 0.0,
    };
    let cohort = Cohort {
        species: &species,
        site_kind: None,
        count: 1000,
        start: Start::Measured(measured(20.0, 5.0)),
    };
    let path = tree_path(&cohort, &setup).expect("projection");
    let run = &monte_carlo(std::slice::from_ref(&path), survival, 120, 1, 11)[0];
    let alive_at_half_life = run[13].trees / 1000.0; // s^13 = 0.506
    assert!(
        (alive_at_half_life - 0.5).abs() < 0.05,
        "{alive_at_half_life}"
    );
    // Mean years lived after the start = Σ_t alive(t) / n, t ≥ 1 (discrete: s/(1−s) = 18.6).
    let mean_life = run.iter().skip(1).map(|f| f.trees).sum::<f64>() / 1000.0;
    assert!(
        (mean_life - life_expectancy_years(lo)).abs() < 1.5,
        "{mean_life} vs {}",
        life_expectancy_years(lo)
    );
}

/// The one-tree study of the hand-computed payback: a failing 30 cm tree (60 % dieback, condition
/// factor 0.42) kept, against one 5 cm tree of the same species planted in 2026.
fn one_tree_study(seed: u64) -> StudyInput {
    StudyInput {
        name: "one tree".to_string(),
        start_year: 2026,
        horizon_years: 40,
        seed,
        runs: 300,
        functional_limitation: 1.0,
        external_limitation: 1.0,
        removed: vec![RemovedTree {
            tree_id: 7,
            species_index: 0,
            site_kind: Some(SiteKind::Verge),
            latest: measured(30.0, 60.0),
        }],
        plans: vec![Plan {
            name: "one for one".to_string(),
            rows: vec![PlantingRow {
                species_index: 0,
                species: "Zelkova serrata".to_string(),
                count: 1,
                dbh_cm: 5.0,
                year: 2026,
            }],
        }],
    }
}

// Hand computation (Jenkins 2003 mixed hardwood, METHODS.md M2: C(d) = exp(−2.4800 + 2.4835 ln d) ×
// 0.8 × 1.26 × 0.5; M3 sequestration C(d + Δd) − C(d)):
//   kept: d = 30 + 0.3276 t (0.78 × 0.42), planted: d = 5 + 0.78 t.
//   t = 19 (2045): kept 7.1035, planted 7.0691 kg C/yr — not yet;
//   t = 20 (2046): kept 7.1986, planted 7.4776 kg C/yr — payback year 2046 with no mortality.
//   With the central M11 mortality (kept × 0.975^t; planted × 0.95^min(t,5) × 0.975^(t−5)):
//   t = 22 (2048): kept 4.2340, planted 4.1845; t = 23 (2049): kept 4.1819, planted 4.2910 → 2049.
#[test]
fn one_tree_payback_year_matches_the_hand_computation() {
    let species = [hardwood()];
    let science = jenkins();
    let w = weather();
    let imp = imputer();
    let settings = StudySettings::default();
    // No mortality, through the projection functions.
    let setup = Setup {
        start_year: 2026,
        horizon_years: 40,
        imputer: &imp,
        weather: &w,
        science: &science,
        survival: Survival::none(),
        discount_rate: 0.02,
    };
    let input = one_tree_study(1);
    let kept = tree_path(
        &Cohort {
            species: &species[0],
            site_kind: None,
            count: 1,
            start: Start::Measured(input.removed[0].latest.clone()),
        },
        &setup,
    )
    .expect("kept");
    let planted = tree_path(
        &Cohort {
            species: &species[0],
            site_kind: None,
            count: 1,
            start: Start::Planted {
                year: 2026,
                dbh_cm: 5.0,
            },
        },
        &setup,
    )
    .expect("planted");
    let years = setup.years();
    let k = expected(&[kept], Survival::none(), 40);
    let p = expected(&[planted], Survival::none(), 40);
    let c_per_yr = |f: &streetwood::study::projection::Flows| f.co2e_seq_kg_yr / CO2_PER_C;
    assert_relative_eq!(c_per_yr(&k[19]), 7.1035, max_relative = 1e-4);
    assert_relative_eq!(c_per_yr(&p[19]), 7.0691, max_relative = 1e-4);
    assert_relative_eq!(c_per_yr(&k[20]), 7.1986, max_relative = 1e-4);
    assert_relative_eq!(c_per_yr(&p[20]), 7.4776, max_relative = 1e-4);
    assert_eq!(
        payback_year(Benefit::Co2eSequestered, &years, &k, &p),
        Some(2046)
    );

    // Central M11 mortality, through the whole study.
    let env = StudyEnv {
        species: &species,
        imputer: &imp,
        weather: &w,
        science: &science,
        settings: &settings,
        scenario: SurvivalScenario::Central,
    };
    let outcome = run_study(&input, &env, Mode::Expected).expect("study");
    let plan = &outcome.plans[0];
    let co2 = plan
        .paybacks
        .iter()
        .find(|p| p.benefit == Benefit::Co2eSequestered)
        .expect("a CO2e payback");
    assert_eq!(co2.year, Some(2049));
    assert_relative_eq!(
        c_per_yr(&outcome.kept.central[23]),
        4.1819,
        max_relative = 1e-4
    );
    assert_relative_eq!(
        c_per_yr(&plan.planted.central[23]),
        4.2910,
        max_relative = 1e-4
    );
    // Stored carbon: 5 + 0.78 t never reaches 30 + 0.3276 t within 40 years (t ≥ 56 without
    // mortality), so that payback is "not within horizon".
    let stock = plan
        .paybacks
        .iter()
        .find(|p| p.benefit == Benefit::CarbonStored)
        .expect("a stock payback");
    assert_eq!(stock.year, None);
    // The cumulative CO2e deficit at the end is the difference of the horizon sums.
    let last = plan.deficit.last().expect("deficit rows");
    assert_relative_eq!(
        last.co2e_seq_cum_kg,
        outcome.kept.totals.co2e_seq_kg - plan.planted.totals.co2e_seq_kg,
        max_relative = 1e-9
    );
    // Discounting at 2 %: year index i is divided by 1.02^i (common practice, end of period).
    for (i, f) in outcome.kept.central.iter().enumerate() {
        assert_relative_eq!(
            f.value_discounted,
            f.value / 1.02f64.powi(i as i32),
            max_relative = 1e-12
        );
    }
    // Removal: 80 % of the stored CO2e released within 10 years (setting), appraisal by M12 at the
    // start-year DBH (30 cm, measured 2026): π 30²/4 × 4.388 × 0.15 (failing crown).
    let r = &outcome.removal;
    assert_relative_eq!(
        r.stored_co2e_kg,
        r.stored_carbon_kg * CO2_PER_C,
        max_relative = 1e-12
    );
    assert_relative_eq!(
        r.released_co2e_kg_10y,
        0.8 * r.stored_co2e_kg,
        max_relative = 1e-12
    );
    assert_relative_eq!(
        r.appraisal_total,
        std::f64::consts::PI * 900.0 / 4.0 * 4.388 * 0.15,
        max_relative = 1e-12
    );
}

// Check: the seed stored with a study makes a Monte Carlo rerun identical, to the last bit and in
// its JSON; another seed gives other runs; and the run means agree with the expected values.
#[test]
fn same_seed_same_output_and_monte_carlo_mean_near_expected() {
    let species = [hardwood()];
    let science = jenkins();
    let w = weather();
    let imp = imputer();
    let settings = StudySettings::default();
    let env = StudyEnv {
        species: &species,
        imputer: &imp,
        weather: &w,
        science: &science,
        settings: &settings,
        scenario: SurvivalScenario::Pessimistic,
    };
    let mut input = one_tree_study(42);
    input.plans[0].rows[0].count = 5;
    let a = run_study(&input, &env, Mode::MonteCarlo).expect("run a");
    let b = run_study(&input, &env, Mode::MonteCarlo).expect("run b");
    assert_eq!(a, b);
    assert_eq!(
        serde_json::to_string(&a).expect("json"),
        serde_json::to_string(&b).expect("json")
    );
    let other = run_study(&one_tree_study(43), &env, Mode::MonteCarlo).expect("run c");
    assert_ne!(a.kept.runs, other.kept.runs);
    assert!(a.kept.bands.is_some() && a.plans[0].deficit_bands.is_some());
    let bands = a.plans[0].planted.bands.as_ref().expect("bands");
    assert!(
        bands
            .iter()
            .all(|b| b.value.p10 <= b.value.p50 && b.value.p50 <= b.value.p90)
    );
    // 300 runs of 5 planted trees: the mean count alive in the last year is within 3 SE of expected.
    let e = run_study(&input, &env, Mode::Expected).expect("expected");
    let exp_trees = e.plans[0].planted.central[39].trees;
    let p = exp_trees / 5.0;
    let se = (5.0 * p * (1.0 - p) / 300.0).sqrt();
    let mc_trees = a.plans[0].planted.central[39].trees;
    assert!(
        (mc_trees - exp_trees).abs() <= 3.0 * se,
        "{mc_trees} vs {exp_trees}"
    );
}

#[test]
fn invalid_studies_are_refused_with_the_field_named() {
    let species = [hardwood()];
    let science = jenkins();
    let w = weather();
    let imp = imputer();
    let settings = StudySettings::default();
    let env = StudyEnv {
        species: &species,
        imputer: &imp,
        weather: &w,
        science: &science,
        settings: &settings,
        scenario: SurvivalScenario::Central,
    };
    let mut late = one_tree_study(1);
    late.plans[0].rows[0].year = 2070;
    let err = run_study(&late, &env, Mode::Expected).expect_err("planting after the horizon");
    assert!(
        err.to_string()
            .contains("planting year 2070 is outside the study's years 2026–2065"),
        "{err}"
    );
    let mut empty = one_tree_study(1);
    empty.removed.clear();
    let err = run_study(&empty, &env, Mode::Expected).expect_err("no trees");
    assert!(err.to_string().contains("has no trees"), "{err}");
}
