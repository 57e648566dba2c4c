//! Year summary: the year's totals over every standing tree (the same sums as `streetwood summary`),
//! a bar chart and a table of the groups (species top 10 and the rest, zone, street, DBH class,
//! condition band) for one measure at a time, and the line stating year, station and prices. The
//! year is computed off the UI thread (see [`crate::tui::query::Query::year_run`]); groups are summed
//! when the result arrives or the grouping changes, never while drawing.

use std::sync::Arc;

use ratatui::Frame;
use ratatui::crossterm::event::{KeyCode, KeyEvent};
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::{Color, Modifier, Style};
use ratatui::text::{Line, Span};
use ratatui::widgets::{Bar, BarChart, Block, Cell, Paragraph, Row, Table, Wrap};

use super::roster::Move;
use crate::science::inventory::{GroupBy, SummaryRow, summarize, top_and_other};
use crate::store::benefits::YearRun;
use crate::tui::format::{num, num_auto};
use crate::tui::query::SUMMARY_TOP_SPECIES;

/// How the groups are formed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Grouping {
    /// The top species by carbon stored, the rest as one row.
    Species,
    Zone,
    Street,
    DbhClass,
    Condition,
}

impl Grouping {
    /// The order `b` cycles through.
    pub const ALL: [Grouping; 5] = [
        Grouping::Species,
        Grouping::Zone,
        Grouping::Street,
        Grouping::DbhClass,
        Grouping::Condition,
    ];

    /// The summary's grouping.
    pub fn group_by(self) -> GroupBy {
        match self {
            Grouping::Species => GroupBy::Species,
            Grouping::Zone => GroupBy::Zone,
            Grouping::Street => GroupBy::Street,
            Grouping::DbhClass => GroupBy::DbhClass,
            Grouping::Condition => GroupBy::Condition,
        }
    }

    /// The column heading of the groups.
    pub fn label(self) -> &'static str {
        match self {
            Grouping::Species => "species",
            Grouping::Zone => "zone",
            Grouping::Street => "street",
            Grouping::DbhClass => "DBH class",
            Grouping::Condition => "condition band",
        }
    }

    fn order_note(self) -> &'static str {
        match self {
            Grouping::Species => "top 10 by carbon, then the rest",
            Grouping::Zone | Grouping::Street => "by carbon",
            Grouping::DbhClass => "smallest first",
            Grouping::Condition => "best first",
        }
    }
}

/// What the bars and the table's measure column show.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Measure {
    Trees,
    CarbonStored,
    Co2eSequestered,
    Interception,
    Transpiration,
    Cooling,
    Value,
}

impl Measure {
    /// The order `m` cycles through.
    pub const ALL: [Measure; 7] = [
        Measure::Trees,
        Measure::CarbonStored,
        Measure::Co2eSequestered,
        Measure::Interception,
        Measure::Transpiration,
        Measure::Cooling,
        Measure::Value,
    ];

    pub fn label(self) -> &'static str {
        match self {
            Measure::Trees => "trees",
            Measure::CarbonStored => "carbon stored",
            Measure::Co2eSequestered => "CO2e sequestered",
            Measure::Interception => "rain intercepted",
            Measure::Transpiration => "transpiration",
            Measure::Cooling => "cooling",
            Measure::Value => "value",
        }
    }

    /// The unit shown (value: the currency per year).
    pub fn unit(self, currency: &str) -> String {
        match self {
            Measure::Trees => "trees".to_string(),
            Measure::CarbonStored => "t C".to_string(),
            Measure::Co2eSequestered => "t CO2e/yr".to_string(),
            Measure::Interception | Measure::Transpiration => "m³/yr".to_string(),
            Measure::Cooling => "MWh/yr".to_string(),
            Measure::Value => format!("{currency}/yr"),
        }
    }

    /// A group's amount in the unit shown.
    pub fn of(self, row: &SummaryRow) -> f64 {
        match self {
            Measure::Trees => row.trees as f64,
            Measure::CarbonStored => row.carbon_kg / 1000.0,
            Measure::Co2eSequestered => row.co2e_seq_kg_yr / 1000.0,
            Measure::Interception => row.interception_m3_yr,
            Measure::Transpiration => row.transpiration_m3_yr,
            Measure::Cooling => row.cooling_kwh_yr / 1000.0,
            Measure::Value => row.value,
        }
    }

    /// The amount as printed.
    pub fn text(self, row: &SummaryRow) -> String {
        match self {
            Measure::Trees => num(row.trees as f64, 0),
            other => num_auto(other.of(row)),
        }
    }
}

/// Keys of the view that change its state (export is the app's: it opens a prompt).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Key {
    NextGrouping,
    NextMeasure,
    /// `[`: an earlier year of weather held.
    EarlierYear,
    /// `]`: a later one.
    LaterYear,
    Move(Move),
}

/// The view's keys (export `x` and the global keys are the app's).
pub fn handle_key(key: KeyEvent) -> Option<Key> {
    match key.code {
        KeyCode::Char('b') => Some(Key::NextGrouping),
        KeyCode::Char('m') => Some(Key::NextMeasure),
        KeyCode::Char('[') => Some(Key::EarlierYear),
        KeyCode::Char(']') => Some(Key::LaterYear),
        _ => super::roster::handle_key(key).map(Key::Move),
    }
}

/// Year summary state.
pub struct State {
    /// The year asked for (`None`: the latest year of weather held, the tree card's year).
    pub year: Option<i32>,
    /// Years of weather held at the default station, latest first.
    pub years: Vec<i32>,
    /// The computed year, or why it cannot be computed; `None` while computing.
    pub run: Option<Result<Arc<YearRun>, String>>,
    /// The query generation the run belongs to (a write makes it stale).
    pub generation: u64,
    pub grouping: Grouping,
    pub measure: Measure,
    /// The groups of the grouping shown, summed from the run (species: top 10 and the rest).
    pub groups: Vec<SummaryRow>,
    /// The sums over every tree of the run.
    pub total: SummaryRow,
    /// The selected table row.
    pub selected: usize,
}

impl State {
    /// A view waiting for the latest year.
    pub fn new(years: Vec<i32>) -> Self {
        State {
            year: None,
            years,
            run: None,
            generation: 0,
            grouping: Grouping::Species,
            measure: Measure::CarbonStored,
            groups: Vec::new(),
            total: SummaryRow::default(),
            selected: 0,
        }
    }

    /// Takes in a computed year (or its error) and sums its groups.
    pub fn set_run(&mut self, run: Result<Arc<YearRun>, String>, generation: u64) {
        self.run = Some(run);
        self.generation = generation;
        self.recompute();
    }

    /// The year shown or being computed, when known.
    pub fn shown_year(&self) -> Option<i32> {
        match (&self.run, self.year) {
            (Some(Ok(run)), _) => Some(run.year),
            (_, Some(year)) => Some(year),
            _ => self.years.first().copied(),
        }
    }

    /// The computed run, when ready.
    pub fn ready(&self) -> Option<&Arc<YearRun>> {
        match &self.run {
            Some(Ok(run)) => Some(run),
            _ => None,
        }
    }

    fn recompute(&mut self) {
        let Some(run) = self.ready().cloned() else {
            self.groups.clear();
            self.total = SummaryRow::default();
            return;
        };
        let (groups, total) = summarize(&run.rows, self.grouping.group_by());
        self.groups = match self.grouping {
            Grouping::Species => top_and_other(&groups, SUMMARY_TOP_SPECIES),
            _ => groups,
        };
        self.total = total;
        self.selected = self.selected.min(self.groups.len().saturating_sub(1));
    }

    /// Applies a view key; returns true when another year must be fetched.
    pub fn apply(&mut self, key: Key) -> bool {
        match key {
            Key::NextGrouping => {
                let i = Grouping::ALL
                    .iter()
                    .position(|g| *g == self.grouping)
                    .unwrap_or(0);
                self.grouping = Grouping::ALL[(i + 1) % Grouping::ALL.len()];
                self.selected = 0;
                self.recompute();
                false
            }
            Key::NextMeasure => {
                let i = Measure::ALL
                    .iter()
                    .position(|m| *m == self.measure)
                    .unwrap_or(0);
                self.measure = Measure::ALL[(i + 1) % Measure::ALL.len()];
                false
            }
            Key::EarlierYear => self.step_year(1),
            Key::LaterYear => self.step_year(-1),
            Key::Move(movement) => {
                let last = self.groups.len().saturating_sub(1);
                self.selected = match movement {
                    Move::Up => self.selected.saturating_sub(1),
                    Move::Down => (self.selected + 1).min(last),
                    Move::PageUp => self.selected.saturating_sub(10),
                    Move::PageDown => (self.selected + 10).min(last),
                    Move::First => 0,
                    Move::Last => last,
                };
                false
            }
        }
    }

    /// Moves `steps` along the years held (latest first: +1 is an earlier year).
    fn step_year(&mut self, steps: isize) -> bool {
        let Some(current) = self.shown_year() else {
            return false;
        };
        let Some(i) = self.years.iter().position(|y| *y == current) else {
            return false;
        };
        let Some(next) = i
            .checked_add_signed(steps)
            .and_then(|j| self.years.get(j).copied())
        else {
            return false;
        };
        // The latest year is the tree card's: asked for as `None`, it reuses that computation.
        self.year = if next == self.years[0] {
            None
        } else {
            Some(next)
        };
        self.run = None;
        self.selected = 0;
        self.recompute();
        true
    }
}

/// The status line: year and position in the table.
pub fn status_line(state: &State) -> Line<'static> {
    let year = state
        .shown_year()
        .map_or("no weather year".to_string(), |y| y.to_string());
    match &state.run {
        None => Line::from(format!(" {year}: computing…")),
        Some(Err(_)) => Line::from(format!(" {year}: not computed")),
        Some(Ok(_)) if state.groups.is_empty() => Line::from(format!(" {year}: no groups")),
        Some(Ok(_)) => Line::from(format!(
            " {year} · {} {} of {}",
            state.grouping.label(),
            state.selected + 1,
            state.groups.len()
        )),
    }
}

/// The totals, in words (the same sums as `streetwood summary`).
pub fn totals_text(total: &SummaryRow, currency: &str) -> String {
    format!(
        "{} trees · carbon stored {} t C ({} t CO2e) · CO2e sequestered {} t/yr · rain intercepted {} m³/yr · transpiration {} m³/yr · cooling {} MWh/yr · value {currency} {}/yr",
        num(total.trees as f64, 0),
        num(total.carbon_kg / 1000.0, 1),
        num(total.co2e_kg / 1000.0, 1),
        num(total.co2e_seq_kg_yr / 1000.0, 1),
        num(total.interception_m3_yr, 0),
        num(total.transpiration_m3_yr, 0),
        num(total.cooling_kwh_yr / 1000.0, 0),
        num(total.value, 0),
    )
}

/// The bars of the chart: the groups that fit in `rows`, the rest summed into one bar.
pub fn bars(state: &State, rows: usize) -> Vec<(String, f64)> {
    let rows = rows.max(1);
    let measure = state.measure;
    if state.groups.len() <= rows {
        return state
            .groups
            .iter()
            .map(|g| (g.group.clone(), measure.of(g)))
            .collect();
    }
    let keep = rows.saturating_sub(1);
    let mut out: Vec<(String, f64)> = state.groups[..keep]
        .iter()
        .map(|g| (g.group.clone(), measure.of(g)))
        .collect();
    let rest = &state.groups[keep..];
    out.push((
        format!("the other {}", rest.len()),
        rest.iter().map(|g| measure.of(g)).sum(),
    ));
    out
}

fn truncate(text: &str, width: usize) -> String {
    if text.chars().count() <= width {
        return text.to_string();
    }
    let mut out: String = text.chars().take(width.saturating_sub(1)).collect();
    out.push('…');
    out
}

/// Draws the view.
pub fn render(state: &State, no_color: bool, frame: &mut Frame<'_>, area: Rect) {
    let year = state
        .shown_year()
        .map_or("—".to_string(), |y| y.to_string());
    let years_held = if state.years.len() > 1 {
        format!(
            " · years {}",
            state
                .years
                .iter()
                .rev()
                .map(|y| if Some(*y) == state.shown_year() {
                    format!("[{y}]")
                } else {
                    y.to_string()
                })
                .collect::<Vec<_>>()
                .join(" ")
        )
    } else {
        String::new()
    };
    let header = Line::from(vec![
        Span::styled(
            format!("Year summary {year}"),
            Style::new().add_modifier(Modifier::BOLD),
        ),
        Span::raw(format!(
            " · by {} (b) · {} (m){years_held}",
            state.grouping.label(),
            state.measure.label()
        )),
    ]);
    let run = match &state.run {
        None => {
            let [top, rest] =
                Layout::vertical([Constraint::Length(1), Constraint::Min(1)]).areas(area);
            frame.render_widget(Paragraph::new(header), top);
            frame.render_widget(
                Paragraph::new(format!(
                    "computing {year}'s benefits of every standing tree… (other views stay usable)"
                ))
                .wrap(Wrap { trim: true }),
                rest,
            );
            return;
        }
        Some(Err(error)) => {
            let [top, rest] =
                Layout::vertical([Constraint::Length(1), Constraint::Min(1)]).areas(area);
            frame.render_widget(Paragraph::new(header), top);
            frame.render_widget(
                Paragraph::new(format!("The year summary cannot be computed: {error}"))
                    .wrap(Wrap { trim: true }),
                rest,
            );
            return;
        }
        Some(Ok(run)) => run,
    };
    let currency = run.prices.currency.as_str();
    let totals = totals_text(&state.total, currency);
    let basis = format!(
        "{}. {} of {} trees have an estimated input.",
        run.basis_line(),
        state.total.estimated_trees,
        state.total.trees
    );
    let totals_height = super::super::widgets::text::wrapped_height(&totals, area.width).min(3);
    let basis_height = super::super::widgets::text::wrapped_height(&basis, area.width).min(4);
    let [top, totals_area, middle, basis_area] = Layout::vertical([
        Constraint::Length(1),
        Constraint::Length(totals_height),
        Constraint::Min(5),
        Constraint::Length(basis_height),
    ])
    .areas(area);
    frame.render_widget(Paragraph::new(header), top);
    frame.render_widget(
        Paragraph::new(totals).wrap(Wrap { trim: true }),
        totals_area,
    );
    frame.render_widget(
        Paragraph::new(Span::styled(
            basis,
            Style::new().add_modifier(Modifier::DIM),
        ))
        .wrap(Wrap { trim: true }),
        basis_area,
    );
    let chart_share = if area.width >= 100 { 50 } else { 40 };
    let [chart_area, table_area] = Layout::horizontal([
        Constraint::Percentage(chart_share),
        Constraint::Percentage(100 - chart_share),
    ])
    .areas(middle);
    render_chart(state, currency, no_color, frame, chart_area);
    render_table(state, currency, frame, table_area);
}

fn render_chart(state: &State, currency: &str, no_color: bool, frame: &mut Frame<'_>, area: Rect) {
    // The groups are named in the table's title; the chart's names the measure and its unit whole.
    let block = Block::bordered().title(format!(
        " {}, {} ",
        state.measure.label(),
        state.measure.unit(currency)
    ));
    let inner = block.inner(area);
    let data = bars(state, usize::from(inner.height));
    let label_width = (usize::from(inner.width) * 2 / 5).clamp(6, 18);
    // Bars carry their value as text, so nothing is told by colour or length alone.
    let bar_style = if no_color {
        Style::new()
    } else {
        Style::new().fg(Color::Rgb(0, 114, 178))
    };
    let bars: Vec<Bar<'_>> = data
        .iter()
        .map(|(label, value)| {
            Bar::default()
                .label(Line::from(truncate(label, label_width)))
                .value((value.max(0.0) * 100.0).round() as u64)
                .text_value(num_auto(*value))
        })
        .collect();
    frame.render_widget(
        BarChart::horizontal(bars)
            .block(block)
            .bar_width(1)
            .bar_gap(0)
            .bar_style(bar_style)
            .value_style(Style::new().add_modifier(Modifier::REVERSED)),
        area,
    );
}

fn render_table(state: &State, currency: &str, frame: &mut Frame<'_>, area: Rect) {
    let block = Block::bordered().title(format!(
        " {} ({}) ",
        state.grouping.label(),
        state.grouping.order_note()
    ));
    let inner_rows = usize::from(block.inner(area).height).saturating_sub(1);
    let measure = state.measure;
    let show_measure = measure != Measure::Trees;
    let total_measure = measure.of(&state.total);
    let mut titles = vec![
        String::new(),
        state.grouping.label().to_string(),
        "trees".to_string(),
    ];
    let mut widths = vec![
        Constraint::Length(1),
        Constraint::Fill(1),
        Constraint::Length(5),
    ];
    if show_measure {
        titles.push(measure.unit(currency));
        widths.push(Constraint::Length(9));
    }
    titles.push("share".to_string());
    widths.push(Constraint::Length(6));
    let offset = state.selected.saturating_sub(inner_rows.saturating_sub(1));
    let rows = state
        .groups
        .iter()
        .enumerate()
        .skip(offset)
        .take(inner_rows.max(1))
        .map(|(i, g)| {
            let selected = i == state.selected;
            let share = if total_measure > 0.0 {
                format!("{:>5.1}%", measure.of(g) / total_measure * 100.0)
            } else {
                String::new()
            };
            let mut cells = vec![
                Cell::from(if selected { "▶" } else { "" }),
                Cell::from(g.group.clone()),
                Cell::from(format!("{:>5}", g.trees)),
            ];
            if show_measure {
                cells.push(Cell::from(format!("{:>9}", measure.text(g))));
            }
            cells.push(Cell::from(share));
            let row = Row::new(cells);
            if selected {
                row.style(Style::new().add_modifier(Modifier::REVERSED))
            } else {
                row
            }
        });
    frame.render_widget(
        Table::new(rows, widths)
            .header(
                Row::new(titles)
                    .style(Style::new().add_modifier(Modifier::BOLD | Modifier::UNDERLINED)),
            )
            .block(block),
        area,
    );
}

#[cfg(test)]
mod tests {
    use super::*;

    fn row(group: &str, trees: usize, carbon_kg: f64) -> SummaryRow {
        SummaryRow {
            group: group.to_string(),
            trees,
            carbon_kg,
            ..SummaryRow::default()
        }
    }

    #[test]
    fn bars_that_do_not_fit_are_summed_into_one() {
        let mut state = State::new(vec![2026]);
        state.groups = (0..5).map(|i| row(&format!("g{i}"), i, 1000.0)).collect();
        let all = bars(&state, 5);
        assert_eq!(all.len(), 5);
        let three = bars(&state, 3);
        assert_eq!(three.len(), 3);
        assert_eq!(three[2], ("the other 3".to_string(), 3.0), "t C");
        state.measure = Measure::Trees;
        assert_eq!(bars(&state, 3)[2].1, 9.0);
    }

    #[test]
    fn years_step_among_those_held_and_the_latest_is_asked_as_none() {
        let mut state = State::new(vec![2026, 2025, 2024]);
        assert_eq!(state.shown_year(), Some(2026));
        assert!(state.apply(Key::EarlierYear));
        assert_eq!(state.year, Some(2025));
        assert!(state.apply(Key::EarlierYear));
        assert!(!state.apply(Key::EarlierYear), "no year before 2024");
        assert!(state.apply(Key::LaterYear));
        assert!(state.apply(Key::LaterYear));
        assert_eq!(state.year, None, "the latest year reuses the card's run");
        assert!(!state.apply(Key::LaterYear));
    }
}
