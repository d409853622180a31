//! Reading one input file with guards: the incident file and every file it names go through
//! [`read_text`] (or [`read_bytes`] for GPX, whose XML may declare its own encoding).
//!
//! * Only a regular file is opened. A named pipe (FIFO) would block the reader until something
//!   writes to it, and a device such as `/dev/zero` never ends; both are refused, as are
//!   directories and sockets, before the file is opened.
//! * At most the limit of its kind is read ([`InputKind::max_bytes`]): 16 MiB for the incident
//!   file, 256 MiB for geometry (GeoJSON, GPX) and for CSV. The size the file system reports is
//!   checked first, and the read itself stops one byte past the limit, so a file that grows while
//!   it is read, or one whose reported size is 0 (as under `/proc`), is refused as well.
//! * A UTF-8 byte-order mark at the start is dropped (spreadsheet and some GIS programs write one).
//! * Text that is not UTF-8 is refused with the line and column of the first bad byte; a file
//!   that starts with a UTF-16 byte-order mark is named as UTF-16.

use crate::error::{ErrorKind, IncidentError};
use std::io::Read;
use std::path::Path;

/// The largest incident file read, bytes (16 MiB). A real incident file is a few kilobytes;
/// the limit only keeps a wrong path from filling the memory.
pub const INCIDENT_MAX_BYTES: u64 = 16 * 1024 * 1024;

/// The largest geometry file read (GeoJSON polygons, segments and tracks; GPX tracks), bytes
/// (256 MiB). Parsing takes several times the file's size in memory.
pub const GEOMETRY_MAX_BYTES: u64 = 256 * 1024 * 1024;

/// The largest CSV file read (series and fields of current or wind), bytes (256 MiB).
pub const CSV_MAX_BYTES: u64 = 256 * 1024 * 1024;

/// The largest forecast file read (NetCDF or GRIB2 wind or current), bytes (1 GiB). The whole
/// file is read into memory; cut a larger forecast to the area and hours of the incident
/// (`ncks -d`, `cdo sellonlatbox`, `grib_copy -w`) first.
pub const FORECAST_MAX_BYTES: u64 = 1024 * 1024 * 1024;

/// The UTF-8 encoding of U+FEFF, the byte-order mark.
const UTF8_BOM: &[u8] = b"\xEF\xBB\xBF";

/// What an input file holds: decides its size limit and how messages name it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum InputKind {
    /// The incident file (TOML); limit [`INCIDENT_MAX_BYTES`].
    Incident,
    /// A GeoJSON polygon file (an area scenario or the coastline); limit [`GEOMETRY_MAX_BYTES`].
    Polygons,
    /// A GeoJSON segments file; limit [`GEOMETRY_MAX_BYTES`].
    Segments,
    /// A GPX or GeoJSON track; limit [`GEOMETRY_MAX_BYTES`].
    Track,
    /// A CSV time series of current or wind; limit [`CSV_MAX_BYTES`].
    Series,
    /// A CSV gridded field of current or wind; limit [`CSV_MAX_BYTES`].
    Field,
    /// A NetCDF or GRIB2 forecast file of current or wind; limit [`FORECAST_MAX_BYTES`].
    Forecast,
}

impl InputKind {
    /// The most bytes read from a file of this kind.
    #[must_use]
    pub const fn max_bytes(self) -> u64 {
        match self {
            Self::Incident => INCIDENT_MAX_BYTES,
            Self::Polygons | Self::Segments | Self::Track => GEOMETRY_MAX_BYTES,
            Self::Series | Self::Field => CSV_MAX_BYTES,
            Self::Forecast => FORECAST_MAX_BYTES,
        }
    }

    /// How messages name a file of this kind ("track", "series CSV", ...).
    #[must_use]
    pub const fn name(self) -> &'static str {
        match self {
            Self::Incident => "incident file",
            Self::Polygons => "polygon file",
            Self::Segments => "segments file",
            Self::Track => "track",
            Self::Series => "series CSV",
            Self::Field => "field CSV",
            Self::Forecast => "forecast file",
        }
    }

    /// Where to look when the path is wrong.
    const fn path_hint(self) -> &'static str {
        match self {
            Self::Incident => "check the path",
            _ => "paths are relative to the incident file",
        }
    }

    /// What to do about a file over the limit.
    const fn size_hint(self) -> &'static str {
        match self {
            Self::Incident => {
                "an incident file is a few kilobytes; check that the path names the incident file"
            }
            Self::Polygons | Self::Segments => {
                "simplify the polygons or clip them to the search area"
            }
            Self::Track => "thin the track points or split the track",
            Self::Series | Self::Field => {
                "keep only the rows for the times and the area of the incident"
            }
            Self::Forecast => {
                "cut the forecast to the area and hours of the incident (`ncks -d`, `cdo sellonlatbox`, `grib_copy -w`)"
            }
        }
    }
}

/// Reads a text file of the given kind: refuses anything but a regular file, refuses a file
/// over [`InputKind::max_bytes`], drops a UTF-8 byte-order mark and requires UTF-8.
///
/// # Errors
/// [`ErrorKind::Unreadable`] naming the file and what it is (`kind`): missing or unreadable, not
/// a regular file, over the size limit (both sizes given), or not UTF-8 (with the line and
/// column of the first bad byte).
pub fn read_text(file: &Path, kind: InputKind) -> Result<String, IncidentError> {
    let bytes = read_bytes(file, kind)?;
    utf8_text(file, kind, bytes)
}

/// Reads a file of the given kind as bytes, with the guards of [`read_text`] except the UTF-8
/// check; a leading UTF-8 byte-order mark is dropped.
///
/// # Errors
/// As [`read_text`], without the UTF-8 cases.
pub fn read_bytes(file: &Path, kind: InputKind) -> Result<Vec<u8>, IncidentError> {
    read_limited(file, kind, kind.max_bytes())
}

/// Turns the bytes of a file into text, or says where they stop being UTF-8.
///
/// # Errors
/// As [`check_utf8`].
pub fn utf8_text(file: &Path, kind: InputKind, bytes: Vec<u8>) -> Result<String, IncidentError> {
    String::from_utf8(bytes).map_err(|e| not_utf8(file, kind, e.as_bytes(), e.utf8_error()))
}

/// Checks that the bytes of a file are UTF-8.
///
/// # Errors
/// [`ErrorKind::Unreadable`] with the line and column of the first byte that is not UTF-8, or
/// naming the file as UTF-16 when it starts with a UTF-16 byte-order mark.
pub fn check_utf8(file: &Path, kind: InputKind, bytes: &[u8]) -> Result<(), IncidentError> {
    std::str::from_utf8(bytes)
        .map(|_| ())
        .map_err(|e| not_utf8(file, kind, bytes, e))
}

fn not_utf8(file: &Path, kind: InputKind, bytes: &[u8], e: std::str::Utf8Error) -> IncidentError {
    if bytes.starts_with(b"\xFF\xFE") || bytes.starts_with(b"\xFE\xFF") {
        return unreadable(
            file,
            format!(
                "the {} is UTF-16 text (it starts with a UTF-16 byte-order mark); save it as UTF-8",
                kind.name()
            ),
        );
    }
    let at = e.valid_up_to();
    let before = std::str::from_utf8(&bytes[..at]).unwrap_or_default();
    let (line, col) = crate::locate::line_col(before, before.len());
    IncidentError {
        kind: ErrorKind::Unreadable,
        file: file.to_owned(),
        line: Some(line),
        col: Some(col),
        message: format!(
            "the {} is not UTF-8 text: byte 0x{:02X} here is not valid UTF-8; save the file as UTF-8",
            kind.name(),
            bytes.get(at).copied().unwrap_or_default()
        ),
    }
}

fn unreadable(file: &Path, message: String) -> IncidentError {
    IncidentError::whole_file(ErrorKind::Unreadable, file, message)
}

/// The guarded read with an explicit limit (the public functions use the kind's limit; the
/// tests use a small one).
fn read_limited(file: &Path, kind: InputKind, limit: u64) -> Result<Vec<u8>, IncidentError> {
    let name = kind.name();
    let cannot = |e: std::io::Error| {
        unreadable(
            file,
            format!("cannot read the {name}: {e}; {}", kind.path_hint()),
        )
    };
    // Checked before opening: opening a FIFO for reading blocks until a writer appears.
    let meta = std::fs::metadata(file).map_err(cannot)?;
    check_regular(file, kind, &meta)?;
    check_size(file, kind, meta.len(), limit, true)?;
    let f = std::fs::File::open(file).map_err(cannot)?;
    // The path may have been replaced between the two calls; the open file is what is read.
    let meta = f.metadata().map_err(cannot)?;
    check_regular(file, kind, &meta)?;
    check_size(file, kind, meta.len(), limit, true)?;
    let capacity = usize::try_from(meta.len()).unwrap_or(0);
    let mut bytes = Vec::with_capacity(capacity);
    f.take(limit.saturating_add(1))
        .read_to_end(&mut bytes)
        .map_err(cannot)?;
    check_size(file, kind, bytes.len() as u64, limit, false)?;
    if bytes.starts_with(UTF8_BOM) {
        bytes.drain(..UTF8_BOM.len());
    }
    Ok(bytes)
}

fn check_regular(
    file: &Path,
    kind: InputKind,
    meta: &std::fs::Metadata,
) -> Result<(), IncidentError> {
    let t = meta.file_type();
    if t.is_file() {
        return Ok(());
    }
    let what = if t.is_dir() {
        "a directory"
    } else {
        special_file_name(t)
    };
    Err(unreadable(
        file,
        format!(
            "the {} is {what}, not a regular file; name a regular file ({})",
            kind.name(),
            kind.path_hint()
        ),
    ))
}

#[cfg(unix)]
fn special_file_name(t: std::fs::FileType) -> &'static str {
    use std::os::unix::fs::FileTypeExt;
    if t.is_fifo() {
        "a named pipe (FIFO)"
    } else if t.is_char_device() {
        "a character device"
    } else if t.is_block_device() {
        "a block device"
    } else if t.is_socket() {
        "a socket"
    } else {
        "a special file"
    }
}

#[cfg(not(unix))]
fn special_file_name(_: std::fs::FileType) -> &'static str {
    "a special file"
}

/// Refuses `size` over `limit`; `exact` is false when the read stopped at the limit, so the
/// file holds at least `size` bytes.
fn check_size(
    file: &Path,
    kind: InputKind,
    size: u64,
    limit: u64,
    exact: bool,
) -> Result<(), IncidentError> {
    if size <= limit {
        return Ok(());
    }
    Err(unreadable(
        file,
        format!(
            "the {} is {}{} bytes ({}), over the limit of {limit} bytes ({}) for a {}; {}",
            kind.name(),
            if exact { "" } else { "at least " },
            size,
            mib(size),
            mib(limit),
            kind.name(),
            kind.size_hint()
        ),
    ))
}

fn mib(bytes: u64) -> String {
    // Display only: the exact count is printed beside it.
    let m = bytes as f64 / (1024.0 * 1024.0);
    format!("{m:.1} MiB")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[cfg(target_os = "linux")]
    #[test]
    fn a_file_longer_than_its_reported_size_is_cut_at_the_limit_and_refused() {
        // /proc files report size 0 and hold more than 16 bytes (common practice on Linux).
        let p = Path::new("/proc/self/status");
        assert_eq!(std::fs::metadata(p).unwrap().len(), 0);
        let e = read_limited(p, InputKind::Series, 16).unwrap_err();
        assert_eq!(e.kind, ErrorKind::Unreadable);
        assert!(
            e.message.contains("at least 17 bytes") && e.message.contains("limit of 16 bytes"),
            "{}",
            e.message
        );
    }

    #[test]
    fn a_bad_byte_is_reported_at_its_line_and_column() {
        let e = utf8_text(
            Path::new("w.csv"),
            InputKind::Series,
            b"time,speed_kn\nab\xE9c".to_vec(),
        )
        .unwrap_err();
        assert_eq!((e.line, e.col), (Some(2), Some(3)));
        assert!(e.message.contains("0xE9"), "{}", e.message);
        assert!(e.message.contains("series CSV"), "{}", e.message);
    }

    #[test]
    fn utf16_text_is_named_as_utf16() {
        let e = utf8_text(
            Path::new("w.csv"),
            InputKind::Series,
            b"\xFF\xFEt\x00i\x00".to_vec(),
        )
        .unwrap_err();
        assert!(e.message.contains("UTF-16"), "{}", e.message);
    }

    #[test]
    fn sizes_are_shown_in_mebibytes() {
        assert_eq!(mib(GEOMETRY_MAX_BYTES), "256.0 MiB");
        assert_eq!(mib(INCIDENT_MAX_BYTES + 1), "16.0 MiB");
    }
}
