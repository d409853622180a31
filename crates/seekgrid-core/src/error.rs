//! Errors of the core crate.

use thiserror::Error;

/// What went wrong in coordinate or grid handling. Messages say how to fix the input.
#[derive(Debug, Error, Clone, PartialEq)]
#[non_exhaustive]
pub enum CoreError {
    /// A longitude or latitude is not a finite number in range.
    #[error(
        "position [{lon}, {lat}] is not a valid WGS84 lon, lat; give longitude in -180..180 and latitude in -80..84 (UTM range), lon first"
    )]
    BadPosition {
        /// Longitude, degrees.
        lon: f64,
        /// Latitude, degrees.
        lat: f64,
    },
    /// An EPSG code that is not a WGS84 UTM zone.
    #[error(
        "EPSG:{code} is not a WGS84 UTM zone; use EPSG:32601..32660 (north) or EPSG:32701..32760 (south)"
    )]
    UnsupportedCrs {
        /// The code given.
        code: u32,
    },
    /// A CRS string that cannot be read.
    #[error(
        "cannot read CRS \"{text}\"; write it as \"EPSG:326ZZ\" (north) or \"EPSG:327ZZ\" (south), ZZ the UTM zone"
    )]
    BadCrsText {
        /// The text given.
        text: String,
    },
    /// An EPSG code that the bundled CRS definitions do not hold.
    #[error(
        "EPSG:{code} is not a CRS seekgrid knows; check the code (epsg.io) or leave crs out to have one chosen"
    )]
    UnknownEpsg {
        /// The code given.
        code: u32,
    },
    /// An EPSG code of a geographic (degrees) or geocentric CRS, not a projected one.
    #[error(
        "EPSG:{code} is not a projected CRS (it is in degrees or geocentric); use crs = \"EPSG:{fitting}\", which fits the incident, or another projected CRS in metres"
    )]
    NotProjected {
        /// The code given.
        code: u32,
        /// A projected CRS that fits the incident's first position.
        fitting: u32,
    },
    /// A projected CRS that cannot project a position or stretches distances there too much.
    #[error(
        "EPSG:{code} does not fit the incident at [{lon}, {lat}] (scale error {scale_error_pct:.2} %, more than {limit_pct} %); use crs = \"EPSG:{fitting}\" or leave crs out to have it chosen"
    )]
    CrsFarFromIncident {
        /// The code given.
        code: u32,
        /// Longitude of the position, degrees.
        lon: f64,
        /// Latitude of the position, degrees.
        lat: f64,
        /// |k - 1| in percent, NaN where the CRS cannot project the position.
        scale_error_pct: f64,
        /// The limit applied, percent.
        limit_pct: f64,
        /// A projected CRS that fits the position.
        fitting: u32,
    },
    /// Cell size not positive and finite.
    #[error("cell size {cell_m} m is not usable; give a positive cell_m such as 250")]
    BadCellSize {
        /// The size given, metres.
        cell_m: f64,
    },
    /// Grid extent empty or not finite.
    #[error(
        "grid extent is empty or not finite (west {west_m}, south {south_m}, east {east_m}, north {north_m} m); check the bounds: west < east and south < north"
    )]
    BadExtent {
        /// West edge, metres.
        west_m: f64,
        /// South edge, metres.
        south_m: f64,
        /// East edge, metres.
        east_m: f64,
        /// North edge, metres.
        north_m: f64,
    },
    /// Cell area not positive and finite.
    #[error(
        "cell area {cell_area_km2} km² is not usable; give the positive area of one cell in km² (cell_m² / 10⁶, e.g. 0.0625 for 250 m cells)"
    )]
    BadCellArea {
        /// The area given, km².
        cell_area_km2: f64,
    },
    /// The grid would have more cells than allowed.
    #[error(
        "the grid would have {cells} cells ({rows} rows x {cols} columns), over the limit of {limit}; use cell_m = {suggested_cell_m} or more, give smaller bounds, or raise max_cells"
    )]
    TooManyCells {
        /// Cells the grid would need.
        cells: u64,
        /// Rows.
        rows: u64,
        /// Columns.
        cols: u64,
        /// The limit in force.
        limit: u64,
        /// The smallest round cell size that fits the limit.
        suggested_cell_m: f64,
    },
    /// Two layers do not share one grid.
    #[error("layer has {got_rows} x {got_cols} cells but the grid has {rows} x {cols}")]
    ShapeMismatch {
        /// Grid rows.
        rows: usize,
        /// Grid columns.
        cols: usize,
        /// Layer rows.
        got_rows: usize,
        /// Layer columns.
        got_cols: usize,
    },
    /// A probability mass that is negative, not finite, or does not add up.
    #[error("probability masses are invalid: {what}")]
    BadMass {
        /// What is wrong.
        what: String,
    },
}
