//! Detection laws, lateral range curves and sweep width.
//!
//! A detection law is a value ([`DetectionLaw`]) characterised by the sweep width `W` (metres)
//! of one search unit ([`SweepWidth`]). It gives
//! * the POD of a pattern at coverage `C = W / S` ([`DetectionLaw::pod_from_coverage`]),
//! * the lateral range curve of one straight infinite pass ([`DetectionLaw::lateral_range_pod`]),
//! * and, inside this crate, the exposure a straight track segment gives a point, from which
//!   the POD of an actual track is computed (see [`crate::track`]).
//!
//! Sources: B. O. Koopman, *Search and Screening* (1946/1980); A. R. Washburn, *Search and
//! Detection*, ch. 2 (random search 1-e^(-C); inverse-cube parallel sweeps erf(√π/2·C), §2.4);
//! the cookie-cutter sweep min(1, C).

use crate::error::SearchError;

/// Exposure cut used for the reach of a law: beyond the reach, one straight infinite pass gives
/// an exposure (≈ POD) below this value, and the track contributes nothing there.
pub const REACH_EXPOSURE: f64 = 1e-5;

/// Terms of the Taylor expansion of a smooth rate in `r²` ([`Kernel::rate_taylor_in_r2`]).
pub(crate) const RATE_TAYLOR_TERMS: usize = 7;

/// Peak exposure of the single-pass curve used for the exponential law (see
/// [`DetectionLaw::lateral_range_pod`]): a pass straight over the object detects it with
/// probability 1 - e^(-1).
pub const EXPONENTIAL_PEAK_EXPOSURE: f64 = 1.0;

/// Σ_{n≥1} (-1)^(n+1) / (n! √n): ∫ (1 - exp(-e^(-u²/2))) du / √(2π), the width of the
/// exponential law's single-pass curve in units of its σ·√(2π) (computed; the series is checked
/// in a unit test and the integral against SciPy's `quad` in the fixtures).
const EXPONENTIAL_WIDTH_FACTOR: f64 = 0.725_065_152_077_915_9;

/// A detection law: how the probability of detection grows with effort.
#[derive(Clone, Copy, Debug, PartialEq)]
pub enum DetectionLaw {
    /// Cookie cutter: certain detection within W/2 of the track, none beyond.
    DefiniteRange,
    /// Koopman's inverse cube law (visual detection from a height; the usual marine law).
    InverseCube,
    /// The exponential (random search) law, POD = 1 - e^(-C).
    Exponential,
}

impl DetectionLaw {
    /// Every law, in the order the incident format lists them (the default first).
    pub const ALL: [Self; 3] = [Self::InverseCube, Self::Exponential, Self::DefiniteRange];

    /// POD of a parallel-track pattern at coverage `C = W / S` (dimensionless):
    /// definite range `min(1, C)`; inverse cube `erf(√π/2 · C)`; exponential `1 - e^(-C)`.
    ///
    /// Sources: Koopman (1946); Washburn, *Search and Detection*, ch. 2 and §2.4 (see
    /// docs/references.md §1). A negative or NaN coverage gives 0.
    #[must_use]
    pub fn pod_from_coverage(self, coverage: f64) -> f64 {
        if coverage.is_nan() || coverage <= 0.0 {
            return 0.0;
        }
        match self {
            Self::DefiniteRange => coverage.min(1.0),
            Self::InverseCube => libm::erf(0.5 * std::f64::consts::PI.sqrt() * coverage),
            Self::Exponential => -(-coverage).exp_m1(),
        }
    }

    /// Lateral range curve: POD of one straight infinite pass at lateral distance `lateral_m`
    /// (metres, either side) for sweep width `sweep_width_m`; its integral over `x` is the sweep
    /// width.
    ///
    /// * definite range: 1 for `|x| ≤ W/2`, else 0;
    /// * inverse cube: `1 - exp(-k/x²)` with `W = 2√(πk)` (Koopman; docs/references.md §1,
    ///   derivation);
    /// * exponential: random search has no single-pass curve of its own (any curve gives
    ///   1 - e^(-C) under random tracks), so seekgrid uses the curve of a Gaussian exposure
    ///   profile of unit peak, `1 - exp(-e^(-x²/(2σ²)))`, with σ set so that the integral is
    ///   `W` (σ = 0.550216·W). This choice is ours, stated here; patterns scored with
    ///   [`DetectionLaw::pod_from_coverage`] keep the textbook 1 - e^(-C).
    ///
    /// A non-positive or non-finite sweep width gives 0.
    #[must_use]
    pub fn lateral_range_pod(self, lateral_m: f64, sweep_width_m: f64) -> f64 {
        if !(sweep_width_m.is_finite() && sweep_width_m > 0.0) || lateral_m.is_nan() {
            return 0.0;
        }
        let x = lateral_m.abs();
        match self {
            Self::DefiniteRange => {
                if x <= 0.5 * sweep_width_m {
                    1.0
                } else {
                    0.0
                }
            }
            _ => -(-Kernel::new(self, sweep_width_m).line_exposure(x)).exp_m1(),
        }
    }

    /// Reads a law name: `"definite-range"`, `"inverse-cube"` or `"exponential"`.
    #[must_use]
    pub fn parse(s: &str) -> Option<Self> {
        match s.trim() {
            "definite-range" => Some(Self::DefiniteRange),
            "inverse-cube" => Some(Self::InverseCube),
            "exponential" => Some(Self::Exponential),
            _ => None,
        }
    }

    /// The name [`DetectionLaw::parse`] reads.
    #[must_use]
    pub fn name(self) -> &'static str {
        match self {
            Self::DefiniteRange => "definite-range",
            Self::InverseCube => "inverse-cube",
            Self::Exponential => "exponential",
        }
    }

    /// Reach of the law for sweep width `sweep_width_m`, metres: beyond it one straight infinite
    /// pass gives exposure below [`REACH_EXPOSURE`] (definite range: exactly W/2).
    #[must_use]
    pub fn reach_m(self, sweep_width_m: f64) -> f64 {
        match self {
            Self::DefiniteRange => 0.5 * sweep_width_m,
            _ => Kernel::new(self, sweep_width_m).reach_m(),
        }
    }
}

/// Sweep width of one search unit, metres: a positive finite base value from the user times
/// the correction factors (weather, fatigue, speed, ...) the user states.
///
/// seekgrid ships no sweep width tables: the value and its factors come from the planner.
#[derive(Clone, Debug, PartialEq)]
pub struct SweepWidth {
    base_m: f64,
    factors: Vec<f64>,
    value_m: f64,
}

impl SweepWidth {
    /// `base_m` times every factor.
    ///
    /// # Errors
    /// [`SearchError::BadSweepWidth`] for a base that is not positive and finite (or a product
    /// that overflows); [`SearchError::BadCorrectionFactor`] for a factor that is not positive
    /// and finite.
    pub fn new(base_m: f64, factors: &[f64]) -> Result<Self, SearchError> {
        if !(base_m.is_finite() && base_m > 0.0) {
            return Err(SearchError::BadSweepWidth {
                sweep_width_m: base_m,
            });
        }
        if let Some((index, &factor)) = factors
            .iter()
            .enumerate()
            .find(|(_, f)| !(f.is_finite() && **f > 0.0))
        {
            return Err(SearchError::BadCorrectionFactor { index, factor });
        }
        let value_m = factors.iter().fold(base_m, |acc, f| acc * f);
        if !(value_m.is_finite() && value_m > 0.0) {
            return Err(SearchError::BadSweepWidth {
                sweep_width_m: value_m,
            });
        }
        Ok(Self {
            base_m,
            factors: factors.to_vec(),
            value_m,
        })
    }

    /// The corrected sweep width, metres.
    #[must_use]
    pub fn metres(&self) -> f64 {
        self.value_m
    }

    /// The base sweep width before corrections, metres.
    #[must_use]
    pub fn base_m(&self) -> f64 {
        self.base_m
    }

    /// The correction factors as given.
    #[must_use]
    pub fn factors(&self) -> &[f64] {
        &self.factors
    }
}

/// The exposure kernel of a smooth law: the detection rate per metre of track as a function
/// of range, integrated in closed form along straight segments. Exposures add over segments and
/// revisits; the POD of a point is `1 - exp(-exposure)` (so separate passes combine as
/// `1 - Π(1 - p)`).
#[derive(Clone, Copy, Debug)]
pub(crate) enum Kernel {
    /// Rate `(k/2) / r³` (Koopman's inverse cube); an infinite pass at lateral `x` gives `k/x²`.
    InverseCube { half_k: f64, reach_m: f64 },
    /// Rate `A/(σ√(2π)) · exp(-r²/(2σ²))`; an infinite pass gives `A·exp(-x²/(2σ²))`.
    Gaussian {
        peak: f64,
        inv_two_sigma2: f64,
        inv_sqrt2_sigma: f64,
        sigma: f64,
        reach_m: f64,
    },
    /// Definite range: certain detection within `radius_m`.
    Disc { radius_m: f64 },
}

impl Kernel {
    pub(crate) fn new(law: DetectionLaw, sweep_width_m: f64) -> Self {
        match law {
            DetectionLaw::InverseCube => {
                // W = 2 sqrt(pi k)  =>  k = W² / (4 pi)   (docs/references.md §1, computed).
                let k = sweep_width_m * sweep_width_m / (4.0 * std::f64::consts::PI);
                Self::InverseCube {
                    half_k: 0.5 * k,
                    reach_m: (k / REACH_EXPOSURE).sqrt(),
                }
            }
            DetectionLaw::Exponential => {
                let sigma = sweep_width_m
                    / ((2.0 * std::f64::consts::PI).sqrt() * EXPONENTIAL_WIDTH_FACTOR);
                let peak = EXPONENTIAL_PEAK_EXPOSURE;
                Self::Gaussian {
                    peak,
                    inv_two_sigma2: 0.5 / (sigma * sigma),
                    inv_sqrt2_sigma: 1.0 / (std::f64::consts::SQRT_2 * sigma),
                    sigma,
                    reach_m: sigma * (2.0 * (peak / REACH_EXPOSURE).ln()).sqrt(),
                }
            }
            DetectionLaw::DefiniteRange => Self::Disc {
                radius_m: 0.5 * sweep_width_m,
            },
        }
    }

    pub(crate) fn reach_m(&self) -> f64 {
        match *self {
            Self::InverseCube { reach_m, .. } | Self::Gaussian { reach_m, .. } => reach_m,
            Self::Disc { radius_m } => radius_m,
        }
    }

    /// Exposure of one straight infinite pass at lateral distance `x_m`.
    pub(crate) fn line_exposure(&self, x_m: f64) -> f64 {
        match *self {
            Self::InverseCube { half_k, .. } => {
                if x_m == 0.0 {
                    f64::INFINITY
                } else {
                    2.0 * half_k / (x_m * x_m)
                }
            }
            Self::Gaussian {
                peak,
                inv_two_sigma2,
                ..
            } => peak * (-x_m * x_m * inv_two_sigma2).exp(),
            Self::Disc { radius_m } => {
                if x_m <= radius_m {
                    f64::INFINITY
                } else {
                    0.0
                }
            }
        }
    }

    /// Exposure at a point at squared lateral distance `x2` from the line of a segment whose
    /// ends lie at along-track coordinates `a < b` measured from the foot of the perpendicular.
    pub(crate) fn segment_exposure(&self, x2: f64, a: f64, b: f64) -> f64 {
        match *self {
            Self::InverseCube { half_k, .. } => half_k * inverse_cube_integral(x2, a, b),
            Self::Gaussian {
                peak,
                inv_two_sigma2,
                inv_sqrt2_sigma,
                ..
            } => {
                let (ua, ub) = (a * inv_sqrt2_sigma, b * inv_sqrt2_sigma);
                // erf differences lose digits in the tails; use erfc there.
                let span = if ua >= 0.0 {
                    libm::erfc(ua) - libm::erfc(ub)
                } else if ub <= 0.0 {
                    libm::erfc(-ub) - libm::erfc(-ua)
                } else {
                    libm::erf(ub) - libm::erf(ua)
                };
                peak * (-x2 * inv_two_sigma2).exp() * 0.5 * span
            }
            Self::Disc { radius_m } => {
                let d2 = if a > 0.0 {
                    x2 + a * a
                } else if b < 0.0 {
                    x2 + b * b
                } else {
                    x2
                };
                if d2 <= radius_m * radius_m {
                    f64::INFINITY
                } else {
                    0.0
                }
            }
        }
    }

    /// Exposure of a segment of length `len` concentrated at distance `r` (far-field source).
    pub(crate) fn point_exposure(&self, r: f64, len: f64) -> f64 {
        match *self {
            Self::InverseCube { half_k, .. } => half_k * len / (r * r * r),
            Self::Gaussian {
                peak,
                inv_two_sigma2,
                sigma,
                ..
            } => {
                peak / (sigma * (2.0 * std::f64::consts::PI).sqrt())
                    * len
                    * (-r * r * inv_two_sigma2).exp()
            }
            Self::Disc { radius_m } => {
                if r <= radius_m {
                    f64::INFINITY
                } else {
                    0.0
                }
            }
        }
    }

    /// Taylor coefficients of the detection rate as a function of `u = r²` about `u0 > 0`:
    /// `c[n] = f⁽ⁿ⁾(u0) / n!`, so that `f(u) ≈ Σ c[n] (u - u0)ⁿ` (used to smooth the rate inside
    /// the near-field radius, [`crate::split`]). Definite range has no smooth rate: zeros.
    pub(crate) fn rate_taylor_in_r2(&self, u0: f64) -> [f64; RATE_TAYLOR_TERMS] {
        let mut c = [0.0; RATE_TAYLOR_TERMS];
        match *self {
            Self::InverseCube { half_k, .. } => {
                // f(u) = (k/2) u^(-3/2): f⁽ⁿ⁾/n! = (k/2) C(-3/2, n) u0^(-3/2-n).
                let mut binom = 1.0;
                let mut power = half_k / (u0 * u0.sqrt());
                for (n, slot) in c.iter_mut().enumerate() {
                    *slot = binom * power;
                    binom *= (-1.5 - n as f64) / (n as f64 + 1.0);
                    power /= u0;
                }
            }
            Self::Gaussian {
                peak,
                inv_two_sigma2,
                sigma,
                ..
            } => {
                // f(u) = g0 exp(-β u): f⁽ⁿ⁾/n! = f(u0) (-β)ⁿ / n!.
                let mut term = peak / (sigma * (2.0 * std::f64::consts::PI).sqrt())
                    * (-u0 * inv_two_sigma2).exp();
                for (n, slot) in c.iter_mut().enumerate() {
                    *slot = term;
                    term *= -inv_two_sigma2 / (n as f64 + 1.0);
                }
            }
            Self::Disc { .. } => {}
        }
        c
    }

    /// Bound on the relative change of the rate between ranges `d_min..d_max` when points move
    /// by at most `delta` (used to decide when a run of track may stand in for its chord).
    pub(crate) fn relative_variation(&self, d_min: f64, d_max: f64, delta: f64) -> f64 {
        match *self {
            Self::InverseCube { .. } => {
                let q = 1.0 + delta / d_min;
                q * q * q - 1.0
            }
            Self::Gaussian { inv_two_sigma2, .. } => {
                (delta * (2.0 * d_max + delta) * inv_two_sigma2).exp_m1()
            }
            Self::Disc { .. } => f64::INFINITY,
        }
    }
}

/// ∫_a^b ds / (x2 + s²)^(3/2), evaluated without cancellation (a < b).
fn inverse_cube_integral(x2: f64, a: f64, b: f64) -> f64 {
    if a > 0.0 {
        let ra = (x2 + a * a).sqrt();
        let rb = (x2 + b * b).sqrt();
        // s/r differences rewritten: (b² - a²) / ((b ra + a rb) ra rb).
        (b - a) * (b + a) / ((b * ra + a * rb) * ra * rb)
    } else if b < 0.0 {
        inverse_cube_integral(x2, -b, -a)
    } else if x2 == 0.0 {
        f64::INFINITY
    } else {
        let ra = (x2 + a * a).sqrt();
        let rb = (x2 + b * b).sqrt();
        (b / rb - a / ra) / x2
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn exponential_width_factor_matches_its_series() {
        // computed: the alternating series defining the constant.
        let mut s = 0.0;
        let mut fact = 1.0;
        for n in 1..40 {
            fact *= n as f64;
            let sign = if n % 2 == 1 { 1.0 } else { -1.0 };
            s += sign / (fact * (n as f64).sqrt());
        }
        assert!((s - EXPONENTIAL_WIDTH_FACTOR).abs() < 1e-15);
    }

    #[test]
    fn inverse_cube_segment_integral_matches_quadrature() {
        // computed: dense midpoint quadrature of the integrand.
        for &(x2, a, b) in &[
            (4.0, -3.0, 5.0),
            (1e-6, 2.0, 7.0),
            (9.0, -8.0, -1.0),
            (0.0, 1.0, 3.0),
        ] {
            let n = 200_000;
            let h: f64 = (b - a) / n as f64;
            let q: f64 = (0..n)
                .map(|i| {
                    let s: f64 = a + (i as f64 + 0.5) * h;
                    h / (x2 + s * s).powf(1.5)
                })
                .sum();
            let v = inverse_cube_integral(x2, a, b);
            assert!((v - q).abs() <= 1e-6 * q, "{x2} {a} {b}: {v} vs {q}");
        }
    }

    #[test]
    fn a_long_segment_gives_the_line_exposure() {
        for law in [DetectionLaw::InverseCube, DetectionLaw::Exponential] {
            let k = Kernel::new(law, 100.0);
            for x in [1.0, 30.0, 80.0, 200.0] {
                let e = k.segment_exposure(x * x, -1e7, 1e7);
                let l = k.line_exposure(x);
                assert!(
                    (e - l).abs() <= 1e-9 * l.max(1e-300),
                    "{law:?} {x}: {e} vs {l}"
                );
            }
        }
    }
}
