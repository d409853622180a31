//! The practical plan: one area per unit, chosen to maximise the joint POS.

use crate::bound::{OptimalBound, Searchable, bound_of};
use crate::error::PlanError;
use crate::geometry::{Convex, RowPrefix, axes, rectangle};
use crate::options::{PatternOverRectangle, PlanOptions};
use crate::scan::{RectSize, ScanRange, ScanSettings, scan};
use crate::shape::{CandidateArea, Evaluator, Steps, UnitCtx, layer_score, refine, sector_track_m};
use crate::unit::{UnitKind, UnitSpec, validate_units};
use geo::Coord;
use ndarray::Array2;
use seekgrid_core::units::SECONDS_PER_HOUR;
use seekgrid_core::{Belief, GridSpec, neumaier_sum};
use seekgrid_search::{DetectionLaw, Pattern, PodLayer, Rectangle, SweepWidth};

/// One straight leg of a pattern.
#[derive(Clone, Debug, PartialEq)]
pub struct Leg {
    /// Start, working frame, metres.
    pub from: Coord<f64>,
    /// End, working frame, metres.
    pub to: Coord<f64>,
    /// Grid bearing from `from` to `to`, degrees clockwise from grid north, 0..360 (turn it
    /// into a true bearing with the frame's convergence).
    pub grid_bearing_deg: f64,
    /// Length, metres.
    pub length_m: f64,
}

/// The area, pattern and expected result of one unit.
#[derive(Clone, Debug, PartialEq)]
pub struct UnitAssignment {
    /// The unit's id.
    pub unit: String,
    /// The pattern, in the working frame with grid bearings. For a ground team its legs are
    /// the team's centre line and its track spacing is the lane width `searchers x S`.
    pub pattern: Pattern,
    /// Area searched, square metres.
    pub area_m2: f64,
    /// Track spacing S, metres (between searchers for a ground team; for a sector search the
    /// spacing of a parallel sweep of the same coverage, `W / coverage`).
    pub track_spacing_m: f64,
    /// Coverage over the area (dimensionless): W/S for rectangles; W x track / area for the
    /// expanding square and the sector search.
    pub coverage: f64,
    /// POD inside the area, `law.pod_from_coverage(coverage)` (probability).
    pub pod: f64,
    /// Probability that the object is in the area at plan start (cells weighted by the
    /// fraction inside, particles at their positions).
    pub poa: f64,
    /// This unit's POS alone against the belief at plan start (probability).
    pub pos: f64,
    /// Length of the pattern's track, metres.
    pub track_length_m: f64,
    /// Hours the track needs at the unit's speed with the turn allowance.
    pub hours_needed: f64,
    /// Effort credited to the area, `coverage x area`, square metres.
    pub effort_m2: f64,
    /// Commence search point (first waypoint), working frame, metres.
    pub commence_search_point: Coord<f64>,
    /// Every turn point, commence search point first, working frame, metres.
    pub waypoints: Vec<Coord<f64>>,
    /// The legs between consecutive waypoints.
    pub legs: Vec<Leg>,
    /// The land segment this area stands for; [`plan`] leaves it `None`.
    pub segment: Option<String>,
}

/// A search plan for one period.
#[derive(Clone, Debug, PartialEq)]
pub struct Plan {
    /// One assignment per unit, in the order the units were given.
    pub assignments: Vec<UnitAssignment>,
    /// Joint POS of all units against the belief at plan start, overlaps counted as
    /// `1 - Π(1 - d)` per cell and particle (probability). A cell cut by the edges of two
    /// adjacent areas is counted the same way, `1 - Π(1 - f d)` with `f` the fraction of the
    /// cell in each area: slightly below the `Σ f d` of disjoint parts, so on the safe side.
    pub pos_plan: f64,
    /// POS of the optimal allocation of the same total effort ([`crate::optimal_bound`]).
    pub pos_optimal_bound: f64,
    /// `pos_plan / pos_optimal_bound`.
    pub efficiency: f64,
    /// The optimal allocation itself (coverage per cell, λ).
    pub bound: OptimalBound,
    /// Turn allowance used, fraction of on-scene time.
    pub turn_allowance: f64,
    /// The heuristics used and the decisions taken, stated in sentences.
    pub notes: Vec<String>,
}

#[derive(Clone)]
struct Placed {
    shape: CandidateArea,
    poly: Convex,
    layer: PodLayer,
    particle_pod: Vec<f64>,
    /// Why this pattern was chosen, when a rule decided it.
    reason: Option<String>,
}

fn unit_ctx(u: &UnitSpec, options: &PlanOptions) -> Result<UnitCtx, PlanError> {
    let n = f64::from(u.searchers());
    let track_m = u.track_length_m(options.turn_allowance);
    let w_eff = n * u.sweep_width_m;
    let s_min_eff = n * u.track_spacing_min_m.unwrap_or(0.0);
    if s_min_eff > 0.5 * track_m {
        return Err(PlanError::BadUnit {
            unit: u.id.clone(),
            field: "track_spacing_min_m",
            value: u.track_spacing_min_m.unwrap_or(0.0),
            fix: "the lane spacing exceeds half of the unit's track length; check that it is in metres and the hours on scene",
        });
    }
    let sweep = SweepWidth::new(w_eff, &[])?;
    Ok(UnitCtx {
        w_eff,
        track_m,
        s_min_eff,
        searchers: n,
        law: u.law,
        sweep,
        team: matches!(u.kind, UnitKind::GroundTeam { .. }),
        fast: u.speed_mps >= options.sector_search_min_speed_mps,
    })
}

/// The rectangle sizes of the global scan for one unit.
fn rect_sizes(u: &UnitCtx, o: &PlanOptions) -> Vec<RectSize> {
    let mut out: Vec<RectSize> = Vec::new();
    let steps = o.coverage_steps;
    for i in 0..steps {
        let t = if steps == 1 {
            0.0
        } else {
            i as f64 / (steps - 1) as f64
        };
        let c = o.min_coverage * (o.max_coverage / o.min_coverage).powf(t);
        let spacing = (u.w_eff / c).max(u.s_min_eff).min(0.5 * u.track_m);
        for &r in &o.aspect_ratios {
            let short0 = (u.track_m * spacing / r).sqrt();
            let legs = ((short0 / spacing).round() as usize).max(1);
            let long = u.track_m / legs as f64;
            if long <= spacing || legs > seekgrid_search::pattern::MAX_LEGS {
                continue;
            }
            if out.iter().any(|z| z.legs == legs && z.spacing_m == spacing) {
                continue;
            }
            out.push(RectSize {
                spacing_m: spacing,
                legs,
                long_m: long,
                short_m: legs as f64 * spacing,
                pod: u.law.pod_from_coverage(u.w_eff / spacing),
            });
        }
    }
    out
}

/// Area of the smallest set of cells holding 90 % of the mass, square metres.
///
/// Exact without a full sort: positive f64 bit patterns order like their values, so cells go
/// into buckets of the top bits (about 0.4 % wide); the buckets are walked from the largest
/// values down, and only the bucket where 90 % is reached is sorted.
fn containment_area_90(grid: &GridSpec, mass: &Array2<f64>) -> f64 {
    const SHIFT: u32 = 44;
    const BUCKETS: usize = 1 << 16;
    let max = mass.iter().copied().fold(0.0_f64, f64::max);
    if !(max > 0.0 && max.is_finite()) {
        return 0.0;
    }
    let top = max.to_bits() >> SHIFT;
    let bucket = |m: f64| ((top - (m.to_bits() >> SHIFT)) as usize).min(BUCKETS - 1);
    let mut b_mass = vec![0.0; BUCKETS];
    let mut b_count = vec![0usize; BUCKETS];
    let mut total = 0.0;
    for &m in mass.iter().filter(|m| **m > 0.0) {
        let b = bucket(m);
        b_mass[b] += m;
        b_count[b] += 1;
        total += m;
    }
    let target = 0.9 * total;
    let (mut acc, mut n) = (0.0, 0usize);
    for b in 0..BUCKETS {
        if acc + b_mass[b] < target {
            acc += b_mass[b];
            n += b_count[b];
            continue;
        }
        let mut v: Vec<f64> = mass
            .iter()
            .copied()
            .filter(|m| *m > 0.0 && bucket(*m) == b)
            .collect();
        v.sort_unstable_by(|a, b| b.total_cmp(a));
        for m in v {
            if acc >= target {
                break;
            }
            acc += m;
            n += 1;
        }
        break;
    }
    n as f64 * grid.cell_area_m2()
}

/// Candidates that get the fine phase of the local search in each placement.
const FINE_CANDIDATES: usize = 3;

struct Planner<'a> {
    grid: GridSpec,
    s: &'a Searchable,
    ctxs: Vec<UnitCtx>,
    units: &'a [UnitSpec],
    o: &'a PlanOptions,
    thetas: Vec<f64>,
    overlap_tolerance_m: f64,
}

impl Planner<'_> {
    /// Places the units one at a time in `order`, then runs the rounds of coordinate ascent;
    /// returns the areas in the units' own order and the rounds run.
    fn run(&self, order: &[usize], o: &PlanOptions) -> Result<(Vec<Placed>, usize), PlanError> {
        let mut placed: Vec<Option<Placed>> = vec![None; order.len()];
        for &k in order {
            let p = self.place(k, &placed)?;
            placed[k] = Some(p);
        }
        let mut rounds_done = 0;
        let rounds = if order.len() > 1 {
            o.refinement_rounds
        } else {
            0
        };
        for _ in 0..rounds {
            let mut changed = false;
            for &k in order {
                let p = self.place(k, &placed)?;
                if placed[k].as_ref().is_none_or(|old| old.shape != p.shape) {
                    changed = true;
                }
                placed[k] = Some(p);
            }
            rounds_done += 1;
            if !changed {
                break;
            }
        }
        // Exchanges: unit j tries unit k's place and k then j's (or, failing that, the best
        // place left); kept when the joint POS rises, followed by one more ascent round.
        if order.len() > 1 && o.refinement_rounds > 0 {
            for _ in 0..2 {
                let mut any = false;
                for (a, &j) in order.iter().enumerate() {
                    for &k in &order[a + 1..] {
                        any |= self.try_exchange(&mut placed, j, k)?;
                    }
                }
                if !any {
                    break;
                }
                for &k in order {
                    let p = self.place(k, &placed)?;
                    placed[k] = Some(p);
                }
                rounds_done += 1;
            }
        }
        Ok((
            placed
                .into_iter()
                .map(|p| p.expect("every unit placed"))
                .collect(),
            rounds_done,
        ))
    }

    fn joint_of(&self, placed: &[Option<Placed>]) -> f64 {
        let v: Vec<Placed> = placed.iter().flatten().cloned().collect();
        joint_pos(self.s, &v)
    }

    /// Units `j` and `k` exchange places (see [`Planner::run`]): one moves first into the
    /// other's place (the other's area removed), then the other into the first's old place
    /// (or, when that overlaps, the best place left); both orders are tried and the better
    /// kept if it raises the joint POS.
    fn try_exchange(
        &self,
        placed: &mut [Option<Placed>],
        j: usize,
        k: usize,
    ) -> Result<bool, PlanError> {
        let (Some(pj), Some(pk)) = (placed[j].clone(), placed[k].clone()) else {
            return Ok(false);
        };
        let current = self.joint_of(placed);
        let mut best: Option<(f64, Vec<Option<Placed>>)> = None;
        for (first, second, pf, ps) in [(j, k, &pj, &pk), (k, j, &pk, &pj)] {
            let mut trial = placed.to_vec();
            trial[second] = None;
            // The first keeps clear of its own old area, which is left for the second.
            let Some(new_f) = self.climb_from(
                first,
                &trial,
                pf.shape.with_center(ps.shape.center()),
                Some(&pf.poly),
            )?
            else {
                continue;
            };
            trial[first] = Some(new_f);
            let new_s = match self.climb_from(
                second,
                &trial,
                ps.shape.with_center(pf.shape.center()),
                None,
            )? {
                Some(p) => p,
                None => match self.place(second, &trial) {
                    Ok(p) => p,
                    Err(PlanError::NoRoomForUnit { .. }) => continue,
                    Err(e) => return Err(e),
                },
            };
            trial[second] = Some(new_s);
            let score = self.joint_of(&trial);
            if best.as_ref().is_none_or(|(b, _)| score > *b) {
                best = Some((score, trial));
            }
        }
        match best {
            Some((score, trial)) if score > current * (1.0 + 1e-12) => {
                placed.clone_from_slice(&trial);
                Ok(true)
            }
            _ => Ok(false),
        }
    }

    /// Local search for unit `k` from `start` given the others in `placed` (and clear of
    /// `keep_clear`, even when overlaps are allowed); `None` when the start overlaps another
    /// unit's area or is not a valid shape.
    fn climb_from(
        &self,
        k: usize,
        placed: &[Option<Placed>],
        start: CandidateArea,
        keep_clear: Option<&Convex>,
    ) -> Result<Option<Placed>, PlanError> {
        let u = &self.ctxs[k];
        let residual = self.residual(placed, k);
        let levels = self.levels(&residual);
        let mut others = self.others(placed, k);
        if let Some(c) = keep_clear {
            others.push(c.clone());
        }
        let ev = Evaluator {
            levels: &levels,
            level: 0,
            placed: &others,
            overlap_tolerance_m: self.overlap_tolerance_m,
        };
        if start.fast_score(u, &ev).is_none() {
            return Ok(None);
        }
        let cell = self.grid.cell_m();
        let steps = Steps {
            m: (start.short_m(u) / 8.0).max(cell),
            deg: if self.o.refine_orientation {
                0.5 * self.o.orientation_step_deg
            } else {
                0.0
            },
            rel: 0.1,
        };
        let exact = |sh: &CandidateArea| {
            sh.pod_layer(u, &self.grid)
                .map(|l| layer_score(&residual, &l))
                .unwrap_or(f64::NEG_INFINITY)
        };
        let r = refine(&[(start, steps)], u, &ev, 1, 0.25 * cell, &exact);
        match argmax(&r) {
            Some((sh, _)) => Ok(Some(self.finish(
                u,
                sh,
                placed[k].as_ref().and_then(|p| p.reason.clone()),
            )?)),
            None => Ok(None),
        }
    }

    /// Row-prefix levels of a residual: the grid's cells, then cells twice as large, while a
    /// level keeps at least 16 cells across the grid.
    fn levels(&self, residual: &Array2<f64>) -> Vec<RowPrefix> {
        let mut levels = vec![RowPrefix::new(&self.grid, residual)];
        let ext = self.grid.extent();
        while levels.len() < 12 {
            let last = levels.last().expect("one level");
            if last.cell_m() * 16.0 > ext.width_m().max(ext.height_m()) {
                break;
            }
            let next = last.coarsen();
            levels.push(next);
        }
        levels
    }

    /// The areas of the units other than `k` that `k` must keep clear of.
    fn others(&self, placed: &[Option<Placed>], k: usize) -> Vec<Convex> {
        if self.o.allow_overlap {
            return Vec::new();
        }
        placed
            .iter()
            .enumerate()
            .filter(|(j, _)| *j != k)
            .filter_map(|(_, p)| p.as_ref().map(|p| p.poly.clone()))
            .collect()
    }

    /// Residual masses (cells with the binned particles) after every placed unit but `k`.
    fn residual(&self, placed: &[Option<Placed>], k: usize) -> Array2<f64> {
        let mut cells = self.s.cells.clone();
        let mut w = self.s.weights.clone();
        for (j, p) in placed.iter().enumerate() {
            let Some(p) = p else { continue };
            if j == k {
                continue;
            }
            let (rows, cols) = (p.layer.rows(), p.layer.cols());
            let v = p.layer.window_values();
            for (i, r) in rows.enumerate() {
                for (jj, c) in cols.clone().enumerate() {
                    cells[[r, c]] *= 1.0 - v[[i, jj]];
                }
            }
            for (wi, d) in w.iter_mut().zip(&p.particle_pod) {
                *wi *= 1.0 - d;
            }
        }
        for (wi, rc) in w.iter().zip(&self.s.point_cells) {
            cells[*rc] += wi;
        }
        cells
    }

    fn finish(
        &self,
        u: &UnitCtx,
        shape: CandidateArea,
        reason: Option<String>,
    ) -> Result<Placed, PlanError> {
        let layer = shape.pod_layer(u, &self.grid)?;
        let particle_pod = shape.pod_at(u, &self.s.points)?;
        Ok(Placed {
            poly: shape.polygon(u),
            shape,
            layer,
            particle_pod,
            reason,
        })
    }

    /// Places unit `k` given the others; keeps `incumbent` unless something scores higher.
    fn place(&self, k: usize, placed: &[Option<Placed>]) -> Result<Placed, PlanError> {
        let u = &self.ctxs[k];
        let id = &self.units[k].id;
        let incumbent = placed[k].clone();
        let residual = self.residual(placed, k);
        let levels = self.levels(&residual);
        let others = self.others(placed, k);
        let ev = Evaluator {
            levels: &levels,
            level: 0,
            placed: &others,
            overlap_tolerance_m: self.overlap_tolerance_m,
        };
        let sizes = rect_sizes(u, self.o);
        let settings = ScanSettings {
            thetas_deg: &self.thetas,
            cells_per_side: self.o.scan_cells_per_side,
            max_cells_per_axis: self.o.max_scan_cells_per_axis,
            placed: &others,
            overlap_tolerance_m: self.overlap_tolerance_m,
            range: ScanRange::NearMass,
        };
        let mut hits = scan(&self.grid, &residual, &sizes, &settings);
        if hits.is_empty() && !others.is_empty() {
            let wide = ScanSettings {
                range: ScanRange::Everywhere,
                ..settings
            };
            hits = scan(&self.grid, &residual, &sizes, &wide);
        }
        // Total order: score descending, then scan order.
        let mut order: Vec<usize> = (0..hits.len()).collect();
        order.sort_by(|&a, &b| hits[b].score.total_cmp(&hits[a].score).then(a.cmp(&b)));
        let keep: Vec<usize> = order.into_iter().take(self.o.max_candidates).collect();
        hits = keep.into_iter().map(|i| hits[i]).collect();
        let cell = self.grid.cell_m();
        let step_deg = 0.5 * self.o.orientation_step_deg;
        let mut starts: Vec<(CandidateArea, Steps)> = hits
            .iter()
            .map(|h| {
                let z = &sizes[h.size];
                (
                    CandidateArea::Rect {
                        center: h.center,
                        theta_deg: h.theta_deg,
                        spacing_m: z.spacing_m,
                        legs: z.legs,
                    },
                    Steps {
                        m: h.cell_m,
                        deg: if self.o.refine_orientation {
                            step_deg
                        } else {
                            0.0
                        },
                        rel: 0.1,
                    },
                )
            })
            .collect();
        if let Some(inc) = &incumbent
            && inc.shape.is_rect()
        {
            starts.push((
                inc.shape.clone(),
                Steps {
                    m: 2.0 * cell,
                    deg: if self.o.refine_orientation { 1.0 } else { 0.0 },
                    rel: 0.02,
                },
            ));
        }
        let exact = |sh: &CandidateArea| {
            sh.pod_layer(u, &self.grid)
                .map(|l| layer_score(&residual, &l))
                .unwrap_or(f64::NEG_INFINITY)
        };
        let climbed = refine(&starts, u, &ev, FINE_CANDIDATES, 0.25 * cell, &exact);
        let best_rect = argmax(&climbed);
        let Some((rect, rect_score)) = best_rect else {
            return match incumbent {
                Some(p) => Ok(p),
                None => Err(PlanError::NoRoomForUnit { unit: id.clone() }),
            };
        };
        let mut chosen = (rect.clone(), rect_score);
        let mut reason = None;
        // Pattern rule on a tight datum.
        if !u.team {
            let a90 = containment_area_90(&self.grid, &residual);
            let swept = u.track_m * u.w_eff;
            if a90 <= self.o.tight_datum_fraction * swept {
                let tol = 1.0 - self.o.pattern_switch_tolerance;
                let c0 = rect.center();
                let th0 = rect_theta(&rect);
                let step = (swept.sqrt() / 8.0).max(cell);
                let mut es_starts = vec![CandidateArea::Square {
                    center: c0,
                    theta_deg: th0,
                    spacing_m: rect_spacing(&rect),
                }];
                let mut ss_starts = Vec::new();
                let very = u.fast && a90 <= self.o.very_tight_datum_fraction * swept;
                if very {
                    let r_max = u.track_m / sector_track_m(2, 1.0) * 0.999;
                    let r0 = (1.5 * (a90 / std::f64::consts::PI).sqrt())
                        .max(u.w_eff)
                        .min(r_max);
                    ss_starts.push(CandidateArea::Sector {
                        center: c0,
                        theta_deg: th0,
                        radius_m: r0,
                    });
                }
                if let Some(inc) = &incumbent {
                    match inc.shape {
                        CandidateArea::Square { .. } => es_starts.push(inc.shape.clone()),
                        CandidateArea::Sector { .. } => ss_starts.push(inc.shape.clone()),
                        CandidateArea::Rect { .. } => {}
                    }
                }
                let run = |v: &[CandidateArea]| -> Option<(CandidateArea, f64)> {
                    let st: Vec<(CandidateArea, Steps)> = v
                        .iter()
                        .map(|sh| {
                            (
                                sh.clone(),
                                Steps {
                                    m: step,
                                    deg: if self.o.refine_orientation { 45.0 } else { 0.0 },
                                    rel: 0.1,
                                },
                            )
                        })
                        .collect();
                    argmax(&refine(&st, u, &ev, FINE_CANDIDATES, 0.25 * cell, &exact))
                };
                let es = run(&es_starts);
                let ss = if very { run(&ss_starts) } else { None };
                let pct = |v: f64| 100.0 * v;
                match (&ss, &es) {
                    (Some((sh, sc)), _) if *sc >= tol * rect_score => {
                        reason = Some(format!(
                            "unit {id}: sector search on a very tight datum: the residual's 90 % containment area ({:.0} m²) is at most {} of the unit's effort W x L ({:.0} m²), the unit is fast ({} m/s or more), and the sector search's POS {:.4} is within {} % of the best rectangle's {:.4}",
                            a90,
                            self.o.very_tight_datum_fraction,
                            swept,
                            self.o.sector_search_min_speed_mps,
                            sc,
                            pct(self.o.pattern_switch_tolerance),
                            rect_score
                        ));
                        chosen = (sh.clone(), *sc);
                    }
                    (_, Some((sh, sc))) if *sc >= tol * rect_score => {
                        reason = Some(format!(
                            "unit {id}: expanding square on a tight datum: the residual's 90 % containment area ({:.0} m²) is at most {} of the unit's effort W x L ({:.0} m²), and the square's POS {:.4} is within {} % of the best rectangle's {:.4}",
                            a90,
                            self.o.tight_datum_fraction,
                            swept,
                            sc,
                            pct(self.o.pattern_switch_tolerance),
                            rect_score
                        ));
                        chosen = (sh.clone(), *sc);
                    }
                    _ => {
                        reason = Some(format!(
                            "unit {id}: tight datum (90 % containment area {:.0} m² against an effort W x L of {:.0} m²) but the expanding square{} scored more than {} % below the best rectangle ({:.4}); rectangle kept",
                            a90,
                            swept,
                            if very { " and sector search" } else { "" },
                            pct(self.o.pattern_switch_tolerance),
                            rect_score
                        ))
                    }
                }
            }
        }
        if let Some(inc) = incumbent {
            let inc_score = layer_score(&residual, &inc.layer);
            if inc_score >= chosen.1 {
                return Ok(inc);
            }
        }
        self.finish(u, chosen.0, reason)
    }
}

fn rect_spacing(s: &CandidateArea) -> f64 {
    match *s {
        CandidateArea::Rect { spacing_m, .. } | CandidateArea::Square { spacing_m, .. } => {
            spacing_m
        }
        CandidateArea::Sector { radius_m, .. } => radius_m,
    }
}

fn rect_theta(s: &CandidateArea) -> f64 {
    match *s {
        CandidateArea::Rect { theta_deg, .. }
        | CandidateArea::Square { theta_deg, .. }
        | CandidateArea::Sector { theta_deg, .. } => theta_deg,
    }
}

/// The best scored shape; ties go to the lowest index. `None` when none has a finite score.
fn argmax(v: &[(CandidateArea, f64)]) -> Option<(CandidateArea, f64)> {
    let mut best: Option<usize> = None;
    for (i, (_, s)) in v.iter().enumerate() {
        if s.is_finite() && best.is_none_or(|b| *s > v[b].1) {
            best = Some(i);
        }
    }
    best.map(|i| v[i].clone())
}

/// Plans the next search period: one area per unit, with pattern, track spacing, commence
/// search point, legs and waypoints, POD and POS per unit and in total, and the efficiency
/// against the optimal bound.
///
/// # Algorithm
/// 1. The bound: [`crate::optimal_bound`] with the units' total effort.
/// 2. Units are placed one at a time, largest effort first (ties in the order given), each
///    against the residual belief after the miss of the units already placed, so that its
///    score is its gain in joint POS, `Σ r_i d_i`.
/// 3. A placement scans rectangles globally: orientations every
///    `options.orientation_step_deg` in 0..180° (grid bearings of the legs), coverages W/S from
///    `min_coverage` to `max_coverage` in `coverage_steps` geometric steps (S at least the
///    unit's minimum spacing), `aspect_ratios`, each with `n` whole legs so that the area is
///    `L x S` for the unit's track length `L`; every position on a rotated summed-area table
///    of the residual (see the scan notes in the source), keeping the best clear position of
///    each orientation and size. The best `max_candidates` are refined by hill climbing on
///    the grid's own cells (position, orientation, spacing, legs) and then scored exactly
///    with [`seekgrid_search::pattern_pod`] (particles binned into cells during the search).
/// 4. Pattern rule (not for ground teams): when the 90 % containment area of the residual is
///    at most `tight_datum_fraction` of the unit's effort W x L (the area it sweeps at coverage
///    1), an expanding square from the
///    best rectangle's centre is refined the same way; for a fast unit (speed at least
///    `sector_search_min_speed_mps`) with the area at most `very_tight_datum_fraction` of it,
///    a sector search too. The sector search, else the expanding square, replaces the
///    rectangle when its POS is at least `1 - pattern_switch_tolerance` of the rectangle's.
/// 5. `refinement_rounds` rounds of coordinate ascent re-place each unit given all the others
///    (its current area among the candidates, so the joint POS never falls); they stop early
///    when a round changes nothing. Then exchanges: each pair of units tries to swap places
///    (one moves into the other's place keeping clear of its own old area, the other into the
///    first's old place, or the best place left; both orders), kept when the joint POS rises
///    and followed by one more ascent round (at most two passes).
/// 6. With several units and `restarts` ≥ 1, steps 2-5 run again with the units placed
///    smallest effort first, and the start with the higher joint POS is kept.
/// 7. Areas of different units do not overlap (edges may touch) unless `allow_overlap`.
/// 8. The result is evaluated exactly: cells with `pattern_pod` (convex clipping for the
///    sector search), particles at their own positions with `pattern_pod_at`, overlaps as
///    `1 - Π(1 - d)`.
///
/// The result is the same at any thread count: parallel work is split by orientation and by
/// candidate, each piece computed sequentially, and every choice is by score with ties to the
/// lowest index.
///
/// # Errors
/// As [`crate::optimal_bound`]; [`PlanError::BadUnit`] when a unit's minimum spacing exceeds
/// half its track; [`PlanError::NoRoomForUnit`] when no clear area exists for a unit;
/// [`PlanError::Search`] when the search crate refuses a pattern.
pub fn plan(belief: &Belief, units: &[UnitSpec], options: &PlanOptions) -> Result<Plan, PlanError> {
    validate_units(units)?;
    options.validate()?;
    let s = Searchable::new(belief);
    let bound = bound_of(belief, &s, units, options)?;
    let grid = *belief.grid();
    let ctxs = units
        .iter()
        .map(|u| unit_ctx(u, options))
        .collect::<Result<Vec<_>, _>>()?;
    let mut order: Vec<usize> = (0..units.len()).collect();
    let effort: Vec<f64> = units
        .iter()
        .map(|u| u.effort_m2(options.turn_allowance))
        .collect();
    order.sort_by(|&a, &b| effort[b].total_cmp(&effort[a]).then(a.cmp(&b)));
    let n_theta = (180.0 / options.orientation_step_deg).ceil() as usize;
    let thetas: Vec<f64> = (0..n_theta)
        .map(|i| i as f64 * options.orientation_step_deg)
        .filter(|t| *t < 180.0)
        .collect();
    let planner = Planner {
        grid,
        s: &s,
        ctxs,
        units,
        o: options,
        thetas,
        overlap_tolerance_m: 1e-6 * grid.cell_m(),
    };
    let mut notes = vec![
        format!(
            "turn allowance {}: each unit's track length is speed x hours on scene x {}",
            options.turn_allowance,
            1.0 - options.turn_allowance
        ),
        format!(
            "bound: optimal allocation for exponential detection (Stone 1975; Charnes & Cooper 1958) of the units' total effort {:.0} m² over the grid cells, particles binned into the cells that hold them; rest of world ({:.6}) and particles outside the grid ({:.6}) are unsearchable",
            bound.effort_m2,
            belief.rest_of_world(),
            s.particles_outside_mass
        ),
        format!(
            "method: units placed one at a time, largest effort first, each against the residual belief after the units already placed; global scan of rectangles at orientations every {}°, aspect ratios {:?}, coverages {}..{} in {} geometric steps, at every position of a rotated summed-area table (cells at most 1/{} of the short side); the best {} refined by hill climbing on the grid cells and scored exactly; then up to {} rounds of coordinate ascent and exchanges of places between pairs of units",
            options.orientation_step_deg,
            options.aspect_ratios,
            options.min_coverage,
            options.max_coverage,
            options.coverage_steps,
            options.scan_cells_per_side,
            options.max_candidates,
            options.refinement_rounds
        ),
        if options.allow_overlap {
            "areas of different units may overlap; an overlap is kept only when it scores higher, and is counted as 1 - Π(1 - d)".to_string()
        } else {
            "areas of different units do not overlap (edges may touch)".to_string()
        },
    ];
    if !s.points.is_empty() {
        notes.push(format!(
            "{} particles inside the grid are binned into cells while areas are searched for, and scored at their own positions in the reported POD and POS",
            s.points.len()
        ));
    }
    let other_laws: Vec<&str> = units
        .iter()
        .filter(|u| u.law != DetectionLaw::Exponential)
        .map(|u| u.id.as_str())
        .collect();
    if !other_laws.is_empty() {
        notes.push(format!(
            "units {} use a detection law other than exponential: the bound is the exponential one, so the plan can exceed it and efficiency can pass 1",
            other_laws.join(", ")
        ));
    }

    // Starts: the units in order of effort, then (for several units) the reverse order.
    let mut starts = vec![order.clone()];
    if units.len() > 1 && options.restarts > 0 {
        starts.push(order.iter().rev().copied().collect());
    }
    let mut best: Option<(f64, Vec<Placed>, usize, usize)> = None;
    for (si, start) in starts.iter().enumerate() {
        let (placed, rounds_done) = planner.run(start, options)?;
        let score = joint_pos(&s, &placed);
        if best.as_ref().is_none_or(|(b, ..)| score > *b) {
            best = Some((score, placed, rounds_done, si));
        }
    }
    let (_, placed, rounds_done, si) = best.expect("at least one start");
    notes.push(format!(
        "coordinate ascent: {rounds_done} round(s) run{}",
        if units.len() == 1 {
            " (one unit: nothing to re-place)"
        } else {
            ""
        }
    ));
    if starts.len() > 1 {
        notes.push(format!(
            "two starts (units placed largest effort first, then smallest first); the {} gave the higher joint POS",
            if si == 0 { "first" } else { "second" }
        ));
    }
    assemble(&planner, units, &placed, bound, notes, options)
}

/// Joint POS of placed areas against the belief at plan start (cells exactly, particles at
/// their positions), overlaps as `1 - Π(1 - d)`.
fn joint_pos(s: &Searchable, placed: &[Placed]) -> f64 {
    let mut survival = Array2::<f64>::ones(s.cells.dim());
    let mut psurv = vec![1.0; s.weights.len()];
    for p in placed {
        let (rows, cols) = (p.layer.rows(), p.layer.cols());
        let v = p.layer.window_values();
        for (i, r) in rows.enumerate() {
            for (j, c) in cols.clone().enumerate() {
                survival[[r, c]] *= 1.0 - v[[i, j]];
            }
        }
        for (q, d) in psurv.iter_mut().zip(&p.particle_pod) {
            *q *= 1.0 - d;
        }
    }
    let cells = neumaier_sum(
        s.cells
            .iter()
            .zip(survival.iter())
            .map(|(m, sv)| m * (1.0 - sv)),
    );
    cells + neumaier_sum(s.weights.iter().zip(&psurv).map(|(w, sv)| w * (1.0 - sv)))
}

/// One half of a rectangle: cut across its long side (rear or front along `u`) or along it
/// (left or right of it, along `v`), with `(u, v)` the rectangle's [`axes`].
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum Half {
    /// The `-u` half of the long side.
    Rear,
    /// The `+u` half of the long side.
    Front,
    /// The `-v` half, left of the long side's direction.
    Left,
    /// The `+v` half, right of it.
    Right,
}

impl Half {
    /// Whether the cut runs across the long side (the half lies along it).
    fn is_along(self) -> bool {
        matches!(self, Self::Rear | Self::Front)
    }

    /// -1 for the rear and left halves, +1 for the front and right halves.
    fn sign(self) -> f64 {
        match self {
            Self::Rear | Self::Left => -1.0,
            Self::Front | Self::Right => 1.0,
        }
    }
}

/// Probability at plan start under one half of the rectangle centred at `c` with its long
/// side `long` along `theta` and its short side `short`, metres.
fn half_mass(
    prefix: &RowPrefix,
    c: Coord<f64>,
    theta: f64,
    long: f64,
    short: f64,
    half: Half,
) -> f64 {
    let (u, v) = axes(theta);
    let along = half.is_along();
    let (dir, l, s) = if along {
        (u, 0.5 * long, short)
    } else {
        (v, long, 0.5 * short)
    };
    let off = if along { 0.25 * long } else { 0.25 * short };
    let side = half.sign();
    let cc = Coord {
        x: c.x + side * off * dir.x,
        y: c.y + side * off * dir.y,
    };
    prefix.mass_under(&rectangle(cc, theta, l, s))
}

/// The flown pattern of a placed area (direction chosen so that the search starts on the
/// side holding more probability at plan start).
fn flown_pattern(
    sh: &CandidateArea,
    u: &UnitCtx,
    prefix: &RowPrefix,
    o: &PlanOptions,
    id: &str,
    notes: &mut Vec<String>,
) -> Pattern {
    match *sh {
        CandidateArea::Rect {
            center,
            theta_deg,
            spacing_m,
            legs,
        } => {
            let long = u.track_m / legs as f64;
            let short = legs as f64 * spacing_m;
            let creeping = o.rectangle_pattern == PatternOverRectangle::CreepingLine;
            if creeping && legs >= 2 {
                // Progress along the long side from its rear end (-u half) with more mass;
                // legs run across it.
                let (th, ln, sh) = if short > long {
                    (theta_deg + 90.0, short, long)
                } else {
                    (theta_deg, long, short)
                };
                let rear = half_mass(prefix, center, th, ln, sh, Half::Rear);
                let front = half_mass(prefix, center, th, ln, sh, Half::Front);
                let bearing = if rear >= front { th } else { th + 180.0 };
                return Pattern::CreepingLine(Rectangle {
                    center,
                    length_m: ln,
                    width_m: sh,
                    major_grid_bearing_deg: bearing.rem_euclid(360.0),
                    track_spacing_m: spacing_m,
                });
            }
            if creeping {
                notes.push(format!(
                    "unit {id}: a creeping line needs at least 2 legs across; its area of a single leg is flown as a parallel sweep"
                ));
            }
            // Legs along the long side (fewest turns) when the whole legs of that fit the
            // track; the area and its POD are the same either way.
            let (theta, long, short) = if short > long {
                let turned = Pattern::ParallelSweep(Rectangle {
                    center,
                    length_m: short,
                    width_m: long,
                    major_grid_bearing_deg: theta_deg + 90.0,
                    track_spacing_m: spacing_m,
                });
                if turned.validate().is_ok() && turned.track_length_m() <= u.track_m * (1.0 + 1e-9)
                {
                    (theta_deg + 90.0, short, long)
                } else {
                    (theta_deg, long, short)
                }
            } else {
                (theta_deg, long, short)
            };
            // First leg on the left of the major bearing (-v half).
            let left = half_mass(prefix, center, theta, long, short, Half::Left);
            let right = half_mass(prefix, center, theta, long, short, Half::Right);
            let bearing = if left >= right { theta } else { theta + 180.0 };
            Pattern::ParallelSweep(Rectangle {
                center,
                length_m: long,
                width_m: short,
                major_grid_bearing_deg: bearing.rem_euclid(360.0),
                track_spacing_m: spacing_m,
            })
        }
        _ => sh.pattern(u),
    }
}

fn assemble(
    planner: &Planner<'_>,
    units: &[UnitSpec],
    placed: &[Placed],
    bound: OptimalBound,
    mut notes: Vec<String>,
    o: &PlanOptions,
) -> Result<Plan, PlanError> {
    let s = planner.s;
    let grid = planner.grid;
    let prefix0 = RowPrefix::new(&grid, &s.binned);
    let mut assignments = Vec::with_capacity(units.len());
    for (k, (p, spec)) in placed.iter().zip(units).enumerate() {
        let u = &planner.ctxs[k];
        if let Some(r) = &p.reason {
            notes.push(r.clone());
        }
        let pattern = flown_pattern(&p.shape, u, &prefix0, o, &spec.id, &mut notes);
        let coverage = p.shape.coverage(u, &p.poly);
        let pod = u.law.pod_from_coverage(coverage);
        let (rows, cols) = (p.layer.rows(), p.layer.cols());
        let v = p.layer.window_values();
        let mut pos_terms = Vec::new();
        let mut poa_terms = Vec::new();
        for (i, r) in rows.enumerate() {
            for (j, c) in cols.clone().enumerate() {
                let d = v[[i, j]];
                let m = s.cells[[r, c]];
                pos_terms.push(m * d);
                if pod > 0.0 {
                    poa_terms.push(m * d / pod);
                }
            }
        }
        for (j, &d) in p.particle_pod.iter().enumerate() {
            pos_terms.push(s.weights[j] * d);
            if d > 0.0 && pod > 0.0 {
                poa_terms.push(s.weights[j] * d / pod);
            }
        }
        let waypoints: Vec<Coord<f64>> = pattern.tracks().0;
        let legs: Vec<Leg> = waypoints
            .windows(2)
            .filter(|w| w[0] != w[1])
            .map(|w| {
                let (dx, dy) = (w[1].x - w[0].x, w[1].y - w[0].y);
                Leg {
                    from: w[0],
                    to: w[1],
                    grid_bearing_deg: dx.atan2(dy).to_degrees().rem_euclid(360.0),
                    length_m: dx.hypot(dy),
                }
            })
            .collect();
        let track_length_m = pattern.track_length_m();
        let hours_needed =
            track_length_m / (spec.speed_mps * SECONDS_PER_HOUR * (1.0 - o.turn_allowance));
        if hours_needed > spec.hours_on_scene * (1.0 + 1e-9) {
            notes.push(format!(
                "unit {}: the pattern's whole legs need {:.3} h, more than the {:.3} h on scene",
                spec.id, hours_needed, spec.hours_on_scene
            ));
        }
        let area_m2 = p.poly.area();
        let track_spacing_m = match p.shape {
            CandidateArea::Sector { .. } => u.w_eff / coverage,
            _ => rect_spacing(&p.shape) / u.searchers,
        };
        if u.team {
            notes.push(format!(
                "unit {}: ground team of {} searchers; the pattern's legs are the team's centre line, its track spacing {:.1} m the lane of the whole line, and track_spacing_m {:.1} m the spacing between searchers",
                spec.id, u.searchers, rect_spacing(&p.shape), track_spacing_m
            ));
        }
        assignments.push(UnitAssignment {
            unit: spec.id.clone(),
            commence_search_point: waypoints[0],
            waypoints,
            legs,
            pattern,
            area_m2,
            track_spacing_m,
            coverage,
            pod,
            poa: neumaier_sum(poa_terms),
            pos: neumaier_sum(pos_terms),
            track_length_m,
            hours_needed,
            effort_m2: coverage * area_m2,
            segment: None,
        });
    }
    let pos_plan = joint_pos(s, placed);
    Ok(Plan {
        assignments,
        pos_plan,
        pos_optimal_bound: bound.pos,
        efficiency: pos_plan / bound.pos,
        bound,
        turn_allowance: o.turn_allowance,
        notes,
    })
}
