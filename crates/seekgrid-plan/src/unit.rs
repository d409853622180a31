//! Search units: what each one brings to the search.

use crate::error::PlanError;
use seekgrid_core::units::SECONDS_PER_HOUR;
use seekgrid_search::DetectionLaw;

/// The kind of a search unit.
#[derive(Clone, Debug, PartialEq)]
pub enum UnitKind {
    /// A surface vessel.
    Vessel,
    /// An aircraft (fixed wing or helicopter).
    Aircraft,
    /// A ground team of `searchers` people walking abreast, each with the unit's sweep width.
    GroundTeam {
        /// Number of searchers walking abreast (at least 1).
        searchers: u32,
    },
}

/// One search unit: its speed, time on scene, sweep width and detection law.
///
/// seekgrid ships no sweep widths: `sweep_width_m` and the law come from the planner's tables
/// or trials.
#[derive(Clone, Debug, PartialEq)]
pub struct UnitSpec {
    /// The unit's id (call sign), unique within a plan.
    pub id: String,
    /// Search speed over the ground, metres per second.
    pub speed_mps: f64,
    /// Hours the unit can spend searching on scene (transit excluded), hours.
    pub hours_on_scene: f64,
    /// Sweep width W, metres (per searcher for a ground team).
    pub sweep_width_m: f64,
    /// Smallest track spacing the unit can keep, metres (per searcher for a ground team);
    /// `None` for no limit.
    pub track_spacing_min_m: Option<f64>,
    /// The detection law for this unit and object.
    pub law: DetectionLaw,
    /// What kind of unit it is.
    pub kind: UnitKind,
}

impl UnitSpec {
    /// Track length the unit can search, metres: `speed x hours x 3600 s/h x (1 -
    /// turn_allowance)` ([`SECONDS_PER_HOUR`]), where `turn_allowance` is the fraction of
    /// on-scene time lost to turns and navigation (common practice; seekgrid's default 0.1 is
    /// stated in every plan's notes).
    #[must_use]
    pub fn track_length_m(&self, turn_allowance: f64) -> f64 {
        self.speed_mps * self.hours_on_scene * SECONDS_PER_HOUR * (1.0 - turn_allowance)
    }

    /// Number of searchers: a ground team's size, 1 for a vessel or aircraft.
    #[must_use]
    pub fn searchers(&self) -> u32 {
        match self.kind {
            UnitKind::GroundTeam { searchers } => searchers,
            _ => 1,
        }
    }

    /// Effort (area swept) the unit can give, square metres: `W x L`, for a ground team
    /// `searchers x W x L` (found: Cooper, "Selected Inland Search Theory Definitions": Z = W·L;
    /// docs/references.md §1), with `L` from [`UnitSpec::track_length_m`].
    #[must_use]
    pub fn effort_m2(&self, turn_allowance: f64) -> f64 {
        f64::from(self.searchers()) * self.sweep_width_m * self.track_length_m(turn_allowance)
    }

    /// Checks every field.
    ///
    /// # Errors
    /// [`PlanError::BadUnit`] naming the unit and the field: an empty id, a speed, hours on
    /// scene or sweep width that is not positive and finite, a minimum track spacing that is
    /// not positive and finite, or a ground team of no searchers.
    pub fn validate(&self) -> Result<(), PlanError> {
        let bad = |field: &'static str, value: f64, fix: &'static str| PlanError::BadUnit {
            unit: self.id.clone(),
            field,
            value,
            fix,
        };
        if self.id.trim().is_empty() {
            return Err(bad(
                "id",
                f64::NAN,
                "give the unit a non-empty id (call sign)",
            ));
        }
        let positive = |v: f64| v.is_finite() && v > 0.0;
        if !positive(self.speed_mps) {
            return Err(bad(
                "speed_mps",
                self.speed_mps,
                "give the search speed as a positive number of metres per second",
            ));
        }
        if !positive(self.hours_on_scene) {
            return Err(bad(
                "hours_on_scene",
                self.hours_on_scene,
                "give the time on scene as a positive number of hours",
            ));
        }
        if !positive(self.sweep_width_m) {
            return Err(bad(
                "sweep_width_m",
                self.sweep_width_m,
                "give the sweep width as a positive number of metres from your tables or trials",
            ));
        }
        if let Some(s) = self.track_spacing_min_m
            && !positive(s)
        {
            return Err(bad(
                "track_spacing_min_m",
                s,
                "give a positive number of metres, or leave it out for no limit",
            ));
        }
        if let UnitKind::GroundTeam { searchers: 0 } = self.kind {
            return Err(bad(
                "searchers",
                0.0,
                "a ground team needs at least 1 searcher",
            ));
        }
        Ok(())
    }
}

/// Checks a list of units: at least one, each valid, ids unique.
pub(crate) fn validate_units(units: &[UnitSpec]) -> Result<(), PlanError> {
    if units.is_empty() {
        return Err(PlanError::NoUnits);
    }
    for (i, u) in units.iter().enumerate() {
        u.validate()?;
        if units[..i].iter().any(|v| v.id == u.id) {
            return Err(PlanError::DuplicateUnit { unit: u.id.clone() });
        }
    }
    Ok(())
}
