//! The Bayesian update against the worked examples of docs/references.md §3.

use ndarray::{Array2, array};
use seekgrid_core::{Belief, DEFAULT_MAX_CELLS, GridSpec, Particles};
use seekgrid_search::{DetectionLaw, PodLayer, SearchError, update_after_miss};

fn row_grid(n: usize) -> GridSpec {
    GridSpec::new(0.0, 100.0, 100.0, 1, n, DEFAULT_MAX_CELLS).unwrap()
}

fn three_segments() -> Belief {
    // docs/references.md §3 example: p = (0.50, 0.30, 0.15, ROW 0.05).
    Belief::new(
        row_grid(3),
        array![[0.50, 0.30, 0.15]],
        Particles::default(),
        0.05,
    )
    .unwrap()
}

fn layer(values: Array2<f64>) -> PodLayer {
    let grid = GridSpec::new(
        0.0,
        100.0,
        100.0,
        values.nrows(),
        values.ncols(),
        DEFAULT_MAX_CELLS,
    )
    .unwrap();
    PodLayer::from_dense(grid, values).unwrap()
}

fn close(a: f64, b: f64, tol: f64) {
    assert!((a - b).abs() <= tol, "{a} vs {b}");
}

#[test]
fn update_matches_the_published_three_segment_example() {
    let mut b = three_segments();
    let out = update_after_miss(&mut b, &layer(array![[0.6, 0.3, 0.0]]), &[]).unwrap();
    // found: sarbc.org/math.html (OPOS = Σ POD·POA): POS 0.39.
    close(out.pos, 0.39, 1e-15);
    // found: sarinfo.bc.ca POAderiv.pln (Clark 1995): p' = (0.327869, 0.344262, 0.245902);
    // found: sarbc.org/math.html: ROW' = 0.081967.
    let c = b.cells();
    close(c[[0, 0]], 0.327869, 5e-7);
    close(c[[0, 1]], 0.344262, 5e-7);
    close(c[[0, 2]], 0.245902, 5e-7);
    close(b.rest_of_world(), 0.081967, 5e-7);
    close(b.total_mass(), 1.0, 1e-15);
    // Searched area = the two cells with d > 0.
    close(out.poc_in_area_before, 0.8, 1e-15);
    close(out.poc_in_area_after, 0.327869 + 0.344262, 1e-6);
    close(out.pod_mean_in_area, 0.39 / 0.8, 1e-15);
    close(out.grid_mass_removed, 0.39, 1e-15);
    assert_eq!(out.particle_mass_removed, 0.0);
}

#[test]
fn second_search_matches_the_computed_example() {
    let mut b = three_segments();
    update_after_miss(&mut b, &layer(array![[0.6, 0.3, 0.0]]), &[]).unwrap();
    let out2 = update_after_miss(&mut b, &layer(array![[0.5, 0.5, 0.5]]), &[]).unwrap();
    // computed (docs/references.md §3): conditional POS2 0.459016; p'' = (0.303030, 0.318182,
    // 0.227273, ROW 0.151515).
    close(out2.pos, 0.459016, 5e-7);
    let c = b.cells();
    close(c[[0, 0]], 0.303030, 5e-7);
    close(c[[0, 1]], 0.318182, 5e-7);
    close(c[[0, 2]], 0.227273, 5e-7);
    close(b.rest_of_world(), 0.151515, 5e-7);
    // computed: cumulative POS 1 - (1 - 0.39)(1 - POS2) = 0.67.
    close(1.0 - (1.0 - 0.39) * (1.0 - out2.pos), 0.67, 1e-12);
}

#[test]
fn cumulative_pos_is_the_same_both_ways() {
    // computed (docs/references.md §3): 1 - Π(1 - POS_k) with conditional POS values equals
    // Σ p_i [1 - Π_k (1 - d_ik)] with the original priors: 0.67.
    let p = [0.50, 0.30, 0.15, 0.05];
    let d1 = [0.6, 0.3, 0.0, 0.0];
    let d2 = [0.5, 0.5, 0.5, 0.0];
    let direct: f64 = (0..4)
        .map(|i| p[i] * (1.0 - (1.0 - d1[i]) * (1.0 - d2[i])))
        .sum();
    close(direct, 0.67, 1e-15);
    let mut b = three_segments();
    let a = update_after_miss(&mut b, &layer(array![[0.6, 0.3, 0.0]]), &[]).unwrap();
    let c = update_after_miss(&mut b, &layer(array![[0.5, 0.5, 0.5]]), &[]).unwrap();
    close(1.0 - (1.0 - a.pos) * (1.0 - c.pos), direct, 1e-15);
}

#[test]
fn inverse_cube_sweep_at_coverage_one_lowers_poa_half_to_the_derived_value() {
    // Derivation: POD = erf(√π/2 · 1) = 0.789909 (found: Eagle NPS OA3602 / Washburn §2.4);
    // p' = 0.5 (1 - POD) / (1 - 0.5 POD) (found: POAderiv.pln).
    let pod = DetectionLaw::InverseCube.pod_from_coverage(1.0);
    close(pod, 0.789909, 5e-7);
    let derived = 0.5 * (1.0 - pod) / (1.0 - 0.5 * pod);
    close(derived, 0.173616, 5e-7);
    let mut b = Belief::new(row_grid(2), array![[0.5, 0.5]], Particles::default(), 0.0).unwrap();
    update_after_miss(&mut b, &layer(array![[pod, 0.0]]), &[]).unwrap();
    close(b.cells()[[0, 0]], derived, 1e-15);
}

#[test]
fn two_segment_form_matches_the_published_example() {
    // found: POAderiv.pln: Pa=0.6 searched with PaD=0.5 → Pa' = 0.428571, Pb' = 0.571429.
    let mut b = Belief::new(row_grid(2), array![[0.6, 0.4]], Particles::default(), 0.0).unwrap();
    update_after_miss(&mut b, &layer(array![[0.5, 0.0]]), &[]).unwrap();
    close(b.cells()[[0, 0]], 0.428571, 5e-7);
    close(b.cells()[[0, 1]], 0.571429, 5e-7);
    // The two-segment form itself: Pa' = Pa(1-PaD)/(1-Pa·PaD), Pb' = Pb/(1-Pa·PaD).
    close(
        0.6 * (1.0 - 0.5) / (1.0 - 0.6 * 0.5),
        b.cells()[[0, 0]],
        1e-15,
    );
    close(0.4 / (1.0 - 0.6 * 0.5), b.cells()[[0, 1]], 1e-15);
}

#[test]
fn cumulative_pod_of_three_searches_matches_the_published_value() {
    // found: Patterson 1998, sarinfo.bc.ca MultiResCumPOD.pln; JP 3-50 Vol I Table 8-2:
    // 0.5, 0.4, 0.3 → 0.79.
    let mut cum = Array2::zeros((1, 1));
    for d in [0.5, 0.4, 0.3] {
        layer(array![[d]]).combine_into(&mut cum).unwrap();
    }
    close(cum[[0, 0]], 0.79, 1e-15);
}

#[test]
fn particles_are_updated_with_their_own_pod() {
    let parts = Particles::new(
        vec![50.0, 150.0],
        vec![50.0, 50.0],
        vec![0.2, 0.2],
        vec![false; 2],
    )
    .unwrap();
    let mut b = Belief::new(row_grid(2), array![[0.25, 0.25]], parts, 0.1).unwrap();
    let out = update_after_miss(&mut b, &layer(array![[0.5, 0.0]]), &[1.0, 0.0]).unwrap();
    // POS = 0.25·0.5 + 0.2·1 = 0.325; remaining 0.675.
    close(out.pos, 0.325, 1e-15);
    close(out.particle_mass_removed, 0.2, 1e-15);
    close(out.grid_mass_removed, 0.125, 1e-15);
    close(b.particles().weights()[0], 0.0, 0.0);
    close(b.particles().weights()[1], 0.2 / 0.675, 1e-15);
    close(b.cells()[[0, 0]], 0.125 / 0.675, 1e-15);
    close(b.rest_of_world(), 0.1 / 0.675, 1e-15);
    close(b.total_mass(), 1.0, 1e-15);
}

#[test]
fn search_certain_to_find_the_object_is_refused_and_leaves_the_belief() {
    let mut b = Belief::new(row_grid(2), array![[0.5, 0.5]], Particles::default(), 0.0).unwrap();
    let before = b.clone();
    let err = update_after_miss(&mut b, &layer(array![[1.0, 1.0]]), &[]).unwrap_err();
    assert!(matches!(
        err,
        SearchError::CertainDetectionContradicted { .. }
    ));
    assert!(!err.to_string().ends_with('.'));
    assert_eq!(b, before);
}

#[test]
fn mismatched_inputs_are_refused() {
    let mut b = three_segments();
    assert!(matches!(
        update_after_miss(&mut b, &layer(array![[0.5, 0.5]]), &[]),
        Err(SearchError::GridMismatch { .. })
    ));
    assert!(matches!(
        update_after_miss(&mut b, &layer(array![[0.5, 0.5, 0.5]]), &[0.3]),
        Err(SearchError::ParticleCountMismatch { .. })
    ));
    let grid = row_grid(3);
    assert!(matches!(
        PodLayer::from_dense(grid, array![[0.5, 1.5, 0.0]]),
        Err(SearchError::BadPod { .. })
    ));
}
