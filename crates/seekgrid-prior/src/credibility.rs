//! Scoring analysts against outcomes: how much density each gave the place where the object was
//! found, what Bayes' rule then says about their weights, whether their errors point one way,
//! and what weights a track record over several incidents suggests.
//!
//! Every function here is pure arithmetic on numbers the caller has already computed (densities
//! at the truth, log scores, bearings); nothing reads files or knows about incidents beyond the
//! lists it is given. Densities are per km² (the state's unit), log scores natural logarithms of
//! densities per km². Each function names the source of its formula.
//!
//! * [`log_score`]: S = ln f(x), the logarithmic score of a forecast density f at the outcome x.
//! * [`implied_weights`]: Bayes' rule on analysts, w_a' = w_a f_a(x) / Σ_b w_b f_b(x).
//! * [`rayleigh_test`]: the Rayleigh test for uniformity of bearings (degrees true), with the
//!   exact p-value for fewer than 10 bearings.
//! * [`suggest_weights`]: credibility weights from a track record of log scores, by Bayes'
//!   rule incident after incident among the analysts present, shrunk toward equal weights.
//! * [`pool_versus_analysts`]: did the pool score better than the best single analyst.
//!
//! ```
//! use seekgrid_prior::credibility::{implied_weights, log_score};
//!
//! // Two analysts with equal weights; circular normals with sigma 2 km, one centred on the
//! // truth, the other 6 km away: f = exp(-d² / (2 sigma²)) / (2 pi sigma²) per km².
//! let f = |d_km: f64| (-d_km * d_km / 8.0).exp() / (8.0 * std::f64::consts::PI);
//! let w = implied_weights(&[0.5, 0.5], &[f(0.0), f(6.0)]).unwrap();
//! assert!((w[0] - 0.98901).abs() < 5e-6); // 1 / (1 + e^(-4.5)), computed
//! assert!((log_score(f(0.0)).unwrap() + (8.0 * std::f64::consts::PI).ln()).abs() < 1e-12);
//! assert_eq!(log_score(0.0).unwrap(), f64::NEG_INFINITY);
//! ```

use crate::error::PriorError;
use seekgrid_core::neumaier_sum;

mod rayleigh_exact;

/// The logarithmic score S = ln f(x) of a forecast density at the outcome.
///
/// `density_per_km2` is the forecast's probability density at the place where the object was
/// found, per km². Higher is better; the score is strictly proper (it rewards the forecaster
/// for stating the density they believe). Source: I. J. Good (1952), "Rational decisions",
/// J. R. Stat. Soc. B 14:107-114; T. Gneiting and A. E. Raftery (2007), "Strictly proper
/// scoring rules, prediction, and estimation", JASA 102:359-378 (from memory).
///
/// A density of zero gives [`f64::NEG_INFINITY`]: the analyst gave the truth zero density.
/// Callers report that in words rather than print `-inf`. Note that the score depends on the
/// unit: per m² instead of per km² subtracts ln 10⁶ = 13.8155 from every score.
///
/// # Errors
/// [`PriorError::BadCredibilityValue`] for a negative, NaN or infinite density.
pub fn log_score(density_per_km2: f64) -> Result<f64, PriorError> {
    if !(density_per_km2.is_finite() && density_per_km2 >= 0.0) {
        return Err(PriorError::BadCredibilityValue {
            field: "density_per_km2".into(),
            position: 1,
            value: density_per_km2,
            expected: "a finite density, 0 or more, per km²",
        });
    }
    Ok(density_per_km2.ln())
}

/// Bayes' rule on analysts (Bayesian model averaging): the weights the analysts earn once the
/// outcome is known, w_a' = w_a f_a(x) / Σ_b w_b f_b(x).
///
/// `weights_used` are the credibility weights the analysts had in the pool (any positive
/// scale; they need not add up to 1), `density_at_truth` each analyst's density at the
/// place where the object was found, per km², in the same order. The result adds up to 1.
/// An analyst with weight 0 or density 0 gets 0. The products are formed in log space
/// (ln w_a + ln f_a, then log-sum-exp), so densities as small as 1e-300 do not underflow.
///
/// Source: Bayes' rule with the analysts as hypotheses and their densities as likelihoods
/// (J. A. Hoeting, D. Madigan, A. E. Raftery and C. T. Volinsky (1999), "Bayesian model
/// averaging: a tutorial", Statistical Science 14:382-417; from memory).
///
/// # Errors
/// [`PriorError::EmptyCredibilityInput`] when `weights_used` is empty;
/// [`PriorError::CredibilityLengthMismatch`] when the lengths differ;
/// [`PriorError::BadCredibilityValue`] for a negative, NaN or infinite weight or density;
/// [`PriorError::TruthOutsideEveryAnalyst`] when every product w_a f_a is zero.
pub fn implied_weights(
    weights_used: &[f64],
    density_at_truth: &[f64],
) -> Result<Vec<f64>, PriorError> {
    if weights_used.is_empty() {
        return Err(PriorError::EmptyCredibilityInput {
            field: "weights_used",
            fix: "give at least one analyst's weight",
        });
    }
    if density_at_truth.len() != weights_used.len() {
        return Err(PriorError::CredibilityLengthMismatch {
            field: "density_at_truth",
            got: density_at_truth.len(),
            other_field: "weights_used",
            expected: weights_used.len(),
        });
    }
    check_non_negative("weights_used", weights_used, "a finite weight, 0 or more")?;
    check_non_negative(
        "density_at_truth",
        density_at_truth,
        "a finite density, 0 or more, per km²",
    )?;
    let log_products: Vec<f64> = weights_used
        .iter()
        .zip(density_at_truth)
        .map(|(w, f)| w.ln() + f.ln())
        .collect();
    normalise_logs(&log_products).ok_or(PriorError::TruthOutsideEveryAnalyst)
}

/// The Rayleigh test of a set of bearings (see [`rayleigh_test`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RayleighTest {
    /// Number of bearings n.
    pub n: usize,
    /// Mean resultant length R̄ = |Σ_k (sin θ_k, cos θ_k)| / n, in 0..=1: 0 when the bearings
    /// cancel out, 1 when they all agree.
    pub mean_resultant_length: f64,
    /// Rayleigh's statistic Z = n R̄².
    pub z: f64,
    /// Approximate probability, in 0..=1, of a mean resultant length at least this large if
    /// the bearings were uniform on the circle (Zar's approximation, see [`rayleigh_test`]).
    /// Small values say the bearings lean one way. Poor for fewer than 10 bearings: use
    /// [`RayleighTest::p_value_exact`] there ([`RayleighTest::best_p_value`] picks it).
    pub p_value: f64,
    /// The exact probability, in 0..=1, of a resultant at least this long if the bearings were
    /// uniform (within about 1e-7, see [`rayleigh_test`]), computed for n up to
    /// [`EXACT_P_MAX_BEARINGS`]; `None` above, where Zar's approximation is within
    /// [`ZAR_MAX_ABS_ERROR_FROM_10`] of it.
    pub p_value_exact: Option<f64>,
    /// Mean bearing, degrees true in 0..360, the direction of the resultant; `None` when
    /// R̄ ≤ 1e-9 and the bearings cancel out, so there is no mean direction.
    pub mean_bearing_deg: Option<f64>,
}

impl RayleighTest {
    /// The exact p-value where it was computed (n ≤ [`EXACT_P_MAX_BEARINGS`]), else Zar's
    /// approximation; in 0..=1.
    #[must_use]
    pub fn best_p_value(&self) -> f64 {
        self.p_value_exact.unwrap_or(self.p_value)
    }
}

/// Mean resultant lengths at or below this have no mean direction.
const MIN_RESULTANT_FOR_DIRECTION: f64 = 1e-9;

/// The largest number of bearings for which [`rayleigh_test`] computes the exact p-value
/// (9): below 10 bearings Zar's approximation can be off by more than 5e-4 (0.11 at n = 2).
pub const EXACT_P_MAX_BEARINGS: usize = 9;

/// The largest absolute error of Zar's approximation against the exact p-value for 10 or more
/// bearings: 5e-4, the largest error at n = 10 (4.93e-4) rounded up; the error shrinks as n
/// grows (1.1e-4 at n = 20, 5.1e-5 at n = 30). Computed by
/// `fixtures/reference/make_credibility_fixtures.py` over 40 resultant lengths per n, so a
/// measured bound, not a proven one.
pub const ZAR_MAX_ABS_ERROR_FROM_10: f64 = 5e-4;

/// The Rayleigh test for uniformity of n bearings θ_k (degrees clockwise from true north),
/// for instance the directions from each analyst's centre to the truth over several incidents:
/// do the errors point one way?
///
/// R̄ = |Σ_k (sin θ_k, cos θ_k)| / n, Z = n R̄², and with R = n R̄ the p-value is Zar's
/// approximation p ≈ exp(√(1 + 4n + 4(n² − R²)) − (1 + 2n)), computed in the equivalent form
/// exp(−4R² / (a + √(a² − 4R²))), a = 1 + 2n, which avoids cancellation for large n, and
/// clamped to 0..=1. Source: J. H. Zar, *Biostatistical Analysis*, ch. 27 (circular
/// distributions, hypothesis testing); K. V. Mardia and P. E. Jupp (2000), *Directional
/// Statistics*, Wiley, ch. 6 (from memory). The values are checked against SciPy's
/// `directional_stats` and pingouin's `circ_rayleigh` (frozen in
/// `fixtures/reference/credibility_reference.json`).
///
/// Accuracy: against the exact p-value (Kluyver's 1906 integral for the resultant of n uniform
/// unit vectors, and (2/π) arccos(R/2) for n = 2), the largest absolute error of the
/// approximation over the range of R is about 0.11 for n = 2, 0.034 for n = 3, 0.014 for
/// n = 4, 0.006 for n = 5, 0.0016 for n = 7, 5e-4 for n = 10, 1.1e-4 for n = 20 and 5e-5 for
/// n = 30 (computed by `fixtures/reference/make_credibility_fixtures.py`). The approximation overstates very
/// small p-values at small n (n = 5 bearings within 25°: 0.0021 against an exact 0.00012), so
/// read it as "at most about" there.
///
/// For n ≤ [`EXACT_P_MAX_BEARINGS`] the exact p-value P(R_n ≥ R) under uniformity is computed
/// as well ([`RayleighTest::p_value_exact`]): the survival function of the resultant of n
/// uniform unit vectors, built one vector at a time by the law of total probability (adding
/// a unit vector to a resultant of length s reaches length r or more with probability
/// arccos((r² − s² − 1)/(2s))/π), by quadrature on a grid with Richardson extrapolation.
/// It agrees with Kluyver's integral in the fixture within 2e-7 (0.2 % of p-values below
/// 1e-4), and with a seeded simulation for n = 4 to 9 (tested); the work is some tens of
/// milliseconds at n = 9.
///
/// # Errors
/// [`PriorError::TooFewBearings`] for fewer than 2 bearings;
/// [`PriorError::BadCredibilityValue`] for a bearing that is NaN or infinite (any finite value
/// is taken modulo 360).
pub fn rayleigh_test(bearings_deg: &[f64]) -> Result<RayleighTest, PriorError> {
    let n = bearings_deg.len();
    if n < 2 {
        return Err(PriorError::TooFewBearings { n });
    }
    if let Some(i) = bearings_deg.iter().position(|b| !b.is_finite()) {
        return Err(PriorError::BadCredibilityValue {
            field: "bearings_deg".into(),
            position: i + 1,
            value: bearings_deg[i],
            expected: "a finite bearing in degrees true",
        });
    }
    let east = neumaier_sum(bearings_deg.iter().map(|b| b.to_radians().sin()));
    let north = neumaier_sum(bearings_deg.iter().map(|b| b.to_radians().cos()));
    let nf = n as f64;
    let resultant = east.hypot(north).min(nf);
    let mean_resultant_length = resultant / nf;
    let a = 1.0 + 2.0 * nf;
    let r2 = resultant * resultant;
    let p_value = (-4.0 * r2 / (a + (a * a - 4.0 * r2).sqrt()))
        .exp()
        .clamp(0.0, 1.0);
    let mean_bearing_deg = (mean_resultant_length > MIN_RESULTANT_FOR_DIRECTION)
        .then(|| east.atan2(north).to_degrees().rem_euclid(360.0))
        // rem_euclid can round a tiny negative angle up to exactly 360.
        .map(|b| if b >= 360.0 { 0.0 } else { b });
    let p_value_exact = (n <= EXACT_P_MAX_BEARINGS).then(|| rayleigh_exact::survival(n, resultant));
    Ok(RayleighTest {
        n,
        mean_resultant_length,
        z: r2 / nf,
        p_value,
        p_value_exact,
        mean_bearing_deg,
    })
}

/// The default of [`CredibilityOptions::shrinkage_incidents`]: 3 incidents. A choice of ours,
/// not a published value: with it an analyst's record of 3 incidents moves the suggested
/// weight half-way from equal weights to the Bayes weight.
pub const DEFAULT_SHRINKAGE_INCIDENTS: f64 = 3.0;

/// Options of [`suggest_weights`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CredibilityOptions {
    /// The shrinkage constant k, in incidents (0 or more): an analyst with n incidents keeps
    /// the fraction n / (n + k) of their Bayes weight and takes the rest from the equal share.
    /// 0 means no shrinkage.
    pub shrinkage_incidents: f64,
}

impl Default for CredibilityOptions {
    fn default() -> Self {
        Self {
            shrinkage_incidents: DEFAULT_SHRINKAGE_INCIDENTS,
        }
    }
}

/// The log scores ([`log_score`]) of one incident: each analyst's who took part, and the
/// pool's where it was recorded.
#[derive(Debug, Clone, PartialEq)]
pub struct IncidentScores {
    /// Log score of the pooled prior at the truth ([`log_score`] of its density per km²);
    /// `None` where it was not recorded ([`pool_versus_analysts`] leaves such incidents out,
    /// [`suggest_weights`] does not use it).
    pub pool_log_score: Option<f64>,
    /// (analyst id, log score) of each analyst who took part, in any order;
    /// [`f64::NEG_INFINITY`] where the analyst gave the truth zero density.
    pub analyst_log_scores: Vec<(String, f64)>,
}

/// The weight a track record suggests for one analyst (see [`suggest_weights`]).
#[derive(Debug, Clone, PartialEq)]
pub struct SuggestedWeight {
    /// Analyst id.
    pub analyst: String,
    /// Number of incidents n_a the analyst took part in.
    pub incidents: usize,
    /// Mean log score over those incidents; `None` without incidents, −∞ when the analyst gave
    /// the truth zero density at least once.
    pub mean_log_score: Option<f64>,
    /// The weight after Bayes' rule alone, p_a (step 2 of [`suggest_weights`]), in 0..=1.
    pub bayes_weight: f64,
    /// The suggested credibility weight w_a (step 4), in 0..=1; the weights add up to 1.
    pub weight: f64,
}

/// The result of [`suggest_weights`].
#[derive(Debug, Clone, PartialEq)]
pub struct SuggestedWeights {
    /// One entry per analyst: first those of the `analysts` argument in that order, then those
    /// met only in the incidents, in order of first appearance.
    pub analysts: Vec<SuggestedWeight>,
    /// Incidents (positions counting from 1) that left the weights unchanged because every
    /// analyst present with a positive weight gave the truth zero density (or no analyst
    /// present had weight left), so Bayes' rule could not tell them apart.
    pub uninformative_incidents: Vec<usize>,
}

/// Credibility weights suggested by a track record of log scores.
///
/// `analysts` lists analysts to weigh even if they took part in no incident (such as the
/// analysts of the next incident); every analyst named in `incidents` is weighed too.
/// `incidents` are taken in the given order, which should be the order in which the outcomes
/// became known. With A analysts in all, the equal share e = 1/A, n_a the number of incidents
/// analyst a took part in, m the number of analysts with none, f_a,i = exp(log score) analyst
/// a's density at the truth of incident i, and k = `options.shrinkage_incidents`:
///
/// 1. Start from equal weights, p_a = e.
/// 2. Bayes' rule within each incident among the analysts present, incident after incident:
///    with P_i the analysts present in incident i and W_i = Σ_{b ∈ P_i} p_b their weight,
///    p_a ← W_i · p_a f_a,i / Σ_{b ∈ P_i} p_b f_b,i for a in P_i; the others keep p_a. The
///    analysts present share the weight they brought in by how well they placed the truth; an
///    analyst absent from an incident is neither rewarded nor penalised by it. When every
///    analyst took part in every incident this is Bayes' rule on the whole record,
///    p_a = exp(L_a) / Σ_b exp(L_b) with L_a the sum of a's log scores, and the order does not
///    matter; when participation differs, the order can matter a little (each incident is
///    weighed by the weights current at the time). An incident where every analyst present
///    with a positive weight gave the truth zero density leaves the weights unchanged and is
///    listed in [`SuggestedWeights::uninformative_incidents`]. Analysts without incidents
///    keep p_a = e.
/// 3. Shrink toward equal weights: u_a = λ_a p_a + (1 − λ_a) e with λ_a = n_a / (n_a + k)
///    (λ_a = 1 when k = 0 and n_a > 0; λ_a = 0 when n_a = 0).
/// 4. Renormalise: analysts without incidents keep exactly e; the others share the rest,
///    w_a = (1 − m e) u_a / Σ_{b: n_b > 0} u_b.
///
/// Weights are carried as logarithms (log-sum-exp), so long records do not underflow.
/// Because each incident only compares the analysts present, the result does not depend on
/// the unit of density (per km² or per m²) and an analyst is not penalised for taking part in
/// more incidents. Bayes' rule is from memory (Bayesian model averaging, Hoeting et al. 1999,
/// Statistical Science 14:382-417); the shrinkage toward equal weights by n / (n + k) has the
/// form of a credibility factor (H. Bühlmann (1967), "Experience rating and credibility",
/// ASTIN Bulletin 4:199-207; from memory), with k a choice of ours
/// ([`DEFAULT_SHRINKAGE_INCIDENTS`]).
///
/// # Errors
/// [`PriorError::EmptyCredibilityInput`] when there is no analyst at all;
/// [`PriorError::DuplicateAnalyst`] for an analyst listed twice in `analysts` or in one
/// incident; [`PriorError::IncidentWithoutAnalysts`];
/// [`PriorError::BadShrinkage`] for a negative or non-finite k;
/// [`PriorError::BadCredibilityValue`] for a log score that is NaN or +∞.
pub fn suggest_weights(
    analysts: &[String],
    incidents: &[IncidentScores],
    options: &CredibilityOptions,
) -> Result<SuggestedWeights, PriorError> {
    let k = options.shrinkage_incidents;
    if !(k.is_finite() && k >= 0.0) {
        return Err(PriorError::BadShrinkage { value: k });
    }
    let mut ids: Vec<&str> = Vec::new();
    for (i, a) in analysts.iter().enumerate() {
        if analysts[..i].contains(a) {
            return Err(PriorError::DuplicateAnalyst { analyst: a.clone() });
        }
        ids.push(a);
    }
    for (i, inc) in incidents.iter().enumerate() {
        check_incident(i, inc)?;
        for (a, _) in &inc.analyst_log_scores {
            if !ids.contains(&a.as_str()) {
                ids.push(a);
            }
        }
    }
    if ids.is_empty() {
        return Err(PriorError::EmptyCredibilityInput {
            field: "analysts",
            fix: "give at least one analyst or one incident with analysts' log scores",
        });
    }
    let count = ids.len();
    let equal = 1.0 / count as f64;
    let index = |id: &str| ids.iter().position(|x| *x == id).unwrap_or(0);
    let mut log_weights = vec![equal.ln(); count];
    let mut scores: Vec<Vec<f64>> = vec![Vec::new(); count];
    let mut uninformative_incidents = Vec::new();
    for (i, inc) in incidents.iter().enumerate() {
        let present: Vec<(usize, f64)> = inc
            .analyst_log_scores
            .iter()
            .map(|(a, s)| (index(a), *s))
            .collect();
        for &(a, s) in &present {
            scores[a].push(s);
        }
        let brought = log_sum_exp(present.iter().map(|&(a, _)| log_weights[a]));
        let products: Vec<f64> = present.iter().map(|&(a, s)| log_weights[a] + s).collect();
        let total = log_sum_exp(products.iter().copied());
        if brought == f64::NEG_INFINITY || total == f64::NEG_INFINITY {
            uninformative_incidents.push(i + 1);
            continue;
        }
        for (&(a, _), l) in present.iter().zip(&products) {
            log_weights[a] = brought + l - total;
        }
    }
    // The weights add up to 1 up to rounding; normalising removes the drift.
    let bayes = normalise_logs(&log_weights).unwrap_or_else(|| vec![equal; count]);
    let with_record: Vec<usize> = (0..count).filter(|&a| !scores[a].is_empty()).collect();
    let rest = 1.0 - (count - with_record.len()) as f64 * equal;
    let shrunk: Vec<f64> = (0..count)
        .map(|a| {
            let n = scores[a].len() as f64;
            let lambda = if n > 0.0 { n / (n + k) } else { 0.0 };
            lambda * bayes[a] + (1.0 - lambda) * equal
        })
        .collect();
    let shrunk_total = neumaier_sum(with_record.iter().map(|&a| shrunk[a]));
    let analysts = (0..count)
        .map(|a| {
            let n = scores[a].len();
            SuggestedWeight {
                analyst: ids[a].to_string(),
                incidents: n,
                mean_log_score: (n > 0).then(|| mean_log(&scores[a])),
                bayes_weight: if n > 0 { bayes[a] } else { equal },
                weight: if n > 0 {
                    rest * shrunk[a] / shrunk_total
                } else {
                    equal
                },
            }
        })
        .collect();
    Ok(SuggestedWeights {
        analysts,
        uninformative_incidents,
    })
}

/// Checks one incident: analysts present, no analyst twice, log scores finite or −∞.
fn check_incident(i: usize, inc: &IncidentScores) -> Result<(), PriorError> {
    if inc.analyst_log_scores.is_empty() {
        return Err(PriorError::IncidentWithoutAnalysts { incident: i + 1 });
    }
    if let Some(pool) = inc.pool_log_score {
        check_log_scores(&format!("incident {} pool_log_score", i + 1), &[pool])?;
    }
    let scores: Vec<f64> = inc.analyst_log_scores.iter().map(|s| s.1).collect();
    check_log_scores(&format!("incident {} analyst_log_scores", i + 1), &scores)?;
    for (j, (id, _)) in inc.analyst_log_scores.iter().enumerate() {
        if inc.analyst_log_scores[..j].iter().any(|o| &o.0 == id) {
            return Err(PriorError::DuplicateAnalyst {
                analyst: id.clone(),
            });
        }
    }
    Ok(())
}

/// ln Σ exp(l_i); −∞ for no terms or when every l_i is −∞.
fn log_sum_exp(logs: impl Iterator<Item = f64> + Clone) -> f64 {
    let max = logs.clone().fold(f64::NEG_INFINITY, f64::max);
    if max == f64::NEG_INFINITY {
        return max;
    }
    max + neumaier_sum(logs.map(|l| (l - max).exp())).ln()
}

/// One analyst against the pool, over the incidents compared that they took part in (see
/// [`pool_versus_analysts`]).
#[derive(Debug, Clone, PartialEq)]
pub struct AnalystVersusPool {
    /// Analyst id.
    pub analyst: String,
    /// Incidents compared that the analyst took part in.
    pub incidents: usize,
    /// Mean log score of the analyst over those incidents.
    pub mean_log_score: f64,
    /// Mean over those incidents of (pool − analyst): positive when the pool did better.
    pub mean_gain_of_pool: f64,
    /// Incidents where the pool scored strictly higher than the analyst.
    pub pool_better: usize,
}

/// Whether the pool scored better than single analysts (see [`pool_versus_analysts`]).
///
/// Differences are pool minus analyst, in natural-log units of density: +0.69 means the pool
/// gave the truth twice the density. Where both gave the truth zero density the difference is
/// 0; a mean is −∞ when the pool alone gave zero density in some incident, +∞ when only the
/// analyst did, and NaN when both happen in different incidents.
#[derive(Debug, Clone, PartialEq)]
pub struct PoolVersusAnalysts {
    /// Number of incidents compared: those with the pool's log score.
    pub incidents: usize,
    /// Incidents where the pool scored strictly better than the best analyst of that incident
    /// (chosen with hindsight, incident by incident).
    pub pool_better_than_best_each: usize,
    /// Mean over incidents of (pool − best analyst of that incident).
    pub mean_gain_over_best_each: f64,
    /// Every analyst against the pool, in order of first appearance.
    pub analysts: Vec<AnalystVersusPool>,
    /// Index into `analysts` of the best single analyst: the one with the lowest mean gain of
    /// the pool over them (the first on a tie), that is the analyst who did best against the
    /// pool on the incidents they took part in.
    pub best_analyst: usize,
}

impl PoolVersusAnalysts {
    /// The best single analyst (see [`PoolVersusAnalysts::best_analyst`]).
    #[must_use]
    pub fn best(&self) -> &AnalystVersusPool {
        &self.analysts[self.best_analyst]
    }
}

/// Did the pool beat the best single analyst: compares the pool's log score with the best
/// analyst's of each incident (a hindsight benchmark that a linear pool never beats, a mix
/// being never denser than its densest part) and, analyst by analyst, over the incidents each
/// took part in. The best single analyst is the one who did best against the pool on their own
/// incidents, so that analysts are compared incident by incident, never across different
/// incidents (whose densities can differ by orders of magnitude, a land search area being far
/// smaller than a sea one): would trusting that one analyst alone have done better?
///
/// Source: comparing mean logarithmic scores of forecasts over the same outcomes, common
/// practice (Gneiting and Raftery 2007, JASA 102:359-378; from memory).
///
/// Incidents without the pool's log score are left out; all the figures are over the
/// incidents compared.
///
/// # Errors
/// [`PriorError::EmptyCredibilityInput`] for no incidents, or none with the pool's log score;
/// [`PriorError::IncidentWithoutAnalysts`]; [`PriorError::DuplicateAnalyst`] when an analyst
/// appears twice in one incident; [`PriorError::BadCredibilityValue`] for a log score that is
/// NaN or +∞.
pub fn pool_versus_analysts(
    incidents: &[IncidentScores],
) -> Result<PoolVersusAnalysts, PriorError> {
    if incidents.is_empty() {
        return Err(PriorError::EmptyCredibilityInput {
            field: "incidents",
            fix: "give the log scores of at least one incident",
        });
    }
    for (i, inc) in incidents.iter().enumerate() {
        check_incident(i, inc)?;
    }
    // Incidents with the pool's score: (pool score, incident).
    let compared: Vec<(f64, &IncidentScores)> = incidents
        .iter()
        .filter_map(|inc| inc.pool_log_score.map(|p| (p, inc)))
        .collect();
    if compared.is_empty() {
        return Err(PriorError::EmptyCredibilityInput {
            field: "pool_log_score",
            fix: "record the pool's log score of at least one incident",
        });
    }
    // Scores of each analyst, in order of first appearance: (id, [(pool, score)]).
    let mut by_analyst: Vec<(&str, Vec<(f64, f64)>)> = Vec::new();
    let mut gains_each = Vec::with_capacity(compared.len());
    for &(pool, inc) in &compared {
        for (id, s) in &inc.analyst_log_scores {
            match by_analyst.iter_mut().find(|e| e.0 == id) {
                Some(e) => e.1.push((pool, *s)),
                None => by_analyst.push((id, vec![(pool, *s)])),
            }
        }
        let best = inc
            .analyst_log_scores
            .iter()
            .map(|s| s.1)
            .fold(f64::NEG_INFINITY, f64::max);
        gains_each.push(gain(pool, best));
    }
    let analysts: Vec<AnalystVersusPool> = by_analyst
        .iter()
        .map(|(id, scores)| {
            let gains: Vec<f64> = scores.iter().map(|&(pool, s)| gain(pool, s)).collect();
            AnalystVersusPool {
                analyst: (*id).to_string(),
                incidents: scores.len(),
                mean_log_score: mean_log(&scores.iter().map(|x| x.1).collect::<Vec<_>>()),
                mean_gain_of_pool: mean_extended(&gains),
                pool_better: gains.iter().filter(|g| **g > 0.0).count(),
            }
        })
        .collect();
    // The lowest mean gain of the pool; NaN (undefined) ranks last.
    let mut best = 0;
    for (j, a) in analysts.iter().enumerate() {
        let current = analysts[best].mean_gain_of_pool;
        if a.mean_gain_of_pool < current || (current.is_nan() && !a.mean_gain_of_pool.is_nan()) {
            best = j;
        }
    }
    Ok(PoolVersusAnalysts {
        incidents: compared.len(),
        pool_better_than_best_each: gains_each.iter().filter(|g| **g > 0.0).count(),
        mean_gain_over_best_each: mean_extended(&gains_each),
        analysts,
        best_analyst: best,
    })
}

/// Pool minus analyst; 0 when both are −∞.
fn gain(pool: f64, analyst: f64) -> f64 {
    if pool == f64::NEG_INFINITY && analyst == f64::NEG_INFINITY {
        0.0
    } else {
        pool - analyst
    }
}

/// Mean of values that may be ±∞: the compensated mean of finite values; −∞ or +∞ if only
/// that infinity occurs; NaN if both do.
fn mean_extended(values: &[f64]) -> f64 {
    let neg = values.contains(&f64::NEG_INFINITY);
    let pos = values.contains(&f64::INFINITY);
    match (neg, pos) {
        (true, true) => f64::NAN,
        (true, false) => f64::NEG_INFINITY,
        (false, true) => f64::INFINITY,
        (false, false) => neumaier_sum(values.iter().copied()) / values.len() as f64,
    }
}

/// Sum of log scores (finite or −∞), −∞ when any is.
fn log_sum(scores: &[f64]) -> f64 {
    if scores.contains(&f64::NEG_INFINITY) {
        f64::NEG_INFINITY
    } else {
        neumaier_sum(scores.iter().copied())
    }
}

/// Mean of log scores (finite or −∞, not empty).
fn mean_log(scores: &[f64]) -> f64 {
    log_sum(scores) / scores.len() as f64
}

/// exp(l_i) / Σ exp(l_j) by log-sum-exp; `None` when every l_i is −∞.
fn normalise_logs(logs: &[f64]) -> Option<Vec<f64>> {
    let max = logs.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if max == f64::NEG_INFINITY {
        return None;
    }
    let scaled: Vec<f64> = logs.iter().map(|l| (l - max).exp()).collect();
    let total = neumaier_sum(scaled.iter().copied());
    Some(scaled.into_iter().map(|v| v / total).collect())
}

fn check_non_negative(
    field: &'static str,
    values: &[f64],
    expected: &'static str,
) -> Result<(), PriorError> {
    match values.iter().position(|v| !(v.is_finite() && *v >= 0.0)) {
        Some(i) => Err(PriorError::BadCredibilityValue {
            field: field.into(),
            position: i + 1,
            value: values[i],
            expected,
        }),
        None => Ok(()),
    }
}

/// Log scores must be finite or −∞.
fn check_log_scores(field: &str, scores: &[f64]) -> Result<(), PriorError> {
    match scores
        .iter()
        .position(|s| s.is_nan() || *s == f64::INFINITY)
    {
        Some(i) => Err(PriorError::BadCredibilityValue {
            field: field.to_string(),
            position: i + 1,
            value: scores[i],
            expected: "a finite log score, or -inf where the density at the truth was 0",
        }),
        None => Ok(()),
    }
}
