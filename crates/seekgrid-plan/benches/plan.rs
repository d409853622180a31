//! Benchmarks of seekgrid-plan on a 1 M-cell grid (1000 x 1000 cells of 100 m; invented belief:
//! three circular normals holding 0.8, rest of world 0.2):
//! * the optimal-effort bound of four units (reports passes over the data and the relative
//!   error of λ against an exact sort-based reference),
//! * a four-unit practical plan.
//!
//! Run: `cargo bench -p seekgrid-plan --bench plan`

#![allow(missing_docs)]

use criterion::{Criterion, criterion_group, criterion_main};
use ndarray::Array2;
use seekgrid_core::{Belief, DEFAULT_MAX_CELLS, GridSpec, Particles, neumaier_sum};
use seekgrid_plan::{PlanOptions, UnitKind, UnitSpec, optimal_bound, plan};
use seekgrid_search::DetectionLaw;
use std::hint::black_box;

fn phi(x: f64) -> f64 {
    0.5 * (1.0 + libm::erf(x / std::f64::consts::SQRT_2))
}

/// Invented belief: three circular normals (x, y, σ, weight) on 1000 x 1000 cells of 100 m.
fn belief() -> Belief {
    let n = 1000;
    let cell = 100.0;
    let grid = GridSpec::new(0.0, n as f64 * cell, cell, n, n, DEFAULT_MAX_CELLS).unwrap();
    let blobs = [
        (30_000.0, 60_000.0, 6_000.0, 0.4),
        (62_000.0, 45_000.0, 9_000.0, 0.3),
        (50_000.0, 70_000.0, 4_000.0, 0.1),
    ];
    let mut cells = Array2::zeros((n, n));
    for &(x0, y0, s, w) in &blobs {
        let ex: Vec<f64> = (0..=n).map(|i| phi((i as f64 * cell - x0) / s)).collect();
        let ey: Vec<f64> = (0..=n)
            .map(|i| phi((n as f64 * cell - i as f64 * cell - y0) / s))
            .collect();
        for r in 0..n {
            for c in 0..n {
                cells[[r, c]] += w * (ex[c + 1] - ex[c]) * (ey[r] - ey[r + 1]);
            }
        }
    }
    let tot = cells.sum();
    Belief::new(grid, cells, Particles::default(), 1.0 - tot).unwrap()
}

/// Invented units.
fn units() -> Vec<UnitSpec> {
    let mk = |id: &str, v: f64, h: f64, w: f64, kind| UnitSpec {
        id: id.into(),
        speed_mps: v,
        hours_on_scene: h,
        sweep_width_m: w,
        track_spacing_min_m: None,
        law: DetectionLaw::Exponential,
        kind,
    };
    vec![
        mk("plane", 65.0, 3.0, 3000.0, UnitKind::Aircraft),
        mk("helo", 45.0, 2.0, 2000.0, UnitKind::Aircraft),
        mk("boat-1", 10.0, 6.0, 1000.0, UnitKind::Vessel),
        mk("boat-2", 7.0, 8.0, 800.0, UnitKind::Vessel),
    ]
}

/// Exact λ by sorting: with log densities l_1 ≥ l_2 ≥ ..., the active set is the first k
/// cells where t_k = (Σ_{i≤k} l_i - E/a) / k lies in [l_{k+1}, l_k).
fn reference_lambda(cells: &Array2<f64>, cell_area: f64, effort: f64) -> f64 {
    let mut l: Vec<f64> = cells
        .iter()
        .filter(|m| **m > 0.0)
        .map(|m| (m / cell_area).ln())
        .collect();
    l.sort_by(|a, b| b.total_cmp(a));
    let e = effort / cell_area;
    let mut prefix = Vec::with_capacity(l.len());
    let mut run = 0.0;
    for v in &l {
        run += v;
        prefix.push(run);
    }
    for k in 1..=l.len() {
        let t = (neumaier_sum(l[..k].iter().copied()) - e) / k as f64;
        let next = if k < l.len() { l[k] } else { f64::NEG_INFINITY };
        if t >= next && t < l[k - 1] {
            return t.exp();
        }
        let _ = prefix[k - 1];
    }
    f64::NAN
}

fn benches(c: &mut Criterion) {
    let b = belief();
    let us = units();
    let o = PlanOptions::default();
    let ob = optimal_bound(&b, &us, &o).unwrap();
    let lam = reference_lambda(b.cells(), b.grid().cell_area_m2(), ob.effort_m2);
    println!(
        "optimal bound on 1 M cells: POS {:.6}, λ {:.6e}, passes over data {}, relative error of λ {:.2e}",
        ob.pos,
        ob.lambda,
        ob.passes_over_data,
        (ob.lambda - lam).abs() / lam
    );
    let p = plan(&b, &us, &o).unwrap();
    println!(
        "four-unit plan on 1 M cells: POS {:.6}, bound {:.6}, efficiency {:.4}",
        p.pos_plan, p.pos_optimal_bound, p.efficiency
    );
    let mut g = c.benchmark_group("plan_1m_cells");
    g.sample_size(10);
    g.bench_function("optimal_bound_4_units", |bch| {
        bch.iter(|| optimal_bound(black_box(&b), black_box(&us), &o).unwrap())
    });
    g.measurement_time(std::time::Duration::from_secs(40));
    g.bench_function("plan_4_units", |bch| {
        bch.iter(|| plan(black_box(&b), black_box(&us), &o).unwrap())
    });
    g.finish();
}

criterion_group!(plan_benches, benches);
criterion_main!(plan_benches);
