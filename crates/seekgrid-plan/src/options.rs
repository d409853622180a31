//! Planning options.

use crate::error::PlanError;

/// The pattern flown over a rectangular area.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum PatternOverRectangle {
    /// Parallel sweep: legs along the long side of the rectangle (fewest turns).
    ParallelSweep,
    /// Creeping line: legs across the long side, progressing along it from the end that holds
    /// more probability (for areas laid along a route).
    CreepingLine,
}

/// Options of [`crate::plan`], [`crate::optimal_bound`] and [`crate::assign_teams_to_segments`].
///
/// The defaults are seekgrid's own planning heuristics, stated in every plan's notes; none of
/// them is an authoritative value from a manual.
#[derive(Clone, Debug, PartialEq)]
pub struct PlanOptions {
    /// Fraction of on-scene time lost to turns and navigation, 0..1 (default 0.1).
    pub turn_allowance: f64,
    /// Whether the areas of different units may overlap (default false). When true, an
    /// overlapping area is chosen only when it gives a higher joint POS, and overlaps are
    /// scored as `1 - Π(1 - d)`.
    pub allow_overlap: bool,
    /// Candidate rectangles per unit placement that are refined by local search after the
    /// global scan (default 8).
    pub max_candidates: usize,
    /// Step between the orientations of the global scan, degrees, in 1..=90 (default 15).
    pub orientation_step_deg: f64,
    /// Whether the local search may turn an area away from the scanned orientations
    /// (default true; false keeps every area on a multiple of `orientation_step_deg`).
    pub refine_orientation: bool,
    /// Aspect ratios (long side / short side, each ≥ 1) of the global scan
    /// (default 1, 1.5, 2, 3, 4).
    pub aspect_ratios: Vec<f64>,
    /// Smallest coverage W/S of the global scan (default 0.25).
    pub min_coverage: f64,
    /// Largest coverage W/S of the global scan (default 4).
    pub max_coverage: f64,
    /// Coverages of the global scan, spaced geometrically from `min_coverage` to
    /// `max_coverage` (default 9).
    pub coverage_steps: usize,
    /// Rounds of coordinate ascent after the first placement of all units: each round
    /// re-places every unit given the others (default 2).
    pub refinement_rounds: usize,
    /// Extra starts of the placement for several units (default 1: after placing the units
    /// largest effort first, place them again smallest first, and keep the better plan; 0 for
    /// one start only).
    pub restarts: usize,
    /// The pattern flown over rectangles (default parallel sweep).
    pub rectangle_pattern: PatternOverRectangle,
    /// Tight datum: an expanding square is tried when the 90 % containment area of the
    /// residual belief is at most this fraction of the unit's effort W x L, the area it
    /// sweeps at coverage 1 (default 0.25).
    pub tight_datum_fraction: f64,
    /// Very tight datum: a sector search is tried for a fast unit when the 90 % containment
    /// area is at most this fraction of the unit's effort W x L (default 0.05).
    pub very_tight_datum_fraction: f64,
    /// Units at or above this speed count as fast (sector search), metres per second
    /// (default 20.6 m/s, 40 kn).
    pub sector_search_min_speed_mps: f64,
    /// An expanding square or sector search replaces the best rectangle on a tight datum when
    /// its POS is at least `1 - pattern_switch_tolerance` times the rectangle's (default 0.05).
    pub pattern_switch_tolerance: f64,
    /// The global scan uses cells of at most 1/this of a candidate's short side (default 6).
    pub scan_cells_per_side: usize,
    /// Cap on the global scan's cells per axis (default 1024); larger grids are scanned
    /// coarser and the local search refines the result on the grid's own cells.
    pub max_scan_cells_per_axis: usize,
    /// [`crate::assign_teams_to_segments`] enumerates all `segments^teams` assignments when
    /// there are at most this many (default 200 000); else it uses a greedy heuristic.
    pub max_exact_assignments: u64,
}

impl Default for PlanOptions {
    fn default() -> Self {
        Self {
            turn_allowance: 0.1,
            allow_overlap: false,
            max_candidates: 8,
            orientation_step_deg: 15.0,
            refine_orientation: true,
            aspect_ratios: vec![1.0, 1.5, 2.0, 3.0, 4.0],
            min_coverage: 0.25,
            max_coverage: 4.0,
            coverage_steps: 9,
            refinement_rounds: 2,
            restarts: 1,
            rectangle_pattern: PatternOverRectangle::ParallelSweep,
            tight_datum_fraction: 0.25,
            very_tight_datum_fraction: 0.05,
            sector_search_min_speed_mps: 20.6,
            pattern_switch_tolerance: 0.05,
            scan_cells_per_side: 6,
            max_scan_cells_per_axis: 1024,
            max_exact_assignments: 200_000,
        }
    }
}

impl PlanOptions {
    /// Checks every option.
    ///
    /// # Errors
    /// [`PlanError::BadOption`] naming the option.
    pub fn validate(&self) -> Result<(), PlanError> {
        let bad = |field: &'static str, value: f64, fix: &'static str| {
            Err(PlanError::BadOption { field, value, fix })
        };
        let ta = self.turn_allowance;
        if !(ta.is_finite() && (0.0..1.0).contains(&ta)) {
            return bad("turn_allowance", ta, "give a fraction in 0..1 such as 0.1");
        }
        if self.max_candidates == 0 {
            return bad("max_candidates", 0.0, "give at least 1");
        }
        let st = self.orientation_step_deg;
        if !(st.is_finite() && (1.0..=90.0).contains(&st)) {
            return bad(
                "orientation_step_deg",
                st,
                "give 1 to 90 degrees, such as 15",
            );
        }
        if self.aspect_ratios.is_empty() {
            return bad(
                "aspect_ratios",
                0.0,
                "give at least one aspect ratio, such as 1",
            );
        }
        if let Some(&r) = self
            .aspect_ratios
            .iter()
            .find(|r| !(r.is_finite() && **r >= 1.0 && **r <= 100.0))
        {
            return bad(
                "aspect_ratios",
                r,
                "give ratios of long to short side in 1..=100",
            );
        }
        let (lo, hi) = (self.min_coverage, self.max_coverage);
        if !(lo.is_finite() && lo > 0.0) {
            return bad("min_coverage", lo, "give a positive coverage such as 0.25");
        }
        if !(hi.is_finite() && hi >= lo && hi <= 100.0) {
            return bad(
                "max_coverage",
                hi,
                "give a coverage at least min_coverage and at most 100",
            );
        }
        if self.coverage_steps == 0 || self.coverage_steps > 100 {
            return bad(
                "coverage_steps",
                self.coverage_steps as f64,
                "give 1 to 100 steps",
            );
        }
        for (field, v) in [
            ("tight_datum_fraction", self.tight_datum_fraction),
            ("very_tight_datum_fraction", self.very_tight_datum_fraction),
            ("pattern_switch_tolerance", self.pattern_switch_tolerance),
        ] {
            if !(v.is_finite() && (0.0..=1.0).contains(&v)) {
                return bad(field, v, "give a fraction in 0..=1");
            }
        }
        let sp = self.sector_search_min_speed_mps;
        if !(sp.is_finite() && sp > 0.0) {
            return bad(
                "sector_search_min_speed_mps",
                sp,
                "give a positive speed in metres per second",
            );
        }
        if !(2..=64).contains(&self.scan_cells_per_side) {
            return bad(
                "scan_cells_per_side",
                self.scan_cells_per_side as f64,
                "give 2 to 64",
            );
        }
        if !(16..=8192).contains(&self.max_scan_cells_per_axis) {
            return bad(
                "max_scan_cells_per_axis",
                self.max_scan_cells_per_axis as f64,
                "give 16 to 8192",
            );
        }
        if self.max_exact_assignments == 0 {
            return bad("max_exact_assignments", 0.0, "give at least 1");
        }
        Ok(())
    }
}
