//! How far down the list of cells, ranked by density, the place where the object was found
//! lay: the mass and area of the cells the belief thought more likely than the truth.

use crate::error::CoreError;
use crate::mass::neumaier_sum;
use ndarray::Array2;

/// The rank of the truth's density among the cells (see [`truth_rank`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TruthRank {
    /// Sum of the masses of the cells whose density is strictly greater than the truth's:
    /// the probability the belief gave to places it rated above the truth (with cell masses
    /// that are probabilities, a share of the whole belief, in 0..=1).
    pub mass_above: f64,
    /// Area of those cells, km²: how much would have been searched, best cells first, before
    /// reaching cells as dense as the truth.
    pub area_above_km2: f64,
    /// Number of those cells.
    pub cells_above: usize,
    /// Sum of the masses of the cells whose density equals the truth's (the truth's own cell,
    /// when the truth density was taken from it, and any ties).
    pub mass_equal: f64,
    /// Area of the cells at equal density, km².
    pub area_equal_km2: f64,
    /// Number of cells at equal density.
    pub cells_equal: usize,
}

/// Ranks the truth's density among the cells of a grid.
///
/// `cells` are cell masses (probabilities) of a grid whose cells all have the area
/// `cell_area_km2`; a cell's density is its mass divided by `cell_area_km2`, per km², computed
/// exactly that way, so a `truth_density_per_km2` taken as one cell's mass / `cell_area_km2`
/// compares equal to that cell. Returns the mass and area of the cells whose density is
/// strictly greater than the truth's, and separately of those at equal density. This is what
/// accumulating the cells sorted by density, highest first, gives before the truth is reached
/// (the tie block reported apart). Cells of mass 0 at a truth density of 0 count as equal.
///
/// Source: ranking cells by density to read how much of a belief lay above the outcome is
/// common practice for judging probability maps (the area above the truth is the area an
/// optimal search of a stationary target with equal effort per km² would sweep first; from
/// memory).
///
/// # Errors
/// [`CoreError::BadCellArea`] when `cell_area_km2` is not positive and finite;
/// [`CoreError::BadMass`] for a negative or non-finite cell mass or truth density.
pub fn truth_rank(
    cells: &Array2<f64>,
    cell_area_km2: f64,
    truth_density_per_km2: f64,
) -> Result<TruthRank, CoreError> {
    if !(cell_area_km2.is_finite() && cell_area_km2 > 0.0) {
        return Err(CoreError::BadCellArea { cell_area_km2 });
    }
    if !(truth_density_per_km2.is_finite() && truth_density_per_km2 >= 0.0) {
        return Err(CoreError::BadMass {
            what: format!(
                "the density at the truth is {truth_density_per_km2} per km²; give a finite density, 0 or more"
            ),
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
    let density = |m: f64| m / cell_area_km2;
    let above = || {
        cells
            .iter()
            .copied()
            .filter(|&m| density(m) > truth_density_per_km2)
    };
    let equal = || {
        cells
            .iter()
            .copied()
            .filter(|&m| density(m) == truth_density_per_km2)
    };
    let cells_above = above().count();
    let cells_equal = equal().count();
    Ok(TruthRank {
        mass_above: neumaier_sum(above()),
        area_above_km2: cells_above as f64 * cell_area_km2,
        cells_above,
        mass_equal: neumaier_sum(equal()),
        area_equal_km2: cells_equal as f64 * cell_area_km2,
        cells_equal,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;
    use ndarray::array;
    use proptest::prelude::*;

    /// The obvious reference: sort all cell densities, highest first, and accumulate until
    /// the density is no longer above the truth's; then the tie block.
    fn brute_force(cells: &Array2<f64>, area: f64, truth: f64) -> (f64, f64, f64, f64) {
        let mut d: Vec<(f64, f64)> = cells.iter().map(|&m| (m / area, m)).collect();
        d.sort_by(|a, b| b.0.total_cmp(&a.0));
        let (mut mass_above, mut area_above, mut mass_eq, mut area_eq) = (0.0, 0.0, 0.0, 0.0);
        for (density, m) in d {
            if density > truth {
                mass_above += m;
                area_above += area;
            } else if density == truth {
                mass_eq += m;
                area_eq += area;
            } else {
                break;
            }
        }
        (mass_above, area_above, mass_eq, area_eq)
    }

    #[test]
    fn truth_in_the_second_densest_cell_has_the_densest_above_it() {
        // 1 km² cells; hand count: above 0.3 are 0.4 (one cell); equal: the two 0.3 cells.
        let cells = array![[0.1, 0.4], [0.3, 0.3]];
        let r = truth_rank(&cells, 1.0, 0.3).unwrap();
        assert_abs_diff_eq!(r.mass_above, 0.4, epsilon = 1e-15);
        assert_abs_diff_eq!(r.area_above_km2, 1.0, epsilon = 1e-15);
        assert_eq!((r.cells_above, r.cells_equal), (1, 2));
        assert_abs_diff_eq!(r.mass_equal, 0.6, epsilon = 1e-15);
        assert_abs_diff_eq!(r.area_equal_km2, 2.0, epsilon = 1e-15);
    }

    #[test]
    fn truth_density_from_its_own_cell_counts_that_cell_as_equal() {
        // 250 m cells: 0.0625 km² each.
        let area = 0.25 * 0.25;
        let cells = array![[0.05, 0.2, 0.013], [0.7, 0.037, 0.0]];
        let truth = cells[[1, 1]] / area;
        let r = truth_rank(&cells, area, truth).unwrap();
        assert_eq!((r.cells_above, r.cells_equal), (3, 1));
        assert_abs_diff_eq!(r.mass_above, 0.95, epsilon = 1e-15);
        assert_abs_diff_eq!(r.mass_equal, 0.037, epsilon = 1e-15);
        assert_abs_diff_eq!(r.area_above_km2, 3.0 * area, epsilon = 1e-15);
    }

    #[test]
    fn truth_at_zero_density_has_every_positive_cell_above() {
        let cells = array![[0.5, 0.0], [0.5, 0.0]];
        let r = truth_rank(&cells, 2.0, 0.0).unwrap();
        assert_eq!((r.cells_above, r.cells_equal), (2, 2));
        assert_abs_diff_eq!(r.mass_above, 1.0, epsilon = 1e-15);
        assert_eq!(r.mass_equal, 0.0);
    }

    #[test]
    fn bad_area_mass_or_density_is_refused() {
        let cells = array![[0.5, 0.5]];
        assert!(matches!(
            truth_rank(&cells, 0.0, 0.1),
            Err(CoreError::BadCellArea { .. })
        ));
        assert!(matches!(
            truth_rank(&cells, f64::NAN, 0.1),
            Err(CoreError::BadCellArea { .. })
        ));
        assert!(matches!(
            truth_rank(&cells, 1.0, -0.1),
            Err(CoreError::BadMass { .. })
        ));
        assert!(matches!(
            truth_rank(&cells, 1.0, f64::INFINITY),
            Err(CoreError::BadMass { .. })
        ));
        assert!(matches!(
            truth_rank(&array![[0.5, f64::NAN]], 1.0, 0.1),
            Err(CoreError::BadMass { .. })
        ));
    }

    proptest! {
        #[test]
        fn rank_matches_a_brute_force_sort(
            masses in prop::collection::vec(
                prop_oneof![Just(0.0), Just(0.125), Just(0.25), 0.0..1.0f64], 1..60),
            cols in 1usize..8,
            area in prop_oneof![Just(1.0), Just(0.0625), 0.01..4.0f64],
            pick in 0usize..60,
            offset in prop_oneof![Just(0.0), -0.5..0.5f64],
        ) {
            let rows = masses.len().div_ceil(cols);
            let mut v = masses.clone();
            v.resize(rows * cols, 0.0);
            let cells = Array2::from_shape_vec((rows, cols), v).unwrap();
            // The truth's density: a cell's own (ties) or one in between.
            let truth = (cells.as_slice().unwrap()[pick % (rows * cols)] / area + offset).max(0.0);
            let r = truth_rank(&cells, area, truth).unwrap();
            let (ma, aa, me, ae) = brute_force(&cells, area, truth);
            prop_assert!((r.mass_above - ma).abs() <= 1e-12);
            prop_assert!((r.area_above_km2 - aa).abs() <= 1e-9);
            prop_assert!((r.mass_equal - me).abs() <= 1e-12);
            prop_assert!((r.area_equal_km2 - ae).abs() <= 1e-9);
            prop_assert_eq!(r.area_above_km2, r.cells_above as f64 * area);
        }
    }
}
