//! Float rasters a GIS can compute with: one band of Float32 samples per grid cell, as a
//! GeoTIFF in the working frame's EPSG code (docs/references.md §8.5).
//!
//! Written with the `tiff` crate: samples Float32 (BitsPerSample 32, SampleFormat 3), rows
//! north first, Deflate compression, ModelPixelScale (33550) `(s, s, 0)`, ModelTiepoint (33922)
//! `(0, 0, 0, west, north, 0)` at the upper-left corner, GeoKeyDirectory (34735, SHORT)
//! `[1,1,0,3, 1024,0,1,1, 1025,0,1,1, 3072,0,1,EPSG]` (projected, pixel-is-area, the code),
//! GDAL_NODATA (42113) and GDAL_METADATA (42112, GDAL's XML of named items). Reduced-resolution
//! copies (halved until the longer side is at most 64 pixels, each pixel the mean of the
//! valid pixels under it) follow the full image as further images marked NewSubfileType 1,
//! which GDAL reads as internal overviews.
//!
//! Not the Cloud Optimized GeoTIFF layout: the `tiff` crate 0.11 writes strips, not tiles, and
//! puts each image's data before its directory, so the files are striped GeoTIFFs with
//! overviews; `gdal_translate -of COG` converts them where a COG is needed.

use crate::error::RenderError;
use ndarray::Array2;
use seekgrid_core::{Frame, GridSpec};
use std::io::Cursor;
use tiff::encoder::{Compression, DeflateLevel, TiffEncoder, colortype::Gray32Float};
use tiff::tags::Tag;

/// The value of cells without data (GDAL_NODATA).
pub const NODATA: f32 = -9999.0;

/// Overviews are made until the longer side is at most this many pixels.
const OVERVIEW_MIN_SIDE: usize = 64;

/// A one-band Float32 GeoTIFF of `values` (the grid's `rows x cols`, row 0 north) in the
/// frame's EPSG code; non-finite values become [`NODATA`]. `metadata` items (name, text) go
/// into GDAL_METADATA.
///
/// # Errors
/// [`RenderError::Internal`] when `values` is not the grid's shape or the encoder fails.
pub fn float_geotiff(
    frame: &Frame,
    grid: &GridSpec,
    values: &Array2<f64>,
    metadata: &[(&str, String)],
) -> Result<Vec<u8>, RenderError> {
    if values.dim() != (grid.rows(), grid.cols()) {
        return Err(RenderError::Internal(format!(
            "raster of {:?} cells for a grid of {} x {}",
            values.dim(),
            grid.rows(),
            grid.cols()
        )));
    }
    let bad = |e: tiff::TiffError| RenderError::Internal(format!("GeoTIFF writer: {e}"));
    let epsg = u16::try_from(frame.epsg())
        .map_err(|_| RenderError::Internal(format!("EPSG {} beyond a GeoKey", frame.epsg())))?;
    let mut image: Array2<f32> = values.mapv(|v| if v.is_finite() { v as f32 } else { NODATA });
    let mut bytes = Cursor::new(Vec::new());
    let mut enc = TiffEncoder::new(&mut bytes)
        .map_err(bad)?
        .with_compression(Compression::Deflate(DeflateLevel::Balanced));
    let mut scale = 1.0;
    let mut first = true;
    loop {
        let (rows, cols) = image.dim();
        let mut img = enc
            .new_image::<Gray32Float>(cols as u32, rows as u32)
            .map_err(bad)?;
        let e = img.encoder();
        let s = grid.cell_m() * scale;
        if first {
            e.write_tag(Tag::ModelPixelScaleTag, &[s, s, 0.0][..])
                .map_err(bad)?;
            e.write_tag(
                Tag::ModelTiepointTag,
                &[0.0, 0.0, 0.0, grid.west_m(), grid.north_m(), 0.0][..],
            )
            .map_err(bad)?;
            let keys: [u16; 16] = [1, 1, 0, 3, 1024, 0, 1, 1, 1025, 0, 1, 1, 3072, 0, 1, epsg];
            e.write_tag(Tag::GeoKeyDirectoryTag, &keys[..])
                .map_err(bad)?;
            e.write_tag(Tag::Unknown(42112), gdal_metadata(metadata).as_str())
                .map_err(bad)?;
        } else {
            // NewSubfileType 1: a reduced-resolution copy of the first image.
            e.write_tag(Tag::NewSubfileType, 1u32).map_err(bad)?;
        }
        e.write_tag(Tag::GdalNodata, format!("{NODATA}").as_str())
            .map_err(bad)?;
        let data: Vec<f32> = image.iter().copied().collect();
        img.write_data(&data).map_err(bad)?;
        first = false;
        if rows.max(cols) <= OVERVIEW_MIN_SIDE {
            break;
        }
        image = halved(&image);
        scale *= 2.0;
    }
    Ok(bytes.into_inner())
}

/// Each 2 x 2 block (1 x 2 or 1 x 1 at an odd edge) as the mean of its valid pixels, or
/// [`NODATA`] when none is valid (GDAL's "average" overview resampling).
fn halved(a: &Array2<f32>) -> Array2<f32> {
    let (rows, cols) = a.dim();
    Array2::from_shape_fn((rows.div_ceil(2), cols.div_ceil(2)), |(r, c)| {
        let (mut sum, mut n) = (0.0f64, 0u32);
        for rr in 2 * r..(2 * r + 2).min(rows) {
            for cc in 2 * c..(2 * c + 2).min(cols) {
                let v = a[[rr, cc]];
                if v != NODATA {
                    sum += f64::from(v);
                    n += 1;
                }
            }
        }
        if n == 0 {
            NODATA
        } else {
            (sum / f64::from(n)) as f32
        }
    })
}

/// GDAL's metadata XML: `<GDALMetadata><Item name="…">…</Item>…</GDALMetadata>`.
fn gdal_metadata(items: &[(&str, String)]) -> String {
    // A TIFF ASCII field holds 7-bit text: other characters go as XML character references.
    let esc = |s: &str| {
        let mut out = String::with_capacity(s.len());
        for ch in s.chars() {
            match ch {
                '&' => out.push_str("&amp;"),
                '<' => out.push_str("&lt;"),
                '>' => out.push_str("&gt;"),
                '"' => out.push_str("&quot;"),
                c if c.is_ascii() && !c.is_ascii_control() => out.push(c),
                c => out.push_str(&format!("&#x{:X};", u32::from(c))),
            }
        }
        out
    };
    let mut x = String::from("<GDALMetadata>");
    for (name, text) in items {
        x.push_str(&format!(
            "<Item name=\"{}\">{}</Item>",
            esc(name),
            esc(text)
        ));
    }
    x.push_str("</GDALMetadata>");
    x
}

#[cfg(test)]
mod tests {
    use super::*;
    use seekgrid_core::{DEFAULT_MAX_CELLS, UtmZone};

    #[test]
    fn metadata_is_seven_bit_xml_with_character_references() {
        let x = gdal_metadata(&[("quantity", "POC per km² <a & b>".to_owned())]);
        assert_eq!(
            x,
            "<GDALMetadata><Item name=\"quantity\">POC per km&#xB2; &lt;a &amp; b&gt;</Item></GDALMetadata>"
        );
        assert!(x.is_ascii());
    }

    #[test]
    fn halving_averages_the_valid_pixels_of_each_block() {
        let a = Array2::from_shape_vec((2, 3), vec![1.0, 3.0, 5.0, NODATA, 2.0, NODATA]).unwrap();
        let h = halved(&a);
        assert_eq!(h.dim(), (1, 2));
        assert_eq!(h[[0, 0]], 2.0);
        assert_eq!(h[[0, 1]], 5.0);
        let none = Array2::from_elem((1, 1), NODATA);
        assert_eq!(halved(&none)[[0, 0]], NODATA);
    }

    #[test]
    fn a_raster_of_the_wrong_shape_is_refused() {
        let frame = Frame::new(UtmZone::from_epsg(32626).unwrap());
        let grid = GridSpec::new(0.0, 100.0, 10.0, 10, 10, DEFAULT_MAX_CELLS).unwrap();
        assert!(float_geotiff(&frame, &grid, &Array2::zeros((3, 3)), &[]).is_err());
        let bytes = float_geotiff(&frame, &grid, &Array2::zeros((10, 10)), &[]).unwrap();
        // Little-endian TIFF signature (TIFF 6.0, section 2).
        assert_eq!(&bytes[..4], b"II*\0");
    }
}
