//! Writing a credibility report ([`seekgrid_engine::credibility::CredibilityReport`]):
//! `credibility.json` (every number, typed), `credibility.md` (the report in words) and the
//! plain-text table printed on standard output.

use crate::summary::CAUTION;
use crate::{OutputDir, RenderError};
use seekgrid_engine::credibility::{
    AnalystCredibility, BiasDirection, CredibilityReport, PoolComparison, SIGNIFICANCE,
};
use seekgrid_incident::model::Time;
use seekgrid_prior::credibility::{EXACT_P_MAX_BEARINGS, ZAR_MAX_ABS_ERROR_FROM_10};
use serde::Serialize;
use std::fmt::Write as _;

/// The files [`write()`] creates.
pub const CREDIBILITY_FILES: [&str; 2] = ["credibility.json", "credibility.md"];

/// How the suggested weights are made, in words (written into every report).
pub const WEIGHT_METHOD: &str = "Suggested weights: start from equal weights; then, incident by incident in order of outcome time, apply Bayes' rule among the analysts who took part: they share the weight they brought in proportion to weight x density at the place where the object was found (analysts absent from an incident keep theirs). Each analyst's result is then moved toward the equal share, keeping the fraction n/(n+k) of it, with n their number of incidents and k the shrinkage constant, so that a short record counts for little; the weights are scaled to add up to 1. For the next incident, take the weights of the analysts who take part and scale them to add up to 1 (analysts who never shared an incident keep, as a group, the share they started with, so only weights within a group compare). A log score is ln(density at the truth per km²): higher is better, and a difference of 0.69 means twice the density.";

/// What the columns of the analysts' table mean, in words.
pub const COLUMNS_NOTE: &str = "Columns: incidents with a log score; the mean log score over the analyst's own incidents (not comparable between analysts who took part in different kinds of incidents: a land search area is far smaller than a sea one, so its densities are higher); minus pool's: the mean of (analyst's log score - the pooled map's) over those incidents, comparable between analysts, positive when the analyst placed the truth better than the pool; the mean distance from the centre of the analyst's map to the found position; the mean weight the analyst had in the pools; the weight after Bayes' rule alone; the suggested weight.";

/// How the bias directions are tested, in words.
pub const BIAS_METHOD: &str = "Shared bias: each analyst's bias is the line from the mean of their map to the place where the object was found. The Rayleigh test asks whether the bearings of these lines, over every analyst and incident in the record, scatter in random directions (errors a crowd of analysts averages out) or share one (an error that pooling cannot remove). R-bar is the length of the mean of the bearings as unit vectors: 0 when they cancel out, 1 when they all agree.";

/// How the Rayleigh p-value is computed and how far to trust it with few bearings, in words
/// (written into every report: stdout, `credibility.md` and `credibility.json`).
pub const RAYLEIGH_CAVEAT: &str = "Rayleigh test, method and small-sample caveat: the p-value is the chance of an R-bar at least this large if the bearings were uniform on the circle. Below 10 bearings it is the exact value (the distribution of the resultant of n uniform unit vectors, integrated numerically, within 2e-7), because Zar's textbook approximation is poor there (off by up to 0.11 at n = 2, 0.034 at n = 3); from 10 bearings it is Zar's approximation (within 5e-4). With few bearings the test has little power: only a strong common direction gives p below 5 %, so \"no shared direction\" on a short record is not evidence that the errors scatter. The bearings of several analysts in one incident are not independent (they share the found position), which makes the p-value smaller than it should be; read a verdict on few incidents as a prompt to look, not a finding.";

fn time(t: Time) -> String {
    t.to_rfc3339_opts(chrono::SecondsFormat::AutoSi, true)
}

/// A number for JSON: `None` for an infinite or NaN value.
fn finite(v: f64) -> Option<f64> {
    v.is_finite().then_some(v)
}

/// One analyst in `credibility.json`.
#[derive(Debug, Clone, Serialize)]
pub struct AnalystJson {
    /// Analyst id.
    pub analyst: String,
    /// Incidents with a log score.
    pub incidents: usize,
    /// Mean log score, ln(density per km²); `null` without incidents or when the analyst gave
    /// the truth zero density at least once (see `zero_density_incidents`).
    pub mean_log_score: Option<f64>,
    /// Incidents where the analyst gave the truth zero density.
    pub zero_density_incidents: usize,
    /// Mean bias distance, metres.
    pub mean_bias_distance_m: Option<f64>,
    /// Mean weight used in the pools of their incidents (normalised).
    pub mean_weight_used: Option<f64>,
    /// Mean of (their log score − the pool's) over their incidents with a pool row: positive
    /// when they placed the truth better than the pooled map; `null` when not computed or
    /// infinite.
    pub mean_score_minus_pool: Option<f64>,
    /// Weight after Bayes' rule alone.
    pub bayes_weight: f64,
    /// Suggested credibility weight (the weights add up to 1).
    pub suggested_weight: f64,
}

/// The shared-bias test in `credibility.json`.
#[derive(Debug, Clone, Serialize)]
pub struct BiasDirectionJson {
    /// Bias bearings tested.
    pub n: usize,
    /// Mean resultant length R̄, 0..1.
    pub mean_resultant_length: f64,
    /// Mean bearing, degrees true; `null` when the bearings cancel out.
    pub mean_bearing_deg: Option<f64>,
    /// Rayleigh's Z = n R̄².
    pub z: f64,
    /// The p-value used for the verdict.
    pub p_value: f64,
    /// `"exact"` (fewer than 10 bearings) or `"zar"` (Zar's approximation).
    pub p_value_method: &'static str,
    /// Largest absolute error of the p-value used: about 2e-7 for the exact value, 5e-4 for
    /// Zar's approximation from 10 bearings.
    pub p_value_max_abs_error: f64,
    /// Zar's approximation, always given.
    pub p_value_zar: f64,
    /// The significance level of the verdict.
    pub significance: f64,
    /// Whether the bearings share a direction at that level.
    pub shared_direction: bool,
    /// The verdict in words.
    pub verdict: String,
}

/// One analyst against the pool in `credibility.json`.
#[derive(Debug, Clone, Serialize)]
pub struct AnalystVersusPoolJson {
    /// Analyst id.
    pub analyst: String,
    /// Incidents compared (with a pool row) that the analyst took part in.
    pub incidents: usize,
    /// Mean of (pool − analyst) log score over them; `null` when infinite or undefined.
    pub mean_gain_of_pool: Option<f64>,
    /// Of those incidents, where the pool scored higher.
    pub pool_better: usize,
}

/// The pool against the best analyst in `credibility.json`.
#[derive(Debug, Clone, Serialize)]
pub struct PoolJson {
    /// Incidents with the pool's log score.
    pub incidents: usize,
    /// The best single analyst: the one who did best against the pool on their incidents.
    pub best_analyst: String,
    /// Every analyst against the pool.
    pub analysts: Vec<AnalystVersusPoolJson>,
    /// Incidents where the pool beat the best analyst of that incident (hindsight).
    pub pool_better_than_best_each: usize,
    /// Mean of (pool − best analyst of each incident).
    pub mean_gain_over_best_each: Option<f64>,
    /// Whether the pool beat the best single analyst on average (and so every analyst).
    pub pool_beat_best_analyst: bool,
    /// The verdict in words.
    pub verdict: String,
}

/// Something not computed.
#[derive(Debug, Clone, Serialize)]
pub struct NotComputedJson {
    /// What.
    pub what: String,
    /// Why.
    pub why: String,
}

/// `credibility.json`.
#[derive(Debug, Clone, Serialize)]
pub struct CredibilityJson {
    /// The caution.
    pub caution: &'static str,
    /// The run id.
    pub run_id: Option<String>,
    /// The record read, as given.
    pub record: String,
    /// Distinct incidents in the record.
    pub incidents: usize,
    /// First outcome time.
    pub first_outcome: String,
    /// Last outcome time.
    pub last_outcome: String,
    /// How the weights are made.
    pub weight_method: &'static str,
    /// The shrinkage constant k, incidents.
    pub shrinkage_incidents: f64,
    /// Analysts, in order of first appearance in the record.
    pub analysts: Vec<AnalystJson>,
    /// Incidents that left the weights unchanged.
    pub uninformative_incidents: Vec<String>,
    /// How the biases are tested.
    pub bias_method: &'static str,
    /// How the Rayleigh p-value is computed and its small-sample caveat.
    pub rayleigh_caveat: &'static str,
    /// The shared-bias test.
    pub bias_direction: Option<BiasDirectionJson>,
    /// The pool against the best analyst.
    pub pool_versus_best_analyst: Option<PoolJson>,
    /// What could not be computed.
    pub not_computed: Vec<NotComputedJson>,
}

/// Which p-value the verdict used, and its largest error.
fn p_source(d: &BiasDirection) -> (&'static str, f64) {
    if d.test.p_value_exact.is_some() {
        ("exact", 2e-7)
    } else {
        ("zar", ZAR_MAX_ABS_ERROR_FROM_10)
    }
}

/// A p-value in words: 4 significant figures, or "< 1e-6".
fn p_text(p: f64) -> String {
    if p < 1e-6 {
        "< 0.000001".into()
    } else if p < 0.001 {
        format!("{p:.2e}")
    } else {
        format!("{p:.4}")
    }
}

/// The shared-bias verdict in plain words.
#[must_use]
pub fn bias_verdict(d: &BiasDirection) -> String {
    let level = SIGNIFICANCE * 100.0;
    let n = d.test.n;
    let how = match p_source(d) {
        ("exact", _) => format!(
            "the exact p-value, as Zar's approximation is poor below {} bearings",
            EXACT_P_MAX_BEARINGS + 1
        ),
        _ => format!(
            "Zar's approximation, within {ZAR_MAX_ABS_ERROR_FROM_10} of the exact value from 10 bearings"
        ),
    };
    if d.shared {
        format!(
            "The {n} bias bearings share a direction (p = {}, below {level:.0} %; {how}): the analysts tend to err the same way, toward {} degrees true from their maps' centres. Pooling them does not average this error out; look for a common cause (a shared assumption, the same drift data) before the next incident.",
            p_text(d.p_value),
            d.test
                .mean_bearing_deg
                .map_or("no single".to_owned(), |b| format!("{b:.0}")),
        )
    } else {
        format!(
            "No shared direction at {level:.0} % (p = {}; {how}): the {n} bias bearings are consistent with errors in random directions, which pooling the analysts tends to average out. With few bearings only a strong common direction would show.",
            p_text(d.p_value)
        )
    }
}

/// The pool verdict in plain words.
#[must_use]
pub fn pool_verdict(p: &PoolComparison) -> String {
    let r = &p.result;
    let best = r.best();
    let gain = best.mean_gain_of_pool;
    let gain_text = if gain.is_finite() {
        format!(
            "the pool's log score was {gain:+.2} against theirs on average (the pool giving the truth {:.2} times their density)",
            gain.exp()
        )
    } else if gain == f64::INFINITY {
        "the analyst gave the truth zero density at least once, the pool never".to_owned()
    } else if gain == f64::NEG_INFINITY {
        "the pool gave the truth zero density at least once".to_owned()
    } else {
        "the difference is undefined (both gave the truth zero density, in different incidents)"
            .to_owned()
    };
    let verdict = if p.pool_beat_best_analyst {
        "The pooled map beat every single analyst on average over the incidents each took part in."
    } else {
        "The pooled map did not beat the best single analyst on average."
    };
    format!(
        "{verdict} The best single analyst, the one who did best against the pool on their own incidents, is {} ({} incident(s)): {gain_text}; the pool scored higher in {} of them. Against the best analyst of each incident, chosen with hindsight, the pool scored higher in {} of {} incident(s) (a linear pool never can: a mix is never denser than its densest part).",
        best.analyst, best.incidents, best.pool_better, r.pool_better_than_best_each, r.incidents,
    )
}

fn analyst_json(a: &AnalystCredibility) -> AnalystJson {
    AnalystJson {
        analyst: a.analyst.clone(),
        incidents: a.incidents,
        mean_log_score: a.mean_log_score.and_then(finite),
        zero_density_incidents: a.zero_density_incidents,
        mean_bias_distance_m: a.mean_bias_distance_m,
        mean_weight_used: a.mean_weight_used,
        mean_score_minus_pool: a.mean_score_minus_pool.and_then(finite),
        bayes_weight: a.bayes_weight,
        suggested_weight: a.suggested_weight,
    }
}

/// The JSON document of a report; `record` is the record file as given, `run_id` the run's id.
#[must_use]
pub fn credibility_json(
    r: &CredibilityReport,
    record: &str,
    run_id: Option<&str>,
) -> CredibilityJson {
    CredibilityJson {
        caution: CAUTION,
        run_id: run_id.map(str::to_owned),
        record: record.to_owned(),
        incidents: r.incidents,
        first_outcome: time(r.outcome_span.0),
        last_outcome: time(r.outcome_span.1),
        weight_method: WEIGHT_METHOD,
        shrinkage_incidents: r.shrinkage_incidents,
        analysts: r.analysts.iter().map(analyst_json).collect(),
        uninformative_incidents: r.uninformative_incidents.clone(),
        bias_method: BIAS_METHOD,
        rayleigh_caveat: RAYLEIGH_CAVEAT,
        bias_direction: r.bias_direction.as_ref().map(|d| {
            let (method, error) = p_source(d);
            BiasDirectionJson {
                n: d.test.n,
                mean_resultant_length: d.test.mean_resultant_length,
                mean_bearing_deg: d.test.mean_bearing_deg,
                z: d.test.z,
                p_value: d.p_value,
                p_value_method: method,
                p_value_max_abs_error: error,
                p_value_zar: d.test.p_value,
                significance: SIGNIFICANCE,
                shared_direction: d.shared,
                verdict: bias_verdict(d),
            }
        }),
        pool_versus_best_analyst: r.pool.as_ref().map(|p| PoolJson {
            incidents: p.result.incidents,
            best_analyst: p.result.best().analyst.clone(),
            analysts: p
                .result
                .analysts
                .iter()
                .map(|a| AnalystVersusPoolJson {
                    analyst: a.analyst.clone(),
                    incidents: a.incidents,
                    mean_gain_of_pool: finite(a.mean_gain_of_pool),
                    pool_better: a.pool_better,
                })
                .collect(),
            pool_better_than_best_each: p.result.pool_better_than_best_each,
            mean_gain_over_best_each: finite(p.result.mean_gain_over_best_each),
            pool_beat_best_analyst: p.pool_beat_best_analyst,
            verdict: pool_verdict(p),
        }),
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

/// A log score for the table: two decimals, or "zero density" for −∞.
fn score_text(s: Option<f64>) -> String {
    match s {
        None => "-".into(),
        Some(v) if v == f64::NEG_INFINITY => "-inf (zero density)".into(),
        Some(v) => format!("{v:.2}"),
    }
}

/// A signed difference of log scores, or its infinity in words.
fn signed(v: Option<f64>) -> String {
    match v {
        None => "-".into(),
        Some(x) if x == f64::NEG_INFINITY => "-inf".into(),
        Some(x) if x == f64::INFINITY => "+inf".into(),
        Some(x) if x.is_nan() => "undefined".into(),
        Some(x) => format!("{x:+.2}"),
    }
}

fn opt(v: Option<f64>, decimals: usize) -> String {
    v.map_or("-".into(), |x| format!("{x:.decimals$}"))
}

/// The analysts' table rows: header and one row per analyst, as cells.
fn table_cells(r: &CredibilityReport) -> Vec<Vec<String>> {
    let mut rows = vec![vec![
        "analyst".to_owned(),
        "incidents".to_owned(),
        "mean log score".to_owned(),
        "minus pool's".to_owned(),
        "mean bias (m)".to_owned(),
        "mean weight used".to_owned(),
        "Bayes weight".to_owned(),
        "suggested weight".to_owned(),
    ]];
    for a in &r.analysts {
        rows.push(vec![
            a.analyst.clone(),
            a.incidents.to_string(),
            score_text(a.mean_log_score),
            signed(a.mean_score_minus_pool),
            opt(a.mean_bias_distance_m, 0),
            opt(a.mean_weight_used, 3),
            format!("{:.3}", a.bayes_weight),
            format!("{:.3}", a.suggested_weight),
        ]);
    }
    rows
}

/// The report as plain text for standard output: the analysts' table, the two verdicts, the
/// method and the caution.
#[must_use]
pub fn credibility_table(r: &CredibilityReport, record: &str) -> String {
    let cells = table_cells(r);
    let widths: Vec<usize> = (0..cells[0].len())
        .map(|c| {
            cells
                .iter()
                .map(|row| row[c].chars().count())
                .max()
                .unwrap_or(0)
        })
        .collect();
    let mut out = String::new();
    let _ = writeln!(
        out,
        "Credibility from {record}: {} incident(s), outcomes {} to {}\n",
        r.incidents,
        time(r.outcome_span.0),
        time(r.outcome_span.1)
    );
    for (i, row) in cells.iter().enumerate() {
        let line: Vec<String> = row
            .iter()
            .zip(&widths)
            .enumerate()
            .map(|(c, (cell, w))| {
                if c == 0 {
                    format!("{cell:<w$}")
                } else {
                    format!("{cell:>w$}")
                }
            })
            .collect();
        let _ = writeln!(out, "{}", line.join("  ").trim_end());
        if i == 0 {
            let total = widths.iter().sum::<usize>() + 2 * (widths.len() - 1);
            let _ = writeln!(out, "{}", "-".repeat(total));
        }
    }
    let _ = writeln!(out, "\n{COLUMNS_NOTE}");
    let _ = writeln!(
        out,
        "\n{WEIGHT_METHOD} Here k = {} incidents.",
        r.shrinkage_incidents
    );
    if !r.uninformative_incidents.is_empty() {
        let _ = writeln!(
            out,
            "Incidents where every analyst gave the truth zero density (weights unchanged): {}",
            r.uninformative_incidents.join(", ")
        );
    }
    let _ = writeln!(out);
    match &r.bias_direction {
        Some(d) => {
            let _ = writeln!(
                out,
                "Shared bias: n = {}, R-bar = {:.3}, mean bearing {}, p = {} ({})",
                d.test.n,
                d.test.mean_resultant_length,
                d.test
                    .mean_bearing_deg
                    .map_or("none".into(), |b| format!("{b:.0} deg true")),
                p_text(d.p_value),
                p_source(d).0
            );
            let _ = writeln!(out, "{}", bias_verdict(d));
            let _ = writeln!(out, "{RAYLEIGH_CAVEAT}");
        }
        None => {
            let _ = writeln!(out, "Shared bias: not tested (see below).");
        }
    }
    let _ = writeln!(out);
    match &r.pool {
        Some(p) => {
            let _ = writeln!(out, "Pool against the best analyst: {}", pool_verdict(p));
        }
        None => {
            let _ = writeln!(
                out,
                "Pool against the best analyst: not computed (see below)."
            );
        }
    }
    for n in &r.not_computed {
        let _ = writeln!(out, "Not computed: {}: {}", n.what, n.why);
    }
    let _ = writeln!(out, "\nCAUTION: {CAUTION}");
    out
}

/// The report as Markdown.
#[must_use]
pub fn credibility_markdown(r: &CredibilityReport, record: &str) -> String {
    let mut md = String::new();
    let _ = writeln!(md, "# Credibility of the analysts across incidents\n");
    let _ = writeln!(md, "> **Caution.** {CAUTION}\n");
    let _ = writeln!(
        md,
        "Record `{record}`: {} incident(s), outcomes from {} to {} (UTC).\n",
        r.incidents,
        time(r.outcome_span.0),
        time(r.outcome_span.1)
    );
    let _ = writeln!(md, "## Analysts\n");
    let cells = table_cells(r);
    for (i, row) in cells.iter().enumerate() {
        let _ = writeln!(md, "| {} |", row.join(" | "));
        if i == 0 {
            let _ = writeln!(md, "|---|{}", "---:|".repeat(row.len() - 1));
        }
    }
    let _ = writeln!(md, "\n{COLUMNS_NOTE}");
    let _ = writeln!(
        md,
        "\n{WEIGHT_METHOD} Here k = {} incidents. The suggested weights are a starting point for the next incident's analyst weights, not a verdict on anyone: a few incidents say little.\n",
        r.shrinkage_incidents
    );
    if !r.uninformative_incidents.is_empty() {
        let _ = writeln!(
            md,
            "Incidents where every analyst gave the truth zero density, which leave the weights unchanged: {}.\n",
            r.uninformative_incidents.join(", ")
        );
    }
    let _ = writeln!(md, "## Do the analysts' biases share a direction?\n");
    let _ = writeln!(md, "{BIAS_METHOD}\n");
    match &r.bias_direction {
        Some(d) => {
            let (method, error) = p_source(d);
            let _ = writeln!(
                md,
                "| bearings n | R-bar | mean bearing (deg true) | p-value | p-value method |"
            );
            let _ = writeln!(md, "|---:|---:|---:|---:|---|");
            let _ = writeln!(
                md,
                "| {} | {:.3} | {} | {} | {} |\n",
                d.test.n,
                d.test.mean_resultant_length,
                d.test
                    .mean_bearing_deg
                    .map_or("none".into(), |b| format!("{b:.0}")),
                p_text(d.p_value),
                if method == "exact" {
                    format!(
                        "exact (within {error:.0e}); Zar's approximation {}",
                        p_text(d.test.p_value)
                    )
                } else {
                    format!("Zar's approximation (within {error})")
                }
            );
            let _ = writeln!(md, "**Verdict at 5 %.** {}\n", bias_verdict(d));
            let _ = writeln!(md, "{RAYLEIGH_CAVEAT}\n");
        }
        None => {
            let _ = writeln!(md, "Not tested: see below.\n");
        }
    }
    let _ = writeln!(md, "## Did the pooled map beat the best single analyst?\n");
    match &r.pool {
        Some(p) => {
            let _ = writeln!(md, "{}\n", pool_verdict(p));
            let _ = writeln!(
                md,
                "Mean gain of the pool over the best analyst of each incident: {} (a hindsight benchmark the pool rarely beats).\n",
                opt(finite(p.result.mean_gain_over_best_each), 2)
            );
        }
        None => {
            let _ = writeln!(md, "Not computed: see below.\n");
        }
    }
    if !r.not_computed.is_empty() {
        let _ = writeln!(md, "## Not computed\n");
        for n in &r.not_computed {
            let _ = writeln!(md, "- {}: {}", n.what, n.why);
        }
        let _ = writeln!(md);
    }
    let _ = writeln!(md, "> **Caution.** {CAUTION}");
    md
}

/// Writes `credibility.json` and `credibility.md` into `dir`; returns the JSON document.
///
/// # Errors
/// [`RenderError`] when a file cannot be serialised or written.
pub fn write(
    r: &CredibilityReport,
    record: &str,
    dir: &OutputDir,
) -> Result<CredibilityJson, RenderError> {
    let doc = credibility_json(r, record, Some(dir.run_id()));
    let mut json = serde_json::to_vec_pretty(&doc).map_err(|e| RenderError::Json(e.to_string()))?;
    json.push(b'\n');
    let md = credibility_markdown(r, record);
    dir.write("credibility.md", md.as_bytes())?;
    dir.write("credibility.json", &json)?;
    Ok(doc)
}
