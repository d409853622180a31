//! Credibility across incidents: from the rows of a track record
//! ([`seekgrid_incident::record`]) to each analyst's record and suggested weight, the test of
//! whether the analysts' biases share a direction, and whether the pooled map beat the best
//! single analyst.
//!
//! The arithmetic is in [`seekgrid_prior::credibility`]; this module groups the rows by
//! incident (in order of outcome time) and by analyst, and says what could not be computed.
//! `seekgrid-render` writes the result.

use seekgrid_incident::model::Time;
use seekgrid_incident::record::{RecordRow, Role};
use seekgrid_prior::PriorError;
use seekgrid_prior::credibility::{
    CredibilityOptions, IncidentScores, PoolVersusAnalysts, RayleighTest, SuggestedWeights,
    pool_versus_analysts, rayleigh_test, suggest_weights,
};

/// The significance level of the verdicts: 5 %.
pub const SIGNIFICANCE: f64 = 0.05;

/// One analyst across the record.
#[derive(Debug, Clone, PartialEq)]
pub struct AnalystCredibility {
    /// Analyst id.
    pub analyst: String,
    /// Incidents with a log score for this analyst.
    pub incidents: usize,
    /// Mean log score over those incidents (ln of density per km²); `None` without any; −∞
    /// when the analyst gave the truth zero density at least once.
    pub mean_log_score: Option<f64>,
    /// Incidents where the analyst gave the truth zero density.
    pub zero_density_incidents: usize,
    /// Mean distance from the mean of the analyst's distribution to the truth, metres, over
    /// the incidents with a bias.
    pub mean_bias_distance_m: Option<f64>,
    /// Weight after Bayes' rule alone (step 2 of
    /// [`seekgrid_prior::credibility::suggest_weights`]), 0..=1.
    pub bayes_weight: f64,
    /// Suggested credibility weight, 0..=1; the weights add up to 1.
    pub suggested_weight: f64,
    /// Mean of the weights used in the pools of their incidents (normalised), where recorded.
    pub mean_weight_used: Option<f64>,
    /// Mean over their incidents with a pool row of (their log score − the pool's): positive
    /// when they placed the truth better than the pooled map. Unlike the mean log score, this
    /// compares like with like across incidents of different kinds.
    pub mean_score_minus_pool: Option<f64>,
}

/// Whether the analysts' bias bearings share a direction.
#[derive(Debug, Clone, PartialEq)]
pub struct BiasDirection {
    /// The Rayleigh test over every analyst row with a bias bearing.
    pub test: RayleighTest,
    /// The p-value the verdict uses: exact for fewer than 10 bearings, else Zar's.
    pub p_value: f64,
    /// Whether that p-value is below [`SIGNIFICANCE`]: the bearings share a direction.
    pub shared: bool,
}

/// Whether the pooled map beat the best single analyst.
#[derive(Debug, Clone, PartialEq)]
pub struct PoolComparison {
    /// The comparison over the incidents with a pool row.
    pub result: PoolVersusAnalysts,
    /// Whether the pool did better on average than the best single analyst over the incidents
    /// that analyst took part in, so better than every analyst on their own incidents.
    pub pool_beat_best_analyst: bool,
}

/// Something the report could not compute, and why.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct NotComputed {
    /// What.
    pub what: String,
    /// Why, in words a planner can act on.
    pub why: String,
}

/// The credibility report of a track record.
#[derive(Debug, Clone, PartialEq)]
pub struct CredibilityReport {
    /// Distinct incidents in the record.
    pub incidents: usize,
    /// First and last outcome time.
    pub outcome_span: (Time, Time),
    /// The shrinkage constant used, in incidents.
    pub shrinkage_incidents: f64,
    /// Every analyst, in order of first appearance in the record.
    pub analysts: Vec<AnalystCredibility>,
    /// Incident ids that left the weights unchanged (every analyst present gave the truth
    /// zero density).
    pub uninformative_incidents: Vec<String>,
    /// The test of the bias bearings; `None` with fewer than 2 bearings.
    pub bias_direction: Option<BiasDirection>,
    /// The pool against the best analyst; `None` without pool rows.
    pub pool: Option<PoolComparison>,
    /// What could not be computed.
    pub not_computed: Vec<NotComputed>,
}

/// Why a credibility report cannot be made.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum CredibilityError {
    /// The record holds no analyst row with a log score.
    #[error(
        "the record has no analyst row with a log score; record reviews of incidents where the object was found inside the grid (seekgrid review ... --record FILE)"
    )]
    NothingScored,
    /// The arithmetic refused its input.
    #[error(transparent)]
    Prior(#[from] PriorError),
}

/// Rows of one incident.
struct IncidentRows<'a> {
    id: &'a str,
    time: Time,
    rows: Vec<&'a RecordRow>,
}

/// Builds the credibility report of a track record (see the module docs).
///
/// Incidents are taken in order of outcome time (then of first appearance). Analyst rows
/// without a log score are left out of the weights and the scores; pool rows without one, out
/// of the pool comparison.
///
/// # Errors
/// [`CredibilityError::NothingScored`] when no analyst row has a log score;
/// [`CredibilityError::Prior`] for a shrinkage constant the arithmetic refuses.
pub fn credibility(
    rows: &[RecordRow],
    options: &CredibilityOptions,
) -> Result<CredibilityReport, CredibilityError> {
    let incidents = incidents_by_outcome_time(rows);
    let scored = scored_incidents(&incidents);
    if scored.is_empty() {
        return Err(CredibilityError::NothingScored);
    }
    let mut not_computed = Vec::new();
    note_unscored(incidents.len() - scored.len(), &mut not_computed);
    let score_list: Vec<IncidentScores> = scored.iter().map(|s| s.scores.clone()).collect();
    let suggestion = suggest_weights(&analyst_ids(rows), &score_list, options)?;
    let mut analysts = analyst_records(rows, &suggestion);
    let uninformative_incidents = suggestion
        .uninformative_incidents
        .iter()
        .map(|&k| scored[k - 1].incident.id.to_string())
        .collect();
    let bias_direction = shared_bias_direction(&incidents, &mut not_computed);
    let pool = pool_comparison(&score_list, &mut analysts, &mut not_computed)?;
    let first = incidents
        .first()
        .map_or(scored[0].incident.time, |i| i.time);
    let last = incidents.last().map_or(first, |i| i.time);
    Ok(CredibilityReport {
        incidents: incidents.len(),
        outcome_span: (first, last),
        shrinkage_incidents: options.shrinkage_incidents,
        analysts,
        uninformative_incidents,
        bias_direction,
        pool,
        not_computed,
    })
}

/// The rows grouped by incident, incidents in order of outcome time (equal times in order of
/// first appearance).
fn incidents_by_outcome_time(rows: &[RecordRow]) -> Vec<IncidentRows<'_>> {
    let mut incidents: Vec<IncidentRows<'_>> = Vec::new();
    for r in rows {
        match incidents.iter_mut().find(|i| i.id == r.incident_id) {
            Some(i) => i.rows.push(r),
            None => incidents.push(IncidentRows {
                id: &r.incident_id,
                time: r.outcome_time,
                rows: vec![r],
            }),
        }
    }
    // Stable sort: equal times keep their order of appearance.
    incidents.sort_by_key(|i| i.time);
    incidents
}

/// An incident with at least one analyst's log score, and its scores.
struct ScoredIncident<'i, 'a> {
    /// The incident's rows.
    incident: &'i IncidentRows<'a>,
    /// Its analysts' log scores and the pool's.
    scores: IncidentScores,
}

/// The incidents with at least one analyst's log score, in order, with their scores.
fn scored_incidents<'i, 'a>(incidents: &'i [IncidentRows<'a>]) -> Vec<ScoredIncident<'i, 'a>> {
    incidents
        .iter()
        .filter_map(|i| {
            let analyst_log_scores: Vec<(String, f64)> = i
                .rows
                .iter()
                .filter(|r| r.role == Role::Analyst)
                .filter_map(|r| r.log_score.map(|s| (r.analyst.clone(), s)))
                .collect();
            let pool_log_score = i
                .rows
                .iter()
                .find(|r| r.role == Role::Pool)
                .and_then(|r| r.log_score);
            (!analyst_log_scores.is_empty()).then_some(ScoredIncident {
                incident: i,
                scores: IncidentScores {
                    pool_log_score,
                    analyst_log_scores,
                },
            })
        })
        .collect()
}

/// Notes in `not_computed` the incidents left out for want of any analyst's log score.
fn note_unscored(unscored: usize, not_computed: &mut Vec<NotComputed>) {
    if unscored > 0 {
        not_computed.push(NotComputed {
            what: format!("{unscored} incident(s) without any analyst's log score"),
            why: "left out of the weights and scores: the object was not found, or was found outside the grid".into(),
        });
    }
}

/// The analysts' ids in order of first appearance among the analyst rows.
fn analyst_ids(rows: &[RecordRow]) -> Vec<String> {
    let mut ids: Vec<String> = Vec::new();
    for r in rows.iter().filter(|r| r.role == Role::Analyst) {
        if !ids.contains(&r.analyst) {
            ids.push(r.analyst.clone());
        }
    }
    ids
}

/// Each analyst's record: the suggested weight with their zero-density incidents, mean bias
/// distance and mean weight used; the comparison with the pool is filled in later.
fn analyst_records(rows: &[RecordRow], suggestion: &SuggestedWeights) -> Vec<AnalystCredibility> {
    suggestion
        .analysts
        .iter()
        .map(|s| {
            let mine: Vec<&RecordRow> = rows
                .iter()
                .filter(|r| r.role == Role::Analyst && r.analyst == s.analyst)
                .collect();
            AnalystCredibility {
                analyst: s.analyst.clone(),
                incidents: s.incidents,
                mean_log_score: s.mean_log_score,
                zero_density_incidents: mine
                    .iter()
                    .filter(|r| r.log_score == Some(f64::NEG_INFINITY))
                    .count(),
                mean_bias_distance_m: mean(mine.iter().filter_map(|r| r.bias_distance_m)),
                bayes_weight: s.bayes_weight,
                suggested_weight: s.weight,
                mean_weight_used: mean(mine.iter().filter_map(|r| r.weight_used)),
                mean_score_minus_pool: None,
            }
        })
        .collect()
}

/// The Rayleigh test of the analysts' bias bearings; `None`, noted in `not_computed`, with
/// fewer than 2 bearings.
fn shared_bias_direction(
    incidents: &[IncidentRows<'_>],
    not_computed: &mut Vec<NotComputed>,
) -> Option<BiasDirection> {
    let bearings: Vec<f64> = incidents
        .iter()
        .flat_map(|i| i.rows.iter())
        .filter(|r| r.role == Role::Analyst)
        .filter_map(|r| r.bias_bearing_deg)
        .collect();
    match rayleigh_test(&bearings) {
        Ok(test) => {
            let p_value = test.best_p_value();
            Some(BiasDirection {
                test,
                p_value,
                shared: p_value < SIGNIFICANCE,
            })
        }
        Err(_) => {
            not_computed.push(NotComputed {
                what: "test of a shared bias direction".into(),
                why: format!(
                    "the record holds {} bias bearing(s); the Rayleigh test needs at least 2",
                    bearings.len()
                ),
            });
            None
        }
    }
}

/// The pooled map against the analysts, filling in each analyst's mean score minus the
/// pool's; `None`, noted in `not_computed`, when no pool row has a log score.
///
/// # Errors
/// [`CredibilityError::Prior`] when the comparison refuses the scores.
fn pool_comparison(
    score_list: &[IncidentScores],
    analysts: &mut [AnalystCredibility],
    not_computed: &mut Vec<NotComputed>,
) -> Result<Option<PoolComparison>, CredibilityError> {
    if !score_list.iter().any(|s| s.pool_log_score.is_some()) {
        not_computed.push(NotComputed {
            what: "pooled map against the best analyst".into(),
            why: "the record has no pool row with a log score; rows written by seekgrid review --record carry one".into(),
        });
        return Ok(None);
    }
    let result = pool_versus_analysts(score_list)?;
    for a in analysts {
        a.mean_score_minus_pool = result
            .analysts
            .iter()
            .find(|v| v.analyst == a.analyst)
            .map(|v| -v.mean_gain_of_pool);
    }
    let pool_beat_best_analyst = result.best().mean_gain_of_pool > 0.0;
    Ok(Some(PoolComparison {
        result,
        pool_beat_best_analyst,
    }))
}

/// Mean of the values; `None` without any.
fn mean(values: impl Iterator<Item = f64>) -> Option<f64> {
    let v: Vec<f64> = values.collect();
    (!v.is_empty()).then(|| seekgrid_core::neumaier_sum(v.iter().copied()) / v.len() as f64)
}
