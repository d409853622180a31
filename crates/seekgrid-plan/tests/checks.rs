//! Checks of seekgrid-plan against published formulas, SciPy values and brute force.
//!
//! One test binary with a module per topic; the frozen reference values come from
//! `fixtures/reference/make_plan_fixtures.py` (plan_reference.json).
#![allow(
    clippy::disallowed_methods,
    reason = "reads the SciPy values frozen in fixtures/reference"
)]

use geo::{Area, BooleanOps, MultiPolygon};
use ndarray::Array2;
use seekgrid_core::units::{SECONDS_PER_HOUR, kmh_to_mps};
use seekgrid_core::{Belief, DEFAULT_MAX_CELLS, GridSpec, Particles};
use seekgrid_plan::*;
use seekgrid_search::{DetectionLaw, Pattern, Rectangle, SweepWidth, pattern_pod, pattern_pod_at};
use serde_json::Value;
use std::f64::consts::PI;

fn reference() -> Value {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/../../fixtures/reference/plan_reference.json"
    );
    serde_json::from_str(&std::fs::read_to_string(path).expect("fixture present")).expect("json")
}

fn phi(x: f64) -> f64 {
    0.5 * (1.0 + libm::erf(x / std::f64::consts::SQRT_2))
}

/// Circular normal (σ) centred on (0, 0): cell masses as products of erf differences over a
/// square grid of `2 half` cells; the mass outside the grid goes to rest of world.
fn normal_belief(sigma: f64, cell: f64, half: usize) -> Belief {
    let n = 2 * half;
    let w = half as f64 * cell;
    let grid = GridSpec::new(-w, w, cell, n, n, DEFAULT_MAX_CELLS).unwrap();
    let edges: Vec<f64> = (0..=n)
        .map(|i| phi((-w + i as f64 * cell) / sigma))
        .collect();
    let p: Vec<f64> = (0..n).map(|i| edges[i + 1] - edges[i]).collect();
    let cells = Array2::from_shape_fn((n, n), |(r, c)| p[r] * p[c]);
    let tot = cells.sum();
    Belief::new(grid, cells, Particles::default(), (1.0 - tot).max(0.0)).unwrap()
}

fn unit(id: &str, speed_mps: f64, hours: f64, w: f64) -> UnitSpec {
    UnitSpec {
        id: id.into(),
        speed_mps,
        hours_on_scene: hours,
        sweep_width_m: w,
        track_spacing_min_m: None,
        law: DetectionLaw::Exponential,
        kind: UnitKind::Vessel,
    }
}

/// A unit whose effort W·L (no turn allowance) is `effort_m2`.
fn unit_with_effort(id: &str, w: f64, effort_m2: f64) -> UnitSpec {
    unit(id, 10.0, effort_m2 / w / (10.0 * SECONDS_PER_HOUR), w)
}

fn no_turns() -> PlanOptions {
    PlanOptions {
        turn_allowance: 0.0,
        ..PlanOptions::default()
    }
}

/// Joint POS of a plan recomputed from its patterns alone, independently of the planner:
/// parallel sweeps and creeping lines with the search crate's `pattern_pod` /
/// `pattern_pod_at`; expanding squares and sector searches as the planner scores them, a
/// uniform POD over the pattern's area polygon, here with geo's boolean operations for each
/// cell's fraction and geo's `Contains` for particles; Σ p (1 - Π(1 - d)) over cells and
/// particles inside the grid.
fn joint_pos_from_patterns(belief: &Belief, plan: &Plan, units: &[UnitSpec]) -> f64 {
    use geo::Contains;
    let grid = belief.grid();
    let mut surv = Array2::<f64>::ones((grid.rows(), grid.cols()));
    let pts: Vec<geo::Coord<f64>> = (0..belief.particles().len())
        .map(|i| belief.particles().position(i))
        .collect();
    let inside: Vec<bool> = pts.iter().map(|p| grid.locate(*p).is_some()).collect();
    let mut psurv = vec![1.0; pts.len()];
    for (a, u) in plan.assignments.iter().zip(units) {
        let w = SweepWidth::new(f64::from(u.searchers()) * u.sweep_width_m, &[]).unwrap();
        let (dense, d) = match a.pattern {
            Pattern::ParallelSweep(Rectangle { .. }) | Pattern::CreepingLine(Rectangle { .. }) => {
                let dense = match pattern_pod(grid, &a.pattern, u.law, &w) {
                    Ok(layer) => layer.to_dense(grid).unwrap(),
                    Err(seekgrid_search::SearchError::PatternOutsideGrid { .. }) => {
                        Array2::zeros((grid.rows(), grid.cols()))
                    }
                    Err(e) => panic!("{e}"),
                };
                (dense, pattern_pod_at(&pts, &a.pattern, u.law, &w).unwrap())
            }
            _ => {
                let area = MultiPolygon(vec![a.pattern.area_polygon()]);
                let dense = Array2::from_shape_fn((grid.rows(), grid.cols()), |(r, c)| {
                    let cell = grid.cell_box(r, c).to_polygon();
                    let f = area.intersection(&MultiPolygon(vec![cell])).unsigned_area()
                        / grid.cell_area_m2();
                    a.pod * f
                });
                let d = pts
                    .iter()
                    .map(|p| if area.contains(p) { a.pod } else { 0.0 })
                    .collect();
                (dense, d)
            }
        };
        surv.zip_mut_with(&dense, |s, d| *s *= 1.0 - d);
        for j in 0..pts.len() {
            psurv[j] *= 1.0 - d[j];
        }
    }
    let cells: f64 = belief
        .cells()
        .iter()
        .zip(surv.iter())
        .map(|(m, s)| m * (1.0 - s))
        .sum();
    let parts: f64 = (0..pts.len())
        .filter(|&j| inside[j])
        .map(|j| belief.particles().weights()[j] * (1.0 - psurv[j]))
        .sum();
    cells + parts
}

mod bound {
    use super::*;

    #[test]
    fn grid_optimum_for_a_circular_normal_converges_to_stones_pos() {
        // derived (docs/references.md §4; Stone 1975, Koopman 1957): POS* = 1 - (1 + h) e^(-h),
        // h = sqrt(E/(πσ²)); E/(πσ²) = 0.25, 1, 4, 9 -> 0.090204, 0.264241, 0.593994, 0.800852.
        // SciPy radial water-filling agrees (plan_reference.json, computed).
        let sigma = 1000.0;
        let b = normal_belief(sigma, 50.0, 140);
        let table = [
            (0.25, 0.090204),
            (1.0, 0.264241),
            (4.0, 0.593994),
            (9.0, 0.800852),
        ];
        let fx = reference();
        for (i, &(e, published)) in table.iter().enumerate() {
            let scipy = fx["stone_circular_normal"][i]["pos_numeric"]
                .as_f64()
                .unwrap();
            assert!((scipy - published).abs() < 1e-6);
            let effort = e * PI * sigma * sigma;
            let u = unit_with_effort("a", 100.0, effort);
            let ob = optimal_bound(&b, &[u], &no_turns()).unwrap();
            assert!((ob.effort_m2 - effort).abs() < 1e-6 * effort);
            let rel = (ob.pos - published).abs() / published;
            assert!(rel < 0.005, "e={e}: {} vs {published}", ob.pos);
            // λ = f(0) e^(-h) (derived, docs/references.md §4).
            let lam = fx["stone_circular_normal"][i]["lambda_sigma2"]
                .as_f64()
                .unwrap()
                / (sigma * sigma);
            assert!(
                (ob.lambda - lam).abs() < 0.02 * lam,
                "λ {} vs {lam}",
                ob.lambda
            );
        }
    }

    #[test]
    fn discrete_example_matches_scipy() {
        // computed (docs/references.md §4 Ex 1; brentq in make_plan_fixtures.py):
        // p = (0.6, 0.3, 0.1), A = 1 each, Z = 2 -> λ = 0.156078, POS = 0.587844.
        let fx = &reference()["discrete_ex1"];
        let grid = GridSpec::new(0.0, 1.0, 1.0, 1, 3, DEFAULT_MAX_CELLS).unwrap();
        let cells = Array2::from_shape_vec((1, 3), vec![0.6, 0.3, 0.1]).unwrap();
        let b = Belief::new(grid, cells, Particles::default(), 0.0).unwrap();
        let u = unit("a", 1.0, 2.0 / SECONDS_PER_HOUR, 1.0);
        let ob = optimal_bound(&b, &[u], &no_turns()).unwrap();
        assert!((ob.lambda - fx["lambda"].as_f64().unwrap()).abs() < 1e-9);
        assert!((ob.pos - fx["pos"].as_f64().unwrap()).abs() < 1e-9);
        assert!((ob.coverage[[0, 0]] - fx["coverage"][0].as_f64().unwrap()).abs() < 1e-9);
        assert_eq!(ob.coverage[[0, 2]], 0.0);
    }

    #[test]
    fn uniform_target_gets_the_random_search_pos() {
        // found: Turner SM230: uniform target in A, POS = 1 - exp(-E/A); E/A = 0.5, 1, 2.
        let grid = GridSpec::new(0.0, 2000.0, 100.0, 20, 20, DEFAULT_MAX_CELLS).unwrap();
        let cells = Array2::from_elem((20, 20), 1.0 / 400.0);
        let b = Belief::new(grid, cells, Particles::default(), 0.0).unwrap();
        for (ratio, published) in [(0.5, 0.393469), (1.0, 0.632121), (2.0, 0.864665)] {
            let u = unit_with_effort("a", 50.0, ratio * 4.0e6);
            let ob = optimal_bound(&b, &[u], &no_turns()).unwrap();
            assert!((ob.pos - published).abs() < 1e-6, "{ratio}: {}", ob.pos);
            assert!(ob.coverage.iter().all(|z| (z - ratio).abs() < 1e-9));
        }
    }

    #[test]
    fn particles_count_in_their_cells_and_those_outside_the_grid_do_not() {
        let grid = GridSpec::new(0.0, 1000.0, 100.0, 10, 10, DEFAULT_MAX_CELLS).unwrap();
        let p = Particles::new(
            vec![150.0, 5000.0],
            vec![850.0, 5.0],
            vec![0.4, 0.1],
            vec![false, false],
        )
        .unwrap();
        let b = Belief::new(grid, Array2::zeros((10, 10)), p, 0.5).unwrap();
        let u = unit_with_effort("a", 50.0, 10_000.0);
        let ob = optimal_bound(&b, &[u], &no_turns()).unwrap();
        assert!((ob.searchable_mass - 0.4).abs() < 1e-15);
        assert!((ob.particles_outside_mass - 0.1).abs() < 1e-15);
        // All effort goes into the one cell: coverage 1 there, POS = 0.4 (1 - e^-1).
        assert!((ob.coverage[[1, 1]] - 1.0).abs() < 1e-12);
        assert!((ob.pos - 0.4 * (1.0 - (-1.0f64).exp())).abs() < 1e-12);
    }

    #[test]
    fn effort_is_sweep_width_times_track_net_of_turns() {
        // found: Cooper, C = Z/A with Z = W·L (docs/references.md §1).
        let mut u = unit("a", 5.0, 2.0, 300.0);
        assert!((u.track_length_m(0.1) - 5.0 * 2.0 * SECONDS_PER_HOUR * 0.9).abs() < 1e-9);
        assert!((u.effort_m2(0.1) - 300.0 * 32_400.0).abs() < 1e-6);
        u.kind = UnitKind::GroundTeam { searchers: 4 };
        assert!((u.effort_m2(0.0) - 4.0 * 300.0 * 36_000.0).abs() < 1e-6);
    }
}

mod practical {
    use super::*;

    #[test]
    fn one_unit_never_beats_the_bound_and_its_square_is_near_the_best_uniform_disc() {
        // computed (docs/references.md §4 comparison; plan_reference.json): best uniform disc
        // e = 1: 0.256979, e = 4: 0.572872; best uniform centred square 0.254169, 0.564872.
        let fx = reference();
        let sigma = 1000.0;
        let b = normal_belief(sigma, 50.0, 120);
        for (i, (e, disc)) in [(1.0, 0.256979), (4.0, 0.572872)].into_iter().enumerate() {
            let square = fx["best_uniform"][i]["square_pos"].as_f64().unwrap();
            assert!((fx["best_uniform"][i]["disc_pos"].as_f64().unwrap() - disc).abs() < 1e-6);
            let u = unit_with_effort("a", 100.0, e * PI * sigma * sigma);
            let free = plan(&b, std::slice::from_ref(&u), &no_turns()).unwrap();
            assert!(free.pos_plan <= free.pos_optimal_bound + 1e-9);
            let only_squares = PlanOptions {
                aspect_ratios: vec![1.0],
                ..no_turns()
            };
            let sq = plan(&b, &[u], &only_squares).unwrap();
            assert!(sq.pos_plan <= sq.pos_optimal_bound + 1e-9);
            // Tolerances: the square plan within 2 % below the best disc and within 0.2 % of
            // the best centred square (whole legs, grid cells).
            assert!(
                sq.pos_plan < disc && sq.pos_plan > 0.98 * disc,
                "e={e}: {}",
                sq.pos_plan
            );
            assert!(
                (sq.pos_plan - square).abs() < 0.002 * square,
                "e={e}: {} vs {square}",
                sq.pos_plan
            );
        }
    }

    #[test]
    fn uniform_target_plan_reaches_random_search_pos() {
        // found: Turner SM230: POS = 1 - exp(-E/A); E/A = 0.5 -> 0.393469. The square region
        // of 2 x 2 km is exactly 10 legs of 2 km at S = 200 m for L = 20 km.
        let grid = GridSpec::new(0.0, 6000.0, 100.0, 60, 60, DEFAULT_MAX_CELLS).unwrap();
        let cells = Array2::from_shape_fn((60, 60), |(r, c)| {
            if (20..40).contains(&r) && (20..40).contains(&c) {
                1.0 / 400.0
            } else {
                0.0
            }
        });
        let b = Belief::new(grid, cells, Particles::default(), 0.0).unwrap();
        let u = unit("a", 10.0, 2000.0 / SECONDS_PER_HOUR, 100.0);
        let p = plan(&b, &[u], &no_turns()).unwrap();
        assert!((p.pos_optimal_bound - 0.393469).abs() < 1e-6);
        assert!(p.pos_plan <= p.pos_optimal_bound + 1e-9);
        assert!(p.pos_plan > 0.995 * 0.393469, "{}", p.pos_plan);
    }

    /// Brute force: every cell-aligned rectangle (all positions and sizes) with area A = L·S,
    /// POD = law(W/S), mass uniform in cells.
    fn rectangles(n: usize) -> Vec<(usize, usize, usize, usize)> {
        let mut v = Vec::new();
        for r0 in 0..n {
            for r1 in r0 + 1..=n {
                for c0 in 0..n {
                    for c1 in c0 + 1..=n {
                        v.push((r0, r1, c0, c1));
                    }
                }
            }
        }
        v
    }

    fn small_belief(seed: u64) -> Belief {
        let n = 12;
        let grid = GridSpec::new(0.0, 1200.0, 100.0, n, n, DEFAULT_MAX_CELLS).unwrap();
        // Two lumps and a floor, from a fixed integer recipe.
        let cells = Array2::from_shape_fn((n, n), |(r, c)| {
            let (r, c) = (r as f64, c as f64);
            let s = seed as f64;
            (-((r - 3.0 - s).powi(2) + (c - 4.0).powi(2)) / 4.0).exp()
                + 0.6 * (-((r - 8.0).powi(2) + (c - 8.0 + s).powi(2)) / 6.0).exp()
                + 0.01
        });
        let tot = cells.sum();
        Belief::new(
            grid,
            cells.mapv(|v| 0.9 * v / tot),
            Particles::default(),
            0.1,
        )
        .unwrap()
    }

    fn box_mass(b: &Belief, r: &(usize, usize, usize, usize)) -> f64 {
        let mut s = 0.0;
        for i in r.0..r.1 {
            for j in r.2..r.3 {
                s += b.cells()[[i, j]];
            }
        }
        s
    }

    #[test]
    fn one_unit_plan_agrees_with_brute_force_over_cell_aligned_rectangles() {
        let opts = PlanOptions {
            orientation_step_deg: 90.0,
            refine_orientation: false,
            ..no_turns()
        };
        for seed in 0..3u64 {
            let b = small_belief(seed);
            let u = unit("a", 5.0, 0.5, 60.0); // L = 9 km, W = 60 m
            let l = u.track_length_m(0.0);
            let mut best = 0.0f64;
            for r in rectangles(12) {
                let area = ((r.1 - r.0) * (r.3 - r.2)) as f64 * 1e4;
                let s = area / l;
                if s >= l / 2.0 {
                    continue;
                }
                best = best.max(u.law.pod_from_coverage(u.sweep_width_m / s) * box_mass(&b, &r));
            }
            let p = plan(&b, &[u], &opts).unwrap();
            // Tolerance: within 1 % below (whole legs; the plan's areas are not cell-aligned,
            // so it may also do up to 3 % better).
            assert!(
                p.pos_plan >= 0.99 * best && p.pos_plan <= 1.03 * best,
                "seed {seed}: {} vs {best}",
                p.pos_plan
            );
        }
    }

    #[test]
    fn two_unit_plan_agrees_with_brute_force_over_disjoint_cell_aligned_rectangles() {
        let opts = PlanOptions {
            orientation_step_deg: 90.0,
            refine_orientation: false,
            ..no_turns()
        };
        let b = small_belief(1);
        let units = [unit("a", 5.0, 0.4, 60.0), unit("b", 4.0, 0.3, 50.0)];
        let rects = rectangles(12);
        let score = |u: &UnitSpec| -> Vec<f64> {
            let l = u.track_length_m(0.0);
            rects
                .iter()
                .map(|r| {
                    let area = ((r.1 - r.0) * (r.3 - r.2)) as f64 * 1e4;
                    let s = area / l;
                    if s >= l / 2.0 {
                        0.0
                    } else {
                        u.law.pod_from_coverage(u.sweep_width_m / s) * box_mass(&b, r)
                    }
                })
                .collect()
        };
        let (sa, sb) = (score(&units[0]), score(&units[1]));
        // Every pair of disjoint rectangles: for each rectangle of unit a, the best disjoint
        // one of unit b (b's list in descending order), pruned by the best pair so far.
        let mut ob: Vec<usize> = (0..rects.len()).collect();
        ob.sort_by(|&x, &y| sb[y].total_cmp(&sb[x]).then(x.cmp(&y)));
        let mut best = 0.0f64;
        for (i, p) in rects.iter().enumerate() {
            if sa[i] + sb[ob[0]] <= best {
                continue;
            }
            for &j in &ob {
                let q = rects[j];
                if sa[i] + sb[j] <= best {
                    break;
                }
                let apart = p.1 <= q.0 || q.1 <= p.0 || p.3 <= q.2 || q.3 <= p.2;
                if apart {
                    best = sa[i] + sb[j];
                    break;
                }
            }
        }
        let p = plan(&b, &units, &opts).unwrap();
        // Tolerance: within 3 % below the exact pair (coordinate ascent and exchanges under the
        // no-overlap rule are a local search; 0.516 against 0.531 here), at most 4 % above
        // (areas need not be cell-aligned).
        assert!(
            p.pos_plan >= 0.97 * best && p.pos_plan <= 1.04 * best,
            "{} vs {best}",
            p.pos_plan
        );
    }

    #[test]
    fn areas_do_not_overlap_and_joint_pos_matches_the_patterns() {
        let b = normal_belief(2000.0, 100.0, 60);
        let units = [
            unit("a", 8.0, 2.0, 400.0),
            unit("b", 6.0, 2.0, 300.0),
            unit("c", 12.0, 1.0, 500.0),
        ];
        let p = plan(&b, &units, &PlanOptions::default()).unwrap();
        assert!(p.pos_plan <= p.pos_optimal_bound + 1e-9);
        assert!((p.efficiency - p.pos_plan / p.pos_optimal_bound).abs() < 1e-15);
        // Overlap checked with geo's boolean operations (independent of the planner's own test).
        for i in 0..3 {
            for j in i + 1..3 {
                let a = MultiPolygon(vec![p.assignments[i].pattern.area_polygon()]);
                let c = MultiPolygon(vec![p.assignments[j].pattern.area_polygon()]);
                assert!(
                    a.intersection(&c).unsigned_area() < 1.0,
                    "{i} and {j} overlap"
                );
            }
        }
        let again = joint_pos_from_patterns(&b, &p, &units);
        assert!(
            (again - p.pos_plan).abs() < 1e-9,
            "{again} vs {}",
            p.pos_plan
        );
        // Disjoint areas add up, but for cells cut by two areas' edges (counted 1 - Π(1 - f d),
        // a little below the exact Σ f d).
        let singles: f64 = p.assignments.iter().map(|a| a.pos).sum();
        assert!(
            singles >= p.pos_plan - 1e-12 && singles - p.pos_plan < 0.01 * p.pos_plan,
            "{singles}"
        );
    }

    #[test]
    fn legs_waypoints_and_hours_describe_the_flown_pattern() {
        let b = normal_belief(2000.0, 100.0, 60);
        let units = [unit("a", 8.0, 2.0, 400.0)];
        let p = plan(&b, &units, &PlanOptions::default()).unwrap();
        let a = &p.assignments[0];
        assert_eq!(a.commence_search_point, a.waypoints[0]);
        assert_eq!(a.legs.len(), a.waypoints.len() - 1);
        let total: f64 = a.legs.iter().map(|l| l.length_m).sum();
        assert!((total - a.track_length_m).abs() < 1e-6);
        for l in &a.legs {
            let (dx, dy) = (l.to.x - l.from.x, l.to.y - l.from.y);
            let b = l.grid_bearing_deg.to_radians();
            assert!(
                (dx - l.length_m * b.sin()).abs() < 1e-6
                    && (dy - l.length_m * b.cos()).abs() < 1e-6
            );
        }
        assert!(a.hours_needed <= 2.0 + 1e-9 && a.hours_needed > 1.9);
        assert!((a.pod - (1.0 - (-a.coverage).exp())).abs() < 1e-15);
        assert!(a.pos <= a.poa * a.pod + 1e-12);
        assert!(p.notes.iter().any(|n| n.contains("turn allowance 0.1")));
    }

    #[test]
    fn tight_datum_gives_an_expanding_square_and_a_fast_unit_a_sector_search() {
        let b = normal_belief(100.0, 20.0, 50);
        let boat = unit("boat", 5.0, 1.0, 200.0);
        let p = plan(&b, &[boat], &PlanOptions::default()).unwrap();
        let a = &p.assignments[0];
        assert!(
            matches!(a.pattern, Pattern::ExpandingSquare { .. }),
            "{:?}",
            a.pattern
        );
        assert!(a.commence_search_point.x.abs() < 150.0 && a.commence_search_point.y.abs() < 150.0);
        assert!(
            p.notes
                .iter()
                .any(|n| n.contains("expanding square on a tight datum"))
        );
        assert!(p.pos_plan <= p.pos_optimal_bound + 1e-9);
        let plane = UnitSpec {
            kind: UnitKind::Aircraft,
            ..unit("plane", 60.0, 0.1, 300.0)
        };
        let p = plan(&b, &[plane], &PlanOptions::default()).unwrap();
        let a = &p.assignments[0];
        assert!(
            matches!(a.pattern, Pattern::SectorSearch { .. }),
            "{:?} {:?}",
            a.pattern,
            p.notes
        );
        assert!(p.pos_plan <= p.pos_optimal_bound + 1e-9 && p.pos_plan > 0.5);
        assert!(a.track_length_m <= plane_track() + 1e-6);
    }

    fn plane_track() -> f64 {
        60.0 * 0.1 * SECONDS_PER_HOUR * 0.9
    }

    #[test]
    fn ground_team_lanes_are_searchers_times_spacing() {
        let b = normal_belief(800.0, 50.0, 60);
        let team = UnitSpec {
            kind: UnitKind::GroundTeam { searchers: 5 },
            track_spacing_min_m: Some(20.0),
            ..unit("team", 1.0, 4.0, 30.0)
        };
        let p = plan(&b, std::slice::from_ref(&team), &PlanOptions::default()).unwrap();
        let a = &p.assignments[0];
        let Pattern::ParallelSweep(Rectangle {
            track_spacing_m, ..
        }) = a.pattern
        else {
            panic!("a team flies a parallel sweep, got {:?}", a.pattern)
        };
        assert!((track_spacing_m - 5.0 * a.track_spacing_m).abs() < 1e-9);
        assert!(a.track_spacing_m >= 20.0 * (1.0 - 1e-9));
        assert!((a.coverage - 30.0 / a.track_spacing_m).abs() < 1e-9);
        // Effort credited = searchers x W x L.
        assert!(a.effort_m2 <= team.effort_m2(0.1) * (1.0 + 1e-9));
    }

    #[test]
    fn creeping_line_option_gives_legs_across_the_long_side() {
        let b = normal_belief(2000.0, 100.0, 60);
        let o = PlanOptions {
            rectangle_pattern: PatternOverRectangle::CreepingLine,
            aspect_ratios: vec![3.0],
            ..PlanOptions::default()
        };
        let p = plan(&b, &[unit("a", 8.0, 2.0, 400.0)], &o).unwrap();
        let Pattern::CreepingLine(Rectangle {
            length_m, width_m, ..
        }) = p.assignments[0].pattern
        else {
            panic!("expected a creeping line")
        };
        assert!(length_m > width_m);
        let first = &p.assignments[0].legs[0];
        assert!((first.length_m - (width_m - p.assignments[0].track_spacing_m)).abs() < 1e-6);
    }

    #[test]
    fn particles_are_scored_at_their_own_positions() {
        let grid = GridSpec::new(0.0, 4000.0, 200.0, 20, 20, DEFAULT_MAX_CELLS).unwrap();
        // 200 particles in a 600 m square, invented.
        let (mut x, mut y) = (Vec::new(), Vec::new());
        for i in 0..200 {
            x.push(1700.0 + (i % 20) as f64 * 30.0);
            y.push(1700.0 + (i / 20) as f64 * 60.0);
        }
        let w = vec![0.8 / 200.0; 200];
        let p = Particles::new(x, y, w, vec![false; 200]).unwrap();
        let b = Belief::new(grid, Array2::zeros((20, 20)), p, 0.2).unwrap();
        let units = [unit("a", 5.0, 1.0, 150.0)];
        let pl = plan(&b, &units, &PlanOptions::default()).unwrap();
        let again = joint_pos_from_patterns(&b, &pl, &units);
        assert!((again - pl.pos_plan).abs() < 1e-9);
        assert!(pl.pos_plan > 0.5);
    }

    #[test]
    fn allowed_overlap_is_counted_as_one_minus_product() {
        let b = normal_belief(500.0, 50.0, 40);
        let units = [unit("a", 5.0, 1.0, 100.0), unit("b", 5.0, 1.0, 100.0)];
        let o = PlanOptions {
            allow_overlap: true,
            ..PlanOptions::default()
        };
        let p = plan(&b, &units, &o).unwrap();
        let again = joint_pos_from_patterns(&b, &p, &units);
        assert!((again - p.pos_plan).abs() < 1e-9);
        assert!(p.pos_plan <= p.pos_optimal_bound + 1e-9);
        let apart = plan(&b, &units, &PlanOptions::default()).unwrap();
        assert!(
            p.pos_plan >= apart.pos_plan - 1e-9,
            "overlap allowed never scores lower"
        );
    }
}

mod properties {
    use super::*;
    use proptest::prelude::*;

    fn fast_options() -> PlanOptions {
        PlanOptions {
            orientation_step_deg: 30.0,
            aspect_ratios: vec![1.0, 2.0],
            coverage_steps: 5,
            max_candidates: 4,
            refinement_rounds: 1,
            ..PlanOptions::default()
        }
    }

    proptest! {
        #![proptest_config(ProptestConfig { cases: 24, .. ProptestConfig::default() })]

        #[test]
        fn plan_never_beats_the_bound(
            n in 6usize..14,
            masses in proptest::collection::vec(0.0f64..1.0, 196),
            row in 0.0f64..0.5,
            units in proptest::collection::vec((1.0f64..10.0, 0.05f64..1.0, 20.0f64..300.0), 1..4),
            particles in proptest::collection::vec((0.0f64..1.0, 0.0f64..1.0, 0.0f64..1.0), 0..20),
        ) {
            let cell = 100.0;
            let grid = GridSpec::new(0.0, n as f64 * cell, cell, n, n, DEFAULT_MAX_CELLS).unwrap();
            let raw = Array2::from_shape_fn((n, n), |(r, c)| masses[r * 14 + c]);
            let pw: f64 = particles.iter().map(|p| p.2).sum();
            let total = raw.sum() + pw;
            prop_assume!(total > 1e-6);
            let k = (1.0 - row) / total;
            let parts = Particles::new(
                particles.iter().map(|p| p.0 * n as f64 * cell).collect(),
                particles.iter().map(|p| p.1 * n as f64 * cell).collect(),
                particles.iter().map(|p| p.2 * k).collect(),
                vec![false; particles.len()],
            ).unwrap();
            let b = Belief::new(grid, raw.mapv(|v| v * k), parts, row).unwrap();
            let us: Vec<UnitSpec> = units.iter().enumerate()
                .map(|(i, &(v, h, w))| unit(&format!("u{i}"), v, h, w)).collect();
            let p = plan(&b, &us, &fast_options()).unwrap();
            // Particle mass in cells cut by an area edge: there the plan can reach more of the
            // binned mass than the bound assumes (see optimal_bound's docs).
            let mut cut = 0.0;
            for j in 0..b.particles().len() {
                let (r, c) = match grid.locate(b.particles().position(j)) { Some(rc) => rc, None => continue };
                let cell_poly = grid.cell_box(r, c).to_polygon();
                let partly = p.assignments.iter().any(|a| {
                    let inter = MultiPolygon(vec![a.pattern.area_polygon()])
                        .intersection(&MultiPolygon(vec![cell_poly.clone()]))
                        .unsigned_area();
                    inter > 1e-6 && inter < grid.cell_area_m2() - 1e-6
                });
                if partly { cut += b.particles().weights()[j]; }
            }
            prop_assert!(p.pos_plan <= p.pos_optimal_bound + cut + 1e-9,
                "plan {} bound {} cut {}", p.pos_plan, p.pos_optimal_bound, cut);
            if b.particles().is_empty() {
                prop_assert!(p.pos_plan <= p.pos_optimal_bound + 1e-9);
            }
            let again = joint_pos_from_patterns(&b, &p, &us);
            prop_assert!((again - p.pos_plan).abs() < 1e-9, "{} vs {}", again, p.pos_plan);
        }
    }

    #[test]
    fn plan_is_identical_for_one_and_two_threads() {
        let b = normal_belief(3000.0, 100.0, 80);
        let units = [
            unit("a", 8.0, 3.0, 500.0),
            unit("b", 6.0, 2.0, 300.0),
            unit("c", 15.0, 1.0, 800.0),
        ];
        let run = |threads: usize| {
            rayon::ThreadPoolBuilder::new()
                .num_threads(threads)
                .build()
                .unwrap()
                .install(|| plan(&b, &units, &PlanOptions::default()).unwrap())
        };
        assert_eq!(run(1), run(2));
    }
}

mod segments {
    use super::*;

    fn team(id: &str, searchers: u32, km: f64, w: f64) -> UnitSpec {
        UnitSpec {
            kind: UnitKind::GroundTeam { searchers },
            ..unit(id, kmh_to_mps(1.0), km, w)
        }
    }

    #[test]
    fn land_coverage_and_pod_match_the_published_example() {
        // found: Robe & Frost 2002 (docs/references.md §6): W = 30 m, 5 searchers x 4 km,
        // A = 0.5 km² -> C = 1.2; POD = 1 - e^(-C) = 0.698806 (exponential: found Washburn /
        // Turner, docs/references.md §1; that Robe & Frost use it: from memory).
        let o = no_turns();
        let sp =
            assign_teams_to_segments(&[("A".into(), 0.5, 0.5e6)], &[team("t", 5, 4.0, 30.0)], &o)
                .unwrap();
        let a = &sp.assignments[0];
        assert!((a.coverage - 1.2).abs() < 1e-9);
        assert!((a.pod - 0.698806).abs() < 1e-6);
        assert!((a.pos - 0.5 * 0.698806).abs() < 1e-6);
        assert!((a.recommended_spacing_m - 25.0).abs() < 1e-9);
        assert!(sp.exact);
    }

    #[test]
    fn minimum_spacing_caps_the_coverage_and_shortens_the_hours() {
        let mut t = team("t", 5, 4.0, 30.0);
        t.track_spacing_min_m = Some(50.0);
        let sp = assign_teams_to_segments(&[("A".into(), 0.5, 0.5e6)], &[t], &no_turns()).unwrap();
        let a = &sp.assignments[0];
        assert!(a.capped_by_min_spacing);
        assert!((a.coverage - 0.6).abs() < 1e-12);
        assert!((a.hours_needed - 2.0).abs() < 1e-9);
        assert!(sp.notes.iter().any(|n| n.contains("capped")));
    }

    /// Brute force by recursion over every team's segment.
    fn brute(segs: &[(String, f64, f64)], teams: &[UnitSpec], o: &PlanOptions) -> f64 {
        fn rec(
            t: usize,
            surv: &mut Vec<f64>,
            segs: &[(String, f64, f64)],
            pods: &[Vec<f64>],
            best: &mut f64,
        ) {
            if t == pods.len() {
                let v: f64 = segs
                    .iter()
                    .zip(surv.iter())
                    .map(|(s, q)| s.1 * (1.0 - q))
                    .sum();
                *best = best.max(v);
                return;
            }
            for s in 0..segs.len() {
                let keep = surv[s];
                surv[s] *= 1.0 - pods[t][s];
                rec(t + 1, surv, segs, pods, best);
                surv[s] = keep;
            }
        }
        let pods: Vec<Vec<f64>> = teams
            .iter()
            .map(|t| {
                segs.iter()
                    .map(|s| {
                        let mut c = t.effort_m2(o.turn_allowance) / s.2;
                        if let Some(m) = t.track_spacing_min_m {
                            c = c.min(t.sweep_width_m / m);
                        }
                        t.law.pod_from_coverage(c)
                    })
                    .collect()
            })
            .collect();
        let mut best = 0.0;
        rec(0, &mut vec![1.0; segs.len()], segs, &pods, &mut best);
        best
    }

    fn case(k: u64) -> (Vec<(String, f64, f64)>, Vec<UnitSpec>) {
        let m = 3 + (k % 4) as usize;
        let n = 2 + (k % 3) as usize;
        let mut segs = Vec::new();
        for s in 0..m {
            let poa = 0.8 / m as f64 * (1.0 + ((s as u64 * 7 + k) % 5) as f64) / 3.0;
            segs.push((
                format!("S{s}"),
                poa.min(0.8 / m as f64 * 1.6),
                2e5 * (1.0 + ((s as u64 + k) % 4) as f64),
            ));
        }
        let teams = (0..n)
            .map(|t| {
                let mut u = team(
                    &format!("T{t}"),
                    2 + (t as u32 + k as u32) % 5,
                    2.0 + t as f64,
                    25.0 + 5.0 * t as f64,
                );
                if t % 2 == 1 {
                    u.law = DetectionLaw::InverseCube;
                }
                u
            })
            .collect();
        (segs, teams)
    }

    #[test]
    fn exact_enumeration_matches_brute_force() {
        let o = PlanOptions::default();
        for k in 0..12 {
            let (segs, teams) = case(k);
            let sp = assign_teams_to_segments(&segs, &teams, &o).unwrap();
            assert!(sp.exact);
            let b = brute(&segs, &teams, &o);
            assert!(
                (sp.pos_plan - b).abs() < 1e-12,
                "case {k}: {} vs {b}",
                sp.pos_plan
            );
            let from_parts: f64 = segs
                .iter()
                .map(|s| {
                    let q: f64 = sp
                        .assignments
                        .iter()
                        .filter(|a| a.segment == s.0)
                        .map(|a| 1.0 - a.pod)
                        .product();
                    s.1 * (1.0 - q)
                })
                .sum();
            assert!((from_parts - sp.pos_plan).abs() < 1e-12);
        }
    }

    #[test]
    fn greedy_heuristic_is_stated_and_close_to_the_optimum() {
        let exact = PlanOptions::default();
        let greedy = PlanOptions {
            max_exact_assignments: 1,
            ..PlanOptions::default()
        };
        for k in 0..12 {
            let (segs, teams) = case(k);
            let e = assign_teams_to_segments(&segs, &teams, &exact).unwrap();
            let g = assign_teams_to_segments(&segs, &teams, &greedy).unwrap();
            assert!(!g.exact && g.notes.iter().any(|n| n.starts_with("greedy")));
            assert!(g.pos_plan <= e.pos_plan + 1e-12);
            assert!(
                g.pos_plan >= 0.97 * e.pos_plan,
                "case {k}: {} vs {}",
                g.pos_plan,
                e.pos_plan
            );
        }
    }

    #[test]
    fn bad_segments_are_refused_naming_the_segment() {
        let t = [team("t", 2, 1.0, 20.0)];
        let o = PlanOptions::default();
        assert_eq!(
            assign_teams_to_segments(&[], &t, &o),
            Err(PlanError::NoSegments)
        );
        let e = assign_teams_to_segments(&[("A".into(), 0.5, -1.0)], &t, &o).unwrap_err();
        assert!(
            matches!(&e, PlanError::BadSegment { segment, field: "area_m2", .. } if segment == "A")
        );
        assert!(e.to_string().contains("segment \"A\""));
        let e = assign_teams_to_segments(&[("A".into(), 0.7, 1.0), ("B".into(), 0.7, 1.0)], &t, &o)
            .unwrap_err();
        assert!(matches!(e, PlanError::SegmentPoaOverOne { .. }));
        let e = assign_teams_to_segments(&[("A".into(), 0.1, 1.0), ("A".into(), 0.1, 1.0)], &t, &o)
            .unwrap_err();
        assert!(matches!(e, PlanError::DuplicateSegment { .. }));
    }
}

mod errors {
    use super::*;

    #[test]
    fn bad_units_are_refused_naming_the_unit_and_field() {
        let b = normal_belief(500.0, 50.0, 20);
        let o = PlanOptions::default();
        assert_eq!(plan(&b, &[], &o).unwrap_err(), PlanError::NoUnits);
        for (field, u) in [
            ("speed_mps", unit("x", 0.0, 1.0, 10.0)),
            ("hours_on_scene", unit("x", 1.0, f64::NAN, 10.0)),
            ("sweep_width_m", unit("x", 1.0, 1.0, -3.0)),
            (
                "track_spacing_min_m",
                UnitSpec {
                    track_spacing_min_m: Some(0.0),
                    ..unit("x", 1.0, 1.0, 10.0)
                },
            ),
            (
                "searchers",
                UnitSpec {
                    kind: UnitKind::GroundTeam { searchers: 0 },
                    ..unit("x", 1.0, 1.0, 10.0)
                },
            ),
        ] {
            let e = plan(&b, &[u], &o).unwrap_err();
            assert!(
                matches!(&e, PlanError::BadUnit { unit, field: f, .. } if unit == "x" && *f == field),
                "{e}"
            );
            assert!(e.to_string().starts_with("unit \"x\": ") && !e.to_string().ends_with('.'));
        }
        let e = plan(
            &b,
            &[unit("x", 1.0, 1.0, 10.0), unit("x", 2.0, 1.0, 10.0)],
            &o,
        )
        .unwrap_err();
        assert!(matches!(e, PlanError::DuplicateUnit { .. }));
        let bad = PlanOptions {
            turn_allowance: 1.0,
            ..PlanOptions::default()
        };
        assert!(matches!(
            plan(&b, &[unit("x", 1.0, 1.0, 10.0)], &bad),
            Err(PlanError::BadOption {
                field: "turn_allowance",
                ..
            })
        ));
    }

    #[test]
    fn belief_without_searchable_mass_is_refused() {
        let grid = GridSpec::new(0.0, 1000.0, 100.0, 10, 10, DEFAULT_MAX_CELLS).unwrap();
        let b = Belief::all_rest_of_world(grid);
        let e = plan(&b, &[unit("x", 1.0, 1.0, 10.0)], &PlanOptions::default()).unwrap_err();
        assert!(matches!(e, PlanError::NothingToSearch { .. }));
        assert!(matches!(
            optimal_bound(&b, &[unit("x", 1.0, 1.0, 10.0)], &PlanOptions::default()),
            Err(PlanError::NothingToSearch { .. })
        ));
    }
}
