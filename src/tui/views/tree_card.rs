//! Tree card: one tree's attributes, measurement history with a DBH-over-time chart, this year's
//! benefits with the full chain behind them and its sources, its assessments and work orders.

use chrono::Datelike;
use ratatui::Frame;
use ratatui::crossterm::event::{KeyCode, KeyEvent};
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::{Modifier, Style};
use ratatui::symbols::Marker;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Axis, Block, Borders, Chart, Dataset, GraphType, Paragraph, Wrap};

use super::super::app::AppSettings;
use super::super::query::CardBenefits;
use crate::science::condition::ConditionBand;
use crate::science::units::{cm_to_inches, m_to_feet};
use crate::store::roster::TreeDetail;

/// Tree card state.
#[derive(Debug, Clone)]
pub struct State {
    pub detail: TreeDetail,
    pub benefits: Result<CardBenefits, String>,
    pub scroll: u16,
}

/// Card keys that do not leave the view.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Scroll {
    Up,
    Down,
    PageUp,
    PageDown,
    Top,
}

/// Scrolling keys.
pub fn handle_key(key: KeyEvent) -> Option<Scroll> {
    match key.code {
        KeyCode::Up | KeyCode::Char('k') => Some(Scroll::Up),
        KeyCode::Down | KeyCode::Char('j') => Some(Scroll::Down),
        KeyCode::PageUp => Some(Scroll::PageUp),
        KeyCode::PageDown | KeyCode::Char(' ') => Some(Scroll::PageDown),
        KeyCode::Home | KeyCode::Char('g') => Some(Scroll::Top),
        _ => None,
    }
}

impl State {
    /// Applies a scroll key.
    pub fn scroll(&mut self, scroll: Scroll) {
        self.scroll = match scroll {
            Scroll::Up => self.scroll.saturating_sub(1),
            Scroll::Down => self.scroll.saturating_add(1),
            Scroll::PageUp => self.scroll.saturating_sub(10),
            Scroll::PageDown => self.scroll.saturating_add(10),
            Scroll::Top => 0,
        };
    }
}

fn length(value: Option<f64>, settings: AppSettings) -> String {
    match value {
        Some(m) if settings.us_units => format!("{:.1} ft", m_to_feet(m)),
        Some(m) => format!("{m:.1} m"),
        None => "—".to_string(),
    }
}

fn dbh(value: f64, settings: AppSettings) -> String {
    if settings.us_units {
        format!("{:.1} in", cm_to_inches(value))
    } else {
        format!("{value:.1} cm")
    }
}

fn heading(text: &str) -> Line<'static> {
    Line::from(Span::styled(
        text.to_string(),
        Style::new().add_modifier(Modifier::BOLD | Modifier::UNDERLINED),
    ))
}

/// The card's scrolling text.
fn body_lines(state: &State, settings: AppSettings) -> Vec<Line<'static>> {
    let d = &state.detail;
    let mut lines = vec![heading("Measurements")];
    for m in d.measurements.iter().rev() {
        let dieback = m
            .dieback_pct
            .map(|p| format!("{p:.0} % dieback"))
            .or(m.condition.map(|c| format!("condition {}", c.as_str())))
            .unwrap_or_default();
        lines.push(Line::from(format!(
            "  {}  DBH {}{}  height {}  crown {} / {}  {}{}",
            m.measured_on,
            dbh(m.dbh_cm, settings),
            m.stems_cm
                .as_ref()
                .map(|s| format!(" (stems {s})"))
                .unwrap_or_default(),
            length(m.height_m, settings),
            length(m.crown_width_m, settings),
            length(m.crown_width2_m, settings),
            dieback,
            m.measured_by
                .as_ref()
                .map(|b| format!("  by {b}"))
                .unwrap_or_default(),
        )));
    }
    lines.push(Line::from(""));
    match &state.benefits {
        Ok(card) => {
            let b = &card.row.benefits;
            lines.push(heading(&format!("Benefits {} ({})", b.year, card.basis)));
            lines.push(Line::from(format!(
                "  carbon stored {:.1} kg C ({:.0} kg CO2e) · sequestered {:.1} kg CO2e/yr",
                b.carbon_kg, b.co2e_kg, b.co2e_seq_kg_yr
            )));
            lines.push(Line::from(format!(
                "  rain intercepted {:.2} m³/yr · transpired {:.2} m³/yr · cooling {:.0} kWh/yr (latent heat)",
                b.interception_m3_yr, b.transpiration_m3_yr, b.cooling_kwh_yr
            )));
            lines.push(Line::from(format!(
                "  value of the year's flows {:.2} {}",
                b.value, card.currency
            )));
            let estimated = card.row.estimated();
            if !estimated.is_empty() {
                lines.push(Line::from(format!(
                    "  estimated inputs: {}",
                    estimated.join(", ")
                )));
            }
            lines.push(Line::from(""));
            lines.push(heading("How these numbers were made"));
            for step in b.explain(&card.currency) {
                lines.push(Line::from(format!(
                    "  {}: {} {}",
                    step.label,
                    short_number(step.value),
                    step.unit
                )));
                lines.push(Line::from(Span::styled(
                    format!("      source: {}", step.source),
                    Style::new().add_modifier(Modifier::DIM),
                )));
            }
        }
        Err(reason) => lines.push(Line::from(format!("Benefits: {reason}"))),
    }
    lines.push(Line::from(""));
    lines.push(heading("Assessments"));
    if d.assessments.is_empty() {
        lines.push(Line::from("  none"));
    }
    for a in &d.assessments {
        lines.push(Line::from(format!(
            "  {}  {} (level {}){}  next due {}  {}",
            a.assessed_on,
            a.rating.to_uppercase(),
            a.level,
            a.assessor
                .as_ref()
                .map(|x| format!(" by {x}"))
                .unwrap_or_default(),
            a.next_due_on.clone().unwrap_or_default(),
            a.modes
        )));
    }
    lines.push(Line::from(format!("  {}", crate::care::risk::CAUTION)));
    lines.push(Line::from(""));
    lines.push(heading("Work orders"));
    if d.work.is_empty() {
        lines.push(Line::from("  none"));
    }
    for w in &d.work {
        lines.push(Line::from(format!(
            "  #{} {} · priority {} · {}{}{}{}",
            w.id,
            w.task,
            w.priority,
            w.status,
            w.due_on
                .as_ref()
                .map(|x| format!(" · due {x}"))
                .unwrap_or_default(),
            w.done_on
                .as_ref()
                .map(|x| format!(" · done {x}"))
                .unwrap_or_default(),
            w.crew
                .as_ref()
                .map(|x| format!(" · {x}"))
                .unwrap_or_default(),
        )));
    }
    lines
}

fn short_number(x: f64) -> String {
    if x == 0.0 {
        "0".to_string()
    } else if x.abs() >= 100.0 {
        format!("{x:.1}")
    } else if x.abs() >= 1.0 {
        format!("{x:.3}")
    } else {
        format!("{x:.4}")
    }
}

/// Draws the card.
pub fn render(state: &State, settings: AppSettings, frame: &mut Frame<'_>, area: Rect) {
    let [top, body] = Layout::vertical([Constraint::Length(8), Constraint::Min(3)]).areas(area);
    let [facts, chart] =
        Layout::horizontal([Constraint::Percentage(55), Constraint::Percentage(45)]).areas(top);
    let d = &state.detail;
    let s = &d.summary;
    let band = s
        .effective_dieback_pct()
        .map(|p| ConditionBand::from_dieback(p).as_str())
        .unwrap_or("not recorded");
    let place = [s.street.clone(), s.house_number.clone()]
        .into_iter()
        .flatten()
        .collect::<Vec<_>>()
        .join(" ");
    let facts_lines = vec![
        Line::from(Span::styled(
            format!("{} — {}", s.species, s.common_name),
            Style::new().add_modifier(Modifier::BOLD),
        )),
        Line::from(format!("tree {} · uid {}", s.id, s.uid)),
        Line::from(format!(
            "{} · {} · zone {}",
            if place.is_empty() {
                "no address".to_string()
            } else {
                place
            },
            d.site_kind
                .map(|k| k.as_str())
                .unwrap_or("site not recorded"),
            s.zone.clone().unwrap_or_else(|| "none".to_string())
        )),
        Line::from(format!(
            "status {}{} · condition {band}",
            s.status,
            d.removed_on
                .as_ref()
                .map(|r| format!(" on {r}"))
                .unwrap_or_default()
        )),
        Line::from(match (d.lon, d.lat) {
            (Some(lon), Some(lat)) => format!("position {lat:.6}, {lon:.6} (lat, lon)"),
            _ => "no position".to_string(),
        }),
        Line::from(format!(
            "planted {}{}",
            d.planted_on.clone().unwrap_or_else(|| "—".to_string()),
            d.notes
                .as_ref()
                .map(|n| format!(" · {n}"))
                .unwrap_or_default()
        )),
    ];
    frame.render_widget(
        Paragraph::new(facts_lines)
            .wrap(Wrap { trim: true })
            .block(Block::default().borders(Borders::BOTTOM)),
        facts,
    );
    render_chart(state, settings, frame, chart);
    frame.render_widget(
        Paragraph::new(body_lines(state, settings))
            .wrap(Wrap { trim: false })
            .scroll((state.scroll, 0)),
        body,
    );
}

fn render_chart(state: &State, settings: AppSettings, frame: &mut Frame<'_>, area: Rect) {
    let points: Vec<(f64, f64)> = state
        .detail
        .measurements
        .iter()
        .map(|m| {
            let year =
                f64::from(m.measured_on.year()) + f64::from(m.measured_on.ordinal0()) / 365.25;
            (
                year,
                if settings.us_units {
                    cm_to_inches(m.dbh_cm)
                } else {
                    m.dbh_cm
                },
            )
        })
        .collect();
    let block = Block::default()
        .borders(Borders::ALL)
        .title(" DBH over time ");
    if points.len() < 2 {
        frame.render_widget(
            Paragraph::new(format!(
                "{} measurement(s): the chart needs two",
                points.len()
            ))
            .block(block),
            area,
        );
        return;
    }
    let (x0, x1) = points
        .iter()
        .fold((f64::MAX, f64::MIN), |(a, b), p| (a.min(p.0), b.max(p.0)));
    // Measurements close together (or on one day) still get a readable span of at least a year.
    let (x0, x1) = if x1 - x0 < 1.0 {
        ((x0 + x1) / 2.0 - 0.5, (x0 + x1) / 2.0 + 0.5)
    } else {
        (x0, x1)
    };
    let (y0, y1) = points
        .iter()
        .fold((f64::MAX, f64::MIN), |(a, b), p| (a.min(p.1), b.max(p.1)));
    let pad = ((y1 - y0) * 0.1).max(0.5);
    let unit = if settings.us_units { "in" } else { "cm" };
    let dataset = Dataset::default()
        .marker(Marker::Braille)
        .graph_type(GraphType::Line)
        .data(&points);
    let chart = Chart::new(vec![dataset])
        .block(block)
        .x_axis(
            Axis::default()
                .bounds([x0, x1])
                .labels([year_label(x0), year_label(x1)]),
        )
        .y_axis(Axis::default().bounds([y0 - pad, y1 + pad]).labels([
            format!("{:.0}", y0 - pad),
            format!("{:.0} {unit}", y1 + pad),
        ]));
    frame.render_widget(chart, area);
}

/// A fractional year as the year it falls in (2026.9 is still 2026).
fn year_label(year: f64) -> String {
    format!("{}", year.floor())
}
