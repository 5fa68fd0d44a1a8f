//! Problems found after parsing — physical sanity of a config against the observation it
//! describes — located in the config's text like every other config error.

use super::check::Checker;
use super::error::ConfigError;
use super::span_index::SpanIndex;

/// One rule a parsed, valid config breaks on physical grounds: the key to change, the value
/// that breaks the rule (used when the file does not spell it out, i.e. a default) and what is
/// valid instead.
#[derive(Debug, Clone, PartialEq)]
pub struct Problem {
    /// Dotted key path with 0-based list indices (`strategy[1].clean.gain`).
    pub key_path: String,
    /// The value, printed.
    pub value: String,
    /// What is wrong and what is allowed.
    pub allowed: String,
}

/// Turns `problems` into one located [`ConfigError`] (a [`ConfigError::Several`] for more than
/// one) against the config `text` named `origin`; `Ok(())` when there are none.
///
/// Each problem is located at its key, or at the nearest written table above it when the key
/// takes its default; the value is shown as written, or followed by "(default)".
pub fn locate_problems(origin: &str, text: &str, problems: &[Problem]) -> Result<(), ConfigError> {
    if problems.is_empty() {
        return Ok(());
    }
    let index = SpanIndex::build(text);
    let mut checker = Checker::new(origin, text, &index);
    for p in problems {
        checker.fail(&p.key_path, &p.value, p.allowed.clone());
    }
    let mut errors = checker.errors;
    if errors.len() == 1 {
        Err(errors.remove(0))
    } else {
        Err(ConfigError::Several(errors))
    }
}
