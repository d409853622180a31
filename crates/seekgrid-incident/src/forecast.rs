//! Reading wind and current from forecast files: NetCDF following the CF conventions
//! ([`read_netcdf`]) and GRIB2 ([`read_grib`]), into one regular longitude/latitude lattice at
//! a sequence of times ([`ForecastGrid`]) that the drift crate interpolates bilinearly in
//! space and linearly in time.
//!
//! What is read (docs/incident-format.md, "Forecast files"; docs/references.md, "CF
//! conventions" and "GRIB2"):
//! * NetCDF classic and 64-bit offset files through the pure-Rust `netcdf3` crate; NetCDF-4
//!   (HDF5) files only when seekgrid is built with the `netcdf4` feature (the `netcdf` crate
//!   and the system's libnetcdf), otherwise refused with the conversion to use.
//! * The u and v variables are found by their CF `standard_name` (or by name when the
//!   incident gives `u_variable`, `v_variable`); their axes by the coordinate variables'
//!   `standard_name`, `axis` or `units`. Packing (`scale_factor`, `add_offset`), `_FillValue`,
//!   `missing_value` and `valid_min`/`valid_max`/`valid_range` are honoured; a value with no
//!   data becomes NaN, which [`ForecastGrid::apply_land`] sets to zero where the coastline is
//!   land and the drift refuses anywhere else a particle needs it.
//! * GRIB2: messages of regular latitude/longitude grids (template 3.0) through the pure-Rust
//!   `grib` crate; wind u/v (discipline 0, category 2, numbers 2 and 3) or current u/v
//!   (discipline 10, category 1, numbers 2 and 3) at the level nearest the one asked for,
//!   several times in one file or across several files.
//!
//! Every error names the file, the variable where there is one, and the fix.

use crate::error::{ErrorKind, IncidentError};
use crate::input::{InputKind, read_bytes};
use crate::model::Time;
use chrono::{DateTime, NaiveDate, NaiveDateTime, TimeDelta, Utc};
use seekgrid_core::units::MPS_PER_KNOT;
use seekgrid_drift::RegularAxis;
use std::path::{Path, PathBuf};

/// Which quantity a forecast source gives.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Quantity {
    /// Total water current (sea water velocity).
    Current,
    /// Wind at 10 m.
    Wind,
}

impl Quantity {
    /// `"current"` or `"wind"`.
    #[must_use]
    pub fn key(self) -> &'static str {
        match self {
            Self::Current => "current",
            Self::Wind => "wind",
        }
    }

    /// The level used when the incident names none: the surface for the current (depth 0 m),
    /// 10 m above the surface for the wind, metres.
    #[must_use]
    pub fn default_level_m(self) -> f64 {
        match self {
            Self::Current => 0.0,
            Self::Wind => 10.0,
        }
    }
}

/// What the incident says about a forecast source beyond its file.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ForecastOptions {
    /// The eastward component's variable name (NetCDF), instead of the search by
    /// `standard_name`.
    pub u_variable: Option<String>,
    /// The northward component's variable name (NetCDF).
    pub v_variable: Option<String>,
    /// The level to use, metres (depth below the surface for a current, height above it for
    /// a wind); the nearest level of the file is taken. `None`: the surface, or 10 m.
    pub level_m: Option<f64>,
}

/// The file format of a forecast source.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ForecastFormat {
    /// NetCDF classic (CDF-1) or 64-bit offset (CDF-2).
    NetCdf3,
    /// NetCDF-4 (HDF5).
    NetCdf4,
    /// GRIB edition 2.
    Grib2,
}

impl ForecastFormat {
    /// How reports name the format.
    #[must_use]
    pub fn name(self) -> &'static str {
        match self {
            Self::NetCdf3 => "NetCDF classic/64-bit offset",
            Self::NetCdf4 => "NetCDF-4 (HDF5)",
            Self::Grib2 => "GRIB2",
        }
    }
}

/// A forecast read into one regular lattice, velocities in knots.
#[derive(Debug, Clone, PartialEq)]
pub struct ForecastGrid {
    /// The files read, in order.
    pub files: Vec<PathBuf>,
    /// Their format.
    pub format: ForecastFormat,
    /// Every data variable of a NetCDF file, or every parameter of a GRIB2 file, for reports.
    pub variables: Vec<String>,
    /// The eastward and northward components used (variable names, or GRIB2 parameters).
    pub components: (String, String),
    /// The units of the file's values ("m s-1", "knots", ...).
    pub units: String,
    /// The level used, described ("depth 0.494 m of 3 levels"), or `None` without a level axis.
    pub level: Option<String>,
    /// Longitudes, ascending; an axis that starts at 180° or beyond (a 0..360 file) is moved
    /// one turn west.
    pub lon: RegularAxis,
    /// Latitudes, ascending (a north-to-south file is turned round).
    pub lat: RegularAxis,
    /// Valid times, increasing.
    pub times: Vec<Time>,
    /// Eastward component, knots, index `(it * nlat + ilat) * nlon + ilon`; NaN: no value.
    pub u_kn: Vec<f64>,
    /// Northward component, knots, same index; NaN: no value.
    pub v_kn: Vec<f64>,
    /// Nodes (over all times) with no value in the file that [`ForecastGrid::apply_land`] set
    /// to zero because the coastline puts them on land.
    pub land_nodes: usize,
}

impl ForecastGrid {
    /// The first and last valid time.
    #[must_use]
    pub fn time_span(&self) -> (Time, Time) {
        (self.times[0], self.times[self.times.len() - 1])
    }

    /// The number of nodes with no value (NaN), over all times.
    #[must_use]
    pub fn missing_nodes(&self) -> usize {
        self.u_kn
            .iter()
            .zip(&self.v_kn)
            .filter(|(u, v)| u.is_nan() || v.is_nan())
            .count()
    }

    /// Sets to zero every node with no value (a fill value) whose position `is_land` says is
    /// land, at every time; returns how many nodes were set. Nodes over water stay without a
    /// value, so that a drift that needs them is refused rather than given a zero current.
    pub fn apply_land(&mut self, is_land: impl Fn(f64, f64) -> bool) -> usize {
        let (nlon, nlat) = (self.lon.n, self.lat.n);
        let plane = nlon * nlat;
        let mut land: Vec<Option<bool>> = vec![None; plane];
        let mut set = 0;
        for k in 0..self.times.len() {
            for (p, known) in land.iter_mut().enumerate() {
                let i = k * plane + p;
                if !(self.u_kn[i].is_nan() || self.v_kn[i].is_nan()) {
                    continue;
                }
                let is = *known.get_or_insert_with(|| {
                    let lon = self.lon.start_deg + self.lon.step_deg * (p % nlon) as f64;
                    let lat = self.lat.start_deg + self.lat.step_deg * (p / nlon) as f64;
                    // The coastline is in -180..180.
                    is_land(lon - 360.0 * ((lon + 180.0) / 360.0).floor(), lat)
                });
                if is {
                    self.u_kn[i] = 0.0;
                    self.v_kn[i] = 0.0;
                    set += 1;
                }
            }
        }
        self.land_nodes += set;
        set
    }

    /// A description for `seekgrid check`: format, files, variables, grid, time span, level
    /// and what is used.
    #[must_use]
    pub fn describe(&self) -> String {
        let files: Vec<String> = self.files.iter().map(|f| f.display().to_string()).collect();
        let end = |a: &RegularAxis| a.start_deg + a.step_deg * (a.n.max(1) - 1) as f64;
        let (first, last) = self.time_span();
        let fmt = |t: Time| t.format("%Y-%m-%dT%H:%MZ").to_string();
        let mut steps: Vec<i64> = self
            .times
            .windows(2)
            .map(|w| (w[1] - w[0]).num_minutes())
            .collect();
        steps.sort_unstable();
        steps.dedup();
        let steps: Vec<String> = steps
            .iter()
            .map(|m| format!("{}", *m as f64 / 60.0))
            .collect();
        format!(
            "{} {}; variables: {}; using u = {}, v = {} ({}); grid {} x {} (lon x lat): lon {} to {} by {}, lat {} to {} by {} degrees; {} times {} to {}{}; level: {}; {} fill nodes on the coastline's land set to zero; {} nodes with no value at sea (a drift that needs one is refused)",
            self.format.name(),
            files.join(", "),
            self.variables.join(", "),
            self.components.0,
            self.components.1,
            self.units,
            self.lon.n,
            self.lat.n,
            self.lon.start_deg,
            end(&self.lon),
            self.lon.step_deg,
            self.lat.start_deg,
            end(&self.lat),
            self.lat.step_deg,
            self.times.len(),
            fmt(first),
            fmt(last),
            if steps.is_empty() {
                String::new()
            } else {
                format!(" every {} h", steps.join("/"))
            },
            self.level.as_deref().unwrap_or("none (single level)"),
            self.land_nodes,
            self.missing_nodes(),
        )
    }
}

fn invalid(file: &Path, message: impl Into<String>) -> IncidentError {
    IncidentError::whole_file(ErrorKind::Invalid, file, message)
}

/// The factor from a CF units string to knots, or `None` when the units are not a speed seekgrid
/// converts (UDUNITS spellings of metres per second, centimetres per second, knots, km/h).
#[must_use]
pub fn knots_per_unit(units: &str) -> Option<f64> {
    let u: String = units
        .trim()
        .to_ascii_lowercase()
        .chars()
        .filter(|c| !c.is_whitespace() && *c != '.' && *c != '*' && *c != '^')
        .collect();
    let mps = 1.0 / MPS_PER_KNOT;
    match u.as_str() {
        "m/s" | "ms-1" | "meter/second" | "meters/second" | "metre/second" | "metres/second"
        | "metersecond-1" | "meterssecond-1" | "metresecond-1" | "metressecond-1" | "mps" => {
            Some(mps)
        }
        "cm/s" | "cms-1" | "centimeter/second" | "centimeters/second" | "centimetres/second" => {
            Some(0.01 * mps)
        }
        "kn" | "kt" | "kts" | "knot" | "knots" => Some(1.0),
        "km/h" | "kmh-1" | "km/hr" | "kilometer/hour" | "kilometers/hour" => Some(mps / 3.6),
        _ => None,
    }
}

/// A regular axis from ascending or descending values: the start, step and count, and
/// whether the values were descending. `None` when the values are not evenly spaced (to
/// 1/1000 of a step, as coordinates stored in single precision are) or not monotonic.
fn regular(values: &[f64]) -> Option<(RegularAxis, bool)> {
    let n = values.len();
    if n == 0 || values.iter().any(|v| !v.is_finite()) {
        return None;
    }
    if n == 1 {
        return Some((
            RegularAxis {
                start_deg: values[0],
                step_deg: 0.0,
                n,
            },
            false,
        ));
    }
    let descending = values[n - 1] < values[0];
    let (a, b) = if descending {
        (values[n - 1], values[0])
    } else {
        (values[0], values[n - 1])
    };
    let step = (b - a) / (n - 1) as f64;
    if step <= 0.0 {
        return None;
    }
    let ok = (0..n).all(|i| {
        let v = if descending {
            values[n - 1 - i]
        } else {
            values[i]
        };
        (v - (a + step * i as f64)).abs() <= 1e-3 * step
    });
    ok.then_some((
        RegularAxis {
            start_deg: a,
            step_deg: step,
            n,
        },
        descending,
    ))
}

/// Longitudes that jump by a turn across the Greenwich meridian or the antimeridian
/// (`359.5, 359.75, 0, 0.25`) made continuous (`359.5, 359.75, 360, 360.25`).
fn unwrap_longitudes(mut lons: Vec<f64>) -> Vec<f64> {
    for i in 1..lons.len() {
        let step = lons[i] - lons[i - 1];
        if step.abs() > 180.0 {
            lons[i] -= 360.0 * (step / 360.0).round();
        }
    }
    lons
}

// ------------------------------------------------------------------------------------------
// CF time axes

/// Parses a CF time `units` attribute ("hours since 1950-01-01 00:00:00") into seconds per
/// unit and the reference time, checking the calendar.
///
/// # Errors
/// A message naming what is wrong and the fix: not `UNIT since DATE`, a unit that is not a
/// fixed length (months, years), a calendar other than standard, gregorian or
/// proleptic_gregorian, a standard-calendar reference before the Gregorian reform
/// (1582-10-15), an unreadable date.
pub fn cf_time_units(units: &str, calendar: Option<&str>) -> Result<(f64, Time), String> {
    if let Some(c) = calendar {
        let c = c.trim().to_ascii_lowercase();
        if !matches!(
            c.as_str(),
            "standard" | "gregorian" | "proleptic_gregorian" | ""
        ) {
            return Err(format!(
                "calendar \"{c}\" is not supported; seekgrid reads the standard, gregorian and proleptic_gregorian calendars (forecasts use them); convert the time axis with `cdo setcalendar,standard`"
            ));
        }
    }
    let lower = units.trim().to_ascii_lowercase();
    let Some((unit, date)) = lower.split_once(" since ") else {
        return Err(format!(
            "units \"{units}\" is not a CF time unit; it must read \"UNIT since DATE\", such as \"hours since 1950-01-01 00:00:00\""
        ));
    };
    let per = match unit.trim() {
        "second" | "seconds" | "sec" | "secs" | "s" => 1.0,
        "minute" | "minutes" | "min" | "mins" => 60.0,
        "hour" | "hours" | "hr" | "hrs" | "h" => 3600.0,
        "day" | "days" | "d" => 86_400.0,
        other => {
            return Err(format!(
                "units \"{units}\" counts in \"{other}\", which has no fixed length; give the time axis in seconds, minutes, hours or days since a date"
            ));
        }
    };
    let reference = parse_cf_date(date.trim()).ok_or_else(|| {
        format!(
            "units \"{units}\": the reference date \"{}\" is not readable; write it as 1950-01-01 00:00:00",
            date.trim()
        )
    })?;
    let standard = calendar.is_none_or(|c| {
        matches!(
            c.trim().to_ascii_lowercase().as_str(),
            "standard" | "gregorian" | ""
        )
    });
    let reform = NaiveDate::from_ymd_opt(1582, 10, 15)
        .and_then(|d| d.and_hms_opt(0, 0, 0))
        .map(|d| d.and_utc());
    if standard && reform.is_some_and(|r| reference < r) {
        return Err(format!(
            "units \"{units}\": a reference date before 1582-10-15 in the standard (mixed Julian/Gregorian) calendar is not supported; give calendar = \"proleptic_gregorian\" or a later reference date"
        ));
    }
    Ok((per, reference))
}

/// A UDUNITS date: `YYYY-M-D`, optionally followed by ` ` or `T` and `h:m[:s[.f]]`, and an
/// optional `Z`, `UTC` or `+00:00`-style offset.
fn parse_cf_date(text: &str) -> Option<Time> {
    let text = text.trim();
    let (date, rest) = match text.find(['T', 't', ' ']) {
        Some(i) => (&text[..i], text[i + 1..].trim()),
        None => (text, ""),
    };
    let mut parts = date.splitn(3, '-');
    let y: i32 = parts.next()?.parse().ok()?;
    let m: u32 = parts.next()?.parse().ok()?;
    let d: u32 = parts.next()?.parse().ok()?;
    let day = NaiveDate::from_ymd_opt(y, m, d)?;
    let mut offset_s = 0i64;
    let mut clock = rest;
    for tz in ["utc", "gmt", "z"] {
        if let Some(c) = clock.to_ascii_lowercase().strip_suffix(tz) {
            clock = &rest[..c.len()];
        }
    }
    let clock = clock.trim();
    let (clock, tz) = match clock.rfind(['+', '-']) {
        Some(i) if i > 0 || clock.starts_with(['+', '-']) => (&clock[..i], Some(&clock[i..])),
        _ => (clock, None),
    };
    if let Some(tz) = tz {
        let sign = if tz.starts_with('-') { -1 } else { 1 };
        let body = tz[1..].trim();
        let (h, m) = match body.split_once(':') {
            Some((h, m)) => (h.parse::<i64>().ok()?, m.parse::<i64>().ok()?),
            None if body.len() > 2 => (
                body[..body.len() - 2].parse::<i64>().ok()?,
                body[body.len() - 2..].parse::<i64>().ok()?,
            ),
            None => (body.parse::<i64>().ok()?, 0),
        };
        offset_s = sign * (h * 3600 + m * 60);
    }
    let clock = clock.trim();
    let t = if clock.is_empty() {
        day.and_hms_opt(0, 0, 0)?
    } else {
        let mut c = clock.splitn(3, ':');
        let h: u32 = c.next()?.trim().parse().ok()?;
        let mi: u32 = c.next().map_or(Some(0), |x| x.trim().parse().ok())?;
        let s: f64 = c.next().map_or(Some(0.0), |x| x.trim().parse().ok())?;
        let whole = s.floor();
        let nanos = ((s - whole) * 1e9).round() as u32;
        NaiveDateTime::new(
            day,
            chrono::NaiveTime::from_hms_nano_opt(h, mi, whole as u32, nanos)?,
        )
    };
    Some(t.and_utc() - TimeDelta::seconds(offset_s))
}

/// Converts CF time values to times.
fn cf_times(values: &[f64], per_s: f64, reference: Time) -> Option<Vec<Time>> {
    values
        .iter()
        .map(|v| {
            let ms = v * per_s * 1e3;
            (ms.is_finite() && ms.abs() < 1e15)
                .then(|| reference + TimeDelta::milliseconds(ms.round() as i64))
        })
        .collect()
}

// ------------------------------------------------------------------------------------------
// NetCDF

/// The NetCDF default fill value of a float variable (netcdf.h `NC_FILL_FLOAT`).
const NC_FILL_FLOAT: f32 = 9.969_21e36;
/// The NetCDF default fill value of a double variable (netcdf.h `NC_FILL_DOUBLE`).
const NC_FILL_DOUBLE: f64 = 9.969_209_968_386_869e36;

/// What a NetCDF reader gives the CF logic: names, dimensions, attributes and values.
trait CfSource {
    fn var_names(&self) -> Vec<String>;
    /// The dimensions of a variable: (name, length), in storage order.
    fn dims(&self, var: &str) -> Option<Vec<(String, usize)>>;
    fn attr_text(&self, var: &str, attr: &str) -> Option<String>;
    fn attr_numbers(&self, var: &str, attr: &str) -> Option<Vec<f64>>;
    /// The stored values as f64 (still packed), and the type's default fill value.
    fn values(&mut self, var: &str) -> Result<(Vec<f64>, Option<f64>), String>;
    fn format(&self) -> ForecastFormat;
}

struct Nc3 {
    reader: netcdf3::FileReader,
}

fn nc3_attr_numbers(a: &netcdf3::Attribute) -> Option<Vec<f64>> {
    if let Some(v) = a.get_f64() {
        Some(v.to_vec())
    } else if let Some(v) = a.get_f32() {
        Some(v.iter().map(|x| f64::from(*x)).collect())
    } else if let Some(v) = a.get_i32() {
        Some(v.iter().map(|x| f64::from(*x)).collect())
    } else if let Some(v) = a.get_i16() {
        Some(v.iter().map(|x| f64::from(*x)).collect())
    } else if let Some(v) = a.get_i8() {
        Some(v.iter().map(|x| f64::from(*x)).collect())
    } else {
        a.get_u8()
            .map(|v| v.iter().map(|x| f64::from(*x)).collect())
    }
}

impl CfSource for Nc3 {
    fn var_names(&self) -> Vec<String> {
        self.reader.data_set().get_var_names()
    }
    fn dims(&self, var: &str) -> Option<Vec<(String, usize)>> {
        let v = self.reader.data_set().get_var(var)?;
        Some(v.get_dims().iter().map(|d| (d.name(), d.size())).collect())
    }
    fn attr_text(&self, var: &str, attr: &str) -> Option<String> {
        self.reader
            .data_set()
            .get_var_attr_as_string(var, attr)
            .map(|s| s.trim_end_matches('\0').to_owned())
    }
    fn attr_numbers(&self, var: &str, attr: &str) -> Option<Vec<f64>> {
        nc3_attr_numbers(self.reader.data_set().get_var_attr(var, attr)?)
    }
    fn values(&mut self, var: &str) -> Result<(Vec<f64>, Option<f64>), String> {
        use netcdf3::DataVector as D;
        let data = self.reader.read_var(var).map_err(|e| format!("{e:?}"))?;
        // The NetCDF default fill values (netcdf.h NC_FILL_*), used when no _FillValue is set.
        Ok(match data {
            D::F64(v) => (v, Some(NC_FILL_DOUBLE)),
            D::F32(v) => (
                v.into_iter().map(f64::from).collect(),
                Some(f64::from(NC_FILL_FLOAT)),
            ),
            D::I32(v) => (
                v.into_iter().map(f64::from).collect(),
                Some(-2_147_483_647.0),
            ),
            D::I16(v) => (v.into_iter().map(f64::from).collect(), Some(-32_767.0)),
            D::I8(v) => (v.into_iter().map(f64::from).collect(), Some(-127.0)),
            D::U8(v) => (v.into_iter().map(f64::from).collect(), None),
        })
    }
    fn format(&self) -> ForecastFormat {
        ForecastFormat::NetCdf3
    }
}

#[cfg(feature = "netcdf4")]
mod nc4 {
    //! NetCDF-4 (HDF5) through the `netcdf` crate and the system's libnetcdf.
    use super::{CfSource, ForecastFormat, NC_FILL_DOUBLE, NC_FILL_FLOAT};

    pub(super) struct Nc4 {
        pub(super) file: netcdf::File,
    }

    fn numbers(v: netcdf::AttributeValue) -> Option<Vec<f64>> {
        use netcdf::AttributeValue as A;
        Some(match v {
            A::Double(x) => vec![x],
            A::Doubles(x) => x,
            A::Float(x) => vec![f64::from(x)],
            A::Floats(x) => x.into_iter().map(f64::from).collect(),
            A::Int(x) => vec![f64::from(x)],
            A::Ints(x) => x.into_iter().map(f64::from).collect(),
            A::Short(x) => vec![f64::from(x)],
            A::Shorts(x) => x.into_iter().map(f64::from).collect(),
            A::Schar(x) => vec![f64::from(x)],
            A::Schars(x) => x.into_iter().map(f64::from).collect(),
            A::Uchar(x) => vec![f64::from(x)],
            A::Uchars(x) => x.into_iter().map(f64::from).collect(),
            A::Ushort(x) => vec![f64::from(x)],
            A::Ushorts(x) => x.into_iter().map(f64::from).collect(),
            A::Uint(x) => vec![f64::from(x)],
            A::Uints(x) => x.into_iter().map(f64::from).collect(),
            _ => return None,
        })
    }

    impl CfSource for Nc4 {
        fn var_names(&self) -> Vec<String> {
            self.file.variables().map(|v| v.name()).collect()
        }
        fn dims(&self, var: &str) -> Option<Vec<(String, usize)>> {
            let v = self.file.variable(var)?;
            Some(v.dimensions().iter().map(|d| (d.name(), d.len())).collect())
        }
        fn attr_text(&self, var: &str, attr: &str) -> Option<String> {
            match self.file.variable(var)?.attribute(attr)?.value().ok()? {
                netcdf::AttributeValue::Str(s) => Some(s),
                _ => None,
            }
        }
        fn attr_numbers(&self, var: &str, attr: &str) -> Option<Vec<f64>> {
            numbers(self.file.variable(var)?.attribute(attr)?.value().ok()?)
        }
        fn values(&mut self, var: &str) -> Result<(Vec<f64>, Option<f64>), String> {
            let v = self
                .file
                .variable(var)
                .ok_or_else(|| format!("no variable {var}"))?;
            let values: Vec<f64> = v.get_values::<f64, _>(..).map_err(|e| e.to_string())?;
            // The default fill values of netcdf.h for the stored type.
            let fill = match v.vartype() {
                netcdf::types::NcVariableType::Float(netcdf::types::FloatType::F32) => {
                    Some(f64::from(NC_FILL_FLOAT))
                }
                netcdf::types::NcVariableType::Float(netcdf::types::FloatType::F64) => {
                    Some(NC_FILL_DOUBLE)
                }
                _ => None,
            };
            Ok((values, fill))
        }
        fn format(&self) -> ForecastFormat {
            ForecastFormat::NetCdf4
        }
    }
}

/// CF standard names of the eastward and northward components, in the order they are tried.
fn standard_names(q: Quantity) -> &'static [(&'static str, &'static str)] {
    match q {
        Quantity::Current => &[
            (
                "eastward_sea_water_velocity",
                "northward_sea_water_velocity",
            ),
            (
                "surface_eastward_sea_water_velocity",
                "surface_northward_sea_water_velocity",
            ),
        ],
        Quantity::Wind => &[("eastward_wind", "northward_wind"), ("x_wind", "y_wind")],
    }
}

/// The role of one dimension of the data variable.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Role {
    Lon,
    Lat,
    Time,
    Level,
}

fn role_of(src: &dyn CfSource, dim: &str) -> Option<Role> {
    let sn = src
        .attr_text(dim, "standard_name")
        .unwrap_or_default()
        .to_ascii_lowercase();
    let axis = src
        .attr_text(dim, "axis")
        .unwrap_or_default()
        .to_ascii_uppercase();
    let units = src
        .attr_text(dim, "units")
        .unwrap_or_default()
        .to_ascii_lowercase();
    let name = dim.to_ascii_lowercase();
    if sn == "longitude"
        || units.starts_with("degree_e")
        || units.starts_with("degrees_e")
        || units == "degreee"
    {
        Some(Role::Lon)
    } else if sn == "latitude" || units.starts_with("degree_n") || units.starts_with("degrees_n") {
        Some(Role::Lat)
    } else if sn == "time" || axis == "T" || units.contains(" since ") {
        Some(Role::Time)
    } else if matches!(sn.as_str(), "depth" | "height" | "altitude")
        || axis == "Z"
        || src.attr_text(dim, "positive").is_some()
    {
        Some(Role::Level)
    } else if axis == "X" || matches!(name.as_str(), "lon" | "longitude" | "x") {
        Some(Role::Lon)
    } else if axis == "Y" || matches!(name.as_str(), "lat" | "latitude" | "y") {
        Some(Role::Lat)
    } else {
        None
    }
}

/// Refuses grids seekgrid does not interpolate: rotated pole grids and curvilinear grids
/// (2-D longitude and latitude).
fn check_grid(src: &dyn CfSource, file: &Path, var: &str) -> Result<(), IncidentError> {
    let fix = "regrid it to a regular longitude/latitude grid first (for instance `cdo remapbil,r720x360 in.nc out.nc`, or the provider's regular-grid product)";
    if let Some(gm) = src.attr_text(var, "grid_mapping") {
        let name = src
            .attr_text(gm.trim(), "grid_mapping_name")
            .unwrap_or_default();
        if name != "latitude_longitude" {
            return Err(invalid(
                file,
                format!(
                    "variable {var} is on a \"{}\" grid (grid_mapping {gm}); seekgrid reads regular latitude/longitude grids only: {fix}",
                    if name.is_empty() { "projected" } else { &name }
                ),
            ));
        }
    }
    for d in src.dims(var).unwrap_or_default() {
        let sn = src.attr_text(&d.0, "standard_name").unwrap_or_default();
        if sn == "grid_longitude" || sn == "grid_latitude" {
            return Err(invalid(
                file,
                format!(
                    "variable {var} is on a rotated-pole grid (dimension {} is {sn}); seekgrid reads regular latitude/longitude grids only: {fix}",
                    d.0
                ),
            ));
        }
    }
    if let Some(coords) = src.attr_text(var, "coordinates") {
        for c in coords.split_whitespace() {
            if src.dims(c).is_some_and(|d| d.len() >= 2) {
                return Err(invalid(
                    file,
                    format!(
                        "variable {var} has two-dimensional coordinates ({c}), a curvilinear grid; seekgrid reads regular latitude/longitude grids only: {fix}"
                    ),
                ));
            }
        }
    }
    Ok(())
}

/// Finds the u and v variables: by name when given, else by `standard_name`.
fn find_components(
    src: &dyn CfSource,
    file: &Path,
    q: Quantity,
    opts: &ForecastOptions,
) -> Result<(String, String), IncidentError> {
    let names = src.var_names();
    let exists = |n: &str| names.iter().any(|v| v == n);
    let listing = || {
        names
            .iter()
            .map(|n| match src.attr_text(n, "standard_name") {
                Some(sn) => format!("{n} ({sn})"),
                None => n.clone(),
            })
            .collect::<Vec<_>>()
            .join(", ")
    };
    for (key, given) in [
        ("u_variable", &opts.u_variable),
        ("v_variable", &opts.v_variable),
    ] {
        if let Some(n) = given
            && !exists(n)
        {
            return Err(invalid(
                file,
                format!(
                    "{key} = \"{n}\" is not a variable of this file; its variables are: {}",
                    listing()
                ),
            ));
        }
    }
    let by_sn = |sn: &str| {
        names
            .iter()
            .find(|n| src.attr_text(n, "standard_name").as_deref() == Some(sn))
            .cloned()
    };
    let mut found = (opts.u_variable.clone(), opts.v_variable.clone());
    if found.0.is_none() || found.1.is_none() {
        for (su, sv) in standard_names(q) {
            if let (Some(u), Some(v)) = (by_sn(su), by_sn(sv)) {
                found.0.get_or_insert(u);
                found.1.get_or_insert(v);
                break;
            }
        }
    }
    match found {
        (Some(u), Some(v)) => Ok((u, v)),
        _ => {
            let wanted: Vec<String> = standard_names(q)
                .iter()
                .map(|(u, v)| format!("{u}/{v}"))
                .collect();
            Err(invalid(
                file,
                format!(
                    "no {} variables: none has the standard_name {}; its variables are: {}; name them with u_variable = \"...\" and v_variable = \"...\"",
                    q.key(),
                    wanted.join(" or "),
                    listing()
                ),
            ))
        }
    }
}

/// One component read onto the lattice: values in knots, NaN where there is no value.
struct Component {
    lon: RegularAxis,
    lon_desc: bool,
    lat: RegularAxis,
    lat_desc: bool,
    times: Vec<Time>,
    level: Option<String>,
    units: String,
    values_kn: Vec<f64>,
}

fn coordinate(src: &mut dyn CfSource, file: &Path, dim: &str) -> Result<Vec<f64>, IncidentError> {
    if src.dims(dim).is_none() {
        return Err(invalid(
            file,
            format!(
                "dimension {dim} has no coordinate variable; CF files give each axis as a variable of the same name"
            ),
        ));
    }
    let (raw, _) = src
        .values(dim)
        .map_err(|e| invalid(file, format!("variable {dim} is unreadable: {e}")))?;
    let scale = src
        .attr_numbers(dim, "scale_factor")
        .and_then(|v| v.first().copied())
        .unwrap_or(1.0);
    let offset = src
        .attr_numbers(dim, "add_offset")
        .and_then(|v| v.first().copied())
        .unwrap_or(0.0);
    Ok(raw.into_iter().map(|v| v * scale + offset).collect())
}

fn read_component(
    src: &mut dyn CfSource,
    file: &Path,
    var: &str,
    q: Quantity,
    opts: &ForecastOptions,
) -> Result<Component, IncidentError> {
    check_grid(src, file, var)?;
    let dims = src.dims(var).unwrap_or_default();
    let mut roles = Vec::new();
    for (d, n) in &dims {
        match role_of(src, d) {
            Some(r) => roles.push(r),
            None if *n == 1 => roles.push(Role::Level),
            None => {
                return Err(invalid(
                    file,
                    format!(
                        "variable {var} has a dimension {d} of {n} values that is neither longitude, latitude, time nor a level; give a file with dimensions (time, [depth or height,] latitude, longitude)"
                    ),
                ));
            }
        }
    }
    for (role, name) in [
        (Role::Lon, "longitude"),
        (Role::Lat, "latitude"),
        (Role::Time, "time"),
    ] {
        if roles.iter().filter(|r| **r == role).count() != 1 {
            return Err(invalid(
                file,
                format!(
                    "variable {var} does not have exactly one {name} dimension (its dimensions: {}); give a file with dimensions (time, [depth or height,] latitude, longitude) and CF coordinate variables",
                    dims.iter()
                        .map(|(d, _)| d.as_str())
                        .collect::<Vec<_>>()
                        .join(", ")
                ),
            ));
        }
    }
    if roles.iter().filter(|r| **r == Role::Level).count() > 1
        && dims
            .iter()
            .zip(&roles)
            .filter(|(d, r)| **r == Role::Level && d.1 > 1)
            .count()
            > 1
    {
        return Err(invalid(
            file,
            format!("variable {var} has more than one level dimension; cut it to one level"),
        ));
    }
    let dim_of = |role: Role| {
        dims.iter()
            .zip(&roles)
            .find(|(_, r)| **r == role)
            .map(|(d, _)| d.0.clone())
    };
    let lon_dim = dim_of(Role::Lon).unwrap_or_default();
    let lat_dim = dim_of(Role::Lat).unwrap_or_default();
    let time_dim = dim_of(Role::Time).unwrap_or_default();
    let lon_values = unwrap_longitudes(coordinate(src, file, &lon_dim)?);
    let lat_values = coordinate(src, file, &lat_dim)?;
    let not_regular = |d: &str| {
        invalid(
            file,
            format!(
                "the {d} axis of variable {var} is not evenly spaced (a Gaussian or stretched grid); regrid it to a regular latitude/longitude grid (for instance `cdo remapbil`)"
            ),
        )
    };
    let (lon, lon_desc) = regular(&lon_values).ok_or_else(|| not_regular(&lon_dim))?;
    let (lat, lat_desc) = regular(&lat_values).ok_or_else(|| not_regular(&lat_dim))?;
    if lat.start_deg < -90.0 || lat.start_deg + lat.step_deg * (lat.n - 1) as f64 > 90.0 {
        return Err(invalid(
            file,
            format!("the latitudes of {lat_dim} go beyond -90..90; check the file"),
        ));
    }
    // Time.
    let time_units = src.attr_text(&time_dim, "units").ok_or_else(|| {
        invalid(
            file,
            format!(
                "the time variable {time_dim} has no units; CF needs units such as \"hours since 1950-01-01 00:00:00\""
            ),
        )
    })?;
    let calendar = src.attr_text(&time_dim, "calendar");
    let (per_s, reference) = cf_time_units(&time_units, calendar.as_deref())
        .map_err(|e| invalid(file, format!("time variable {time_dim}: {e}")))?;
    let time_values = coordinate(src, file, &time_dim)?;
    let times = cf_times(&time_values, per_s, reference).ok_or_else(|| {
        invalid(
            file,
            format!("time variable {time_dim} has a value that is not a finite time; check it"),
        )
    })?;
    if times.windows(2).any(|w| w[1] <= w[0]) {
        return Err(invalid(
            file,
            format!(
                "the times of {time_dim} do not increase; sort the file by time (`cdo sorttimestamp`)"
            ),
        ));
    }
    // Level: the index along each level dimension (the nearest to the level asked for).
    let want = opts.level_m.unwrap_or(q.default_level_m());
    let mut level = None;
    let mut level_index = vec![0usize; dims.len()];
    for (k, ((d, n), r)) in dims.iter().zip(&roles).enumerate() {
        if *r != Role::Level {
            continue;
        }
        let values = if src.dims(d).is_some() {
            coordinate(src, file, d)?
        } else {
            vec![0.0; *n]
        };
        let Some((best, value)) = values.iter().enumerate().min_by(|a, b| {
            (a.1.abs() - want)
                .abs()
                .total_cmp(&(b.1.abs() - want).abs())
        }) else {
            continue;
        };
        level_index[k] = best;
        if *n > 1 || opts.level_m.is_some() {
            let units = src.attr_text(d, "units").unwrap_or_else(|| "m".to_owned());
            level = Some(format!(
                "{d} = {value} {units} (level {} of {n}, the nearest to {want} m)",
                best + 1
            ));
        }
    }
    // Values.
    let units = src.attr_text(var, "units").ok_or_else(|| {
        invalid(
            file,
            format!("variable {var} has no units; give units = \"m s-1\" (or \"knots\")"),
        )
    })?;
    let factor = knots_per_unit(&units).ok_or_else(|| {
        invalid(
            file,
            format!(
                "variable {var} has units \"{units}\", which seekgrid cannot convert to knots; give it in m s-1, cm s-1, km h-1 or knots"
            ),
        )
    })?;
    let (raw, default_fill) = src
        .values(var)
        .map_err(|e| invalid(file, format!("variable {var} is unreadable: {e}")))?;
    let first = |a: &str| src.attr_numbers(var, a).and_then(|v| v.first().copied());
    let scale = first("scale_factor").unwrap_or(1.0);
    let offset = first("add_offset").unwrap_or(0.0);
    let mut fills: Vec<f64> = Vec::new();
    match src.attr_numbers(var, "_FillValue") {
        Some(v) => fills.extend(v),
        None => fills.extend(default_fill),
    }
    fills.extend(src.attr_numbers(var, "missing_value").unwrap_or_default());
    let (mut lo, mut hi) = (f64::NEG_INFINITY, f64::INFINITY);
    if let Some(r) = src.attr_numbers(var, "valid_range")
        && r.len() == 2
    {
        (lo, hi) = (r[0], r[1]);
    }
    if let Some(v) = first("valid_min") {
        lo = v;
    }
    if let Some(v) = first("valid_max") {
        hi = v;
    }
    let (nlon, nlat, nt) = (lon.n, lat.n, times.len());
    // Strides of the storage order (last dimension fastest).
    let mut strides = vec![1usize; dims.len()];
    for k in (0..dims.len().saturating_sub(1)).rev() {
        strides[k] = strides[k + 1] * dims[k + 1].1;
    }
    let stride = |role: Role| {
        roles
            .iter()
            .position(|r| *r == role)
            .map_or(0, |k| strides[k])
    };
    let (s_lon, s_lat, s_t) = (stride(Role::Lon), stride(Role::Lat), stride(Role::Time));
    let base: usize = level_index
        .iter()
        .zip(&roles)
        .zip(&strides)
        .filter(|((_, r), _)| **r == Role::Level)
        .map(|((i, _), s)| i * s)
        .sum();
    let mut values_kn = vec![f64::NAN; nlon * nlat * nt];
    for k in 0..nt {
        for j in 0..nlat {
            let jj = if lat_desc { nlat - 1 - j } else { j };
            for i in 0..nlon {
                let ii = if lon_desc { nlon - 1 - i } else { i };
                let at = base + k * s_t + jj * s_lat + ii * s_lon;
                let Some(&r) = raw.get(at) else {
                    return Err(invalid(
                        file,
                        format!("variable {var} has fewer values than its dimensions say"),
                    ));
                };
                let missing = r.is_nan()
                    || fills
                        .iter()
                        .any(|f| r == *f || (f.abs() > 1e30 && (r - f).abs() <= 1e-6 * f.abs()))
                    || r < lo
                    || r > hi;
                if !missing {
                    values_kn[(k * nlat + j) * nlon + i] = (r * scale + offset) * factor;
                }
            }
        }
    }
    Ok(Component {
        lon,
        lon_desc,
        lat,
        lat_desc,
        times,
        level,
        units,
        values_kn,
    })
}

/// A longitude axis that starts at 180° or beyond, moved one turn west (so that a file in
/// 0..360 gives the same numbers as one in -180..180; exact for the values files use).
fn west_of_180(mut lon: RegularAxis) -> RegularAxis {
    if lon.start_deg >= 180.0 {
        lon.start_deg -= 360.0;
    }
    lon
}

/// Whether the bytes start a NetCDF classic or 64-bit offset file ("CDF" 1 or 2), a CDF-5
/// file ("CDF" 5), or an HDF5 (NetCDF-4) file.
fn netcdf_kind(bytes: &[u8]) -> Option<&'static str> {
    if bytes.starts_with(b"CDF\x01") || bytes.starts_with(b"CDF\x02") {
        Some("cdf")
    } else if bytes.starts_with(b"CDF\x05") {
        Some("cdf5")
    } else if bytes.starts_with(b"\x89HDF\r\n\x1a\n") {
        Some("hdf5")
    } else {
        None
    }
}

/// Reads a CF NetCDF file of current or wind into a [`ForecastGrid`].
///
/// # Errors
/// An [`IncidentError`] naming the file, the variable and the fix: not a NetCDF file, a
/// NetCDF-4 file without the `netcdf4` feature, no u/v variables, axes that are not CF or not
/// regular, a rotated or curvilinear grid, a time axis that is not CF, units that are not a
/// speed, u and v on different grids.
pub fn read_netcdf(
    file: &Path,
    q: Quantity,
    opts: &ForecastOptions,
) -> Result<ForecastGrid, IncidentError> {
    let bytes = read_bytes(file, InputKind::Forecast)?;
    let mut src: Box<dyn CfSource> = match netcdf_kind(&bytes) {
        Some("cdf") => {
            let name = file.display().to_string();
            let reader =
                netcdf3::FileReader::open_seek_read(&name, Box::new(std::io::Cursor::new(bytes)))
                    .map_err(|e| {
                    IncidentError::whole_file(
                        ErrorKind::Syntax,
                        file,
                        format!(
                            "not a readable NetCDF file: {e:?}; check that it was copied whole"
                        ),
                    )
                })?;
            Box::new(Nc3 { reader })
        }
        Some("cdf5") => {
            return Err(invalid(
                file,
                "is a NetCDF CDF-5 (64-bit data) file, which seekgrid does not read; convert it with `nccopy -k classic in.nc out.nc` (or `-k 64-bit-offset`)",
            ));
        }
        Some(_) => open_netcdf4(file)?,
        None => {
            return Err(IncidentError::whole_file(
                ErrorKind::Syntax,
                file,
                "is not a NetCDF file (it does not start with the NetCDF or HDF5 signature); give a NetCDF file, or a GRIB2 file with grib = \"...\"",
            ));
        }
    };
    let (u_name, v_name) = find_components(src.as_ref(), file, q, opts)?;
    let u = read_component(src.as_mut(), file, &u_name, q, opts)?;
    let v = read_component(src.as_mut(), file, &v_name, q, opts)?;
    if u.lon != v.lon
        || u.lat != v.lat
        || u.times != v.times
        || u.lon_desc != v.lon_desc
        || u.lat_desc != v.lat_desc
    {
        return Err(invalid(
            file,
            format!(
                "variables {u_name} and {v_name} are on different grids or times (a staggered grid); interpolate them to one grid first (for instance `cdo remapbil`)"
            ),
        ));
    }
    let units = if u.units == v.units {
        u.units.clone()
    } else {
        format!("{}, {}", u.units, v.units)
    };
    let mut variables: Vec<String> = src
        .var_names()
        .into_iter()
        .filter(|n| src.dims(n).is_some_and(|d| d.len() >= 2))
        .collect();
    variables.sort();
    Ok(ForecastGrid {
        files: vec![file.to_owned()],
        format: src.format(),
        variables,
        components: (u_name, v_name),
        units,
        level: u.level,
        lon: west_of_180(u.lon),
        lat: u.lat,
        times: u.times,
        u_kn: u.values_kn,
        v_kn: v.values_kn,
        land_nodes: 0,
    })
}

/// Reads several CF NetCDF files of one forecast (daily files, say) into one
/// [`ForecastGrid`]: each is read by [`read_netcdf`], and their times are put together in
/// order.
///
/// # Errors
/// Those of [`read_netcdf`]; files on different grids, with other variables or units, or
/// giving the same time twice.
pub fn read_netcdf_files(
    files: &[PathBuf],
    q: Quantity,
    opts: &ForecastOptions,
) -> Result<ForecastGrid, IncidentError> {
    let Some(first) = files.first() else {
        return Err(invalid(Path::new(""), "no NetCDF file given"));
    };
    let mut parts: Vec<ForecastGrid> = files
        .iter()
        .map(|f| read_netcdf(f, q, opts))
        .collect::<Result<_, _>>()?;
    if parts.len() == 1 {
        return Ok(parts.remove(0));
    }
    for (f, p) in files.iter().zip(&parts).skip(1) {
        let a = &parts[0];
        if p.lon != a.lon || p.lat != a.lat || p.components != a.components || p.units != a.units {
            return Err(invalid(
                f,
                format!(
                    "is not on the grid of {} (or has other u/v variables or units); give files of one forecast",
                    first.display()
                ),
            ));
        }
    }
    let plane = parts[0].lon.n * parts[0].lat.n;
    let mut slabs: Vec<(Time, usize, usize)> = parts
        .iter()
        .enumerate()
        .flat_map(|(n, p)| p.times.iter().enumerate().map(move |(k, t)| (*t, n, k)))
        .collect();
    slabs.sort_by_key(|s| s.0);
    if let Some(w) = slabs.windows(2).find(|w| w[0].0 == w[1].0) {
        return Err(invalid(
            &files[w[1].1],
            format!(
                "gives the time {} that {} gives too; give each time once",
                w[1].0.to_rfc3339(),
                files[w[0].1].display()
            ),
        ));
    }
    let mut out = parts[0].clone();
    out.files = files.to_vec();
    out.times = slabs.iter().map(|s| s.0).collect();
    out.u_kn = Vec::with_capacity(plane * slabs.len());
    out.v_kn = Vec::with_capacity(plane * slabs.len());
    for &(_, n, k) in &slabs {
        out.u_kn
            .extend_from_slice(&parts[n].u_kn[k * plane..(k + 1) * plane]);
        out.v_kn
            .extend_from_slice(&parts[n].v_kn[k * plane..(k + 1) * plane]);
    }
    Ok(out)
}

#[cfg(feature = "netcdf4")]
fn open_netcdf4(file: &Path) -> Result<Box<dyn CfSource>, IncidentError> {
    let f = netcdf::open(file).map_err(|e| {
        IncidentError::whole_file(
            ErrorKind::Syntax,
            file,
            format!("not a readable NetCDF-4 file: {e}; check that it was copied whole"),
        )
    })?;
    Ok(Box::new(nc4::Nc4 { file: f }))
}

#[cfg(not(feature = "netcdf4"))]
fn open_netcdf4(file: &Path) -> Result<Box<dyn CfSource>, IncidentError> {
    Err(invalid(
        file,
        "is a NetCDF-4 (HDF5) file, and this seekgrid was built without NetCDF-4 support; convert it with `nccopy -k classic in.nc out.nc`, or build seekgrid with `--features netcdf4` (docs/incident-format.md)",
    ))
}

// ------------------------------------------------------------------------------------------
// GRIB2

/// One u or v field of a GRIB2 message.
struct GribField {
    time: Time,
    level_m: f64,
    lon: RegularAxis,
    lat: RegularAxis,
    /// Values in the message's units (m/s), index `ilat * nlon + ilon`, ascending axes.
    values: Vec<f64>,
}

/// The (discipline, category, number) of the u and v components (WMO GRIB2 code table 4.2).
fn grib_codes(q: Quantity) -> ((u8, u8, u8), (u8, u8, u8)) {
    match q {
        Quantity::Wind => ((0, 2, 2), (0, 2, 3)),
        Quantity::Current => ((10, 1, 2), (10, 1, 3)),
    }
}

/// The level of a fixed surface in metres (height above ground, type 103; depth below sea
/// surface, type 160; the ground or sea surface, types 1 and 101, is 0), or `None` for other
/// surfaces.
fn surface_level_m(s: &grib::FixedSurface) -> Option<f64> {
    let value = || f64::from(s.scaled_value) * 10f64.powi(-i32::from(s.scale_factor));
    match s.surface_type {
        1 | 101 => Some(0.0),
        103 | 160 => Some(value()),
        _ => None,
    }
}

fn grib_time(
    file: &Path,
    m: &grib::SubMessage<'_, impl std::io::Read + std::io::Seek>,
) -> Result<Time, IncidentError> {
    use grib::codetables::grib2::Table4_4;
    let r = m.identification().ref_time_unchecked();
    let reference =
        NaiveDate::from_ymd_opt(i32::from(r.year), u32::from(r.month), u32::from(r.day))
            .and_then(|d| {
                d.and_hms_opt(u32::from(r.hour), u32::from(r.minute), u32::from(r.second))
            })
            .map(|d| d.and_utc())
            .ok_or_else(|| {
                invalid(
                    file,
                    "a message has an impossible reference time; check the file",
                )
            })?;
    let Some(ft) = m.prod_def().forecast_time() else {
        return Ok(reference);
    };
    let per_s: i64 = match ft.unit {
        grib::Code::Name(Table4_4::Minute) => 60,
        grib::Code::Name(Table4_4::Hour) => 3600,
        grib::Code::Name(Table4_4::Day) => 86_400,
        grib::Code::Name(Table4_4::ThreeHours) => 3 * 3600,
        grib::Code::Name(Table4_4::SixHours) => 6 * 3600,
        grib::Code::Name(Table4_4::TwelveHours) => 12 * 3600,
        grib::Code::Name(Table4_4::Second) => 1,
        _ => {
            return Err(invalid(
                file,
                "a message gives its forecast time in a unit seekgrid does not read (months, years); give forecast times in hours",
            ));
        }
    };
    Ok(reference + TimeDelta::seconds(i64::from(ft.value) * per_s))
}

/// Reads the u and v fields of the messages of one GRIB2 file.
fn grib_fields(
    file: &Path,
    q: Quantity,
    params: &mut Vec<String>,
) -> Result<(Vec<GribField>, Vec<GribField>), IncidentError> {
    let bytes = read_bytes(file, InputKind::Forecast)?;
    if !bytes.starts_with(b"GRIB") {
        return Err(IncidentError::whole_file(
            ErrorKind::Syntax,
            file,
            "is not a GRIB file (it does not start with \"GRIB\"); give a GRIB2 file, or a NetCDF file with netcdf = \"...\"",
        ));
    }
    if bytes.get(7) == Some(&1) {
        return Err(invalid(
            file,
            "is a GRIB edition 1 file; seekgrid reads GRIB2: convert it with `grib_set -s edition=2 in.grib out.grib2`",
        ));
    }
    let grib2 = grib::from_bytes(bytes).map_err(|e| {
        IncidentError::whole_file(
            ErrorKind::Syntax,
            file,
            format!("not a readable GRIB2 file: {e}; check that it was copied whole"),
        )
    })?;
    let (cu, cv) = grib_codes(q);
    let (mut us, mut vs) = (Vec::new(), Vec::new());
    for (index, m) in grib2.iter() {
        let code = (
            m.indicator().discipline,
            m.prod_def().parameter_category().unwrap_or(255),
            m.prod_def().parameter_number().unwrap_or(255),
        );
        let name = format!("{}.{}.{}", code.0, code.1, code.2);
        if !params.contains(&name) {
            params.push(name);
        }
        let is_u = code == cu;
        if !is_u && code != cv {
            continue;
        }
        let what = format!(
            "message {} ({} component, parameter {}.{}.{})",
            index.0 + 1,
            if is_u { "u" } else { "v" },
            code.0,
            code.1,
            code.2
        );
        let Some(level_m) = m
            .prod_def()
            .fixed_surfaces()
            .and_then(|(first, _)| surface_level_m(&first))
        else {
            continue;
        };
        let template = m.grid_def().grid_tmpl_num();
        if template != 0 {
            let kind = match template {
                1 => "a rotated latitude/longitude grid (template 3.1)",
                10 => "a Mercator grid (template 3.10)",
                20 => "a polar stereographic grid (template 3.20)",
                30 => "a Lambert conformal grid (template 3.30)",
                40 => "a Gaussian grid (template 3.40)",
                _ => "a grid other than regular latitude/longitude",
            };
            return Err(invalid(
                file,
                format!(
                    "{what} is on {kind}; seekgrid reads regular latitude/longitude grids (template 3.0) only: regrid it first (for instance `cdo remapbil,r720x360` or `wgrib2 -new_grid latlon`)"
                ),
            ));
        }
        let time = grib_time(file, &m)?;
        let latlons: Vec<(f64, f64)> = grib::LatLons::latlons(&m)
            .map_err(|e| invalid(file, format!("{what}: unreadable grid: {e}")))?
            .collect();
        let decoder = grib::Grib2SubmessageDecoder::from(m)
            .map_err(|e| invalid(file, format!("{what}: cannot be decoded: {e}")))?;
        let values: Vec<f32> = decoder
            .dispatch()
            .map_err(|e| {
                invalid(
                    file,
                    format!(
                        "{what}: cannot be decoded: {e}; repack it with simple packing (`grib_set -r -s packingType=grid_simple in out`)"
                    ),
                )
            })?
            .collect();
        if values.len() != latlons.len() {
            return Err(invalid(
                file,
                format!(
                    "{what}: {} values for {} grid points",
                    values.len(),
                    latlons.len()
                ),
            ));
        }
        let mut lons: Vec<f64> = latlons.iter().map(|p| p.1).collect();
        let mut lats: Vec<f64> = latlons.iter().map(|p| p.0).collect();
        for v in [&mut lons, &mut lats] {
            v.sort_by(f64::total_cmp);
            v.dedup_by(|a, b| (*a - *b).abs() < 1e-6);
        }
        let bad_grid = || {
            invalid(
                file,
                format!("{what}: the grid is not a regular latitude/longitude grid"),
            )
        };
        // A grid across the Greenwich meridian whose longitudes come as 0..360 sorts into two
        // runs (0, 0.25, ..., 359.5, 359.75): read the western run a turn east.
        let (lon, wrap) = match regular(&lons) {
            Some((a, _)) => (a, false),
            None => {
                let mut east: Vec<f64> = lons
                    .iter()
                    .map(|l| if *l < 180.0 { l + 360.0 } else { *l })
                    .collect();
                east.sort_by(f64::total_cmp);
                (regular(&east).ok_or_else(bad_grid)?.0, true)
            }
        };
        let (lat, _) = regular(&lats).ok_or_else(bad_grid)?;
        if lon.n * lat.n != values.len() {
            return Err(bad_grid());
        }
        let mut grid = vec![f64::NAN; values.len()];
        let index_of = |x: f64, a: &RegularAxis| {
            if a.n == 1 {
                0
            } else {
                ((x - a.start_deg) / a.step_deg).round() as usize
            }
        };
        for ((la, lo), val) in latlons.iter().zip(&values) {
            let lo = if wrap && *lo < 180.0 { lo + 360.0 } else { *lo };
            let i = index_of(lo, &lon);
            let j = index_of(*la, &lat);
            grid[j * lon.n + i] = f64::from(*val);
        }
        let field = GribField {
            time,
            level_m,
            lon,
            lat,
            values: grid,
        };
        if is_u { us.push(field) } else { vs.push(field) }
    }
    Ok((us, vs))
}

/// Reads GRIB2 files of wind (10 m u and v; discipline 0, category 2, numbers 2 and 3) or
/// current (discipline 10, category 1, numbers 2 and 3) into a [`ForecastGrid`]: every
/// message of those parameters at the level nearest `opts.level_m` (10 m for a wind, the
/// surface for a current), one time per message, over all the files.
///
/// # Errors
/// An [`IncidentError`] naming the file and the fix: not a GRIB2 file, no u/v messages, a grid
/// that is not a regular latitude/longitude grid (rotated, Lambert, Gaussian...), a packing
/// the reader cannot decode, u without v at a time, messages on different grids.
pub fn read_grib(
    files: &[PathBuf],
    q: Quantity,
    opts: &ForecastOptions,
) -> Result<ForecastGrid, IncidentError> {
    let Some(first_file) = files.first() else {
        return Err(invalid(Path::new(""), "no GRIB2 file given"));
    };
    let mut params = Vec::new();
    let (mut us, mut vs) = (Vec::new(), Vec::new());
    for f in files {
        let (u, v) = grib_fields(f, q, &mut params)?;
        us.extend(u.into_iter().map(|x| (f.clone(), x)));
        vs.extend(v.into_iter().map(|x| (f.clone(), x)));
    }
    let ((cu, cv), want) = (grib_codes(q), opts.level_m.unwrap_or(q.default_level_m()));
    let name = |c: (u8, u8, u8)| format!("{}.{}.{}", c.0, c.1, c.2);
    if us.is_empty() || vs.is_empty() {
        return Err(invalid(
            first_file,
            format!(
                "has no {} u and v messages (parameters {} and {} of GRIB2 code table 4.2 on a height, depth or surface level); its parameters are: {}",
                q.key(),
                name(cu),
                name(cv),
                params.join(", ")
            ),
        ));
    }
    let best = us
        .iter()
        .map(|(_, f)| f.level_m)
        .min_by(|a, b| (a - want).abs().total_cmp(&(b - want).abs()))
        .unwrap_or(want);
    let mut levels: Vec<f64> = us.iter().map(|(_, f)| f.level_m).collect();
    levels.sort_by(f64::total_cmp);
    levels.dedup();
    us.retain(|(_, f)| f.level_m == best);
    vs.retain(|(_, f)| f.level_m == best);
    us.sort_by_key(|(_, f)| f.time);
    vs.sort_by_key(|(_, f)| f.time);
    for list in [&us, &vs] {
        if let Some(w) = list.windows(2).find(|w| w[0].1.time == w[1].1.time) {
            return Err(invalid(
                &w[1].0,
                format!(
                    "gives the {} at {} m for {} twice (also in {}); give each time once",
                    q.key(),
                    best,
                    w[1].1.time.to_rfc3339(),
                    w[0].0.display()
                ),
            ));
        }
    }
    let (lon, lat) = (us[0].1.lon, us[0].1.lat);
    let mut u_kn = Vec::new();
    let mut v_kn = Vec::new();
    let mut times = Vec::new();
    let factor = knots_per_unit("m s-1").unwrap_or(1.0);
    for (fu, u) in &us {
        let Some((_, v)) = vs.iter().find(|(_, v)| v.time == u.time) else {
            return Err(invalid(
                fu,
                format!(
                    "has the u component ({}) at {} but no v component ({}) at that time; give both",
                    name(cu),
                    u.time.to_rfc3339(),
                    name(cv)
                ),
            ));
        };
        for g in [u, v] {
            if g.lon != lon || g.lat != lat {
                return Err(invalid(
                    fu,
                    format!(
                        "the messages at {} are on another grid than those at {}; give every time on one grid",
                        g.time.to_rfc3339(),
                        us[0].1.time.to_rfc3339()
                    ),
                ));
            }
        }
        times.push(u.time);
        u_kn.extend(u.values.iter().map(|x| x * factor));
        v_kn.extend(v.values.iter().map(|x| x * factor));
    }
    if vs.len() != us.len() {
        return Err(invalid(
            first_file,
            format!(
                "has {} v messages for {} u messages at {best} m; give u and v at the same times",
                vs.len(),
                us.len()
            ),
        ));
    }
    let level = Some(format!(
        "{best} m (of the levels {}, the nearest to {want} m)",
        levels
            .iter()
            .map(|l| format!("{l} m"))
            .collect::<Vec<_>>()
            .join(", ")
    ));
    Ok(ForecastGrid {
        files: files.to_vec(),
        format: ForecastFormat::Grib2,
        variables: params,
        components: (name(cu), name(cv)),
        units: "m s-1".to_owned(),
        level,
        lon: west_of_180(lon),
        lat,
        times,
        u_kn,
        v_kn,
        land_nodes: 0,
    })
}

/// The time of a [`DateTime`] in the format of reports.
#[must_use]
pub fn report_time(t: DateTime<Utc>) -> String {
    t.format("%Y-%m-%dT%H:%MZ").to_string()
}

#[cfg(test)]
mod tests {
    use super::*;
    use chrono::TimeZone;

    #[test]
    fn cf_time_units_read_the_reference_date_and_unit() {
        // CF conventions 1.11 section 4.4: "UNIT since DATE", UDUNITS date forms.
        let (per, t) = cf_time_units("hours since 1950-01-01 00:00:00", Some("gregorian")).unwrap();
        assert_eq!(per, 3600.0);
        assert_eq!(t, Utc.with_ymd_and_hms(1950, 1, 1, 0, 0, 0).unwrap());
        let (per, t) = cf_time_units("days since 2026-6-14", None).unwrap();
        assert_eq!(per, 86_400.0);
        assert_eq!(t, Utc.with_ymd_and_hms(2026, 6, 14, 0, 0, 0).unwrap());
        let (_, t) = cf_time_units("seconds since 1970-01-01T00:00:00Z", Some("standard")).unwrap();
        assert_eq!(t, Utc.with_ymd_and_hms(1970, 1, 1, 0, 0, 0).unwrap());
        // An offset east of UTC: 06:00 at +02:00 is 04:00 UTC.
        let (_, t) = cf_time_units("minutes since 2000-01-01 06:00:00 +02:00", None).unwrap();
        assert_eq!(t, Utc.with_ymd_and_hms(2000, 1, 1, 4, 0, 0).unwrap());
    }

    #[test]
    fn non_cf_time_axes_and_calendars_are_refused_with_the_fix() {
        assert!(
            cf_time_units("hours", None)
                .unwrap_err()
                .contains("UNIT since DATE")
        );
        assert!(
            cf_time_units("months since 2000-01-01", None)
                .unwrap_err()
                .contains("no fixed length")
        );
        assert!(
            cf_time_units("days since 2000-01-01", Some("360_day"))
                .unwrap_err()
                .contains("cdo setcalendar")
        );
        assert!(
            cf_time_units("days since 1500-01-01", Some("standard"))
                .unwrap_err()
                .contains("1582")
        );
        assert!(cf_time_units("days since 1500-01-01", Some("proleptic_gregorian")).is_ok());
    }

    #[test]
    fn speed_units_convert_to_knots() {
        // 1 kn = 1852 m / 3600 s exactly (docs/references.md, units).
        let mps = knots_per_unit("m s-1").unwrap();
        assert!((mps - 3600.0 / 1852.0).abs() < 1e-12);
        assert_eq!(knots_per_unit("m/s"), Some(mps));
        assert_eq!(knots_per_unit("m.s-1"), Some(mps));
        assert_eq!(knots_per_unit("knots"), Some(1.0));
        assert!((knots_per_unit("cm s-1").unwrap() - 0.01 * mps).abs() < 1e-15);
        assert_eq!(knots_per_unit("K"), None);
        assert_eq!(knots_per_unit("m"), None);
    }

    #[test]
    fn axes_are_regular_in_either_order_to_a_thousandth_of_a_step() {
        let (a, desc) = regular(&[50.0, 49.75, 49.5]).unwrap();
        assert!(desc);
        assert_eq!((a.start_deg, a.step_deg, a.n), (49.5, 0.25, 3));
        // Single-precision coordinates of a 1/12 degree grid.
        let v: Vec<f64> = (0..5)
            .map(|i| f64::from((i as f32) * (1.0f32 / 12.0)))
            .collect();
        assert!(regular(&v).is_some());
        assert!(regular(&[0.0, 1.0, 3.0]).is_none());
    }

    #[test]
    fn longitudes_across_greenwich_or_the_antimeridian_are_made_continuous() {
        assert_eq!(
            unwrap_longitudes(vec![359.5, 359.75, 0.0, 0.25]),
            vec![359.5, 359.75, 360.0, 360.25]
        );
        assert_eq!(
            unwrap_longitudes(vec![179.5, -180.0, -179.5]),
            vec![179.5, 180.0, 180.5]
        );
        let (a, _) = regular(&unwrap_longitudes(vec![359.5, 359.75, 0.0, 0.25])).unwrap();
        assert_eq!((a.start_deg, a.step_deg, a.n), (359.5, 0.25, 4));
    }
}
