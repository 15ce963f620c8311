//! Names of the files and folders websigma is still writing, and the
//! removal of those a killed run left behind.
//!
//! Every output is first written under a hidden name that says what it is
//! and which process writes it, `.websigma-unfinished-pid<PID>-<N>-<NAME>`
//! (`N` counts the outputs of that process, `NAME` is the final name), and
//! renamed or linked into place when complete. A run killed before that
//! leaves the hidden entry; the next run writing into the same folder
//! removes every such entry whose process is gone. In a report folder, the
//! folders named `.<id>.partial-<PID>` by earlier versions are removed the
//! same way.

use std::path::Path;
use std::sync::atomic::{AtomicUsize, Ordering};

/// What every unfinished output's name begins with.
pub const PREFIX: &str = ".websigma-unfinished-pid";

/// Outputs begun by this process so far (makes the names unique between
/// threads).
static COUNT: AtomicUsize = AtomicUsize::new(0);

/// A new unfinished name for the output that will be called `name`:
/// `.websigma-unfinished-pid<PID>-<N>-<name>`.
pub fn name_for(name: &str) -> String {
    let n = COUNT.fetch_add(1, Ordering::Relaxed);
    format!("{PREFIX}{}-{n}-{name}", std::process::id())
}

/// The process id an unfinished entry names, or `None` if `file_name` is no
/// unfinished entry of ours. With `legacy`, a folder named in the older
/// form `.<id>.partial-<PID>` is recognised too.
pub fn writer_pid(file_name: &str, legacy: bool) -> Option<u32> {
    let digits = |s: &str| -> Option<u32> {
        let d: String = s.chars().take_while(char::is_ascii_digit).collect();
        if d.is_empty() { None } else { d.parse().ok() }
    };
    if let Some(rest) = file_name.strip_prefix(PREFIX) {
        let pid = digits(rest)?;
        return rest[pid.to_string().len()..]
            .starts_with('-')
            .then_some(pid);
    }
    if legacy && file_name.starts_with('.') {
        let (_, tail) = file_name.rsplit_once(".partial-")?;
        if !tail.is_empty() && tail.chars().all(|c| c.is_ascii_digit()) {
            return tail.parse().ok();
        }
    }
    None
}

/// Whether process `pid` is running: `Some(true)` or `Some(false)` where
/// the system says (Linux: `/proc/<pid>` exists while the process does,
/// proc(5)); `None` where it cannot be told, and then nothing is removed.
pub fn process_alive(pid: u32) -> Option<bool> {
    if cfg!(target_os = "linux") && Path::new("/proc/self").exists() {
        Some(Path::new("/proc").join(pid.to_string()).exists())
    } else {
        None
    }
}

/// Removes the unfinished entries in `dir` whose process is gone; returns
/// how many were removed. `report_folder` says `dir` holds report folders
/// (then the older `.<id>.partial-<PID>` folders go too). Best effort: an
/// entry that cannot be read or removed (another run may be removing it
/// too) is left.
pub fn remove_stale(dir: &Path, report_folder: bool) -> usize {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return 0;
    };
    let mut removed = 0;
    for e in entries.flatten() {
        let Ok(kind) = e.file_type() else { continue };
        let name = e.file_name();
        let legacy = report_folder && kind.is_dir();
        let Some(pid) = name.to_str().and_then(|n| writer_pid(n, legacy)) else {
            continue;
        };
        if process_alive(pid) != Some(false) {
            continue;
        }
        let gone = if kind.is_dir() {
            std::fs::remove_dir_all(e.path())
        } else {
            std::fs::remove_file(e.path())
        };
        if gone.is_ok() {
            removed += 1;
        }
    }
    removed
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_carry_the_pid_and_are_unique() {
        let a = name_for("r");
        let b = name_for("r");
        assert_ne!(a, b);
        assert_eq!(writer_pid(&a, true), Some(std::process::id()));
        assert_eq!(writer_pid(&a, false), Some(std::process::id()));
        assert!(a.ends_with("-r"), "{a}");
    }

    #[test]
    fn only_our_names_are_recognised() {
        assert_eq!(
            writer_pid(".websigma-unfinished-pid42-0-x.yaml", false),
            Some(42)
        );
        assert_eq!(writer_pid(".websigma-unfinished-pidx-0-x", true), None);
        assert_eq!(writer_pid(".websigma-unfinished-pid42", true), None);
        assert_eq!(
            writer_pid(".demo-20260101T000000Z.partial-77", true),
            Some(77)
        );
        assert_eq!(writer_pid(".demo.partial-77", false), None);
        assert_eq!(writer_pid("demo.partial-77", true), None);
        assert_eq!(writer_pid(".demo.partial-7x", true), None);
        assert_eq!(writer_pid("line.yaml", false), None);
    }

    #[cfg(target_os = "linux")]
    #[test]
    fn this_process_is_alive() {
        assert_eq!(process_alive(std::process::id()), Some(true));
    }
}
