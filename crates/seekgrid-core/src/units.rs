//! Unit conversions used across seekgrid.
//!
//! Field names carry their unit (`_m`, `_nm`, `_kn`, `_deg`, `_h`); these constants are the
//! only place the conversion factors live.

/// Metres in one international nautical mile (exact, by definition since 1929).
pub const METRES_PER_NM: f64 = 1852.0;

/// Metres per second in one knot (one nautical mile per hour, exact).
pub const MPS_PER_KNOT: f64 = METRES_PER_NM / 3600.0;

/// Metres per second in one kilometre per hour (exact).
pub const MPS_PER_KMH: f64 = 1000.0 / 3600.0;

/// Square metres in one square kilometre.
pub const M2_PER_KM2: f64 = 1.0e6;

/// Seconds in one hour.
pub const SECONDS_PER_HOUR: f64 = 3600.0;

/// Converts knots to metres per second.
#[must_use]
pub fn knots_to_mps(speed_kn: f64) -> f64 {
    speed_kn * MPS_PER_KNOT
}

/// Converts kilometres per hour to metres per second.
#[must_use]
pub fn kmh_to_mps(speed_kmh: f64) -> f64 {
    speed_kmh * MPS_PER_KMH
}

/// Converts metres per second to knots.
#[must_use]
pub fn mps_to_knots(speed_mps: f64) -> f64 {
    speed_mps / MPS_PER_KNOT
}

/// Converts hours to seconds.
#[must_use]
pub fn hours_to_s(duration_h: f64) -> f64 {
    duration_h * SECONDS_PER_HOUR
}

/// Converts seconds to hours.
#[must_use]
pub fn s_to_hours(duration_s: f64) -> f64 {
    duration_s / SECONDS_PER_HOUR
}

/// Converts nautical miles to metres.
#[must_use]
pub fn nm_to_m(distance_nm: f64) -> f64 {
    distance_nm * METRES_PER_NM
}

/// Converts metres to nautical miles.
#[must_use]
pub fn m_to_nm(distance_m: f64) -> f64 {
    distance_m / METRES_PER_NM
}

/// Normalises an angle in degrees into `[0, 360)`.
#[must_use]
pub fn normalise_deg(angle_deg: f64) -> f64 {
    let a = angle_deg.rem_euclid(360.0);
    // rem_euclid can return 360.0 for tiny negative inputs because of rounding.
    if a >= 360.0 { 0.0 } else { a }
}

/// Unit vector (east, north) pointing along a true bearing given in degrees clockwise from north.
#[must_use]
pub fn bearing_to_unit_vector(bearing_deg: f64) -> (f64, f64) {
    let b = bearing_deg.to_radians();
    (b.sin(), b.cos())
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn one_knot_is_1852_metres_per_hour() {
        // Definition of the international nautical mile (common practice): the literals 3600
        // and 1852 are the published values this test checks the constants against.
        assert_relative_eq!(knots_to_mps(1.0) * 3600.0, 1852.0, epsilon = 1e-9);
        assert_relative_eq!(m_to_nm(nm_to_m(7.25)), 7.25, epsilon = 1e-12);
        assert_relative_eq!(mps_to_knots(knots_to_mps(3.5)), 3.5, epsilon = 1e-12);
    }

    #[test]
    fn hours_and_kilometres_per_hour_convert_by_their_definitions() {
        // 1 h = 3600 s and 1 km/h = 1000 m per 3600 s (SI definitions, common practice): the
        // literals are the published values this test checks against.
        assert_eq!(hours_to_s(2.5), 9000.0);
        assert_eq!(s_to_hours(5400.0), 1.5);
        assert_relative_eq!(kmh_to_mps(36.0), 10.0, epsilon = 1e-12);
        assert_relative_eq!(kmh_to_mps(1.0) * 3600.0, 1000.0, epsilon = 1e-9);
    }

    #[test]
    fn bearings_point_clockwise_from_north() {
        let (e, n) = bearing_to_unit_vector(90.0);
        assert_relative_eq!(e, 1.0, epsilon = 1e-12);
        assert_relative_eq!(n, 0.0, epsilon = 1e-12);
        let (e, n) = bearing_to_unit_vector(180.0);
        assert_relative_eq!(e, 0.0, epsilon = 1e-12);
        assert_relative_eq!(n, -1.0, epsilon = 1e-12);
        assert_relative_eq!(normalise_deg(-30.0), 330.0);
        assert_relative_eq!(normalise_deg(725.0), 5.0);
    }
}
