//! The `seekgrid` command. Thin: parses arguments, calls the libraries, prints one clear
//! message per error, and exits 0 (ok), 1 (failure) or 2 (bad input).

mod demo;
mod log;

use clap::builder::PossibleValue;
use clap::{Parser, Subcommand, ValueEnum};
use seekgrid_engine::timeline::{MapError, MapOptions};
use seekgrid_incident::model::{Item, PositionFormat};
use seekgrid_incident::{Incident, IncidentErrors};
use seekgrid_render::gpx;
use seekgrid_render::layers::{Computed, Layer, OutputSelection, OutputSettings};
use seekgrid_render::provenance::{InputDigest, Provenance, Seed};
use seekgrid_render::summary::CAUTION;
use seekgrid_render::{OutputDir, OutputOptions, RenderError};
use std::io::IsTerminal;
use std::path::{Path, PathBuf};
use std::process::ExitCode;
use std::sync::LazyLock;

const AFTER_HELP: &str = "CAUTION: seekgrid is decision support. Its output is only as good as its inputs (positions, errors, sweep widths, leeway, environment), and it ships no authoritative sweep widths or leeway values. The search mission coordinator decides, following the governing SAR manual, local procedures and licensed practice.";

#[derive(Parser)]
#[command(
    name = "seekgrid",
    version,
    about = "Probability maps, search updates and search plans for search and rescue planners",
    long_about = "seekgrid combines analysts' weighted scenarios of where a missing person or craft may be into one probability grid with an explicit rest of world, applies completed searches as Bayesian updates, follows drifting targets, and exports every layer for GIS viewers.",
    after_help = AFTER_HELP
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Validate an incident file and every file it names, without computing anything
    #[command(after_help = AFTER_HELP)]
    Check(CheckArgs),
    /// Compute the probability map at a time and write its layers
    #[command(after_help = AFTER_HELP)]
    Map(MapArgs),
    /// Plan the next search period: the optimal allocation of the units' effort under
    /// exponential detection (the best possible POS when every unit detects by that law) and a
    /// practical plan (one area or segment per unit, pattern, spacing, waypoints)
    #[command(after_help = AFTER_HELP)]
    Plan(PlanArgs),
    /// Read a track record across incidents: each analyst's mean log score and suggested
    /// credibility weight, whether the analysts' biases share a direction, and whether the pooled
    /// map beat the best single analyst. Prints a table; with --out also writes credibility.md
    /// and credibility.json
    #[command(after_help = AFTER_HELP)]
    Credibility(CredibilityArgs),
    /// Review an ended incident against its outcome: POS and effort over time, the searches
    /// that passed over the found position, each analyst's and scenario's score, and what the
    /// same effort could have achieved allocated optimally (review.json, review.md, charts as
    /// PNG and GeoJSON layers)
    #[command(after_help = AFTER_HELP)]
    Review(ReviewArgs),
    /// Record a completed search in the incident file: as planned (--plan), as followed
    /// (--track) or as flown (--pattern). The file keeps its comments, the new text is
    /// validated before it replaces the old, and the old is kept as FILE.bak-TIME
    #[command(after_help = AFTER_HELP, allow_negative_numbers = true)]
    Log(Box<log::LogArgs>),
    /// Write the bundled invented demo incidents into a folder, map them and plan for them
    #[command(after_help = AFTER_HELP)]
    Demo {
        /// Output folder (created; an existing non-empty folder needs --force). Written as one
        /// unit: it appears whole when the run ends, never half-written
        #[arg(long)]
        out: PathBuf,
        /// Replace an existing output folder: the whole earlier folder goes when this run is
        /// complete, no file of it stays
        #[arg(long)]
        force: bool,
    },
}

/// The options of `seekgrid check`.
#[derive(clap::Args)]
struct CheckArgs {
    /// The incident file (TOML)
    file: PathBuf,
    /// Treat every warning as an error: exit 2 and write nothing when there is one
    #[arg(long)]
    strict: bool,
}

/// The options of `seekgrid map`.
#[derive(clap::Args)]
struct MapArgs {
    /// The incident file (TOML)
    file: PathBuf,
    /// Output folder (created; an existing non-empty folder needs --force). Written as one
    /// unit: it appears whole when the run ends, never half-written
    #[arg(long)]
    out: PathBuf,
    /// The time the map describes (RFC 3339, UTC): searches ended by then are applied and
    /// drift is carried to it. Default: the end of the last logged search
    #[arg(long)]
    at: Option<String>,
    /// Comma-separated output layers to write (default: every layer listed here); a layer
    /// with nothing to show (no search, no drift, no segment) writes nothing and
    /// summary.json says why
    #[arg(long, value_enum, value_delimiter = ',')]
    outputs: Vec<MapLayer>,
    /// Also print the summary as JSON on standard output
    #[arg(long)]
    json: bool,
    /// Treat every warning as an error: exit 2 and write nothing when there is one
    #[arg(long)]
    strict: bool,
    /// Replace an existing output folder: the whole earlier folder goes when this run is
    /// complete, no file of it stays
    #[arg(long)]
    force: bool,
    /// Print how long each phase took (wall clock and CPU seconds) on standard error; the
    /// same figures are in summary.json under `phases`
    #[arg(long)]
    verbose: bool,
}

/// The options of `seekgrid plan`.
#[derive(clap::Args)]
struct PlanArgs {
    /// The incident file (TOML), with its [[unit]] list
    file: PathBuf,
    /// Start of the period (RFC 3339, UTC): the plan works on the belief at that time,
    /// after the searches logged by then
    #[arg(long)]
    start: String,
    /// Output folder (created; an existing non-empty folder needs --force). Written as one
    /// unit: it appears whole when the run ends, never half-written
    #[arg(long)]
    out: PathBuf,
    /// Comma-separated output layers to write (default: summary, probability, containment,
    /// heatmap, segments and every plan layer but waypoints: plan, routes, briefing,
    /// plan-map, tasking, effort)
    #[arg(long, value_enum, value_delimiter = ',')]
    outputs: Vec<PlanLayer>,
    /// Longest GPS point and route name in plan.gpx and plan-waypoints.gpx, characters (4 or
    /// more): names are the unit's code and the point's number (`RESBO1 07`), unique within
    /// this length; the full name is in each point's description. Many handheld sets keep 10
    /// to 14 characters, older ones 6 (from memory)
    #[arg(long, value_name = "N", default_value_t = gpx::DEFAULT_NAME_LENGTH)]
    gps_name_length: usize,
    /// Most points in one GPS route (2 or more); a longer route is split into numbered parts.
    /// Default 50: many handheld sets take routes of at most 50 points (from memory; newer
    /// ones 250)
    #[arg(long, value_name = "N", default_value_t = gpx::DEFAULT_ROUTE_POINTS)]
    gps_route_points: usize,
    /// How positions are written in plan.md and the GPS files' descriptions: ddm (degrees
    /// and decimal minutes, the default), dd, dms, mgrs, usng, utm (UPS at the poles) or grid
    /// (the working CRS's easting and northing). Over the incident's `positions`; a unit's own
    /// `positions` in the incident file wins over both
    #[arg(long, value_name = "FORMAT", value_parser = parse_positions)]
    positions: Option<PositionFormat>,
    /// Also print the summary as JSON on standard output
    #[arg(long)]
    json: bool,
    /// Treat every warning as an error: exit 2 and write nothing when there is one
    #[arg(long)]
    strict: bool,
    /// Replace an existing output folder: the whole earlier folder goes when this run is
    /// complete, no file of it stays
    #[arg(long)]
    force: bool,
    /// Print how long each phase took (wall clock and CPU seconds) on standard error; the
    /// same figures are in summary.json under `phases`
    #[arg(long)]
    verbose: bool,
}

/// The options of `seekgrid credibility`.
#[derive(clap::Args)]
struct CredibilityArgs {
    /// The track record (CSV, as appended by `seekgrid review ... --record FILE`)
    record: PathBuf,
    /// Also write credibility.md and credibility.json into this folder (created; an
    /// existing non-empty folder needs --force)
    #[arg(long)]
    out: Option<PathBuf>,
    /// Shrinkage constant k, in incidents: an analyst with n incidents keeps n/(n+k) of
    /// the weight Bayes' rule gives them and takes the rest from the equal share
    #[arg(long, default_value_t = seekgrid_prior::credibility::DEFAULT_SHRINKAGE_INCIDENTS)]
    shrinkage_incidents: f64,
    /// Print the report as JSON on standard output instead of the table
    #[arg(long)]
    json: bool,
    /// Replace an existing output folder whole
    #[arg(long)]
    force: bool,
}

/// The options of `seekgrid review`.
#[derive(clap::Args)]
struct ReviewArgs {
    /// The incident file (TOML), with its `[outcome]` table when the incident has ended
    /// (without one the review ends at the last logged search, scores no analyst, and says
    /// what it could not compute)
    file: PathBuf,
    /// Output folder (created; an existing non-empty folder needs --force). Written as one
    /// unit: it appears whole when the run ends, never half-written
    #[arg(long)]
    out: PathBuf,
    /// Replace an existing output folder: the whole earlier folder goes when this run is
    /// complete, no file of it stays
    #[arg(long)]
    force: bool,
    /// Also append one row per analyst and one for the pool (log score, rank, bias, weight
    /// used and implied) to this track record (CSV, created with its header when missing;
    /// read by `seekgrid credibility`). Needs a found position inside the grid
    #[arg(long, value_name = "FILE.csv")]
    record: Option<PathBuf>,
}

/// A layer `seekgrid map` can write: its `--outputs` values and their help come from the
/// registry ([`Layer`]), so a new layer is offered and explained without touching this file.
#[derive(Debug, Clone, Copy)]
struct MapLayer(Layer);

impl ValueEnum for MapLayer {
    fn value_variants<'a>() -> &'a [Self] {
        static LAYERS: LazyLock<Vec<MapLayer>> = LazyLock::new(|| {
            Layer::ALL
                .iter()
                .filter(|l| !l.plan_only())
                .map(|l| MapLayer(*l))
                .collect()
        });
        &LAYERS
    }

    fn to_possible_value(&self) -> Option<PossibleValue> {
        Some(layer_value(self.0))
    }
}

/// A layer `seekgrid plan` can write: any layer.
#[derive(Debug, Clone, Copy)]
struct PlanLayer(Layer);

impl ValueEnum for PlanLayer {
    fn value_variants<'a>() -> &'a [Self] {
        static LAYERS: LazyLock<Vec<PlanLayer>> =
            LazyLock::new(|| Layer::ALL.iter().map(|l| PlanLayer(*l)).collect());
        &LAYERS
    }

    fn to_possible_value(&self) -> Option<PossibleValue> {
        Some(layer_value(self.0))
    }
}

/// A layer as `--help` shows it: its name, then its files and what they hold.
fn layer_value(layer: Layer) -> PossibleValue {
    let sidecars = if layer.sidecars().is_empty() {
        String::new()
    } else {
        format!(" (+ {})", layer.sidecars().join(", "))
    };
    PossibleValue::new(layer.name()).help(format!(
        "{}{sidecars}: {}",
        layer.files().join(", "),
        layer.description()
    ))
}

/// An error with the exit code it deserves.
struct Failure {
    code: u8,
    message: String,
}

impl Failure {
    fn bad_input(message: impl Into<String>) -> Self {
        Self {
            code: 2,
            message: message.into(),
        }
    }
    fn failed(message: impl Into<String>) -> Self {
        Self {
            code: 1,
            message: message.into(),
        }
    }
}

impl From<IncidentErrors> for Failure {
    fn from(e: IncidentErrors) -> Self {
        Self::bad_input(e.to_string())
    }
}

fn main() -> ExitCode {
    let cli = Cli::parse();
    match run(cli) {
        Ok(()) => ExitCode::SUCCESS,
        Err(f) => {
            eprintln!("seekgrid: {}", f.message);
            ExitCode::from(f.code)
        }
    }
}

fn run(cli: Cli) -> Result<(), Failure> {
    let run_id = run_id();
    match cli.command {
        Command::Check(a) => check_command(a),
        Command::Map(a) => map_command(a, &run_id),
        Command::Plan(a) => plan_command(a, &run_id),
        Command::Credibility(a) => credibility_command(a, &run_id),
        Command::Review(a) => review_command(a, &run_id),
        Command::Log(args) => {
            let message = log::run(&args, chrono::Utc::now())?;
            eprintln!("{message}\n{CAUTION}");
            Ok(())
        }
        Command::Demo { out, force } => demo::run(&out, force, &run_id),
    }
}

/// `seekgrid check`: validates the incident, sizes the run and reports its warnings.
fn check_command(a: CheckArgs) -> Result<(), Failure> {
    let CheckArgs { file, strict } = a;
    let incident = seekgrid_incident::load(&file)?;
    // Preparing projects every position and validates every shape and search.
    let prepared = seekgrid_engine::prepare::prepare(&incident)
        .map_err(|e| located(&incident, Some(e.item()), &e.to_string()))?;
    let size = sized(&incident)?;
    let warnings = seekgrid_engine::warnings::before_computing(&incident, &prepared)
        .map_err(|e| located(&incident, e.item(), &e.to_string()))?;
    report_warnings(&incident, &warnings, strict)?;
    println!(
        "{}: ok ({} analyst(s), {} scenario(s), {} search(es), {} unit(s)); {}",
        file.display(),
        incident.analysts.len(),
        incident.scenarios.len(),
        incident.searches.len(),
        incident.units.len(),
        describe_size(&size)
    );
    for line in forecast_lines(&incident) {
        println!("{line}");
    }
    Ok(())
}

/// What `check` says of each forecast file a drift reads: variables, grid, time span and what
/// it will use.
fn forecast_lines(incident: &seekgrid_incident::Incident) -> Vec<String> {
    use seekgrid_incident::model::{ScenarioKind, VectorDef};
    let mut out = Vec::new();
    for s in &incident.scenarios {
        let ScenarioKind::Drift(d) = &s.kind else {
            continue;
        };
        for (key, v) in [("current", &d.current), ("wind", &d.wind)] {
            if let VectorDef::Forecast { grid, .. } = v {
                out.push(format!(
                    "  scenario \"{}\" {key}: {}",
                    s.id,
                    grid.describe()
                ));
            }
        }
    }
    out
}

/// `seekgrid map`: the map at a time, its layers written into one output folder.
fn map_command(a: MapArgs, run_id: &str) -> Result<(), Failure> {
    let MapArgs {
        file,
        out,
        at,
        outputs,
        json,
        strict,
        force,
        verbose,
    } = a;
    let selection = chosen(outputs.iter().map(|l| l.0), OutputSelection::map_default);
    let at = at.map(|t| parse_time(&t, "--at")).transpose()?;
    let incident = seekgrid_incident::load(&file)?;
    sized(&incident)?;
    let mut dir = open_output(&out, force, run_id, &incident.input_files())?;
    dir.set_provenance(provenance(&incident, run_id)?);
    let summary = map_incident(&incident, &dir, at, &selection, strict)?;
    commit(dir)?;
    if verbose {
        print_phases(&summary.phases);
    }
    if json {
        print_json(&summary)?;
    } else {
        eprintln!("{}", one_line(&summary, &out, run_id));
    }
    Ok(())
}

/// `seekgrid plan`: the plan of the next period and its layers.
fn plan_command(a: PlanArgs, run_id: &str) -> Result<(), Failure> {
    let PlanArgs {
        file,
        start,
        out,
        outputs,
        gps_name_length,
        gps_route_points,
        positions,
        json,
        strict,
        force,
        verbose,
    } = a;
    let selection = chosen(outputs.iter().map(|l| l.0), OutputSelection::plan_default);
    let gps = gpx::GpsOptions {
        name_length: gps_name_length,
        route_points: gps_route_points,
    };
    gps.validate()
        .map_err(|e| Failure::bad_input(e.to_string()))?;
    let settings = OutputSettings {
        gps,
        made_at: run_time(run_id),
        positions,
    };
    let start = parse_time(&start, "--start")?;
    let incident = seekgrid_incident::load(&file)?;
    sized(&incident)?;
    let mut dir = open_output(&out, force, run_id, &incident.input_files())?;
    dir.set_provenance(provenance(&incident, run_id)?);
    let summary = plan_incident(&incident, &dir, start, &selection, settings, strict)?;
    commit(dir)?;
    if verbose {
        print_phases(&summary.phases);
    }
    if json {
        print_json(&summary)?;
    } else {
        eprintln!(
            "wrote {} as run {run_id} (plan POS {:.4}; optimal allocation under exponential detection {:.4})\n{}",
            out.display(),
            summary.pos_plan.unwrap_or(0.0),
            summary.pos_optimal_bound.unwrap_or(0.0),
            CAUTION
        );
    }
    Ok(())
}

/// `seekgrid credibility`: the report of a track record.
fn credibility_command(a: CredibilityArgs, run_id: &str) -> Result<(), Failure> {
    let CredibilityArgs {
        record,
        out,
        shrinkage_incidents,
        json,
        force,
    } = a;
    let options = seekgrid_prior::credibility::CredibilityOptions {
        shrinkage_incidents,
    };
    let report = credibility_report(&record, &options)?;
    let name = record.display().to_string();
    if let Some(out) = &out {
        let dir = open_output(out, force, run_id, std::slice::from_ref(&record))?;
        seekgrid_render::credibility::write(&report, &name, &dir)
            .map_err(|e| Failure::failed(e.to_string()))?;
        commit(dir)?;
        eprintln!("wrote {} as run {run_id}", out.display());
    }
    if json {
        let doc = seekgrid_render::credibility::credibility_json(&report, &name, None);
        print_json(&doc)?;
    } else {
        print!(
            "{}",
            seekgrid_render::credibility::credibility_table(&report, &name)
        );
    }
    Ok(())
}

/// `seekgrid review`: the review of an ended incident, and its rows appended to a track record.
fn review_command(a: ReviewArgs, run_id: &str) -> Result<(), Failure> {
    let ReviewArgs {
        file,
        out,
        force,
        record,
    } = a;
    let incident = seekgrid_incident::load(&file)?;
    sized(&incident)?;
    let mut inputs = incident.input_files();
    inputs.extend(record.iter().cloned());
    let mut dir = open_output(&out, force, run_id, &inputs)?;
    dir.set_provenance(provenance(&incident, run_id)?);
    let (review, doc) = review_incident(&incident, &dir)?;
    // The rows are made before the folder is put in place, so a review that cannot be
    // recorded says so before anything is written.
    let rows = match &record {
        Some(_) => Some(
            seekgrid_render::record::record_rows(&file, &review)
                .map_err(|e| Failure::bad_input(format!("--record: nothing appended: {e}")))?,
        ),
        None => None,
    };
    commit(dir)?;
    if let (Some(path), Some(rows)) = (&record, rows) {
        let appended =
            seekgrid_render::record::append_record(path, &rows, run_id).map_err(|e| match e {
                RenderError::Io { .. } | RenderError::Internal(_) => Failure::failed(e.to_string()),
                other => Failure::bad_input(format!(
                    "{}: the review is written to {}, but no row was appended: {other}",
                    path.display(),
                    out.display()
                )),
            })?;
        eprintln!(
            "appended {} row(s) to {}{}",
            appended.rows_added,
            path.display(),
            if appended.created {
                " (created with its header)"
            } else {
                ""
            }
        );
    }
    eprintln!(
        "wrote {} as run {run_id} (review to {}, {} search(es), cumulative POS {:.4}{})\n{}",
        out.display(),
        doc.end,
        doc.searches.len(),
        doc.pos_cumulative,
        doc.pod_at_truth_cumulative
            .map_or(String::new(), |p| format!(
                ", POD at the found position {p:.4}"
            )),
        CAUTION
    );
    Ok(())
}

/// Reads a track record and builds its credibility report; shared by `credibility` and `demo`.
fn credibility_report(
    record: &Path,
    options: &seekgrid_prior::credibility::CredibilityOptions,
) -> Result<seekgrid_engine::credibility::CredibilityReport, Failure> {
    if !(options.shrinkage_incidents.is_finite() && options.shrinkage_incidents >= 0.0) {
        return Err(Failure::bad_input(format!(
            "--shrinkage-incidents {} must be a number of incidents, 0 or more, such as 3",
            options.shrinkage_incidents
        )));
    }
    let lines = seekgrid_incident::record::read_record(record)
        .map_err(|e| Failure::bad_input(e.to_string()))?;
    let rows: Vec<_> = lines.into_iter().map(|l| l.row).collect();
    seekgrid_engine::credibility::credibility(&rows, options)
        .map_err(|e| Failure::bad_input(format!("{}: {e}", record.display())))
}

fn one_line(s: &seekgrid_render::summary::Summary, out: &Path, run_id: &str) -> String {
    format!(
        "wrote {} as run {run_id} ({} x {} cells of {} m, POC in grid {:.4}, outside {:.4}, {} search(es), cumulative POS {:.4})\n{}",
        out.display(),
        s.grid.rows,
        s.grid.cols,
        s.grid.cell_m,
        s.poc_in_grid,
        s.poc_outside,
        s.searches.len(),
        s.pos_cumulative,
        CAUTION
    )
}

/// Parses the time given to the command-line option `name` (named in the message).
fn parse_time(t: &str, name: &str) -> Result<chrono::DateTime<chrono::Utc>, Failure> {
    chrono::DateTime::parse_from_rfc3339(t.trim())
        .map(|d| d.with_timezone(&chrono::Utc))
        .map_err(|_| {
            Failure::bad_input(format!(
                "{name} \"{t}\" is not an RFC 3339 time; write it as 2026-06-14T21:00:00Z"
            ))
        })
}

/// A bad-input failure at the place in the incident file of the item it concerns
/// (`FILE:LINE:COL: message`), or at the file when no item is named.
fn located(incident: &Incident, item: Option<Item>, message: &str) -> Failure {
    match item {
        Some(item) => Failure::bad_input(incident.error_at(&item, message).to_string()),
        None => Failure::bad_input(format!("{}: {message}", incident.path.display())),
    }
}

/// The layers chosen with `--outputs`, or `default` when none is given.
fn chosen(
    layers: impl Iterator<Item = Layer>,
    default: fn() -> OutputSelection,
) -> OutputSelection {
    let layers: Vec<Layer> = layers.collect();
    if layers.is_empty() {
        default()
    } else {
        OutputSelection::of(&layers)
    }
}

/// Prints `value` as pretty JSON on standard output (`--json`).
fn print_json(value: &impl serde::Serialize) -> Result<(), Failure> {
    let text = serde_json::to_string_pretty(value).map_err(|e| Failure::failed(e.to_string()))?;
    println!("{text}");
    Ok(())
}

/// Prints each warning on standard error as `FILE:LINE:COL: warning: …`; under `--strict`,
/// any warning refuses the run (exit 2; an output folder is then never committed).
fn report_warnings(
    incident: &Incident,
    warnings: &[seekgrid_incident::Warning],
    strict: bool,
) -> Result<(), Failure> {
    for w in incident.locate_warnings(warnings) {
        eprintln!("{w}");
    }
    if strict && !warnings.is_empty() {
        return Err(Failure::bad_input(format!(
            "{}: refused under --strict: {} warning(s) above; fix them, or run without --strict to accept them",
            incident.path.display(),
            warnings.len()
        )));
    }
    Ok(())
}

/// The memory a run may plan to use, bytes: refused above this before anything is allocated.
const MEMORY_LIMIT_BYTES: u64 = 8 << 30;

/// Sizes the incident's computation and refuses, at the line and column of the input that
/// drives the size, one that would exceed `[grid] max_cells` or [`MEMORY_LIMIT_BYTES`].
fn sized(incident: &Incident) -> Result<seekgrid_engine::sizing::SizeEstimate, Failure> {
    seekgrid_engine::sizing::estimate(incident, MEMORY_LIMIT_BYTES).map_err(|e| {
        let place = seekgrid_incident::locate::span_of(&incident.text, e.field()).map(|span| {
            let (line, col) = seekgrid_incident::locate::line_col(&incident.text, span.start);
            format!(":{line}:{col}")
        });
        Failure::bad_input(format!(
            "{}{}: {e}",
            incident.path.display(),
            place.unwrap_or_default()
        ))
    })
}

/// One line saying how large the computation will be.
fn describe_size(s: &seekgrid_engine::sizing::SizeEstimate) -> String {
    let mut line = format!(
        "grid {} x {} cells of {} m, about {} MB",
        s.rows,
        s.cols,
        s.cell_m,
        s.bytes.div_ceil(1_000_000)
    );
    if s.particles > 0 {
        line.push_str(&format!(
            "; drift {} particles x {} records",
            s.particles, s.records
        ));
    }
    line
}

/// Maps an incident into `dir`; shared by `map` and `demo`.
fn map_incident(
    incident: &Incident,
    dir: &OutputDir,
    at: Option<chrono::DateTime<chrono::Utc>>,
    selection: &OutputSelection,
    strict: bool,
) -> Result<seekgrid_render::summary::Summary, Failure> {
    let result = with_progress(|progress| {
        seekgrid_engine::timeline::map(incident, &MapOptions { at }, progress)
    });
    let m = result.map_err(|e| match e {
        MapError::Belief(_) => Failure::failed(format!("{}: {e}", incident.path.display())),
        other => located(incident, other.item(), &other.to_string()),
    })?;
    report_warnings(incident, &m.warnings, strict)?;
    seekgrid_render::layers::write(&Computed::map(incident, &m), dir, selection)
        .map_err(|e| Failure::failed(e.to_string()))
}

/// Plans the period from `start` into `dir`; shared by `plan` and `demo`.
fn plan_incident(
    incident: &Incident,
    dir: &OutputDir,
    start: chrono::DateTime<chrono::Utc>,
    selection: &OutputSelection,
    settings: OutputSettings,
    strict: bool,
) -> Result<seekgrid_render::summary::Summary, Failure> {
    let result =
        with_progress(|progress| seekgrid_engine::planning::plan_at(incident, start, progress));
    let run = result.map_err(|e| located(incident, e.item(), &e.to_string()))?;
    report_warnings(incident, &run.map.warnings, strict)?;
    let computed = Computed::plan(incident, &run).with_settings(settings);
    seekgrid_render::layers::write(&computed, dir, selection)
        .map_err(|e| Failure::failed(e.to_string()))
}

/// Reviews an incident into `dir`.
fn review_incident(
    incident: &Incident,
    dir: &OutputDir,
) -> Result<
    (
        seekgrid_engine::review::Review,
        seekgrid_render::review::ReviewJson,
    ),
    Failure,
> {
    use seekgrid_engine::review::ReviewError;
    let result = with_progress(|progress| {
        seekgrid_engine::review::review(incident, incident.outcome.as_ref(), progress)
    });
    let r = result.map_err(|e| match e {
        ReviewError::Belief(_)
        | ReviewError::Counterfactual { .. }
        | ReviewError::Map(MapError::Belief(_)) => {
            Failure::failed(format!("{}: {e}", incident.path.display()))
        }
        other => located(incident, other.item(), &other.to_string()),
    })?;
    let doc =
        seekgrid_render::review::write(&r, dir).map_err(|e| Failure::failed(e.to_string()))?;
    Ok((r, doc))
}

/// The run's provenance: seekgrid's version, the command line, the run's start (the time in
/// `run_id`), the SHA-256 of the incident file and of every file it names (paths relative to
/// the incident's folder when inside it), and each drifting scenario's seed.
fn provenance(incident: &Incident, run_id: &str) -> Result<Provenance, Failure> {
    use sha2::{Digest, Sha256};
    let base = incident.path.parent().unwrap_or(Path::new(""));
    let mut inputs = Vec::new();
    for path in incident.input_files() {
        let bytes = std::fs::read(&path).map_err(|e| {
            Failure::failed(format!(
                "cannot read {} to record its SHA-256: {e}",
                path.display()
            ))
        })?;
        let digest = Sha256::digest(&bytes);
        inputs.push(InputDigest {
            path: path
                .strip_prefix(base)
                .unwrap_or(&path)
                .display()
                .to_string(),
            sha256: digest.iter().map(|b| format!("{b:02x}")).collect(),
        });
    }
    let seeds = incident
        .scenarios
        .iter()
        .filter_map(|s| match &s.kind {
            seekgrid_incident::model::ScenarioKind::Drift(d) => Some(Seed {
                scenario: s.id.clone(),
                seed: d.seed,
            }),
            _ => None,
        })
        .collect();
    let time_utc = run_time(run_id)
        .unwrap_or_else(chrono::Utc::now)
        .format("%Y-%m-%dT%H:%M:%SZ")
        .to_string();
    Ok(Provenance {
        seekgrid_version: env!("CARGO_PKG_VERSION").to_owned(),
        command: std::env::args().collect::<Vec<_>>().join(" "),
        time_utc,
        inputs,
        seeds,
    })
}

/// A position format named on the command line.
fn parse_positions(name: &str) -> Result<PositionFormat, String> {
    PositionFormat::parse(name).ok_or_else(|| {
        let names: Vec<&str> = PositionFormat::ALL.iter().map(|f| f.name()).collect();
        format!("unknown position format; use one of {}", names.join(", "))
    })
}

/// The time in a run id made by [`run_id`]; `None` for any other text.
fn run_time(run_id: &str) -> Option<chrono::DateTime<chrono::Utc>> {
    let stamp = run_id.get(..16)?;
    chrono::NaiveDateTime::parse_from_str(stamp, "%Y%m%dT%H%M%SZ")
        .ok()
        .map(|t| t.and_utc())
}

/// This run's id: the UTC time to the second and the process id, e.g. `20260614T213000Z-4242`.
/// It names the staging folder and is written into the outputs.
fn run_id() -> String {
    format!(
        "{}-{}",
        chrono::Utc::now().format("%Y%m%dT%H%M%SZ"),
        std::process::id()
    )
}

/// Opens the output folder of a run (see [`OutputDir`]): refused when it is or holds one of
/// `inputs`, when another run is writing into it, or when it is not empty and `force` is false.
/// Says on standard error what leftovers of interrupted runs it removed.
fn open_output(
    out: &Path,
    force: bool,
    run_id: &str,
    inputs: &[PathBuf],
) -> Result<OutputDir, Failure> {
    let dir = OutputDir::create(
        out,
        &OutputOptions {
            run_id,
            force,
            inputs,
        },
    )
    .map_err(|e| match e {
        RenderError::OutputNotEmpty { .. } => Failure::bad_input(format!(
            "output folder {} already exists and is not empty; choose a new or empty folder, or add --force to replace it whole",
            out.display()
        )),
        RenderError::OutputNotAFolder { .. }
        | RenderError::OutputHoldsInput { .. }
        | RenderError::OutputIsInput { .. }
        | RenderError::BadOutputPath { .. } => Failure::bad_input(e.to_string()),
        // Another run holding the folder, or the file system refusing: not bad input.
        other => Failure::failed(other.to_string()),
    })?;
    for path in dir.removed_leftovers() {
        eprintln!(
            "removed {}, left by an interrupted run into the same folder",
            path.display()
        );
    }
    Ok(dir)
}

/// Puts a finished output folder in place.
fn commit(dir: OutputDir) -> Result<(), Failure> {
    dir.commit()
        .map(drop)
        .map_err(|e| Failure::failed(e.to_string()))
}

/// Prints each phase's wall and CPU time on standard error (`--verbose`), with the totals.
fn print_phases(phases: &[seekgrid_render::summary::PhaseSummary]) {
    let width = phases
        .iter()
        .map(|p| p.phase.len())
        .max()
        .unwrap_or(5)
        .max(5);
    let cpu = |c: Option<f64>| c.map_or_else(|| "-".to_owned(), |c| format!("{c:.3}"));
    eprintln!("{:width$}  {:>9}  {:>9}", "phase", "wall s", "cpu s");
    for p in phases {
        eprintln!("{:width$}  {:>9.3}  {:>9}", p.phase, p.wall_s, cpu(p.cpu_s));
    }
    let wall: f64 = phases.iter().map(|p| p.wall_s).sum();
    let total_cpu = phases.iter().map(|p| p.cpu_s).sum::<Option<f64>>();
    eprintln!("{:width$}  {:>9.3}  {:>9}", "total", wall, cpu(total_cpu));
}

/// Runs `work` with a progress callback that drives a bar on a terminal (and does nothing
/// when standard error is piped), then clears the bar.
fn with_progress<T>(work: impl FnOnce(seekgrid_engine::timeline::Progress<'_>) -> T) -> T {
    let bar = progress_bar();
    let progress = |what: &str, done: u64, total: u64| {
        if let Some(b) = &bar {
            b.set_length(total);
            b.set_position(done);
            b.set_message(what.to_owned());
        }
    };
    let result = work(&progress);
    if let Some(b) = &bar {
        b.finish_and_clear();
    }
    result
}

/// A progress bar on standard error when it is a terminal; nothing when piped.
fn progress_bar() -> Option<indicatif::ProgressBar> {
    if !std::io::stderr().is_terminal() {
        return None;
    }
    let b = indicatif::ProgressBar::new(0);
    if let Ok(style) =
        indicatif::ProgressStyle::with_template("{msg:32} [{bar:40}] {pos}/{len} ({eta})")
    {
        b.set_style(style.progress_chars("=> "));
    }
    Some(b)
}
