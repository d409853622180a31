//! Track rasterisation against the parallel-track and random-search results of
//! docs/references.md §1, and against slow references (dense sampling, exact buffer areas).

use crate::fixtures::{number, reference};
use geo::Coord;
use ndarray::Array2;
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use seekgrid_core::{DEFAULT_MAX_CELLS, GridSpec};
use seekgrid_search::{
    DetectionLaw, SearchError, SweepWidth,
    track::{end_subpoints, near_subpoints},
    track_pod, track_pod_at, track_pod_sampled,
};

fn c(x: f64, y: f64) -> Coord<f64> {
    Coord { x, y }
}

/// A lawnmower of north-south legs at x = x0 + j·spacing, running 30 km past the grid.
fn lawnmower(x0: f64, spacing: f64, legs: std::ops::Range<i32>) -> Vec<Coord<f64>> {
    let mut t = Vec::new();
    for (i, j) in legs.enumerate() {
        let x = x0 + j as f64 * spacing;
        let (y0, y1) = if i % 2 == 0 {
            (-30_000.0, 31_000.0)
        } else {
            (31_000.0, -30_000.0)
        };
        t.push(c(x, y0));
        t.push(c(x, y1));
    }
    t
}

fn mean(a: &Array2<f64>) -> f64 {
    a.sum() / a.len() as f64
}

#[test]
fn many_parallel_inverse_cube_tracks_reproduce_erf_of_coverage() {
    // found: Eagle, NPS OA3602 / Washburn §2.4: parallel sweeps at spacing S give
    // erf(√π/2 · W/S); computed: the SciPy mean over one spacing of the summed lateral range
    // exposures (docs/references.md §1 derivation), frozen in the fixture.
    let r = reference();
    let grid = GridSpec::new(0.0, 1000.0, 10.0, 100, 100, DEFAULT_MAX_CELLS).unwrap();
    let spacing = 100.0;
    let track = lawnmower(50.0, spacing, -30..40);
    for row in r["inverse_cube_parallel_average"].as_array().unwrap() {
        let cov = number(&row["coverage"]);
        let w = SweepWidth::new(cov * spacing, &[]).unwrap();
        let layer = track_pod(&grid, &track, DetectionLaw::InverseCube, &w).unwrap();
        let got = mean(&layer.to_dense(&grid).unwrap());
        let want = DetectionLaw::InverseCube.pod_from_coverage(cov);
        assert!((want - number(&row["mean_pod"])).abs() < 1e-12);
        assert!((got - want).abs() < 0.01 * want, "C={cov}: {got} vs {want}");
    }
}

#[test]
fn many_parallel_definite_range_tracks_give_min_one_coverage() {
    // found: Turner SM230, perfect detection within ±W/2: POD = min(1, W/S).
    let grid = GridSpec::new(0.0, 1000.0, 10.0, 100, 100, DEFAULT_MAX_CELLS).unwrap();
    let spacing = 100.0;
    let track = lawnmower(50.0, spacing, -2..13);
    for cov in [0.25, 0.5, 0.75, 1.0, 1.5] {
        let w = SweepWidth::new(cov * spacing, &[]).unwrap();
        let layer = track_pod(&grid, &track, DetectionLaw::DefiniteRange, &w).unwrap();
        let got = mean(&layer.to_dense(&grid).unwrap());
        let want = DetectionLaw::DefiniteRange.pod_from_coverage(cov);
        assert!((got - want).abs() < 0.01 * want, "C={cov}: {got} vs {want}");
    }
}

/// Mean POD over the cells inside a disc of radius 1 km after `n` straight passes with random
/// directions and stratified random offsets across a disc of radius 2 km; returns (mean POD,
/// W·L/A).
fn random_lines(law: DetectionLaw, coverage: f64, seed: u64) -> (f64, f64) {
    let rho_big = 2000.0_f64;
    let width = 10.0;
    let grid = GridSpec::new(-1000.0, 1000.0, 10.0, 200, 200, DEFAULT_MAX_CELLS).unwrap();
    let w = SweepWidth::new(width, &[]).unwrap();
    let step = width / coverage;
    let n = (2.0 * rho_big / step).round() as usize;
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let mut cum = Array2::zeros((200, 200));
    let mut total_len = 0.0;
    for j in 0..n {
        let p = -rho_big + (j as f64 + rng.random_range(0.0..1.0)) * step;
        let theta = rng.random_range(0.0..std::f64::consts::PI);
        let (ux, uy) = (theta.cos(), theta.sin());
        let half = (rho_big * rho_big - p * p).sqrt();
        let foot = c(-uy * p, ux * p);
        let a = c(foot.x - ux * half, foot.y - uy * half);
        let b = c(foot.x + ux * half, foot.y + uy * half);
        total_len += 2.0 * half;
        match track_pod(&grid, &[a, b], law, &w) {
            Ok(layer) => layer.combine_into(&mut cum).unwrap(),
            Err(SearchError::TrackOutsideGrid { .. }) => {}
            Err(e) => panic!("{e}"),
        }
    }
    let mut sum = 0.0;
    let mut cells = 0usize;
    for ((r, col), v) in cum.indexed_iter() {
        let centre = grid.cell_center(r, col);
        if centre.x.hypot(centre.y) <= 1000.0 - 10.0 {
            sum += v;
            cells += 1;
        }
    }
    let area = std::f64::consts::PI * rho_big * rho_big;
    (sum / cells as f64, width * total_len / area)
}

#[test]
fn random_straight_passes_give_the_random_search_formula_for_every_law() {
    // found: Washburn ch. 2 / Turner SM230 and docs/references.md §4 (uniform target, random
    // search): mean POD = 1 - exp(-W L / A) whatever the lateral range curve. Seeded; the
    // spread over seeds is about 0.3 % (1 σ), the tolerance 1.5 %.
    for law in [
        DetectionLaw::Exponential,
        DetectionLaw::InverseCube,
        DetectionLaw::DefiniteRange,
    ] {
        for (coverage, seed) in [(1.0, 11), (2.0, 12)] {
            let (got, c_actual) = random_lines(law, coverage, seed);
            let want = 1.0 - (-c_actual).exp();
            assert!(
                (got - want).abs() < 0.015 * want,
                "{law:?} C={c_actual}: {got} vs {want}"
            );
        }
    }
}

fn wandering_track(
    seed: u64,
    n: usize,
    step_m: f64,
    jitter_m: f64,
    start: Coord<f64>,
) -> Vec<Coord<f64>> {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let (mut x, mut y, mut heading) = (start.x, start.y, 0.4_f64);
    let mut t = Vec::with_capacity(n);
    for _ in 0..n {
        heading += rng.random_range(-0.3..0.3);
        x += step_m * heading.cos();
        y += step_m * heading.sin();
        t.push(c(
            x + rng.random_range(-jitter_m..jitter_m),
            y + rng.random_range(-jitter_m..jitter_m),
        ));
    }
    t
}

#[test]
fn four_times_finer_sampling_changes_no_cell_by_more_than_a_thousandth() {
    let grid = GridSpec::new(0.0, 800.0, 50.0, 16, 16, DEFAULT_MAX_CELLS).unwrap();
    // A short track (summed through the track tree) and a long one of many fixes (summed
    // through the split near/far field).
    let short = wandering_track(3, 40, 12.0, 3.0, c(250.0, 300.0));
    let long = wandering_track(4, 300, 1.6, 0.5, c(250.0, 300.0));
    for (track, law, width) in [&short, &long].into_iter().flat_map(|t| {
        [DetectionLaw::InverseCube, DetectionLaw::Exponential]
            .into_iter()
            .flat_map(move |law| [15.0, 50.0, 250.0].map(|w| (t, law, w)))
    }) {
        let ends = [track[0], track[track.len() - 1]];
        let w = SweepWidth::new(width, &[]).unwrap();
        let fast = track_pod(&grid, track, law, &w)
            .unwrap()
            .to_dense(&grid)
            .unwrap();
        let n_near = near_subpoints(50.0, width);
        let fine = track_pod_sampled(&grid, track, law, &w, 4 * n_near)
            .unwrap()
            .to_dense(&grid)
            .unwrap();
        let near_radius = 200.0_f64.max(2.0 * width) + 35.4;
        let mut worst = 0.0_f64;
        for ((r, col), v) in fast.indexed_iter() {
            let centre = grid.cell_center(r, col);
            let at_end = ends
                .iter()
                .any(|e| (e.x - centre.x).hypot(e.y - centre.y) <= near_radius);
            if !at_end {
                worst = worst.max((v - fine[[r, col]]).abs());
            }
        }
        assert!(
            worst <= 1e-3,
            "{law:?} W={width} {} fixes: {worst}",
            track.len()
        );
        // Cells round the ends use end_subpoints: compare them with 4x that, on a small
        // grid aligned with the big one.
        let n_end = end_subpoints(50.0, width);
        for e in ends {
            let (r, col) = grid.locate(e).unwrap();
            let (r0, c0) = (r.saturating_sub(2), col.saturating_sub(2));
            let sub = GridSpec::new(
                grid.west_m() + c0 as f64 * 50.0,
                grid.north_m() - r0 as f64 * 50.0,
                50.0,
                5,
                5,
                DEFAULT_MAX_CELLS,
            )
            .unwrap();
            let fine_end = track_pod_sampled(&sub, track, law, &w, 4 * n_end)
                .unwrap()
                .to_dense(&sub)
                .unwrap();
            for ((i, j), v) in fine_end.indexed_iter() {
                let d = (fast[[r0 + i, c0 + j]] - v).abs();
                assert!(d <= 1e-3, "{law:?} W={width} end cell: {d}");
            }
        }
    }
}

#[test]
fn definite_range_exact_coverage_agrees_with_dense_sampling() {
    let grid = GridSpec::new(0.0, 2000.0, 50.0, 40, 40, DEFAULT_MAX_CELLS).unwrap();
    let track = wandering_track(5, 150, 12.0, 2.0, c(700.0, 1000.0));
    let w = SweepWidth::new(60.0, &[]).unwrap();
    let exact = track_pod(&grid, &track, DetectionLaw::DefiniteRange, &w)
        .unwrap()
        .to_dense(&grid)
        .unwrap();
    let sampled = track_pod_sampled(&grid, &track, DetectionLaw::DefiniteRange, &w, 64)
        .unwrap()
        .to_dense(&grid)
        .unwrap();
    let worst = (&exact - &sampled)
        .iter()
        .fold(0.0_f64, |m, d| m.max(d.abs()));
    // A cell crossed by the buffer's edge differs by at most ~√2·64 of 64² sub-points.
    assert!(worst < 0.025, "{worst}");
    let (ea, sa) = (exact.sum(), sampled.sum());
    assert!((ea - sa).abs() < 2e-3 * ea, "{ea} vs {sa}");
}

#[test]
fn definite_range_area_of_a_straight_pass_is_the_stadium_area() {
    // common practice: area within r of a segment of length l is 2 r l + π r².
    let grid = GridSpec::new(0.0, 2000.0, 25.0, 80, 80, DEFAULT_MAX_CELLS).unwrap();
    let w = SweepWidth::new(200.0, &[]).unwrap();
    let layer = track_pod(
        &grid,
        &[c(400.0, 700.0), c(1500.0, 1300.0)],
        DetectionLaw::DefiniteRange,
        &w,
    )
    .unwrap();
    let area = layer.to_dense(&grid).unwrap().sum() * 625.0;
    let l = (1100.0_f64).hypot(600.0);
    let want = 2.0 * 100.0 * l + std::f64::consts::PI * 100.0 * 100.0;
    assert!((area - want).abs() < 2e-4 * want, "{area} vs {want}");
}

#[test]
fn splitting_a_straight_track_into_many_fixes_changes_nothing() {
    let w = SweepWidth::new(300.0, &[]).unwrap();
    let two = [c(0.0, 0.0), c(5000.0, 2000.0)];
    let many: Vec<_> = (0..=1000)
        .map(|i| c(5.0 * i as f64, 2.0 * i as f64))
        .collect();
    let pts: Vec<_> = (0..50)
        .map(|i| c(100.0 * i as f64, 37.0 * i as f64 - 400.0))
        .collect();
    for law in [
        DetectionLaw::InverseCube,
        DetectionLaw::Exponential,
        DetectionLaw::DefiniteRange,
    ] {
        let a = track_pod_at(&pts, &two, law, &w).unwrap();
        let b = track_pod_at(&pts, &many, law, &w).unwrap();
        for (x, y) in a.iter().zip(&b) {
            assert!((x - y).abs() < 1e-9, "{law:?}: {x} vs {y}");
        }
    }
}

#[test]
fn point_pod_next_to_a_long_pass_is_the_lateral_range_curve() {
    let w = SweepWidth::new(400.0, &[]).unwrap();
    let track = [c(-1e7, 0.0), c(1e7, 0.0)];
    let pts: Vec<_> = [0.0, 50.0, 199.0, 201.0, 600.0]
        .iter()
        .map(|&y| c(10.0, y))
        .collect();
    for law in [
        DetectionLaw::InverseCube,
        DetectionLaw::Exponential,
        DetectionLaw::DefiniteRange,
    ] {
        let got = track_pod_at(&pts, &track, law, &w).unwrap();
        for (p, g) in pts.iter().zip(got) {
            let want = law.lateral_range_pod(p.y, 400.0);
            // A 20 000 km pass differs from an infinite one by x²/(2L²) relative.
            assert!((g - want).abs() < 1e-9, "{law:?} x={}: {g} vs {want}", p.y);
        }
    }
}

#[test]
fn bad_tracks_are_refused_with_a_reason() {
    let grid = GridSpec::new(0.0, 1000.0, 100.0, 10, 10, DEFAULT_MAX_CELLS).unwrap();
    let w = SweepWidth::new(100.0, &[]).unwrap();
    let law = DetectionLaw::InverseCube;
    assert!(matches!(
        track_pod(&grid, &[c(1.0, 1.0)], law, &w),
        Err(SearchError::TrackTooShort { points: 1 })
    ));
    assert!(matches!(
        track_pod(&grid, &[c(1.0, 1.0), c(f64::NAN, 2.0)], law, &w),
        Err(SearchError::TrackPointNotFinite { index: 1 })
    ));
    assert!(matches!(
        track_pod(&grid, &[c(1.0, 1.0), c(1.0, 1.0)], law, &w),
        Err(SearchError::TrackHasNoLength)
    ));
    for law in [DetectionLaw::InverseCube, DetectionLaw::DefiniteRange] {
        let far = [c(1e7, 1e7), c(1e7 + 500.0, 1e7)];
        let err = track_pod(&grid, &far, law, &w).unwrap_err();
        assert!(matches!(err, SearchError::TrackOutsideGrid { .. }));
        assert!(!err.to_string().ends_with('.'));
    }
}

#[test]
fn a_long_track_scores_the_same_bits_on_one_thread_and_on_two() {
    // The split field transforms every mesh row and column on its own and sums each point's
    // near pieces in a fixed order, so the thread count cannot change a bit.
    let grid = GridSpec::new(0.0, 3000.0, 25.0, 120, 120, DEFAULT_MAX_CELLS).unwrap();
    let track = wandering_track(8, 500, 6.0, 1.0, c(900.0, 1200.0));
    let w = SweepWidth::new(120.0, &[]).unwrap();
    let run = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| {
                track_pod(&grid, &track, DetectionLaw::InverseCube, &w)
                    .unwrap()
                    .to_dense(&grid)
                    .unwrap()
            })
    };
    let (one, two) = (run(1), run(2));
    assert!(
        one.iter()
            .zip(two.iter())
            .all(|(a, b)| a.to_bits() == b.to_bits())
    );
    assert!(one.sum() > 0.0);
}
