//! `[sweep]`: one or two config keys, each over a list or a range of values; one run per point.
//!
//! ```toml
//! [sweep]
//! seeds = "per-point"                        # or "experiment"
//!
//! [[sweep.parameter]]
//! key = "sky.source.edge.radius_arcmin"      # a key path (grammar below)
//! range = { start = 10.0, stop = 40.0, step = 10.0 }   # 10, 20, 30, 40
//!
//! [[sweep.parameter]]
//! key = "strategy.a-proj.pa_bin_deg"
//! values = [2.0, 5.0]
//! ```
//!
//! Key paths are dotted keys as in TOML (`imaging.cell_arcsec`, `beam.legs.width_m`). Where a
//! key holds a list of named tables (`[[strategy]]`, `[[sky.source]]`), the next part is the
//! entry's `name` (`strategy.a-proj.pa_bin_deg`, `sky.source.edge.flux_jy`), or `*` for every
//! entry (`strategy.*.kernel_oversampling`). A part may end in 0-based list indices
//! (`observation.band_ghz[1]` is the upper band edge). A part that is not a bare key (letters,
//! digits, `_`, `-`) is written in double quotes (`strategy."w.2".pa_bin_deg`). A key that the
//! file does not write takes the swept value (tables on the way are created); the schema then
//! judges each point's config as it judges any file.
//!
//! Ranges: `{ start, stop, step }` gives start, start + step, ... up to and including stop when
//! stop lies on the grid (within 1e-9 of a step; numpy's `arange` would leave it out), with step
//! of the sign of stop − start; `{ start, stop, count }` gives `count` evenly spaced values with
//! both ends included (numpy's `linspace`). With whole-number start, stop and step (or an even
//! division with count) the values are whole numbers, as integer keys such as
//! `observation.channels` need; otherwise they are rounded to 15 significant digits so that
//! decimal steps land on decimal values (0.1 + 2 × 0.1 is written 0.3).
//!
//! With two parameters the points are the grid of both, the last parameter varying fastest:
//! point = i₀ · n₁ + i₁.

use serde::{Deserialize, Serialize};

use super::check::Checker;
use super::error::ConfigError;

/// The largest number of points a sweep may have (a cluster's job-array limit is usually lower:
/// Slurm's default `MaxArraySize` is 1001).
pub const MAX_SWEEP_POINTS: usize = 10_000;

/// The `[sweep]` section (optional): what a sweep varies.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SweepConfig {
    /// How each point's `experiment.seed` is chosen: `"per-point"` (derived from the experiment
    /// seed and the point index with `beamfloor_core::derive_seed`, purpose `SweepPoint`, top 63
    /// bits, so that each point has its own noise and random draws) or `"experiment"` (every
    /// point keeps the experiment seed: the same truth apart from the swept keys). A parameter
    /// that sweeps `experiment.seed` itself wins over both. Default: `"per-point"`.
    #[serde(default = "default_seeds")]
    pub seeds: SweepSeeds,
    /// The swept keys, one or two (written as `[[sweep.parameter]]`). Required.
    pub parameter: Vec<SweepParameter>,
}

fn default_seeds() -> SweepSeeds {
    SweepSeeds::PerPoint
}

/// How a sweep point's seed is chosen.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum SweepSeeds {
    /// Seed derived from (experiment seed, point index).
    PerPoint,
    /// The experiment seed for every point.
    Experiment,
}

/// One `[[sweep.parameter]]`: a key path and its values, as a list or a range (exactly one).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SweepParameter {
    /// The key path (see the module doc), e.g. `"strategy.a-proj.pa_bin_deg"`. Required.
    pub key: String,
    /// The values, in order: any TOML values the key accepts (numbers, strings, lists), at
    /// least one. Exactly one of `values` and `range`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub values: Option<Vec<toml::Value>>,
    /// Evenly spaced numbers. Exactly one of `values` and `range`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub range: Option<SweepRange>,
}

/// `range = { start, stop, step }` or `range = { start, stop, count }` (see the module doc).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct SweepRange {
    /// First value (a number). Required.
    pub start: toml::Value,
    /// Last value: included when it lies on the grid of `step`, always with `count`. Required.
    pub stop: toml::Value,
    /// Distance between values, non-zero, of the sign of stop − start. One of `step`, `count`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub step: Option<toml::Value>,
    /// Number of values, ends included, within 1..=10000. One of `step`, `count`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub count: Option<u64>,
}

/// One part of a key path: a key (or entry name, or `*`) and list indices after it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct KeyPart {
    /// The key, entry name or `*`, unquoted.
    pub key: String,
    /// 0-based list indices written after the key (`band_ghz[1]`).
    pub indices: Vec<usize>,
}

/// A parsed sweep key path (see the module doc for the grammar).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SweepKey(pub Vec<KeyPart>);

impl SweepKey {
    /// Parses `text`; the error says what is wrong and where (character position).
    pub fn parse(text: &str) -> Result<Self, String> {
        let chars: Vec<char> = text.chars().collect();
        let mut parts = Vec::new();
        let mut i = 0;
        loop {
            let start = i;
            let key = if chars.get(i) == Some(&'"') {
                let close = chars[i + 1..].iter().position(|&c| c == '"').ok_or_else(|| {
                    format!("unterminated quote starting at character {}", start + 1)
                })?;
                let key: String = chars[i + 1..i + 1 + close].iter().collect();
                i += close + 2;
                key
            } else {
                let len = chars[i..]
                    .iter()
                    .take_while(|c| {
                        c.is_ascii_alphanumeric() || **c == '_' || **c == '-' || **c == '*'
                    })
                    .count();
                i += len;
                chars[start..i].iter().collect()
            };
            if key.is_empty() {
                return Err(format!("empty key part at character {}", start + 1));
            }
            if key.contains('*') && key != "*" {
                return Err(format!("`{key}`: `*` must stand alone (every entry of a list)"));
            }
            let mut indices = Vec::new();
            while chars.get(i) == Some(&'[') {
                let close = chars[i..]
                    .iter()
                    .position(|&c| c == ']')
                    .ok_or_else(|| format!("unclosed `[` at character {}", i + 1))?;
                let digits: String = chars[i + 1..i + close].iter().collect();
                let index = digits.parse::<usize>().map_err(|_| {
                    format!(
                        "`[{digits}]` at character {}: a list index is a whole number >= 0",
                        i + 1
                    )
                })?;
                indices.push(index);
                i += close + 1;
            }
            parts.push(KeyPart { key, indices });
            match chars.get(i) {
                None => break,
                Some('.') => i += 1,
                Some(c) => {
                    return Err(format!(
                        "unexpected `{c}` at character {}: parts are bare keys (letters, digits, _ and -), \"quoted\" keys or `*`, joined by `.`, each optionally followed by [index]",
                        i + 1
                    ))
                }
            }
        }
        Ok(SweepKey(parts))
    }
}

impl std::fmt::Display for SweepKey {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        for (n, part) in self.0.iter().enumerate() {
            if n > 0 {
                f.write_str(".")?;
            }
            let bare = part.key == "*"
                || part.key.chars().all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-');
            if bare {
                f.write_str(&part.key)?;
            } else {
                write!(f, "\"{}\"", part.key)?;
            }
            for i in &part.indices {
                write!(f, "[{i}]")?;
            }
        }
        Ok(())
    }
}

/// Rounds to 15 significant digits (f64 holds 15 to 17), so that 0.1 + 2 · 0.1 becomes 0.3.
fn round_15(x: f64) -> f64 {
    format!("{x:.14e}").parse().unwrap_or(x)
}

fn number(v: &toml::Value) -> Option<f64> {
    match v {
        toml::Value::Integer(i) => Some(*i as f64),
        toml::Value::Float(x) if x.is_finite() => Some(*x),
        _ => None,
    }
}

/// Which key of a range a problem is about, for locating it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum RangeKey {
    Start,
    Stop,
    Step,
    Count,
    Table,
}

impl SweepRange {
    /// The values of the range (see the module doc), or the key at fault and why.
    pub fn values(&self) -> Result<Vec<toml::Value>, String> {
        self.expand().map_err(|(_, why)| why)
    }

    pub(crate) fn expand(&self) -> Result<Vec<toml::Value>, (RangeKey, String)> {
        let need =
            |key, v: &toml::Value| number(v).ok_or((key, "must be a finite number".to_string()));
        let start = need(RangeKey::Start, &self.start)?;
        let stop = need(RangeKey::Stop, &self.stop)?;
        let ints = match (&self.start, &self.stop) {
            (toml::Value::Integer(a), toml::Value::Integer(b)) => Some((*a, *b)),
            _ => None,
        };
        match (&self.step, self.count) {
            (Some(_), Some(_)) | (None, None) => Err((
                RangeKey::Table,
                "give exactly one of `step` and `count` (with start and stop)".to_string(),
            )),
            (None, Some(count)) => {
                if !(1..=MAX_SWEEP_POINTS as u64).contains(&count) {
                    return Err((
                        RangeKey::Count,
                        format!("must be within 1..={MAX_SWEEP_POINTS}"),
                    ));
                }
                let n = count as usize;
                if n == 1 {
                    return Ok(vec![self.start.clone()]);
                }
                if let Some((a, b)) = ints {
                    let span = i128::from(b) - i128::from(a);
                    if span % (n as i128 - 1) == 0 {
                        let step = span / (n as i128 - 1);
                        return Ok((0..n)
                            .map(|i| {
                                toml::Value::Integer((i128::from(a) + step * i as i128) as i64)
                            })
                            .collect());
                    }
                }
                Ok((0..n)
                    .map(|i| {
                        let x = if i + 1 == n {
                            stop
                        } else {
                            start + (stop - start) * i as f64 / (n - 1) as f64
                        };
                        toml::Value::Float(round_15(x))
                    })
                    .collect())
            }
            (Some(step_value), None) => {
                let step = need(RangeKey::Step, step_value)?;
                if step == 0.0 {
                    return Err((RangeKey::Step, "must not be 0".to_string()));
                }
                if (stop - start) * step < 0.0 {
                    return Err((
                        RangeKey::Step,
                        format!(
                            "must have the sign of stop − start = {} (it would never reach stop)",
                            stop - start
                        ),
                    ));
                }
                // The tolerance lets a decimal stop that is not exactly representable count as
                // on the grid (0.1 · 3 is not exactly 0.3).
                let steps = ((stop - start) / step + 1e-9).floor();
                if steps + 1.0 > MAX_SWEEP_POINTS as f64 {
                    return Err((
                        RangeKey::Step,
                        format!("gives {} values; at most {MAX_SWEEP_POINTS}", steps + 1.0),
                    ));
                }
                let n = steps as usize + 1;
                if let (Some((a, _)), toml::Value::Integer(s)) = (ints, step_value) {
                    return Ok((0..n).map(|i| toml::Value::Integer(a + s * i as i64)).collect());
                }
                Ok((0..n).map(|i| toml::Value::Float(round_15(start + step * i as f64))).collect())
            }
        }
    }
}

impl SweepParameter {
    /// The parameter's values, in order (an error if the range is invalid).
    pub fn values(&self) -> Result<Vec<toml::Value>, String> {
        match (&self.values, &self.range) {
            (Some(v), None) => Ok(v.clone()),
            (None, Some(r)) => r.values(),
            _ => Err("give exactly one of `values` and `range`".to_string()),
        }
    }
}

/// Records a located problem; unlike [`Checker::fail`] the value is never marked as a default
/// (a sweep's keys are always written, and some messages are about a whole table).
pub(crate) fn fail_at(
    c: &mut Checker,
    path: &str,
    value: impl std::fmt::Display,
    rule: impl Into<String>,
) {
    let (location, written) = c.locate(path);
    c.errors.push(ConfigError::Invalid {
        location,
        key_path: path.to_string(),
        value: written.unwrap_or_else(|| value.to_string()),
        allowed: rule.into(),
    });
}

impl SweepConfig {
    /// Every parameter's values (empty when the section is invalid; a loaded config is valid).
    pub fn parameter_values(&self) -> Vec<Vec<toml::Value>> {
        self.parameter.iter().map(|p| p.values().unwrap_or_default()).collect()
    }

    /// The number of points: the product of the parameters' value counts.
    pub fn point_count(&self) -> usize {
        self.parameter_values().iter().map(Vec::len).product()
    }

    /// Each parameter's value index at `point` (the last parameter varies fastest).
    pub fn value_indices(&self, point: usize) -> Vec<usize> {
        let counts: Vec<usize> = self.parameter_values().iter().map(Vec::len).collect();
        let mut rest = point;
        let mut out = vec![0; counts.len()];
        for (k, &n) in counts.iter().enumerate().rev() {
            out[k] = rest % n.max(1);
            rest /= n.max(1);
        }
        out
    }

    pub(crate) fn check(&self, c: &mut Checker) {
        if !(1..=2).contains(&self.parameter.len()) {
            fail_at(
                c,
                "sweep.parameter",
                format!("{} parameters", self.parameter.len()),
                "a sweep varies one or two keys: write one or two [[sweep.parameter]] tables",
            );
        }
        let mut total: usize = 1;
        for (i, p) in self.parameter.iter().enumerate() {
            let pp = format!("sweep.parameter[{i}]");
            match SweepKey::parse(&p.key) {
                Err(why) => fail_at(c, &format!("{pp}.key"), format!("{:?}", p.key), why),
                Ok(key) => {
                    let earlier = self.parameter[..i]
                        .iter()
                        .position(|o| SweepKey::parse(&o.key).ok().as_ref() == Some(&key));
                    if let Some(first) = earlier {
                        fail_at(c,
                            &format!("{pp}.key"),
                            format!("{:?}", p.key),
                            format!("the same key as sweep.parameter[{first}]; sweep two different keys"),
                        );
                    }
                }
            }
            let count = match (&p.values, &p.range) {
                (Some(_), Some(_)) | (None, None) => {
                    fail_at(c,
                        &pp,
                        "(this table)",
                        "give exactly one of `values = [...]` and `range = { start, stop, step }` (or `count` for step)",
                    );
                    None
                }
                (Some(values), None) => {
                    if values.is_empty() {
                        fail_at(c, &format!("{pp}.values"), "[]", "must list at least one value");
                    } else if values.len() > MAX_SWEEP_POINTS {
                        fail_at(
                            c,
                            &format!("{pp}.values"),
                            format!("{} values", values.len()),
                            format!("at most {MAX_SWEEP_POINTS}"),
                        );
                    }
                    Some(values.len())
                }
                (None, Some(range)) => match range.expand() {
                    Ok(values) => Some(values.len()),
                    Err((key, why)) => {
                        let (path, value) = match key {
                            RangeKey::Table => (format!("{pp}.range"), "(this table)".to_string()),
                            RangeKey::Start => {
                                (format!("{pp}.range.start"), range.start.to_string())
                            }
                            RangeKey::Stop => (format!("{pp}.range.stop"), range.stop.to_string()),
                            RangeKey::Step => (
                                format!("{pp}.range.step"),
                                range.step.as_ref().map(|s| s.to_string()).unwrap_or_default(),
                            ),
                            RangeKey::Count => {
                                (format!("{pp}.range.count"), range.count.unwrap_or(0).to_string())
                            }
                        };
                        fail_at(c, &path, value, why);
                        None
                    }
                },
            };
            total = total.saturating_mul(count.unwrap_or(1));
        }
        if total > MAX_SWEEP_POINTS {
            fail_at(
                c,
                "sweep.parameter",
                format!("{total} points"),
                format!("a sweep may have at most {MAX_SWEEP_POINTS} points"),
            );
        }
    }
}
