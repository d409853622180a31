//! Sizing an incident before computing it: how large the grid, the drift clouds and the
//! memory would be, and which input drives the size, so `check`, `map` and `plan` can refuse
//! an input that cannot be computed before anything is allocated.
//!
//! The estimate is deliberately coarse (an upper bound on extents, common practice): a point or
//! route scenario reaches 4 standard deviations, a ring its outer radius, a drift cloud the
//! last known position's 4 sigma plus (highest current + highest leeway) × drift duration plus
//! 4 diffusion spreads sqrt(2 K t), a search its pattern or sweep width.

use seekgrid_incident::Incident;
use seekgrid_incident::locate::FieldPath;
use seekgrid_incident::model::Time;
use seekgrid_incident::model::{PatternDef, ScenarioKind, SearchGeometry, VectorDef};

/// Bytes per grid cell and layer (one `f64`).
const BYTES_PER_CELL_LAYER: u64 = 8;
/// Grid layers held at once while mapping (prior, belief, POD, containment, working copies).
const LAYERS: u64 = 6;
/// Bytes per drift particle record (position, weight).
const BYTES_PER_RECORD: u64 = 24;
/// Metres per degree of latitude (mean, common practice).
const M_PER_DEG: f64 = 111_320.0;
/// A cell side (metres) at which any plausible search extent fits the grid limit: an input
/// whose extent would not fit even then is blamed instead of `cell_m`.
const PLAUSIBLE_CELL_M: f64 = 1000.0;
/// Standard deviations a normal scenario reaches on the grid.
const SIGMAS: f64 = 4.0;

/// The size of an incident's computation.
#[derive(Debug, Clone, PartialEq)]
pub struct SizeEstimate {
    /// Grid rows.
    pub rows: u64,
    /// Grid columns.
    pub cols: u64,
    /// Cell side, metres.
    pub cell_m: f64,
    /// Drift particles over all drift scenarios.
    pub particles: u64,
    /// Records kept per particle (one per search time plus start and end).
    pub records: u64,
    /// Estimated memory, bytes.
    pub bytes: u64,
    /// Whether the extent comes from `[grid] bounds`.
    pub from_bounds: bool,
}

/// Why an incident is too large to compute.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SizingError {
    /// The grid would exceed `[grid] max_cells`.
    #[error(
        "{field} = {value} makes the grid about {rows} x {cols} cells of {cell_m} m, more than max_cells = {max_cells}; {fix}"
    )]
    TooManyCells {
        /// The input that drives the size.
        field: FieldPath,
        /// Its value as written.
        value: String,
        /// Estimated rows.
        rows: u64,
        /// Estimated columns.
        cols: u64,
        /// Cell side, metres.
        cell_m: f64,
        /// The limit.
        max_cells: u64,
        /// A fix the file accepts.
        fix: String,
    },
    /// The computation would need more memory than the limit given.
    #[error(
        "{field} = {value} makes the computation need about {need_mib} MiB, more than the {limit_mib} MiB allowed; {fix}"
    )]
    TooMuchMemory {
        /// The input that drives the size.
        field: FieldPath,
        /// Its value as written.
        value: String,
        /// Needed, MiB.
        need_mib: u64,
        /// Allowed, MiB.
        limit_mib: u64,
        /// A fix the file accepts.
        fix: String,
    },
}

impl SizingError {
    /// The field path of the input that drives the size.
    #[must_use]
    pub fn field(&self) -> &FieldPath {
        match self {
            Self::TooManyCells { field, .. } | Self::TooMuchMemory { field, .. } => field,
        }
    }
}

/// One contribution to the extent: a centre (lon, lat), a half-size in metres, and the field.
struct Reach {
    lon: f64,
    lat: f64,
    half_m: f64,
    field: FieldPath,
    value: f64,
}

fn scenario(i: usize, key: &str) -> FieldPath {
    FieldPath::new("scenario").index(i).key(key)
}

fn max_speed(v: &VectorDef) -> f64 {
    match v {
        VectorDef::Constant(s) => s.speed_kn + 3.0 * s.speed_sigma_kn,
        VectorDef::Series { samples, .. } => samples
            .iter()
            .map(|(_, s)| s.speed_kn + 3.0 * s.speed_sigma_kn)
            .fold(0.0, f64::max),
        VectorDef::Forecast {
            grid,
            speed_sigma_kn,
            ..
        } => {
            grid.u_kn
                .iter()
                .zip(&grid.v_kn)
                .map(|(u, v)| u.hypot(*v))
                .filter(|s| s.is_finite())
                .fold(0.0, f64::max)
                + 3.0 * speed_sigma_kn
        }
        #[allow(unreachable_patterns)]
        _ => 0.0,
    }
}

/// The latest time the incident refers to: the reference time or the end of its last search.
fn horizon(incident: &Incident) -> Time {
    incident
        .searches
        .iter()
        .map(|s| s.end)
        .fold(incident.reference_time, Time::max)
}

fn reaches(incident: &Incident, until: Time) -> Vec<Reach> {
    let mut out = Vec::new();
    for (i, s) in incident.scenarios.iter().enumerate() {
        match &s.kind {
            ScenarioKind::Point {
                position,
                sigma_major_m,
                ..
            } => out.push(Reach {
                lon: position[0],
                lat: position[1],
                half_m: SIGMAS * sigma_major_m,
                field: scenario(i, "sigma_major_m"),
                value: *sigma_major_m,
            }),
            ScenarioKind::Route {
                waypoints,
                cross_track_sigma_m,
            } => {
                for w in waypoints {
                    out.push(Reach {
                        lon: w[0],
                        lat: w[1],
                        half_m: SIGMAS * cross_track_sigma_m,
                        field: scenario(i, "cross_track_sigma_m"),
                        value: *cross_track_sigma_m,
                    });
                }
            }
            ScenarioKind::Rings {
                position,
                quantiles,
                ..
            } => {
                let r = quantiles.iter().map(|q| q.1).fold(0.0, f64::max);
                out.push(Reach {
                    lon: position[0],
                    lat: position[1],
                    half_m: r,
                    field: scenario(i, "distance_quantiles_km"),
                    value: r / 1000.0,
                });
            }
            ScenarioKind::Drift(d) => {
                let secs = (until - d.adrift_earliest).num_seconds().max(0) as f64;
                let current = max_speed(&d.current);
                let wind = max_speed(&d.wind);
                let l = &d.leeway;
                let leeway = l.downwind_slope.abs() * wind
                    + l.downwind_offset_kn.abs()
                    + 3.0 * l.downwind_sigma_kn
                    + l.crosswind_slope.abs() * wind
                    + l.crosswind_offset_kn.abs()
                    + 3.0 * l.crosswind_sigma_kn;
                let kn = seekgrid_core::units::MPS_PER_KNOT;
                let parts = [
                    (
                        SIGMAS * d.position_sigma_m,
                        "position_sigma_m",
                        d.position_sigma_m,
                    ),
                    (current * kn * secs, "current", current),
                    (leeway * kn * secs, "wind", wind),
                    (
                        SIGMAS * (2.0 * d.diffusivity_m2_s * secs).sqrt(),
                        "diffusivity_m2_s",
                        d.diffusivity_m2_s,
                    ),
                ];
                let half: f64 = parts.iter().map(|p| p.0).sum();
                let big = parts
                    .iter()
                    .copied()
                    .fold(parts[0], |a, b| if b.0 > a.0 { b } else { a });
                let field = match big.1 {
                    "current" if matches!(d.current, VectorDef::Constant(_)) => {
                        scenario(i, "current").key("speed_kn")
                    }
                    "wind" if matches!(d.wind, VectorDef::Constant(_)) => {
                        scenario(i, "wind").key("speed_kn")
                    }
                    k => scenario(i, k),
                };
                out.push(Reach {
                    lon: d.position[0],
                    lat: d.position[1],
                    half_m: half,
                    field,
                    value: big.2,
                });
            }
            _ => {}
        }
    }
    for (i, s) in incident.searches.iter().enumerate() {
        let at = FieldPath::new("search").index(i);
        if let SearchGeometry::Pattern(p) = &s.geometry {
            let (c, half, key, value) = match p {
                PatternDef::ParallelSweep(r) | PatternDef::CreepingLine(r) => {
                    let (key, v) = if r.length_m >= r.width_m {
                        ("length_m", r.length_m)
                    } else {
                        ("width_m", r.width_m)
                    };
                    (r.center, 0.5 * v, at.key("pattern").key(key), v)
                }
                PatternDef::ExpandingSquare {
                    center,
                    track_spacing_m,
                    legs,
                    ..
                } => (
                    *center,
                    0.5 * track_spacing_m * (*legs as f64),
                    at.key("pattern").key("track_spacing_m"),
                    *track_spacing_m,
                ),
                PatternDef::SectorSearch {
                    center, radius_m, ..
                } => (
                    *center,
                    *radius_m,
                    at.key("pattern").key("radius_m"),
                    *radius_m,
                ),
            };
            let sweep = 3.0 * s.sweep_width_m;
            let (field, value) = if half >= sweep {
                (key, value)
            } else {
                (at.key("sweep_width_m"), s.sweep_width_m)
            };
            out.push(Reach {
                lon: c[0],
                lat: c[1],
                half_m: half + sweep,
                field,
                value,
            });
        }
    }
    out
}

/// Estimates the size of computing `incident` up to the later of its reference time and its
/// last search end, and refuses when the grid would exceed `[grid] max_cells` or the memory
/// would exceed `memory_limit_bytes` (the caller chooses the limit; the library reads no
/// machine state).
///
/// # Errors
/// [`SizingError`] naming the input that drives the size (its field path) and a fix the file
/// accepts.
pub fn estimate(incident: &Incident, memory_limit_bytes: u64) -> Result<SizeEstimate, SizingError> {
    let cell_m = incident.grid.cell_m;
    let max_cells = incident.grid.max_cells;
    let until = horizon(incident);
    let reach = reaches(incident, until);
    let (rows, cols, from_bounds, driver) = if let Some([w, s, e, n]) = incident.grid.bounds {
        let lat0 = 0.5 * (s + n);
        let width = (e - w) * M_PER_DEG * lat0.to_radians().cos().abs();
        let height = (n - s) * M_PER_DEG;
        (cells(height, cell_m), cells(width, cell_m), true, None)
    } else {
        let mut west = f64::INFINITY;
        let mut east = f64::NEG_INFINITY;
        let mut south = f64::INFINITY;
        let mut north = f64::NEG_INFINITY;
        let lat0 = reach.first().map_or(0.0, |r| r.lat);
        let m_lon = M_PER_DEG * lat0.to_radians().cos().abs().max(1e-6);
        for r in &reach {
            let x = r.lon * m_lon;
            let y = r.lat * M_PER_DEG;
            west = west.min(x - r.half_m);
            east = east.max(x + r.half_m);
            south = south.min(y - r.half_m);
            north = north.max(y + r.half_m);
        }
        let driver = reach.iter().max_by(|a, b| a.half_m.total_cmp(&b.half_m));
        if reach.is_empty() {
            (1, 1, false, None)
        } else {
            (
                cells(north - south, cell_m),
                cells(east - west, cell_m),
                false,
                driver,
            )
        }
    };
    let total = rows.saturating_mul(cols);
    let (field, value, fix) = match driver {
        // The extent itself is implausible when even 1 km cells would not hold it.
        Some(r)
            if !from_bounds
                && cells(2.0 * r.half_m, PLAUSIBLE_CELL_M).saturating_pow(2) > max_cells =>
        {
            (
                r.field.clone(),
                format!("{}", r.value),
                format!(
                    "check {} (a value that large is probably a typing error), or give [grid] bounds = {{ west = …, south = …, east = …, north = … }} to hold only the area that matters",
                    r.field
                ),
            )
        }
        _ => {
            let coarser = cell_m * ((total as f64 / max_cells as f64).sqrt().ceil()).max(2.0);
            (
                if from_bounds {
                    FieldPath::new("grid").key("bounds")
                } else {
                    FieldPath::new("grid").key("cell_m")
                },
                if from_bounds {
                    "the bounds given".to_owned()
                } else {
                    format!("{cell_m}")
                },
                format!(
                    "give a coarser [grid] cell_m = {coarser:.0}, smaller [grid] bounds, or a lower [grid] max_cells"
                ),
            )
        }
    };
    if total > max_cells {
        return Err(SizingError::TooManyCells {
            field,
            value,
            rows,
            cols,
            cell_m,
            max_cells,
            fix,
        });
    }
    let particles: u64 = incident
        .scenarios
        .iter()
        .map(|s| match &s.kind {
            ScenarioKind::Drift(d) => d.particles as u64,
            _ => 0,
        })
        .sum();
    let records = incident.searches.len() as u64 + 2;
    let bytes = total
        .saturating_mul(LAYERS * BYTES_PER_CELL_LAYER)
        .saturating_add(
            particles
                .saturating_mul(records)
                .saturating_mul(BYTES_PER_RECORD),
        );
    if bytes > memory_limit_bytes {
        let grid_bytes = total.saturating_mul(LAYERS * BYTES_PER_CELL_LAYER);
        let (field, value, fix) = if grid_bytes >= bytes / 2 {
            let coarser = cell_m
                * ((grid_bytes as f64 / memory_limit_bytes as f64)
                    .sqrt()
                    .ceil())
                .max(2.0);
            let fix = if field == FieldPath::new("grid").key("cell_m") {
                format!(
                    "give a coarser [grid] cell_m = {coarser:.0}, smaller [grid] bounds, or a lower [grid] max_cells"
                )
            } else {
                fix
            };
            (field, value, fix)
        } else {
            let i = incident
                .scenarios
                .iter()
                .position(|s| matches!(s.kind, ScenarioKind::Drift(_)))
                .unwrap_or(0);
            (
                scenario(i, "particles"),
                format!("{particles}"),
                "give fewer particles".to_owned(),
            )
        };
        return Err(SizingError::TooMuchMemory {
            field,
            value,
            need_mib: bytes >> 20,
            limit_mib: memory_limit_bytes >> 20,
            fix,
        });
    }
    Ok(SizeEstimate {
        rows,
        cols,
        cell_m,
        particles,
        records,
        bytes,
        from_bounds,
    })
}

/// Cells needed to span `m` metres (at least 1; saturating for absurd spans).
fn cells(m: f64, cell_m: f64) -> u64 {
    let n = (m / cell_m).ceil();
    if n.is_finite() && n < 1e18 {
        (n as u64).max(1)
    } else {
        u64::MAX / 2
    }
}

#[cfg(test)]
mod tests {
    use super::cells;

    #[test]
    fn cells_span_rounds_up_and_saturates() {
        // computed: 1000 m in 250 m cells is 4; 1001 m needs 5
        assert_eq!(cells(1000.0, 250.0), 4);
        assert_eq!(cells(1001.0, 250.0), 5);
        assert_eq!(cells(f64::INFINITY, 250.0), u64::MAX / 2);
    }
}
