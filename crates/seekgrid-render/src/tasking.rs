//! Writing a plan's `tasking.toml`: what each unit was asked to do, at full precision, for
//! `seekgrid log --plan` (the format is `seekgrid_incident::tasking`).

use crate::RenderError;
use crate::layers::{Computed, Layer, Recorder};
use seekgrid_core::Frame;
use seekgrid_core::units::normalise_deg;
use seekgrid_engine::PlanRun;
use seekgrid_incident::model::{Incident, Time};
use seekgrid_incident::tasking::{
    TASKING_FILE, TASKING_FORMAT, TaskedPattern, TaskedUnit, Tasking,
};
use seekgrid_plan::UnitKind;
use seekgrid_search::{Pattern, Rectangle};

/// The tasking layer's writer: `tasking.toml` in the plan folder, under the folder's run id.
///
/// # Errors
/// [`RenderError`] when the file cannot be written, or (a bug) a value cannot be written as TOML.
pub(crate) fn write(c: &Computed, run: &PlanRun, out: &mut Recorder) -> Result<(), RenderError> {
    let text = tasking(c.incident, run, out.run_id())
        .to_toml()
        .map_err(RenderError::Internal)?;
    out.write(Layer::Tasking, TASKING_FILE, text.as_bytes(), None)
}

/// The tasking of a plan: per unit its period, law, sweep width and pattern (in lon/lat and
/// true bearings, exactly as the plan has it) or segments.
#[must_use]
pub fn tasking(incident: &Incident, run: &PlanRun, run_id: &str) -> Tasking {
    let frame = &run.map.prepared.frame;
    let units: Vec<TaskedUnit> = run
        .units
        .iter()
        .map(|u| {
            let end = after_hours(run.start, u.hours_on_scene);
            let area = run
                .areas
                .iter()
                .flat_map(|p| &p.assignments)
                .find(|a| a.unit == u.id);
            let teams: Vec<_> = run
                .segments
                .iter()
                .flat_map(|s| &s.assignments)
                .filter(|a| a.team == u.id)
                .collect();
            // One POD/POS to quote: the area's, or the team's when it has exactly one segment.
            let (pod, pos) = match (area, teams.as_slice()) {
                (Some(a), _) => (Some(a.pod), Some(a.pos)),
                (None, [one]) => (Some(one.pod), Some(one.pos)),
                _ => (None, None),
            };
            let searchers = match u.kind {
                UnitKind::GroundTeam { searchers } => Some(searchers),
                _ => None,
            };
            TaskedUnit {
                id: u.id.clone(),
                start: run.start,
                end,
                detection: u.law.name().to_owned(),
                // The plan scores a team as one line of n searchers sweeping n x W over lanes
                // of n x S (the pattern's spacing).
                sweep_width_m: f64::from(u.searchers()) * u.sweep_width_m,
                searchers,
                pattern: area.map(|a| tasked_pattern(frame, &a.pattern)),
                segments: teams.iter().map(|a| a.segment.clone()).collect(),
                pod_planned: pod,
                pos_planned: pos,
            }
        })
        .collect();
    let end = units.iter().map(|u| u.end).max().unwrap_or(run.start);
    Tasking {
        format: TASKING_FORMAT,
        run_id: run_id.to_owned(),
        incident_title: incident.title.clone(),
        start: run.start,
        end,
        units,
    }
}

/// `start` plus `hours`, to the millisecond.
fn after_hours(start: Time, hours: f64) -> Time {
    let ms = (seekgrid_core::units::hours_to_s(hours) * 1000.0).round();
    // Hours on scene are validated positive and finite; a day count beyond chrono's range
    // cannot be a period on scene, so it is held at the start.
    if ms.is_finite() && ms.abs() < 1e15 {
        start + chrono::TimeDelta::milliseconds(ms as i64)
    } else {
        start
    }
}

/// A plan's pattern (working frame, grid bearings) as the incident file writes it (lon/lat,
/// true bearings at the centre, the inverse of the engine's `prepare::pattern`).
fn tasked_pattern(frame: &Frame, p: &Pattern) -> TaskedPattern {
    let at = |c: geo::Coord<f64>| {
        let (lon, lat) = frame.to_lon_lat(c);
        [lon, lat]
    };
    let true_bearing = |grid_deg: f64, center: [f64; 2]| {
        normalise_deg(grid_deg + frame.convergence_deg(center[0], center[1]))
    };
    let mut t = TaskedPattern::default();
    match *p {
        Pattern::ParallelSweep(Rectangle {
            center,
            length_m,
            width_m,
            major_grid_bearing_deg,
            track_spacing_m,
        })
        | Pattern::CreepingLine(Rectangle {
            center,
            length_m,
            width_m,
            major_grid_bearing_deg,
            track_spacing_m,
        }) => {
            t.kind = if matches!(p, Pattern::ParallelSweep(_)) {
                "parallel-sweep".into()
            } else {
                "creeping-line".into()
            };
            t.center = at(center);
            t.length_m = Some(length_m);
            t.width_m = Some(width_m);
            t.major_bearing_deg = Some(true_bearing(major_grid_bearing_deg, t.center));
            t.track_spacing_m = Some(track_spacing_m);
        }
        Pattern::ExpandingSquare {
            center,
            track_spacing_m,
            legs,
            first_leg_grid_bearing_deg,
        } => {
            t.kind = "expanding-square".into();
            t.center = at(center);
            t.track_spacing_m = Some(track_spacing_m);
            t.legs = Some(legs);
            t.first_leg_bearing_deg = Some(true_bearing(first_leg_grid_bearing_deg, t.center));
        }
        Pattern::SectorSearch {
            center,
            radius_m,
            first_leg_grid_bearing_deg,
            sectors,
        } => {
            t.kind = "sector-search".into();
            t.center = at(center);
            t.radius_m = Some(radius_m);
            t.first_leg_bearing_deg = Some(true_bearing(first_leg_grid_bearing_deg, t.center));
            t.sectors = Some(sectors);
        }
    }
    t
}

#[cfg(test)]
mod tests {
    use super::*;
    use seekgrid_core::UtmZone;

    #[test]
    fn a_pattern_goes_to_lon_lat_and_true_bearing_and_back_to_the_same_place() {
        // Off-centre in its zone so that the convergence is several degrees (computed).
        let frame = Frame::new(UtmZone::from_epsg(32625).unwrap());
        let center = frame.to_xy(-35.012_345, 28.0);
        let p = Pattern::ParallelSweep(Rectangle {
            center,
            length_m: 11_309.876_543_210_987,
            width_m: 5_271.000_000_000_001,
            major_grid_bearing_deg: 256.5,
            track_spacing_m: 1_192.999_999_999_999_8,
        });
        let t = tasked_pattern(&frame, &p);
        assert_eq!(t.kind, "parallel-sweep");
        // Lengths and spacings are carried bit for bit.
        assert_eq!(t.length_m, Some(11_309.876_543_210_987));
        assert_eq!(t.track_spacing_m, Some(1_192.999_999_999_999_8));
        let back = frame.to_xy(t.center[0], t.center[1]);
        assert!((back.x - center.x).abs() < 1e-6 && (back.y - center.y).abs() < 1e-6);
        let grid =
            frame.true_to_grid_bearing_deg(t.major_bearing_deg.unwrap(), t.center[0], t.center[1]);
        assert!((grid - 256.5).abs() < 1e-9, "{grid}");
        let c = frame.convergence_deg(t.center[0], t.center[1]);
        assert!(
            c.abs() > 0.5,
            "the test needs a visible convergence, got {c}"
        );
    }
}
