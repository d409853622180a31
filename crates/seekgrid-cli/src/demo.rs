//! `seekgrid demo`: writes the bundled invented incidents into a folder, maps them, plans for
//! them, logs one planned search with `seekgrid log` (into a copy of the marine incident),
//! reviews both against their invented outcomes, and reports the credibility of their analysts
//! from an invented track record.
//!
//! The incidents live in `scenarios/` at the workspace root and are compiled into the binary,
//! so the demo runs from any folder.

use crate::{
    Failure, commit, credibility_report, map_incident, open_output, plan_incident, review_incident,
    run_time,
};
use seekgrid_render::OutputDir;
use seekgrid_render::layers::{Layer, OutputSelection, OutputSettings};
use std::path::Path;

/// The demo incidents are meant to be clean: a warning on them is a defect, so the demo runs as
/// `--strict` does.
const DEMO_STRICT: bool = true;

/// One bundled file: its path inside the demo's input folder and its contents.
type Bundled = (&'static str, &'static str);

const MARINE: &[Bundled] = &[
    (
        "incident.toml",
        include_str!("../../../scenarios/marine/incident.toml"),
    ),
    (
        "wind.csv",
        include_str!("../../../scenarios/marine/wind.csv"),
    ),
    (
        "coast.geojson",
        include_str!("../../../scenarios/marine/coast.geojson"),
    ),
    (
        "areas/kestrel-bay.geojson",
        include_str!("../../../scenarios/marine/areas/kestrel-bay.geojson"),
    ),
    (
        "tracks/helicopter-1.gpx",
        include_str!("../../../scenarios/marine/tracks/helicopter-1.gpx"),
    ),
];

const LAND: &[Bundled] = &[
    (
        "incident.toml",
        include_str!("../../../scenarios/land/incident.toml"),
    ),
    (
        "coast.geojson",
        include_str!("../../../scenarios/land/coast.geojson"),
    ),
    (
        "segments.geojson",
        include_str!("../../../scenarios/land/segments.geojson"),
    ),
    (
        "tracks/team-alpha.gpx",
        include_str!("../../../scenarios/land/tracks/team-alpha.gpx"),
    ),
    (
        "tracks/team-bravo.gpx",
        include_str!("../../../scenarios/land/tracks/team-bravo.gpx"),
    ),
];

/// The invented track record of the demo analysts.
const RECORD: &str = include_str!("../../../scenarios/credibility-record.csv");

/// Writes the invented track record into `credibility/input/` and its credibility report
/// (`credibility.md`, `credibility.json`) into `credibility/`.
fn credibility(dir: &OutputDir, out: &Path) -> Result<(), Failure> {
    let failed = |e: seekgrid_render::RenderError| Failure::failed(e.to_string());
    let folder = dir.subdir("credibility").map_err(failed)?;
    let input = folder.subdir("input").map_err(failed)?;
    let record = input
        .write("credibility-record.csv", RECORD.as_bytes())
        .map_err(failed)?;
    let report = credibility_report(
        &record,
        &seekgrid_prior::credibility::CredibilityOptions::default(),
    )?;
    seekgrid_render::credibility::write(&report, "input/credibility-record.csv", &folder)
        .map_err(failed)?;
    eprintln!(
        "credibility: invented record of {} incident(s) -> {}",
        report.incidents,
        out.join("credibility").display()
    );
    Ok(())
}

/// The options of `seekgrid log FILE --plan PLAN --unit UNIT`: the unit searched as planned,
/// over the plan's period.
fn log_as_planned(file: &Path, plan: &Path, unit: &str) -> crate::log::LogArgs {
    crate::log::LogArgs {
        file: file.to_owned(),
        unit: unit.to_owned(),
        plan: Some(plan.to_owned()),
        note: Some("searched as planned (invented for the demo)".to_owned()),
        ..Default::default()
    }
}

/// Writes the bundled files into `input`, making the subfolders they name.
fn write_inputs(input: &OutputDir, files: &[Bundled]) -> Result<(), Failure> {
    let failed = |e: seekgrid_render::RenderError| Failure::failed(e.to_string());
    for (name, text) in files {
        let mut parts: Vec<&str> = name.split('/').collect();
        let file_name = parts.pop().unwrap_or(name);
        let mut folder = None;
        for part in parts {
            let parent = folder.as_ref().unwrap_or(input);
            folder = Some(parent.subdir(part).map_err(failed)?);
        }
        folder
            .as_ref()
            .unwrap_or(input)
            .write(file_name, text.as_bytes())
            .map_err(failed)?;
    }
    Ok(())
}

/// Runs the demo into `out`, written as one unit like every output folder: the inputs, maps
/// and plans of both incidents appear together when all are done.
pub(crate) fn run(out: &Path, force: bool, run_id: &str) -> Result<(), Failure> {
    // The demo's inputs are its own outputs (copies of the bundled files): none to protect.
    let dir = open_output(out, force, run_id, &[])?;
    // The next period of each invented incident starts after its last logged search. In the
    // marine incident one unit of the plan then searches as planned and is logged with
    // `seekgrid log` (into a copy of the incident, never the bundled file).
    for (name, files, plan_start, logged_unit) in [
        (
            "marine",
            MARINE,
            "2026-06-14T22:30:00Z",
            Some("rescue-boat-1"),
        ),
        ("land", LAND, "2026-06-15T12:00:00Z", None),
    ] {
        let failed = |e: seekgrid_render::RenderError| Failure::failed(e.to_string());
        let case = dir.subdir(name).map_err(failed)?;
        let input = case.subdir("input").map_err(failed)?;
        write_inputs(&input, files)?;
        // Read from the staging folder, where the inputs are until the demo is complete.
        let incident = seekgrid_incident::load(&input.path().join("incident.toml"))?;
        let map_dir = case.subdir("map").map_err(failed)?;
        let summary = map_incident(
            &incident,
            &map_dir,
            None,
            &OutputSelection::map_default(),
            DEMO_STRICT,
        )?;
        eprintln!(
            "{name}: {} -> {} (POC in grid {:.4}, {} search(es), cumulative POS {:.4})",
            incident.title,
            out.join(name).join("map").display(),
            summary.poc_in_grid,
            summary.searches.len(),
            summary.pos_cumulative
        );
        let start = chrono::DateTime::parse_from_rfc3339(plan_start)
            .map(|d| d.with_timezone(&chrono::Utc))
            .map_err(|e| Failure::failed(e.to_string()))?;
        let plan_dir = case.subdir("plan").map_err(failed)?;
        let plan = plan_incident(
            &incident,
            &plan_dir,
            start,
            // The demo also writes the waypoints-only GPX, to show it.
            &OutputSelection::plan_default().with(Layer::Waypoints),
            OutputSettings {
                made_at: run_time(dir.run_id()),
                ..OutputSettings::default()
            },
            DEMO_STRICT,
        )?;
        eprintln!(
            "{name}: plan from {plan_start} -> {} (plan POS {:.4}; optimal allocation under exponential detection {:.4})",
            out.join(name).join("plan").display(),
            plan.pos_plan.unwrap_or(0.0),
            plan.pos_optimal_bound.unwrap_or(0.0)
        );
        let reviewed = match logged_unit {
            Some(unit) => {
                let logged = case.subdir("logged").map_err(failed)?;
                write_inputs(&logged, files)?;
                let file = logged.path().join("incident.toml");
                let message = crate::log::run(
                    &log_as_planned(&file, plan_dir.path(), unit),
                    chrono::Utc::now(),
                )?;
                // The message names the staging folder, which becomes `out` when complete.
                let message = message.replace(
                    &dir.path().display().to_string(),
                    &out.display().to_string(),
                );
                eprintln!(
                    "{name}: seekgrid log {} --plan {} --unit {unit}: {message}",
                    out.join(name).join("logged/incident.toml").display(),
                    out.join(name).join("plan").display(),
                );
                seekgrid_incident::load(&file)?
            }
            None => incident,
        };
        let review_dir = case.subdir("review").map_err(failed)?;
        let (_, doc) = review_incident(&reviewed, &review_dir)?;
        eprintln!(
            "{name}: review to {} -> {} ({} search(es), cumulative POS {:.4}{})",
            doc.end,
            out.join(name).join("review").display(),
            doc.searches.len(),
            doc.pos_cumulative,
            doc.pod_at_truth_cumulative
                .map_or(String::new(), |p| format!(
                    ", POD at the found position {p:.4}"
                ))
        );
    }
    credibility(&dir, out)?;
    commit(dir)?;
    eprintln!(
        "wrote {} as run {run_id}. The demo incidents and the track record are invented. {}",
        out.display(),
        seekgrid_render::summary::CAUTION
    );
    Ok(())
}
