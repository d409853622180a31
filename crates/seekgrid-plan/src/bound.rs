//! The optimal-effort bound: Stone's optimal allocation of all units' effort.

use crate::error::PlanError;
use crate::options::PlanOptions;
use crate::unit::{UnitSpec, validate_units};
use geo::Coord;
use ndarray::Array2;
use seekgrid_core::{Belief, neumaier_sum};
use seekgrid_search::SearchError;

/// The upper bound on the POS of any plan with the units' total effort under exponential
/// detection.
#[derive(Clone, Debug, PartialEq)]
pub struct OptimalBound {
    /// POS of the optimal allocation, `Σ p_i (1 - e^(-z_i))` (probability, 0..=1).
    pub pos: f64,
    /// The Lagrange multiplier λ, probability per square metre: cells whose density is below
    /// λ get no effort.
    pub lambda: f64,
    /// Total effort allocated, square metres (Σ of every unit's [`UnitSpec::effort_m2`]).
    pub effort_m2: f64,
    /// Coverage `z_i` of each cell (dimensionless; effort in the cell = `z_i` x cell area),
    /// `[row, col]` as the belief's grid.
    pub coverage: Array2<f64>,
    /// Mass a search can reach: grid cells plus the particles inside the grid (probability).
    pub searchable_mass: f64,
    /// Mass of the particles outside the grid, counted as unsearchable like rest of world.
    pub particles_outside_mass: f64,
    /// Passes over the cell data of the root finding (from the search crate).
    pub passes_over_data: usize,
}

/// What a search can reach in a belief: cell masses with the particles inside the grid
/// binned into their cells, and the in-grid particles themselves.
pub(crate) struct Searchable {
    /// Grid part only.
    pub(crate) cells: Array2<f64>,
    /// Grid part plus binned in-grid particles.
    pub(crate) binned: Array2<f64>,
    /// Positions of the in-grid particles.
    pub(crate) points: Vec<Coord<f64>>,
    /// Their weights.
    pub(crate) weights: Vec<f64>,
    /// Their cells.
    pub(crate) point_cells: Vec<(usize, usize)>,
    pub(crate) mass: f64,
    pub(crate) particles_outside_mass: f64,
}

impl Searchable {
    pub(crate) fn new(belief: &Belief) -> Self {
        let grid = belief.grid();
        let cells = belief.cells().as_standard_layout().into_owned();
        let mut binned = cells.clone();
        let parts = belief.particles();
        let mut points = Vec::new();
        let mut weights = Vec::new();
        let mut point_cells = Vec::new();
        let mut outside = Vec::new();
        for (i, &w) in parts.weights().iter().enumerate() {
            let p = parts.position(i);
            match grid.locate(p) {
                Some(rc) => {
                    binned[rc] += w;
                    points.push(p);
                    weights.push(w);
                    point_cells.push(rc);
                }
                None => outside.push(w),
            }
        }
        let mass = neumaier_sum(binned.iter().copied());
        Self {
            cells,
            binned,
            points,
            weights,
            point_cells,
            mass,
            particles_outside_mass: neumaier_sum(outside),
        }
    }
}

/// Stone/Koopman optimal allocation of the total effort of all units over the belief: grid
/// cells plus particles binned into the cells that hold them; rest of world and particles
/// outside the grid are unsearchable.
///
/// The allocation is [`seekgrid_search::optimal_allocation`] (coverage
/// `z_i = max(0, ln(d_i / λ))`, Charnes & Cooper 1958; Stone, *Theory of Optimal Search*,
/// 1975, ch. II — from memory, see docs/references.md §4; for a circular normal target it
/// converges to `POS* = 1 - (1 + h) e^(-h)`, `h = √(E/(πσ²))`, checked in this crate's tests).
/// The effort is `E = Σ W x L` with `L` net of `options.turn_allowance` ([`UnitSpec::effort_m2`]).
///
/// The bound holds for exponential detection. Units with another law can do better than it
/// (an inverse-cube sweep at coverage 1 gives POD 0.79, not 0.63); with particles, the bound is
/// at cell resolution, and a plan whose area edge cuts a cell can reach more of the particles
/// in it than the binning assumes.
///
/// # Errors
/// [`PlanError::NoUnits`], [`PlanError::BadUnit`], [`PlanError::DuplicateUnit`],
/// [`PlanError::BadOption`]; [`PlanError::NothingToSearch`] when no mass lies in the grid.
pub fn optimal_bound(
    belief: &Belief,
    units: &[UnitSpec],
    options: &PlanOptions,
) -> Result<OptimalBound, PlanError> {
    validate_units(units)?;
    options.validate()?;
    let s = Searchable::new(belief);
    bound_of(belief, &s, units, options)
}

pub(crate) fn bound_of(
    belief: &Belief,
    s: &Searchable,
    units: &[UnitSpec],
    options: &PlanOptions,
) -> Result<OptimalBound, PlanError> {
    let nothing = PlanError::NothingToSearch {
        rest_of_world: belief.rest_of_world(),
        particles_outside: s.particles_outside_mass,
    };
    if s.mass.is_nan() || s.mass <= 0.0 {
        return Err(nothing);
    }
    let effort_m2 = neumaier_sum(units.iter().map(|u| u.effort_m2(options.turn_allowance)));
    let a = seekgrid_search::optimal_allocation(&s.binned, belief.grid().cell_area_m2(), effort_m2)
        .map_err(|e| match e {
            SearchError::NothingToSearch => nothing.clone(),
            other => PlanError::Search(other),
        })?;
    Ok(OptimalBound {
        pos: a.pos,
        lambda: a.lambda,
        effort_m2,
        coverage: a.coverage,
        searchable_mass: s.mass,
        particles_outside_mass: s.particles_outside_mass,
        passes_over_data: a.passes_over_data,
    })
}
