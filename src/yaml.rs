//! # YAML parsing
//!
//! First reading stage of every input (line descriptions, eliminator lists,
//! threshold profiles): the one place where YAML text is deserialised into
//! the raw serde mirrors. `serde_yaml` is archived upstream; swapping the
//! parser means changing this file only. Its errors come back as a
//! [`YamlError`]: the message without the parser's `at line L column C`
//! tail (the location is kept apart, for the `L:C:` prefix of an
//! [`Issue`]), and with serde's internal type names (`struct RawWeb`)
//! replaced by words a user can act on.
//!
//! Before the typed reading, every text is screened for what a YAML reader
//! would otherwise accept silently or reinterpret ([`screen`],
//! [`check_texts`]): tags (`!!binary`, `!!python/object`, `!foo`), a second
//! document (located at its `---`), duplicate keys anywhere, control and
//! invisible characters in any text, and texts longer than a line
//! description needs ([`text_limit`]).

use crate::model::{Issue, ValidationError};
use serde::de::DeserializeOwned;
use std::fmt;

/// A YAML text that could not be read into the expected raw type.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct YamlError {
    /// What is wrong, with serde's type names replaced by words.
    pub message: String,
    /// `(line, column)` in the text, when the parser gave one.
    pub location: Option<(usize, usize)>,
    /// YAML path of the value at fault (`rollers[2].id`), empty when the
    /// parser gave only a location.
    pub path: String,
    /// The document as a whole has the wrong type (a scalar or a list where
    /// a mapping was expected), as opposed to a value inside it.
    pub wrong_document_type: bool,
}

impl fmt::Display for YamlError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if let Some((l, c)) = self.location {
            write!(f, "{l}:{c}: ")?;
        }
        if !self.path.is_empty() {
            write!(f, "{}: ", self.path)?;
        }
        f.write_str(&self.message)
    }
}

impl std::error::Error for YamlError {}

impl From<YamlError> for ValidationError {
    /// One problem of the whole document, at the parser's location.
    fn from(e: YamlError) -> Self {
        ValidationError {
            issues: vec![Issue {
                path: e.path,
                location: e.location,
                message: e.message,
            }],
        }
    }
}

/// Deserialises `text` into `T`, after the screening of [`screen`] and
/// [`check_texts`].
pub fn from_str<T: DeserializeOwned>(text: &str) -> Result<T, YamlError> {
    screen(text)?;
    let value: serde_yaml::Value = serde_yaml::from_str(text).map_err(|e| {
        let mut y = convert::<T>(&e);
        if let Some(at) = duplicate_key_location(text, &y) {
            y.location = Some(at);
        }
        y
    })?;
    check_texts(&value, &mut String::new(), None)?;
    serde_yaml::from_str::<T>(text).map_err(|e| convert::<T>(&e))
}

/// The text as a YAML tree (after the screening of [`screen`] and
/// [`check_texts`]), for tools that edit a description in memory (the
/// sweep sets one value in it and writes it back with [`to_text`]).
pub fn value_tree(text: &str) -> Result<serde_yaml::Value, YamlError> {
    screen(text)?;
    let value: serde_yaml::Value =
        serde_yaml::from_str(text).map_err(|e| convert::<serde_yaml::Value>(&e))?;
    check_texts(&value, &mut String::new(), None)?;
    Ok(value)
}

/// A YAML tree written back as text (comments are not kept: the tree has
/// none).
pub fn to_text(value: &serde_yaml::Value) -> Result<String, YamlError> {
    serde_yaml::to_string(value).map_err(|e| YamlError {
        message: format!("the edited description cannot be written as YAML: {e}"),
        location: None,
        path: String::new(),
        wrong_document_type: false,
    })
}

/// Where the second of two equal keys is, for a "duplicate entry" error
/// that the reader locates at the start of their mapping: the next line, at
/// the mapping's column, that begins with the key again.
fn duplicate_key_location(text: &str, e: &YamlError) -> Option<(usize, usize)> {
    let key = e
        .message
        .split_once("duplicate entry with key \"")?
        .1
        .strip_suffix('"')?;
    let (l, c) = e.location?;
    let mut seen = 0;
    for (n, line) in text.lines().enumerate().skip(l - 1) {
        let rest: String = line.chars().skip(c - 1).collect();
        if let Some(after) = rest.strip_prefix(key)
            && after.trim_start().starts_with(':')
        {
            seen += 1;
            if seen == 2 {
                return Some((n + 1, c));
            }
        }
    }
    None
}

/// A parser error in our words, its location apart.
fn convert<T>(e: &serde_yaml::Error) -> YamlError {
    let full = e.to_string();
    // serde_yaml appends " at line L column C"; the location is kept apart.
    let message = full.split(" at line ").next().unwrap_or_default();
    let type_name = std::any::type_name::<T>();
    let short = type_name.rsplit("::").next().unwrap_or(type_name);
    // libyaml adds where the enclosing node began: ", while parsing a flow
    // sequence at line 3 column 6" — kept, as "begun at 3:6".
    let context = full
        .split_once(", while ")
        .map(|(_, t)| {
            let t = t.trim_end_matches(|c: char| c.is_ascii_digit()).to_string();
            let lc: Vec<&str> = full
                .rsplit(" at line ")
                .next()
                .unwrap_or("")
                .split(" column ")
                .collect();
            match t.split_once(" at line ") {
                Some((what, _)) if lc.len() == 2 => {
                    format!(", while {what} begun at {}:{}", lc[0], lc[1])
                }
                _ => String::new(),
            }
        })
        .unwrap_or_default();
    let message = if message.contains("more than one document") {
        "the file holds more than one YAML document: expected one (remove the `---` line and what follows, or split the file)".to_string()
    } else {
        tidy(&format!("{message}{context}"))
    };
    YamlError {
        wrong_document_type: full.contains("invalid type")
            && full.contains(&format!("expected struct {short}")),
        message,
        location: e.location().map(|l| (l.line(), l.column())),
        path: String::new(),
    }
}

/// Most characters a text value may hold, by key: titles 200, names 120,
/// free text (`description`, `note`, `source`, `what`) 4000, every other
/// value 200 (quantities, ids and keywords are short). Keys themselves hold
/// at most 64. Long texts would only bury a report's layout (and a plot's
/// text layout grows with them), so they are refused with the bound.
pub fn text_limit(key: Option<&str>) -> (usize, bool) {
    match key {
        Some("description" | "note" | "source" | "what") => (4000, false),
        Some("name" | "material" | "meter") => (120, true),
        _ => (200, true),
    }
}

/// Most characters of a mapping key.
const KEY_LIMIT: usize = 64;

/// Checks every text of `value` (keys included): no refused character
/// ([`crate::safe_text::classify`]; line breaks only in free text) and no
/// more characters than [`text_limit`]. `path` is the YAML path so far;
/// `key` the key the value sits under. The first problem is returned with
/// its path.
pub fn check_texts(
    value: &serde_yaml::Value,
    path: &mut String,
    key: Option<&str>,
) -> Result<(), YamlError> {
    use serde_yaml::Value;
    let fail = |path: &str, message: String| YamlError {
        message,
        location: None,
        path: path.to_string(),
        wrong_document_type: false,
    };
    match value {
        Value::String(s) => {
            let (limit, one_line) = text_limit(key);
            check_one(s, limit, one_line).map_err(|m| fail(path, m))
        }
        Value::Sequence(items) => {
            for (i, item) in items.iter().enumerate() {
                let n = path.len();
                path.push_str(&format!("[{i}]"));
                check_texts(item, path, key)?;
                path.truncate(n);
            }
            Ok(())
        }
        Value::Mapping(m) => {
            for (k, v) in m {
                let n = path.len();
                let name = match k {
                    Value::String(k) => {
                        let at = if path.is_empty() {
                            "(a key)".to_string()
                        } else {
                            format!("{path} (a key)")
                        };
                        check_one(k, KEY_LIMIT, true).map_err(|m| fail(&at, m))?;
                        k.clone()
                    }
                    Value::Number(x) => x.to_string(),
                    Value::Bool(b) => b.to_string(),
                    _ => {
                        return Err(fail(
                            path,
                            "a key that is not a plain word: expected keys such as `id:` or `diameter:`".into(),
                        ));
                    }
                };
                if !path.is_empty() {
                    path.push('.');
                }
                path.push_str(&name);
                check_texts(v, path, Some(&name))?;
                path.truncate(n);
            }
            Ok(())
        }
        Value::Tagged(t) => Err(fail(
            path,
            format!(
                "a YAML tag ({}) is not accepted: write the value as plain text",
                t.tag
            ),
        )),
        Value::Null | Value::Bool(_) | Value::Number(_) => Ok(()),
    }
}

/// One text against its limit and the refused characters.
fn check_one(s: &str, limit: usize, one_line: bool) -> Result<(), String> {
    let n = s.chars().count();
    if n > limit {
        return Err(format!(
            "the text has {n} characters: at most {limit} are accepted here (it is shown in reports and plots; shorten it)"
        ));
    }
    if let Some((i, c, why)) = crate::safe_text::first_bad(s, one_line) {
        return Err(format!(
            "character {i} of the text is {} ({}): not accepted",
            why.words(),
            c.escape_unicode()
        ));
    }
    Ok(())
}

/// Whether a plain token is an integer in another radix (`0x1F`, `0o17`,
/// `0b101`, with an optional sign).
fn is_radix_number(token: &str) -> bool {
    let t = token.trim_start_matches(['+', '-']);
    let b = t.as_bytes();
    b.len() > 2
        && b[0] == b'0'
        && matches!(b[1], b'x' | b'X' | b'o' | b'O' | b'b' | b'B')
        && b[2..].iter().all(|c| c.is_ascii_hexdigit() || *c == b'_')
}

/// Finds, in the text itself, what the YAML reader would take silently: a
/// tag (`!!binary`, `!!python/object`, `!foo`, `!<...>`), which changes how
/// a value is read or is ignored, and the start of a second document (a
/// `---` line after content, or content after a `...` line), which the
/// reader refuses without a location. Quoted strings, comments and block
/// scalars (`|`, `>`) are skipped.
pub fn screen(text: &str) -> Result<(), YamlError> {
    let at = |l: usize, c: usize, message: String| YamlError {
        message,
        location: Some((l, c)),
        path: String::new(),
        wrong_document_type: false,
    };
    let mut quote: Option<char> = None;
    // Indentation of the line that opened a block scalar, while inside it.
    let mut block: Option<usize> = None;
    let mut content = false;
    let mut ended = false;
    for (n, line) in text.lines().enumerate() {
        let l = n + 1;
        let indent = line.len() - line.trim_start_matches(' ').len();
        if let Some(b) = block {
            if line.trim().is_empty() || indent > b {
                continue;
            }
            block = None;
        }
        let mut chars: Vec<char> = line.chars().collect();
        if quote.is_none() {
            let marker = |m: &str| {
                line.starts_with(m) && line[3..].chars().next().is_none_or(char::is_whitespace)
            };
            if marker("---") {
                if content || ended {
                    return Err(at(
                        l,
                        1,
                        "a second YAML document begins here: a file holds one document (remove this `---` line and what follows, or split the file)".into(),
                    ));
                }
                chars = line[3..].chars().collect();
                chars.insert(0, ' ');
                chars.insert(0, ' ');
                chars.insert(0, ' ');
            } else if marker("...") {
                ended = true;
                continue;
            }
        }
        let mut prev: Option<char> = None;
        let mut i = 0;
        while i < chars.len() {
            let c = chars[i];
            let col = i + 1;
            match quote {
                Some('\'') => {
                    if c == '\'' {
                        if chars.get(i + 1) == Some(&'\'') {
                            i += 1;
                        } else {
                            quote = None;
                        }
                    }
                }
                Some(_) => {
                    if c == '\\' {
                        i += 1;
                    } else if c == '"' {
                        quote = None;
                    }
                }
                None => {
                    let start = prev.is_none_or(|p| p.is_whitespace() || "[{,".contains(p));
                    if c == '#' && prev.is_none_or(char::is_whitespace) {
                        break;
                    }
                    if !c.is_whitespace() {
                        if ended {
                            return Err(at(
                                l,
                                col,
                                "content after the end of the document (`...`): a file holds one document".into(),
                            ));
                        }
                        content = true;
                    }
                    if start {
                        match c {
                            '\'' | '"' => quote = Some(c),
                            '!' => {
                                let tag: String = chars[i..]
                                    .iter()
                                    .take_while(|c| !c.is_whitespace())
                                    .take(40)
                                    .collect();
                                return Err(at(
                                    l,
                                    col,
                                    format!(
                                        "a YAML tag ({}) is not accepted: tags change how a value is read, or are ignored; write the value as plain text",
                                        crate::safe_text::printable(&tag)
                                    ),
                                ));
                            }
                            '0'..='9' | '+' | '-' => {
                                let token: String = chars[i..]
                                    .iter()
                                    .take_while(|c| !c.is_whitespace() && !",]}".contains(**c))
                                    .collect();
                                if is_radix_number(&token) {
                                    return Err(at(
                                        l,
                                        col,
                                        format!(
                                            "{} is a number in hexadecimal, octal or binary, which YAML would read as another value than the digits shown: write it in decimal",
                                            crate::safe_text::printable(&token)
                                        ),
                                    ));
                                }
                            }
                            '|' | '>' => {
                                let rest: String = chars[i + 1..].iter().collect();
                                let rest = rest.trim_start_matches(|c: char| {
                                    c.is_ascii_digit() || c == '+' || c == '-'
                                });
                                let rest = rest.trim_start();
                                if rest.is_empty() || rest.starts_with('#') {
                                    block = Some(indent);
                                    break;
                                }
                            }
                            _ => {}
                        }
                    }
                }
            }
            prev = Some(c);
            i += 1;
        }
    }
    Ok(())
}

/// Whether a text holds nothing but blank lines and `#` comments.
pub fn is_blank(text: &str) -> bool {
    text.lines()
        .all(|l| l.trim().is_empty() || l.trim_start().starts_with('#'))
}

/// Replaces serde's internal type names with words: `struct RawWeb` → `a
/// mapping of keys`, `enum RawList` → `a value or a list of values`.
fn tidy(message: &str) -> String {
    let mut out = String::new();
    let mut rest = message;
    while let Some(i) = rest.find("struct Raw") {
        out.push_str(&rest[..i]);
        out.push_str("a mapping of keys");
        rest = &rest[i + "struct Raw".len()..];
        let end = rest
            .find(|c: char| !c.is_alphanumeric())
            .unwrap_or(rest.len());
        rest = &rest[end..];
    }
    out.push_str(rest);
    out.replace("enum RawList", "a value or a list of values")
}

/// Reading a YAML file as text, bounded by the bytes actually read (the
/// function lives in [`crate::read`]).
pub use crate::read::read_text;

#[cfg(test)]
mod tests {
    use super::*;
    use serde::Deserialize;
    use std::collections::BTreeMap;

    #[derive(Debug, Deserialize)]
    #[serde(deny_unknown_fields)]
    #[allow(dead_code)]
    struct RawThing {
        width: String,
    }

    #[test]
    fn tidy_replaces_every_raw_type_name() {
        assert_eq!(
            tidy("invalid type: string \"a\", expected struct RawWeb, or struct RawRoller"),
            "invalid type: string \"a\", expected a mapping of keys, or a mapping of keys"
        );
        assert_eq!(
            tidy("data did not match any variant of untagged enum RawList"),
            "data did not match any variant of untagged a value or a list of values"
        );
        assert_eq!(tidy("no type name here"), "no type name here");
    }

    #[test]
    fn location_is_kept_apart_from_the_message() {
        let e = from_str::<RawThing>("width: 1\nwidht: 2\n").unwrap_err();
        assert_eq!(e.location, Some((2, 1)));
        assert!(e.message.starts_with("unknown field `widht`"), "{e}");
        assert!(!e.message.contains(" at line "), "{e}");
        assert!(!e.wrong_document_type);
        assert!(e.to_string().starts_with("2:1: unknown field"), "{e}");
    }

    #[test]
    fn a_list_for_a_mapping_is_a_wrong_document_type() {
        let e = from_str::<RawThing>("- a\n- b\n").unwrap_err();
        assert!(e.wrong_document_type, "{e}");
        assert_eq!(
            e.message,
            "invalid type: sequence, expected a mapping of keys"
        );
    }

    #[test]
    fn a_wrong_type_inside_is_not_a_wrong_document_type() {
        let e = from_str::<BTreeMap<String, RawThing>>("a: 5\n").unwrap_err();
        assert!(!e.wrong_document_type, "{e}");
        assert!(e.message.contains("expected a mapping of keys"), "{e}");
    }

    #[test]
    fn tags_are_found_outside_quotes_comments_and_block_texts() {
        let e = screen("a: 1\nb: [x, !!str 5]\n").unwrap_err();
        assert_eq!(e.location, Some((2, 8)), "{e}");
        assert!(e.message.contains("(!!str)"), "{e}");
        for fine in [
            "a: 'it''s !x'\n",
            "a: \"say \\\" !x\"\n",
            "a: wow! # !tag in a comment\n",
            "d: >\n  ! a folded line\n  !! more\nb: 2\n",
            "note: |\n  ---\n  !x\n",
            "---\na: 1\n...\n",
        ] {
            assert_eq!(screen(fine), Ok(()), "{fine:?}");
        }
    }

    #[test]
    fn a_second_document_and_radix_numbers_are_located() {
        let e = screen("a: 1\n---\nb: 2\n").unwrap_err();
        assert_eq!(e.location, Some((2, 1)));
        let e = screen("a: 1\n...\nb: 2\n").unwrap_err();
        assert_eq!(e.location, Some((3, 1)));
        let e = screen("a: [1, 0x1F]\n").unwrap_err();
        assert_eq!(e.location, Some((1, 8)));
        assert!(screen("a: 0.5\nb: 0 m\nc: 0b\n").is_ok());
    }

    #[test]
    fn texts_are_checked_with_their_path() {
        let e = from_str::<serde_yaml::Value>("a:\n  - {id: \"x\\u200By\"}\n").unwrap_err();
        assert_eq!(e.path, "a[0].id");
        let long = format!("line: {}\n", "x".repeat(201));
        let e = from_str::<serde_yaml::Value>(&long).unwrap_err();
        assert!(e.message.contains("at most 200"), "{e}");
        let note = format!("note: \"{}\\nline two\"\n", "x".repeat(300));
        assert!(from_str::<serde_yaml::Value>(&note).is_ok());
        let e = from_str::<serde_yaml::Value>("a: 1\nb:\n  c: 2\n  c: 3\n").unwrap_err();
        assert_eq!(e.location, Some((4, 3)), "{e}");
    }

    #[test]
    fn blank_means_only_blank_lines_and_comments() {
        assert!(is_blank(""));
        assert!(is_blank("  \n# note\n   # indented\n"));
        assert!(!is_blank("# note\nweb: {}\n"));
    }

    #[test]
    fn converts_to_one_issue_of_the_whole_document() {
        let e = from_str::<RawThing>("[").unwrap_err();
        let v = ValidationError::from(e.clone());
        assert_eq!(v.issues.len(), 1);
        assert_eq!(v.issues[0].path, "");
        assert_eq!(v.issues[0].location, e.location);
        assert_eq!(v.issues[0].message, e.message);
    }
}
