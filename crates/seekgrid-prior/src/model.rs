//! Analysts, scenarios and scenario shapes, with validation and extents.

use crate::error::{PriorError, ShapeError};
use geo::{Area, BooleanOps, BoundingRect, Coord, MultiPolygon, Validation};
use seekgrid_core::ProjectedBox;

/// Mahalanobis radius (in sigmas) of the box given by [`ScenarioShape::extent`] for normal shapes:
/// a 4.5-sigma ellipse leaves exp(-4.5²/2) = 4.0e-5 of the mass outside, i.e. it holds
/// > 99.99 % (mass within the Mahalanobis-k ellipse is 1 - exp(-k²/2); common practice).
pub const EXTENT_SIGMAS: f64 = 4.5;

/// How far above 1 a segments scenario's POA values may add up (rounding of values written
/// as decimals, e.g. 0.1 + 0.2 + 0.7).
pub const POA_SUM_TOLERANCE: f64 = 1e-12;

/// One analyst and the credibility given to their judgement.
#[derive(Debug, Clone, PartialEq)]
pub struct Analyst {
    /// Identifier, unique among analysts.
    pub id: String,
    /// Credibility weight, positive; normalised over all analysts by [`crate::combine`].
    pub weight: f64,
}

/// One scenario of one analyst: a theory of where the object is.
#[derive(Debug, Clone, PartialEq)]
pub struct Scenario {
    /// Identifier, unique among scenarios.
    pub id: String,
    /// The analyst ([`Analyst::id`]) who holds this scenario.
    pub analyst: String,
    /// Weight, positive; normalised over the scenarios of the same analyst.
    pub weight: f64,
    /// Where the scenario puts the object.
    pub shape: ScenarioShape,
}

/// A named map segment (land search).
#[derive(Debug, Clone, PartialEq)]
pub struct Segment {
    /// Identifier, unique within one scenario.
    pub id: String,
    /// The segment's area in the working frame, metres.
    pub polygons: MultiPolygon<f64>,
}

/// How the distance CDF is interpolated between rings of a [`ScenarioShape::Rings`] scenario.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum RingInterpolation {
    /// Constant density in each annulus (each ring's share spread evenly over its area): the
    /// published lost-person-behaviour ring method (Koester 2008, *Lost Person Behavior*).
    #[default]
    UniformPerRing,
    /// A smooth monotone cubic CDF F(r) through (0, 0) and the quantiles: piecewise cubic Hermite
    /// with Fritsch-Carlson slopes (F. N. Fritsch, R. E. Carlson, SIAM J. Numer. Anal. 17:238-246,
    /// 1980; the slopes of SciPy's `PchipInterpolator`).
    MonotoneCubic,
}

/// How the analysts' maps are pooled.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Pool {
    /// Linear opinion pool P = Σ_a w_a P_a (Stone 1961, "The opinion pool", Ann. Math. Stat. 32;
    /// Genest & Zidek 1986, Stat. Sci. 1:114-148). Keeps every analyst's possibilities.
    #[default]
    Linear,
    /// Logarithmic pool P ∝ Π_a P_a^{w_a} over the bins (cells, outside grid, rest of world)
    /// (Genest & Zidek 1986). Zero-forcing: a bin that any analyst gives probability 0 gets 0 in
    /// the pool, however sure the others are; normal scenarios are cut off a few sigmas out, so
    /// cells beyond every analyst's cut-off become exactly 0.
    Logarithmic,
}

impl RingInterpolation {
    /// Every interpolation, in the order the incident format lists them.
    pub const ALL: [Self; 2] = [Self::UniformPerRing, Self::MonotoneCubic];

    /// Reads the name used in the incident file: `"uniform-per-ring"` or `"monotone-cubic"`.
    #[must_use]
    pub fn parse(s: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|m| m.name() == s.trim())
    }

    /// The name [`RingInterpolation::parse`] reads.
    #[must_use]
    pub fn name(self) -> &'static str {
        match self {
            Self::UniformPerRing => "uniform-per-ring",
            Self::MonotoneCubic => "monotone-cubic",
        }
    }
}

impl Pool {
    /// Every pool, in the order the incident format lists them.
    pub const ALL: [Self; 2] = [Self::Linear, Self::Logarithmic];

    /// Reads the name used in the incident file: `"linear"` or `"logarithmic"`.
    #[must_use]
    pub fn parse(s: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|p| p.name() == s.trim())
    }

    /// The name [`Pool::parse`] reads.
    #[must_use]
    pub fn name(self) -> &'static str {
        match self {
            Self::Linear => "linear",
            Self::Logarithmic => "logarithmic",
        }
    }
}

/// Where a scenario puts the object, in the working frame (metres, grid bearings).
#[derive(Debug, Clone, PartialEq)]
pub enum ScenarioShape {
    /// Bivariate normal; circular when `sigma_major_m == sigma_minor_m`.
    Point {
        /// Mean position, metres.
        center: Coord<f64>,
        /// Standard deviation along the major axis, metres.
        sigma_major_m: f64,
        /// Standard deviation along the minor axis, metres (≤ `sigma_major_m`).
        sigma_minor_m: f64,
        /// Direction of the major axis, degrees clockwise from grid north.
        major_grid_bearing_deg: f64,
    },
    /// Uniform along the polyline (by length), normal across track with `cross_track_sigma_m`.
    /// Each leg is a line source convolved with an isotropic normal; leg weight ∝ its length.
    Route {
        /// Waypoints, metres, at least two, not all equal.
        waypoints: Vec<Coord<f64>>,
        /// Cross-track standard deviation, metres.
        cross_track_sigma_m: f64,
    },
    /// Uniform over the polygons.
    Area {
        /// The area, metres; polygons must be valid and must not overlap one another.
        polygons: MultiPolygon<f64>,
    },
    /// This analyst's POA per segment, uniform within each segment; 1 - Σ POA goes to rest of
    /// world.
    Segments {
        /// The segments, disjoint (shared edges allowed).
        segments: Vec<Segment>,
        /// POA per segment, aligned with `segments`, each in 0..=1, sum ≤ 1.
        poa: Vec<f64>,
    },
    /// Distance quantiles from the initial planning point: (fraction, radius_m) pairs, both
    /// strictly increasing, fractions in (0, 1]; mass beyond the last radius goes to rest of
    /// world.
    Rings {
        /// Initial planning point, metres.
        center: Coord<f64>,
        /// (cumulative fraction, radius_m), ascending, e.g. (0.25, 1100), (0.5, 2000).
        quantiles: Vec<(f64, f64)>,
        /// Interpolation of the distance CDF between the rings.
        interpolation: RingInterpolation,
    },
}

fn finite(field: &str, v: f64) -> Result<(), ShapeError> {
    if v.is_finite() {
        Ok(())
    } else {
        Err(ShapeError::NotFinite {
            field: field.to_string(),
        })
    }
}

fn finite_coord(field: &str, c: Coord<f64>) -> Result<(), ShapeError> {
    finite(&format!("{field}.x"), c.x)?;
    finite(&format!("{field}.y"), c.y)
}

fn sigma(field: &'static str, v: f64) -> Result<(), ShapeError> {
    if v.is_finite() && v > 0.0 {
        Ok(())
    } else {
        Err(ShapeError::BadSigma { field, value_m: v })
    }
}

/// Checks one multipolygon: valid polygons (geo's OGC validation), positive total area, no two
/// polygons overlapping with positive area. Returns the total area, square metres.
pub(crate) fn check_polygons(what: &str, mp: &MultiPolygon<f64>) -> Result<f64, ShapeError> {
    for (index, p) in mp.0.iter().enumerate() {
        if let Err(e) = p.check_validation() {
            return Err(ShapeError::InvalidPolygon {
                what: what.to_string(),
                index,
                reason: e.to_string(),
            });
        }
    }
    let area = mp.unsigned_area();
    if !(area.is_finite() && area > 0.0) {
        return Err(ShapeError::EmptyPolygon {
            what: what.to_string(),
        });
    }
    for i in 0..mp.0.len() {
        for j in i + 1..mp.0.len() {
            if overlap_area(&mp.0[i], &mp.0[j]) > 1e-9 * area {
                return Err(ShapeError::OverlappingPolygons {
                    what: what.to_string(),
                    first: i,
                    second: j,
                });
            }
        }
    }
    Ok(area)
}

/// Area of the intersection of two polygon sets (geo's boolean operations), square metres.
fn overlap_area<
    G: BooleanOps<Scalar = f64> + BoundingRect<f64, Output = Option<geo::Rect<f64>>>,
>(
    a: &G,
    b: &G,
) -> f64 {
    match (a.bounding_rect(), b.bounding_rect()) {
        (Some(ra), Some(rb)) => {
            let disjoint = ra.max().x <= rb.min().x
                || rb.max().x <= ra.min().x
                || ra.max().y <= rb.min().y
                || rb.max().y <= ra.min().y;
            if disjoint {
                0.0
            } else {
                a.intersection(b).unsigned_area()
            }
        }
        _ => 0.0,
    }
}

impl ScenarioShape {
    /// Checks the shape's parameters.
    ///
    /// # Errors
    /// [`PriorError::Shape`] naming the field and the fix: non-finite values, sigma ≤ 0, a minor
    /// sigma above the major one, a route with fewer than 2 points or zero length, empty, invalid
    /// or overlapping polygons, POA values negative / above 1 / summing above 1 / not one per
    /// segment, duplicate or overlapping segments, ring quantiles empty, fractions outside
    /// (0, 1], radii not positive, or quantiles not strictly increasing.
    pub fn validate(&self) -> Result<(), PriorError> {
        self.check().map_err(PriorError::Shape)
    }

    pub(crate) fn check(&self) -> Result<(), ShapeError> {
        match self {
            ScenarioShape::Point {
                center,
                sigma_major_m,
                sigma_minor_m,
                major_grid_bearing_deg,
            } => {
                finite_coord("center", *center)?;
                sigma("sigma_major_m", *sigma_major_m)?;
                sigma("sigma_minor_m", *sigma_minor_m)?;
                finite("major_grid_bearing_deg", *major_grid_bearing_deg)?;
                if sigma_minor_m > sigma_major_m {
                    return Err(ShapeError::MinorExceedsMajor {
                        sigma_major_m: *sigma_major_m,
                        sigma_minor_m: *sigma_minor_m,
                    });
                }
                Ok(())
            }
            ScenarioShape::Route {
                waypoints,
                cross_track_sigma_m,
            } => {
                if waypoints.len() < 2 {
                    return Err(ShapeError::RouteTooShort {
                        points: waypoints.len(),
                    });
                }
                for (i, w) in waypoints.iter().enumerate() {
                    finite_coord(&format!("waypoints[{i}]"), *w)?;
                }
                sigma("cross_track_sigma_m", *cross_track_sigma_m)?;
                let length: f64 = waypoints
                    .windows(2)
                    .map(|w| (w[1].x - w[0].x).hypot(w[1].y - w[0].y))
                    .sum();
                if length <= 0.0 {
                    return Err(ShapeError::RouteZeroLength);
                }
                Ok(())
            }
            ScenarioShape::Area { polygons } => check_polygons("area", polygons).map(|_| ()),
            ScenarioShape::Segments { segments, poa } => {
                if segments.is_empty() {
                    return Err(ShapeError::NoSegments);
                }
                if segments.len() != poa.len() {
                    return Err(ShapeError::PoaCountMismatch {
                        segments: segments.len(),
                        poa: poa.len(),
                    });
                }
                for (i, s) in segments.iter().enumerate() {
                    if segments[..i].iter().any(|t| t.id == s.id) {
                        return Err(ShapeError::DuplicateSegment {
                            segment: s.id.clone(),
                        });
                    }
                    if !(poa[i].is_finite() && (0.0..=1.0).contains(&poa[i])) {
                        return Err(ShapeError::BadPoa {
                            segment: s.id.clone(),
                            poa: poa[i],
                        });
                    }
                    check_polygons(&format!("segment \"{}\"", s.id), &s.polygons)?;
                }
                let sum = seekgrid_core::neumaier_sum(poa.iter().copied());
                if sum > 1.0 + POA_SUM_TOLERANCE {
                    return Err(ShapeError::PoaSumAboveOne { sum });
                }
                for i in 0..segments.len() {
                    for j in i + 1..segments.len() {
                        let a = &segments[i].polygons;
                        let b = &segments[j].polygons;
                        let smaller = a.unsigned_area().min(b.unsigned_area());
                        if overlap_area(a, b) > 1e-9 * smaller {
                            return Err(ShapeError::OverlappingSegments {
                                first: segments[i].id.clone(),
                                second: segments[j].id.clone(),
                            });
                        }
                    }
                }
                Ok(())
            }
            ScenarioShape::Rings {
                center, quantiles, ..
            } => {
                finite_coord("center", *center)?;
                if quantiles.is_empty() {
                    return Err(ShapeError::NoQuantiles);
                }
                for (index, &(fraction, radius_m)) in quantiles.iter().enumerate() {
                    if !(fraction.is_finite() && fraction > 0.0 && fraction <= 1.0) {
                        return Err(ShapeError::BadFraction { index, fraction });
                    }
                    if !(radius_m.is_finite() && radius_m > 0.0) {
                        return Err(ShapeError::BadRadius { index, radius_m });
                    }
                    if index > 0 {
                        let (f0, r0) = quantiles[index - 1];
                        if fraction <= f0 || radius_m <= r0 {
                            return Err(ShapeError::QuantilesNotIncreasing { index });
                        }
                    }
                }
                Ok(())
            }
        }
    }

    /// A box holding at least 99.99 % of the shape's in-world mass (all of it but rest of
    /// world): for a point the bounding box of the 4.5-sigma ellipse ([`EXTENT_SIGMAS`]), for a
    /// route the waypoints' box grown by 4.5 cross-track sigmas, for areas and segments the
    /// polygons' box, for rings the box of the outermost ring. `None` when the shape is invalid
    /// or, for segments, when every POA is 0.
    #[must_use]
    pub fn extent(&self) -> Option<ProjectedBox> {
        if self.check().is_err() {
            return None;
        }
        match self {
            ScenarioShape::Point {
                center,
                sigma_major_m,
                sigma_minor_m,
                major_grid_bearing_deg,
            } => {
                let (sx, sy, _) = crate::point::marginals(
                    *sigma_major_m,
                    *sigma_minor_m,
                    *major_grid_bearing_deg,
                );
                Some(ProjectedBox::around(
                    *center,
                    EXTENT_SIGMAS * sx,
                    EXTENT_SIGMAS * sy,
                ))
            }
            ScenarioShape::Route {
                waypoints,
                cross_track_sigma_m,
            } => ProjectedBox::of_points(waypoints.iter().copied())
                .map(|b| b.expanded(EXTENT_SIGMAS * cross_track_sigma_m)),
            ScenarioShape::Area { polygons } => rect_to_box(polygons.bounding_rect()),
            ScenarioShape::Segments { segments, poa } => segments
                .iter()
                .zip(poa)
                .filter(|(_, p)| **p > 0.0)
                .filter_map(|(s, _)| rect_to_box(s.polygons.bounding_rect()))
                .reduce(|a, b| a.union(&b)),
            ScenarioShape::Rings {
                center, quantiles, ..
            } => quantiles
                .last()
                .map(|&(_, r)| ProjectedBox::around(*center, r, r)),
        }
    }
}

fn rect_to_box(r: Option<geo::Rect<f64>>) -> Option<ProjectedBox> {
    r.map(|r| ProjectedBox {
        west_m: r.min().x,
        south_m: r.min().y,
        east_m: r.max().x,
        north_m: r.max().y,
    })
}

/// The union of the scenarios' extents ([`ScenarioShape::extent`]): a box holding at least 99.9 % of
/// the pooled in-world mass whatever the weights (each scenario's box holds ≥ 99.99 % of its
/// own). Invalid shapes are skipped. `None` when no scenario has an extent.
#[must_use]
pub fn auto_extent(scenarios: &[Scenario]) -> Option<ProjectedBox> {
    scenarios
        .iter()
        .filter_map(|s| s.shape.extent())
        .reduce(|a, b| a.union(&b))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pool_and_ring_names_parse_and_round_trip() {
        for pool in Pool::ALL {
            assert_eq!(Pool::parse(pool.name()), Some(pool));
        }
        for mode in RingInterpolation::ALL {
            assert_eq!(RingInterpolation::parse(mode.name()), Some(mode));
        }
        // The names of docs/incident-format.md.
        assert_eq!(Pool::parse("logarithmic"), Some(Pool::Logarithmic));
        assert_eq!(
            RingInterpolation::parse("uniform-per-ring"),
            Some(RingInterpolation::UniformPerRing)
        );
        assert_eq!(Pool::parse("geometric"), None);
        assert_eq!(RingInterpolation::parse("linear"), None);
    }
}
