//! `summary.json`: what a run computed, in numbers a reviewer can check.

use crate::RenderError;
use crate::layers::{Computed, Layer, Recorder};
use crate::plan_outputs::{self, PlanSummary};
use seekgrid_engine::IncidentMap;
use seekgrid_incident::model::Incident;
use serde::Serialize;
use std::collections::BTreeMap;

/// The caution every output carries.
pub const CAUTION: &str = "Decision support only: seekgrid's output is only as good as its inputs. The search mission coordinator decides, following the governing SAR manual, local procedures and licensed practice.";

/// The grid, in the frame and in lon/lat.
#[derive(Debug, Clone, Serialize)]
pub struct GridSummary {
    /// Working CRS.
    pub crs: String,
    /// Cell side, metres.
    pub cell_m: f64,
    /// Rows.
    pub rows: usize,
    /// Columns.
    pub cols: usize,
    /// West edge, metres.
    pub west_m: f64,
    /// South edge, metres.
    pub south_m: f64,
    /// East edge, metres.
    pub east_m: f64,
    /// North edge, metres.
    pub north_m: f64,
    /// `"auto"` (holds the prior's mass) or `"given"` (the incident's bounds).
    pub extent: &'static str,
}

/// One analyst's weight and how far they stand from the crowd.
#[derive(Debug, Clone, Serialize)]
pub struct AnalystSummary {
    /// Id.
    pub id: String,
    /// Normalised credibility weight.
    pub weight: f64,
    /// Share of the stationary pool.
    pub share_of_stationary: Option<f64>,
    /// Jensen-Shannon divergence from the pooled map, bits.
    pub js_divergence_bits: Option<f64>,
    /// Total-variation distance between the pool with and without this analyst.
    pub leave_one_out_shift: Option<f64>,
    /// How far the pool's centroid moves without this analyst, metres.
    pub leave_one_out_centroid_shift_m: Option<f64>,
    /// Share of the stationary part after the land (or water) mask, when one applies: an
    /// analyst whose scenarios lie where the object cannot be loses their share to the others.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub share_after_mask: Option<f64>,
}

/// One scenario's effective weight.
#[derive(Debug, Clone, Serialize)]
pub struct ScenarioSummary {
    /// Id.
    pub id: String,
    /// Analyst.
    pub analyst: String,
    /// Kind.
    pub kind: &'static str,
    /// Mass in the pool (analyst weight x scenario weight).
    pub weight: f64,
}

/// One completed search.
#[derive(Debug, Clone, Serialize)]
pub struct SearchSummary {
    /// Id.
    pub id: String,
    /// Unit.
    pub unit: String,
    /// Start.
    pub start: String,
    /// End.
    pub end: String,
    /// POS of this search given the searches before it.
    pub pos: f64,
    /// Mass-weighted mean POD over the searched cells.
    pub pod_mean_in_area: f64,
    /// POC of the searched cells before the update.
    pub poc_before: f64,
    /// POC of the searched cells after the update.
    pub poc_after: f64,
    /// Effective sweep width, metres.
    pub sweep_width_m: f64,
    /// Detection law.
    pub detection: &'static str,
    /// Track spacing, metres (patterns).
    pub track_spacing_m: Option<f64>,
    /// Track length, metres.
    pub track_length_m: f64,
    /// Coverage (patterns).
    pub coverage: Option<f64>,
    /// Mass removed from the drifting part.
    pub particle_mass_removed: f64,
    /// Mass removed from the grid part.
    pub grid_mass_removed: f64,
}

/// One drift scenario.
#[derive(Debug, Clone, Serialize)]
pub struct DriftSummary {
    /// Scenario id.
    pub id: String,
    /// Particles.
    pub particles: usize,
    /// Mass in the pool.
    pub weight: f64,
    /// Time step used, seconds.
    pub step_s: f64,
    /// Particles stranded ashore at the map time.
    pub stranded_at_map_time: usize,
}

/// One file written, as `summary.json` lists it under `outputs` (keyed by file name).
#[derive(Debug, Clone, Serialize)]
pub struct FileRecord {
    /// The layer that wrote it (its `--outputs` name).
    pub layer: Layer,
    /// For a sidecar (world file, `.aux.xml`, `.prj`): the picture it belongs to.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub sidecar_of: Option<String>,
    /// What the file holds, for the layers with something to state.
    #[serde(flatten)]
    pub details: Option<FileDetails>,
}

impl FileRecord {
    /// A record.
    #[must_use]
    pub fn new(layer: Layer, sidecar_of: Option<String>, details: Option<FileDetails>) -> Self {
        Self {
            layer,
            sidecar_of,
            details,
        }
    }
}

/// What a written file holds, stated beside its name in `summary.json`.
#[derive(Debug, Clone, Serialize)]
#[serde(untagged)]
#[non_exhaustive]
pub enum FileDetails {
    /// `probability.geojson`: which cells it holds and how much of the mass.
    Probability {
        /// Cells of the grid with `poc > 0`.
        cells_with_mass: usize,
        /// Cells written.
        cells_written: usize,
        /// Sum of the `poc` of the cells written.
        poc_written: f64,
        /// `poc_written` over the sum of every cell's `poc` (None for a grid without mass).
        share_of_grid_mass_written: Option<f64>,
        /// `"top_share"` or `"max_cells"` when not every cell with mass was written.
        limited_by: Option<&'static str>,
        /// Share of the grid's mass at which the writing stops when there are too many cells.
        top_share: f64,
        /// Most cells written.
        max_cells: usize,
    },
    /// `containment.geojson`: its levels.
    Containment {
        /// Shares of the mass the regions hold.
        levels: Vec<f64>,
        /// Of what mass.
        of: &'static str,
    },
    /// A georeferenced picture.
    Picture {
        /// Pixels per grid cell along each side.
        pixels_per_cell: u32,
    },
    /// `segments.csv`, `segments.geojson`.
    Segments {
        /// Segments listed.
        segments: usize,
        /// The belief's rest of world: with the segments' POAs and `poa_outside_segments` it
        /// adds up to 1.
        poa_rest_of_world: f64,
        /// The mass on the grid and in particles that lies in no segment.
        poa_outside_segments: f64,
    },
    /// `searches.geojson`.
    Searches {
        /// Searches drawn.
        searches: usize,
    },
    /// `particles.geojson`.
    Particles {
        /// Most points written per drift scenario.
        thinned_to_at_most_per_scenario: usize,
        /// What the `weight` of a point is.
        weight: &'static str,
    },
    /// `drift.geojson`.
    Drift {
        /// Levels of the spread ellipses.
        ellipses: [f64; 2],
        /// What the mean track is.
        mean_track: &'static str,
        /// Which weights the means and ellipses use.
        weights: &'static str,
    },
}

/// The whole summary.
#[derive(Debug, Clone, Serialize)]
pub struct Summary {
    /// The caution.
    pub caution: &'static str,
    /// The run that wrote this summary and the layers beside it (filled in by the writer).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub run_id: Option<String>,
    /// Where the run came from: seekgrid's version, the command, the time, the inputs'
    /// SHA-256 and the seeds (filled in by the writer when the caller gave it).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub provenance: Option<crate::Provenance>,
    /// Title.
    pub title: String,
    /// Notes from the incident.
    pub notes: Option<String>,
    /// Reference time of the prior.
    pub reference_time: String,
    /// The time this map describes.
    pub at: String,
    /// Grid.
    pub grid: GridSummary,
    /// Pool.
    pub pool: &'static str,
    /// Probability inside the grid (cells plus particles inside it).
    pub poc_in_grid: f64,
    /// Probability outside the grid: rest of world declared by analysts, mass that fell outside
    /// the grid, and particles outside it.
    pub poc_outside: f64,
    /// Of `poc_outside`: declared rest of world.
    pub rest_of_world_declared: f64,
    /// Of `poc_outside`: stationary mass outside the grid extent.
    pub outside_grid: f64,
    /// Of `poc_outside`: particles outside the grid.
    pub particles_outside_grid: f64,
    /// Mass held by the drifting part.
    pub poc_drifting: f64,
    /// Analysts.
    pub analysts: Vec<AnalystSummary>,
    /// Effective number of independent opinions (stationary part).
    pub effective_opinions: Option<f64>,
    /// Scenarios.
    pub scenarios: Vec<ScenarioSummary>,
    /// Searches applied, in order.
    pub searches: Vec<SearchSummary>,
    /// Searches logged but ending after `at`.
    pub searches_pending: Vec<String>,
    /// 1 - prod(1 - POS_k): the chance the searches so far would have found the object.
    pub pos_cumulative: f64,
    /// Drift scenarios.
    pub drift: Vec<DriftSummary>,
    /// What is legal but suspect in the incident or at this time, each with its place in the
    /// incident file (also printed on standard error; `--strict` refuses them).
    pub warnings: Vec<seekgrid_incident::LocatedWarning>,
    /// Every file written, by name, with the layer that wrote it (sidecars included).
    pub outputs: BTreeMap<String, FileRecord>,
    /// Chosen layers that wrote nothing, by `--outputs` name, with the reason.
    #[serde(skip_serializing_if = "BTreeMap::is_empty")]
    pub outputs_not_written: BTreeMap<&'static str, String>,
    /// Plans only: joint POS of the practical plan, all units together (search areas and
    /// ground teams; see `plan.pos_plan_covers`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub pos_plan: Option<f64>,
    /// Plans only: POS of the optimal allocation of all units' effort under exponential
    /// detection (an upper bound for exponential-law units only; docs/references.md §4).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub pos_optimal_bound: Option<f64>,
    /// Plans only: the plan, its parts and each unit.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub plan: Option<PlanSummary>,
    /// How long each phase of the run took, in the order they ended: the engine's steps, the
    /// particle density when an output read it, and each output written before this summary.
    pub phases: Vec<PhaseSummary>,
}

/// One phase of the run and its time.
#[derive(Debug, Clone, Serialize)]
pub struct PhaseSummary {
    /// What ran (`drift`, `searches`, `particle density`, `write probability`, ...).
    pub phase: String,
    /// Wall-clock time, seconds.
    pub wall_s: f64,
    /// CPU time of the whole process (all threads) during the phase, seconds; absent where
    /// the platform does not give it.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub cpu_s: Option<f64>,
}

impl From<seekgrid_engine::phases::PhaseTime> for PhaseSummary {
    fn from(p: seekgrid_engine::phases::PhaseTime) -> Self {
        Self {
            phase: p.phase,
            wall_s: p.wall_s,
            cpu_s: p.cpu_s,
        }
    }
}

/// The summary of a computed result: the map, the plan when there is one, and the files
/// `out` has written.
#[must_use]
pub fn summarise(c: &Computed, out: &Recorder) -> Summary {
    let mut s = summarise_map(c.incident, c.map);
    s.run_id = Some(out.run_id().to_owned());
    s.provenance = out.provenance().cloned();
    s.outputs = out.files().clone();
    s.outputs_not_written = out.not_written().clone();
    s.phases = c.map.phases.list().into_iter().map(Into::into).collect();
    if let Some(run) = c.plan {
        let plan = plan_outputs::plan_summary(run);
        s.pos_plan = Some(plan.pos_plan);
        s.pos_optimal_bound = Some(plan.pos_optimal_bound);
        s.plan = Some(plan);
    }
    s
}

/// The summary layer's writer: `summary.json` (pretty JSON, ending with a newline), listing
/// itself and every file written before it.
///
/// # Errors
/// [`RenderError`] when it cannot be serialised or written.
pub(crate) fn write(c: &Computed, out: &mut Recorder) -> Result<(), RenderError> {
    let layer = Layer::Summary;
    out.write_listing(layer, layer.files()[0], |out| {
        let mut bytes = serde_json::to_vec_pretty(&summarise(c, out))
            .map_err(|e| RenderError::Json(e.to_string()))?;
        bytes.push(b'\n');
        Ok(bytes)
    })
}

/// The summary of a computed map, without outputs or plan.
fn summarise_map(incident: &Incident, m: &IncidentMap) -> Summary {
    let g = &m.grid;
    let e = g.extent();
    let b = &m.belief;
    let particles_outside = m.particles_outside_grid();
    let row = b.rest_of_world();
    let declared = row * m.declared_share_of_outside;
    let outside_grid = row - declared;
    let poc_outside = row + particles_outside;
    let diag = m.prior.as_ref().map(|p| &p.diagnostics);
    let analysts = m
        .prepared
        .analyst_weights
        .iter()
        .map(|(id, w)| {
            let d = diag.and_then(|d| d.analysts.iter().find(|a| a.id == *id));
            AnalystSummary {
                id: id.clone(),
                weight: *w,
                share_of_stationary: d.map(|d| d.share),
                js_divergence_bits: d.map(|d| d.js_divergence_bits),
                leave_one_out_shift: d.map(|d| d.leave_one_out_shift),
                leave_one_out_centroid_shift_m: d.map(|d| d.leave_one_out_centroid_shift_m),
                share_after_mask: m.analyst_share_after_mask(id),
            }
        })
        .collect();
    let scenarios = incident
        .scenarios
        .iter()
        .zip(&m.prepared.scenario_weights)
        .map(|(s, (_, _, w))| ScenarioSummary {
            id: s.id.clone(),
            analyst: s.analyst.clone(),
            kind: s.kind.name(),
            weight: *w,
        })
        .collect();
    let searches = m
        .searches
        .iter()
        .map(|r| SearchSummary {
            id: r.id.clone(),
            unit: r.unit.clone(),
            start: r.start.to_rfc3339(),
            end: r.end.to_rfc3339(),
            pos: r.pos,
            pod_mean_in_area: r.outcome.pod_mean_in_area,
            poc_before: r.outcome.poc_in_area_before,
            poc_after: r.outcome.poc_in_area_after,
            sweep_width_m: r.sweep_width_m,
            detection: r.detection,
            track_spacing_m: r.track_spacing_m,
            track_length_m: r.track_length_m,
            coverage: r.coverage,
            particle_mass_removed: r.outcome.particle_mass_removed,
            grid_mass_removed: r.outcome.grid_mass_removed,
        })
        .collect();
    let drift = m
        .prepared
        .drift
        .iter()
        .zip(&m.drift_runs)
        .map(|(d, (_, run))| DriftSummary {
            id: d.id.clone(),
            particles: run.len(),
            weight: d.mass,
            step_s: run.step_s(),
            stranded_at_map_time: run
                .positions_at(m.at)
                .stranded
                .iter()
                .filter(|s| **s)
                .count(),
        })
        .collect();
    Summary {
        caution: CAUTION,
        run_id: None,
        provenance: None,
        title: incident.title.clone(),
        notes: incident.notes.clone(),
        reference_time: incident.reference_time.to_rfc3339(),
        at: m.at.to_rfc3339(),
        grid: GridSummary {
            crs: format!("EPSG:{}", m.prepared.frame.epsg()),
            cell_m: g.cell_m(),
            rows: g.rows(),
            cols: g.cols(),
            west_m: e.west_m,
            south_m: e.south_m,
            east_m: e.east_m,
            north_m: e.north_m,
            extent: if m.grid_auto { "auto" } else { "given" },
        },
        pool: match m.prepared.pool {
            seekgrid_prior::Pool::Linear => "linear",
            seekgrid_prior::Pool::Logarithmic => "logarithmic",
        },
        poc_in_grid: 1.0 - poc_outside,
        poc_outside,
        rest_of_world_declared: declared,
        outside_grid,
        particles_outside_grid: particles_outside,
        poc_drifting: b.particle_mass(),
        analysts,
        effective_opinions: diag.map(|d| d.effective_opinions),
        scenarios,
        searches,
        searches_pending: m.searches_pending.clone(),
        pos_cumulative: m.pos_cumulative,
        drift,
        warnings: incident.locate_warnings(&m.warnings),
        outputs: BTreeMap::new(),
        outputs_not_written: BTreeMap::new(),
        pos_plan: None,
        pos_optimal_bound: None,
        plan: None,
        phases: Vec::new(),
    }
}
