//! Candidate search areas of one unit, their scores, and the local search that refines them.

use crate::error::PlanError;
use crate::geometry::{Convex, RowPrefix, axes, rectangle};
use geo::Coord;
use ndarray::Array2;
use seekgrid_core::GridSpec;
use seekgrid_search::{
    DetectionLaw, Pattern, PodLayer, Rectangle, SearchError, SweepWidth, pattern_pod,
    pattern_pod_at,
};

/// What the planner knows of one unit, in the terms of its search lanes: a ground team of n
/// searchers is one lane of width `n x S` swept with sweep width `n x W`.
#[derive(Clone, Debug)]
pub(crate) struct UnitCtx {
    /// Sweep width of the whole unit (n x W for a team), metres.
    pub(crate) w_eff: f64,
    /// Track length of the unit's centre line, metres, net of the turn allowance.
    pub(crate) track_m: f64,
    /// Smallest lane spacing, metres.
    pub(crate) s_min_eff: f64,
    /// Number of searchers (1 for vessels and aircraft).
    pub(crate) searchers: f64,
    pub(crate) law: DetectionLaw,
    pub(crate) sweep: SweepWidth,
    pub(crate) team: bool,
    pub(crate) fast: bool,
}

/// A candidate area. Spacings are lane spacings (n x S for a team).
#[derive(Clone, Debug, PartialEq)]
pub(crate) enum CandidateArea {
    /// A rectangle of `legs` legs along `theta_deg`, `spacing_m` apart; short side
    /// `legs x spacing`, long side `track / legs`.
    Rect {
        center: Coord<f64>,
        theta_deg: f64,
        spacing_m: f64,
        legs: usize,
    },
    /// An expanding square from `center` with as many legs as the track allows.
    Square {
        center: Coord<f64>,
        theta_deg: f64,
        spacing_m: f64,
    },
    /// A sector search about `center` with as many sectors (2..=12) as the track allows.
    Sector {
        center: Coord<f64>,
        theta_deg: f64,
        radius_m: f64,
    },
}

/// Legs of an expanding square (S, S, 2S, 2S, ...) that fit into `track_m`.
pub(crate) fn square_legs(spacing_m: f64, track_m: f64) -> usize {
    if spacing_m.is_nan() || spacing_m <= 0.0 || spacing_m > track_m {
        return 0;
    }
    let units = track_m / spacing_m;
    // T(n) = Σ_{i<n} floor((i + 2) / 2); T(2m) = m (m + 1), T(2m + 1) = (m + 1)².
    let mut m = (units.sqrt() as usize).saturating_sub(2);
    while ((m + 1) * (m + 2)) as f64 <= units {
        m += 1;
    }
    // Now T(2m) <= units < T(2m + 2).
    let n = if ((m + 1) * (m + 1)) as f64 <= units {
        2 * m + 1
    } else {
        2 * m
    };
    n.min(seekgrid_search::pattern::MAX_LEGS)
}

/// Track of a sector search of `sectors` triangles and radius `r`: out R, across the chord
/// 2R sin(π/(2k)), back R, for each triangle.
pub(crate) fn sector_track_m(sectors: usize, r: f64) -> f64 {
    let k = sectors as f64;
    k * (2.0 * r + 2.0 * r * (std::f64::consts::PI / (2.0 * k)).sin())
}

/// Most sectors (2..=12) whose track fits into `track_m`; 0 when even 2 do not.
pub(crate) fn sector_count(radius_m: f64, track_m: f64) -> usize {
    (2..=12usize)
        .rev()
        .find(|&k| sector_track_m(k, radius_m) <= track_m)
        .unwrap_or(0)
}

fn wrap180(t: f64) -> f64 {
    t.rem_euclid(180.0)
}

fn wrap360(t: f64) -> f64 {
    t.rem_euclid(360.0)
}

impl CandidateArea {
    pub(crate) fn center(&self) -> Coord<f64> {
        match *self {
            Self::Rect { center, .. }
            | Self::Square { center, .. }
            | Self::Sector { center, .. } => center,
        }
    }

    /// The same shape moved to `c`.
    pub(crate) fn with_center(&self, c: Coord<f64>) -> Self {
        let mut out = self.clone();
        match &mut out {
            Self::Rect { center, .. }
            | Self::Square { center, .. }
            | Self::Sector { center, .. } => {
                *center = c;
            }
        }
        out
    }

    pub(crate) fn is_rect(&self) -> bool {
        matches!(self, Self::Rect { .. })
    }

    pub(crate) fn valid(&self, u: &UnitCtx) -> bool {
        let c = self.center();
        if !(c.x.is_finite() && c.y.is_finite()) {
            return false;
        }
        match *self {
            Self::Rect {
                spacing_m, legs, ..
            } => {
                legs >= 1
                    && spacing_m.is_finite()
                    && spacing_m >= u.s_min_eff * (1.0 - 1e-12)
                    && u.track_m / legs as f64 > spacing_m
                    && legs <= seekgrid_search::pattern::MAX_LEGS
            }
            Self::Square { spacing_m, .. } => {
                spacing_m.is_finite()
                    && spacing_m >= u.s_min_eff * (1.0 - 1e-12)
                    && square_legs(spacing_m, u.track_m) >= 1
            }
            Self::Sector { radius_m, .. } => {
                radius_m.is_finite() && radius_m > 0.0 && sector_count(radius_m, u.track_m) >= 2
            }
        }
    }

    /// The pattern that scores this area (for a rectangle: a parallel sweep with its legs
    /// along `theta_deg`; the flown direction is chosen at the end).
    pub(crate) fn pattern(&self, u: &UnitCtx) -> Pattern {
        match *self {
            Self::Rect {
                center,
                theta_deg,
                spacing_m,
                legs,
            } => Pattern::ParallelSweep(Rectangle {
                center,
                length_m: u.track_m / legs as f64,
                width_m: legs as f64 * spacing_m,
                major_grid_bearing_deg: theta_deg,
                track_spacing_m: spacing_m,
            }),
            Self::Square {
                center,
                theta_deg,
                spacing_m,
            } => Pattern::ExpandingSquare {
                center,
                track_spacing_m: spacing_m,
                legs: square_legs(spacing_m, u.track_m).max(1),
                first_leg_grid_bearing_deg: theta_deg,
            },
            Self::Sector {
                center,
                theta_deg,
                radius_m,
            } => Pattern::SectorSearch {
                center,
                radius_m,
                first_leg_grid_bearing_deg: theta_deg,
                sectors: sector_count(radius_m, u.track_m).max(2),
            },
        }
    }

    pub(crate) fn polygon(&self, u: &UnitCtx) -> Convex {
        match *self {
            Self::Rect {
                center,
                theta_deg,
                spacing_m,
                legs,
            } => rectangle(
                center,
                theta_deg,
                u.track_m / legs as f64,
                legs as f64 * spacing_m,
            ),
            _ => Convex::new(self.pattern(u).area_polygon().exterior().0.clone()),
        }
    }

    /// Coverage of the area: W/S for a rectangle (found: Cooper, C = Z/A = W/S); for an
    /// expanding square or sector search W x track length / area, so that the effort counted
    /// over the area is exactly the effort flown.
    pub(crate) fn coverage(&self, u: &UnitCtx, poly: &Convex) -> f64 {
        match *self {
            Self::Rect { spacing_m, .. } => u.w_eff / spacing_m,
            _ => u.w_eff * self.pattern(u).track_length_m() / poly.area(),
        }
    }

    /// Fast score: POD x residual mass under the area (row-prefix evaluation), or `None` when
    /// the shape is invalid or overlaps a placed area.
    /// Size of the area's short side (rectangles) or of its square root of area, metres.
    pub(crate) fn short_m(&self, u: &UnitCtx) -> f64 {
        match *self {
            Self::Rect {
                spacing_m, legs, ..
            } => legs as f64 * spacing_m,
            _ => self.polygon(u).area().sqrt(),
        }
    }

    pub(crate) fn fast_score(&self, u: &UnitCtx, ev: &Evaluator<'_>) -> Option<f64> {
        if !self.valid(u) {
            return None;
        }
        let poly = self.polygon(u);
        if ev
            .placed
            .iter()
            .any(|p| p.overlaps(&poly, ev.overlap_tolerance_m))
        {
            return None;
        }
        let pod = u.law.pod_from_coverage(self.coverage(u, &poly));
        Some(pod * ev.levels[ev.level].mass_under(&poly))
    }

    /// A parallel-sweep stand-in with the same area and uniform POD, for the expanding square
    /// (whose area polygon is a rectangle) and for rectangles.
    fn proxy(&self, u: &UnitCtx, poly: &Convex) -> Option<Pattern> {
        match self {
            Self::Rect { .. } => Some(self.pattern(u)),
            Self::Square { .. } => {
                let p = &poly.pts;
                if p.len() != 4 {
                    return None;
                }
                let d1 = (p[1].x - p[0].x).hypot(p[1].y - p[0].y);
                let d2 = (p[2].x - p[1].x).hypot(p[2].y - p[1].y);
                let (a, b, len, wid) = if d1 >= d2 {
                    (p[0], p[1], d1, d2)
                } else {
                    (p[1], p[2], d2, d1)
                };
                let spacing = u.w_eff / self.coverage(u, poly);
                if spacing.is_nan() || spacing >= len {
                    return None;
                }
                let center = Coord {
                    x: 0.25 * (p[0].x + p[1].x + p[2].x + p[3].x),
                    y: 0.25 * (p[0].y + p[1].y + p[2].y + p[3].y),
                };
                Some(Pattern::ParallelSweep(Rectangle {
                    center,
                    length_m: len,
                    width_m: wid,
                    major_grid_bearing_deg: (b.x - a.x).atan2(b.y - a.y).to_degrees(),
                    track_spacing_m: spacing,
                }))
            }
            Self::Sector { .. } => None,
        }
    }

    /// The exact POD layer of the area on the grid: uniform POD `law(coverage)` times the
    /// exact fraction of each cell inside the area ([`seekgrid_search::pattern_pod`] for
    /// rectangles and expanding squares, exact convex clipping for sector searches).
    pub(crate) fn pod_layer(&self, u: &UnitCtx, grid: &GridSpec) -> Result<PodLayer, PlanError> {
        let poly = self.polygon(u);
        if let Some(proxy) = self.proxy(u, &poly) {
            return match pattern_pod(grid, &proxy, u.law, &u.sweep) {
                Ok(l) => Ok(l),
                Err(SearchError::PatternOutsideGrid { .. }) => Ok(PodLayer::empty(*grid)),
                Err(e) => Err(e.into()),
            };
        }
        let pod = u.law.pod_from_coverage(self.coverage(u, &poly));
        match poly.cell_fractions(grid) {
            Some((rows, cols, f)) => Ok(PodLayer::from_window(
                *grid,
                rows,
                cols,
                f.mapv(|v| v * pod),
            )?),
            None => Ok(PodLayer::empty(*grid)),
        }
    }

    /// POD at each point (particles), by the same rule as [`CandidateArea::pod_layer`]
    /// ([`seekgrid_search::pattern_pod_at`] for rectangles and expanding squares).
    pub(crate) fn pod_at(&self, u: &UnitCtx, points: &[Coord<f64>]) -> Result<Vec<f64>, PlanError> {
        if points.is_empty() {
            return Ok(Vec::new());
        }
        let poly = self.polygon(u);
        if let Some(proxy) = self.proxy(u, &poly) {
            return Ok(pattern_pod_at(points, &proxy, u.law, &u.sweep)?);
        }
        let pod = u.law.pod_from_coverage(self.coverage(u, &poly));
        Ok(points
            .iter()
            .map(|p| if poly.contains(*p) { pod } else { 0.0 })
            .collect())
    }
}

/// Everything the scores of one placement need.
pub(crate) struct Evaluator<'a> {
    /// The residual at the grid's cells (level 0) and on coarser cells (each level twice the
    /// cell of the one before).
    pub(crate) levels: &'a [RowPrefix],
    /// The level in use.
    pub(crate) level: usize,
    pub(crate) placed: &'a [Convex],
    pub(crate) overlap_tolerance_m: f64,
}

/// Σ residual x POD over a layer's window.
pub(crate) fn layer_score(residual: &Array2<f64>, layer: &PodLayer) -> f64 {
    let (rows, cols) = (layer.rows(), layer.cols());
    let v = layer.window_values();
    let mut s = 0.0;
    for (i, r) in rows.enumerate() {
        let res = residual.row(r);
        let pod = v.row(i);
        for (j, c) in cols.clone().enumerate() {
            s += res[c] * pod[j];
        }
    }
    s
}

/// Step sizes of the local search: position (metres), orientation (degrees), relative
/// spacing or radius.
#[derive(Clone, Copy, Debug)]
pub(crate) struct Steps {
    pub(crate) m: f64,
    pub(crate) deg: f64,
    pub(crate) rel: f64,
}

/// Local search, first phase: best-improvement hill climbing over position, orientation,
/// spacing (or radius) and, for rectangles, the number of legs, on the coarsest level of
/// `ev.levels` whose cells are at most 1/32 of the area's short side; steps halve when no
/// move improves, down to half a coarse cell, 0.2° and 0.4 %.
pub(crate) fn climb_coarse(
    start: CandidateArea,
    u: &UnitCtx,
    ev: &Evaluator<'_>,
    steps: Steps,
) -> (CandidateArea, f64, Steps) {
    let short = start.short_m(u);
    let level = ev
        .levels
        .iter()
        .rposition(|l| l.cell_m() <= short / 32.0)
        .unwrap_or(0);
    let stop_m = 0.5 * ev.levels[level].cell_m();
    let (sh, sc, mut st) = climb_on(start, u, ev, level, steps, stop_m);
    // The fine phase starts two coarse cells wide.
    st.m = st.m.max(2.0 * ev.levels[level].cell_m());
    if level > 0 {
        if st.deg > 0.0 {
            st.deg = st.deg.max(0.8);
        }
        st.rel = st.rel.max(0.016);
    }
    (sh, sc, st)
}

/// Local search, second phase, on the grid's own cells, down to a position step of
/// `max(min_step_m, short side / 500)`.
pub(crate) fn climb_fine(
    start: CandidateArea,
    u: &UnitCtx,
    ev: &Evaluator<'_>,
    steps: Steps,
    min_step_m: f64,
) -> (CandidateArea, f64) {
    let stop_m = min_step_m.max(start.short_m(u) / 500.0);
    let (sh, sc, _) = climb_on(start, u, ev, 0, steps, stop_m);
    (sh, sc)
}

fn climb_on(
    start: CandidateArea,
    u: &UnitCtx,
    ev: &Evaluator<'_>,
    level: usize,
    steps: Steps,
    stop_m: f64,
) -> (CandidateArea, f64, Steps) {
    let lev = Evaluator {
        levels: ev.levels,
        level,
        placed: ev.placed,
        overlap_tolerance_m: ev.overlap_tolerance_m,
    };
    let mut st = steps;
    let mut cur = start;
    let mut cur_score = cur.fast_score(u, &lev).unwrap_or(f64::NEG_INFINITY);
    for _ in 0..400 {
        let mut best: Option<(CandidateArea, f64)> = None;
        for m in neighbours(&cur, st) {
            if let Some(sc) = m.fast_score(u, &lev)
                && best.as_ref().is_none_or(|(_, b)| sc > *b)
            {
                best = Some((m, sc));
            }
        }
        match best {
            Some((m, sc)) if sc > cur_score + 1e-15 * cur_score.abs().max(1e-300) => {
                cur = m;
                cur_score = sc;
            }
            _ => {
                if st.m < stop_m && st.deg < 0.2 && st.rel < 0.004 {
                    break;
                }
                st.m *= 0.5;
                st.deg *= 0.5;
                st.rel *= 0.5;
            }
        }
    }
    (cur, cur_score, st)
}

/// Both phases of the local search, then the exact score on the residual: coarse phase for
/// every start, fine phase for the best `fine` of them (by coarse score, ties to the lowest
/// index); returns the fine results with their exact scores, in that order.
pub(crate) fn refine(
    starts: &[(CandidateArea, Steps)],
    u: &UnitCtx,
    ev: &Evaluator<'_>,
    fine: usize,
    min_step_m: f64,
    exact: &(dyn Fn(&CandidateArea) -> f64 + Sync),
) -> Vec<(CandidateArea, f64)> {
    use rayon::prelude::*;
    let coarse: Vec<(CandidateArea, f64, Steps)> = starts
        .par_iter()
        .map(|(sh, st)| climb_coarse(sh.clone(), u, ev, *st))
        .collect();
    let mut order: Vec<usize> = (0..coarse.len())
        .filter(|&i| coarse[i].1.is_finite())
        .collect();
    order.sort_by(|&a, &b| coarse[b].1.total_cmp(&coarse[a].1).then(a.cmp(&b)));
    order.truncate(fine);
    order
        .par_iter()
        .map(|&i| {
            let (sh, _, st) = &coarse[i];
            let (best, _) = climb_fine(sh.clone(), u, ev, *st, min_step_m);
            let e = exact(&best);
            (best, e)
        })
        .collect()
}

/// The candidates one step away: the centre moved by `steps.m` along each axis, the
/// orientation turned by `±steps.deg` (when above 0), the spacing or radius scaled by
/// `1 + steps.rel` either way, and for a rectangle one leg more or fewer.
fn neighbours(s: &CandidateArea, steps: Steps) -> Vec<CandidateArea> {
    let Steps {
        m: dm,
        deg: dd,
        rel: ds,
    } = steps;
    let mut out = Vec::with_capacity(10);
    match *s {
        CandidateArea::Rect {
            center,
            theta_deg,
            spacing_m,
            legs,
        } => {
            let (u, v) = axes(theta_deg);
            for (dir, sign) in [(u, 1.0), (u, -1.0), (v, 1.0), (v, -1.0)] {
                out.push(CandidateArea::Rect {
                    center: Coord {
                        x: center.x + sign * dm * dir.x,
                        y: center.y + sign * dm * dir.y,
                    },
                    theta_deg,
                    spacing_m,
                    legs,
                });
            }
            for t in [theta_deg + dd, theta_deg - dd]
                .into_iter()
                .filter(|_| dd > 0.0)
            {
                out.push(CandidateArea::Rect {
                    center,
                    theta_deg: wrap180(t),
                    spacing_m,
                    legs,
                });
            }
            for f in [1.0 + ds, 1.0 / (1.0 + ds)] {
                out.push(CandidateArea::Rect {
                    center,
                    theta_deg,
                    spacing_m: spacing_m * f,
                    legs,
                });
            }
            for l in [legs + 1, legs.saturating_sub(1)] {
                if l >= 1 && l != legs {
                    // Keep the lane spacing, change the aspect.
                    out.push(CandidateArea::Rect {
                        center,
                        theta_deg,
                        spacing_m,
                        legs: l,
                    });
                }
            }
        }
        CandidateArea::Square {
            center,
            theta_deg,
            spacing_m,
        } => centred_neighbours(
            Centred {
                center,
                theta_deg,
                size_m: spacing_m,
            },
            steps,
            |c| CandidateArea::Square {
                center: c.center,
                theta_deg: c.theta_deg,
                spacing_m: c.size_m,
            },
            &mut out,
        ),
        CandidateArea::Sector {
            center,
            theta_deg,
            radius_m,
        } => centred_neighbours(
            Centred {
                center,
                theta_deg,
                size_m: radius_m,
            },
            steps,
            |c| CandidateArea::Sector {
                center: c.center,
                theta_deg: c.theta_deg,
                radius_m: c.size_m,
            },
            &mut out,
        ),
    }
    out
}

/// A pattern fixed by its centre, orientation (grid bearing, degrees) and one size, metres (an
/// expanding square's spacing, a sector search's radius).
#[derive(Clone, Copy, Debug)]
struct Centred {
    center: Coord<f64>,
    theta_deg: f64,
    size_m: f64,
}

/// Neighbours of a centred pattern: the centre moved by `steps.m` along each grid axis, the
/// orientation turned by `±steps.deg` (when above 0), and the size scaled by `1 + steps.rel`
/// either way; `make` turns each into a candidate.
fn centred_neighbours(
    p: Centred,
    steps: Steps,
    make: impl Fn(Centred) -> CandidateArea,
    out: &mut Vec<CandidateArea>,
) {
    let Steps {
        m: dm,
        deg: dd,
        rel: ds,
    } = steps;
    for (dx, dy) in [(dm, 0.0), (-dm, 0.0), (0.0, dm), (0.0, -dm)] {
        let center = Coord {
            x: p.center.x + dx,
            y: p.center.y + dy,
        };
        out.push(make(Centred { center, ..p }));
    }
    for t in [p.theta_deg + dd, p.theta_deg - dd]
        .into_iter()
        .filter(|_| dd > 0.0)
    {
        out.push(make(Centred {
            theta_deg: wrap360(t),
            ..p
        }));
    }
    for f in [1.0 + ds, 1.0 / (1.0 + ds)] {
        out.push(make(Centred {
            size_m: p.size_m * f,
            ..p
        }));
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn expanding_square_legs_fill_the_track() {
        // T(n) = 1, 2, 4, 6, 9, 12, 16 (in units of S) for n = 1..=7.
        for (track, n) in [
            (1.0, 1),
            (1.9, 1),
            (2.0, 2),
            (4.0, 3),
            (5.9, 3),
            (6.0, 4),
            (9.0, 5),
            (16.5, 7),
        ] {
            assert_eq!(square_legs(1.0, track), n, "track {track}");
        }
        assert_eq!(square_legs(2.0, 1.0), 0);
        // Against the pattern's own track length.
        let p = Pattern::ExpandingSquare {
            center: Coord { x: 0.0, y: 0.0 },
            track_spacing_m: 100.0,
            legs: square_legs(100.0, 10_000.0),
            first_leg_grid_bearing_deg: 0.0,
        };
        assert!(p.track_length_m() <= 10_000.0 + 1e-9);
        assert!(p.track_length_m() > 10_000.0 - 2.0 * 100.0 * (10_000.0f64 / 100.0).sqrt());
    }

    #[test]
    fn sector_track_matches_the_pattern() {
        for k in [2, 3, 6, 12] {
            let p = Pattern::SectorSearch {
                center: Coord { x: 5.0, y: 7.0 },
                radius_m: 1000.0,
                first_leg_grid_bearing_deg: 33.0,
                sectors: k,
            };
            assert!((p.track_length_m() - sector_track_m(k, 1000.0)).abs() < 1e-6);
        }
        assert_eq!(sector_count(1000.0, 9_000.0), 3);
        assert_eq!(sector_count(1000.0, 1_000.0), 0);
    }
}
