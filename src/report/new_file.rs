//! Writes a new file whole or not at all, never over an existing one.
//!
//! [`NewFile::create`] checks that the target does not exist and creates
//! an unfinished file beside it (same folder, so same file system; named by
//! [`unfinished`](super::unfinished)), before any long work, so a folder
//! that cannot be written fails at once. [`NewFile::commit`] writes the
//! bytes to it, flushes them to the disk (`fsync`), then links it under the
//! target name with `link(2)`, which fails if the target exists — an atomic
//! create-if-absent (POSIX.1-2017, link()) — and removes the unfinished
//! name. Where the file system has no hard links, it falls back to checking
//! that the target is absent and renaming (a file created by another
//! program between the check and the rename would be replaced). On any
//! failure, and when dropped without a commit, the unfinished file is
//! removed: a full disk or a refused overwrite leaves nothing behind.

use super::unfinished;
use anyhow::{Context, Result, bail};
use std::fs::File;
use std::io::Write;
use std::path::{Path, PathBuf};

/// A file being written: the target's name is kept free until
/// [`commit`](Self::commit).
#[derive(Debug)]
pub struct NewFile {
    target: PathBuf,
    temp: PathBuf,
    file: Option<File>,
}

/// The message for a target that exists.
fn exists(target: &Path) -> String {
    format!(
        "'{}' exists; websigma never overwrites a file — choose a new name",
        target.display()
    )
}

impl NewFile {
    /// Prepares to write `target`: refuses if it exists, removes unfinished
    /// files of dead processes in its folder and creates this one's.
    pub fn create(target: &Path) -> Result<Self> {
        if target.exists() {
            bail!(exists(target));
        }
        let name = target
            .file_name()
            .and_then(|n| n.to_str())
            .with_context(|| format!("'{}' does not end in a file name", target.display()))?;
        let folder = match target.parent() {
            Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
            _ => PathBuf::from("."),
        };
        unfinished::remove_stale(&folder, false);
        let temp = folder.join(unfinished::name_for(name));
        let file = std::fs::OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&temp)
            .with_context(|| {
                format!(
                    "cannot create a file in the folder '{}' (for '{}')",
                    folder.display(),
                    target.display()
                )
            })?;
        Ok(NewFile {
            target: target.to_path_buf(),
            temp,
            file: Some(file),
        })
    }

    /// The unfinished file's path (removed again unless committed).
    pub fn temp_path(&self) -> &Path {
        &self.temp
    }

    /// Writes `bytes` and puts the file in place.
    pub fn commit(self, bytes: &[u8]) -> Result<PathBuf> {
        self.commit_with(|w| w.write_all(bytes))
    }

    /// Writes with `write` and puts the file in place; on any error the
    /// unfinished file is removed and the target left absent.
    pub fn commit_with(
        mut self,
        write: impl FnOnce(&mut dyn Write) -> std::io::Result<()>,
    ) -> Result<PathBuf> {
        let Some(mut file) = self.file.take() else {
            bail!("internal: '{}' written twice", self.target.display());
        };
        let target = self.target.clone();
        write(&mut file)
            .and_then(|()| file.sync_all())
            .with_context(|| format!("writing '{}'", target.display()))?;
        drop(file);
        self.put_in_place()?;
        // The new name is durable once its folder is flushed; not every
        // system can flush a folder, and the data is already on disk.
        if let Some(folder) = target.parent().filter(|p| !p.as_os_str().is_empty())
            && let Ok(f) = File::open(folder)
        {
            let _ = f.sync_all();
        }
        Ok(target)
    }

    /// Links the unfinished file under the target name (or renames it where
    /// hard links are not supported) and drops the unfinished name.
    fn put_in_place(&self) -> Result<()> {
        match std::fs::hard_link(&self.temp, &self.target) {
            Ok(()) => {
                let _ = std::fs::remove_file(&self.temp);
                Ok(())
            }
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => Err(anyhow::anyhow!(
                "{} (it appeared while websigma was working; nothing was written)",
                exists(&self.target)
            )),
            Err(link_error) => {
                if self.target.exists() {
                    bail!(exists(&self.target));
                }
                std::fs::rename(&self.temp, &self.target).with_context(|| {
                    format!(
                        "putting '{}' in place (linking failed: {link_error})",
                        self.target.display()
                    )
                })
            }
        }
    }
}

impl Drop for NewFile {
    /// Removes the unfinished file (a no-op once it was put in place).
    fn drop(&mut self) {
        self.file = None;
        let _ = std::fs::remove_file(&self.temp);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(d: &Path) -> Vec<String> {
        let mut v: Vec<String> = std::fs::read_dir(d)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        v.sort();
        v
    }

    #[test]
    fn a_commit_leaves_the_whole_file_and_nothing_else() {
        let d = tempfile::tempdir().unwrap();
        let target = d.path().join("out.yaml");
        let f = NewFile::create(&target).unwrap();
        assert!(f.temp_path().exists());
        assert!(!target.exists(), "the target appears only when complete");
        f.commit(b"line: x\n").unwrap();
        assert_eq!(std::fs::read(&target).unwrap(), b"line: x\n");
        assert_eq!(names(d.path()), ["out.yaml"]);
    }

    /// A writer failing half way (as on a full disk) leaves neither the
    /// target nor the unfinished file, and a retry succeeds.
    #[test]
    fn a_failing_write_removes_the_unfinished_file() {
        let d = tempfile::tempdir().unwrap();
        let target = d.path().join("out.yaml");
        let f = NewFile::create(&target).unwrap();
        let e = f
            .commit_with(|w| {
                w.write_all(b"line: half")?;
                Err(std::io::Error::other("No space left on device"))
            })
            .unwrap_err();
        assert!(
            format!("{e:#}").contains("No space left on device"),
            "{e:#}"
        );
        assert!(format!("{e:#}").contains("out.yaml"), "{e:#}");
        assert!(names(d.path()).is_empty(), "{:?}", names(d.path()));
        NewFile::create(&target).unwrap().commit(b"ok\n").unwrap();
        assert_eq!(std::fs::read(&target).unwrap(), b"ok\n");
    }

    /// The target created by someone else between create and commit is
    /// kept as it was, and the unfinished file removed.
    #[test]
    fn a_target_that_appears_meanwhile_is_not_overwritten() {
        let d = tempfile::tempdir().unwrap();
        let target = d.path().join("out.yaml");
        let f = NewFile::create(&target).unwrap();
        std::fs::write(&target, b"theirs").unwrap();
        let e = f.commit(b"ours").unwrap_err();
        assert!(e.to_string().contains("never overwrites"), "{e}");
        assert_eq!(std::fs::read(&target).unwrap(), b"theirs");
        assert_eq!(names(d.path()), ["out.yaml"]);
        let e = NewFile::create(&target).unwrap_err();
        assert!(e.to_string().contains("exists"), "{e}");
        assert_eq!(names(d.path()), ["out.yaml"]);
    }

    #[test]
    fn dropping_without_commit_leaves_nothing() {
        let d = tempfile::tempdir().unwrap();
        drop(NewFile::create(&d.path().join("out.yaml")).unwrap());
        assert!(names(d.path()).is_empty());
    }
}
