//! Seeded generator of the demo inventory: Wendlemoor, an invented town.
//!
//! ```text
//! cargo run --example make-demo [-- --seed N --out DIR]
//! ```
//!
//! Writes `town.json`, `trees.csv`, `zones.geojson`, `weather.csv`, `assessments.csv`,
//! `work_orders.csv` and `README.md` into DIR (default `demo-inventory/`). The same seed gives
//! byte-identical files on every run. Everything (town, streets, people, crews, weather) is made up;
//! the coordinates are arbitrary.
//!
//! This program is deliberately standalone: it uses std, `rand`, `csv`, `serde` and `serde_json`
//! only, never the `streetwood` library, so the demo data does not depend on the code under test.
//! Before writing anything it checks its own output (every tree in exactly one zone, measurement
//! dates and increments, solar radiation below clear sky, ...) and fails with a message if a check
//! does not hold.

use std::collections::{BTreeMap, HashMap};
use std::error::Error;
use std::f64::consts::PI;
use std::fmt::Write as _;
use std::fs;
use std::path::{Path, PathBuf};

use rand::rngs::Xoshiro256PlusPlus;
use rand::{RngExt, SeedableRng};
use serde::Serialize;

type Res<T> = Result<T, Box<dyn Error>>;
/// xoshiro256++: a portable, fully specified generator, so a seed means the same stream everywhere.
type Gen = Xoshiro256PlusPlus;

const DEFAULT_SEED: u64 = 20_250_417;
const DEFAULT_OUT: &str = "demo-inventory";
const TOWN: &str = "Wendlemoor";
const STATION: &str = "Wendlemoor Waterworks";
const STATION_ELEVATION_M: f64 = 262.0;
const WEATHER_YEAR: i64 = 2025;
/// Years of daily weather written to `weather.csv` (the first is summarised in the README).
const WEATHER_YEARS: [i64; 2] = [2025, 2026];
/// Origin of the local metric grid (arbitrary coordinates, mid-latitude northern hemisphere).
const LAT0: f64 = 42.7;
const LON0: f64 = -84.1;
/// Nothing in the demo is measured or done after this day.
const SNAPSHOT: (i64, i64, i64) = (2026, 11, 30);

// ---------------------------------------------------------------------------------------------
// Dates (days since 1970-01-01, proleptic Gregorian; H. Hinnant's civil-date algorithms)

#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
struct Date(i64);

impl Date {
    fn ymd(y: i64, m: i64, d: i64) -> Date {
        let y = if m <= 2 { y - 1 } else { y };
        let era = y.div_euclid(400);
        let yoe = y - era * 400;
        let mp = (m + 9) % 12;
        let doy = (153 * mp + 2) / 5 + d - 1;
        let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
        Date(era * 146_097 + doe - 719_468)
    }
    fn civil(self) -> (i64, i64, i64) {
        let z = self.0 + 719_468;
        let era = z.div_euclid(146_097);
        let doe = z - era * 146_097;
        let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
        let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
        let mp = (5 * doy + 2) / 153;
        let d = doy - (153 * mp + 2) / 5 + 1;
        let m = if mp < 10 { mp + 3 } else { mp - 9 };
        let y = yoe + era * 400;
        (if m <= 2 { y + 1 } else { y }, m, d)
    }
    fn iso(self) -> String {
        let (y, m, d) = self.civil();
        format!("{y:04}-{m:02}-{d:02}")
    }
    fn year(self) -> i64 {
        self.civil().0
    }
    fn plus(self, days: i64) -> Date {
        Date(self.0 + days)
    }
    /// Day of year, 1-based.
    fn doy(self) -> i64 {
        self.0 - Date::ymd(self.year(), 1, 1).0 + 1
    }
}

fn snapshot() -> Date {
    Date::ymd(SNAPSHOT.0, SNAPSHOT.1, SNAPSHOT.2)
}

/// A date within `[from, to]` (inclusive), uniformly.
fn date_between(g: &mut Gen, from: Date, to: Date) -> Date {
    Date(g.random_range(from.0..=to.0))
}

// ---------------------------------------------------------------------------------------------
// Random helpers

fn unif(g: &mut Gen, a: f64, b: f64) -> f64 {
    a + (b - a) * g.random::<f64>()
}

/// Standard normal by Box–Muller.
fn normal(g: &mut Gen) -> f64 {
    let u1 = 1.0 - g.random::<f64>();
    let u2 = g.random::<f64>();
    (-2.0 * u1.ln()).sqrt() * (2.0 * PI * u2).cos()
}

/// Multiplicative noise with median 1.
fn lognorm(g: &mut Gen, sd: f64) -> f64 {
    (sd * normal(g)).exp()
}

/// Gamma(shape, 1) by Marsaglia & Tsang (2000), with the usual boost for shape < 1.
fn gamma(g: &mut Gen, shape: f64) -> f64 {
    if shape < 1.0 {
        let u = 1.0 - g.random::<f64>();
        return gamma(g, shape + 1.0) * u.powf(1.0 / shape);
    }
    let d = shape - 1.0 / 3.0;
    let c = 1.0 / (9.0 * d).sqrt();
    loop {
        let x = normal(g);
        let v = (1.0 + c * x).powi(3);
        if v <= 0.0 {
            continue;
        }
        let u = 1.0 - g.random::<f64>();
        if u.ln() < 0.5 * x * x + d - d * v + d * v.ln() {
            return d * v;
        }
    }
}

/// Index drawn with probability proportional to `weights` (all ≥ 0, sum > 0).
fn pick(g: &mut Gen, weights: &[f64]) -> usize {
    let total: f64 = weights.iter().sum();
    let mut r = g.random::<f64>() * total;
    for (i, w) in weights.iter().enumerate() {
        if r < *w {
            return i;
        }
        r -= w;
    }
    weights.iter().rposition(|w| *w > 0.0).unwrap_or(0)
}

fn choose<'a>(g: &mut Gen, items: &[&'a str]) -> &'a str {
    items[g.random_range(0..items.len())]
}

/// `k` distinct indices drawn without replacement with probability ∝ weight
/// (Efraimidis & Spirakis keys u^(1/w)).
fn sample_weighted(g: &mut Gen, weights: &[f64], k: usize) -> Vec<usize> {
    let mut keys: Vec<(f64, usize)> = weights
        .iter()
        .enumerate()
        .map(|(i, w)| {
            let u: f64 = 1.0 - g.random::<f64>();
            let key = if *w > 0.0 {
                u.ln() / w
            } else {
                f64::NEG_INFINITY
            };
            (key, i)
        })
        .collect();
    keys.sort_by(|a, b| b.0.total_cmp(&a.0).then(a.1.cmp(&b.1)));
    keys.into_iter()
        .filter(|(key, _)| key.is_finite())
        .take(k)
        .map(|(_, i)| i)
        .collect()
}

/// A UUID-v4-formatted identifier from the seeded stream (version and variant bits set).
fn uuid(g: &mut Gen) -> String {
    let mut b = [0u8; 16];
    for chunk in b.chunks_mut(8) {
        let v: u64 = g.random();
        chunk.copy_from_slice(&v.to_le_bytes());
    }
    b[6] = (b[6] & 0x0f) | 0x40;
    b[8] = (b[8] & 0x3f) | 0x80;
    let h: String = b.iter().map(|x| format!("{x:02x}")).collect();
    format!(
        "{}-{}-{}-{}-{}",
        &h[0..8],
        &h[8..12],
        &h[12..16],
        &h[16..20],
        &h[20..32]
    )
}

/// Independent stream per output file, so changing one generator leaves the other files alone.
fn stream(seed: u64, salt: u64) -> Gen {
    Gen::seed_from_u64(seed ^ salt.wrapping_mul(0x9e37_79b9_7f4a_7c15))
}

// ---------------------------------------------------------------------------------------------
// Number formatting (never "-0.0")

fn fmt_dec(x: f64, decimals: usize) -> String {
    let p = 10f64.powi(decimals as i32);
    let r = (x * p).round() / p;
    if r == 0.0 {
        format!("{:.*}", decimals, 0.0)
    } else {
        format!("{r:.decimals$}")
    }
}

fn f1(x: f64) -> String {
    fmt_dec(x, 1)
}

fn round_to(x: f64, decimals: i32) -> f64 {
    let p = 10f64.powi(decimals);
    (x * p).round() / p
}

fn opt1(x: Option<f64>) -> String {
    x.map(f1).unwrap_or_default()
}

/// Money: whole dollars, or two decimals when there are cents.
fn money(x: f64) -> String {
    let cents = (x * 100.0).round();
    if cents % 100.0 == 0.0 {
        format!("{}", cents / 100.0)
    } else {
        format!("{:.2}", cents / 100.0)
    }
}

// ---------------------------------------------------------------------------------------------
// Geometry: a local metric grid (x east, y north) around (LAT0, LON0)

const M_PER_DEG_LAT: f64 = 111_045.0;

fn m_per_deg_lon() -> f64 {
    111_320.0 * LAT0.to_radians().cos()
}

/// (lon, lat) rounded to 6 decimals (≈ 0.1 m), exactly as written to the files.
fn to_lonlat(x: f64, y: f64) -> (f64, f64) {
    (
        round_to(LON0 + x / m_per_deg_lon(), 6),
        round_to(LAT0 + y / M_PER_DEG_LAT, 6),
    )
}

fn dist_to_segment(p: (f64, f64), a: (f64, f64), b: (f64, f64)) -> f64 {
    let (dx, dy) = (b.0 - a.0, b.1 - a.1);
    let len2 = dx * dx + dy * dy;
    let t = if len2 > 0.0 {
        (((p.0 - a.0) * dx + (p.1 - a.1) * dy) / len2).clamp(0.0, 1.0)
    } else {
        0.0
    };
    let (qx, qy) = (a.0 + t * dx, a.1 + t * dy);
    ((p.0 - qx).powi(2) + (p.1 - qy).powi(2)).sqrt()
}

fn dist_to_polyline(p: (f64, f64), pts: &[(f64, f64)]) -> f64 {
    pts.windows(2)
        .map(|w| dist_to_segment(p, w[0], w[1]))
        .fold(f64::INFINITY, f64::min)
}

/// Ray casting; `ring` is closed (first == last).
fn in_ring(p: (f64, f64), ring: &[(f64, f64)]) -> bool {
    let mut inside = false;
    for w in ring.windows(2) {
        let ((xi, yi), (xj, yj)) = (w[0], w[1]);
        if (yi > p.1) != (yj > p.1) {
            let x_cross = xi + (p.1 - yi) / (yj - yi) * (xj - xi);
            if p.0 < x_cross {
                inside = !inside;
            }
        }
    }
    inside
}

/// Twice the signed area (shoelace); positive = counter-clockwise.
fn signed_area2(ring: &[(f64, f64)]) -> f64 {
    ring.windows(2)
        .map(|w| w[0].0 * w[1].1 - w[1].0 * w[0].1)
        .sum()
}

// ---------------------------------------------------------------------------------------------
// Species

#[derive(Clone, Copy, PartialEq, Eq, Debug)]
enum Form {
    Large,
    Medium,
    Small,
    Conifer,
}

impl Form {
    /// (a, b, max height m) of height ≈ 1.3 + a·DBH^b and (c, max width m) of crown width ≈ c·DBH^0.7,
    /// both saturating smoothly towards their maximum (see `dims`).
    fn allometry(self) -> (f64, f64, f64, f64, f64) {
        match self {
            Form::Large => (1.77, 0.6, 32.0, 0.95, 24.0),
            Form::Medium => (1.6, 0.6, 26.0, 0.9, 20.0),
            Form::Small => (1.45, 0.55, 13.0, 0.8, 11.0),
            Form::Conifer => (1.2, 0.75, 28.0, 0.55, 12.0),
        }
    }
}

struct Species {
    name: &'static str,
    /// Base share in the planting mix.
    weight: f64,
    form: Form,
    /// Typical DBH growth of this town's street trees, cm/yr.
    growth: f64,
    dbh_max: f64,
    /// Chance of a multi-stem tree.
    multi: f64,
    /// Planting-mix multipliers for trees planted before 1975, 1975–2004, 2005 on.
    era: [f64; 3],
}

const fn sp(
    name: &'static str,
    weight: f64,
    form: Form,
    growth: f64,
    dbh_max: f64,
    multi: f64,
    era: [f64; 3],
) -> Species {
    Species {
        name,
        weight,
        form,
        growth,
        dbh_max,
        multi,
        era,
    }
}

use Form::{Conifer, Large, Medium, Small};

/// The town's planting history. Southern live oak (in the shared species list) is not hardy here
/// and is left out.
#[rustfmt::skip]
const SPECIES: [Species; 30] = [
    sp("Acer platanoides", 10.0, Medium, 0.75, 100.0, 0.03, [1.6, 1.2, 0.15]),
    sp("Acer rubrum", 9.0, Medium, 0.8, 90.0, 0.05, [0.6, 1.2, 1.0]),
    sp("Acer saccharinum", 5.0, Large, 1.1, 115.0, 0.12, [2.0, 0.8, 0.2]),
    sp("Acer saccharum", 5.0, Medium, 0.6, 100.0, 0.02, [1.5, 0.8, 0.7]),
    sp("Quercus rubra", 5.0, Large, 0.85, 110.0, 0.01, [1.3, 0.9, 1.0]),
    sp("Quercus palustris", 4.0, Large, 0.85, 110.0, 0.01, [1.0, 1.2, 0.9]),
    sp("Quercus alba", 2.0, Large, 0.6, 110.0, 0.01, [1.4, 0.6, 1.0]),
    sp("Platanus occidentalis", 2.0, Large, 1.0, 115.0, 0.01, [1.5, 0.8, 0.6]),
    sp("Platanus x hispanica", 8.0, Large, 0.8, 110.0, 0.01, [1.0, 1.3, 0.9]),
    sp("Tilia americana", 3.0, Medium, 0.8, 100.0, 0.03, [1.6, 0.8, 0.6]),
    sp("Tilia cordata", 9.0, Medium, 0.7, 80.0, 0.02, [0.7, 1.3, 1.0]),
    sp("Tilia tomentosa", 3.0, Medium, 0.9, 90.0, 0.02, [0.3, 0.8, 1.8]),
    sp("Fraxinus pennsylvanica", 4.0, Medium, 0.8, 90.0, 0.04, [1.2, 1.4, 0.0]),
    sp("Fraxinus americana", 2.0, Medium, 0.75, 100.0, 0.03, [1.5, 0.9, 0.0]),
    sp("Gleditsia triacanthos", 9.0, Medium, 0.9, 90.0, 0.03, [0.3, 1.4, 1.1]),
    sp("Ulmus americana", 2.0, Large, 0.9, 110.0, 0.02, [2.0, 0.3, 1.0]),
    sp("Ulmus pumila", 1.5, Medium, 1.1, 100.0, 0.10, [1.0, 1.2, 0.0]),
    sp("Pyrus calleryana", 7.0, Small, 0.85, 55.0, 0.10, [0.0, 1.6, 0.6]),
    sp("Prunus serotina", 1.0, Medium, 0.7, 70.0, 0.08, [1.3, 0.8, 0.6]),
    sp("Prunus serrulata", 2.5, Small, 0.6, 50.0, 0.15, [0.4, 1.2, 1.0]),
    sp("Liquidambar styraciflua", 1.5, Medium, 0.75, 80.0, 0.01, [0.5, 1.0, 1.3]),
    sp("Celtis occidentalis", 3.0, Medium, 0.75, 90.0, 0.02, [0.8, 0.8, 1.6]),
    sp("Zelkova serrata", 2.5, Medium, 0.8, 80.0, 0.03, [0.0, 0.8, 2.0]),
    sp("Ginkgo biloba", 3.0, Medium, 0.5, 80.0, 0.02, [0.4, 0.8, 1.8]),
    sp("Robinia pseudoacacia", 1.5, Medium, 0.8, 80.0, 0.06, [1.0, 1.0, 0.6]),
    sp("Pinus strobus", 0.5, Conifer, 0.8, 90.0, 0.0, [1.0, 1.0, 1.0]),
    sp("Pinus nigra", 0.5, Conifer, 0.6, 70.0, 0.0, [1.0, 1.0, 0.6]),
    sp("Picea pungens", 0.6, Conifer, 0.5, 60.0, 0.0, [1.0, 1.0, 0.8]),
    sp("Picea abies", 0.4, Conifer, 0.7, 80.0, 0.0, [1.0, 1.0, 1.0]),
    sp("Pseudotsuga menziesii", 0.4, Conifer, 0.7, 90.0, 0.0, [1.0, 1.0, 1.0]),
];

fn species_for_year(g: &mut Gen, planted_year: i64) -> usize {
    let era = if planted_year < 1975 {
        0
    } else if planted_year < 2005 {
        1
    } else {
        2
    };
    let w: Vec<f64> = SPECIES.iter().map(|s| s.weight * s.era[era]).collect();
    pick(g, &w)
}

fn is_ash(sp: usize) -> bool {
    SPECIES[sp].name.starts_with("Fraxinus")
}

// ---------------------------------------------------------------------------------------------
// Streets, zones, tree sites

struct Street {
    name: &'static str,
    pts: Vec<(f64, f64)>,
    /// Distance of the tree rows from the centre line, m.
    offset: f64,
    /// A row of trees on the centre line too.
    median: bool,
    first_number: u32,
}

fn streets() -> Vec<Street> {
    let st = |name, pts: Vec<(f64, f64)>, offset, median, first_number| Street {
        name,
        pts,
        offset,
        median,
        first_number,
    };
    let mut v = vec![
        // east–west, numbers rise eastwards
        st(
            "Foundry Street",
            vec![(0.0, 0.0), (1500.0, 0.0)],
            9.0,
            false,
            100,
        ),
        st(
            "Cobbler's Lane",
            vec![(0.0, 100.0), (600.0, 100.0)],
            6.0,
            false,
            10,
        ),
        st(
            "Wickam Street",
            vec![(0.0, 200.0), (1500.0, 200.0)],
            9.0,
            false,
            100,
        ),
        st(
            "Tallowgate Street",
            vec![(0.0, 400.0), (1500.0, 400.0)],
            9.0,
            false,
            100,
        ),
        st(
            "Pennyroyal Street",
            vec![(0.0, 600.0), (1500.0, 600.0)],
            9.0,
            false,
            100,
        ),
        st(
            "Quillon Street",
            vec![(0.0, 800.0), (1500.0, 800.0)],
            9.0,
            false,
            100,
        ),
        st(
            "Fernhallow Street",
            vec![(0.0, 1000.0), (1500.0, 1000.0)],
            9.0,
            false,
            100,
        ),
        // north–south, numbers rise northwards
        st(
            "Anvil Avenue",
            vec![(0.0, 0.0), (0.0, 1000.0)],
            9.0,
            false,
            200,
        ),
        st(
            "Brewer Avenue",
            vec![(300.0, 0.0), (300.0, 1000.0)],
            9.0,
            false,
            200,
        ),
        st(
            "Market Avenue",
            vec![(600.0, -320.0), (600.0, 1000.0)],
            9.0,
            false,
            10,
        ),
        st(
            "Orchard Avenue",
            vec![(900.0, 0.0), (900.0, 1000.0)],
            9.0,
            false,
            200,
        ),
        st(
            "Sallowmere Boulevard",
            vec![(1200.0, -225.0), (1200.0, 1000.0)],
            14.0,
            true,
            10,
        ),
        st(
            "Thistledown Avenue",
            vec![(1500.0, 0.0), (1500.0, 1000.0)],
            9.0,
            false,
            200,
        ),
        // the old diagonal road to the mill and the river drive
        st(
            "Old Mill Road",
            vec![(0.0, 0.0), (1650.0, 1100.0)],
            9.0,
            false,
            2,
        ),
    ];
    let curve: Vec<(f64, f64)> = (0..=36)
        .map(|i| {
            let x = -150.0 + 50.0 * f64::from(i);
            (x, -120.0 - 130.0 * (PI * (x + 200.0) / 2000.0).sin())
        })
        .collect();
    v.push(st("Riverbend Drive", curve, 9.0, false, 2));
    v
}

/// The three zones, as closed counter-clockwise rings in local metres. Their shared edges run
/// along street centre lines (Pennyroyal Street, Market Avenue), where no tree stands.
fn zones_local() -> Vec<(&'static str, Vec<(f64, f64)>)> {
    let (x0, x1, y0, y1) = (-250.0, 1800.0, -400.0, 1250.0);
    vec![
        (
            "Old Mill Quarter",
            vec![(x0, y0), (600.0, y0), (600.0, 600.0), (x0, 600.0), (x0, y0)],
        ),
        (
            "Riverbend",
            vec![
                (600.0, y0),
                (x1, y0),
                (x1, 600.0),
                (600.0, 600.0),
                (600.0, y0),
            ],
        ),
        (
            "Upper Terraces",
            vec![(x0, 600.0), (x1, 600.0), (x1, y1), (x0, y1), (x0, 600.0)],
        ),
    ]
}

const DOWNTOWN: (f64, f64, f64, f64) = (-20.0, 620.0, -20.0, 420.0);
/// Lantern Green, the park block between Orchard Avenue and Sallowmere Boulevard.
const PARK: (f64, f64, f64, f64) = (903.0, 1197.0, 203.0, 397.0);

fn in_rect(p: (f64, f64), r: (f64, f64, f64, f64)) -> bool {
    p.0 >= r.0 && p.0 <= r.1 && p.1 >= r.2 && p.1 <= r.3
}

#[derive(Clone, Copy, PartialEq, Eq, Debug)]
enum Era {
    Old,
    Middle,
    Young,
}

struct Site {
    x: f64,
    y: f64,
    street: usize,
    house: Option<u32>,
    kind: &'static str,
    era: Era,
}

/// Walks both sides of every street (and the boulevard median) placing a tree every 8–15 m,
/// leaving gaps for driveways and hydrants and keeping clear of intersections.
fn plant_sites(g: &mut Gen, streets: &[Street]) -> Vec<Site> {
    let mut sites = Vec::new();
    let mut grid: HashMap<(i64, i64), Vec<(f64, f64)>> = HashMap::new();
    let cell = |p: (f64, f64)| ((p.0 / 10.0).floor() as i64, (p.1 / 10.0).floor() as i64);
    for (si, s) in streets.iter().enumerate() {
        let seg_len: Vec<f64> = s
            .pts
            .windows(2)
            .map(|w| ((w[1].0 - w[0].0).powi(2) + (w[1].1 - w[0].1).powi(2)).sqrt())
            .collect();
        let total: f64 = seg_len.iter().sum();
        // rows: +1 left (odd numbers), -1 right (even numbers), 0 median
        let rows: &[i32] = if s.median { &[1, 0, -1] } else { &[1, -1] };
        for &row in rows {
            let mut at = unif(g, 4.0, 12.0);
            while at < total - 4.0 {
                let downtown_spacing = {
                    let (p, _) = point_at(&s.pts, &seg_len, at);
                    in_rect(p, DOWNTOWN)
                };
                let step = if downtown_spacing {
                    unif(g, 8.0, 11.0)
                } else {
                    unif(g, 8.0, 15.0)
                };
                let (p, t) = point_at(&s.pts, &seg_len, at);
                let at_now = at;
                at += step;
                let off = if row == 0 {
                    0.0
                } else {
                    s.offset * f64::from(row)
                };
                let q = (p.0 - t.1 * off, p.1 + t.0 * off);
                // driveways, hydrants, vacant sites
                if g.random_bool(if row == 0 { 0.08 } else { 0.24 }) {
                    continue;
                }
                let near_other = streets
                    .iter()
                    .enumerate()
                    .any(|(oi, o)| oi != si && dist_to_polyline(q, &o.pts) < 13.0);
                if near_other {
                    continue;
                }
                let c = cell(q);
                let crowded = (-1..=1).any(|dx| {
                    (-1..=1).any(|dy| {
                        grid.get(&(c.0 + dx, c.1 + dy)).is_some_and(|v| {
                            v.iter()
                                .any(|o| ((o.0 - q.0).powi(2) + (o.1 - q.1).powi(2)).sqrt() < 6.0)
                        })
                    })
                });
                if crowded {
                    continue;
                }
                grid.entry(c).or_default().push(q);
                let k = (at_now / 8.0).floor() as u32;
                let house = match row {
                    1 => Some(s.first_number + 2 * k + 1),
                    -1 => Some(s.first_number + 2 * k + 2),
                    _ => None,
                };
                let kind = if row == 0 {
                    "median"
                } else if in_rect(q, PARK) {
                    "park"
                } else if in_rect(q, DOWNTOWN) {
                    "pit"
                } else if g.random_bool(0.025) {
                    "yard"
                } else {
                    "verge"
                };
                let era = match s.name {
                    "Old Mill Road" => Era::Old,
                    "Riverbend Drive" => Era::Middle,
                    _ if q.1 >= 600.0 => Era::Young,
                    _ if q.0 < 600.0 => Era::Old,
                    _ => Era::Middle,
                };
                sites.push(Site {
                    x: q.0,
                    y: q.1,
                    street: si,
                    house,
                    kind,
                    era,
                });
            }
        }
    }
    sites
}

/// Point and unit tangent at arc length `at` along a polyline.
fn point_at(pts: &[(f64, f64)], seg_len: &[f64], at: f64) -> ((f64, f64), (f64, f64)) {
    let mut rest = at;
    for (i, len) in seg_len.iter().enumerate() {
        if rest <= *len || i + 1 == seg_len.len() {
            let (a, b) = (pts[i], pts[i + 1]);
            let t = ((b.0 - a.0) / len, (b.1 - a.1) / len);
            let f = (rest / len).min(1.0);
            return ((a.0 + f * (b.0 - a.0), a.1 + f * (b.1 - a.1)), t);
        }
        rest -= len;
    }
    (pts[0], (1.0, 0.0))
}

// ---------------------------------------------------------------------------------------------
// Trees and measurements

#[derive(Clone)]
struct Meas {
    date: Date,
    stems: Vec<f64>,
    multi: bool,
    height: Option<f64>,
    crown_base: Option<f64>,
    cw1: Option<f64>,
    cw2: Option<f64>,
    dieback: f64,
    use_word: bool,
}

impl Meas {
    fn dbh(&self) -> f64 {
        self.stems.iter().map(|d| d * d).sum::<f64>().sqrt()
    }
}

struct Tree {
    uid: String,
    sp: usize,
    lon: f64,
    lat: f64,
    street: usize,
    house: Option<u32>,
    site: &'static str,
    planted_on: Option<Date>,
    status: &'static str,
    notes: String,
    meas: Vec<Meas>,
    zone: usize,
}

impl Tree {
    fn latest(&self) -> &Meas {
        &self.meas[self.meas.len() - 1]
    }
}

/// Plants three field mistakes after the checks, so `streetwood check` has something to find in the
/// demo (issue 9): a DBH that shrinks 2.8 cm (the tape over a bark wound), a re-measurement that grows
/// 4.6 cm a year (a typo), and a young tree recorded 1.2 m tall with a DBH. Trees on Foundry Street are
/// left alone (tests build studies there). Returns the uids changed, in that order.
fn plant_measurement_errors(trees: &mut [Tree], streets: &[Street]) -> Vec<String> {
    let eligible = |t: &Tree| streets[t.street].name != "Foundry Street" && t.status == "standing";
    let mut planted = Vec::new();
    let remeasured: Vec<usize> = trees
        .iter()
        .enumerate()
        .filter(|(_, t)| eligible(t) && t.meas.len() >= 2 && !t.latest().multi)
        .filter(|(_, t)| t.latest().date.0 - t.meas[t.meas.len() - 2].date.0 >= 365)
        .map(|(i, _)| i)
        .collect();
    if let (Some(&shrink), Some(&jump)) = (remeasured.get(40), remeasured.get(80)) {
        let t = &mut trees[shrink];
        let before = t.meas[t.meas.len() - 2].stems[0];
        let last = t.meas.len() - 1;
        t.meas[last].stems = vec![f1_value(before - 2.8)];
        planted.push(t.uid.clone());
        let t = &mut trees[jump];
        let previous = &t.meas[t.meas.len() - 2];
        let years = (t.latest().date.0 - previous.date.0) as f64 / 365.25;
        let grown = previous.stems[0] + 4.6 * years;
        let last = t.meas.len() - 1;
        t.meas[last].stems = vec![f1_value(grown)];
        planted.push(t.uid.clone());
    }
    if let Some(young) = trees
        .iter_mut()
        .filter(|t| streets[t.street].name != "Foundry Street" && t.status == "standing")
        .filter(|t| {
            t.meas.len() == 1
                && !t.latest().multi
                && t.latest().dbh() < 8.0
                && t.latest().height.is_some()
        })
        .nth(25)
    {
        let last = young.meas.len() - 1;
        young.meas[last].height = Some(1.2);
        young.meas[last].crown_base = None;
        planted.push(young.uid.clone());
    }
    planted
}

fn f1_value(x: f64) -> f64 {
    (x * 10.0).round() / 10.0
}

fn condition_word(dieback: f64) -> &'static str {
    if dieback >= 100.0 {
        "dead"
    } else if dieback <= 10.0 {
        "good"
    } else if dieback <= 25.0 {
        "fair"
    } else {
        "poor"
    }
}

/// Per-tree allometric noise, kept across re-measurements.
struct Shape {
    h_noise: f64,
    w_noise: f64,
    w1: f64,
    w2: f64,
}

fn dims(sp: usize, dbh: f64, shape: &Shape) -> (f64, f64, f64) {
    let (a, b, hmax, c, wmax) = SPECIES[sp].form.allometry();
    // saturate smoothly towards the form's maximum instead of piling trees up at a clamp
    let soft = |v: f64, cap: f64| cap * (v / cap).tanh();
    let h = (soft(1.3 + a * dbh.powf(b), 1.1 * hmax) * shape.h_noise).clamp(2.0, 1.2 * hmax);
    let w = soft(c * dbh.powf(0.7), 1.1 * wmax) * shape.w_noise;
    (
        h,
        (w * shape.w1).clamp(0.8, 1.25 * wmax),
        (w * shape.w2).clamp(0.8, 1.25 * wmax),
    )
}

fn split_stems(g: &mut Gen, dbh: f64) -> Vec<f64> {
    let k = [2usize, 3, 4][pick(g, &[0.55, 0.35, 0.10])];
    let mut w: Vec<f64> = (0..k).map(|_| unif(g, 0.35, 1.0)).collect();
    w.sort_by(|a, b| b.total_cmp(a));
    let norm = w.iter().map(|x| x * x).sum::<f64>().sqrt();
    w.iter().map(|x| (dbh * x / norm).max(1.5)).collect()
}

fn sample_dieback(g: &mut Gen, sp: usize, age: f64) -> f64 {
    let ash = is_ash(sp);
    let p_dead = 0.004 + if ash { 0.012 } else { 0.0 };
    let p_severe = 0.025 + if ash { 0.04 } else { 0.0 };
    let p_mid = 0.15 + if ash { 0.15 } else { 0.0 } + if age > 60.0 { 0.06 } else { 0.0 };
    let r = g.random::<f64>();
    if r < p_dead {
        100.0
    } else if r < p_dead + p_severe {
        5.0 * g.random_range(13..=19) as f64
    } else if r < p_dead + p_severe + p_mid {
        let choices = [20.0, 25.0, 30.0, 35.0, 40.0, 45.0, 50.0, 55.0, 60.0];
        choices[pick(g, &[6.0, 5.0, 4.0, 3.0, 2.0, 1.5, 1.0, 0.7, 0.5])]
    } else {
        [0.0, 5.0, 10.0, 15.0][pick(g, &[0.35, 0.35, 0.2, 0.1])]
    }
}

/// A street's survey campaigns: the latest (2024–2026) and two earlier ones.
struct Campaign {
    start: Date,
    earlier: [Date; 2],
}

fn campaigns(g: &mut Gen, n: usize) -> Vec<Campaign> {
    (0..n)
        .map(|_| {
            let year = [2024, 2025, 2026][pick(g, &[0.3, 0.4, 0.3])];
            let start = date_between(g, Date::ymd(year, 4, 6), Date::ymd(year, 9, 20));
            let back = [g.random_range(5..=8), g.random_range(3..=4)];
            let earlier = back.map(|b: i64| {
                let y = year - b;
                let d = Date::ymd(y, 1, 1).plus(start.doy() - 1 + g.random_range(-20..=20));
                d.max(Date::ymd(y, 4, 1)).min(Date::ymd(y, 10, 31))
            });
            Campaign { start, earlier }
        })
        .collect()
}

fn sample_age(g: &mut Gen, era: Era) -> f64 {
    match era {
        Era::Old => {
            if g.random_bool(0.5) {
                unif(g, 55.0, 95.0)
            } else {
                unif(g, 1.0, 45.0)
            }
        }
        Era::Middle => {
            if g.random_bool(0.6) {
                unif(g, 30.0, 55.0)
            } else {
                unif(g, 1.0, 30.0)
            }
        }
        Era::Young => {
            if g.random_bool(0.75) {
                unif(g, 12.0, 30.0)
            } else {
                unif(g, 1.0, 12.0)
            }
        }
    }
}

fn planting_day(g: &mut Gen, year: i64) -> Date {
    if g.random_bool(0.65) {
        date_between(g, Date::ymd(year, 4, 5), Date::ymd(year, 5, 20))
    } else {
        date_between(g, Date::ymd(year, 10, 1), Date::ymd(year, 11, 20))
    }
}

const TREE_NOTES: [&str; 20] = [
    "Girdling root on north side",
    "Bark wound from mower, 2023",
    "Resident waters it weekly",
    "Cavity at 2 m, \"hollow\" sound when sounded",
    "Leans toward road, about 10 degrees",
    "Planted in memory of \"Grandpa Ned\", plaque at base",
    "Tree guard bent; replace",
    "Under overhead wires, side-pruned",
    "Sidewalk heave, 4 cm",
    "Fruit drop, complaints from no. 14",
    "Cable installed 2019, check hardware",
    "Frost crack, south face",
    "Bracket fungus at root flare, 2025",
    "Vine on trunk, remove",
    "Stake ties too tight - loosen",
    "Seam with callus, 1.5 m long",
    "Near hydrant, keep 1.5 m clear",
    "Lightning scar, 2022",
    "Tree grate too small, girdling risk",
    "Heritage tree; see file 7/B",
];
/// Exactly one tree carries this note: a cell a spreadsheet would run as a formula.
const FORMULA_NOTE: &str = "=2 leaders, included bark";

fn make_trees(seed: u64, streets: &[Street], zones: &[(&str, Vec<(f64, f64)>)]) -> Res<Vec<Tree>> {
    let mut g = stream(seed, 1);
    let sites = plant_sites(&mut g, streets);
    let camps = campaigns(&mut g, streets.len());
    let mut per_street_count = vec![0usize; streets.len()];
    let zone_rings: Vec<Vec<(f64, f64)>> = zones
        .iter()
        .map(|(_, r)| r.iter().map(|p| to_lonlat(p.0, p.1)).collect())
        .collect();
    let mut trees = Vec::with_capacity(sites.len());
    for site in &sites {
        let uid = uuid(&mut g);
        let k = per_street_count[site.street];
        per_street_count[site.street] += 1;
        let camp = &camps[site.street];
        let date = camp.start.plus((k / 30) as i64);
        let (lon, lat) = to_lonlat(site.x, site.y);
        let hits: Vec<usize> = zone_rings
            .iter()
            .enumerate()
            .filter(|(_, r)| in_ring((lon, lat), r))
            .map(|(i, _)| i)
            .collect();
        if hits.len() != 1 {
            return Err(format!(
                "tree at ({lon}, {lat}) on {} lies in {} zones, expected exactly 1",
                streets[site.street].name,
                hits.len()
            )
            .into());
        }
        let zone = hits[0];
        let use_word = g.random_bool(0.10);
        let planned = g.random_bool(0.011);
        if planned {
            let sp = species_for_year(&mut g, 2027);
            let d = round_to(unif(&mut g, 3.0, 5.0), 1);
            let m = Meas {
                date,
                stems: vec![d],
                multi: false,
                height: Some(round_to(unif(&mut g, 2.5, 3.5), 1)),
                crown_base: Some(1.5),
                cw1: Some(round_to(unif(&mut g, 0.9, 1.5), 1)),
                cw2: Some(round_to(unif(&mut g, 0.8, 1.4), 1)),
                dieback: 0.0,
                use_word,
            };
            trees.push(Tree {
                uid,
                sp,
                lon,
                lat,
                street: site.street,
                house: site.house,
                site: site.kind,
                planted_on: Some(planting_day(&mut g, 2027)),
                status: "planned",
                notes: String::new(),
                meas: vec![m],
                zone,
            });
            continue;
        }
        let age0 = sample_age(&mut g, site.era).max(1.0);
        let age_int = age0.floor() as i64;
        let planted_year = date.year() - age_int;
        let sp = species_for_year(&mut g, planted_year);
        let s = &SPECIES[sp];
        let planted_on = (age_int <= 25).then(|| planting_day(&mut g, planted_year));
        let age = match planted_on {
            Some(p) => (date.0 - p.0) as f64 / 365.25,
            None => age0,
        };
        let g_tree = s.growth * lognorm(&mut g, 0.28);
        let cap = s.dbh_max * unif(&mut g, 0.85, 1.0);
        let dbh = (2.5 + g_tree * age).min(cap);
        let shape = Shape {
            h_noise: lognorm(&mut g, 0.12),
            w_noise: lognorm(&mut g, 0.15),
            w1: unif(&mut g, 0.95, 1.15),
            w2: unif(&mut g, 0.75, 1.1),
        };
        let multi = g.random_bool((s.multi * 1.7).min(1.0)) && dbh > 6.0;
        let stems_latest = if multi {
            split_stems(&mut g, dbh)
        } else {
            vec![dbh]
        };
        let dieback = sample_dieback(&mut g, sp, age);
        let cb_hi = 4.0;
        let cb_lo = 1.5 + dbh.min(60.0) / 40.0;
        let crown_base_latest = unif(&mut g, cb_lo.min(cb_hi - 0.1), cb_hi);

        // re-measurements: earlier rows from the street's earlier campaigns
        let rate = (g_tree * unif(&mut g, 0.8, 1.2)).clamp(0.3, 1.2);
        let n_earlier = if g.random_bool(0.30) {
            if g.random_bool(0.3) { 2 } else { 1 }
        } else {
            0
        };
        let mut dates: Vec<Date> = match n_earlier {
            2 => camp.earlier.to_vec(),
            1 => vec![camp.earlier[g.random_range(0..2)]],
            _ => vec![],
        };
        dates.retain(|d| {
            let years = (date.0 - d.0) as f64 / 365.25;
            let old_enough = planted_on.is_none_or(|p| p.0 < d.0 - 365);
            old_enough && dbh - rate * years >= 3.0
        });
        dates.push(date);
        let mut meas = Vec::with_capacity(dates.len());
        for (i, d) in dates.iter().enumerate() {
            let latest = i + 1 == dates.len();
            let years = (date.0 - d.0) as f64 / 365.25;
            let d_then = dbh - rate * years;
            let scale = d_then / dbh;
            let stems: Vec<f64> = stems_latest
                .iter()
                .map(|x| round_to(x * scale, 1))
                .collect();
            let (h, w1, w2) = dims(sp, d_then, &shape);
            let cb = if latest {
                crown_base_latest
            } else {
                (crown_base_latest - unif(&mut g, 0.0, 0.5)).max(1.5)
            };
            let cb = cb.min((0.5 * h).max(1.5)).min(h - 0.5);
            let db = if latest {
                dieback
            } else if dieback >= 100.0 {
                5.0 * g.random_range(8..=16) as f64
            } else {
                (dieback - 5.0 * g.random_range(0..=3) as f64).max(0.0)
            };
            let missing_h = g.random_bool(0.03);
            let crowns = pick(&mut g, &[0.955, 0.03, 0.015]);
            let missing_cb = g.random_bool(0.02);
            meas.push(Meas {
                date: *d,
                stems,
                multi,
                height: (!missing_h).then_some(round_to(h, 1)),
                crown_base: (!missing_cb).then_some(round_to(cb, 1)),
                cw1: (crowns != 1).then_some(round_to(w1, 1)),
                cw2: (crowns == 0).then_some(round_to(w2, 1)),
                dieback: db,
                use_word,
            });
        }
        trees.push(Tree {
            uid,
            sp,
            lon,
            lat,
            street: site.street,
            house: site.house,
            site: site.kind,
            planted_on,
            status: "standing",
            notes: String::new(),
            meas,
            zone,
        });
    }

    // ~1 % removed since their last measurement, mostly dead or failing trees
    let cutoff = Date::ymd(2026, 7, 31);
    let weights: Vec<f64> = trees
        .iter()
        .map(|t| {
            let m = t.latest();
            if t.status != "standing" || m.date > cutoff {
                0.0
            } else {
                0.2 + (m.dieback / 20.0).powi(2)
            }
        })
        .collect();
    let n_removed = (trees.len() as f64 * 0.01).round() as usize;
    for i in sample_weighted(&mut g, &weights, n_removed) {
        trees[i].status = "removed";
    }

    // notes: a handful, including quotes, commas and one formula-looking cell
    let candidates: Vec<usize> = (0..trees.len())
        .filter(|&i| trees[i].status == "standing")
        .collect();
    let noted = sample_weighted(&mut g, &vec![1.0; candidates.len()], TREE_NOTES.len() + 1);
    for (j, &ci) in noted.iter().enumerate() {
        let t = &mut trees[candidates[ci]];
        t.notes = if j == 0 {
            FORMULA_NOTE.to_string()
        } else {
            TREE_NOTES[(j - 1) % TREE_NOTES.len()].to_string()
        };
    }
    for t in trees.iter_mut() {
        if t.status == "planned" && g.random_bool(0.3) {
            t.notes = "Replacement planting, site prepared".to_string();
        } else if t.status == "standing" && t.latest().dieback >= 100.0 && t.notes.is_empty() {
            t.notes = "Dead; awaiting removal".to_string();
        }
    }
    Ok(trees)
}

fn check_trees(trees: &[Tree]) -> Res<()> {
    let last = snapshot();
    for t in trees {
        let m = t.latest();
        let y = m.date.year();
        if !(2024..=2026).contains(&y) || m.date > last {
            return Err(format!(
                "tree {}: latest measurement {} out of range",
                t.uid,
                m.date.iso()
            )
            .into());
        }
        for w in t.meas.windows(2) {
            let years = (w[1].date.0 - w[0].date.0) as f64 / 365.25;
            let inc = (w[1].dbh() - w[0].dbh()) / years;
            if w[0].date >= w[1].date {
                return Err(format!("tree {}: measurement dates out of order", t.uid).into());
            }
            if !(0.0..=3.0).contains(&inc) {
                return Err(format!("tree {}: DBH increment {inc:.2} cm/yr", t.uid).into());
            }
        }
        let first = &t.meas[0];
        let span = (m.date.0 - first.date.0) as f64 / 365.25;
        if t.meas.len() > 1 && !(2.5..=8.6).contains(&span) {
            return Err(format!("tree {}: re-measurement span {span:.1} years", t.uid).into());
        }
        if let Some(p) = t.planted_on
            && t.status != "planned"
            && p >= first.date
        {
            return Err(format!("tree {}: planted after first measurement", t.uid).into());
        }
    }
    Ok(())
}

const TREE_HEADER: [&str; 19] = [
    "uid",
    "species",
    "lon",
    "lat",
    "street",
    "house_number",
    "site_kind",
    "planted_on",
    "status",
    "measured_on",
    "dbh_cm",
    "stems_cm",
    "height_m",
    "crown_base_m",
    "crown_width_m",
    "crown_width2_m",
    "dieback_pct",
    "condition",
    "notes",
];

fn write_trees(path: &Path, trees: &[Tree], streets: &[Street]) -> Res<usize> {
    let mut w = csv::Writer::from_path(path)?;
    w.write_record(TREE_HEADER)?;
    let mut rows = 0;
    for t in trees {
        for m in &t.meas {
            let (dbh, stems) = if m.multi {
                let s: Vec<String> = m.stems.iter().map(|d| f1(*d)).collect();
                (String::new(), s.join(";"))
            } else {
                (f1(m.stems[0]), String::new())
            };
            let (dieback, condition) = if m.use_word {
                (String::new(), condition_word(m.dieback).to_string())
            } else {
                (format!("{}", m.dieback as i64), String::new())
            };
            w.write_record([
                t.uid.clone(),
                SPECIES[t.sp].name.to_string(),
                format!("{:.6}", t.lon),
                format!("{:.6}", t.lat),
                streets[t.street].name.to_string(),
                t.house.map(|h| h.to_string()).unwrap_or_default(),
                t.site.to_string(),
                t.planted_on.map(Date::iso).unwrap_or_default(),
                t.status.to_string(),
                m.date.iso(),
                dbh,
                stems,
                opt1(m.height),
                opt1(m.crown_base),
                opt1(m.cw1),
                opt1(m.cw2),
                dieback,
                condition,
                t.notes.clone(),
            ])?;
            rows += 1;
        }
    }
    w.flush()?;
    Ok(rows)
}

// ---------------------------------------------------------------------------------------------
// Zones (GeoJSON)

#[derive(Serialize)]
struct FeatureCollection {
    #[serde(rename = "type")]
    kind: &'static str,
    features: Vec<Feature>,
}

#[derive(Serialize)]
struct Feature {
    #[serde(rename = "type")]
    kind: &'static str,
    properties: ZoneProps,
    geometry: Polygon,
}

#[derive(Serialize)]
struct ZoneProps {
    name: &'static str,
}

#[derive(Serialize)]
struct Polygon {
    #[serde(rename = "type")]
    kind: &'static str,
    coordinates: Vec<Vec<[f64; 2]>>,
}

fn write_zones(path: &Path, zones: &[(&'static str, Vec<(f64, f64)>)]) -> Res<()> {
    let mut features = Vec::new();
    for (name, ring) in zones {
        let ll: Vec<(f64, f64)> = ring.iter().map(|p| to_lonlat(p.0, p.1)).collect();
        if signed_area2(&ll) <= 0.0 || ll.first() != ll.last() {
            return Err(format!("zone {name}: ring not closed and counter-clockwise").into());
        }
        features.push(Feature {
            kind: "Feature",
            properties: ZoneProps { name },
            geometry: Polygon {
                kind: "Polygon",
                coordinates: vec![ll.iter().map(|p| [p.0, p.1]).collect()],
            },
        });
    }
    let fc = FeatureCollection {
        kind: "FeatureCollection",
        features,
    };
    fs::write(path, serde_json::to_string_pretty(&fc)? + "\n")?;
    Ok(())
}

// ---------------------------------------------------------------------------------------------
// Weather

struct Day {
    date: Date,
    precip: f64,
    tmin: f64,
    tmax: f64,
    rh: Option<f64>,
    wind: Option<f64>,
    solar: Option<f64>,
}

/// Extraterrestrial radiation, MJ m⁻² d⁻¹ (FAO-56 eqs. 21–25).
fn ra(lat_deg: f64, doy: i64) -> f64 {
    let j = doy as f64;
    let phi = lat_deg.to_radians();
    let dr = 1.0 + 0.033 * (2.0 * PI * j / 365.0).cos();
    let delta = 0.409 * (2.0 * PI * j / 365.0 - 1.39).sin();
    let ws = (-phi.tan() * delta.tan()).acos();
    24.0 * 60.0 / PI
        * 0.0820
        * dr
        * (ws * phi.sin() * delta.sin() + phi.cos() * delta.cos() * ws.sin())
}

/// Clear-sky radiation (FAO-56 eq. 37).
fn rso(lat_deg: f64, doy: i64, elevation_m: f64) -> f64 {
    (0.75 + 2e-5 * elevation_m) * ra(lat_deg, doy)
}

struct WeatherSummary {
    rain_days: usize,
    total_mm: f64,
    heavy_days: usize,
    last_spring_frost: Date,
    first_autumn_frost: Date,
    jan_mean: f64,
    jul_mean: f64,
    missing_solar: usize,
    missing_wind: usize,
    missing_rh: usize,
}

fn make_weather(seed: u64, lat: f64, year: i64) -> Res<(Vec<Day>, WeatherSummary)> {
    // The first year keeps stream 2 (its file is unchanged); later years draw from their own streams.
    let mut g = stream(
        seed,
        if year == WEATHER_YEAR {
            2
        } else {
            100 + (year - WEATHER_YEAR) as u64
        },
    );
    let first = Date::ymd(year, 1, 1);
    let n = (Date::ymd(year + 1, 1, 1).0 - first.0) as usize;
    // wet/dry days: a two-state Markov chain; amounts: gamma, a little heavier in summer, scaled
    // to 850 mm. The whole year is redrawn until it looks typical (rain days, every month wet
    // enough, a few heavy storms), so the demo never shows a freak drought or deluge.
    let season = |doy: f64| (2.0 * PI * (doy - 20.0) / 365.0).cos(); // +1 mid-Jan, -1 mid-Jul
    let month_of: Vec<usize> = (0..n)
        .map(|i| (first.plus(i as i64).civil().1 - 1) as usize)
        .collect();
    let mut tries = 0;
    let (wet, amounts) = loop {
        tries += 1;
        if tries > 100_000 {
            return Err("could not draw a typical rain year".into());
        }
        let mut wet = Vec::with_capacity(n);
        let mut prev = false;
        for i in 0..n {
            let s = season(i as f64 + 1.0);
            let p = if prev { 0.50 } else { 0.27 + 0.02 * s };
            prev = g.random_bool(p);
            wet.push(prev);
        }
        let mut amounts: Vec<f64> = (0..n)
            .map(|i| {
                if wet[i] {
                    let s = season(i as f64 + 1.0);
                    gamma(&mut g, 0.75) * 8.7 * (1.0 - 0.25 * s)
                } else {
                    0.0
                }
            })
            .collect();
        let raw: f64 = amounts.iter().sum();
        for a in amounts.iter_mut() {
            if *a > 0.0 {
                *a = round_to(*a * 850.0 / raw, 1).max(0.2);
            }
        }
        let rain_days = wet.iter().filter(|w| **w).count();
        let heavy = amounts.iter().filter(|a| **a > 25.0).count();
        let mut m_days = [0usize; 12];
        let mut m_mm = [0f64; 12];
        for i in 0..n {
            if wet[i] {
                m_days[month_of[i]] += 1;
                m_mm[month_of[i]] += amounts[i];
            }
        }
        let months_ok = m_days.iter().all(|d| (7..=15).contains(d))
            && m_mm.iter().all(|mm| (35.0..=120.0).contains(mm))
            && m_mm[5..8].iter().all(|mm| *mm >= 60.0);
        if (124..=136).contains(&rain_days) && (3..=8).contains(&heavy) && months_ok {
            break (wet, amounts);
        }
    };
    // temperature: seasonal cycle (Jan ≈ -4 °C, Jul ≈ 22 °C) plus AR(1) anomalies
    // (anomalies redrawn until January and July land near their normals)
    let anomalies: Vec<f64> = loop {
        let mut a = 0.0;
        let v: Vec<f64> = (0..n)
            .map(|i| {
                let sd = 3.0 + 0.8 * season(i as f64 + 1.0);
                a = 0.7 * a + (1.0f64 - 0.49).sqrt() * sd * normal(&mut g);
                a
            })
            .collect();
        let month_anomaly = |m: usize| {
            let xs: Vec<f64> = (0..n).filter(|i| month_of[*i] == m).map(|i| v[i]).collect();
            xs.iter().sum::<f64>() / xs.len() as f64
        };
        if month_anomaly(0).abs() < 0.8 && month_anomaly(6).abs() < 0.8 {
            break v;
        }
    };
    let mut days = Vec::with_capacity(n);
    for i in 0..n {
        let date = first.plus(i as i64);
        let doy = i as f64 + 1.0;
        let s = season(doy);
        let clim = 9.0 - 13.0 * s;
        let mean = clim + anomalies[i];
        let range = (10.6 - 1.3 * s + unif(&mut g, -1.0, 1.5) - if wet[i] { 2.5 } else { 0.0 })
            .clamp(4.5, 15.0);
        let rh = (72.0 + 5.0 * s + if wet[i] { 9.0 } else { 0.0 } + 4.5 * normal(&mut g))
            .clamp(48.0, 97.0);
        let wind = ((3.0 + 0.8 * s) * lognorm(&mut g, 0.3) * if wet[i] { 1.15 } else { 1.0 })
            .clamp(0.4, 8.5);
        let clear = rso(lat, i as i64 + 1, STATION_ELEVATION_M);
        let frac = if wet[i] {
            unif(&mut g, 0.22, 0.6)
        } else {
            0.55 + 0.42 * g.random::<f64>().sqrt()
        };
        // floor to one decimal so the written value never exceeds clear sky
        let solar = ((clear * frac).min(clear) * 10.0).floor() / 10.0;
        days.push(Day {
            date,
            precip: amounts[i],
            tmin: mean - range / 2.0,
            tmax: mean + range / 2.0,
            rh: Some(round_to(rh, 1)),
            wind: Some(round_to(wind, 1)),
            solar: Some(solar),
        });
    }
    // frost dates: last spring frost ~20 April, first autumn frost ~18 October
    let last_spring = Date::ymd(year, 4, g.random_range(17..=23));
    let first_autumn = Date::ymd(year, 10, g.random_range(15..=21));
    for d in days.iter_mut() {
        if d.date == last_spring || d.date == first_autumn {
            if d.tmin > -0.5 {
                let drop = d.tmin + unif(&mut g, 0.5, 2.0);
                d.tmin -= drop;
                d.tmax -= drop * 0.6;
            }
        } else if d.date > last_spring && d.date < first_autumn && d.tmin < 0.5 {
            let lift = 0.5 + unif(&mut g, 0.0, 1.5) - d.tmin;
            d.tmin += lift;
            d.tmax += lift * 0.5;
        }
        if d.tmax < d.tmin + 2.0 {
            d.tmax = d.tmin + 2.0;
        }
        d.tmin = round_to(d.tmin, 1);
        d.tmax = round_to(d.tmax, 1);
    }
    // a few gaps for the gap filling to work on
    let gaps = sample_weighted(&mut g, &vec![1.0; n], 8);
    for (k, i) in gaps.iter().enumerate() {
        match k {
            0..=3 => days[*i].solar = None,
            4..=6 => days[*i].wind = None,
            _ => days[*i].rh = None,
        }
    }
    // checks
    for (i, d) in days.iter().enumerate() {
        if let Some(s) = d.solar
            && s > rso(lat, i as i64 + 1, STATION_ELEVATION_M)
        {
            return Err(format!("{}: solar above clear sky", d.date.iso()).into());
        }
        if d.tmax <= d.tmin {
            return Err(format!("{}: tmax not above tmin", d.date.iso()).into());
        }
    }
    let frost = |d: &&Day| d.tmin < 0.0;
    let lsf = days
        .iter()
        .filter(|d| d.date < Date::ymd(year, 8, 1))
        .filter(frost)
        .map(|d| d.date)
        .max()
        .ok_or("no spring frost")?;
    let faf = days
        .iter()
        .filter(|d| d.date >= Date::ymd(year, 8, 1))
        .filter(frost)
        .map(|d| d.date)
        .min()
        .ok_or("no autumn frost")?;
    if lsf != last_spring || faf != first_autumn {
        return Err("frost dates did not come out as set".into());
    }
    let month_mean = |m: i64| {
        let v: Vec<f64> = days
            .iter()
            .filter(|d| d.date.civil().1 == m)
            .map(|d| (d.tmin + d.tmax) / 2.0)
            .collect();
        v.iter().sum::<f64>() / v.len() as f64
    };
    let summary = WeatherSummary {
        rain_days: days.iter().filter(|d| d.precip > 0.0).count(),
        total_mm: days.iter().map(|d| d.precip).sum(),
        heavy_days: days.iter().filter(|d| d.precip > 25.0).count(),
        last_spring_frost: lsf,
        first_autumn_frost: faf,
        jan_mean: month_mean(1),
        jul_mean: month_mean(7),
        missing_solar: days.iter().filter(|d| d.solar.is_none()).count(),
        missing_wind: days.iter().filter(|d| d.wind.is_none()).count(),
        missing_rh: days.iter().filter(|d| d.rh.is_none()).count(),
    };
    Ok((days, summary))
}

fn write_weather(path: &Path, days: &[Day]) -> Res<()> {
    let mut w = csv::Writer::from_path(path)?;
    w.write_record([
        "date",
        "precip_mm",
        "tmin_c",
        "tmax_c",
        "rh_mean_pct",
        "wind_2m_ms",
        "solar_mj_m2",
    ])?;
    for d in days {
        w.write_record([
            d.date.iso(),
            f1(d.precip),
            f1(d.tmin),
            f1(d.tmax),
            opt1(d.rh),
            opt1(d.wind),
            opt1(d.solar),
        ])?;
    }
    w.flush()?;
    Ok(())
}

// ---------------------------------------------------------------------------------------------
// Risk assessments (METHODS.md M9)

const LOF: [&str; 4] = ["improbable", "possible", "probable", "imminent"];
const LOI: [&str; 4] = ["very_low", "low", "medium", "high"];
const CONS: [&str; 4] = ["negligible", "minor", "significant", "severe"];
const OCC: [&str; 4] = ["rare", "occasional", "frequent", "constant"];

/// M9 Matrix 1 then Matrix 2; used only to report the mix and steer work orders.
fn risk_rating(lof: usize, loi: usize, cons: usize) -> &'static str {
    const M1: [[usize; 4]; 4] = [[0, 0, 0, 0], [0, 0, 0, 1], [0, 0, 1, 2], [0, 1, 2, 3]];
    const M2: [[&str; 4]; 4] = [
        ["low", "low", "low", "low"],
        ["low", "low", "moderate", "moderate"],
        ["low", "moderate", "high", "high"],
        ["low", "moderate", "high", "extreme"],
    ];
    M2[M1[lof][loi]][cons]
}

struct Assessment {
    tree: usize,
    date: Date,
    assessor: &'static str,
    level: u8,
    part: &'static str,
    part_size: Option<f64>,
    target: &'static str,
    occupancy: usize,
    lof: usize,
    loi: usize,
    cons: usize,
    mitigation: &'static str,
    notes: &'static str,
}

impl Assessment {
    fn rating(&self) -> &'static str {
        risk_rating(self.lof, self.loi, self.cons)
    }
}

const ASSESSORS: [&str; 4] = [
    "A. Fenwright",
    "M. Osei-Barrow",
    "K. Lindqvist-Ray",
    "T. Marchetti",
];

fn target_for(g: &mut Gen, site: &str) -> (&'static str, usize) {
    let opts: &[(&str, usize, f64)] = match site {
        "park" => &[
            ("playground", 2, 2.0),
            ("bench", 1, 2.0),
            ("footpath", 1, 3.0),
            ("lawn", 0, 1.0),
        ],
        "median" => &[
            ("roadway", 3, 4.0),
            ("roadway", 2, 1.0),
            ("pedestrian crossing", 2, 1.0),
        ],
        "pit" => &[
            ("sidewalk", 3, 3.0),
            ("parked cars", 3, 2.0),
            ("bus stop", 2, 1.0),
            ("shop front", 2, 1.0),
        ],
        "yard" => &[("house", 3, 3.0), ("driveway", 1, 1.0), ("lawn", 0, 1.0)],
        _ => &[
            ("sidewalk", 2, 3.0),
            ("sidewalk", 1, 1.5),
            ("parked cars", 2, 2.0),
            ("roadway", 3, 1.5),
            ("house", 3, 1.0),
            ("bike lane", 1, 0.7),
            ("overhead wires", 3, 0.8),
            ("bus stop", 2, 0.5),
        ],
    };
    let w: Vec<f64> = opts.iter().map(|o| o.2).collect();
    let o = opts[pick(g, &w)];
    (o.0, o.1)
}

fn make_assessments(seed: u64, trees: &[Tree]) -> Vec<Assessment> {
    let mut g = stream(seed, 3);
    let weights: Vec<f64> = trees
        .iter()
        .map(|t| {
            if t.status != "standing" {
                return 0.0;
            }
            let m = t.latest();
            let d = m.dbh();
            (d / 30.0).powi(2) * (1.0 + m.dieback / 12.0)
        })
        .collect();
    let chosen = sample_weighted(&mut g, &weights, 54);
    // the worst two (by dieback, then size) become the "act now" cases
    let mut by_need = chosen.clone();
    by_need.sort_by(|a, b| {
        let (ma, mb) = (trees[*a].latest(), trees[*b].latest());
        mb.dieback
            .total_cmp(&ma.dieback)
            .then(mb.dbh().total_cmp(&ma.dbh()))
            .then(a.cmp(b))
    });
    let urgent: Vec<usize> = by_need.iter().take(2).copied().collect();
    let serious: Vec<usize> = by_need.iter().skip(2).take(4).copied().collect();
    let mut out = Vec::new();
    for (n, &ti) in chosen.iter().enumerate() {
        let t = &trees[ti];
        let m = t.latest();
        let d = m.dbh();
        let modes = if n % 11 == 5 { 2 } else { 1 };
        let date = (m.date.plus(g.random_range(-60..=200)))
            .max(Date::ymd(2024, 1, 15))
            .min(snapshot());
        let assessor = choose(&mut g, &ASSESSORS);
        let level = if m.dieback >= 50.0 || d >= 80.0 {
            [1, 2, 3][pick(&mut g, &[0.1, 0.7, 0.2])]
        } else {
            [1, 2, 3][pick(&mut g, &[0.3, 0.62, 0.08])]
        };
        for mode in 0..modes {
            let part = if m.dieback >= 100.0 && mode == 0 {
                "whole_tree"
            } else if m.dieback >= 40.0 && mode == 0 {
                ["crown", "branch"][pick(&mut g, &[0.4, 0.6])]
            } else {
                ["branch", "trunk", "roots", "crown", "whole_tree"]
                    [pick(&mut g, &[0.45, 0.2, 0.15, 0.1, 0.1])]
            };
            let part_size = match part {
                "branch" => Some(unif(&mut g, 6.0, (0.6 * d).clamp(10.0, 45.0)).round()),
                "crown" => g.random_bool(0.5).then(|| unif(&mut g, 5.0, 20.0).round()),
                _ => Some(d.round()),
            };
            let (target, occupancy) = target_for(&mut g, t.site);
            let lof = if m.dieback >= 100.0 {
                [2, 3][pick(&mut g, &[0.6, 0.4])]
            } else if m.dieback >= 50.0 {
                [1, 2][pick(&mut g, &[0.4, 0.6])]
            } else if m.dieback >= 20.0 {
                [0, 1, 2][pick(&mut g, &[0.2, 0.6, 0.2])]
            } else {
                [0, 1, 2][pick(&mut g, &[0.5, 0.45, 0.05])]
            };
            let loi = match occupancy {
                0 => [0, 1][pick(&mut g, &[0.6, 0.4])],
                1 => [1, 2][pick(&mut g, &[0.6, 0.4])],
                2 => [2, 3][pick(&mut g, &[0.65, 0.35])],
                _ => [2, 3][pick(&mut g, &[0.4, 0.6])],
            };
            let size = part_size.unwrap_or(8.0);
            let cons = if target == "lawn" {
                [0, 1][pick(&mut g, &[0.6, 0.4])]
            } else if size < 10.0 {
                [0, 1][pick(&mut g, &[0.2, 0.8])]
            } else if size < 25.0 {
                [1, 2][pick(&mut g, &[0.5, 0.5])]
            } else {
                [2, 3][pick(&mut g, &[0.6, 0.4])]
            };
            let mut a = Assessment {
                tree: ti,
                date,
                assessor,
                level,
                part,
                part_size,
                target,
                occupancy,
                lof,
                loi,
                cons,
                mitigation: "",
                notes: "",
            };
            if mode == 0 && urgent.contains(&ti) {
                a.part = "whole_tree";
                a.part_size = Some(d.round());
                a.lof = 3;
                a.loi = 3;
                a.cons = 3;
                a.target = if t.site == "park" {
                    "playground"
                } else {
                    "bus stop"
                };
                a.occupancy = 2;
            } else if mode == 0 && serious.contains(&ti) {
                a.lof = 2;
                a.loi = 3;
                a.cons = a.cons.max(2);
                if a.part_size.is_none_or(|s| s < 20.0) {
                    a.part_size = Some(unif(&mut g, 20.0, 35.0).round());
                }
            }
            a.mitigation = match a.rating() {
                "extreme" => "Remove tree",
                "high" if a.part == "whole_tree" || a.part == "roots" || a.part == "trunk" => {
                    "Remove tree"
                }
                "high" => choose(
                    &mut g,
                    &[
                        "Remove limb over target",
                        "Reduce crown, remove deadwood > 5 cm",
                    ],
                ),
                "moderate" => choose(
                    &mut g,
                    &[
                        "Remove deadwood > 5 cm",
                        "Reduction prune of limb",
                        "Install cable and brace",
                        "",
                    ],
                ),
                _ => choose(&mut g, &["", "", "Monitor", "Re-inspect after storms"]),
            };
            a.notes = if g.random_bool(0.35) {
                match a.part {
                    "trunk" => choose(
                        &mut g,
                        &[
                            "Decay at base, hollow when sounded",
                            "Seam with included bark, 1 m",
                        ],
                    ),
                    "roots" => choose(
                        &mut g,
                        &[
                            "Roots cut for sidewalk repair, 2023",
                            "Soil mounding on tension side",
                        ],
                    ),
                    "branch" => choose(
                        &mut g,
                        &[
                            "Dead limb over target",
                            "Co-dominant stems, included bark",
                            "Old topping cuts with decay",
                        ],
                    ),
                    "crown" => choose(
                        &mut g,
                        &[
                            "Thin crown, \"flagging\" in the top",
                            "Many dead twigs, small branches",
                        ],
                    ),
                    _ => choose(
                        &mut g,
                        &[
                            "Standing dead, bark sloughing",
                            "Lean increased since last visit, cracks in soil",
                        ],
                    ),
                }
            } else {
                ""
            };
            out.push(a);
        }
    }
    out.sort_by(|a, b| {
        a.date
            .cmp(&b.date)
            .then(trees[a.tree].uid.cmp(&trees[b.tree].uid))
    });
    out
}

fn write_assessments(path: &Path, list: &[Assessment], trees: &[Tree]) -> Res<()> {
    let mut w = csv::Writer::from_path(path)?;
    w.write_record([
        "tree_uid",
        "assessed_on",
        "assessor",
        "level",
        "part",
        "part_size_cm",
        "target",
        "occupancy",
        "likelihood_of_failure",
        "likelihood_of_impact",
        "consequences",
        "mitigation",
        "notes",
    ])?;
    for a in list {
        w.write_record([
            trees[a.tree].uid.clone(),
            a.date.iso(),
            a.assessor.to_string(),
            a.level.to_string(),
            a.part.to_string(),
            a.part_size
                .map(|s| format!("{}", s as i64))
                .unwrap_or_default(),
            a.target.to_string(),
            OCC[a.occupancy].to_string(),
            LOF[a.lof].to_string(),
            LOI[a.loi].to_string(),
            CONS[a.cons].to_string(),
            a.mitigation.to_string(),
            a.notes.to_string(),
        ])?;
    }
    w.flush()?;
    Ok(())
}

// ---------------------------------------------------------------------------------------------
// Work orders

struct WorkOrder {
    tree: usize,
    task: &'static str,
    priority: u8,
    status: &'static str,
    due: Date,
    done: Option<Date>,
    crew: &'static str,
    cost: Option<f64>,
    notes: &'static str,
}

const CREWS: [&str; 4] = [
    "Bramble crew",
    "Kestrel crew",
    "Millrace crew",
    "Contract: Sorrelby Arbor",
];

/// Status for a due date, seen from the snapshot day. `may_be_done` is false for work that,
/// done, would contradict the tree's status (removing a tree that is still standing).
fn status_for(g: &mut Gen, due: Date, may_be_done: bool) -> (&'static str, Option<Date>) {
    let snap = snapshot();
    let r = g.random::<f64>();
    let status = if due <= snap.plus(-20) {
        if r < 0.78 {
            "done"
        } else if r < 0.84 {
            "cancelled"
        } else {
            "open"
        }
    } else if due <= snap {
        ["done", "scheduled", "open"][pick(g, &[0.4, 0.3, 0.3])]
    } else {
        ["scheduled", "open"][pick(g, &[0.5, 0.5])]
    };
    let status = if !may_be_done && status == "done" {
        if due > snap { "scheduled" } else { "open" }
    } else {
        status
    };
    let done = (status == "done").then(|| due.plus(g.random_range(-25..=30)).min(snap));
    (status, done)
}

fn cost_for(g: &mut Gen, task: &str, dbh: f64) -> f64 {
    let base = match task {
        "prune" => 90.0 + 6.0 * dbh,
        "remove" => 150.0 + 28.0 * dbh,
        "stump" => 80.0 + 4.0 * dbh,
        "plant" => 385.0,
        "stake" => 45.0,
        "water" => 35.0,
        "inspect" => 75.0,
        _ => 110.0,
    };
    ((base * unif(g, 0.85, 1.15)) / 5.0).round() * 5.0
}

fn make_work_orders(seed: u64, trees: &[Tree], assessments: &[Assessment]) -> Vec<WorkOrder> {
    let mut g = stream(seed, 4);
    let snap = snapshot();
    let mut out: Vec<WorkOrder> = Vec::new();
    let push = |g: &mut Gen,
                out: &mut Vec<WorkOrder>,
                tree: usize,
                task: &'static str,
                priority: u8,
                due: Date,
                notes: &'static str| {
        let t = &trees[tree];
        let standing_removal = (task == "remove" || task == "stump") && t.status == "standing";
        let (mut status, mut done) = status_for(g, due, !standing_removal && t.status != "planned");
        if t.status == "removed" && (task == "remove" || task == "stump") && due <= snap.plus(-10) {
            status = "done";
            done = Some(due.plus(g.random_range(0..=10)).min(snap));
        }
        if task == "stake" && due <= snap {
            status = "done";
            done = Some(due);
        }
        let crew = match task {
            "inspect" => "Forestry office",
            "plant" | "water" | "stake" => "Nursery crew",
            _ if status == "open" && g.random_bool(0.4) => "",
            _ => choose(g, &CREWS),
        };
        let cost = match status {
            "done" => Some(cost_for(g, task, t.latest().dbh())),
            "cancelled" => None,
            _ => g
                .random_bool(0.5)
                .then(|| cost_for(g, task, t.latest().dbh())),
        };
        out.push(WorkOrder {
            tree,
            task,
            priority,
            status,
            due,
            done,
            crew,
            cost,
            notes,
        });
    };
    // 1. follow-up of risk assessments
    for a in assessments {
        let due_after = |g: &mut Gen, lo: i64, hi: i64| a.date.plus(g.random_range(lo..=hi));
        match (a.rating(), a.mitigation) {
            ("extreme", _) => {
                let due = due_after(&mut g, 3, 14);
                push(
                    &mut g,
                    &mut out,
                    a.tree,
                    "remove",
                    1,
                    due,
                    "Mitigate now: close footway until done",
                );
            }
            ("high", "Remove tree") => {
                let due = due_after(&mut g, 14, 60);
                push(&mut g, &mut out, a.tree, "remove", 2, due, "");
            }
            ("high", _) => {
                let due = due_after(&mut g, 14, 90);
                push(
                    &mut g,
                    &mut out,
                    a.tree,
                    "prune",
                    2,
                    due,
                    "Clearance 2.4 m over sidewalk",
                );
            }
            ("moderate", m) if !m.is_empty() => {
                let due = due_after(&mut g, 30, 240);
                push(&mut g, &mut out, a.tree, "prune", 3, due, "");
            }
            ("moderate", _) => {
                let due = due_after(&mut g, 700, 740);
                push(
                    &mut g,
                    &mut out,
                    a.tree,
                    "inspect",
                    3,
                    due,
                    "Re-inspection, moderate risk",
                );
            }
            _ => {}
        }
    }
    // 2. dead trees still standing: removal
    let dead: Vec<usize> = (0..trees.len())
        .filter(|&i| trees[i].status == "standing" && trees[i].latest().dieback >= 100.0)
        .collect();
    // 3. removed trees: removal (done) and stump grinding
    let removed: Vec<usize> = (0..trees.len())
        .filter(|&i| trees[i].status == "removed")
        .collect();
    // 4. planned and young trees
    let planned: Vec<usize> = (0..trees.len())
        .filter(|&i| trees[i].status == "planned")
        .collect();
    let young: Vec<usize> = (0..trees.len())
        .filter(|&i| {
            trees[i].status == "standing"
                && trees[i]
                    .planted_on
                    .is_some_and(|p| p >= Date::ymd(2024, 3, 1))
        })
        .collect();
    for &i in &dead {
        if out.iter().any(|w| w.tree == i && w.task == "remove") {
            continue;
        }
        let due = trees[i]
            .latest()
            .date
            .plus(g.random_range(14..=90))
            .max(snap.plus(-60));
        let p = if g.random_bool(0.5) { 1 } else { 2 };
        push(&mut g, &mut out, i, "remove", p, due, "Dead tree");
    }
    let removed_with_orders: Vec<usize> = removed.iter().copied().take(6).collect();
    for (k, &i) in removed_with_orders.iter().enumerate() {
        let due = trees[i]
            .latest()
            .date
            .plus(g.random_range(20..=110))
            .min(snap.plus(-15));
        push(&mut g, &mut out, i, "remove", 2, due, "");
        if k < 5 {
            let sdue = due.plus(g.random_range(20..=120));
            push(
                &mut g,
                &mut out,
                i,
                "stump",
                4,
                sdue,
                "Grind stump, backfill, seed",
            );
        }
    }
    for &i in planned.iter().take(11) {
        let due = trees[i].planted_on.unwrap_or(Date::ymd(2027, 4, 20));
        push(
            &mut g,
            &mut out,
            i,
            "plant",
            3,
            due,
            "Bare-root, 5 cm caliper max",
        );
    }
    let young_pick = sample_weighted(&mut g, &vec![1.0; young.len()], 18);
    for (k, &yi) in young_pick.iter().enumerate() {
        let i = young[yi];
        let p = trees[i].planted_on.unwrap_or(Date::ymd(2025, 5, 1));
        if k < 8 {
            push(
                &mut g,
                &mut out,
                i,
                "stake",
                3,
                p,
                "Two stakes, flexible ties",
            );
        } else {
            let y = p.year() + i64::from(p.civil().1 >= 9);
            let due = date_between(&mut g, Date::ymd(y, 6, 1), Date::ymd(y, 8, 31));
            let pr = if g.random_bool(0.5) { 2 } else { 3 };
            push(
                &mut g,
                &mut out,
                i,
                "water",
                pr,
                due,
                "Watering bag, refill weekly",
            );
        }
    }
    // other jobs
    for (k, note) in [
        "Remove stakes and ties",
        "Replace tree guard",
        "Mulch ring, 1 m",
        "Clear sign sight line",
    ]
    .into_iter()
    .enumerate()
    {
        let i = if k == 0 && !young.is_empty() {
            young[g.random_range(0..young.len())]
        } else {
            loop {
                let i = g.random_range(0..trees.len());
                if trees[i].status == "standing" {
                    break i;
                }
            }
        };
        let due = date_between(&mut g, Date::ymd(2025, 3, 1), Date::ymd(2027, 3, 31));
        push(&mut g, &mut out, i, "other", 4, due, note);
    }
    // a few inspections after resident reports
    for _ in 0..4 {
        let i = loop {
            let i = g.random_range(0..trees.len());
            if trees[i].status == "standing" && trees[i].latest().dbh() > 30.0 {
                break i;
            }
        };
        let due = date_between(&mut g, Date::ymd(2024, 5, 1), Date::ymd(2027, 1, 31));
        push(
            &mut g,
            &mut out,
            i,
            "inspect",
            2,
            due,
            "Resident report: hanging limb",
        );
    }
    // routine pruning fills up to 120 orders
    let n_prune = 120usize.saturating_sub(out.len());
    let weights: Vec<f64> = trees
        .iter()
        .map(|t| {
            if t.status == "standing" && t.latest().dieback < 100.0 {
                0.3 + t.latest().dbh() / 30.0
            } else {
                0.0
            }
        })
        .collect();
    for i in sample_weighted(&mut g, &weights, n_prune) {
        let d = trees[i].latest().dbh();
        let due = date_between(&mut g, Date::ymd(2024, 2, 1), Date::ymd(2027, 6, 30));
        let pr = [2, 3, 4][pick(&mut g, &[0.1, 0.35, 0.55])];
        let note = if d < 15.0 {
            "Training prune"
        } else if g.random_bool(0.2) {
            choose(
                &mut g,
                &[
                    "Clearance 4.3 m over road",
                    "Raise crown over sidewalk",
                    "Pruning cycle, block",
                ],
            )
        } else {
            ""
        };
        push(&mut g, &mut out, i, "prune", pr, due, note);
    }
    out.sort_by(|a, b| {
        a.due
            .cmp(&b.due)
            .then(trees[a.tree].uid.cmp(&trees[b.tree].uid))
            .then(a.task.cmp(b.task))
    });
    out
}

fn write_work_orders(path: &Path, list: &[WorkOrder], trees: &[Tree]) -> Res<()> {
    let mut w = csv::Writer::from_path(path)?;
    w.write_record([
        "tree_uid", "task", "priority", "status", "due_on", "done_on", "crew", "cost", "notes",
    ])?;
    for o in list {
        w.write_record([
            trees[o.tree].uid.clone(),
            o.task.to_string(),
            o.priority.to_string(),
            o.status.to_string(),
            o.due.iso(),
            o.done.map(Date::iso).unwrap_or_default(),
            o.crew.to_string(),
            o.cost.map(money).unwrap_or_default(),
            o.notes.to_string(),
        ])?;
    }
    w.flush()?;
    Ok(())
}

// ---------------------------------------------------------------------------------------------
// town.json

#[derive(Serialize)]
struct Town {
    name: &'static str,
    station: Station,
    weather_year: i64,
    seed: u64,
}

#[derive(Serialize)]
struct Station {
    name: &'static str,
    lat: f64,
    lon: f64,
    elevation_m: f64,
    coastal: bool,
}

// ---------------------------------------------------------------------------------------------
// main

struct Args {
    seed: u64,
    out: PathBuf,
}

fn parse_args() -> Res<Args> {
    let mut args = Args {
        seed: DEFAULT_SEED,
        out: PathBuf::from(DEFAULT_OUT),
    };
    let mut it = std::env::args().skip(1);
    while let Some(a) = it.next() {
        match a.as_str() {
            "--seed" => {
                let v = it.next().ok_or("--seed needs a number")?;
                args.seed = v.parse().map_err(|e| format!("--seed {v}: {e}"))?;
            }
            "--out" => args.out = PathBuf::from(it.next().ok_or("--out needs a directory")?),
            "-h" | "--help" => {
                println!(
                    "make-demo [--seed N] [--out DIR]   (defaults: seed {DEFAULT_SEED}, out {DEFAULT_OUT}/)"
                );
                std::process::exit(0);
            }
            other => return Err(format!("unknown argument {other:?}; try --help").into()),
        }
    }
    Ok(args)
}

fn main() -> Res<()> {
    let args = parse_args()?;
    let seed = args.seed;
    let streets = streets();
    let zones = zones_local();
    let trees = make_trees(seed, &streets, &zones)?;
    check_trees(&trees)?;
    let (station_lon, station_lat) = to_lonlat(820.0, 310.0);
    let (mut days, wx) = make_weather(seed, station_lat, WEATHER_YEAR)?;
    for year in WEATHER_YEARS.iter().skip(1) {
        days.extend(make_weather(seed, station_lat, *year)?.0);
    }
    let assessments = make_assessments(seed, &trees);
    let orders = make_work_orders(seed, &trees, &assessments);

    fs::create_dir_all(&args.out)?;
    let town = Town {
        name: TOWN,
        station: Station {
            name: STATION,
            lat: station_lat,
            lon: station_lon,
            elevation_m: STATION_ELEVATION_M,
            coastal: false,
        },
        weather_year: WEATHER_YEAR,
        seed,
    };
    fs::write(
        args.out.join("town.json"),
        serde_json::to_string_pretty(&town)? + "\n",
    )?;
    // Planted after assessments and work orders are drawn, so those files stay as they were.
    let mut trees = trees;
    let planted = plant_measurement_errors(&mut trees, &streets);
    let rows = write_trees(&args.out.join("trees.csv"), &trees, &streets)?;
    write_zones(&args.out.join("zones.geojson"), &zones)?;
    write_weather(&args.out.join("weather.csv"), &days)?;
    write_assessments(&args.out.join("assessments.csv"), &assessments, &trees)?;
    write_work_orders(&args.out.join("work_orders.csv"), &orders, &trees)?;

    let stats = Stats::new(&trees, &streets, &zones, rows, &assessments, &orders, &wx);
    let mut text = readme(seed, &stats);
    text.push_str(&format!(
        "\n## Planted mistakes\n\nThree measurements are wrong on purpose, so `streetwood check` has something to \
find: a DBH that shrinks 2.8 cm (tree `{}`), one that grows 4.6 cm a year (tree `{}`), and a young tree \
recorded 1.2 m tall with a DBH (tree `{}`).\n",
        planted.first().map_or("", String::as_str),
        planted.get(1).map_or("", String::as_str),
        planted.get(2).map_or("", String::as_str)
    ));
    fs::write(args.out.join("README.md"), text)?;
    print!("{}", stats.report());
    Ok(())
}

// ---------------------------------------------------------------------------------------------
// Statistics for the README and the console

struct Stats {
    trees: usize,
    rows: usize,
    remeasured: usize,
    three_rows: usize,
    status: BTreeMap<&'static str, usize>,
    sites: BTreeMap<&'static str, usize>,
    zones: Vec<(&'static str, usize)>,
    streets: Vec<(&'static str, usize)>,
    species: Vec<(&'static str, usize)>,
    dbh_bins: Vec<(String, usize)>,
    dbh_min: f64,
    dbh_max: f64,
    multi: usize,
    word_rows: usize,
    no_height_rows: usize,
    no_crown_rows: usize,
    dead: usize,
    notes: usize,
    assessments: usize,
    assessed_trees: usize,
    ratings: BTreeMap<&'static str, usize>,
    orders: usize,
    tasks: BTreeMap<&'static str, usize>,
    order_status: BTreeMap<&'static str, usize>,
    wx_rain_days: usize,
    wx_total: f64,
    wx_heavy: usize,
    wx_lsf: Date,
    wx_faf: Date,
    wx_jan: f64,
    wx_jul: f64,
    wx_missing: (usize, usize, usize),
    first_date: Date,
    last_date: Date,
}

impl Stats {
    fn new(
        trees: &[Tree],
        streets: &[Street],
        zones: &[(&'static str, Vec<(f64, f64)>)],
        rows: usize,
        assessments: &[Assessment],
        orders: &[WorkOrder],
        wx: &WeatherSummary,
    ) -> Stats {
        let mut status = BTreeMap::new();
        let mut sites = BTreeMap::new();
        let mut zone_n = vec![0; zones.len()];
        let mut street_n = vec![0; streets.len()];
        let mut sp_n = vec![0; SPECIES.len()];
        let edges = [
            0.0,
            10.0,
            20.0,
            30.0,
            45.0,
            60.0,
            80.0,
            110.0,
            f64::INFINITY,
        ];
        let mut bins = vec![0; edges.len() - 1];
        let mut dbh_min = f64::INFINITY;
        let mut dbh_max: f64 = 0.0;
        for t in trees {
            *status.entry(t.status).or_insert(0) += 1;
            *sites.entry(t.site).or_insert(0) += 1;
            zone_n[t.zone] += 1;
            street_n[t.street] += 1;
            sp_n[t.sp] += 1;
            let d = t.latest().dbh();
            dbh_min = dbh_min.min(d);
            dbh_max = dbh_max.max(d);
            if let Some(b) = edges.windows(2).position(|w| d >= w[0] && d < w[1]) {
                bins[b] += 1;
            }
        }
        let all_rows = || trees.iter().flat_map(|t| t.meas.iter());
        let mut species: Vec<(&'static str, usize)> =
            SPECIES.iter().zip(sp_n).map(|(s, n)| (s.name, n)).collect();
        species.sort_by(|a, b| b.1.cmp(&a.1).then(a.0.cmp(b.0)));
        let mut ratings = BTreeMap::new();
        for a in assessments {
            *ratings.entry(a.rating()).or_insert(0) += 1;
        }
        let mut assessed: Vec<usize> = assessments.iter().map(|a| a.tree).collect();
        assessed.sort_unstable();
        assessed.dedup();
        let mut tasks = BTreeMap::new();
        let mut order_status = BTreeMap::new();
        for o in orders {
            *tasks.entry(o.task).or_insert(0) += 1;
            *order_status.entry(o.status).or_insert(0) += 1;
        }
        Stats {
            trees: trees.len(),
            rows,
            remeasured: trees.iter().filter(|t| t.meas.len() > 1).count(),
            three_rows: trees.iter().filter(|t| t.meas.len() > 2).count(),
            status,
            sites,
            zones: zones.iter().map(|z| z.0).zip(zone_n).collect(),
            streets: streets.iter().map(|s| s.name).zip(street_n).collect(),
            species,
            dbh_bins: edges
                .windows(2)
                .zip(bins)
                .map(|(w, n)| {
                    let label = if w[1].is_finite() {
                        format!("{}–{} cm", w[0], w[1])
                    } else {
                        format!("≥ {} cm", w[0])
                    };
                    (label, n)
                })
                .collect(),
            dbh_min,
            dbh_max,
            multi: trees.iter().filter(|t| t.latest().multi).count(),
            word_rows: all_rows().filter(|m| m.use_word).count(),
            no_height_rows: all_rows().filter(|m| m.height.is_none()).count(),
            no_crown_rows: all_rows().filter(|m| m.cw1.is_none()).count(),
            dead: trees
                .iter()
                .filter(|t| t.status == "standing" && t.latest().dieback >= 100.0)
                .count(),
            notes: trees.iter().filter(|t| !t.notes.is_empty()).count(),
            assessments: assessments.len(),
            assessed_trees: assessed.len(),
            ratings,
            orders: orders.len(),
            tasks,
            order_status,
            wx_rain_days: wx.rain_days,
            wx_total: wx.total_mm,
            wx_heavy: wx.heavy_days,
            wx_lsf: wx.last_spring_frost,
            wx_faf: wx.first_autumn_frost,
            wx_jan: wx.jan_mean,
            wx_jul: wx.jul_mean,
            wx_missing: (wx.missing_solar, wx.missing_wind, wx.missing_rh),
            first_date: all_rows().map(|m| m.date).min().unwrap_or(Date(0)),
            last_date: all_rows().map(|m| m.date).max().unwrap_or(Date(0)),
        }
    }

    fn report(&self) -> String {
        let mut s = String::new();
        let pct = |n: usize, of: usize| 100.0 * n as f64 / of.max(1) as f64;
        let _ = writeln!(
            s,
            "trees {} (rows {}), re-measured {} ({} with 3 rows)",
            self.trees, self.rows, self.remeasured, self.three_rows
        );
        let _ = writeln!(s, "status {:?}", self.status);
        let _ = writeln!(s, "site kinds {:?}", self.sites);
        let _ = writeln!(s, "zones {:?}", self.zones);
        let _ = writeln!(s, "streets {:?}", self.streets);
        let _ = writeln!(
            s,
            "DBH {:.1}–{:.1} cm; bins {:?}",
            self.dbh_min, self.dbh_max, self.dbh_bins
        );
        let _ = writeln!(
            s,
            "multi-stem {} ({:.1} %), condition-word rows {} ({:.1} %), rows without height {}, without crown width {}, dead standing {}, notes {}",
            self.multi,
            pct(self.multi, self.trees),
            self.word_rows,
            pct(self.word_rows, self.rows),
            self.no_height_rows,
            self.no_crown_rows,
            self.dead,
            self.notes
        );
        let _ = writeln!(
            s,
            "measured {} .. {}",
            self.first_date.iso(),
            self.last_date.iso()
        );
        for (name, n) in &self.species {
            let _ = writeln!(s, "  {name:<26} {n:>5} {:>5.1} %", pct(*n, self.trees));
        }
        let _ = writeln!(
            s,
            "assessments {} on {} trees, ratings {:?}",
            self.assessments, self.assessed_trees, self.ratings
        );
        let _ = writeln!(
            s,
            "work orders {} tasks {:?} status {:?}",
            self.orders, self.tasks, self.order_status
        );
        let _ = writeln!(
            s,
            "weather: {} rain days, {:.1} mm, {} days > 25 mm, last spring frost {}, first autumn frost {}, Jan {:.1} °C, Jul {:.1} °C, gaps solar/wind/rh {:?}",
            self.wx_rain_days,
            self.wx_total,
            self.wx_heavy,
            self.wx_lsf.iso(),
            self.wx_faf.iso(),
            self.wx_jan,
            self.wx_jul,
            self.wx_missing
        );
        s
    }
}

fn readme(seed: u64, st: &Stats) -> String {
    let mut s = String::new();
    let pct = |n: usize, of: usize| 100.0 * n as f64 / of.max(1) as f64;
    let _ = writeln!(s, "# Demo inventory: {TOWN} (an invented town)\n");
    let _ = writeln!(
        s,
        "{TOWN}, its streets, zones, trees, people, crews and weather are invented. The coordinates are \
arbitrary (a made-up spot around 42.7° N, 84.1° W chosen only to give a temperate northern mid-latitude \
climate); they do not describe any real place.\n"
    );
    let _ = writeln!(
        s,
        "Produced by `cargo run --example make-demo` (source: `examples/make_demo.rs`) with seed **{seed}**. \
The same seed gives byte-identical files; `--seed N` and `--out DIR` make other towns.\n"
    );
    let _ = writeln!(
        s,
        "The town is a grid of streets (east–west *Streets*, north–south *Avenues*, one with a planted median: \
Sallowmere Boulevard), the diagonal Old Mill Road and the curving Riverbend Drive along the river. Downtown \
streets have trees in pits, Lantern Green park fronts four streets, and the three zones (Old Mill Quarter, \
Riverbend, Upper Terraces) meet along street centre lines. Tree sizes follow the age of each neighbourhood.\n"
    );
    let _ = writeln!(s, "## Files\n");
    let _ = writeln!(s, "| file | holds |\n|---|---|");
    let _ = writeln!(
        s,
        "| `town.json` | town name, weather station (name, lat, lon, elevation, coastal), weather year, seed |"
    );
    let _ = writeln!(
        s,
        "| `trees.csv` | {} trees in {} rows: one row per measurement, rows of a tree together and oldest first (a repeated `uid` adds a measurement) |",
        st.trees, st.rows
    );
    let _ = writeln!(
        s,
        "| `zones.geojson` | {} `Polygon` zones with a `name`; every tree lies in exactly one |",
        st.zones.len()
    );
    let _ = writeln!(
        s,
        "| `weather.csv` | one row per day of {} at the town's station |",
        WEATHER_YEARS.map(|y| y.to_string()).join(" and ")
    );
    let _ = writeln!(
        s,
        "| `assessments.csv` | {} risk assessments (failure modes) of {} trees |",
        st.assessments, st.assessed_trees
    );
    let _ = writeln!(s, "| `work_orders.csv` | {} work orders |", st.orders);
    let _ = writeln!(s, "\n## Trees\n");
    let _ = writeln!(
        s,
        "- {} trees: {}.",
        st.trees,
        st.status
            .iter()
            .map(|(k, v)| format!("{v} {k}"))
            .collect::<Vec<_>>()
            .join(", ")
    );
    let _ = writeln!(
        s,
        "- {} trees ({:.0} %) have earlier measurements ({} of them two earlier ones), 3–8 years before the latest; \
latest measurements fall in 2024–2026, all rows between {} and {}.",
        st.remeasured,
        pct(st.remeasured, st.trees),
        st.three_rows,
        st.first_date.iso(),
        st.last_date.iso()
    );
    let _ = writeln!(
        s,
        "- Multi-stem trees: {} (`stems_cm` like `22.1;18.0;9.4`, `dbh_cm` empty). Rows with a condition word instead of \
`dieback_pct`: {}. Rows without height: {}; without crown width: {}. Dead trees still standing: {}.",
        st.multi, st.word_rows, st.no_height_rows, st.no_crown_rows, st.dead
    );
    let _ = writeln!(
        s,
        "- Planned trees are nursery-stock specifications for planting in 2027 (`planted_on` in 2027, `measured_on` = \
the day the site was surveyed). Removed trees keep their last measurement."
    );
    let _ = writeln!(
        s,
        "- Site kinds: {}.",
        st.sites
            .iter()
            .map(|(k, v)| format!("{k} {v}"))
            .collect::<Vec<_>>()
            .join(", ")
    );
    let _ = writeln!(
        s,
        "- Zones: {}.",
        st.zones
            .iter()
            .map(|(k, v)| format!("{k} {v}"))
            .collect::<Vec<_>>()
            .join(", ")
    );
    let _ = writeln!(
        s,
        "- DBH of the latest measurement: {:.1}–{:.1} cm.\n",
        st.dbh_min, st.dbh_max
    );
    let _ = writeln!(s, "| DBH | trees |\n|---|---|");
    for (label, n) in &st.dbh_bins {
        let _ = writeln!(s, "| {label} | {n} |");
    }
    let _ = writeln!(s, "\n| street | trees |\n|---|---|");
    for (name, n) in &st.streets {
        let _ = writeln!(s, "| {name} | {n} |");
    }
    let _ = writeln!(s, "\n| species | trees | share |\n|---|---|---|");
    for (name, n) in st.species.iter().filter(|x| x.1 > 0) {
        let _ = writeln!(s, "| *{name}* | {n} | {:.1} % |", pct(*n, st.trees));
    }
    let _ = writeln!(s, "\n## Reading the files\n");
    let _ = writeln!(
        s,
        "- `trees.csv` uses the trees CSV of the design: SI units, ISO dates, `lon`/`lat` WGS 84 with 6 decimals. \
A tree's columns (`species` … `status`, `notes`) repeat unchanged on each of its rows; the measurement columns \
(`measured_on` … `condition`) change. Multi-stem trees give `stems_cm` and leave `dbh_cm` empty. A row gives \
either `dieback_pct` or a `condition` word, never both. Median trees have no `house_number`. One `notes` cell \
begins with `=`, some contain commas and quotes (standard CSV quoting)."
    );
    let _ = writeln!(
        s,
        "- `assessments.csv`: one row per failure mode, so a tree can have more than one row on the same day; the \
risk rating is not stored (it follows from the likelihoods and consequences). Every `tree_uid` is a standing tree."
    );
    let _ = writeln!(
        s,
        "- `work_orders.csv`: `done_on` is filled exactly when `status` is `done`; `cost` in dollars, empty when \
unknown. Removals of trees still standing are open or scheduled; removals of removed trees are done; `plant` \
orders belong to planned trees. Nothing is measured or done after {}.",
        snapshot().iso()
    );
    let _ = writeln!(s, "\n## Weather ({WEATHER_YEAR})\n");
    let _ = writeln!(
        s,
        "A humid continental climate of our own making: {} rain days, {:.0} mm in the year ({} days above 25 mm); \
January mean {:.1} °C, July mean {:.1} °C; last spring frost {}, first autumn frost {} (so the leaf-on season \
runs between them). Empty cells are gaps for the gap filling to handle: {} solar, {} wind, {} humidity. \
Solar radiation never exceeds the clear-sky value.",
        st.wx_rain_days,
        st.wx_total,
        st.wx_heavy,
        st.wx_jan,
        st.wx_jul,
        st.wx_lsf.iso(),
        st.wx_faf.iso(),
        st.wx_missing.0,
        st.wx_missing.1,
        st.wx_missing.2
    );
    let _ = writeln!(s, "\n## Care\n");
    let _ = writeln!(
        s,
        "- Assessments: {} rows; the ratings they give by the risk matrices: {}.",
        st.assessments,
        st.ratings
            .iter()
            .map(|(k, v)| format!("{v} {k}"))
            .collect::<Vec<_>>()
            .join(", ")
    );
    let _ = writeln!(
        s,
        "- Work orders: {} ({}); status {}. Costs are in dollars.",
        st.orders,
        st.tasks
            .iter()
            .map(|(k, v)| format!("{v} {k}"))
            .collect::<Vec<_>>()
            .join(", "),
        st.order_status
            .iter()
            .map(|(k, v)| format!("{v} {k}"))
            .collect::<Vec<_>>()
            .join(", ")
    );
    s
}
