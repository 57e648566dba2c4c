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
