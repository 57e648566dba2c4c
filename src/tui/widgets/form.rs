//! A small keyboard form: a list of text fields and choice fields, each with a label, a hint and the
//! reason it is wrong (shown next to the field, or under it when the pane is narrow). The forms of the
//! care view (assessment, work order, tree attributes) are built from it.
//!
//! Keys: Tab / ↓ next field, Shift-Tab / ↑ previous; ←/→ change a choice (or move the cursor in text);
//! typing a letter on a choice jumps to the next option starting with it, Backspace clears it; Enter
//! on a choice asks for a
//! picker, on text moves on (on the last field it submits); Ctrl-S or F2 submits; Esc leaves.

use ratatui::Frame;
use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use ratatui::layout::Rect;
use ratatui::style::{Modifier, Style};
use ratatui::text::{Line, Span};
use ratatui::widgets::Paragraph;
use tui_input::Input;

use super::text;

/// What a field holds.
#[derive(Debug, Clone)]
pub enum FieldKind {
    Text(Input),
    /// One of `options`, or none yet.
    Choice {
        options: Vec<String>,
        selected: Option<usize>,
    },
}

/// One field of a form.
#[derive(Debug, Clone)]
pub struct Field<K> {
    pub key: K,
    pub label: String,
    pub kind: FieldKind,
    /// Shown (dimmed) when there is no error.
    pub hint: String,
    /// Why the value is wrong, shown next to the field.
    pub error: Option<String>,
    /// A heading drawn above this field (starts a group).
    pub section: Option<String>,
}

impl<K> Field<K> {
    /// A text field.
    pub fn text(key: K, label: &str, value: &str, hint: &str) -> Self {
        Field {
            key,
            label: label.to_string(),
            kind: FieldKind::Text(Input::new(value.to_string())),
            hint: hint.to_string(),
            error: None,
            section: None,
        }
    }

    /// A choice field.
    pub fn choice(
        key: K,
        label: &str,
        options: Vec<String>,
        selected: Option<usize>,
        hint: &str,
    ) -> Self {
        Field {
            key,
            label: label.to_string(),
            kind: FieldKind::Choice { options, selected },
            hint: hint.to_string(),
            error: None,
            section: None,
        }
    }

    /// Starts a group with a heading.
    pub fn in_section(mut self, heading: impl Into<String>) -> Self {
        self.section = Some(heading.into());
        self
    }

    /// The text of a text field (empty for a choice).
    pub fn value(&self) -> &str {
        match &self.kind {
            FieldKind::Text(input) => input.value(),
            FieldKind::Choice { .. } => "",
        }
    }

    /// The chosen option of a choice field.
    pub fn chosen(&self) -> Option<usize> {
        match &self.kind {
            FieldKind::Choice { selected, .. } => *selected,
            FieldKind::Text(_) => None,
        }
    }

    /// The options of a choice field.
    pub fn options(&self) -> &[String] {
        match &self.kind {
            FieldKind::Choice { options, .. } => options,
            FieldKind::Text(_) => &[],
        }
    }

    /// What the field shows.
    fn shown(&self, focused: bool) -> String {
        match &self.kind {
            FieldKind::Text(input) if focused => text::with_cursor(input),
            FieldKind::Text(input) => input.value().to_string(),
            FieldKind::Choice { options, selected } => {
                let word = selected
                    .and_then(|i| options.get(i))
                    .cloned()
                    .unwrap_or_else(|| "— choose".to_string());
                if focused {
                    format!("◀ {word} ▶")
                } else {
                    word
                }
            }
        }
    }
}

/// What a key did to the form.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Event {
    /// Nothing the owner needs to know (focus moved, or the key does nothing here).
    Moved,
    /// A value changed.
    Changed,
    /// Enter on a choice: the owner may open a picker over its options.
    Pick,
    /// Ctrl-S, F2, or Enter on the last field.
    Submit,
    /// Esc.
    Leave,
    /// A key the form does not use.
    Ignored,
}

/// A form: its fields and the focused one.
#[derive(Debug, Clone)]
pub struct Form<K> {
    pub fields: Vec<Field<K>>,
    pub focus: usize,
}

impl<K: Copy + PartialEq> Form<K> {
    /// A form over fields, focus on the first.
    pub fn new(fields: Vec<Field<K>>) -> Self {
        Form { fields, focus: 0 }
    }

    /// The field with this key.
    pub fn field(&self, key: K) -> Option<&Field<K>> {
        self.fields.iter().find(|f| f.key == key)
    }

    /// The field with this key, to change.
    pub fn field_mut(&mut self, key: K) -> Option<&mut Field<K>> {
        self.fields.iter_mut().find(|f| f.key == key)
    }

    /// The trimmed text of a field ("" when missing).
    pub fn text(&self, key: K) -> &str {
        self.field(key).map(|f| f.value().trim()).unwrap_or("")
    }

    /// The chosen option of a choice field.
    pub fn chosen(&self, key: K) -> Option<usize> {
        self.field(key).and_then(Field::chosen)
    }

    /// The focused field.
    pub fn focused(&self) -> Option<&Field<K>> {
        self.fields.get(self.focus)
    }

    /// The key of the focused field.
    pub fn focused_key(&self) -> Option<K> {
        self.focused().map(|f| f.key)
    }

    /// Focuses the field with this key.
    pub fn focus_on(&mut self, key: K) {
        if let Some(i) = self.fields.iter().position(|f| f.key == key) {
            self.focus = i;
        }
    }

    /// Sets a text field's value (as if typed).
    pub fn set_text(&mut self, key: K, value: &str) {
        if let Some(field) = self.field_mut(key)
            && let FieldKind::Text(input) = &mut field.kind
        {
            *input = Input::new(value.to_string());
        }
    }

    /// Sets a choice field's option.
    pub fn set_choice(&mut self, key: K, index: Option<usize>) {
        if let Some(field) = self.field_mut(key)
            && let FieldKind::Choice { options, selected } = &mut field.kind
        {
            *selected = index.filter(|i| *i < options.len());
        }
    }

    /// Sets the error of a field (`None` clears it).
    pub fn set_error(&mut self, key: K, error: Option<String>) {
        if let Some(field) = self.field_mut(key) {
            field.error = error;
        }
    }

    /// Clears every error.
    pub fn clear_errors(&mut self) {
        for field in &mut self.fields {
            field.error = None;
        }
    }

    /// True when some field shows an error.
    pub fn has_errors(&self) -> bool {
        self.fields.iter().any(|f| f.error.is_some())
    }

    /// Handles a key.
    pub fn handle_key(&mut self, key: KeyEvent) -> Event {
        let control = key.modifiers.contains(KeyModifiers::CONTROL);
        let count = self.fields.len();
        if count == 0 {
            return match key.code {
                KeyCode::Esc => Event::Leave,
                _ => Event::Ignored,
            };
        }
        self.focus = self.focus.min(count - 1);
        match key.code {
            KeyCode::Char('s') if control => Event::Submit,
            KeyCode::F(2) => Event::Submit,
            KeyCode::Esc => Event::Leave,
            KeyCode::Tab | KeyCode::Down => {
                self.focus = (self.focus + 1) % count;
                Event::Moved
            }
            KeyCode::BackTab | KeyCode::Up => {
                self.focus = (self.focus + count - 1) % count;
                Event::Moved
            }
            KeyCode::Enter => match self.fields[self.focus].kind {
                FieldKind::Choice { .. } => Event::Pick,
                FieldKind::Text(_) if self.focus + 1 == count => Event::Submit,
                FieldKind::Text(_) => {
                    self.focus += 1;
                    Event::Moved
                }
            },
            _ if control
                && matches!(key.code, KeyCode::Char(_))
                && matches!(self.fields[self.focus].kind, FieldKind::Choice { .. }) =>
            {
                Event::Ignored
            }
            _ => {
                let field = &mut self.fields[self.focus];
                match &mut field.kind {
                    FieldKind::Text(input) => {
                        if text::edit(input, key) {
                            Event::Changed
                        } else {
                            Event::Ignored
                        }
                    }
                    FieldKind::Choice { selected, .. }
                        if matches!(key.code, KeyCode::Backspace | KeyCode::Delete) =>
                    {
                        if selected.take().is_some() {
                            Event::Changed
                        } else {
                            Event::Moved
                        }
                    }
                    FieldKind::Choice { options, selected } => {
                        match step_choice(options, *selected, key.code) {
                            Some(next) if Some(next) != *selected => {
                                *selected = Some(next);
                                Event::Changed
                            }
                            Some(_) => Event::Moved,
                            None => Event::Ignored,
                        }
                    }
                }
            }
        }
    }

    /// Draws the fields in `area`: `label_width` columns of labels, values, then the hint or the error
    /// (under the field when the pane is too narrow for it). Scrolls so the focused field shows;
    /// `active` false draws no focus mark.
    pub fn render(&self, frame: &mut Frame<'_>, area: Rect, label_width: usize, active: bool) {
        let value_width = 22usize;
        let room = (area.width as usize).saturating_sub(2 + label_width + 1 + value_width + 1);
        let mut lines: Vec<Line<'static>> = Vec::new();
        let mut focus_line = 0usize;
        for (i, field) in self.fields.iter().enumerate() {
            if let Some(heading) = &field.section {
                let count = heading.lines().count();
                for (k, part) in heading.lines().enumerate() {
                    // Every line but the last is a note above the heading.
                    let style = if k + 1 == count {
                        Style::new().add_modifier(Modifier::BOLD | Modifier::UNDERLINED)
                    } else {
                        Style::new().add_modifier(Modifier::DIM)
                    };
                    lines.push(Line::from(Span::styled(part.to_string(), style)));
                }
            }
            let focused = active && i == self.focus;
            if focused {
                focus_line = lines.len();
            }
            let label_style = if focused {
                Style::new().add_modifier(Modifier::REVERSED)
            } else {
                Style::new()
            };
            let mut spans = vec![
                Span::raw(if focused { "▶ " } else { "  " }),
                Span::styled(format!("{:<label_width$}", field.label), label_style),
                Span::raw(" "),
            ];
            let shown = field.shown(focused);
            let note = note(field, focused);
            let note_width = note.content.chars().count();
            // The note goes beside the value when it fits there, else on the line under it.
            if note_width <= room && shown.chars().count() <= value_width {
                spans.push(Span::raw(format!("{shown:<value_width$} ")));
                spans.push(note);
                lines.push(Line::from(spans));
            } else {
                spans.push(Span::raw(shown));
                lines.push(Line::from(spans));
                if field.error.is_some() || focused && note_width > 0 {
                    lines.push(Line::from(vec![Span::raw(" ".repeat(4)), note]));
                    if focused && field.error.is_some() {
                        focus_line = lines.len() - 1;
                    }
                }
            }
        }
        let height = area.height as usize;
        let offset = (focus_line + 1).saturating_sub(height);
        frame.render_widget(
            Paragraph::new(lines).scroll((offset.min(u16::MAX as usize) as u16, 0)),
            area,
        );
    }
}

fn note<K>(field: &Field<K>, focused: bool) -> Span<'static> {
    match &field.error {
        Some(reason) => Span::styled(
            format!("✗ {reason}"),
            Style::new().add_modifier(Modifier::BOLD),
        ),
        None if focused || matches!(field.kind, FieldKind::Text(_)) => {
            Span::styled(field.hint.clone(), Style::new().add_modifier(Modifier::DIM))
        }
        None => Span::raw(""),
    }
}

/// The option a key moves a choice to: ← previous, → next (wrapping; from none, → is the first and
/// ← the last), a letter or digit the next option starting with it.
fn step_choice(options: &[String], selected: Option<usize>, code: KeyCode) -> Option<usize> {
    let n = options.len();
    if n == 0 {
        return None;
    }
    match code {
        KeyCode::Right => Some(selected.map_or(0, |i| (i + 1) % n)),
        KeyCode::Left => Some(selected.map_or(n - 1, |i| (i + n - 1) % n)),
        KeyCode::Home => Some(0),
        KeyCode::End => Some(n - 1),
        KeyCode::Char(c) if c.is_alphanumeric() => {
            let start = selected.map_or(0, |i| i + 1);
            (0..n).map(|k| (start + k) % n).find(|&i| {
                options[i]
                    .chars()
                    .next()
                    .is_some_and(|first| first.to_lowercase().eq(c.to_lowercase()))
            })
        }
        _ => None,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn options() -> Vec<String> {
        ["improbable", "possible", "probable", "imminent"]
            .iter()
            .map(|s| s.to_string())
            .collect()
    }

    #[test]
    fn choices_step_with_arrows_and_letters() {
        assert_eq!(step_choice(&options(), None, KeyCode::Right), Some(0));
        assert_eq!(step_choice(&options(), None, KeyCode::Left), Some(3));
        assert_eq!(step_choice(&options(), Some(3), KeyCode::Right), Some(0));
        assert_eq!(
            step_choice(&options(), Some(0), KeyCode::Char('i')),
            Some(3)
        );
        assert_eq!(
            step_choice(&options(), Some(3), KeyCode::Char('I')),
            Some(0)
        );
        assert_eq!(step_choice(&options(), Some(0), KeyCode::Char('x')), None);
    }

    #[test]
    fn keys_move_edit_pick_and_submit() {
        let mut form = Form::new(vec![
            Field::choice(1, "failure", options(), None, ""),
            Field::text(2, "target", "", ""),
        ]);
        assert_eq!(
            form.handle_key(KeyEvent::from(KeyCode::Right)),
            Event::Changed
        );
        assert_eq!(form.chosen(1), Some(0));
        assert_eq!(form.handle_key(KeyEvent::from(KeyCode::Enter)), Event::Pick);
        assert_eq!(form.handle_key(KeyEvent::from(KeyCode::Tab)), Event::Moved);
        for c in "bus stop".chars() {
            assert_eq!(
                form.handle_key(KeyEvent::from(KeyCode::Char(c))),
                Event::Changed
            );
        }
        assert_eq!(form.text(2), "bus stop");
        assert_eq!(
            form.handle_key(KeyEvent::new(KeyCode::Char('u'), KeyModifiers::CONTROL)),
            Event::Changed
        );
        assert_eq!(form.text(2), "", "Ctrl-U clears a text field");
        for c in "bus stop".chars() {
            form.handle_key(KeyEvent::from(KeyCode::Char(c)));
        }
        assert_eq!(
            form.handle_key(KeyEvent::from(KeyCode::Enter)),
            Event::Submit
        );
        assert_eq!(
            form.handle_key(KeyEvent::new(KeyCode::Char('s'), KeyModifiers::CONTROL)),
            Event::Submit
        );
        assert_eq!(form.handle_key(KeyEvent::from(KeyCode::Esc)), Event::Leave);
        assert_eq!(
            form.handle_key(KeyEvent::from(KeyCode::BackTab)),
            Event::Moved
        );
        assert_eq!(form.focused_key(), Some(1));
    }
}
