//! Reviewing an incident once it has ended: what the searches achieved over time, which of
//! them passed over the place where the object was found, how well each analyst and scenario
//! foresaw it, and what the same effort could have achieved had it been allocated optimally.
//!
//! [`review`] replays the incident once: the drift is simulated once (its positions stored at
//! every time the review visits), the prior is pooled once, and the searches are applied in the
//! order [`crate::timeline::map`] applies them, with the belief read in between at every
//! timeline time. The counterfactual runs alongside in a second belief. The result is a
//! [`Review`] of plain values; `seekgrid-render` writes it.
//!
//! # Definitions
//! * **End of the review**: the outcome's time (found or suspended), else the end of the last
//!   logged search, else the reference time. Searches ending after it are not applied.
//! * **Timeline**: a row at the reference time, at every whole hour after it up to the end, at
//!   every applied search's end, and at the end. A search counts in a row from its end on.
//! * **Effort** of a search: the area swept, sweep width (with its correction factors) x track
//!   length (Z = W·L, m²), and the track length L. For a parallel sweep or creeping line, whose
//!   POD is credited over its whole area at coverage C = W/S, L is the area over the track
//!   spacing (C = Z/A = W/S, so L = A/S: found, Cooper, "Selected Inland Search Theory
//!   Definitions"), a little more than its drawn legs, whose turns lie S/2 inside the edges;
//!   for every other pattern and a followed track, L is the length of the legs or track.
//! * **Period**: the searches tasked in the same period (the incident's `tasked_in`); a search
//!   without one forms a period with the searches that share exactly its start and end. A
//!   period runs from the earliest start to the latest end of its searches. Periods are ordered
//!   by start, then id.
//! * **Counterfactual** of a period: Stone's optimal allocation of the period's effort (the sum
//!   of its searches' W·L, exponential detection, [`seekgrid_search::optimal_allocation`],
//!   docs/references.md §4) against the belief at the period's start, with the particles inside
//!   the grid binned into their cells (as the plan bound does). Two beliefs are used: the
//!   belief the searches actually left ("same belief": the best this period could have done
//!   after what was actually done before), and a chain in which every earlier period was also
//!   searched optimally (the optimal allocation's POD applied as a Bayesian update at the
//!   period's start, the particles then carried on by the same drift). For a stationary target
//!   and exponential detection, the optimum is an upper bound on any search with the same
//!   effort, and searching optimally period after period is optimal overall (docs/references.md
//!   §7). It does not bound inverse-cube or definite-range sweeps, nor, exactly, periods that
//!   overlap in time or a drifting target (the actual searches meet the particles at their own
//!   times, the optimum at the period's start).
//! * **Truth**: the found position. Its density is the belief's probability in the grid cell
//!   that holds it divided by the cell's area (per km²); drifting particles are spread by the
//!   map's kernel ([`seekgrid_core::particle_density`]; in the timeline by its fast binned form,
//!   see `review/kernel.rs`). The scores read that kernel particle by particle in the truth's
//!   cell alone; the map bins wide clouds of many particles, within 1e-4 of the peak cell of
//!   the particle-by-particle spread, so a map's POC at the truth may differ from the scores'
//!   by that much. The rank ([`seekgrid_core::rank::truth_rank`]) is the mass and
//!   area of the cells the belief rated denser than the truth. For a drifting object the
//!   timeline's density is that of the found *place* at each time, not of where the object was
//!   then; likewise a search's POD at the truth is its POD at the found place.
//! * **Scores**: each scenario's density at the truth, at the found time (a stationary
//!   scenario's own cell masses; a drift scenario's particles, equally weighted, carried to the
//!   found time and spread by the map's kernel); an analyst's density is the mix of their
//!   scenarios by the analyst's scenario weights; the pool's is the belief before any search at
//!   the found time. Log scores are [`seekgrid_prior::credibility::log_score`] of densities per
//!   km². An analyst's bias is the distance and true bearing from the mean of their
//!   distribution (the in-grid mass of their stationary scenarios and all particles of their
//!   drift scenarios, in the working frame) to the truth, the grid bearing turned true with the
//!   meridian convergence at the mean.

mod kernel;

use crate::prepare::{PreparedGeometry, PreparedSearch};
use crate::timeline::{
    MapError, Progress, Replay, SEARCHED_POD_THRESHOLD, SearchLog, SearchReport, particle_clouds,
};
use geo::{Coord, LineString, Polygon};
use ndarray::Array2;
use seekgrid_core::rank::{TruthRank, truth_rank};
use seekgrid_core::{Belief, CoreError, Frame, GridSpec, Particles, neumaier_sum};
use seekgrid_incident::model::{Incident, Item, ScenarioKind, SearchDef, Time};
use seekgrid_prior as prior;
use seekgrid_search as search;
use std::collections::BTreeMap;

pub use seekgrid_incident::model::Outcome;

/// Why the review ends where it does.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ReviewEnd {
    /// At the time the object was found.
    Found,
    /// At the time the search was suspended.
    Suspended,
    /// No outcome given: at the end of the last logged search.
    LastSearchEnd,
    /// No outcome and no search after the reference time: at the reference time.
    ReferenceTime,
}

/// The found position in the review's terms.
#[derive(Debug, Clone, PartialEq)]
pub struct Truth {
    /// `[lon, lat]`, WGS84 degrees, as given.
    pub lon_lat: [f64; 2],
    /// In the working frame, metres.
    pub xy: Coord<f64>,
    /// When it was found.
    pub time: Time,
    /// The stated error of the position, metres (not used in the scores).
    pub position_error_m: Option<f64>,
    /// The grid cell `[row, col]` holding it; `None` when it lies outside the grid (then no
    /// density, rank or score can be computed).
    pub cell: Option<(usize, usize)>,
}

/// Search effort: the area swept and the track length.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Effort {
    /// Σ sweep width x track length (W·L), m².
    pub area_swept_m2: f64,
    /// Σ track length, metres.
    pub track_length_m: f64,
    /// Number of searches.
    pub searches: usize,
}

impl Effort {
    fn add(&mut self, s: &ReviewedSearch) {
        self.area_swept_m2 += s.effort.area_swept_m2;
        self.track_length_m += s.effort.track_length_m;
        self.searches += 1;
    }
}

/// One logged search in the review.
#[derive(Debug, Clone)]
pub struct ReviewedSearch {
    /// Search id.
    pub id: String,
    /// Unit id.
    pub unit: String,
    /// Start.
    pub start: Time,
    /// End.
    pub end: Time,
    /// Index into [`Review::periods`]; `None` for a search not applied.
    pub period: Option<usize>,
    /// Whether it ended by the end of the review and was applied.
    pub applied: bool,
    /// Detection law as written in the incident file.
    pub detection: &'static str,
    /// Effective sweep width, metres.
    pub sweep_width_m: f64,
    /// Its effort (one search; see the module docs for the track length of a rectangle).
    pub effort: Effort,
    /// Length of its legs as drawn, or of its followed track, metres (as in the map's
    /// summary).
    pub legs_length_m: f64,
    /// Its POS given that the searches before it failed (conditional); `None` when not applied.
    pub pos: Option<f64>,
    /// Its POD at the found position, where found (the search's own POD at that point, from
    /// its pattern or track and law); `None` without a found position.
    pub pod_at_truth: Option<f64>,
    /// The pattern's area in the working frame; `None` for a followed track.
    pub area_polygon: Option<Polygon<f64>>,
    /// Its legs or followed track, in the working frame.
    pub track: LineString<f64>,
}

impl ReviewedSearch {
    /// Whether the search covered the found position: its POD there is at least
    /// [`SEARCHED_POD_THRESHOLD`].
    #[must_use]
    pub fn covered_truth(&self) -> bool {
        self.pod_at_truth
            .is_some_and(|d| d >= SEARCHED_POD_THRESHOLD)
    }
}

/// One unit's effort over the whole review.
#[derive(Debug, Clone, PartialEq)]
pub struct UnitEffort {
    /// Unit id.
    pub unit: String,
    /// Its applied searches' effort.
    pub effort: Effort,
}

/// The optimal allocation of a period's effort (see the module docs).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OptimalPeriod {
    /// POS of the optimal allocation against the belief the searches actually left at the
    /// period's start (conditional on the earlier searches failing).
    pub pos_same_belief: f64,
    /// The POD that allocation would have given the found position's cell.
    pub pod_at_truth_same_belief: Option<f64>,
    /// POS of the optimal allocation in the chain where every earlier period was also optimal
    /// (conditional on the chain's earlier periods failing).
    pub pos_chain: f64,
    /// Cumulative POS of the chain up to and including this period, `1 - Π(1 - pos_chain)`.
    pub pos_cumulative_chain: f64,
    /// The POD the chain's allocation would have given the found position's cell.
    pub pod_at_truth_chain: Option<f64>,
}

/// One search period (see the module docs for how searches are grouped).
#[derive(Debug, Clone, PartialEq)]
pub struct Period {
    /// The `tasked_in` name, or `START/END` (RFC 3339) for a window of searches without one.
    pub id: String,
    /// Whether the period comes from `tasked_in` (else from identical start and end times).
    pub tasked: bool,
    /// Earliest start of its searches.
    pub start: Time,
    /// Latest end of its searches.
    pub end: Time,
    /// Its searches' ids, in the order applied.
    pub searches: Vec<String>,
    /// Its units, in order of first appearance.
    pub units: Vec<String>,
    /// Its effort.
    pub effort: Effort,
    /// Whether every search of the period used the exponential law (only then is the optimum a
    /// bound on what was done).
    pub all_exponential: bool,
    /// Whether its time (start to end) overlaps another period's; the counterfactual is then
    /// not an exact comparison.
    pub overlaps_other_period: bool,
    /// POS achieved by its searches, `1 - Π(1 - POS_k)` with each search's conditional POS.
    pub pos: f64,
    /// Cumulative POS of every search ended by the period's end.
    pub pos_cumulative: f64,
    /// Combined POD of its searches at the found position, `1 - Π(1 - d_k)`.
    pub pod_at_truth: Option<f64>,
    /// The counterfactual; `None` when it could not be computed (see [`Review::not_computed`]).
    pub optimal: Option<OptimalPeriod>,
}

/// The belief at the found position at one time.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TruthAt {
    /// Probability in the found position's cell (grid part plus spread particles).
    pub poc: f64,
    /// That probability per km² of the cell.
    pub density_per_km2: f64,
    /// Mass and area the belief rated denser than the truth.
    pub rank: TruthRank,
}

/// One row of the timeline.
#[derive(Debug, Clone, PartialEq)]
pub struct TimelineRow {
    /// Time.
    pub time: Time,
    /// Hours since the reference time (negative for a search that ended before it).
    pub hours_since_reference: f64,
    /// Whether this is a whole hour.
    pub whole_hour: bool,
    /// Searches that ended at this time.
    pub searches_ended: Vec<String>,
    /// Number of searches applied by this time.
    pub searches_applied: usize,
    /// Cumulative POS of those searches.
    pub pos_cumulative: f64,
    /// Their effort.
    pub effort: Effort,
    /// Their effort per unit, aligned with [`Review::units`].
    pub effort_by_unit: Vec<Effort>,
    /// Their effort per period, aligned with [`Review::periods`].
    pub effort_by_period: Vec<Effort>,
    /// The belief at the found position; `None` when not found or found outside the grid.
    pub truth: Option<TruthAt>,
}

/// A scenario's density at the found position.
#[derive(Debug, Clone, PartialEq)]
pub struct ScenarioScore {
    /// Scenario id.
    pub id: String,
    /// Analyst id.
    pub analyst: String,
    /// Kind as written in the incident file (`point`, `drift`, …).
    pub kind: &'static str,
    /// Its weight within the analyst's scenarios (normalised).
    pub weight_within_analyst: f64,
    /// Its mass in the pool (analyst weight x scenario weight).
    pub weight_in_pool: f64,
    /// Density at the found position, per km²; `None` when not found or outside the grid.
    pub density_per_km2: Option<f64>,
    /// ln(density per km²), −∞ for a density of 0; `None` as the density.
    pub log_score: Option<f64>,
}

/// An analyst's bias: from the mean of their distribution to the found position.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Bias {
    /// The mean, working frame.
    pub mean_xy: Coord<f64>,
    /// The mean, `[lon, lat]`.
    pub mean_lon_lat: [f64; 2],
    /// Distance from the mean to the truth, metres (in the working frame).
    pub distance_m: f64,
    /// True bearing from the mean to the truth, degrees in 0..360; `None` at distance 0.
    pub bearing_deg: Option<f64>,
}

/// One analyst in the review.
#[derive(Debug, Clone, PartialEq)]
pub struct AnalystScore {
    /// Analyst id.
    pub id: String,
    /// The credibility weight used in the pool (normalised over analysts).
    pub weight_used: f64,
    /// Density at the found position, per km² (the mix of their scenarios).
    pub density_per_km2: Option<f64>,
    /// ln(density per km²), −∞ for a density of 0.
    pub log_score: Option<f64>,
    /// Whether the pool's log score is strictly higher than this analyst's.
    pub pool_scored_higher: Option<bool>,
    /// From the mean of their distribution to the truth; `None` without a found position or
    /// when they put no mass on the grid.
    pub bias: Option<Bias>,
    /// The weight Bayes' rule gives them once the truth is known
    /// ([`seekgrid_prior::credibility::implied_weights`]).
    pub implied_weight: Option<f64>,
}

/// The pool's score.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PoolScore {
    /// Density of the pooled prior (before any search) at the found position and time, per km².
    pub density_per_km2: f64,
    /// Its log score (−∞ for 0).
    pub log_score: f64,
    /// Analysts whose log score is strictly below the pool's.
    pub analysts_beaten: usize,
    /// Analysts scored.
    pub analysts: usize,
}

/// Something the review could not compute, and why.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct NotComputed {
    /// What.
    pub what: String,
    /// Why, in words a planner can act on.
    pub why: String,
}

/// The review of an incident (see the module docs for every definition).
#[derive(Debug, Clone)]
pub struct Review {
    /// Incident title.
    pub title: String,
    /// Reference time of the prior.
    pub reference_time: Time,
    /// End of the review.
    pub end: Time,
    /// Why it ends there.
    pub end_reason: ReviewEnd,
    /// The outcome reviewed, if any.
    pub outcome: Option<Outcome>,
    /// The found position, if found.
    pub truth: Option<Truth>,
    /// The working frame.
    pub frame: Frame,
    /// The grid.
    pub grid: GridSpec,
    /// Every logged search, in file order.
    pub searches: Vec<ReviewedSearch>,
    /// Units with applied searches, in order of first appearance.
    pub units: Vec<UnitEffort>,
    /// Search periods, by start.
    pub periods: Vec<Period>,
    /// The timeline, by time.
    pub timeline: Vec<TimelineRow>,
    /// Cumulative POS of the applied searches at the end.
    pub pos_cumulative: f64,
    /// Combined POD of every applied search at the found position.
    pub pod_at_truth_cumulative: Option<f64>,
    /// The pool's score, when found inside the grid.
    pub pool: Option<PoolScore>,
    /// Every analyst, in file order.
    pub analysts: Vec<AnalystScore>,
    /// Every scenario, in file order.
    pub scenarios: Vec<ScenarioScore>,
    /// What could not be computed, and why.
    pub not_computed: Vec<NotComputed>,
}

/// Why a review cannot be made.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum ReviewError {
    /// The replay failed as a map would.
    #[error(transparent)]
    Map(#[from] MapError),
    /// The outcome is dated before the reference time.
    #[error(
        "outcome time {time} is before the reference time {reference}; check the [outcome] time"
    )]
    OutcomeBeforeReference {
        /// The outcome's time.
        time: Time,
        /// The incident's reference time.
        reference: Time,
    },
    /// The found position cannot be projected.
    #[error("outcome position [{lon}, {lat}]: {source}; check the [outcome] position ([lon, lat])")]
    Position {
        /// Longitude.
        lon: f64,
        /// Latitude.
        lat: f64,
        /// Why.
        source: Box<CoreError>,
    },
    /// A search's POD at the truth failed.
    #[error("search \"{id}\": {source}")]
    Search {
        /// Search id.
        id: String,
        /// Why.
        source: Box<search::SearchError>,
    },
    /// The optimal allocation of a period could not be applied to the counterfactual belief.
    #[error("the optimal allocation of period {period}: {source}")]
    Counterfactual {
        /// Period id.
        period: String,
        /// Why.
        source: Box<search::SearchError>,
    },
    /// A scenario's masses cannot be computed.
    #[error("scenario \"{id}\": {source}")]
    Scenario {
        /// Scenario id.
        id: String,
        /// Why.
        source: Box<prior::PriorError>,
    },
    /// A belief operation failed.
    #[error("belief: {0}")]
    Belief(CoreError),
}

impl ReviewError {
    /// The part of the incident file at fault, when one is.
    #[must_use]
    pub fn item(&self) -> Option<Item> {
        match self {
            Self::Map(e) => e.item(),
            Self::OutcomeBeforeReference { .. } | Self::Position { .. } => Some(Item::Outcome),
            Self::Search { id, .. } => Some(Item::Search(id.clone())),
            Self::Scenario { id, .. } => Some(Item::Scenario(id.clone())),
            Self::Counterfactual { .. } | Self::Belief(_) => None,
        }
    }
}

/// The period a search belongs to, by `tasked_in`; `None` for a search without it.
fn tasked_in(def: &SearchDef) -> Option<&str> {
    def.tasked_in.as_deref()
}

/// Reviews an incident against its outcome (see the module docs).
///
/// `outcome` is how the incident ended (`None`: not known; the review ends at the last
/// search). Progress of the drift simulations is reported through `progress`.
///
/// # Errors
/// See [`ReviewError`].
pub fn review(
    incident: &Incident,
    outcome: Option<&Outcome>,
    progress: Progress<'_>,
) -> Result<Review, ReviewError> {
    let reference = incident.reference_time;
    let (end, end_reason) = review_end(incident, outcome)?;
    let mut not_computed = Vec::new();
    let applied_defs: Vec<&SearchDef> = incident.searches.iter().filter(|s| s.end <= end).collect();
    let mut periods = group_periods(&applied_defs);
    let hours = whole_hours_after(reference, end);
    let checkpoints = checkpoints(reference, end, &hours, &applied_defs, &periods);
    let extra: Vec<Time> = checkpoints.keys().copied().collect();
    let replay = Replay::start(incident, Some(end), &extra, progress)?;
    add_period_effort(&mut periods, &replay);
    let truth = locate_truth(outcome, &replay, &mut not_computed)?;
    let truth_cell = truth.as_ref().and_then(|t| t.cell);
    let pass = replay_once(
        &replay,
        &checkpoints,
        &mut periods,
        truth_cell,
        &mut not_computed,
    )?;
    let searches = reviewed_searches(&replay, &pass.reports, &periods, truth.as_ref())?;
    note_missing_searches(incident, &periods, &mut not_computed);
    add_period_results(&mut periods, &searches, &pass.reports, truth.as_ref());
    let order = in_applied_order(&pass.reports, &searches);
    let units = effort_by_unit(&order);
    let timeline = timeline_rows(pass.rows, &order, &units, &periods, reference, &hours);
    let pod_at_truth_cumulative = truth.as_ref().map(|_| pod_at_truth_cumulative(&searches));
    let scores = match (&truth, truth_cell) {
        (Some(t), Some(cell)) => score(incident, &replay, t, cell, &mut not_computed)?,
        _ => {
            note_unscored(outcome, &mut not_computed);
            unscored(incident, &replay)
        }
    };
    Ok(Review {
        title: incident.title.clone(),
        reference_time: reference,
        end,
        end_reason,
        outcome: outcome.cloned(),
        truth,
        frame: replay.prepared.frame.clone(),
        grid: replay.grid,
        searches,
        units,
        periods,
        timeline,
        pos_cumulative: 1.0 - pass.miss_all,
        pod_at_truth_cumulative,
        pool: scores.pool,
        analysts: scores.analysts,
        scenarios: scores.scenarios,
        not_computed,
    })
}

/// When the review ends and why: the outcome's time; without an outcome, the last search's
/// end, or the reference time when no search ends after it.
///
/// # Errors
/// [`ReviewError::OutcomeBeforeReference`] when the outcome precedes the reference time.
fn review_end(
    incident: &Incident,
    outcome: Option<&Outcome>,
) -> Result<(Time, ReviewEnd), ReviewError> {
    let reference = incident.reference_time;
    let last_end = incident.searches.iter().map(|s| s.end).max();
    let (end, end_reason) = match outcome {
        Some(o @ Outcome::Found { .. }) => (o.time(), ReviewEnd::Found),
        Some(o @ Outcome::Suspended { .. }) => (o.time(), ReviewEnd::Suspended),
        None => match last_end {
            Some(t) if t > reference => (t, ReviewEnd::LastSearchEnd),
            _ => (reference, ReviewEnd::ReferenceTime),
        },
    };
    if end < reference {
        return Err(ReviewError::OutcomeBeforeReference {
            time: end,
            reference,
        });
    }
    Ok((end, end_reason))
}

/// Every time the replay visits, with what happens there: a timeline row at the reference
/// time, each whole hour, each search's end and the review's end; the start of each period.
fn checkpoints(
    reference: Time,
    end: Time,
    hours: &[Time],
    applied_defs: &[&SearchDef],
    periods: &[Period],
) -> BTreeMap<Time, Checkpoint> {
    let mut checkpoints: BTreeMap<Time, Checkpoint> = BTreeMap::new();
    for t in hours.iter().copied().chain([reference, end]) {
        checkpoints.entry(t).or_default().row = true;
    }
    for s in applied_defs {
        let c = checkpoints.entry(s.end).or_default();
        c.row = true;
        c.ended.push(s.id.clone());
    }
    for (k, p) in periods.iter().enumerate() {
        checkpoints
            .entry(p.start)
            .or_default()
            .period_starts
            .push(k);
    }
    checkpoints
}

/// Adds to each period the effort of its searches (area swept, track length, count).
fn add_period_effort(periods: &mut [Period], replay: &Replay) {
    for p in periods {
        for s in replay
            .prepared
            .searches
            .iter()
            .filter(|s| p.searches.contains(&s.def.id))
        {
            let length = effort_length(s, geometry(s).2);
            p.effort.area_swept_m2 += s.sweep_width.metres() * length;
            p.effort.track_length_m += length;
            p.effort.searches += 1;
        }
    }
}

/// The found position in the working frame and its grid cell; `None` without a found
/// position. Notes in `not_computed` a found position outside the grid.
///
/// # Errors
/// [`ReviewError::Position`] when the found position cannot be projected.
fn locate_truth(
    outcome: Option<&Outcome>,
    replay: &Replay,
    not_computed: &mut Vec<NotComputed>,
) -> Result<Option<Truth>, ReviewError> {
    let Some(Outcome::Found {
        position,
        time,
        position_error_m,
        ..
    }) = outcome
    else {
        return Ok(None);
    };
    let [lon, lat] = *position;
    let xy = replay
        .prepared
        .frame
        .checked_to_xy(lon, lat)
        .map_err(|e| ReviewError::Position {
            lon,
            lat,
            source: Box::new(e),
        })?;
    let cell = replay.grid.locate(xy);
    if cell.is_none() {
        not_computed.push(NotComputed {
            what: "density, rank and scores at the found position".into(),
            why: "the found position lies outside the grid; give [grid] bounds that contain it"
                .into(),
        });
    }
    Ok(Some(Truth {
        lon_lat: *position,
        xy,
        time: *time,
        position_error_m: *position_error_m,
        cell,
    }))
}

/// What the single pass over the checkpoints leaves behind.
struct Pass {
    /// The timeline rows before their running totals.
    rows: Vec<RowDraft>,
    /// The probability all applied searches missed (1 − cumulative POS).
    miss_all: f64,
    /// The applied searches' reports, in the order applied.
    reports: Vec<SearchReport>,
}

/// One pass: searches applied in order, the belief read at every checkpoint, and the
/// counterfactual chain advanced and each period's optimal allocation filled in at every
/// period start. Notes in `not_computed` a period whose optimum could not be computed.
///
/// # Errors
/// A search, drift or counterfactual that cannot be applied.
fn replay_once(
    replay: &Replay,
    checkpoints: &BTreeMap<Time, Checkpoint>,
    periods: &mut [Period],
    truth_cell: Option<(usize, usize)>,
    not_computed: &mut Vec<NotComputed>,
) -> Result<Pass, ReviewError> {
    let cell_km2 = replay.grid.cell_area_m2() / seekgrid_core::units::M2_PER_KM2;
    let clouds = particle_clouds(&replay.drift_runs);
    let drifting = replay.drifting();
    let mut log = SearchLog::new(replay.belief_before_searches.clone());
    let mut chain = Counterfactual::new(replay, periods);
    let mut applied = replay.to_apply().peekable();
    let mut rows = Vec::new();
    for (&t, cp) in checkpoints {
        while let Some(s) = applied.next_if(|s| s.def.end <= t) {
            log.apply(s, &drifting)?;
        }
        drifting.move_particles(&mut log.belief, t)?;
        if let Some(belief) = chain
            .belief
            .as_mut()
            .filter(|_| !cp.period_starts.is_empty())
        {
            drifting.move_particles(belief, t)?;
        }
        for &k in &cp.period_starts {
            chain.fill_period(&log.belief, &mut periods[k], truth_cell, not_computed)?;
        }
        if cp.row {
            let truth = match truth_cell {
                Some(cell) => Some(truth_at(
                    &log.belief,
                    &replay.grid,
                    &clouds,
                    cell,
                    cell_km2,
                )?),
                None => None,
            };
            rows.push(RowDraft {
                time: t,
                ended: cp.ended.clone(),
                applied: log.reports.len(),
                pos_cumulative: 1.0 - log.miss_all,
                truth,
            });
        }
    }
    Ok(Pass {
        rows,
        miss_all: log.miss_all,
        reports: log.reports,
    })
}

/// The counterfactual chain: the belief had every period so far been searched by its optimal
/// allocation, and the probability all those optimal searches missed.
struct Counterfactual {
    /// The chained belief; `None` when there is no period.
    belief: Option<Belief>,
    /// Product of (1 − POS) of the optimal allocations applied so far.
    miss: f64,
}

impl Counterfactual {
    /// The chain at the reference time: the belief before any search, when there are periods.
    fn new(replay: &Replay, periods: &[Period]) -> Self {
        Self {
            belief: (!periods.is_empty()).then(|| replay.belief_before_searches.clone()),
            miss: 1.0,
        }
    }

    /// Fills in `period.optimal` at its start: the optimal allocation of its effort against
    /// the belief as it was (`belief`) and against the chain, which it then advances. Notes
    /// in `not_computed` a period where either has no probability in the grid.
    ///
    /// # Errors
    /// [`ReviewError::Counterfactual`] when the optimal search cannot be applied to the chain.
    fn fill_period(
        &mut self,
        belief: &Belief,
        period: &mut Period,
        truth_cell: Option<(usize, usize)>,
        not_computed: &mut Vec<NotComputed>,
    ) -> Result<(), ReviewError> {
        let effort = period.effort.area_swept_m2;
        let same = optimum(belief, effort, truth_cell);
        let chained = match self.belief.as_mut() {
            Some(c) => optimum_applied(c, effort, truth_cell, &period.id)?,
            None => None,
        };
        match (same, chained) {
            (Some(same), Some(chain)) => {
                self.miss *= 1.0 - chain.pos;
                period.optimal = Some(OptimalPeriod {
                    pos_same_belief: same.pos,
                    pod_at_truth_same_belief: same.pod_at_truth,
                    pos_chain: chain.pos,
                    pos_cumulative_chain: 1.0 - self.miss,
                    pod_at_truth_chain: chain.pod_at_truth,
                });
            }
            _ => not_computed.push(NotComputed {
                what: format!("the optimal allocation of period {}", period.id),
                why: "no probability lies inside the grid at the period's start (all of it is rest of world or particles outside the grid)".into(),
            }),
        }
        Ok(())
    }
}

/// Every logged search in file order, with its geometry, effort, POS when applied and POD
/// at the truth.
///
/// # Errors
/// [`ReviewError::Search`] when a search's POD at the truth cannot be computed.
fn reviewed_searches(
    replay: &Replay,
    reports: &[SearchReport],
    periods: &[Period],
    truth: Option<&Truth>,
) -> Result<Vec<ReviewedSearch>, ReviewError> {
    let mut searches = Vec::new();
    for s in &replay.prepared.searches {
        let report = reports.iter().find(|r| r.id == s.def.id);
        let (track, area, track_length_m) = match report {
            Some(r) => (r.track.clone(), r.area_polygon.clone(), r.track_length_m),
            None => geometry(s),
        };
        let sweep_width_m = s.sweep_width.metres();
        let length = effort_length(s, track_length_m);
        let pod_at_truth = match truth {
            Some(t) => Some(pod_at(s, t.xy)?),
            None => None,
        };
        searches.push(ReviewedSearch {
            id: s.def.id.clone(),
            unit: s.def.unit.clone(),
            start: s.def.start,
            end: s.def.end,
            period: periods.iter().position(|p| p.searches.contains(&s.def.id)),
            applied: report.is_some(),
            detection: s.law.name(),
            sweep_width_m,
            effort: Effort {
                area_swept_m2: sweep_width_m * length,
                track_length_m: length,
                searches: 1,
            },
            legs_length_m: track_length_m,
            pos: report.map(|r| r.pos),
            pod_at_truth,
            area_polygon: area,
            track,
        });
    }
    Ok(searches)
}

/// Notes in `not_computed` why there is no POS, effort or optimum: no search logged, or
/// none ended by the end of the review.
fn note_missing_searches(
    incident: &Incident,
    periods: &[Period],
    not_computed: &mut Vec<NotComputed>,
) {
    let why = if incident.searches.is_empty() {
        "no search is logged in the incident"
    } else if periods.is_empty() {
        "no logged search ended by the end of the review"
    } else {
        return;
    };
    not_computed.push(NotComputed {
        what: "POS, effort and the optimal allocation".into(),
        why: why.into(),
    });
}

/// Fills in what each period's searches achieved: its POS, its POD at the truth (when there
/// is a found position) and the cumulative POS at its end.
fn add_period_results(
    periods: &mut [Period],
    searches: &[ReviewedSearch],
    reports: &[SearchReport],
    truth: Option<&Truth>,
) {
    let by_id = |id: &str| searches.iter().find(|s| s.id == id);
    for p in periods {
        let mut miss_p = 1.0;
        let mut miss_truth = 1.0;
        for id in &p.searches {
            if let Some(s) = by_id(id) {
                miss_p *= 1.0 - s.pos.unwrap_or(0.0);
                miss_truth *= 1.0 - s.pod_at_truth.unwrap_or(0.0);
            }
        }
        p.pos = 1.0 - miss_p;
        p.pod_at_truth = truth.map(|_| 1.0 - miss_truth);
        p.pos_cumulative = 1.0
            - reports
                .iter()
                .filter(|r| r.end <= p.end)
                .map(|r| 1.0 - r.pos)
                .product::<f64>();
    }
}

/// The applied searches in the order they were applied.
fn in_applied_order<'a>(
    reports: &[SearchReport],
    searches: &'a [ReviewedSearch],
) -> Vec<&'a ReviewedSearch> {
    reports
        .iter()
        .filter_map(|r| searches.iter().find(|s| s.id == r.id))
        .collect()
}

/// Effort by unit, units in the order of their first applied search.
fn effort_by_unit(order: &[&ReviewedSearch]) -> Vec<UnitEffort> {
    let mut units: Vec<UnitEffort> = Vec::new();
    for s in order {
        match units.iter_mut().find(|u| u.unit == s.unit) {
            Some(u) => u.effort.add(s),
            None => {
                let mut effort = Effort::default();
                effort.add(s);
                units.push(UnitEffort {
                    unit: s.unit.clone(),
                    effort,
                });
            }
        }
    }
    units
}

/// The timeline: each row with its running effort in total, by unit and by period.
fn timeline_rows(
    rows: Vec<RowDraft>,
    order: &[&ReviewedSearch],
    units: &[UnitEffort],
    periods: &[Period],
    reference: Time,
    hours: &[Time],
) -> Vec<TimelineRow> {
    rows.into_iter()
        .map(|r| {
            let mut effort = Effort::default();
            let mut by_unit = vec![Effort::default(); units.len()];
            let mut by_period = vec![Effort::default(); periods.len()];
            for s in &order[..r.applied] {
                effort.add(s);
                if let Some(u) = units.iter().position(|u| u.unit == s.unit) {
                    by_unit[u].add(s);
                }
                if let Some(p) = s.period {
                    by_period[p].add(s);
                }
            }
            TimelineRow {
                time: r.time,
                hours_since_reference: (r.time - reference).as_seconds_f64()
                    / seekgrid_core::units::SECONDS_PER_HOUR,
                whole_hour: hours.contains(&r.time),
                searches_ended: r.ended,
                searches_applied: r.applied,
                pos_cumulative: r.pos_cumulative,
                effort,
                effort_by_unit: by_unit,
                effort_by_period: by_period,
                truth: r.truth,
            }
        })
        .collect()
}

/// The probability the applied searches together would have detected the target at the
/// found position: 1 − Π(1 − POD at the truth).
fn pod_at_truth_cumulative(searches: &[ReviewedSearch]) -> f64 {
    1.0 - searches
        .iter()
        .filter(|s| s.applied)
        .map(|s| 1.0 - s.pod_at_truth.unwrap_or(0.0))
        .product::<f64>()
}

/// Notes in `not_computed` why nothing is scored at the found position when the outcome
/// gives none (no outcome, or suspended); a found position outside the grid was noted
/// already.
fn note_unscored(outcome: Option<&Outcome>, not_computed: &mut Vec<NotComputed>) {
    let why = match outcome {
        None => "the incident gives no outcome; add an [outcome] with the found position and time",
        Some(Outcome::Suspended { .. }) => {
            "the search was suspended: there is no found position to score against"
        }
        Some(Outcome::Found { .. }) => return,
    };
    not_computed.push(NotComputed {
        what: "everything that needs the found position: its POC, density and rank over time, the searches that covered it and their POD there, the POD the optimal allocation would have put there, and each analyst's and scenario's density, log score, bias and implied weight".into(),
        why: why.into(),
    });
}

/// What happens at one time of the replay.
#[derive(Debug, Default)]
struct Checkpoint {
    /// A timeline row is written.
    row: bool,
    /// Searches ending now.
    ended: Vec<String>,
    /// Periods starting now (indices).
    period_starts: Vec<usize>,
}

/// A timeline row before the running totals are added.
struct RowDraft {
    time: Time,
    ended: Vec<String>,
    applied: usize,
    pos_cumulative: f64,
    truth: Option<TruthAt>,
}

/// Whole hours strictly after `from`, up to and including `to`.
fn whole_hours_after(from: Time, to: Time) -> Vec<Time> {
    let hour = chrono::TimeDelta::hours(1);
    let mut out = Vec::new();
    let Ok(mut t) = chrono::DurationRound::duration_trunc(from, hour) else {
        return out;
    };
    t += hour;
    while t <= to {
        out.push(t);
        t += hour;
    }
    out
}

/// Groups searches into periods (see the module docs); counterfactual and results are filled
/// in later.
fn group_periods(defs: &[&SearchDef]) -> Vec<Period> {
    // Key: the tasked_in name, or the window.
    let mut groups: Vec<(Option<String>, Time, Time, Vec<&SearchDef>)> = Vec::new();
    for s in defs {
        let key = tasked_in(s).map(str::to_owned);
        let found = groups.iter_mut().find(|g| match (&key, &g.0) {
            (Some(a), Some(b)) => a == b,
            (None, None) => g.1 == s.start && g.2 == s.end,
            _ => false,
        });
        match found {
            Some(g) => {
                g.1 = g.1.min(s.start);
                g.2 = g.2.max(s.end);
                g.3.push(s);
            }
            None => groups.push((key, s.start, s.end, vec![s])),
        }
    }
    let mut periods: Vec<Period> = groups
        .into_iter()
        .map(|(key, start, end, mut members)| {
            members.sort_by(|a, b| {
                a.end
                    .cmp(&b.end)
                    .then(a.start.cmp(&b.start))
                    .then(a.id.cmp(&b.id))
            });
            let mut units: Vec<String> = Vec::new();
            for m in &members {
                if !units.contains(&m.unit) {
                    units.push(m.unit.clone());
                }
            }
            let tasked = key.is_some();
            Period {
                id: key.unwrap_or_else(|| {
                    format!(
                        "{}/{}",
                        start.to_rfc3339_opts(chrono::SecondsFormat::AutoSi, true),
                        end.to_rfc3339_opts(chrono::SecondsFormat::AutoSi, true)
                    )
                }),
                tasked,
                start,
                end,
                searches: members.iter().map(|m| m.id.clone()).collect(),
                units,
                effort: Effort::default(),
                all_exponential: members
                    .iter()
                    .all(|m| m.detection == search::DetectionLaw::Exponential),
                overlaps_other_period: false,
                pos: 0.0,
                pos_cumulative: 0.0,
                pod_at_truth: None,
                optimal: None,
            }
        })
        .collect();
    periods.sort_by(|a, b| a.start.cmp(&b.start).then(a.id.cmp(&b.id)));
    for k in 0..periods.len() {
        let (s, e) = (periods[k].start, periods[k].end);
        periods[k].overlaps_other_period = periods
            .iter()
            .enumerate()
            .any(|(j, o)| j != k && o.start < e && s < o.end);
    }
    periods
}

/// Legs or track, area and track length of a prepared search (as the timeline reports them).
fn geometry(s: &PreparedSearch) -> (LineString<f64>, Option<Polygon<f64>>, f64) {
    let (track, area) = match &s.geometry {
        PreparedGeometry::Pattern(p) => (p.tracks(), Some(p.area_polygon())),
        PreparedGeometry::Track { points, .. } => (LineString(points.clone()), None),
    };
    let length = track
        .0
        .windows(2)
        .map(|w| (w[1].x - w[0].x).hypot(w[1].y - w[0].y))
        .sum();
    (track, area, length)
}

/// The track length credited to a search: A/S for a rectangle pattern (its POD is credited
/// over the whole area at coverage W/S), else the drawn length of its legs or track.
fn effort_length(s: &PreparedSearch, drawn_m: f64) -> f64 {
    use geo::Area;
    match s.pattern() {
        Some(p) if p.is_rectangle() => {
            // coverage = W/S, so A·coverage/W = A/S.
            p.area_polygon().unsigned_area() * p.coverage(&s.sweep_width) / s.sweep_width.metres()
        }
        _ => drawn_m,
    }
}

/// A search's POD at one point, from its pattern or track and law.
fn pod_at(s: &PreparedSearch, xy: Coord<f64>) -> Result<f64, ReviewError> {
    let err = |source| ReviewError::Search {
        id: s.def.id.clone(),
        source: Box::new(source),
    };
    let pod = match &s.geometry {
        PreparedGeometry::Pattern(p) => {
            search::pattern_pod_at(&[xy], p, s.law, &s.sweep_width).map_err(err)?
        }
        PreparedGeometry::Track { points, .. } => {
            search::track_pod_at(&[xy], points, s.law, &s.sweep_width).map_err(err)?
        }
    };
    Ok(pod.first().copied().unwrap_or(0.0))
}

/// The belief's cells with the particles inside the grid binned into their cells (what an
/// optimal allocation over cells can reach).
fn binned(belief: &Belief) -> Array2<f64> {
    let grid = belief.grid();
    let mut cells = belief.cells().to_owned();
    let p = belief.particles();
    for (i, &w) in p.weights().iter().enumerate() {
        if let Some(rc) = grid.locate(p.position(i)) {
            cells[rc] += w;
        }
    }
    cells
}

/// What an optimal allocation achieves.
#[derive(Debug, Clone, Copy)]
struct Optimum {
    /// Its POS.
    pos: f64,
    /// Its POD in the truth's cell, when the truth lies in the grid.
    pod_at_truth: Option<f64>,
}

/// The optimal allocation of `effort_m2` against `belief`; `None` when no mass lies in the
/// grid.
fn optimum(belief: &Belief, effort_m2: f64, truth: Option<(usize, usize)>) -> Option<Optimum> {
    let cells = binned(belief);
    let a = search::optimal_allocation(&cells, belief.grid().cell_area_m2(), effort_m2).ok()?;
    Some(Optimum {
        pos: a.pos,
        pod_at_truth: truth.map(|c| -(-a.coverage[c]).exp_m1()),
    })
}

/// As [`optimum`], and applies the allocation's POD to `belief` as an unsuccessful search.
fn optimum_applied(
    belief: &mut Belief,
    effort_m2: f64,
    truth: Option<(usize, usize)>,
    period: &str,
) -> Result<Option<Optimum>, ReviewError> {
    let cells = binned(belief);
    let grid = *belief.grid();
    let Ok(a) = search::optimal_allocation(&cells, grid.cell_area_m2(), effort_m2) else {
        return Ok(None);
    };
    let err = |source| ReviewError::Counterfactual {
        period: period.to_owned(),
        source: Box::new(source),
    };
    let pod = a.coverage.mapv(|z| -(-z).exp_m1());
    let p = belief.particles();
    let particle_pod: Vec<f64> = (0..p.len())
        .map(|i| grid.locate(p.position(i)).map_or(0.0, |rc| pod[rc]))
        .collect();
    let pod_truth = truth.map(|c| pod[c]);
    let layer = search::PodLayer::from_dense(grid, pod).map_err(err)?;
    search::update_after_miss(belief, &layer, &particle_pod).map_err(err)?;
    Ok(Some(Optimum {
        pos: a.pos,
        pod_at_truth: pod_truth,
    }))
}

/// The belief at the truth's cell: probability, density and rank.
fn truth_at(
    belief: &Belief,
    grid: &GridSpec,
    clouds: &[std::ops::Range<usize>],
    cell: (usize, usize),
    cell_km2: f64,
) -> Result<TruthAt, ReviewError> {
    let rank_of = |poc: &Array2<f64>| -> Result<TruthAt, ReviewError> {
        let density = poc[cell] / cell_km2;
        let rank = truth_rank(poc, cell_km2, density).map_err(ReviewError::Belief)?;
        Ok(TruthAt {
            poc: poc[cell],
            density_per_km2: density,
            rank,
        })
    };
    if belief.particles().is_empty() {
        return rank_of(belief.cells());
    }
    let mut poc = belief.cells().to_owned();
    kernel::add_particles_fast(&mut poc, grid, belief.particles(), clouds);
    rank_of(&poc)
}

/// The scores of the pool, analysts and scenarios.
struct Scores {
    /// `None` without a found position in the grid.
    pool: Option<PoolScore>,
    analysts: Vec<AnalystScore>,
    scenarios: Vec<ScenarioScore>,
}

/// A scenario's density at the truth and the mean of its distribution.
struct ScenarioAtTruth {
    density_per_km2: f64,
    /// Share of its unit mass whose position is known: the in-grid mass of a stationary
    /// scenario, 1 for a drift scenario (every particle is placed).
    known: f64,
    /// Mean of that known part, working frame; `None` when `known` is 0.
    mean: Option<Coord<f64>>,
}

fn kind_name(k: &ScenarioKind) -> &'static str {
    match k {
        ScenarioKind::Point { .. } => "point",
        ScenarioKind::Route { .. } => "route",
        ScenarioKind::Area { .. } => "area",
        ScenarioKind::Segments { .. } => "segments",
        ScenarioKind::Rings { .. } => "rings",
        ScenarioKind::Drift(_) => "drift",
    }
}

/// ln(density); the densities here are finite and non-negative by construction, so the
/// credibility crate's check cannot fail (a NaN would come out as NaN).
fn log_score(density: f64) -> f64 {
    prior::credibility::log_score(density).unwrap_or(f64::NAN)
}

/// Weight of each scenario within its analyst, from the pool masses.
fn within_weights(replay: &Replay) -> Vec<f64> {
    let p = &replay.prepared;
    p.scenario_weights
        .iter()
        .map(|(_, analyst, mass)| {
            let w_a = p
                .analyst_weights
                .iter()
                .find(|(a, _)| a == analyst)
                .map_or(0.0, |(_, w)| *w);
            if w_a > 0.0 { mass / w_a } else { 0.0 }
        })
        .collect()
}

/// Analysts and scenarios without a truth to score against.
fn unscored(incident: &Incident, replay: &Replay) -> Scores {
    let within = within_weights(replay);
    let analysts = replay
        .prepared
        .analyst_weights
        .iter()
        .map(|(id, w)| AnalystScore {
            id: id.clone(),
            weight_used: *w,
            density_per_km2: None,
            log_score: None,
            pool_scored_higher: None,
            bias: None,
            implied_weight: None,
        })
        .collect();
    let scenarios = incident
        .scenarios
        .iter()
        .zip(&replay.prepared.scenario_weights)
        .zip(&within)
        .map(|((s, (_, _, mass)), w)| ScenarioScore {
            id: s.id.clone(),
            analyst: s.analyst.clone(),
            kind: kind_name(&s.kind),
            weight_within_analyst: *w,
            weight_in_pool: *mass,
            density_per_km2: None,
            log_score: None,
        })
        .collect();
    Scores {
        pool: None,
        analysts,
        scenarios,
    }
}

/// Densities at the truth, log scores, biases and implied weights. Notes in `not_computed`
/// implied weights that cannot be computed.
///
/// # Errors
/// A scenario or drift run that cannot be placed on the grid.
fn score(
    incident: &Incident,
    replay: &Replay,
    truth: &Truth,
    cell: (usize, usize),
    not_computed: &mut Vec<NotComputed>,
) -> Result<Scores, ReviewError> {
    let cell_km2 = replay.grid.cell_area_m2() / seekgrid_core::units::M2_PER_KM2;
    let within = within_weights(replay);
    let mut at = stationary_at_truth(replay, cell, cell_km2)?;
    let drift_part = drift_at_truth(replay, truth, cell, cell_km2, &mut at)?;
    let scenarios = scenario_scores(incident, replay, &within, &at);
    // The pool: the belief before any search, at the found time.
    let pool_density = replay.belief_before_searches.cells()[cell] / cell_km2 + drift_part;
    let pool_log = log_score(pool_density);
    let mut analysts: Vec<AnalystScore> = replay
        .prepared
        .analyst_weights
        .iter()
        .map(|(id, w)| {
            let of_analyst = AnalystScenarios {
                scenarios: &scenarios,
                within: &within,
                at: &at,
            };
            analyst_score(id, *w, &of_analyst, replay, truth, pool_log)
        })
        .collect();
    add_implied_weights(&mut analysts, not_computed);
    let pool = PoolScore {
        density_per_km2: pool_density,
        log_score: pool_log,
        analysts_beaten: analysts
            .iter()
            .filter(|a| a.pool_scored_higher == Some(true))
            .count(),
        analysts: analysts.len(),
    };
    Ok(Scores {
        pool: Some(pool),
        analysts,
        scenarios,
    })
}

/// Each stationary scenario's density in the truth's cell and the mean of its in-grid mass,
/// by scenario id.
///
/// # Errors
/// [`ReviewError::Scenario`] when a scenario's mass cannot be put on the grid.
fn stationary_at_truth(
    replay: &Replay,
    cell: (usize, usize),
    cell_km2: f64,
) -> Result<BTreeMap<String, ScenarioAtTruth>, ReviewError> {
    let grid = &replay.grid;
    let mut at = BTreeMap::new();
    for sc in &replay.prepared.stationary {
        let m = prior::scenario_mass(&sc.shape, grid).map_err(|e| ReviewError::Scenario {
            id: sc.id.clone(),
            source: Box::new(e),
        })?;
        let (mut mass, mut mx, mut my) = (Vec::new(), Vec::new(), Vec::new());
        for ((r, c), &v) in m.cells.indexed_iter() {
            if v > 0.0 {
                let centre = grid.cell_center(r, c);
                mass.push(v);
                mx.push(v * centre.x);
                my.push(v * centre.y);
            }
        }
        let known = neumaier_sum(mass);
        at.insert(
            sc.id.clone(),
            ScenarioAtTruth {
                density_per_km2: m.cells[cell] / cell_km2,
                known,
                mean: (known > 0.0).then(|| Coord {
                    x: neumaier_sum(mx) / known,
                    y: neumaier_sum(my) / known,
                }),
            },
        );
    }
    Ok(at)
}

/// Adds each drift scenario's density in the truth's cell at the found time and the mean of
/// its particles to `at`; returns the drift scenarios' pooled density there (per km²).
///
/// # Errors
/// [`ReviewError::Belief`] when a drift run's particles are invalid.
fn drift_at_truth(
    replay: &Replay,
    truth: &Truth,
    cell: (usize, usize),
    cell_km2: f64,
    at: &mut BTreeMap<String, ScenarioAtTruth>,
) -> Result<f64, ReviewError> {
    let mut drift_part = 0.0;
    for (d, (_, run)) in replay.prepared.drift.iter().zip(&replay.drift_runs) {
        let snap = run.positions_at(truth.time);
        let n = snap.x_m.len();
        let mean = Coord {
            x: neumaier_sum(snap.x_m.iter().copied()) / n as f64,
            y: neumaier_sum(snap.y_m.iter().copied()) / n as f64,
        };
        let particles = Particles::new(snap.x_m, snap.y_m, vec![1.0 / n as f64; n], snap.stranded)
            .map_err(ReviewError::Belief)?;
        let density = kernel::mass_in_cell(&replay.grid, &particles, 0..n, cell) / cell_km2;
        drift_part += d.mass * density;
        at.insert(
            d.id.clone(),
            ScenarioAtTruth {
                density_per_km2: density,
                known: 1.0,
                mean: Some(mean),
            },
        );
    }
    Ok(drift_part)
}

/// Each scenario's weights, density at the truth and log score, in file order.
fn scenario_scores(
    incident: &Incident,
    replay: &Replay,
    within: &[f64],
    at: &BTreeMap<String, ScenarioAtTruth>,
) -> Vec<ScenarioScore> {
    incident
        .scenarios
        .iter()
        .zip(&replay.prepared.scenario_weights)
        .zip(within)
        .map(|((s, (_, _, mass)), w)| {
            let d = at.get(&s.id).map(|a| a.density_per_km2);
            ScenarioScore {
                id: s.id.clone(),
                analyst: s.analyst.clone(),
                kind: kind_name(&s.kind),
                weight_within_analyst: *w,
                weight_in_pool: *mass,
                density_per_km2: d,
                log_score: d.map(log_score),
            }
        })
        .collect()
}

/// The scenarios an analyst's score is built from.
struct AnalystScenarios<'a> {
    /// Every scenario's score, in file order.
    scenarios: &'a [ScenarioScore],
    /// Each scenario's weight within its analyst, same order.
    within: &'a [f64],
    /// Each scenario at the truth, by id.
    at: &'a BTreeMap<String, ScenarioAtTruth>,
}

/// One analyst's density and log score at the truth, whether the pool scored higher, and the
/// bias of their mean; the implied weight is filled in later.
fn analyst_score(
    id: &str,
    weight_used: f64,
    of: &AnalystScenarios<'_>,
    replay: &Replay,
    truth: &Truth,
    pool_log: f64,
) -> AnalystScore {
    // The analyst's mean: their scenarios' means, each weighted by the scenario's weight
    // times the share of it whose position is known.
    let (mut f, mut m, mut mx, mut my) = (Vec::new(), Vec::new(), Vec::new(), Vec::new());
    for (s, w_s) in of.scenarios.iter().zip(of.within) {
        if s.analyst != id {
            continue;
        }
        if let Some(a) = of.at.get(&s.id) {
            f.push(w_s * a.density_per_km2);
            if let Some(mean) = a.mean {
                let k = w_s * a.known;
                m.push(k);
                mx.push(k * mean.x);
                my.push(k * mean.y);
            }
        }
    }
    let density = neumaier_sum(f);
    let score = log_score(density);
    let mass = neumaier_sum(m);
    let bias = (mass > 0.0).then(|| {
        let mean = Coord {
            x: neumaier_sum(mx) / mass,
            y: neumaier_sum(my) / mass,
        };
        bias(&replay.prepared.frame, mean, truth.xy)
    });
    AnalystScore {
        id: id.to_owned(),
        weight_used,
        density_per_km2: Some(density),
        log_score: Some(score),
        pool_scored_higher: Some(pool_log > score),
        bias,
        implied_weight: None,
    }
}

/// Fills in each analyst's implied weight (Bayes' rule on the weights used and the densities
/// at the truth); notes in `not_computed` when it cannot be computed.
fn add_implied_weights(analysts: &mut [AnalystScore], not_computed: &mut Vec<NotComputed>) {
    let weights: Vec<f64> = analysts.iter().map(|a| a.weight_used).collect();
    let densities: Vec<f64> = analysts
        .iter()
        .map(|a| a.density_per_km2.unwrap_or(0.0))
        .collect();
    match prior::credibility::implied_weights(&weights, &densities) {
        Ok(implied) => {
            for (a, w) in analysts.iter_mut().zip(implied) {
                a.implied_weight = Some(w);
            }
        }
        Err(e) => not_computed.push(NotComputed {
            what: "implied weights (Bayes' rule on analysts)".into(),
            why: e.to_string(),
        }),
    }
}

/// Distance and true bearing from `mean` to `truth`.
fn bias(frame: &Frame, mean: Coord<f64>, truth: Coord<f64>) -> Bias {
    let (dx, dy) = (truth.x - mean.x, truth.y - mean.y);
    let distance_m = dx.hypot(dy);
    let (lon, lat) = frame.to_lon_lat(mean);
    let bearing_deg = (distance_m > 0.0).then(|| {
        let grid_bearing = dx.atan2(dy).to_degrees();
        // A true bearing b is the grid bearing b - convergence (Frame::convergence_deg).
        let b = (grid_bearing + frame.convergence_deg(lon, lat)).rem_euclid(360.0);
        if b >= 360.0 { 0.0 } else { b }
    });
    Bias {
        mean_xy: mean,
        mean_lon_lat: [lon, lat],
        distance_m,
        bearing_deg,
    }
}
