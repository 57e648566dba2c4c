//! Studies: the removal studies of the inventory and, for the one opened, the removed trees kept
//! against each replanting plan side by side — what the removal takes, payback years, the benefits
//! per year at milestone years and the totals over the horizon — with a chart of one benefit per year
//! (kept trees and every plan; the P10–P90 band in Monte Carlo mode; payback years marked). Studies
//! are created and edited with `streetwood study …`; runs come from [`crate::study::run_study`] off the
//! UI thread (see [`crate::tui::query::Query::study_run`]).

use std::sync::Arc;

use ratatui::Frame;
use ratatui::crossterm::event::{KeyCode, KeyEvent};
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::{Color, Modifier, Style};
use ratatui::symbols::Marker;
use ratatui::text::{Line, Span};
use ratatui::widgets::{
    Axis, Block, Cell, Chart, Dataset, GraphType, List, ListItem, Paragraph, Row, Table, Wrap,
};

use crate::care::risk::CAUTION;
use crate::store::studies::StudyListRow;
use crate::study::Mode;
use crate::study::outcome::{Benefit, PlanOutcome, Population};
use crate::study::projection::{Band, FlowBands, Flows};
use crate::tui::format::{num, num_auto};
use crate::tui::query::StudyRun;
use crate::tui::widgets::text::wrapped_height;

/// Keys of the view.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Key {
    Up,
    Down,
    /// Enter: run and show the selected study.
    Open,
    /// `b`: the next benefit in the chart.
    NextBenefit,
    /// `m`: expected values / Monte Carlo.
    ToggleMode,
    /// PgUp / PgDn: scroll the table.
    ScrollUp,
    ScrollDown,
    /// ← →: the plans shown when they do not all fit.
    PlansLeft,
    PlansRight,
    /// `r`: read the list of studies again.
    Reload,
}

/// The view's keys.
pub fn handle_key(key: KeyEvent) -> Option<Key> {
    match key.code {
        KeyCode::Up | KeyCode::Char('k') => Some(Key::Up),
        KeyCode::Down | KeyCode::Char('j') => Some(Key::Down),
        KeyCode::Enter => Some(Key::Open),
        KeyCode::Char('b') => Some(Key::NextBenefit),
        KeyCode::Char('m') => Some(Key::ToggleMode),
        KeyCode::PageUp => Some(Key::ScrollUp),
        KeyCode::PageDown | KeyCode::Char(' ') => Some(Key::ScrollDown),
        KeyCode::Left | KeyCode::Char('h') => Some(Key::PlansLeft),
        KeyCode::Right | KeyCode::Char('l') => Some(Key::PlansRight),
        KeyCode::Char('r') => Some(Key::Reload),
        _ => None,
    }
}

/// Studies view state.
pub struct State {
    pub list: Vec<StudyListRow>,
    /// The list's cursor.
    pub selected: usize,
    /// The study shown.
    pub open: Option<String>,
    pub mode: Mode,
    /// The benefit the chart shows.
    pub benefit: Benefit,
    /// The run of the study shown; `None` while it runs.
    pub run: Option<Result<Arc<StudyRun>, String>>,
    /// The query generation the run belongs to (a write makes it stale).
    pub generation: u64,
    /// First table row shown.
    pub scroll: usize,
    /// First plan column shown.
    pub plan_offset: usize,
}

impl State {
    /// The list, with the first study opened.
    pub fn new(list: Vec<StudyListRow>) -> Self {
        let open = list.first().map(|s| s.name.clone());
        State {
            list,
            selected: 0,
            open,
            mode: Mode::Expected,
            benefit: Benefit::Co2eSequestered,
            run: None,
            generation: 0,
            scroll: 0,
            plan_offset: 0,
        }
    }

    /// A new list (after `r`): the cursor stays on the same study when it is still there.
    pub fn reload(&mut self, list: Vec<StudyListRow>) {
        let name = self.list.get(self.selected).map(|s| s.name.clone());
        self.list = list;
        self.selected = name
            .and_then(|n| self.list.iter().position(|s| s.name == n))
            .unwrap_or(0);
        if let Some(open) = &self.open
            && !self.list.iter().any(|s| &s.name == open)
        {
            self.open = None;
        }
        self.run = None;
    }

    /// Takes in a run (or why it failed).
    pub fn set_run(&mut self, run: Result<Arc<StudyRun>, String>, generation: u64) {
        self.run = Some(run);
        self.generation = generation;
    }

    /// The run shown, when ready.
    pub fn ready(&self) -> Option<&Arc<StudyRun>> {
        match &self.run {
            Some(Ok(run)) => Some(run),
            _ => None,
        }
    }

    /// Applies a key (reloading the list is the app's: it reads the store). Returns true when a run
    /// must be fetched.
    pub fn apply(&mut self, key: Key) -> bool {
        match key {
            Key::Up => self.selected = self.selected.saturating_sub(1),
            Key::Down => self.selected = (self.selected + 1).min(self.list.len().saturating_sub(1)),
            Key::Open => {
                let Some(study) = self.list.get(self.selected) else {
                    return false;
                };
                if self.open.as_deref() != Some(study.name.as_str()) {
                    self.open = Some(study.name.clone());
                    self.run = None;
                    self.scroll = 0;
                    self.plan_offset = 0;
                }
                return true;
            }
            Key::NextBenefit => {
                let i = Benefit::ALL
                    .iter()
                    .position(|b| *b == self.benefit)
                    .unwrap_or(0);
                self.benefit = Benefit::ALL[(i + 1) % Benefit::ALL.len()];
            }
            Key::ToggleMode => {
                self.mode = match self.mode {
                    Mode::Expected => Mode::MonteCarlo,
                    Mode::MonteCarlo => Mode::Expected,
                };
                self.run = None;
                return self.open.is_some();
            }
            Key::ScrollUp => self.scroll = self.scroll.saturating_sub(8),
            Key::ScrollDown => self.scroll += 8,
            Key::PlansLeft => self.plan_offset = self.plan_offset.saturating_sub(1),
            Key::PlansRight => {
                let plans = self.ready().map_or(0, |r| r.outcome.plans.len());
                self.plan_offset = (self.plan_offset + 1).min(plans.saturating_sub(1));
            }
            Key::Reload => {}
        }
        false
    }
}

/// A benefit's short label and unit.
pub fn benefit_unit(benefit: Benefit, currency: &str) -> String {
    match benefit {
        Benefit::CarbonStored => "carbon stored, t C".to_string(),
        Benefit::Co2eSequestered => "CO2e sequestered, t/yr".to_string(),
        Benefit::Interception => "rain intercepted, m³/yr".to_string(),
        Benefit::Cooling => "cooling, MWh/yr".to_string(),
        Benefit::Value => format!("value of the flows, {currency}/yr"),
    }
}

/// A year's amount of a benefit in the unit shown.
pub fn benefit_of(benefit: Benefit, f: &Flows) -> f64 {
    match benefit {
        Benefit::CarbonStored => f.carbon_kg / 1000.0,
        Benefit::Co2eSequestered => f.co2e_seq_kg_yr / 1000.0,
        Benefit::Interception => f.interception_m3_yr,
        Benefit::Cooling => f.cooling_kwh_yr / 1000.0,
        Benefit::Value => f.value,
    }
}

fn band_of(benefit: Benefit, b: &FlowBands) -> Band {
    let scale = |band: Band, s: f64| Band {
        mean: band.mean * s,
        p10: band.p10 * s,
        p50: band.p50 * s,
        p90: band.p90 * s,
    };
    match benefit {
        Benefit::CarbonStored => scale(b.carbon_kg, 0.001),
        Benefit::Co2eSequestered => scale(b.co2e_seq_kg_yr, 0.001),
        Benefit::Interception => b.interception_m3_yr,
        Benefit::Cooling => scale(b.cooling_kwh_yr, 0.001),
        Benefit::Value => b.value,
    }
}

/// A payback year, or "not within horizon".
pub fn year_text(year: Option<i32>) -> String {
    year.map_or("not within horizon".to_string(), |y| y.to_string())
}

/// The payback year of a plan for a benefit (Monte Carlo: the median over runs).
pub fn payback_of(plan: &PlanOutcome, benefit: Benefit) -> Option<i32> {
    plan.paybacks
        .iter()
        .find(|p| p.benefit == benefit)
        .and_then(|p| p.year)
}

/// One row of the side-by-side table: a label, the kept trees' cell and one cell per plan; a heading
/// row has only its label.
#[derive(Debug, Clone, PartialEq)]
pub struct TableRow {
    pub label: String,
    pub kept: String,
    pub plans: Vec<String>,
    pub heading: bool,
}

fn heading(label: String) -> TableRow {
    TableRow {
        label,
        kept: String::new(),
        plans: Vec::new(),
        heading: true,
    }
}

/// The milestone years: the removal year, 10 and 20 years on, and the last year (indices).
pub fn milestones(years: usize) -> Vec<usize> {
    let mut out: Vec<usize> = [0, 10, 20].into_iter().filter(|i| *i < years).collect();
    if years > 0 && !out.contains(&(years - 1)) {
        out.push(years - 1);
    }
    out
}

/// The side-by-side table of a run: kept trees against every plan.
pub fn table_rows(run: &StudyRun) -> Vec<TableRow> {
    let o = &run.outcome;
    let cur = o.currency.as_str();
    let plans = &o.plans;
    let dash = || vec!["–".to_string(); plans.len()];
    let row = |label: String, kept: String, cells: Vec<String>| TableRow {
        label,
        kept,
        plans: cells,
        heading: false,
    };
    let r = &o.removal;
    let mut rows = vec![heading(match o.mode {
        Mode::Expected => "Payback year".to_string(),
        Mode::MonteCarlo => "Payback (median of runs)".to_string(),
    })];
    for benefit in Benefit::ALL {
        rows.push(row(
            format!("payback: {}", short_label(benefit)),
            "–".to_string(),
            plans
                .iter()
                .map(|p| year_text(payback_of(p, benefit)))
                .collect(),
        ));
    }
    rows.push(row(
        "break-even: value (cum.)".to_string(),
        "–".to_string(),
        plans
            .iter()
            .map(|p| {
                year_text(
                    p.paybacks
                        .iter()
                        .find(|b| b.benefit == Benefit::Value)
                        .and_then(|b| b.break_even_year),
                )
            })
            .collect(),
    ));
    if o.mode == Mode::MonteCarlo {
        for benefit in Benefit::ALL {
            rows.push(row(
                format!("% runs: {}", short_label(benefit)),
                "–".to_string(),
                plans
                    .iter()
                    .map(|p| {
                        p.paybacks
                            .iter()
                            .find(|b| b.benefit == benefit)
                            .and_then(|b| b.payback_spread)
                            .map_or("–".to_string(), |s| {
                                format!("{:.0} %", s.share_within_horizon * 100.0)
                            })
                    })
                    .collect(),
            ));
        }
    }
    rows.extend([
        heading(format!("Removal in {}", o.start_year)),
        row(
            "trees removed · planted".to_string(),
            r.trees.to_string(),
            plans.iter().map(|p| p.trees_planted.to_string()).collect(),
        ),
        row(
            "stored carbon now, t CO2e".to_string(),
            num(r.stored_co2e_kg / 1000.0, 1),
            dash(),
        ),
        row(
            format!("{:.0} % released ≤10 yr, t CO2e", r.decay_share * 100.0),
            num(r.released_co2e_kg_10y / 1000.0, 1),
            dash(),
        ),
        row(
            format!("appraised value, {cur}"),
            num(r.appraisal_total, 0),
            dash(),
        ),
    ]);
    let marks = milestones(o.kept.years.len());
    let at = |pop: &Population, i: usize, benefit: Benefit| {
        pop.central
            .get(i)
            .map_or("–".to_string(), |f| num_auto(benefit_of(benefit, f)))
    };
    if o.mode == Mode::MonteCarlo {
        rows.push(heading("Per year: means of runs".to_string()));
    }
    for benefit in Benefit::ALL {
        rows.push(heading(capitalised(&benefit_unit(benefit, cur))));
        for &i in &marks {
            let year = o.kept.years.get(i).copied().unwrap_or(o.start_year);
            rows.push(row(
                format!("  {year}"),
                at(&o.kept, i, benefit),
                plans.iter().map(|p| at(&p.planted, i, benefit)).collect(),
            ));
        }
    }
    rows.push(heading(format!("Totals {}–{}", o.start_year, o.end_year)));
    let k = &o.kept.totals;
    let totals: [TotalLine; 5] = [
        (
            "CO2e sequestered, t".to_string(),
            k.co2e_seq_kg / 1000.0,
            |p| p.planted.totals.co2e_seq_kg / 1000.0,
            1,
        ),
        (
            "rain intercepted, m³".to_string(),
            k.interception_m3,
            |p| p.planted.totals.interception_m3,
            0,
        ),
        (
            "cooling, MWh".to_string(),
            k.cooling_kwh / 1000.0,
            |p| p.planted.totals.cooling_kwh / 1000.0,
            0,
        ),
        (
            format!("value of the flows, {cur}"),
            k.value,
            |p| p.planted.totals.value,
            0,
        ),
        (
            format!("value discounted, {cur}"),
            k.value_discounted,
            |p| p.planted.totals.value_discounted,
            0,
        ),
    ];
    for (label, kept, get, decimals) in totals {
        rows.push(row(
            label,
            num(kept, decimals),
            plans.iter().map(|p| num(get(p), decimals)).collect(),
        ));
    }
    rows.push(row(
        format!("discounted deficit, {cur}"),
        "–".to_string(),
        plans
            .iter()
            .map(|p| num(p.totals_deficit.value_discounted, 0))
            .collect(),
    ));
    rows
}

/// A totals row: label, the kept trees' total, a plan's total, decimals.
type TotalLine = (String, f64, fn(&PlanOutcome) -> f64, usize);

fn short_label(benefit: Benefit) -> &'static str {
    match benefit {
        Benefit::CarbonStored => "carbon stored",
        Benefit::Co2eSequestered => "CO2e sequestered",
        Benefit::Interception => "rain intercepted",
        Benefit::Cooling => "cooling",
        Benefit::Value => "value",
    }
}

fn capitalised(text: &str) -> String {
    let mut chars = text.chars();
    match chars.next() {
        Some(c) => c.to_uppercase().chain(chars).collect(),
        None => String::new(),
    }
}

/// The markers of the plans' lines in the chart (kept trees: a fine braille line). Shapes tell the
/// lines apart; colour only helps.
pub const PLAN_MARKERS: [char; 5] = ['o', '+', 'x', '*', '#'];
/// The band's and the payback marks' characters.
pub const BAND_MARK: char = '░';
pub const PAYBACK_MARK: char = '┆';

/// Okabe & Ito's colour-blind-safe palette (2008), for the plans in order.
const PLAN_COLOURS: [Color; 5] = [
    Color::Rgb(230, 159, 0),
    Color::Rgb(86, 180, 233),
    Color::Rgb(0, 158, 115),
    Color::Rgb(213, 94, 0),
    Color::Rgb(204, 121, 167),
];

fn plan_marker(i: usize) -> char {
    PLAN_MARKERS[i % PLAN_MARKERS.len()]
}

fn plan_style(i: usize, no_color: bool) -> Style {
    if no_color {
        Style::new()
    } else {
        Style::new().fg(PLAN_COLOURS[i % PLAN_COLOURS.len()])
    }
}

/// The status line.
pub fn status_line(state: &State) -> Line<'static> {
    if state.list.is_empty() {
        return Line::from(" no studies yet");
    }
    let shown = match (&state.open, &state.run) {
        (None, _) => "none open (Enter runs the selected one)".to_string(),
        (Some(name), None) => format!("'{name}' running…"),
        (Some(name), Some(Err(_))) => format!("'{name}' could not run"),
        (Some(_), Some(Ok(run))) => {
            let o = &run.outcome;
            return Line::from(format!(
                " study {}/{} · {} · survival {} · weather {} · discount {:.1} %/yr",
                state.selected + 1,
                state.list.len(),
                match o.runs {
                    Some(n) => format!("Monte Carlo {n} runs, seed {}", o.seed),
                    None => "expected values".to_string(),
                },
                o.scenario.as_str(),
                o.weather_year,
                o.discount_rate * 100.0
            ));
        }
    };
    Line::from(format!(
        " study {} of {} · {shown}",
        state.selected + 1,
        state.list.len()
    ))
}

/// Draws the view.
pub fn render(state: &State, no_color: bool, frame: &mut Frame<'_>, area: Rect) {
    let caution_height = wrapped_height(CAUTION, area.width).min(2);
    // Below 24 body rows the basis line moves to the status line (shortened) to leave the table room.
    let roomy = area.height >= 24;
    let chart_height = if roomy { 11 } else { 9 };
    let [top, rest, caution] = Layout::vertical([
        Constraint::Length(chart_height),
        Constraint::Min(4),
        Constraint::Length(caution_height),
    ])
    .areas(area);
    let list_width = if area.width >= 100 { 28 } else { 22 };
    let [list_area, chart_area] =
        Layout::horizontal([Constraint::Length(list_width), Constraint::Min(20)]).areas(top);
    render_list(state, frame, list_area);
    frame.render_widget(
        Paragraph::new(Span::styled(
            CAUTION,
            Style::new().add_modifier(Modifier::DIM),
        ))
        .wrap(Wrap { trim: true }),
        caution,
    );
    if state.list.is_empty() {
        frame.render_widget(
            Paragraph::new(
                "No removal studies yet. Studies are made with the command line, e.g.\n  streetwood study new \"Foundry works\" --start-year 2026\n  streetwood study add \"Foundry works\" --street \"Foundry Street\"\n  streetwood study plan \"Foundry works\" \"2:1 oak\" --species \"Quercus rubra\" --count 94 --dbh 5 --year 2027\nthen press r here to read the list again.",
            )
            .wrap(Wrap { trim: false }),
            Rect {
                height: top.height + rest.height,
                ..chart_area
            },
        );
        return;
    }
    let message = match (&state.open, &state.run) {
        (None, _) => Some("Enter runs the selected study and shows it here.".to_string()),
        (Some(name), None) => Some(format!(
            "running study '{name}' ({})… other views stay usable",
            match state.mode {
                Mode::Expected => "expected values",
                Mode::MonteCarlo => "Monte Carlo runs",
            }
        )),
        (Some(name), Some(Err(e))) => Some(format!("Study '{name}' cannot run: {e}")),
        (Some(_), Some(Ok(_))) => None,
    };
    let run = match (message, state.ready()) {
        (None, Some(run)) => run,
        (message, _) => {
            frame.render_widget(
                Paragraph::new(message.unwrap_or_default()).wrap(Wrap { trim: true }),
                chart_area,
            );
            return;
        }
    };
    let legend = legend_line(state, run, no_color);
    let legend_height = wrapped_height(&legend.to_string(), area.width).min(2);
    let basis_height = if roomy {
        wrapped_height(&run.basis, area.width).min(3)
    } else {
        0
    };
    let [legend_area, table_area, basis_area] = Layout::vertical([
        Constraint::Length(legend_height),
        Constraint::Min(3),
        Constraint::Length(basis_height),
    ])
    .areas(rest);
    render_chart(state, run, no_color, frame, chart_area);
    frame.render_widget(
        Paragraph::new(legend).wrap(Wrap { trim: true }),
        legend_area,
    );
    render_table(state, run, frame, table_area);
    frame.render_widget(
        Paragraph::new(Span::styled(
            run.basis.clone(),
            Style::new().add_modifier(Modifier::DIM),
        ))
        .wrap(Wrap { trim: true }),
        basis_area,
    );
}

fn render_list(state: &State, frame: &mut Frame<'_>, area: Rect) {
    let block = Block::bordered().title(format!(" Studies {} ", state.list.len()));
    let inner = block.inner(area);
    let rows = usize::from(inner.height).max(1);
    let offset = state.selected.saturating_sub(rows - 1);
    let width = usize::from(inner.width);
    let items: Vec<ListItem<'_>> = state
        .list
        .iter()
        .enumerate()
        .skip(offset)
        .take(rows)
        .map(|(i, s)| {
            let cursor = if i == state.selected { "▶" } else { " " };
            let shown = if state.open.as_deref() == Some(s.name.as_str()) {
                "●"
            } else {
                " "
            };
            let tail = format!(" {}t {}p", s.trees, s.plans);
            let room = width.saturating_sub(2 + tail.chars().count());
            let name: String = if s.name.chars().count() > room {
                let mut n: String = s.name.chars().take(room.saturating_sub(1)).collect();
                n.push('…');
                n
            } else {
                format!("{:<room$}", s.name)
            };
            let item = ListItem::new(format!("{cursor}{shown}{name}{tail}"));
            if i == state.selected {
                item.style(Style::new().add_modifier(Modifier::REVERSED))
            } else {
                item
            }
        })
        .collect();
    frame.render_widget(List::new(items).block(block), area);
}

/// The legend under the chart: each line's mark and name, the payback year of the benefit shown.
fn legend_line(state: &State, run: &StudyRun, no_color: bool) -> Line<'static> {
    let o = &run.outcome;
    let mut spans = vec![Span::raw("⣀⣀ kept trees")];
    for (i, p) in o.plans.iter().enumerate() {
        spans.push(Span::raw("  "));
        spans.push(Span::styled(
            format!("{0}{0} {1}", plan_marker(i), p.plan.name),
            plan_style(i, no_color),
        ));
        spans.push(Span::raw(format!(
            " (payback {})",
            year_text(payback_of(p, state.benefit))
        )));
    }
    if o.plans.is_empty() {
        spans.push(Span::raw(
            "  no replanting plan yet (streetwood study plan …)",
        ));
    }
    if o.mode == Mode::MonteCarlo {
        spans.push(Span::raw(format!("  {BAND_MARK} P10–P90 of runs")));
    }
    if o.plans
        .iter()
        .any(|p| payback_of(p, state.benefit).is_some())
    {
        spans.push(Span::raw(format!("  {PAYBACK_MARK} payback year")));
    }
    Line::from(spans)
}

/// Points filling the band between two curves, dense enough to touch every cell of a `cols` × `rows`
/// plot.
fn band_points(
    years: &[i32],
    bands: &[Band],
    cols: usize,
    rows: usize,
    y_max: f64,
) -> Vec<(f64, f64)> {
    let (Some(first), Some(last)) = (years.first(), years.last()) else {
        return Vec::new();
    };
    let span = f64::from(last - first).max(1.0);
    let steps_x = cols.max(1) * 2;
    let step_y = y_max / (rows.max(1) as f64 * 3.0);
    let mut out = Vec::new();
    for sx in 0..=steps_x {
        let x = f64::from(*first) + span * sx as f64 / steps_x as f64;
        let t = x - f64::from(*first);
        let i = (t.floor() as usize).min(bands.len().saturating_sub(1));
        let j = (i + 1).min(bands.len().saturating_sub(1));
        let frac = t - t.floor();
        let (Some(a), Some(b)) = (bands.get(i), bands.get(j)) else {
            continue;
        };
        let lo = a.p10 + (b.p10 - a.p10) * frac;
        let hi = a.p90 + (b.p90 - a.p90) * frac;
        let mut y = lo;
        while y <= hi && step_y > 0.0 {
            out.push((x, y));
            y += step_y;
        }
        out.push((x, hi));
    }
    out
}

fn render_chart(state: &State, run: &StudyRun, no_color: bool, frame: &mut Frame<'_>, area: Rect) {
    let o = &run.outcome;
    let benefit = state.benefit;
    let years: Vec<f64> = o.kept.years.iter().map(|y| f64::from(*y)).collect();
    let series = |pop: &Population| -> Vec<(f64, f64)> {
        years
            .iter()
            .zip(&pop.central)
            .map(|(x, f)| (*x, benefit_of(benefit, f)))
            .collect()
    };
    let bands = |pop: &Population| -> Option<Vec<Band>> {
        pop.bands
            .as_ref()
            .map(|b| b.iter().map(|fb| band_of(benefit, fb)).collect())
    };
    let kept = series(&o.kept);
    let plans: Vec<Vec<(f64, f64)>> = o.plans.iter().map(|p| series(&p.planted)).collect();
    let mut populations: Vec<&Population> = vec![&o.kept];
    populations.extend(o.plans.iter().map(|p| &p.planted));
    let all_bands: Vec<Vec<Band>> = populations.iter().filter_map(|p| bands(p)).collect();
    let y_max = kept
        .iter()
        .chain(plans.iter().flatten())
        .map(|(_, y)| *y)
        .chain(all_bands.iter().flatten().map(|b| b.p90))
        .fold(0.0_f64, f64::max)
        .max(1e-9)
        * 1.05;
    let block = Block::bordered().title(format!(
        " {} · {} ",
        benefit_unit(benefit, &o.currency),
        match o.mode {
            Mode::Expected => "expected".to_string(),
            Mode::MonteCarlo => format!("Monte Carlo, {} runs", o.runs.unwrap_or(0)),
        }
    ));
    let inner = block.inner(area);
    let cols = usize::from(inner.width);
    let rows = usize::from(inner.height);
    let band_points: Vec<Vec<(f64, f64)>> = all_bands
        .iter()
        .map(|b| band_points(&o.kept.years, b, cols, rows, y_max))
        .collect();
    let payback_lines: Vec<Vec<(f64, f64)>> = o
        .plans
        .iter()
        .filter_map(|p| payback_of(p, benefit))
        .map(|year| {
            let steps = rows.max(1) * 2;
            (0..=steps)
                .map(|k| (f64::from(year), y_max * k as f64 / steps as f64))
                .collect()
        })
        .collect();
    let dim = Style::new().add_modifier(Modifier::DIM);
    let mut datasets: Vec<Dataset<'_>> = Vec::new();
    for points in &band_points {
        datasets.push(
            Dataset::default()
                .marker(Marker::Custom(BAND_MARK))
                .graph_type(GraphType::Scatter)
                .style(dim)
                .data(points),
        );
    }
    for points in &payback_lines {
        datasets.push(
            Dataset::default()
                .marker(Marker::Custom(PAYBACK_MARK))
                .graph_type(GraphType::Scatter)
                .data(points),
        );
    }
    for (i, points) in plans.iter().enumerate() {
        datasets.push(
            Dataset::default()
                .marker(Marker::Custom(plan_marker(i)))
                .graph_type(GraphType::Line)
                .style(plan_style(i, no_color))
                .data(points),
        );
    }
    datasets.push(
        Dataset::default()
            .marker(Marker::Braille)
            .graph_type(GraphType::Line)
            .style(Style::new().add_modifier(Modifier::BOLD))
            .data(&kept),
    );
    let (x0, x1) = (
        f64::from(o.start_year),
        f64::from(o.end_year).max(f64::from(o.start_year) + 1.0),
    );
    let mid = (o.start_year + o.end_year) / 2;
    let chart = Chart::new(datasets)
        .block(block)
        .x_axis(Axis::default().bounds([x0, x1]).labels([
            o.start_year.to_string(),
            mid.to_string(),
            o.end_year.to_string(),
        ]))
        .y_axis(Axis::default().bounds([0.0, y_max]).labels([
            "0".to_string(),
            num_auto(y_max / 2.0),
            num_auto(y_max),
        ]));
    frame.render_widget(chart, area);
}

fn render_table(state: &State, run: &StudyRun, frame: &mut Frame<'_>, area: Rect) {
    let rows = table_rows(run);
    let plans = &run.outcome.plans;
    let label_width: u16 = if area.width >= 100 { 34 } else { 28 };
    let kept_width: u16 = 11;
    // "not within horizon" fits whole.
    let plan_width: u16 = 18;
    let room = area.width.saturating_sub(label_width + kept_width + 2);
    let fit = usize::from((room / (plan_width + 1)).max(1));
    let first = state.plan_offset.min(plans.len().saturating_sub(1));
    let shown: Vec<usize> = (first..plans.len()).take(fit).collect();
    let body_rows = usize::from(area.height).saturating_sub(1).max(1);
    let scroll = state.scroll.min(rows.len().saturating_sub(body_rows));
    let mut titles = vec![
        Cell::from(if scroll > 0 {
            format!(
                "▲ rows {}–{} of {}",
                scroll + 1,
                (scroll + body_rows).min(rows.len()),
                rows.len()
            )
        } else if rows.len() > body_rows {
            format!("▼ PgDn more ({} rows)", rows.len())
        } else {
            String::new()
        }),
        Cell::from(format!("{:>11}", "kept trees")),
    ];
    let mut widths = vec![
        Constraint::Length(label_width),
        Constraint::Length(kept_width),
    ];
    for &i in &shown {
        let name = plans.get(i).map_or("", |p| p.plan.name.as_str());
        titles.push(Cell::from(format!(
            "{} {}",
            plan_marker(i),
            name.chars()
                .take(usize::from(plan_width) - 2)
                .collect::<String>()
        )));
        widths.push(Constraint::Length(plan_width));
    }
    if shown.len() < plans.len() {
        titles.push(Cell::from(format!(
            "← → plans {}–{} of {}",
            first + 1,
            first + shown.len(),
            plans.len()
        )));
        widths.push(Constraint::Fill(1));
    }
    let body = rows.iter().skip(scroll).take(body_rows).map(|r| {
        if r.heading {
            return Row::new(vec![Cell::from(r.label.clone())])
                .style(Style::new().add_modifier(Modifier::BOLD));
        }
        let mut cells = vec![
            Cell::from(r.label.clone()),
            Cell::from(format!("{:>11}", r.kept)),
        ];
        for &i in &shown {
            cells.push(Cell::from(format!(
                "{:>18}",
                r.plans.get(i).cloned().unwrap_or_default()
            )));
        }
        Row::new(cells)
    });
    frame.render_widget(
        Table::new(body, widths)
            .header(Row::new(titles).style(Style::new().add_modifier(Modifier::UNDERLINED)))
            .column_spacing(1),
        area,
    );
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn milestones_are_the_start_ten_twenty_years_on_and_the_end() {
        assert_eq!(milestones(40), vec![0, 10, 20, 39]);
        assert_eq!(milestones(21), vec![0, 10, 20]);
        assert_eq!(milestones(5), vec![0, 4]);
        assert_eq!(milestones(1), vec![0]);
        assert!(milestones(0).is_empty());
    }

    #[test]
    fn the_band_is_filled_between_p10_and_p90() {
        let b = |p10: f64, p90: f64| Band {
            mean: (p10 + p90) / 2.0,
            p10,
            p50: (p10 + p90) / 2.0,
            p90,
        };
        let points = band_points(&[2026, 2027], &[b(1.0, 3.0), b(2.0, 4.0)], 4, 4, 4.0);
        assert!(!points.is_empty());
        for (x, y) in points {
            let t = x - 2026.0;
            assert!(y >= 1.0 + t - 1e-9 && y <= 3.0 + t + 1e-9, "({x}, {y})");
        }
    }
}
