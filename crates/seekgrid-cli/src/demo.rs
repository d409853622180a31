//! `seekgrid demo`: writes the bundled invented incidents into a folder and maps each one.
//!
//! The incidents live in `scenarios/` at the workspace root and are compiled into the binary,
//! so the demo runs from any folder.

use crate::{Failure, map_incident, plan_incident};
use seekgrid_render::OutputDir;
use seekgrid_render::layers::OutputSelection;
use std::path::Path;

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

fn write_inputs(folder: &Path, files: &[Bundled], force: bool) -> Result<(), Failure> {
    for (name, text) in files {
        let path = folder.join(name);
        let parent = path.parent().unwrap_or(folder);
        let dir = OutputDir::create(parent, true).map_err(|e| Failure::failed(e.to_string()))?;
        if path.exists() && !force {
            return Err(Failure::bad_input(format!(
                "{} exists; use --force to replace the demo files",
                path.display()
            )));
        }
        let file_name = path.file_name().and_then(|n| n.to_str()).unwrap_or(name);
        dir.write(file_name, text.as_bytes())
            .map_err(|e| Failure::failed(e.to_string()))?;
    }
    Ok(())
}

/// Runs the demo into `out`.
pub(crate) fn run(out: &Path, force: bool) -> Result<(), Failure> {
    if out.exists()
        && out
            .read_dir()
            .map(|mut d| d.next().is_some())
            .unwrap_or(false)
        && !force
    {
        return Err(Failure::bad_input(format!(
            "{} exists and is not empty; choose another --out or add --force",
            out.display()
        )));
    }
    // The next period of each invented incident starts after its last logged search.
    for (name, files, plan_start) in [
        ("marine", MARINE, "2026-06-14T22:30:00Z"),
        ("land", LAND, "2026-06-15T12:00:00Z"),
    ] {
        let input = out.join(name).join("input");
        write_inputs(&input, files, force)?;
        let incident = seekgrid_incident::load(&input.join("incident.toml"))?;
        let map_dir = out.join(name).join("map");
        let summary = map_incident(
            &incident,
            &map_dir,
            None,
            &OutputSelection::map_default(),
            force,
        )?;
        eprintln!(
            "{name}: {} -> {} (POC in grid {:.4}, {} search(es), cumulative POS {:.4})",
            incident.title,
            map_dir.display(),
            summary.poc_in_grid,
            summary.searches.len(),
            summary.pos_cumulative
        );
        let start = chrono::DateTime::parse_from_rfc3339(plan_start)
            .map(|d| d.with_timezone(&chrono::Utc))
            .map_err(|e| Failure::failed(e.to_string()))?;
        let plan_dir = out.join(name).join("plan");
        let plan = plan_incident(
            &incident,
            &plan_dir,
            start,
            &OutputSelection::plan_default(),
            force,
        )?;
        eprintln!(
            "{name}: plan from {plan_start} -> {} (plan POS {:.4}, best possible {:.4})",
            plan_dir.display(),
            plan.pos_plan.unwrap_or(0.0),
            plan.pos_optimal_bound.unwrap_or(0.0)
        );
    }
    eprintln!(
        "The demo incidents are invented. {}",
        seekgrid_render::summary::CAUTION
    );
    Ok(())
}
