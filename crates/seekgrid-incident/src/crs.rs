//! How far a `crs` given in the file is from the incident: a UTM zone is 6 degrees wide, and
//! distances drawn in a zone far from its own stretch (the scale error grows with the square
//! of the distance from the central meridian).

use geo::{Distance, Geodesic, Point};
use seekgrid_core::{Frame, UtmZone};

/// Half a UTM zone's width, degrees: within this of the central meridian the zone is the
/// position's own (UTM standard, apart from the Norway and Svalbard exceptions).
pub const ZONE_HALF_WIDTH_DEG: f64 = 3.0;

/// Beyond this many degrees from the central meridian the position is past the neighbouring
/// zone: the loader refuses such a `crs` unless `allow_distant_crs = true`. Between
/// [`ZONE_HALF_WIDTH_DEG`] and this, a warning (an incident spanning two zones may use either).
pub const NEIGHBOUR_ZONE_DEG: f64 = 9.0;

/// Common geographic CRSs (longitude and latitude in degrees, no projection): WGS 84 (2D and
/// 3D), ETRS89, NAD83, NAD83(CSRS), NAD27, GDA94, GDA2020, NZGD2000, ED50, OSGB36, Tokyo,
/// CGCS2000, SIRGAS 2000, Hartebeesthoek94 and SWEREF99. Each is `+proj=longlat` by PROJ's
/// `projinfo` (checked in the CLI tests, `frame_vs_proj.rs`). A `crs` naming one is refused as
/// geographic, with the UTM zone that fits the incident.
pub const GEOGRAPHIC_EPSG: [u32; 16] = [
    4326, 4979, 4258, 4269, 4617, 4267, 4283, 7844, 4167, 4230, 4277, 4301, 4490, 4674, 4148, 4619,
];

/// The message refusing `crs = "EPSG:code"` for a code that is not a WGS84 UTM zone, naming the
/// zone that fits `first_position` when there is one.
#[must_use]
pub fn unsupported_crs_message(code: u32, first_position: Option<[f64; 2]>) -> String {
    let what = if GEOGRAPHIC_EPSG.contains(&code) {
        "a geographic CRS (degrees of longitude and latitude): seekgrid lays its grid in metres of a projected CRS"
    } else {
        "not a WGS84 UTM zone, the only projected CRS seekgrid works in"
    };
    let fit = first_position.and_then(|[lon, lat]| UtmZone::for_position(lon, lat).ok());
    match fit {
        Some(z) => format!(
            "EPSG:{code} is {what}; use crs = \"EPSG:{}\", the UTM zone of the first position, or leave crs out to have it chosen",
            z.epsg()
        ),
        None => format!(
            "EPSG:{code} is {what}; use EPSG:32601..32660 (north) or EPSG:32701..32760 (south), or leave crs out to have the zone of the first position chosen"
        ),
    }
}

/// Degrees of longitude between `lon_deg` and the zone's central meridian, in 0..=180.
#[must_use]
pub fn degrees_from_central_meridian(zone: UtmZone, lon_deg: f64) -> f64 {
    ((lon_deg - zone.central_meridian_deg() + 180.0).rem_euclid(360.0) - 180.0).abs()
}

/// The relative error of distances drawn in `zone` at (`lon_deg`, `lat_deg`): the projected
/// length of a short east-west step over its length on the ellipsoid, minus one (0.0004 short
/// on the central meridian, where UTM's scale is 0.9996). `None` where the zone cannot project
/// the position.
#[must_use]
pub fn scale_error(zone: UtmZone, lon_deg: f64, lat_deg: f64) -> Option<f64> {
    let frame = Frame::new(zone);
    let step = 0.001;
    let a = frame.checked_to_xy(lon_deg, lat_deg).ok()?;
    let b = frame.checked_to_xy(lon_deg + step, lat_deg).ok()?;
    let projected = ((b.x - a.x).powi(2) + (b.y - a.y).powi(2)).sqrt();
    let ground = Geodesic.distance(
        Point::new(lon_deg, lat_deg),
        Point::new(lon_deg + step, lat_deg),
    );
    (ground > 0.0 && projected.is_finite()).then(|| projected / ground - 1.0)
}

/// Where a `crs` stands from the incident's first position.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ZoneDistance {
    /// The first position, [lon, lat].
    pub position: [f64; 2],
    /// Degrees of longitude from the `crs` zone's central meridian ([`degrees_from_central_meridian`]).
    pub off_deg: f64,
    /// The position's own UTM zone.
    pub own: UtmZone,
    /// The relative error of distances drawn in the `crs` zone there ([`scale_error`]).
    pub scale_error: Option<f64>,
}

/// How far a `crs` is from the position's own zone.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ZoneReach {
    /// Within half a zone of its central meridian: the position's own zone (or as good).
    Own,
    /// In the neighbouring zone ([`ZONE_HALF_WIDTH_DEG`] to [`NEIGHBOUR_ZONE_DEG`]): a warning.
    Neighbouring,
    /// Farther: refused unless the file says `allow_distant_crs = true`.
    Distant,
}

impl ZoneDistance {
    /// How far `zone` is from `position`; `None` where the position has no UTM zone.
    #[must_use]
    pub fn of(zone: UtmZone, position: [f64; 2]) -> Option<Self> {
        let [lon, lat] = position;
        Some(Self {
            position,
            off_deg: degrees_from_central_meridian(zone, lon),
            own: UtmZone::for_position(lon, lat).ok()?,
            scale_error: scale_error(zone, lon, lat),
        })
    }

    /// Which of the three reaches the distance falls in.
    #[must_use]
    pub fn reach(&self) -> ZoneReach {
        if self.off_deg <= ZONE_HALF_WIDTH_DEG {
            ZoneReach::Own
        } else if self.off_deg <= NEIGHBOUR_ZONE_DEG {
            ZoneReach::Neighbouring
        } else {
            ZoneReach::Distant
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn an_unsupported_crs_is_refused_naming_the_zone_that_fits() {
        // Zone 24 for 40.9 W (UTM standard: zone = floor((lon + 180) / 6) + 1).
        let m = unsupported_crs_message(4326, Some([-40.9, 31.5]));
        assert!(
            m.contains("geographic") && m.contains("\"EPSG:32624\""),
            "{m}"
        );
        let m = unsupported_crs_message(27700, Some([-1.5, 52.0]));
        assert!(
            m.contains("not a WGS84 UTM zone") && m.contains("\"EPSG:32630\""),
            "{m}"
        );
        let m = unsupported_crs_message(27700, None);
        assert!(m.contains("EPSG:32601..32660"), "{m}");
    }

    #[test]
    fn degrees_from_the_central_meridian_wrap_at_the_date_line() {
        let z1 = UtmZone::from_epsg(32601).unwrap(); // central meridian 177 W
        assert!((degrees_from_central_meridian(z1, -177.0)).abs() < 1e-12);
        assert!((degrees_from_central_meridian(z1, 179.0) - 4.0).abs() < 1e-12);
        assert!((degrees_from_central_meridian(z1, -40.955) - 136.045).abs() < 1e-9);
    }

    #[test]
    fn scale_error_is_utm_k0_on_the_central_meridian_and_grows_off_it() {
        // UTM's central scale factor 0.9996 (UTM standard; common practice). Off the meridian
        // k ≈ k0 (1 + (Δλ cos φ)² / 2) to first order (Snyder 1987, USGS PP 1395, §8).
        let z = UtmZone::from_epsg(32624).unwrap(); // central meridian 39 W
        let e0 = scale_error(z, -39.0, 31.5).unwrap();
        assert!((e0 + 0.0004).abs() < 2e-6, "{e0}");
        let dl = 3f64.to_radians() * 31.5f64.to_radians().cos();
        let first_order = 0.9996 * (1.0 + dl * dl / 2.0) - 1.0;
        let e3 = scale_error(z, -42.0, 31.5).unwrap();
        assert!((e3 - first_order).abs() < 2e-5, "{e3} vs {first_order}");
    }
}
