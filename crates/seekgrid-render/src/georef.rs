//! Sidecar files that place a picture on the map: world file, GDAL aux.xml and ESRI .prj.

use crate::error::RenderError;
use seekgrid_core::UtmZone;

/// The affine placement of a north-up picture in the working frame.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PixelGeometry {
    /// Easting of the upper-left corner of the upper-left pixel, metres.
    pub west_m: f64,
    /// Northing of the upper-left corner of the upper-left pixel, metres.
    pub north_m: f64,
    /// Pixel side, metres (square pixels).
    pub pixel_m: f64,
}

impl PixelGeometry {
    /// World-file text (ESRI convention, read by GDAL as `.pgw`): six lines A, D, B, E, C, F:
    /// pixel width, two rotations (0), minus the pixel height, and the easting and northing of
    /// the **centre** of the upper-left pixel (corner + s/2, corner - s/2). Source: found, ESRI
    /// "World files for raster datasets" and GDAL's world-file reader (`GDALReadWorldFile`).
    #[must_use]
    pub fn world_file(&self) -> String {
        let s = self.pixel_m;
        format!(
            "{}\n0\n0\n{}\n{}\n{}\n",
            s,
            -s,
            self.west_m + s / 2.0,
            self.north_m - s / 2.0
        )
    }
}

/// The GDAL PAM sidecar (`F.png.aux.xml`) naming the CRS, which GDAL 3.6 needs because it ignores
/// a `.prj` beside a PNG (found with GDAL 3.6.2 and gdalsrsinfo; docs/references.md §8.4).
#[must_use]
pub fn aux_xml(epsg: u32) -> String {
    format!("<PAMDataset><SRS dataAxisToSRSAxisMapping=\"1,2\">EPSG:{epsg}</SRS></PAMDataset>\n")
}

/// WKT1 in the ESRI dialect for WGS 84 / UTM zone N or S, as `projinfo EPSG:326zz -o WKT1_ESRI`
/// prints it (PROJ 9.1; the template was taken from EPSG:32620 and EPSG:32720 and is tested
/// against projinfo for several zones).
///
/// # Errors
/// [`RenderError::UnsupportedCrs`] for a code that is not 32601..=32660 or 32701..=32760.
pub fn utm_wkt1_esri(epsg: u32) -> Result<String, RenderError> {
    let zone = UtmZone::from_epsg(epsg).map_err(|_| RenderError::UnsupportedCrs { code: epsg })?;
    let (letter, false_northing) = match zone.hemisphere() {
        seekgrid_core::Hemisphere::North => ('N', "0.0"),
        seekgrid_core::Hemisphere::South => ('S', "10000000.0"),
    };
    // `{:?}` writes -63.0 / 3.0 the way projinfo does.
    let cm = zone.central_meridian_deg();
    Ok(format!(
        "PROJCS[\"WGS_1984_UTM_Zone_{z}{letter}\",GEOGCS[\"GCS_WGS_1984\",DATUM[\"D_WGS_1984\",SPHEROID[\"WGS_1984\",6378137.0,298.257223563]],PRIMEM[\"Greenwich\",0.0],UNIT[\"Degree\",0.0174532925199433]],PROJECTION[\"Transverse_Mercator\"],PARAMETER[\"False_Easting\",500000.0],PARAMETER[\"False_Northing\",{false_northing}],PARAMETER[\"Central_Meridian\",{cm:?}],PARAMETER[\"Scale_Factor\",0.9996],PARAMETER[\"Latitude_Of_Origin\",0.0],UNIT[\"Meter\",1.0]]",
        z = zone.zone()
    ))
}

/// The `.prj` text of a working frame: the ESRI WKT1 of [`utm_wkt1_esri`] for a UTM zone, the
/// OGC WKT1 (with its EPSG authority) bundled by `crs-definitions` for any other projected CRS,
/// which GDAL reads from a `.prj` as well.
///
/// # Errors
/// [`RenderError::UnsupportedCrs`] as [`utm_wkt1_esri`].
pub fn frame_prj(frame: &seekgrid_core::Frame) -> Result<String, RenderError> {
    match frame.projected_crs() {
        Some(crs) => Ok(crs.wkt().to_owned()),
        None => utm_wkt1_esri(frame.epsg()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn world_file_gives_the_centre_of_the_upper_left_pixel() {
        // World-file convention (C, F = centre of the upper-left pixel): found, ESRI world-file
        // documentation; docs/references.md §8.3. Corner (1000, 5000), 50 m pixels -> centre
        // (1025, 4975).
        let g = PixelGeometry {
            west_m: 1000.0,
            north_m: 5000.0,
            pixel_m: 50.0,
        };
        let lines: Vec<f64> = g.world_file().lines().map(|l| l.parse().unwrap()).collect();
        assert_eq!(lines, vec![50.0, 0.0, 0.0, -50.0, 1025.0, 4975.0]);
        // Non-terminating pixel sizes keep full precision (250 m cells at 3 px per cell).
        let g = PixelGeometry {
            west_m: 0.0,
            north_m: 0.0,
            pixel_m: 250.0 / 3.0,
        };
        let a: f64 = g.world_file().lines().next().unwrap().parse().unwrap();
        assert_eq!(a, 250.0 / 3.0);
    }

    #[test]
    fn aux_xml_names_the_epsg_code_with_traditional_axis_order() {
        assert_eq!(
            aux_xml(32619),
            "<PAMDataset><SRS dataAxisToSRSAxisMapping=\"1,2\">EPSG:32619</SRS></PAMDataset>\n"
        );
    }

    #[test]
    fn a_national_grid_frame_writes_its_epsg_wkt_and_a_utm_frame_the_esri_one() {
        // crs-definitions' WKT of EPSG:27700 ends with its EPSG authority (from the EPSG
        // registry); the UTM text is the projinfo one checked below.
        let bng = seekgrid_core::Frame::from_epsg(27700, None).unwrap();
        let prj = frame_prj(&bng).unwrap();
        assert!(
            prj.starts_with("PROJCS[\"OSGB 1936 / British National Grid\""),
            "{prj}"
        );
        assert!(prj.ends_with("AUTHORITY[\"EPSG\",\"27700\"]]"), "{prj}");
        let utm = seekgrid_core::Frame::from_epsg(32620, None).unwrap();
        assert_eq!(frame_prj(&utm).unwrap(), utm_wkt1_esri(32620).unwrap());
    }

    #[test]
    fn prj_matches_projinfo_for_zone_20_north_and_south() {
        // found: output of `projinfo EPSG:32620 -o WKT1_ESRI -q` (PROJ 9.1.1).
        assert_eq!(
            utm_wkt1_esri(32620).unwrap(),
            "PROJCS[\"WGS_1984_UTM_Zone_20N\",GEOGCS[\"GCS_WGS_1984\",DATUM[\"D_WGS_1984\",SPHEROID[\"WGS_1984\",6378137.0,298.257223563]],PRIMEM[\"Greenwich\",0.0],UNIT[\"Degree\",0.0174532925199433]],PROJECTION[\"Transverse_Mercator\"],PARAMETER[\"False_Easting\",500000.0],PARAMETER[\"False_Northing\",0.0],PARAMETER[\"Central_Meridian\",-63.0],PARAMETER[\"Scale_Factor\",0.9996],PARAMETER[\"Latitude_Of_Origin\",0.0],UNIT[\"Meter\",1.0]]"
        );
        // found: output of `projinfo EPSG:32720 -o WKT1_ESRI -q` (PROJ 9.1.1).
        assert_eq!(
            utm_wkt1_esri(32720).unwrap(),
            "PROJCS[\"WGS_1984_UTM_Zone_20S\",GEOGCS[\"GCS_WGS_1984\",DATUM[\"D_WGS_1984\",SPHEROID[\"WGS_1984\",6378137.0,298.257223563]],PRIMEM[\"Greenwich\",0.0],UNIT[\"Degree\",0.0174532925199433]],PROJECTION[\"Transverse_Mercator\"],PARAMETER[\"False_Easting\",500000.0],PARAMETER[\"False_Northing\",10000000.0],PARAMETER[\"Central_Meridian\",-63.0],PARAMETER[\"Scale_Factor\",0.9996],PARAMETER[\"Latitude_Of_Origin\",0.0],UNIT[\"Meter\",1.0]]"
        );
        assert!(matches!(
            utm_wkt1_esri(4326),
            Err(RenderError::UnsupportedCrs { code: 4326 })
        ));
    }
}
