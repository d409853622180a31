//! Opinion pools and diagnostics.

use super::common::{c, grid, multi, rect_polygon};
use seekgrid_prior::{Analyst, Pool, Scenario, ScenarioShape, combine};

fn analyst(id: &str, weight: f64) -> Analyst {
    Analyst {
        id: id.into(),
        weight,
    }
}

fn area(id: &str, who: &str, x0: f64, y0: f64, x1: f64, y1: f64) -> Scenario {
    Scenario {
        id: id.into(),
        analyst: who.into(),
        weight: 1.0,
        shape: ScenarioShape::Area {
            polygons: multi(vec![rect_polygon(x0, y0, x1, y1)]),
        },
    }
}

fn point(id: &str, who: &str, weight: f64, x: f64, y: f64, s: f64) -> Scenario {
    Scenario {
        id: id.into(),
        analyst: who.into(),
        weight,
        shape: ScenarioShape::Point {
            center: c(x, y),
            sigma_major_m: s,
            sigma_minor_m: s,
            major_grid_bearing_deg: 0.0,
        },
    }
}

#[test]
fn identical_maps_count_as_one_opinion() {
    let g = grid(0.0, 4_000.0, 100.0, 40, 40);
    let analysts = [analyst("a", 1.0), analyst("b", 3.0), analyst("c", 0.5)];
    let scenarios = [
        area("a1", "a", 500.0, 500.0, 1_500.0, 2_500.0),
        area("b1", "b", 500.0, 500.0, 1_500.0, 2_500.0),
        area("c1", "c", 500.0, 500.0, 1_500.0, 2_500.0),
    ];
    for pool in [Pool::Linear, Pool::Logarithmic] {
        let p = combine(&analysts, &scenarios, &g, pool).unwrap();
        assert!(
            (p.diagnostics.effective_opinions - 1.0).abs() < 1e-12,
            "{pool:?}"
        );
        for d in &p.diagnostics.analysts {
            assert!(d.js_divergence_bits.abs() < 1e-12);
            assert!(d.leave_one_out_shift.abs() < 1e-12);
            assert!(d.leave_one_out_centroid_shift_m.abs() < 1e-6);
        }
    }
}

#[test]
fn disjoint_maps_count_as_the_inverse_simpson_index_of_the_weights() {
    // Definition (see Diagnostics::effective_opinions): disjoint maps give 1 / Σ w².
    let g = grid(0.0, 4_000.0, 100.0, 40, 40);
    let analysts = [analyst("a", 1.0), analyst("b", 2.0), analyst("c", 1.0)];
    let scenarios = [
        area("a1", "a", 0.0, 0.0, 1_000.0, 1_000.0),
        area("b1", "b", 2_000.0, 0.0, 3_000.0, 1_000.0),
        area("c1", "c", 0.0, 2_000.0, 1_000.0, 3_000.0),
    ];
    let p = combine(&analysts, &scenarios, &g, Pool::Linear).unwrap();
    let want = 1.0 / (0.25f64.powi(2) + 0.5f64.powi(2) + 0.25f64.powi(2));
    assert!((p.diagnostics.effective_opinions - want).abs() < 1e-12);
    // Each map is partly different from the pool: strictly between 0 and 1 bit (the
    // equal-weight value is checked exactly in the next test).
    for d in &p.diagnostics.analysts {
        assert!(d.js_divergence_bits > 0.0 && d.js_divergence_bits < 1.0);
    }
}

#[test]
fn two_disjoint_equal_analysts_have_known_divergence_and_leave_one_out_shift() {
    // P = (P_a + P_b)/2 with disjoint P_a, P_b; M = (P_a + P)/2 holds 3/4 on a's area and 1/4
    // on b's, so JS(P_a, P) = ½ log2(4/3) + ½ (½ log2(2/3) + ½ log2 2) = 0.311278 bits
    // (computed; Lin 1991 definition).
    let g = grid(0.0, 4_000.0, 100.0, 40, 40);
    let analysts = [analyst("a", 1.0), analyst("b", 1.0)];
    let scenarios = [
        area("a1", "a", 0.0, 0.0, 1_000.0, 1_000.0),
        area("b1", "b", 3_000.0, 0.0, 4_000.0, 1_000.0),
    ];
    let p = combine(&analysts, &scenarios, &g, Pool::Linear).unwrap();
    let js = 0.5 * (4.0f64 / 3.0).log2() + 0.5 * (0.5 * (2.0f64 / 3.0).log2() + 0.5);
    for d in &p.diagnostics.analysts {
        assert!(
            (d.js_divergence_bits - js).abs() < 1e-12,
            "{}",
            d.js_divergence_bits
        );
        // Without one analyst the pool is the other's map: TV 1/2; centroid moves 1500 m.
        assert!((d.leave_one_out_shift - 0.5).abs() < 1e-12);
        assert!((d.leave_one_out_centroid_shift_m - 1_500.0).abs() < 1e-6);
        assert_eq!(d.share, 0.5);
    }
    assert!((p.diagnostics.effective_opinions - 2.0).abs() < 1e-12);
}

#[test]
fn linear_pool_is_the_weighted_mean_of_the_analysts_maps() {
    let g = grid(0.0, 4_000.0, 100.0, 40, 40);
    let analysts = [analyst("a", 3.0), analyst("b", 1.0)];
    let scenarios = [
        point("a1", "a", 1.0, 1_000.0, 1_000.0, 300.0),
        point("a2", "a", 3.0, 2_000.0, 2_500.0, 500.0),
        point("b1", "b", 1.0, 3_000.0, 1_000.0, 200.0),
    ];
    let p = combine(&analysts, &scenarios, &g, Pool::Linear).unwrap();
    let eff: Vec<f64> = p.scenario_weights.iter().map(|(_, w)| *w).collect();
    assert_eq!(eff, vec![0.75 * 0.25, 0.75 * 0.75, 0.25]);
    let parts: Vec<_> = scenarios
        .iter()
        .map(|s| seekgrid_prior::scenario_mass(&s.shape, &g).unwrap())
        .collect();
    for ((r, col), v) in p.cells.indexed_iter() {
        let want: f64 = parts
            .iter()
            .zip(&eff)
            .map(|(m, w)| w * m.cells[[r, col]])
            .sum();
        assert!((v - want).abs() < 1e-15);
    }
}

#[test]
fn logarithmic_pool_forces_zero_where_any_analyst_says_zero() {
    let g = grid(0.0, 4_000.0, 100.0, 40, 40);
    let analysts = [analyst("a", 1.0), analyst("b", 1.0)];
    // Overlap: x in 1000..2000.
    let scenarios = [
        area("a1", "a", 0.0, 0.0, 2_000.0, 1_000.0),
        area("b1", "b", 1_000.0, 0.0, 3_000.0, 1_000.0),
    ];
    let p = combine(&analysts, &scenarios, &g, Pool::Logarithmic).unwrap();
    for ((r, col), v) in p.cells.indexed_iter() {
        let x = g.cell_center(r, col).x;
        let y = g.cell_center(r, col).y;
        let in_both = (1_000.0..2_000.0).contains(&x) && y < 1_000.0;
        if in_both {
            // Uniform over the 1 km² overlap: 100 cells.
            assert!((v - 0.01).abs() < 1e-14);
        } else {
            assert_eq!(*v, 0.0);
        }
    }
    // The linear pool keeps both areas.
    let lin = combine(&analysts, &scenarios, &g, Pool::Linear).unwrap();
    assert!(lin.cells[[35, 5]] > 0.0 && lin.cells[[35, 25]] > 0.0);
}

#[test]
fn logarithmic_pool_of_disjoint_maps_is_refused() {
    let g = grid(0.0, 4_000.0, 100.0, 40, 40);
    let analysts = [analyst("a", 1.0), analyst("b", 1.0)];
    let scenarios = [
        area("a1", "a", 0.0, 0.0, 1_000.0, 1_000.0),
        area("b1", "b", 3_000.0, 0.0, 4_000.0, 1_000.0),
    ];
    let e = combine(&analysts, &scenarios, &g, Pool::Logarithmic).unwrap_err();
    assert_eq!(e, seekgrid_prior::PriorError::EmptyLogPool);
}

#[test]
fn result_is_identical_whatever_the_thread_count() {
    let g = grid(0.0, 20_000.0, 100.0, 200, 200);
    let analysts = [analyst("a", 1.0), analyst("b", 2.0)];
    let scenarios = [
        point("a1", "a", 1.0, 5_000.0, 6_000.0, 900.0),
        Scenario {
            id: "a2".into(),
            analyst: "a".into(),
            weight: 2.0,
            shape: ScenarioShape::Point {
                center: c(9_000.0, 12_000.0),
                sigma_major_m: 2_500.0,
                sigma_minor_m: 400.0,
                major_grid_bearing_deg: 57.0,
            },
        },
        Scenario {
            id: "b1".into(),
            analyst: "b".into(),
            weight: 1.0,
            shape: ScenarioShape::Route {
                waypoints: vec![
                    c(2_000.0, 2_000.0),
                    c(15_000.0, 9_000.0),
                    c(17_000.0, 18_000.0),
                ],
                cross_track_sigma_m: 700.0,
            },
        },
    ];
    let run = |threads: usize| {
        rayon::ThreadPoolBuilder::new()
            .num_threads(threads)
            .build()
            .unwrap()
            .install(|| combine(&analysts, &scenarios, &g, Pool::Linear).unwrap())
    };
    let one = run(1);
    let three = run(3);
    assert_eq!(one, three);
}

#[test]
fn leave_one_out_figures_match_recomputing_the_pool_without_the_analyst() {
    // Slow, obviously correct reference: pool the other analysts again and compare.
    let g = grid(0.0, 8_000.0, 100.0, 80, 80);
    let analysts = [analyst("a", 1.0), analyst("b", 2.0), analyst("c", 1.5)];
    let scenarios = [
        point("a1", "a", 1.0, 2_000.0, 2_000.0, 400.0),
        point("a2", "a", 2.0, 3_000.0, 6_500.0, 700.0),
        point("b1", "b", 1.0, 4_000.0, 4_000.0, 900.0),
        point("c1", "c", 1.0, 6_000.0, 3_000.0, 1_200.0),
        point("c2", "c", 1.0, 7_900.0, 7_900.0, 600.0),
    ];
    for pool in [Pool::Linear, Pool::Logarithmic] {
        let p = combine(&analysts, &scenarios, &g, pool).unwrap();
        for (i, who) in ["a", "b", "c"].iter().enumerate() {
            let others: Vec<Analyst> = analysts.iter().filter(|x| x.id != *who).cloned().collect();
            let theirs: Vec<Scenario> = scenarios
                .iter()
                .filter(|s| s.analyst != *who)
                .cloned()
                .collect();
            let q = combine(&others, &theirs, &g, pool).unwrap();
            let tv = 0.5
                * (p.cells
                    .iter()
                    .zip(q.cells.iter())
                    .map(|(x, y)| (x - y).abs())
                    .sum::<f64>()
                    + (p.outside_grid - q.outside_grid).abs()
                    + (p.rest_of_world - q.rest_of_world).abs());
            let centre = |m: &ndarray::Array2<f64>| {
                let mut acc = (0.0, 0.0, 0.0);
                for ((r, col), v) in m.indexed_iter() {
                    let c = g.cell_center(r, col);
                    acc = (acc.0 + v, acc.1 + v * c.x, acc.2 + v * c.y);
                }
                (acc.1 / acc.0, acc.2 / acc.0)
            };
            let (cp, cq) = (centre(&p.cells), centre(&q.cells));
            let shift = (cp.0 - cq.0).hypot(cp.1 - cq.1);
            let d = &p.diagnostics.analysts[i];
            assert!(
                (d.leave_one_out_shift - tv).abs() < 1e-10,
                "{pool:?} {who}: {} vs {tv}",
                d.leave_one_out_shift
            );
            assert!(
                (d.leave_one_out_centroid_shift_m - shift).abs() < 1e-6,
                "{pool:?} {who}: {} vs {shift}",
                d.leave_one_out_centroid_shift_m
            );
        }
    }
}
