//! Pure science: allometry, growth, leaf area, interception, evapotranspiration, cooling, valuation,
//! units. No I/O, no SQL, no clock. Every public function cites its published source (METHODS.md).
//!
//! Data flow of one `benefits --year Y` run (METHODS.md M13):
//! - once per run: [`settings::ScienceSettings`] (from the settings table), a
//!   [`dimensions::Imputer`] (from every tree's latest measurement), a [`weather::YearWeather`]
//!   (daily ET0 by [`et0`], the leaf-on season, the rain days) and the year's [`money::Prices`];
//! - per tree: [`tree_year::tree_year`] → [`tree_year::TreeBenefits`], using [`dimensions`] (M1),
//!   [`biomass`] (M2), [`growth`] (M3), [`leaf_area`] (M4), [`interception`] (M5), [`cooling`] (M7)
//!   and [`money`] (M8).

pub mod biomass;
pub mod condition;
pub mod cooling;
pub mod dimensions;
pub mod et0;
pub mod growth;
pub mod interception;
pub mod inventory;
pub mod kinds;
pub mod leaf_area;
pub mod money;
pub mod settings;
pub mod tree_year;
pub mod units;
pub mod weather;

/// The methods behind every reported number and their sources, for report appendices (METHODS.md;
/// each flag as METHODS.md gives it).
pub const SOURCES: &[(&str, &str)] = &[
    (
        "Tree dimensions (M1)",
        "Equivalent DBH √Σd² [common practice]; crown projection area πW²/4 (Lindsey & Bassuk 1991, J. Arboric. 17(6):141–149) [published]; missing height and crown width imputed from the inventory's own median ratios to DBH [common practice].",
    ),
    (
        "Biomass and carbon (M2)",
        "Chojnacky, Heath & Jenkins 2014, Forestry 87(1):129–151, Table 5 [published] (or Jenkins et al. 2003, Forest Science 49(1):12–35); open-grown urban trees × 0.8 (Nowak 1994, GTR NE-186) [from memory]; roots × 1.26 (Cairns et al. 1997, Oecologia 111:1–11) [published]; carbon = 0.5 × dry biomass [common practice]; CO2e = C × 44.009/12.011 (IUPAC atomic weights) [published].",
    ),
    (
        "Growth and sequestration (M3)",
        "DBH growth by species: Mailloux et al. 2024, PLOS ONE 19(7):e0304447, and Smith, Dearborn & Hutyra 2019, PLOS ONE 14(5):e0215846 [published]; condition factor after Nowak et al. 2013 [from memory]; sequestration C(d+Δd) − C(d) [method of Nowak et al. 2013, from memory].",
    ),
    (
        "Leaf area (M4)",
        "Crown projection × leaf area index 4.0 for broadleaves (Lindsey & Bassuk 1991) [published]; 5.0 for conifers [assumed; no source].",
    ),
    (
        "Rainfall interception (M5)",
        "Revised Gash model (Gash, Lloyd & Lachaud 1995, J. Hydrology 170:79–86) per rain day [published method; equations from memory]; canopy cover 1 − e^(−0.5 LAI) (Beer–Lambert, Monsi & Saeki 1953); storage 0.2 mm per unit LAI (Dickinson 1984) [published]; leaf-on season = the frost-free period [common practice].",
    ),
    (
        "Reference evapotranspiration (M6)",
        "FAO-56 Penman–Monteith, Allen, Pereira, Raes & Smith 1998, FAO Irrigation and Drainage Paper 56, with its gap filling [published]; checked against the pyet and refet libraries.",
    ),
    (
        "Transpiration and cooling (M7)",
        "Landscape coefficient after Costello, Matheny, Clark & Jones 2000 (WUCOLS) [published method]; latent heat 2.45 MJ/kg (FAO-56) [published]; air-conditioning equivalent at COP 3 [common practice] — an equivalence, not metered savings.",
    ),
    (
        "Money (M8)",
        "CO2e at the US EPA 2023 social cost of carbon (2 % discount, 2020 $) [published, via secondary copy]; stormwater $2.36/m³ (USDA Forest Service community tree guides) [published via secondary copy]; electricity $0.16/kWh (US EIA 2023–24) [published]; only the year's flows are valued, stored carbon is reported, not valued.",
    ),
    (
        "Tree risk (M9)",
        "Likelihood and risk matrices of the ISA Tree Risk Assessment Best Management Practices (Smiley, Matheny & Lilly 2017; ANSI A300 Part 9) [published; layout of matrix 2 from memory].",
    ),
    (
        "Plausibility",
        "Totals per m² of crown are checked against Nowak, Greenfield, Hoehn & Lapoint 2013, Environ. Pollut. 178:229–236: 7.69 kg C/m² stored, 0.28 kg C/m²/yr sequestered [published].",
    ),
];
