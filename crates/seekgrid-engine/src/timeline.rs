//! The timeline of an incident: the prior at the reference time, drift carried forward, and
//! every completed search applied in time order as a Bayesian update.

use crate::prepare::{PrepareError, Prepared, PreparedSearch, prepare};
use crate::slices;
use geo::Coord;
use ndarray::Array2;
use seekgrid_core::{Belief, CoreError, Frame, GridSpec, Particles, ProjectedBox};
use seekgrid_drift as drift;
use seekgrid_incident::model::{Incident, Time};
use seekgrid_prior as prior;
use seekgrid_search as search;

/// Regular interval of the stored drift positions, seconds, besides the times the map uses
/// (see [`map`]).
const DRIFT_RECORD_EVERY_S: f64 = 6.0 * 3600.0;

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
    /// Detection law, as written in the incident file ([`law_name`]).
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
    /// The probability of containment per cell at `at`: the grid part plus the particles
    /// spread by the kernel of [`seekgrid_core::particle_density`], computed once.
    pub poc: Array2<f64>,
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

/// Progress of long steps (drift simulations): called with (done, total).
pub type Progress<'a> = &'a (dyn Fn(&str, u64, u64) + Sync);

fn lon_lat_box(frame: &Frame, b: [f64; 4]) -> Result<ProjectedBox, MapError> {
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

/// Computes the map of an incident at a time.
///
/// # Errors
/// See [`MapError`].
pub fn map(
    incident: &Incident,
    options: &MapOptions,
    progress: Progress<'_>,
) -> Result<IncidentMap, MapError> {
    let replay = Replay::start(incident, options.at, &[], progress)?;
    let grid = replay.grid;
    let mut belief = replay.belief_before_searches.clone();
    let mut pod_cumulative: Option<Array2<f64>> = None;
    let mut reports = Vec::new();
    let mut miss_all = 1.0;
    for &k in &replay.to_apply {
        let s = &replay.prepared.searches[k];
        let applied = replay.apply(&mut belief, s)?;
        let err = |source| MapError::Search {
            id: s.def.id.clone(),
            source: Box::new(source),
        };
        let cumulative =
            pod_cumulative.get_or_insert_with(|| Array2::zeros((grid.rows(), grid.cols())));
        applied.layer.combine_into(cumulative).map_err(err)?;
        miss_all *= 1.0 - applied.report.pos;
        reports.push(applied.report);
    }
    let (x, y, st) = replay.place(replay.at);
    belief.move_particles(x, y, st).map_err(MapError::Belief)?;

    let poc = poc_cells(&belief, &grid, &particle_clouds(&replay.drift_runs));
    Ok(IncidentMap {
        poc,
        prepared: replay.prepared,
        grid,
        grid_auto: replay.grid_auto,
        at: replay.at,
        prior: replay.prior,
        belief,
        belief_before_searches: replay.belief_before_searches,
        declared_share_of_outside: replay.declared_share_of_outside,
        pod_cumulative,
        searches: reports,
        searches_pending: replay.searches_pending,
        drift_runs: replay.drift_runs,
        pos_cumulative: 1.0 - miss_all,
    })
}

/// An incident set up at its reference time, ready to be carried forward: the inputs in the
/// frame, the drift simulated once, the grid, and the belief before any search. [`map`] and
/// the review ([`crate::review`]) both start here; the review then visits many times in one
/// pass over the same drift runs.
pub(crate) struct Replay {
    /// The inputs in the frame.
    pub(crate) prepared: Prepared,
    /// The grid.
    pub(crate) grid: GridSpec,
    /// Whether the grid extent was chosen automatically.
    pub(crate) grid_auto: bool,
    /// The last time the replay describes (the map time).
    pub(crate) at: Time,
    /// The stationary prior, when there is one.
    pub(crate) prior: Option<prior::Prior>,
    /// The belief at the reference time, before any search.
    pub(crate) belief_before_searches: Belief,
    /// See [`IncidentMap::declared_share_of_outside`].
    pub(crate) declared_share_of_outside: f64,
    /// Drift simulations, one per drift scenario.
    pub(crate) drift_runs: Vec<(String, drift::DriftRun)>,
    /// Indices into `prepared.searches` of the searches ended by `at`, in the order applied
    /// (end time, then start, then id).
    pub(crate) to_apply: Vec<usize>,
    /// Ids of the searches ending after `at`.
    pub(crate) searches_pending: Vec<String>,
}

/// One search applied by [`Replay::apply`].
pub(crate) struct Applied {
    /// Its report.
    pub(crate) report: SearchReport,
    /// Its POD on the cells.
    pub(crate) layer: search::PodLayer,
}

impl Replay {
    /// Prepares the incident, simulates the drift to `at` (default as [`MapOptions::at`])
    /// with positions stored exactly at the times the map uses and at `extra_record_at`, chooses
    /// the grid and builds the belief at the reference time.
    pub(crate) fn start(
        incident: &Incident,
        at: Option<Time>,
        extra_record_at: &[Time],
        progress: Progress<'_>,
    ) -> Result<Self, MapError> {
        let prepared = prepare(incident)?;
        let frame = prepared.frame.clone();

        let last_search_end = incident.searches.iter().map(|s| s.end).max();
        let at = at.unwrap_or_else(|| {
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
        let searches_pending = prepared
            .searches
            .iter()
            .filter(|s| s.def.end > at)
            .map(|s| s.def.id.clone())
            .collect();

        // Drift first: its cloud is part of the grid extent.
        let land = prepared.land.clone().map(drift::LandMask::new);
        let mut drift_runs = Vec::new();
        for d in &prepared.drift {
            let end = at
                .max(incident.reference_time)
                .max(d.scenario.adrift_latest);
            // Positions are stored exactly where they are used: the reference time, the map
            // time, each search's mid-time and every whole hour (the drift layer's track), and
            // the caller's extra times; a record every six hours beyond that keeps
            // interpolated positions close for other readers. 16 bytes per particle per record.
            let mut record_at: Vec<Time> = vec![incident.reference_time, at];
            record_at.extend_from_slice(extra_record_at);
            record_at.extend(to_apply.iter().map(|s| mid_time(s)));
            for s in &to_apply {
                record_at.extend(slices::slices(s).into_iter().flatten().map(|p| p.mid));
            }
            let hour = chrono::TimeDelta::hours(1);
            if let Ok(first) =
                chrono::DurationRound::duration_trunc(d.scenario.adrift_earliest, hour)
            {
                let mut t = first + hour;
                while t < end {
                    record_at.push(t);
                    t += hour;
                }
            }
            let options = drift::SimulationOptions {
                end,
                record_every_s: DRIFT_RECORD_EVERY_S,
                step_s: None,
                also_record_at: record_at,
            };
            let report = |done: u64, total: u64| progress(&d.id, done, total);
            let run = drift::simulate(&d.scenario, &frame, land.as_ref(), &options, &report)
                .map_err(|source| MapError::Drift {
                    id: d.id.clone(),
                    source: Box::new(source),
                })?;
            drift_runs.push((d.id.clone(), run));
        }

        let (grid_box, grid_auto) = match incident.grid.bounds {
            Some(b) => (lon_lat_box(&frame, b)?, false),
            None => {
                let mut b = prior::auto_extent(&prepared.stationary);
                let mut times: Vec<Time> = vec![incident.reference_time, at];
                times.extend(to_apply.iter().map(|s| mid_time(s)));
                for (_, run) in &drift_runs {
                    for t in &times {
                        if let Some(sb) = snapshot_box(&run.positions_at(*t)) {
                            let sb = sb.expanded(incident.grid.cell_m);
                            b = Some(b.map_or(sb, |x| x.union(&sb)));
                        }
                    }
                }
                for s in &to_apply {
                    if let Some(sb) = s.extent() {
                        b = Some(b.map_or(sb, |x| x.union(&sb)));
                    }
                }
                (b.ok_or(MapError::NoExtent)?, true)
            }
        };
        let grid = GridSpec::covering(&grid_box, incident.grid.cell_m, incident.grid.max_cells)
            .map_err(MapError::Grid)?;

        // The stationary part on the grid.
        let m = prepared.stationary_mass;
        let (prior, mut cells, declared, outside) = if prepared.stationary.is_empty() {
            (None, Array2::zeros((grid.rows(), grid.cols())), 0.0, 0.0)
        } else {
            let p = prior::combine(
                &prepared.stationary_analysts,
                &prepared.stationary,
                &grid,
                prepared.pool,
            )
            .map_err(|e| MapError::Prior(Box::new(e)))?;
            let cells = &p.cells * m;
            let (declared, outside) = (p.rest_of_world * m, p.outside_grid * m);
            (Some(p), cells, declared, outside)
        };
        if let (Some(afloat), Some(land)) = (incident.object_afloat, &prepared.land) {
            keep_where_the_object_can_be(&mut cells, &grid, land, afloat)?;
        }

        // The drifting part: equal weights within each scenario, summing to its pool mass.
        let mut weights = Vec::new();
        for (d, (_, run)) in prepared.drift.iter().zip(&drift_runs) {
            let n = run.len() as f64;
            weights.extend(std::iter::repeat_n(d.mass / n, run.len()));
        }
        let (x, y, s) = place(&drift_runs, incident.reference_time);
        let particles = Particles::new(x, y, weights, s).map_err(MapError::Belief)?;
        let outside_total = declared + outside;
        let declared_share_of_outside = if outside_total > 0.0 {
            declared / outside_total
        } else {
            1.0
        };
        let belief_before_searches =
            Belief::new(grid, cells, particles, outside_total).map_err(MapError::Belief)?;
        let to_apply = to_apply.iter().map(|s| s.index).collect();
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
            searches_pending,
        })
    }

    /// Every particle's position at `t` (all drift runs, in run order).
    pub(crate) fn place(&self, t: Time) -> (Vec<f64>, Vec<f64>, Vec<bool>) {
        place(&self.drift_runs, t)
    }

    /// Applies one completed search to `belief` as a Bayesian update: the particles are placed
    /// at the search's middle (or met part by part, see [`crate::slices`]) and left there.
    pub(crate) fn apply(
        &self,
        belief: &mut Belief,
        s: &PreparedSearch,
    ) -> Result<Applied, MapError> {
        let grid = &self.grid;
        let t = mid_time(s);
        let (x, y, st) = self.place(t);
        belief.move_particles(x, y, st).map_err(MapError::Belief)?;
        let points: Vec<Coord<f64>> = (0..belief.particles().len())
            .map(|i| belief.particles().position(i))
            .collect();
        let sw = &s.sweep_width;
        let err = |source| MapError::Search {
            id: s.def.id.clone(),
            source: Box::new(source),
        };
        // Drifting particles meet a long search part by part (see `slices`); otherwise they
        // are scored where they are at its middle.
        let parts = slices::slices(s);
        let sliced = match &parts {
            Some(parts) => {
                Some(sliced_particle_pod(parts, &|t| self.place(t), s.law, sw).map_err(err)?)
            }
            None => None,
        };
        let (layer, particle_pod, track_line, area) = match (&s.pattern, &s.track) {
            (Some(p), _) => (
                search::pattern_pod(grid, p, s.law, sw).map_err(err)?,
                match sliced {
                    Some(pod) => pod,
                    None => search::pattern_pod_at(&points, p, s.law, sw).map_err(err)?,
                },
                p.tracks(),
                Some(p.area_polygon()),
            ),
            (None, Some(tr)) => (
                search::track_pod(grid, tr, s.law, sw).map_err(err)?,
                match sliced {
                    Some(pod) => pod,
                    None => search::track_pod_at(&points, tr, s.law, sw).map_err(err)?,
                },
                geo::LineString(tr.clone()),
                None,
            ),
            (None, None) => unreachable!("a prepared search has a pattern or a track"),
        };
        let before_cells = belief.cells().clone();
        let before_weights = belief.particles().weights().to_vec();
        let mut outcome = search::update_after_miss(belief, &layer, &particle_pod).map_err(err)?;
        let searched = Searched {
            cell_pod: &layer.to_dense(grid).map_err(err)?,
            particle_pod: &particle_pod,
        };
        searched.report(
            &mut outcome,
            (&before_cells, &before_weights),
            (belief.cells(), belief.particles().weights()),
        );
        let track_length_m = euclid_length(&track_line);
        let (coverage, pod_pattern, track_spacing_m) = match &s.pattern {
            Some(p) => {
                let c = p.coverage(sw);
                (
                    Some(c),
                    Some(s.law.pod_from_coverage(c)),
                    pattern_spacing(p),
                )
            }
            None => (None, None, None),
        };
        Ok(Applied {
            report: SearchReport {
                id: s.def.id.clone(),
                unit: s.def.unit.clone(),
                start: s.def.start,
                end: s.def.end,
                evaluated_at: t,
                sweep_width_m: sw.metres(),
                detection: law_name(s.law),
                track_spacing_m,
                track_length_m,
                coverage,
                pod_pattern,
                pos: outcome.pos,
                outcome,
                area_polygon: area,
                track: track_line,
            },
            layer,
        })
    }
}

/// Every particle's position at `t`, all drift runs in run order.
fn place(drift_runs: &[(String, drift::DriftRun)], t: Time) -> (Vec<f64>, Vec<f64>, Vec<bool>) {
    let (mut x, mut y, mut s) = (Vec::new(), Vec::new(), Vec::new());
    for (_, run) in drift_runs {
        let snap = run.positions_at(t);
        x.extend(snap.x_m);
        y.extend(snap.y_m);
        s.extend(snap.stranded);
    }
    (x, y, s)
}

/// Conditions the stationary cell masses on where the object can be: afloat, each cell keeps
/// only its water share (cell area minus its exact overlap with the land polygons); ashore,
/// only its land share. The grid part is rescaled to the mass it had, so rest of world and the
/// drifting part are unchanged.
fn keep_where_the_object_can_be(
    cells: &mut Array2<f64>,
    grid: &GridSpec,
    land: &geo::MultiPolygon<f64>,
    afloat: bool,
) -> Result<(), MapError> {
    use geo::Area;
    let before = seekgrid_core::neumaier_sum(cells.iter().copied());
    if before <= 0.0 {
        return Ok(());
    }
    let land_area = land.unsigned_area();
    if land_area <= 0.0 {
        return Ok(());
    }
    // The prior crate's exact polygon-cell overlap: a uniform Area scenario over the land puts
    // overlap_area / land_area into each cell.
    let shape = prior::Shape::Area {
        polygons: land.clone(),
    };
    let on_land = prior::scenario_mass(&shape, grid).map_err(|e| MapError::Prior(Box::new(e)))?;
    let cell_area = grid.cell_area_m2();
    ndarray::Zip::from(&mut *cells)
        .and(&on_land.cells)
        .for_each(|c, l| {
            let land_share = (l * land_area / cell_area).clamp(0.0, 1.0);
            *c *= if afloat { 1.0 - land_share } else { land_share };
        });
    let after = seekgrid_core::neumaier_sum(cells.iter().copied());
    if after <= 0.0 {
        return Err(MapError::NowhereToBe { afloat });
    }
    cells.mapv_inplace(|v| v * before / after);
    Ok(())
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

impl Searched<'_> {
    /// Replaces the outcome's area figures by those over the places searched with a POD of at
    /// least [`SEARCHED_POD_THRESHOLD`]: POC there before and after, and the mass-weighted
    /// mean POD there.
    fn report(
        &self,
        outcome: &mut search::UpdateOutcome,
        before: (&Array2<f64>, &[f64]),
        after: (&Array2<f64>, &[f64]),
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
            .and(before.0)
            .and(after.0)
            .for_each(|d, p0, p1| take(*d, *p0, *p1));
        for (i, d) in self.particle_pod.iter().enumerate() {
            take(*d, before.1[i], after.1[i]);
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

fn pattern_spacing(p: &search::Pattern) -> Option<f64> {
    match p {
        search::Pattern::ParallelSweep {
            track_spacing_m, ..
        }
        | search::Pattern::CreepingLine {
            track_spacing_m, ..
        }
        | search::Pattern::ExpandingSquare {
            track_spacing_m, ..
        } => Some(*track_spacing_m),
        search::Pattern::SectorSearch { .. } => None,
    }
}

fn euclid_length(l: &geo::LineString<f64>) -> f64 {
    l.0.windows(2)
        .map(|w| (w[1].x - w[0].x).hypot(w[1].y - w[0].y))
        .sum()
}

/// POD at every particle of a search cut into parts: each part's stretch of track scored
/// against the particles where they are at its mid-time, the parts combined as
/// `1 - Π(1 - p)`. A part without a stretch of track (the unit idle, or the track over)
/// detects nothing.
fn sliced_particle_pod(
    parts: &[slices::Slice],
    place: &impl Fn(Time) -> (Vec<f64>, Vec<f64>, Vec<bool>),
    law: search::DetectionLaw,
    sw: &search::SweepWidth,
) -> Result<Vec<f64>, search::SearchError> {
    let mut miss: Option<Vec<f64>> = None;
    for part in parts {
        let (x, y, _) = place(part.mid);
        let miss = miss.get_or_insert_with(|| vec![1.0; x.len()]);
        if part.track.len() < 2 {
            continue;
        }
        let points: Vec<Coord<f64>> = x.iter().zip(&y).map(|(&x, &y)| Coord { x, y }).collect();
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

/// The grid part plus the particles spread by the kernel of [`seekgrid_core::particle_density`].
pub(crate) fn poc_cells(
    belief: &Belief,
    grid: &GridSpec,
    clouds: &[std::ops::Range<usize>],
) -> Array2<f64> {
    let mut cells = belief.cells().clone();
    seekgrid_core::particle_density::add_particles(&mut cells, grid, belief.particles(), clouds);
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

/// The name of a detection law as written in the incident file.
#[must_use]
pub fn law_name(law: search::DetectionLaw) -> &'static str {
    match law {
        search::DetectionLaw::InverseCube => "inverse-cube",
        search::DetectionLaw::Exponential => "exponential",
        search::DetectionLaw::DefiniteRange => "definite-range",
    }
}

impl IncidentMap {
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
