//! The sweep folder: the plan, one folder per point with its config, and the files that say
//! how far each point got (completion marker, recorded error, start note).

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};
use serde_json::Value;
use sha2::{Digest, Sha256};

use super::SweepError;
use crate::config::{load_sweep, SweepSeeds};

/// The plan file in the sweep folder.
pub const PLAN_FILE: &str = "sweep.json";
/// The copy of the config the sweep was prepared from.
pub const SOURCE_CONFIG: &str = "sweep.toml";
/// A point's complete, resolved config, in its folder.
pub const POINT_CONFIG: &str = "config.toml";
/// A point's run folder (what `run_experiment` writes), in its folder.
pub const RUN_DIR: &str = "run";
/// A point's completion marker, renamed into place after every output is written.
pub const DONE_MARKER: &str = "done.json";
/// A failed point's recorded error.
pub const ERROR_FILE: &str = "error.txt";
/// Written when a point starts (host and process), removed when it ends.
pub const STARTED_FILE: &str = "started.json";

/// The format tag of [`PLAN_FILE`].
const FORMAT: &str = "beamfloor-sweep-1";

/// One swept key and its values (as JSON), in the plan.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlanParameter {
    /// The key path.
    pub key: String,
    /// The values in order.
    pub values: Vec<Value>,
}

/// One point in the plan.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PlanPoint {
    /// 0-based index.
    pub index: usize,
    /// Its folder, relative to the sweep folder (`point-0007`).
    pub folder: String,
    /// The value of each parameter.
    pub values: Vec<Value>,
    /// Its `experiment.seed`.
    pub seed: u64,
}

/// The contents of [`PLAN_FILE`].
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SweepPlan {
    /// Format tag.
    pub format: String,
    /// The experiment's name.
    pub experiment: String,
    /// The config file the sweep was prepared from, absolute.
    pub config_file: String,
    /// SHA-256 of that file's text when it was prepared.
    pub config_sha256: String,
    /// `"per-point"` or `"experiment"`.
    pub seeds: String,
    /// The swept keys.
    pub parameters: Vec<PlanParameter>,
    /// Every point.
    pub points: Vec<PlanPoint>,
}

/// How far a point got, as its folder tells.
#[derive(Debug, Clone, PartialEq)]
pub enum PointState {
    /// The completion marker exists.
    Done,
    /// The last attempt failed; its recorded error.
    Failed(String),
    /// An attempt started and has not ended: on `host`, process `pid` (it may have been killed).
    Started {
        /// Host name.
        host: String,
        /// Process id.
        pid: u32,
    },
    /// Never started, or interrupted before a start note (nothing to show).
    Pending,
}

/// A prepared sweep folder.
#[derive(Debug, Clone)]
pub struct SweepFolder {
    /// The folder.
    pub dir: PathBuf,
    /// Its plan.
    pub plan: SweepPlan,
}

fn sha256_hex(bytes: &[u8]) -> String {
    Sha256::digest(bytes).iter().map(|b| format!("{b:02x}")).collect()
}

/// Writes `text` under a temporary name and renames it into place.
pub(crate) fn write_atomic(path: &Path, text: &str) -> Result<(), SweepError> {
    beamfloor_report::write_text_file(path, text).map_err(SweepError::from)
}

fn read(path: &Path) -> Result<String, SweepError> {
    std::fs::read_to_string(path).map_err(|e| SweepError::io(path, e))
}

impl SweepFolder {
    /// Plans the sweep of the config at `config_path` into `dir`: the plan, a copy of the config
    /// and one folder per point with its resolved config. Every point's config is checked first.
    /// Idempotent: a folder prepared from the same config text is kept (with its results) and
    /// missing point configs are written again; a folder of another config is refused.
    pub fn prepare(config_path: &Path, dir: &Path) -> Result<Self, SweepError> {
        let text = read(config_path)?;
        let sha = sha256_hex(text.as_bytes());
        let sweep = load_sweep(config_path)?;
        if dir.join(PLAN_FILE).is_file() {
            let existing = Self::open(dir)?;
            if existing.plan.config_sha256 != sha {
                return Err(SweepError::DifferentSweep {
                    dir: dir.to_path_buf(),
                    found: existing.plan.config_sha256,
                    expected: sha,
                });
            }
        }
        std::fs::create_dir_all(dir).map_err(|e| SweepError::io(dir, e))?;
        let dir = std::fs::canonicalize(dir).map_err(|e| SweepError::io(dir, e))?;
        let seeds = match sweep.base.sweep.as_ref().map(|s| s.seeds) {
            Some(SweepSeeds::Experiment) => "experiment",
            _ => "per-point",
        };
        let json = |v: &toml::Value| serde_json::to_value(v).unwrap_or(Value::Null);
        let plan = SweepPlan {
            format: FORMAT.into(),
            experiment: sweep.base.experiment.name.clone(),
            config_file: std::fs::canonicalize(config_path)
                .unwrap_or_else(|_| config_path.to_path_buf())
                .display()
                .to_string(),
            config_sha256: sha,
            seeds: seeds.into(),
            parameters: sweep
                .keys
                .iter()
                .zip(&sweep.values)
                .map(|(key, values)| PlanParameter {
                    key: key.clone(),
                    values: values.iter().map(json).collect(),
                })
                .collect(),
            points: sweep
                .points
                .iter()
                .map(|p| PlanPoint {
                    index: p.index,
                    folder: point_folder_name(p.index),
                    values: p.values.iter().map(json).collect(),
                    seed: p.seed,
                })
                .collect(),
        };
        let folder = SweepFolder { dir, plan };
        write_atomic(&folder.dir.join(SOURCE_CONFIG), &text)?;
        for p in &sweep.points {
            let point_dir = folder.point_dir(p.index);
            std::fs::create_dir_all(&point_dir).map_err(|e| SweepError::io(&point_dir, e))?;
            let assigned: Vec<String> =
                sweep.keys.iter().zip(&p.values).map(|(k, v)| format!("{k} = {v}")).collect();
            let body = p.config.to_toml_string()?;
            let header = format!(
                "# Sweep \"{}\", point {} of {}: {}; seed {}.\n# `beamfloor run` on this file alone repeats the point.\n",
                folder.plan.experiment,
                p.index,
                sweep.points.len(),
                assigned.join(", "),
                p.seed
            );
            let path = point_dir.join(POINT_CONFIG);
            let wanted = header + &body;
            if std::fs::read_to_string(&path).ok().as_deref() != Some(wanted.as_str()) {
                write_atomic(&path, &wanted)?;
            }
        }
        let plan_text = serde_json::to_string_pretty(&folder.plan).unwrap_or_default() + "\n";
        write_atomic(&folder.dir.join(PLAN_FILE), &plan_text)?;
        Ok(folder)
    }

    /// Opens a prepared sweep folder.
    pub fn open(dir: &Path) -> Result<Self, SweepError> {
        let path = dir.join(PLAN_FILE);
        if !path.is_file() {
            return Err(SweepError::NotASweep { dir: dir.to_path_buf() });
        }
        let plan: SweepPlan = serde_json::from_str(&read(&path)?)
            .map_err(|e| SweepError::BadPlan { path: path.clone(), why: e.to_string() })?;
        if plan.format != FORMAT {
            return Err(SweepError::BadPlan {
                path,
                why: format!("format {:?}, this version reads {FORMAT:?}", plan.format),
            });
        }
        let dir = std::fs::canonicalize(dir).map_err(|e| SweepError::io(dir, e))?;
        Ok(SweepFolder { dir, plan })
    }

    /// The number of points.
    pub fn len(&self) -> usize {
        self.plan.points.len()
    }

    /// True when the sweep has no points (a valid plan always has some).
    pub fn is_empty(&self) -> bool {
        self.plan.points.is_empty()
    }

    /// Point `index`'s folder.
    pub fn point_dir(&self, index: usize) -> PathBuf {
        self.dir.join(point_folder_name(index))
    }

    /// Point `index`'s config file.
    pub fn point_config(&self, index: usize) -> PathBuf {
        self.point_dir(index).join(POINT_CONFIG)
    }

    /// Point `index`'s run folder.
    pub fn run_dir(&self, index: usize) -> PathBuf {
        self.point_dir(index).join(RUN_DIR)
    }

    /// An error unless `index` is a point of this sweep.
    pub fn check_index(&self, index: usize) -> Result<(), SweepError> {
        if index < self.len() {
            Ok(())
        } else {
            Err(SweepError::NoSuchPoint { index, count: self.len() })
        }
    }

    /// How far point `index` got, from its files alone.
    pub fn state(&self, index: usize) -> PointState {
        let dir = self.point_dir(index);
        if dir.join(DONE_MARKER).is_file() {
            return PointState::Done;
        }
        if let Ok(text) = std::fs::read_to_string(dir.join(STARTED_FILE)) {
            let v: Value = serde_json::from_str(&text).unwrap_or(Value::Null);
            let host = v["host"].as_str().unwrap_or("").to_string();
            let pid = v["pid"].as_u64().and_then(|p| u32::try_from(p).ok()).unwrap_or(0);
            return PointState::Started { host, pid };
        }
        if let Ok(text) = std::fs::read_to_string(dir.join(ERROR_FILE)) {
            return PointState::Failed(text.trim().to_string());
        }
        PointState::Pending
    }

    /// Every point not yet complete, in order.
    pub fn incomplete(&self) -> Vec<usize> {
        (0..self.len()).filter(|&i| self.state(i) != PointState::Done).collect()
    }
}

/// `point-0007`: four digits at least, so that folders sort in point order.
pub fn point_folder_name(index: usize) -> String {
    format!("point-{index:04}")
}

/// This machine's host name (`/proc/sys/kernel/hostname`, then `$HOSTNAME`), or "unknown".
pub(crate) fn host_name() -> String {
    std::fs::read_to_string("/proc/sys/kernel/hostname")
        .ok()
        .map(|s| s.trim().to_string())
        .filter(|s| !s.is_empty())
        .or_else(|| std::env::var("HOSTNAME").ok())
        .unwrap_or_else(|| "unknown".into())
}
