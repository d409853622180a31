//! `seekgrid log`: record a completed search in the incident file without hand-editing it.

use crate::{Failure, parse_time};
use chrono::{DateTime, Utc};
use seekgrid_incident::Incident;
use seekgrid_incident::edit::{EditError, EditOptions, IncidentFile, NewGeometry, NewSearch};
use seekgrid_incident::tasking::{self, TaskedPattern, TaskedUnit, Tasking};
use std::path::{Path, PathBuf};

/// The options of `seekgrid log`.
#[derive(clap::Args, Debug, Default)]
pub struct LogArgs {
    /// The incident file (TOML) to add the search to; it is validated, replaced atomically and
    /// its previous version kept beside it as FILE.bak-YYYYMMDDTHHMMSSZ
    pub file: PathBuf,
    /// The unit that searched (its id in the plan or the incident file)
    #[arg(long)]
    pub unit: String,
    /// As planned: a folder written by `seekgrid plan`; the unit's pattern, track spacing,
    /// sweep width and detection law are carried over exactly from its tasking.toml, the
    /// times default to the plan's period, and the search records the plan's run id
    #[arg(long, value_name = "FOLDER")]
    pub plan: Option<PathBuf>,
    /// As followed: the track recorded (GPX 1.1 with its trk points, or a GeoJSON
    /// LineString), copied under tracks/ beside the incident; the times are taken from the
    /// track when every point has one
    #[arg(long, value_name = "FILE")]
    pub track: Option<PathBuf>,
    /// As flown, given by hand: the pattern's kind
    #[arg(long, value_parser = ["parallel-sweep", "creeping-line", "expanding-square", "sector-search"])]
    pub pattern: Option<String>,
    /// Pattern: the centre of the area or the datum, longitude first (write --center=-35.1,28.0
    /// for a western longitude)
    #[arg(long, value_name = "LON,LAT", allow_hyphen_values = true)]
    pub center: Option<String>,
    /// Parallel sweep, creeping line: length along the major axis, metres
    #[arg(long)]
    pub length_m: Option<f64>,
    /// Parallel sweep, creeping line: width across the major axis, metres
    #[arg(long)]
    pub width_m: Option<f64>,
    /// Parallel sweep, creeping line: true bearing of the major axis, degrees
    #[arg(long)]
    pub major_bearing_deg: Option<f64>,
    /// Parallel sweep, creeping line, expanding square: track spacing, metres
    #[arg(long)]
    pub track_spacing_m: Option<f64>,
    /// Expanding square: number of legs (default 12)
    #[arg(long)]
    pub legs: Option<usize>,
    /// Sector search: radius, metres
    #[arg(long)]
    pub radius_m: Option<f64>,
    /// Expanding square, sector search: true bearing of the first leg, degrees (default 0)
    #[arg(long)]
    pub first_leg_bearing_deg: Option<f64>,
    /// Sector search: number of sectors (default 3)
    #[arg(long)]
    pub sectors: Option<usize>,
    /// Your sweep width for this unit, object and conditions, metres (for a track: that of the
    /// line the track represents). Required with --pattern, and with --track unless --plan gives it
    #[arg(long)]
    pub sweep_width_m: Option<f64>,
    /// The detection law (default: the plan's with --plan, else the file's default)
    #[arg(long, value_parser = clap::builder::PossibleValuesParser::new(seekgrid_search::DetectionLaw::ALL.map(seekgrid_search::DetectionLaw::name)))]
    pub detection: Option<String>,
    /// Start of the search (RFC 3339, UTC)
    #[arg(long)]
    pub start: Option<String>,
    /// End of the search (RFC 3339, UTC)
    #[arg(long)]
    pub end: Option<String>,
    /// The share of the pattern's track flown from its start, for a search cut short
    /// (0 < F <= 1)
    #[arg(long, value_name = "F")]
    pub done_fraction: Option<f64>,
    /// The search's id (default: the unit and the start time, e.g. boat-1-20260314T1100Z)
    #[arg(long)]
    pub id: Option<String>,
    /// Free text recorded with the search
    #[arg(long)]
    pub note: Option<String>,
}

fn bad(message: impl Into<String>) -> Failure {
    Failure::bad_input(message)
}

impl From<EditError> for Failure {
    fn from(e: EditError) -> Self {
        if e.is_bad_input() {
            Failure::bad_input(e.to_string())
        } else {
            Failure::failed(e.to_string())
        }
    }
}

/// A start and an end.
type TimeSpan = (DateTime<Utc>, DateTime<Utc>);

/// Where the search comes from.
enum Source {
    Plan,
    Track,
    Pattern,
}

/// Runs `seekgrid log` and returns the line to print. `now` stamps the backup and the comment
/// above the new table.
///
/// # Errors
/// A [`Failure`]: exit 2 for bad input (the message names the option or field and the fix),
/// 1 when a file cannot be written. The incident file is then untouched and nothing is left.
pub fn run(args: &LogArgs, now: DateTime<Utc>) -> Result<String, Failure> {
    let source = source_of(args)?;
    check_options(args, &source)?;
    let start_opt = args
        .start
        .as_deref()
        .map(|t| parse_time(t, "--start"))
        .transpose()?;
    let end_opt = args
        .end
        .as_deref()
        .map(|t| parse_time(t, "--end"))
        .transpose()?;

    let file = IncidentFile::open(&args.file)?;
    let incident = file.incident();
    let plan = read_plan(args, incident)?;
    let task = match &plan {
        Some(t) => Some(
            t.unit(&args.unit)
                .ok_or_else(|| not_in_plan(t, &args.unit))?,
        ),
        None => None,
    };
    let (geometry, track_times) = what_was_searched(args, &source, plan.as_ref(), task)?;
    let (start, end) = search_times(
        args,
        &source,
        (start_opt, end_opt),
        track_times,
        task.zip(plan.as_ref()),
    )?;
    let sweep_width_m = match (args.sweep_width_m, task) {
        (Some(w), _) => w,
        (None, Some(t)) => t.sweep_width_m,
        (None, None) => {
            return Err(bad(
                "give --sweep-width-m, your sweep width for this unit, object and conditions (seekgrid ships none)",
            ));
        }
    };
    let detection = args.detection.clone().or(task.map(|t| t.detection.clone()));
    let id = args
        .id
        .clone()
        .unwrap_or_else(|| format!("{}-{}", args.unit, start.format("%Y%m%dT%H%MZ")));
    if incident.searches.iter().any(|s| s.id == id) {
        return Err(bad(format!(
            "{}: a search with id \"{id}\" is already logged; give this one its own --id",
            args.file.display()
        )));
    }

    // A search given by hand or as a track must reach the incident's grid: the grid of the map
    // at the search's end, before it is applied.
    let grid_box = match source {
        Source::Plan => None,
        Source::Track | Source::Pattern => Some(grid_extent(incident, end)?),
    };
    let is_track = matches!(source, Source::Track);
    let check = |new: &Incident| -> Result<(), String> {
        let prepared = seekgrid_engine::prepare::prepare(new).map_err(|e| e.to_string())?;
        let Some(b) = &grid_box else {
            return Ok(());
        };
        let s = prepared
            .searches
            .iter()
            .find(|s| s.def.id == id)
            .ok_or_else(|| format!("internal: the new search \"{id}\" is missing"))?;
        // Named after what the planner gave: a pattern cut short is scored as a track.
        let (what, fix) = if is_track {
            ("track", "track file")
        } else {
            ("area", "--center")
        };
        if s.reaches(b) {
            Ok(())
        } else {
            Err(format!(
                "the {what} of search \"{id}\" lies wholly outside the incident's grid (more than one sweep width beyond it), where it can find nothing; check the {fix} (longitude first, [lon, lat])"
            ))
        }
    };

    let comment = comment_for(&source, plan.as_ref(), args.track.as_deref(), now);
    let search = NewSearch {
        id: id.clone(),
        unit: args.unit.clone(),
        start,
        end,
        sweep_width_m,
        detection,
        geometry,
        done_fraction: args.done_fraction,
        tasked_in: plan.as_ref().map(|p| p.run_id.clone()),
        note: args.note.clone(),
        comment: Some(comment),
    };
    let stamp = now.format("%Y%m%dT%H%M%SZ").to_string();
    let logged = file.append_search(
        &search,
        EditOptions {
            backup_stamp: &stamp,
            check: &check,
            before_commit: &mut || {},
        },
    )?;
    let mut message = format!(
        "logged search \"{id}\" ({}, {} to {}) into {}; the previous version is {}",
        args.unit,
        start.to_rfc3339(),
        end.to_rfc3339(),
        args.file.display(),
        logged.backup.display()
    );
    if let Some(t) = &logged.track {
        message.push_str(&format!("; the track is copied to {}", t.display()));
    }
    Ok(message)
}

/// Where the search comes from, from the options given (exactly one of --plan alone, --track,
/// --pattern).
fn source_of(args: &LogArgs) -> Result<Source, Failure> {
    Ok(match (&args.plan, &args.track, &args.pattern) {
        (_, Some(_), None) => Source::Track,
        (Some(_), None, None) => Source::Plan,
        (None, None, Some(_)) => Source::Pattern,
        (None, None, None) => {
            return Err(bad(
                "say what was searched: --plan FOLDER (as planned), --track FILE (as followed) or --pattern KIND with its options (as flown)",
            ));
        }
        (_, Some(_), Some(_)) | (Some(_), None, Some(_)) => {
            return Err(bad(
                "give either --pattern or --plan (whose pattern is used) or --track, not two",
            ));
        }
    })
}

/// Refuses options that do not fit the source: pattern options without --pattern, a done
/// fraction for a track or outside (0, 1], a sweep width that is not a positive number.
fn check_options(args: &LogArgs, source: &Source) -> Result<(), Failure> {
    let pattern_options = [
        ("--center", args.center.is_some()),
        ("--length-m", args.length_m.is_some()),
        ("--width-m", args.width_m.is_some()),
        ("--major-bearing-deg", args.major_bearing_deg.is_some()),
        ("--track-spacing-m", args.track_spacing_m.is_some()),
        ("--legs", args.legs.is_some()),
        ("--radius-m", args.radius_m.is_some()),
        (
            "--first-leg-bearing-deg",
            args.first_leg_bearing_deg.is_some(),
        ),
        ("--sectors", args.sectors.is_some()),
    ];
    if !matches!(source, Source::Pattern)
        && let Some((name, _)) = pattern_options.iter().find(|(_, given)| *given)
    {
        return Err(bad(format!(
            "{name} describes a pattern given by hand; use it with --pattern KIND (with --plan the plan's pattern is logged as it stands)"
        )));
    }
    if let Some(f) = args.done_fraction {
        if matches!(source, Source::Track) {
            return Err(bad(
                "--done-fraction applies to a pattern; a track is what was followed, so log the track as recorded",
            ));
        }
        if !(f > 0.0 && f <= 1.0) {
            return Err(bad(format!(
                "--done-fraction {f} is outside (0, 1]; give the share of the pattern's track flown from its start, e.g. 0.6"
            )));
        }
    }
    if let Some(w) = args.sweep_width_m
        && !(w.is_finite() && w > 0.0)
    {
        return Err(bad(format!(
            "--sweep-width-m {w} must be a positive number of metres"
        )));
    }
    Ok(())
}

/// The plan folder's tasking, when --plan is given; refused when made for another incident.
fn read_plan(args: &LogArgs, incident: &Incident) -> Result<Option<Tasking>, Failure> {
    let plan = args
        .plan
        .as_deref()
        .map(|dir| tasking::read(dir).map_err(|e| bad(e.to_string())))
        .transpose()?;
    if let Some(t) = &plan
        && t.incident_title != incident.title
    {
        return Err(bad(format!(
            "the plan in {} was made for the incident \"{}\", not \"{}\"; give the plan folder of this incident",
            args.plan.as_deref().unwrap_or(Path::new("")).display(),
            t.incident_title,
            incident.title
        )));
    }
    Ok(plan)
}

/// What was searched: the plan's pattern for the unit, the track (to be copied beside the
/// incident, with its first and last times when every point has one), or the pattern given.
fn what_was_searched(
    args: &LogArgs,
    source: &Source,
    plan: Option<&Tasking>,
    task: Option<&TaskedUnit>,
) -> Result<(NewGeometry, Option<TimeSpan>), Failure> {
    Ok(match source {
        Source::Plan => {
            let task = task.expect("a plan source has a task");
            if args.sweep_width_m.is_some() || args.detection.is_some() {
                return Err(bad(
                    "as planned, the plan's sweep width and detection law are logged; to record other values give the pattern by hand (--pattern ...) or the track (--track ...)",
                ));
            }
            let pattern = task.pattern.clone().ok_or_else(|| {
                bad(format!(
                    "unit \"{}\" was tasked to segment(s) {} in plan run {}, not to a pattern; log the team's recorded track with --track FILE --plan {}",
                    args.unit,
                    task.segments.join(", "),
                    plan.map_or("", |p| p.run_id.as_str()),
                    args.plan.as_deref().unwrap_or(Path::new("")).display()
                ))
            })?;
            (NewGeometry::Pattern(pattern), None)
        }
        Source::Track => {
            let path = args.track.clone().expect("a track source has a track");
            let (_, times) =
                seekgrid_incident::geofiles::read_track(&path).map_err(|e| bad(e.to_string()))?;
            let all: Option<Vec<DateTime<Utc>>> = times.iter().copied().collect();
            let span = all.and_then(|t| Some((*t.first()?, *t.last()?)));
            (NewGeometry::CopyTrack(path), span)
        }
        Source::Pattern => (NewGeometry::Pattern(pattern_from_options(args)?), None),
    })
}

/// The search's start and end: the options, else the track's times, else the plan's period;
/// refused when missing, reversed, or outside the unit's planned period.
fn search_times(
    args: &LogArgs,
    source: &Source,
    (start_opt, end_opt): (Option<DateTime<Utc>>, Option<DateTime<Utc>>),
    track_times: Option<TimeSpan>,
    tasked: Option<(&TaskedUnit, &Tasking)>,
) -> Result<TimeSpan, Failure> {
    let task = tasked.map(|(t, _)| t);
    let start = start_opt
        .or(track_times.map(|t| t.0))
        .or(task.map(|t| t.start));
    let end = end_opt.or(track_times.map(|t| t.1)).or(task.map(|t| t.end));
    let (Some(start), Some(end)) = (start, end) else {
        return Err(bad(match source {
            Source::Track => {
                "the track has no time at every point; give the search's times with --start and --end (RFC 3339, UTC)"
            }
            _ => "give the search's times with --start and --end (RFC 3339, UTC)",
        }));
    };
    if start > end {
        return Err(bad(format!(
            "the search starts ({}) after it ends ({}); check --start and --end",
            start.to_rfc3339(),
            end.to_rfc3339()
        )));
    }
    if let Some((t, plan)) = tasked
        && (start < t.start || end > t.end)
    {
        return Err(bad(format!(
            "the search ({} to {}) is outside the period of unit \"{}\" in plan run {} ({} to {}); check --start and --end, or log it without --plan if it was not this tasking",
            start.to_rfc3339(),
            end.to_rfc3339(),
            args.unit,
            plan.run_id,
            t.start.to_rfc3339(),
            t.end.to_rfc3339()
        )));
    }
    Ok((start, end))
}

/// The comment written above the new table: when and how it was logged.
fn comment_for(
    source: &Source,
    plan: Option<&Tasking>,
    track: Option<&Path>,
    now: DateTime<Utc>,
) -> String {
    match (source, plan, track) {
        (Source::Plan, Some(p), _) => format!(
            "logged by seekgrid log at {} as planned in plan run {}",
            now.format("%Y-%m-%dT%H:%M:%SZ"),
            p.run_id
        ),
        (Source::Track, _, Some(t)) => format!(
            "logged by seekgrid log at {} from the track {}",
            now.format("%Y-%m-%dT%H:%M:%SZ"),
            t.file_name().unwrap_or_default().to_string_lossy()
        ),
        _ => format!(
            "logged by seekgrid log at {}",
            now.format("%Y-%m-%dT%H:%M:%SZ")
        ),
    }
}

fn not_in_plan(t: &Tasking, unit: &str) -> Failure {
    bad(format!(
        "unit \"{unit}\" is not in plan run {}; the plan's units are: {}",
        t.run_id,
        t.unit_ids().join(", ")
    ))
}

/// The pattern given by hand, with every option its kind needs.
fn pattern_from_options(a: &LogArgs) -> Result<TaskedPattern, Failure> {
    let kind = a.pattern.clone().unwrap_or_default();
    let center = a
        .center
        .as_deref()
        .ok_or_else(|| bad(format!("--pattern {kind} needs --center LON,LAT")))?;
    let center = parse_center(center)?;
    let need =
        |v: Option<f64>, name: &str| v.ok_or_else(|| bad(format!("--pattern {kind} needs {name}")));
    let mut p = TaskedPattern {
        kind: kind.clone(),
        center,
        ..Default::default()
    };
    let misplaced: Vec<&str> = match kind.as_str() {
        "parallel-sweep" | "creeping-line" => {
            p.length_m = Some(need(a.length_m, "--length-m")?);
            p.width_m = Some(need(a.width_m, "--width-m")?);
            p.major_bearing_deg = Some(need(a.major_bearing_deg, "--major-bearing-deg")?);
            p.track_spacing_m = Some(need(a.track_spacing_m, "--track-spacing-m")?);
            [
                ("--legs", a.legs.is_some()),
                ("--radius-m", a.radius_m.is_some()),
                ("--first-leg-bearing-deg", a.first_leg_bearing_deg.is_some()),
                ("--sectors", a.sectors.is_some()),
            ]
            .iter()
            .filter(|(_, g)| *g)
            .map(|(n, _)| *n)
            .collect()
        }
        "expanding-square" => {
            p.track_spacing_m = Some(need(a.track_spacing_m, "--track-spacing-m")?);
            p.legs = a.legs;
            p.first_leg_bearing_deg = a.first_leg_bearing_deg;
            [
                ("--length-m", a.length_m.is_some()),
                ("--width-m", a.width_m.is_some()),
                ("--major-bearing-deg", a.major_bearing_deg.is_some()),
                ("--radius-m", a.radius_m.is_some()),
                ("--sectors", a.sectors.is_some()),
            ]
            .iter()
            .filter(|(_, g)| *g)
            .map(|(n, _)| *n)
            .collect()
        }
        _ => {
            p.radius_m = Some(need(a.radius_m, "--radius-m")?);
            p.first_leg_bearing_deg = a.first_leg_bearing_deg;
            p.sectors = a.sectors;
            [
                ("--length-m", a.length_m.is_some()),
                ("--width-m", a.width_m.is_some()),
                ("--major-bearing-deg", a.major_bearing_deg.is_some()),
                ("--track-spacing-m", a.track_spacing_m.is_some()),
                ("--legs", a.legs.is_some()),
            ]
            .iter()
            .filter(|(_, g)| *g)
            .map(|(n, _)| *n)
            .collect()
        }
    };
    if !misplaced.is_empty() {
        return Err(bad(format!(
            "--pattern {kind} takes no {}; remove it",
            misplaced.join(", ")
        )));
    }
    Ok(p)
}

fn parse_center(text: &str) -> Result<[f64; 2], Failure> {
    let parts: Vec<&str> = text.split(',').map(str::trim).collect();
    let nums: Option<Vec<f64>> = parts.iter().map(|p| p.parse::<f64>().ok()).collect();
    match nums.as_deref() {
        Some([lon, lat]) if lon.is_finite() && lat.is_finite() => Ok([*lon, *lat]),
        _ => Err(bad(format!(
            "--center \"{text}\" is not LON,LAT; write it as --center=-35.1,28.0 (longitude first, degrees)"
        ))),
    }
}

/// The extent of the incident's grid in its working frame, as the map at `at` has it (before
/// the new search).
fn grid_extent(
    incident: &Incident,
    at: DateTime<Utc>,
) -> Result<seekgrid_core::ProjectedBox, Failure> {
    let at = at.max(incident.reference_time);
    let grid = seekgrid_engine::timeline::grid_at(
        incident,
        &seekgrid_engine::MapOptions { at: Some(at) },
        &|_, _, _| {},
    )
    .map_err(|e| bad(format!("{}: {e}", incident.path.display())))?;
    Ok(grid.extent())
}
