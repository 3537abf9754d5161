//! Making text from the logs safe for each output: HTML, Markdown and the terminal.
//! Every report escapes run names, sources, paths and messages through these.

/// Escapes text for HTML element content and quoted attribute values.
pub fn escape_html(text: &str) -> String {
    let mut escaped = String::with_capacity(text.len() + 8);
    for ch in text.chars() {
        match ch {
            '&' => escaped.push_str("&amp;"),
            '<' => escaped.push_str("&lt;"),
            '>' => escaped.push_str("&gt;"),
            '"' => escaped.push_str("&quot;"),
            '\'' => escaped.push_str("&#39;"),
            _ => escaped.push(ch),
        }
    }
    escaped
}

/// Escapes text for a Markdown table cell: table syntax, emphasis, links, entities and
/// HTML are backslash-escaped (CommonMark lets any ASCII punctuation be escaped so);
/// line breaks become spaces so a cell cannot end its row; other control characters
/// (an ESC starting a terminal escape sequence, a bell) and bidirectional overrides,
/// which would reorder the text around them, are shown as U+FFFD.
pub fn escape_markdown(text: &str) -> String {
    let mut escaped = String::with_capacity(text.len());
    for ch in text.chars() {
        match ch {
            '|' | '\\' | '`' | '*' | '_' | '[' | ']' | '<' | '>' | '#' | '!' | '~' | '&' => {
                escaped.push('\\');
                escaped.push(ch);
            }
            '\n' | '\r' | '\t' | '\u{2028}' | '\u{2029}' => escaped.push(' '),
            c if c.is_control() || is_bidi_control(c) => escaped.push('\u{FFFD}'),
            _ => escaped.push(ch),
        }
    }
    escaped
}

/// Unicode bidirectional embedding, override and isolate controls (UAX #9).
fn is_bidi_control(ch: char) -> bool {
    matches!(ch, '\u{202A}'..='\u{202E}' | '\u{2066}'..='\u{2069}' | '\u{200E}' | '\u{200F}' | '\u{061C}')
}
