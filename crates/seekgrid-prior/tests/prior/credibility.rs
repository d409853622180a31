//! Scoring analysts against outcomes: log scores, Bayes' rule on analysts, the Rayleigh test,
//! weights from a track record, and the pool against the best analyst.

use crate::common::fixture;
use approx::assert_abs_diff_eq;
use proptest::prelude::*;
use seekgrid_prior::PriorError;
use seekgrid_prior::credibility::{
    CredibilityOptions, DEFAULT_SHRINKAGE_INCIDENTS, IncidentScores, TrackRecord, implied_weights,
    log_score, pool_versus_analysts, rayleigh_test, suggest_weights,
};
use std::f64::consts::PI;

fn record(analyst: &str, log_scores: &[f64]) -> TrackRecord {
    TrackRecord {
        analyst: analyst.into(),
        log_scores: log_scores.to_vec(),
    }
}

fn incident(pool: f64, analysts: &[(&str, f64)]) -> IncidentScores {
    IncidentScores {
        pool_log_score: pool,
        analyst_log_scores: analysts.iter().map(|(a, s)| ((*a).into(), *s)).collect(),
    }
}

fn shrinkage(k: f64) -> CredibilityOptions {
    CredibilityOptions {
        shrinkage_incidents: k,
    }
}

/// Circular normal density per km², sigma in km, at distance d km from its centre.
fn circular_normal_per_km2(sigma_km: f64, d_km: f64) -> f64 {
    (-d_km * d_km / (2.0 * sigma_km * sigma_km)).exp() / (2.0 * PI * sigma_km * sigma_km)
}

// ---------------------------------------------------------------- log score, Bayes' rule

#[test]
fn three_analysts_scores_and_bayes_weights_match_hand_arithmetic() {
    // Hand computation (computed): weights (0.5, 0.3, 0.2), densities at the truth
    // (0.08, 0.02, 0.05) per km².
    // Log scores: ln 0.08 = -2.525728644, ln 0.02 = -3.912023005, ln 0.05 = -2.995732274.
    // Products w f: 0.04, 0.006, 0.01; sum 0.056;
    // w' = 0.04/0.056 = 5/7, 0.006/0.056 = 3/28, 0.01/0.056 = 5/28.
    let densities = [0.08, 0.02, 0.05];
    let scores: Vec<f64> = densities.iter().map(|&f| log_score(f).unwrap()).collect();
    assert_abs_diff_eq!(scores[0], -2.525728644, epsilon = 1e-9);
    assert_abs_diff_eq!(scores[1], -3.912023005, epsilon = 1e-9);
    assert_abs_diff_eq!(scores[2], -2.995732274, epsilon = 1e-9);
    let w = implied_weights(&[0.5, 0.3, 0.2], &densities).unwrap();
    assert_abs_diff_eq!(w[0], 5.0 / 7.0, epsilon = 1e-15);
    assert_abs_diff_eq!(w[1], 3.0 / 28.0, epsilon = 1e-15);
    assert_abs_diff_eq!(w[2], 5.0 / 28.0, epsilon = 1e-15);
    // The same analysts when the third gave the truth zero density (computed): products
    // 0.04, 0.006, 0; sum 0.046; w' = 20/23, 3/23, 0; the third's score is -inf.
    assert_eq!(log_score(0.0).unwrap(), f64::NEG_INFINITY);
    let w = implied_weights(&[0.5, 0.3, 0.2], &[0.08, 0.02, 0.0]).unwrap();
    assert_abs_diff_eq!(w[0], 20.0 / 23.0, epsilon = 1e-15);
    assert_abs_diff_eq!(w[1], 3.0 / 23.0, epsilon = 1e-15);
    assert_eq!(w[2], 0.0);
}

#[test]
fn analyst_centred_on_the_truth_earns_0_98901_against_one_6_km_away() {
    // Equal weights, circular normals sigma = 2 km centred on the truth and 6 km away:
    // w' = 1 / (1 + e^(-4.5)) = 0.98901 (computed).
    let f = [
        circular_normal_per_km2(2.0, 0.0),
        circular_normal_per_km2(2.0, 6.0),
    ];
    let w = implied_weights(&[1.0, 1.0], &f).unwrap();
    assert_abs_diff_eq!(w[0], 0.98901, epsilon = 5e-6);
    assert_abs_diff_eq!(w[1], 1.0 - 0.98901, epsilon = 5e-6);
    // Its log score is -ln(2 pi sigma²) = -ln(8 pi) = -3.224171 (computed).
    assert_abs_diff_eq!(log_score(f[0]).unwrap(), -3.224171, epsilon = 5e-7);
}

#[test]
fn bayes_weights_survive_densities_that_would_underflow_as_products() {
    // 1e-300 x 1e-300 underflows to 0 in f64; in log space the ratio 1 : 2 survives
    // (computed: w' = 1/3, 2/3).
    let w = implied_weights(&[1e-300, 1e-300], &[1e-300, 2e-300]).unwrap();
    assert_abs_diff_eq!(w[0], 1.0 / 3.0, epsilon = 1e-12);
    assert_abs_diff_eq!(w[1], 2.0 / 3.0, epsilon = 1e-12);
}

#[test]
fn bad_bayes_input_is_refused_with_the_field_named() {
    assert!(matches!(
        implied_weights(&[], &[]),
        Err(PriorError::EmptyCredibilityInput {
            field: "weights_used",
            ..
        })
    ));
    let e = implied_weights(&[0.5, 0.5], &[0.1]).unwrap_err();
    assert!(matches!(e, PriorError::CredibilityLengthMismatch { .. }));
    assert!(e.to_string().contains("density_at_truth has 1"), "{e}");
    let e = implied_weights(&[0.5, -0.5], &[0.1, 0.1]).unwrap_err();
    assert!(
        e.to_string().starts_with("weights_used entry 2 is -0.5"),
        "{e}"
    );
    let e = implied_weights(&[0.5, 0.5], &[f64::NAN, 0.1]).unwrap_err();
    assert!(e.to_string().starts_with("density_at_truth entry 1"), "{e}");
    assert!(implied_weights(&[0.5, 0.5], &[f64::INFINITY, 0.1]).is_err());
    assert_eq!(
        implied_weights(&[0.5, 0.0], &[0.0, 0.3]),
        Err(PriorError::TruthOutsideEveryAnalyst)
    );
    assert!(log_score(-1e-9).is_err());
    assert!(log_score(f64::NAN).is_err());
    assert!(log_score(f64::INFINITY).is_err());
}

proptest! {
    #[test]
    fn bayes_weights_add_up_to_one_and_ignore_units_and_scale(
        pairs in prop::collection::vec((0.0..10.0f64, 0.0..5.0f64), 1..8),
        scale_w in 1e-3..1e3f64,
        per_m2 in any::<bool>(),
    ) {
        let w: Vec<f64> = pairs.iter().map(|p| p.0).collect();
        let f: Vec<f64> = pairs.iter().map(|p| p.1).collect();
        prop_assume!(w.iter().zip(&f).any(|(a, b)| a * b > 1e-12));
        let base = implied_weights(&w, &f).unwrap();
        prop_assert!((base.iter().sum::<f64>() - 1.0).abs() < 1e-12);
        // Scaling the weights, or changing the density unit (per m² = per km² / 1e6), leaves
        // Bayes' rule unchanged.
        let w2: Vec<f64> = w.iter().map(|v| v * scale_w).collect();
        let f2: Vec<f64> = f.iter().map(|v| if per_m2 { v * 1e-6 } else { *v }).collect();
        let other = implied_weights(&w2, &f2).unwrap();
        for (a, b) in base.iter().zip(&other) {
            prop_assert!((a - b).abs() < 1e-12);
        }
    }
}

// ---------------------------------------------------------------- Rayleigh test

#[test]
fn rayleigh_statistics_match_scipy_and_pingouin() {
    // Reference values frozen by fixtures/reference/make_credibility_fixtures.py: R-bar and
    // the mean direction from scipy.stats.directional_stats, Z = n R-bar², and Zar's
    // p-value from pingouin.circ_rayleigh (computed by those libraries).
    // Tolerances: 1e-12 on R-bar, Z and the p-value (relative for p), 1e-9 degrees on the
    // mean bearing (rounding of sums of n unit vectors).
    let fx = fixture("credibility_reference.json");
    let cases = fx["rayleigh"].as_array().unwrap();
    assert!(cases.len() >= 10);
    for case in cases {
        let name = case["name"].as_str().unwrap();
        let bearings: Vec<f64> = case["bearings_deg"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect();
        let t = rayleigh_test(&bearings).unwrap();
        assert_eq!(t.n as u64, case["n"].as_u64().unwrap(), "{name}");
        let rbar = case["mean_resultant_length"].as_f64().unwrap();
        assert_abs_diff_eq!(t.mean_resultant_length, rbar, epsilon = 1e-12);
        let z = case["z"].as_f64().unwrap();
        assert!(
            (t.z - z).abs() <= 1e-12 * z.max(1.0),
            "{name}: Z {} vs {z}",
            t.z
        );
        let p = case["p_zar_pingouin"].as_f64().unwrap();
        assert!(
            (t.p_value - p).abs() <= 1e-12 * p.max(1e-300) + 1e-300,
            "{name}: p {} vs {p}",
            t.p_value
        );
        match case["mean_bearing_deg"].as_f64() {
            Some(m) => {
                let got = t.mean_bearing_deg.unwrap();
                let diff = (got - m + 180.0).rem_euclid(360.0) - 180.0;
                assert!(diff.abs() < 1e-9, "{name}: mean bearing {got} vs {m}");
                assert!((0.0..360.0).contains(&got), "{name}: {got}");
            }
            None => assert_eq!(t.mean_bearing_deg, None, "{name}"),
        }
    }
}

#[test]
fn rayleigh_p_value_is_within_the_documented_error_of_the_exact_value() {
    // The exact p-value (Kluyver's integral, or (2/pi) arccos(R/2) for n = 2, cross-checked
    // by Monte Carlo in the fixture script; computed) differs from Zar's approximation by at
    // most the largest error the script found for that n over the whole range of R. This
    // checks that the documented accuracy in rayleigh_test's doc holds for these cases.
    let fx = fixture("credibility_reference.json");
    let bound: Vec<(u64, f64)> = fx["zar_max_abs_error_by_n"]
        .as_array()
        .unwrap()
        .iter()
        .map(|e| {
            (
                e["n"].as_u64().unwrap(),
                e["max_abs_error"].as_f64().unwrap(),
            )
        })
        .collect();
    for case in fx["rayleigh"].as_array().unwrap() {
        let name = case["name"].as_str().unwrap();
        let bearings: Vec<f64> = case["bearings_deg"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect();
        let n = bearings.len() as u64;
        let limit = bound.iter().find(|b| b.0 == n).unwrap().1;
        let exact = case["p_exact_kluyver"].as_f64().unwrap();
        let p = rayleigh_test(&bearings).unwrap().p_value;
        // 1e-4 for the exact value's own quadrature error.
        assert!(
            (p - exact).abs() <= limit + 1e-4,
            "{name}: Zar {p} vs exact {exact}"
        );
    }
}

#[test]
fn two_bearings_at_right_angles_match_hand_arithmetic() {
    // Bearings 0 and 90 (computed): resultant (1, 1), R = sqrt 2, R-bar = 0.7071068, Z = 1,
    // mean bearing 45; Zar: exp(sqrt(1 + 8 + 4 (4 - 2)) - 5) = exp(sqrt 17 - 5) = exp(-0.8768944) = 0.4160731.
    let t = rayleigh_test(&[0.0, 90.0]).unwrap();
    assert_abs_diff_eq!(t.mean_resultant_length, 0.5_f64.sqrt(), epsilon = 1e-15);
    assert_abs_diff_eq!(t.z, 1.0, epsilon = 1e-14);
    assert_abs_diff_eq!(t.p_value, 0.4160731, epsilon = 5e-8);
    assert_abs_diff_eq!(t.mean_bearing_deg.unwrap(), 45.0, epsilon = 1e-12);
}

#[test]
fn mean_bearing_wraps_through_north() {
    // 350 and 10 degrees average to north, not 180 (computed).
    let t = rayleigh_test(&[350.0, 10.0, -5.0, 365.0]).unwrap();
    let m = t.mean_bearing_deg.unwrap();
    assert!((0.0..360.0).contains(&m), "{m}");
    assert!(m.min(360.0 - m) < 1e-9, "{m}");
    let t = rayleigh_test(&[200.0, 220.0]).unwrap();
    assert_abs_diff_eq!(t.mean_bearing_deg.unwrap(), 210.0, epsilon = 1e-9);
}

#[test]
fn too_few_or_non_finite_bearings_are_refused() {
    assert_eq!(rayleigh_test(&[]), Err(PriorError::TooFewBearings { n: 0 }));
    assert_eq!(
        rayleigh_test(&[45.0]),
        Err(PriorError::TooFewBearings { n: 1 })
    );
    let e = rayleigh_test(&[45.0, f64::NAN]).unwrap_err();
    assert!(e.to_string().starts_with("bearings_deg entry 2"), "{e}");
}

proptest! {
    #[test]
    fn rayleigh_results_stay_in_range_and_ignore_a_common_rotation(
        bearings in prop::collection::vec(0.0..360.0f64, 2..40),
        turn in 0.0..360.0f64,
    ) {
        let t = rayleigh_test(&bearings).unwrap();
        prop_assert!((0.0..=1.0).contains(&t.mean_resultant_length));
        prop_assert!((0.0..=1.0).contains(&t.p_value));
        let turned: Vec<f64> = bearings.iter().map(|b| b + turn).collect();
        let u = rayleigh_test(&turned).unwrap();
        prop_assert!((t.mean_resultant_length - u.mean_resultant_length).abs() < 1e-12);
        prop_assert!((t.p_value - u.p_value).abs() < 1e-12);
        if t.mean_resultant_length > 1e-6 {
            let d = (u.mean_bearing_deg.unwrap() - t.mean_bearing_deg.unwrap() - turn)
                .rem_euclid(360.0);
            prop_assert!(d.min(360.0 - d) < 1e-6, "{d}");
        }
    }
}

// ---------------------------------------------------------------- suggested weights

#[test]
fn shrunk_weights_of_three_analysts_match_hand_arithmetic() {
    // Hand computation (computed), k = 3, three analysts, e = 1/3:
    // a1: log scores ln 0.4, ln 0.5 -> n = 2, exp(L) = 0.2; a2: ln 0.6 -> n = 1, exp(L) = 0.6;
    // a3: no incidents (m = 1), keeps e = 1/3.
    // Bayes among a1, a2 on the 2/3 left: p1 = 2/3 * 0.2/0.8 = 1/6, p2 = 2/3 * 0.6/0.8 = 1/2.
    // lambda1 = 2/5, lambda2 = 1/4.
    // u1 = 2/5 * 1/6 + 3/5 * 1/3 = 4/15; u2 = 1/4 * 1/2 + 3/4 * 1/3 = 3/8; u1 + u2 = 77/120.
    // w1 = 2/3 * (4/15) / (77/120) = 64/231; w2 = 2/3 * (3/8) / (77/120) = 30/77; w3 = 1/3.
    // Mean log scores: a1 ln(0.2)/2 = -0.804718956, a2 ln 0.6 = -0.510825624.
    let records = [
        record("a1", &[0.4_f64.ln(), 0.5_f64.ln()]),
        record("a2", &[0.6_f64.ln()]),
        record("a3", &[]),
    ];
    let s = suggest_weights(&records, &shrinkage(3.0)).unwrap();
    assert_eq!(
        s.iter().map(|x| x.incidents).collect::<Vec<_>>(),
        vec![2, 1, 0]
    );
    assert_abs_diff_eq!(s[0].bayes_weight, 1.0 / 6.0, epsilon = 1e-15);
    assert_abs_diff_eq!(s[1].bayes_weight, 0.5, epsilon = 1e-15);
    assert_abs_diff_eq!(s[2].bayes_weight, 1.0 / 3.0, epsilon = 1e-15);
    assert_abs_diff_eq!(s[0].weight, 64.0 / 231.0, epsilon = 1e-15);
    assert_abs_diff_eq!(s[1].weight, 30.0 / 77.0, epsilon = 1e-15);
    assert_eq!(s[2].weight, 1.0 / 3.0);
    assert_abs_diff_eq!(s[0].mean_log_score.unwrap(), -0.804718956, epsilon = 1e-9);
    assert_abs_diff_eq!(s[1].mean_log_score.unwrap(), -0.510825624, epsilon = 1e-9);
    assert_eq!(s[2].mean_log_score, None);
    assert_eq!(s[2].analyst, "a3");
}

#[test]
fn equal_records_shrink_halfway_or_not_at_all() {
    // Hand computation (computed): a1 products 0.4 * 0.5 = 0.2, a2 0.1 * 1.0 = 0.1, both
    // n = 2. k = 0: Bayes alone, 2/3 and 1/3. k = 3: lambda = 2/5,
    // u1 = 2/5 * 2/3 + 3/5 * 1/2 = 17/30, u2 = 2/5 * 1/3 + 3/5 * 1/2 = 13/30 (sum 1).
    let records = [
        record("a1", &[0.4_f64.ln(), 0.5_f64.ln()]),
        record("a2", &[0.1_f64.ln(), 0.0]),
    ];
    let s = suggest_weights(&records, &shrinkage(0.0)).unwrap();
    assert_abs_diff_eq!(s[0].weight, 2.0 / 3.0, epsilon = 1e-15);
    assert_abs_diff_eq!(s[1].weight, 1.0 / 3.0, epsilon = 1e-15);
    let s = suggest_weights(&records, &CredibilityOptions::default()).unwrap();
    assert_eq!(DEFAULT_SHRINKAGE_INCIDENTS, 3.0);
    assert_abs_diff_eq!(s[0].weight, 17.0 / 30.0, epsilon = 1e-15);
    assert_abs_diff_eq!(s[1].weight, 13.0 / 30.0, epsilon = 1e-15);
}

#[test]
fn long_records_far_below_underflow_still_rank_the_analysts() {
    // exp(-1600) is 0 in f64; log-sum-exp keeps the difference of 2:
    // 1 / (1 + e^-2) = 0.880797078 (computed).
    let records = [
        record("a1", &[-800.0, -800.0]),
        record("a2", &[-801.0, -801.0]),
    ];
    let s = suggest_weights(&records, &shrinkage(0.0)).unwrap();
    assert_abs_diff_eq!(s[0].weight, 0.880797078, epsilon = 1e-9);
}

#[test]
fn an_analyst_who_gave_the_truth_zero_density_keeps_only_the_shrinkage_share() {
    // a2 scored -inf once: Bayes weight 0; with k = 3 and n = 1 they keep
    // 3/4 * 1/2 = 3/8 before renormalising with a1's 1/4 * 1 + 3/4 * 1/2 = 5/8 (computed).
    let records = [record("a1", &[-2.0]), record("a2", &[f64::NEG_INFINITY])];
    let s = suggest_weights(&records, &shrinkage(3.0)).unwrap();
    assert_eq!(s[1].bayes_weight, 0.0);
    assert_eq!(s[1].mean_log_score, Some(f64::NEG_INFINITY));
    assert_abs_diff_eq!(s[0].weight, 5.0 / 8.0, epsilon = 1e-15);
    assert_abs_diff_eq!(s[1].weight, 3.0 / 8.0, epsilon = 1e-15);
}

#[test]
fn bad_track_records_are_refused() {
    assert!(matches!(
        suggest_weights(&[], &CredibilityOptions::default()),
        Err(PriorError::EmptyCredibilityInput {
            field: "track_records",
            ..
        })
    ));
    let r = [record("a", &[-1.0])];
    for k in [-1.0, f64::NAN, f64::INFINITY] {
        assert!(matches!(
            suggest_weights(&r, &shrinkage(k)),
            Err(PriorError::BadShrinkage { .. })
        ));
    }
    let e = suggest_weights(
        &[record("a", &[-1.0, f64::NAN])],
        &CredibilityOptions::default(),
    )
    .unwrap_err();
    assert!(
        e.to_string()
            .starts_with("log_scores of analyst \"a\" entry 2 is NaN"),
        "{e}"
    );
    assert!(suggest_weights(&[record("a", &[f64::INFINITY])], &shrinkage(1.0)).is_err());
    assert!(matches!(
        suggest_weights(&[record("a", &[]), record("a", &[])], &shrinkage(1.0)),
        Err(PriorError::DuplicateAnalyst { .. })
    ));
    assert_eq!(
        suggest_weights(
            &[
                record("a", &[f64::NEG_INFINITY]),
                record("b", &[-1.0, f64::NEG_INFINITY]),
                record("c", &[]),
            ],
            &shrinkage(1.0)
        ),
        Err(PriorError::EveryRecordZero)
    );
}

proptest! {
    #[test]
    fn bayes_incident_after_incident_equals_the_product_of_likelihoods(
        densities in prop::collection::vec(prop::collection::vec(1e-4..2.0f64, 3), 1..6),
    ) {
        // Three analysts who all took part in every incident: applying implied_weights
        // incident after incident from equal weights gives the k = 0 suggestion.
        let mut w = vec![1.0 / 3.0; 3];
        for f in &densities {
            w = implied_weights(&w, f).unwrap();
        }
        let records: Vec<TrackRecord> = (0..3)
            .map(|a| TrackRecord {
                analyst: format!("a{a}"),
                log_scores: densities.iter().map(|f| log_score(f[a]).unwrap()).collect(),
            })
            .collect();
        let s = suggest_weights(&records, &shrinkage(0.0)).unwrap();
        for (x, y) in s.iter().zip(&w) {
            prop_assert!((x.weight - y).abs() < 1e-12, "{} vs {}", x.weight, y);
        }
    }

    #[test]
    fn suggested_weights_add_up_to_one_and_large_k_tends_to_equal(
        scores in prop::collection::vec(prop::collection::vec(-10.0..3.0f64, 0..5), 1..6),
        k in 0.0..20.0f64,
    ) {
        let records: Vec<TrackRecord> = scores
            .iter()
            .enumerate()
            .map(|(i, s)| TrackRecord { analyst: format!("a{i}"), log_scores: s.clone() })
            .collect();
        let s = suggest_weights(&records, &shrinkage(k)).unwrap();
        let total: f64 = s.iter().map(|x| x.weight).sum();
        prop_assert!((total - 1.0).abs() < 1e-12);
        let e = 1.0 / records.len() as f64;
        for x in &s {
            prop_assert!((0.0..=1.0).contains(&x.weight));
            if x.incidents == 0 {
                prop_assert_eq!(x.weight, e);
            }
        }
        let far = suggest_weights(&records, &shrinkage(1e12)).unwrap();
        for x in &far {
            prop_assert!((x.weight - e).abs() < 1e-9);
        }
    }
}

// ---------------------------------------------------------------- pool against analysts

#[test]
fn pool_against_best_analysts_matches_hand_arithmetic() {
    // Hand computation (computed):
    // incident 1: pool -2.0, A -1.5, B -3.0 -> best A, gain -0.5
    // incident 2: pool -2.5, A -4.0, B -2.8 -> best B, gain +0.3
    // incident 3: pool -1.0, A -1.2         -> best A, gain +0.2
    // Against the best of each incident: 2 better, mean (-0.5 + 0.3 + 0.2)/3 = 0.
    // Means: A (-1.5 - 4.0 - 1.2)/3 = -2.233333, B (-3.0 - 2.8)/2 = -2.9 -> best mean A.
    // Against A: gains -0.5, +1.5, +0.2 -> 2 better, mean 1.2/3 = 0.4.
    let r = pool_versus_analysts(&[
        incident(-2.0, &[("A", -1.5), ("B", -3.0)]),
        incident(-2.5, &[("B", -2.8), ("A", -4.0)]),
        incident(-1.0, &[("A", -1.2)]),
    ])
    .unwrap();
    assert_eq!(r.incidents, 3);
    assert_eq!(r.pool_better_than_best_each, 2);
    assert_abs_diff_eq!(r.mean_gain_over_best_each, 0.0, epsilon = 1e-12);
    assert_eq!(r.best_mean_analyst, "A");
    assert_abs_diff_eq!(
        r.best_mean_analyst_mean_log_score,
        -6.7 / 3.0,
        epsilon = 1e-12
    );
    assert_eq!(r.best_mean_analyst_incidents, 3);
    assert_eq!(r.pool_better_than_best_mean, 2);
    assert_abs_diff_eq!(r.mean_gain_over_best_mean, 0.4, epsilon = 1e-12);
}

#[test]
fn zero_densities_give_ties_or_infinite_gains_as_documented() {
    // Both the pool and every analyst gave the truth zero density: a tie (gain 0).
    let r = pool_versus_analysts(&[
        incident(f64::NEG_INFINITY, &[("A", f64::NEG_INFINITY)]),
        incident(-1.0, &[("A", -2.0)]),
    ])
    .unwrap();
    assert_abs_diff_eq!(r.mean_gain_over_best_each, 0.5, epsilon = 1e-15);
    assert_eq!(r.pool_better_than_best_each, 1);
    // The pool alone gave zero density: the mean gain is -inf.
    let r = pool_versus_analysts(&[
        incident(f64::NEG_INFINITY, &[("A", -3.0)]),
        incident(-1.0, &[("A", -2.0)]),
    ])
    .unwrap();
    assert_eq!(r.mean_gain_over_best_mean, f64::NEG_INFINITY);
}

#[test]
fn bad_incident_scores_are_refused() {
    assert!(matches!(
        pool_versus_analysts(&[]),
        Err(PriorError::EmptyCredibilityInput {
            field: "incidents",
            ..
        })
    ));
    assert_eq!(
        pool_versus_analysts(&[incident(-1.0, &[("A", -1.0)]), incident(-1.0, &[])]),
        Err(PriorError::IncidentWithoutAnalysts { incident: 2 })
    );
    assert!(matches!(
        pool_versus_analysts(&[incident(-1.0, &[("A", -1.0), ("A", -2.0)])]),
        Err(PriorError::DuplicateAnalyst { .. })
    ));
    let e = pool_versus_analysts(&[incident(f64::NAN, &[("A", -1.0)])]).unwrap_err();
    assert!(
        e.to_string().starts_with("incident 1 pool_log_score"),
        "{e}"
    );
    let e = pool_versus_analysts(&[incident(-1.0, &[("A", f64::INFINITY)])]).unwrap_err();
    assert!(
        e.to_string()
            .starts_with("incident 1 analyst_log_scores entry 1 is inf"),
        "{e}"
    );
}
