//! Write-then-rename: outputs appear complete or not at all.
//!
//! Every writer in this crate builds its output under a temporary name in the destination's own
//! folder (so the final `rename` stays on one file system and is atomic on POSIX systems) and
//! renames it into place only after the last byte is written. A guard removes the temporary on
//! every early return.

use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};

use crate::ReportError;

static COUNTER: AtomicU64 = AtomicU64::new(0);

/// A temporary sibling of a destination path, removed on drop unless committed.
pub(crate) struct TempSibling {
    temp: PathBuf,
    dest: PathBuf,
    is_dir: bool,
    committed: bool,
}

impl TempSibling {
    /// A new temporary name next to `dest`, keeping `dest`'s extension (plotters picks the image
    /// format from it, cfitsio compresses on `.gz`). Nothing is created yet.
    pub(crate) fn file(dest: &Path) -> Result<Self, ReportError> {
        Self::new(dest, false)
    }

    /// A temporary folder next to `dest`, created empty.
    pub(crate) fn dir(dest: &Path) -> Result<Self, ReportError> {
        let t = Self::new(dest, true)?;
        std::fs::create_dir(&t.temp).map_err(|e| ReportError::io(&t.temp, "creating folder", e))?;
        Ok(t)
    }

    fn new(dest: &Path, is_dir: bool) -> Result<Self, ReportError> {
        let name = dest
            .file_name()
            .and_then(|n| n.to_str())
            .ok_or(ReportError::BadPath { path: dest.into(), why: "needs a UTF-8 file name" })?;
        let parent = match dest.parent() {
            Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
            _ => PathBuf::from("."),
        };
        let n = COUNTER.fetch_add(1, Ordering::Relaxed);
        let tag = format!("{}-{n}", std::process::id());
        let temp_name = match dest.extension().and_then(|e| e.to_str()) {
            Some(ext) if !is_dir => format!(".{name}.{tag}.tmp.{ext}"),
            _ => format!(".{name}.{tag}.tmp"),
        };
        Ok(Self {
            temp: parent.join(temp_name),
            dest: dest.to_path_buf(),
            is_dir,
            committed: false,
        })
    }

    /// The temporary path to write to.
    pub(crate) fn path(&self) -> &Path {
        &self.temp
    }

    /// Rename the temporary into place (replacing a file at the destination).
    pub(crate) fn commit(mut self) -> Result<(), ReportError> {
        std::fs::rename(&self.temp, &self.dest)
            .map_err(|e| ReportError::io(&self.dest, "renaming into place", e))?;
        self.committed = true;
        Ok(())
    }

    /// Rename the temporary folder into place. If the destination exists it is first moved
    /// aside, and removed only once the new folder is in place (restored if that rename fails).
    pub(crate) fn commit_replacing_dir(mut self) -> Result<(), ReportError> {
        if !self.dest.exists() {
            return self.commit();
        }
        let aside = Self::new(&self.dest, true)?;
        std::fs::rename(&self.dest, &aside.temp)
            .map_err(|e| ReportError::io(&self.dest, "moving the old folder aside", e))?;
        if let Err(e) = std::fs::rename(&self.temp, &self.dest) {
            // Put the old folder back; if that fails too the error still names the folder.
            let _ = std::fs::rename(&aside.temp, &self.dest);
            return Err(ReportError::io(&self.dest, "renaming into place", e));
        }
        self.committed = true;
        // `aside` is dropped uncommitted, which removes the old folder.
        Ok(())
    }
}

impl Drop for TempSibling {
    fn drop(&mut self) {
        if !self.committed {
            // Best effort: the temporary may not exist if writing failed before creating it.
            let _ = if self.is_dir {
                std::fs::remove_dir_all(&self.temp)
            } else {
                std::fs::remove_file(&self.temp)
            };
        }
    }
}
