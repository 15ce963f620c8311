//! # A YAML path into a line description, and the value there set
//!
//! The sweep names the input it varies by its place in the line
//! description, as the validator names a place in its messages:
//! `web.speed`, `readings[1].reading`, `points[2].at[2]`. A path is keys
//! joined by dots and list items by `[i]` (counted from 0); a key holding
//! a dot, a bracket, a quote or a space is written in double quotes
//! (`"odd.key"`, or `["odd.key"]`), with `\"` and `\\` inside.
//!
//! [`get_at`] reads the value at a path and [`set_at`] replaces it in a
//! YAML tree (`serde_yaml::Value`, read and written by [`crate::yaml`]).
//! Both only follow what exists: an unknown key or an index past the end
//! of a list is an error that names the keys (or the length) found at the
//! deepest level reached, so a typo can be fixed from the message.

use serde_yaml::Value;
use std::fmt;

/// One step of a path: a key of a mapping or an item of a list.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Step {
    /// A mapping key.
    Key(String),
    /// A list item, counted from 0.
    Index(usize),
}

/// A checked path: at least one step.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct YamlPath {
    steps: Vec<Step>,
}

/// A path that cannot be read or followed.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum PathError {
    /// The text is not a path.
    #[error(
        "\"{text}\" is not a YAML path ({why}): expected keys joined by dots and list items by [i], such as web.speed, readings[1].reading or points[2].at[2]"
    )]
    Syntax {
        /// The text as given.
        text: String,
        /// What is wrong with it.
        why: String,
    },
    /// A key that the mapping reached does not have.
    #[error("{path}: {} has no key \"{key}\"; its keys are {}", where_(.parent), list(.keys))]
    UnknownKey {
        /// The whole path asked for.
        path: String,
        /// The part of the path that exists (empty: the top level).
        parent: String,
        /// The missing key.
        key: String,
        /// The keys that exist there.
        keys: Vec<String>,
    },
    /// An index past the end of a list.
    #[error("{path}: {} has {len} item(s), so [{index}] does not exist{}", where_(.parent), valid_indices(*.len))]
    OutOfRange {
        /// The whole path asked for.
        path: String,
        /// The list's path.
        parent: String,
        /// The index asked for.
        index: usize,
        /// The list's length.
        len: usize,
    },
    /// A key asked of something that is not a mapping, or an index of
    /// something that is not a list.
    #[error("{path}: {} is {found}, so it has no {wanted}", where_(.parent))]
    WrongKind {
        /// The whole path asked for.
        path: String,
        /// The part of the path that exists.
        parent: String,
        /// What is there (`a value`, `a list of 3 items`).
        found: String,
        /// What the path asks of it (`key "x"`, `item [2]`).
        wanted: String,
    },
}

/// The place a message talks about: the path, or the top level.
fn where_(parent: &str) -> String {
    if parent.is_empty() {
        "the top level of the line description".to_string()
    } else {
        parent.to_string()
    }
}

fn list(keys: &[String]) -> String {
    if keys.is_empty() {
        "none".to_string()
    } else {
        keys.join(", ")
    }
}

fn valid_indices(len: usize) -> String {
    match len {
        0 => String::new(),
        1 => " (only [0])".to_string(),
        n => format!(" (items [0] to [{}])", n - 1),
    }
}

/// Whether a key can be written without quotes.
fn is_bare(key: &str) -> bool {
    !key.is_empty()
        && key
            .chars()
            .all(|c| !c.is_whitespace() && !matches!(c, '.' | '[' | ']' | '"' | '\\'))
}

impl YamlPath {
    /// Reads a path such as `readings[1].reading` or `web."odd.key"`.
    pub fn parse(text: &str) -> Result<YamlPath, PathError> {
        let bad = |why: &str| PathError::Syntax {
            text: text.to_string(),
            why: why.to_string(),
        };
        let chars: Vec<char> = text.chars().collect();
        let mut steps = Vec::new();
        let mut i = 0;
        // A key is expected at the start and after a dot.
        let mut want_key = true;
        while i < chars.len() {
            let c = chars[i];
            if c == '[' {
                i += 1;
                if chars.get(i) == Some(&'"') {
                    let (key, next) = quoted(&chars, i).ok_or_else(|| bad("an unclosed quote"))?;
                    steps.push(Step::Key(key));
                    i = next;
                } else {
                    let start = i;
                    while chars.get(i).is_some_and(char::is_ascii_digit) {
                        i += 1;
                    }
                    if start == i {
                        return Err(bad("a list index must be a whole number such as [0]"));
                    }
                    let digits: String = chars[start..i].iter().collect();
                    let index = digits
                        .parse::<usize>()
                        .map_err(|_| bad("a list index too large"))?;
                    steps.push(Step::Index(index));
                }
                if chars.get(i) != Some(&']') {
                    return Err(bad("a [ without its ]"));
                }
                i += 1;
                want_key = false;
            } else if c == ']' {
                return Err(bad("a stray ]"));
            } else if c == '.' {
                if want_key {
                    return Err(bad("an empty key before a dot"));
                }
                want_key = true;
                i += 1;
            } else if want_key {
                if c == '"' {
                    let (key, next) = quoted(&chars, i).ok_or_else(|| bad("an unclosed quote"))?;
                    steps.push(Step::Key(key));
                    i = next;
                } else {
                    let start = i;
                    while chars
                        .get(i)
                        .is_some_and(|c| !matches!(c, '.' | '[' | ']' | '"'))
                    {
                        i += 1;
                    }
                    let key: String = chars[start..i].iter().collect();
                    if key.chars().any(char::is_whitespace) {
                        return Err(bad("a space in a key: write such a key in double quotes"));
                    }
                    steps.push(Step::Key(key));
                }
                want_key = false;
            } else {
                return Err(bad("a key must follow a dot"));
            }
        }
        if steps.is_empty() {
            return Err(bad("it is empty"));
        }
        if want_key {
            return Err(bad("it ends with a dot"));
        }
        Ok(YamlPath { steps })
    }

    /// The steps, first to last.
    pub fn steps(&self) -> &[Step] {
        &self.steps
    }

    /// The path of the first `n` steps as text (empty for 0).
    fn prefix(&self, n: usize) -> String {
        YamlPath {
            steps: self.steps[..n].to_vec(),
        }
        .to_string()
    }
}

/// The quoted key starting at `chars[open]` (a `"`) and the index after its
/// closing quote; `None` when it is not closed.
fn quoted(chars: &[char], open: usize) -> Option<(String, usize)> {
    let mut key = String::new();
    let mut i = open + 1;
    while i < chars.len() {
        match chars[i] {
            '\\' => {
                key.push(*chars.get(i + 1)?);
                i += 2;
            }
            '"' => return Some((key, i + 1)),
            c => {
                key.push(c);
                i += 1;
            }
        }
    }
    None
}

impl fmt::Display for YamlPath {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        for (n, s) in self.steps.iter().enumerate() {
            match s {
                Step::Index(i) => write!(f, "[{i}]")?,
                Step::Key(k) => {
                    if n > 0 {
                        f.write_str(".")?;
                    }
                    if is_bare(k) {
                        f.write_str(k)?;
                    } else {
                        write!(f, "\"{}\"", k.replace('\\', "\\\\").replace('"', "\\\""))?;
                    }
                }
            }
        }
        Ok(())
    }
}

/// What a YAML value is, for messages: `a mapping`, `a list of 3 items`,
/// `a value`.
pub fn kind(v: &Value) -> String {
    match v {
        Value::Mapping(_) => "a mapping".to_string(),
        Value::Sequence(s) => format!("a list of {} item(s)", s.len()),
        Value::Null => "empty".to_string(),
        Value::Tagged(_) => "a tagged value".to_string(),
        _ => "a value".to_string(),
    }
}

/// A mapping key as text (non-text keys as YAML would write them).
fn key_text(k: &Value) -> String {
    match k {
        Value::String(s) => s.clone(),
        Value::Number(n) => n.to_string(),
        Value::Bool(b) => b.to_string(),
        other => kind(other),
    }
}

/// One step down from `v` (the value at the first `n` steps of `path`).
fn step_mut<'v>(v: &'v mut Value, path: &YamlPath, n: usize) -> Result<&'v mut Value, PathError> {
    let err_kind = |v: &Value, wanted: String| PathError::WrongKind {
        path: path.to_string(),
        parent: path.prefix(n),
        found: kind(v),
        wanted,
    };
    match &path.steps[n] {
        Step::Key(key) => {
            let Value::Mapping(m) = v else {
                return Err(err_kind(v, format!("key \"{key}\"")));
            };
            let keys: Vec<String> = m.keys().map(key_text).collect();
            m.get_mut(key.as_str())
                .ok_or_else(|| PathError::UnknownKey {
                    path: path.to_string(),
                    parent: path.prefix(n),
                    key: key.clone(),
                    keys,
                })
        }
        Step::Index(i) => {
            let Value::Sequence(s) = v else {
                return Err(err_kind(v, format!("item [{i}]")));
            };
            let len = s.len();
            s.get_mut(*i).ok_or_else(|| PathError::OutOfRange {
                path: path.to_string(),
                parent: path.prefix(n),
                index: *i,
                len,
            })
        }
    }
}

/// The value at `path` in `doc`.
pub fn get_at(doc: &Value, path: &YamlPath) -> Result<Value, PathError> {
    // Walked on a copy, so that reading and writing share one walk.
    let mut copy = doc.clone();
    let mut v = &mut copy;
    for n in 0..path.steps.len() {
        v = step_mut(v, path, n)?;
    }
    Ok(v.clone())
}

/// Replaces the value at `path` in `doc` with `value`; returns the value
/// that was there. Only an existing place can be set.
pub fn set_at(doc: &mut Value, path: &YamlPath, value: Value) -> Result<Value, PathError> {
    let mut v = doc;
    for n in 0..path.steps.len() {
        v = step_mut(v, path, n)?;
    }
    Ok(std::mem::replace(v, value))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn tree(text: &str) -> Value {
        crate::yaml::value_tree(text).unwrap()
    }

    fn path(text: &str) -> YamlPath {
        YamlPath::parse(text).unwrap()
    }

    const DOC: &str = "web:\n  speed: 250 m/min\n  width: 1.2 m\npoints:\n  - {id: A, at: [1 m, 0 m, 2 m]}\n  - {id: B, at: [3 m, 0 m, 4 m]}\n\"odd.key\": 5 m\n";

    #[test]
    fn paths_read_keys_indices_and_quotes() {
        assert_eq!(
            path("points[1].at[2]").steps(),
            &[
                Step::Key("points".into()),
                Step::Index(1),
                Step::Key("at".into()),
                Step::Index(2)
            ]
        );
        assert_eq!(path("\"odd.key\"").steps(), &[Step::Key("odd.key".into())]);
        assert_eq!(path("[\"a b\"]").steps(), &[Step::Key("a b".into())]);
        assert_eq!(
            path(r#"x."say \"hi\"""#).steps(),
            &[Step::Key("x".into()), Step::Key("say \"hi\"".into())]
        );
        // Written back in the same form.
        for t in [
            "points[1].at[2]",
            "web.speed",
            "\"odd.key\"",
            "[0].a",
            r#"x."q\"t""#,
        ] {
            assert_eq!(path(t).to_string(), t);
        }
    }

    #[test]
    fn malformed_paths_are_refused_with_the_reason() {
        for (t, why) in [
            ("", "empty"),
            ("web.", "ends with a dot"),
            ("web..speed", "empty key"),
            (".web", "empty key"),
            ("points[x]", "whole number"),
            ("points[1", "without its ]"),
            ("points[1]x", "must follow a dot"),
            ("web.\"speed", "unclosed quote"),
            ("web speed", "space in a key"),
            ("web]", "stray"),
        ] {
            let e = YamlPath::parse(t).unwrap_err().to_string();
            assert!(e.contains(why), "{t:?}: {e}");
            assert!(e.contains("such as web.speed"), "{e}");
        }
    }

    #[test]
    fn set_replaces_values_in_maps_and_lists_and_returns_the_old_one() {
        let mut doc = tree(DOC);
        let old = set_at(
            &mut doc,
            &path("web.speed"),
            Value::String("100 m/min".into()),
        )
        .unwrap();
        assert_eq!(old, Value::String("250 m/min".into()));
        let old = set_at(
            &mut doc,
            &path("points[1].at[2]"),
            Value::String("5 m".into()),
        )
        .unwrap();
        assert_eq!(old, Value::String("4 m".into()));
        let old = set_at(&mut doc, &path("\"odd.key\""), Value::String("6 m".into())).unwrap();
        assert_eq!(old, Value::String("5 m".into()));
        // The written text reads back with the new values and nothing else changed.
        let back = tree(&crate::yaml::to_text(&doc).unwrap());
        assert_eq!(
            get_at(&back, &path("web.speed")).unwrap(),
            Value::String("100 m/min".into())
        );
        assert_eq!(
            get_at(&back, &path("web.width")).unwrap(),
            Value::String("1.2 m".into())
        );
        assert_eq!(
            get_at(&back, &path("points[1].at[2]")).unwrap(),
            Value::String("5 m".into())
        );
        assert_eq!(
            get_at(&back, &path("points[0].at[2]")).unwrap(),
            Value::String("2 m".into())
        );
        assert_eq!(
            get_at(&back, &path("\"odd.key\"")).unwrap(),
            Value::String("6 m".into())
        );
        assert_eq!(
            get_at(&back, &path("points[1].id")).unwrap(),
            Value::String("B".into())
        );
    }

    #[test]
    fn unknown_places_name_what_exists_there() {
        let mut doc = tree(DOC);
        let e = set_at(&mut doc, &path("web.sped"), Value::Null)
            .unwrap_err()
            .to_string();
        assert_eq!(
            e,
            "web.sped: web has no key \"sped\"; its keys are speed, width"
        );
        let e = get_at(&doc, &path("readings[0].reading"))
            .unwrap_err()
            .to_string();
        assert!(e.starts_with("readings[0].reading: the top level of the line description has no key \"readings\"; its keys are web, points, odd.key"), "{e}");
        let e = get_at(&doc, &path("points[2].at")).unwrap_err().to_string();
        assert_eq!(
            e,
            "points[2].at: points has 2 item(s), so [2] does not exist (items [0] to [1])"
        );
        let e = get_at(&doc, &path("web.speed.x")).unwrap_err().to_string();
        assert_eq!(
            e,
            "web.speed.x: web.speed is a value, so it has no key \"x\""
        );
        let e = get_at(&doc, &path("web[0]")).unwrap_err().to_string();
        assert_eq!(e, "web[0]: web is a mapping, so it has no item [0]");
        // A failed set changes nothing.
        assert_eq!(doc, tree(DOC));
    }
}
