//! Single-line text editing on top of `tui-input`: keys become edit requests, so fields are testable
//! without a terminal.

use ratatui::crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use tui_input::{Input, InputRequest};

/// Applies an editing key to `input`; returns false when the key is not an editing key.
pub fn edit(input: &mut Input, key: KeyEvent) -> bool {
    let control = key.modifiers.contains(KeyModifiers::CONTROL);
    let request = match key.code {
        KeyCode::Char('u') if control => InputRequest::DeleteLine,
        KeyCode::Char('w') if control => InputRequest::DeletePrevWord,
        KeyCode::Char(_) if control => return false,
        KeyCode::Char(c) => InputRequest::InsertChar(c),
        KeyCode::Backspace => InputRequest::DeletePrevChar,
        KeyCode::Delete => InputRequest::DeleteNextChar,
        KeyCode::Left => InputRequest::GoToPrevChar,
        KeyCode::Right => InputRequest::GoToNextChar,
        KeyCode::Home => InputRequest::GoToStart,
        KeyCode::End => InputRequest::GoToEnd,
        _ => return false,
    };
    input.handle(request);
    true
}

/// A field's text with a visible cursor mark, for drawing.
pub fn with_cursor(input: &Input) -> String {
    let value = input.value();
    let cursor = input.cursor();
    let mut out: String = value.chars().take(cursor).collect();
    out.push('▏');
    out.extend(value.chars().skip(cursor));
    out
}

/// How many lines `text` takes when word-wrapped to `width` columns (greedy, as a wrapped paragraph
/// lays it out; a word longer than the width is cut).
pub fn wrapped_height(text: &str, width: u16) -> u16 {
    let width = usize::from(width.max(1));
    let mut lines = 0u16;
    for paragraph in text.split('\n') {
        let mut used = 0usize;
        // Leading blanks take room on the first line (a status line starts with one).
        let mut indent = paragraph.chars().take_while(|c| *c == ' ').count();
        lines = lines.saturating_add(1);
        for word in paragraph.split_whitespace() {
            let length = word.chars().count() + std::mem::take(&mut indent);
            if used == 0 {
                used = length;
            } else if used + 1 + length <= width {
                used += 1 + length;
            } else {
                lines = lines.saturating_add(1);
                used = length;
            }
            while used > width {
                lines = lines.saturating_add(1);
                used -= width;
            }
        }
    }
    lines
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn leading_blanks_count_on_the_first_line() {
        assert_eq!(wrapped_height("abc def", 7), 1);
        assert_eq!(wrapped_height(" abc def", 7), 2);
    }

    #[test]
    fn wrapped_height_counts_greedy_lines() {
        assert_eq!(wrapped_height("", 10), 1);
        assert_eq!(wrapped_height("abc def", 7), 1);
        assert_eq!(wrapped_height("abc def", 6), 2);
        assert_eq!(wrapped_height("abc\ndef", 60), 2);
        assert_eq!(wrapped_height("abcdefghij", 4), 3);
    }
}
