//! Any projected CRS by EPSG code, for working frames other than a WGS84 UTM zone (national
//! grids such as EPSG:27700, 2193, 2056, US State Plane zones, and the polar stereographic
//! EPSG:3413 / 3031 and the UPS zones beyond the UTM range).
//!
//! The projection is computed by `proj4rs` (a pure-Rust port of PROJ.4) from the PROJ.4 string
//! and the WKT that `crs-definitions` bundles for each EPSG code, so the default build needs no
//! system library. A datum shift is the 7-parameter Helmert (`towgs84`) of that definition; PROJ
//! may choose a grid-based transformation instead where its grids are installed (OSTN15 for
//! EPSG:27700, for instance), which differs by up to a few metres: see the tests.
//!
//! The UTM frame ([`crate::Frame`]) keeps its own Krüger series: it is faster and checked to the
//! millimetre; this module is for the CRSs it does not cover.

use crate::error::CoreError;
use crate::frame::UtmZone;
use geo::{Coord, Distance, Geodesic, Point};
use proj4rs::proj::Proj;

/// EPSG code of the polar stereographic CRS chosen north of the UTM range (84° N): WGS 84 /
/// UPS North (k0 0.994 at the pole, UTM standard DMA TM 8358.2). Its scale error stays within
/// 0.6 % north of 80° N, where EPSG:3413 (true scale at 70° N) is about 3 % short at the pole;
/// EPSG:3413 and 3031 can still be given by code.
pub const POLAR_NORTH_EPSG: u32 = 32661;
/// EPSG code of the polar stereographic CRS chosen south of the UTM range (80° S): WGS 84 /
/// UPS South (k0 0.994 at the pole).
pub const POLAR_SOUTH_EPSG: u32 = 32761;
/// Beyond this relative scale error |k - 1| at the incident a CRS is refused as far from its
/// area of use. 5 % admits EPSG:3413 / 3031 over their polar caps (k from about 0.97 at the
/// pole to 1.04 at 60°, Snyder 1987, USGS PP 1395, §21) and UTM well beyond its zone edges
/// (0.1 %); until lengths are laid out as ground metres the scale error goes into them.
pub const MAX_SCALE_ERROR: f64 = 0.05;

/// The EPSG code of the projected CRS seekgrid chooses for a position: its WGS84 UTM zone
/// within 80° S..84° N, the polar stereographic [`POLAR_NORTH_EPSG`] north of it and
/// [`POLAR_SOUTH_EPSG`] south of it.
///
/// # Errors
/// [`CoreError::BadPosition`] when lon/lat are not finite or outside -180..=180, -90..=90.
pub fn fitting_epsg(lon_deg: f64, lat_deg: f64) -> Result<u32, CoreError> {
    if !(lon_deg.is_finite()
        && lat_deg.is_finite()
        && (-180.0..=180.0).contains(&lon_deg)
        && (-90.0..=90.0).contains(&lat_deg))
    {
        return Err(CoreError::BadPosition {
            lon: lon_deg,
            lat: lat_deg,
        });
    }
    Ok(if lat_deg > 84.0 {
        POLAR_NORTH_EPSG
    } else if lat_deg < -80.0 {
        POLAR_SOUTH_EPSG
    } else {
        UtmZone::for_position(lon_deg, lat_deg)?.epsg()
    })
}

/// A projected CRS from the bundled EPSG definitions.
///
/// `to_xy` takes longitude then latitude in WGS84 degrees and returns easting and northing in
/// metres (a CRS in feet is converted; [`ProjectedCrs::metres_per_unit`] gives the factor).
#[derive(Clone)]
pub struct ProjectedCrs {
    code: u32,
    proj4: &'static str,
    wkt: &'static str,
    proj: Proj,
    wgs84: Proj,
}

impl std::fmt::Debug for ProjectedCrs {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("ProjectedCrs")
            .field("code", &self.code)
            .field("proj4", &self.proj4)
            .finish_non_exhaustive()
    }
}

impl ProjectedCrs {
    /// The CRS of an EPSG code. `fitting` is named in the error when the code is not projected
    /// (give [`fitting_epsg`] of the incident's first position).
    ///
    /// # Errors
    /// [`CoreError::UnknownEpsg`] when the bundled definitions do not hold the code or cannot
    /// be read; [`CoreError::NotProjected`] for a geographic or geocentric CRS.
    pub fn from_epsg(code: u32, fitting: u32) -> Result<Self, CoreError> {
        let def = u16::try_from(code)
            .ok()
            .and_then(crs_definitions::from_code)
            .ok_or(CoreError::UnknownEpsg { code })?;
        let proj =
            Proj::from_proj_string(def.proj4).map_err(|_| CoreError::UnknownEpsg { code })?;
        if proj.is_latlong() || proj.is_geocent() {
            return Err(CoreError::NotProjected { code, fitting });
        }
        let wgs84 = Proj::from_proj_string("+proj=longlat +datum=WGS84 +no_defs")
            .map_err(|_| CoreError::UnknownEpsg { code: 4326 })?;
        Ok(Self {
            code,
            proj4: def.proj4,
            wkt: def.wkt,
            proj,
            wgs84,
        })
    }

    /// The EPSG code.
    #[must_use]
    pub fn epsg(&self) -> u32 {
        self.code
    }

    /// The PROJ.4 definition used.
    #[must_use]
    pub fn proj4(&self) -> &'static str {
        self.proj4
    }

    /// The WKT (OGC 1) of the CRS, as a `.prj` or `.aux.xml` sidecar carries it.
    #[must_use]
    pub fn wkt(&self) -> &'static str {
        self.wkt
    }

    /// Longitude of origin (`lon_0`) of the projection, degrees east.
    #[must_use]
    pub fn central_meridian_deg(&self) -> f64 {
        self.proj.longitude_of_origin().to_degrees()
    }

    /// Metres per unit of the CRS's own axes (1 for metres, 0.3048006096 for US survey feet).
    #[must_use]
    pub fn metres_per_unit(&self) -> f64 {
        self.proj.to_meter()
    }

    /// WGS84 longitude, latitude (degrees) to easting, northing (metres).
    ///
    /// # Errors
    /// [`CoreError::BadPosition`] when the position is not valid or the CRS cannot project it.
    pub fn to_xy(&self, lon_deg: f64, lat_deg: f64) -> Result<Coord<f64>, CoreError> {
        let bad = CoreError::BadPosition {
            lon: lon_deg,
            lat: lat_deg,
        };
        if !(lon_deg.is_finite() && lat_deg.is_finite() && (-90.0..=90.0).contains(&lat_deg)) {
            return Err(bad);
        }
        let mut p = (lon_deg.to_radians(), lat_deg.to_radians(), 0.0);
        proj4rs::transform::transform(&self.wgs84, &self.proj, &mut p).map_err(|_| bad.clone())?;
        let k = self.metres_per_unit();
        if p.0.is_finite() && p.1.is_finite() {
            Ok(Coord {
                x: p.0 * k,
                y: p.1 * k,
            })
        } else {
            Err(bad)
        }
    }

    /// Easting, northing (metres) to WGS84 longitude, latitude (degrees).
    ///
    /// # Errors
    /// [`CoreError::BadPosition`] (with the metres given) when the CRS cannot invert them.
    pub fn to_lon_lat(&self, p: Coord<f64>) -> Result<(f64, f64), CoreError> {
        let k = self.metres_per_unit();
        let mut q = (p.x / k, p.y / k, 0.0);
        proj4rs::transform::transform(&self.proj, &self.wgs84, &mut q)
            .map_err(|_| CoreError::BadPosition { lon: p.x, lat: p.y })?;
        let (lon, lat) = (q.0.to_degrees(), q.1.to_degrees());
        if lon.is_finite() && lat.is_finite() {
            Ok((lon, lat))
        } else {
            Err(CoreError::BadPosition { lon: p.x, lat: p.y })
        }
    }

    /// The point scale factor k at a position: projected length over geodesic length of a
    /// short (about 10 m) east-west step. A conformal projection has the same k in every
    /// direction, so a ground length L is L * k metres in the CRS.
    ///
    /// # Errors
    /// [`CoreError::BadPosition`] when the CRS cannot project the position.
    pub fn scale_factor(&self, lon_deg: f64, lat_deg: f64) -> Result<f64, CoreError> {
        // About 10 m east, shrinking with cos(lat); never across the pole.
        let step = 1e-4 / lat_deg.to_radians().cos().max(1e-3);
        let a = self.to_xy(lon_deg - step / 2.0, lat_deg)?;
        let b = self.to_xy(lon_deg + step / 2.0, lat_deg)?;
        let projected = (b.x - a.x).hypot(b.y - a.y);
        let ground = Geodesic.distance(
            Point::new(lon_deg - step / 2.0, lat_deg),
            Point::new(lon_deg + step / 2.0, lat_deg),
        );
        if ground > 0.0 && projected.is_finite() {
            Ok(projected / ground)
        } else {
            Err(CoreError::BadPosition {
                lon: lon_deg,
                lat: lat_deg,
            })
        }
    }

    /// Meridian convergence at a position, degrees: the angle from true north clockwise to
    /// grid north, from the grid direction of a short (about 1 m) step north (south at the
    /// north pole). NaN where the CRS cannot project the position.
    #[must_use]
    pub fn convergence_deg(&self, lon_deg: f64, lat_deg: f64) -> f64 {
        let step = if lat_deg > 89.99 { -1e-5 } else { 1e-5 };
        match (
            self.to_xy(lon_deg, lat_deg),
            self.to_xy(lon_deg, lat_deg + step),
        ) {
            (Ok(a), Ok(b)) => {
                let (dx, dy) = ((b.x - a.x) * step.signum(), (b.y - a.y) * step.signum());
                -dx.atan2(dy).to_degrees()
            }
            _ => f64::NAN,
        }
    }

    /// Refuses the CRS for an incident at (`lon_deg`, `lat_deg`) when it cannot project the
    /// position there and back (to 1e-7°, about 1 cm) or stretches distances there by more
    /// than [`MAX_SCALE_ERROR`]: a CRS far from its area of use.
    ///
    /// # Errors
    /// [`CoreError::CrsFarFromIncident`] naming [`fitting_epsg`] of the position;
    /// [`CoreError::BadPosition`] when the position itself is invalid.
    pub fn check_fits(&self, lon_deg: f64, lat_deg: f64) -> Result<(), CoreError> {
        let fitting = fitting_epsg(lon_deg, lat_deg)?;
        let round_trip = self
            .to_xy(lon_deg, lat_deg)
            .and_then(|p| self.to_lon_lat(p))
            .map(|(lon, lat)| {
                ((lon - lon_deg + 180.0).rem_euclid(360.0) - 180.0).abs() < 1e-7
                    && (lat - lat_deg).abs() < 1e-7
            })
            .unwrap_or(false);
        let k = self.scale_factor(lon_deg, lat_deg).unwrap_or(f64::NAN);
        let error = (k - 1.0).abs();
        if round_trip && error <= MAX_SCALE_ERROR {
            Ok(())
        } else {
            Err(CoreError::CrsFarFromIncident {
                code: self.code,
                lon: lon_deg,
                lat: lat_deg,
                scale_error_pct: error * 100.0,
                limit_pct: MAX_SCALE_ERROR * 100.0,
                fitting,
            })
        }
    }
}

/// EPSG code of the British National Grid (OSGB 1936), whose grid references carry letters.
pub const BRITISH_NATIONAL_GRID_EPSG: u32 = 27700;

/// The Ordnance Survey grid reference of a British National Grid easting and northing
/// (metres), `digits` figures each (1..=5; 4 gives `NT 2543 7329`, 10 m), truncated as the
/// Ordnance Survey does. Letters: 500 km squares S, T, N, O, H, J from the false origin, then
/// 100 km squares A-Z without I, five to a row from the north-west corner (Ordnance Survey,
/// "A guide to coordinate systems in Great Britain"; common practice).
///
/// `None` when `digits` is not in 1..=5 or the point is outside the lettered squares
/// (0..700 km east, 0..1300 km north).
#[must_use]
pub fn bng_grid_reference(easting_m: f64, northing_m: f64, digits: u8) -> Option<String> {
    if !(1..=5).contains(&digits)
        || !(0.0..700_000.0).contains(&easting_m)
        || !(0.0..1_300_000.0).contains(&northing_m)
    {
        return None;
    }
    let e100k = (easting_m / 100_000.0).floor() as i64;
    let n100k = (northing_m / 100_000.0).floor() as i64;
    // Letter indices 0..25 over A-Z without I (I skipped by adding one from H on).
    let mut l1 = (19 - n100k) - (19 - n100k).rem_euclid(5) + (e100k + 10) / 5;
    let mut l2 = ((19 - n100k) * 5).rem_euclid(25) + e100k.rem_euclid(5);
    if l1 > 7 {
        l1 += 1;
    }
    if l2 > 7 {
        l2 += 1;
    }
    let letter = |i: i64| char::from(b'A' + u8::try_from(i).unwrap_or(25));
    let unit = 10f64.powi(5 - i32::from(digits));
    let e = (easting_m.rem_euclid(100_000.0) / unit).floor() as u32;
    let n = (northing_m.rem_euclid(100_000.0) / unit).floor() as u32;
    let w = usize::from(digits);
    Some(format!("{}{} {e:0w$} {n:0w$}", letter(l1), letter(l2)))
}

#[cfg(test)]
mod tests {
    use super::*;

    /// `echo "lat lon" | cs2cs -f %.4f EPSG:4326 EPSG:code` with PROJ 9.1.1 (Debian proj-bin),
    /// as [lon, lat, easting, northing] in the CRS's own units; EPSG:2193 is printed northing
    /// first by cs2cs (its axis order) and is written here easting first.
    fn check_against_cs2cs(code: u32, rows: &[[f64; 4]], tolerance_units: f64) {
        let crs = ProjectedCrs::from_epsg(code, 0).unwrap();
        let k = crs.metres_per_unit();
        for &[lon, lat, e, n] in rows {
            let p = crs.to_xy(lon, lat).unwrap();
            let (de, dn) = (p.x / k - e, p.y / k - n);
            assert!(
                de.hypot(dn) <= tolerance_units,
                "EPSG:{code} at [{lon}, {lat}]: {} {} vs PROJ {e} {n}",
                p.x / k,
                p.y / k
            );
            let (lon2, lat2) = crs.to_lon_lat(p).unwrap();
            // Round trip to 1e-7 degrees (about 1 cm): with a Helmert shift proj4rs converts
            // geocentric to geodetic iteratively, observed within 1.3e-8 degrees (about 1 mm).
            assert!(
                (lon2 - lon).abs() < 1e-7 && (lat2 - lat).abs() < 1e-7,
                "EPSG:{code} round trip [{lon}, {lat}] -> [{lon2}, {lat2}]"
            );
        }
    }

    #[test]
    fn british_national_grid_agrees_with_proj_within_a_centimetre() {
        // PROJ 9.1.1 cs2cs (without the OSTN15 grid) uses the same Helmert OSGB36 shift as the
        // bundled definition; observed differences 3-4 mm (geocentric iteration). With OSTN15
        // installed PROJ differs by up to about 2 m (the Helmert's stated accuracy).
        check_against_cs2cs(
            27700,
            &[
                [-3.19, 55.95, 325_784.748_0, 673_635.768_1],
                [-5.71, 50.07, 134_622.317_4, 25_471.598_7],
                [-0.8, 60.8, 465_410.615_0, 1_213_604.865_8],
                [-0.12, 51.5, 530_591.166_4, 179_571.065_4],
            ],
            0.01,
        );
    }

    #[test]
    fn new_zealand_swiss_and_state_plane_grids_agree_with_proj_within_a_centimetre() {
        // PROJ 9.1.1 cs2cs, same definitions (NZGD2000 and CH1903+ by null / 3-parameter shift).
        check_against_cs2cs(
            2193,
            &[
                [174.78, -41.29, 1_749_045.802_9, 5_427_521.383_4],
                [174.76, -36.85, 1_756_911.944_9, 5_920_321.818_2],
                [170.5, -45.87, 1_405_968.155_7, 4_917_356.908_8],
            ],
            0.01,
        );
        check_against_cs2cs(
            2056,
            &[
                [7.45, 46.95, 2_600_865.384_6, 1_199_879.680_8],
                [8.54, 47.37, 2_683_186.285_6, 1_247_156.744_1],
                [6.1, 46.0, 2_496_293.876_8, 1_095_158.060_3],
            ],
            0.01,
        );
        // NAD83 / Massachusetts Mainland (ftUS): 0.033 US ft is 1 cm.
        check_against_cs2cs(
            2249,
            &[
                [-71.06, 42.36, 775_086.491_3, 2_956_519.888_0],
                [-72.5, 42.0, 384_361.330_9, 2_826_618.129_4],
            ],
            0.01 / 0.304_800_609_6,
        );
    }

    #[test]
    fn polar_stereographic_grids_agree_with_proj_within_a_centimetre() {
        // PROJ 9.1.1 cs2cs, same definitions (WGS84, no datum shift).
        check_against_cs2cs(
            3413,
            &[
                [-45.0, 75.0, 0.0, -1_633_879.497_5],
                [10.0, 89.0, 88_738.707_9, -62_135.512_2],
                [-150.0, 65.0, -2_656_535.253_2, 711_816.475_8],
                [100.0, 80.0, 622_858.294_3, 889_533.831_5],
            ],
            0.01,
        );
        check_against_cs2cs(
            3031,
            &[
                [0.0, -75.0, 0.0, 1_638_783.238_4],
                [100.0, -89.0, 107_004.374_0, -18_867.758_2],
                [140.0, -66.0, 1_700_126.476_4, -2_026_131.836_1],
                [-160.0, -78.0, -447_507.245_2, -1_229_516.051_3],
            ],
            0.01,
        );
    }

    #[test]
    fn ups_agrees_with_proj_within_a_centimetre() {
        // PROJ 9.1.1 cs2cs, same definitions; cs2cs prints UPS northing first (EPSG axis order).
        check_against_cs2cs(
            32661,
            &[
                [10.0, 89.0, 2_019_279.552_9, 1_890_660.222_2],
                [-150.0, 85.0, 1_722_271.304_3, 2_481_040.211_7],
                [100.0, 84.5, 2_601_797.657_2, 2_106_113.163_9],
            ],
            0.01,
        );
        check_against_cs2cs(
            32761,
            &[
                [0.0, -85.0, 2_000_000.0, 2_555_457.391_4],
                [100.0, -89.5, 2_054_668.890_1, 1_990_360.399_7],
                [-160.0, -80.5, 1_638_467.071_5, 1_006_696.442_6],
            ],
            0.01,
        );
    }

    #[test]
    fn scale_factor_is_the_defined_one_where_the_projection_is_true_to_it() {
        // Transverse Mercator: k = k0 on the central meridian; polar stereographic with a
        // standard parallel: k = 1 on it (Snyder 1987, USGS PP 1395, §8 and §21).
        // NZTM (GRS80, null shift, k0 0.9996, central meridian 173 E). A CRS on another
        // ellipsoid with a Helmert shift (EPSG:27700) gives k against WGS84 ground lengths,
        // which differs from its k0 by the shift's scale and the ellipsoids' radii (3e-5 there).
        let nztm = ProjectedCrs::from_epsg(2193, 0).unwrap();
        let k = nztm.scale_factor(173.0, -41.0).unwrap();
        assert!((k - 0.9996).abs() < 2e-8, "{k}");
        let ups = ProjectedCrs::from_epsg(POLAR_NORTH_EPSG, 0).unwrap();
        let k = ups.scale_factor(30.0, 89.99).unwrap();
        assert!((k - 0.994).abs() < 2e-6, "{k}");
        let north = ProjectedCrs::from_epsg(3413, 0).unwrap();
        let k = north.scale_factor(30.0, 70.0).unwrap();
        assert!((k - 1.0).abs() < 2e-8, "{k}");
        let south = ProjectedCrs::from_epsg(3031, 0).unwrap();
        let k = south.scale_factor(-120.0, -71.0).unwrap();
        assert!((k - 1.0).abs() < 2e-8, "{k}");
    }

    #[test]
    fn the_chosen_crs_is_utm_within_its_range_and_polar_stereographic_beyond() {
        // UTM limits 80 S..84 N (UTM standard, DMA TM 8358.2).
        assert_eq!(fitting_epsg(-3.19, 55.95).unwrap(), 32630);
        assert_eq!(fitting_epsg(15.0, 84.0).unwrap(), 32633);
        assert_eq!(fitting_epsg(15.0, 84.5).unwrap(), POLAR_NORTH_EPSG);
        assert_eq!(fitting_epsg(-60.0, -80.5).unwrap(), POLAR_SOUTH_EPSG);
        assert!(fitting_epsg(0.0, 91.0).is_err());
        assert!(fitting_epsg(f64::NAN, 0.0).is_err());
    }

    #[test]
    fn geographic_and_unknown_codes_are_refused_naming_a_fitting_crs() {
        let e = ProjectedCrs::from_epsg(4326, 32630).unwrap_err();
        assert_eq!(
            e,
            CoreError::NotProjected {
                code: 4326,
                fitting: 32630
            }
        );
        assert!(e.to_string().contains("\"EPSG:32630\""), "{e}");
        assert!(matches!(
            ProjectedCrs::from_epsg(4978, 32630),
            Err(CoreError::NotProjected { .. })
        ));
        assert_eq!(
            ProjectedCrs::from_epsg(1, 32630).unwrap_err(),
            CoreError::UnknownEpsg { code: 1 }
        );
        assert_eq!(
            ProjectedCrs::from_epsg(900_913, 32630).unwrap_err(),
            CoreError::UnknownEpsg { code: 900_913 }
        );
    }

    #[test]
    fn a_crs_far_from_the_incident_is_refused_naming_a_fitting_one() {
        let bng = ProjectedCrs::from_epsg(27700, 0).unwrap();
        assert!(bng.check_fits(-3.19, 55.95).is_ok());
        // British National Grid in New Zealand: no usable projection there.
        let e = bng.check_fits(174.78, -41.29).unwrap_err();
        assert!(
            matches!(e, CoreError::CrsFarFromIncident { fitting: 32760, .. }),
            "{e:?}"
        );
        assert!(e.to_string().contains("\"EPSG:32760\""), "{e}");
        // Antarctic polar stereographic in the Arctic.
        let south = ProjectedCrs::from_epsg(3031, 0).unwrap();
        let e = south.check_fits(10.0, 86.0).unwrap_err();
        assert!(
            matches!(e, CoreError::CrsFarFromIncident { fitting: 32661, .. }),
            "{e:?}"
        );
        let north = ProjectedCrs::from_epsg(3413, 0).unwrap();
        assert!(north.check_fits(10.0, 86.0).is_ok());
        assert!(north.check_fits(10.0, 61.0).is_ok());
        // UTM zone 30 N at 40 degrees of longitude from its central meridian.
        let utm = ProjectedCrs::from_epsg(32630, 0).unwrap();
        assert!(utm.check_fits(37.0, 10.0).is_err());
    }

    #[test]
    fn british_national_grid_references_match_the_frozen_pyproj_values() {
        // fixtures/reference/make_bng_fixtures.py: eastings and northings by pyproj (PROJ
        // 9.5.1, the same Helmert shift), letters from the Ordnance Survey's table.
        let text = include_str!("../../../fixtures/reference/bng_reference.txt");
        let bng = ProjectedCrs::from_epsg(BRITISH_NATIONAL_GRID_EPSG, 0).unwrap();
        let mut rows = 0;
        for line in text.lines().filter(|l| !l.starts_with('#')) {
            let f: Vec<&str> = line.split('|').collect();
            let num = |i: usize| f[i].parse::<f64>().unwrap();
            let p = bng.to_xy(num(0), num(1)).unwrap();
            assert!((p.x - num(2)).hypot(p.y - num(3)) < 0.01, "{line}: {p:?}");
            assert_eq!(
                bng_grid_reference(num(2), num(3), 5).unwrap(),
                f[4],
                "{line}"
            );
            assert_eq!(
                bng_grid_reference(num(2), num(3), 3).unwrap(),
                f[5],
                "{line}"
            );
            rows += 1;
        }
        assert_eq!(rows, 13);
    }

    #[test]
    fn british_national_grid_letters_are_those_of_the_ordnance_survey_squares() {
        // Squares' south-west corners: SV is the false origin, NT 300/600 km, HP 400/1200 km,
        // TQ 500/100 km (Ordnance Survey guide; common practice). The issue's
        // example NT 2543 7329.
        assert_eq!(bng_grid_reference(0.0, 0.0, 2).unwrap(), "SV 00 00");
        assert_eq!(
            bng_grid_reference(325_430.0, 673_290.0, 4).unwrap(),
            "NT 2543 7329"
        );
        assert_eq!(
            bng_grid_reference(499_999.9, 1_299_999.9, 5).unwrap(),
            "HP 99999 99999"
        );
        assert_eq!(
            bng_grid_reference(400_000.0, 1_200_000.0, 1).unwrap(),
            "HP 0 0"
        );
        assert_eq!(
            bng_grid_reference(500_000.0, 100_000.0, 3).unwrap(),
            "TQ 000 000"
        );
        assert_eq!(bng_grid_reference(-1.0, 10.0, 3), None);
        assert_eq!(bng_grid_reference(700_000.0, 10.0, 3), None);
        assert_eq!(bng_grid_reference(10.0, 1_300_000.0, 3), None);
        assert_eq!(bng_grid_reference(10.0, 10.0, 0), None);
        assert_eq!(bng_grid_reference(10.0, 10.0, 6), None);
        assert_eq!(bng_grid_reference(f64::NAN, 10.0, 3), None);
    }

    #[test]
    fn the_wkt_of_a_national_grid_names_its_epsg_authority() {
        // crs-definitions bundles the OGC WKT 1 of each code (from the EPSG registry).
        let bng = ProjectedCrs::from_epsg(27700, 0).unwrap();
        assert!(
            bng.wkt()
                .starts_with("PROJCS[\"OSGB 1936 / British National Grid\"")
        );
        assert!(bng.wkt().ends_with("AUTHORITY[\"EPSG\",\"27700\"]]"));
        assert!((bng.metres_per_unit() - 1.0).abs() < 1e-15);
    }
}
