//! The output folder, written atomically: everything goes into a hidden staging folder beside
//! the target, which is renamed into place only once complete. An existing non-empty target is
//! refused unless forced, and even then replaced only after the new results are complete. A
//! failed run removes its staging folder (on drop), and so does Ctrl-C or a termination signal
//! (through a signal handler), so no partial output folder is ever left.

use std::path::{Path, PathBuf};
use std::sync::Mutex;

#[derive(Debug, thiserror::Error)]
pub enum OutDirError {
    #[error(
        "{path}: the output folder exists and is not empty; use --force to replace it once the new results are complete, or choose another folder"
    )]
    NotEmpty { path: PathBuf },
    #[error("{path}: {message}")]
    Io { path: PathBuf, message: String },
}

fn io(path: &Path, e: std::io::Error) -> OutDirError {
    OutDirError::Io {
        path: path.to_path_buf(),
        message: e.to_string(),
    }
}

/// The staging folder currently in use, for the signal handler.
static STAGING: Mutex<Option<PathBuf>> = Mutex::new(None);

/// Installs (once) a Ctrl-C / SIGTERM handler that removes the staging folder and exits.
pub fn install_signal_cleanup() {
    static ONCE: std::sync::Once = std::sync::Once::new();
    ONCE.call_once(|| {
        let _ = ctrlc::set_handler(|| {
            if let Ok(guard) = STAGING.lock()
                && let Some(p) = guard.as_ref()
            {
                let _ = std::fs::remove_dir_all(p);
            }
            crate::errln!("nevermet: interrupted; no output was written");
            std::process::exit(130);
        });
    });
}

/// Checks before any heavy work that the target can be written.
pub fn check_target(target: &Path, force: bool) -> Result<(), OutDirError> {
    if target.exists() {
        if !target.is_dir() {
            return Err(OutDirError::Io {
                path: target.to_path_buf(),
                message: "exists and is not a folder".into(),
            });
        }
        let empty = std::fs::read_dir(target)
            .map_err(|e| io(target, e))?
            .next()
            .is_none();
        if !empty && !force {
            return Err(OutDirError::NotEmpty {
                path: target.to_path_buf(),
            });
        }
    }
    Ok(())
}

/// A staging folder; removed on drop unless committed.
pub struct Staging {
    dir: PathBuf,
    target: PathBuf,
    committed: bool,
}

impl Staging {
    pub fn new(target: &Path, force: bool) -> Result<Self, OutDirError> {
        check_target(target, force)?;
        let parent = match target.parent() {
            Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
            _ => PathBuf::from("."),
        };
        std::fs::create_dir_all(&parent).map_err(|e| io(&parent, e))?;
        let name = target
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_else(|| "out".into());
        let dir = parent.join(format!(".{name}.nevermet-partial-{}", std::process::id()));
        if dir.exists() {
            std::fs::remove_dir_all(&dir).map_err(|e| io(&dir, e))?;
        }
        std::fs::create_dir(&dir).map_err(|e| io(&dir, e))?;
        *STAGING.lock().expect("staging lock") = Some(dir.clone());
        Ok(Staging {
            dir,
            target: target.to_path_buf(),
            committed: false,
        })
    }

    pub fn path(&self) -> &Path {
        &self.dir
    }

    /// Moves the complete results into place, replacing an old folder only now.
    pub fn commit(mut self) -> Result<PathBuf, OutDirError> {
        let target = self.target.clone();
        if target.exists() {
            let old = self.dir.with_file_name(format!(
                "{}-replaced",
                self.dir.file_name().unwrap().to_string_lossy()
            ));
            std::fs::rename(&target, &old).map_err(|e| io(&target, e))?;
            std::fs::rename(&self.dir, &target).map_err(|e| io(&target, e))?;
            std::fs::remove_dir_all(&old).map_err(|e| io(&old, e))?;
        } else {
            std::fs::rename(&self.dir, &target).map_err(|e| io(&target, e))?;
        }
        self.committed = true;
        *STAGING.lock().expect("staging lock") = None;
        Ok(target)
    }
}

impl Drop for Staging {
    fn drop(&mut self) {
        if !self.committed {
            let _ = std::fs::remove_dir_all(&self.dir);
            if let Ok(mut g) = STAGING.lock() {
                *g = None;
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_dropped_staging_folder_leaves_nothing() {
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("out");
        {
            let s = Staging::new(&target, false).unwrap();
            std::fs::write(s.path().join("a.txt"), "x").unwrap();
        }
        assert!(!target.exists());
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 0);
    }

    #[test]
    fn a_non_empty_target_is_kept_without_force_and_replaced_with_it() {
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("out");
        std::fs::create_dir(&target).unwrap();
        std::fs::write(target.join("old.txt"), "old").unwrap();
        assert!(matches!(
            Staging::new(&target, false),
            Err(OutDirError::NotEmpty { .. })
        ));
        let s = Staging::new(&target, true).unwrap();
        std::fs::write(s.path().join("new.txt"), "new").unwrap();
        assert!(
            target.join("old.txt").exists(),
            "old results stay until the new are complete"
        );
        s.commit().unwrap();
        assert!(!target.join("old.txt").exists());
        assert_eq!(
            std::fs::read_to_string(target.join("new.txt")).unwrap(),
            "new"
        );
        assert_eq!(std::fs::read_dir(dir.path()).unwrap().count(), 1);
    }
}
