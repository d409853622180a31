//! The tasking file: what a plan asked each unit to do, written by `seekgrid plan` as
//! `tasking.toml` in the plan's folder and read back by `seekgrid log --plan` to log a search
//! "as planned".
//!
//! Every number is stored at full `f64` precision (TOML floats written in Rust's shortest
//! round-trip form), not rounded as in the briefing, so that a search logged from the tasking
//! has exactly the pattern, spacing, sweep width and law the plan scored. Positions are
//! `[lon, lat]` WGS84 degrees and bearings true, as in the incident file; the pattern table has
//! the keys of an incident file's `pattern` (docs/incident-format.md), so it can be copied into a
//! `[[search]]` as it stands.

use crate::error::{ErrorKind, IncidentError};
use crate::model::Time;
use serde::{Deserialize, Serialize};
use std::path::Path;

/// The name of the tasking file in a plan folder.
pub const TASKING_FILE: &str = "tasking.toml";

/// The version of the tasking format written by this crate; [`read`] refuses any other.
pub const TASKING_FORMAT: u32 = 1;

/// A plan's tasking: the period and what each unit was asked to do.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Tasking {
    /// Format version, [`TASKING_FORMAT`].
    pub format: u32,
    /// The id of the plan run that wrote this tasking; logged searches carry it as `tasked_in`.
    pub run_id: String,
    /// The incident's title, to recognise the plan.
    pub incident_title: String,
    /// Start of the planned period (UTC).
    pub start: Time,
    /// End of the planned period: the latest end of any unit (UTC).
    pub end: Time,
    /// What each unit was asked to do, in the plan's order.
    #[serde(rename = "unit", default)]
    pub units: Vec<TaskedUnit>,
}

/// One unit's task.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TaskedUnit {
    /// The unit's id, as in the incident's `[[unit]]`.
    pub id: String,
    /// Start of this unit's period: the plan's start (UTC).
    pub start: Time,
    /// End of this unit's period: start + its hours on scene (UTC).
    pub end: Time,
    /// The detection law, as written in an incident file (`"inverse-cube"`, `"exponential"`,
    /// `"definite-range"`).
    pub detection: String,
    /// The sweep width to log for the pattern, metres: the unit's, or for a ground team the
    /// width its line sweeps (searchers x the per-searcher sweep width), which goes with the
    /// pattern's lane spacing.
    pub sweep_width_m: f64,
    /// Ground team: the number of searchers walking abreast.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub searchers: Option<u32>,
    /// The pattern, when the plan gave the unit an area or a datum pattern.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub pattern: Option<TaskedPattern>,
    /// The segment ids, when the plan assigned the (ground) unit to segments.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub segments: Vec<String>,
    /// The plan's POD for the task (probability), for reference.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub pod_planned: Option<f64>,
    /// The plan's POS for the task against the belief at the plan's start (probability), for
    /// reference.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub pos_planned: Option<f64>,
}

/// A pattern as an incident file writes it (docs/incident-format.md, `[[search]]`).
#[derive(Debug, Clone, Default, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TaskedPattern {
    /// `parallel-sweep`, `creeping-line`, `expanding-square` or `sector-search`.
    pub kind: String,
    /// Centre of the area or datum, `[lon, lat]` degrees.
    pub center: [f64; 2],
    /// Rectangle: length along the major axis, metres.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub length_m: Option<f64>,
    /// Rectangle: width across the major axis, metres.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub width_m: Option<f64>,
    /// Rectangle: true bearing of the major axis, degrees.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub major_bearing_deg: Option<f64>,
    /// Rectangle, expanding square: track spacing, metres.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub track_spacing_m: Option<f64>,
    /// Expanding square: number of legs.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub legs: Option<usize>,
    /// Sector search: radius, metres.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub radius_m: Option<f64>,
    /// Expanding square, sector search: true bearing of the first leg, degrees.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub first_leg_bearing_deg: Option<f64>,
    /// Sector search: number of sectors.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sectors: Option<usize>,
}

impl Tasking {
    /// The task of `unit`, if the plan had one.
    #[must_use]
    pub fn unit(&self, unit: &str) -> Option<&TaskedUnit> {
        self.units.iter().find(|u| u.id == unit)
    }

    /// The ids of the plan's units, in order.
    #[must_use]
    pub fn unit_ids(&self) -> Vec<&str> {
        self.units.iter().map(|u| u.id.as_str()).collect()
    }

    /// The tasking as TOML text, headed by a comment saying what it is.
    ///
    /// # Errors
    /// The serialiser's message (only for values TOML cannot hold, e.g. a NaN).
    pub fn to_toml(&self) -> Result<String, String> {
        let body = toml::to_string(self).map_err(|e| e.to_string())?;
        Ok(format!(
            "# Tasking of seekgrid plan run {}: what each unit was asked to do, at full precision.\n\
             # Read by `seekgrid log INCIDENT --plan FOLDER --unit ID`; do not edit.\n\n{body}",
            self.run_id
        ))
    }

    /// Parses tasking text read from `path` (named in errors).
    ///
    /// # Errors
    /// [`IncidentError`] with the line and column of a syntax error or a wrong field, or of a
    /// format version other than [`TASKING_FORMAT`].
    pub fn parse(path: &Path, text: &str) -> Result<Self, IncidentError> {
        let t: Self = toml::from_str(text).map_err(|e| {
            let offset = e.span().map_or(0, |s| s.start);
            IncidentError::at_offset(
                ErrorKind::Syntax,
                path,
                text,
                offset,
                format!(
                    "{}; a tasking file is written by seekgrid plan and is not meant to be edited",
                    e.message().trim().trim_end_matches('.').replace('\n', " ")
                ),
            )
        })?;
        if t.format != TASKING_FORMAT {
            return Err(IncidentError::whole_file(
                ErrorKind::Invalid,
                path,
                format!(
                    "tasking format {} is not the format {TASKING_FORMAT} this seekgrid reads; plan again with this version",
                    t.format
                ),
            ));
        }
        Ok(t)
    }
}

/// Reads the tasking of the plan folder `dir` (its [`TASKING_FILE`]).
///
/// # Errors
/// [`IncidentError`] when the file is missing or unreadable (with a hint that the folder may
/// not be a plan folder) or does not parse (see [`Tasking::parse`]).
pub fn read(dir: &Path) -> Result<Tasking, IncidentError> {
    let path = dir.join(TASKING_FILE);
    let text = std::fs::read_to_string(&path).map_err(|e| {
        IncidentError::whole_file(
            ErrorKind::Unreadable,
            &path,
            format!(
                "cannot read the plan's tasking: {e}; give the folder that seekgrid plan wrote (--out of seekgrid plan)"
            ),
        )
    })?;
    Tasking::parse(&path, &text)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn sample() -> Tasking {
        let t0: Time = "2026-03-10T11:00:00Z".parse().unwrap();
        Tasking {
            format: TASKING_FORMAT,
            run_id: "plan-test".into(),
            incident_title: "invented".into(),
            start: t0,
            end: t0 + chrono::TimeDelta::hours(3),
            units: vec![
                TaskedUnit {
                    id: "boat-1".into(),
                    start: t0,
                    end: t0 + chrono::TimeDelta::hours(3),
                    detection: "inverse-cube".into(),
                    sweep_width_m: 800.0,
                    searchers: None,
                    pattern: Some(TaskedPattern {
                        kind: "parallel-sweep".into(),
                        // Values with all 17 significant digits, and one far from 1.
                        center: [-35.012_345_678_901_23, 28.000_000_000_000_004],
                        length_m: Some(11_309.876_543_210_987),
                        width_m: Some(5_271.000_000_000_001),
                        major_bearing_deg: Some(256.499_999_999_999_94),
                        track_spacing_m: Some(1_192.999_999_999_999_8),
                        legs: None,
                        radius_m: None,
                        first_leg_bearing_deg: None,
                        sectors: None,
                    }),
                    segments: Vec::new(),
                    pod_planned: Some(0.598_765_432_101_234_5),
                    pos_planned: Some(1e-300),
                },
                TaskedUnit {
                    id: "shore-team".into(),
                    start: t0,
                    end: t0 + chrono::TimeDelta::hours(4),
                    detection: "exponential".into(),
                    sweep_width_m: 150.0,
                    searchers: Some(5),
                    pattern: None,
                    segments: vec!["S2".into()],
                    pod_planned: None,
                    pos_planned: None,
                },
            ],
        }
    }

    #[test]
    fn a_tasking_reads_back_bit_for_bit() {
        let t = sample();
        let text = t.to_toml().unwrap();
        let back = Tasking::parse(Path::new("tasking.toml"), &text).unwrap();
        assert_eq!(back, t, "{text}");
        let a = t.units[0].pattern.as_ref().unwrap();
        let b = back.units[0].pattern.as_ref().unwrap();
        assert_eq!(a.center[0].to_bits(), b.center[0].to_bits());
        assert_eq!(
            a.major_bearing_deg.unwrap().to_bits(),
            b.major_bearing_deg.unwrap().to_bits()
        );
        assert!(text.starts_with("# Tasking of seekgrid plan run plan-test:"));
        assert!(text.contains("start = \"2026-03-10T11:00:00Z\""), "{text}");
    }

    #[test]
    fn another_format_version_is_refused_with_the_fix() {
        let text = sample()
            .to_toml()
            .unwrap()
            .replace("format = 1", "format = 2");
        let e = Tasking::parse(Path::new("tasking.toml"), &text).unwrap_err();
        assert!(e.message.contains("plan again"), "{e}");
    }

    #[test]
    fn an_unknown_key_is_refused_at_its_line() {
        let text = sample().to_toml().unwrap() + "surprise = 1\n";
        let e = Tasking::parse(Path::new("tasking.toml"), &text).unwrap_err();
        assert!(e.line.is_some() && e.message.contains("surprise"), "{e}");
    }

    #[test]
    fn a_folder_without_a_tasking_says_which_folder_to_give() {
        let dir = tempfile::tempdir().unwrap();
        let e = read(dir.path()).unwrap_err();
        assert_eq!(e.kind, ErrorKind::Unreadable);
        assert!(e.message.contains("--out of seekgrid plan"), "{e}");
    }
}
