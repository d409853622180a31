//! Planning the next search period: the belief at the plan's start, the units available,
//! and the plan with its bound.

use crate::timeline::{IncidentMap, MapError, MapOptions, Progress, map};
use seekgrid_incident::model::{Incident, Time, UnitDef};
use seekgrid_plan as plan;

/// A computed plan.
#[derive(Debug)]
pub struct PlanRun {
    /// The belief at the start of the period (after the searches logged by then).
    pub map: IncidentMap,
    /// The start of the period.
    pub start: Time,
    /// Units as the planner sees them.
    pub units: Vec<plan::UnitSpec>,
    /// The theoretical bound.
    pub bound: plan::OptimalBound,
    /// Rectangles or datum patterns per unit (vessels and aircraft, or teams without segments).
    pub areas: Option<plan::Plan>,
    /// Teams to segments, when the incident has segments and ground teams.
    pub segments: Option<plan::SegmentPlan>,
}

/// Why a plan cannot be made.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum PlanRunError {
    /// The belief at the start cannot be computed.
    #[error(transparent)]
    Map(#[from] MapError),
    /// No unit is listed.
    #[error(
        "no [[unit]] is listed; add the units available for the next period (speed, hours_on_scene, sweep_width_m)"
    )]
    NoUnits,
    /// The planner refused.
    #[error("plan: {0}")]
    Plan(#[from] plan::PlanError),
}

/// The practical plan of `units` against the map's belief, timed as the phase `practical plan`.
fn practical(
    m: &IncidentMap,
    units: &[plan::UnitSpec],
    options: &plan::PlanOptions,
    progress: Progress<'_>,
) -> Result<plan::Plan, plan::PlanError> {
    m.phases.time_shown("practical plan", progress, || {
        plan::plan(&m.belief, units, options)
    })
}

/// Plans the period starting at `start` against the belief at that time.
///
/// # Errors
/// See [`PlanRunError`].
pub fn plan_at(
    incident: &Incident,
    start: Time,
    progress: Progress<'_>,
) -> Result<PlanRun, PlanRunError> {
    if incident.units.is_empty() {
        return Err(PlanRunError::NoUnits);
    }
    let m = map(incident, &MapOptions { at: Some(start) }, progress)?;
    let units: Vec<plan::UnitSpec> = incident.units.iter().map(UnitDef::spec).collect();
    let options = plan::PlanOptions::default();
    let bound = m.phases.time_shown("plan bound", progress, || {
        plan::optimal_bound(&m.belief, &units, &options)
    })?;
    let teams: Vec<plan::UnitSpec> = units
        .iter()
        .filter(|u| matches!(u.kind, plan::UnitKind::GroundTeam { .. }))
        .cloned()
        .collect();
    let others: Vec<plan::UnitSpec> = units
        .iter()
        .filter(|u| !matches!(u.kind, plan::UnitKind::GroundTeam { .. }))
        .cloned()
        .collect();
    let (segments, areas) = match (&m.prepared.segments, teams.is_empty()) {
        (Some(segs), false) => {
            let rows = match m.segment_table() {
                Some(t) => t?.rows,
                None => seekgrid_prior::segment_table(m.poc(), &m.grid, segs),
            };
            let table: Vec<(String, f64, f64)> = rows
                .iter()
                .map(|r| (r.id.clone(), r.poa, r.area_m2))
                .collect();
            let sp = plan::assign_teams_to_segments(&table, &teams, &options)?;
            let areas = if others.is_empty() {
                None
            } else {
                Some(practical(&m, &others, &options, progress)?)
            };
            (Some(sp), areas)
        }
        _ => (None, Some(practical(&m, &units, &options, progress)?)),
    };
    Ok(PlanRun {
        map: m,
        start,
        units,
        bound,
        areas,
        segments,
    })
}
