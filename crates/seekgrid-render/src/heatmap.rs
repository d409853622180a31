//! Georeferenced heatmap pictures with title, legend, scale bar, north arrow and caution line.

use crate::canvas::{BODY, Canvas, Rgba8, rgb, text_width, wrap};
use crate::error::RenderError;
use crate::georef::{PixelGeometry, aux_xml, frame_prj};
use crate::output::OutputDir;
use crate::probability::check_layer;
use crate::vector::{unwrapped_lon_lat, wrap_lon};
use embedded_graphics::{
    prelude::*,
    primitives::{Circle, Line, PrimitiveStyle, Rectangle, Triangle},
};
use geo::{Coord, LineString, Polygon};
use image::ImageEncoder;
use ndarray::Array2;
use seekgrid_core::units::METRES_PER_NM;
use seekgrid_core::{Frame, GridSpec, Hemisphere};

/// How cell values become colours.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
#[non_exhaustive]
pub enum ColourScale {
    /// Values are cell masses (probabilities); shown as probability per km², on a logarithmic
    /// scale over at most four decades below the maximum, with the perceptually uniform
    /// viridis colour map (van der Walt and Smith, 2015, via the `colorous` crate).
    Density,
    /// Values are fractions 0..=1 (such as cumulative POD), on a linear scale with the
    /// perceptually uniform, colour-vision-deficiency friendly cividis map (Nuñez et al. 2018).
    Fraction,
}

/// Texts and colour scale of a map picture.
#[derive(Debug, Clone, Copy)]
pub struct MapStyle<'a> {
    /// Title, top left, large.
    pub title: &'a str,
    /// Subtitle under the title, e.g. the valid time.
    pub subtitle: &'a str,
    /// One caution line at the bottom (wrapped when long).
    pub caution: &'a str,
    /// Units of the colour bar, e.g. "probability per km²".
    pub legend_label: &'a str,
    /// How values become colours.
    pub scale: ColourScale,
}

impl<'a> MapStyle<'a> {
    /// The style of a probability map: density per km² on the density scale, with the caution.
    #[must_use]
    pub fn density(title: &'a str, subtitle: &'a str) -> Self {
        Self {
            title,
            subtitle,
            caution: crate::summary::CAUTION,
            legend_label: "probability per km²",
            scale: ColourScale::Density,
        }
    }
}

/// An RGB colour for overlays.
pub type Rgb = [u8; 3];

#[derive(Debug, Clone)]
enum OverlayShape {
    Line(LineString<f64>),
    Polygon(Polygon<f64>),
    Points(Vec<Coord<f64>>),
}

/// Something drawn over the raster: a line, a polygon or points given in the working frame
/// (metres), with a colour and a width in pixels, an optional fill for polygons, an optional
/// label drawn on the map and an optional entry in the legend. Drawing is clipped to the map
/// area.
#[derive(Debug, Clone)]
pub struct Overlay {
    shape: OverlayShape,
    colour: Rgb,
    width_px: u32,
    fill: Option<[u8; 4]>,
    label: Option<String>,
    legend: Option<String>,
}

impl Overlay {
    /// A line (track, coastline) of `width_px` pixels.
    #[must_use]
    pub fn line(line: LineString<f64>, colour: Rgb, width_px: u32) -> Self {
        Self::new(OverlayShape::Line(line), colour, width_px)
    }

    /// A polygon outline (search area, segment) of `width_px` pixels, holes outlined too.
    #[must_use]
    pub fn polygon(poly: Polygon<f64>, colour: Rgb, width_px: u32) -> Self {
        Self::new(OverlayShape::Polygon(poly), colour, width_px)
    }

    /// A polygon filled with `fill` (RGBA, alpha 0..=255 blends over the raster) and outlined
    /// with `colour` (`width_px` 0 for no outline), e.g. land.
    #[must_use]
    pub fn filled_polygon(poly: Polygon<f64>, fill: [u8; 4], colour: Rgb, width_px: u32) -> Self {
        let mut o = Self::new(OverlayShape::Polygon(poly), colour, width_px);
        o.fill = Some(fill);
        o
    }

    /// Points (datum, commence search points) as discs of diameter `diameter_px` with a white rim.
    #[must_use]
    pub fn points(points: Vec<Coord<f64>>, colour: Rgb, diameter_px: u32) -> Self {
        Self::new(OverlayShape::Points(points), colour, diameter_px)
    }

    /// Adds a label drawn on the map beside the shape (polygon: at its first vertex; line: at its
    /// start; points: beside each point).
    #[must_use]
    pub fn with_label(mut self, text: &str) -> Self {
        self.label = Some(text.to_owned());
        self
    }

    /// Adds an entry to the legend; entries with the same text are listed once.
    #[must_use]
    pub fn with_legend(mut self, text: &str) -> Self {
        self.legend = Some(text.to_owned());
        self
    }

    fn new(shape: OverlayShape, colour: Rgb, width_px: u32) -> Self {
        Self {
            shape,
            colour,
            width_px,
            fill: None,
            label: None,
            legend: None,
        }
    }
}

/// A PNG picture with the three sidecars that place it on the map.
#[derive(Debug, Clone)]
pub struct GeoreferencedPng {
    /// The PNG file (RGBA).
    pub png: Vec<u8>,
    /// World file text (`.pgw`), six lines (see [`PixelGeometry::world_file`]).
    pub world_file: String,
    /// GDAL PAM sidecar text (`.png.aux.xml`) naming the EPSG code.
    pub aux_xml: String,
    /// ESRI WKT1 text (`.prj`) of the UTM zone.
    pub prj: String,
    /// Where the whole picture lies in the working frame (margins included).
    pub placement: PixelGeometry,
    /// Pixels per grid cell along each side.
    pub pixels_per_cell: u32,
    /// Column and row (pixels) of the map area's upper-left corner in the picture.
    pub map_origin_px: (u32, u32),
}

/// Largest picture drawn, in pixels (about 256 MB as RGBA).
const MAX_PIXELS: u64 = 64_000_000;
const PAD: i32 = 24;
const GAP: i32 = 32;
const PANEL_W: i32 = 300;
const INK: Rgba8 = [25, 25, 25, 255];
const MUTED: Rgba8 = [85, 85, 85, 255];
const CAUTION_INK: Rgba8 = [150, 20, 20, 255];
const WHITE: Rgba8 = [255, 255, 255, 255];
/// Colour of cells with value 0.
const ZERO_CELL: Rgba8 = [228, 228, 228, 255];
const LINE_H: i32 = 22;

/// Pixels per cell: the largest integer k >= 1 with the map's long side at most 1400 px, so
/// grids of 700..1400 cells are drawn at 1 px per cell and smaller grids about 900..1400 px.
#[must_use]
pub fn pixels_per_cell(grid: &GridSpec) -> u32 {
    let long = grid.rows().max(grid.cols()).max(1);
    (1400 / long).max(1) as u32
}

/// The colour mapping in force for one picture.
struct Colouring {
    scale: ColourScale,
    /// Density: lowest and highest value shown (per km²); Fraction: 0 and 1.
    lo: f64,
    hi: f64,
    /// Density: some non-zero values lie below `lo` and are drawn in the lowest colour.
    clamped: bool,
    /// Divides a cell value to get the plotted quantity (cell area in km² for Density).
    divisor: f64,
}

impl Colouring {
    fn new(scale: ColourScale, values: &Array2<f64>, cell_area_km2: f64) -> Self {
        match scale {
            ColourScale::Fraction => Self {
                scale,
                lo: 0.0,
                hi: 1.0,
                clamped: false,
                divisor: 1.0,
            },
            ColourScale::Density => {
                let (mut min_pos, mut max) = (f64::INFINITY, 0.0f64);
                for &v in values {
                    if v > 0.0 {
                        min_pos = min_pos.min(v);
                        max = max.max(v);
                    }
                }
                if max <= 0.0 {
                    return Self {
                        scale,
                        lo: 0.1,
                        hi: 1.0,
                        clamped: false,
                        divisor: cell_area_km2,
                    };
                }
                let hi = max / cell_area_km2;
                let floor = hi * 1e-4;
                let mut lo = (min_pos / cell_area_km2).max(floor);
                if lo >= hi * (1.0 - 1e-12) {
                    lo = hi / 10.0;
                }
                Self {
                    scale,
                    lo,
                    hi,
                    clamped: min_pos / cell_area_km2 < lo * (1.0 - 1e-12),
                    divisor: cell_area_km2,
                }
            }
        }
    }

    /// Position 0..=1 along the colour bar of a plotted quantity.
    fn t(&self, q: f64) -> f64 {
        match self.scale {
            ColourScale::Fraction => q.clamp(0.0, 1.0),
            ColourScale::Density => ((q / self.lo).ln() / (self.hi / self.lo).ln()).clamp(0.0, 1.0),
        }
    }

    fn colour_at(&self, t: f64) -> Rgba8 {
        let c = match self.scale {
            ColourScale::Density => colorous::VIRIDIS.eval_continuous(t),
            ColourScale::Fraction => colorous::CIVIDIS.eval_continuous(t),
        };
        [c.r, c.g, c.b, 255]
    }

    fn colour(&self, value: f64) -> Rgba8 {
        if value <= 0.0 {
            ZERO_CELL
        } else {
            self.colour_at(self.t(value / self.divisor))
        }
    }

    /// Tick values and labels along the colour bar.
    fn ticks(&self) -> Vec<(f64, String)> {
        match self.scale {
            ColourScale::Fraction => (0..=5)
                .map(|i| {
                    let v = f64::from(i) / 5.0;
                    (v, format_tick(v))
                })
                .collect(),
            ColourScale::Density => {
                let decades = (self.hi / self.lo).log10();
                let mults: &[f64] = if decades < 1.5 {
                    &[1.0, 2.0, 5.0]
                } else {
                    &[1.0]
                };
                let e0 = self.lo.log10().floor() as i32;
                let e1 = self.hi.log10().ceil() as i32;
                let mut out = Vec::new();
                for e in e0..=e1 {
                    for m in mults {
                        let v = m * 10f64.powi(e);
                        if v >= self.lo * (1.0 - 1e-9) && v <= self.hi * (1.0 + 1e-9) {
                            out.push((v, format_tick(v)));
                        }
                    }
                }
                if out.len() < 2 {
                    out = vec![
                        (self.lo, format_tick(self.lo)),
                        (self.hi, format_tick(self.hi)),
                    ];
                }
                out
            }
        }
    }
}

/// A tick label: plain decimals from 0.001 up, `2e-5` style below; two significant digits.
fn format_tick(v: f64) -> String {
    if v == 0.0 {
        return "0".into();
    }
    let e = v.abs().log10().floor() as i32;
    let m = v / 10f64.powi(e);
    let m = (m * 10.0).round() / 10.0;
    if (-3..=5).contains(&e) {
        let decimals = (-e + i32::from(m.fract().abs() > 1e-9)).max(0) as usize;
        format!("{v:.decimals$}")
    } else if m.fract().abs() < 1e-9 {
        format!("{}e{e}", m as i64)
    } else {
        format!("{m:.1}e{e}")
    }
}

/// The largest "nice" length (1, 2, 5 x 10^n) not longer than `max`.
fn nice_length(max: f64) -> f64 {
    let e = max.log10().floor();
    let base = 10f64.powf(e);
    [5.0, 2.0, 1.0]
        .into_iter()
        .map(|m| m * base)
        .find(|l| *l <= max)
        .unwrap_or(base)
}

fn fmt_len(v: f64) -> String {
    if v >= 1.0 || v == 0.0 {
        format!("{}", v.round() as i64)
    } else {
        let s = format!("{v:.3}");
        s.trim_end_matches('0').trim_end_matches('.').to_owned()
    }
}

/// The heatmap picture of one layer with its sidecars.
///
/// The map area has `k` pixels per cell ([`pixels_per_cell`]), north (grid north) up, each pixel
/// the colour of its cell; cells of value 0 are light grey. Around it: title and subtitle (top),
/// colour bar with tick labels and `legend_label` (right), scale bar in km and NM (bottom left,
/// grid distances; the UTM scale factor, within 0.1 % inside a zone, is ignored), a north arrow
/// pointing to true north (rotated from grid north by the meridian convergence at the grid
/// centre, [`Frame::convergence_deg`]), the CRS, and the caution line at the bottom. Overlays
/// are drawn over the raster, clipped to the map area. Text uses the 10 x 20 pixel Latin-1 font
/// of `embedded-graphics` (title at twice that), so nothing depends on system fonts.
///
/// The sidecars describe the whole picture: pixel size `cell_m / k`, the map-area pixels lying
/// exactly on the grid cells and the margins extending outside the grid.
///
/// `values` are cell masses for [`ColourScale::Density`] (shown per km²) and fractions 0..=1
/// for [`ColourScale::Fraction`].
///
/// # Errors
/// [`RenderError::ShapeMismatch`] when `values` is not the grid's shape,
/// [`RenderError::BadCellValue`] for negative or non-finite values (or above 1 for Fraction),
/// [`RenderError::PictureTooLarge`] beyond 64 M pixels, [`RenderError::UnsupportedCrs`] when the
/// frame is not a UTM zone, [`RenderError::Png`] when encoding fails.
pub fn heatmap_png(
    frame: &Frame,
    grid: &GridSpec,
    values: &Array2<f64>,
    style: &MapStyle,
    overlays: &[Overlay],
) -> Result<GeoreferencedPng, RenderError> {
    let hi = match style.scale {
        ColourScale::Density => f64::INFINITY,
        ColourScale::Fraction => 1.0,
    };
    check_layer("heatmap values", grid, values, hi)?;
    let prj = frame_prj(frame)?;
    let colouring = Colouring::new(
        style.scale,
        values,
        grid.cell_area_m2() / seekgrid_core::units::M2_PER_KM2,
    );
    let legend = legend_entries(overlays);
    let layout = Layout::new(grid, style, legend.len())?;
    let mut cv = Canvas::new(layout.width as u32, layout.height as u32, WHITE, layout.u);

    draw_raster(&mut cv, &layout, values, &colouring);
    let pixel_m = layout.pixel_m(grid);
    let to_px = |p: Coord<f64>| -> (f64, f64) {
        (
            f64::from(layout.map.x) + (p.x - grid.west_m()) / pixel_m,
            f64::from(layout.map.y) + (grid.north_m() - p.y) / pixel_m,
        )
    };
    draw_overlays(&mut cv, overlays, &to_px, &layout.map);
    draw_graticule_ticks(&mut cv, frame, grid, &layout.map, pixel_m);
    draw_titles(&mut cv, &layout, style);
    draw_panel(&mut cv, &layout, frame, grid, &colouring, &legend);
    let scale_w = layout.map.w.max(400 * layout.u);
    draw_scale_bar(&mut cv, layout.map.x, layout.scale_y, pixel_m, scale_w);
    draw_caution(&mut cv, &layout);

    let png = encode_png(&cv, &layout)?;
    let placement = PixelGeometry {
        west_m: grid.west_m() - f64::from(layout.map.x) * pixel_m,
        north_m: grid.north_m() + f64::from(layout.map.y) * pixel_m,
        pixel_m,
    };
    Ok(GeoreferencedPng {
        png,
        world_file: placement.world_file(),
        aux_xml: aux_xml(frame.epsg()),
        prj,
        placement,
        pixels_per_cell: layout.k,
        map_origin_px: (layout.map.x as u32, layout.map.y as u32),
    })
}

/// The map alone as data: one pixel per cell, exactly the grid's extent, coloured as in
/// [`heatmap_png`] with the same `scale`, and transparent (alpha 0) where the value is 0 or not
/// finite; with world file, `.aux.xml` and `.prj` placing it on the grid (no title, legend or
/// caution inside the georeferenced area, so it lies over a basemap in a GIS).
///
/// # Errors
/// [`RenderError::ShapeMismatch`] when `values` is not the grid's shape,
/// [`RenderError::BadCellValue`] for negative or non-finite values (or above 1 for Fraction),
/// [`RenderError::UnsupportedCrs`] when the frame is not a UTM zone, [`RenderError::Png`] when
/// encoding fails.
pub fn data_png(
    frame: &Frame,
    grid: &GridSpec,
    values: &Array2<f64>,
    scale: ColourScale,
) -> Result<GeoreferencedPng, RenderError> {
    let hi = match scale {
        ColourScale::Density => f64::INFINITY,
        ColourScale::Fraction => 1.0,
    };
    check_layer("heatmap values", grid, values, hi)?;
    let prj = crate::georef::frame_prj(frame)?;
    let colouring = Colouring::new(
        scale,
        values,
        grid.cell_area_m2() / seekgrid_core::units::M2_PER_KM2,
    );
    let mut rgba = Vec::with_capacity(values.len() * 4);
    for &v in values {
        if v > 0.0 && v.is_finite() {
            rgba.extend_from_slice(&colouring.colour(v));
        } else {
            rgba.extend_from_slice(&[0, 0, 0, 0]);
        }
    }
    let mut png = Vec::new();
    image::codecs::png::PngEncoder::new(&mut png)
        .write_image(
            &rgba,
            grid.cols() as u32,
            grid.rows() as u32,
            image::ExtendedColorType::Rgba8,
        )
        .map_err(|e| RenderError::Png(e.to_string()))?;
    let placement = PixelGeometry {
        west_m: grid.west_m(),
        north_m: grid.north_m(),
        pixel_m: grid.cell_m(),
    };
    Ok(GeoreferencedPng {
        png,
        world_file: placement.world_file(),
        aux_xml: aux_xml(frame.epsg()),
        prj,
        placement,
        pixels_per_cell: 1,
        map_origin_px: (0, 0),
    })
}

/// The map area of a picture, in pixels: upper-left corner and size.
#[derive(Debug, Clone, Copy)]
struct MapArea {
    x: i32,
    y: i32,
    w: i32,
    h: i32,
}

/// The right-hand panel: the top of each of its blocks, top to bottom.
#[derive(Debug, Clone, Copy)]
struct Panel {
    x: i32,
    w: i32,
    /// North arrow.
    arrow_y: i32,
    /// Legend label (wrapped).
    label_y: i32,
    /// Colour bar, and its height.
    bar_y: i32,
    bar_h: i32,
    /// Key: the zero swatch, then one row per overlay legend entry.
    key_y: i32,
    /// CRS lines.
    crs_y: i32,
    /// Below the last line.
    bottom: i32,
}

impl Panel {
    /// Height of the zero swatch's row in the key.
    const ZERO_ROW: i32 = 34;
    /// Height of an overlay entry's row in the key.
    const ENTRY_ROW: i32 = LINE_H + 10;
    /// Lines of CRS text.
    const CRS_LINES: i32 = 3;

    /// Top of the key's overlay entry `i`.
    fn entry_y(&self, i: usize, u: i32) -> i32 {
        self.key_y + (Self::ZERO_ROW + i as i32 * Self::ENTRY_ROW) * u
    }
}

/// Where everything goes in a picture, computed once and used both to size the canvas and to
/// draw: title block, then the map (graticule labels left and below) with the panel to its
/// right, then the scale bar under the map, then the caution line(s) at the bottom.
#[derive(Debug, Clone)]
struct Layout {
    /// Pixels per grid cell.
    k: u32,
    /// Decoration scale: 2 around big maps, so text stays readable when printed.
    u: i32,
    pad: i32,
    line_h: i32,
    title_h: i32,
    map: MapArea,
    panel: Panel,
    legend_lines: Vec<String>,
    scale_y: i32,
    caution_y: i32,
    caution_lines: Vec<String>,
    width: i32,
    height: i32,
}

impl Layout {
    /// The layout of a picture of `grid` with `style` and `legend_entries` overlay entries.
    ///
    /// # Errors
    /// [`RenderError::PictureTooLarge`] when the map or the whole picture is over the limit.
    fn new(grid: &GridSpec, style: &MapStyle, legend_entries: usize) -> Result<Self, RenderError> {
        let k = pixels_per_cell(grid);
        let map_w = grid.cols() as u64 * u64::from(k);
        let map_h = grid.rows() as u64 * u64::from(k);
        if map_w * map_h > MAX_PIXELS {
            return Err(RenderError::PictureTooLarge {
                width: map_w,
                height: map_h,
                limit: MAX_PIXELS,
            });
        }
        let (map_w, map_h) = (map_w as i32, map_h as i32);
        let u = if map_w.max(map_h) > 1800 { 2 } else { 1 };
        let (pad, line_h) = (PAD * u, LINE_H * u);
        let title_h = if style.title.is_empty() { 0 } else { 40 * u };
        let sub_h = if style.subtitle.is_empty() {
            0
        } else {
            line_h + 4 * u
        };
        let map = MapArea {
            x: pad + 90 * u,
            y: pad + title_h + 8 * u + sub_h + 14 * u,
            w: map_w,
            h: map_h,
        };
        let legend_lines = wrap(style.legend_label, (PANEL_W / 10) as usize);
        let panel = {
            let arrow_y = map.y;
            let label_y = arrow_y + 150 * u;
            let bar_y = label_y + legend_lines.len() as i32 * line_h + 12 * u;
            let bar_h = 300 * u;
            let key_y = bar_y + bar_h + 20 * u;
            let mut p = Panel {
                x: map.x + map.w + GAP * u,
                w: PANEL_W * u,
                arrow_y,
                label_y,
                bar_y,
                bar_h,
                key_y,
                crs_y: 0,
                bottom: 0,
            };
            p.crs_y = p.entry_y(legend_entries, u) + 20 * u;
            p.bottom = p.crs_y + Panel::CRS_LINES * line_h;
            p
        };
        let width_from_title =
            2 * pad + text_width(style.title, BODY, 2 * u).max(text_width(style.subtitle, BODY, u));
        let width = (panel.x + panel.w + pad).max(width_from_title).max(640 * u);
        let caution_lines = wrap(style.caution, ((width - 2 * pad) / (10 * u)) as usize);
        let scale_y = map.y + map.h + 30 * u + 12 * u;
        let scale_h = 84 * u;
        let caution_y = (scale_y + scale_h).max(panel.bottom) + 8 * u;
        let height = caution_y + caution_lines.len() as i32 * line_h + pad;
        if width as u64 * height as u64 > MAX_PIXELS * 2 {
            return Err(RenderError::PictureTooLarge {
                width: width as u64,
                height: height as u64,
                limit: MAX_PIXELS * 2,
            });
        }
        Ok(Self {
            k,
            u,
            pad,
            line_h,
            title_h,
            map,
            panel,
            legend_lines,
            scale_y,
            caution_y,
            caution_lines,
            width,
            height,
        })
    }

    /// Size of a map pixel on the ground, metres.
    fn pixel_m(&self, grid: &GridSpec) -> f64 {
        grid.cell_m() / f64::from(self.k)
    }
}

/// The raster (each pixel its cell's colour) and a frame just outside the map area, so no map
/// pixel is covered.
fn draw_raster(cv: &mut Canvas, layout: &Layout, values: &Array2<f64>, colouring: &Colouring) {
    let (map, k) = (&layout.map, i64::from(layout.k));
    for ((r, c), v) in values.indexed_iter() {
        cv.fill_rect(
            i64::from(map.x) + (c as i64) * k,
            i64::from(map.y) + (r as i64) * k,
            k,
            k,
            colouring.colour(*v),
        );
    }
    let _ = Rectangle::new(
        Point::new(map.x - 1, map.y - 1),
        Size::new(map.w as u32 + 2, map.h as u32 + 2),
    )
    .into_styled(PrimitiveStyle::with_stroke(rgb(MUTED), 1))
    .draw(cv);
}

/// Title and subtitle, top left.
fn draw_titles(cv: &mut Canvas, layout: &Layout, style: &MapStyle) {
    let (pad, u) = (layout.pad, layout.u);
    if !style.title.is_empty() {
        cv.text(style.title, pad, pad, INK, 2);
    }
    if !style.subtitle.is_empty() {
        cv.text(style.subtitle, pad, pad + layout.title_h + 6 * u, MUTED, 1);
    }
}

/// The right panel: north arrow, legend label, colour bar, key, CRS.
fn draw_panel(
    cv: &mut Canvas,
    layout: &Layout,
    frame: &Frame,
    grid: &GridSpec,
    colouring: &Colouring,
    legend: &[&Overlay],
) {
    let p = &layout.panel;
    let (clon, clat) = frame.to_lon_lat(Coord {
        x: grid.west_m() + grid.cols() as f64 * grid.cell_m() / 2.0,
        y: grid.north_m() - grid.rows() as f64 * grid.cell_m() / 2.0,
    });
    draw_north_arrow(cv, p.x, p.arrow_y, frame.convergence_deg(clon, clat));
    for (i, line) in layout.legend_lines.iter().enumerate() {
        cv.text(line, p.x, p.label_y + i as i32 * layout.line_h, INK, 1);
    }
    draw_colour_bar(cv, colouring, p.x, p.bar_y, p.bar_h);
    draw_key(cv, layout, legend);
    let name = frame.zone().map_or_else(
        || "projected CRS".to_owned(),
        |zone| {
            let hemi = match zone.hemisphere() {
                Hemisphere::North => 'N',
                Hemisphere::South => 'S',
            };
            format!("WGS 84 / UTM {}{hemi}", zone.zone())
        },
    );
    let crs_lines = [
        name,
        format!("EPSG:{}", frame.epsg()),
        format!("cell {} m", fmt_len(grid.cell_m())),
    ];
    for (i, line) in crs_lines.iter().enumerate() {
        cv.text(line, p.x, p.crs_y + i as i32 * layout.line_h, MUTED, 1);
    }
}

/// The key: the swatch of cells without value, then one row per overlay legend entry.
fn draw_key(cv: &mut Canvas, layout: &Layout, legend: &[&Overlay]) {
    let (p, u) = (&layout.panel, layout.u);
    let swatch = |cv: &mut Canvas, y: i32, fill: Option<Rgba8>, edge: Option<(Rgba8, u32)>| {
        if let Some(f) = fill {
            cv.fill_rect(
                i64::from(p.x),
                i64::from(y),
                i64::from(28 * u),
                i64::from(20 * u),
                f,
            );
        }
        if let Some((c, w)) = edge {
            let _ = Rectangle::new(Point::new(p.x, y), Size::new(28 * u as u32, 20 * u as u32))
                .into_styled(PrimitiveStyle::with_stroke(rgb(c), w))
                .draw(cv);
        }
    };
    swatch(cv, p.key_y, Some(ZERO_CELL), Some((MUTED, 1)));
    cv.text("0 (none)", p.x + 40 * u, p.key_y, INK, 1);
    let whole = (0, 0, i64::from(layout.width), i64::from(layout.height));
    for (i, o) in legend.iter().enumerate() {
        let y = p.entry_y(i, u);
        let c = [o.colour[0], o.colour[1], o.colour[2], 255];
        match &o.shape {
            OverlayShape::Line(_) => {
                let yy = f64::from(y + 10 * u);
                cv.stroke_path(
                    &[(f64::from(p.x), yy), (f64::from(p.x + 28 * u), yy)],
                    f64::from(o.width_px.max(1)),
                    c,
                    whole,
                );
            }
            OverlayShape::Polygon(_) => {
                swatch(cv, y, o.fill, (o.width_px > 0).then_some((c, o.width_px)));
            }
            OverlayShape::Points(_) => draw_point(cv, p.x + 14 * u, y + 10 * u, c, o.width_px),
        }
        cv.text(o.legend.as_deref().unwrap_or(""), p.x + 40 * u, y, INK, 1);
    }
}

/// The caution line(s) at the bottom.
fn draw_caution(cv: &mut Canvas, layout: &Layout) {
    for (i, line) in layout.caution_lines.iter().enumerate() {
        let y = layout.caution_y + i as i32 * layout.line_h;
        cv.text(line, layout.pad, y, CAUTION_INK, 1);
    }
}

/// The canvas as an RGBA PNG.
fn encode_png(cv: &Canvas, layout: &Layout) -> Result<Vec<u8>, RenderError> {
    let mut png = Vec::new();
    image::codecs::png::PngEncoder::new(&mut png)
        .write_image(
            cv.img.as_raw(),
            layout.width as u32,
            layout.height as u32,
            image::ExtendedColorType::Rgba8,
        )
        .map_err(|e| RenderError::Png(e.to_string()))?;
    Ok(png)
}

fn legend_entries(overlays: &[Overlay]) -> Vec<&Overlay> {
    let mut seen: Vec<&str> = Vec::new();
    let mut out = Vec::new();
    for o in overlays {
        if let Some(l) = &o.legend
            && !seen.contains(&l.as_str())
        {
            seen.push(l);
            out.push(o);
        }
    }
    out
}

fn draw_point(cv: &mut Canvas, x: i32, y: i32, c: Rgba8, diameter: u32) {
    let d = diameter.max(3);
    let _ = Circle::with_center(Point::new(x, y), d + 4)
        .into_styled(PrimitiveStyle::with_fill(rgb(WHITE)))
        .draw(cv);
    let _ = Circle::with_center(Point::new(x, y), d)
        .into_styled(PrimitiveStyle::with_fill(rgb(c)))
        .draw(cv);
}

fn clamp_px(v: f64) -> i32 {
    v.clamp(-1e6, 1e6).round() as i32
}

fn draw_overlays(
    cv: &mut Canvas,
    overlays: &[Overlay],
    to_px: &dyn Fn(Coord<f64>) -> (f64, f64),
    map: &MapArea,
) {
    let MapArea {
        x: mx,
        y: my,
        w: mw,
        h: mh,
    } = *map;
    let u = cv.ui;
    let clip = (
        i64::from(mx),
        i64::from(my),
        i64::from(mx + mw),
        i64::from(my + mh),
    );
    let inside = |(x, y): (f64, f64)| {
        x >= f64::from(mx) && y >= f64::from(my) && x < f64::from(mx + mw) && y < f64::from(my + mh)
    };
    let ring_px =
        |ls: &LineString<f64>| -> Vec<(f64, f64)> { ls.0.iter().map(|c| to_px(*c)).collect() };
    for o in overlays {
        let c = [o.colour[0], o.colour[1], o.colour[2], 255];
        let mut anchor: Option<(f64, f64)> = None;
        match &o.shape {
            OverlayShape::Line(ls) => {
                let pts = ring_px(ls);
                anchor = pts.first().copied();
                cv.stroke_path(&pts, f64::from(o.width_px), c, clip);
            }
            OverlayShape::Polygon(poly) => {
                let rings: Vec<Vec<(f64, f64)>> = std::iter::once(poly.exterior())
                    .chain(poly.interiors())
                    .map(&ring_px)
                    .collect();
                if let Some(f) = o.fill {
                    cv.fill_rings(&rings, f, clip);
                }
                if o.width_px > 0 {
                    for r in &rings {
                        cv.stroke_path(r, f64::from(o.width_px), c, clip);
                    }
                }
                anchor = rings.first().and_then(|r| r.first().copied());
            }
            OverlayShape::Points(pts) => {
                for p in pts {
                    let q = to_px(*p);
                    if inside(q) {
                        draw_point(cv, clamp_px(q.0 - 0.5), clamp_px(q.1 - 0.5), c, o.width_px);
                        if let Some(l) = &o.label {
                            cv.text_halo(l, clamp_px(q.0) + 8, clamp_px(q.1) - 22 * u, INK, WHITE);
                        }
                    }
                }
            }
        }
        if let (Some(l), Some(a)) = (&o.label, anchor)
            && inside(a)
        {
            cv.text_halo(l, clamp_px(a.0) + 4, clamp_px(a.1) + 4, INK, WHITE);
        }
    }
}

/// Tick spacings for graticule labels, degrees (0.1' up to 30°).
const GRATICULE_STEPS_DEG: [f64; 17] = [
    0.1 / 60.0,
    0.2 / 60.0,
    0.5 / 60.0,
    1.0 / 60.0,
    2.0 / 60.0,
    5.0 / 60.0,
    10.0 / 60.0,
    15.0 / 60.0,
    20.0 / 60.0,
    30.0 / 60.0,
    1.0,
    2.0,
    5.0,
    10.0,
    15.0,
    20.0,
    30.0,
];

/// The smallest step giving at most `max_ticks` multiples in `lo..=hi` (None when even the
/// largest gives more, or `max_ticks` is 0).
fn graticule_step(lo: f64, hi: f64, max_ticks: i32) -> Option<f64> {
    if max_ticks < 1 {
        return None;
    }
    GRATICULE_STEPS_DEG.into_iter().find(|s| {
        let n = (hi / s).floor() - (lo / s).ceil() + 1.0;
        n <= f64::from(max_ticks) && n >= 1.0
    })
}

/// Degrees and minutes, e.g. `31°15'N`, `28°20.5'W`, `0°`.
fn format_dm(value: f64, positive: char, negative: char) -> String {
    let total_tenths = (value.abs() * 600.0).round() as i64;
    let (d, tenths) = (total_tenths / 600, total_tenths % 600);
    let h = if total_tenths == 0 || (positive == 'E' && d == 180 && tenths == 0) {
        String::new()
    } else if value > 0.0 {
        positive.to_string()
    } else {
        negative.to_string()
    };
    if tenths == 0 {
        format!("{d}\u{b0}{h}")
    } else if tenths % 10 == 0 {
        format!("{d}\u{b0}{:02}'{h}", tenths / 10)
    } else {
        format!("{d}\u{b0}{:04.1}'{h}", tenths as f64 / 10.0)
    }
}

/// Root of a monotonic function on [a, b] by bisection (f(a) and f(b) bracket `target`).
fn bisect(f: &dyn Fn(f64) -> f64, mut a: f64, mut b: f64, target: f64) -> f64 {
    let rising = f(b) >= f(a);
    for _ in 0..60 {
        let m = 0.5 * (a + b);
        if (f(m) < target) == rising {
            a = m;
        } else {
            b = m;
        }
    }
    0.5 * (a + b)
}

/// Longitude ticks on the bottom (labelled) and top edges and latitude ticks on the left
/// (labelled) and right edges of the map, where the meridians and parallels cross them (they
/// are not parallel to the grid: meridian convergence). One spacing serves both edges.
fn draw_graticule_ticks(
    cv: &mut Canvas,
    frame: &Frame,
    grid: &GridSpec,
    map: &MapArea,
    pixel_m: f64,
) {
    let MapArea {
        x: mx,
        y: my,
        w: mw,
        h: mh,
    } = *map;
    let u = cv.ui;
    let (west, north) = (grid.west_m(), grid.north_m());
    let east = west + f64::from(mw) * pixel_m;
    let south = north - f64::from(mh) * pixel_m;
    let tick = PrimitiveStyle::with_stroke(rgb(INK), u as u32);
    let ll = |x: f64, y: f64| unwrapped_lon_lat(frame, Coord { x, y });
    let t = 6 * u;
    // Meridians along the bottom and top edges.
    let (b0, b1) = (ll(west, south)[0], ll(east, south)[0]);
    let (t0, t1) = (ll(west, north)[0], ll(east, north)[0]);
    if let Some(step) = graticule_step(b0.min(t0), b1.max(t1), (mw / (140 * u)).min(6)) {
        for (y_m, py, labelled) in [(south, my + mh, true), (north, my - 1, false)] {
            let f = |x: f64| ll(x, y_m)[0];
            let (l0, l1) = (f(west), f(east));
            let mut k = (l0 / step).ceil();
            while k * step <= l1 {
                let x = bisect(&f, west, east, k * step);
                let px = mx + ((x - west) / pixel_m).round() as i32;
                let (a, b) = if labelled { (py, py + t) } else { (py - t, py) };
                let _ = Line::new(Point::new(px, a), Point::new(px, b))
                    .into_styled(tick)
                    .draw(cv);
                if labelled {
                    let s = format_dm(wrap_lon(k * step), 'E', 'W');
                    cv.text(&s, px - cv.text_width(&s, 1) / 2, py + 8 * u, INK, 1);
                }
                k += 1.0;
            }
        }
    }
    // Parallels along the left and right edges.
    let (l0, l1) = (ll(west, south)[1], ll(west, north)[1]);
    let (r0, r1) = (ll(east, south)[1], ll(east, north)[1]);
    if let Some(step) = graticule_step(l0.min(r0), l1.max(r1), (mh / (70 * u)).min(6)) {
        for (x_m, px, labelled) in [(west, mx - 1, true), (east, mx + mw, false)] {
            let f = |y: f64| ll(x_m, y)[1];
            let (a0, a1) = (f(south), f(north));
            let mut k = (a0 / step).ceil();
            while k * step <= a1 {
                let y = bisect(&f, south, north, k * step);
                let py = my + ((north - y) / pixel_m).round() as i32;
                let (a, b) = if labelled { (px - t, px) } else { (px, px + t) };
                let _ = Line::new(Point::new(a, py), Point::new(b, py))
                    .into_styled(tick)
                    .draw(cv);
                if labelled {
                    let s = format_dm(k * step, 'N', 'S');
                    cv.text(&s, px - 10 * u - cv.text_width(&s, 1), py - 10 * u, INK, 1);
                }
                k += 1.0;
            }
        }
    }
}

fn draw_north_arrow(cv: &mut Canvas, x: i32, y: i32, convergence_deg: f64) {
    // Grid north is `convergence_deg` clockwise from true north, so true north is that angle
    // anticlockwise from the picture's up (sign convention of Frame::convergence_deg).
    let u = cv.ui;
    let uf = f64::from(u);
    let g = convergence_deg.to_radians();
    let (dx, dy) = (-g.sin(), -g.cos());
    let (cx, cy) = (f64::from(x + 40 * u), f64::from(y + 70 * u));
    let half = 42.0 * uf;
    let tip = (cx + dx * half, cy + dy * half);
    let tail = (cx - dx * half, cy - dy * half);
    let (px, py) = (-dy, dx);
    let base = (cx + dx * (half - 26.0 * uf), cy + dy * (half - 26.0 * uf));
    let p = |v: (f64, f64)| Point::new(v.0.round() as i32, v.1.round() as i32);
    let _ = Line::new(p(tail), p(base))
        .into_styled(PrimitiveStyle::with_stroke(rgb(INK), 3 * u as u32))
        .draw(cv);
    let _ = Triangle::new(
        p(tip),
        p((base.0 + px * 11.0 * uf, base.1 + py * 11.0 * uf)),
        p((base.0 - px * 11.0 * uf, base.1 - py * 11.0 * uf)),
    )
    .into_styled(PrimitiveStyle::with_fill(rgb(INK)))
    .draw(cv);
    cv.text(
        "N",
        (tip.0 + dx * 14.0 * uf - 5.0 * uf).round() as i32,
        (tip.1 + dy * 14.0 * uf - 10.0 * uf).round() as i32,
        INK,
        1,
    );
    let tx = x + 96 * u;
    let side = if convergence_deg >= 0.0 { "E" } else { "W" };
    cv.text("true north", tx, y + 34 * u, INK, 1);
    cv.text(
        &format!("grid north {:.2}\u{b0} {side}", convergence_deg.abs()),
        tx,
        y + (34 + LINE_H) * u,
        MUTED,
        1,
    );
    cv.text("(map up = grid N)", tx, y + (34 + 2 * LINE_H) * u, MUTED, 1);
}

fn draw_colour_bar(cv: &mut Canvas, col: &Colouring, x: i32, y: i32, h: i32) {
    let u = cv.ui;
    let bar_w = 32 * u;
    for i in 0..h {
        let t = 1.0 - (f64::from(i) + 0.5) / f64::from(h);
        cv.fill_rect(
            i64::from(x),
            i64::from(y + i),
            i64::from(bar_w),
            1,
            col.colour_at(t),
        );
    }
    let _ = Rectangle::new(
        Point::new(x - 1, y - 1),
        Size::new(bar_w as u32 + 2, h as u32 + 2),
    )
    .into_styled(PrimitiveStyle::with_stroke(rgb(MUTED), 1))
    .draw(cv);
    let tick_y = |v: f64| y + ((1.0 - col.t(v)) * f64::from(h - 1)).round() as i32;
    let mut ticks = col.ticks();
    if col.clamped {
        // The bottom colour also stands for everything lower: say so at the bar's end, and
        // drop a round tick that would sit on top of that label.
        ticks.retain(|(v, _)| tick_y(*v) < y + h - 1 - 22 * u);
        ticks.insert(0, (col.lo, format!("{} or less", format_tick(col.lo))));
    }
    for (v, label) in ticks {
        let ty = tick_y(v);
        let _ = Line::new(Point::new(x + bar_w, ty), Point::new(x + bar_w + 7 * u, ty))
            .into_styled(PrimitiveStyle::with_stroke(rgb(INK), u as u32))
            .draw(cv);
        cv.text(&label, x + bar_w + 12 * u, ty - 10 * u, INK, 1);
    }
}

fn draw_scale_bar(cv: &mut Canvas, x: i32, y: i32, pixel_m: f64, map_w: i32) {
    let u = cv.ui;
    let max_m = f64::from(map_w) / 3.0 * pixel_m;
    let bar = |cv: &mut Canvas, by: i32, len_px: i32, segments: i32| {
        for s in 0..segments {
            let x0 = x + len_px * s / segments;
            let x1 = x + len_px * (s + 1) / segments;
            let c = if s % 2 == 0 { INK } else { WHITE };
            cv.fill_rect(
                i64::from(x0),
                i64::from(by),
                i64::from(x1 - x0),
                i64::from(8 * u),
                c,
            );
        }
        let _ = Rectangle::new(
            Point::new(x, by),
            Size::new(len_px as u32 + 1, 8 * u as u32),
        )
        .into_styled(PrimitiveStyle::with_stroke(rgb(INK), 1))
        .draw(cv);
    };
    let segments = |len: f64| {
        if (len / nice_unit(len) - 5.0).abs() < 1e-9 {
            5
        } else {
            4
        }
    };
    // Kilometres above with labels over the bar; nautical miles below with labels under it.
    let km = nice_length(max_m / 1000.0);
    let km_px = (km * 1000.0 / pixel_m).round() as i32;
    cv.text("0", x - 4 * u, y, INK, 1);
    cv.text(&format!("{} km", fmt_len(km)), x + km_px - 5 * u, y, INK, 1);
    bar(cv, y + 24 * u, km_px, segments(km));
    let nm = nice_length(max_m / METRES_PER_NM);
    let nm_px = (nm * METRES_PER_NM / pixel_m).round() as i32;
    bar(cv, y + 36 * u, nm_px, segments(nm));
    cv.text("0", x - 4 * u, y + 50 * u, INK, 1);
    cv.text(
        &format!("{} NM", fmt_len(nm)),
        x + nm_px - 5 * u,
        y + 50 * u,
        INK,
        1,
    );
}

fn nice_unit(v: f64) -> f64 {
    10f64.powf(v.log10().floor())
}

/// The names of a georeferenced picture's files: `stem.png`, then its sidecars `stem.pgw`
/// (world file), `stem.png.aux.xml` (GDAL PAM) and `stem.prj` (ESRI WKT1).
#[must_use]
pub fn png_set_names(stem: &str) -> [String; 4] {
    [
        format!("{stem}.png"),
        format!("{stem}.pgw"),
        format!("{stem}.png.aux.xml"),
        format!("{stem}.prj"),
    ]
}

/// Writes `stem.png`, `stem.pgw`, `stem.png.aux.xml` and `stem.prj` ([`png_set_names`]) into
/// `dir`, each atomically. The picture carries the run id ([`OutputDir::run_id`]) in a `tEXt`
/// chunk with keyword `run_id`.
///
/// # Errors
/// As [`OutputDir::write`]; [`RenderError::Png`] when `png` is not a PNG stream.
pub fn write_png_set(
    dir: &OutputDir,
    stem: &str,
    png: &GeoreferencedPng,
) -> Result<(), RenderError> {
    let [main, world, aux, prj] = png_set_names(stem);
    dir.write(&main, &tagged_png(png, dir.run_id())?)?;
    dir.write(&world, png.world_file.as_bytes())?;
    dir.write(&aux, png.aux_xml.as_bytes())?;
    dir.write(&prj, png.prj.as_bytes())?;
    Ok(())
}

/// The PNG file of `png` carrying `run_id` in a `tEXt` chunk with keyword `run_id`.
///
/// # Errors
/// [`RenderError::Png`] when `png` is not a PNG stream.
pub(crate) fn tagged_png(png: &GeoreferencedPng, run_id: &str) -> Result<Vec<u8>, RenderError> {
    with_text_chunk(&png.png, "run_id", run_id)
}

/// `png` with a `tEXt` chunk `keyword`, `text` (ISO 8859-1) inserted after its `IHDR` chunk.
///
/// A PNG stream is the 8-byte signature then chunks, `IHDR` first: 4-byte length 13, the type,
/// 13 bytes of data and a 4-byte CRC; a `tEXt` chunk may stand anywhere between `IHDR` and
/// `IEND` (PNG specification, third edition, 5.2, 5.6 and 11.3.3.2). The chunk's bytes, CRC
/// included, come from the png crate.
pub(crate) fn with_text_chunk(
    png: &[u8],
    keyword: &str,
    text: &str,
) -> Result<Vec<u8>, RenderError> {
    use png::text_metadata::{EncodableTextChunk, TEXtChunk};
    let mut chunk = Vec::new();
    TEXtChunk::new(keyword, text)
        .encode(&mut chunk)
        .map_err(|e| RenderError::Png(e.to_string()))?;
    after_ihdr(png, &chunk)
}

/// `png` with an `iTXt` chunk `keyword`, `text` (UTF-8, uncompressed) inserted after its
/// `IHDR` chunk (PNG specification, third edition, 11.3.3.4), as [`with_text_chunk`] does.
pub(crate) fn with_itxt_chunk(
    png: &[u8],
    keyword: &str,
    text: &str,
) -> Result<Vec<u8>, RenderError> {
    use png::text_metadata::{EncodableTextChunk, ITXtChunk};
    let mut chunk = Vec::new();
    ITXtChunk::new(keyword, text)
        .encode(&mut chunk)
        .map_err(|e| RenderError::Png(e.to_string()))?;
    after_ihdr(png, &chunk)
}

/// `png` with the encoded `chunk` inserted right after its `IHDR` chunk.
fn after_ihdr(png: &[u8], chunk: &[u8]) -> Result<Vec<u8>, RenderError> {
    const SIGNATURE: [u8; 8] = [137, 80, 78, 71, 13, 10, 26, 10];
    const AFTER_IHDR: usize = 8 + 4 + 4 + 13 + 4;
    if png.len() < AFTER_IHDR || png[..8] != SIGNATURE || &png[8..16] != b"\0\0\0\x0dIHDR" {
        return Err(RenderError::Png(
            "the picture does not start with a PNG signature and IHDR chunk".into(),
        ));
    }
    let mut out = Vec::with_capacity(png.len() + chunk.len());
    out.extend_from_slice(&png[..AFTER_IHDR]);
    out.extend_from_slice(chunk);
    out.extend_from_slice(&png[AFTER_IHDR..]);
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn the_run_id_is_read_back_from_a_text_chunk_and_the_picture_is_unchanged() {
        let frame = Frame::new(seekgrid_core::UtmZone::from_epsg(32620).unwrap());
        let grid = GridSpec::new(
            480_000.0,
            4_900_000.0,
            250.0,
            4,
            6,
            seekgrid_core::DEFAULT_MAX_CELLS,
        )
        .unwrap();
        let v = Array2::from_elem((4, 6), 0.5);
        let style = MapStyle {
            title: "t",
            subtitle: "",
            caution: "c",
            legend_label: "l",
            scale: ColourScale::Fraction,
        };
        let plain = heatmap_png(&frame, &grid, &v, &style, &[]).unwrap().png;
        let tagged = with_text_chunk(&plain, "run_id", "20260614T213000Z-4242").unwrap();
        // Read back by the png crate's decoder, which checks every chunk's CRC.
        let mut reader = png::Decoder::new(std::io::Cursor::new(&tagged))
            .read_info()
            .unwrap();
        let texts = &reader.info().uncompressed_latin1_text;
        assert_eq!(texts.len(), 1);
        assert_eq!(
            (texts[0].keyword.as_str(), texts[0].text.as_str()),
            ("run_id", "20260614T213000Z-4242")
        );
        let mut buf = vec![0; reader.output_buffer_size().unwrap()];
        reader.next_frame(&mut buf).unwrap();
        let a = image::load_from_memory(&plain).unwrap().to_rgba8();
        let b = image::load_from_memory(&tagged).unwrap().to_rgba8();
        assert_eq!(a, b);
        assert!(with_text_chunk(b"not a png", "run_id", "x").is_err());
    }
    use seekgrid_core::{DEFAULT_MAX_CELLS, UtmZone};

    #[test]
    fn pixels_per_cell_brings_small_grids_to_about_a_thousand_pixels() {
        let g = |r, c| GridSpec::new(0.0, 0.0, 100.0, r, c, DEFAULT_MAX_CELLS).unwrap();
        assert_eq!(pixels_per_cell(&g(100, 80)), 14);
        assert_eq!(pixels_per_cell(&g(3000, 10)), 1);
        assert_eq!(pixels_per_cell(&g(1400, 1400)), 1);
        assert_eq!(pixels_per_cell(&g(467, 300)), 2);
        for n in [1usize, 7, 50, 333, 466, 700] {
            let k = pixels_per_cell(&g(n, n)) as usize;
            assert!(k * n <= 1400 && k * n > 700, "{n} cells -> {k} px per cell");
        }
    }

    #[test]
    fn map_pixels_land_exactly_on_the_grid_cells() {
        let frame = Frame::new(UtmZone::from_epsg(32620).unwrap());
        let grid = GridSpec::new(480_000.0, 4_900_000.0, 250.0, 40, 60, DEFAULT_MAX_CELLS).unwrap();
        let mut v = Array2::zeros((40, 60));
        v[[0, 0]] = 1.0;
        let style = MapStyle {
            title: "t",
            subtitle: "",
            caution: "c",
            legend_label: "probability per km\u{b2}",
            scale: ColourScale::Density,
        };
        let out = heatmap_png(&frame, &grid, &v, &style, &[]).unwrap();
        let k = f64::from(out.pixels_per_cell);
        assert_eq!(out.placement.pixel_m, 250.0 / k);
        let (mx, my) = out.map_origin_px;
        // The upper-left corner of map pixel (mx, my) is the grid's north-west corner.
        let west = out.placement.west_m + f64::from(mx) * out.placement.pixel_m;
        let north = out.placement.north_m - f64::from(my) * out.placement.pixel_m;
        assert!((west - 480_000.0).abs() < 1e-6 && (north - 4_900_000.0).abs() < 1e-6);
        let img = image::load_from_memory(&out.png).unwrap().to_rgba8();
        // The only cell with mass is drawn in the top colour of viridis; its neighbour is grey.
        let top = colorous::VIRIDIS.eval_continuous(1.0);
        assert_eq!(img.get_pixel(mx, my).0, [top.r, top.g, top.b, 255]);
        let kk = out.pixels_per_cell;
        assert_eq!(
            img.get_pixel(mx + kk - 1, my + kk - 1).0,
            [top.r, top.g, top.b, 255]
        );
        assert_eq!(img.get_pixel(mx + kk, my).0, ZERO_CELL);
    }

    #[test]
    fn tick_labels_are_short_and_readable() {
        assert_eq!(format_tick(0.001), "0.001");
        assert_eq!(format_tick(0.5), "0.5");
        assert_eq!(format_tick(20.0), "20");
        assert_eq!(format_tick(1e-5), "1e-5");
        assert_eq!(format_tick(2e-7), "2e-7");
        assert_eq!(format_tick(0.0), "0");
        assert_eq!(nice_length(7.3), 5.0);
        assert_eq!(nice_length(0.3), 0.2);
    }

    #[test]
    fn graticule_labels_use_degrees_and_minutes() {
        assert_eq!(format_dm(31.25, 'N', 'S'), "31\u{b0}15'N");
        assert_eq!(format_dm(-28.0 - 20.5 / 60.0, 'E', 'W'), "28\u{b0}20.5'W");
        assert_eq!(format_dm(0.0, 'N', 'S'), "0\u{b0}");
        assert_eq!(format_dm(-2.0, 'N', 'S'), "2\u{b0}S");
        assert_eq!(graticule_step(-28.9, -28.1, 6), Some(10.0 / 60.0));
        assert_eq!(graticule_step(10.0, 10.001, 0), None);
    }
}
