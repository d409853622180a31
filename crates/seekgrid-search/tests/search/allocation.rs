//! Optimal allocation against docs/references.md §4 and SciPy.

use crate::fixtures::{number, numbers, reference};
use ndarray::{Array2, array};
use seekgrid_search::{SearchError, optimal_allocation, optimal_allocation_per_cell};

#[test]
fn three_equal_cells_match_the_computed_example_one() {
    // computed: docs/references.md §4 Ex 1 (brentq; SLSQP agrees), frozen by
    // make_search_fixtures.py.
    let r = reference();
    let ex = &r["allocation_ex1"];
    let out = optimal_allocation(&array![[0.6, 0.3, 0.1]], 1.0, 2.0).unwrap();
    assert!((out.lambda - number(&ex["lambda"])).abs() < 1e-9 * out.lambda);
    assert!((out.lambda - 0.156078).abs() < 5e-7);
    for (z, want) in out.coverage.iter().zip(numbers(&ex["coverage"])) {
        assert!((z - want).abs() < 1e-12);
    }
    assert!((out.coverage[[0, 0]] - 1.346574).abs() < 5e-7);
    assert!((out.coverage[[0, 1]] - 0.653426).abs() < 5e-7);
    assert_eq!(out.coverage[[0, 2]], 0.0);
    assert!((out.pos - 0.587844).abs() < 5e-7);
    assert!((out.pos - number(&ex["pos"])).abs() < 1e-12);
    let p = [0.6, 0.3, 0.1];
    let post: Vec<f64> = (0..3)
        .map(|i| p[i] * (-out.coverage[[0, i]]).exp() / (1.0 - out.pos))
        .collect();
    for (a, b) in post.iter().zip([0.378687, 0.378687, 0.242627]) {
        assert!((a - b).abs() < 5e-7);
    }
    // Uniform coverage 2/3 gives only 0.486583 (computed, docs/references.md §4).
    let uniform: f64 = p.iter().map(|q| q * (1.0 - (-2.0_f64 / 3.0).exp())).sum();
    assert!((uniform - 0.486583).abs() < 5e-7 && uniform < out.pos);
}

#[test]
fn unequal_cells_match_the_computed_example_two() {
    // computed: docs/references.md §4 Ex 2 (SLSQP agrees to 1e-6); posterior exactly
    // (2/7, 1/7, 4/7).
    let r = reference();
    let ex = &r["allocation_ex2"];
    let out = optimal_allocation_per_cell(&[0.5, 0.3, 0.2], &[4.0, 2.0, 8.0], 12.0).unwrap();
    assert!((out.lambda - number(&ex["lambda"])).abs() < 1e-9 * out.lambda);
    assert!((out.lambda - 0.021705).abs() < 5e-7);
    assert!((out.pos - 0.696131).abs() < 5e-7);
    let p = [0.5, 0.3, 0.2];
    let a = [4.0, 2.0, 8.0];
    let effort: f64 = (0..3).map(|i| a[i] * out.coverage[i]).sum();
    assert!((effort - 12.0).abs() < 1e-12);
    for (i, want) in [2.0 / 7.0, 1.0 / 7.0, 4.0 / 7.0].iter().enumerate() {
        let post = p[i] * (-out.coverage[i]).exp() / (1.0 - out.pos);
        assert!((post - want).abs() < 1e-12, "cell {i}: {post}");
    }
}

#[test]
fn posterior_density_is_lambda_over_one_minus_pos_in_searched_cells() {
    // computed; from memory (Stone): after an optimal search the posterior density is
    // λ/(1-POS) in every searched cell and no more than that elsewhere (docs/references.md §4).
    let masses = [0.22, 0.05, 0.3, 0.01, 0.12, 0.2];
    let areas = [1.0, 3.0, 2.5, 0.5, 1.0, 4.0];
    let out = optimal_allocation_per_cell(&masses, &areas, 3.0).unwrap();
    let level = out.lambda / (1.0 - out.pos);
    for i in 0..6 {
        let post_density = masses[i] * (-out.coverage[i]).exp() / (1.0 - out.pos) / areas[i];
        if out.coverage[i] > 0.0 {
            assert!((post_density - level).abs() < 1e-12 * level);
        } else {
            assert!(post_density <= level * (1.0 + 1e-12));
        }
    }
}

fn circular_normal_cells(sigma: f64, cell: f64, half_cells: usize) -> Array2<f64> {
    let n = 2 * half_cells;
    let f = |x: f64| 0.5 * libm::erf(x / (sigma * std::f64::consts::SQRT_2));
    let edges: Vec<f64> = (0..=n)
        .map(|i| (i as f64 - half_cells as f64) * cell)
        .collect();
    let m: Vec<f64> = (0..n).map(|i| f(edges[i + 1]) - f(edges[i])).collect();
    Array2::from_shape_fn((n, n), |(r, c)| m[r] * m[c])
}

#[test]
fn circular_normal_target_converges_to_stones_optimum() {
    // formula from memory (Stone 1975; Koopman 1957), values computed in the fixture:
    // POS* = 1 - (1 + h) e^(-h), h = √(E/(πσ²)); E/(πσ²) = 1 → 0.264241, 4 → 0.593994.
    let r = reference();
    let sigma = 1000.0;
    let cell = 50.0;
    let cells = circular_normal_cells(sigma, cell, 140);
    for row in r["stone_circular_normal"].as_array().unwrap() {
        let e_ratio = number(&row["effort_over_pi_sigma2"]);
        let effort = e_ratio * std::f64::consts::PI * sigma * sigma;
        let out = optimal_allocation(&cells, cell * cell, effort).unwrap();
        let want = number(&row["pos"]);
        assert!(
            (out.pos - want).abs() < 0.005 * want,
            "E/πσ²={e_ratio}: {} vs {want}",
            out.pos
        );
    }
}

#[test]
fn uniform_target_gives_the_random_search_formula() {
    // found: Turner SM230; NOSC search models page: uniform target, POS = 1 - e^(-E/A).
    let r = reference();
    let cells = Array2::from_elem((100, 100), 1e-4);
    let area = 1e4 * 400.0;
    for row in r["uniform_random_search"].as_array().unwrap() {
        let ratio = number(&row["effort_over_area"]);
        let out = optimal_allocation(&cells, 400.0, ratio * area).unwrap();
        assert!((out.pos - number(&row["pos"])).abs() < 1e-12);
    }
}

/// Slow reference: sort densities and try every number of searched cells with the closed form.
fn brute_force_lambda(masses: &[f64], areas: &[f64], effort: f64) -> f64 {
    let mut idx: Vec<usize> = (0..masses.len()).filter(|&i| masses[i] > 0.0).collect();
    idx.sort_by(|&a, &b| (masses[b] / areas[b]).total_cmp(&(masses[a] / areas[a])));
    for m in 1..=idx.len() {
        let (mut sa, mut sal) = (0.0, 0.0);
        for &i in &idx[..m] {
            sa += areas[i];
            sal += areas[i] * (masses[i] / areas[i]).ln();
        }
        let t = (sal - effort) / sa;
        let next_ok = m == idx.len() || (masses[idx[m]] / areas[idx[m]]).ln() <= t;
        let last_ok = (masses[idx[m - 1]] / areas[idx[m - 1]]).ln() > t;
        if next_ok && last_ok {
            return t.exp();
        }
    }
    f64::NAN
}

#[test]
fn newton_root_matches_the_sorted_closed_form_on_random_cells() {
    use rand::{RngExt, SeedableRng};
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(42);
    for _ in 0..50 {
        let n = rng.random_range(1..300);
        let raw: Vec<f64> = (0..n)
            .map(|_| {
                if rng.random_range(0.0..1.0) < 0.2 {
                    0.0
                } else {
                    rng.random_range(0.0..1.0)
                }
            })
            .collect();
        let total: f64 = raw.iter().sum::<f64>() + 0.1;
        let masses: Vec<f64> = raw.iter().map(|m| m / total).collect();
        if masses.iter().all(|&m| m == 0.0) {
            continue;
        }
        let areas: Vec<f64> = (0..n).map(|_| rng.random_range(0.5..5.0)).collect();
        let effort = rng.random_range(0.01..50.0);
        let fast = optimal_allocation_per_cell(&masses, &areas, effort).unwrap();
        let slow = brute_force_lambda(&masses, &areas, effort);
        assert!(
            (fast.lambda - slow).abs() <= 1e-9 * slow,
            "{} vs {slow}",
            fast.lambda
        );
    }
}

#[test]
fn bad_allocation_inputs_are_refused() {
    let cells = array![[0.5, 0.5]];
    assert!(matches!(
        optimal_allocation(&cells, 0.0, 1.0),
        Err(SearchError::BadCellArea { .. })
    ));
    assert!(matches!(
        optimal_allocation(&cells, 1.0, -1.0),
        Err(SearchError::BadEffort { .. })
    ));
    assert!(matches!(
        optimal_allocation(&array![[0.9, 0.5]], 1.0, 1.0),
        Err(SearchError::BadMass { .. })
    ));
    assert!(matches!(
        optimal_allocation(&array![[0.0, 0.0]], 1.0, 1.0),
        Err(SearchError::NothingToSearch)
    ));
    let zero = optimal_allocation(&cells, 1.0, 0.0).unwrap();
    assert_eq!(zero.pos, 0.0);
    assert!(zero.coverage.iter().all(|&z| z == 0.0));
}
