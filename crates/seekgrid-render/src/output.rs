//! An output folder written as one unit: staged beside its destination, then put in place whole.
//!
//! A run opens an [`OutputDir`] for its destination folder `NAME` in the folder `PARENT`:
//!
//! 1. It takes an exclusive lock on `PARENT/.NAME.lock`, so a second run into the same
//!    destination is refused at once ([`RenderError::OutputLocked`]) instead of mixing its files
//!    with the first one's.
//! 2. Holding the lock, it removes what killed runs into the same destination left beside it:
//!    staging folders `PARENT/.NAME.staging-RUNID` (with any half-written `.partial` file in
//!    them) and set-aside folders `PARENT/.NAME.old-RUNID`. No live run owns them, since a live
//!    run would hold the lock.
//! 3. Every file is written into the fresh staging folder `PARENT/.NAME.staging-RUNID`, each
//!    through a temporary file, `fsync` and rename.
//! 4. [`OutputDir::commit`] puts the staging folder in place: a rename when `NAME` does not
//!    exist or is an empty folder; with `force`, an atomic exchange of the two folders
//!    (Linux `renameat2(RENAME_EXCHANGE)`), after which the earlier run's folder is deleted.
//!    Where the exchange is not available (another system, or a file system that refuses it)
//!    the earlier folder is renamed aside to `.NAME.old-RUNID`, the new one renamed in, and the
//!    old one deleted: between those two renames, a few microseconds, `NAME` does not exist.
//!    A reader never sees a half-written folder or files of two runs together.
//! 5. Dropping an [`OutputDir`] that was not committed (an error, a panic) deletes its staging
//!    folder; the earlier folder stays as it was. The lock is released and its file removed.

use crate::error::RenderError;
use std::ffi::OsString;
use std::fs::{File, OpenOptions};
use std::io::{Read, Write};
use std::path::{Path, PathBuf};

/// How a run's output folder is opened.
#[derive(Debug, Clone, Copy)]
pub struct OutputOptions<'a> {
    /// The run's id, 1 to 64 ASCII letters, digits, `-` or `_` (it names the staging folder and
    /// is written into the outputs). The caller makes it, for example from the UTC time and the
    /// process id: this crate reads no clock.
    pub run_id: &'a str,
    /// Replace an existing non-empty destination folder: the whole earlier folder goes, no file
    /// of the earlier run stays.
    pub force: bool,
    /// The run's input files. The destination may not be one of them nor hold one of them, at
    /// any depth (compared after resolving symbolic links and relative paths).
    pub inputs: &'a [PathBuf],
}

/// An output folder being written as one unit (see the module documentation): files go into a
/// staging folder and appear at the destination all together on [`OutputDir::commit`].
///
/// Also a subfolder of such a unit ([`OutputDir::subdir`]), which appears with it.
#[derive(Debug)]
pub struct OutputDir {
    /// Where files are written now: the staging folder or a subfolder of it.
    path: PathBuf,
    /// Where they will be after the commit.
    destination: PathBuf,
    run_id: String,
    /// The run's provenance, written into the files that can hold it.
    provenance: Option<crate::Provenance>,
    /// The unit's own state; `None` for a subfolder.
    unit: Option<Unit>,
}

#[derive(Debug)]
struct Unit {
    force: bool,
    /// Name for the earlier folder while it is set aside (when no exchange is possible).
    aside: PathBuf,
    removed: Vec<PathBuf>,
    committed: bool,
    /// Dropped after the staging folder is cleaned up (fields drop after `Drop::drop`).
    _lock: Lock,
}

/// Maps an I/O error to [`RenderError::Io`] with the action and path.
fn io(action: &'static str, path: &Path) -> impl FnOnce(std::io::Error) -> RenderError {
    let path = path.to_owned();
    move |source| RenderError::Io {
        action,
        path,
        source,
    }
}

impl OutputDir {
    /// Opens the output folder `path` for a run: resolves it (creating missing parent folders),
    /// refuses a destination that is or holds an input, takes the lock, removes leftovers of
    /// killed runs into the same destination, checks the destination, and creates the staging
    /// folder. Nothing appears at `path` before [`OutputDir::commit`].
    ///
    /// # Errors
    /// [`RenderError::BadRunId`] for a run id that cannot name a folder;
    /// [`RenderError::BadOutputPath`] when `path` has no folder name of its own (`/`, `a/..`);
    /// [`RenderError::OutputIsInput`] / [`RenderError::OutputHoldsInput`] when the destination
    /// is an input file or holds one;
    /// [`RenderError::OutputLocked`] when another run holds the destination's lock;
    /// [`RenderError::OutputNotAFolder`] when `path` is a file;
    /// [`RenderError::OutputNotEmpty`] when it is a folder with entries and `force` is false;
    /// [`RenderError::Io`] (with the path) when a folder cannot be created, read or cleaned.
    pub fn create(path: &Path, options: &OutputOptions<'_>) -> Result<Self, RenderError> {
        let run_id = options.run_id;
        if !is_run_id(run_id) {
            return Err(RenderError::BadRunId {
                run_id: run_id.to_owned(),
            });
        }
        let destination = resolve_destination(path)?;
        let (Some(parent), Some(name)) = (
            destination.parent(),
            destination.file_name().and_then(|n| n.to_str()),
        ) else {
            return Err(RenderError::BadOutputPath {
                path: path.to_owned(),
            });
        };
        let (parent, name) = (parent.to_owned(), name.to_owned());
        // Inputs first, so that a refused run changes nothing on disk.
        for input in options.inputs {
            let resolved = resolve(input);
            if resolved == destination {
                return Err(RenderError::OutputIsInput {
                    path: path.to_owned(),
                    input: input.clone(),
                });
            }
            if resolved.starts_with(&destination) {
                return Err(RenderError::OutputHoldsInput {
                    path: path.to_owned(),
                    input: input.clone(),
                });
            }
        }
        std::fs::create_dir_all(&parent).map_err(io("create folder", &parent))?;
        let lock = Lock::acquire(&parent.join(format!(".{name}.lock")), &destination, run_id)?;
        let removed = remove_leftovers(&parent, &name)?;
        match std::fs::symlink_metadata(&destination) {
            Ok(meta) if !meta.is_dir() => {
                return Err(RenderError::OutputNotAFolder {
                    path: path.to_owned(),
                });
            }
            Ok(_) => {
                let mut entries =
                    std::fs::read_dir(&destination).map_err(io("read folder", &destination))?;
                if entries.next().is_some() && !options.force {
                    return Err(RenderError::OutputNotEmpty {
                        path: path.to_owned(),
                    });
                }
            }
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => {}
            Err(e) => return Err(io("read", &destination)(e)),
        }
        let staging = parent.join(format!(".{name}.staging-{run_id}"));
        std::fs::create_dir(&staging).map_err(io("create the staging folder", &staging))?;
        sync_dir(&parent)?;
        Ok(Self {
            path: staging,
            destination,
            run_id: run_id.to_owned(),
            provenance: None,
            unit: Some(Unit {
                force: options.force,
                aside: parent.join(format!(".{name}.old-{run_id}")),
                removed,
                committed: false,
                _lock: lock,
            }),
        })
    }

    /// The folder files are written into now: the staging folder (or a subfolder of it) until
    /// [`OutputDir::commit`].
    #[must_use]
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Where the folder will be once committed (absolute, symbolic links of existing parts
    /// resolved).
    #[must_use]
    pub fn destination(&self) -> &Path {
        &self.destination
    }

    /// The run's id, as given in [`OutputOptions::run_id`].
    #[must_use]
    pub fn run_id(&self) -> &str {
        &self.run_id
    }

    /// Leftovers of killed runs into the same destination that [`OutputDir::create`] removed
    /// (staging and set-aside folders). Empty for a subfolder.
    #[must_use]
    pub fn removed_leftovers(&self) -> &[PathBuf] {
        self.unit.as_ref().map_or(&[], |u| &u.removed)
    }

    /// The subfolder `name` of this folder (created if missing), written as part of the same
    /// unit and put in place with it.
    ///
    /// # Errors
    /// [`RenderError::BadFileName`] when `name` is not a plain name; [`RenderError::Io`] when the
    /// folder cannot be created.
    pub fn subdir(&self, name: &str) -> Result<Self, RenderError> {
        check_name(name)?;
        let path = self.path.join(name);
        match std::fs::create_dir(&path) {
            Ok(()) => sync_dir(&self.path)?,
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists && path.is_dir() => {}
            Err(e) => return Err(io("create folder", &path)(e)),
        }
        Ok(Self {
            path,
            destination: self.destination.join(name),
            run_id: self.run_id.clone(),
            provenance: self.provenance.clone(),
            unit: None,
        })
    }

    /// Makes every file written from now on in this folder (and in subfolders made after
    /// this call) that can hold it carry `p`: a `.geojson` file as its first member
    /// `provenance`, a `.png` picture as an `iTXt` chunk `provenance` (compact JSON, UTF-8).
    pub fn set_provenance(&mut self, p: crate::Provenance) {
        self.provenance = Some(p);
    }

    /// The provenance given by [`OutputDir::set_provenance`], if any.
    #[must_use]
    pub fn provenance(&self) -> Option<&crate::Provenance> {
        self.provenance.as_ref()
    }

    /// Writes `bytes` to the file `name` in the folder atomically (temporary file in the same
    /// folder, `fsync`, rename, then `fsync` of the folder) and returns the path it has now (in
    /// the staging folder until [`OutputDir::commit`]).
    ///
    /// # Errors
    /// [`RenderError::BadFileName`] when `name` is empty, `.`/`..` or holds a path separator;
    /// [`RenderError::Io`] (with the path) when writing or renaming fails.
    pub fn write(&self, name: &str, bytes: &[u8]) -> Result<PathBuf, RenderError> {
        check_name(name)?;
        let stamped;
        let bytes = match &self.provenance {
            Some(p) if name.ends_with(".geojson") => {
                stamped = crate::provenance::into_json_object(bytes, p);
                &stamped[..]
            }
            Some(p) if name.ends_with(".png") => {
                stamped = crate::heatmap::with_itxt_chunk(bytes, "provenance", &p.to_json_line())?;
                &stamped[..]
            }
            _ => bytes,
        };
        let target = self.path.join(name);
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
        sync_dir(&self.path)?;
        Ok(target)
    }

    /// Puts the finished folder in place at its destination (see the module documentation)
    /// and returns the destination. The earlier folder, if any, is deleted; the lock is
    /// released when this returns.
    ///
    /// # Errors
    /// [`RenderError::Internal`] when called on a subfolder (commit the unit instead);
    /// [`RenderError::OutputNotEmpty`] when, without `force`, the destination gained entries
    /// since [`OutputDir::create`]; [`RenderError::Io`] when a rename fails (the earlier folder
    /// is then left in place) or the earlier folder cannot be deleted (the new one is then in
    /// place, and the next run into the destination removes the rest).
    pub fn commit(mut self) -> Result<PathBuf, RenderError> {
        self.commit_with(exchange)
    }

    /// [`OutputDir::commit`] with the exchange given (tests pass one that cannot exchange).
    fn commit_with(
        &mut self,
        exchange: fn(&Path, &Path) -> Result<bool, RenderError>,
    ) -> Result<PathBuf, RenderError> {
        let staging = self.path.clone();
        let destination = self.destination.clone();
        let Some(unit) = self.unit.as_mut() else {
            return Err(RenderError::Internal(format!(
                "commit called on the subfolder {}; commit the run's own output folder",
                destination.display()
            )));
        };
        let parent = destination.parent().unwrap_or(Path::new("/")).to_owned();
        let exists = match std::fs::symlink_metadata(&destination) {
            Ok(_) => true,
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => false,
            Err(e) => return Err(io("read", &destination)(e)),
        };
        if !exists || !unit.force {
            // rename(2) also replaces an empty folder, and fails if it gained entries meanwhile.
            std::fs::rename(&staging, &destination).map_err(|e| {
                if matches!(
                    e.kind(),
                    std::io::ErrorKind::DirectoryNotEmpty | std::io::ErrorKind::AlreadyExists
                ) {
                    RenderError::OutputNotEmpty {
                        path: destination.clone(),
                    }
                } else {
                    io("rename the staging folder onto", &destination)(e)
                }
            })?;
            unit.committed = true;
            sync_dir(&parent)?;
        } else if exchange(&staging, &destination)? {
            // The staging name now holds the earlier run.
            unit.committed = true;
            sync_dir(&parent)?;
            std::fs::remove_dir_all(&staging)
                .map_err(io("delete the earlier run's folder", &staging))?;
        } else {
            let aside = unit.aside.clone();
            std::fs::rename(&destination, &aside)
                .map_err(io("rename the earlier run's folder to", &aside))?;
            if let Err(e) = std::fs::rename(&staging, &destination) {
                // Put the earlier run back; the staging folder goes when this is dropped.
                let _ = std::fs::rename(&aside, &destination);
                return Err(io("rename the staging folder onto", &destination)(e));
            }
            unit.committed = true;
            sync_dir(&parent)?;
            std::fs::remove_dir_all(&aside)
                .map_err(io("delete the earlier run's folder", &aside))?;
        }
        Ok(destination)
    }
}

impl Drop for OutputDir {
    fn drop(&mut self) {
        if let Some(unit) = &self.unit
            && !unit.committed
        {
            // Best effort: what stays is removed by the next run into the destination.
            let _ = std::fs::remove_dir_all(&self.path);
        }
    }
}

/// An exclusive lock on a lock file, which is removed (while still held) on drop.
#[derive(Debug)]
pub(crate) struct Lock {
    path: PathBuf,
    /// Held open for the lock; closed on drop, which releases it.
    _file: File,
}

impl Lock {
    /// Takes the lock on `path` for the destination `folder`, writing `run_id` into the file.
    pub(crate) fn acquire(path: &Path, folder: &Path, run_id: &str) -> Result<Self, RenderError> {
        // A run that finishes removes its lock file while holding it; a run that opened the
        // file just before then locks a removed file. It sees so (the path no longer names the
        // file it locked) and tries again with the new file.
        for _ in 0..16 {
            let mut file = OpenOptions::new()
                .read(true)
                .write(true)
                .create(true)
                .truncate(false)
                .open(path)
                .map_err(io("open the lock file", path))?;
            match try_lock(&file) {
                Ok(true) => {}
                Ok(false) => {
                    let mut holder = String::new();
                    let _ = file.read_to_string(&mut holder);
                    let holder = holder.trim();
                    return Err(RenderError::OutputLocked {
                        path: folder.to_owned(),
                        lock: path.to_owned(),
                        holder: if is_run_id(holder) {
                            format!(" (run {holder})")
                        } else {
                            String::new()
                        },
                    });
                }
                Err(e) => return Err(io("lock", path)(e)),
            }
            if !same_file(&file, path) {
                continue;
            }
            file.set_len(0).map_err(io("write", path))?;
            file.write_all(run_id.as_bytes())
                .map_err(io("write", path))?;
            return Ok(Self {
                path: path.to_owned(),
                _file: file,
            });
        }
        Err(RenderError::OutputLocked {
            path: folder.to_owned(),
            lock: path.to_owned(),
            holder: String::new(),
        })
    }
}

impl Drop for Lock {
    fn drop(&mut self) {
        // Only where `same_file` can tell a removed lock file from the one in place.
        // Closing the file (as `_file` drops, after this) releases the lock.
        #[cfg(unix)]
        let _ = std::fs::remove_file(&self.path);
    }
}

/// Takes an exclusive lock on `file` without waiting: `Ok(false)` when another process holds
/// one. flock(2) through rustix: std's `File::try_lock` needs Rust 1.89, above the workspace's
/// `rust-version`. The kernel releases the lock when its holder exits, killed or not.
#[cfg(unix)]
fn try_lock(file: &File) -> std::io::Result<bool> {
    use rustix::fs::{FlockOperation, flock};
    match flock(file, FlockOperation::NonBlockingLockExclusive) {
        Ok(()) => Ok(true),
        Err(e) if e == rustix::io::Errno::WOULDBLOCK => Ok(false),
        Err(e) => Err(e.into()),
    }
}

/// Takes an exclusive lock on `file` without waiting: `Ok(false)` when another process holds
/// one. Where flock(2) is missing, std's `File::try_lock` (Rust 1.89 or newer there).
#[cfg(not(unix))]
fn try_lock(file: &File) -> std::io::Result<bool> {
    match file.try_lock() {
        Ok(()) => Ok(true),
        Err(std::fs::TryLockError::WouldBlock) => Ok(false),
        Err(std::fs::TryLockError::Error(e)) => Err(e),
    }
}

/// Whether `path` still names the open `file`.
#[cfg(unix)]
fn same_file(file: &File, path: &Path) -> bool {
    use std::os::unix::fs::MetadataExt;
    match (file.metadata(), std::fs::metadata(path)) {
        (Ok(a), Ok(b)) => a.dev() == b.dev() && a.ino() == b.ino(),
        _ => false,
    }
}

/// Whether `path` still names the open `file` (lock files are never removed here).
#[cfg(not(unix))]
fn same_file(_file: &File, _path: &Path) -> bool {
    true
}

/// Swaps two folders atomically; `Ok(false)` when the system or file system cannot.
#[cfg(target_os = "linux")]
fn exchange(a: &Path, b: &Path) -> Result<bool, RenderError> {
    use rustix::fs::{CWD, RenameFlags, renameat_with};
    use rustix::io::Errno;
    match renameat_with(CWD, a, CWD, b, RenameFlags::EXCHANGE) {
        Ok(()) => Ok(true),
        // Kernels before 3.15 and some file systems (network ones among them) cannot.
        Err(e) if e == Errno::INVAL || e == Errno::NOSYS || e == Errno::NOTSUP => Ok(false),
        Err(e) => Err(RenderError::Io {
            action: "swap the staging folder with",
            path: b.to_owned(),
            source: e.into(),
        }),
    }
}

/// Swaps two folders atomically; `Ok(false)` when the system or file system cannot.
#[cfg(not(target_os = "linux"))]
fn exchange(_a: &Path, _b: &Path) -> Result<bool, RenderError> {
    Ok(false)
}

/// Removes `PARENT/.NAME.staging-RUNID` and `PARENT/.NAME.old-RUNID` entries. Only called with
/// the destination's lock held, so none of them belongs to a live run.
fn remove_leftovers(parent: &Path, name: &str) -> Result<Vec<PathBuf>, RenderError> {
    let staging = format!(".{name}.staging-");
    let aside = format!(".{name}.old-");
    let mut removed = Vec::new();
    for entry in std::fs::read_dir(parent).map_err(io("read folder", parent))? {
        let entry = entry.map_err(io("read folder", parent))?;
        let file_name = entry.file_name();
        let Some(n) = file_name.to_str() else {
            continue;
        };
        let run = n.strip_prefix(&staging).or_else(|| n.strip_prefix(&aside));
        if !run.is_some_and(is_run_id) {
            continue;
        }
        let path = entry.path();
        let is_dir = entry.file_type().is_ok_and(|t| t.is_dir());
        if is_dir {
            std::fs::remove_dir_all(&path)
        } else {
            std::fs::remove_file(&path)
        }
        .map_err(io("remove the leftover of an interrupted run", &path))?;
        removed.push(path);
    }
    removed.sort();
    Ok(removed)
}

/// 1 to 64 ASCII letters, digits, `-` or `_`: no dot, so that `.NAME.staging-RUNID` of one
/// destination never matches the leftovers of another whose name extends `NAME`.
fn is_run_id(s: &str) -> bool {
    (1..=64).contains(&s.len())
        && s.bytes()
            .all(|b| b.is_ascii_alphanumeric() || b == b'-' || b == b'_')
}

fn check_name(name: &str) -> Result<(), RenderError> {
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
    Ok(())
}

/// Makes the entries of a folder durable; opening a folder for sync is a Unix facility.
pub(crate) fn sync_dir(dir: &Path) -> Result<(), RenderError> {
    #[cfg(unix)]
    File::open(dir)
        .and_then(|d| d.sync_all())
        .map_err(io("flush folder", dir))?;
    #[cfg(not(unix))]
    let _ = dir;
    Ok(())
}

/// The destination as an absolute path: its longest existing part with symbolic links
/// resolved, then the missing folder names. A missing part may not be `..`.
fn resolve_destination(path: &Path) -> Result<PathBuf, RenderError> {
    let abs = std::path::absolute(path).map_err(io("resolve", path))?;
    let mut base = abs.as_path();
    let mut missing: Vec<OsString> = Vec::new();
    loop {
        match std::fs::canonicalize(base) {
            Ok(mut p) => {
                for m in missing.iter().rev() {
                    p.push(m);
                }
                return Ok(p);
            }
            Err(e) if e.kind() == std::io::ErrorKind::NotFound => {
                match (base.file_name(), base.parent()) {
                    (Some(n), Some(parent)) => {
                        missing.push(n.to_owned());
                        base = parent;
                    }
                    _ => {
                        return Err(RenderError::BadOutputPath {
                            path: path.to_owned(),
                        });
                    }
                }
            }
            Err(e) => return Err(io("resolve", base)(e)),
        }
    }
}

/// An absolute path with symbolic links resolved where the file exists.
fn resolve(p: &Path) -> PathBuf {
    if let Ok(c) = std::fs::canonicalize(p) {
        return c;
    }
    resolve_destination(p).unwrap_or_else(|_| p.to_owned())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn options(run_id: &str, force: bool) -> OutputOptions<'_> {
        OutputOptions {
            run_id,
            force,
            inputs: &[],
        }
    }

    fn names(dir: &Path) -> Vec<String> {
        let mut v: Vec<String> = std::fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().into_string().unwrap())
            .collect();
        v.sort();
        v
    }

    #[test]
    fn files_appear_only_when_the_run_is_committed_and_whole() {
        let tmp = tempfile::tempdir().unwrap();
        let out = tmp.path().join("a/b");
        let dir = OutputDir::create(&out, &options("run-1", false)).unwrap();
        assert_eq!(dir.run_id(), "run-1");
        let p = dir.write("x.txt", b"hello").unwrap();
        assert_eq!(std::fs::read(&p).unwrap(), b"hello");
        assert!(
            !out.exists(),
            "nothing at the destination before the commit"
        );
        assert_eq!(
            names(&tmp.path().join("a")),
            [".b.lock", ".b.staging-run-1"]
        );
        assert_eq!(dir.commit().unwrap(), out.canonicalize().unwrap());
        assert_eq!(names(&out), ["x.txt"], "no temporary file is left");
        assert_eq!(
            names(&tmp.path().join("a")),
            ["b"],
            "no staging folder or lock file stays beside it"
        );
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            let mode = std::fs::metadata(out.join("x.txt"))
                .unwrap()
                .permissions()
                .mode();
            assert_eq!(
                mode & 0o044,
                0o044 & !umask_guess(),
                "outputs are readable by others"
            );
            let mode = std::fs::metadata(&out).unwrap().permissions().mode();
            assert_eq!(mode & 0o055, 0o055 & !umask_guess(), "so is the folder");
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
    fn a_non_empty_folder_is_refused_unless_forced_and_then_replaced_whole() {
        let tmp = tempfile::tempdir().unwrap();
        let out = tmp.path().join("out");
        std::fs::create_dir(&out).unwrap();
        std::fs::write(out.join("old.txt"), b"old").unwrap();
        std::fs::write(out.join("x.txt"), b"before").unwrap();
        assert!(matches!(
            OutputDir::create(&out, &options("r1", false)),
            Err(RenderError::OutputNotEmpty { .. })
        ));
        assert_eq!(names(tmp.path()), ["out"], "a refusal leaves nothing");
        let dir = OutputDir::create(&out, &options("r2", true)).unwrap();
        dir.write("x.txt", b"after").unwrap();
        assert_eq!(
            std::fs::read(out.join("x.txt")).unwrap(),
            b"before",
            "the earlier run stays whole until the commit"
        );
        dir.commit().unwrap();
        assert_eq!(names(&out), ["x.txt"], "no file of the earlier run stays");
        assert_eq!(std::fs::read(out.join("x.txt")).unwrap(), b"after");
        assert_eq!(names(tmp.path()), ["out"]);
    }

    #[test]
    fn the_fallback_swap_by_two_renames_also_replaces_the_folder_whole() {
        let tmp = tempfile::tempdir().unwrap();
        let out = tmp.path().join("out");
        std::fs::create_dir(&out).unwrap();
        std::fs::write(out.join("old.txt"), b"old").unwrap();
        let mut dir = OutputDir::create(&out, &options("r", true)).unwrap();
        dir.write("new.txt", b"new").unwrap();
        // As on a system or file system that cannot exchange two folders.
        dir.commit_with(|_, _| Ok(false)).unwrap();
        drop(dir);
        assert_eq!(names(&out), ["new.txt"]);
        assert_eq!(names(tmp.path()), ["out"]);
    }

    #[cfg(target_os = "linux")]
    #[test]
    fn exchange_swaps_two_folders() {
        let tmp = tempfile::tempdir().unwrap();
        let (a, b) = (tmp.path().join("a"), tmp.path().join("b"));
        std::fs::create_dir(&a).unwrap();
        std::fs::create_dir(&b).unwrap();
        std::fs::write(a.join("in-a"), b"").unwrap();
        std::fs::write(b.join("in-b"), b"").unwrap();
        // ext4, tmpfs, btrfs and xfs support RENAME_EXCHANGE (renameat2(2)); the test folder
        // is on one of them here.
        assert!(exchange(&a, &b).unwrap());
        assert_eq!(names(&a), ["in-b"]);
        assert_eq!(names(&b), ["in-a"]);
    }

    #[test]
    fn a_run_that_is_dropped_uncommitted_leaves_the_earlier_folder_and_no_staging() {
        let tmp = tempfile::tempdir().unwrap();
        let out = tmp.path().join("out");
        std::fs::create_dir(&out).unwrap();
        std::fs::write(out.join("old.txt"), b"old").unwrap();
        let dir = OutputDir::create(&out, &options("r", true)).unwrap();
        dir.write("new.txt", b"new").unwrap();
        drop(dir);
        assert_eq!(names(&out), ["old.txt"]);
        assert_eq!(names(tmp.path()), ["out"]);
    }

    #[test]
    fn a_second_run_into_the_same_folder_is_refused_while_the_first_holds_the_lock() {
        let tmp = tempfile::tempdir().unwrap();
        let out = tmp.path().join("out");
        let first = OutputDir::create(&out, &options("first", false)).unwrap();
        let err = OutputDir::create(&out, &options("second", true)).unwrap_err();
        assert!(matches!(err, RenderError::OutputLocked { .. }), "{err}");
        let text = err.to_string();
        assert!(
            text.contains("out") && text.contains("run first") && text.contains("wait"),
            "{text}"
        );
        // The refused run did not touch the first one's staging folder.
        first.write("a.txt", b"a").unwrap();
        first.commit().unwrap();
        assert_eq!(names(&out), ["a.txt"]);
        // Released: the next run may go.
        let next = OutputDir::create(&out, &options("third", true)).unwrap();
        next.commit().unwrap();
        assert_eq!(names(&out), Vec::<String>::new());
    }

    #[test]
    fn a_removed_lock_file_is_not_trusted_and_a_fresh_one_is_taken() {
        let tmp = tempfile::tempdir().unwrap();
        let lock_path = tmp.path().join(".out.lock");
        let folder = tmp.path().join("out");
        let first = Lock::acquire(&lock_path, &folder, "a").unwrap();
        // A run that finished removed its lock file; the file this run locked is gone.
        #[cfg(unix)]
        {
            let stale = OpenOptions::new().read(true).open(&lock_path).unwrap();
            std::fs::remove_file(&lock_path).unwrap();
            assert!(!same_file(&stale, &lock_path));
        }
        drop(first);
        let second = Lock::acquire(&lock_path, &folder, "b").unwrap();
        assert!(same_file(&second._file, &lock_path));
        assert_eq!(std::fs::read_to_string(&lock_path).unwrap(), "b");
        drop(second);
        assert!(!lock_path.exists(), "the lock file is removed on release");
    }

    #[test]
    fn leftovers_of_killed_runs_are_removed_by_the_next_run() {
        let tmp = tempfile::tempdir().unwrap();
        let out = tmp.path().join("out");
        std::fs::create_dir(&out).unwrap();
        std::fs::write(out.join("old.txt"), b"old").unwrap();
        // As a killed run leaves them: a staging folder with a half-written file, a set-aside
        // folder and an unheld lock file.
        let staging = tmp.path().join(".out.staging-20260101T000000Z-17");
        std::fs::create_dir(&staging).unwrap();
        std::fs::write(staging.join(".x.txt.AbC123.partial"), b"hal").unwrap();
        std::fs::create_dir(tmp.path().join(".out.old-20260101T000000Z-17")).unwrap();
        std::fs::write(tmp.path().join(".out.lock"), b"20260101T000000Z-17").unwrap();
        // Not ours: another destination's staging folder and a file merely named alike.
        let other = tmp.path().join(".out.staging-x.staging-r1");
        std::fs::create_dir(&other).unwrap();
        std::fs::write(tmp.path().join(".out.staging-notes.txt"), b"").unwrap();

        let dir = OutputDir::create(&out, &options("next", true)).unwrap();
        assert_eq!(
            dir.removed_leftovers(),
            [
                tmp.path()
                    .canonicalize()
                    .unwrap()
                    .join(".out.old-20260101T000000Z-17"),
                tmp.path()
                    .canonicalize()
                    .unwrap()
                    .join(".out.staging-20260101T000000Z-17"),
            ]
        );
        dir.commit().unwrap();
        assert_eq!(
            names(tmp.path()),
            [".out.staging-notes.txt", ".out.staging-x.staging-r1", "out"]
        );
    }

    #[test]
    fn an_empty_existing_folder_is_accepted_without_force() {
        let tmp = tempfile::tempdir().unwrap();
        let out = tmp.path().join("empty");
        std::fs::create_dir(&out).unwrap();
        let dir = OutputDir::create(&out, &options("r", false)).unwrap();
        dir.write("a.txt", b"a").unwrap();
        dir.commit().unwrap();
        assert_eq!(names(&out), ["a.txt"]);
    }

    #[test]
    fn an_empty_folder_that_fills_up_before_the_commit_is_not_replaced_without_force() {
        let tmp = tempfile::tempdir().unwrap();
        let out = tmp.path().join("empty");
        std::fs::create_dir(&out).unwrap();
        let dir = OutputDir::create(&out, &options("r", false)).unwrap();
        std::fs::write(out.join("someone-else.txt"), b"x").unwrap();
        assert!(matches!(
            dir.commit(),
            Err(RenderError::OutputNotEmpty { .. })
        ));
        assert_eq!(names(&out), ["someone-else.txt"]);
        assert_eq!(names(tmp.path()), ["empty"]);
    }

    #[test]
    fn a_file_in_place_of_the_folder_is_refused() {
        let tmp = tempfile::tempdir().unwrap();
        let f = tmp.path().join("file");
        std::fs::write(&f, b"x").unwrap();
        assert!(matches!(
            OutputDir::create(&f, &options("r", true)),
            Err(RenderError::OutputNotAFolder { .. })
        ));
        assert_eq!(std::fs::read(&f).unwrap(), b"x");
    }

    #[test]
    fn a_destination_that_is_or_holds_an_input_is_refused_before_anything_is_written() {
        let tmp = tempfile::tempdir().unwrap();
        let case = tmp.path().join("case");
        std::fs::create_dir_all(case.join("tracks")).unwrap();
        let input = case.join("incident.toml");
        let track = case.join("tracks/t.gpx");
        std::fs::write(&input, b"input").unwrap();
        std::fs::write(&track, b"track").unwrap();
        let inputs = [input.clone(), track.clone()];
        let opts = |force| OutputOptions {
            run_id: "r",
            force,
            inputs: &inputs,
        };
        // The incident's own folder, reached through a relative detour.
        let err = OutputDir::create(&case.join("tracks/.."), &opts(true)).unwrap_err();
        assert!(matches!(err, RenderError::OutputHoldsInput { .. }), "{err}");
        assert!(err.to_string().contains("incident.toml"), "{err}");
        // A folder holding an input deeper down.
        let err = OutputDir::create(&case.join("tracks"), &opts(true)).unwrap_err();
        assert!(matches!(err, RenderError::OutputHoldsInput { .. }), "{err}");
        // Through a symbolic link to the incident's folder.
        #[cfg(unix)]
        {
            let link = tmp.path().join("link");
            std::os::unix::fs::symlink(&case, &link).unwrap();
            let err = OutputDir::create(&link, &opts(true)).unwrap_err();
            assert!(matches!(err, RenderError::OutputHoldsInput { .. }), "{err}");
            std::fs::remove_file(&link).unwrap();
        }
        // The input file itself.
        let err = OutputDir::create(&input, &opts(true)).unwrap_err();
        assert!(matches!(err, RenderError::OutputIsInput { .. }), "{err}");
        assert_eq!(std::fs::read(&input).unwrap(), b"input");
        assert_eq!(std::fs::read(&track).unwrap(), b"track");
        assert_eq!(names(tmp.path()), ["case"]);
        assert_eq!(names(&case), ["incident.toml", "tracks"]);
        // A sibling folder is fine.
        let dir = OutputDir::create(&tmp.path().join("map"), &opts(false)).unwrap();
        dir.commit().unwrap();
    }

    #[test]
    fn subfolders_are_written_with_the_unit_and_appear_with_it() {
        let tmp = tempfile::tempdir().unwrap();
        let out = tmp.path().join("demo");
        let dir = OutputDir::create(&out, &options("r", false)).unwrap();
        let sub = dir.subdir("marine").unwrap().subdir("map").unwrap();
        assert_eq!(sub.run_id(), "r");
        assert_eq!(
            sub.destination(),
            tmp.path().canonicalize().unwrap().join("demo/marine/map")
        );
        sub.write("summary.json", b"{}").unwrap();
        assert!(sub.commit().is_err(), "only the unit is committed");
        assert!(!out.exists());
        dir.commit().unwrap();
        assert_eq!(names(&out.join("marine/map")), ["summary.json"]);
    }

    #[test]
    fn names_with_folders_and_bad_run_ids_are_refused() {
        let tmp = tempfile::tempdir().unwrap();
        let dir = OutputDir::create(&tmp.path().join("o"), &options("r", false)).unwrap();
        for bad in ["", ".", "..", "../x", "a/b", "/etc/passwd"] {
            assert!(
                matches!(dir.write(bad, b""), Err(RenderError::BadFileName { .. })),
                "{bad}"
            );
            assert!(dir.subdir(bad).is_err(), "{bad}");
        }
        drop(dir);
        for bad in ["", "a.b", "a/b", "é", &"x".repeat(65)] {
            assert!(
                matches!(
                    OutputDir::create(&tmp.path().join("o"), &options(bad, false)),
                    Err(RenderError::BadRunId { .. })
                ),
                "{bad}"
            );
        }
        assert!(matches!(
            OutputDir::create(Path::new("/"), &options("r", true)),
            Err(RenderError::BadOutputPath { .. })
        ));
        assert!(matches!(
            OutputDir::create(&tmp.path().join("missing/.."), &options("r", true)),
            Err(RenderError::BadOutputPath { .. })
        ));
    }
}
