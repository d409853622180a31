//! Detection laws against published tables and SciPy.

use crate::fixtures::{number, numbers, reference};
use seekgrid_search::{DetectionLaw, SearchError, SweepWidth};

const COVERAGES: [f64; 6] = [0.25, 0.5, 1.0, 1.5, 2.0, 3.0];

#[test]
fn exponential_law_matches_published_table() {
    // found: Washburn, Search and Detection ch. 2 (p = 1 - e^-n), as restated in Turner,
    // USNA SM230 notes (docs/references.md §1).
    let published = [0.221199, 0.393469, 0.632121, 0.776870, 0.864665, 0.950213];
    for (c, p) in COVERAGES.iter().zip(published) {
        assert!((DetectionLaw::Exponential.pod_from_coverage(*c) - p).abs() < 5e-7);
    }
}

#[test]
fn inverse_cube_law_matches_published_table() {
    // found: Eagle, NPS OA3602 notes "Lateral Ranges and Sweepwidth", quoting Washburn 2002
    // §2.4 (docs/references.md §1).
    let published = [0.245969, 0.469116, 0.789909, 0.939888, 0.987811, 0.999830];
    for (c, p) in COVERAGES.iter().zip(published) {
        assert!((DetectionLaw::InverseCube.pod_from_coverage(*c) - p).abs() < 5e-7);
    }
}

#[test]
fn definite_range_law_matches_published_table() {
    // found: Turner SM230 ("methodical search", perfect detection within ±r/2).
    let published = [0.25, 0.5, 1.0, 1.0, 1.0, 1.0];
    for (c, p) in COVERAGES.iter().zip(published) {
        assert_eq!(DetectionLaw::DefiniteRange.pod_from_coverage(*c), p);
    }
}

#[test]
fn laws_match_scipy_to_full_precision() {
    // computed: scipy.special.erf and math.expm1 (fixtures/reference/make_search_fixtures.py).
    let r = reference();
    let c = numbers(&r["laws"]["coverage"]);
    for (law, key) in [
        (DetectionLaw::InverseCube, "inverse_cube"),
        (DetectionLaw::Exponential, "exponential"),
        (DetectionLaw::DefiniteRange, "definite_range"),
    ] {
        for (ci, v) in c.iter().zip(numbers(&r["laws"][key])) {
            assert!(
                (law.pod_from_coverage(*ci) - v).abs() < 1e-15,
                "{key} C={ci}"
            );
        }
    }
}

fn curve_integral(law: DetectionLaw, w: f64) -> f64 {
    // Midpoint rule over ±400 W; the inverse-cube tail beyond is 2k/X = W/(2π·400) of W.
    let n = 4_000_000;
    let x_max = 400.0 * w;
    let h = 2.0 * x_max / n as f64;
    (0..n)
        .map(|i| law.lateral_range_pod(-x_max + (i as f64 + 0.5) * h, w) * h)
        .sum()
}

#[test]
fn lateral_range_curves_integrate_to_the_sweep_width() {
    // computed: numerical integration; the inverse-cube tail beyond ±400 W (2k/x_max) is added.
    let w = 120.0;
    let k = w * w / (4.0 * std::f64::consts::PI);
    let ic = curve_integral(DetectionLaw::InverseCube, w) + 2.0 * k / (400.0 * w);
    assert!((ic - w).abs() < 1e-4 * w, "inverse cube {ic}");
    let ex = curve_integral(DetectionLaw::Exponential, w);
    assert!((ex - w).abs() < 1e-6 * w, "exponential {ex}");
    let dr = curve_integral(DetectionLaw::DefiniteRange, w);
    assert!((dr - w).abs() < 1e-3 * w, "definite range {dr}");
}

#[test]
fn exponential_single_pass_curve_matches_scipy_quadrature() {
    // computed: scipy.integrate.quad of 1 - exp(-exp(-x²/(2σ²))) with σ = 0.550216 W gives W.
    let r = reference();
    let sigma = number(&r["exponential_curve"]["sigma_per_width"]);
    let w = 1.0;
    for x in [0.0, 0.3, 1.0, 2.0] {
        let expected = -(-(-x * x / (2.0 * sigma * sigma)).exp()).exp_m1();
        assert!((DetectionLaw::Exponential.lateral_range_pod(x, w) - expected).abs() < 1e-12);
    }
    assert!((number(&r["exponential_curve"]["width_for_unit_sweep_width"]) - 1.0).abs() < 1e-12);
}

#[test]
fn inverse_cube_curve_is_one_minus_exp_of_k_over_x_squared() {
    // Koopman's inverse cube law, l(x) = 1 - exp(-k/x²) (from memory); W = 2√(πk) is computed
    // (docs/references.md §1, derivation).
    let w = 1000.0;
    let k = w * w / (4.0 * std::f64::consts::PI);
    for x in [10.0, 200.0, 500.0, 3000.0] {
        let expected = 1.0 - (-k / (x * x)).exp();
        assert!((DetectionLaw::InverseCube.lateral_range_pod(x, w) - expected).abs() < 1e-14);
    }
    assert_eq!(DetectionLaw::InverseCube.lateral_range_pod(0.0, w), 1.0);
    assert_eq!(DetectionLaw::DefiniteRange.lateral_range_pod(500.0, w), 1.0);
    assert_eq!(DetectionLaw::DefiniteRange.lateral_range_pod(500.1, w), 0.0);
}

#[test]
fn law_names_parse_and_round_trip() {
    for law in [
        DetectionLaw::DefiniteRange,
        DetectionLaw::InverseCube,
        DetectionLaw::Exponential,
    ] {
        assert_eq!(DetectionLaw::parse(law.name()), Some(law));
    }
    assert_eq!(DetectionLaw::parse("inverse cube"), None);
}

#[test]
fn sweep_width_applies_the_users_corrections() {
    let w = SweepWidth::new(1000.0, &[0.9, 0.5]).unwrap();
    assert!((w.metres() - 450.0).abs() < 1e-12);
    assert_eq!(w.base_m(), 1000.0);
    assert!(matches!(
        SweepWidth::new(0.0, &[]),
        Err(SearchError::BadSweepWidth { .. })
    ));
    assert!(matches!(
        SweepWidth::new(f64::NAN, &[]),
        Err(SearchError::BadSweepWidth { .. })
    ));
    assert!(matches!(
        SweepWidth::new(100.0, &[1.0, -0.5]),
        Err(SearchError::BadCorrectionFactor { index: 1, .. })
    ));
    let msg = SweepWidth::new(-3.0, &[]).unwrap_err().to_string();
    assert!(msg.contains("sweep_width_m") && !msg.ends_with('.'));
}
