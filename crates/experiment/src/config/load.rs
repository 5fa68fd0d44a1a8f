//! Reading a config: TOML syntax, then the typed schema (serde), then the validation pass, each
//! error turned into a [`ConfigError`] with file, line, column and key path.

use std::path::{Path, PathBuf};

use super::array::Layout;
use super::check::Checker;
use super::error::{ConfigError, Location};
use super::root::Config;
use super::span_index::SpanIndex;
use super::suggest::{nearest, quoted_words};

/// Reads, parses and validates the config file at `path`, and fills in every default.
///
/// Beyond [`parse_config`], it checks that an antenna-layout file named in the config exists
/// (relative paths are taken from the config file's folder). Errors name the file as `path`
/// was given.
pub fn load_config(path: impl AsRef<Path>) -> Result<Config, ConfigError> {
    let path = path.as_ref();
    let text = std::fs::read_to_string(path)
        .map_err(|source| ConfigError::Read { path: path.to_path_buf(), source })?;
    let origin = path.display().to_string();
    let config = parse_config(&text, &origin)?;
    if let Layout::File(file) = &config.array.layout {
        let resolved = resolve_relative(path, file);
        if !resolved.is_file() {
            let index = SpanIndex::build(&text);
            let mut checker = Checker::new(&origin, &text, &index);
            checker.fail(
                "array.layout.file",
                format!("{:?}", file.display().to_string()),
                format!(
                    "no such file: {} (a relative path is taken from the config file's folder)",
                    resolved.display()
                ),
            );
            return Err(collect(checker.errors));
        }
    }
    Ok(config)
}

/// `relative` as seen from the folder of `config_file` (unchanged when it is absolute).
pub fn resolve_relative(config_file: &Path, relative: &Path) -> PathBuf {
    if relative.is_absolute() {
        relative.to_path_buf()
    } else {
        config_file.parent().unwrap_or(Path::new("")).join(relative)
    }
}

/// Parses and validates config `text`, and fills in every default; `origin_name` (usually the
/// file's path) is only used in error messages.
pub fn parse_config(text: &str, origin_name: &str) -> Result<Config, ConfigError> {
    if let Err(e) = toml::from_str::<toml::Table>(text) {
        let offset = e.span().map_or(0, |s| s.start);
        return Err(ConfigError::Syntax {
            location: Location::from_offset(origin_name, text, offset),
            message: e.message().trim().replace('\n', "; "),
        });
    }
    let index = SpanIndex::build(text);
    let mut config: Config =
        toml::from_str(text).map_err(|e| schema_error(&e, origin_name, text, &index))?;
    let mut checker = Checker::new(origin_name, text, &index);
    config.check(&mut checker);
    if !checker.errors.is_empty() {
        return Err(collect(checker.errors));
    }
    // Rules on values that resolution fills in (e.g. a default minimum spacing) are checked
    // on the resolved config; everything else passes again unchanged.
    config.resolve();
    let mut checker = Checker::new(origin_name, text, &index);
    config.check(&mut checker);
    if !checker.errors.is_empty() {
        return Err(collect(checker.errors));
    }
    Ok(config)
}

fn collect(mut errors: Vec<ConfigError>) -> ConfigError {
    if errors.len() == 1 {
        errors.remove(0)
    } else {
        ConfigError::Several(errors)
    }
}

/// What a required key is for, shown with a "missing key" error.
fn describe_required(key: &str) -> Option<String> {
    let text = match key {
        "experiment" => "the [experiment] section with at least `name`",
        "array" => "the [array] section with a `layout`",
        "observation" => "the [observation] section with at least `dec_deg`",
        "sky" => "the [sky] section with at least one [[sky.source]]",
        "strategy" => "at least one [[strategy]] table with `name` and `gridding`",
        "name" => "a unique name",
        "layout" => {
            "one of `[array.layout] file = \"...\"`, `[array.layout.log-spiral]`, `[array.layout.random-disc]`"
        }
        "dec_deg" => "declination of the phase centre, degrees",
        "source" => "a list of [[sky.source]] tables",
        "flux_jy" => "flux density at ref_freq_ghz, Jy",
        "gridding" => "one of \"plain\", \"w\", \"a\", \"wideband-a\"",
        "antennas_per_arm" => "antennas on each arm",
        "inner_radius_m" | "outer_radius_m" | "radius_m" => "metres",
        "count" => "number of antennas",
        _ => return None,
    };
    Some(text.to_string())
}

/// Serde's words for a type, in a user's words.
fn friendly_expected(expected: &str) -> String {
    let e = expected.trim();
    match e {
        "f64" | "f32" => "a number".to_string(),
        "u8" | "u16" | "u32" => "a whole number within 0..=4294967295".to_string(),
        "u64" => "a whole number >= 0".to_string(),
        "i64" | "i32" => "a whole number".to_string(),
        "a sequence" => "a list [ ... ]".to_string(),
        _ if e.starts_with("struct ") || e.starts_with("a map") => "a table".to_string(),
        _ if e.starts_with("enum ") => "one of the allowed choices".to_string(),
        _ => e.to_string(),
    }
}

/// Turns a schema error from the TOML deserializer into a located [`ConfigError`].
fn schema_error(e: &toml::de::Error, origin: &str, text: &str, index: &SpanIndex) -> ConfigError {
    let message = e.message().trim().to_string();
    let span = e.span();
    let location = Location::from_offset(origin, text, span.as_ref().map_or(0, |s| s.start));
    let path = span.as_ref().map(|s| index.path_at(s)).unwrap_or_default().to_string();
    let value = span
        .as_ref()
        .and_then(|s| text.get(s.clone()))
        .map(str::trim)
        .filter(|t| !t.contains('\n') && t.chars().count() <= 80)
        .map(str::to_string)
        .unwrap_or_else(|| "(this table)".to_string());
    let words = quoted_words(&message);
    if message.starts_with("unknown field") && !words.is_empty() {
        let key = words[0].clone();
        let valid: Vec<String> = words[1..].to_vec();
        let key_path = if path.ends_with(&key) { path } else { join(&path, &key) };
        return ConfigError::UnknownKey {
            location,
            key_path,
            suggestion: nearest(&key, &valid).cloned(),
            key,
            valid,
        };
    }
    if let Some(rest) = message.strip_prefix("unexpected keys in table: ") {
        // toml's wording for unknown keys inside an enum's table:
        // "unexpected keys in table: a, b, available keys: x, y".
        let (keys, valid) = rest.split_once(", available keys: ").unwrap_or((rest, ""));
        let key = keys.split(", ").next().unwrap_or(keys).to_string();
        let valid: Vec<String> =
            valid.split(", ").filter(|s| !s.is_empty()).map(str::to_string).collect();
        let key_path = if path.ends_with(&key) { path } else { join(&path, &key) };
        return ConfigError::UnknownKey {
            location,
            key_path,
            suggestion: nearest(&key, &valid).cloned(),
            key,
            valid,
        };
    }
    if message.starts_with("unknown variant") && !words.is_empty() {
        let allowed: Vec<String> = words[1..].iter().map(|w| format!("\"{w}\"")).collect();
        let bare: Vec<String> = words[1..].to_vec();
        // A choice written as a table key (`[array.layout.log-spirl]`) is reported on its table.
        let key_path =
            path.strip_suffix(&format!(".{}", words[0])).map(str::to_string).unwrap_or(path);
        return ConfigError::UnknownChoice {
            location,
            key_path,
            value: format!("{:?}", words[0]),
            suggestion: nearest(&words[0], &bare).cloned(),
            allowed,
        };
    }
    if message.starts_with("missing field") && !words.is_empty() {
        return ConfigError::MissingKey {
            location,
            key_path: join(&path, &words[0]),
            what: describe_required(&words[0]),
        };
    }
    if message.starts_with("invalid type: unit variant") && message.contains("variant") {
        // A choice that takes settings, written as a bare string.
        let choice = value.trim_matches(|c| c == '"' || c == '\'');
        return ConfigError::Inconsistent {
            location,
            key_path: path.clone(),
            message: format!(
                "{value} takes settings: write it as a table, `[{path}.{choice}]` with its keys \
                 (an empty table gives the defaults)"
            ),
        };
    }
    for prefix in ["invalid type: ", "invalid value: ", "invalid length "] {
        if let Some(rest) = message.strip_prefix(prefix) {
            let (found, expected) = rest.rsplit_once(", expected ").unwrap_or((rest, "?"));
            let found = if prefix == "invalid length " {
                format!("a list of {found} items")
            } else {
                found.to_string()
            };
            return ConfigError::WrongType {
                location,
                key_path: path,
                value,
                expected: friendly_expected(expected),
                found,
            };
        }
    }
    if message.starts_with("wanted exactly 1 element") {
        return ConfigError::Inconsistent {
            location,
            key_path: path,
            message: "this table chooses one option and must hold exactly one key (e.g. only `[array.layout.log-spiral]`)".to_string(),
        };
    }
    ConfigError::Inconsistent { location, key_path: path, message: message.replace('\n', "; ") }
}

fn join(path: &str, key: &str) -> String {
    if path.is_empty() {
        key.to_string()
    } else {
        format!("{path}.{key}")
    }
}
