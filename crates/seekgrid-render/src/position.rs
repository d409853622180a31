//! Positions as people read them: degrees and decimal minutes (the default at sea), decimal
//! degrees, degrees-minutes-seconds, MGRS/USNG, UTM/UPS, and the working CRS's own grid.
//!
//! MGRS and UTM/UPS come from `geoconvert` (a Rust translation of GeographicLib's GeoConvert),
//! checked against the `mgrs` package of PyPI and pyproj values frozen by
//! `fixtures/reference/make_position_fixtures.py`, zone and band edges and both poles
//! included. MGRS digits are truncated, not rounded, as the standard writes them (a reference
//! names the square the position lies in).

use crate::plan_outputs::{Axis, ddm};
use geo::Coord;
use seekgrid_core::Frame;
use seekgrid_core::projected::{BRITISH_NATIONAL_GRID_EPSG, bng_grid_reference};
use seekgrid_incident::model::PositionFormat;

/// The label a briefing puts before positions in `format`.
#[must_use]
pub fn label(format: PositionFormat) -> &'static str {
    match format {
        PositionFormat::Ddm => "degrees and decimal minutes, WGS84",
        PositionFormat::Dd => "decimal degrees, WGS84",
        PositionFormat::Dms => "degrees, minutes and seconds, WGS84",
        PositionFormat::Mgrs => "MGRS, 1 m",
        PositionFormat::Usng => "USNG, 1 m (WGS84)",
        PositionFormat::Utm => "UTM (UPS at the poles), metres",
        PositionFormat::Grid => {
            "working CRS easting and northing, metres (Ordnance Survey letters in EPSG:27700)"
        }
    }
}

/// `value_deg` as decimal degrees to 5 decimals (about 1 m), with its hemisphere letter.
#[must_use]
pub fn dd(value_deg: f64, axis: Axis) -> String {
    let (hemi, width) = hemisphere(value_deg, axis);
    let a = (value_deg.abs() * 1e5).round() / 1e5;
    format!("{a:0width$.5}°{hemi}", width = width + 6)
}

/// `value_deg` as degrees, minutes and seconds to a tenth of a second (about 3 m), with its
/// hemisphere letter.
#[must_use]
pub fn dms(value_deg: f64, axis: Axis) -> String {
    let (hemi, width) = hemisphere(value_deg, axis);
    // Whole tenths of a second, so that 59.96" carries into the next minute.
    let tenths = (value_deg.abs() * 36_000.0).round() as u64;
    let d = tenths / 36_000;
    let m = (tenths % 36_000) / 600;
    let s = (tenths % 600) as f64 / 10.0;
    format!("{d:0width$}°{m:02}'{s:04.1}\"{hemi}")
}

fn hemisphere(value_deg: f64, axis: Axis) -> (char, usize) {
    match (axis, value_deg >= 0.0) {
        (Axis::Latitude, true) => ('N', 2),
        (Axis::Latitude, false) => ('S', 2),
        (Axis::Longitude, true) => ('E', 3),
        (Axis::Longitude, false) => ('W', 3),
    }
}

/// The MGRS reference of a position to 1 m, spaced as read aloud: `24R UV 19552 86580`, or
/// `Z AH 00000 00000` in the polar (UPS) areas. `None` outside -90..=90, -180..=180 or not
/// finite.
///
/// The UTM/UPS coordinates are geoconvert's; the letters are written here, because
/// geoconvert's own MGRS text panics for some positions ("Latitude is inconsistent with UTM",
/// found with the reference points) and guesses the band from the northing. The letter tables
/// are GeographicLib's (`MGRS.cpp`, the "AA" scheme of WGS84): checked against the PyPI `mgrs`
/// package, an independent implementation (GEOTRANS).
#[must_use]
pub fn mgrs(lon_deg: f64, lat_deg: f64) -> Option<String> {
    const UTM_COLS: [&[u8]; 3] = [b"ABCDEFGH", b"JKLMNPQR", b"STUVWXYZ"];
    const UTM_ROWS: &[u8; 20] = b"ABCDEFGHJKLMNPQRSTUV";
    const UPS_BANDS: &[u8; 4] = b"ABYZ";
    const UPS_COLS: [&[u8]; 4] = [b"JKLPQRSTUXYZ", b"ABCFGHJKLPQR", b"RSTUXYZ", b"ABCFGHJ"];
    const UPS_ROWS: [&[u8]; 2] = [b"ABCDEFGHJKLMNPQRSTUVWXYZ", b"ABCDEFGHJKLMNP"];
    // 100 km squares of the UPS grid: the first row and column index south and north, and the
    // index of the central meridian's easting (2000 km).
    const UPS_MIN_SOUTH: i64 = 8;
    const UPS_MIN_NORTH: i64 = 13;
    const UPS_EASTING: i64 = 20;
    let u = lat_lon(lon_deg, lat_deg)?.to_utmups();
    let (x, y) = (u.easting().floor() as i64, u.northing().floor() as i64);
    let (xh, yh) = (x.div_euclid(100_000), y.div_euclid(100_000));
    let digits = format!("{:05} {:05}", x.rem_euclid(100_000), y.rem_euclid(100_000));
    let letter = |set: &[u8], i: i64| -> Option<char> {
        usize::try_from(i)
            .ok()
            .and_then(|i| set.get(i))
            .map(|b| char::from(*b))
    };
    let zone = u.zone();
    if zone == 0 {
        let north = u.is_north();
        let east = xh >= UPS_EASTING;
        let band = usize::from(north) * 2 + usize::from(east);
        let min = if north { UPS_MIN_NORTH } else { UPS_MIN_SOUTH };
        let col = letter(UPS_COLS[band], xh - if east { UPS_EASTING } else { min })?;
        let row = letter(UPS_ROWS[usize::from(north)], yh - min)?;
        return Some(format!(
            "{} {col}{row} {digits}",
            char::from(UPS_BANDS[band])
        ));
    }
    let band = band_letter(lat_deg)?;
    let set = usize::try_from((zone - 1) % 3).ok()?;
    let col = letter(UTM_COLS[set], xh - 1)?;
    // Even zones start their rows five letters on.
    let shift = if zone % 2 == 0 { 5 } else { 0 };
    let row = letter(UTM_ROWS, (yh + shift).rem_euclid(20))?;
    Some(format!("{zone:02}{band} {col}{row} {digits}"))
}

/// The MGRS latitude band of a latitude in the UTM range: `C` to `X` without `I` and `O`, 8
/// degrees each from 80 S, `X` 12 degrees (72 N to 84 N). `None` outside -80..<84.
#[must_use]
pub fn band_letter(lat_deg: f64) -> Option<char> {
    const BANDS: &[u8; 20] = b"CDEFGHJKLMNPQRSTUVWX";
    if !(-80.0..84.0).contains(&lat_deg) {
        return None;
    }
    let i = (((lat_deg + 80.0) / 8.0).floor() as usize).min(BANDS.len() - 1);
    Some(char::from(BANDS[i]))
}

/// The UTM (or, beyond 84 N and 80 S, UPS) coordinates of a position in its own zone:
/// `UTM 24N 319553 E 3486580 N`, `UPS N 2000000 E 2000000 N`, metres rounded to 1 m.
#[must_use]
pub fn utm(lon_deg: f64, lat_deg: f64) -> Option<String> {
    let u = lat_lon(lon_deg, lat_deg)?.to_utmups();
    let hemi = if u.is_north() { 'N' } else { 'S' };
    let (e, n) = (u.easting().round(), u.northing().round());
    Some(if u.zone() == 0 {
        format!("UPS {hemi} {e:.0} E {n:.0} N")
    } else {
        format!("UTM {}{hemi} {e:.0} E {n:.0} N", u.zone())
    })
}

fn lat_lon(lon_deg: f64, lat_deg: f64) -> Option<geoconvert::LatLon> {
    if !(lon_deg.is_finite() && lat_deg.is_finite()) {
        return None;
    }
    // geoconvert takes longitudes in -180..<180.
    let lon = if lon_deg >= 180.0 {
        lon_deg - 360.0
    } else {
        lon_deg
    };
    geoconvert::LatLon::create(lat_deg, lon).ok()
}

/// A point of the working frame written in `format`.
#[must_use]
pub fn format_position(frame: &Frame, c: Coord<f64>, format: PositionFormat) -> String {
    let (lon, lat) = frame.to_lon_lat(c);
    let unavailable = || format!("{} (no {} here)", ddm_pair(lon, lat), format.name());
    match format {
        PositionFormat::Ddm => ddm_pair(lon, lat),
        PositionFormat::Dd => format!("{} {}", dd(lat, Axis::Latitude), dd(lon, Axis::Longitude)),
        PositionFormat::Dms => {
            format!("{} {}", dms(lat, Axis::Latitude), dms(lon, Axis::Longitude))
        }
        PositionFormat::Mgrs => mgrs(lon, lat).unwrap_or_else(unavailable),
        PositionFormat::Usng => mgrs(lon, lat).map_or_else(unavailable, |m| format!("USNG {m}")),
        PositionFormat::Utm => utm(lon, lat).unwrap_or_else(unavailable),
        // The Ordnance Survey letters where the frame is the British National Grid.
        PositionFormat::Grid => (frame.epsg() == BRITISH_NATIONAL_GRID_EPSG)
            .then(|| bng_grid_reference(c.x, c.y, 5))
            .flatten()
            .unwrap_or_else(|| format!("EPSG:{} {:.0} E {:.0} N", frame.epsg(), c.x, c.y)),
    }
}

fn ddm_pair(lon: f64, lat: f64) -> String {
    format!("{} {}", ddm(lat, Axis::Latitude), ddm(lon, Axis::Longitude))
}

#[cfg(test)]
mod tests {
    #![allow(
        clippy::disallowed_methods,
        reason = "the test reads its frozen reference values"
    )]
    use super::*;
    use serde_json::Value;

    fn reference() -> Value {
        let path = concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/../../fixtures/reference/position_reference.json"
        );
        serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
    }

    #[test]
    fn mgrs_matches_the_pypi_mgrs_package_at_zone_and_band_edges_and_the_poles() {
        // Reference: PyPI `mgrs` (GEOTRANS) at 1 m, frozen by make_position_fixtures.py.
        let r = reference();
        let points = r["points"].as_array().unwrap();
        assert!(points.len() >= 20);
        for p in points {
            let (lat, lon) = (p["lat"].as_f64().unwrap(), p["lon"].as_f64().unwrap());
            let ours = mgrs(lon, lat).unwrap().replace(' ', "");
            assert_eq!(ours, p["mgrs_1m"].as_str().unwrap(), "{}", p["what"]);
        }
    }

    #[test]
    fn utm_and_ups_match_pyproj_to_the_metre_in_the_zone_mgrs_names() {
        // Reference: pyproj (PROJ) in the EPSG:326zz/327zz zone, or EPSG:32661/32761 (UPS).
        let r = reference();
        for p in r["points"].as_array().unwrap() {
            let (lat, lon) = (p["lat"].as_f64().unwrap(), p["lon"].as_f64().unwrap());
            let ours = utm(lon, lat).unwrap();
            let (want, epsg) = match (p.get("utm"), p.get("ups")) {
                (Some(u), _) => (u, u["epsg"].as_u64().unwrap()),
                (None, Some(u)) => (u, u["epsg"].as_u64().unwrap()),
                _ => panic!("no reference"),
            };
            let e = want["easting_m"].as_f64().unwrap().round();
            let n = want["northing_m"].as_f64().unwrap().round();
            let zone = match epsg {
                32661 => "UPS N".to_owned(),
                32761 => "UPS S".to_owned(),
                c if c < 32700 => format!("UTM {}N", c - 32600),
                c => format!("UTM {}S", c - 32700),
            };
            // Rounded to the metre: a value within 1 mm of a half metre may round either way.
            let expected = format!("{zone} {e:.0} E {n:.0} N");
            assert_eq!(ours, expected, "{}", p["what"]);
        }
    }

    proptest::proptest! {
        #[test]
        fn every_position_on_earth_has_an_mgrs_reference_and_utm_or_ups(
            lat in -90.0f64..=90.0,
            lon in -180.0f64..180.0,
        ) {
            let m = mgrs(lon, lat).unwrap();
            let parts: Vec<&str> = m.split(' ').collect();
            proptest::prop_assert_eq!(parts.len(), 4, "{}", m);
            proptest::prop_assert!(parts[2].len() == 5 && parts[3].len() == 5, "{}", m);
            proptest::prop_assert!(utm(lon, lat).is_some());
        }
    }

    #[test]
    fn latitude_bands_are_eight_degrees_from_80_south_and_x_is_twelve() {
        // MGRS band letters (NGA, "The Universal Grids", DMA TM 8358.1): C from 80 S, no I or O.
        assert_eq!(band_letter(-80.0), Some('C'));
        assert_eq!(band_letter(-0.000_001), Some('M'));
        assert_eq!(band_letter(0.0), Some('N'));
        assert_eq!(band_letter(8.0), Some('P'));
        assert_eq!(band_letter(72.0), Some('X'));
        assert_eq!(band_letter(83.999), Some('X'));
        assert_eq!(band_letter(84.0), None);
        assert_eq!(band_letter(-80.1), None);
    }

    #[test]
    fn degrees_are_written_with_hemisphere_and_carry_at_sixty() {
        // Worked by hand: 31.5 = 31°30'00"; 40.95 W = 040°57'00"; 10.99999 carries.
        assert_eq!(dd(31.5, Axis::Latitude), "31.50000°N");
        assert_eq!(dd(-40.9, Axis::Longitude), "040.90000°W");
        assert_eq!(dms(31.5, Axis::Latitude), "31°30'00.0\"N");
        assert_eq!(dms(-40.95, Axis::Longitude), "040°57'00.0\"W");
        assert_eq!(dms(10.999_999_9, Axis::Longitude), "011°00'00.0\"E");
        assert_eq!(dms(-0.000_01, Axis::Latitude), "00°00'00.0\"S");
    }

    #[test]
    fn grid_in_the_british_national_grid_writes_the_ordnance_survey_reference() {
        // fixtures/reference/bng_reference.txt (pyproj eastings, OS letters): Edinburgh Castle.
        let frame = Frame::from_epsg(27700, Some([-3.1999, 55.9486])).unwrap();
        let c = frame.to_xy(-3.1999, 55.9486);
        assert_eq!(
            format_position(&frame, c, PositionFormat::Grid),
            "NT 25163 73490"
        );
        // Outside the lettered squares: easting and northing.
        let far = Coord { x: -5.0, y: 10.0 };
        assert_eq!(
            format_position(&frame, far, PositionFormat::Grid),
            "EPSG:27700 -5 E 10 N"
        );
    }

    #[test]
    fn every_format_writes_a_frame_point_and_grid_names_the_working_crs() {
        let frame = Frame::for_position(-40.9, 31.5).unwrap();
        let c = frame.to_xy(-40.9, 31.5);
        for f in PositionFormat::ALL {
            let text = format_position(&frame, c, f);
            assert!(!text.contains("no "), "{f:?}: {text}");
        }
        assert_eq!(
            format_position(&frame, c, PositionFormat::Mgrs),
            "24R UV 19552 86580"
        );
        assert!(
            format_position(&frame, c, PositionFormat::Grid).starts_with("EPSG:32624 319553 E")
        );
    }
}
