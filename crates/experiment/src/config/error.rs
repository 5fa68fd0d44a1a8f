//! The error type of config loading: every variant names the file, the line and column, the key
//! path and, where there is one, the offending value and what is allowed.

use std::fmt;
use std::path::PathBuf;
use std::sync::Arc;

/// A position in a config file: the file's name as given, and a 1-based line and column
/// (columns count characters, not bytes).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Location {
    /// The file name (or other origin name) the text came from.
    pub origin: Arc<str>,
    /// 1-based line number.
    pub line: u32,
    /// 1-based column, counted in characters.
    pub column: u32,
}

impl Location {
    /// The location of byte `offset` in `text` (an offset past the end is clamped to the end).
    pub fn from_offset(origin: &str, text: &str, offset: usize) -> Self {
        let mut offset = offset.min(text.len());
        while !text.is_char_boundary(offset) {
            offset -= 1;
        }
        let before = &text[..offset];
        let line = before.matches('\n').count() + 1;
        let line_start = before.rfind('\n').map_or(0, |i| i + 1);
        let column = text[line_start..offset].chars().count() + 1;
        let clamp = |n: usize| u32::try_from(n).unwrap_or(u32::MAX);
        Self { origin: Arc::from(origin), line: clamp(line), column: clamp(column) }
    }
}

impl fmt::Display for Location {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}:{}:{}", self.origin, self.line, self.column)
    }
}

/// Everything that can be wrong with a config file, found before any work starts.
///
/// The `Display` form is one line per problem, e.g.
/// `configs/demo.toml:14:1: beam.dish_diameter_m = -13.5: must be > 0 (metres)`.
/// Key paths use dots for tables and 0-based `[i]` for entries of a list
/// (`strategy[2].clean.gain` is the third `[[strategy]]`).
#[derive(Debug, thiserror::Error)]
pub enum ConfigError {
    /// The file could not be read.
    #[error("{}: cannot read the config file: {source}", path.display())]
    Read {
        /// The path that was opened.
        path: PathBuf,
        /// The operating system's reason.
        #[source]
        source: std::io::Error,
    },
    /// The text is not valid TOML.
    #[error("{location}: not valid TOML: {message}")]
    Syntax {
        /// Where the parser stopped.
        location: Location,
        /// The parser's explanation.
        message: String,
    },
    /// A key that the schema does not know (often a typo).
    #[error("{location}: {key_path}: unknown key `{key}`{}; valid keys here: {}",
        did_you_mean(suggestion), valid.join(", "))]
    UnknownKey {
        /// Where the key is written.
        location: Location,
        /// Full path of the unknown key.
        key_path: String,
        /// The unknown key itself.
        key: String,
        /// The nearest valid key by edit distance, when one is close enough.
        suggestion: Option<String>,
        /// The keys allowed in this table.
        valid: Vec<String>,
    },
    /// A string value that is not one of the allowed choices (an enumeration).
    #[error("{location}: {key_path} = {value}: not a known choice{}; allowed: {}",
        did_you_mean_choice(suggestion), allowed.join(", "))]
    UnknownChoice {
        /// Where the value is written.
        location: Location,
        /// Path of the key.
        key_path: String,
        /// The value as written.
        value: String,
        /// The nearest allowed choice by edit distance, when one is close enough.
        suggestion: Option<String>,
        /// The allowed choices.
        allowed: Vec<String>,
    },
    /// A value of the wrong TOML type (a string where a number belongs, ...).
    #[error("{location}: {key_path} = {value}: wrong type: expected {expected}, found {found}")]
    WrongType {
        /// Where the value is written.
        location: Location,
        /// Path of the key.
        key_path: String,
        /// The value as written.
        value: String,
        /// What the schema wants, in words.
        expected: String,
        /// What the file holds, in words.
        found: String,
    },
    /// A required key (or section) is absent.
    #[error("{location}: missing required key `{key_path}`{}", describe(what))]
    MissingKey {
        /// The header of the table that lacks the key, or the file's start for a section.
        location: Location,
        /// Full path of the missing key.
        key_path: String,
        /// What the key is for and its unit.
        what: Option<String>,
    },
    /// A value of the right type that breaks a rule (range, order, consistency).
    #[error("{location}: {key_path} = {value}: {allowed}")]
    Invalid {
        /// Where the value is written (or, for a default value, the table it belongs to).
        location: Location,
        /// Path of the key.
        key_path: String,
        /// The value as written in the file, or the default that applied.
        value: String,
        /// The rule the value breaks and what is allowed.
        allowed: String,
    },
    /// A table whose keys do not fit together (e.g. two ways of giving a position).
    #[error("{location}: {key_path}: {message}")]
    Inconsistent {
        /// Where the table starts.
        location: Location,
        /// Path of the table.
        key_path: String,
        /// What is wrong and how to fix it.
        message: String,
    },
    /// The resolved config could not be written as TOML.
    #[error("cannot write the resolved config as TOML: {message}")]
    Serialize {
        /// The serializer's explanation.
        message: String,
    },
    /// Several problems found by the validation pass, one per line.
    #[error("{}", list(.0))]
    Several(Vec<ConfigError>),
}

impl ConfigError {
    /// The individual problems: the list of a [`ConfigError::Several`], or this error alone.
    pub fn problems(&self) -> Vec<&ConfigError> {
        match self {
            ConfigError::Several(list) => list.iter().collect(),
            other => vec![other],
        }
    }
}

fn did_you_mean(suggestion: &Option<String>) -> String {
    suggestion.as_ref().map(|s| format!(" (did you mean `{s}`?)")).unwrap_or_default()
}

fn did_you_mean_choice(suggestion: &Option<String>) -> String {
    suggestion.as_ref().map(|s| format!(" (did you mean \"{s}\"?)")).unwrap_or_default()
}

fn describe(what: &Option<String>) -> String {
    what.as_ref().map(|w| format!(" ({w})")).unwrap_or_default()
}

fn list(errors: &[ConfigError]) -> String {
    errors.iter().map(|e| e.to_string()).collect::<Vec<_>>().join("\n")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn offsets_become_lines_and_character_columns() {
        let text = "a = 1\nname = \"é\" # x\n";
        let at = |o| Location::from_offset("f.toml", text, o).to_string();
        assert_eq!(at(0), "f.toml:1:1");
        assert_eq!(at(6), "f.toml:2:1");
        // "é" is two bytes; the column after it counts it once.
        let after = text.find('"').unwrap() + 1 + 'é'.len_utf8();
        assert_eq!(at(after), "f.toml:2:10");
        // Past the end and inside a character are clamped, not a panic.
        assert_eq!(at(1000), "f.toml:3:1");
        assert_eq!(at(text.find('é').unwrap() + 1), "f.toml:2:9");
    }
}
