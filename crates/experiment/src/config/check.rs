//! The validation pass's collector: turns a key path, a value and a rule into a located
//! [`ConfigError::Invalid`], and gathers all of them so the user sees every problem at once.

use std::fmt::Display;

use super::error::{ConfigError, Location};
use super::span_index::{KeyPath, SpanIndex};

/// Collects rule violations with their locations.
pub(crate) struct Checker<'a> {
    origin: &'a str,
    text: &'a str,
    index: &'a SpanIndex,
    pub(crate) errors: Vec<ConfigError>,
}

impl<'a> Checker<'a> {
    pub(crate) fn new(origin: &'a str, text: &'a str, index: &'a SpanIndex) -> Self {
        Self { origin, text, index, errors: Vec::new() }
    }

    /// The location of `path` (or of its nearest written ancestor, or the file's start) and
    /// the value as written there, when it is written.
    pub(crate) fn locate(&self, path: &str) -> (Location, Option<String>) {
        let key_path = KeyPath::parse(path);
        let (span, found) = self.index.nearest_span(&key_path);
        let location =
            Location::from_offset(self.origin, self.text, span.clone().map_or(0, |s| s.start));
        let written = if found == key_path.0.len() {
            span.and_then(|s| self.text.get(s))
                .map(str::trim)
                .filter(|t| !t.is_empty() && !t.contains('\n') && t.chars().count() <= 80)
        } else {
            None
        };
        (location, written.map(str::to_string))
    }

    /// Records that the value at `path` breaks `rule`; `value` is shown when the file does
    /// not spell the value out itself (a default, or an inherited value).
    pub(crate) fn fail(&mut self, path: &str, value: impl Display, rule: impl Into<String>) {
        let (location, written) = self.locate(path);
        let value = match written {
            Some(w) => w,
            None if path.contains(".imaging_beam.") => format!("{value} (from [beam] or default)"),
            None => format!("{value} (default)"),
        };
        self.errors.push(ConfigError::Invalid {
            location,
            key_path: path.to_string(),
            value,
            allowed: rule.into(),
        });
    }

    /// `value` must be finite and > 0.
    pub(crate) fn positive(&mut self, path: &str, value: f64, unit: &str) {
        if !(value.is_finite() && value > 0.0) {
            self.fail(path, value, format!("must be > 0{}", unit_suffix(unit)));
        }
    }

    /// `value` must be finite and >= 0.
    pub(crate) fn non_negative(&mut self, path: &str, value: f64, unit: &str) {
        if !(value.is_finite() && value >= 0.0) {
            self.fail(path, value, format!("must be >= 0{}", unit_suffix(unit)));
        }
    }

    /// `value` must be finite and within [lo, hi].
    pub(crate) fn in_range(&mut self, path: &str, value: f64, lo: f64, hi: f64, unit: &str) {
        if !(value.is_finite() && value >= lo && value <= hi) {
            self.fail(path, value, format!("must be within [{lo}, {hi}]{}", unit_suffix(unit)));
        }
    }

    /// An integer `value` must be at least `min`.
    pub(crate) fn at_least(&mut self, path: &str, value: u32, min: u32, unit: &str) {
        if value < min {
            self.fail(path, value, format!("must be >= {min}{}", unit_suffix(unit)));
        }
    }

    /// A name that is also used as a file or folder name.
    pub(crate) fn file_name_like(&mut self, path: &str, name: &str) {
        let ok_chars = name.chars().all(|ch| ch.is_ascii_alphanumeric() || "-_.".contains(ch));
        if name.is_empty() || !ok_chars || name.starts_with('.') || name.len() > 100 {
            self.fail(
                path,
                format!("{name:?}"),
                "must be 1 to 100 characters of letters, digits, '-', '_' and '.', not starting with '.' (it names files)",
            );
        }
    }
}

fn unit_suffix(unit: &str) -> String {
    if unit.is_empty() {
        String::new()
    } else {
        format!(" ({unit})")
    }
}
