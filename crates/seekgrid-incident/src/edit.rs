//! Safe edits of an incident file: appending a completed `[[search]]`.
//!
//! The edit keeps the file as the planner wrote it: it goes through `toml_edit`, which keeps
//! every comment, blank line, key order and number as written, and adds one table after the last
//! `[[search]]` (at the end of the file when there is none yet). Before the file is replaced:
//!
//! * the whole new text is validated as the incident file it will be ([`crate::parse`] at the
//!   file's path, so referenced files resolve as they will), then by the caller's own check;
//! * a track given as a file is copied beside the incident, under `tracks/`, with a name no
//!   other file has (created exclusively), so the logged search cannot change when the original
//!   is edited or moved;
//! * the new text is written to a temporary file in the same folder and flushed to disk, the old
//!   bytes are kept as a backup `NAME.bak-STAMP` beside the file, and the file is read once more:
//!   when it is not byte for byte what was read at the start (someone else saved it meanwhile),
//!   the edit is refused;
//! * the temporary file is renamed onto the incident file (atomic on one file system) and the
//!   folder is flushed.
//!
//! On every refusal or failure the incident file is untouched and nothing is left behind: no
//! temporary file, no backup, no copied track, no `tracks/` folder this edit created.
//!
//! The only I/O is on the incident file, its folder and the track to copy; the time stamp of
//! the backup comes from the caller (this crate reads no clock).

use crate::error::IncidentError;
use crate::load::{IncidentErrors, parse};
use crate::model::{Incident, Time};
use crate::tasking::TaskedPattern;
use std::io::Write as _;
use std::path::{Path, PathBuf};
use thiserror::Error;
use toml_edit::{Array, ArrayOfTables, DocumentMut, InlineTable, Item, Table, Value};

/// The folder, beside the incident file, that copied tracks go into.
pub const TRACKS_FOLDER: &str = "tracks";

/// A completed search to append, in the terms of the incident file (docs/incident-format.md).
#[derive(Debug, Clone, PartialEq)]
pub struct NewSearch {
    /// The search's id, unique in the file.
    pub id: String,
    /// The unit that searched.
    pub unit: String,
    /// Start (UTC).
    pub start: Time,
    /// End (UTC).
    pub end: Time,
    /// Sweep width, metres (for a track, that of the line the track represents).
    pub sweep_width_m: f64,
    /// The detection law as written in the file (`"inverse-cube"`, `"exponential"`,
    /// `"definite-range"`); `None` leaves the file's default.
    pub detection: Option<String>,
    /// What was covered.
    pub geometry: NewGeometry,
    /// The share of the pattern's track flown from its start, `0 < f <= 1`; `None` for all.
    pub done_fraction: Option<f64>,
    /// The run id of the plan the search was tasked in.
    pub tasked_in: Option<String>,
    /// Free text.
    pub note: Option<String>,
    /// A comment line put above the table (without the `# `), e.g. where the search came from.
    pub comment: Option<String>,
}

/// What a new search covered.
#[derive(Debug, Clone, PartialEq)]
pub enum NewGeometry {
    /// The tasked pattern, written as the `pattern` inline table.
    Pattern(TaskedPattern),
    /// The track followed, in a GPX or GeoJSON file anywhere: copied under `tracks/` beside the
    /// incident, and the copy named in `track`.
    CopyTrack(PathBuf),
}

/// Why an edit was refused or failed. [`EditError::is_bad_input`] tells the two apart.
#[derive(Debug, Error)]
#[non_exhaustive]
pub enum EditError {
    /// The file as it is is not a valid incident file.
    #[error("{0}")]
    Invalid(IncidentErrors),
    /// The file with the new search would not be a valid incident file; positions refer to
    /// the text as it would be.
    #[error(
        "the search to log is not valid, nothing was written (lines refer to the file with the search added at its end or after the last [[search]]):\n{0}"
    )]
    WouldBeInvalid(IncidentErrors),
    /// The edit is refused for a reason stated in full (e.g. by the caller's check).
    #[error("{path}: {message}")]
    Refused {
        /// The incident file.
        path: PathBuf,
        /// What is wrong and how to fix it.
        message: String,
    },
    /// The file changed on disk between the read and the write.
    #[error(
        "{path}: the file changed while the search was being logged (saved by someone or something else); nothing was written: check the file and log again"
    )]
    Changed {
        /// The incident file.
        path: PathBuf,
    },
    /// The file or its folder is read-only.
    #[error(
        "{path}: the {what} is read-only; make it writable (e.g. chmod u+w) to log searches into the incident file, or work on a copy"
    )]
    ReadOnly {
        /// The read-only file or folder.
        path: PathBuf,
        /// `"file"` or `"folder"`.
        what: &'static str,
    },
    /// A file system operation failed.
    #[error("{path}: cannot {action}: {source}")]
    Io {
        /// What was being done.
        action: &'static str,
        /// On which path.
        path: PathBuf,
        /// The system's error.
        source: std::io::Error,
    },
}

impl EditError {
    /// True for problems with the input (a wrong value, a file changed underneath: exit code 2),
    /// false for failures of the environment (read-only file or folder, I/O: exit code 1).
    #[must_use]
    pub fn is_bad_input(&self) -> bool {
        matches!(
            self,
            Self::Invalid(_)
                | Self::WouldBeInvalid(_)
                | Self::Refused { .. }
                | Self::Changed { .. }
        )
    }
}

impl From<IncidentErrors> for EditError {
    fn from(e: IncidentErrors) -> Self {
        Self::Invalid(e)
    }
}

impl From<IncidentError> for EditError {
    fn from(e: IncidentError) -> Self {
        Self::Invalid(e.into())
    }
}

/// What a successful edit did.
#[derive(Debug, Clone)]
pub struct Logged {
    /// The incident file as it is now.
    pub incident: Incident,
    /// The backup of the file as it was.
    pub backup: PathBuf,
    /// The copied track, when the search has one.
    pub track: Option<PathBuf>,
}

/// Options of [`IncidentFile::append_search`].
pub struct EditOptions<'a> {
    /// Time stamp of the backup's name, `YYYYMMDDTHHMMSSZ` (the caller's clock).
    pub backup_stamp: &'a str,
    /// A further check of the incident as it will be (e.g. that the search touches the
    /// incident's area); `Err(message)` refuses the edit with that message.
    pub check: &'a dyn Fn(&Incident) -> Result<(), String>,
    /// Called after everything is ready and just before the file is compared with what was read
    /// and replaced. For tests, which simulate a concurrent change by editing the file here;
    /// pass `&mut || {}` otherwise.
    pub before_commit: &'a mut dyn FnMut(),
}

/// An incident file read and validated, ready to be edited.
#[derive(Debug, Clone)]
pub struct IncidentFile {
    path: PathBuf,
    bytes: Vec<u8>,
    text: String,
    incident: Incident,
}

impl IncidentFile {
    /// Reads and validates the incident file at `path` (a symbolic link is followed: its
    /// target is what gets edited).
    ///
    /// # Errors
    /// [`EditError::Invalid`] when it cannot be read or is not a valid incident file (each
    /// problem at its line and column).
    pub fn open(path: &Path) -> Result<Self, EditError> {
        let real = std::fs::canonicalize(path).unwrap_or_else(|_| path.to_owned());
        let bytes = std::fs::read(&real).map_err(|e| {
            IncidentError::whole_file(
                crate::ErrorKind::Unreadable,
                path,
                format!("cannot read the incident file: {e}; check the path"),
            )
        })?;
        let text = String::from_utf8(bytes.clone()).map_err(|_| {
            IncidentError::whole_file(
                crate::ErrorKind::Unreadable,
                path,
                "the incident file is not UTF-8 text; save it as UTF-8",
            )
        })?;
        // Errors name the path as the user gave it; the edit works on the real file.
        let incident = parse(path, text.clone())?;
        Ok(Self {
            path: real,
            bytes,
            text,
            incident,
        })
    }

    /// The incident as read.
    #[must_use]
    pub fn incident(&self) -> &Incident {
        &self.incident
    }

    /// The file's text as read.
    #[must_use]
    pub fn text(&self) -> &str {
        &self.text
    }

    /// The incident file (symbolic links resolved).
    #[must_use]
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Appends `search` as a new `[[search]]` and replaces the file safely (see the module
    /// documentation for the steps).
    ///
    /// # Errors
    /// [`EditError::ReadOnly`] for a read-only file or folder; [`EditError::WouldBeInvalid`]
    /// when the new text is not a valid incident file; [`EditError::Invalid`] when the track to
    /// copy cannot be read; [`EditError::Refused`] when `options.check`
    /// refuses or the file's `search` key cannot take another table; [`EditError::Changed`]
    /// when the file changed on disk since [`IncidentFile::open`]; [`EditError::Io`] when a file
    /// cannot be written or renamed. In every case the file is untouched and nothing is left.
    pub fn append_search(
        &self,
        search: &NewSearch,
        options: EditOptions<'_>,
    ) -> Result<Logged, EditError> {
        let folder = match self.path.parent() {
            Some(p) if !p.as_os_str().is_empty() => p.to_owned(),
            _ => PathBuf::from("."),
        };
        writable(&self.path, "file")?;
        writable(&folder, "folder")?;

        let mut undo = Undo::default();
        let (track_rel, track) = match &search.geometry {
            NewGeometry::CopyTrack(source) => {
                let copy = copy_track(source, &folder, &search.id, &mut undo)?;
                let name = copy
                    .file_name()
                    .map(|n| n.to_string_lossy().into_owned())
                    .unwrap_or_default();
                (Some(format!("{TRACKS_FOLDER}/{name}")), Some(copy))
            }
            NewGeometry::Pattern(_) => (None, None),
        };
        let new_text = with_search(&self.text, search, track_rel.as_deref())
            .map_err(|message| self.refused(message))?;
        let incident = parse(&self.path, new_text.clone()).map_err(EditError::WouldBeInvalid)?;
        (options.check)(&incident).map_err(|message| self.refused(message))?;

        let io = |action: &'static str, path: &Path| {
            let path = path.to_owned();
            move |source| EditError::Io {
                action,
                path,
                source,
            }
        };
        let file_name = self
            .path
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_else(|| "incident.toml".into());
        let permissions = std::fs::metadata(&self.path)
            .map_err(io("read the permissions of", &self.path))?
            .permissions();
        let mut tmp = tempfile::Builder::new()
            .prefix(&format!(".{file_name}."))
            .suffix(".partial")
            .tempfile_in(&folder)
            .map_err(io("create a temporary file in", &folder))?;
        tmp.write_all(new_text.as_bytes())
            .map_err(io("write", tmp.path()))?;
        tmp.as_file()
            .set_permissions(permissions)
            .map_err(io("set the permissions of", tmp.path()))?;
        tmp.as_file().sync_all().map_err(io("flush", tmp.path()))?;

        let backup = write_new_file(
            &folder,
            &format!("{file_name}.bak-{}", options.backup_stamp),
            "",
            &self.bytes,
            &mut undo,
        )?;

        (options.before_commit)();
        let now = std::fs::read(&self.path).map_err(io("read again", &self.path))?;
        if now != self.bytes {
            return Err(EditError::Changed {
                path: self.path.clone(),
            });
        }
        tmp.persist(&self.path).map_err(|e| EditError::Io {
            action: "rename the temporary file onto",
            path: self.path.clone(),
            source: e.error,
        })?;
        sync_folder(&folder);
        undo.disarm();
        Ok(Logged {
            incident,
            backup,
            track,
        })
    }

    fn refused(&self, message: String) -> EditError {
        EditError::Refused {
            path: self.path.clone(),
            message,
        }
    }
}

/// Refuses a read-only file or folder up front: renaming onto a read-only file would succeed
/// on Unix, and a privileged user writes into read-only folders, but read-only says "leave it".
fn writable(path: &Path, what: &'static str) -> Result<(), EditError> {
    let meta = std::fs::metadata(path).map_err(|source| EditError::Io {
        action: "read the permissions of",
        path: path.to_owned(),
        source,
    })?;
    if meta.permissions().readonly() {
        return Err(EditError::ReadOnly {
            path: path.to_owned(),
            what,
        });
    }
    Ok(())
}

/// Flushes a folder so that a rename in it is durable (a Unix facility; best effort).
fn sync_folder(folder: &Path) {
    #[cfg(unix)]
    if let Ok(d) = std::fs::File::open(folder) {
        let _ = d.sync_all();
    }
    #[cfg(not(unix))]
    let _ = folder;
}

/// Files and folders an edit created, removed unless the edit succeeds.
#[derive(Default)]
struct Undo {
    files: Vec<PathBuf>,
    folder: Option<PathBuf>,
}

impl Undo {
    fn disarm(&mut self) {
        self.files.clear();
        self.folder = None;
    }
}

impl Drop for Undo {
    fn drop(&mut self) {
        for f in &self.files {
            let _ = std::fs::remove_file(f);
        }
        if let Some(d) = &self.folder {
            // Only when empty: never a folder that holds anything else.
            let _ = std::fs::remove_dir(d);
        }
    }
}

/// Writes `bytes` as a new file `stem[-k]suffix` in `folder`, never replacing an existing file
/// (the temporary file is linked in place exclusively), flushed to disk. Returns its path.
fn write_new_file(
    folder: &Path,
    stem: &str,
    suffix: &str,
    bytes: &[u8],
    undo: &mut Undo,
) -> Result<PathBuf, EditError> {
    let io = |action: &'static str, path: &Path| {
        let path = path.to_owned();
        move |source| EditError::Io {
            action,
            path,
            source,
        }
    };
    let mut tmp = tempfile::Builder::new()
        .prefix(&format!(".{stem}."))
        .suffix(".partial")
        .tempfile_in(folder)
        .map_err(io("create a temporary file in", folder))?;
    tmp.write_all(bytes).map_err(io("write", tmp.path()))?;
    tmp.as_file().sync_all().map_err(io("flush", tmp.path()))?;
    let mut k = 1;
    loop {
        let name = if k == 1 {
            format!("{stem}{suffix}")
        } else {
            format!("{stem}-{k}{suffix}")
        };
        let target = folder.join(&name);
        match tmp.persist_noclobber(&target) {
            Ok(_) => {
                undo.files.push(target.clone());
                sync_folder(folder);
                return Ok(target);
            }
            Err(e) if e.error.kind() == std::io::ErrorKind::AlreadyExists && k < 1000 => {
                tmp = e.file;
                k += 1;
            }
            Err(e) => {
                return Err(EditError::Io {
                    action: "create",
                    path: target,
                    source: e.error,
                });
            }
        }
    }
}

/// Copies the track `source` into `folder/tracks/`, named after the search (letters, digits,
/// `-`, `_` and `.` kept, anything else as `_`) with the source's extension, and a `-2`, `-3`…
/// suffix when that name is taken.
fn copy_track(
    source: &Path,
    folder: &Path,
    search_id: &str,
    undo: &mut Undo,
) -> Result<PathBuf, EditError> {
    let bytes = std::fs::read(source).map_err(|e| {
        EditError::from(IncidentError::whole_file(
            crate::ErrorKind::Unreadable,
            source,
            format!("cannot read the track: {e}; check the path"),
        ))
    })?;
    let tracks = folder.join(TRACKS_FOLDER);
    if !tracks.is_dir() {
        std::fs::create_dir(&tracks).map_err(|source| EditError::Io {
            action: "create the folder",
            path: tracks.clone(),
            source,
        })?;
        undo.folder = Some(tracks.clone());
    } else {
        writable(&tracks, "folder")?;
    }
    let ext = source
        .extension()
        .map(|e| format!(".{}", e.to_string_lossy().to_ascii_lowercase()))
        .unwrap_or_default();
    let mut stem: String = search_id
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || matches!(c, '-' | '_' | '.') {
                c
            } else {
                '_'
            }
        })
        .collect();
    if stem.trim_matches('.').is_empty() {
        stem = "track".into();
    }
    write_new_file(&tracks, &stem, &ext, &bytes, undo)
}

/// The incident text with `search` appended as a new `[[search]]` after the last one (at the
/// end when there is none), every other byte as it was. `track` is the relative path written
/// for a [`NewGeometry::CopyTrack`] search.
///
/// # Errors
/// A message when the text is not TOML or its `search` key is not an array of tables.
pub fn with_search(text: &str, search: &NewSearch, track: Option<&str>) -> Result<String, String> {
    let mut doc: DocumentMut = text
        .parse()
        .map_err(|e| format!("the file is not valid TOML: {e}"))?;
    let table = search_table(search, track)?;
    match doc.get_mut("search") {
        None => {
            let mut a = ArrayOfTables::new();
            a.push(table);
            doc.insert("search", Item::ArrayOfTables(a));
        }
        Some(Item::ArrayOfTables(a)) => a.push(table),
        Some(_) => {
            return Err("`search` is not written as [[search]] tables; write each completed search as its own [[search]] table to log more".into());
        }
    }
    let mut out = doc.to_string();
    if !out.ends_with('\n') {
        out.push('\n');
    }
    Ok(out)
}

fn time_text(t: Time) -> String {
    t.to_rfc3339_opts(chrono::SecondsFormat::AutoSi, true)
}

fn finite(v: f64, what: &str) -> Result<f64, String> {
    if v.is_finite() {
        Ok(v)
    } else {
        Err(format!("{what} must be a finite number, got {v}"))
    }
}

fn search_table(s: &NewSearch, track: Option<&str>) -> Result<Table, String> {
    let mut t = Table::new();
    let prefix = match &s.comment {
        Some(c) => format!("\n# {}\n", c.replace('\n', " ")),
        None => "\n".into(),
    };
    t.decor_mut().set_prefix(prefix);
    t.insert("id", toml_edit::value(s.id.as_str()));
    t.insert("unit", toml_edit::value(s.unit.as_str()));
    t.insert("start", toml_edit::value(time_text(s.start)));
    t.insert("end", toml_edit::value(time_text(s.end)));
    t.insert(
        "sweep_width_m",
        toml_edit::value(finite(s.sweep_width_m, "sweep_width_m")?),
    );
    if let Some(d) = &s.detection {
        t.insert("detection", toml_edit::value(d.as_str()));
    }
    match (&s.geometry, track) {
        (NewGeometry::Pattern(p), _) => {
            t.insert("pattern", toml_edit::value(pattern_table(p)?));
        }
        (NewGeometry::CopyTrack(_), Some(rel)) => {
            t.insert("track", toml_edit::value(rel));
        }
        (NewGeometry::CopyTrack(_), None) => {
            return Err("internal: a copied track has no path".into());
        }
    }
    if let Some(f) = s.done_fraction {
        t.insert(
            "done_fraction",
            toml_edit::value(finite(f, "done_fraction")?),
        );
    }
    if let Some(r) = &s.tasked_in {
        t.insert("tasked_in", toml_edit::value(r.as_str()));
    }
    if let Some(n) = &s.note {
        t.insert("note", toml_edit::value(n.as_str()));
    }
    Ok(t)
}

fn pattern_table(p: &TaskedPattern) -> Result<InlineTable, String> {
    let mut t = InlineTable::new();
    t.insert("kind", Value::from(p.kind.as_str()));
    let mut center = Array::new();
    center.push(finite(p.center[0], "the pattern's centre longitude")?);
    center.push(finite(p.center[1], "the pattern's centre latitude")?);
    t.insert("center", Value::Array(center));
    let numbers = [
        ("length_m", p.length_m),
        ("width_m", p.width_m),
        ("major_bearing_deg", p.major_bearing_deg),
        ("track_spacing_m", p.track_spacing_m),
    ];
    for (k, v) in numbers {
        if let Some(v) = v {
            t.insert(k, Value::from(finite(v, k)?));
        }
    }
    if let Some(n) = p.legs {
        t.insert("legs", Value::from(count(n)?));
    }
    if let Some(v) = p.radius_m {
        t.insert("radius_m", Value::from(finite(v, "radius_m")?));
    }
    if let Some(v) = p.first_leg_bearing_deg {
        t.insert(
            "first_leg_bearing_deg",
            Value::from(finite(v, "first_leg_bearing_deg")?),
        );
    }
    if let Some(n) = p.sectors {
        t.insert("sectors", Value::from(count(n)?));
    }
    t.fmt();
    Ok(t)
}

fn count(n: usize) -> Result<i64, String> {
    i64::try_from(n).map_err(|_| format!("{n} is too large a count"))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{PatternDef, SearchGeometry};

    /// An invented incident with comments everywhere a planner puts them.
    const FILE: &str = r#"# INVENTED TEST INCIDENT for the editor's tests.
# Second header line.

[incident]
title = "Editor test (invented)"   # trailing comment
reference_time = "2026-03-10T08:00:00Z"

[grid]
cell_m = 250
bounds = { west = -35.08, south = 27.95, east = -34.92, north = 28.05 }

[[analyst]]
id = "desk"

[[scenario]]
id = "reported"
analyst = "desk"
kind = "point"
position = [-35.0, 28.0]
sigma_m = 1000     # from the caller's GPS

# The first search, logged by hand.
[[search]]
id = "boat-1-sweep"
unit = "boat-1"
start = "2026-03-10T09:00:00Z"
end = "2026-03-10T10:30:00Z"
sweep_width_m = 800            # invented
pattern = { kind = "parallel-sweep", center = [-35.0, 28.0], length_m = 6000, width_m = 3000, major_bearing_deg = 70, track_spacing_m = 750 }
# A comment after the last search's keys.

# Units for the next period.
[[unit]]
id = "boat-1"
speed_kn = 10
hours_on_scene = 3
sweep_width_m = 800            # invented
"#;

    /// A GPX track with times (invented).
    const GPX: &str = r#"<?xml version="1.0" encoding="UTF-8"?>
<gpx version="1.1" creator="invented" xmlns="http://www.topografix.com/GPX/1/1">
 <trk><trkseg>
   <trkpt lat="27.985" lon="-35.030"><time>2026-03-10T10:00:00Z</time></trkpt>
   <trkpt lat="27.985" lon="-34.990"><time>2026-03-10T10:12:00Z</time></trkpt>
 </trkseg></trk>
</gpx>
"#;

    fn t(s: &str) -> Time {
        s.parse().unwrap()
    }

    fn pattern_search() -> NewSearch {
        NewSearch {
            id: "boat-1-second".into(),
            unit: "boat-1".into(),
            start: t("2026-03-10T11:00:00Z"),
            end: t("2026-03-10T13:30:00Z"),
            sweep_width_m: 800.0,
            detection: Some("inverse-cube".into()),
            geometry: NewGeometry::Pattern(TaskedPattern {
                kind: "parallel-sweep".into(),
                center: [-35.012_345_678_901_23, 28.000_000_000_000_004],
                length_m: Some(6_309.876_543_210_987),
                width_m: Some(3_271.000_000_000_001),
                major_bearing_deg: Some(256.499_999_999_999_94),
                track_spacing_m: Some(1_192.999_999_999_999_8),
                legs: None,
                radius_m: None,
                first_leg_bearing_deg: None,
                sectors: None,
            }),
            done_fraction: None,
            tasked_in: None,
            note: Some("as planned".into()),
            comment: Some("logged by a test".into()),
        }
    }

    fn track_search(source: &Path) -> NewSearch {
        NewSearch {
            id: "boat 2/track".into(),
            unit: "boat-2".into(),
            start: t("2026-03-10T10:00:00Z"),
            end: t("2026-03-10T10:12:00Z"),
            sweep_width_m: 600.0,
            detection: None,
            geometry: NewGeometry::CopyTrack(source.to_owned()),
            done_fraction: None,
            tasked_in: None,
            note: None,
            comment: None,
        }
    }

    fn setup(text: &str) -> (tempfile::TempDir, PathBuf) {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("incident.toml");
        std::fs::write(&path, text).unwrap();
        (dir, path)
    }

    fn names(dir: &Path) -> Vec<String> {
        let mut v: Vec<String> = std::fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        v.sort();
        v
    }

    fn no_check(_: &Incident) -> Result<(), String> {
        Ok(())
    }

    fn append(
        file: &IncidentFile,
        search: &NewSearch,
        check: &dyn Fn(&Incident) -> Result<(), String>,
        hook: &mut dyn FnMut(),
    ) -> Result<Logged, EditError> {
        file.append_search(
            search,
            EditOptions {
                backup_stamp: "20260310T113000Z",
                check,
                before_commit: hook,
            },
        )
    }

    #[test]
    fn the_new_search_is_inserted_after_the_last_search_and_every_old_byte_is_kept() {
        let new = with_search(FILE, &pattern_search(), None).unwrap();
        // The block starts with the blank line before its comment.
        let at = 1 + new
            .find("\n\n# logged by a test\n")
            .expect("the comment line is written");
        let last_line = "note = \"as planned\"\n";
        let block_end = at + new[at..].find(last_line).unwrap() + last_line.len();
        let (before, block, after) = (&new[..at], &new[at..block_end], &new[block_end..]);
        assert_eq!(format!("{before}{after}"), FILE, "new text:\n{new}");
        // After the last search's keys; the comments above the next table stay with it.
        assert!(before.ends_with("track_spacing_m = 750 }\n"), "{before}");
        assert!(
            after.starts_with("# A comment after the last search's keys.\n\n# Units"),
            "{after}"
        );
        assert!(
            block.contains("\n[[search]]\nid = \"boat-1-second\"\n"),
            "{block}"
        );
    }

    #[test]
    fn the_first_search_goes_at_the_end_even_without_a_final_newline() {
        let start = FILE.find("# The first search").unwrap();
        let end = FILE.find("\n# Units").unwrap();
        let without = format!("{}{}", &FILE[..start], &FILE[end + 1..]);
        let trimmed = without.trim_end_matches('\n');
        let new = with_search(trimmed, &pattern_search(), None).unwrap();
        assert!(new.starts_with(trimmed), "{new}");
        assert!(
            new[trimmed.len()..].starts_with("\n\n# logged by a test\n[[search]]\n"),
            "{new}"
        );
        assert!(new.ends_with('\n'));
        parse(Path::new("incident.toml"), new).unwrap();
    }

    #[test]
    fn the_pattern_reads_back_bit_for_bit() {
        let s = pattern_search();
        let new = with_search(FILE, &s, None).unwrap();
        let incident = parse(Path::new("incident.toml"), new).unwrap();
        let got = incident.searches.last().unwrap();
        let NewGeometry::Pattern(want) = &s.geometry else {
            unreachable!()
        };
        let SearchGeometry::Pattern(PatternDef::ParallelSweep(r)) = &got.geometry else {
            panic!("not a parallel sweep: {got:?}");
        };
        assert_eq!(r.center[0].to_bits(), want.center[0].to_bits());
        assert_eq!(r.center[1].to_bits(), want.center[1].to_bits());
        assert_eq!(r.length_m.to_bits(), want.length_m.unwrap().to_bits());
        assert_eq!(r.width_m.to_bits(), want.width_m.unwrap().to_bits());
        assert_eq!(
            r.major_bearing_deg.to_bits(),
            want.major_bearing_deg.unwrap().to_bits()
        );
        assert_eq!(
            r.track_spacing_m.to_bits(),
            want.track_spacing_m.unwrap().to_bits()
        );
        assert_eq!((got.start, got.end), (s.start, s.end));
    }

    #[test]
    fn a_search_key_written_as_an_inline_array_is_refused_with_the_fix() {
        let start = FILE.find("# The first search").unwrap();
        let end = FILE.find("# A comment after").unwrap();
        let text = format!("search = []\n{}{}", &FILE[..start], &FILE[end..]);
        let e = with_search(&text, &pattern_search(), None).unwrap_err();
        assert!(e.contains("[[search]] tables"), "{e}");
    }

    #[test]
    fn a_logged_search_replaces_the_file_and_keeps_a_backup_of_the_old_one() {
        let (dir, path) = setup(FILE);
        let file = IncidentFile::open(&path).unwrap();
        let logged = append(&file, &pattern_search(), &no_check, &mut || {}).unwrap();
        assert_eq!(std::fs::read_to_string(&logged.backup).unwrap(), FILE);
        assert_eq!(
            logged.backup.file_name().unwrap(),
            "incident.toml.bak-20260310T113000Z"
        );
        let now = std::fs::read_to_string(&path).unwrap();
        assert_eq!(now, with_search(FILE, &pattern_search(), None).unwrap());
        assert_eq!(logged.incident.searches.len(), 2);
        assert_eq!(
            names(dir.path()),
            ["incident.toml", "incident.toml.bak-20260310T113000Z"]
        );
        // A second log in the same second keeps both backups.
        let file = IncidentFile::open(&path).unwrap();
        let mut s = pattern_search();
        s.id = "boat-1-third".into();
        let second = append(&file, &s, &no_check, &mut || {}).unwrap();
        assert_eq!(
            second.backup.file_name().unwrap(),
            "incident.toml.bak-20260310T113000Z-2"
        );
        assert_eq!(std::fs::read_to_string(&second.backup).unwrap(), now);
    }

    #[test]
    fn a_track_is_copied_under_tracks_with_a_name_that_takes_nothing_over() {
        let (dir, path) = setup(FILE);
        let source_dir = tempfile::tempdir().unwrap();
        let source = source_dir.path().join("Recorded Track.GPX");
        std::fs::write(&source, GPX).unwrap();
        // A file already holding the name the copy would take.
        std::fs::create_dir(dir.path().join("tracks")).unwrap();
        std::fs::write(dir.path().join("tracks/boat_2_track.gpx"), "older").unwrap();
        let file = IncidentFile::open(&path).unwrap();
        let logged = append(&file, &track_search(&source), &no_check, &mut || {}).unwrap();
        let copy = logged.track.unwrap();
        assert_eq!(copy, dir.path().join("tracks/boat_2_track-2.gpx"));
        assert_eq!(std::fs::read_to_string(&copy).unwrap(), GPX);
        assert_eq!(
            std::fs::read_to_string(dir.path().join("tracks/boat_2_track.gpx")).unwrap(),
            "older"
        );
        assert!(
            std::fs::read_to_string(&path)
                .unwrap()
                .contains("track = \"tracks/boat_2_track-2.gpx\"\n")
        );
        // The search reads the copy: changing the original changes nothing.
        std::fs::write(&source, "not a track any more").unwrap();
        let again = crate::load(&path).unwrap();
        assert!(matches!(
            again.searches[1].geometry,
            SearchGeometry::Track { .. }
        ));
    }

    /// The folder holds exactly the incident file with its old text: nothing was written.
    fn untouched(dir: &Path, path: &Path, text: &str) {
        assert_eq!(std::fs::read_to_string(path).unwrap(), text);
        assert_eq!(names(dir), ["incident.toml"], "files left behind");
    }

    #[test]
    fn a_change_made_meanwhile_is_detected_and_nothing_is_left() {
        let (dir, path) = setup(FILE);
        let source_dir = tempfile::tempdir().unwrap();
        let source = source_dir.path().join("track.gpx");
        std::fs::write(&source, GPX).unwrap();
        let file = IncidentFile::open(&path).unwrap();
        let theirs = format!("{FILE}# saved by someone else\n");
        let mut hook = || std::fs::write(&path, &theirs).unwrap();
        let e = append(&file, &track_search(&source), &no_check, &mut hook).unwrap_err();
        assert!(matches!(e, EditError::Changed { .. }), "{e}");
        assert!(e.is_bad_input());
        assert!(e.to_string().contains("changed while"), "{e}");
        untouched(dir.path(), &path, &theirs);
    }

    #[test]
    fn an_invalid_new_search_is_refused_at_its_line_and_nothing_is_left() {
        let (dir, path) = setup(FILE);
        let file = IncidentFile::open(&path).unwrap();
        let mut s = pattern_search();
        s.sweep_width_m = -5.0;
        let e = append(&file, &s, &no_check, &mut || {}).unwrap_err();
        assert!(
            matches!(e, EditError::WouldBeInvalid(_)) && e.is_bad_input(),
            "{e}"
        );
        assert!(
            e.to_string().contains("sweep_width_m")
                && e.to_string().contains("positive number of metres"),
            "{e}"
        );
        untouched(dir.path(), &path, FILE);
        // A duplicate id too, and a copied track is taken back with its new folder.
        let source_dir = tempfile::tempdir().unwrap();
        let source = source_dir.path().join("track.gpx");
        std::fs::write(&source, GPX).unwrap();
        let mut s = track_search(&source);
        s.id = "boat-1-sweep".into();
        let e = append(&file, &s, &no_check, &mut || {}).unwrap_err();
        assert!(e.to_string().contains("used twice"), "{e}");
        untouched(dir.path(), &path, FILE);
    }

    #[test]
    fn the_callers_check_can_refuse_and_nothing_is_left() {
        let (dir, path) = setup(FILE);
        let source_dir = tempfile::tempdir().unwrap();
        let source = source_dir.path().join("track.geojson");
        std::fs::write(
            &source,
            r#"{"type": "LineString", "coordinates": [[-35.03, 27.985], [-34.99, 27.985]]}"#,
        )
        .unwrap();
        let file = IncidentFile::open(&path).unwrap();
        let check = |i: &Incident| -> Result<(), String> {
            assert_eq!(i.searches.len(), 2, "the check sees the new search");
            Err("the track is wholly outside the grid".into())
        };
        let e = append(&file, &track_search(&source), &check, &mut || {}).unwrap_err();
        assert!(matches!(e, EditError::Refused { .. }) && e.is_bad_input());
        assert!(
            e.to_string()
                .ends_with("the track is wholly outside the grid"),
            "{e}"
        );
        untouched(dir.path(), &path, FILE);
    }

    #[cfg(unix)]
    #[test]
    fn a_read_only_file_or_folder_is_refused_as_an_environment_failure() {
        use std::os::unix::fs::PermissionsExt;
        let (dir, path) = setup(FILE);
        let file = IncidentFile::open(&path).unwrap();
        std::fs::set_permissions(&path, std::fs::Permissions::from_mode(0o444)).unwrap();
        let e = append(&file, &pattern_search(), &no_check, &mut || {}).unwrap_err();
        assert!(matches!(e, EditError::ReadOnly { what: "file", .. }), "{e}");
        assert!(!e.is_bad_input());
        assert!(e.to_string().contains("read-only; make it writable"), "{e}");
        untouched(dir.path(), &path, FILE);

        std::fs::set_permissions(&path, std::fs::Permissions::from_mode(0o644)).unwrap();
        std::fs::set_permissions(dir.path(), std::fs::Permissions::from_mode(0o555)).unwrap();
        let e = append(&file, &pattern_search(), &no_check, &mut || {}).unwrap_err();
        std::fs::set_permissions(dir.path(), std::fs::Permissions::from_mode(0o755)).unwrap();
        assert!(
            matches!(e, EditError::ReadOnly { what: "folder", .. }),
            "{e}"
        );
        untouched(dir.path(), &path, FILE);
    }

    #[test]
    fn opening_an_invalid_file_reports_it_at_its_line() {
        let (_dir, path) = setup(&FILE.replace("cell_m = 250", "cell_m = -1"));
        let e = IncidentFile::open(&path).unwrap_err();
        assert!(matches!(e, EditError::Invalid(_)), "{e}");
        assert!(e.to_string().contains("incident.toml:9:"), "{e}");
    }
}
