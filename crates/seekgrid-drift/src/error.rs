//! Errors of the drift crate.

use thiserror::Error;

/// What is wrong with a drift input. Each message names the field and says how to fix it.
#[derive(Debug, Error, Clone, PartialEq)]
#[non_exhaustive]
pub enum DriftError {
    /// A number that must be finite is NaN or infinite.
    #[error("{field} is {value}, not a finite number; give a finite value")]
    NotFinite {
        /// The field, e.g. `current.speed_kn` or `wind.series[3].direction_deg`.
        field: String,
        /// The value given.
        value: f64,
    },
    /// A standard deviation, rate or diffusivity that is negative.
    #[error(
        "{field} is {value} but cannot be negative; give zero or a positive value (0 for no error)"
    )]
    Negative {
        /// The field, e.g. `position_sigma_m`.
        field: String,
        /// The value given.
        value: f64,
    },
    /// A number outside the range its meaning allows.
    #[error("{field} is {value}; {fix}")]
    OutOfRange {
        /// The field, e.g. `leeway.jibe_per_h`.
        field: String,
        /// The value given.
        value: f64,
        /// The range and how to fix it.
        fix: &'static str,
    },
    /// The adrift window ends before it starts.
    #[error(
        "adrift_latest ({latest}) is before adrift_earliest ({earliest}); swap them or give the same time for both"
    )]
    AdriftWindowReversed {
        /// adrift_earliest, RFC 3339.
        earliest: String,
        /// adrift_latest, RFC 3339.
        latest: String,
    },
    /// A time series without samples.
    #[error("{field} has no samples; give at least one (time, vector) sample or use a constant")]
    EmptySeries {
        /// `current` or `wind`.
        field: String,
    },
    /// Series times not strictly increasing.
    #[error(
        "{field} sample {index} at {time} is not after the sample before it ({previous}); sort the samples by time and remove duplicates"
    )]
    UnorderedSeries {
        /// `current` or `wind`.
        field: String,
        /// Index of the offending sample.
        index: usize,
        /// Its time, RFC 3339.
        time: String,
        /// The time of the sample before, RFC 3339.
        previous: String,
    },
    /// A gridded field that is not a complete regular lattice.
    #[error("{field} gridded field is not usable: {what}")]
    BadGrid {
        /// `current` or `wind`.
        field: String,
        /// What is wrong and how to fix it.
        what: String,
    },
    /// A gridded field gives no value where a particle needs one: beyond the side of its box
    /// (a forecast file, [`crate::environment::BeyondBox::Refuse`]) or at a node with no value.
    #[error("{field}: {what}")]
    FieldGap {
        /// `current` or `wind`.
        field: String,
        /// Where and what is missing, and the fix.
        what: String,
    },
    /// Zero particles requested.
    #[error(
        "particles is 0; ask for between 1 and 20 000 000 particles (10 000 or more for a smooth cloud)"
    )]
    NoParticles,
    /// More particles than [`crate::MAX_PARTICLES`].
    #[error(
        "particles is {particles}, over the limit of 20 000 000; ask for between 1 and 20 000 000 particles"
    )]
    TooManyParticles {
        /// The number asked for.
        particles: usize,
    },
    /// The last known position is not a valid WGS84 position.
    #[error(
        "lkp_lon_lat [{lon}, {lat}] is not a valid WGS84 lon, lat; give longitude in -180..180 and latitude in -80..84, lon first"
    )]
    BadPosition {
        /// Longitude, degrees.
        lon: f64,
        /// Latitude, degrees.
        lat: f64,
    },
    /// The simulation would end before the object can be adrift.
    #[error(
        "end ({end}) is before adrift_earliest ({earliest}); give an end time at or after the earliest adrift time"
    )]
    EndBeforeAdrift {
        /// The requested end, RFC 3339.
        end: String,
        /// adrift_earliest, RFC 3339.
        earliest: String,
    },
    /// A record interval or time step that is not a positive finite number of seconds.
    #[error("{field} is {value} s; give a positive number of seconds such as 600")]
    BadInterval {
        /// `record_every_s` or `step_s`.
        field: String,
        /// The value given, seconds.
        value: f64,
    },
    /// The records would not fit in memory.
    #[error(
        "storing {particles} particles at {records} record times needs {bytes} bytes, over the limit of {limit} bytes; raise record_every_s or use fewer particles"
    )]
    TooLarge {
        /// Particles.
        particles: usize,
        /// Record times.
        records: usize,
        /// Bytes needed.
        bytes: u128,
        /// The limit, bytes.
        limit: u128,
    },
    /// The time step would make more steps than allowed.
    #[error(
        "step_s = {step_s} s makes {steps} steps, over the limit of {limit}; give a longer step_s or leave it out for the automatic step"
    )]
    TooManySteps {
        /// The step asked for, seconds.
        step_s: f64,
        /// Steps it would make.
        steps: f64,
        /// The limit.
        limit: f64,
    },
    /// Weights that do not match the particles or are not probabilities.
    #[error("weights are not usable: {what}")]
    BadWeights {
        /// What is wrong and how to fix it.
        what: String,
    },
}
