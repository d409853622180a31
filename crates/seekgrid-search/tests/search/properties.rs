//! Property tests of the Bayesian update: mass conservation, composition, order, zero effort.

use ndarray::Array2;
use proptest::prelude::*;
use seekgrid_core::{Belief, DEFAULT_MAX_CELLS, GridSpec, Particles};
use seekgrid_search::{PodLayer, update_after_miss};

const ROWS: usize = 4;
const COLS: usize = 5;

fn grid() -> GridSpec {
    GridSpec::new(0.0, 400.0, 100.0, ROWS, COLS, DEFAULT_MAX_CELLS).unwrap()
}

/// A belief from raw non-negative parts, scaled to a total of 1.
fn belief(cells: &[f64], particles: &[f64], row: f64) -> Belief {
    let total: f64 = cells.iter().sum::<f64>() + particles.iter().sum::<f64>() + row;
    let cells =
        Array2::from_shape_vec((ROWS, COLS), cells.iter().map(|v| v / total).collect()).unwrap();
    let n = particles.len();
    let parts = Particles::new(
        (0..n).map(|i| 10.0 * i as f64).collect(),
        vec![50.0; n],
        particles.iter().map(|w| w / total).collect(),
        vec![false; n],
    )
    .unwrap();
    Belief::new(grid(), cells, parts, row / total).unwrap()
}

#[derive(Clone, Debug)]
struct Search {
    cells: Vec<f64>,
    particles: Vec<f64>,
}

impl Search {
    fn layer(&self) -> PodLayer {
        PodLayer::from_dense(
            grid(),
            Array2::from_shape_vec((ROWS, COLS), self.cells.clone()).unwrap(),
        )
        .unwrap()
    }
}

fn pod() -> impl Strategy<Value = f64> {
    prop_oneof![Just(0.0), 0.0..0.95_f64]
}

fn search(n_particles: usize) -> impl Strategy<Value = Search> {
    (
        prop::collection::vec(pod(), ROWS * COLS),
        prop::collection::vec(pod(), n_particles),
    )
        .prop_map(|(cells, particles)| Search { cells, particles })
}

fn scenario() -> impl Strategy<Value = (Vec<f64>, Vec<f64>, f64, Vec<Search>)> {
    (0usize..6).prop_flat_map(|n| {
        (
            prop::collection::vec(0.0..1.0_f64, ROWS * COLS),
            prop::collection::vec(0.0..1.0_f64, n),
            0.01..0.5_f64,
            prop::collection::vec(search(n), 1..8),
        )
    })
}

fn assert_close(a: &Belief, b: &Belief, tol: f64) {
    for (x, y) in a.cells().iter().zip(b.cells()) {
        assert!((x - y).abs() <= tol, "cell {x} vs {y}");
    }
    for (x, y) in a.particles().weights().iter().zip(b.particles().weights()) {
        assert!((x - y).abs() <= tol, "particle {x} vs {y}");
    }
    assert!((a.rest_of_world() - b.rest_of_world()).abs() <= tol);
}

proptest! {
    #[test]
    fn mass_is_conserved_over_any_sequence_of_searches((cells, parts, row, searches) in scenario()) {
        let mut b = belief(&cells, &parts, row);
        for s in &searches {
            update_after_miss(&mut b, &s.layer(), &s.particles).unwrap();
            prop_assert!((b.total_mass() - 1.0).abs() <= 1e-12);
            prop_assert!(b.cells().iter().all(|v| *v >= 0.0));
        }
    }

    #[test]
    fn two_updates_equal_one_with_the_cumulative_pod((cells, parts, row, searches) in scenario()) {
        let s1 = &searches[0];
        let s2 = searches.get(1).unwrap_or(s1);
        let mut twice = belief(&cells, &parts, row);
        update_after_miss(&mut twice, &s1.layer(), &s1.particles).unwrap();
        update_after_miss(&mut twice, &s2.layer(), &s2.particles).unwrap();
        let combine = |a: &[f64], b: &[f64]| -> Vec<f64> {
            a.iter().zip(b).map(|(x, y)| 1.0 - (1.0 - x) * (1.0 - y)).collect()
        };
        let both = Search {
            cells: combine(&s1.cells, &s2.cells),
            particles: combine(&s1.particles, &s2.particles),
        };
        let mut once = belief(&cells, &parts, row);
        update_after_miss(&mut once, &both.layer(), &both.particles).unwrap();
        assert_close(&twice, &once, 1e-12);
    }

    #[test]
    fn order_of_searches_does_not_change_the_result((cells, parts, row, searches) in scenario()) {
        let mut forward = belief(&cells, &parts, row);
        for s in &searches {
            update_after_miss(&mut forward, &s.layer(), &s.particles).unwrap();
        }
        let mut backward = belief(&cells, &parts, row);
        for s in searches.iter().rev() {
            update_after_miss(&mut backward, &s.layer(), &s.particles).unwrap();
        }
        assert_close(&forward, &backward, 1e-12);
    }

    #[test]
    fn search_with_zero_effort_leaves_belief_unchanged((cells, parts, row, _s) in scenario()) {
        let mut b = belief(&cells, &parts, row);
        let before = b.clone();
        let out = update_after_miss(&mut b, &PodLayer::empty(grid()), &vec![0.0; parts.len()]).unwrap();
        prop_assert_eq!(out.pos, 0.0);
        prop_assert_eq!(b, before);
    }
}
