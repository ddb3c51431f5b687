//! All-or-nothing output folders, and process memory figures.

use anyhow::Context;
use std::path::{Path, PathBuf};

pub use rafter_hmatrix::reference::peak_memory_bytes;

/// Files staged in a hidden folder inside the target folder, moved into place together by
/// [`Staging::commit`]. Dropping an uncommitted staging removes it (and the target folder if
/// this staging created it), so a failure never leaves a partly written output folder.
pub struct Staging {
    dir: PathBuf,
    tmp: PathBuf,
    created_dir: bool,
    files: Vec<String>,
    done: bool,
}

impl Staging {
    /// Prepares `dir` (created if missing) and a staging folder inside it.
    pub fn new(dir: &Path) -> anyhow::Result<Self> {
        let created_dir = !dir.exists();
        std::fs::create_dir_all(dir).with_context(|| {
            format!("cannot create output folder {} (hint: check the path and permissions)", dir.display())
        })?;
        let tmp = dir.join(format!(".rafter-partial-{}", std::process::id()));
        std::fs::create_dir_all(&tmp).with_context(|| {
            format!("cannot write into output folder {} (hint: check permissions)", dir.display())
        })?;
        Ok(Self { dir: dir.to_path_buf(), tmp, created_dir, files: Vec::new(), done: false })
    }

    /// Writes `name` into the staging folder.
    pub fn add(&mut self, name: &str, bytes: &[u8]) -> anyhow::Result<()> {
        let path = self.tmp.join(name);
        std::fs::write(&path, bytes).with_context(|| format!("cannot write {}", path.display()))?;
        self.files.push(name.to_string());
        Ok(())
    }

    /// Moves every staged file into the target folder (each rename is atomic).
    pub fn commit(mut self) -> anyhow::Result<()> {
        for f in &self.files {
            std::fs::rename(self.tmp.join(f), self.dir.join(f))
                .with_context(|| format!("cannot move {f} into {}", self.dir.display()))?;
        }
        self.done = true;
        let _ = std::fs::remove_dir_all(&self.tmp);
        Ok(())
    }
}

impl Drop for Staging {
    fn drop(&mut self) {
        if !self.done {
            let _ = std::fs::remove_dir_all(&self.tmp);
            if self.created_dir {
                let _ = std::fs::remove_dir(&self.dir);
            }
        }
    }
}
