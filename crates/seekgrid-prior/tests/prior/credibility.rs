//! Scoring analysts against outcomes: log scores, Bayes' rule on analysts, the Rayleigh test,
//! weights from a track record, and the pool against the best analyst.

use crate::common::fixture;
use approx::assert_abs_diff_eq;
use proptest::prelude::*;
use rand::{RngExt, SeedableRng};
use seekgrid_prior::PriorError;
use seekgrid_prior::credibility::{
    CredibilityOptions, DEFAULT_SHRINKAGE_INCIDENTS, EXACT_P_MAX_BEARINGS, IncidentScores,
    ZAR_MAX_ABS_ERROR_FROM_10, implied_weights, log_score, pool_versus_analysts, rayleigh_test,
    suggest_weights,
};
use std::f64::consts::PI;

fn incident(pool: f64, analysts: &[(&str, f64)]) -> IncidentScores {
    IncidentScores {
        pool_log_score: Some(pool),
        analyst_log_scores: analysts.iter().map(|(a, s)| ((*a).into(), *s)).collect(),
    }
}

/// An incident without the pool's score.
fn scores(analysts: &[(&str, f64)]) -> IncidentScores {
    IncidentScores {
        pool_log_score: None,
        analyst_log_scores: analysts.iter().map(|(a, s)| ((*a).into(), *s)).collect(),
    }
}

fn names(ids: &[&str]) -> Vec<String> {
    ids.iter().map(|s| (*s).to_string()).collect()
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
fn exact_rayleigh_p_value_matches_kluyvers_integral_below_10_bearings() {
    // The fixture's exact p-values (Kluyver's integral by SciPy quadrature, or the closed form
    // for n = 2, cross-checked by Monte Carlo in the fixture script; computed). Tolerance
    // 2e-7 absolute, and 0.2 % relative for the smallest p-values. Above 9 bearings there is
    // no exact value, and Zar's approximation is within the documented bound.
    let fx = fixture("credibility_reference.json");
    let mut checked = 0;
    for case in fx["rayleigh"].as_array().unwrap() {
        let name = case["name"].as_str().unwrap();
        let bearings: Vec<f64> = case["bearings_deg"]
            .as_array()
            .unwrap()
            .iter()
            .map(|v| v.as_f64().unwrap())
            .collect();
        let exact = case["p_exact_kluyver"].as_f64().unwrap();
        let t = rayleigh_test(&bearings).unwrap();
        if bearings.len() <= EXACT_P_MAX_BEARINGS {
            let got = t.p_value_exact.unwrap();
            assert!(
                (got - exact).abs() <= 2e-7_f64.max(2e-3 * exact),
                "{name}: exact {got} vs Kluyver {exact}"
            );
            assert_eq!(t.best_p_value(), got);
            checked += 1;
        } else {
            assert_eq!(t.p_value_exact, None, "{name}");
            assert!(
                (t.p_value - exact).abs() <= ZAR_MAX_ABS_ERROR_FROM_10,
                "{name}"
            );
            assert_eq!(t.best_p_value(), t.p_value);
        }
    }
    assert!(checked >= 6);
}

#[test]
fn exact_rayleigh_p_value_matches_a_seeded_simulation_for_4_to_9_bearings() {
    // Slow, obviously correct reference (computed): the share of 200 000 seeded draws of n
    // uniform bearings whose resultant is at least as long as the observed one. Tolerance:
    // 5 standard errors of the simulation plus 1e-4.
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(20_240_611);
    let draws = 200_000;
    for (n, spread_deg) in [(4, 40.0), (6, 150.0), (7, 60.0), (8, 100.0), (9, 75.0)] {
        let bearings: Vec<f64> = (0..n)
            .map(|i| 30.0 + spread_deg * (i as f64 / (n - 1) as f64 - 0.5))
            .collect();
        let t = rayleigh_test(&bearings).unwrap();
        let observed = t.mean_resultant_length * n as f64;
        let mut hits = 0u32;
        for _ in 0..draws {
            let (mut e, mut no) = (0.0f64, 0.0f64);
            for _ in 0..n {
                let th: f64 = rng.random_range(0.0..2.0 * PI);
                e += th.sin();
                no += th.cos();
            }
            if e.hypot(no) >= observed {
                hits += 1;
            }
        }
        let p = f64::from(hits) / f64::from(draws);
        let se = (p * (1.0 - p) / f64::from(draws)).sqrt();
        let exact = t.p_value_exact.unwrap();
        assert!(
            (exact - p).abs() <= 5.0 * se + 1e-4,
            "n = {n}: exact {exact} vs simulated {p} (se {se})"
        );
    }
}

#[test]
fn exact_rayleigh_p_value_has_the_closed_form_for_two_bearings_and_falls_with_agreement() {
    // n = 2: P(R >= r) = (2/pi) arccos(r/2); bearings 0 and 90 give R = sqrt 2 and
    // (2/pi)(pi/4) = 1/2 (computed). Identical bearings give R = n (up to rounding), which a
    // uniform sample reaches with probability 0.
    let t = rayleigh_test(&[0.0, 90.0]).unwrap();
    assert_abs_diff_eq!(t.p_value_exact.unwrap(), 0.5, epsilon = 1e-12);
    assert!(rayleigh_test(&[10.0; 5]).unwrap().p_value_exact.unwrap() < 1e-20);
    // Narrowing the spread of 6 bearings lowers the p-value step by step (evenly spaced over
    // 360 degrees, spread 300, they cancel out: p = 1).
    let mut last = f64::INFINITY;
    for spread in [300.0, 240.0, 180.0, 120.0, 60.0, 20.0] {
        let b: Vec<f64> = (0..6).map(|i| spread * f64::from(i) / 5.0).collect();
        let p = rayleigh_test(&b).unwrap().p_value_exact.unwrap();
        assert!(p < last, "spread {spread}: {p} after {last}");
        last = p;
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
    // incident 1: a1 ln 0.4, a2 ln 0.6; incident 2: a1 ln 0.5 alone; a3 in none (m = 1).
    // Step 2: incident 1, a1 and a2 bring 2/3 and share it 1/3 * 0.4 : 1/3 * 0.6, so
    // p1 = 2/3 * 0.4 = 4/15, p2 = 2/3 * 0.6 = 2/5. Incident 2: a1 alone keeps 4/15 (Bayes'
    // rule among one analyst). p3 = 1/3.
    // lambda1 = 2/5, lambda2 = 1/4.
    // u1 = 2/5 * 4/15 + 3/5 * 1/3 = 8/75 + 1/5 = 23/75; u2 = 1/4 * 2/5 + 3/4 * 1/3 = 7/20;
    // u1 + u2 = 92/300 + 105/300 = 197/300.
    // w1 = 2/3 * (23/75) / (197/300) = 184/591; w2 = 2/3 * (7/20) / (197/300) = 70/197;
    // w3 = 1/3. Mean log scores: a1 ln(0.2)/2 = -0.804718956, a2 ln 0.6 = -0.510825624.
    let s = suggest_weights(
        &names(&["a1", "a2", "a3"]),
        &[
            scores(&[("a1", 0.4_f64.ln()), ("a2", 0.6_f64.ln())]),
            scores(&[("a1", 0.5_f64.ln())]),
        ],
        &shrinkage(3.0),
    )
    .unwrap();
    assert!(s.uninformative_incidents.is_empty());
    let s = s.analysts;
    assert_eq!(
        s.iter().map(|x| x.incidents).collect::<Vec<_>>(),
        vec![2, 1, 0]
    );
    assert_abs_diff_eq!(s[0].bayes_weight, 4.0 / 15.0, epsilon = 1e-15);
    assert_abs_diff_eq!(s[1].bayes_weight, 0.4, epsilon = 1e-15);
    assert_abs_diff_eq!(s[2].bayes_weight, 1.0 / 3.0, epsilon = 1e-15);
    assert_abs_diff_eq!(s[0].weight, 184.0 / 591.0, epsilon = 1e-15);
    assert_abs_diff_eq!(s[1].weight, 70.0 / 197.0, epsilon = 1e-15);
    assert_eq!(s[2].weight, 1.0 / 3.0);
    assert_abs_diff_eq!(s[0].mean_log_score.unwrap(), -0.804718956, epsilon = 1e-9);
    assert_abs_diff_eq!(s[1].mean_log_score.unwrap(), -0.510825624, epsilon = 1e-9);
    assert_eq!(s[2].mean_log_score, None);
    assert_eq!(s[2].analyst, "a3");
}

#[test]
fn an_incident_an_analyst_missed_neither_rewards_nor_penalises_them() {
    // a1 and a2 score alike where both took part; a1 also took part in two incidents alone
    // with densities far below 1 per km² (log score -9). Summing log scores per analyst would
    // push a1's weight down by e^-18; Bayes' rule within each incident leaves both at 1/2
    // (computed: incidents alone move no weight).
    let s = suggest_weights(
        &[],
        &[
            scores(&[("a1", -2.0), ("a2", -2.0)]),
            scores(&[("a1", -9.0)]),
            scores(&[("a1", -9.0)]),
        ],
        &shrinkage(0.0),
    )
    .unwrap();
    assert_abs_diff_eq!(s.analysts[0].weight, 0.5, epsilon = 1e-15);
    assert_abs_diff_eq!(s.analysts[1].weight, 0.5, epsilon = 1e-15);
    // The same record in per m² (every log score lowered by ln 1e6) gives the same weights.
    let per_m2 = 1e6_f64.ln();
    let t = suggest_weights(
        &[],
        &[
            scores(&[("a1", -2.0 - per_m2), ("a2", -3.0 - per_m2)]),
            scores(&[("a1", -9.0 - per_m2)]),
        ],
        &shrinkage(0.0),
    )
    .unwrap();
    // Computed: incident 1 shares 1 as 1 : e^-1, a1 = 1/(1 + e^-1) = 0.731058579.
    assert_abs_diff_eq!(t.analysts[0].weight, 0.731058579, epsilon = 1e-9);
}

#[test]
fn analysts_of_disjoint_incidents_keep_their_groups_share() {
    // Hand computation (computed), k = 0: incident 1 between a and b (densities 3 : 1),
    // incident 2 between c and d (1 : 1). Each pair keeps the 1/2 it brought:
    // a = 1/2 * 3/4 = 3/8, b = 1/8, c = d = 1/4.
    let s = suggest_weights(
        &[],
        &[
            scores(&[("a", 3.0_f64.ln()), ("b", 0.0)]),
            scores(&[("c", -1.0), ("d", -1.0)]),
        ],
        &shrinkage(0.0),
    )
    .unwrap();
    let w: Vec<f64> = s.analysts.iter().map(|x| x.weight).collect();
    for (got, want) in w.iter().zip([3.0 / 8.0, 1.0 / 8.0, 0.25, 0.25]) {
        assert_abs_diff_eq!(*got, want, epsilon = 1e-15);
    }
}

#[test]
fn equal_records_shrink_halfway_or_not_at_all() {
    // Hand computation (computed): a1 products 0.4 * 0.5 = 0.2, a2 0.1 * 1.0 = 0.1, both in
    // both incidents. k = 0: Bayes alone, 2/3 and 1/3. k = 3: lambda = 2/5,
    // u1 = 2/5 * 2/3 + 3/5 * 1/2 = 17/30, u2 = 2/5 * 1/3 + 3/5 * 1/2 = 13/30 (sum 1).
    let record = [
        scores(&[("a1", 0.4_f64.ln()), ("a2", 0.1_f64.ln())]),
        scores(&[("a2", 0.0), ("a1", 0.5_f64.ln())]),
    ];
    let s = suggest_weights(&[], &record, &shrinkage(0.0))
        .unwrap()
        .analysts;
    assert_abs_diff_eq!(s[0].weight, 2.0 / 3.0, epsilon = 1e-15);
    assert_abs_diff_eq!(s[1].weight, 1.0 / 3.0, epsilon = 1e-15);
    let s = suggest_weights(&[], &record, &CredibilityOptions::default())
        .unwrap()
        .analysts;
    assert_eq!(DEFAULT_SHRINKAGE_INCIDENTS, 3.0);
    assert_abs_diff_eq!(s[0].weight, 17.0 / 30.0, epsilon = 1e-15);
    assert_abs_diff_eq!(s[1].weight, 13.0 / 30.0, epsilon = 1e-15);
}

#[test]
fn long_records_far_below_underflow_still_rank_the_analysts() {
    // exp(-1600) is 0 in f64; log-sum-exp keeps the difference of 2:
    // 1 / (1 + e^-2) = 0.880797078 (computed).
    let record = [
        scores(&[("a1", -800.0), ("a2", -801.0)]),
        scores(&[("a1", -800.0), ("a2", -801.0)]),
    ];
    let s = suggest_weights(&[], &record, &shrinkage(0.0)).unwrap();
    assert_abs_diff_eq!(s.analysts[0].weight, 0.880797078, epsilon = 1e-9);
}

#[test]
fn an_analyst_who_gave_the_truth_zero_density_keeps_only_the_shrinkage_share() {
    // a2 scored -inf once: Bayes weight 0; with k = 3 and n = 1 they keep
    // 3/4 * 1/2 = 3/8 before renormalising with a1's 1/4 * 1 + 3/4 * 1/2 = 5/8 (computed).
    let record = [scores(&[("a1", -2.0), ("a2", f64::NEG_INFINITY)])];
    let s = suggest_weights(&[], &record, &shrinkage(3.0))
        .unwrap()
        .analysts;
    assert_eq!(s[1].bayes_weight, 0.0);
    assert_eq!(s[1].mean_log_score, Some(f64::NEG_INFINITY));
    assert_abs_diff_eq!(s[0].weight, 5.0 / 8.0, epsilon = 1e-15);
    assert_abs_diff_eq!(s[1].weight, 3.0 / 8.0, epsilon = 1e-15);
}

#[test]
fn an_incident_where_everyone_gave_the_truth_zero_density_is_listed_and_skipped() {
    // Incident 2: both gave zero density; Bayes' rule cannot tell them apart, so the weights
    // of incident 1 stand: 1 : e^-1 (computed, k = 0).
    let s = suggest_weights(
        &[],
        &[
            scores(&[("a", -1.0), ("b", -2.0)]),
            scores(&[("a", f64::NEG_INFINITY), ("b", f64::NEG_INFINITY)]),
        ],
        &shrinkage(0.0),
    )
    .unwrap();
    assert_eq!(s.uninformative_incidents, vec![2]);
    assert_abs_diff_eq!(s.analysts[0].weight, 0.731058579, epsilon = 1e-9);
    assert_eq!(s.analysts[0].mean_log_score, Some(f64::NEG_INFINITY));
}

#[test]
fn bad_track_records_are_refused() {
    assert!(matches!(
        suggest_weights(&[], &[], &CredibilityOptions::default()),
        Err(PriorError::EmptyCredibilityInput {
            field: "analysts",
            ..
        })
    ));
    let r = [scores(&[("a", -1.0)])];
    for k in [-1.0, f64::NAN, f64::INFINITY] {
        assert!(matches!(
            suggest_weights(&[], &r, &shrinkage(k)),
            Err(PriorError::BadShrinkage { .. })
        ));
    }
    let e = suggest_weights(
        &[],
        &[scores(&[("a", -1.0), ("b", f64::NAN)])],
        &CredibilityOptions::default(),
    )
    .unwrap_err();
    assert!(
        e.to_string()
            .starts_with("incident 1 analyst_log_scores entry 2 is NaN"),
        "{e}"
    );
    assert!(suggest_weights(&[], &[scores(&[("a", f64::INFINITY)])], &shrinkage(1.0)).is_err());
    assert!(matches!(
        suggest_weights(&names(&["a", "a"]), &[], &shrinkage(1.0)),
        Err(PriorError::DuplicateAnalyst { .. })
    ));
    assert!(matches!(
        suggest_weights(&[], &[scores(&[("a", -1.0), ("a", -2.0)])], &shrinkage(1.0)),
        Err(PriorError::DuplicateAnalyst { .. })
    ));
    assert_eq!(
        suggest_weights(&[], &[scores(&[("a", -1.0)]), scores(&[])], &shrinkage(1.0)),
        Err(PriorError::IncidentWithoutAnalysts { incident: 2 })
    );
}

proptest! {
    #[test]
    fn bayes_incident_after_incident_equals_the_product_of_likelihoods(
        densities in prop::collection::vec(prop::collection::vec(1e-4..2.0f64, 3), 1..6),
    ) {
        // Three analysts who all took part in every incident: applying implied_weights
        // incident after incident from equal weights gives the k = 0 suggestion, which is
        // also exp(L_a) / sum exp(L_b) with L_a the sum of a's log scores.
        let mut w = vec![1.0 / 3.0; 3];
        for f in &densities {
            w = implied_weights(&w, f).unwrap();
        }
        let record: Vec<IncidentScores> = densities
            .iter()
            .map(|f| IncidentScores {
                pool_log_score: None,
                analyst_log_scores: (0..3)
                    .map(|a| (format!("a{a}"), log_score(f[a]).unwrap()))
                    .collect(),
            })
            .collect();
        let s = suggest_weights(&[], &record, &shrinkage(0.0)).unwrap();
        let sums: Vec<f64> = (0..3)
            .map(|a| densities.iter().map(|f| f[a].ln()).sum::<f64>())
            .collect();
        let max = sums.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        let total: f64 = sums.iter().map(|l| (l - max).exp()).sum();
        for (a, (x, y)) in s.analysts.iter().zip(&w).enumerate() {
            prop_assert!((x.weight - y).abs() < 1e-12, "{} vs {}", x.weight, y);
            prop_assert!((x.weight - (sums[a] - max).exp() / total).abs() < 1e-12);
        }
    }

    #[test]
    fn suggested_weights_add_up_to_one_and_large_k_tends_to_equal(
        record in prop::collection::vec(
            prop::collection::btree_map(0..5usize, -10.0..3.0f64, 1..5), 0..6),
        k in 0.0..20.0f64,
    ) {
        let incidents: Vec<IncidentScores> = record
            .iter()
            .map(|m| IncidentScores {
                pool_log_score: None,
                analyst_log_scores: m.iter().map(|(a, s)| (format!("a{a}"), *s)).collect(),
            })
            .collect();
        let all: Vec<String> = (0..5).map(|a| format!("a{a}")).collect();
        let s = suggest_weights(&all, &incidents, &shrinkage(k)).unwrap();
        let total: f64 = s.analysts.iter().map(|x| x.weight).sum();
        prop_assert!((total - 1.0).abs() < 1e-12);
        for x in &s.analysts {
            prop_assert!((0.0..=1.0).contains(&x.weight));
            if x.incidents == 0 {
                prop_assert_eq!(x.weight, 0.2);
            }
        }
        let far = suggest_weights(&all, &incidents, &shrinkage(1e12)).unwrap();
        for x in &far.analysts {
            prop_assert!((x.weight - 0.2).abs() < 1e-9);
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
    // Pool against A: gains -0.5, +1.5, +0.2 -> 2 better, mean 1.2/3 = 0.4; A's mean score
    // (-1.5 - 4.0 - 1.2)/3 = -2.233333. Against B: +1.0, +0.3 -> mean 0.65. The pool gained
    // least over A: A is the best single analyst.
    let r = pool_versus_analysts(&[
        incident(-2.0, &[("A", -1.5), ("B", -3.0)]),
        incident(-2.5, &[("B", -2.8), ("A", -4.0)]),
        incident(-1.0, &[("A", -1.2)]),
    ])
    .unwrap();
    assert_eq!(r.incidents, 3);
    assert_eq!(r.pool_better_than_best_each, 2);
    assert_abs_diff_eq!(r.mean_gain_over_best_each, 0.0, epsilon = 1e-12);
    let best = r.best();
    assert_eq!(best.analyst, "A");
    assert_abs_diff_eq!(best.mean_log_score, -6.7 / 3.0, epsilon = 1e-12);
    assert_eq!(best.incidents, 3);
    assert_eq!(best.pool_better, 2);
    assert_abs_diff_eq!(best.mean_gain_of_pool, 0.4, epsilon = 1e-12);
    assert_eq!(r.analysts[1].analyst, "B");
    assert_abs_diff_eq!(r.analysts[1].mean_gain_of_pool, 0.65, epsilon = 1e-12);
    assert_eq!(r.analysts[1].pool_better, 2);
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
    assert_eq!(r.best().mean_gain_of_pool, f64::NEG_INFINITY);
}

#[test]
fn incidents_without_the_pools_score_are_left_out_of_the_comparison() {
    // Incident 2 has no pool score: the comparison is over incidents 1 and 3 (computed):
    // gains against the best of each, -0.5 and +0.2, mean -0.15; A's mean over those two
    // incidents (-1.5 - 1.2)/2 = -1.35, the pool's mean gain over A -0.15, over B +1.0.
    let r = pool_versus_analysts(&[
        incident(-2.0, &[("A", -1.5), ("B", -3.0)]),
        scores(&[("B", -0.5), ("A", -4.0)]),
        incident(-1.0, &[("A", -1.2)]),
    ])
    .unwrap();
    assert_eq!(r.incidents, 2);
    assert_abs_diff_eq!(r.mean_gain_over_best_each, -0.15, epsilon = 1e-12);
    assert_eq!(r.best().analyst, "A");
    assert_abs_diff_eq!(r.best().mean_log_score, -1.35, epsilon = 1e-12);
    assert_abs_diff_eq!(r.best().mean_gain_of_pool, -0.15, epsilon = 1e-12);
    assert_eq!(r.best().incidents, 2);
    assert!(matches!(
        pool_versus_analysts(&[scores(&[("A", -1.0)])]),
        Err(PriorError::EmptyCredibilityInput {
            field: "pool_log_score",
            ..
        })
    ));
}

#[test]
fn the_best_analyst_is_chosen_incident_by_incident_not_by_raw_mean_score() {
    // Computed: L did land incidents, whose densities are high (scores near 0), S sea ones
    // (scores near -5). By raw mean score L would be best; against the pool of their own
    // incidents, S beat it (+0.5 each time) and L did not (-0.2), so S is the best analyst
    // and the pool did not beat every analyst.
    let r = pool_versus_analysts(&[
        incident(-0.8, &[("L", -1.0), ("M", -0.9)]),
        incident(-5.5, &[("S", -5.0), ("T", -6.5)]),
        incident(-4.5, &[("S", -4.0), ("T", -5.5)]),
    ])
    .unwrap();
    assert_eq!(r.best().analyst, "S");
    assert_abs_diff_eq!(r.best().mean_gain_of_pool, -0.5, epsilon = 1e-12);
    assert_abs_diff_eq!(r.analysts[0].mean_gain_of_pool, 0.2, epsilon = 1e-12);
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
