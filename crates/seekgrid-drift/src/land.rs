//! Land, for stranding drifting particles.

use geo::indexed::IntervalTreeMultiPolygon;
use geo::line_intersection::{LineIntersection, line_intersection};
use geo::{Contains, Coord, Line, LinesIter, MultiPolygon, Point};
use rstar::{AABB, RTree};

/// How far seaward of the coastline crossing a stranded particle is put, metres: far enough
/// that rounding cannot put it on land, far below any map accuracy.
pub const SHORE_SETBACK_M: f64 = 1e-3;

/// Land as polygons in the working frame (metres); holes are water (lagoons, lakes).
///
/// A particle whose step meets the coastline strands where it first meets it (moved
/// [`SHORE_SETBACK_M`] back along its step, on the water side) and stays there; a step that
/// passes over a spit of land and ends in water strands too. Points on the coastline itself
/// count as water.
pub struct LandMask {
    polygons: MultiPolygon<f64>,
    inside: IntervalTreeMultiPolygon<f64>,
    edges: RTree<Line<f64>>,
}

impl std::fmt::Debug for LandMask {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("LandMask")
            .field("polygons", &self.polygons.0.len())
            .field("edges", &self.edges.size())
            .finish()
    }
}

impl LandMask {
    /// Indexes the polygons for containment (geo's interval tree) and their edges for
    /// crossing tests (an R*-tree).
    #[must_use]
    pub fn new(polygons: MultiPolygon<f64>) -> Self {
        let inside = IntervalTreeMultiPolygon::new(&polygons);
        let edges = RTree::bulk_load(polygons.lines_iter().collect());
        Self {
            polygons,
            inside,
            edges,
        }
    }

    /// Whether a point (working frame, metres) is on land: inside a polygon and not in a
    /// hole. The coastline itself is not land.
    #[must_use]
    pub fn contains(&self, p: Coord<f64>) -> bool {
        self.inside.contains(&p)
    }

    /// The polygons.
    #[must_use]
    pub fn polygons(&self) -> &MultiPolygon<f64> {
        &self.polygons
    }

    /// Where a straight step from `from` (in water) to `to` first meets the coastline: the
    /// fraction of the step, in [0, 1], and the point there, or `None` if it meets none.
    #[must_use]
    pub fn first_crossing(&self, from: Coord<f64>, to: Coord<f64>) -> Option<(f64, Coord<f64>)> {
        let d = to - from;
        let len2 = d.x * d.x + d.y * d.y;
        if len2.is_nan() || len2 <= 0.0 {
            return None;
        }
        let step = Line::new(from, to);
        let envelope = AABB::from_corners(Point::from(from), Point::from(to));
        let mut best: Option<(f64, Coord<f64>)> = None;
        for edge in self.edges.locate_in_envelope_intersecting(&envelope) {
            let hit = match line_intersection(step, *edge) {
                None => continue,
                Some(LineIntersection::SinglePoint { intersection, .. }) => intersection,
                Some(LineIntersection::Collinear { intersection }) => {
                    // The part of the shared segment nearest the start of the step.
                    let f = |c: Coord<f64>| ((c - from).x * d.x + (c - from).y * d.y) / len2;
                    if f(intersection.start) <= f(intersection.end) {
                        intersection.start
                    } else {
                        intersection.end
                    }
                }
            };
            let frac = (((hit - from).x * d.x + (hit - from).y * d.y) / len2).clamp(0.0, 1.0);
            if best.is_none_or(|(b, _)| frac < b) {
                best = Some((frac, hit));
            }
        }
        best
    }

    /// The stranding point of a step that meets the coastline at `hit`: [`SHORE_SETBACK_M`]
    /// back toward `from`, never on land (falls back to `from`).
    pub(crate) fn strand_point(&self, from: Coord<f64>, hit: Coord<f64>) -> Coord<f64> {
        let back = from - hit;
        let dist = back.x.hypot(back.y);
        let p = if dist > SHORE_SETBACK_M {
            hit + back * (SHORE_SETBACK_M / dist)
        } else {
            from
        };
        if self.contains(p) { from } else { p }
    }
}
