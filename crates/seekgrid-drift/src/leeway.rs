//! The leeway model: the drift of an object relative to the water, caused by the wind.

use crate::error::DriftError;

/// Leeway as downwind and crosswind components linear in the 10 m wind speed U10.
///
/// For one particle, with U the wind speed in knots:
/// * downwind = `downwind_slope * U + downwind_offset_kn + e_d`,
/// * crosswind = `side * (crosswind_slope * U + crosswind_offset_kn + e_c)`,
///
/// where `e_d ~ N(0, downwind_sigma_kn)` and `e_c ~ N(0, crosswind_sigma_kn)` are drawn once
/// per particle, `side` is +1 (to the right of downwind) or -1 (to the left), drawn 50/50 at
/// the start and flipped at the events of a Poisson process of rate `jibe_per_h` per hour.
/// Downwind is the direction the wind blows toward (its `from` bearing + 180 degrees).
///
/// Source: the linear leeway regression of Allen & Plourde 1999 (USCG R&D Center, CG-D-08-99)
/// and Breivik & Allen 2008, "An operational search and rescue model for the Norwegian Sea and
/// the North Sea", J. Mar. Syst. 69:99-113, which also perturb the coefficients once per
/// ensemble member and let members jibe between the two sides.
///
/// seekgrid ships no table of objects: the coefficients are the planner's input, and the slopes
/// are dimensionless (knots of leeway per knot of wind).
///
/// Signs: the downwind slope is zero or positive (the wind pushes a drifting object downwind;
/// a fit that drifts upwind at zero wind does so through a negative offset). The crosswind
/// slope and both offsets are signed: the side is drawn at random, so only the sign of the
/// crosswind slope relative to its offset matters (Allen & Plourde fit each side's crosswind
/// line separately, the left one with negative coefficients).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Leeway {
    /// Downwind leeway per knot of wind (dimensionless, >= 0), e.g. 0.03 for 3 % of U10.
    pub downwind_slope: f64,
    /// Downwind leeway at zero wind, knots.
    pub downwind_offset_kn: f64,
    /// 1-sigma error of the downwind leeway, knots (>= 0).
    pub downwind_sigma_kn: f64,
    /// Crosswind leeway per knot of wind (dimensionless).
    pub crosswind_slope: f64,
    /// Crosswind leeway at zero wind, knots.
    pub crosswind_offset_kn: f64,
    /// 1-sigma error of the crosswind leeway, knots (>= 0).
    pub crosswind_sigma_kn: f64,
    /// Rate at which an object changes side (jibes), events per hour, in 0..=[`MAX_JIBE_PER_H`].
    pub jibe_per_h: f64,
}

/// Most side changes per hour a leeway may state: about one an hour (at this rate 63 % of
/// objects have jibed within the hour); published jibing rates are a few percent per hour.
pub const MAX_JIBE_PER_H: f64 = 1.0;

impl Leeway {
    /// No leeway at all (a drogued object moving with the water).
    pub const NONE: Leeway = Leeway {
        downwind_slope: 0.0,
        downwind_offset_kn: 0.0,
        downwind_sigma_kn: 0.0,
        crosswind_slope: 0.0,
        crosswind_offset_kn: 0.0,
        crosswind_sigma_kn: 0.0,
        jibe_per_h: 0.0,
    };

    /// Checks every coefficient: finite; the downwind slope and both sigmas zero or positive;
    /// the jibe rate in 0..=[`MAX_JIBE_PER_H`].
    ///
    /// # Errors
    /// [`DriftError::NotFinite`], [`DriftError::Negative`] or [`DriftError::OutOfRange`],
    /// naming the field as `leeway.<name>`.
    pub fn validate(&self) -> Result<(), DriftError> {
        for (name, value, signed) in [
            ("downwind_slope", self.downwind_slope, false),
            ("downwind_offset_kn", self.downwind_offset_kn, true),
            ("downwind_sigma_kn", self.downwind_sigma_kn, false),
            ("crosswind_slope", self.crosswind_slope, true),
            ("crosswind_offset_kn", self.crosswind_offset_kn, true),
            ("crosswind_sigma_kn", self.crosswind_sigma_kn, false),
            ("jibe_per_h", self.jibe_per_h, false),
        ] {
            if !value.is_finite() {
                return Err(DriftError::NotFinite {
                    field: format!("leeway.{name}"),
                    value,
                });
            }
            if !signed && value < 0.0 {
                return Err(DriftError::Negative {
                    field: format!("leeway.{name}"),
                    value,
                });
            }
        }
        if self.jibe_per_h > MAX_JIBE_PER_H {
            return Err(DriftError::OutOfRange {
                field: "leeway.jibe_per_h".to_owned(),
                value: self.jibe_per_h,
                fix: "give the chance of changing side per hour, between 0 and 1 (published rates are a few percent)",
            });
        }
        Ok(())
    }

    /// The leeway velocity (east, north) in knots for a wind of speed `u10_kn` blowing toward
    /// the unit vector `downwind` (east, north), side +1 or -1, and the particle's error draws
    /// (standard normals).
    #[inline]
    pub(crate) fn velocity_kn(
        &self,
        u10_kn: f64,
        downwind: (f64, f64),
        side: f64,
        z_down: f64,
        z_cross: f64,
    ) -> (f64, f64) {
        let (de, dn) = downwind;
        let down = self.downwind_slope * u10_kn
            + self.downwind_offset_kn
            + z_down * self.downwind_sigma_kn;
        let cross = side
            * (self.crosswind_slope * u10_kn
                + self.crosswind_offset_kn
                + z_cross * self.crosswind_sigma_kn);
        // Right of downwind: the downwind bearing + 90 degrees, unit (dn, -de).
        (down * de + cross * dn, down * dn - cross * de)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn positive_crosswind_is_to_the_right_of_downwind() {
        // computed by hand: wind blowing toward the south (from 000°); facing south, the right
        // hand points west.
        let lw = Leeway {
            crosswind_offset_kn: 0.2,
            ..Leeway::NONE
        };
        let (e, n) = lw.velocity_kn(10.0, (0.0, -1.0), 1.0, 0.0, 0.0);
        assert_abs_diff_eq!(e, -0.2, epsilon = 1e-15);
        assert_abs_diff_eq!(n, 0.0, epsilon = 1e-15);
        let (e, _) = lw.velocity_kn(10.0, (0.0, -1.0), -1.0, 0.0, 0.0);
        assert_abs_diff_eq!(e, 0.2, epsilon = 1e-15);
    }

    #[test]
    fn leeway_is_linear_in_wind_speed_with_its_error_draws() {
        let lw = Leeway {
            downwind_slope: 0.03,
            downwind_offset_kn: 0.1,
            downwind_sigma_kn: 0.05,
            ..Leeway::NONE
        };
        // Wind toward the east at 20 kn, downwind error draw +2 sigma: 0.6 + 0.1 + 0.1 kn.
        let (e, n) = lw.velocity_kn(20.0, (1.0, 0.0), 1.0, 2.0, 0.0);
        assert_abs_diff_eq!(e, 0.8, epsilon = 1e-12);
        assert_abs_diff_eq!(n, 0.0, epsilon = 1e-12);
        // In an exact calm the offset acts along the stated direction.
        let (e, n) = lw.velocity_kn(0.0, (0.0, 1.0), 1.0, 0.0, 0.0);
        assert_abs_diff_eq!(e, 0.0, epsilon = 1e-12);
        assert_abs_diff_eq!(n, 0.1, epsilon = 1e-12);
    }

    #[test]
    fn negative_sigmas_and_rates_are_refused_by_name() {
        let lw = Leeway {
            jibe_per_h: -1.0,
            ..Leeway::NONE
        };
        assert!(
            matches!(lw.validate(), Err(DriftError::Negative { field, .. }) if field == "leeway.jibe_per_h")
        );
        let lw = Leeway {
            downwind_slope: f64::NAN,
            ..Leeway::NONE
        };
        assert!(matches!(lw.validate(), Err(DriftError::NotFinite { .. })));
        // A negative crosswind slope is a legitimate fit (the left side's line, or a side
        // that changes with the wind); a negative downwind slope is not.
        let lw = Leeway {
            crosswind_slope: -0.01,
            ..Leeway::NONE
        };
        assert!(lw.validate().is_ok());
        let lw = Leeway {
            downwind_slope: -0.01,
            ..Leeway::NONE
        };
        assert!(
            matches!(lw.validate(), Err(DriftError::Negative { field, .. }) if field == "leeway.downwind_slope")
        );
        let lw = Leeway {
            jibe_per_h: 1.5,
            ..Leeway::NONE
        };
        assert!(
            matches!(lw.validate(), Err(DriftError::OutOfRange { field, .. }) if field == "leeway.jibe_per_h")
        );
        let lw = Leeway {
            jibe_per_h: MAX_JIBE_PER_H,
            ..Leeway::NONE
        };
        assert!(lw.validate().is_ok());
    }
}
