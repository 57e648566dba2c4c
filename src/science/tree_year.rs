//! One tree, one year: the normative per-tree computation of METHODS.md M13 (what `benefits --year Y`
//! reports), with the chain of steps behind every number for the tree card.

use chrono::{Datelike, NaiveDate};
use serde::{Deserialize, Serialize};

use super::biomass::{Allometry, BiomassGroups, BiomassMethod, co2e_kg};
use super::condition::ConditionWord;
use super::cooling::{
    KD_SINGLE_TREE, ac_equivalent_kwh_e, cooling_kwh, landscape_coefficient, species_factor,
    transpiration_litres,
};
use super::dimensions::{
    DimensionSource, Imputer, crown_height_m, crown_projection_area_m2, mean_crown_width_m,
};
use super::growth::{
    DbhAt, Growth, GrowthSource, ObservedGrowth, annual_growth, model_growth_cm_per_yr,
    observed_growth,
};
use super::interception::{GashCanopy, depth_to_m3};
use super::kinds::{LeafHabit, SiteKind, TreeStatus, WaterUse};
use super::leaf_area::{effective_lai, leaf_area_m2};
use super::money::{FlowValue, Prices, flow_value};
use super::settings::ScienceSettings;
use super::weather::YearWeather;

/// The species parameters the engine needs (one per species, shared by its trees).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SpeciesParams {
    /// Species key: the botanical name (imputation groups by it).
    pub key: String,
    pub genus: String,
    pub leaf_habit: LeafHabit,
    /// Jenkins 2003 and Chojnacky 2014 groups (the SG class is part of the Chojnacky group; see
    /// [`super::biomass::choose_chojnacky_group`]).
    pub biomass: BiomassGroups,
    /// Leaf area index of an open-grown crown (M4).
    pub lai: f64,
    pub water_use: WaterUse,
    /// Base DBH growth, cm/yr (M3).
    pub growth_cm_per_yr: f64,
}

/// One measurement of a tree (DESIGN.md `measurements`), SI units.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Measurement {
    pub measured_on: NaiveDate,
    /// Each stem's DBH at 1.37 m, cm.
    pub stems_cm: Vec<f64>,
    pub height_m: Option<f64>,
    /// First crown spread, m.
    pub crown_width_m: Option<f64>,
    /// Second (perpendicular) crown spread, m.
    pub crown_width2_m: Option<f64>,
    pub crown_base_m: Option<f64>,
    pub dieback_pct: Option<f64>,
    pub condition: Option<ConditionWord>,
}

impl Measurement {
    /// Equivalent DBH √Σd² of the usable (positive, finite) stems (METHODS.md M1) [common practice].
    pub fn dbh_cm(&self) -> f64 {
        equivalent_dbh_cm(&self.stems_cm)
    }
}

/// Equivalent DBH √Σd² (cm) of the usable (positive, finite) stems (METHODS.md M1) [common practice].
pub fn equivalent_dbh_cm(stems_cm: &[f64]) -> f64 {
    stems_cm
        .iter()
        .filter(|d| d.is_finite() && **d > 0.0)
        .map(|d| d * d)
        .sum::<f64>()
        .sqrt()
}

/// One tree as the engine sees it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TreeInput<'a> {
    pub species: &'a SpeciesParams,
    /// Missing → verge (M13 step 2).
    pub site_kind: Option<SiteKind>,
    pub status: TreeStatus,
    /// Every measurement of the tree, in any order.
    pub measurements: &'a [Measurement],
}

/// What one run shares across all trees: computed once, not per tree.
#[derive(Debug, Clone, PartialEq)]
pub struct YearContext<'a> {
    pub year: i32,
    pub imputer: &'a Imputer,
    pub weather: &'a YearWeather,
    pub settings: &'a ScienceSettings,
    pub prices: Prices,
}

impl<'a> YearContext<'a> {
    /// The context of the weather's year, with that year's prices.
    pub fn new(
        imputer: &'a Imputer,
        weather: &'a YearWeather,
        settings: &'a ScienceSettings,
    ) -> Self {
        YearContext {
            year: weather.year,
            imputer,
            weather,
            settings,
            prices: Prices::for_year(settings, weather.year),
        }
    }
}

/// Why a tree has no benefits row for the year.
#[derive(Debug, Clone, Copy, PartialEq, Eq, thiserror::Error)]
pub enum Skip {
    #[error("the tree is {0}, not standing")]
    NotStanding(TreeStatus),
    #[error("the tree has no measurement with a DBH dated in or before {0}")]
    NoMeasurement(i32),
}

/// Where the dieback came from (M13 step 3).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum DiebackSource {
    Measured,
    ConditionWord,
    /// Neither a percentage nor a condition word: taken as 0 % [derived choice].
    Assumed,
}

/// A tree's benefits for one year: the `benefits` columns of DESIGN.md, the flags, and the detail
/// behind them (for [`TreeBenefits::explain`]).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TreeBenefits {
    pub year: i32,
    pub dbh_cm: f64,
    pub height_m: Option<f64>,
    /// Mean crown width W.
    pub crown_width_m: Option<f64>,
    pub leaf_area_m2: f64,
    /// Whole-tree dry biomass (AGB × 0.8 × 1.26).
    pub biomass_kg: f64,
    pub carbon_kg: f64,
    pub co2e_kg: f64,
    pub co2e_seq_kg_yr: f64,
    pub interception_m3_yr: f64,
    pub transpiration_m3_yr: f64,
    pub cooling_kwh_yr: f64,
    /// Money value of the year's flows (M13 step 10), in the prices' currency.
    pub value: f64,
    pub height_estimated: bool,
    pub crown_width_estimated: bool,
    /// No crown width measured or imputable: crown-based benefits are 0.
    pub no_crown: bool,
    /// The observed DBH increment was implausible: re-measure.
    pub remeasure: bool,
    pub dead: bool,
    pub detail: TreeYearDetail,
}

/// Intermediate values of the computation.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TreeYearDetail {
    pub measured_on: NaiveDate,
    pub stem_count: usize,
    pub height_source: Option<DimensionSource>,
    pub crown_width_source: Option<DimensionSource>,
    pub cpa_m2: f64,
    pub crown_height_m: Option<f64>,
    pub dieback_pct: f64,
    pub dieback_source: DiebackSource,
    pub site_kind: SiteKind,
    pub leaf_habit: LeafHabit,
    pub biomass_method: BiomassMethod,
    pub biomass_group: &'static str,
    pub allometry: Allometry,
    pub agb_kg: f64,
    pub observed: ObservedGrowth,
    pub growth: Growth,
    /// Frost-free days used to scale growth, when the setting is on.
    pub frost_free_days: Option<u32>,
    pub lai_effective: f64,
    /// The leaf-on canopy of the Gash model (M5): cover c, storage S, and the rain P′g that fills it.
    pub canopy: GashCanopy,
    pub saturating_rain_mm: f64,
    /// Leaf-on days of the year (all days for evergreens) and the rain days counted.
    pub leaf_on_days: u32,
    pub rain_days: u32,
    pub interception_mm: f64,
    pub et0_sum_mm: f64,
    pub ks: f64,
    pub kmc: f64,
    pub kl: f64,
    pub transpiration_l: f64,
    pub ac_kwh_e: f64,
    pub flow_value: FlowValue,
    pub co2_price_per_t: f64,
    pub water_price_per_m3: f64,
    pub electricity_price_per_kwh: f64,
    pub cooling_value_share: f64,
    pub cop: f64,
}

/// One step of the chain shown on the tree card.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ExplainStep {
    pub label: String,
    pub value: f64,
    pub unit: String,
    /// Published source (as METHODS.md names it) with its flag.
    pub source: &'static str,
}

const SRC_DBH: &str = "equivalent DBH sqrt(sum d^2) [common practice] (METHODS.md M1)";
const SRC_IMPUTE: &str =
    "median ratio to DBH: species, genus, all trees [common practice] (METHODS.md M3)";
const SRC_MEASURED: &str = "field measurement";
const SRC_CPA: &str =
    "CPA = pi W^2/4, Lindsey & Bassuk 1991, J. Arboric. 17(6):141-149 [published]";
const SRC_HC: &str =
    "height - crown base; missing base -> 0.5 x height [common practice] (METHODS.md M1)";
const SRC_DIEBACK: &str =
    "measured dieback, or condition word good 5 / fair 18 / poor 38 / dead 100 % (METHODS.md M3)";
const SRC_URBAN: &str = "x 0.8 open-grown (Nowak 1994, GTR NE-186) [from memory] x 1.26 roots (Cairns et al. 1997, Oecologia 111:1-11) [published]";
const SRC_CARBON: &str = "carbon = 0.5 x dry biomass [common practice]";
const SRC_CO2E: &str = "CO2e = C x 44.009/12.011 (IUPAC standard atomic weights) [published]";
const SRC_GROWTH_OBS: &str =
    "tree's own mean annual increment, >= 2 years, 0-3 cm/yr [common practice] (METHODS.md M3)";
const SRC_GROWTH_MODEL: &str = "species rate (Mailloux et al. 2024; Smith, Dearborn & Hutyra 2019) x condition factor (Nowak et al. 2013) [from memory]";
const SRC_SEQ: &str = "C(d + dd) - C(d) (method of Nowak et al. 2013) [from memory]";
const SRC_LA: &str = "LA = CPA x LAI x (1 - dieback); LAI 4 broadleaf (Lindsey & Bassuk 1991) [published], 5 conifer [assumed]";
const SRC_GASH: &str = "revised Gash model (Gash, Lloyd & Lachaud 1995, J. Hydrol. 170:79-86), c = 1 - exp(-0.5 LAI), S = 0.2 mm x LAI [published method; equations from memory]";
const SRC_SEASON: &str = "leaf-on strictly between the last spring and first autumn frost (Tmin < 0 C) [common practice] (METHODS.md M5)";
const SRC_ET0: &str = "FAO-56 Penman-Monteith (Allen et al. 1998) [published]; leaf-on = frost-free period [common practice]";
const SRC_KL: &str = "KL = ks x kd x kmc (Costello et al. 2000, WUCOLS) [published method]";
const SRC_TRANSP: &str = "sum ET0 x KL x CPA x (1 - dieback) (METHODS.md M7)";
const SRC_COOL: &str = "water x 2.45 MJ/kg (FAO-56) / 3.6 [published]";
const SRC_AC: &str = "cooling kWh / COP (an equivalence, not metered savings) [common practice]";
const SRC_CO2_PRICE: &str = "US EPA 2023 social cost of carbon, 2 % discount, 2020 $ [published, via secondary copy] (setting)";
const SRC_WATER_PRICE: &str =
    "USDA FS community tree guides, $0.008936/gal [published via secondary copy] (setting)";
const SRC_ELEC_PRICE: &str = "US EIA residential average 2023-24 [published] (setting)";
const SRC_VALUE: &str = "CO2e t x price + interception m3 x water price + AC kWh_e x electricity price x cooling share (METHODS.md M13 step 10)";

/// Computes one tree's benefits for the context's year, in the normative order of METHODS.md M13.
pub fn tree_year(tree: &TreeInput<'_>, ctx: &YearContext<'_>) -> Result<TreeBenefits, Skip> {
    let settings = ctx.settings;
    let species = tree.species;
    // 1. Standing trees only; measurements dated in or before Y with a usable DBH; latest is "now".
    if tree.status != TreeStatus::Standing {
        return Err(Skip::NotStanding(tree.status));
    }
    let mut usable = tree
        .measurements
        .iter()
        .filter(|m| m.measured_on.year() <= ctx.year && m.dbh_cm() > 0.0);
    let first = usable.next().ok_or(Skip::NoMeasurement(ctx.year))?;
    let (earliest, latest) = usable.fold((first, first), |(lo, hi), m| {
        (
            if m.measured_on < lo.measured_on {
                m
            } else {
                lo
            },
            if m.measured_on >= hi.measured_on {
                m
            } else {
                hi
            },
        )
    });
    let d = latest.dbh_cm();

    // 2. Height and crown width, imputed when missing; W, CPA, Hc; site kind.
    let height = ctx
        .imputer
        .height_m(&species.key, &species.genus, d, latest.height_m);
    let measured_w = mean_crown_width_m(latest.crown_width_m, latest.crown_width2_m);
    let width = ctx
        .imputer
        .crown_width_m(&species.key, &species.genus, d, measured_w);
    let cpa = width.map_or(0.0, |w| crown_projection_area_m2(w.value));
    let crown_height = height.map(|h| crown_height_m(h.value, latest.crown_base_m));
    let site_kind = tree.site_kind.unwrap_or_default();

    // 3. Dieback; dead = 100 %.
    let (dieback, dieback_source) = match (
        latest.dieback_pct.filter(|p| p.is_finite()),
        latest.condition,
    ) {
        (Some(p), _) => (p.clamp(0.0, 100.0), DiebackSource::Measured),
        (None, Some(word)) => (word.dieback_pct(), DiebackSource::ConditionWord),
        (None, None) => (0.0, DiebackSource::Assumed),
    };
    let dead = dieback >= 100.0;

    // 4. Carbon.
    let method = settings.biomass_method;
    let allometry = species.biomass.allometry(method);
    let agb = allometry.agb_kg(d);
    let biomass = super::biomass::whole_tree_biomass_kg(agb);
    let carbon = super::biomass::carbon_kg(biomass);
    let co2e = co2e_kg(carbon);

    // 5. Growth and sequestration.
    let observed = observed_growth(
        DbhAt {
            date: earliest.measured_on,
            dbh_cm: earliest.dbh_cm(),
        },
        DbhAt {
            date: latest.measured_on,
            dbh_cm: d,
        },
    );
    let frost_free_days = settings
        .growth_frost_free_scaling
        .then_some(ctx.weather.frost_free_days);
    let model = model_growth_cm_per_yr(
        species.growth_cm_per_yr,
        dieback,
        frost_free_days.map(f64::from),
    );
    let growth = annual_growth(dead, observed, settings.observed_growth, model);
    let co2e_seq = co2e_kg(allometry.carbon_kg(d + growth.dbh_cm_per_yr) - carbon);

    // 6. Leaf area.
    let la = leaf_area_m2(cpa, species.lai, dieback);
    let lai = effective_lai(la, cpa);

    // 7–8. Weather (prepared once per year) and interception: the year's rain days are sorted into
    // tables once, so this is the day-by-day Gash sum at the cost of a binary search (M5).
    let interception_mm =
        ctx.weather
            .rain
            .annual_interception_mm(lai, species.leaf_habit, settings);
    let interception_m3 = depth_to_m3(interception_mm, cpa);
    let canopy = GashCanopy::leaf_on(lai, settings);
    let leaf_on_days = match species.leaf_habit {
        LeafHabit::Evergreen => ctx.weather.days.len() as u32,
        LeafHabit::Deciduous => ctx.weather.frost_free_days,
    };

    // 9. Transpiration and cooling.
    let ks = species_factor(species.water_use);
    let kmc = settings.kmc(site_kind);
    let kl = landscape_coefficient(ks, KD_SINGLE_TREE, kmc);
    let et0_sum = ctx.weather.et0_sum_mm(species.leaf_habit);
    let litres = transpiration_litres(et0_sum, kl, cpa, dieback);
    let cooling = cooling_kwh(litres);
    let ac_kwh_e = ac_equivalent_kwh_e(cooling, settings.cop);

    // 10. Value of the year's flows.
    let value = flow_value(co2e_seq, interception_m3, cooling, &ctx.prices);

    Ok(TreeBenefits {
        year: ctx.year,
        dbh_cm: d,
        height_m: height.map(|h| h.value),
        crown_width_m: width.map(|w| w.value),
        leaf_area_m2: la,
        biomass_kg: biomass,
        carbon_kg: carbon,
        co2e_kg: co2e,
        co2e_seq_kg_yr: co2e_seq,
        interception_m3_yr: interception_m3,
        transpiration_m3_yr: litres / 1000.0,
        cooling_kwh_yr: cooling,
        value: value.total,
        height_estimated: height.is_some_and(|h| h.estimated()),
        crown_width_estimated: width.is_some_and(|w| w.estimated()),
        no_crown: width.is_none(),
        remeasure: growth.remeasure,
        dead,
        detail: TreeYearDetail {
            measured_on: latest.measured_on,
            stem_count: latest
                .stems_cm
                .iter()
                .filter(|s| s.is_finite() && **s > 0.0)
                .count(),
            height_source: height.map(|h| h.source),
            crown_width_source: width.map(|w| w.source),
            cpa_m2: cpa,
            crown_height_m: crown_height,
            dieback_pct: dieback,
            dieback_source,
            site_kind,
            leaf_habit: species.leaf_habit,
            biomass_method: method,
            biomass_group: species.biomass.group_name(method),
            allometry,
            agb_kg: agb,
            observed,
            growth,
            frost_free_days,
            lai_effective: lai,
            canopy,
            saturating_rain_mm: canopy.saturating_rain_mm(),
            leaf_on_days,
            rain_days: ctx.weather.rain_days.len() as u32,
            interception_mm,
            et0_sum_mm: et0_sum,
            ks,
            kmc,
            kl,
            transpiration_l: litres,
            ac_kwh_e,
            flow_value: value,
            co2_price_per_t: ctx.prices.co2_per_t,
            water_price_per_m3: ctx.prices.water_per_m3,
            electricity_price_per_kwh: ctx.prices.electricity_per_kwh,
            cooling_value_share: ctx.prices.cooling_value_share,
            cop: ctx.prices.cop,
        },
    })
}

impl TreeBenefits {
    /// The chain of steps behind the numbers, in M13 order, each with its value, unit and source.
    /// `currency` labels the money steps (the prices' currency).
    pub fn explain(&self, currency: &str) -> Vec<ExplainStep> {
        let x = &self.detail;
        let mut steps = Vec::with_capacity(32);
        let mut push = |label: String, value: f64, unit: &str, source: &'static str| {
            steps.push(ExplainStep {
                label,
                value,
                unit: unit.to_string(),
                source,
            });
        };
        let dim_source = |s: Option<DimensionSource>| match s {
            Some(DimensionSource::Measured) | None => SRC_MEASURED,
            Some(_) => SRC_IMPUTE,
        };
        push(
            format!(
                "DBH (equivalent, {} stem(s), measured {})",
                x.stem_count, x.measured_on
            ),
            self.dbh_cm,
            "cm",
            SRC_DBH,
        );
        if let Some(h) = self.height_m {
            let how = x
                .height_source
                .map_or("measured", DimensionSource::describe);
            push(
                format!("Height ({how})"),
                h,
                "m",
                dim_source(x.height_source),
            );
        }
        match self.crown_width_m {
            Some(w) => {
                let how = x
                    .crown_width_source
                    .map_or("measured", DimensionSource::describe);
                push(
                    format!("Mean crown width ({how})"),
                    w,
                    "m",
                    dim_source(x.crown_width_source),
                );
            }
            None => push(
                "No crown width measured or imputable: crown-based benefits are 0".to_string(),
                0.0,
                "m",
                SRC_IMPUTE,
            ),
        }
        push("Crown projection area".to_string(), x.cpa_m2, "m2", SRC_CPA);
        if let Some(hc) = x.crown_height_m {
            push("Crown height".to_string(), hc, "m", SRC_HC);
        }
        let dieback_how = match x.dieback_source {
            DiebackSource::Measured => "measured",
            DiebackSource::ConditionWord => "from the condition word",
            DiebackSource::Assumed => "not recorded, taken as 0",
        };
        push(
            format!("Crown dieback ({dieback_how})"),
            x.dieback_pct,
            "%",
            SRC_DIEBACK,
        );
        push(
            format!(
                "Aboveground biomass, group '{}': exp({} + {} ln d)",
                x.biomass_group, x.allometry.b0, x.allometry.b1
            ),
            x.agb_kg,
            "kg",
            x.biomass_method.citation(),
        );
        push(
            "Whole-tree dry biomass (urban, with roots)".to_string(),
            self.biomass_kg,
            "kg",
            SRC_URBAN,
        );
        push(
            "Stored carbon".to_string(),
            self.carbon_kg,
            "kg C",
            SRC_CARBON,
        );
        push(
            "Stored CO2 equivalent".to_string(),
            self.co2e_kg,
            "kg CO2e",
            SRC_CO2E,
        );
        let (growth_label, growth_source) = match x.growth.source {
            GrowthSource::Observed => ("DBH growth (observed on this tree)", SRC_GROWTH_OBS),
            GrowthSource::Model if x.growth.remeasure => (
                "DBH growth (model; observed increment implausible, re-measure)",
                SRC_GROWTH_MODEL,
            ),
            GrowthSource::Model => ("DBH growth (species rate x condition)", SRC_GROWTH_MODEL),
            GrowthSource::Dead => ("DBH growth (dead tree)", SRC_GROWTH_MODEL),
        };
        push(
            growth_label.to_string(),
            x.growth.dbh_cm_per_yr,
            "cm/yr",
            growth_source,
        );
        if let Some(days) = x.frost_free_days {
            push(
                "Frost-free days (growth x days / 153, Nowak et al. 2013)".to_string(),
                f64::from(days),
                "days",
                SRC_GROWTH_MODEL,
            );
        }
        push(
            "CO2 sequestered this year".to_string(),
            self.co2e_seq_kg_yr,
            "kg CO2e/yr",
            SRC_SEQ,
        );
        push("Leaf area".to_string(), self.leaf_area_m2, "m2", SRC_LA);
        push(
            "Effective leaf area index".to_string(),
            x.lai_effective,
            "m2/m2",
            SRC_LA,
        );
        push(
            "Leaf-on days (frost-free season; evergreens all year)".to_string(),
            f64::from(x.leaf_on_days),
            "days",
            SRC_SEASON,
        );
        push(
            "Rain days (one storm each)".to_string(),
            f64::from(x.rain_days),
            "days",
            SRC_GASH,
        );
        push(
            "Canopy cover c = 1 - exp(-0.5 LAI)".to_string(),
            x.canopy.cover,
            "",
            SRC_GASH,
        );
        push(
            "Canopy storage S = s_leaf x LAI".to_string(),
            x.canopy.storage_mm,
            "mm",
            SRC_GASH,
        );
        push(
            "Rain that saturates the canopy P'g".to_string(),
            x.saturating_rain_mm,
            "mm",
            SRC_GASH,
        );
        push(
            "Rain intercepted per m2 of crown".to_string(),
            x.interception_mm,
            "mm/yr",
            SRC_GASH,
        );
        push(
            "Rain intercepted".to_string(),
            self.interception_m3_yr,
            "m3/yr",
            SRC_GASH,
        );
        let season = match x.leaf_habit {
            LeafHabit::Evergreen => "all days",
            LeafHabit::Deciduous => "leaf-on days",
        };
        push(
            format!("Reference ET0 summed over {season}"),
            x.et0_sum_mm,
            "mm/yr",
            SRC_ET0,
        );
        push(
            format!(
                "Landscape coefficient KL (ks {} x kd 1.0 x kmc {} for {})",
                x.ks, x.kmc, x.site_kind
            ),
            x.kl,
            "",
            SRC_KL,
        );
        push(
            "Water transpired".to_string(),
            self.transpiration_m3_yr,
            "m3/yr",
            SRC_TRANSP,
        );
        push(
            "Latent heat carried away".to_string(),
            self.cooling_kwh_yr,
            "kWh/yr",
            SRC_COOL,
        );
        push(
            format!("Air-conditioning equivalent (COP {})", x.cop),
            x.ac_kwh_e,
            "kWh_e/yr",
            SRC_AC,
        );
        push(
            format!("CO2 price {}", self.year),
            x.co2_price_per_t,
            &format!("{currency}/t CO2e"),
            SRC_CO2_PRICE,
        );
        push(
            "Water price".to_string(),
            x.water_price_per_m3,
            &format!("{currency}/m3"),
            SRC_WATER_PRICE,
        );
        push(
            format!(
                "Electricity price (share counted {})",
                x.cooling_value_share
            ),
            x.electricity_price_per_kwh,
            &format!("{currency}/kWh"),
            SRC_ELEC_PRICE,
        );
        push(
            "Value: carbon sequestered".to_string(),
            x.flow_value.carbon,
            currency,
            SRC_VALUE,
        );
        push(
            "Value: rain intercepted".to_string(),
            x.flow_value.stormwater,
            currency,
            SRC_VALUE,
        );
        push(
            "Value: cooling".to_string(),
            x.flow_value.energy,
            currency,
            SRC_VALUE,
        );
        push(
            format!("Value of the year's flows ({})", self.year),
            self.value,
            currency,
            SRC_VALUE,
        );
        steps
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::science::biomass::{ChojnackyGroup, JenkinsGroup};
    use crate::science::dimensions::ImputerRow;
    use crate::science::weather::{Station, WeatherDay};
    use approx::assert_relative_eq;

    fn ymd(y: i32, m: u32, d: u32) -> NaiveDate {
        NaiveDate::from_ymd_opt(y, m, d).unwrap_or_default()
    }

    fn species(growth: f64) -> SpeciesParams {
        SpeciesParams {
            key: "Platanus x hispanica".to_string(),
            genus: "Platanus".to_string(),
            leaf_habit: LeafHabit::Deciduous,
            biomass: BiomassGroups {
                jenkins: JenkinsGroup::MixedHardwood,
                chojnacky: ChojnackyGroup::CornaceaeEtc,
            },
            lai: 4.0,
            water_use: WaterUse::Moderate,
            growth_cm_per_yr: growth,
        }
    }

    fn measurement(date: NaiveDate, dbh: f64) -> Measurement {
        Measurement {
            measured_on: date,
            stems_cm: vec![dbh],
            height_m: Some(14.0),
            crown_width_m: Some(9.0),
            crown_width2_m: Some(7.0),
            crown_base_m: Some(3.0),
            dieback_pct: Some(0.0),
            condition: None,
        }
    }

    /// A mid-latitude year: frost until 31 Mar and from 1 Nov, rain every fourth day.
    fn year_weather(year: i32) -> YearWeather {
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
            date = date.succ_opt().unwrap_or(date);
        }
        let station = Station {
            lat_deg: 45.0,
            elevation_m: 100.0,
            coastal: false,
        };
        YearWeather::compute(year, &station, &days, &ScienceSettings::default())
    }

    fn jenkins() -> ScienceSettings {
        ScienceSettings {
            biomass_method: BiomassMethod::Jenkins2003,
            ..ScienceSettings::default()
        }
    }

    fn run(
        sp: &SpeciesParams,
        ms: &[Measurement],
        settings: &ScienceSettings,
        imputer: &Imputer,
    ) -> Result<TreeBenefits, Skip> {
        let weather = year_weather(2025);
        let ctx = YearContext::new(imputer, &weather, settings);
        let tree = TreeInput {
            species: sp,
            site_kind: None,
            status: TreeStatus::Standing,
            measurements: ms,
        };
        tree_year(&tree, &ctx)
    }

    // Outside check: METHODS.md M2/M3 chain [derived from published Jenkins 2003 β]: mixed hardwood,
    // 30 cm → 390.28 × 0.8 × 1.26 = 393.40 kg biomass, 196.70 kg C, 720.7 kg CO2e; Δd 0.87 → 14.47
    // kg C/yr; value = CO2e t × EPA 2023 price for 2025 ($210/t) + m³ × $2.36.
    #[test]
    fn full_chain_matches_worked_values() {
        let sp = species(0.87);
        let settings = jenkins();
        let imputer = Imputer::default();
        let b = match run(
            &sp,
            &[measurement(ymd(2024, 6, 1), 30.0)],
            &settings,
            &imputer,
        ) {
            Ok(b) => b,
            Err(e) => panic!("{e}"),
        };
        assert_relative_eq!(b.dbh_cm, 30.0);
        assert_relative_eq!(b.biomass_kg, 393.40, max_relative = 1e-4);
        assert_relative_eq!(b.carbon_kg, 196.70, max_relative = 1e-4);
        assert_relative_eq!(b.co2e_kg, 720.7, max_relative = 1e-4);
        assert_relative_eq!(
            b.co2e_seq_kg_yr,
            14.47 * 44.009 / 12.011,
            max_relative = 5e-4
        );
        assert_eq!(b.crown_width_m, Some(8.0));
        assert_relative_eq!(
            b.detail.cpa_m2,
            16.0 * std::f64::consts::PI,
            max_relative = 1e-12
        );
        assert_eq!(b.detail.crown_height_m, Some(11.0));
        assert_relative_eq!(b.leaf_area_m2, 4.0 * b.detail.cpa_m2, max_relative = 1e-12);
        // Stormwater and transpiration are the yearly depths over the crown projection.
        assert_relative_eq!(
            b.interception_m3_yr,
            b.detail.interception_mm * b.detail.cpa_m2 / 1000.0
        );
        let weather = year_weather(2025);
        assert_relative_eq!(
            b.transpiration_m3_yr,
            weather.et0_leaf_on_mm * 0.5 * 1.0 * b.detail.cpa_m2 / 1000.0,
            max_relative = 1e-12
        );
        assert_relative_eq!(
            b.cooling_kwh_yr,
            b.transpiration_m3_yr * 1000.0 * 2.45 / 3.6,
            max_relative = 1e-12
        );
        let want = b.co2e_seq_kg_yr / 1000.0 * 210.0 + b.interception_m3_yr * 2.36;
        assert_relative_eq!(b.value, want, max_relative = 1e-12);
        assert!(!b.height_estimated && !b.crown_width_estimated && !b.no_crown && !b.remeasure);
        // Rain fraction intercepted over the year is within the measured 10–35 % of Xiao et al. 2000.
        let fraction = b.detail.interception_mm / weather.precip_mm;
        assert!((0.10..=0.35).contains(&fraction), "{fraction}");
    }

    // Check: M13 step 1 — only standing trees, only measurements dated in or before Y.
    #[test]
    fn skips_and_ignores_future_measurements() {
        let sp = species(0.78);
        let settings = ScienceSettings::default();
        let imputer = Imputer::default();
        let ms = [
            measurement(ymd(2024, 6, 1), 30.0),
            measurement(ymd(2026, 6, 1), 34.0),
        ];
        let b = run(&sp, &ms, &settings, &imputer).map(|b| b.dbh_cm);
        assert_eq!(b, Ok(30.0));
        let late = [measurement(ymd(2026, 6, 1), 34.0)];
        assert_eq!(
            run(&sp, &late, &settings, &imputer),
            Err(Skip::NoMeasurement(2025))
        );
        let weather = year_weather(2025);
        let ctx = YearContext::new(&imputer, &weather, &settings);
        let removed = TreeInput {
            species: &sp,
            site_kind: None,
            status: TreeStatus::Removed,
            measurements: &ms,
        };
        assert_eq!(
            tree_year(&removed, &ctx),
            Err(Skip::NotStanding(TreeStatus::Removed))
        );
    }

    // Check: METHODS.md M2/M4/M13 — dead standing trees keep carbon, sequester nothing, have no
    // leaf area and so no crown flows.
    #[test]
    fn dead_tree_keeps_carbon_only() {
        let sp = species(0.78);
        let imputer = Imputer::default();
        let mut m = measurement(ymd(2024, 6, 1), 30.0);
        m.dieback_pct = None;
        m.condition = Some(ConditionWord::Dead);
        let b = match run(&sp, &[m], &jenkins(), &imputer) {
            Ok(b) => b,
            Err(e) => panic!("{e}"),
        };
        assert!(b.dead);
        assert_relative_eq!(b.carbon_kg, 196.70, max_relative = 1e-4);
        assert_eq!(b.co2e_seq_kg_yr, 0.0);
        assert_eq!(b.leaf_area_m2, 0.0);
        assert_eq!(b.interception_m3_yr, 0.0);
        assert_eq!(b.transpiration_m3_yr, 0.0);
        assert_eq!(b.value, 0.0);
    }

    // Check: M3 imputation and the no_crown flag.
    #[test]
    fn imputed_dimensions_are_flagged() {
        let sp = species(0.78);
        let mut m = measurement(ymd(2024, 6, 1), 20.0);
        m.height_m = None;
        m.crown_width_m = None;
        m.crown_width2_m = None;
        let empty = Imputer::default();
        let b = run(
            &sp,
            std::slice::from_ref(&m),
            &ScienceSettings::default(),
            &empty,
        );
        let b = match b {
            Ok(b) => b,
            Err(e) => panic!("{e}"),
        };
        assert!(b.no_crown && b.height_m.is_none());
        assert_eq!(
            (b.leaf_area_m2, b.interception_m3_yr, b.transpiration_m3_yr),
            (0.0, 0.0, 0.0)
        );
        assert!(b.carbon_kg > 0.0);
        let imputer = Imputer::from_rows([ImputerRow {
            species_key: "Platanus x hispanica",
            genus: "Platanus",
            dbh_cm: 40.0,
            height_m: Some(16.0),
            crown_width_m: Some(10.0),
        }]);
        let b = match run(&sp, &[m], &ScienceSettings::default(), &imputer) {
            Ok(b) => b,
            Err(e) => panic!("{e}"),
        };
        assert!(b.height_estimated && b.crown_width_estimated && !b.no_crown);
        assert_relative_eq!(b.height_m.unwrap_or(0.0), 8.0);
        assert_relative_eq!(b.crown_width_m.unwrap_or(0.0), 5.0);
        assert!(b.interception_m3_yr > 0.0);
    }

    // Check: M13 step 5 — observed growth between earliest and latest; shrinking DBH → model rate
    // and `remeasure`.
    #[test]
    fn observed_growth_and_remeasure_flag() {
        let sp = species(0.78);
        let settings = jenkins();
        let imputer = Imputer::default();
        let grew = [
            measurement(ymd(2020, 6, 1), 26.0),
            measurement(ymd(2024, 6, 1), 30.0),
        ];
        let b = run(&sp, &grew, &settings, &imputer)
            .map(|b| (b.detail.growth.source, b.detail.growth.dbh_cm_per_yr));
        match b {
            Ok((GrowthSource::Observed, rate)) => {
                assert_relative_eq!(rate, 4.0 / (1461.0 / 365.25))
            }
            other => panic!("{other:?}"),
        }
        let shrank = [
            measurement(ymd(2020, 6, 1), 33.0),
            measurement(ymd(2024, 6, 1), 30.0),
        ];
        let b = match run(&sp, &shrank, &settings, &imputer) {
            Ok(b) => b,
            Err(e) => panic!("{e}"),
        };
        assert!(b.remeasure);
        assert_eq!(b.detail.growth.source, GrowthSource::Model);
        assert_relative_eq!(b.detail.growth.dbh_cm_per_yr, 0.78);
    }

    #[test]
    fn explain_lists_every_column_with_a_source() {
        let sp = species(0.78);
        let imputer = Imputer::default();
        let b = match run(
            &sp,
            &[measurement(ymd(2024, 6, 1), 30.0)],
            &ScienceSettings::default(),
            &imputer,
        ) {
            Ok(b) => b,
            Err(e) => panic!("{e}"),
        };
        let steps = b.explain("USD");
        assert!(steps.iter().all(|s| !s.source.is_empty()));
        for (column, value) in [
            ("DBH", b.dbh_cm),
            ("Stored carbon", b.carbon_kg),
            ("CO2 sequestered", b.co2e_seq_kg_yr),
            ("Rain intercepted", b.interception_m3_yr),
            ("Water transpired", b.transpiration_m3_yr),
            ("Latent heat", b.cooling_kwh_yr),
            ("Value of the year's flows", b.value),
        ] {
            assert!(
                steps
                    .iter()
                    .any(|s| s.label.starts_with(column) && s.value == value),
                "{column}"
            );
        }
        assert!(
            steps
                .iter()
                .any(|s| s.label.contains("Cornaceae") && s.source.contains("Chojnacky"))
        );
    }

    // Outside check: Nowak, Greenfield, Hoehn & Lapoint 2013 (Environ. Pollut. 178:229–236) — US urban
    // trees store 7.69 kg C and sequester 0.28 kg C per m² of tree cover a year [published]; a street-tree
    // population must lie within 0.3×–3× of these. Population: DBH 10–60 cm with crown width ≈ 0.25 m per
    // cm of DBH, a typical open-grown street-tree ratio [assumption for the test, from memory].
    #[test]
    fn population_density_within_nowak_2013_bounds() {
        let sp = species(0.78);
        let settings = ScienceSettings::default();
        let weather = year_weather(2025);
        let imputer = Imputer::default();
        let ctx = YearContext::new(&imputer, &weather, &settings);
        let (mut carbon, mut seq_c, mut cpa) = (0.0, 0.0, 0.0);
        for dbh in (10..=60).step_by(5) {
            let d = f64::from(dbh);
            let mut m = measurement(ymd(2024, 6, 1), d);
            m.crown_width_m = Some(0.25 * d);
            m.crown_width2_m = None;
            let ms = [m];
            let tree = TreeInput {
                species: &sp,
                site_kind: Some(SiteKind::Verge),
                status: TreeStatus::Standing,
                measurements: &ms,
            };
            let b = match tree_year(&tree, &ctx) {
                Ok(b) => b,
                Err(e) => panic!("{e}"),
            };
            carbon += b.carbon_kg;
            seq_c += b.co2e_seq_kg_yr * 12.011 / 44.009;
            cpa += b.detail.cpa_m2;
        }
        let stored = carbon / cpa / 7.69;
        let sequestered = seq_c / cpa / 0.28;
        assert!((0.3..=3.0).contains(&stored), "stored ratio {stored}");
        assert!(
            (0.3..=3.0).contains(&sequestered),
            "sequestration ratio {sequestered}"
        );
    }
}
