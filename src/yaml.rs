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
    /// The document as a whole has the wrong type (a scalar or a list where
    /// a mapping was expected), as opposed to a value inside it.
    pub wrong_document_type: bool,
}

impl fmt::Display for YamlError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        if let Some((l, c)) = self.location {
            write!(f, "{l}:{c}: ")?;
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
                path: String::new(),
                location: e.location,
                message: e.message,
            }],
        }
    }
}

/// Deserialises `text` into `T`.
pub fn from_str<T: DeserializeOwned>(text: &str) -> Result<T, YamlError> {
    serde_yaml::from_str::<T>(text).map_err(|e| {
        let full = e.to_string();
        // serde_yaml appends " at line L column C"; the location is kept apart.
        let message = full.split(" at line ").next().unwrap_or_default();
        let type_name = std::any::type_name::<T>();
        let short = type_name.rsplit("::").next().unwrap_or(type_name);
        YamlError {
            wrong_document_type: message.contains("invalid type")
                && message.contains(&format!("expected struct {short}")),
            message: tidy(message),
            location: e.location().map(|l| (l.line(), l.column())),
        }
    })
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
