//! Expanding a config's `[sweep]` into one complete, checked config per point.
//!
//! Each point's config is the file as written, without its `[sweep]` section, with the point's
//! seed and the swept values set at their key paths, then read by [`parse_config`] like any
//! file: defaults that depend on other keys are resolved per point (sweeping `band_ghz` moves
//! the default reference frequency with it). A relative antenna-layout file is made absolute so
//! that the point's config works from its own folder. Problems are reported against the sweep's
//! own keys and values, located in the original file.

use std::path::Path;

use beamfloor_core::{derive_seed, SeedPurpose};

use super::check::Checker;
use super::error::{ConfigError, Location};
use super::load::{load_config, parse_config, resolve_relative};
use super::root::Config;
use super::span_index::SpanIndex;
use super::sweep::{fail_at, KeyPart, SweepKey, SweepSeeds};

/// One point of a sweep: its index, the value of each parameter, its seed and its complete,
/// validated config (without a `[sweep]` section; every default resolved).
#[derive(Debug, Clone, PartialEq)]
pub struct SweepPoint {
    /// 0-based point index (the last parameter varies fastest).
    pub index: usize,
    /// The value of each parameter at this point, in parameter order.
    pub values: Vec<toml::Value>,
    /// The point's `experiment.seed`.
    pub seed: u64,
    /// The point's config; `beamfloor run` on its resolved TOML repeats the point.
    pub config: Config,
}

/// A config with a `[sweep]`, expanded point by point.
#[derive(Debug, Clone)]
pub struct ExpandedSweep {
    /// The config as loaded, `[sweep]` included.
    pub base: Config,
    /// The parameters' key paths, normalized (quotes only where needed).
    pub keys: Vec<String>,
    /// Each parameter's values, in order.
    pub values: Vec<Vec<toml::Value>>,
    /// Every point, in index order.
    pub points: Vec<SweepPoint>,
}

/// Reads the config at `path` (see [`load_config`]) and expands its `[sweep]`.
pub fn load_sweep(path: impl AsRef<Path>) -> Result<ExpandedSweep, ConfigError> {
    let path = path.as_ref();
    load_config(path)?;
    let text = std::fs::read_to_string(path)
        .map_err(|source| ConfigError::Read { path: path.to_path_buf(), source })?;
    expand_sweep(&text, &path.display().to_string(), Some(path))
}

/// Expands the `[sweep]` of config `text` (named `origin` in messages) into its points and
/// checks every point's config. `config_file` locates a relative antenna-layout file.
pub fn expand_sweep(
    text: &str,
    origin: &str,
    config_file: Option<&Path>,
) -> Result<ExpandedSweep, ConfigError> {
    let base = parse_config(text, origin)?;
    let Some(sweep) = base.sweep.clone() else {
        return Err(ConfigError::MissingKey {
            location: Location::from_offset(origin, text, 0),
            key_path: "sweep".into(),
            what: Some("a [sweep] section with one or two [[sweep.parameter]] tables".into()),
        });
    };
    // parse_config accepted the text, so it is a TOML table.
    let mut raw: toml::Table = toml::from_str(text).unwrap_or_default();
    raw.remove("sweep");
    if let Some(file) = config_file {
        absolute_layout_file(&mut raw, file);
    }
    let keys: Vec<SweepKey> =
        sweep.parameter.iter().filter_map(|p| SweepKey::parse(&p.key).ok()).collect();
    let values = sweep.parameter_values();
    let index = SpanIndex::build(text);
    let mut c = Checker::new(origin, text, &index);

    // Each parameter alone first, so that a problem points at its key or value.
    let single = keys.len() == 1;
    for (k, key) in keys.iter().enumerate() {
        for (j, value) in values[k].iter().enumerate() {
            let assigned = [(key, value)];
            match point_config(&raw, base.experiment.seed, &assigned) {
                Ok(_) => {}
                Err(PointError::Path(why)) => {
                    fail_at(
                        &mut c,
                        &format!("sweep.parameter[{k}].key"),
                        quote(&key.to_string()),
                        why,
                    );
                    break;
                }
                Err(PointError::Config(e)) if is_about_the_key(&e) => {
                    fail_at(
                        &mut c,
                        &format!("sweep.parameter[{k}].key"),
                        quote(&key.to_string()),
                        inner_text(&e),
                    );
                    break;
                }
                Err(PointError::Config(e)) => {
                    let p = &sweep.parameter[k];
                    let (path, rule) = if p.values.is_some() {
                        (format!("sweep.parameter[{k}].values[{j}]"), String::new())
                    } else {
                        (
                            format!("sweep.parameter[{k}].range"),
                            format!("its value {value} (number {j}) "),
                        )
                    };
                    fail_at(
                        &mut c,
                        &path,
                        value,
                        format!("{rule}makes the config invalid: {}", inner_text(&e)),
                    );
                }
            }
        }
    }
    if !c.errors.is_empty() {
        return Err(collect(c.errors));
    }

    let total = sweep.point_count();
    let mut points = Vec::with_capacity(total);
    for point in 0..total {
        let picks = sweep.value_indices(point);
        let assigned: Vec<(&SweepKey, &toml::Value)> = keys
            .iter()
            .zip(&picks)
            .enumerate()
            .map(|(k, (key, &j))| (key, &values[k][j]))
            .collect();
        let seed = match sweep.seeds {
            SweepSeeds::PerPoint => {
                derive_seed(base.experiment.seed, SeedPurpose::SweepPoint, point as u64) >> 1
            }
            SweepSeeds::Experiment => base.experiment.seed,
        };
        match point_config(&raw, seed, &assigned) {
            Ok(config) => points.push(SweepPoint {
                index: point,
                values: assigned.iter().map(|(_, v)| (*v).clone()).collect(),
                seed: config.experiment.seed,
                config,
            }),
            Err(e) => {
                // Only combinations of two parameters (or, with one, nothing: it was checked
                // above) can fail here.
                let shown = assigned
                    .iter()
                    .map(|(k, v)| format!("{k} = {v}"))
                    .collect::<Vec<_>>()
                    .join(", ");
                let why = match e {
                    PointError::Path(why) => why,
                    PointError::Config(e) => inner_text(&e),
                };
                fail_at(
                    &mut c,
                    if single { "sweep.parameter[0]" } else { "sweep.parameter[1]" },
                    format!("point {point} ({shown})"),
                    format!("point {point} ({shown}) makes the config invalid: {why}"),
                );
                if c.errors.len() >= 10 {
                    break;
                }
            }
        }
    }
    if !c.errors.is_empty() {
        return Err(collect(c.errors));
    }
    Ok(ExpandedSweep { base, keys: keys.iter().map(ToString::to_string).collect(), values, points })
}

enum PointError {
    /// The key path does not lead anywhere in this config.
    Path(String),
    /// The point's config breaks a rule of the schema.
    Config(Box<ConfigError>),
}

/// The config of one point: `raw` with `seed` and the assignments applied, then parsed.
fn point_config(
    raw: &toml::Table,
    seed: u64,
    assigned: &[(&SweepKey, &toml::Value)],
) -> Result<Config, PointError> {
    let mut doc = toml::Value::Table(raw.clone());
    if let Some(toml::Value::Table(experiment)) = doc.get_mut("experiment") {
        // Seeds are kept within TOML's signed 64-bit integers (the schema's rule).
        experiment.insert("seed".into(), toml::Value::Integer((seed & i64::MAX as u64) as i64));
    }
    for (key, value) in assigned {
        set_at(&mut doc, &key.0, value, "").map_err(PointError::Path)?;
    }
    let text = toml::to_string(&doc).map_err(|e| PointError::Path(e.to_string()))?;
    parse_config(&text, POINT_ORIGIN).map_err(|e| PointError::Config(Box::new(e)))
}

const POINT_ORIGIN: &str = "sweep-point";

/// Sets `value` at `parts` below `node`; `walked` is the path so far, for messages. Returns the
/// number of places set (more than one through `*`).
fn set_at(
    node: &mut toml::Value,
    parts: &[KeyPart],
    value: &toml::Value,
    walked: &str,
) -> Result<usize, String> {
    let Some((part, rest)) = parts.split_first() else { return Ok(0) };
    let here = if walked.is_empty() { "the top level".to_string() } else { format!("`{walked}`") };
    let toml::Value::Table(table) = node else {
        return Err(format!(
            "{here} is a {}, not a table: it has no key `{}`",
            node.type_str(),
            part.key
        ));
    };
    let walked = join(walked, &part.key);
    if part.key == "*" {
        return Err(format!(
            "`*` selects every entry of a list of named tables (strategy.*.pa_bin_deg); {here} is a table"
        ));
    }
    if rest.is_empty() && part.indices.is_empty() {
        table.insert(part.key.clone(), value.clone());
        return Ok(1);
    }
    if !table.contains_key(&part.key) {
        if !part.indices.is_empty() {
            return Err(format!(
                "`{walked}` is not written in the file, so it has no item {} to set; sweep the whole list",
                part.indices[0]
            ));
        }
        table.insert(part.key.clone(), toml::Value::Table(toml::Table::new()));
    }
    let mut child = table.get_mut(&part.key).ok_or_else(|| format!("`{walked}` is missing"))?;
    let mut walked = walked;
    for &i in &part.indices {
        let toml::Value::Array(items) = child else {
            return Err(format!(
                "`{walked}` is a {}, not a list: it has no item {i}",
                child.type_str()
            ));
        };
        let len = items.len();
        child = items
            .get_mut(i)
            .ok_or_else(|| format!("`{walked}` has {len} items; index {i} is out of range"))?;
        walked = format!("{walked}[{i}]");
    }
    if rest.is_empty() {
        *child = value.clone();
        return Ok(1);
    }
    if let toml::Value::Array(items) = child {
        if !items.is_empty() && items.iter().all(toml::Value::is_table) {
            return set_in_entries(items, rest, value, &walked);
        }
    }
    set_at(child, rest, value, &walked)
}

/// `parts[0]` names entries of a list of named tables (or `*` for all of them).
fn set_in_entries(
    items: &mut [toml::Value],
    parts: &[KeyPart],
    value: &toml::Value,
    walked: &str,
) -> Result<usize, String> {
    let (selector, rest) = parts.split_first().ok_or_else(|| format!("`{walked}` is a list"))?;
    let names: Vec<String> = items
        .iter()
        .map(|e| e.get("name").and_then(toml::Value::as_str).unwrap_or("").to_string())
        .collect();
    let listing = || {
        let named: Vec<String> =
            names.iter().filter(|n| !n.is_empty()).map(|n| format!("{n:?}")).collect();
        if named.is_empty() {
            "its entries have no names; use an index, e.g. `[0]`".to_string()
        } else {
            format!("names: {} (or * for every entry, or an index such as [0])", named.join(", "))
        }
    };
    if !selector.indices.is_empty() {
        return Err(format!("`{walked}.{}`: an entry name takes no [index]", selector.key));
    }
    if rest.is_empty() {
        return Err(format!(
            "`{walked}.{}` is a whole entry; name one of its keys, e.g. `{walked}.{}.<key>`",
            selector.key, selector.key
        ));
    }
    let mut set = 0;
    for (entry, name) in items.iter_mut().zip(&names) {
        if selector.key == "*" || *name == selector.key {
            let entry_path = format!("{walked}.{}", SweepKey(vec![selector_part(name)]));
            set += set_at(entry, rest, value, &entry_path)?;
        }
    }
    if set == 0 {
        return Err(format!("`{walked}` has no entry named {:?}; {}", selector.key, listing()));
    }
    Ok(set)
}

fn selector_part(name: &str) -> KeyPart {
    KeyPart { key: name.to_string(), indices: Vec::new() }
}

fn join(path: &str, key: &str) -> String {
    if path.is_empty() {
        key.to_string()
    } else {
        format!("{path}.{key}")
    }
}

fn quote(s: &str) -> String {
    format!("{s:?}")
}

/// True when a point's config fails because the swept key is not one the schema knows (or not
/// a choice it knows): that is a fault of the key path, not of one value.
fn is_about_the_key(e: &ConfigError) -> bool {
    e.problems()
        .iter()
        .all(|p| matches!(p, ConfigError::UnknownKey { .. } | ConfigError::UnknownChoice { .. }))
}

/// The problems of a point's config without their location (which is in generated text).
fn inner_text(e: &ConfigError) -> String {
    e.problems()
        .iter()
        .map(|p| {
            let s = p.to_string();
            let rest = s.strip_prefix(POINT_ORIGIN).and_then(|r| r.strip_prefix(':'));
            // Skip "line:column: ".
            rest.and_then(|r| r.split_once(':'))
                .and_then(|(_, r)| r.split_once(": "))
                .map(|(_, r)| r.to_string())
                .unwrap_or(s)
        })
        .collect::<Vec<_>>()
        .join("; ")
}

fn collect(mut errors: Vec<ConfigError>) -> ConfigError {
    if errors.len() == 1 {
        errors.remove(0)
    } else {
        ConfigError::Several(errors)
    }
}

/// Makes `array.layout.file` absolute (taken from the config file's folder), so that a point's
/// config, written elsewhere, finds the same file.
fn absolute_layout_file(raw: &mut toml::Table, config_file: &Path) {
    let Some(toml::Value::Table(array)) = raw.get_mut("array") else { return };
    let Some(toml::Value::Table(layout)) = array.get_mut("layout") else { return };
    let Some(toml::Value::String(file)) = layout.get_mut("file") else { return };
    let resolved = resolve_relative(config_file, Path::new(file.as_str()));
    let absolute = std::fs::canonicalize(&resolved).unwrap_or(resolved);
    *file = absolute.display().to_string();
}
