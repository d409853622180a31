//! Search patterns: their areas, their tracks and the POD they give.
//!
//! Bearings here are *grid* bearings (clockwise from grid north of the working frame, degrees):
//! turn a true bearing into a grid bearing with `seekgrid_core::Frame::true_to_grid_bearing_deg`.
//! Pattern geometry follows common practice for the trade's standard patterns.

use crate::coverage::polygon_coverage;
use crate::error::SearchError;
use crate::law::{DetectionLaw, SweepWidth};
use crate::pod_layer::PodLayer;
use crate::track::{track_pod, track_pod_at};
use geo::{Area, Coord, Euclidean, Length, LineString, MultiPolygon, Polygon};
use seekgrid_core::GridSpec;

/// Most legs a pattern may have (protects against a track spacing typed in the wrong unit):
/// the legs of a rectangle pattern, and the `legs` of an expanding square (1..=`MAX_LEGS`).
pub const MAX_LEGS: usize = 100_000;

/// Largest length, width, spacing or radius of a pattern, and longest leg of an expanding
/// square, metres (10 000 km: a quarter of the Earth's circumference; a working frame is a few
/// hundred kilometres wide).
pub const MAX_PATTERN_M: f64 = 1e7;

/// Fewest and most sectors of a sector search.
pub const SECTORS: std::ops::RangeInclusive<usize> = 2..=12;

/// The rectangle of a parallel sweep or creeping line, in the working frame.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct Rectangle {
    /// Centre of the rectangle, working frame, metres.
    pub center: Coord<f64>,
    /// Length along the major axis, metres.
    pub length_m: f64,
    /// Width across the major axis, metres.
    pub width_m: f64,
    /// Grid bearing of the major axis, degrees.
    pub major_grid_bearing_deg: f64,
    /// Track spacing S, metres.
    pub track_spacing_m: f64,
}

/// A planned or completed search pattern in the working frame.
#[derive(Clone, Debug, PartialEq)]
pub enum Pattern {
    /// Parallel sweep of a rectangle: legs along the major axis (`length_m` long), `track_spacing_m`
    /// apart, the first leg on the left of the major bearing and the pattern stepping right.
    /// Legs end `S/2` inside the rectangle; the number of legs is `round(width / S)` (at least 1).
    ParallelSweep(Rectangle),
    /// Creeping line of a rectangle: legs across the major axis (`width_m` long), `S` apart,
    /// progressing along the major bearing (the length is the direction of progress); the first
    /// leg runs to the right of it.
    CreepingLine(Rectangle),
    /// Expanding square from the datum: legs of S, S, 2S, 2S, 3S, ... each turning 90° right.
    ExpandingSquare {
        /// Datum and commence search point, working frame, metres.
        center: Coord<f64>,
        /// Track spacing S, metres.
        track_spacing_m: f64,
        /// Number of legs.
        legs: usize,
        /// Grid bearing of the first leg, degrees.
        first_leg_grid_bearing_deg: f64,
    },
    /// Sector search about the datum: `sectors` triangles with apex angle 180°/sectors, each
    /// leg out of radius R, across, and back through the datum; triangle j starts on bearing
    /// `first - j·360°/sectors`. With 3 sectors this is the usual pattern of 120° right turns.
    SectorSearch {
        /// Datum and commence search point, working frame, metres.
        center: Coord<f64>,
        /// Radius R (length of the out and back legs), metres.
        radius_m: f64,
        /// Grid bearing of the first leg, degrees.
        first_leg_grid_bearing_deg: f64,
        /// Number of triangles, 2..=12.
        sectors: usize,
    },
}

/// Unit vector of a grid bearing (east, north components).
fn unit(bearing_deg: f64) -> Coord<f64> {
    let b = bearing_deg.to_radians();
    Coord {
        x: b.sin(),
        y: b.cos(),
    }
}

fn at(c: Coord<f64>, u: Coord<f64>, along: f64, v: Coord<f64>, across: f64) -> Coord<f64> {
    Coord {
        x: c.x + u.x * along + v.x * across,
        y: c.y + u.y * along + v.y * across,
    }
}

fn positive(pattern: &'static str, field: &'static str, value: f64) -> Result<(), SearchError> {
    if value.is_finite() && value > 0.0 && value <= MAX_PATTERN_M {
        Ok(())
    } else {
        Err(SearchError::BadPattern {
            pattern,
            field,
            value,
            fix: "give a positive number of metres, at most 10 000 km",
        })
    }
}

fn finite(pattern: &'static str, field: &'static str, value: f64) -> Result<(), SearchError> {
    if value.is_finite() {
        Ok(())
    } else {
        Err(SearchError::BadPattern {
            pattern,
            field,
            value,
            fix: "give a finite number",
        })
    }
}

impl Pattern {
    /// The pattern's kind as the trade names it.
    #[must_use]
    pub fn kind(&self) -> &'static str {
        match self {
            Self::ParallelSweep(_) => "parallel sweep",
            Self::CreepingLine(_) => "creeping line",
            Self::ExpandingSquare { .. } => "expanding square",
            Self::SectorSearch { .. } => "sector search",
        }
    }

    /// Checks every field.
    ///
    /// # Errors
    /// [`SearchError::BadPattern`] naming the field: a non-finite centre or bearing, a
    /// non-positive length, width, radius or spacing (or one over [`MAX_PATTERN_M`]; for the
    /// expanding square, a last leg over it), a spacing that leaves no room for a leg
    /// (parallel sweep: `S < length`; creeping line: `S < width`), more than [`MAX_LEGS`] legs,
    /// zero legs, or sectors outside 2..=12.
    pub fn validate(&self) -> Result<(), SearchError> {
        let kind = self.kind();
        match *self {
            Self::ParallelSweep(r) | Self::CreepingLine(r) => {
                let Rectangle {
                    center,
                    length_m,
                    width_m,
                    major_grid_bearing_deg,
                    track_spacing_m,
                } = r;
                finite(kind, "center.x", center.x)?;
                finite(kind, "center.y", center.y)?;
                positive(kind, "length_m", length_m)?;
                positive(kind, "width_m", width_m)?;
                positive(kind, "track_spacing_m", track_spacing_m)?;
                finite(kind, "major_grid_bearing_deg", major_grid_bearing_deg)?;
                let (leg_len, across) = if matches!(self, Self::ParallelSweep(_)) {
                    (length_m, width_m)
                } else {
                    (width_m, length_m)
                };
                if track_spacing_m >= leg_len {
                    return Err(SearchError::BadPattern {
                        pattern: kind,
                        field: "track_spacing_m",
                        value: track_spacing_m,
                        fix: "the spacing must be shorter than the legs; use a smaller spacing or a longer area",
                    });
                }
                if across / track_spacing_m > MAX_LEGS as f64 {
                    return Err(SearchError::BadPattern {
                        pattern: kind,
                        field: "track_spacing_m",
                        value: track_spacing_m,
                        fix: "it gives more than 100000 legs; check that the spacing is in metres",
                    });
                }
                Ok(())
            }
            Self::ExpandingSquare {
                center,
                track_spacing_m,
                legs,
                first_leg_grid_bearing_deg,
            } => {
                finite(kind, "center.x", center.x)?;
                finite(kind, "center.y", center.y)?;
                positive(kind, "track_spacing_m", track_spacing_m)?;
                finite(
                    kind,
                    "first_leg_grid_bearing_deg",
                    first_leg_grid_bearing_deg,
                )?;
                if legs == 0 || legs > MAX_LEGS {
                    return Err(SearchError::BadPattern {
                        pattern: kind,
                        field: "legs",
                        value: legs as f64,
                        fix: "give 1 to 100000 legs",
                    });
                }
                // The last leg is ceil(legs / 2) spacings long.
                if legs.div_ceil(2) as f64 * track_spacing_m > MAX_PATTERN_M {
                    return Err(SearchError::BadPattern {
                        pattern: kind,
                        field: "legs",
                        value: legs as f64,
                        fix: "its last leg would be longer than 10 000 km; give fewer legs or a smaller spacing",
                    });
                }
                Ok(())
            }
            Self::SectorSearch {
                center,
                radius_m,
                first_leg_grid_bearing_deg,
                sectors,
            } => {
                finite(kind, "center.x", center.x)?;
                finite(kind, "center.y", center.y)?;
                positive(kind, "radius_m", radius_m)?;
                finite(
                    kind,
                    "first_leg_grid_bearing_deg",
                    first_leg_grid_bearing_deg,
                )?;
                if !SECTORS.contains(&sectors) {
                    return Err(SearchError::BadPattern {
                        pattern: kind,
                        field: "sectors",
                        value: sectors as f64,
                        fix: "give 2 to 12 sectors (3 is the usual sector search)",
                    });
                }
                Ok(())
            }
        }
    }

    /// The area searched, a polygon in the working frame (exterior counter-clockwise):
    /// the rectangle; for the expanding square the square of its legs grown by S/2; for the
    /// sector search the regular polygon through the outer corners of its triangles.
    /// Meaningful only for a pattern that passes [`Pattern::validate`].
    #[must_use]
    pub fn area_polygon(&self) -> Polygon<f64> {
        let ring: Vec<Coord<f64>> = match *self {
            Self::ParallelSweep(Rectangle {
                center,
                length_m,
                width_m,
                major_grid_bearing_deg,
                ..
            })
            | Self::CreepingLine(Rectangle {
                center,
                length_m,
                width_m,
                major_grid_bearing_deg,
                ..
            }) => {
                let u = unit(major_grid_bearing_deg);
                let v = unit(major_grid_bearing_deg + 90.0);
                let (hl, hw) = (0.5 * length_m, 0.5 * width_m);
                vec![
                    at(center, u, -hl, v, -hw),
                    at(center, u, -hl, v, hw),
                    at(center, u, hl, v, hw),
                    at(center, u, hl, v, -hw),
                ]
            }
            Self::ExpandingSquare {
                center,
                track_spacing_m,
                first_leg_grid_bearing_deg,
                ..
            } => {
                let u = unit(first_leg_grid_bearing_deg);
                let v = unit(first_leg_grid_bearing_deg + 90.0);
                let (mut a0, mut a1, mut c0, mut c1) = (0.0_f64, 0.0_f64, 0.0_f64, 0.0_f64);
                for p in self.tracks().coords() {
                    let (dx, dy) = (p.x - center.x, p.y - center.y);
                    let along = dx * u.x + dy * u.y;
                    let across = dx * v.x + dy * v.y;
                    a0 = a0.min(along);
                    a1 = a1.max(along);
                    c0 = c0.min(across);
                    c1 = c1.max(across);
                }
                let h = 0.5 * track_spacing_m;
                vec![
                    at(center, u, a0 - h, v, c0 - h),
                    at(center, u, a0 - h, v, c1 + h),
                    at(center, u, a1 + h, v, c1 + h),
                    at(center, u, a1 + h, v, c0 - h),
                ]
            }
            Self::SectorSearch {
                center,
                radius_m,
                first_leg_grid_bearing_deg,
                sectors,
            } => {
                let alpha = 180.0 / sectors.max(1) as f64;
                (0..2 * sectors.max(1))
                    .map(|m| {
                        let u = unit(first_leg_grid_bearing_deg + m as f64 * alpha);
                        at(center, u, radius_m, u, 0.0)
                    })
                    .collect()
            }
        };
        let mut poly = Polygon::new(LineString::from(ring), vec![]);
        use geo::{Orient, orient::Direction};
        poly = poly.orient(Direction::Default);
        poly
    }

    /// The legs of the pattern as one line, commence search point first.
    /// Meaningful only for a pattern that passes [`Pattern::validate`].
    #[must_use]
    pub fn tracks(&self) -> LineString<f64> {
        let mut pts = Vec::new();
        match *self {
            Self::ParallelSweep(r) | Self::CreepingLine(r) => {
                let (major, minor) = r.sides();
                // A parallel sweep's legs run along the major axis, stepping across it; a
                // creeping line's run across it, creeping along it.
                let (leg, step) = if matches!(self, Self::ParallelSweep(_)) {
                    (major, minor)
                } else {
                    (minor, major)
                };
                back_and_forth(&mut pts, r.center, leg, step, r.track_spacing_m);
            }
            Self::ExpandingSquare {
                center,
                track_spacing_m,
                legs,
                first_leg_grid_bearing_deg,
            } => {
                let mut p = center;
                pts.push(p);
                for i in 0..legs.min(MAX_LEGS) {
                    // S, S, 2S, 2S, 3S, ...
                    let len = ((i + 2) / 2) as f64 * track_spacing_m;
                    let u = unit(first_leg_grid_bearing_deg + 90.0 * i as f64);
                    p = at(p, u, len, u, 0.0);
                    pts.push(p);
                }
            }
            Self::SectorSearch {
                center,
                radius_m,
                first_leg_grid_bearing_deg,
                sectors,
            } => {
                let k = sectors.clamp(*SECTORS.start(), *SECTORS.end());
                let alpha = 180.0 / k as f64;
                pts.push(center);
                for j in 0..k {
                    let theta = first_leg_grid_bearing_deg - 2.0 * alpha * j as f64;
                    let u1 = unit(theta);
                    let u2 = unit(theta + alpha);
                    pts.push(at(center, u1, radius_m, u1, 0.0));
                    pts.push(at(center, u2, radius_m, u2, 0.0));
                    pts.push(center);
                }
            }
        }
        LineString::from(pts)
    }

    /// Length of [`Pattern::tracks`], metres.
    #[must_use]
    pub fn track_length_m(&self) -> f64 {
        Euclidean.length(&self.tracks())
    }

    /// Coverage of the pattern with sweep width `w`: `W / S` for the parallel sweep, creeping
    /// line and expanding square; `W · track length / area` for the sector search
    /// (found: Cooper, "Selected Inland Search Theory Definitions": C = Z/A = W/S).
    #[must_use]
    pub fn coverage(&self, w: &SweepWidth) -> f64 {
        match *self {
            Self::ParallelSweep(Rectangle {
                track_spacing_m, ..
            })
            | Self::CreepingLine(Rectangle {
                track_spacing_m, ..
            })
            | Self::ExpandingSquare {
                track_spacing_m, ..
            } => w.metres() / track_spacing_m,
            Self::SectorSearch { .. } => {
                w.metres() * self.track_length_m() / self.area_polygon().unsigned_area()
            }
        }
    }

    /// Whether the pattern is a rectangle scored by its coverage (parallel sweep, creeping
    /// line), rather than along its track (expanding square, sector search).
    #[must_use]
    pub fn is_rectangle(&self) -> bool {
        self.rectangle().is_some()
    }

    /// The rectangle of a parallel sweep or creeping line; `None` for the datum patterns.
    #[must_use]
    pub fn rectangle(&self) -> Option<&Rectangle> {
        match self {
            Self::ParallelSweep(r) | Self::CreepingLine(r) => Some(r),
            Self::ExpandingSquare { .. } | Self::SectorSearch { .. } => None,
        }
    }

    /// The track spacing of a parallel sweep, creeping line or expanding square, metres;
    /// `None` for a sector search (its legs fan out from the datum).
    #[must_use]
    pub fn track_spacing_m(&self) -> Option<f64> {
        match self {
            Self::ParallelSweep(r) | Self::CreepingLine(r) => Some(r.track_spacing_m),
            Self::ExpandingSquare {
                track_spacing_m, ..
            } => Some(*track_spacing_m),
            Self::SectorSearch { .. } => None,
        }
    }

    /// The first `share` of [`Pattern::tracks`] by length, commence search point first: the
    /// legs of a search cut short after flying that share of its track (`share` in 0..=1, a
    /// value outside is clamped; NaN is taken as 0). The last point is interpolated on the
    /// leg where the share ends; `share = 1` gives every leg.
    /// Meaningful only for a pattern that passes [`Pattern::validate`].
    #[must_use]
    pub fn truncated_tracks(&self, share: f64) -> LineString<f64> {
        let full = self.tracks();
        let share = if share.is_nan() {
            0.0
        } else {
            share.clamp(0.0, 1.0)
        };
        if share >= 1.0 {
            return full;
        }
        let total: f64 = full.lines().map(|l| l.dx().hypot(l.dy())).sum();
        let target = share * total;
        let mut pts = vec![full.0[0]];
        let mut done = 0.0;
        for l in full.lines() {
            let len = l.dx().hypot(l.dy());
            if done + len >= target {
                let f = if len > 0.0 {
                    (target - done) / len
                } else {
                    0.0
                };
                pts.push(Coord {
                    x: l.start.x + f * l.dx(),
                    y: l.start.y + f * l.dy(),
                });
                break;
            }
            pts.push(l.end);
            done += len;
        }
        LineString::from(pts)
    }
}

/// One side of a rectangle: its direction (a unit vector in the working frame) and its
/// extent that way, metres.
#[derive(Clone, Copy, Debug)]
struct RectangleSide {
    direction: Coord<f64>,
    extent_m: f64,
}

/// The turn points of legs of a rectangle's back-and-forth pattern, centred on `center`: legs
/// along `leg` (each stops half a spacing short of the rectangle's edges), `spacing_m` apart
/// along `step`, alternating in direction.
fn back_and_forth(
    pts: &mut Vec<Coord<f64>>,
    center: Coord<f64>,
    leg: RectangleSide,
    step: RectangleSide,
    spacing_m: f64,
) {
    let n = legs_across(step.extent_m, spacing_m);
    let half_leg = 0.5 * (leg.extent_m - spacing_m);
    for j in 0..n {
        let off = (j as f64 - 0.5 * (n - 1) as f64) * spacing_m;
        let (s0, s1) = if j % 2 == 0 {
            (-half_leg, half_leg)
        } else {
            (half_leg, -half_leg)
        };
        pts.push(at(center, leg.direction, s0, step.direction, off));
        pts.push(at(center, leg.direction, s1, step.direction, off));
    }
}

impl Rectangle {
    /// The major side (along the major grid bearing, `length_m`) and the minor side (90°
    /// clockwise from it, `width_m`).
    fn sides(&self) -> (RectangleSide, RectangleSide) {
        (
            RectangleSide {
                direction: unit(self.major_grid_bearing_deg),
                extent_m: self.length_m,
            },
            RectangleSide {
                direction: unit(self.major_grid_bearing_deg + 90.0),
                extent_m: self.width_m,
            },
        )
    }
}

fn legs_across(extent_m: f64, spacing_m: f64) -> usize {
    ((extent_m / spacing_m).round() as usize).clamp(1, MAX_LEGS)
}

/// POD layer of a pattern on the grid.
///
/// A parallel sweep or creeping line gives its rectangle the uniform POD
/// `law.pod_from_coverage(W / S)`; a cell partly inside gets that POD times the exact fraction
/// of its area inside the rectangle. An expanding square or sector search is scored along its
/// tracks as [`track_pod`] scores a GPS track.
///
/// # Errors
/// [`SearchError::BadPattern`] from [`Pattern::validate`]; [`SearchError::PatternOutsideGrid`]
/// when the pattern misses the grid.
pub fn pattern_pod(
    grid: &GridSpec,
    pattern: &Pattern,
    law: DetectionLaw,
    w: &SweepWidth,
) -> Result<PodLayer, SearchError> {
    pattern.validate()?;
    let outside = SearchError::PatternOutsideGrid {
        pattern: pattern.kind(),
    };
    if pattern.is_rectangle() {
        let pod = law.pod_from_coverage(pattern.coverage(w));
        let area = MultiPolygon(vec![pattern.area_polygon()]);
        let cov = polygon_coverage(grid, &area).ok_or(outside)?;
        let values = cov.fraction.mapv(|f| f * pod);
        return Ok(PodLayer::from_parts(*grid, cov.rows, cov.cols, values));
    }
    let track: Vec<Coord<f64>> = pattern.tracks().0;
    match track_pod(grid, &track, law, w) {
        Err(SearchError::TrackOutsideGrid { .. }) => Err(outside),
        other => other,
    }
}

/// POD at each point (working frame, metres) for a pattern: the same rule as [`pattern_pod`],
/// evaluated at the point (inside a rectangle pattern, edges included, its uniform POD; 0
/// outside). Non-finite points get 0.
///
/// # Errors
/// [`SearchError::BadPattern`] from [`Pattern::validate`].
pub fn pattern_pod_at(
    points: &[Coord<f64>],
    pattern: &Pattern,
    law: DetectionLaw,
    w: &SweepWidth,
) -> Result<Vec<f64>, SearchError> {
    pattern.validate()?;
    match *pattern {
        Pattern::ParallelSweep(Rectangle {
            center,
            length_m,
            width_m,
            major_grid_bearing_deg,
            ..
        })
        | Pattern::CreepingLine(Rectangle {
            center,
            length_m,
            width_m,
            major_grid_bearing_deg,
            ..
        }) => {
            let pod = law.pod_from_coverage(pattern.coverage(w));
            let u = unit(major_grid_bearing_deg);
            let v = unit(major_grid_bearing_deg + 90.0);
            Ok(points
                .iter()
                .map(|p| {
                    let (dx, dy) = (p.x - center.x, p.y - center.y);
                    let along = dx * u.x + dy * u.y;
                    let across = dx * v.x + dy * v.y;
                    if along.abs() <= 0.5 * length_m && across.abs() <= 0.5 * width_m {
                        pod
                    } else {
                        0.0
                    }
                })
                .collect())
        }
        _ => track_pod_at(points, &pattern.tracks().0, law, w),
    }
}
