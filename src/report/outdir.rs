//! The output folder, written atomically: everything goes into a hidden staging folder beside
//! the target, which is renamed into place only once complete. An existing non-empty target is
//! refused unless forced, and even then replaced only after the new results are complete. A
//! failed run removes its staging folder (on drop), and so does Ctrl-C or a termination signal
//! (through a signal handler), so no partial output folder is ever left by a run that could
//! clean up after itself.
//!
//! A run killed outright (`kill -9`, a power cut) cannot clean up, so each staging folder names
//! the process that owns it, and the next run into the same target removes a leftover whose
//! owner is gone, and refuses to start while the owner still runs (two runs into one folder
//! would race for it). See [`Owner`] for how the owner is told apart from a later process.

use std::path::{Path, PathBuf};
use std::sync::Mutex;

#[derive(Debug, thiserror::Error)]
pub enum OutDirError {
    #[error(
        "{path}: the output folder exists and is not empty; use --force to replace it once the new results are complete, or choose another folder"
    )]
    NotEmpty { path: PathBuf },
    #[error(
        "{path}: another nevermet run (process {pid}) is writing this output folder (its staging folder {staging} exists); wait until it has finished, or choose another folder"
    )]
    Busy {
        path: PathBuf,
        pid: u32,
        staging: PathBuf,
    },
    #[error(
        "{staging}: staging folder of a run into {path} by process {pid}, and this system cannot tell whether that process still runs; remove the folder if no nevermet run is writing {path}"
    )]
    OwnerUnknown {
        path: PathBuf,
        pid: u32,
        staging: PathBuf,
    },
    #[error("{path}: {message}")]
    Io { path: PathBuf, message: String },
}

fn io(path: &Path, e: std::io::Error) -> OutDirError {
    OutDirError::Io {
        path: path.to_path_buf(),
        message: e.to_string(),
    }
}

/// The process that made a staging folder, recorded in the folder's name:
/// `.<target>.nevermet-partial-<pid>-<start>`.
///
/// The process id alone is not enough: ids are reused, so a leftover could be taken for the
/// folder of whatever unrelated process later got the same id, and never be removed. `start`
/// is the process' start time in clock ticks since boot (field 22 of `/proc/<pid>/stat`), which
/// a later process with the same id does not share. The owner counts as running only while a
/// process with that id and that start time exists and is not a zombie. After a reboot the
/// ticks start again, so a leftover from before it would be misjudged only if a new process
/// had both the same id and the same start tick; the refusal then names the folder to remove.
/// Both are in the folder's name, not in a marker file inside it, because the name comes into
/// being with the folder in one step: no other run can ever see a staging folder whose owner
/// is not recorded yet. (An advisory lock would need a lock file, either inside the results or
/// left beside the output folder for good.) Where `/proc` does not exist the start time is
/// unknown (`None`), and a leftover whose owner cannot be judged is refused with a message
/// rather than removed.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct Owner {
    pub pid: u32,
    pub start: Option<u64>,
}

/// Whether the owner of a staging folder still runs.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Liveness {
    Running,
    Gone,
    Unknown,
}

impl Owner {
    /// This process.
    pub fn current() -> Owner {
        let pid = std::process::id();
        Owner {
            pid,
            start: proc_stat(pid).ok().map(|s| s.start),
        }
    }

    pub fn liveness(&self) -> Liveness {
        match proc_stat(self.pid) {
            Ok(s) if s.zombie => Liveness::Gone,
            Ok(s) => match self.start {
                Some(start) if start == s.start => Liveness::Running,
                Some(_) => Liveness::Gone,
                None => Liveness::Unknown,
            },
            Err(e)
                if e.kind() == std::io::ErrorKind::NotFound && Path::new("/proc/self").exists() =>
            {
                Liveness::Gone
            }
            Err(_) => Liveness::Unknown,
        }
    }

    fn suffix(&self) -> String {
        match self.start {
            Some(s) => format!("{}-{s}", self.pid),
            None => self.pid.to_string(),
        }
    }

    fn parse(text: &str) -> Option<Owner> {
        let digits = |t: &str| !t.is_empty() && t.bytes().all(|b| b.is_ascii_digit());
        let (pid, start) = match text.split_once('-') {
            Some((p, s)) if digits(s) => (p, Some(s.parse().ok()?)),
            Some(_) => return None,
            None => (text, None),
        };
        if !digits(pid) {
            return None;
        }
        Some(Owner {
            pid: pid.parse().ok()?,
            start,
        })
    }
}

/// The two fields of `/proc/<pid>/stat` that identify a live process.
struct ProcStat {
    start: u64,
    zombie: bool,
}

fn proc_stat(pid: u32) -> std::io::Result<ProcStat> {
    let text = std::fs::read_to_string(format!("/proc/{pid}/stat"))?;
    parse_stat(&text).ok_or_else(|| std::io::Error::other("unreadable /proc stat line"))
}

/// Fields after the command name, which is in parentheses and may itself hold spaces and
/// parentheses: state (field 3) first, start time (field 22) at index 19.
fn parse_stat(text: &str) -> Option<ProcStat> {
    let rest = &text[text.rfind(')')? + 1..];
    let fields: Vec<&str> = rest.split_whitespace().collect();
    Some(ProcStat {
        start: fields.get(19)?.parse().ok()?,
        zombie: matches!(*fields.first()?, "Z" | "X" | "x"),
    })
}

const PARTIAL: &str = ".nevermet-partial-";
const REPLACED: &str = "-replaced";

/// A staging folder beside the target left by another process: its own results (`replaced`
/// false) or the old target it was replacing (`replaced` true).
#[derive(Clone, Debug)]
struct Leftover {
    path: PathBuf,
    owner: Owner,
    replaced: bool,
}

fn leftovers(parent: &Path, target_name: &str) -> Result<Vec<Leftover>, OutDirError> {
    let prefix = format!(".{target_name}{PARTIAL}");
    let mut found = Vec::new();
    for entry in std::fs::read_dir(parent).map_err(|e| io(parent, e))? {
        let entry = entry.map_err(|e| io(parent, e))?;
        let name = entry.file_name().to_string_lossy().into_owned();
        let Some(rest) = name.strip_prefix(&prefix) else {
            continue;
        };
        let (rest, replaced) = match rest.strip_suffix(REPLACED) {
            Some(r) => (r, true),
            None => (rest, false),
        };
        if let Some(owner) = Owner::parse(rest) {
            found.push(Leftover {
                path: entry.path(),
                owner,
                replaced,
            });
        }
    }
    found.sort_by(|a, b| a.path.cmp(&b.path));
    Ok(found)
}

/// What a run did with a leftover of an earlier one whose owner is gone.
#[derive(Clone, Debug, PartialEq, Eq)]
pub enum Cleaned {
    /// A staging folder, removed.
    Removed { path: PathBuf, pid: u32 },
    /// The old results an interrupted `--force` run had moved aside, put back in place.
    Restored {
        path: PathBuf,
        pid: u32,
        target: PathBuf,
    },
}

impl std::fmt::Display for Cleaned {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Cleaned::Removed { path, pid } => write!(
                f,
                "removed {}, the staging folder of an earlier run (process {pid}) that ended without finishing",
                path.display()
            ),
            Cleaned::Restored { path, pid, target } => write!(
                f,
                "moved {} back to {}: the earlier results, set aside by a run (process {pid}) that ended while replacing them",
                path.display(),
                target.display()
            ),
        }
    }
}

/// Deals with the leftovers beside `target` except `own`: refuses while an owner runs (or
/// cannot be judged), otherwise removes them, or restores the old results a `--force` run had
/// moved aside when the target itself is gone.
fn clean_leftovers(
    parent: &Path,
    target: &Path,
    target_name: &str,
    own: &Path,
) -> Result<Vec<Cleaned>, OutDirError> {
    let found: Vec<Leftover> = leftovers(parent, target_name)?
        .into_iter()
        .filter(|l| l.path != own)
        .collect();
    for l in &found {
        let err = |e: fn(PathBuf, u32, PathBuf) -> OutDirError| {
            e(target.to_path_buf(), l.owner.pid, l.path.clone())
        };
        match l.owner.liveness() {
            Liveness::Running => {
                return Err(err(|path, pid, staging| OutDirError::Busy {
                    path,
                    pid,
                    staging,
                }));
            }
            Liveness::Unknown => {
                return Err(err(|path, pid, staging| OutDirError::OwnerUnknown {
                    path,
                    pid,
                    staging,
                }));
            }
            Liveness::Gone => {}
        }
    }
    let mut cleaned = Vec::new();
    // Old results first: they go back in place before anything else is judged.
    for l in found.iter().filter(|l| l.replaced) {
        if !target.exists() {
            std::fs::rename(&l.path, target).map_err(|e| io(&l.path, e))?;
            cleaned.push(Cleaned::Restored {
                path: l.path.clone(),
                pid: l.owner.pid,
                target: target.to_path_buf(),
            });
        } else {
            remove_leftover(&l.path)?;
            cleaned.push(Cleaned::Removed {
                path: l.path.clone(),
                pid: l.owner.pid,
            });
        }
    }
    for l in found.iter().filter(|l| !l.replaced) {
        remove_leftover(&l.path)?;
        cleaned.push(Cleaned::Removed {
            path: l.path.clone(),
            pid: l.owner.pid,
        });
    }
    Ok(cleaned)
}

/// Removes a leftover; one another run removed first is not an error.
fn remove_leftover(path: &Path) -> Result<(), OutDirError> {
    match std::fs::remove_dir_all(path) {
        Err(e) if e.kind() != std::io::ErrorKind::NotFound => Err(io(path, e)),
        _ => Ok(()),
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
    force: bool,
    committed: bool,
    cleaned: Vec<Cleaned>,
}

impl Staging {
    /// Creates this run's staging folder beside `target`, then deals with the leftovers of
    /// earlier runs into the same target (see [`Owner`]), then checks the target. The folder is
    /// created before the others are looked at, so of two runs started together at least one
    /// sees the other and refuses.
    pub fn new(target: &Path, force: bool) -> Result<Self, OutDirError> {
        let parent = match target.parent() {
            Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
            _ => PathBuf::from("."),
        };
        std::fs::create_dir_all(&parent).map_err(|e| io(&parent, e))?;
        let name = target
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_else(|| "out".into());
        let dir = parent.join(format!(".{name}{PARTIAL}{}", Owner::current().suffix()));
        match std::fs::create_dir(&dir) {
            Ok(()) => {}
            // Only this very process has this id and start time.
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => {
                return Err(OutDirError::Busy {
                    path: target.to_path_buf(),
                    pid: std::process::id(),
                    staging: dir,
                });
            }
            Err(e) => return Err(io(&dir, e)),
        }
        *STAGING.lock().expect("staging lock") = Some(dir.clone());
        let mut staging = Staging {
            dir,
            target: target.to_path_buf(),
            force,
            committed: false,
            cleaned: Vec::new(),
        };
        // On an error, dropping `staging` removes this run's own folder again.
        staging.cleaned = clean_leftovers(&parent, target, &name, &staging.dir)?;
        check_target(target, force)?;
        Ok(staging)
    }

    pub fn path(&self) -> &Path {
        &self.dir
    }

    /// The leftovers of earlier runs this run removed or put back, for the command to report.
    pub fn cleaned(&self) -> &[Cleaned] {
        &self.cleaned
    }

    /// Moves the complete results into place, replacing an old folder only now, and only
    /// with `force`: without it, a target that is no longer empty is left as it is.
    pub fn commit(mut self) -> Result<PathBuf, OutDirError> {
        let target = self.target.clone();
        if target.exists() && self.force {
            let old = self.dir.with_file_name(format!(
                "{}{REPLACED}",
                self.dir.file_name().unwrap().to_string_lossy()
            ));
            std::fs::rename(&target, &old).map_err(|e| io(&target, e))?;
            std::fs::rename(&self.dir, &target).map_err(|e| io(&target, e))?;
            std::fs::remove_dir_all(&old).map_err(|e| io(&old, e))?;
        } else {
            check_target(&target, false)?;
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

    fn names(dir: &Path) -> Vec<String> {
        let mut v: Vec<String> = std::fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        v.sort();
        v
    }

    #[test]
    fn a_stat_line_gives_state_and_start_time_whatever_the_command_name() {
        // The layout of proc(5): pid (comm) state ppid ... starttime is field 22.
        let line =
            "4242 (a (b) c) S 1 4242 4242 0 -1 4194560 120 0 0 0 3 1 0 0 20 0 1 0 987654 1000 10";
        let s = parse_stat(line).unwrap();
        assert_eq!(s.start, 987654);
        assert!(!s.zombie);
        let z = parse_stat(&line.replace(") S ", ") Z ")).unwrap();
        assert!(z.zombie);
        assert!(parse_stat("12 (x) S 1").is_none());
    }

    #[test]
    fn this_process_runs_and_a_reused_id_does_not_count_as_its_owner() {
        let me = Owner::current();
        assert!(me.start.is_some(), "this test needs /proc");
        assert_eq!(me.liveness(), Liveness::Running);
        let reused = Owner {
            pid: me.pid,
            start: me.start.map(|s| s + 1),
        };
        assert_eq!(reused.liveness(), Liveness::Gone);
        assert_eq!(Owner::parse(&me.suffix()), Some(me));
        assert_eq!(
            Owner::parse("17"),
            Some(Owner {
                pid: 17,
                start: None
            })
        );
        assert_eq!(Owner::parse("17-x"), None);
        assert_eq!(Owner::parse("-5"), None);
    }

    #[test]
    fn a_leftover_of_a_gone_process_is_removed_and_a_running_one_refused() {
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("out");
        // Another process, running, then gone (reaped): its id and start time name the folder.
        let mut child = std::process::Command::new("sleep")
            .arg("60")
            .spawn()
            .unwrap();
        let owner = Owner {
            pid: child.id(),
            start: Some(proc_stat(child.id()).unwrap().start),
        };
        let theirs = dir.path().join(format!(".out{PARTIAL}{}", owner.suffix()));
        std::fs::create_dir(&theirs).unwrap();
        std::fs::write(theirs.join("results.tsv"), "partial").unwrap();
        match Staging::new(&target, false) {
            Err(OutDirError::Busy { pid, staging, .. }) => {
                assert_eq!((pid, &staging), (owner.pid, &theirs));
            }
            Err(e) => panic!("{e}"),
            Ok(_) => panic!("a second run into a folder another one is writing"),
        }
        assert!(
            theirs.join("results.tsv").exists(),
            "a running run's folder is kept"
        );
        assert_eq!(names(dir.path()).len(), 1, "the refused run leaves nothing");
        child.kill().unwrap();
        child.wait().unwrap();
        let other = dir
            .path()
            .join(format!(".other{PARTIAL}{}", owner.suffix()));
        std::fs::create_dir(&other).unwrap();
        let s = Staging::new(&target, false).unwrap();
        assert_eq!(
            s.cleaned(),
            &[Cleaned::Removed {
                path: theirs.clone(),
                pid: owner.pid
            }]
        );
        assert!(!theirs.exists());
        assert!(
            other.exists(),
            "another target's staging folder is not ours to judge"
        );
        // One process, one staging folder per target.
        assert!(matches!(
            Staging::new(&target, false),
            Err(OutDirError::Busy { .. })
        ));
        assert!(s.path().exists());
        s.commit().unwrap();
        let mut want = vec![other.file_name().unwrap().to_string_lossy().into_owned()];
        want.push("out".into());
        assert_eq!(names(dir.path()), want);
    }

    #[test]
    fn old_results_set_aside_by_an_interrupted_forced_run_are_put_back() {
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("out");
        // Killed between the two renames: old results aside, new ones still staged.
        let staged = dir.path().join(".out.nevermet-partial-4999999-12");
        let aside = dir.path().join(".out.nevermet-partial-4999999-12-replaced");
        std::fs::create_dir(&staged).unwrap();
        std::fs::create_dir(&aside).unwrap();
        std::fs::write(aside.join("old.txt"), "old").unwrap();
        let s = Staging::new(&target, true).unwrap();
        assert_eq!(s.cleaned().len(), 2, "{:?}", s.cleaned());
        assert!(matches!(s.cleaned()[0], Cleaned::Restored { .. }));
        assert_eq!(
            std::fs::read_to_string(target.join("old.txt")).unwrap(),
            "old"
        );
        drop(s);
        assert_eq!(names(dir.path()), ["out"]);
        // Without --force the restored results now make the target non-empty.
        std::fs::create_dir(&aside).unwrap();
        assert!(matches!(
            Staging::new(&target, false),
            Err(OutDirError::NotEmpty { .. })
        ));
    }

    #[test]
    fn without_force_a_target_filled_meanwhile_is_kept() {
        let dir = tempfile::tempdir().unwrap();
        let target = dir.path().join("out");
        let s = Staging::new(&target, false).unwrap();
        std::fs::write(s.path().join("new.txt"), "new").unwrap();
        std::fs::create_dir(&target).unwrap();
        std::fs::write(target.join("keep.txt"), "precious").unwrap();
        assert!(matches!(s.commit(), Err(OutDirError::NotEmpty { .. })));
        assert_eq!(names(&target), ["keep.txt"]);
        assert_eq!(names(dir.path()), ["out"]);
    }
}
