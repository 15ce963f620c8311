//! User text that is safe to keep and to echo: the characters refused in
//! every text field of an input, and a printable form of any text for
//! messages.
//!
//! Refused everywhere: control characters (C0 except tab, line feed and
//! carriage return in multi-line texts; DEL; C1), which can carry terminal
//! escape sequences or forge lines of a report, and the invisible format
//! characters that make two equal-looking ids differ or reorder what is
//! shown: zero-width characters (U+200B–U+200D, U+2060, U+FEFF, U+180E),
//! bidirectional controls (U+200E, U+200F, U+061C, U+202A–U+202E,
//! U+2066–U+2069; the "Trojan Source" characters, Boucher and Anderson,
//! CVE-2021-42574), soft hyphen (U+00AD), and the other Unicode format
//! characters of general category Cf listed here. Line breaks are refused in
//! one-line fields (titles, ids, names) and kept in free text (notes,
//! descriptions).

/// Why a character is refused in a text field.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BadChar {
    /// A control character (C0, DEL or C1), e.g. the ESC of a terminal code.
    Control,
    /// A line break in a one-line field.
    LineBreak,
    /// An invisible zero-width or format character.
    Invisible,
    /// A bidirectional control that reorders what is shown.
    Bidi,
}

impl BadChar {
    /// Words for messages.
    pub fn words(self) -> &'static str {
        match self {
            BadChar::Control => "a control character (terminal codes and the like are not text)",
            BadChar::LineBreak => "a line break (this field is one line of text)",
            BadChar::Invisible => {
                "an invisible zero-width or format character (two names that look alike must be alike)"
            }
            BadChar::Bidi => {
                "a bidirectional control character (it reorders what is shown on screen)"
            }
        }
    }
}

/// The class of `c` when it is refused in a text field, else `None`.
/// `one_line`: line breaks are refused too.
pub fn classify(c: char, one_line: bool) -> Option<BadChar> {
    match c {
        '\n' | '\r' | '\u{2028}' | '\u{2029}' | '\u{85}' | '\u{0B}' | '\u{0C}' => {
            if one_line {
                Some(BadChar::LineBreak)
            } else if c == '\n' || c == '\r' {
                None
            } else {
                Some(BadChar::Control)
            }
        }
        '\t' => None,
        '\u{200E}'
        | '\u{200F}'
        | '\u{061C}'
        | '\u{202A}'..='\u{202E}'
        | '\u{2066}'..='\u{2069}' => Some(BadChar::Bidi),
        '\u{200B}'..='\u{200D}'
        | '\u{2060}'..='\u{2064}'
        | '\u{FEFF}'
        | '\u{180E}'
        | '\u{00AD}'
        | '\u{034F}'
        | '\u{115F}'
        | '\u{1160}'
        | '\u{3164}'
        | '\u{FFA0}'
        | '\u{FFF9}'..='\u{FFFB}'
        | '\u{E0000}'..='\u{E007F}' => Some(BadChar::Invisible),
        c if c.is_control() => Some(BadChar::Control),
        _ => None,
    }
}

/// The first refused character of `text`: its index in characters (from 1),
/// the character and why.
pub fn first_bad(text: &str, one_line: bool) -> Option<(usize, char, BadChar)> {
    text.chars()
        .enumerate()
        .find_map(|(i, c)| classify(c, one_line).map(|b| (i + 1, c, b)))
}

/// `text` with every refused character (line breaks included) written as a
/// visible escape such as `\u{1b}`, for echoing user text in messages.
pub fn printable(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        if classify(c, true).is_some() {
            out.push_str(&c.escape_unicode().to_string());
        } else {
            out.push(c);
        }
    }
    out
}

/// A message for the terminal: every refused character except line breaks
/// and tabs escaped, so no user text can send a terminal code.
pub fn printable_message(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        if c == '\n' || c == '\t' {
            out.push(c);
        } else if classify(c, true).is_some() {
            out.push_str(&c.escape_unicode().to_string());
        } else {
            out.push(c);
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn terminal_escapes_are_controls_and_are_shown_escaped() {
        assert_eq!(classify('\u{1b}', false), Some(BadChar::Control));
        assert_eq!(classify('\u{7f}', false), Some(BadChar::Control));
        assert_eq!(classify('\u{9b}', false), Some(BadChar::Control));
        assert_eq!(printable("a\u{1b}[31mb"), "a\\u{1b}[31mb");
        assert_eq!(printable_message("x\ny\u{7}"), "x\ny\\u{7}");
    }

    #[test]
    fn line_breaks_only_in_free_text() {
        assert_eq!(classify('\n', true), Some(BadChar::LineBreak));
        assert_eq!(classify('\n', false), None);
        assert_eq!(classify('\u{2028}', true), Some(BadChar::LineBreak));
        assert_eq!(classify('\u{2028}', false), Some(BadChar::Control));
        assert_eq!(classify('\t', true), None);
    }

    #[test]
    fn invisible_and_bidi_characters_are_found_with_their_place() {
        assert_eq!(
            first_bad("R\u{200B}1", true),
            Some((2, '\u{200B}', BadChar::Invisible))
        );
        assert_eq!(
            first_bad("ab\u{202E}c", true),
            Some((3, '\u{202E}', BadChar::Bidi))
        );
        assert_eq!(first_bad("Rolle µ 1.2 m — ok ε", true), None);
    }
}
