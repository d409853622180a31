//! Writing a review ([`seekgrid_engine::review::Review`]): `review.json` (every number, typed),
//! `review.md` (a reviewer's report), and three GeoJSON layers: `review-found.geojson` (the
//! found position), `review-analysts.geojson` (each analyst's mean and a line from it to the
//! truth) and `review-searches.geojson` (the searches, with their `period` and a `stroke`
//! colour per period).

use crate::outputs::collection_bytes;
use crate::summary::CAUTION;
use crate::{self as render, OutputDir, RenderError};
use geojson::{Feature, JsonObject};
use seekgrid_engine::review::{
    AnalystScore, Effort, Outcome, Period, Review, ReviewEnd, ReviewedSearch, TimelineRow, TruthAt,
};
use seekgrid_engine::timeline::SEARCHED_POD_THRESHOLD;
use seekgrid_incident::model::Time;
use serde::Serialize;
use std::fmt::Write as _;

/// The files [`write()`] creates.
pub const REVIEW_FILES: [&str; 5] = [
    "review.json",
    "review.md",
    "review-found.geojson",
    "review-analysts.geojson",
    "review-searches.geojson",
];

/// Metres in a kilometre (for km in the report).
const METRES_PER_KM: f64 = 1000.0;

fn time(t: Time) -> String {
    t.to_rfc3339_opts(chrono::SecondsFormat::AutoSi, true)
}

/// A number for JSON: `None` for an infinite or NaN value (a log score of a zero density).
fn finite(v: f64) -> Option<f64> {
    v.is_finite().then_some(v)
}

/// Effort in `review.json`.
#[derive(Debug, Clone, Copy, Serialize)]
pub struct EffortJson {
    /// Σ W·L, m².
    pub area_swept_m2: f64,
    /// Σ track length credited, metres.
    pub track_length_m: f64,
    /// Number of searches.
    pub searches: usize,
}

impl From<&Effort> for EffortJson {
    fn from(e: &Effort) -> Self {
        Self {
            area_swept_m2: e.area_swept_m2,
            track_length_m: e.track_length_m,
            searches: e.searches,
        }
    }
}

/// A named effort (a unit's or a period's).
#[derive(Debug, Clone, Serialize)]
pub struct NamedEffortJson {
    /// Unit or period id.
    pub id: String,
    /// The effort.
    #[serde(flatten)]
    pub effort: EffortJson,
}

/// The outcome in `review.json`.
#[derive(Debug, Clone, Serialize)]
pub struct OutcomeJson {
    /// `"found"` or `"suspended"`.
    pub status: &'static str,
    /// Time.
    pub time: String,
    /// `[lon, lat]` where found.
    pub position: Option<[f64; 2]>,
    /// Stated error of the found position, metres (reported, not used in the scores).
    pub position_error_m: Option<f64>,
    /// Note.
    pub note: Option<String>,
}

/// The grid in `review.json`.
#[derive(Debug, Clone, Serialize)]
pub struct GridJson {
    /// Working CRS.
    pub crs: String,
    /// Cell side, metres.
    pub cell_m: f64,
    /// Rows.
    pub rows: usize,
    /// Columns.
    pub cols: usize,
}

/// One search in `review.json`.
#[derive(Debug, Clone, Serialize)]
pub struct SearchJson {
    /// Id.
    pub id: String,
    /// Unit.
    pub unit: String,
    /// Start.
    pub start: String,
    /// End.
    pub end: String,
    /// Period id; `None` when not applied.
    pub period: Option<String>,
    /// Whether it ended by the end of the review and was applied.
    pub applied: bool,
    /// Detection law.
    pub detection: &'static str,
    /// Effective sweep width, metres.
    pub sweep_width_m: f64,
    /// W·L, m².
    pub area_swept_m2: f64,
    /// Track length credited (A/S for a rectangle pattern), metres.
    pub track_length_m: f64,
    /// Length of the legs as drawn or of the followed track, metres.
    pub legs_length_m: f64,
    /// Conditional POS.
    pub pos: Option<f64>,
    /// POD at the found position.
    pub pod_at_truth: Option<f64>,
    /// Whether its POD at the found position reaches the searched threshold.
    pub covered_truth: bool,
}

/// The optimal allocation of a period in `review.json`.
#[derive(Debug, Clone, Serialize)]
pub struct OptimalJson {
    /// POS of the optimum against the belief the searches left at the period's start.
    pub pos_same_belief: f64,
    /// Its POD at the found position's cell.
    pub pod_at_truth_same_belief: Option<f64>,
    /// POS of the optimum in the chain of optimal periods.
    pub pos_chain: f64,
    /// Cumulative POS of that chain.
    pub pos_cumulative_chain: f64,
    /// The chain's POD at the found position's cell.
    pub pod_at_truth_chain: Option<f64>,
}

/// One period in `review.json`.
#[derive(Debug, Clone, Serialize)]
pub struct PeriodJson {
    /// Id (`tasked_in`, or `START/END`).
    pub id: String,
    /// Whether it comes from `tasked_in`.
    pub tasked: bool,
    /// Start.
    pub start: String,
    /// End.
    pub end: String,
    /// Searches.
    pub searches: Vec<String>,
    /// Units.
    pub units: Vec<String>,
    /// Effort.
    pub effort: EffortJson,
    /// Whether every search used the exponential law.
    pub all_exponential: bool,
    /// Whether its time overlaps another period's.
    pub overlaps_other_period: bool,
    /// POS achieved.
    pub pos: f64,
    /// Cumulative POS by its end.
    pub pos_cumulative: f64,
    /// Combined POD of its searches at the found position.
    pub pod_at_truth: Option<f64>,
    /// The optimal allocation of the same effort.
    pub optimal: Option<OptimalJson>,
    /// The `stroke` colour of its searches in `review-searches.geojson`.
    pub colour: String,
}

/// The belief at the found position in a timeline row.
#[derive(Debug, Clone, Serialize)]
pub struct TruthAtJson {
    /// Probability in the found position's cell.
    pub poc: f64,
    /// Per km².
    pub density_per_km2: f64,
    /// Mass of the cells rated denser than the truth.
    pub mass_above: f64,
    /// Their area, km².
    pub area_above_km2: f64,
    /// Their number.
    pub cells_above: usize,
    /// Mass of the cells at the same density.
    pub mass_equal: f64,
    /// Their area, km².
    pub area_equal_km2: f64,
}

/// One timeline row in `review.json`.
#[derive(Debug, Clone, Serialize)]
pub struct RowJson {
    /// Time.
    pub time: String,
    /// Hours since the reference time.
    pub hours_since_reference: f64,
    /// A whole hour.
    pub whole_hour: bool,
    /// Searches ended at this time.
    pub searches_ended: Vec<String>,
    /// Searches applied by this time.
    pub searches_applied: usize,
    /// Cumulative POS.
    pub pos_cumulative: f64,
    /// Effort so far.
    pub effort: EffortJson,
    /// Effort so far per unit.
    pub effort_by_unit: Vec<NamedEffortJson>,
    /// Effort so far per period.
    pub effort_by_period: Vec<NamedEffortJson>,
    /// The belief at the found position.
    pub truth: Option<TruthAtJson>,
}

/// An analyst in `review.json`.
#[derive(Debug, Clone, Serialize)]
pub struct AnalystJson {
    /// Id.
    pub id: String,
    /// Credibility weight used (normalised).
    pub weight_used: f64,
    /// Density at the found position, per km².
    pub density_per_km2: Option<f64>,
    /// ln(density per km²); `null` when the density is 0 or not computed.
    pub log_score: Option<f64>,
    /// Whether the analyst gave the found position zero density.
    pub zero_density: bool,
    /// Whether the pool scored strictly higher.
    pub pool_scored_higher: Option<bool>,
    /// Mean of the analyst's distribution, `[lon, lat]`.
    pub mean: Option<[f64; 2]>,
    /// Distance from that mean to the truth, metres.
    pub bias_distance_m: Option<f64>,
    /// True bearing from that mean to the truth, degrees.
    pub bias_bearing_deg: Option<f64>,
    /// The weight Bayes' rule gives once the truth is known.
    pub implied_weight: Option<f64>,
}

/// A scenario in `review.json`.
#[derive(Debug, Clone, Serialize)]
pub struct ScenarioJson {
    /// Id.
    pub id: String,
    /// Analyst.
    pub analyst: String,
    /// Kind.
    pub kind: &'static str,
    /// Weight within the analyst.
    pub weight_within_analyst: f64,
    /// Mass in the pool.
    pub weight_in_pool: f64,
    /// Density at the found position, per km².
    pub density_per_km2: Option<f64>,
    /// ln(density per km²); `null` when 0 or not computed.
    pub log_score: Option<f64>,
}

/// The pool in `review.json`.
#[derive(Debug, Clone, Serialize)]
pub struct PoolJson {
    /// Density of the pooled prior at the found position and time, per km².
    pub density_per_km2: f64,
    /// Its log score; `null` for a zero density.
    pub log_score: Option<f64>,
    /// Analysts with a lower log score.
    pub analysts_beaten: usize,
    /// Analysts scored.
    pub analysts: usize,
}

/// Something not computed.
#[derive(Debug, Clone, Serialize)]
pub struct NotComputedJson {
    /// What.
    pub what: String,
    /// Why.
    pub why: String,
}

/// `review.json`: the [`Review`] as JSON.
#[derive(Debug, Clone, Serialize)]
pub struct ReviewJson {
    /// The caution.
    pub caution: &'static str,
    /// The id of the run that wrote the file (set by [`write()`]).
    pub run_id: Option<String>,
    /// Title.
    pub title: String,
    /// Reference time.
    pub reference_time: String,
    /// End of the review.
    pub end: String,
    /// `"found"`, `"suspended"`, `"last-search-end"` or `"reference-time"`.
    pub end_reason: &'static str,
    /// The outcome.
    pub outcome: Option<OutcomeJson>,
    /// The found position's grid cell `[row, col]`, when inside the grid.
    pub found_cell: Option<[usize; 2]>,
    /// Grid.
    pub grid: GridJson,
    /// Cumulative POS at the end.
    pub pos_cumulative: f64,
    /// Combined POD of the applied searches at the found position.
    pub pod_at_truth_cumulative: Option<f64>,
    /// POD from which a search counts as having covered the found position.
    pub covered_pod_threshold: f64,
    /// Searches, file order.
    pub searches: Vec<SearchJson>,
    /// Effort per unit.
    pub units: Vec<NamedEffortJson>,
    /// Periods.
    pub periods: Vec<PeriodJson>,
    /// Timeline.
    pub timeline: Vec<RowJson>,
    /// Pool.
    pub pool: Option<PoolJson>,
    /// Analysts.
    pub analysts: Vec<AnalystJson>,
    /// Scenarios.
    pub scenarios: Vec<ScenarioJson>,
    /// What could not be computed.
    pub not_computed: Vec<NotComputedJson>,
}

fn end_reason(e: ReviewEnd) -> &'static str {
    match e {
        ReviewEnd::Found => "found",
        ReviewEnd::Suspended => "suspended",
        ReviewEnd::LastSearchEnd => "last-search-end",
        ReviewEnd::ReferenceTime => "reference-time",
    }
}

/// The `stroke` colour of period `k` (Tableau 10, cycled; Tableau's categorical palette as
/// shipped by the colorous crate).
#[must_use]
pub fn period_colour(k: usize) -> String {
    let c = colorous::TABLEAU10[k % colorous::TABLEAU10.len()];
    format!("#{:02x}{:02x}{:02x}", c.r, c.g, c.b)
}

fn named(ids: impl Iterator<Item = String>, efforts: &[Effort]) -> Vec<NamedEffortJson> {
    ids.zip(efforts)
        .map(|(id, e)| NamedEffortJson {
            id,
            effort: e.into(),
        })
        .collect()
}

fn row_json(r: &Review, row: &TimelineRow) -> RowJson {
    RowJson {
        time: time(row.time),
        hours_since_reference: row.hours_since_reference,
        whole_hour: row.whole_hour,
        searches_ended: row.searches_ended.clone(),
        searches_applied: row.searches_applied,
        pos_cumulative: row.pos_cumulative,
        effort: (&row.effort).into(),
        effort_by_unit: named(r.units.iter().map(|u| u.unit.clone()), &row.effort_by_unit),
        effort_by_period: named(
            r.periods.iter().map(|p| p.id.clone()),
            &row.effort_by_period,
        ),
        truth: row.truth.map(|t| TruthAtJson {
            poc: t.poc,
            density_per_km2: t.density_per_km2,
            mass_above: t.rank.mass_above,
            area_above_km2: t.rank.area_above_km2,
            cells_above: t.rank.cells_above,
            mass_equal: t.rank.mass_equal,
            area_equal_km2: t.rank.area_equal_km2,
        }),
    }
}

fn search_json(r: &Review, s: &ReviewedSearch) -> SearchJson {
    SearchJson {
        id: s.id.clone(),
        unit: s.unit.clone(),
        start: time(s.start),
        end: time(s.end),
        period: s.period.map(|k| r.periods[k].id.clone()),
        applied: s.applied,
        detection: s.detection,
        sweep_width_m: s.sweep_width_m,
        area_swept_m2: s.effort.area_swept_m2,
        track_length_m: s.effort.track_length_m,
        legs_length_m: s.legs_length_m,
        pos: s.pos,
        pod_at_truth: s.pod_at_truth,
        covered_truth: s.covered_truth(),
    }
}

fn period_json(k: usize, p: &Period) -> PeriodJson {
    PeriodJson {
        id: p.id.clone(),
        tasked: p.tasked,
        start: time(p.start),
        end: time(p.end),
        searches: p.searches.clone(),
        units: p.units.clone(),
        effort: (&p.effort).into(),
        all_exponential: p.all_exponential,
        overlaps_other_period: p.overlaps_other_period,
        pos: p.pos,
        pos_cumulative: p.pos_cumulative,
        pod_at_truth: p.pod_at_truth,
        optimal: p.optimal.map(|o| OptimalJson {
            pos_same_belief: o.pos_same_belief,
            pod_at_truth_same_belief: o.pod_at_truth_same_belief,
            pos_chain: o.pos_chain,
            pos_cumulative_chain: o.pos_cumulative_chain,
            pod_at_truth_chain: o.pod_at_truth_chain,
        }),
        colour: period_colour(k),
    }
}

fn analyst_json(a: &AnalystScore) -> AnalystJson {
    AnalystJson {
        id: a.id.clone(),
        weight_used: a.weight_used,
        density_per_km2: a.density_per_km2,
        log_score: a.log_score.and_then(finite),
        zero_density: a.density_per_km2 == Some(0.0),
        pool_scored_higher: a.pool_scored_higher,
        mean: a.bias.map(|b| b.mean_lon_lat),
        bias_distance_m: a.bias.map(|b| b.distance_m),
        bias_bearing_deg: a.bias.and_then(|b| b.bearing_deg),
        implied_weight: a.implied_weight,
    }
}

/// The review as the typed JSON document of `review.json`.
#[must_use]
pub fn review_json(r: &Review) -> ReviewJson {
    ReviewJson {
        caution: CAUTION,
        run_id: None,
        title: r.title.clone(),
        reference_time: time(r.reference_time),
        end: time(r.end),
        end_reason: end_reason(r.end_reason),
        outcome: r.outcome.as_ref().map(|o| match o {
            Outcome::Found {
                position,
                time: t,
                position_error_m,
                note,
            } => OutcomeJson {
                status: "found",
                time: time(*t),
                position: Some(*position),
                position_error_m: *position_error_m,
                note: note.clone(),
            },
            Outcome::Suspended { time: t, note } => OutcomeJson {
                status: "suspended",
                time: time(*t),
                position: None,
                position_error_m: None,
                note: note.clone(),
            },
        }),
        found_cell: r.truth.as_ref().and_then(|t| t.cell).map(|(a, b)| [a, b]),
        grid: GridJson {
            crs: format!("EPSG:{}", r.frame.epsg()),
            cell_m: r.grid.cell_m(),
            rows: r.grid.rows(),
            cols: r.grid.cols(),
        },
        pos_cumulative: r.pos_cumulative,
        pod_at_truth_cumulative: r.pod_at_truth_cumulative,
        covered_pod_threshold: SEARCHED_POD_THRESHOLD,
        searches: r.searches.iter().map(|s| search_json(r, s)).collect(),
        units: r
            .units
            .iter()
            .map(|u| NamedEffortJson {
                id: u.unit.clone(),
                effort: (&u.effort).into(),
            })
            .collect(),
        periods: r
            .periods
            .iter()
            .enumerate()
            .map(|(k, p)| period_json(k, p))
            .collect(),
        timeline: r.timeline.iter().map(|row| row_json(r, row)).collect(),
        pool: r.pool.map(|p| PoolJson {
            density_per_km2: p.density_per_km2,
            log_score: finite(p.log_score),
            analysts_beaten: p.analysts_beaten,
            analysts: p.analysts,
        }),
        analysts: r.analysts.iter().map(analyst_json).collect(),
        scenarios: r
            .scenarios
            .iter()
            .map(|s| ScenarioJson {
                id: s.id.clone(),
                analyst: s.analyst.clone(),
                kind: s.kind,
                weight_within_analyst: s.weight_within_analyst,
                weight_in_pool: s.weight_in_pool,
                density_per_km2: s.density_per_km2,
                log_score: s.log_score.and_then(finite),
            })
            .collect(),
        not_computed: r
            .not_computed
            .iter()
            .map(|n| NotComputedJson {
                what: n.what.clone(),
                why: n.why.clone(),
            })
            .collect(),
    }
}

fn opt(v: Option<f64>, digits: usize) -> String {
    v.map_or_else(|| "–".to_owned(), |v| format!("{v:.digits$}"))
}

fn log_text(v: Option<f64>) -> String {
    match v {
        Some(v) if v.is_finite() => format!("{v:.3}"),
        Some(_) => "zero density".to_owned(),
        None => "–".to_owned(),
    }
}

fn hm(t: Time) -> String {
    t.format("%Y-%m-%d %H:%M").to_string()
}

/// The reviewer's report, `review.md`: the caution, then one section after another.
#[must_use]
pub fn review_markdown(r: &Review) -> String {
    let mut md = String::new();
    let _ = writeln!(md, "# Incident review: {}\n", r.title);
    let _ = writeln!(md, "> **Caution.** {CAUTION}\n");
    summary(&mut md, r);
    timeline(&mut md, r);
    effort_by_unit(&mut md, r);
    searches_over_found(&mut md, r);
    analysts(&mut md, r);
    scenarios(&mut md, r);
    same_effort_optimal(&mut md, r);
    not_computed(&mut md, r);
    let _ = writeln!(md, "> **Caution.** {CAUTION}");
    md
}

/// Summary: how the review ends, the effort and cumulative POS, and how the belief and the
/// pooled prior rated the found position.
fn summary(md: &mut String, r: &Review) {
    let _ = writeln!(md, "## Summary\n");
    summary_outcome(md, r);
    summary_effort(md, r);
    summary_found_position(md, r);
    let _ = writeln!(md);
}

/// The summary's first lines: the reference time, how the review ends, the found position's
/// stated error and the outcome's note.
fn summary_outcome(md: &mut String, r: &Review) {
    let ending = match (&r.end_reason, &r.outcome) {
        (ReviewEnd::Found, Some(Outcome::Found { position, .. })) => format!(
            "the object was found at {:.5}, {:.5} (lon, lat) at {} UTC",
            position[0],
            position[1],
            hm(r.end)
        ),
        (ReviewEnd::Suspended, _) => format!("the search was suspended at {} UTC", hm(r.end)),
        (ReviewEnd::LastSearchEnd, _) => format!(
            "no outcome is given; the review ends with the last logged search at {} UTC",
            hm(r.end)
        ),
        _ => "no outcome and no search: the review describes the reference time only".to_owned(),
    };
    let _ = writeln!(
        md,
        "- Reference time {} UTC; {ending}.",
        hm(r.reference_time)
    );
    if let Some(Outcome::Found {
        position_error_m: Some(e),
        ..
    }) = &r.outcome
    {
        let _ = writeln!(
            md,
            "- Stated error of the found position: {e:.0} m (the scores are taken at the position itself)."
        );
    }
    if let Some(Outcome::Found { note: Some(n), .. } | Outcome::Suspended { note: Some(n), .. }) =
        &r.outcome
    {
        let _ = writeln!(md, "- Note: {n}");
    }
}

/// The summary's effort lines: searches applied, area swept, cumulative POS, and the searches
/// that covered the found position.
fn summary_effort(md: &mut String, r: &Review) {
    let applied = r.searches.iter().filter(|s| s.applied).count();
    let total: f64 = r.units.iter().map(|u| u.effort.area_swept_m2).sum();
    let _ = writeln!(
        md,
        "- {applied} of {} logged search(es) applied, in {} period(s); effort {:.1} km² swept (W·L); cumulative POS **{:.3}**.",
        r.searches.len(),
        r.periods.len(),
        total / seekgrid_core::units::M2_PER_KM2,
        r.pos_cumulative
    );
    if let Some(pod) = r.pod_at_truth_cumulative {
        let covered = r.searches.iter().filter(|s| s.covered_truth()).count();
        let _ = writeln!(
            md,
            "- {covered} search(es) covered the found position (POD there at least {:.0} %); their combined POD there: **{pod:.3}**.",
            SEARCHED_POD_THRESHOLD * 100.0
        );
    }
}

/// The summary's lines on the found position: how the belief at the end and the pooled prior
/// rated it.
fn summary_found_position(md: &mut String, r: &Review) {
    if let Some(t) = r.timeline.last().and_then(|row| row.truth) {
        let _ = writeln!(
            md,
            "- At the end the belief gave the found position's cell POC {:.2e} ({:.4} per km²); the cells it rated denser held {:.3} of the probability over {:.1} km².",
            t.poc, t.density_per_km2, t.rank.mass_above, t.rank.area_above_km2
        );
    }
    if let Some(p) = &r.pool {
        let _ = writeln!(
            md,
            "- The pooled prior scored {} at the found position; it beat {} of {} analyst(s).",
            log_text(Some(p.log_score)),
            p.analysts_beaten,
            p.analysts
        );
    }
}

/// Timeline: running totals at each checkpoint, with the belief at the found position when there is one.
fn timeline(md: &mut String, r: &Review) {
    let _ = writeln!(md, "## Timeline\n");
    let with_truth = r.timeline.iter().any(|row| row.truth.is_some());
    let _ = writeln!(md, "Cumulative over the searches ended by each time.");
    if with_truth {
        let _ = writeln!(
            md,
            "POC and density at the found position are read in the belief at that time (for a drifting object: at the found place, not where the object was then); \"above\" is the probability and area of the cells the belief rated denser than the found position."
        );
    }
    let _ = writeln!(md);
    let _ = write!(
        md,
        "| time (UTC) | h | searches ended | applied | cumulative POS | swept km² | track km |"
    );
    if with_truth {
        let _ = write!(
            md,
            " POC at found | density /km² | above: POC | above: km² |"
        );
    }
    let _ = writeln!(md);
    let _ = write!(md, "|---|---:|---|---:|---:|---:|---:|");
    if with_truth {
        let _ = write!(md, "---:|---:|---:|---:|");
    }
    let _ = writeln!(md);
    for row in &r.timeline {
        timeline_row(md, row);
        if with_truth {
            timeline_found_cells(md, row.truth);
        }
        let _ = writeln!(md);
    }
    let _ = writeln!(md);
}

/// One timeline row's common cells: time, hours, searches, cumulative POS and effort.
fn timeline_row(md: &mut String, row: &TimelineRow) {
    let _ = write!(
        md,
        "| {} | {:.2} | {} | {} | {:.3} | {:.1} | {:.1} |",
        hm(row.time),
        row.hours_since_reference,
        row.searches_ended.join(", "),
        row.searches_applied,
        row.pos_cumulative,
        row.effort.area_swept_m2 / seekgrid_core::units::M2_PER_KM2,
        row.effort.track_length_m / METRES_PER_KM,
    );
}

/// One timeline row's cells on the found position (dashes where it is not known).
fn timeline_found_cells(md: &mut String, t: Option<TruthAt>) {
    let _ = write!(
        md,
        " {} | {} | {} | {} |",
        t.map_or_else(|| "–".into(), |t| format!("{:.2e}", t.poc)),
        opt(t.map(|t| t.density_per_km2), 4),
        opt(t.map(|t| t.rank.mass_above), 3),
        opt(t.map(|t| t.rank.area_above_km2), 1),
    );
}

/// Effort by unit (nothing when no search was applied).
fn effort_by_unit(md: &mut String, r: &Review) {
    if r.units.is_empty() {
        return;
    }
    let _ = writeln!(md, "## Effort by unit\n");
    let _ = writeln!(md, "| unit | searches | swept km² | track km |");
    let _ = writeln!(md, "|---|---:|---:|---:|");
    for u in &r.units {
        let _ = writeln!(
            md,
            "| {} | {} | {:.1} | {:.1} |",
            u.unit,
            u.effort.searches,
            u.effort.area_swept_m2 / seekgrid_core::units::M2_PER_KM2,
            u.effort.track_length_m / METRES_PER_KM
        );
    }
    let _ = writeln!(
        md,
        "\nTrack length of a parallel sweep or creeping line is its area over its track spacing (L = A/S), the length its coverage W/S is credited with.\n"
    );
}

/// Searches over the found position: each with its POD there (nothing without a found position).
fn searches_over_found(md: &mut String, r: &Review) {
    if r.truth.is_none() {
        return;
    }
    let _ = writeln!(md, "## Searches over the found position\n");
    let covered: Vec<&ReviewedSearch> = r.searches.iter().filter(|s| s.covered_truth()).collect();
    if covered.is_empty() {
        let _ = writeln!(
            md,
            "No search gave the found position a POD of {:.0} % or more.\n",
            SEARCHED_POD_THRESHOLD * 100.0
        );
    } else {
        let _ = writeln!(
            md,
            "| search | unit | period | start – end (UTC) | detection | POD at the found position |"
        );
        let _ = writeln!(md, "|---|---|---|---|---|---:|");
        for s in covered {
            let _ = writeln!(
                md,
                "| {} | {} | {} | {} – {} | {} | {:.3} |",
                s.id,
                s.unit,
                s.period.map_or("–", |k| r.periods[k].id.as_str()),
                hm(s.start),
                hm(s.end),
                s.detection,
                s.pod_at_truth.unwrap_or(0.0)
            );
        }
        let _ = writeln!(
            md,
            "\nPOD of each search at the found place itself, from its pattern or track and detection law.\n"
        );
    }
}

/// Analysts: weights, density and log score at the found position, bias.
fn analysts(md: &mut String, r: &Review) {
    let _ = writeln!(md, "## Analysts\n");
    let _ = writeln!(
        md,
        "| analyst | weight used → implied | density at found /km² | log score | pool higher | bias distance km | bias bearing (true) |"
    );
    let _ = writeln!(md, "|---|---|---:|---:|---|---:|---:|");
    for a in &r.analysts {
        let _ = writeln!(
            md,
            "| {} | {:.3} → {} | {} | {} | {} | {} | {} |",
            a.id,
            a.weight_used,
            opt(a.implied_weight, 3),
            a.density_per_km2
                .map_or_else(|| "–".into(), |d| format!("{d:.3e}")),
            log_text(a.log_score),
            a.pool_scored_higher
                .map_or("–", |b| if b { "yes" } else { "no" }),
            opt(a.bias.map(|b| b.distance_m / METRES_PER_KM), 2),
            a.bias
                .and_then(|b| b.bearing_deg)
                .map_or_else(|| "–".into(), |b| format!("{b:03.0}°")),
        );
    }
    let _ = writeln!(
        md,
        "\nLog score: natural log of the density at the found position, per km² (higher is better). Implied weight: Bayes' rule on the analysts, weight × density renormalised. Bias: from the mean of the analyst's distribution to the found position.\n"
    );
}

/// Scenarios: weight in the pool, density and log score at the found position (nothing without scenarios).
fn scenarios(md: &mut String, r: &Review) {
    if r.scenarios.is_empty() {
        return;
    }
    let _ = writeln!(
        md,
        "| scenario | analyst | kind | weight in pool | density at found /km² | log score |"
    );
    let _ = writeln!(md, "|---|---|---|---:|---:|---:|");
    for s in &r.scenarios {
        let _ = writeln!(
            md,
            "| {} | {} | {} | {:.3} | {} | {} |",
            s.id,
            s.analyst,
            s.kind,
            s.weight_in_pool,
            s.density_per_km2
                .map_or_else(|| "–".into(), |d| format!("{d:.3e}")),
            log_text(s.log_score)
        );
    }
    let _ = writeln!(md);
}

/// The same effort allocated optimally: each period against Stone's optimal allocation (nothing without periods).
fn same_effort_optimal(md: &mut String, r: &Review) {
    if r.periods.is_empty() {
        return;
    }
    let _ = writeln!(md, "## The same effort allocated optimally\n");
    let _ = writeln!(
        md,
        "For each period, Stone's optimal allocation of the period's effort (Σ W·L) for exponential detection, against the belief the searches left at the period's start (\"same belief\") and in a chain where every earlier period was also optimal. It bounds what exponential-law searches of areas (POD = 1 − e^(−coverage)) can achieve with that effort on a stationary target; inverse-cube and definite-range sweeps can exceed it, and so can a search logged as a track, which is scored along its single-pass lateral range curve (for the exponential law its exposure adds up to about 1.4 times W·L). With a drifting target or periods that overlap it is a guide, not a bound.\n"
    );
    let found = r.truth.is_some();
    let _ = write!(
        md,
        "| period | searches | swept km² | all exponential | POS achieved | optimal (same belief) | optimal (chain) | cumulative: achieved | cumulative: chain |"
    );
    if found {
        let _ = write!(md, " POD at found: achieved | optimal (chain) |");
    }
    let _ = writeln!(md);
    let _ = write!(md, "|---|---|---:|---|---:|---:|---:|---:|---:|");
    if found {
        let _ = write!(md, "---:|---:|");
    }
    let _ = writeln!(md);
    for p in &r.periods {
        period_row(md, p);
        if found {
            period_found_cells(md, p);
        }
        let _ = writeln!(md);
    }
    let _ = writeln!(
        md,
        "\nA period is the searches tasked in it, or searches sharing the same start and end. \"Cumulative: achieved\" counts every search ended by the period's end; \"(overlaps)\" marks a period whose time overlaps another's, where the comparison is not exact.\n"
    );
}

/// One period's common cells: searches, effort, POS achieved and optimal.
fn period_row(md: &mut String, p: &Period) {
    let o = p.optimal;
    let _ = write!(
        md,
        "| {}{} | {} | {:.1} | {} | {:.3} | {} | {} | {:.3} | {} |",
        p.id,
        if p.overlaps_other_period {
            " (overlaps)"
        } else {
            ""
        },
        p.searches.join(", "),
        p.effort.area_swept_m2 / seekgrid_core::units::M2_PER_KM2,
        if p.all_exponential { "yes" } else { "no" },
        p.pos,
        opt(o.map(|o| o.pos_same_belief), 3),
        opt(o.map(|o| o.pos_chain), 3),
        p.pos_cumulative,
        opt(o.map(|o| o.pos_cumulative_chain), 3),
    );
}

/// One period's cells on the found position: POD there achieved and in the optimal chain.
fn period_found_cells(md: &mut String, p: &Period) {
    let o = p.optimal;
    let _ = write!(
        md,
        " {} | {} |",
        opt(p.pod_at_truth, 3),
        opt(o.and_then(|o| o.pod_at_truth_chain), 3),
    );
}

/// What could not be computed, and why.
fn not_computed(md: &mut String, r: &Review) {
    let _ = writeln!(md, "## What could not be computed\n");
    if r.not_computed.is_empty() {
        let _ = writeln!(md, "Everything above was computed.\n");
    } else {
        for n in &r.not_computed {
            let _ = writeln!(md, "- {}: {}", n.what, n.why);
        }
        let _ = writeln!(md);
    }
}

fn object(pairs: &[(&str, geojson::JsonValue)]) -> JsonObject {
    pairs
        .iter()
        .map(|(k, v)| ((*k).to_owned(), v.clone()))
        .collect()
}

fn foreign(r: &Review, name: &str, run_id: &str) -> JsonObject {
    object(&[
        ("run_id", run_id.into()),
        ("name", name.into()),
        ("title", r.title.clone().into()),
        ("caution", CAUTION.into()),
    ])
}

fn found_geojson(r: &Review, run_id: &str) -> Result<Vec<u8>, RenderError> {
    let mut features = Vec::new();
    if let Some(t) = &r.truth {
        let mut props = object(&[("part", "found".into()), ("time", time(t.time).into())]);
        if let Some(e) = t.position_error_m {
            props.insert("position_error_m".into(), e.into());
        }
        if let Some(d) = r.timeline.last().and_then(|row| row.truth) {
            props.insert("density_per_km2".into(), d.density_per_km2.into());
        }
        features.push(Feature {
            geometry: Some(render::point_to_geojson(&r.frame, t.xy)),
            properties: Some(props),
            ..Default::default()
        });
    }
    collection_bytes(features, foreign(r, "review-found", run_id))
}

fn analysts_geojson(r: &Review, run_id: &str) -> Result<Vec<u8>, RenderError> {
    let mut features = Vec::new();
    if let Some(t) = &r.truth {
        for a in &r.analysts {
            let Some(b) = a.bias else { continue };
            let mut props = object(&[
                ("analyst", a.id.clone().into()),
                ("weight_used", a.weight_used.into()),
                ("bias_distance_m", b.distance_m.into()),
            ]);
            if let Some(v) = b.bearing_deg {
                props.insert("bias_bearing_deg".into(), v.into());
            }
            if let Some(v) = a.log_score.and_then(finite) {
                props.insert("log_score".into(), v.into());
            }
            if let Some(v) = a.implied_weight {
                props.insert("implied_weight".into(), v.into());
            }
            let mut point = props.clone();
            point.insert("part".into(), "mean".into());
            features.push(Feature {
                geometry: Some(render::point_to_geojson(&r.frame, b.mean_xy)),
                properties: Some(point),
                ..Default::default()
            });
            props.insert("part".into(), "mean-to-found".into());
            features.push(Feature {
                geometry: Some(render::line_to_geojson(
                    &r.frame,
                    &geo::LineString(vec![b.mean_xy, t.xy]),
                )),
                properties: Some(props),
                ..Default::default()
            });
        }
    }
    collection_bytes(features, foreign(r, "review-analysts", run_id))
}

fn searches_geojson(r: &Review, run_id: &str) -> Result<Vec<u8>, RenderError> {
    let mut features = Vec::new();
    for s in &r.searches {
        let mut props = object(&[
            ("search", s.id.clone().into()),
            ("unit", s.unit.clone().into()),
            ("start", time(s.start).into()),
            ("end", time(s.end).into()),
            ("applied", s.applied.into()),
            ("area_swept_m2", s.effort.area_swept_m2.into()),
        ]);
        match s.period {
            Some(k) => {
                props.insert("period".into(), r.periods[k].id.clone().into());
                props.insert("stroke".into(), period_colour(k).into());
            }
            None => {
                // Not applied (ended after the review's end): grey.
                props.insert("stroke".into(), "#9e9e9e".into());
            }
        }
        if let Some(v) = s.pos {
            props.insert("pos".into(), v.into());
        }
        if let Some(v) = s.pod_at_truth {
            props.insert("pod_at_found".into(), v.into());
        }
        if let Some(area) = &s.area_polygon {
            let mut p = props.clone();
            p.insert("part".into(), "area".into());
            p.insert("fill-opacity".into(), 0.0.into());
            features.push(Feature {
                geometry: Some(render::polygon_to_geojson(&r.frame, area)),
                properties: Some(p),
                ..Default::default()
            });
        }
        if s.track.0.len() >= 2 {
            props.insert("part".into(), "track".into());
            features.push(Feature {
                geometry: Some(render::line_to_geojson(&r.frame, &s.track)),
                properties: Some(props),
                ..Default::default()
            });
        }
    }
    collection_bytes(features, foreign(r, "review-searches", run_id))
}

/// Writes `review.json`, `review.md` and the review's GeoJSON layers into `dir` (the run's
/// output folder; the caller commits it); returns the JSON document.
///
/// # Errors
/// [`RenderError`] when a file cannot be serialised or written, or a position cannot be
/// converted.
pub fn write(r: &Review, dir: &OutputDir) -> Result<ReviewJson, RenderError> {
    let mut doc = review_json(r);
    doc.run_id = Some(dir.run_id().to_owned());
    let mut json = serde_json::to_vec_pretty(&doc).map_err(|e| RenderError::Json(e.to_string()))?;
    json.push(b'\n');
    // Build every file first, so that a failure leaves no half set behind.
    let md = review_markdown(r);
    let found = found_geojson(r, dir.run_id())?;
    let analysts = analysts_geojson(r, dir.run_id())?;
    let searches = searches_geojson(r, dir.run_id())?;
    dir.write("review-found.geojson", &found)?;
    dir.write("review-analysts.geojson", &analysts)?;
    dir.write("review-searches.geojson", &searches)?;
    dir.write("review.md", md.as_bytes())?;
    dir.write("review.json", &json)?;
    crate::charts::write_review_charts(r, dir)?;
    Ok(doc)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::OutputOptions;
    use seekgrid_engine::review::review;

    /// A point scenario searched by an exponential sweep, and distance rings 30 km away whose
    /// last quantile (5 km) leaves the found position at exactly zero density (rest of world
    /// beyond it).
    const INCIDENT: &str = r#"
[incident]
title = "Render test (invented)"
reference_time = "2026-06-14T10:00:00Z"
crs = "EPSG:32626"
[grid]
cell_m = 200
[[analyst]]
id = "near"
[[analyst]]
id = "far"
[[scenario]]
id = "datum"
analyst = "near"
kind = "point"
position = [-29.0, 30.0]
sigma_m = 1500
[[scenario]]
id = "rings"
analyst = "far"
kind = "rings"
position = [-28.7, 30.0]
distance_quantiles_km = { 25 = 1, 50 = 2, 75 = 3, 95 = 5 }
[[search]]
id = "s1"
unit = "boat"
start = "2026-06-14T11:00:00Z"
end = "2026-06-14T13:00:00Z"
sweep_width_m = 400
detection = "exponential"
pattern = { kind = "parallel-sweep", center = [-29.0, 30.0], length_m = 3000, width_m = 3000, major_bearing_deg = 0, track_spacing_m = 500 }
"#;

    fn reviewed() -> (tempfile::TempDir, Review) {
        let dir = tempfile::tempdir().unwrap();
        let inc =
            seekgrid_incident::parse(&dir.path().join("i.toml"), INCIDENT.to_owned()).unwrap();
        let found = Outcome::Found {
            position: [-29.001, 30.001],
            time: chrono::DateTime::parse_from_rfc3339("2026-06-14T14:00:00Z")
                .unwrap()
                .with_timezone(&chrono::Utc),
            position_error_m: Some(50.0),
            note: Some("found by a fishing vessel (invented)".into()),
        };
        let r = review(&inc, Some(&found), &|_, _, _| {}).unwrap();
        (dir, r)
    }

    #[test]
    fn a_zero_density_is_written_as_null_and_said_in_words() {
        let (_dir, r) = reviewed();
        assert_eq!(r.analysts[1].density_per_km2, Some(0.0));
        assert_eq!(r.analysts[1].log_score, Some(f64::NEG_INFINITY));
        let doc = review_json(&r);
        let text = serde_json::to_string(&doc).unwrap();
        let v: serde_json::Value = serde_json::from_str(&text).unwrap();
        assert!(v["analysts"][1]["log_score"].is_null());
        assert_eq!(v["analysts"][1]["zero_density"], true);
        assert!(v["analysts"][0]["log_score"].is_f64());
        assert_eq!(v["end_reason"], "found");
        assert_eq!(v["searches"][0]["covered_truth"], true);
        let md = review_markdown(&r);
        assert!(md.contains("zero density"));
        assert!(md.contains("## Searches over the found position"));
        assert!(md.contains("| s1 | boat |"));
        assert!(md.contains("found by a fishing vessel"));
        assert_eq!(md.matches(CAUTION).count(), 2);
    }

    #[test]
    fn every_file_is_written_with_its_layers() {
        let (_dir, r) = reviewed();
        let out = tempfile::tempdir().unwrap();
        let dest = out.path().join("review");
        let dir = OutputDir::create(
            &dest,
            &OutputOptions {
                run_id: "test-1",
                force: false,
                inputs: &[],
            },
        )
        .unwrap();
        let doc = write(&r, &dir).unwrap();
        dir.commit().unwrap();
        assert_eq!(doc.run_id.as_deref(), Some("test-1"));
        for f in REVIEW_FILES {
            assert!(dest.join(f).is_file(), "{f}");
        }
        let read = |f: &str| -> serde_json::Value {
            serde_json::from_str(&std::fs::read_to_string(dest.join(f)).unwrap()).unwrap()
        };
        let found = read("review-found.geojson");
        assert_eq!(found["features"][0]["geometry"]["type"], "Point");
        assert_eq!(found["run_id"], "test-1");
        let analysts = read("review-analysts.geojson");
        // Two analysts, each a mean point and a line to the truth.
        assert_eq!(analysts["features"].as_array().unwrap().len(), 4);
        assert_eq!(analysts["features"][1]["geometry"]["type"], "LineString");
        let searches = read("review-searches.geojson");
        let props = &searches["features"][0]["properties"];
        assert_eq!(props["stroke"], period_colour(0));
        assert_eq!(props["period"], "2026-06-14T11:00:00Z/2026-06-14T13:00:00Z");
    }

    #[test]
    fn period_colours_cycle_through_ten_distinct_colours() {
        let c: Vec<String> = (0..10).map(period_colour).collect();
        let mut d = c.clone();
        d.sort();
        d.dedup();
        assert_eq!(d.len(), 10);
        assert_eq!(period_colour(10), c[0]);
        assert!(c.iter().all(|s| s.len() == 7 && s.starts_with('#')));
    }
}
