//! The working frame: WGS84 longitude/latitude to and from UTM metres.
//!
//! The transverse Mercator is computed with Krüger's series to sixth order in the third
//! flattening n, as given by C. F. F. Karney, "Transverse Mercator with an accuracy of a few
//! nanometres", J. Geodesy 85:475-485 (2011), equations (7)-(11), (15)-(21) and (35)-(36).
//! Within a UTM zone and several degrees beyond it the series error is far below a millimetre.
//!
//! Why hand-written: `geographiclib-rs` provides geodesics but not the transverse Mercator, and
//! the `proj` crate needs the PROJ C library, which the default build avoids (pure Rust).
//! Tests compare this module with PROJ's `cs2cs` (see `tests/` at the workspace root).

use crate::error::CoreError;
use crate::projected::{ProjectedCrs, fitting_epsg};
use geo::Coord;

/// WGS84 semi-major axis, metres (NIMA TR8350.2).
const WGS84_A: f64 = 6_378_137.0;
/// WGS84 flattening (NIMA TR8350.2).
const WGS84_F: f64 = 1.0 / 298.257_223_563;
/// UTM central scale factor.
const UTM_K0: f64 = 0.9996;
/// UTM false easting, metres.
const UTM_FALSE_EASTING: f64 = 500_000.0;
/// UTM false northing in the southern hemisphere, metres.
const UTM_FALSE_NORTHING_SOUTH: f64 = 10_000_000.0;

/// Northern or southern UTM hemisphere.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Hemisphere {
    /// EPSG:326zz, false northing 0.
    North,
    /// EPSG:327zz, false northing 10 000 km.
    South,
}

/// A WGS84 UTM zone (1..=60) and hemisphere.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub struct UtmZone {
    zone: u8,
    hemisphere: Hemisphere,
}

impl UtmZone {
    /// The zone for a position, with the Norway and Svalbard exceptions of the UTM standard.
    ///
    /// # Errors
    /// [`CoreError::BadPosition`] when lon/lat are not finite or outside -180..=180, -80..=84.
    pub fn for_position(lon_deg: f64, lat_deg: f64) -> Result<Self, CoreError> {
        check_position(lon_deg, lat_deg)?;
        let lon = if lon_deg >= 180.0 {
            lon_deg - 360.0
        } else {
            lon_deg
        };
        let mut zone = (((lon + 180.0) / 6.0).floor() as i32 + 1).clamp(1, 60) as u8;
        // Exceptions: south-west Norway (32V) and Svalbard (31X-37X); common practice, UTM standard.
        if (56.0..64.0).contains(&lat_deg) && (3.0..12.0).contains(&lon) {
            zone = 32;
        }
        if (72.0..=84.0).contains(&lat_deg) && (0.0..42.0).contains(&lon) {
            zone = match lon {
                l if l < 9.0 => 31,
                l if l < 21.0 => 33,
                l if l < 33.0 => 35,
                _ => 37,
            };
        }
        let hemisphere = if lat_deg >= 0.0 {
            Hemisphere::North
        } else {
            Hemisphere::South
        };
        Ok(Self { zone, hemisphere })
    }

    /// The zone of an EPSG code 32601..=32660 or 32701..=32760.
    ///
    /// # Errors
    /// [`CoreError::UnsupportedCrs`] for any other code.
    pub fn from_epsg(code: u32) -> Result<Self, CoreError> {
        let (hemisphere, zone) = match code {
            32601..=32660 => (Hemisphere::North, code - 32600),
            32701..=32760 => (Hemisphere::South, code - 32700),
            _ => return Err(CoreError::UnsupportedCrs { code }),
        };
        Ok(Self {
            zone: zone as u8,
            hemisphere,
        })
    }

    /// Parses `"EPSG:32620"` (case-insensitive prefix).
    ///
    /// # Errors
    /// [`CoreError::BadCrsText`] when not of that form, [`CoreError::UnsupportedCrs`] when not UTM.
    pub fn parse(text: &str) -> Result<Self, CoreError> {
        let t = text.trim();
        let code = t
            .get(..5)
            .filter(|p| p.eq_ignore_ascii_case("EPSG:"))
            .and_then(|_| t[5..].trim().parse::<u32>().ok())
            .ok_or_else(|| CoreError::BadCrsText {
                text: text.to_owned(),
            })?;
        Self::from_epsg(code)
    }

    /// Zone number 1..=60.
    #[must_use]
    pub fn zone(&self) -> u8 {
        self.zone
    }

    /// Hemisphere.
    #[must_use]
    pub fn hemisphere(&self) -> Hemisphere {
        self.hemisphere
    }

    /// The EPSG code of this zone on WGS84.
    #[must_use]
    pub fn epsg(&self) -> u32 {
        match self.hemisphere {
            Hemisphere::North => 32600 + u32::from(self.zone),
            Hemisphere::South => 32700 + u32::from(self.zone),
        }
    }

    /// Central meridian, degrees east.
    #[must_use]
    pub fn central_meridian_deg(&self) -> f64 {
        f64::from(self.zone) * 6.0 - 183.0
    }
}

fn check_position(lon_deg: f64, lat_deg: f64) -> Result<(), CoreError> {
    if lon_deg.is_finite()
        && lat_deg.is_finite()
        && (-180.0..=180.0).contains(&lon_deg)
        && (-80.0..=84.0).contains(&lat_deg)
    {
        Ok(())
    } else {
        Err(CoreError::BadPosition {
            lon: lon_deg,
            lat: lat_deg,
        })
    }
}

/// The projected working frame of an incident: one UTM zone on WGS84 (the Krüger series
/// below), or any other projected CRS ([`ProjectedCrs`], through proj4rs).
///
/// `to_xy` takes longitude then latitude in degrees (GeoJSON order) and returns easting and
/// northing in metres; `to_lon_lat` inverts it.
///
/// ```
/// use seekgrid_core::frame::{Frame, UtmZone};
/// let frame = Frame::new(UtmZone::from_epsg(32619).unwrap());
/// let p = frame.to_xy(-69.0, 44.0);
/// // PROJ: echo "44 -69" | cs2cs -f %.6f EPSG:4326 EPSG:32619 -> 500000.000000 4871872.840767
/// assert!((p.x - 500_000.0).abs() < 1e-6 && (p.y - 4_871_872.840767).abs() < 1e-3);
/// ```
#[derive(Debug, Clone)]
pub struct Frame {
    kind: FrameKind,
}

#[derive(Debug, Clone)]
enum FrameKind {
    Utm(Utm),
    Projected(Box<ProjectedCrs>),
}

/// The transverse Mercator series of one UTM zone.
#[derive(Debug, Clone)]
struct Utm {
    zone: UtmZone,
    lon0_deg: f64,
    false_northing_m: f64,
    e: f64,
    e2: f64,
    /// k0 times the rectifying radius A.
    k0_a: f64,
    alpha: [f64; 6],
    beta: [f64; 6],
}

impl Frame {
    /// The frame of one UTM zone.
    #[must_use]
    pub fn new(zone: UtmZone) -> Self {
        Self {
            kind: FrameKind::Utm(Utm::new(zone)),
        }
    }

    /// The frame of any projected CRS (the UTM series is not used, even for a UTM code: see
    /// [`Frame::from_epsg`]).
    #[must_use]
    pub fn projected(crs: ProjectedCrs) -> Self {
        Self {
            kind: FrameKind::Projected(Box::new(crs)),
        }
    }

    /// The frame of an EPSG code: a WGS84 UTM zone through the Krüger series, any other
    /// projected CRS through [`ProjectedCrs`], checked to fit `first_position` when given
    /// ([`ProjectedCrs::check_fits`]).
    ///
    /// # Errors
    /// [`CoreError::UnknownEpsg`], [`CoreError::NotProjected`] (naming the CRS that fits
    /// `first_position`, or 0 without it), [`CoreError::CrsFarFromIncident`].
    pub fn from_epsg(code: u32, first_position: Option<[f64; 2]>) -> Result<Self, CoreError> {
        if let Ok(zone) = UtmZone::from_epsg(code) {
            return Ok(Self::new(zone));
        }
        let fitting = first_position
            .and_then(|[lon, lat]| fitting_epsg(lon, lat).ok())
            .unwrap_or(0);
        let crs = ProjectedCrs::from_epsg(code, fitting)?;
        if let Some([lon, lat]) = first_position {
            crs.check_fits(lon, lat)?;
        }
        Ok(Self::projected(crs))
    }

    /// The frame seekgrid chooses for a position: its UTM zone within 80° S..84° N, UPS
    /// beyond ([`fitting_epsg`]).
    ///
    /// # Errors
    /// [`CoreError::BadPosition`] for an invalid position.
    pub fn fitting(lon_deg: f64, lat_deg: f64) -> Result<Self, CoreError> {
        Self::from_epsg(fitting_epsg(lon_deg, lat_deg)?, Some([lon_deg, lat_deg]))
    }

    /// The frame for the zone holding a position (see [`UtmZone::for_position`]).
    ///
    /// # Errors
    /// [`CoreError::BadPosition`] for an invalid position.
    pub fn for_position(lon_deg: f64, lat_deg: f64) -> Result<Self, CoreError> {
        Ok(Self::new(UtmZone::for_position(lon_deg, lat_deg)?))
    }

    /// The UTM zone; `None` for another projected CRS.
    #[must_use]
    pub fn zone(&self) -> Option<UtmZone> {
        match &self.kind {
            FrameKind::Utm(u) => Some(u.zone),
            FrameKind::Projected(_) => None,
        }
    }

    /// The projected CRS when the frame is not a UTM zone.
    #[must_use]
    pub fn projected_crs(&self) -> Option<&ProjectedCrs> {
        match &self.kind {
            FrameKind::Utm(_) => None,
            FrameKind::Projected(p) => Some(p),
        }
    }

    /// EPSG code of the frame.
    #[must_use]
    pub fn epsg(&self) -> u32 {
        match &self.kind {
            FrameKind::Utm(u) => u.zone.epsg(),
            FrameKind::Projected(p) => p.epsg(),
        }
    }

    /// Central meridian (longitude of origin) of the projection, degrees east.
    #[must_use]
    pub fn central_meridian_deg(&self) -> f64 {
        match &self.kind {
            FrameKind::Utm(u) => u.lon0_deg,
            FrameKind::Projected(p) => p.central_meridian_deg(),
        }
    }

    /// Longitude, latitude (degrees) to easting, northing (metres). No range check: callers
    /// validate input positions with [`Frame::checked_to_xy`]. NaN where a non-UTM CRS cannot
    /// project the position.
    #[must_use]
    pub fn to_xy(&self, lon_deg: f64, lat_deg: f64) -> Coord<f64> {
        match &self.kind {
            FrameKind::Utm(u) => u.to_xy(lon_deg, lat_deg),
            FrameKind::Projected(p) => p.to_xy(lon_deg, lat_deg).unwrap_or(Coord {
                x: f64::NAN,
                y: f64::NAN,
            }),
        }
    }

    /// Like [`Frame::to_xy`], refusing positions that are not valid WGS84 degrees (beyond
    /// 80° S..84° N in a UTM frame) or that the CRS cannot project.
    ///
    /// # Errors
    /// [`CoreError::BadPosition`] when lon/lat are not finite or out of range.
    pub fn checked_to_xy(&self, lon_deg: f64, lat_deg: f64) -> Result<Coord<f64>, CoreError> {
        match &self.kind {
            FrameKind::Utm(u) => {
                check_position(lon_deg, lat_deg)?;
                Ok(u.to_xy(lon_deg, lat_deg))
            }
            FrameKind::Projected(p) => {
                if (-180.0..=180.0).contains(&lon_deg) {
                    p.to_xy(lon_deg, lat_deg)
                } else {
                    Err(CoreError::BadPosition {
                        lon: lon_deg,
                        lat: lat_deg,
                    })
                }
            }
        }
    }

    /// Meridian convergence at a position, degrees: the angle from true north clockwise to grid
    /// north. A true bearing b becomes the grid bearing `b - convergence`.
    #[must_use]
    pub fn convergence_deg(&self, lon_deg: f64, lat_deg: f64) -> f64 {
        match &self.kind {
            FrameKind::Utm(u) => u.convergence_deg(lon_deg, lat_deg),
            FrameKind::Projected(p) => p.convergence_deg(lon_deg, lat_deg),
        }
    }

    /// Converts a true bearing (degrees clockwise from true north) at a position to a grid
    /// bearing (degrees clockwise from grid north) in this frame.
    #[must_use]
    pub fn true_to_grid_bearing_deg(&self, bearing_deg: f64, lon_deg: f64, lat_deg: f64) -> f64 {
        crate::units::normalise_deg(bearing_deg - self.convergence_deg(lon_deg, lat_deg))
    }

    /// Easting, northing (metres) to longitude, latitude (degrees). NaN where a non-UTM CRS
    /// cannot invert the point.
    #[must_use]
    pub fn to_lon_lat(&self, p: Coord<f64>) -> (f64, f64) {
        match &self.kind {
            FrameKind::Utm(u) => u.to_lon_lat(p),
            FrameKind::Projected(c) => c.to_lon_lat(p).unwrap_or((f64::NAN, f64::NAN)),
        }
    }
}

impl Utm {
    fn new(zone: UtmZone) -> Self {
        let f = WGS84_F;
        let n = f / (2.0 - f);
        let (n2, n3) = (n * n, n * n * n);
        let (n4, n5, n6) = (n3 * n, n3 * n2, n3 * n3);
        let e2 = f * (2.0 - f);
        // Karney (2011) eq. (14): rectifying radius.
        let a_rect = WGS84_A / (1.0 + n) * (1.0 + n2 / 4.0 + n4 / 64.0 + n6 / 256.0);
        // Karney (2011) eq. (35): coefficients of the forward series.
        let alpha = [
            n / 2.0 - 2.0 * n2 / 3.0 + 5.0 * n3 / 16.0 + 41.0 * n4 / 180.0 - 127.0 * n5 / 288.0
                + 7891.0 * n6 / 37800.0,
            13.0 * n2 / 48.0 - 3.0 * n3 / 5.0 + 557.0 * n4 / 1440.0 + 281.0 * n5 / 630.0
                - 1_983_433.0 * n6 / 1_935_360.0,
            61.0 * n3 / 240.0 - 103.0 * n4 / 140.0
                + 15061.0 * n5 / 26880.0
                + 167_603.0 * n6 / 181_440.0,
            49561.0 * n4 / 161_280.0 - 179.0 * n5 / 168.0 + 6_601_661.0 * n6 / 7_257_600.0,
            34729.0 * n5 / 80640.0 - 3_418_889.0 * n6 / 1_995_840.0,
            212_378_941.0 * n6 / 319_334_400.0,
        ];
        // Karney (2011) eq. (36): coefficients of the inverse series.
        let beta = [
            n / 2.0 - 2.0 * n2 / 3.0 + 37.0 * n3 / 96.0 - n4 / 360.0 - 81.0 * n5 / 512.0
                + 96199.0 * n6 / 604_800.0,
            n2 / 48.0 + n3 / 15.0 - 437.0 * n4 / 1440.0 + 46.0 * n5 / 105.0
                - 1_118_711.0 * n6 / 3_870_720.0,
            17.0 * n3 / 480.0 - 37.0 * n4 / 840.0 - 209.0 * n5 / 4480.0 + 5569.0 * n6 / 90720.0,
            4397.0 * n4 / 161_280.0 - 11.0 * n5 / 504.0 - 830_251.0 * n6 / 7_257_600.0,
            4583.0 * n5 / 161_280.0 - 108_847.0 * n6 / 3_991_680.0,
            20_648_693.0 * n6 / 638_668_800.0,
        ];
        let false_northing_m = match zone.hemisphere {
            Hemisphere::North => 0.0,
            Hemisphere::South => UTM_FALSE_NORTHING_SOUTH,
        };
        Self {
            zone,
            lon0_deg: zone.central_meridian_deg(),
            false_northing_m,
            e: e2.sqrt(),
            e2,
            k0_a: UTM_K0 * a_rect,
            alpha,
            beta,
        }
    }

    fn conformal_tau(&self, tau: f64) -> f64 {
        // Karney (2011) eq. (7)-(9).
        let sigma = (self.e * (self.e * tau / tau.hypot(1.0)).atanh()).sinh();
        tau * sigma.hypot(1.0) - sigma * tau.hypot(1.0)
    }

    fn to_xy(&self, lon_deg: f64, lat_deg: f64) -> Coord<f64> {
        let (xi, eta, _, _) = self.forward_series(lon_deg, lat_deg);
        Coord {
            x: UTM_FALSE_EASTING + self.k0_a * eta,
            y: self.false_northing_m + self.k0_a * xi,
        }
    }

    /// Returns (xi, eta, p', q') of Karney (2011) eq. (11) and (16).
    fn forward_series(&self, lon_deg: f64, lat_deg: f64) -> (f64, f64, f64, f64) {
        let lam = wrap_deg(lon_deg - self.lon0_deg).to_radians();
        let phi = lat_deg.to_radians();
        let tau = phi.tan();
        let taup = self.conformal_tau(tau);
        let xip = taup.atan2(lam.cos());
        let etap = (lam.sin() / taup.hypot(lam.cos())).asinh();
        let (mut xi, mut eta) = (xip, etap);
        let (mut p, mut q) = (1.0, 0.0);
        for (j, a) in self.alpha.iter().enumerate() {
            let k = 2.0 * (j as f64 + 1.0);
            let (s, c) = (k * xip).sin_cos();
            let (sh, ch) = ((k * etap).sinh(), (k * etap).cosh());
            xi += a * s * ch;
            eta += a * c * sh;
            p += k * a * c * ch;
            q += k * a * s * sh;
        }
        (xi, eta, p, q)
    }

    fn convergence_deg(&self, lon_deg: f64, lat_deg: f64) -> f64 {
        let lam = wrap_deg(lon_deg - self.lon0_deg).to_radians();
        let taup = self.conformal_tau(lat_deg.to_radians().tan());
        let (_, _, p, q) = self.forward_series(lon_deg, lat_deg);
        // Karney (2011) eq. (10) and (16): gamma = gamma' + gamma''.
        let gamma_prime = (taup / taup.hypot(1.0) * lam.tan()).atan();
        let gamma_second = q.atan2(p);
        (gamma_prime + gamma_second).to_degrees()
    }

    fn to_lon_lat(&self, p: Coord<f64>) -> (f64, f64) {
        let xi = (p.y - self.false_northing_m) / self.k0_a;
        let eta = (p.x - UTM_FALSE_EASTING) / self.k0_a;
        let (mut xip, mut etap) = (xi, eta);
        for (j, b) in self.beta.iter().enumerate() {
            let k = 2.0 * (j as f64 + 1.0);
            let (s, c) = (k * xi).sin_cos();
            xip -= b * s * (k * eta).cosh();
            etap -= b * c * (k * eta).sinh();
        }
        // Karney (2011) eq. (18)-(21): tau' from xi', eta', then Newton for tau.
        let sh = etap.sinh();
        let (s, c) = xip.sin_cos();
        let r = sh.hypot(c);
        let lam = sh.atan2(c);
        let taup = s / r;
        let mut tau = taup;
        for _ in 0..6 {
            let tau_i = self.conformal_tau(tau);
            let dtau = (taup - tau_i) / tau_i.hypot(1.0) * (1.0 + (1.0 - self.e2) * tau * tau)
                / ((1.0 - self.e2) * tau.hypot(1.0));
            tau += dtau;
            if dtau.abs() < 1e-15 * tau.abs().max(1.0) {
                break;
            }
        }
        let lat = tau.atan().to_degrees();
        let lon = wrap_deg(lam.to_degrees() + self.lon0_deg);
        (lon, lat)
    }
}

/// Wraps an angle in degrees into [-180, 180).
fn wrap_deg(a: f64) -> f64 {
    (a + 180.0).rem_euclid(360.0) - 180.0
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn zone_is_chosen_from_longitude_with_norway_and_svalbard_exceptions() {
        // UTM zone rules: common practice (UTM standard, DMA TM 8358.2).
        assert_eq!(UtmZone::for_position(-69.0, 44.0).unwrap().epsg(), 32619);
        assert_eq!(UtmZone::for_position(-62.95, 44.12).unwrap().epsg(), 32620);
        assert_eq!(UtmZone::for_position(151.2, -33.9).unwrap().epsg(), 32756);
        assert_eq!(UtmZone::for_position(5.3, 60.4).unwrap().epsg(), 32632);
        assert_eq!(UtmZone::for_position(15.6, 78.2).unwrap().epsg(), 32633);
        assert_eq!(UtmZone::for_position(180.0, 0.0).unwrap().zone(), 1);
        assert!(UtmZone::for_position(f64::NAN, 0.0).is_err());
        assert!(UtmZone::for_position(0.0, 89.0).is_err());
    }

    #[test]
    fn crs_text_is_parsed_and_non_utm_codes_are_refused() {
        assert_eq!(UtmZone::parse("EPSG:32620").unwrap().zone(), 20);
        assert_eq!(
            UtmZone::parse("epsg:32735").unwrap().hemisphere(),
            Hemisphere::South
        );
        assert!(matches!(
            UtmZone::parse("EPSG:4326"),
            Err(CoreError::UnsupportedCrs { .. })
        ));
        assert!(matches!(
            UtmZone::parse("32620"),
            Err(CoreError::BadCrsText { .. })
        ));
    }

    #[test]
    fn central_meridian_maps_to_false_easting() {
        // Definition of UTM (k0 0.9996, false easting 500 km): common practice.
        let f = Frame::new(UtmZone::from_epsg(32619).unwrap());
        let p = f.to_xy(-69.0, 0.0);
        assert_abs_diff_eq!(p.x, 500_000.0, epsilon = 1e-9);
        assert_abs_diff_eq!(p.y, 0.0, epsilon = 1e-9);
    }

    #[test]
    fn forward_then_inverse_returns_the_position() {
        let f = Frame::new(UtmZone::from_epsg(32620).unwrap());
        for &(lon, lat) in &[
            (-63.0, 44.0),
            (-60.1, 10.0),
            (-66.0, 70.0),
            (-58.5, 0.5),
            (-70.0, 50.0),
        ] {
            let (lon2, lat2) = f.to_lon_lat(f.to_xy(lon, lat));
            assert_abs_diff_eq!(lon2, lon, epsilon = 1e-11);
            assert_abs_diff_eq!(lat2, lat, epsilon = 1e-11);
        }
        let s = Frame::new(UtmZone::from_epsg(32756).unwrap());
        let (lon2, lat2) = s.to_lon_lat(s.to_xy(151.2, -33.9));
        assert_abs_diff_eq!(lon2, 151.2, epsilon = 1e-11);
        assert_abs_diff_eq!(lat2, -33.9, epsilon = 1e-11);
    }

    #[test]
    fn convergence_is_zero_on_the_central_meridian_and_signed_off_it() {
        // Sign convention: grid north lies east of true north east of the central meridian in
        // the northern hemisphere (gamma ~ dlon * sin(lat)); common practice.
        let f = Frame::new(UtmZone::from_epsg(32620).unwrap());
        assert_abs_diff_eq!(f.convergence_deg(-63.0, 44.0), 0.0, epsilon = 1e-12);
        let g = f.convergence_deg(-61.0, 44.0);
        assert!((g - 2.0 * 44f64.to_radians().sin()).abs() < 0.01, "{g}");
        assert!(f.convergence_deg(-65.0, 44.0) < 0.0);
    }

    #[test]
    fn a_utm_zone_through_proj4rs_agrees_with_the_kruger_series() {
        // Two implementations of the same CRS (proj4rs's tmerc, checked against cs2cs in
        // `projected`, and the series here): positions within 1 cm, convergence within 1e-4
        // degrees (the numerical step of ProjectedCrs::convergence_deg).
        let series = Frame::new(UtmZone::from_epsg(32620).unwrap());
        let other = Frame::projected(ProjectedCrs::from_epsg(32620, 0).unwrap());
        assert_eq!(other.zone(), None);
        assert_eq!(other.epsg(), 32620);
        assert_abs_diff_eq!(other.central_meridian_deg(), -63.0, epsilon = 1e-12);
        for &(lon, lat) in &[(-63.0, 44.0), (-61.0, 10.0), (-65.5, 70.0), (-60.2, -30.0)] {
            let (a, b) = (series.to_xy(lon, lat), other.to_xy(lon, lat));
            assert!((a.x - b.x).hypot(a.y - b.y) < 0.01, "{a:?} {b:?}");
            let (lon2, lat2) = other.to_lon_lat(b);
            assert_abs_diff_eq!(lon2, lon, epsilon = 1e-9);
            assert_abs_diff_eq!(lat2, lat, epsilon = 1e-9);
            let (ga, gb) = (
                series.convergence_deg(lon, lat),
                other.convergence_deg(lon, lat),
            );
            assert_abs_diff_eq!(ga, gb, epsilon = 1e-4);
        }
    }

    #[test]
    fn a_frame_is_chosen_by_epsg_code_or_position_including_the_polar_caps() {
        let utm = Frame::from_epsg(32630, Some([-3.19, 55.95])).unwrap();
        assert_eq!(utm.zone().map(|z| z.epsg()), Some(32630));
        let bng = Frame::from_epsg(27700, Some([-3.19, 55.95])).unwrap();
        assert!(bng.zone().is_none() && bng.projected_crs().is_some());
        // PROJ 9.1.1 cs2cs, as in `projected`: 325784.7480 673635.7681.
        let p = bng.checked_to_xy(-3.19, 55.95).unwrap();
        assert!(
            (p.x - 325_784.748).hypot(p.y - 673_635.768_1) < 0.01,
            "{p:?}"
        );
        assert!(matches!(
            Frame::from_epsg(4326, Some([-3.19, 55.95])),
            Err(CoreError::NotProjected { fitting: 32630, .. })
        ));
        assert!(matches!(
            Frame::from_epsg(27700, Some([174.78, -41.29])),
            Err(CoreError::CrsFarFromIncident { fitting: 32760, .. })
        ));
        // Beyond the UTM range (UTM standard): UPS north and south.
        assert_eq!(Frame::fitting(10.0, 86.0).unwrap().epsg(), 32661);
        assert_eq!(Frame::fitting(10.0, -85.0).unwrap().epsg(), 32761);
        assert_eq!(Frame::fitting(10.0, 60.0).unwrap().epsg(), 32632);
        let ups = Frame::fitting(10.0, 89.5).unwrap();
        let (lon, lat) = ups.to_lon_lat(ups.checked_to_xy(10.0, 89.5).unwrap());
        assert_abs_diff_eq!(lon, 10.0, epsilon = 1e-9);
        assert_abs_diff_eq!(lat, 89.5, epsilon = 1e-9);
        // UPS north (lon_0 = 0): x = rho sin(lon), y = -rho cos(lon) (Snyder 1987, USGS PP
        // 1395, eq. 21-30, 21-31), so true north has grid bearing -lon and the convergence
        // (true north clockwise to grid north) is +lon, positive east as in UTM (computed).
        assert_abs_diff_eq!(ups.convergence_deg(10.0, 89.5), 10.0, epsilon = 1e-3);
        assert_abs_diff_eq!(ups.convergence_deg(-120.0, 85.0), -120.0, epsilon = 1e-3);
    }
}
