//! The timeline of an incident: the prior at the reference time, drift carried forward, and
//! every completed search applied in time order as a Bayesian update.

use crate::phases::PhaseTimes;
use crate::prepare::{PrepareError, Prepared, PreparedGeometry, PreparedSearch, prepare};
use crate::slices;
use geo::{Coord, Euclidean, Length};
use ndarray::Array2;
use seekgrid_core::units::SECONDS_PER_HOUR;
use seekgrid_core::{Belief, CoreError, Frame, GridSpec, Particles, ProjectedBox};
use seekgrid_drift as drift;
use seekgrid_incident::model::{Incident, Time};
use seekgrid_prior as prior;
use seekgrid_search as search;

/// Regular interval of the stored drift positions, seconds, besides the times the map uses
/// (see [`map`]).
const DRIFT_RECORD_EVERY_S: f64 = 6.0 * SECONDS_PER_HOUR;

/// Options of one map computation.
#[derive(Debug, Clone, Copy)]
pub struct MapOptions {
    /// The time the map describes: searches ended by then are applied, drift is carried to
    /// it. `None`: the end of the last logged search, or the reference time when that is later
    /// or no search is logged.
    pub at: Option<Time>,
}

/// How one completed search changed the belief.
#[derive(Debug, Clone)]
pub struct SearchReport {
    /// Search id, as in the incident file.
    pub id: String,
    /// Id of the unit that searched.
    pub unit: String,
    /// Start of the search.
    pub start: Time,
    /// End of the search; searches are applied in order of end time (then start, then id).
    pub end: Time,
    /// The middle of the search, where the drifting particles were placed for its update. A
    /// long search scored along its track meets them part by part instead, each part at its own
    /// middle time (see [`crate::slices`]); this field is still the search's middle.
    pub evaluated_at: Time,
    /// Sweep width of the unit, metres.
    pub sweep_width_m: f64,
    /// Detection law, as written in the incident file ([`search::DetectionLaw::name`]).
    pub detection: &'static str,
    /// Track spacing of a parallel sweep, creeping line or expanding square, metres; `None`
    /// for a sector search and for a followed track.
    pub track_spacing_m: Option<f64>,
    /// Length of the pattern's legs or of the followed track, metres in the working frame.
    pub track_length_m: f64,
    /// Coverage of a pattern ([`search::Pattern::coverage`]): `W/S` for a parallel sweep,
    /// creeping line or expanding square, `W·L/A` for a sector search; `None` for a followed
    /// track.
    pub coverage: Option<f64>,
    /// POD the search's law gives at that coverage ([`search::DetectionLaw::pod_from_coverage`]);
    /// `None` for a followed track.
    pub pod_pattern: Option<f64>,
    /// The update's outcome. Its POS and masses removed are those of
    /// [`search::update_after_miss`]; its searched-area figures (`poc_in_area_before`,
    /// `poc_in_area_after`, `pod_mean_in_area`) are taken over the cells and particles given a
    /// POD of at least [`SEARCHED_POD_THRESHOLD`], not over every place with a POD above 0.
    pub outcome: search::UpdateOutcome,
    /// The POS of this search given that every earlier search failed (conditional): `Σ p_i d_i`
    /// over the belief just before it (the same as `outcome.pos`).
    pub pos: f64,
    /// The pattern's search area in the working frame; `None` for a followed track.
    pub area_polygon: Option<geo::Polygon<f64>>,
    /// The pattern's legs (commence search point first) or the followed track, in the working
    /// frame.
    pub track: geo::LineString<f64>,
}

/// The computed state of an incident at one time.
#[derive(Debug)]
pub struct IncidentMap {
    /// The inputs in the frame.
    pub prepared: Prepared,
    /// The grid.
    pub grid: GridSpec,
    /// Whether the grid extent was chosen automatically.
    pub grid_auto: bool,
    /// The time the map describes.
    pub at: Time,
    /// The stationary prior (conditional on the stationary part), when there is one.
    pub prior: Option<prior::Prior>,
    /// The belief at `at`, after the searches.
    pub belief: Belief,
    /// The belief at the reference time, before any search.
    pub belief_before_searches: Belief,
    /// Of the belief's rest of world, the share that was declared by analysts (the rest fell
    /// outside the grid). Both are unsearched, so the share stays constant.
    pub declared_share_of_outside: f64,
    /// Cumulative POD per cell, `1 - Π(1 - d_k)` over the applied searches; `None` when no
    /// search has been applied.
    pub pod_cumulative: Option<Array2<f64>>,
    /// One report per applied search, in the order applied.
    pub searches: Vec<SearchReport>,
    /// Searches logged but ending after `at` (not applied).
    pub searches_pending: Vec<String>,
    /// Drift simulations, one per drift scenario.
    pub drift_runs: Vec<(String, drift::DriftRun)>,
    /// Cumulative POS of the applied searches, `1 - Π(1 - POS_k)` with each search's
    /// conditional POS (docs/references.md §3).
    pub pos_cumulative: f64,
    /// The probability of containment per cell at `at`, computed on first use by
    /// [`IncidentMap::poc`].
    poc: std::sync::OnceLock<Array2<f64>>,
    /// How long each phase of the run took, in the order they ended (the particle density
    /// when [`IncidentMap::poc`] first computes it; the outputs add theirs).
    pub phases: PhaseTimes,
    /// Of each stationary scenario's mass on the grid, the share the land (or water) mask
    /// kept, in scenario order; empty when no mask applies.
    pub kept_by_mask: Vec<(String, f64)>,
    /// What is legal but suspect in the incident or at this time (the file's own warnings
    /// first), see [`crate::warnings`].
    pub warnings: Vec<seekgrid_incident::Warning>,
}

/// Why an incident map cannot be computed.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum MapError {
    /// Preparing the inputs failed.
    #[error(transparent)]
    Prepare(#[from] PrepareError),
    /// The grid cannot be built.
    #[error("grid: {0}")]
    Grid(CoreError),
    /// The prior cannot be built.
    #[error("prior: {0}")]
    Prior(Box<prior::PriorError>),
    /// A drift simulation failed.
    #[error("drift scenario \"{id}\": {source}")]
    Drift {
        /// Scenario id.
        id: String,
        /// Why.
        source: Box<drift::DriftError>,
    },
    /// A search cannot be applied.
    #[error("search \"{id}\": {source}")]
    Search {
        /// Search id.
        id: String,
        /// Why.
        source: Box<search::SearchError>,
    },
    /// Nothing to map.
    #[error("the grid extent cannot be chosen: no scenario has an extent; give [grid] bounds")]
    NoExtent,
    /// A drift's wind or current series (or field) does not cover it (see
    /// `hold_environment_beyond_series`).
    #[error("drift scenario \"{id}\": {message}")]
    EnvironmentNotCovered {
        /// Scenario id.
        id: String,
        /// The gap and the fixes.
        message: String,
    },
    /// A belief operation failed.
    #[error("belief: {0}")]
    Belief(CoreError),
    /// Every stationary scenario lies where the object cannot be (land for an object afloat,
    /// water for one ashore).
    #[error("all the stationary probability lies {}, but object_afloat = {afloat}; check the coastline file and the scenario positions", if *afloat { "on land" } else { "at sea" })]
    NowhereToBe {
        /// The incident's object_afloat.
        afloat: bool,
    },
}

/// Progress of a run: called with the phase running (e.g. `drift adrift-after-the-sighting`,
/// `searches`, `particle density`) and how much of it is done, (done, total); the drift
/// counts particles, other phases 0 of 1 as they start and 1 of 1 as they end.
pub type Progress<'a> = &'a (dyn Fn(&str, u64, u64) + Sync);

/// Computes the map of an incident at a time, in named steps: choose the searches to apply,
/// run the drift, choose the grid, put the stationary part on it where the object can be, make
/// the belief at the reference time, apply each search in turn as a Bayesian update, and
/// assemble the map at its time.
///
/// # Errors
/// See [`MapError`].
pub fn map(
    incident: &Incident,
    options: &MapOptions,
    progress: Progress<'_>,
) -> Result<IncidentMap, MapError> {
    let replay = Replay::start(incident, options.at, &[], progress)?;
    let drifting = replay.drifting();
    let mut log = SearchLog::new(replay.belief_before_searches.clone());
    replay
        .phases
        .time_shown("searches", progress, || -> Result<(), MapError> {
            for s in replay.to_apply() {
                log.apply(s, &drifting)?;
            }
            drifting.move_particles(&mut log.belief, replay.at)?;
            Ok(())
        })?;
    Ok(IncidentMap {
        poc: std::sync::OnceLock::new(),
        phases: replay.phases,
        prepared: replay.prepared,
        grid: replay.grid,
        grid_auto: replay.grid_auto,
        at: replay.at,
        declared_share_of_outside: replay.declared_share_of_outside,
        prior: replay.prior,
        belief: log.belief,
        belief_before_searches: replay.belief_before_searches,
        pod_cumulative: log.pod_cumulative,
        searches: log.reports,
        searches_pending: replay.pending,
        drift_runs: replay.drift_runs,
        pos_cumulative: 1.0 - log.miss_all,
        kept_by_mask: replay.kept_by_mask,
        warnings: replay.warnings,
    })
}

/// The grid [`map`] would compute on for `options`, without the belief: the first steps of
/// [`map`] only (the inputs, the drift, the grid extent), for a caller that needs no more, such as
/// `seekgrid log` checking that a new search reaches the grid.
///
/// # Errors
/// See [`MapError`]; the same errors [`map`] gives in these steps.
pub fn grid_at(
    incident: &Incident,
    options: &MapOptions,
    progress: Progress<'_>,
) -> Result<GridSpec, MapError> {
    let prepared = prepare(incident)?;
    let schedule = Schedule::new(incident, &prepared, options);
    crate::warnings::environment_covers(incident, schedule.drift_end())?;
    let drift_runs = run_drift(&prepared, &schedule, progress)?;
    let drifting = Drifting { runs: &drift_runs };
    choose_grid(incident, &prepared, &schedule, &drifting).map(|(grid, _)| grid)
}

/// An incident set up at its reference time, ready to be carried forward: the inputs in the
/// frame, the drift simulated once, the grid, and the belief before any search. [`map`] and
/// the review ([`crate::review`]) both start here; the review then reads the belief at many
/// times in one pass over the same drift runs.
pub(crate) struct Replay {
    /// The inputs in the frame.
    pub(crate) prepared: Prepared,
    /// The grid.
    pub(crate) grid: GridSpec,
    /// Whether the grid extent was chosen automatically.
    pub(crate) grid_auto: bool,
    /// The last time the replay describes (the map's time).
    pub(crate) at: Time,
    /// The stationary prior, when there is one.
    pub(crate) prior: Option<prior::Prior>,
    /// The belief at the reference time, before any search.
    pub(crate) belief_before_searches: Belief,
    /// See [`IncidentMap::declared_share_of_outside`].
    pub(crate) declared_share_of_outside: f64,
    /// Drift simulations, one per drift scenario.
    pub(crate) drift_runs: Vec<(String, drift::DriftRun)>,
    /// Positions in `prepared.searches` of the searches ended by `at`, in the order applied.
    to_apply: Vec<usize>,
    /// Ids of the searches ending after `at`, in file order.
    pub(crate) pending: Vec<String>,
    /// See [`IncidentMap::kept_by_mask`].
    pub(crate) kept_by_mask: Vec<(String, f64)>,
    /// See [`IncidentMap::warnings`].
    pub(crate) warnings: Vec<seekgrid_incident::Warning>,
    /// How long each step took so far.
    pub(crate) phases: PhaseTimes,
}

impl Replay {
    /// The steps of [`map`] up to the belief at the reference time: the searches to apply by
    /// `at` (default as [`MapOptions::at`]), the drift (its positions stored at the times the
    /// map uses and at `extra_record_at`), the grid, and the stationary part where the object
    /// can be.
    pub(crate) fn start(
        incident: &Incident,
        at: Option<Time>,
        extra_record_at: &[Time],
        progress: Progress<'_>,
    ) -> Result<Self, MapError> {
        let phases = PhaseTimes::default();
        let prepared = phases.time_shown("inputs", progress, || prepare(incident))?;
        let mut schedule = Schedule::new(incident, &prepared, &MapOptions { at });
        schedule.extra_record_at = extra_record_at.to_vec();
        crate::warnings::environment_covers(incident, schedule.drift_end())?;
        let mut warnings = incident.warnings();
        warnings.extend(crate::warnings::about_the_time(incident, schedule.at));
        // The drift reports its own progress, particle by particle.
        let drift_runs = phases.time("drift", || run_drift(&prepared, &schedule, progress))?;
        let drifting = Drifting { runs: &drift_runs };
        let (grid, grid_auto) = phases.time_shown("grid", progress, || {
            choose_grid(incident, &prepared, &schedule, &drifting)
        })?;
        warnings.extend(schedule.leave_out_searches_outside(&grid, grid_auto));
        let (prior, mut stationary) =
            phases.time_shown("stationary part", progress, || -> Result<_, MapError> {
                let prior = build_prior(&prepared, &grid)?;
                let stationary = StationaryPart::where_the_object_can_be(
                    prior.as_ref(),
                    incident,
                    &prepared,
                    &grid,
                )?;
                Ok((prior, stationary))
            })?;
        let kept_by_mask = std::mem::take(&mut stationary.kept_by_mask);
        warnings.extend(crate::warnings::about_the_mask(incident, &kept_by_mask));
        let declared_share_of_outside = stationary.declared_share_of_outside();
        let belief_before_searches =
            phases.time_shown("belief at the reference time", progress, || {
                stationary.into_belief(&prepared, &drifting, schedule.reference_time)
            })?;
        let to_apply = schedule
            .to_apply
            .iter()
            .filter_map(|s| prepared.searches.iter().position(|p| p.index == s.index))
            .collect();
        let (at, pending) = (schedule.at, schedule.pending);
        Ok(Self {
            prepared,
            grid,
            grid_auto,
            at,
            prior,
            belief_before_searches,
            declared_share_of_outside,
            drift_runs,
            to_apply,
            pending,
            kept_by_mask,
            warnings,
            phases,
        })
    }

    /// The searches ended by `at`, in the order they are applied.
    pub(crate) fn to_apply(&self) -> impl Iterator<Item = &PreparedSearch> {
        self.to_apply.iter().map(|&k| &self.prepared.searches[k])
    }

    /// The drift runs, to place the belief's particles.
    pub(crate) fn drifting(&self) -> Drifting<'_> {
        Drifting {
            runs: &self.drift_runs,
        }
    }
}

/// The time a map describes and the logged searches it applies by then.
struct Schedule<'p> {
    /// The reference time of the incident.
    reference_time: Time,
    /// The time the map describes.
    at: Time,
    /// The searches ended by `at`, in order of end time, then start, then id.
    to_apply: Vec<&'p PreparedSearch>,
    /// Ids of the searches ending after `at`, in file order.
    pending: Vec<String>,
    /// Further times at which the drift runs store positions (the review's times).
    extra_record_at: Vec<Time>,
}

impl<'p> Schedule<'p> {
    fn new(incident: &Incident, prepared: &'p Prepared, options: &MapOptions) -> Self {
        let last_search_end = incident.searches.iter().map(|s| s.end).max();
        let at = options.at.unwrap_or_else(|| {
            last_search_end
                .unwrap_or(incident.reference_time)
                .max(incident.reference_time)
        });
        let mut to_apply: Vec<&PreparedSearch> = prepared
            .searches
            .iter()
            .filter(|s| s.def.end <= at)
            .collect();
        to_apply.sort_by(|a, b| {
            a.def
                .end
                .cmp(&b.def.end)
                .then(a.def.start.cmp(&b.def.start))
                .then(a.def.id.cmp(&b.def.id))
        });
        let pending = prepared
            .searches
            .iter()
            .filter(|s| s.def.end > at)
            .map(|s| s.def.id.clone())
            .collect();
        Self {
            reference_time: incident.reference_time,
            at,
            to_apply,
            pending,
            extra_record_at: Vec::new(),
        }
    }

    /// The time every drift runs to (at least; a scenario going adrift later runs to then).
    fn drift_end(&self) -> Time {
        self.at.max(self.reference_time)
    }

    /// Leaves out of the map the searches that cannot reach the grid, with a warning for each.
    /// An automatic grid holds every drift cloud at every time the map uses and only the
    /// searches that reach the scenarios (see [`automatic_extent`]), so such a search could find
    /// nothing (its POS is 0); a grid from `[grid] bounds` is the planner's, and particles
    /// outside it are not searched.
    fn leave_out_searches_outside(
        &mut self,
        grid: &GridSpec,
        grid_auto: bool,
    ) -> Vec<seekgrid_incident::Warning> {
        let what = if grid_auto {
            "the grid (which holds the scenarios and the drift)"
        } else {
            "the [grid] bounds"
        };
        let extent = grid.extent();
        let out =
            crate::warnings::about_searches_outside(self.to_apply.iter().copied(), &extent, what);
        self.to_apply.retain(|s| s.reaches(&extent));
        out
    }

    /// The times the map places the drifting particles at: the reference time, the map's
    /// time and the middle of each applied search.
    fn placement_times(&self) -> Vec<Time> {
        let mut times = vec![self.reference_time, self.at];
        times.extend(self.to_apply.iter().map(|s| mid_time(s)));
        times
    }

    /// The times a drift run stores positions at: exactly where they are used (the placement
    /// times, the extra times asked for, the middle of each part of a search cut into parts,
    /// and every whole hour from going adrift to `end`, the drift layer's track). 16 bytes per
    /// particle per record.
    fn drift_record_times(&self, adrift_earliest: Time, end: Time) -> Vec<Time> {
        let mut record_at = self.placement_times();
        record_at.extend_from_slice(&self.extra_record_at);
        for s in &self.to_apply {
            record_at.extend(slices::slices(s).into_iter().flatten().map(|p| p.mid));
        }
        let hour = chrono::TimeDelta::hours(1);
        if let Ok(first) = chrono::DurationRound::duration_trunc(adrift_earliest, hour) {
            let mut t = first + hour;
            while t < end {
                record_at.push(t);
                t += hour;
            }
        }
        record_at
    }
}

/// Runs every drift scenario (its cloud is part of the grid extent, so the drift comes first)
/// to the later of the map's time and the scenario's latest adrift time.
fn run_drift(
    prepared: &Prepared,
    schedule: &Schedule<'_>,
    progress: Progress<'_>,
) -> Result<Vec<(String, drift::DriftRun)>, MapError> {
    let land = prepared.land.clone().map(drift::LandMask::new);
    let mut drift_runs = Vec::new();
    for d in &prepared.drift {
        let end = schedule.drift_end().max(d.scenario.adrift_latest);
        // A record every six hours besides the times used keeps interpolated positions close
        // for other readers.
        let options = drift::SimulationOptions {
            end,
            record_every_s: DRIFT_RECORD_EVERY_S,
            step_s: None,
            also_record_at: schedule.drift_record_times(d.scenario.adrift_earliest, end),
        };
        let phase = format!("drift {}", d.id);
        let report = |done: u64, total: u64| progress(&phase, done, total);
        let run = drift::simulate(
            &d.scenario,
            &prepared.frame,
            land.as_ref(),
            &options,
            &report,
        )
        .map_err(|source| MapError::Drift {
            id: d.id.clone(),
            source: Box::new(source),
        })?;
        drift_runs.push((d.id.clone(), run));
    }
    Ok(drift_runs)
}

/// The grid: over the `[grid]` bounds when given (`false`: not chosen automatically),
/// otherwise over everything the map holds (`true`).
fn choose_grid(
    incident: &Incident,
    prepared: &Prepared,
    schedule: &Schedule<'_>,
    drifting: &Drifting<'_>,
) -> Result<(GridSpec, bool), MapError> {
    let (grid_box, grid_auto) = match incident.grid.bounds {
        Some(b) => (lon_lat_box(&prepared.frame, b)?, false),
        None => (
            automatic_extent(incident, prepared, schedule, drifting)?,
            true,
        ),
    };
    let grid = GridSpec::covering(&grid_box, incident.grid.cell_m, incident.grid.max_cells)
        .map_err(MapError::Grid)?;
    Ok((grid, grid_auto))
}

/// The box holding the stationary scenarios, every drift cloud at each placement time (grown
/// by one cell) and the extent of every applied search that reaches them.
fn automatic_extent(
    incident: &Incident,
    prepared: &Prepared,
    schedule: &Schedule<'_>,
    drifting: &Drifting<'_>,
) -> Result<ProjectedBox, MapError> {
    let mut b = prior::auto_extent(&prepared.stationary);
    let times = schedule.placement_times();
    for (_, run) in drifting.runs {
        for t in &times {
            if let Some(sb) = snapshot_box(&run.positions_at(*t)) {
                let sb = sb.expanded(incident.grid.cell_m);
                b = Some(b.map_or(sb, |x| x.union(&sb)));
            }
        }
    }
    // Only the searches that reach the scenarios' box: one far from every scenario (a typing
    // slip in its position) would stretch the grid over empty sea; it is left out with a
    // warning instead (Schedule::leave_out_searches_outside).
    let scenarios = b;
    for s in &schedule.to_apply {
        if let (Some(sb), Some(held)) = (s.extent(), &scenarios)
            && s.reaches(held)
        {
            b = Some(b.map_or(sb, |x| x.union(&sb)));
        }
    }
    b.ok_or(MapError::NoExtent)
}

pub(crate) fn lon_lat_box(frame: &Frame, b: [f64; 4]) -> Result<ProjectedBox, MapError> {
    // Sample the edges: a lon/lat box is not a rectangle in UTM.
    let [w, s, e, n] = b;
    let mut pts = Vec::new();
    for k in 0..=32 {
        let t = f64::from(k) / 32.0;
        for (lon, lat) in [
            (w + t * (e - w), s),
            (w + t * (e - w), n),
            (w, s + t * (n - s)),
            (e, s + t * (n - s)),
        ] {
            pts.push(frame.checked_to_xy(lon, lat).map_err(MapError::Grid)?);
        }
    }
    ProjectedBox::of_points(pts).ok_or(MapError::NoExtent)
}

fn snapshot_box(snap: &drift::ParticleSnapshot) -> Option<ProjectedBox> {
    ProjectedBox::of_points(
        snap.x_m
            .iter()
            .zip(&snap.y_m)
            .map(|(x, y)| Coord { x: *x, y: *y }),
    )
}

/// The stationary prior on the grid (conditional on the stationary part); `None` when no
/// scenario is stationary.
fn build_prior(prepared: &Prepared, grid: &GridSpec) -> Result<Option<prior::Prior>, MapError> {
    if prepared.stationary.is_empty() {
        return Ok(None);
    }
    prior::combine(
        &prepared.stationary_analysts,
        &prepared.stationary,
        grid,
        prepared.pool,
    )
    .map(Some)
    .map_err(|e| MapError::Prior(Box::new(e)))
}

/// The stationary part of the belief on the grid, scaled to its pool mass.
struct StationaryPart {
    grid: GridSpec,
    /// Cell masses, kept only where the object can be.
    cells: Array2<f64>,
    /// Mass the analysts declared as rest of world.
    declared: f64,
    /// Mass that fell outside the grid.
    outside: f64,
    /// Of each stationary scenario's mass on the grid, the share the land (or water) mask
    /// kept; empty when no mask applies.
    kept_by_mask: Vec<(String, f64)>,
}

impl StationaryPart {
    /// The prior scaled to the stationary pool mass, its cells' mass kept where the object can
    /// be (afloat or ashore) when the incident says which and has a coastline.
    fn where_the_object_can_be(
        prior: Option<&prior::Prior>,
        incident: &Incident,
        prepared: &Prepared,
        grid: &GridSpec,
    ) -> Result<Self, MapError> {
        let m = prepared.stationary_mass;
        let mut part = match prior {
            None => Self {
                grid: *grid,
                cells: Array2::zeros((grid.rows(), grid.cols())),
                declared: 0.0,
                outside: 0.0,
                kept_by_mask: Vec::new(),
            },
            Some(p) => Self {
                grid: *grid,
                cells: &p.cells * m,
                declared: p.rest_of_world * m,
                outside: p.outside_grid * m,
                kept_by_mask: Vec::new(),
            },
        };
        if let (Some(afloat), Some(land)) = (incident.object_afloat, &prepared.land)
            && let Some(keep) = where_the_object_can_be(grid, land, afloat)?
        {
            keep_where_the_object_can_be(&mut part.cells, &keep, afloat)?;
            part.kept_by_mask = kept_by_mask(prepared, grid, &keep)?;
        }
        Ok(part)
    }

    /// Of the rest of world, the share the analysts declared (1 when there is none).
    fn declared_share_of_outside(&self) -> f64 {
        let outside_total = self.declared + self.outside;
        if outside_total > 0.0 {
            self.declared / outside_total
        } else {
            1.0
        }
    }

    /// The belief at the reference time: these cells, the drifting particles where they are
    /// then (equal weights within each scenario, summing to its pool mass), and the rest of
    /// world.
    fn into_belief(
        self,
        prepared: &Prepared,
        drifting: &Drifting<'_>,
        reference_time: Time,
    ) -> Result<Belief, MapError> {
        let mut weights = Vec::new();
        for (d, (_, run)) in prepared.drift.iter().zip(drifting.runs) {
            let n = run.len() as f64;
            weights.extend(std::iter::repeat_n(d.mass / n, run.len()));
        }
        let start = drifting.placement(reference_time);
        let particles = Particles::new(start.x_m, start.y_m, weights, start.stranded)
            .map_err(MapError::Belief)?;
        let rest_of_world = self.declared + self.outside;
        Belief::new(self.grid, self.cells, particles, rest_of_world).map_err(MapError::Belief)
    }
}

/// The drift runs in the order of the belief's particles.
pub(crate) struct Drifting<'a> {
    runs: &'a [(String, drift::DriftRun)],
}

/// Where every drifting particle is at one time, in the order of the belief's particles.
pub(crate) struct Placement {
    pub(crate) x_m: Vec<f64>,
    pub(crate) y_m: Vec<f64>,
    pub(crate) stranded: Vec<bool>,
}

impl Drifting<'_> {
    /// Every run's particles at `t`.
    pub(crate) fn placement(&self, t: Time) -> Placement {
        let mut p = Placement {
            x_m: Vec::new(),
            y_m: Vec::new(),
            stranded: Vec::new(),
        };
        for (_, run) in self.runs {
            let snap = run.positions_at(t);
            p.x_m.extend(snap.x_m);
            p.y_m.extend(snap.y_m);
            p.stranded.extend(snap.stranded);
        }
        p
    }

    /// Every run's particles at `t`, written into `out` (resized to the particle count and
    /// reused across calls).
    pub(crate) fn points_at(&self, t: Time, out: &mut Vec<Coord<f64>>) {
        let n = self.runs.iter().map(|(_, run)| run.len()).sum();
        out.resize(n, Coord { x: 0.0, y: 0.0 });
        let mut start = 0;
        for (_, run) in self.runs {
            run.write_points_at(t, &mut out[start..start + run.len()]);
            start += run.len();
        }
    }

    /// Moves the belief's particles to where they are at `t`.
    pub(crate) fn move_particles(&self, belief: &mut Belief, t: Time) -> Result<(), MapError> {
        let p = self.placement(t);
        belief
            .move_particles(p.x_m, p.y_m, p.stranded)
            .map_err(MapError::Belief)
    }
}

/// The belief carried through the applied searches, with what each one did.
pub(crate) struct SearchLog {
    pub(crate) belief: Belief,
    /// `1 - Π(1 - d_k)` per cell over the searches applied so far.
    pub(crate) pod_cumulative: Option<Array2<f64>>,
    pub(crate) reports: Vec<SearchReport>,
    /// `Π(1 - POS_k)` over the searches applied so far.
    pub(crate) miss_all: f64,
}

impl SearchLog {
    pub(crate) fn new(belief: Belief) -> Self {
        Self {
            belief,
            pod_cumulative: None,
            reports: Vec::new(),
            miss_all: 1.0,
        }
    }

    /// Applies one completed search as a miss: the particles moved to its middle, its POD on
    /// the cells and at the particles, the Bayesian update, and its report.
    pub(crate) fn apply(
        &mut self,
        s: &PreparedSearch,
        drifting: &Drifting<'_>,
    ) -> Result<(), MapError> {
        let evaluated_at = mid_time(s);
        drifting.move_particles(&mut self.belief, evaluated_at)?;
        let failed = |source| MapError::Search {
            id: s.def.id.clone(),
            source: Box::new(source),
        };
        let pod = SearchPod::of(s, &self.belief, drifting).map_err(failed)?;
        let outcome = self.update(&pod).map_err(failed)?;
        self.reports
            .push(SearchReport::new(s, evaluated_at, outcome, pod));
        Ok(())
    }

    /// The Bayesian update after a miss, its searched-area figures, and the cumulative POD and
    /// POS carried on.
    fn update(&mut self, pod: &SearchPod) -> Result<search::UpdateOutcome, search::SearchError> {
        let grid = *self.belief.grid();
        let before_cells = self.belief.cells().clone();
        let before_weights = self.belief.particles().weights().to_vec();
        let mut outcome =
            search::update_after_miss(&mut self.belief, &pod.layer, &pod.particle_pod)?;
        let searched = Searched {
            cell_pod: &pod.layer.to_dense(&grid)?,
            particle_pod: &pod.particle_pod,
        };
        searched.set_area_figures(
            &mut outcome,
            &Masses {
                cells: &before_cells,
                weights: &before_weights,
            },
            &Masses {
                cells: self.belief.cells(),
                weights: self.belief.particles().weights(),
            },
        );
        let cumulative = self
            .pod_cumulative
            .get_or_insert_with(|| Array2::zeros((grid.rows(), grid.cols())));
        pod.layer.combine_into(cumulative)?;
        self.miss_all *= 1.0 - outcome.pos;
        Ok(outcome)
    }
}

/// One search's POD on the grid and at the particles, with the geometry it was scored on.
struct SearchPod {
    layer: search::PodLayer,
    particle_pod: Vec<f64>,
    /// The pattern's legs or the followed track.
    track: geo::LineString<f64>,
    /// The pattern's area; `None` for a followed track.
    area: Option<geo::Polygon<f64>>,
}

impl SearchPod {
    /// Scores the search's pattern or track on the belief's grid and at its particles.
    /// Drifting particles meet a long search part by part (see [`slices`]); otherwise they are
    /// scored where they are at its middle.
    fn of(
        s: &PreparedSearch,
        belief: &Belief,
        drifting: &Drifting<'_>,
    ) -> Result<Self, search::SearchError> {
        let (grid, sw) = (belief.grid(), &s.sweep_width);
        let sliced = match slices::slices(s) {
            Some(parts) => Some(sliced_particle_pod(&parts, drifting, s.law, sw)?),
            None => None,
        };
        let points = || -> Vec<Coord<f64>> {
            let p = belief.particles();
            (0..p.len()).map(|i| p.position(i)).collect()
        };
        match &s.geometry {
            PreparedGeometry::Pattern(p) => Ok(Self {
                layer: search::pattern_pod(grid, p, s.law, sw)?,
                particle_pod: match sliced {
                    Some(pod) => pod,
                    None => search::pattern_pod_at(&points(), p, s.law, sw)?,
                },
                track: p.tracks(),
                area: Some(p.area_polygon()),
            }),
            PreparedGeometry::Track { points: tr, .. } => Ok(Self {
                layer: search::track_pod(grid, tr, s.law, sw)?,
                particle_pod: match sliced {
                    Some(pod) => pod,
                    None => search::track_pod_at(&points(), tr, s.law, sw)?,
                },
                track: geo::LineString(tr.clone()),
                area: None,
            }),
        }
    }
}

impl SearchReport {
    /// The report of a search applied at `evaluated_at` with this outcome and POD.
    fn new(
        s: &PreparedSearch,
        evaluated_at: Time,
        outcome: search::UpdateOutcome,
        pod: SearchPod,
    ) -> Self {
        let sw = &s.sweep_width;
        let (coverage, pod_pattern, track_spacing_m) = match s.pattern() {
            Some(p) => {
                let c = p.coverage(sw);
                (
                    Some(c),
                    Some(s.law.pod_from_coverage(c)),
                    p.track_spacing_m(),
                )
            }
            None => (None, None, None),
        };
        Self {
            id: s.def.id.clone(),
            unit: s.def.unit.clone(),
            start: s.def.start,
            end: s.def.end,
            evaluated_at,
            sweep_width_m: sw.metres(),
            detection: s.law.name(),
            track_spacing_m,
            track_length_m: Euclidean.length(&pod.track),
            coverage,
            pod_pattern,
            pos: outcome.pos,
            outcome,
            area_polygon: pod.area,
            track: pod.track,
        }
    }
}

/// The share of each cell where the object can be: afloat, its water share (cell area minus
/// its exact overlap with the land polygons); ashore, its land share.
fn where_the_object_can_be(
    grid: &GridSpec,
    land: &geo::MultiPolygon<f64>,
    afloat: bool,
) -> Result<Option<Array2<f64>>, MapError> {
    use geo::Area;
    let land_area = land.unsigned_area();
    if land_area <= 0.0 {
        return Ok(None);
    }
    // The prior crate's exact polygon-cell overlap: a uniform Area scenario over the land puts
    // overlap_area / land_area into each cell.
    let shape = prior::ScenarioShape::Area {
        polygons: land.clone(),
    };
    let on_land = prior::scenario_mass(&shape, grid).map_err(|e| MapError::Prior(Box::new(e)))?;
    let cell_area = grid.cell_area_m2();
    Ok(Some(on_land.cells.mapv(|l| {
        let land_share = (l * land_area / cell_area).clamp(0.0, 1.0);
        if afloat { 1.0 - land_share } else { land_share }
    })))
}

/// Conditions the stationary cell masses on where the object can be (`keep`, from
/// [`where_the_object_can_be`]). The grid part is rescaled to the mass it had, so rest of
/// world and the drifting part are unchanged.
fn keep_where_the_object_can_be(
    cells: &mut Array2<f64>,
    keep: &Array2<f64>,
    afloat: bool,
) -> Result<(), MapError> {
    let before = seekgrid_core::neumaier_sum(cells.iter().copied());
    if before <= 0.0 {
        return Ok(());
    }
    ndarray::Zip::from(&mut *cells)
        .and(keep)
        .for_each(|c, k| *c *= k);
    let after = seekgrid_core::neumaier_sum(cells.iter().copied());
    if after <= 0.0 {
        return Err(MapError::NowhereToBe { afloat });
    }
    cells.mapv_inplace(|v| v * before / after);
    Ok(())
}

/// Of each stationary scenario's mass on the grid, the share `keep` leaves (1 for a scenario
/// with no mass on the grid), in scenario order.
fn kept_by_mask(
    prepared: &Prepared,
    grid: &GridSpec,
    keep: &Array2<f64>,
) -> Result<Vec<(String, f64)>, MapError> {
    prepared
        .stationary
        .iter()
        .map(|s| {
            let m =
                prior::scenario_mass(&s.shape, grid).map_err(|e| MapError::Prior(Box::new(e)))?;
            let on_grid = seekgrid_core::neumaier_sum(m.cells.iter().copied());
            let kept =
                seekgrid_core::neumaier_sum(m.cells.iter().zip(keep.iter()).map(|(c, k)| c * k));
            Ok((
                s.id.clone(),
                if on_grid > 0.0 { kept / on_grid } else { 1.0 },
            ))
        })
        .collect()
}

/// POD below which a cell does not count as searched in the reports (1 %). Long-tailed lateral
/// range curves give every cell of the grid a tiny POD; the update uses it all, the report of
/// "POC in the searched area" uses the cells a planner would call searched.
pub const SEARCHED_POD_THRESHOLD: f64 = 0.01;

/// One search's POD on cells and particles, for the report of its searched area.
struct Searched<'a> {
    cell_pod: &'a Array2<f64>,
    particle_pod: &'a [f64],
}

/// The masses of a belief: its cells and its particles' weights.
struct Masses<'a> {
    cells: &'a Array2<f64>,
    weights: &'a [f64],
}

impl Searched<'_> {
    /// Replaces the outcome's area figures by those over the places searched with a POD of at
    /// least [`SEARCHED_POD_THRESHOLD`]: POC there before and after, and the mass-weighted
    /// mean POD there.
    fn set_area_figures(
        &self,
        outcome: &mut search::UpdateOutcome,
        before: &Masses<'_>,
        after: &Masses<'_>,
    ) {
        let (mut b, mut a, mut found) = (Vec::new(), Vec::new(), Vec::new());
        let mut take = |d: f64, p0: f64, p1: f64| {
            if d >= SEARCHED_POD_THRESHOLD {
                b.push(p0);
                a.push(p1);
                found.push(p0 * d);
            }
        };
        ndarray::Zip::from(self.cell_pod)
            .and(before.cells)
            .and(after.cells)
            .for_each(|d, p0, p1| take(*d, *p0, *p1));
        for (i, d) in self.particle_pod.iter().enumerate() {
            take(*d, before.weights[i], after.weights[i]);
        }
        let poc_before = seekgrid_core::neumaier_sum(b);
        outcome.poc_in_area_before = poc_before;
        outcome.poc_in_area_after = seekgrid_core::neumaier_sum(a);
        outcome.pod_mean_in_area = if poc_before > 0.0 {
            seekgrid_core::neumaier_sum(found) / poc_before
        } else {
            0.0
        };
    }
}

/// POD at every particle of a search cut into parts: each part's stretch of track scored
/// against the particles where they are at its mid-time, the parts combined as
/// `1 - Π(1 - p)`. A part without a stretch of track (the unit idle, or the track over)
/// detects nothing.
fn sliced_particle_pod(
    parts: &[slices::Slice],
    drifting: &Drifting<'_>,
    law: search::DetectionLaw,
    sw: &search::SweepWidth,
) -> Result<Vec<f64>, search::SearchError> {
    let mut miss: Option<Vec<f64>> = None;
    let mut points = Vec::new();
    for part in parts {
        drifting.points_at(part.mid, &mut points);
        let miss = miss.get_or_insert_with(|| vec![1.0; points.len()]);
        if part.track.len() < 2 {
            continue;
        }
        match search::track_pod_at(&points, &part.track, law, sw) {
            Ok(pod) => {
                for (m, d) in miss.iter_mut().zip(pod) {
                    *m *= 1.0 - d;
                }
            }
            Err(
                search::SearchError::TrackHasNoLength | search::SearchError::TrackTooShort { .. },
            ) => {}
            Err(e) => return Err(e),
        }
    }
    Ok(miss
        .unwrap_or_default()
        .into_iter()
        .map(|m| 1.0 - m)
        .collect())
}

pub(crate) fn mid_time(s: &PreparedSearch) -> Time {
    s.def.start + (s.def.end - s.def.start) / 2
}

/// The grid part plus the particles spread by the kernel of [`seekgrid_core::particle_density`]:
/// binned where that stays within 1e-4 of the direct spread's peak cell
/// ([`seekgrid_core::particle_density::binned_is_accurate`]), particle by particle elsewhere.
fn poc_cells(belief: &Belief, grid: &GridSpec, clouds: &[std::ops::Range<usize>]) -> Array2<f64> {
    let mut cells = belief.cells().clone();
    seekgrid_core::particle_density::add_particles_where_accurate(
        &mut cells,
        grid,
        belief.particles(),
        clouds,
    );
    cells
}

/// The index range of each drift run's particles in the belief, in run order.
pub(crate) fn particle_clouds(
    drift_runs: &[(String, drift::DriftRun)],
) -> Vec<std::ops::Range<usize>> {
    let mut start = 0;
    drift_runs
        .iter()
        .map(|(_, run)| {
            let r = start..start + run.len();
            start = r.end;
            r
        })
        .collect()
}

impl IncidentMap {
    /// The probability of containment per cell at the map's time: the grid part plus the
    /// particles spread by the kernel of [`seekgrid_core::particle_density`] (binned where that
    /// stays within 1e-4 of the direct spread's peak cell, particle by particle elsewhere).
    /// Computed on the first call only, and timed as the phase `particle density`; outputs
    /// that do not read it (the summary alone) never compute it.
    pub fn poc(&self) -> &Array2<f64> {
        self.poc.get_or_init(|| {
            self.phases.time("particle density", || {
                poc_cells(&self.belief, &self.grid, &self.particle_clouds())
            })
        })
    }

    /// Each analyst's share of the stationary part after the land (or water) mask, with a
    /// linear pool: `Σ_s∈a m_s k_s / Σ_s m_s k_s` over the stationary scenarios, with `m_s` the
    /// scenario's mass in the pool and `k_s` the share of it the mask kept. `None` when no mask
    /// applies, with a logarithmic pool (whose parts do not add), or when nothing is kept.
    #[must_use]
    pub fn analyst_share_after_mask(&self, analyst: &str) -> Option<f64> {
        if self.kept_by_mask.is_empty() || self.prepared.pool != prior::Pool::Linear {
            return None;
        }
        let kept = |id: &str| {
            self.kept_by_mask
                .iter()
                .find(|(k, _)| k == id)
                .map(|(_, k)| *k)
        };
        let (mut mine, mut all) = (0.0, 0.0);
        for (id, a, m) in &self.prepared.scenario_weights {
            if let Some(k) = kept(id) {
                all += m * k;
                if a == analyst {
                    mine += m * k;
                }
            }
        }
        (all > 0.0).then(|| mine / all)
    }

    /// The index range of each drift scenario's particles in the belief.
    #[must_use]
    pub fn particle_clouds(&self) -> Vec<std::ops::Range<usize>> {
        particle_clouds(&self.drift_runs)
    }

    /// Mass of particles outside the grid.
    #[must_use]
    pub fn particles_outside_grid(&self) -> f64 {
        let p = self.belief.particles();
        seekgrid_core::neumaier_sum(
            (0..p.len())
                .filter(|&i| self.grid.locate(p.position(i)).is_none())
                .map(|i| p.weights()[i]),
        )
    }
}
