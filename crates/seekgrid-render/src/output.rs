//! An output folder whose files appear atomically.

use crate::error::RenderError;
use std::io::Write;
use std::path::{Path, PathBuf};

/// An output folder. Every file is written to a temporary file in the same folder, flushed to
/// disk (`fsync`) and then renamed into place, so a reader never sees a half-written file and a
/// crash leaves either the old file or the new one.
///
/// Paths registered with [`OutputDir::protect`] (the run's inputs) are never overwritten.
#[derive(Debug)]
pub struct OutputDir {
    path: PathBuf,
    protected: Vec<PathBuf>,
}

impl OutputDir {
    /// Creates the folder `path` (and its parents). When it exists and holds any entry, this fails
    /// unless `force` is true; with `force` the existing files are replaced one by one as new
    /// ones are written (the folder itself is never deleted, files not written stay).
    ///
    /// # Errors
    /// [`RenderError::OutputNotEmpty`] when the folder holds entries and `force` is false,
    /// [`RenderError::OutputNotAFolder`] when `path` is a file, [`RenderError::Io`] when the folder
    /// cannot be created or read.
    pub fn create(path: &Path, force: bool) -> Result<Self, RenderError> {
        match std::fs::metadata(path) {
            Ok(meta) if !meta.is_dir() => {
                return Err(RenderError::OutputNotAFolder {
                    path: path.to_owned(),
                });
            }
            Ok(_) => {
                let mut entries = std::fs::read_dir(path).map_err(|source| RenderError::Io {
                    action: "read folder",
                    path: path.to_owned(),
                    source,
                })?;
                if entries.next().is_some() && !force {
                    return Err(RenderError::OutputNotEmpty {
                        path: path.to_owned(),
                    });
                }
            }
            Err(_) => {
                std::fs::create_dir_all(path).map_err(|source| RenderError::Io {
                    action: "create folder",
                    path: path.to_owned(),
                    source,
                })?;
            }
        }
        Ok(Self {
            path: path.to_owned(),
            protected: Vec::new(),
        })
    }

    /// Registers an input file that must never be overwritten (compared after resolving
    /// symbolic links and relative paths).
    pub fn protect(&mut self, input: &Path) {
        self.protected.push(resolve(input));
    }

    /// The folder.
    #[must_use]
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Writes `bytes` to the file `name` in the folder atomically (temporary file in the same
    /// folder, `fsync`, rename, then `fsync` of the folder) and returns its path.
    ///
    /// # Errors
    /// [`RenderError::BadFileName`] when `name` is empty, `.`/`..` or holds a path separator;
    /// [`RenderError::WouldOverwriteInput`] when the target is a protected input;
    /// [`RenderError::Io`] (with the path) when writing or renaming fails.
    pub fn write(&self, name: &str, bytes: &[u8]) -> Result<PathBuf, RenderError> {
        if name.is_empty()
            || name == "."
            || name == ".."
            || name.contains(['/', '\\', '\0'])
            || Path::new(name).components().count() != 1
        {
            return Err(RenderError::BadFileName {
                name: name.to_owned(),
            });
        }
        let target = self.path.join(name);
        let resolved = resolve(&target);
        if self.protected.contains(&resolved) {
            return Err(RenderError::WouldOverwriteInput { path: target });
        }
        let io = |action: &'static str, path: &Path| {
            let path = path.to_owned();
            move |source| RenderError::Io {
                action,
                path,
                source,
            }
        };
        let prefix = format!(".{name}.");
        let mut builder = tempfile::Builder::new();
        builder.prefix(&prefix).suffix(".partial");
        // Temporary files are private (0600) by default; outputs are ordinary files (0644
        // less the umask).
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            builder.permissions(std::fs::Permissions::from_mode(0o644));
        }
        let mut tmp = builder
            .tempfile_in(&self.path)
            .map_err(io("create a temporary file in", &self.path))?;
        tmp.write_all(bytes).map_err(io("write", tmp.path()))?;
        tmp.as_file().sync_all().map_err(io("flush", tmp.path()))?;
        tmp.persist(&target).map_err(|e| RenderError::Io {
            action: "rename a temporary file onto",
            path: target.clone(),
            source: e.error,
        })?;
        // Make the rename itself durable; opening a folder for sync is a Unix facility.
        #[cfg(unix)]
        std::fs::File::open(&self.path)
            .and_then(|d| d.sync_all())
            .map_err(io("flush folder", &self.path))?;
        Ok(target)
    }
}

/// An absolute path with symbolic links resolved where the file exists.
fn resolve(p: &Path) -> PathBuf {
    if let Ok(c) = std::fs::canonicalize(p) {
        return c;
    }
    let abs = if p.is_absolute() {
        p.to_owned()
    } else {
        std::env::current_dir().map_or_else(|_| p.to_owned(), |d| d.join(p))
    };
    // The file may not exist yet: resolve its folder and keep the name.
    match (abs.parent(), abs.file_name()) {
        (Some(dir), Some(file)) => std::fs::canonicalize(dir).map_or(abs.clone(), |d| d.join(file)),
        _ => abs,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_new_folder_is_created_and_files_appear_whole() {
        let tmp = tempfile::tempdir().unwrap();
        let dir = OutputDir::create(&tmp.path().join("a/b"), false).unwrap();
        let p = dir.write("x.txt", b"hello").unwrap();
        assert_eq!(std::fs::read(&p).unwrap(), b"hello");
        // No temporary file is left behind.
        let names: Vec<_> = std::fs::read_dir(dir.path())
            .unwrap()
            .map(|e| e.unwrap().file_name())
            .collect();
        assert_eq!(names, vec![std::ffi::OsString::from("x.txt")]);
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            let mode = std::fs::metadata(&p).unwrap().permissions().mode();
            assert_eq!(
                mode & 0o044,
                0o044 & !umask_guess(),
                "outputs are readable by others"
            );
        }
    }

    #[cfg(unix)]
    fn umask_guess() -> u32 {
        // Read back the mode of a file created normally, which reflects the umask.
        let t = tempfile::tempdir().unwrap();
        let f = t.path().join("probe");
        std::fs::write(&f, b"").unwrap();
        use std::os::unix::fs::PermissionsExt;
        0o666 & !std::fs::metadata(&f).unwrap().permissions().mode()
    }

    #[test]
    fn a_non_empty_folder_is_refused_unless_forced_and_then_kept() {
        let tmp = tempfile::tempdir().unwrap();
        std::fs::write(tmp.path().join("old.txt"), b"old").unwrap();
        std::fs::write(tmp.path().join("x.txt"), b"before").unwrap();
        assert!(matches!(
            OutputDir::create(tmp.path(), false),
            Err(RenderError::OutputNotEmpty { .. })
        ));
        let dir = OutputDir::create(tmp.path(), true).unwrap();
        dir.write("x.txt", b"after").unwrap();
        assert_eq!(std::fs::read(tmp.path().join("x.txt")).unwrap(), b"after");
        assert_eq!(std::fs::read(tmp.path().join("old.txt")).unwrap(), b"old");
    }

    #[test]
    fn an_empty_existing_folder_is_accepted_without_force() {
        let tmp = tempfile::tempdir().unwrap();
        assert!(OutputDir::create(tmp.path(), false).is_ok());
    }

    #[test]
    fn a_file_in_place_of_the_folder_is_refused() {
        let tmp = tempfile::tempdir().unwrap();
        let f = tmp.path().join("file");
        std::fs::write(&f, b"x").unwrap();
        assert!(matches!(
            OutputDir::create(&f, true),
            Err(RenderError::OutputNotAFolder { .. })
        ));
    }

    #[test]
    fn protected_inputs_are_never_overwritten_even_through_a_relative_path() {
        let tmp = tempfile::tempdir().unwrap();
        let input = tmp.path().join("incident.toml");
        std::fs::write(&input, b"input").unwrap();
        let mut dir = OutputDir::create(tmp.path(), true).unwrap();
        std::fs::create_dir(tmp.path().join("sub")).unwrap();
        dir.protect(&tmp.path().join("sub/../incident.toml"));
        let err = dir.write("incident.toml", b"oops").unwrap_err();
        assert!(
            matches!(err, RenderError::WouldOverwriteInput { .. }),
            "{err}"
        );
        assert_eq!(std::fs::read(&input).unwrap(), b"input");
        assert!(dir.write("other.txt", b"fine").is_ok());
    }

    #[test]
    fn names_with_folders_are_refused() {
        let tmp = tempfile::tempdir().unwrap();
        let dir = OutputDir::create(tmp.path(), false).unwrap();
        for bad in ["", ".", "..", "../x", "a/b", "/etc/passwd"] {
            assert!(
                matches!(dir.write(bad, b""), Err(RenderError::BadFileName { .. })),
                "{bad}"
            );
        }
    }
}
