//! The scenario as a document: which file it lives in, whether it has unsaved changes, the
//! recent-files list, and the recovery file that autosave keeps for a crash.
//!
//! Nothing here draws. The app asks [`Document::is_dirty`] with the scenario as a file would
//! hold it, saves through the core's atomic write, and at start-up offers back a recovery
//! file left by a session that did not close cleanly.

use std::path::{Path, PathBuf};
use std::time::{Duration, Instant, SystemTime};

use quarry_core::scenario::{Scenario as ScenarioFile, ScenarioError, write_atomically};

/// How many files the recent list keeps.
pub const MAX_RECENT: usize = 10;
/// How long after a change the recovery file is written.
pub const AUTOSAVE_DELAY: Duration = Duration::from_secs(3);
/// The first line of a recovery file, before the path it came from.
const RECOVERY_HEADER: &str = "// Quarry recovery file of: ";
/// Written instead of a path for a scenario never saved.
const UNTITLED: &str = "(never saved)";

/// Where Quarry keeps its own state: `QUARRY_STATE_DIR`, else `$XDG_STATE_HOME/quarry`, else
/// `~/.local/state/quarry` (on Windows `%LOCALAPPDATA%\Quarry`). `None` when none is known.
pub fn state_dir() -> Option<PathBuf> {
    let var = |name| std::env::var_os(name).filter(|v| !v.is_empty());
    if let Some(dir) = var("QUARRY_STATE_DIR") {
        return Some(PathBuf::from(dir));
    }
    if cfg!(windows) {
        return var("LOCALAPPDATA").map(|d| PathBuf::from(d).join("Quarry"));
    }
    if let Some(dir) = var("XDG_STATE_HOME") {
        return Some(PathBuf::from(dir).join("quarry"));
    }
    var("HOME").map(|h| PathBuf::from(h).join(".local/state/quarry"))
}

/// The files opened or saved lately, newest first, kept in the state folder.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct RecentFiles {
    /// The files, newest first.
    pub paths: Vec<PathBuf>,
    store: Option<PathBuf>,
}

impl RecentFiles {
    /// The list stored in `dir` (empty when there is none or it cannot be read).
    pub fn load(dir: Option<&Path>) -> Self {
        let store = dir.map(|d| d.join("recent.txt"));
        let paths = store
            .as_deref()
            .and_then(|p| std::fs::read_to_string(p).ok())
            .map(|text| {
                text.lines()
                    .filter(|l| !l.trim().is_empty())
                    .map(PathBuf::from)
                    .take(MAX_RECENT)
                    .collect()
            })
            .unwrap_or_default();
        Self { paths, store }
    }

    /// Puts `path` at the top and stores the list; a failure to store is not an error worth
    /// bothering the user with (the list is a convenience), so it is ignored.
    pub fn add(&mut self, path: &Path) {
        let path = std::path::absolute(path).unwrap_or_else(|_| path.to_owned());
        self.paths.retain(|p| *p != path);
        self.paths.insert(0, path);
        self.paths.truncate(MAX_RECENT);
        self.store();
    }

    /// Drops a file that could not be opened.
    pub fn remove(&mut self, path: &Path) {
        let n = self.paths.len();
        self.paths.retain(|p| p != path);
        if self.paths.len() != n {
            self.store();
        }
    }

    fn store(&self) {
        let Some(store) = &self.store else { return };
        if let Some(dir) = store.parent() {
            let _ = std::fs::create_dir_all(dir);
        }
        let mut text = String::new();
        for p in &self.paths {
            text.push_str(&p.to_string_lossy());
            text.push('\n');
        }
        let _ = write_atomically(store, text.as_bytes());
    }
}

/// A recovery file found at start-up.
#[derive(Clone, Debug, PartialEq)]
pub struct Recovery {
    /// The recovery file itself.
    pub file: PathBuf,
    /// The file the scenario was saved as before, if it had been.
    pub origin: Option<PathBuf>,
    /// When the recovery file was last written.
    pub written: Option<SystemTime>,
    /// The scenario's text (a complete scenario file).
    pub text: String,
}

/// The recovery file of this process in `dir`.
fn recovery_path(dir: &Path) -> PathBuf {
    dir.join(format!("recovery-{}.ron", std::process::id()))
}

/// Whether the process that wrote a recovery file is still running (then its file is not
/// ours to offer). Only Linux can tell; elsewhere every other process's file is offered.
fn writer_alive(file: &Path) -> bool {
    let pid = file
        .file_stem()
        .and_then(|s| s.to_str())
        .and_then(|s| s.strip_prefix("recovery-"))
        .and_then(|s| s.parse::<u32>().ok());
    match pid {
        Some(pid) if pid == std::process::id() => true,
        Some(pid) => cfg!(target_os = "linux") && Path::new(&format!("/proc/{pid}")).exists(),
        None => false,
    }
}

/// The newest recovery file in `dir` left by a session that is no longer running.
pub fn find_recovery(dir: &Path) -> Option<Recovery> {
    let entries = std::fs::read_dir(dir).ok()?;
    let mut found: Vec<(Option<SystemTime>, PathBuf)> = entries
        .filter_map(|e| e.ok())
        .map(|e| e.path())
        .filter(|p| {
            p.file_name()
                .and_then(|n| n.to_str())
                .is_some_and(|n| n.starts_with("recovery-") && n.ends_with(".ron"))
        })
        .filter(|p| !writer_alive(p))
        .map(|p| (std::fs::metadata(&p).and_then(|m| m.modified()).ok(), p))
        .collect();
    found.sort();
    let (written, file) = found.pop()?;
    let text = std::fs::read_to_string(&file).ok()?;
    let origin = text
        .lines()
        .next()
        .and_then(|l| l.strip_prefix(RECOVERY_HEADER))
        .filter(|p| *p != UNTITLED)
        .map(PathBuf::from);
    Some(Recovery {
        file,
        origin,
        written,
        text,
    })
}

/// The open scenario's file and save state.
#[derive(Debug)]
pub struct Document {
    /// The file the scenario was opened from or last saved to.
    pub path: Option<PathBuf>,
    /// The scenario as it was when opened or last saved: unsaved changes are differences
    /// from this.
    saved: ScenarioFile,
    /// Whether the scenario must count as changed even when equal to `saved` (recovered work).
    forced_dirty: bool,
    /// Where recovery files go (`None`: no autosave).
    state_dir: Option<PathBuf>,
    /// The text last written to the recovery file, to write only on change.
    autosaved: Option<String>,
    /// When the scenario was first seen to differ from the recovery file.
    pending_since: Option<Instant>,
}

impl Document {
    /// A document for `scenario`, as saved at `path` (or never saved).
    pub fn new(scenario: ScenarioFile, path: Option<PathBuf>, state_dir: Option<PathBuf>) -> Self {
        Self {
            path,
            saved: scenario,
            forced_dirty: false,
            state_dir,
            autosaved: None,
            pending_since: None,
        }
    }

    /// Starts over on another scenario (opened or new), dropping this one's recovery file.
    pub fn reset(&mut self, scenario: ScenarioFile, path: Option<PathBuf>) {
        self.discard_recovery();
        self.path = path;
        self.saved = scenario;
        self.forced_dirty = false;
    }

    /// Marks the scenario as changed whatever it holds (after restoring recovered work).
    pub fn mark_dirty(&mut self) {
        self.forced_dirty = true;
    }

    /// Whether `current` differs from what is on disk.
    pub fn is_dirty(&self, current: &ScenarioFile) -> bool {
        self.forced_dirty || *current != self.saved
    }

    /// The file's name for the title bar.
    pub fn file_name(&self) -> Option<String> {
        self.path
            .as_deref()
            .and_then(|p| p.file_name())
            .map(|n| n.to_string_lossy().into_owned())
    }

    /// Saves `current` to `path` atomically; on success it becomes the saved state.
    pub fn save(&mut self, current: &ScenarioFile, path: &Path) -> Result<(), ScenarioError> {
        current.save(path)?;
        self.path = Some(path.to_owned());
        self.saved = current.clone();
        self.forced_dirty = false;
        self.discard_recovery();
        Ok(())
    }

    /// Called every frame: writes the recovery file once the scenario has differed from the
    /// saved state for [`AUTOSAVE_DELAY`]; removes it when the scenario is back to saved.
    /// Returns when it next needs to be called, if a write is pending.
    pub fn autosave(&mut self, current: &ScenarioFile, now: Instant) -> Option<Duration> {
        let dir = self.state_dir.clone()?;
        if !self.is_dirty(current) {
            self.discard_recovery();
            return None;
        }
        let text = self.recovery_text(current);
        if self.autosaved.as_deref() == Some(text.as_str()) {
            self.pending_since = None;
            return None;
        }
        let since = *self.pending_since.get_or_insert(now);
        let due = since + AUTOSAVE_DELAY;
        if now < due {
            return Some(due - now);
        }
        let _ = std::fs::create_dir_all(&dir);
        // A failed autosave is retried after the next change; the user's work is still in
        // memory, and saving proper reports its own errors.
        if write_atomically(&recovery_path(&dir), text.as_bytes()).is_ok() {
            self.autosaved = Some(text);
        }
        self.pending_since = None;
        None
    }

    fn recovery_text(&self, current: &ScenarioFile) -> String {
        let origin = self
            .path
            .as_deref()
            .map(|p| p.to_string_lossy().into_owned())
            .unwrap_or_else(|| UNTITLED.to_owned());
        format!("{RECOVERY_HEADER}{origin}\n{}", current.to_ron())
    }

    /// Removes this session's recovery file (after a save, or on a clean exit).
    pub fn discard_recovery(&mut self) {
        if self.autosaved.take().is_some()
            && let Some(dir) = &self.state_dir
        {
            let _ = std::fs::remove_file(recovery_path(dir));
        }
        self.pending_since = None;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use quarry_core::scenario::default_scenario;

    fn temp_dir(name: &str) -> PathBuf {
        let dir = std::env::temp_dir().join(format!("quarry-doc-{name}-{}", std::process::id()));
        let _ = std::fs::remove_dir_all(&dir);
        std::fs::create_dir_all(&dir).expect("temp dir");
        dir
    }

    #[test]
    fn a_change_makes_the_document_dirty_and_saving_cleans_it() {
        let dir = temp_dir("save");
        let mut s = default_scenario();
        let mut doc = Document::new(s.clone(), None, None);
        assert!(!doc.is_dirty(&s));
        s.notes.push_str(" changed");
        assert!(doc.is_dirty(&s));
        let path = dir.join("a.ron");
        doc.save(&s, &path).expect("save");
        assert!(!doc.is_dirty(&s));
        assert_eq!(doc.file_name().as_deref(), Some("a.ron"));
        assert_eq!(ScenarioFile::load(&path).expect("reads back"), s);
    }

    #[test]
    fn autosave_waits_then_writes_a_recovery_file_that_is_found_after_a_crash() {
        let dir = temp_dir("recover");
        let mut s = default_scenario();
        let origin = dir.join("lake.ron");
        let mut doc = Document::new(s.clone(), Some(origin.clone()), Some(dir.clone()));
        let t0 = Instant::now();
        s.parameters[0].value = 1.25;
        assert!(doc.autosave(&s, t0).is_some(), "a write is pending");
        assert!(!recovery_path(&dir).exists(), "not before the delay");
        assert!(doc.autosave(&s, t0 + AUTOSAVE_DELAY).is_none());
        assert!(recovery_path(&dir).exists());
        // This process is alive, so its own file is not offered...
        assert!(find_recovery(&dir).is_none());
        // ...but a file left by a process that is gone is, with where it came from.
        let orphan = dir.join("recovery-4294967294.ron");
        std::fs::rename(recovery_path(&dir), &orphan).expect("rename");
        let found = find_recovery(&dir).expect("offered");
        assert_eq!(found.file, orphan);
        assert_eq!(found.origin.as_deref(), Some(origin.as_path()));
        let back = ScenarioFile::from_ron(&found.text).expect("a whole scenario");
        assert_eq!(back, s);
    }

    #[test]
    fn saving_or_undoing_the_change_removes_the_recovery_file() {
        let dir = temp_dir("discard");
        let saved = default_scenario();
        let mut s = saved.clone();
        let mut doc = Document::new(saved.clone(), None, Some(dir.clone()));
        let t0 = Instant::now();
        s.title.push('!');
        doc.autosave(&s, t0);
        doc.autosave(&s, t0 + AUTOSAVE_DELAY);
        assert!(recovery_path(&dir).exists());
        // Back to the saved state: nothing to recover.
        doc.autosave(&saved, t0 + AUTOSAVE_DELAY);
        assert!(!recovery_path(&dir).exists());
        doc.autosave(&s, t0);
        doc.autosave(&s, t0 + AUTOSAVE_DELAY);
        assert!(recovery_path(&dir).exists());
        doc.save(&s, &dir.join("b.ron")).expect("save");
        assert!(!recovery_path(&dir).exists());
    }

    #[test]
    fn recent_files_keep_the_newest_first_without_repeats() {
        let dir = temp_dir("recent");
        let mut r = RecentFiles::load(Some(&dir));
        assert!(r.paths.is_empty());
        for name in ["a.ron", "b.ron", "a.ron"] {
            r.add(&dir.join(name));
        }
        let again = RecentFiles::load(Some(&dir));
        assert_eq!(again.paths, vec![dir.join("a.ron"), dir.join("b.ron")]);
        for i in 0..20 {
            r.add(&dir.join(format!("{i}.ron")));
        }
        assert_eq!(RecentFiles::load(Some(&dir)).paths.len(), MAX_RECENT);
    }
}
