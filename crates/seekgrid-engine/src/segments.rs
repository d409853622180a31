//! The POA of each map segment, integrated over the segment polygons.

use crate::timeline::{IncidentMap, MapError};
use geo::{Contains, Point};
use seekgrid_core::neumaier_sum;
use seekgrid_prior as prior;

/// The segment table of a map: each segment's POA, with the two parts of the belief that no
/// segment holds, so that `Σ poa + rest_of_world + outside_segments == 1` (to 1e-9).
#[derive(Debug, Clone, PartialEq)]
pub struct SegmentTable {
    /// One row per segment, in the incident's order.
    pub rows: Vec<prior::SegmentRow>,
    /// The belief's rest of world (declared by analysts or off the grid).
    pub rest_of_world: f64,
    /// The mass on the grid and in particles that lies in no segment (never below 0).
    pub outside_segments: f64,
    /// The share of each cell's mass in each segment, to split other cell arrays (the belief
    /// before searches, the mass found) the same way.
    pub split: prior::SegmentSplit,
}

impl IncidentMap {
    /// The segment table of the belief at the map's time, `None` when the incident uses no
    /// segments. The grid part of each segment's POA splits every cell cut by a segment edge
    /// by the share of the cell's prior mass that lies in the segment
    /// ([`prior::SegmentSplit::from_scenarios`]: each stationary scenario integrated over the
    /// piece, so that segments that do not follow cell edges get the analysts' POA); a search
    /// scales a whole cell, so the shares hold after searches too. Drifting particles count in
    /// the segment that contains them.
    ///
    /// # Errors
    /// [`MapError::Prior`] when the stationary scenarios cannot be integrated (the map's own
    /// prior was built from them, so this does not happen for a map that exists).
    pub fn segment_table(&self) -> Option<Result<SegmentTable, MapError>> {
        let segments = self.prepared.segments.as_ref()?;
        Some(self.table_of(segments))
    }

    fn table_of(&self, segments: &[prior::Segment]) -> Result<SegmentTable, MapError> {
        let p = &self.prepared;
        let split = if p.stationary.is_empty() {
            prior::SegmentSplit::by_overlap(&self.grid, segments)
        } else {
            prior::SegmentSplit::from_scenarios(
                &p.stationary_analysts,
                &p.stationary,
                p.pool,
                &self.grid,
                segments,
            )
            .map_err(|e| MapError::Prior(Box::new(e)))?
        };
        let particles = self.belief.particles();
        let in_particles: Vec<f64> = segments
            .iter()
            .map(|s| {
                neumaier_sum((0..particles.len()).filter_map(|i| {
                    let c = particles.position(i);
                    s.polygons
                        .contains(&Point::new(c.x, c.y))
                        .then(|| particles.weights()[i])
                }))
            })
            .collect();
        let rows = split.table(self.belief.cells(), &in_particles);
        let inside = neumaier_sum(rows.iter().map(|r| r.poa));
        let on_map = self.belief.grid_mass() + self.belief.particle_mass();
        Ok(SegmentTable {
            rows,
            rest_of_world: self.belief.rest_of_world(),
            outside_segments: (on_map - inside).max(0.0),
            split,
        })
    }
}
