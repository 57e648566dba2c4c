//! Roster: the inventory table. Virtual scrolling over an in-memory index of small numbers per tree
//! (sort, filter and search never load rows); only the rows on screen are fetched.

use std::collections::HashSet;

use ratatui::Frame;
use ratatui::crossterm::event::{KeyCode, KeyEvent};
use ratatui::layout::{Constraint, Rect};
use ratatui::style::{Modifier, Style};
use ratatui::text::Line;
use ratatui::widgets::{Block, Borders, Cell, Row, Table};

use super::super::app::AppSettings;
use super::super::query::Query;
use crate::model::{TreeStatus, TreeSummary};
use crate::science::condition::ConditionBand;
use crate::science::units::cm_to_inches;
use crate::store::StoreError;
use crate::store::roster::{NONE, RosterEntry, RosterIndexData};

/// Movements in the roster.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Move {
    Up,
    Down,
    PageUp,
    PageDown,
    First,
    Last,
}

/// Columns the roster sorts by.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SortKey {
    Id,
    Species,
    Street,
    Dbh,
    Condition,
    Risk,
    Status,
    Zone,
}

impl SortKey {
    const ALL: [SortKey; 8] = [
        SortKey::Id,
        SortKey::Species,
        SortKey::Street,
        SortKey::Dbh,
        SortKey::Condition,
        SortKey::Risk,
        SortKey::Status,
        SortKey::Zone,
    ];

    fn next(self) -> Self {
        let i = Self::ALL.iter().position(|k| *k == self).unwrap_or(0);
        Self::ALL[(i + 1) % Self::ALL.len()]
    }

    /// Label shown in the status line.
    pub fn label(self) -> &'static str {
        match self {
            SortKey::Id => "id",
            SortKey::Species => "species",
            SortKey::Street => "street and number",
            SortKey::Dbh => "DBH",
            SortKey::Condition => "condition",
            SortKey::Risk => "risk rating",
            SortKey::Status => "status",
            SortKey::Zone => "zone",
        }
    }
}

/// A roster filter.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Filter {
    Species(u32),
    Street(u32),
    Zone(u32),
    Band(ConditionBand),
    /// Latest risk rating at least this (1 low … 4 extreme).
    RiskAtLeast(u8),
    OpenWork,
    Status(TreeStatus),
    /// Trees chosen elsewhere (an area on the plan view), with a label.
    Ids(HashSet<i64>, String),
}

/// Roster state.
#[derive(Debug, Clone, Default)]
pub struct State {
    pub data: RosterIndexData,
    /// Positions into `data.entries` after filters, search and sort.
    order: Vec<u32>,
    sort: Option<(SortKey, bool)>,
    pub filters: Vec<Filter>,
    search: String,
    uid_matches: HashSet<i64>,
    selected: usize,
    offset: usize,
    height: usize,
    rows: Vec<TreeSummary>,
    /// Sorted positions per sort key (see `sorted_positions`).
    sorted: std::cell::RefCell<Vec<(SortKey, std::rc::Rc<Vec<u32>>)>>,
}

/// An f32 as a u32 that sorts in the same order (NaN last).
fn ordered_f32(x: f32) -> u32 {
    if x.is_nan() {
        return u32::MAX;
    }
    let bits = x.to_bits();
    if bits & 0x8000_0000 != 0 {
        !bits
    } else {
        bits | 0x8000_0000
    }
}

/// Positions `0..keys.len()` ordered by key, ties in position order: a least-significant-digit radix
/// sort on 16-bit digits that skips the digits every key shares (Knuth, TAOCP vol. 3 §5.2.5
/// [published method]). Linear time, so the first sort of a column on a million trees fits in a frame.
fn stable_order_by(keys: &[u64]) -> Vec<u32> {
    const DIGIT_BITS: u32 = 16;
    const BUCKETS: usize = 1 << DIGIT_BITS;
    let (any_set, all_set) = keys
        .iter()
        .fold((0u64, u64::MAX), |(or, and), k| (or | k, and & k));
    let varying = any_set ^ all_set;
    let mut order: Vec<u32> = (0..keys.len() as u32).collect();
    let mut scratch = vec![0u32; keys.len()];
    let mut counts = vec![0usize; BUCKETS];
    for pass in 0..(64 / DIGIT_BITS) {
        let shift = pass * DIGIT_BITS;
        if (varying >> shift) & (BUCKETS as u64 - 1) == 0 {
            continue;
        }
        let digit = |position: u32| ((keys[position as usize] >> shift) as usize) & (BUCKETS - 1);
        counts.iter_mut().for_each(|c| *c = 0);
        for &position in &order {
            counts[digit(position)] += 1;
        }
        let mut start = 0;
        for count in counts.iter_mut() {
            let n = *count;
            *count = start;
            start += n;
        }
        for &position in &order {
            let slot = &mut counts[digit(position)];
            scratch[*slot] = position;
            *slot += 1;
        }
        std::mem::swap(&mut order, &mut scratch);
    }
    order
}

/// Every entry's position sorted by `key`, ties by id (entries are in id order).
pub fn sort_order(entries: &[RosterEntry], key: SortKey) -> Vec<u32> {
    let rank = |e: &RosterEntry| -> u32 {
        match key {
            SortKey::Id => 0,
            // The name lists are sorted, so an index is a rank.
            SortKey::Species => e.species,
            SortKey::Street => e.street,
            SortKey::Dbh => ordered_f32(e.dbh_cm),
            SortKey::Condition => ordered_f32(e.dieback_pct),
            SortKey::Risk => u32::from(e.risk),
            SortKey::Status => e.status as u32,
            SortKey::Zone => e.zone,
        }
    };
    let keys: Vec<u64> = entries
        .iter()
        .map(|e| {
            let second = if key == SortKey::Street {
                e.house_number
            } else {
                0
            };
            (u64::from(rank(e)) << 32) | u64::from(second)
        })
        .collect();
    stable_order_by(&keys)
}

/// The sort orders of every column for one index, computed off the UI thread.
#[derive(Debug, Clone, Default)]
pub struct SortOrders {
    /// The number of entries they were computed for.
    entries: usize,
    orders: Vec<(SortKey, Vec<u32>)>,
}

/// Computes [`sort_order`] for every column.
pub fn all_sort_orders(entries: &[RosterEntry]) -> SortOrders {
    SortOrders {
        entries: entries.len(),
        orders: SortKey::ALL
            .iter()
            .filter(|key| **key != SortKey::Id)
            .map(|key| (*key, sort_order(entries, *key)))
            .collect(),
    }
}

fn band_of(entry: &RosterEntry) -> Option<ConditionBand> {
    (!entry.dieback_pct.is_nan()).then(|| ConditionBand::from_dieback(f64::from(entry.dieback_pct)))
}

impl State {
    /// A roster over a loaded index.
    pub fn new(data: RosterIndexData) -> Self {
        let mut state = State {
            data,
            height: 20,
            ..State::default()
        };
        state.recompute();
        state
    }

    /// Reloads the index (after a write), keeping filters, search, sort and the selected tree.
    pub fn reload(&mut self, data: RosterIndexData) {
        let keep = self.selected_id();
        self.data = data;
        self.sorted.borrow_mut().clear();
        self.recompute();
        if let Some(id) = keep {
            self.select_id(id);
        }
    }

    /// Number of trees shown (after filters and search).
    pub fn len(&self) -> usize {
        self.order.len()
    }

    /// True when no tree is shown.
    pub fn is_empty(&self) -> bool {
        self.order.is_empty()
    }

    /// Index of the selected row.
    pub fn selected(&self) -> usize {
        self.selected
    }

    /// The id of the selected tree.
    pub fn selected_id(&self) -> Option<i64> {
        let position = *self.order.get(self.selected)? as usize;
        self.data.entries.get(position).map(|e| e.id)
    }

    /// Selects a tree by id, if shown.
    pub fn select_id(&mut self, id: i64) -> bool {
        match self
            .order
            .iter()
            .position(|p| self.data.entries[*p as usize].id == id)
        {
            Some(index) => {
                self.selected = index;
                self.keep_selection_visible();
                true
            }
            None => false,
        }
    }

    /// The rows on screen.
    pub fn visible_rows(&self) -> &[TreeSummary] {
        &self.rows
    }

    /// The current search text.
    pub fn search(&self) -> &str {
        &self.search
    }

    /// Sets the search (uid prefix matches come from the store) and recomputes.
    pub fn set_search(&mut self, text: &str, uid_matches: HashSet<i64>) {
        self.search = text.trim().to_string();
        self.uid_matches = uid_matches;
        self.recompute();
    }

    /// Adds a filter (replacing one of the same kind).
    pub fn add_filter(&mut self, filter: Filter) {
        self.filters
            .retain(|f| std::mem::discriminant(f) != std::mem::discriminant(&filter));
        self.filters.push(filter);
        self.recompute();
    }

    /// Removes every filter and the search.
    pub fn clear_filters(&mut self) {
        self.filters.clear();
        self.search.clear();
        self.uid_matches.clear();
        self.recompute();
    }

    /// Sorts by the next column (first press: species).
    pub fn next_sort(&mut self) {
        self.sort = Some(match self.sort {
            None => (SortKey::Species, false),
            Some((key, _)) => (key.next(), false),
        });
        self.recompute();
    }

    /// Reverses the sort order.
    pub fn reverse_sort(&mut self) {
        let (key, descending) = self.sort.unwrap_or((SortKey::Id, false));
        self.sort = Some((key, !descending));
        self.recompute();
    }

    /// Sets the sort explicitly.
    pub fn set_sort(&mut self, key: SortKey, descending: bool) {
        self.sort = Some((key, descending));
        self.recompute();
    }

    /// Whether an entry passes the filters and the search; `uid_hit` is indexed by position.
    fn matches(
        &self,
        position: u32,
        species_hit: &[bool],
        street_hit: &[bool],
        uid_hit: &[bool],
    ) -> bool {
        let entry = &self.data.entries[position as usize];
        let filters_pass = self.filters.iter().all(|f| match f {
            Filter::Species(s) => entry.species == *s,
            Filter::Street(s) => entry.street == *s,
            Filter::Zone(z) => entry.zone == *z,
            Filter::Band(b) => band_of(entry) == Some(*b),
            Filter::RiskAtLeast(r) => entry.risk >= *r,
            Filter::OpenWork => entry.open_work,
            Filter::Status(s) => entry.status == *s,
            Filter::Ids(ids, _) => ids.contains(&entry.id),
        });
        if !filters_pass {
            return false;
        }
        if self.search.is_empty() {
            return true;
        }
        let hit = |table: &[bool], index: u32| {
            index != NONE && table.get(index as usize).copied().unwrap_or(false)
        };
        hit(species_hit, entry.species) || hit(street_hit, entry.street) || hit(uid_hit, position)
    }

    /// Every entry's position sorted by `key`, then id; computed once per key and kept until the index
    /// reloads (all keys are precomputed off the UI thread when the index loads at start), so
    /// re-sorting and filtering a million trees is a linear pass.
    fn sorted_positions(&self, key: SortKey) -> std::rc::Rc<Vec<u32>> {
        if let Some(cached) = self.sorted.borrow().iter().find(|(k, _)| *k == key) {
            return cached.1.clone();
        }
        let positions = std::rc::Rc::new(sort_order(&self.data.entries, key));
        self.sorted.borrow_mut().push((key, positions.clone()));
        positions
    }

    /// Takes in sort orders computed elsewhere (see [`all_sort_orders`]) for this index.
    pub fn adopt_sort_orders(&mut self, orders: SortOrders) {
        if orders.entries != self.data.entries.len() {
            return;
        }
        let mut cache = self.sorted.borrow_mut();
        for (key, positions) in orders.orders {
            if !cache.iter().any(|(k, _)| *k == key) {
                cache.push((key, std::rc::Rc::new(positions)));
            }
        }
    }

    fn recompute(&mut self) {
        let needle = self.search.to_lowercase();
        let species_hit: Vec<bool> = self
            .data
            .species
            .iter()
            .map(|(_, botanical, common)| {
                !needle.is_empty()
                    && (botanical.to_lowercase().contains(&needle)
                        || common.to_lowercase().contains(&needle))
            })
            .collect();
        let street_hit: Vec<bool> = self
            .data
            .streets
            .iter()
            .map(|s| !needle.is_empty() && s.to_lowercase().contains(&needle))
            .collect();
        // Trees whose uid starts with the search, by position: a table lookup per entry in the pass
        // below instead of hashing every id (the search pass over a million trees stays in a frame).
        let mut uid_hit = Vec::new();
        if !self.uid_matches.is_empty() {
            uid_hit = vec![false; self.data.entries.len()];
            for id in &self.uid_matches {
                if let Ok(position) = self.data.entries.binary_search_by_key(id, |e| e.id) {
                    uid_hit[position] = true;
                }
            }
        }
        let filtering = !self.filters.is_empty() || !needle.is_empty();
        // Which entries pass, tested in entry order (a sequential pass over the index); a sorted order
        // then reads this small table, not the entries at random.
        let passes: Vec<bool> = if filtering {
            (0..self.data.entries.len() as u32)
                .map(|p| self.matches(p, &species_hit, &street_hit, &uid_hit))
                .collect()
        } else {
            Vec::new()
        };
        let keep = |position: &u32| !filtering || passes[*position as usize];
        let order: Vec<u32> = match self.sort {
            None => (0..self.data.entries.len() as u32).filter(keep).collect(),
            Some((key, descending)) => {
                let full = self.sorted_positions(key);
                if descending {
                    full.iter().rev().copied().filter(keep).collect()
                } else {
                    full.iter().copied().filter(keep).collect()
                }
            }
        };
        self.order = order;
        self.selected = self.selected.min(self.order.len().saturating_sub(1));
        self.keep_selection_visible();
    }

    /// Sets how many table rows fit on screen.
    pub fn set_height(&mut self, height: usize) {
        self.height = height.max(1);
        self.keep_selection_visible();
    }

    /// Moves the selection.
    pub fn apply(&mut self, movement: Move) {
        let last = self.order.len().saturating_sub(1);
        self.selected = match movement {
            Move::Up => self.selected.saturating_sub(1),
            Move::Down => (self.selected + 1).min(last),
            Move::PageUp => self.selected.saturating_sub(self.height),
            Move::PageDown => (self.selected + self.height).min(last),
            Move::First => 0,
            Move::Last => last,
        };
        self.keep_selection_visible();
    }

    fn keep_selection_visible(&mut self) {
        if self.selected < self.offset {
            self.offset = self.selected;
        } else if self.selected >= self.offset + self.height {
            self.offset = self.selected + 1 - self.height;
        }
        let max_offset = self.order.len().saturating_sub(self.height);
        self.offset = self.offset.min(max_offset);
    }

    /// Fetches the visible window of rows (and nothing else).
    pub fn refresh(&mut self, query: &Query<'_>) -> Result<(), StoreError> {
        let ids: Vec<i64> = self
            .order
            .iter()
            .skip(self.offset)
            .take(self.height)
            .map(|p| self.data.entries[*p as usize].id)
            .collect();
        self.rows = query.roster_rows(&ids)?;
        Ok(())
    }

    /// Describes the active filters, search and sort for the status line.
    pub fn describe(&self) -> String {
        let mut parts: Vec<String> = self.filters.iter().map(|f| self.filter_label(f)).collect();
        if !self.search.is_empty() {
            parts.push(format!("search \"{}\"", self.search));
        }
        let mut text = if parts.is_empty() {
            String::new()
        } else {
            format!(" · {}", parts.join(", "))
        };
        if let Some((key, descending)) = self.sort {
            text.push_str(&format!(
                " · sorted by {}{}",
                key.label(),
                if descending { " (descending)" } else { "" }
            ));
        }
        text
    }

    /// A filter in words.
    pub fn filter_label(&self, filter: &Filter) -> String {
        let name = |list: &[String], i: u32| list.get(i as usize).cloned().unwrap_or_default();
        match filter {
            Filter::Species(s) => format!(
                "species {}",
                self.data
                    .species
                    .get(*s as usize)
                    .map(|x| x.1.clone())
                    .unwrap_or_default()
            ),
            Filter::Street(s) => format!("street {}", name(&self.data.streets, *s)),
            Filter::Zone(z) => format!("zone {}", name(&self.data.zones, *z)),
            Filter::Band(b) => format!("condition {}", b.as_str()),
            Filter::RiskAtLeast(r) => format!("risk ≥ {}", risk_word(*r)),
            Filter::OpenWork => "has open work".to_string(),
            Filter::Status(s) => format!("status {s}"),
            Filter::Ids(ids, label) => format!("{label} ({} trees)", ids.len()),
        }
    }
}

/// The word of a risk level (1 low … 4 extreme).
pub fn risk_word(level: u8) -> &'static str {
    match level {
        1 => "low",
        2 => "moderate",
        3 => "high",
        4 => "extreme",
        _ => "none",
    }
}

/// The roster's movement keys.
pub fn handle_key(key: KeyEvent) -> Option<Move> {
    match key.code {
        KeyCode::Up | KeyCode::Char('k') => Some(Move::Up),
        KeyCode::Down | KeyCode::Char('j') => Some(Move::Down),
        KeyCode::PageUp => Some(Move::PageUp),
        KeyCode::PageDown | KeyCode::Char(' ') => Some(Move::PageDown),
        KeyCode::Home | KeyCode::Char('g') => Some(Move::First),
        KeyCode::End | KeyCode::Char('G') => Some(Move::Last),
        _ => None,
    }
}

/// The status line: counts, position, filters and sort.
pub fn status_line(state: &State) -> Line<'static> {
    let total = state.data.entries.len();
    if total == 0 {
        return Line::from(
            " no trees yet: press n to add one, or import with `streetwood import trees FILE`",
        );
    }
    if state.is_empty() {
        return Line::from(format!(
            " no tree of {total} matches{} · F clears filters",
            state.describe()
        ));
    }
    Line::from(format!(
        " tree {} of {}{}{}",
        state.selected + 1,
        state.len(),
        if state.len() < total {
            format!(" (of {total})")
        } else {
            String::new()
        },
        state.describe()
    ))
}

/// Draws the table (narrow terminals drop the common name column).
pub fn render(state: &State, settings: AppSettings, frame: &mut Frame<'_>, area: Rect) {
    let wide = area.width >= 100;
    let dbh_header = if settings.us_units {
        "DBH in"
    } else {
        "DBH cm"
    };
    let mut titles = vec![
        "",
        "id",
        "species",
        "common name",
        "street",
        "no.",
        dbh_header,
        "condition",
        "status",
        "zone",
    ];
    let mut widths = vec![
        Constraint::Length(1),
        Constraint::Length(6),
        Constraint::Fill(3),
        Constraint::Fill(2),
        Constraint::Fill(2),
        Constraint::Length(4),
        Constraint::Length(6),
        Constraint::Length(9),
        Constraint::Length(8),
        Constraint::Fill(1),
    ];
    if !wide {
        titles.remove(3);
        widths.remove(3);
    }
    let header =
        Row::new(titles).style(Style::new().add_modifier(Modifier::BOLD | Modifier::UNDERLINED));
    let rows = state.rows.iter().enumerate().map(|(i, tree)| {
        let dbh = tree.dbh_cm.map(|d| {
            if settings.us_units {
                cm_to_inches(d)
            } else {
                d
            }
        });
        let band = tree
            .effective_dieback_pct()
            .map(|p| ConditionBand::from_dieback(p).as_str())
            .unwrap_or("");
        let selected = state.offset + i == state.selected;
        let mut cells = vec![
            // The selection is marked by a sign as well as by reversed video (never by colour alone).
            Cell::from(if selected { "▶" } else { "" }),
            Cell::from(tree.id.to_string()),
            Cell::from(tree.species.clone()),
            Cell::from(tree.common_name.clone()),
            Cell::from(tree.street.clone().unwrap_or_default()),
            Cell::from(tree.house_number.clone().unwrap_or_default()),
            Cell::from(dbh.map(|d| format!("{d:>6.1}")).unwrap_or_default()),
            Cell::from(band),
            Cell::from(tree.status.as_str()),
            Cell::from(tree.zone.clone().unwrap_or_default()),
        ];
        if !wide {
            cells.remove(3);
        }
        let row = Row::new(cells);
        if selected {
            row.style(Style::new().add_modifier(Modifier::REVERSED))
        } else {
            row
        }
    });
    frame.render_widget(
        Table::new(rows, widths)
            .header(header)
            .block(Block::default().borders(Borders::TOP | Borders::BOTTOM)),
        area,
    );
}

#[cfg(test)]
mod tests {
    use super::{SortKey, State, all_sort_orders, ordered_f32, stable_order_by};
    use crate::model::TreeStatus;
    use crate::store::roster::{NONE, RosterEntry, RosterIndexData};

    fn index(n: u32) -> RosterIndexData {
        let entries = (0..n)
            .map(|i| RosterEntry {
                id: i64::from(i) + 1,
                species: (i * 7) % 5,
                street: if i % 11 == 0 { NONE } else { (i * 3) % 4 },
                house_number: (i * 13) % 17,
                zone: i % 3,
                status: if i % 9 == 0 {
                    TreeStatus::Removed
                } else {
                    TreeStatus::Standing
                },
                dbh_cm: if i % 10 == 0 {
                    f32::NAN
                } else {
                    ((i * 37) % 101) as f32 / 2.0
                },
                dieback_pct: ((i * 5) % 23) as f32,
                risk: (i % 5) as u8,
                open_work: i % 4 == 0,
            })
            .collect();
        RosterIndexData {
            entries,
            ..RosterIndexData::default()
        }
    }

    fn visible_ids(state: &State) -> Vec<i64> {
        state
            .order
            .iter()
            .map(|p| state.data.entries[*p as usize].id)
            .collect()
    }

    // A search keeps the trees whose uid matched (found by the store), in the current order, and
    // ignores ids the index does not hold.
    #[test]
    fn a_search_keeps_the_trees_whose_uid_matched() {
        let mut state = State::new(index(50));
        state.set_search("4e3e", [7, 3, 999].into_iter().collect());
        assert_eq!(visible_ids(&state), vec![3, 7]);
        state.set_sort(SortKey::Id, true);
        assert_eq!(visible_ids(&state), vec![7, 3]);
        state.set_search("4e3e", Default::default());
        assert!(visible_ids(&state).is_empty());
        state.clear_filters();
        assert_eq!(visible_ids(&state).len(), 50);
    }

    // The orders computed off the UI thread must be the ones the roster would compute itself.
    #[test]
    fn adopted_sort_orders_sort_like_fresh_ones() {
        let data = index(500);
        let orders = all_sort_orders(&data.entries);
        for key in SortKey::ALL {
            for descending in [false, true] {
                let mut fresh = State::new(data.clone());
                fresh.set_sort(key, descending);
                let mut adopted = State::new(data.clone());
                adopted.adopt_sort_orders(orders.clone());
                adopted.set_sort(key, descending);
                assert_eq!(visible_ids(&fresh), visible_ids(&adopted), "{key:?}");
                let dbh: Vec<f32> = visible_ids(&fresh)
                    .iter()
                    .map(|id| data.entries[(*id - 1) as usize].dbh_cm)
                    .collect();
                if key == SortKey::Dbh && !descending {
                    let known: Vec<f32> = dbh.iter().copied().filter(|d| !d.is_nan()).collect();
                    assert!(known.windows(2).all(|w| w[0] <= w[1]));
                    assert!(dbh[known.len()..].iter().all(|d| d.is_nan()), "NaN last");
                }
            }
        }
        // Orders for another index are not taken.
        let mut other = State::new(index(10));
        other.adopt_sort_orders(orders);
        assert!(other.sorted.borrow().is_empty());
    }

    #[test]
    fn f32_keys_sort_like_the_floats() {
        let values = [-3.5f32, -0.0, 0.0, 1.0, 49.2, 1e30];
        for pair in values.windows(2) {
            assert!(ordered_f32(pair[0]) <= ordered_f32(pair[1]), "{pair:?}");
        }
        assert!(ordered_f32(f32::NAN) > ordered_f32(f32::MAX));
    }

    // Checked against the standard library's stable sort, the reference for "sorted, ties in order".
    #[test]
    fn radix_order_matches_a_stable_sort() {
        let mut seed = 0x2545_f491_4f6c_dd1du64;
        let mut next = || {
            seed ^= seed << 13;
            seed ^= seed >> 7;
            seed ^= seed << 17;
            seed
        };
        for (n, mask) in [
            (0usize, u64::MAX),
            (1, u64::MAX),
            (1000, 0x7),
            (5000, 0xffff_0000_0000),
            (5000, 0x0003_0000_ffff),
            (20_000, u64::MAX),
        ] {
            let keys: Vec<u64> = (0..n).map(|_| next() & mask).collect();
            let mut expected: Vec<u32> = (0..n as u32).collect();
            expected.sort_by_key(|p| keys[*p as usize]);
            assert_eq!(stable_order_by(&keys), expected, "n {n}, mask {mask:#x}");
        }
    }
}
