//! The credibility report on small records whose numbers are worked out by hand.

use approx::assert_abs_diff_eq;
use seekgrid_engine::credibility::{CredibilityError, credibility};
use seekgrid_incident::record::{POOL_ANALYST, RecordRow, Role};
use seekgrid_prior::credibility::CredibilityOptions;

fn row(
    incident: &str,
    hour: u32,
    analyst: &str,
    density: f64,
    bias: Option<(f64, f64)>,
) -> RecordRow {
    RecordRow {
        incident_id: incident.into(),
        incident_title: format!("invented incident {incident}"),
        outcome_time: format!("2026-06-{:02}T12:00:00Z", hour).parse().unwrap(),
        role: if analyst == POOL_ANALYST {
            Role::Pool
        } else {
            Role::Analyst
        },
        analyst: analyst.into(),
        log_score: Some(density.ln()),
        truth_mass_above: Some(0.3),
        bias_distance_m: bias.map(|b| b.0),
        bias_bearing_deg: bias.map(|b| b.1),
        weight_used: (analyst != POOL_ANALYST).then_some(0.5),
        weight_implied: None,
    }
}

/// Three invented incidents, written out of time order to check the sorting:
/// I1 (day 1): A 0.2, B 0.05 per km², pool 0.15; I2 (day 2): A 0.1, C 0.1, pool 0.08;
/// I3 (day 3): B 0.3, C 0.1, pool 0.2. Bias bearings 85, 75, 90, 80, 100 and 95 degrees.
fn record() -> Vec<RecordRow> {
    vec![
        row("i3", 3, "B", 0.3, Some((300.0, 85.0))),
        row("i3", 3, "C", 0.1, Some((600.0, 75.0))),
        row("i3", 3, POOL_ANALYST, 0.2, None),
        row("i1", 1, "A", 0.2, Some((500.0, 90.0))),
        row("i1", 1, "B", 0.05, Some((2000.0, 80.0))),
        row("i1", 1, POOL_ANALYST, 0.15, None),
        row("i2", 2, "A", 0.1, Some((800.0, 100.0))),
        row("i2", 2, "C", 0.1, Some((1500.0, 95.0))),
        row("i2", 2, POOL_ANALYST, 0.08, None),
    ]
}

#[test]
fn a_small_record_gives_the_hand_computed_weights_scores_and_pool_comparison() {
    // Hand computation (computed), k = 3, analysts in order of appearance B, C, A, e = 1/3,
    // incidents in time order I1, I2, I3:
    // I1: A and B bring 2/3 and share it 0.2 : 0.05 = 4 : 1 -> A 8/15, B 2/15; C 5/15.
    // I2: A and C bring 13/15; equal densities leave A 8/15, C 5/15.
    // I3: B and C bring 7/15 and share it (2/15)(0.3) : (5/15)(0.1) = 6 : 5 ->
    //     B 14/55 = 42/165, C 7/33 = 35/165; A 88/165.
    // Everyone has 2 incidents: lambda = 2/5, u = 2p/5 + 1/5:
    //     A 341/825, B 249/825, C 235/825 (sum 1, so no renormalising).
    // Mean log scores: A ln(0.02)/2 = -1.956011503, B ln(0.015)/2 = -2.099852539,
    //     C ln(0.01)/2 = -2.302585093. Mean bias distance: A 650, B 1150, C 1050 m.
    // Pool against the best of each incident: ln 0.75, ln 0.8, ln(2/3), mean -0.305430244.
    // Pool against each analyst on their own incidents: A ln 0.75, ln 0.8, mean
    // -0.255412812; B ln 3, ln(2/3), mean 0.346573590; C ln 0.8, ln 2, mean 0.235001815.
    // The pool gained least over A: A is the best analyst, and the pool never beat them.
    let r = credibility(&record(), &CredibilityOptions::default()).unwrap();
    assert_eq!(r.incidents, 3);
    let ids: Vec<&str> = r.analysts.iter().map(|a| a.analyst.as_str()).collect();
    assert_eq!(ids, ["B", "C", "A"]);
    let w = |id: &str| r.analysts.iter().find(|a| a.analyst == id).unwrap();
    assert_abs_diff_eq!(w("A").bayes_weight, 88.0 / 165.0, epsilon = 1e-14);
    assert_abs_diff_eq!(w("B").bayes_weight, 42.0 / 165.0, epsilon = 1e-14);
    assert_abs_diff_eq!(w("C").bayes_weight, 35.0 / 165.0, epsilon = 1e-14);
    assert_abs_diff_eq!(w("A").suggested_weight, 341.0 / 825.0, epsilon = 1e-14);
    assert_abs_diff_eq!(w("B").suggested_weight, 249.0 / 825.0, epsilon = 1e-14);
    assert_abs_diff_eq!(w("C").suggested_weight, 235.0 / 825.0, epsilon = 1e-14);
    assert_abs_diff_eq!(w("A").mean_log_score.unwrap(), -1.956011503, epsilon = 1e-9);
    assert_abs_diff_eq!(w("B").mean_log_score.unwrap(), -2.099852539, epsilon = 1e-9);
    assert_abs_diff_eq!(
        w("C").mean_log_score.unwrap(),
        -std::f64::consts::LN_10,
        epsilon = 1e-9
    ); // ln(0.01)/2 = -ln 10
    assert_abs_diff_eq!(w("B").mean_bias_distance_m.unwrap(), 1150.0, epsilon = 1e-9);
    assert_eq!(w("A").incidents, 2);
    let pool = r.pool.unwrap();
    assert_eq!(pool.result.incidents, 3);
    assert_abs_diff_eq!(
        pool.result.mean_gain_over_best_each,
        -0.305430244,
        epsilon = 1e-9
    );
    assert_eq!(pool.result.best().analyst, "A");
    assert_abs_diff_eq!(
        pool.result.best().mean_gain_of_pool,
        -0.255412812,
        epsilon = 1e-9
    );
    assert_eq!(pool.result.best().pool_better, 0);
    assert_abs_diff_eq!(
        w("A").mean_score_minus_pool.unwrap(),
        0.255412812,
        epsilon = 1e-9
    );
    assert_abs_diff_eq!(
        w("B").mean_score_minus_pool.unwrap(),
        -0.346573590,
        epsilon = 1e-9
    );
    assert_abs_diff_eq!(
        w("C").mean_score_minus_pool.unwrap(),
        -0.235001815,
        epsilon = 1e-9
    );
    assert!(!pool.pool_beat_best_analyst);
    assert!(r.not_computed.is_empty());
}

#[test]
fn bias_bearings_that_share_a_direction_are_told_apart_from_scattered_ones() {
    // Shared: 85, 75, 90, 80, 100, 95 (computed: east 5.92793, north 0.25882, R-bar
    // 0.988930, mean bearing 87.5). Exact p for n = 6 is far below 5 %.
    let r = credibility(&record(), &CredibilityOptions::default()).unwrap();
    let d = r.bias_direction.unwrap();
    assert_eq!(d.test.n, 6);
    assert_abs_diff_eq!(d.test.mean_resultant_length, 0.988930, epsilon = 1e-6);
    assert_abs_diff_eq!(d.test.mean_bearing_deg.unwrap(), 87.5, epsilon = 1e-9);
    assert_eq!(d.p_value, d.test.p_value_exact.unwrap());
    assert!(d.p_value < 0.01 && d.shared, "{}", d.p_value);
    // Scattered: the same record with the bearings spread round the circle (computed:
    // 200, 320, 10, 80, 140, 260 give R-bar 0.0291).
    let mut scattered = record();
    let spread = [200.0, 320.0, 10.0, 80.0, 140.0, 260.0];
    for (row, b) in scattered
        .iter_mut()
        .filter(|r| r.bias_bearing_deg.is_some())
        .zip(spread)
    {
        row.bias_bearing_deg = Some(b);
    }
    let d = credibility(&scattered, &CredibilityOptions::default())
        .unwrap()
        .bias_direction
        .unwrap();
    assert!(d.p_value > 0.5 && !d.shared, "{}", d.p_value);
}

#[test]
fn records_without_scores_or_pool_rows_say_what_was_not_computed() {
    let mut rows: Vec<RecordRow> = record()
        .into_iter()
        .filter(|r| r.role == Role::Analyst)
        .collect();
    rows.iter_mut().for_each(|r| r.bias_bearing_deg = None);
    let r = credibility(&rows, &CredibilityOptions::default()).unwrap();
    assert!(r.pool.is_none() && r.bias_direction.is_none());
    assert_eq!(r.not_computed.len(), 2);
    rows.iter_mut().for_each(|r| r.log_score = None);
    assert!(matches!(
        credibility(&rows, &CredibilityOptions::default()),
        Err(CredibilityError::NothingScored)
    ));
}
