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
