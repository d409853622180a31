//! Pooling the analysts' maps into the prior, and the diagnostics a planner reads before
//! trusting the crowd.

use crate::error::{PriorError, ShapeError};
use crate::mass::{SparseMass, checked_sparse_mass};
use crate::model::{Analyst, Pool, Scenario};
use ndarray::parallel::prelude::*;
use ndarray::{Array2, Axis};
use seekgrid_core::{GridSpec, neumaier_sum};

/// The pooled prior: cell probabilities plus the two explicit off-grid bins.
/// `cells + outside_grid + rest_of_world == 1` to 1e-12.
#[derive(Debug, Clone, PartialEq)]
pub struct Prior {
    /// Probability of each cell, `[row, col]`, row 0 at the north edge.
    pub cells: Array2<f64>,
    /// Rest of world the scenarios declare (segments' 1 - Σ POA, rings beyond the last
    /// quantile), pooled.
    pub rest_of_world: f64,
    /// Probability of scenarios' in-world mass that fell outside the grid, pooled.
    pub outside_grid: f64,
    /// Each analyst's normalised credibility weight w_a, in input order.
    pub analyst_weights: Vec<(String, f64)>,
    /// Each scenario's effective weight in the pool w_a · w_as (w_as normalised over the
    /// analyst's scenarios), in input order.
    pub scenario_weights: Vec<(String, f64)>,
    /// Agreement diagnostics.
    pub diagnostics: Diagnostics,
}

/// How the analysts agree.
#[derive(Debug, Clone, PartialEq)]
pub struct Diagnostics {
    /// One entry per analyst, in input order.
    pub analysts: Vec<AnalystDiagnostics>,
    /// Effective number of independent opinions,
    /// N_eff = 1 / Σ_a Σ_b w_a w_b BC(P_a, P_b), with BC(p, q) = Σ_bins sqrt(p q) the
    /// Bhattacharyya coefficient (A. Bhattacharyya, Bull. Calcutta Math. Soc. 35:99-109, 1943)
    /// over cells, outside grid and rest of world. It is 1 when all analysts draw the same map
    /// and 1 / Σ w_a² (the inverse Simpson index of the weights, Simpson 1949, Nature 163:688)
    /// when their maps are disjoint; in between it counts how many distinct opinions the
    /// weighted crowd really holds.
    pub effective_opinions: f64,
}

/// One analyst's place in the crowd.
#[derive(Debug, Clone, PartialEq)]
pub struct AnalystDiagnostics {
    /// Analyst id.
    pub id: String,
    /// The analyst's share of the pool: the normalised credibility weight w_a.
    pub share: f64,
    /// Jensen-Shannon divergence (J. Lin, IEEE Trans. Inf. Theory 37:145-151, 1991) of this
    /// analyst's map from the pooled map, base 2 (0 = same map, 1 = disjoint), over cells,
    /// outside grid and rest of world.
    pub js_divergence_bits: f64,
    /// Total-variation distance ½ Σ |P - P_without| between the pool with and without this
    /// analyst (the others' weights renormalised), over all bins; 0 with a single analyst; 1
    /// when the logarithmic pool of the others would be empty.
    pub leave_one_out_shift: f64,
    /// Distance, metres, between the centroids of the in-grid mass of the pool with and
    /// without this analyst; 0 with a single analyst or when either pool has no mass in the
    /// grid.
    pub leave_one_out_centroid_shift_m: f64,
}

/// Probabilities over the bins: cells, outside grid, rest of world.
#[derive(Debug, Clone)]
struct Bins {
    cells: Array2<f64>,
    outside: f64,
    row: f64,
}

/// Pools the analysts' scenarios into a prior on `grid`.
///
/// Weights: w_a = analyst weight / Σ analyst weights; w_as = scenario weight / Σ of that
/// analyst's scenario weights. Each analyst's map is P_a = Σ_s w_as P_as. [`Pool::Linear`]:
/// P = Σ_a w_a P_a. [`Pool::Logarithmic`]: P ∝ Π_a P_a^{w_a} over the bins (cells, outside grid,
/// rest of world), normalised; zero-forcing (any analyst's 0 is the pool's 0). Scenarios are
/// integrated in parallel; every sum runs in a fixed order, so the result does not depend on
/// the thread count.
///
/// # Errors
/// [`PriorError::NoAnalysts`], [`PriorError::NoScenarios`], duplicate analyst or scenario ids,
/// non-positive or non-finite weights, a scenario naming an unknown analyst, an analyst without
/// scenarios, [`PriorError::InScenario`] for an invalid shape (naming scenario and analyst),
/// and [`PriorError::EmptyLogPool`] when the logarithmic pool has no bin left.
pub fn combine(
    analysts: &[Analyst],
    scenarios: &[Scenario],
    grid: &GridSpec,
    pool: Pool,
) -> Result<Prior, PriorError> {
    let (owner, w_a, w_as) = weights(analysts, scenarios)?;

    let masses: Vec<SparseMass> = scenarios
        .par_iter()
        .map(|s| {
            checked_sparse_mass(&s.shape, grid).map_err(|e: ShapeError| PriorError::InScenario {
                scenario: s.id.clone(),
                analyst: s.analyst.clone(),
                source: e,
            })
        })
        .collect::<Result<_, _>>()?;

    let maps: Vec<Bins> = (0..analysts.len())
        .map(|a| {
            let mine: Vec<usize> = (0..scenarios.len()).filter(|&s| owner[s] == a).collect();
            analyst_map(grid, &mine, &masses, &w_as)
        })
        .collect();
    let all: Vec<usize> = (0..analysts.len()).collect();
    let pooled = pool_bins(&maps, &w_a, &all, pool)?;

    let pooled_moments = moments(&pooled.cells, grid);
    let analyst_diags: Vec<AnalystDiagnostics> = analysts
        .iter()
        .enumerate()
        .map(|(a, an)| {
            let (js, tv_to_pool) = js_and_tv(&maps[a], &pooled);
            let (tv, shift) = if analysts.len() == 1 {
                (0.0, 0.0)
            } else if pool == Pool::Linear {
                // Linear pool: P_without = (P - w_a P_a) / (1 - w_a), so
                // TV(P, P_without) = w_a / (1 - w_a) TV(P_a, P), and the centroid without a
                // follows from the in-grid mass moments of P and P_a.
                let wa = w_a[a];
                let tv = (wa / (1.0 - wa) * tv_to_pool).clamp(0.0, 1.0);
                let own = moments(&maps[a].cells, grid);
                let without = Moments {
                    mass: pooled_moments.mass - wa * own.mass,
                    x: pooled_moments.x - wa * own.x,
                    y: pooled_moments.y - wa * own.y,
                };
                (tv, centroid_shift(&pooled_moments, &without))
            } else {
                let others: Vec<usize> = (0..analysts.len()).filter(|&b| b != a).collect();
                match pool_bins(&maps, &w_a, &others, pool) {
                    Ok(without) => (
                        total_variation(&pooled, &without),
                        centroid_shift(&pooled_moments, &moments(&without.cells, grid)),
                    ),
                    // Without this analyst the logarithmic pool would be empty: the pool
                    // changes completely.
                    Err(_) => (1.0, 0.0),
                }
            };
            AnalystDiagnostics {
                id: an.id.clone(),
                share: w_a[a],
                js_divergence_bits: js,
                leave_one_out_shift: tv,
                leave_one_out_centroid_shift_m: shift,
            }
        })
        .collect();
    let effective_opinions = effective_opinions(&maps, &w_a);

    Ok(Prior {
        cells: pooled.cells,
        rest_of_world: pooled.row,
        outside_grid: pooled.outside,
        analyst_weights: analysts
            .iter()
            .zip(&w_a)
            .map(|(a, w)| (a.id.clone(), *w))
            .collect(),
        scenario_weights: scenarios
            .iter()
            .zip(&owner)
            .zip(&w_as)
            .map(|((s, &a), w)| (s.id.clone(), w_a[a] * w))
            .collect(),
        diagnostics: Diagnostics {
            analysts: analyst_diags,
            effective_opinions,
        },
    })
}

/// Checks ids and weights; returns the analyst index of each scenario.
/// The owner of each scenario (analyst index), the normalised analyst weights w_a and the
/// scenario weights w_as normalised within each analyst.
type Weights = (Vec<usize>, Vec<f64>, Vec<f64>);

/// See [`Weights`].
fn weights(analysts: &[Analyst], scenarios: &[Scenario]) -> Result<Weights, PriorError> {
    let owner = check_inputs(analysts, scenarios)?;
    let total_a = neumaier_sum(analysts.iter().map(|a| a.weight));
    let w_a: Vec<f64> = analysts.iter().map(|a| a.weight / total_a).collect();
    let mut total_s = vec![Vec::new(); analysts.len()];
    for (s, &a) in scenarios.iter().zip(&owner) {
        total_s[a].push(s.weight);
    }
    let total_s: Vec<f64> = total_s.into_iter().map(neumaier_sum).collect();
    let w_as: Vec<f64> = scenarios
        .iter()
        .zip(&owner)
        .map(|(s, &a)| s.weight / total_s[a])
        .collect();
    Ok((owner, w_a, w_as))
}

/// Each scenario's weight in the linear pool, w_a · w_as, in scenario order.
pub(crate) fn scenario_weights(
    analysts: &[Analyst],
    scenarios: &[Scenario],
) -> Result<Vec<f64>, PriorError> {
    let (owner, w_a, w_as) = weights(analysts, scenarios)?;
    Ok(owner.iter().zip(&w_as).map(|(&a, w)| w_a[a] * w).collect())
}

fn check_inputs(analysts: &[Analyst], scenarios: &[Scenario]) -> Result<Vec<usize>, PriorError> {
    if analysts.is_empty() {
        return Err(PriorError::NoAnalysts);
    }
    if scenarios.is_empty() {
        return Err(PriorError::NoScenarios);
    }
    for (i, a) in analysts.iter().enumerate() {
        if analysts[..i].iter().any(|b| b.id == a.id) {
            return Err(PriorError::DuplicateAnalyst {
                analyst: a.id.clone(),
            });
        }
        if !(a.weight.is_finite() && a.weight > 0.0) {
            return Err(PriorError::BadAnalystWeight {
                analyst: a.id.clone(),
                weight: a.weight,
            });
        }
    }
    let mut owner = Vec::with_capacity(scenarios.len());
    for (i, s) in scenarios.iter().enumerate() {
        if scenarios[..i].iter().any(|t| t.id == s.id) {
            return Err(PriorError::DuplicateScenario {
                scenario: s.id.clone(),
            });
        }
        let Some(a) = analysts.iter().position(|a| a.id == s.analyst) else {
            return Err(PriorError::UnknownAnalyst {
                scenario: s.id.clone(),
                analyst: s.analyst.clone(),
            });
        };
        if !(s.weight.is_finite() && s.weight > 0.0) {
            return Err(PriorError::BadScenarioWeight {
                scenario: s.id.clone(),
                weight: s.weight,
            });
        }
        owner.push(a);
    }
    if let Some(a) = (0..analysts.len()).find(|a| !owner.contains(a)) {
        return Err(PriorError::AnalystWithoutScenarios {
            analyst: analysts[a].id.clone(),
        });
    }
    Ok(owner)
}

/// P_a = Σ_s w_as P_as over the given scenarios, rows in parallel, scenarios in input order.
fn analyst_map(grid: &GridSpec, mine: &[usize], masses: &[SparseMass], w_as: &[f64]) -> Bins {
    let mut cells = Array2::zeros((grid.rows(), grid.cols()));
    cells
        .axis_iter_mut(Axis(0))
        .into_par_iter()
        .enumerate()
        .for_each(|(r, mut row)| {
            let out = row.as_slice_mut().expect("rows are contiguous");
            for &s in mine {
                if let Some(w) = &masses[s].window {
                    w.add_row_to(r, out, w_as[s]);
                }
            }
        });
    Bins {
        cells,
        outside: neumaier_sum(mine.iter().map(|&s| w_as[s] * masses[s].outside_grid)),
        row: neumaier_sum(mine.iter().map(|&s| w_as[s] * masses[s].rest_of_world)),
    }
}

/// Compensated sum of an array, rows in parallel, row sums combined in row order.
fn array_sum(a: &Array2<f64>) -> f64 {
    let rows: Vec<f64> = a
        .axis_iter(Axis(0))
        .into_par_iter()
        .map(|r| neumaier_sum(r.iter().copied()))
        .collect();
    neumaier_sum(rows)
}

/// Pools the maps `which` with weights `w` renormalised over them.
fn pool_bins(maps: &[Bins], w: &[f64], which: &[usize], pool: Pool) -> Result<Bins, PriorError> {
    let total = neumaier_sum(which.iter().map(|&a| w[a]));
    let ws: Vec<(usize, f64)> = which.iter().map(|&a| (a, w[a] / total)).collect();
    let shape = maps[which[0]].cells.dim();
    let mut cells = Array2::zeros(shape);
    match pool {
        Pool::Linear => {
            cells
                .axis_iter_mut(Axis(0))
                .into_par_iter()
                .enumerate()
                .for_each(|(r, mut row)| {
                    for &(a, wa) in &ws {
                        row.zip_mut_with(&maps[a].cells.row(r), |t, v| *t += wa * v);
                    }
                });
            Ok(Bins {
                cells,
                outside: neumaier_sum(ws.iter().map(|&(a, wa)| wa * maps[a].outside)),
                row: neumaier_sum(ws.iter().map(|&(a, wa)| wa * maps[a].row)),
            })
        }
        Pool::Logarithmic => {
            let log_pool = |values: &mut dyn Iterator<Item = (f64, f64)>| -> f64 {
                let mut acc = 0.0;
                for (wa, p) in values {
                    if p <= 0.0 {
                        return 0.0;
                    }
                    acc += wa * p.ln();
                }
                acc.exp()
            };
            cells
                .axis_iter_mut(Axis(0))
                .into_par_iter()
                .enumerate()
                .for_each(|(r, mut row)| {
                    for (c, t) in row.iter_mut().enumerate() {
                        *t = log_pool(&mut ws.iter().map(|&(a, wa)| (wa, maps[a].cells[[r, c]])));
                    }
                });
            let outside = log_pool(&mut ws.iter().map(|&(a, wa)| (wa, maps[a].outside)));
            let row = log_pool(&mut ws.iter().map(|&(a, wa)| (wa, maps[a].row)));
            let z = neumaier_sum([array_sum(&cells), outside, row]);
            if !(z > 0.0 && z.is_finite()) {
                return Err(PriorError::EmptyLogPool);
            }
            cells.par_mapv_inplace(|v| v / z);
            Ok(Bins {
                cells,
                outside: outside / z,
                row: row / z,
            })
        }
    }
}

/// Σ over bins of f(p, q), rows in parallel, combined in row order.
fn bin_sum(p: &Bins, q: &Bins, f: impl Fn(f64, f64) -> f64 + Sync) -> f64 {
    let rows: Vec<f64> = p
        .cells
        .axis_iter(Axis(0))
        .into_par_iter()
        .zip(q.cells.axis_iter(Axis(0)))
        .map(|(a, b)| neumaier_sum(a.iter().zip(b.iter()).map(|(&x, &y)| f(x, y))))
        .collect();
    neumaier_sum([neumaier_sum(rows), f(p.outside, q.outside), f(p.row, q.row)])
}

/// Jensen-Shannon divergence (bits) and total-variation distance of two maps, in one pass.
fn js_and_tv(p: &Bins, q: &Bins) -> (f64, f64) {
    let term = |x: f64, y: f64| {
        let m = 0.5 * (x + y);
        let half = |a: f64| if a > 0.0 { a * (a / m).log2() } else { 0.0 };
        (0.5 * (half(x) + half(y)), 0.5 * (x - y).abs())
    };
    let rows: Vec<(f64, f64)> = p
        .cells
        .axis_iter(Axis(0))
        .into_par_iter()
        .zip(q.cells.axis_iter(Axis(0)))
        .map(|(a, b)| {
            let parts: Vec<(f64, f64)> =
                a.iter().zip(b.iter()).map(|(&x, &y)| term(x, y)).collect();
            (
                neumaier_sum(parts.iter().map(|t| t.0)),
                neumaier_sum(parts.iter().map(|t| t.1)),
            )
        })
        .collect();
    let (o, r) = (term(p.outside, q.outside), term(p.row, q.row));
    let js = neumaier_sum(rows.iter().map(|t| t.0).chain([o.0, r.0]));
    let tv = neumaier_sum(rows.iter().map(|t| t.1).chain([o.1, r.1]));
    (js.clamp(0.0, 1.0), tv.clamp(0.0, 1.0))
}

fn total_variation(p: &Bins, q: &Bins) -> f64 {
    (0.5 * bin_sum(p, q, |x, y| (x - y).abs())).clamp(0.0, 1.0)
}

/// 1 / Σ_a Σ_b w_a w_b BC(P_a, P_b) = 1 / Σ_bins (Σ_a w_a sqrt(P_a))².
fn effective_opinions(maps: &[Bins], w: &[f64]) -> f64 {
    let rows = maps[0].cells.nrows();
    let row_sums: Vec<f64> = (0..rows)
        .into_par_iter()
        .map(|r| {
            let cols = maps[0].cells.ncols();
            neumaier_sum((0..cols).map(|c| {
                let s: f64 = maps
                    .iter()
                    .zip(w)
                    .map(|(m, wa)| wa * m.cells[[r, c]].sqrt())
                    .sum();
                s * s
            }))
        })
        .collect();
    let bin = |f: &dyn Fn(&Bins) -> f64| {
        let s: f64 = maps.iter().zip(w).map(|(m, wa)| wa * f(m).sqrt()).sum();
        s * s
    };
    let total = neumaier_sum([
        neumaier_sum(row_sums),
        bin(&|m: &Bins| m.outside),
        bin(&|m: &Bins| m.row),
    ]);
    if total > 0.0 { 1.0 / total } else { 0.0 }
}

/// In-grid mass and its first moments (Σ m x, Σ m y, metres from the grid's north-west
/// corner, which keeps the leave-one-out differences precise).
struct Moments {
    mass: f64,
    x: f64,
    y: f64,
}

fn moments(cells: &Array2<f64>, grid: &GridSpec) -> Moments {
    let parts: Vec<(f64, f64, f64)> = cells
        .axis_iter(Axis(0))
        .into_par_iter()
        .enumerate()
        .map(|(r, row)| {
            let m = neumaier_sum(row.iter().copied());
            let mx = neumaier_sum(
                row.iter()
                    .enumerate()
                    .map(|(c, v)| v * (grid.cell_center(r, c).x - grid.west_m())),
            );
            let y = grid.cell_center(r, 0).y - grid.north_m();
            (m, mx, m * y)
        })
        .collect();
    Moments {
        mass: neumaier_sum(parts.iter().map(|p| p.0)),
        x: neumaier_sum(parts.iter().map(|p| p.1)),
        y: neumaier_sum(parts.iter().map(|p| p.2)),
    }
}

/// Distance between the centroids of two in-grid masses; 0 when either has (almost) none.
fn centroid_shift(a: &Moments, b: &Moments) -> f64 {
    if a.mass <= 1e-15 || b.mass <= 1e-15 {
        return 0.0;
    }
    (a.x / a.mass - b.x / b.mass).hypot(a.y / a.mass - b.y / b.mass)
}
