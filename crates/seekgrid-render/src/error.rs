//! Errors of the render crate.

use std::path::PathBuf;
use thiserror::Error;

/// What went wrong while turning layers into files or pictures. Messages name the file, cell or
/// field and say how to fix the input.
#[derive(Debug, Error)]
#[non_exhaustive]
pub enum RenderError {
    /// A file-system operation failed.
    #[error("cannot {action} {path}: {source}")]
    Io {
        /// What was being done ("create folder", "write", ...).
        action: &'static str,
        /// The path concerned.
        path: PathBuf,
        /// The operating-system error.
        #[source]
        source: std::io::Error,
    },
    /// The output folder exists and holds files, and replacing them was not allowed.
    #[error(
        "output folder {path} already exists and is not empty; choose a new or empty folder, or allow replacing the whole folder"
    )]
    OutputNotEmpty {
        /// The folder.
        path: PathBuf,
    },
    /// The output path exists but is not a folder.
    #[error("output path {path} exists and is not a folder; give a folder path")]
    OutputNotAFolder {
        /// The path.
        path: PathBuf,
    },
    /// The output folder would hold one of the run's inputs, which replacing it would delete.
    #[error(
        "output folder {path} holds the input {input}; choose another output folder that holds none of the inputs, such as a new folder beside the incident file"
    )]
    OutputHoldsInput {
        /// The output folder as given.
        path: PathBuf,
        /// The input, as the incident names it.
        input: PathBuf,
    },
    /// The output path is one of the run's input files.
    #[error(
        "output path {path} is the input {input}; choose another output folder that holds none of the inputs, such as a new folder beside the incident file"
    )]
    OutputIsInput {
        /// The output path as given.
        path: PathBuf,
        /// The input, as the incident names it.
        input: PathBuf,
    },
    /// Another run is writing into the same output folder.
    #[error(
        "output folder {path} is being written by another seekgrid run{holder} (it holds the lock {lock}); wait for that run to finish, or choose another output folder"
    )]
    OutputLocked {
        /// The output folder.
        path: PathBuf,
        /// The lock file beside it.
        lock: PathBuf,
        /// `" (run RUNID)"` when the lock file names the run holding it, else empty.
        holder: String,
    },
    /// The output path names no folder of its own.
    #[error(
        "output path {path} does not name a folder of its own; give a folder path such as out/map"
    )]
    BadOutputPath {
        /// The path given.
        path: PathBuf,
    },
    /// A run id that cannot be part of a folder name.
    #[error(
        "run id \"{run_id}\" must be 1 to 64 ASCII letters, digits, '-' or '_'; make it from the time and the process id, such as 20260614T213000Z-4242"
    )]
    BadRunId {
        /// The id given.
        run_id: String,
    },
    /// An output file name that is not a plain file name.
    #[error(
        "output file name \"{name}\" is not a plain file name; use a name without folders, such as \"heatmap.png\""
    )]
    BadFileName {
        /// The name given.
        name: String,
    },
    /// A layer does not have the grid's shape.
    #[error("layer {layer} has {got_rows} x {got_cols} cells but the grid has {rows} x {cols}")]
    ShapeMismatch {
        /// Which layer.
        layer: &'static str,
        /// Grid rows.
        rows: usize,
        /// Grid columns.
        cols: usize,
        /// Layer rows.
        got_rows: usize,
        /// Layer columns.
        got_cols: usize,
    },
    /// A cell value that is not a finite number in the allowed range.
    #[error("layer {layer} has value {value} at row {row}, col {col}; {expected}")]
    BadCellValue {
        /// Which layer.
        layer: &'static str,
        /// Row of the cell.
        row: usize,
        /// Column of the cell.
        col: usize,
        /// The value found.
        value: f64,
        /// What the value must be.
        expected: &'static str,
    },
    /// A coordinate that is NaN or infinite, which GeoJSON cannot hold.
    #[error(
        "coordinate {value} in {what} is not a finite number; GeoJSON cannot hold NaN or Infinity, fix the geometry"
    )]
    NonFiniteCoordinate {
        /// Where it was found.
        what: String,
        /// The value.
        value: f64,
    },
    /// A position outside the WGS84 longitude/latitude range.
    #[error(
        "position [{lon}, {lat}] in {what} is outside lon -180..180, lat -90..90; give lon/lat in degrees, lon first"
    )]
    PositionOutOfRange {
        /// Where it was found.
        what: String,
        /// Longitude, degrees.
        lon: f64,
        /// Latitude, degrees.
        lat: f64,
    },
    /// A polygon ring that is not closed or has fewer than four positions.
    #[error(
        "ring in {what} has {positions} positions or is not closed; a ring needs at least 4 positions with the last equal to the first"
    )]
    BadRing {
        /// Where it was found.
        what: String,
        /// Number of positions.
        positions: usize,
    },
    /// A foreign member that RFC 7946 forbids or that would clash with a member we write.
    #[error(
        "member \"{key}\" cannot be added to a feature collection (RFC 7946 reserves it or it is written by seekgrid); rename it"
    )]
    ReservedMember {
        /// The key.
        key: String,
    },
    /// A parameter out of its range.
    #[error("{name} = {value} is out of range; {hint}")]
    BadParameter {
        /// Parameter name.
        name: &'static str,
        /// Value given.
        value: f64,
        /// What is allowed.
        hint: &'static str,
    },
    /// An output setting that cannot work (a GPS name length too short, for instance).
    #[error("{name}: {message}")]
    BadSetting {
        /// The setting, as the command line names it.
        name: &'static str,
        /// What is wrong and the fix.
        message: String,
    },
    /// An EPSG code that is not a WGS84 UTM zone.
    #[error(
        "EPSG:{code} is not a WGS84 UTM zone; use EPSG:32601..32660 (north) or EPSG:32701..32760 (south)"
    )]
    UnsupportedCrs {
        /// The code given.
        code: u32,
    },
    /// The picture would be too large to hold in memory.
    #[error(
        "the picture would be {width} x {height} pixels, over the limit of {limit} pixels; use a coarser grid for the picture"
    )]
    PictureTooLarge {
        /// Width, pixels.
        width: u64,
        /// Height, pixels.
        height: u64,
        /// The limit, pixels.
        limit: u64,
    },
    /// PNG encoding failed.
    #[error("cannot encode the PNG picture: {0}")]
    Png(String),
    /// Drawing a chart failed.
    #[error("cannot draw the chart: {0}")]
    Chart(String),
    /// JSON serialisation failed.
    #[error("cannot serialise GeoJSON: {0}")]
    Json(String),
    /// The boundary tracer met a configuration it cannot turn into valid rings (a bug).
    #[error("containment boundary tracing failed: {0}; please report this with the input grid")]
    Topology(String),
    /// A review with nothing to add to a track record.
    #[error("nothing to record: {reason}")]
    NothingToRecord {
        /// Why, and what to do.
        reason: &'static str,
    },
    /// Another run is appending to the same track record.
    #[error(
        "the record {path} is being written by another seekgrid run{holder} (it holds the lock {lock}); wait for that run to finish"
    )]
    RecordLocked {
        /// The record file.
        path: PathBuf,
        /// The lock file beside it.
        lock: PathBuf,
        /// `" (run RUNID)"` when the lock file names the run holding it, else empty.
        holder: String,
    },
    /// The earlier track record is not a valid record (its header differs, or a row is bad);
    /// it is left unchanged.
    #[error("{0}; the record was left unchanged")]
    BadRecord(Box<seekgrid_incident::IncidentError>),
    /// The track record already holds rows of this incident.
    #[error(
        "the record {path} already holds incident {incident_id} (\"{title}\") from line {line}; delete that incident's rows from the record to record its review again"
    )]
    IncidentAlreadyRecorded {
        /// The record file.
        path: PathBuf,
        /// The incident id.
        incident_id: String,
        /// The incident title.
        title: String,
        /// The first line holding it.
        line: usize,
    },
    /// An internal consistency check failed (a bug).
    #[error("internal error: {0}; please report this with the input")]
    Internal(String),
}
