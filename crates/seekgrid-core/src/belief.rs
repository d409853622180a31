//! The belief: where the object may be, as one probability distribution in three parts.
//!
//! * a grid part: the mass in each cell of a [`GridSpec`] (stationary scenarios),
//! * a particle part: weighted points (drifting scenarios), positions in the working frame,
//! * rest of world: the mass the planners place outside everything else.
//!
//! Invariant: all masses are finite and non-negative and the three parts add up to 1
//! (checked to 1e-9 on construction, then renormalised exactly).

use crate::error::CoreError;
use crate::grid::GridSpec;
use crate::mass::neumaier_sum;
use geo::Coord;
use ndarray::Array2;

/// Weighted points in the working frame, with a flag for points stranded ashore.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Particles {
    x_m: Vec<f64>,
    y_m: Vec<f64>,
    weight: Vec<f64>,
    stranded: Vec<bool>,
}

impl Particles {
    /// Particles from parallel arrays.
    ///
    /// # Errors
    /// [`CoreError::BadMass`] when the lengths differ, a weight is negative or not finite, or a
    /// coordinate is not finite.
    pub fn new(
        x_m: Vec<f64>,
        y_m: Vec<f64>,
        weight: Vec<f64>,
        stranded: Vec<bool>,
    ) -> Result<Self, CoreError> {
        let n = weight.len();
        if x_m.len() != n || y_m.len() != n || stranded.len() != n {
            return Err(CoreError::BadMass {
                what: format!(
                    "particle arrays differ in length (x {}, y {}, weight {}, stranded {})",
                    x_m.len(),
                    y_m.len(),
                    n,
                    stranded.len()
                ),
            });
        }
        if let Some(i) = weight.iter().position(|w| !(w.is_finite() && *w >= 0.0)) {
            return Err(CoreError::BadMass {
                what: format!("particle {i} has weight {}", weight[i]),
            });
        }
        if let Some(i) = (0..n).find(|&i| !(x_m[i].is_finite() && y_m[i].is_finite())) {
            return Err(CoreError::BadMass {
                what: format!("particle {i} is at a non-finite position"),
            });
        }
        Ok(Self {
            x_m,
            y_m,
            weight,
            stranded,
        })
    }

    /// Number of particles.
    #[must_use]
    pub fn len(&self) -> usize {
        self.weight.len()
    }

    /// Whether there are no particles.
    #[must_use]
    pub fn is_empty(&self) -> bool {
        self.weight.is_empty()
    }

    /// Eastings, metres.
    #[must_use]
    pub fn x_m(&self) -> &[f64] {
        &self.x_m
    }

    /// Northings, metres.
    #[must_use]
    pub fn y_m(&self) -> &[f64] {
        &self.y_m
    }

    /// Position of particle `i`.
    #[must_use]
    pub fn position(&self, i: usize) -> Coord<f64> {
        Coord {
            x: self.x_m[i],
            y: self.y_m[i],
        }
    }

    /// Weights (probability masses).
    #[must_use]
    pub fn weights(&self) -> &[f64] {
        &self.weight
    }

    /// Whether each particle is stranded ashore.
    #[must_use]
    pub fn stranded(&self) -> &[bool] {
        &self.stranded
    }

    /// Total weight.
    #[must_use]
    pub fn mass(&self) -> f64 {
        neumaier_sum(self.weight.iter().copied())
    }

    /// Moves the particles to new positions (the weights stay). Lengths must match.
    ///
    /// # Errors
    /// [`CoreError::BadMass`] when the lengths differ or a position is not finite.
    pub fn set_positions(
        &mut self,
        x_m: Vec<f64>,
        y_m: Vec<f64>,
        stranded: Vec<bool>,
    ) -> Result<(), CoreError> {
        let moved = Self::new(x_m, y_m, std::mem::take(&mut self.weight), stranded);
        match moved {
            Ok(p) => {
                *self = p;
                Ok(())
            }
            Err(e) => Err(e),
        }
    }
}

/// Where the object may be: grid part, particle part and rest of world, adding up to 1.
#[derive(Debug, Clone, PartialEq)]
pub struct Belief {
    grid: GridSpec,
    cells: Array2<f64>,
    particles: Particles,
    rest_of_world: f64,
}

/// Read-write access to the three parts of a belief, for operations that keep the total at 1
/// (see [`Belief::parts_mut`]).
pub struct BeliefParts<'a> {
    /// Cell masses, `[row, col]`, row 0 north.
    pub cells: &'a mut Array2<f64>,
    /// Particle weights.
    pub particle_weights: &'a mut [f64],
    /// Rest of world.
    pub rest_of_world: &'a mut f64,
}

impl Belief {
    /// Tolerance on the total mass accepted by [`Belief::new`] before exact renormalisation.
    pub const CONSTRUCTION_TOLERANCE: f64 = 1e-9;

    /// A belief from its parts. The total must be 1 within [`Belief::CONSTRUCTION_TOLERANCE`];
    /// it is then renormalised so that it is 1 to rounding.
    ///
    /// # Errors
    /// [`CoreError::ShapeMismatch`] when `cells` is not `rows x cols` of the grid;
    /// [`CoreError::BadMass`] for a negative or non-finite mass or a total other than 1.
    pub fn new(
        grid: GridSpec,
        cells: Array2<f64>,
        particles: Particles,
        rest_of_world: f64,
    ) -> Result<Self, CoreError> {
        if cells.dim() != (grid.rows(), grid.cols()) {
            return Err(CoreError::ShapeMismatch {
                rows: grid.rows(),
                cols: grid.cols(),
                got_rows: cells.nrows(),
                got_cols: cells.ncols(),
            });
        }
        if let Some(((r, c), v)) = cells
            .indexed_iter()
            .find(|(_, v)| !(v.is_finite() && **v >= 0.0))
        {
            return Err(CoreError::BadMass {
                what: format!("cell [{r}, {c}] has mass {v}"),
            });
        }
        if !(rest_of_world.is_finite() && rest_of_world >= 0.0) {
            return Err(CoreError::BadMass {
                what: format!("rest of world has mass {rest_of_world}"),
            });
        }
        let mut b = Self {
            grid,
            cells,
            particles,
            rest_of_world,
        };
        let total = b.total_mass();
        if (total - 1.0).abs() > Self::CONSTRUCTION_TOLERANCE {
            return Err(CoreError::BadMass {
                what: format!("the parts add up to {total}, not 1"),
            });
        }
        b.renormalise();
        Ok(b)
    }

    /// All mass in rest of world: nothing known about the grid yet.
    #[must_use]
    pub fn all_rest_of_world(grid: GridSpec) -> Self {
        Self {
            cells: Array2::zeros((grid.rows(), grid.cols())),
            grid,
            particles: Particles::default(),
            rest_of_world: 1.0,
        }
    }

    /// The grid.
    #[must_use]
    pub fn grid(&self) -> &GridSpec {
        &self.grid
    }

    /// Cell masses, `[row, col]`, row 0 north.
    #[must_use]
    pub fn cells(&self) -> &Array2<f64> {
        &self.cells
    }

    /// The particle part.
    #[must_use]
    pub fn particles(&self) -> &Particles {
        &self.particles
    }

    /// Moves the particles (weights stay), e.g. to a later time of a drift simulation.
    ///
    /// # Errors
    /// As [`Particles::set_positions`].
    pub fn move_particles(
        &mut self,
        x_m: Vec<f64>,
        y_m: Vec<f64>,
        stranded: Vec<bool>,
    ) -> Result<(), CoreError> {
        self.particles.set_positions(x_m, y_m, stranded)
    }

    /// Rest of world mass.
    #[must_use]
    pub fn rest_of_world(&self) -> f64 {
        self.rest_of_world
    }

    /// Mass in the grid part.
    #[must_use]
    pub fn grid_mass(&self) -> f64 {
        neumaier_sum(self.cells.iter().copied())
    }

    /// Mass in the particle part.
    #[must_use]
    pub fn particle_mass(&self) -> f64 {
        self.particles.mass()
    }

    /// Grid + particles + rest of world (compensated sum).
    #[must_use]
    pub fn total_mass(&self) -> f64 {
        let g = self.grid_mass();
        let p = self.particle_mass();
        neumaier_sum([g, p, self.rest_of_world])
    }

    /// Mutable access to the masses. Whoever changes them must leave the total at 1, for
    /// instance by calling [`Belief::renormalise`] afterwards; the Bayesian update of the
    /// search crate does that.
    pub fn parts_mut(&mut self) -> BeliefParts<'_> {
        BeliefParts {
            cells: &mut self.cells,
            particle_weights: &mut self.particles.weight,
            rest_of_world: &mut self.rest_of_world,
        }
    }

    /// Scales every mass so that the total is 1. Returns the total before scaling.
    ///
    /// A belief whose total is zero (every place searched with POD 1) cannot be renormalised;
    /// it is left as it is and 0 is returned, so callers must check.
    pub fn renormalise(&mut self) -> f64 {
        let total = self.total_mass();
        if total > 0.0 && total.is_finite() {
            let k = 1.0 / total;
            self.cells.mapv_inplace(|v| v * k);
            self.particles.weight.iter_mut().for_each(|w| *w *= k);
            self.rest_of_world *= k;
        }
        total
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::grid::DEFAULT_MAX_CELLS;
    use approx::assert_abs_diff_eq;
    use ndarray::array;

    fn grid2x2() -> GridSpec {
        GridSpec::new(0.0, 200.0, 100.0, 2, 2, DEFAULT_MAX_CELLS).unwrap()
    }

    #[test]
    fn parts_that_add_up_to_one_make_a_belief() {
        let p = Particles::new(vec![10.0], vec![10.0], vec![0.2], vec![false]).unwrap();
        let b = Belief::new(grid2x2(), array![[0.1, 0.2], [0.3, 0.1]], p, 0.1).unwrap();
        assert_abs_diff_eq!(b.total_mass(), 1.0, epsilon = 1e-15);
        assert_abs_diff_eq!(b.particle_mass(), 0.2, epsilon = 1e-15);
    }

    #[test]
    fn parts_that_do_not_add_up_are_refused() {
        let r = Belief::new(
            grid2x2(),
            array![[0.1, 0.2], [0.3, 0.1]],
            Particles::default(),
            0.1,
        );
        assert!(matches!(r, Err(CoreError::BadMass { .. })));
        let r = Belief::new(
            grid2x2(),
            array![[-0.1, 0.2], [0.3, 0.5]],
            Particles::default(),
            0.1,
        );
        assert!(matches!(r, Err(CoreError::BadMass { .. })));
        let r = Belief::new(grid2x2(), array![[0.5, 0.5]], Particles::default(), 0.0);
        assert!(matches!(r, Err(CoreError::ShapeMismatch { .. })));
        assert!(Particles::new(vec![0.0], vec![], vec![1.0], vec![false]).is_err());
    }

    #[test]
    fn renormalise_restores_unit_total_after_a_change() {
        let mut b = Belief::new(
            grid2x2(),
            array![[0.25, 0.25], [0.25, 0.25]],
            Particles::default(),
            0.0,
        )
        .unwrap();
        {
            let parts = b.parts_mut();
            parts.cells[[0, 0]] = 0.0;
        }
        let before = b.renormalise();
        assert_abs_diff_eq!(before, 0.75, epsilon = 1e-15);
        assert_abs_diff_eq!(b.total_mass(), 1.0, epsilon = 1e-15);
        assert_abs_diff_eq!(b.cells()[[1, 1]], 1.0 / 3.0, epsilon = 1e-15);
    }
}
