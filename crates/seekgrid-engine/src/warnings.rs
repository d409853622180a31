//! The warnings the computation shows (a legal but suspect input, see
//! [`seekgrid_incident::warning`]), and the one rule that is an error unless the file says
//! otherwise: wind and current that do not cover the drift.

use crate::prepare::{Prepared, PreparedSearch};
use crate::timeline::MapError;
use seekgrid_core::ProjectedBox;
use seekgrid_incident::model::{Incident, Item, ScenarioKind, Time};
use seekgrid_incident::{Warning, WarningKind};

/// A scenario whose mask (land for an object afloat, water for one ashore) keeps less than
/// this share of its mass on the grid is reported.
pub const MASKED_SHARE_REPORTED: f64 = 0.5;

fn when(t: Time) -> String {
    t.format("%Y-%m-%dT%H:%MZ").to_string()
}

/// Warnings about the map's time: before the reference time, or before a drift scenario goes
/// adrift.
pub(crate) fn about_the_time(incident: &Incident, at: Time) -> Vec<Warning> {
    let mut out = Vec::new();
    if at < incident.reference_time {
        out.push(Warning::new(
            WarningKind::MapBeforeReferenceTime,
            Item::Header,
            Some("reference_time"),
            format!(
                "the map's time --at {} is before reference_time {}: the prior describes the reference time, so the map shows the prior of the reference time (nothing drifted, no search applied); give --at at or after the reference time",
                when(at),
                when(incident.reference_time)
            ),
        ));
    }
    for s in &incident.scenarios {
        if let ScenarioKind::Drift(d) = &s.kind
            && d.adrift_earliest > at
        {
            out.push(Warning::new(
                WarningKind::NotYetAdrift,
                Item::Scenario(s.id.clone()),
                Some("adrift"),
                format!(
                    "drift scenario \"{}\" goes adrift from {}, after the map's time {}: its particles are shown at the last known position, not yet drifting; check the adrift times or the map's time",
                    s.id,
                    when(d.adrift_earliest),
                    when(at)
                ),
            ));
        }
    }
    out
}

/// Warnings for the scenarios that the mask mostly erases (`kept`: each stationary scenario's
/// share kept, from the map).
pub(crate) fn about_the_mask(incident: &Incident, kept: &[(String, f64)]) -> Vec<Warning> {
    let Some(afloat) = incident.object_afloat else {
        return Vec::new();
    };
    let (lost_on, object) = if afloat {
        ("on land", "object_afloat = true")
    } else {
        ("at sea", "object_afloat = false")
    };
    kept.iter()
        .filter(|(_, k)| *k < MASKED_SHARE_REPORTED)
        .filter_map(|(id, k)| {
            let s = incident.scenarios.iter().find(|s| s.id == *id)?;
            Some(Warning::new(
                WarningKind::ScenarioMasked,
                Item::Scenario(id.clone()),
                None,
                format!(
                    "scenario \"{id}\" of analyst \"{}\" lies {:.0} % {lost_on}, but {object}: the mask erases that part, and the analyst's weight passes to the other scenarios (each analyst's share after the mask is in summary.json); check the scenario's position or polygon, the coastline and object_afloat",
                    s.analyst,
                    100.0 * (1.0 - k)
                ),
            ))
        })
        .collect()
}

/// A warning for each search of `searches` that cannot reach `grid` (its area or track more
/// than a sweep width outside it), which the map then leaves out.
pub(crate) fn about_searches_outside<'a>(
    searches: impl IntoIterator<Item = &'a PreparedSearch>,
    grid: &ProjectedBox,
    what: &str,
) -> Vec<Warning> {
    searches
        .into_iter()
        .filter(|s| !s.reaches(grid))
        .map(|s| {
            Warning::new(
                WarningKind::SearchOutsideGrid,
                Item::Search(s.def.id.clone()),
                None,
                format!(
                    "search \"{}\" lies wholly outside {what}, so it is left out of the map (it can change none of the map's probability); check its position (a digit or a sign), or widen [grid] bounds",
                    s.def.id
                ),
            )
        })
        .collect()
}

/// What `check` can warn of without computing: the file's own warnings and the searches that
/// lie outside the grid when the grid is known before computing (from `[grid] bounds`, or the
/// extent of the stationary scenarios when nothing drifts).
///
/// # Errors
/// [`MapError::Grid`] when the `[grid] bounds` cannot be projected.
pub fn before_computing(
    incident: &Incident,
    prepared: &Prepared,
) -> Result<Vec<Warning>, MapError> {
    let mut out = incident.warnings();
    let grid = match incident.grid.bounds {
        Some(b) => Some((
            crate::timeline::lon_lat_box(&prepared.frame, b)?,
            "the [grid] bounds",
        )),
        None if prepared.drift.is_empty() => seekgrid_prior::auto_extent(&prepared.stationary)
            .map(|b| (b, "the grid of the scenarios")),
        None => None,
    };
    if let Some((b, what)) = grid {
        out.extend(about_searches_outside(&prepared.searches, &b, what));
    }
    Ok(out)
}

/// Refuses a drift whose wind or current series (or field) does not cover it from going
/// adrift to `end`, unless the scenario says `hold_environment_beyond_series = true`.
///
/// # Errors
/// [`MapError::EnvironmentNotCovered`] naming the scenario and the gap.
pub(crate) fn environment_covers(incident: &Incident, end: Time) -> Result<(), MapError> {
    for s in &incident.scenarios {
        let ScenarioKind::Drift(d) = &s.kind else {
            continue;
        };
        if let Some((_, _, message)) = d.environment_gaps(end).into_iter().next() {
            return Err(MapError::EnvironmentNotCovered {
                id: s.id.clone(),
                message,
            });
        }
    }
    Ok(())
}
