//! Plan view: the trees as points on a map canvas, each class with its own symbol and colour (never
//! colour alone), a legend, pan and zoom, jump to the selected tree, and an area selection that
//! filters the roster.

use std::collections::HashSet;

use ratatui::Frame;
use ratatui::crossterm::event::{KeyCode, KeyEvent};
use ratatui::layout::{Constraint, Layout, Rect};
use ratatui::style::{Color, Style};
use ratatui::text::{Line, Span};
use ratatui::widgets::canvas::Canvas;
use ratatui::widgets::{Block, Borders, Paragraph};

use crate::science::condition::ConditionBand;
use crate::store::roster::{RosterEntry, RosterIndexData};

/// What the points are coloured (and shaped) by.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ColourBy {
    Species,
    Condition,
    Risk,
    DbhClass,
}

impl ColourBy {
    fn next(self) -> Self {
        match self {
            ColourBy::Species => ColourBy::Condition,
            ColourBy::Condition => ColourBy::Risk,
            ColourBy::Risk => ColourBy::DbhClass,
            ColourBy::DbhClass => ColourBy::Species,
        }
    }

    /// Label for the legend.
    pub fn label(self) -> &'static str {
        match self {
            ColourBy::Species => "species (8 commonest)",
            ColourBy::Condition => "condition band",
            ColourBy::Risk => "risk rating",
            ColourBy::DbhClass => "DBH class",
        }
    }
}

/// Symbols per class, so nothing is told by colour alone.
const SYMBOLS: [&str; 9] = ["●", "▲", "■", "◆", "✚", "○", "△", "□", "·"];
/// Okabe & Ito's colour-blind-safe palette (2008, "Color Universal Design"), grey for the rest.
const PALETTE: [Color; 9] = [
    Color::Rgb(230, 159, 0),
    Color::Rgb(86, 180, 233),
    Color::Rgb(0, 158, 115),
    Color::Rgb(240, 228, 66),
    Color::Rgb(0, 114, 178),
    Color::Rgb(213, 94, 0),
    Color::Rgb(204, 121, 167),
    Color::Rgb(255, 255, 255),
    Color::Rgb(150, 150, 150),
];

/// A tree on the map.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PlanPoint {
    pub id: i64,
    pub lon: f64,
    pub lat: f64,
    pub entry: RosterEntry,
}

/// What a key asks of the app.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum PlanAction {
    /// Filter the roster to these trees.
    SelectArea(HashSet<i64>),
    /// Open the card of the tree nearest the crosshair.
    OpenNearest(i64),
    /// Centre on the roster's selected tree.
    CentreOnSelected,
}

/// Plan view state.
#[derive(Debug, Clone)]
pub struct State {
    points: Vec<PlanPoint>,
    pub centre: (f64, f64),
    /// Latitude span shown, degrees.
    pub span_lat: f64,
    pub colour_by: ColourBy,
    pub corner: Option<(f64, f64)>,
    classes: Vec<String>,
    species_rank: Vec<u32>,
}

impl State {
    /// A map of the trees with positions, framed to show all of them.
    pub fn new(positions: &[(i64, f64, f64)], index: &RosterIndexData) -> Self {
        let mut points = Vec::with_capacity(positions.len());
        let mut entries = index.entries.iter().peekable();
        for (id, lon, lat) in positions {
            while entries.peek().is_some_and(|e| e.id < *id) {
                entries.next();
            }
            if let Some(entry) = entries.peek().filter(|e| e.id == *id) {
                points.push(PlanPoint {
                    id: *id,
                    lon: *lon,
                    lat: *lat,
                    entry: **entry,
                });
            }
        }
        let (mut min_lon, mut max_lon, mut min_lat, mut max_lat) =
            (f64::MAX, f64::MIN, f64::MAX, f64::MIN);
        for p in &points {
            min_lon = min_lon.min(p.lon);
            max_lon = max_lon.max(p.lon);
            min_lat = min_lat.min(p.lat);
            max_lat = max_lat.max(p.lat);
        }
        let (centre, span_lat) = if points.is_empty() {
            ((0.0, 0.0), 1.0)
        } else {
            let lat_span = (max_lat - min_lat)
                .max((max_lon - min_lon) * ((min_lat + max_lat) / 2.0).to_radians().cos() / 2.0);
            (
                ((min_lon + max_lon) / 2.0, (min_lat + max_lat) / 2.0),
                (lat_span * 1.1).max(0.0005),
            )
        };
        // Species ranked by how many trees they have, commonest first.
        let mut counts = vec![0usize; index.species.len()];
        for p in &points {
            if let Some(c) = counts.get_mut(p.entry.species as usize) {
                *c += 1;
            }
        }
        let mut by_count: Vec<usize> = (0..counts.len()).collect();
        by_count.sort_by(|a, b| counts[*b].cmp(&counts[*a]).then(a.cmp(b)));
        let mut species_rank = vec![8u32; counts.len()];
        let mut classes_species = Vec::new();
        for (rank, species) in by_count.iter().take(8).enumerate() {
            species_rank[*species] = rank as u32;
            classes_species.push(index.species[*species].1.clone());
        }
        classes_species.push("other".to_string());
        State {
            points,
            centre,
            span_lat,
            colour_by: ColourBy::Species,
            corner: None,
            classes: classes_species,
            species_rank,
        }
    }

    /// Number of trees on the map.
    pub fn len(&self) -> usize {
        self.points.len()
    }

    /// True when no tree has a position.
    pub fn is_empty(&self) -> bool {
        self.points.is_empty()
    }

    fn class_of(&self, entry: &RosterEntry) -> usize {
        match self.colour_by {
            ColourBy::Species => self
                .species_rank
                .get(entry.species as usize)
                .copied()
                .unwrap_or(8) as usize,
            ColourBy::Condition => {
                if entry.dieback_pct.is_nan() {
                    8
                } else {
                    ConditionBand::ALL
                        .iter()
                        .position(|b| {
                            *b == ConditionBand::from_dieback(f64::from(entry.dieback_pct))
                        })
                        .unwrap_or(8)
                }
            }
            ColourBy::Risk => match entry.risk {
                0 => 8,
                r => (r - 1) as usize,
            },
            ColourBy::DbhClass => match entry.dbh_cm {
                d if d.is_nan() => 8,
                d if d < 15.0 => 0,
                d if d < 30.0 => 1,
                d if d < 60.0 => 2,
                _ => 3,
            },
        }
    }

    fn class_labels(&self) -> Vec<String> {
        match self.colour_by {
            ColourBy::Species => self.classes.clone(),
            ColourBy::Condition => ConditionBand::ALL
                .iter()
                .map(|b| b.as_str().to_string())
                .collect(),
            ColourBy::Risk => ["low", "moderate", "high", "extreme"]
                .map(String::from)
                .to_vec(),
            ColourBy::DbhClass => ["< 15 cm", "15–30 cm", "30–60 cm", "≥ 60 cm"]
                .map(String::from)
                .to_vec(),
        }
    }

    fn span_lon(&self) -> f64 {
        self.span_lat * 2.0 / self.centre.1.to_radians().cos().max(0.05)
    }

    /// Handles a key; returns what the app must do, if anything.
    pub fn handle_key(&mut self, key: KeyEvent) -> Option<PlanAction> {
        let step_lat = self.span_lat / 4.0;
        let step_lon = self.span_lon() / 4.0;
        match key.code {
            KeyCode::Left | KeyCode::Char('h') => self.centre.0 -= step_lon,
            KeyCode::Right | KeyCode::Char('l') => self.centre.0 += step_lon,
            KeyCode::Up | KeyCode::Char('k') => self.centre.1 += step_lat,
            KeyCode::Down | KeyCode::Char('j') => self.centre.1 -= step_lat,
            KeyCode::Char('+') | KeyCode::Char('=') => {
                self.span_lat = (self.span_lat / 1.5).max(0.00005)
            }
            KeyCode::Char('-') => self.span_lat = (self.span_lat * 1.5).min(180.0),
            KeyCode::Char('c') => self.colour_by = self.colour_by.next(),
            KeyCode::Char('.') => return Some(PlanAction::CentreOnSelected),
            KeyCode::Enter => return self.nearest().map(PlanAction::OpenNearest),
            KeyCode::Char('v') => match self.corner.take() {
                None => self.corner = Some(self.centre),
                Some(first) => {
                    return Some(PlanAction::SelectArea(self.ids_between(first, self.centre)));
                }
            },
            _ => {}
        }
        None
    }

    /// Centres on a tree, if it has a position.
    pub fn centre_on(&mut self, tree_id: i64) -> bool {
        match self.points.iter().find(|p| p.id == tree_id) {
            Some(p) => {
                self.centre = (p.lon, p.lat);
                true
            }
            None => false,
        }
    }

    fn nearest(&self) -> Option<i64> {
        let scale = self.centre.1.to_radians().cos();
        self.points
            .iter()
            .min_by(|a, b| {
                let d = |p: &PlanPoint| {
                    ((p.lon - self.centre.0) * scale).powi(2) + (p.lat - self.centre.1).powi(2)
                };
                d(a).total_cmp(&d(b))
            })
            .map(|p| p.id)
    }

    /// Trees inside the rectangle with corners `a` and `b`.
    pub fn ids_between(&self, a: (f64, f64), b: (f64, f64)) -> HashSet<i64> {
        let (lon0, lon1) = (a.0.min(b.0), a.0.max(b.0));
        let (lat0, lat1) = (a.1.min(b.1), a.1.max(b.1));
        self.points
            .iter()
            .filter(|p| (lon0..=lon1).contains(&p.lon) && (lat0..=lat1).contains(&p.lat))
            .map(|p| p.id)
            .collect()
    }
}

/// Draws the map and its legend.
pub fn render(state: &State, no_color: bool, frame: &mut Frame<'_>, area: Rect) {
    let [map, legend] =
        Layout::horizontal([Constraint::Min(20), Constraint::Length(30)]).areas(area);
    let half_lon = state.span_lon() / 2.0;
    let half_lat = state.span_lat / 2.0;
    let (x0, x1) = (state.centre.0 - half_lon, state.centre.0 + half_lon);
    let (y0, y1) = (state.centre.1 - half_lat, state.centre.1 + half_lat);
    let visible: Vec<&PlanPoint> = state
        .points
        .iter()
        .filter(|p| (x0..=x1).contains(&p.lon) && (y0..=y1).contains(&p.lat))
        .collect();
    // Never more points than the canvas can show: a stride keeps frames fast on a million trees.
    let stride = (visible.len() / 20_000).max(1);
    let style_of = |class: usize| {
        if no_color {
            Style::new()
        } else {
            Style::new().fg(PALETTE[class.min(8)])
        }
    };
    let canvas = Canvas::default()
        .block(
            Block::default()
                .borders(Borders::ALL)
                .title(format!(" Plan view — {} ", state.colour_by.label())),
        )
        .x_bounds([x0, x1])
        .y_bounds([y0, y1])
        .paint(|ctx| {
            for p in visible.iter().step_by(stride) {
                let class = state.class_of(&p.entry);
                ctx.print(
                    p.lon,
                    p.lat,
                    Span::styled(SYMBOLS[class.min(8)], style_of(class)),
                );
            }
            if let Some(corner) = state.corner {
                ctx.print(corner.0, corner.1, Span::raw("┼"));
            }
            ctx.print(state.centre.0, state.centre.1, Span::raw("╋"));
        });
    frame.render_widget(canvas, map);
    let mut counts = [0usize; 9];
    for p in &visible {
        counts[state.class_of(&p.entry).min(8)] += 1;
    }
    let mut lines = vec![
        Line::from(format!("{} trees in view", visible.len())),
        Line::from(""),
    ];
    let labels = state.class_labels();
    for (class, label) in labels.iter().enumerate() {
        lines.push(Line::from(vec![
            Span::styled(format!("{} ", SYMBOLS[class]), style_of(class)),
            Span::raw(format!("{:<20} {:>5}", truncate(label, 20), counts[class])),
        ]));
    }
    if counts[8] > 0 && labels.len() < 9 {
        lines.push(Line::from(format!(
            "{} {:<20} {:>5}",
            SYMBOLS[8], "not recorded", counts[8]
        )));
    }
    lines.push(Line::from(""));
    lines.push(Line::from(format!(
        "centre {:.5}, {:.5}",
        state.centre.1, state.centre.0
    )));
    lines.push(Line::from(format!(
        "view {:.0} m tall",
        state.span_lat * 111_320.0
    )));
    if state.corner.is_some() {
        lines.push(Line::from("area: move, then v again"));
    }
    frame.render_widget(
        Paragraph::new(lines).block(Block::default().borders(Borders::ALL).title(" Legend ")),
        legend,
    );
}

fn truncate(text: &str, width: usize) -> String {
    if text.chars().count() <= width {
        text.to_string()
    } else {
        let mut out: String = text.chars().take(width - 1).collect();
        out.push('…');
        out
    }
}
