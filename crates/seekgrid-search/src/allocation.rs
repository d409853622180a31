//! Optimal allocation of search effort for exponential detection.
//!
//! Maximise `Σ p_i (1 - exp(-z_i))` subject to `Σ a_i z_i = E`, `z_i ≥ 0` (coverage `z_i` of
//! cell `i`, area `a_i`, effort `E` = sweep width x track length). The optimum is
//! `z_i = max(0, ln(d_i / λ))` with density `d_i = p_i / a_i` and `λ` such that the effort adds
//! up (Charnes & Cooper 1958, Mgmt Sci 5:44-50; Stone, *Theory of Optimal Search*, 1975, ch. II:
//! from memory, see docs/references.md §4; the conditions are checked against SciPy in the tests).
//!
//! # Root finding
//! With `t = ln λ` the effort `G(t) = Σ a_i max(0, ln d_i - t)` is convex, decreasing and
//! piecewise linear. Newton's method started left of the root (all cells with mass active)
//! never overshoots on such a function, and each step is the closed-form solution
//! `t = (Σ_active a_i ln d_i - E) / Σ_active a_i` for the current set of active cells. It stops
//! when the active set no longer changes: `λ` is then exact to rounding (far below the 1e-9
//! relative asked). Each step is one pass over the data; a bisection fallback caps the count.

use crate::error::SearchError;
use crate::sum::Compensated;
use ndarray::Array2;
use rayon::prelude::*;
use seekgrid_core::neumaier_sum;

/// Cells per parallel work unit (fixed, so sums do not depend on the thread count).
const CHUNK: usize = 16_384;
/// Newton steps before the bisection fallback.
const MAX_NEWTON_STEPS: usize = 100;
/// Tolerance on the total mass above 1.
const MASS_TOLERANCE: f64 = 1e-9;

/// The optimal allocation of effort over the cells of a grid.
#[derive(Clone, Debug, PartialEq)]
pub struct OptimalAllocation {
    /// The Lagrange multiplier λ: the posterior-scaled density below which cells get no
    /// effort, probability per square metre.
    pub lambda: f64,
    /// Coverage `z_i` of each cell (dimensionless; effort in the cell = `z_i` x cell area).
    pub coverage: Array2<f64>,
    /// Probability of success of the optimal search, `Σ p_i (1 - e^(-z_i))`: an upper bound for
    /// any plan of the same effort under exponential detection.
    pub pos: f64,
    /// How many times the cell data were read (one preparation pass, one per root-finding
    /// step, one to write the coverage).
    pub passes_over_data: usize,
}

/// The optimal allocation over cells of unequal areas (for segments or mixed grids).
#[derive(Clone, Debug, PartialEq)]
pub struct CellAllocation {
    /// The Lagrange multiplier λ, probability per square metre.
    pub lambda: f64,
    /// Coverage `z_i` of each cell, in the order given.
    pub coverage: Vec<f64>,
    /// Probability of success, `Σ p_i (1 - e^(-z_i))`.
    pub pos: f64,
    /// Passes over the data, as in [`OptimalAllocation`].
    pub passes_over_data: usize,
}

/// Optimal effort allocation for exponential detection on a grid of equal cells.
///
/// `cells` holds cell masses (probabilities; their total may be below 1, the remainder being
/// rest of world or particles that this search cannot reach), `cell_area_m2` the area of every
/// cell and `effort_m2` the total effort (sweep width x track length, m²).
///
/// # Errors
/// [`SearchError::BadMass`] for a negative or non-finite mass or a total above 1;
/// [`SearchError::BadCellArea`]; [`SearchError::BadEffort`] for a negative or non-finite
/// effort; [`SearchError::NothingToSearch`] when no cell holds mass.
pub fn optimal_allocation(
    cells: &Array2<f64>,
    cell_area_m2: f64,
    effort_m2: f64,
) -> Result<OptimalAllocation, SearchError> {
    if !(cell_area_m2.is_finite() && cell_area_m2 > 0.0) {
        return Err(SearchError::BadCellArea {
            index: 0,
            area_m2: cell_area_m2,
        });
    }
    let standard = cells.as_standard_layout();
    let masses = standard.as_slice().expect("standard layout");
    let solved = solve(masses, &Areas::Uniform(cell_area_m2), effort_m2)?;
    let coverage =
        Array2::from_shape_vec(cells.dim(), solved.coverage).expect("one coverage per cell");
    Ok(OptimalAllocation {
        lambda: solved.lambda,
        coverage,
        pos: solved.pos,
        passes_over_data: solved.passes_over_data,
    })
}

/// Optimal effort allocation for exponential detection over cells of areas `areas_m2`.
///
/// # Errors
/// As [`optimal_allocation`]; [`SearchError::BadMass`] when the two lists differ in length.
pub fn optimal_allocation_per_cell(
    masses: &[f64],
    areas_m2: &[f64],
    effort_m2: f64,
) -> Result<CellAllocation, SearchError> {
    if masses.len() != areas_m2.len() {
        return Err(SearchError::BadMass {
            what: format!(
                "{} masses but {} areas; give one area per cell",
                masses.len(),
                areas_m2.len()
            ),
        });
    }
    if let Some((index, &area_m2)) = areas_m2
        .iter()
        .enumerate()
        .find(|(_, a)| !(a.is_finite() && **a > 0.0))
    {
        return Err(SearchError::BadCellArea { index, area_m2 });
    }
    solve(masses, &Areas::PerCell(areas_m2), effort_m2)
}

enum Areas<'a> {
    Uniform(f64),
    PerCell(&'a [f64]),
}

impl Areas<'_> {
    #[inline(always)]
    fn get(&self, i: usize) -> f64 {
        match self {
            Self::Uniform(a) => *a,
            Self::PerCell(a) => a[i],
        }
    }
}

#[derive(Clone, Copy, Default)]
struct Sums {
    area: Compensated,
    area_log: Compensated,
    mass: Compensated,
    count: usize,
    max_log: f64,
    bad: Option<usize>,
}

fn combine(parts: &[Sums]) -> (f64, f64, f64, usize, f64, Option<usize>) {
    (
        neumaier_sum(parts.iter().map(|s| s.area.value())),
        neumaier_sum(parts.iter().map(|s| s.area_log.value())),
        neumaier_sum(parts.iter().map(|s| s.mass.value())),
        parts.iter().map(|s| s.count).sum(),
        parts
            .iter()
            .map(|s| s.max_log)
            .fold(f64::NEG_INFINITY, f64::max),
        parts.iter().find_map(|s| s.bad),
    )
}

fn solve(masses: &[f64], areas: &Areas<'_>, effort_m2: f64) -> Result<CellAllocation, SearchError> {
    if !(effort_m2.is_finite() && effort_m2 >= 0.0) {
        return Err(SearchError::BadEffort { effort_m2 });
    }
    let n = masses.len();
    // Pass 1: validate, log densities, sums over all cells with mass.
    let mut log_density = vec![f64::NEG_INFINITY; n];
    let parts: Vec<Sums> = log_density
        .par_chunks_mut(CHUNK)
        .zip(masses.par_chunks(CHUNK))
        .enumerate()
        .map(|(k, (ld, p))| {
            let mut s = Sums {
                max_log: f64::NEG_INFINITY,
                ..Sums::default()
            };
            for (j, (l, &m)) in ld.iter_mut().zip(p).enumerate() {
                let i = k * CHUNK + j;
                if !(m.is_finite() && m >= 0.0) {
                    s.bad = s.bad.or(Some(i));
                    continue;
                }
                if m > 0.0 {
                    let a = areas.get(i);
                    let v = (m / a).ln();
                    *l = v;
                    s.area.add(a);
                    s.area_log.add(a * v);
                    s.mass.add(m);
                    s.count += 1;
                    s.max_log = s.max_log.max(v);
                }
            }
            s
        })
        .collect();
    let mut passes = 1;
    let (area, area_log, mass, mut count, max_log, bad) = combine(&parts);
    if let Some(i) = bad {
        return Err(SearchError::BadMass {
            what: format!("cell {i} has mass {}", masses[i]),
        });
    }
    if mass > 1.0 + MASS_TOLERANCE {
        return Err(SearchError::BadMass {
            what: format!("the cells hold {mass}, more than 1; give probabilities, not counts"),
        });
    }
    if count == 0 {
        return Err(SearchError::NothingToSearch);
    }

    let t = if effort_m2 == 0.0 {
        max_log
    } else {
        let mut t = (area_log - effort_m2) / area;
        let mut steps = 0;
        loop {
            let (a2, al2, c2) = active_sums(&log_density, areas, t);
            passes += 1;
            if c2 == count || c2 == 0 {
                break;
            }
            let t_next = (al2 - effort_m2) / a2;
            count = c2;
            // Rounding can only stall the monotone iteration, never reverse it materially.
            if t_next <= t {
                break;
            }
            t = t_next;
            steps += 1;
            if steps >= MAX_NEWTON_STEPS {
                t = bisect(&log_density, areas, effort_m2, t, max_log, &mut passes);
                break;
            }
        }
        t
    };

    // Final pass: coverage and POS.
    let mut coverage = vec![0.0; n];
    let pos_parts: Vec<f64> = coverage
        .par_chunks_mut(CHUNK)
        .zip(log_density.par_chunks(CHUNK))
        .zip(masses.par_chunks(CHUNK))
        .map(|((z, ld), p)| {
            let mut s = Compensated::default();
            for ((z, &l), &m) in z.iter_mut().zip(ld).zip(p) {
                if l > t {
                    let c = l - t;
                    *z = c;
                    s.add(-m * (-c).exp_m1());
                }
            }
            s.value()
        })
        .collect();
    passes += 1;
    Ok(CellAllocation {
        lambda: t.exp(),
        coverage,
        pos: neumaier_sum(pos_parts),
        passes_over_data: passes,
    })
}

/// Σ a, Σ a·ln d and the count over cells with ln d > t.
fn active_sums(log_density: &[f64], areas: &Areas<'_>, t: f64) -> (f64, f64, usize) {
    let parts: Vec<(Compensated, Compensated, usize)> = log_density
        .par_chunks(CHUNK)
        .enumerate()
        .map(|(k, ld)| {
            let mut a_sum = Compensated::default();
            let mut al_sum = Compensated::default();
            let mut c = 0;
            for (j, &l) in ld.iter().enumerate() {
                if l > t {
                    let a = areas.get(k * CHUNK + j);
                    a_sum.add(a);
                    al_sum.add(a * l);
                    c += 1;
                }
            }
            (a_sum, al_sum, c)
        })
        .collect();
    (
        neumaier_sum(parts.iter().map(|p| p.0.value())),
        neumaier_sum(parts.iter().map(|p| p.1.value())),
        parts.iter().map(|p| p.2).sum(),
    )
}

/// Bisection on t in [lo, hi] until the bracket is below 1e-12 (relative 1e-12 in λ).
fn bisect(
    log_density: &[f64],
    areas: &Areas<'_>,
    effort_m2: f64,
    mut lo: f64,
    mut hi: f64,
    passes: &mut usize,
) -> f64 {
    while hi - lo > 1e-12 {
        let mid = 0.5 * (lo + hi);
        let (a, al, _) = active_sums(log_density, areas, mid);
        *passes += 1;
        let g = al - mid * a;
        if g > effort_m2 {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    0.5 * (lo + hi)
}
