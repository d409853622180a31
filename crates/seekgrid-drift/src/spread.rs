//! The spread of a particle cloud: weighted mean, covariance and containment ellipses.

use crate::error::DriftError;
use geo::Coord;

/// Weighted mean position and covariance of a cloud, working frame (metres, square metres).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Spread {
    /// Weighted mean position, metres.
    pub mean: Coord<f64>,
    /// Weighted covariance `[[var_x, cov_xy], [cov_xy, var_y]]`, square metres, with the
    /// weights normalised to sum to 1 (the population form).
    pub cov: [[f64; 2]; 2],
}

/// An ellipse in the working frame.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Ellipse {
    /// Centre, metres.
    pub center: Coord<f64>,
    /// Semi-major axis, metres.
    pub semi_major_m: f64,
    /// Semi-minor axis, metres.
    pub semi_minor_m: f64,
    /// Grid bearing of the major axis, degrees clockwise from grid north, in [0, 180).
    pub major_axis_grid_bearing_deg: f64,
}

/// The Mahalanobis radius k of the ellipse that holds a share `q` of a bivariate normal:
/// k^2 = -2 ln(1 - q), the chi-square quantile with 2 degrees of freedom (docs/references.md §2,
/// computed; 50 % -> 1.177410, 90 % -> 2.145966).
///
/// # Errors
/// [`DriftError::NotFinite`] when `q` is not in (0, 1).
pub fn containment_radius_factor(q: f64) -> Result<f64, DriftError> {
    if q.is_finite() && q > 0.0 && q < 1.0 {
        Ok((-2.0 * (-q).ln_1p()).sqrt())
    } else {
        Err(DriftError::NotFinite {
            field: "containment share q (a fraction strictly between 0 and 1, e.g. 0.5)".to_owned(),
            value: q,
        })
    }
}

impl Spread {
    /// Weighted mean and covariance of points. The weights need not sum to 1.
    ///
    /// # Errors
    /// [`DriftError::BadWeights`] when the lengths differ, a weight is negative or not finite,
    /// or the weights sum to zero.
    pub fn of_points(x_m: &[f64], y_m: &[f64], weights: &[f64]) -> Result<Self, DriftError> {
        if weights.len() != x_m.len() || y_m.len() != x_m.len() {
            return Err(DriftError::BadWeights {
                what: format!(
                    "{} weights for {} particles; give one weight per particle",
                    weights.len(),
                    x_m.len()
                ),
            });
        }
        if let Some(i) = weights.iter().position(|w| !(w.is_finite() && *w >= 0.0)) {
            return Err(DriftError::BadWeights {
                what: format!(
                    "weight {i} is {}; weights must be finite and >= 0",
                    weights[i]
                ),
            });
        }
        let total = seekgrid_core::neumaier_sum(weights.iter().copied());
        if total.is_nan() || total <= 0.0 {
            return Err(DriftError::BadWeights {
                what: "the weights sum to zero; give at least one positive weight".to_owned(),
            });
        }
        // Two passes, centred on the mean, to avoid cancellation at UTM magnitudes.
        let mut mx = 0.0;
        let mut my = 0.0;
        for ((x, y), w) in x_m.iter().zip(y_m).zip(weights) {
            mx += w * x;
            my += w * y;
        }
        mx /= total;
        my /= total;
        let (mut sxx, mut sxy, mut syy) = (0.0, 0.0, 0.0);
        for ((x, y), w) in x_m.iter().zip(y_m).zip(weights) {
            let (dx, dy) = (x - mx, y - my);
            sxx += w * dx * dx;
            sxy += w * dx * dy;
            syy += w * dy * dy;
        }
        Ok(Self {
            mean: Coord { x: mx, y: my },
            cov: [[sxx / total, sxy / total], [sxy / total, syy / total]],
        })
    }

    /// Root-mean-square distance of the cloud from its mean, metres: sqrt(trace of the
    /// covariance).
    #[must_use]
    pub fn rms_radius_m(&self) -> f64 {
        (self.cov[0][0] + self.cov[1][1]).max(0.0).sqrt()
    }

    /// The ellipse that would hold a share `q` of the cloud if it were bivariate normal with
    /// this mean and covariance: semi-axes k * sqrt(eigenvalues), k from
    /// [`containment_radius_factor`]. A drift cloud is often not normal (leeway divergence
    /// makes it two-lobed); the ellipse is a summary, not a containment guarantee.
    ///
    /// # Errors
    /// [`DriftError::NotFinite`] when `q` is not in (0, 1).
    pub fn ellipse(&self, q: f64) -> Result<Ellipse, DriftError> {
        let k = containment_radius_factor(q)?;
        let [[a, b], [_, c]] = self.cov;
        let half_sum = 0.5 * (a + c);
        let root = (0.5 * (a - c)).hypot(b);
        let l1 = (half_sum + root).max(0.0);
        let l2 = (half_sum - root).max(0.0);
        // Angle of the major axis from the x (east) axis, counter-clockwise.
        let theta = 0.5 * (2.0 * b).atan2(a - c);
        let bearing = (90.0 - theta.to_degrees()).rem_euclid(180.0);
        Ok(Ellipse {
            center: self.mean,
            semi_major_m: k * l1.sqrt(),
            semi_minor_m: k * l2.sqrt(),
            major_axis_grid_bearing_deg: if bearing >= 180.0 { 0.0 } else { bearing },
        })
    }
}

impl Ellipse {
    /// `n` points (n >= 3, fewer are raised to 3) around the ellipse, counter-clockwise, the
    /// first repeated at the end to close the ring (GeoJSON right-hand rule for an exterior).
    #[must_use]
    pub fn boundary(&self, n: usize) -> Vec<Coord<f64>> {
        let n = n.max(3);
        let b = self.major_axis_grid_bearing_deg.to_radians();
        // Unit vectors of the major and minor axes (east, north).
        let (ma_e, ma_n) = (b.sin(), b.cos());
        let (mi_e, mi_n) = (-ma_n, ma_e);
        let mut ring: Vec<Coord<f64>> = (0..n)
            .map(|i| {
                let t = std::f64::consts::TAU * i as f64 / n as f64;
                let (s, c) = t.sin_cos();
                let (u, v) = (self.semi_major_m * c, self.semi_minor_m * s);
                Coord {
                    x: self.center.x + u * ma_e + v * mi_e,
                    y: self.center.y + u * ma_n + v * mi_n,
                }
            })
            .collect();
        ring.push(ring[0]);
        ring
    }
}
