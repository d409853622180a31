//! Grid cells as GeoJSON polygons with their probability of containment.

use crate::error::RenderError;
use crate::vector::{COORD_DECIMALS, check_foreign, rings_to_geometry, unwrapped_lon_lat};
use geo::Coord;
use ndarray::Array2;
use rayon::prelude::*;
use seekgrid_core::{Frame, GridSpec, neumaier_sum};
use serde_json::{Map, Value};
use std::io::Write;

/// One grid layer to export: the probability of containment of each cell and, after searches,
/// the cumulative probability of detection.
#[derive(Debug, Clone, Copy)]
pub struct CellLayer<'a> {
    /// The working frame.
    pub frame: &'a Frame,
    /// The grid the layers lie on.
    pub grid: &'a GridSpec,
    /// Probability of containment of each cell (a mass, not a density), `[row, col]`, row 0 north.
    pub poc: &'a Array2<f64>,
    /// Cumulative probability of detection of each cell, 0..=1, when searches were applied.
    pub pod_cumulative: Option<&'a Array2<f64>>,
}

/// Which rule stopped [`probability_geojson`] before every cell with mass was written.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CellLimit {
    /// The densest cells reached the requested share of the grid's mass.
    TopShare,
    /// The cap on the number of cells was reached before that share.
    MaxCells,
}

impl CellLimit {
    /// The name written in files: `"top_share"` or `"max_cells"`.
    #[must_use]
    pub fn name(self) -> &'static str {
        match self {
            Self::TopShare => "top_share",
            Self::MaxCells => "max_cells",
        }
    }
}

/// The result of [`probability_geojson`].
#[derive(Debug, Clone)]
pub struct ProbabilityExport {
    /// The GeoJSON text (UTF-8).
    pub geojson: Vec<u8>,
    /// Number of cell features written.
    pub cells_written: usize,
    /// Number of cells of the grid with `poc > 0`.
    pub cells_with_mass: usize,
    /// Sum of the `poc` of the cells written (compensated sum).
    pub mass_written: f64,
    /// Sum of the `poc` of every cell of the grid (compensated sum).
    pub grid_mass: f64,
    /// `mass_written / grid_mass`: the share of the grid's mass the file holds (None when the
    /// grid holds no mass).
    pub share_written: Option<f64>,
    /// True when only the highest-density cells were written.
    pub limited: bool,
    /// Which rule stopped the writing, when `limited`.
    pub limited_by: Option<CellLimit>,
}

/// Collection members this function writes itself.
const OWN_MEMBERS: [&str; 9] = [
    "name",
    "cells_written",
    "cells_with_mass",
    "poc_written",
    "share_of_grid_mass_written",
    "limited",
    "limited_by",
    "top_share",
    "max_cells",
];

/// Checks that a layer has the grid's shape and holds finite values in `lo..=hi`.
pub(crate) fn check_layer(
    layer: &'static str,
    grid: &GridSpec,
    values: &Array2<f64>,
    hi: f64,
) -> Result<(), RenderError> {
    let (rows, cols) = values.dim();
    if (rows, cols) != (grid.rows(), grid.cols()) {
        return Err(RenderError::ShapeMismatch {
            layer,
            rows: grid.rows(),
            cols: grid.cols(),
            got_rows: rows,
            got_cols: cols,
        });
    }
    if let Some(((row, col), &value)) = values
        .indexed_iter()
        .find(|(_, v)| !(v.is_finite() && **v >= 0.0 && **v <= hi))
    {
        return Err(RenderError::BadCellValue {
            layer,
            row,
            col,
            value,
            expected: if hi.is_finite() {
                "values must be finite fractions in 0..=1"
            } else {
                "values must be finite and not negative"
            },
        });
    }
    Ok(())
}

/// Decimals for lon/lat of a grid with cells of `cell_m`: [`COORD_DECIMALS`] (0.11 m) unless
/// the cells are smaller than 10 m, then one more.
pub(crate) fn decimals_for_cell(cell_m: f64) -> u32 {
    if cell_m < 10.0 {
        COORD_DECIMALS + 1
    } else {
        COORD_DECIMALS
    }
}

/// Writes an unsigned integer in decimal.
pub(crate) fn push_u64(out: &mut Vec<u8>, mut n: u64) {
    let mut buf = [0u8; 20];
    let mut i = buf.len();
    loop {
        i -= 1;
        buf[i] = b'0' + (n % 10) as u8;
        n /= 10;
        if n == 0 {
            break;
        }
    }
    out.extend_from_slice(&buf[i..]);
}

/// Writes a rounded degree value with a fixed number of decimals, trailing zeros trimmed.
/// Integer arithmetic, no formatting machinery: several times faster than `format!("{:.6}")`.
pub(crate) fn push_deg(out: &mut Vec<u8>, v: f64, decimals: u32) {
    let scale = 10u64.pow(decimals);
    let n = (v * scale as f64).round() as i64;
    if n < 0 {
        out.push(b'-');
    }
    let a = n.unsigned_abs();
    let (int, mut frac) = (a / scale, a % scale);
    push_u64(out, int);
    out.push(b'.');
    if frac == 0 {
        out.push(b'0');
        return;
    }
    let mut digits = decimals as usize;
    while frac % 10 == 0 {
        frac /= 10;
        digits -= 1;
    }
    let mut buf = [b'0'; 16];
    for slot in buf[..digits].iter_mut().rev() {
        *slot = b'0' + (frac % 10) as u8;
        frac /= 10;
    }
    out.extend_from_slice(&buf[..digits]);
}

/// Longest span between exactly projected corners along a row, metres.
const INTERPOLATION_SPAN_M: f64 = 2_000.0;

/// Unwrapped lon/lat of the corners `west + c * cell_m`, `c = 0..=cols`, at northing `y`:
/// projected exactly at every `stride`-th corner (spans of at most 2 km) and at the last one,
/// and by 4-point Lagrange (cubic) interpolation in between. Projection costs about a
/// microsecond per corner and a million-cell layer has a million corners; the interpolation
/// error, of order (h / R)^4 with h = 2 km, is below 1e-8 degree (1 mm) even at 84° N,
/// against 1e-6 degree rounding (checked against exact projection in the tests).
fn corner_row_lon_lat(frame: &Frame, grid: &GridSpec, y: f64) -> Vec<[f64; 2]> {
    let cols = grid.cols();
    let x_of = |c: usize| grid.west_m() + c as f64 * grid.cell_m();
    let exact = |c: usize| unwrapped_lon_lat(frame, Coord { x: x_of(c), y });
    let stride = ((INTERPOLATION_SPAN_M / grid.cell_m()).floor() as usize).max(1);
    if stride == 1 || cols < 4 * stride {
        return (0..=cols).map(exact).collect();
    }
    let mut knots: Vec<usize> = (0..=cols).step_by(stride).collect();
    if knots.last() != Some(&cols) {
        knots.push(cols);
    }
    let values: Vec<[f64; 2]> = knots.iter().map(|&c| exact(c)).collect();
    let mut out = Vec::with_capacity(cols + 1);
    for j in 0..knots.len() - 1 {
        // Nodes j-1..=j+2, shifted inward at the ends.
        let first = j.saturating_sub(1).min(knots.len() - 4);
        let nodes = [first, first + 1, first + 2, first + 3];
        out.push(values[j]);
        for c in knots[j] + 1..knots[j + 1] {
            let x = c as f64;
            let mut v = [0.0, 0.0];
            for &i in &nodes {
                let xi = knots[i] as f64;
                let w: f64 = nodes
                    .iter()
                    .filter(|&&m| m != i)
                    .map(|&m| (x - knots[m] as f64) / (xi - knots[m] as f64))
                    .product();
                v[0] += w * values[i][0];
                v[1] += w * values[i][1];
            }
            out.push(v);
        }
    }
    out.push(values[knots.len() - 1]);
    out
}

/// One row of grid corners: unwrapped lon/lat and the pre-formatted `[lon,lat]` text of each,
/// so every corner is projected and formatted once although four cells share it.
struct VertexRow {
    lon_lat: Vec<[f64; 2]>,
    text: Vec<u8>,
    /// Start of each corner's text in `text`; one more entry marks the end.
    starts: Vec<usize>,
}

impl VertexRow {
    fn new(frame: &Frame, grid: &GridSpec, r: usize, decimals: u32) -> Self {
        let y = grid.north_m() - r as f64 * grid.cell_m();
        let lon_lat = corner_row_lon_lat(frame, grid, y);
        let mut text = Vec::with_capacity(lon_lat.len() * 24);
        let mut starts = Vec::with_capacity(lon_lat.len() + 1);
        for q in &lon_lat {
            starts.push(text.len());
            text.push(b'[');
            push_deg(&mut text, q[0], decimals);
            text.push(b',');
            push_deg(&mut text, q[1], decimals);
            text.push(b']');
        }
        starts.push(text.len());
        Self {
            lon_lat,
            text,
            starts,
        }
    }

    fn text(&self, c: usize) -> &[u8] {
        &self.text[self.starts[c]..self.starts[c + 1]]
    }
}

/// A cell's id, the same in every run and layer that uses the same working frame and cell
/// size: `EPSG:<code>:E<easting>:N<northing>:<size>m`, with the easting and northing of the
/// cell's south-west corner and its size in metres (to the millimetre, trailing zeros dropped),
/// e.g. `EPSG:32626:E400000:N3299750:250m`. Unlike `row`/`col`, which count from the grid's
/// north-west corner and so change with the extent of each run, the id names the cell's place
/// in the working CRS.
#[must_use]
pub fn cell_id(frame: &Frame, grid: &GridSpec, row: usize, col: usize) -> String {
    let b = grid.cell_box(row, col);
    format!(
        "EPSG:{}:E{}:N{}:{}m",
        frame.epsg(),
        metres(b.west_m),
        metres(b.south_m),
        metres(grid.cell_m())
    )
}

/// Metres rounded to the millimetre, without trailing zeros (`-0` written as `0`).
fn metres(v: f64) -> String {
    let mm = (v * 1000.0).round();
    if mm == 0.0 {
        return "0".into();
    }
    let text = format!("{:.3}", mm / 1000.0);
    text.trim_end_matches('0').trim_end_matches('.').to_string()
}

/// Writes a finite f64 as a JSON number (shortest round-trip form).
pub(crate) fn push_num(out: &mut Vec<u8>, v: f64) {
    // Callers have checked finiteness; serde_json writes the shortest round-trip digits.
    let _ = serde_json::to_writer(&mut *out, &v);
}

/// The grid cells as RFC 7946 polygons in lon/lat (exterior counter-clockwise, closed, corners
/// projected from the working frame and rounded to 6 decimals, 7 for cells under 10 m),
/// with properties `poc` (probability of containment of the cell, a fraction), `density_km2`
/// (poc per square kilometre of grid area), `row`, `col` (of this run's grid), `cell_id` (the
/// same in every run: [`cell_id`]) and, when given, `pod_cumulative`.
/// Cells with `poc == 0` are omitted; features come in row-major order (north row first).
///
/// When more than `max_features` cells have mass, only the highest-density cells are written:
/// those whose mass first adds up to `top_share` of the grid's mass, or the `max_features`
/// densest when that comes first. The file then may hold much less than `top_share` of the mass
/// (a flat grid of a million cells capped at 200,000 holds 20 %), so it says exactly what it
/// holds: the collection carries `cells_with_mass`, `cells_written`, `poc_written` (the sum of
/// the `poc` written), `share_of_grid_mass_written` (`poc_written` over the sum of every
/// cell's `poc`; `null` for a grid without mass), `limited`, and when limited `limited_by`
/// (`"top_share"` or `"max_cells"`), `top_share` and `max_cells`. It also carries `name` and
/// the `foreign` members (such as a caution text or the time), and a `bbox` unless it crosses
/// the antimeridian (where cells are split into MultiPolygons, RFC 7946 3.1.9).
///
/// Cell edges are straight in lon/lat between projected corners; the error against the true
/// projected edge is far below a millimetre for cells under a few kilometres.
///
/// # Errors
/// [`RenderError::ShapeMismatch`] when a layer is not the grid's shape,
/// [`RenderError::BadCellValue`] for a negative or non-finite poc or a pod outside 0..=1,
/// [`RenderError::BadParameter`] for `top_share` outside (0, 1] or `max_features == 0`,
/// [`RenderError::ReservedMember`] when `foreign` holds a member this function writes or
/// RFC 7946 reserves (`type`, `features`, `bbox`, `crs`, `name`, ...).
pub fn probability_geojson(
    layer: &CellLayer,
    top_share: f64,
    max_features: usize,
    collection_name: &str,
    foreign: Map<String, Value>,
) -> Result<ProbabilityExport, RenderError> {
    let grid = layer.grid;
    check_layer("poc", grid, layer.poc, f64::INFINITY)?;
    if let Some(pod) = layer.pod_cumulative {
        check_layer("pod_cumulative", grid, pod, 1.0)?;
    }
    if !(top_share > 0.0 && top_share <= 1.0) {
        return Err(RenderError::BadParameter {
            name: "top_share",
            value: top_share,
            hint: "give a share of the grid mass in (0, 1], such as 0.999",
        });
    }
    if max_features == 0 {
        return Err(RenderError::BadParameter {
            name: "max_features",
            value: 0.0,
            hint: "give at least 1",
        });
    }
    check_foreign(&foreign, &OWN_MEMBERS)?;

    let (rows, cols) = (grid.rows(), grid.cols());
    let poc = layer.poc;
    let flat: Vec<f64> = poc.iter().copied().collect();
    let mut selected: Vec<bool> = flat.iter().map(|&v| v > 0.0).collect();
    let with_mass = selected.iter().filter(|s| **s).count();
    let limited = with_mass > max_features;
    let mut limited_by = None;
    if limited {
        let (keep, limit) = top_share_cells(&flat, top_share, max_features);
        limited_by = Some(limit);
        selected.iter_mut().for_each(|s| *s = false);
        for i in keep {
            selected[i] = true;
        }
    }
    let grid_mass = neumaier_sum(flat.iter().copied());

    let decimals = decimals_for_cell(grid.cell_m());
    let cell_area_km2 = grid.cell_area_m2() / seekgrid_core::units::M2_PER_KM2;
    let mut out: Vec<u8> = Vec::with_capacity(256 + selected.len().min(1 << 22) * 200);
    out.extend_from_slice(b"{\"type\":\"FeatureCollection\",\"name\":");
    push_json(&mut out, &Value::String(collection_name.to_owned()))?;
    for (k, v) in &foreign {
        out.push(b',');
        push_json(&mut out, &Value::String(k.clone()))?;
        out.push(b':');
        push_json(&mut out, v)?;
    }
    out.extend_from_slice(b",\"features\":[");

    // Why hand-written: building a geojson::Feature with a serde_json::Map per cell costs several
    // allocations per cell and about ten times the time for a million cells; the format written
    // here is fixed and small. Non-finite values were refused above and coordinates are rounded.
    let mut cells_written = 0usize;
    let mut mass_parts = Vec::new();
    let mut bbox = [f64::MAX, f64::MAX, f64::MIN, f64::MIN];
    let mut split_any = false;
    let needed: Vec<usize> = (0..rows)
        .filter(|r| selected[r * cols..(r + 1) * cols].iter().any(|s| *s))
        .collect();
    // Rows in chunks: corners projected and rows formatted in parallel, then joined in order,
    // so the output is the same whatever the thread count.
    for chunk in needed.chunks(64) {
        let mut corner_rows: Vec<usize> = chunk.iter().flat_map(|&r| [r, r + 1]).collect();
        corner_rows.dedup();
        let corners: Vec<VertexRow> = corner_rows
            .par_iter()
            .map(|&r| VertexRow::new(layer.frame, grid, r, decimals))
            .collect();
        let find = |r: usize| corner_rows.binary_search(&r).map(|i| &corners[i]);
        let texts: Vec<Result<RowText, RenderError>> = chunk
            .par_iter()
            .map(|&r| {
                let (Ok(top), Ok(bottom)) = (find(r), find(r + 1)) else {
                    return Err(RenderError::Internal(format!("corner row {r} missing")));
                };
                let row_sel = &selected[r * cols..(r + 1) * cols];
                write_row(layer, r, top, bottom, row_sel, cell_area_km2)
            })
            .collect();
        for t in texts {
            let t = t?;
            if t.cells == 0 {
                continue;
            }
            if cells_written > 0 {
                out.push(b',');
            }
            out.extend_from_slice(&t.text);
            cells_written += t.cells;
            mass_parts.extend(t.masses);
            bbox[0] = bbox[0].min(t.bbox[0]);
            bbox[1] = bbox[1].min(t.bbox[1]);
            bbox[2] = bbox[2].max(t.bbox[2]);
            bbox[3] = bbox[3].max(t.bbox[3]);
            split_any |= t.split;
        }
    }
    let mass_written = neumaier_sum(mass_parts.iter().copied());
    let share_written = (grid_mass > 0.0).then(|| (mass_written / grid_mass).min(1.0));
    let _ = write!(
        out,
        "],\"cells_with_mass\":{with_mass},\"cells_written\":{cells_written}"
    );
    out.extend_from_slice(b",\"poc_written\":");
    push_num(&mut out, mass_written);
    out.extend_from_slice(b",\"share_of_grid_mass_written\":");
    match share_written {
        Some(v) => push_num(&mut out, v),
        None => out.extend_from_slice(b"null"),
    }
    let _ = write!(out, ",\"limited\":{limited}");
    if let Some(limit) = limited_by {
        let _ = write!(out, ",\"limited_by\":\"{}\",\"top_share\":", limit.name());
        push_num(&mut out, top_share);
        let _ = write!(out, ",\"max_cells\":{max_features}");
    }
    if cells_written > 0 && !split_any {
        out.extend_from_slice(b",\"bbox\":[");
        for (i, v) in bbox.iter().enumerate() {
            if i > 0 {
                out.push(b',');
            }
            // The same rounding as the vertices, so the box holds them exactly.
            push_deg(&mut out, *v, decimals);
        }
        out.push(b']');
    }
    out.extend_from_slice(b"}\n");
    Ok(ProbabilityExport {
        geojson: out,
        cells_written,
        cells_with_mass: with_mass,
        mass_written,
        grid_mass,
        share_written,
        limited,
        limited_by,
    })
}

/// The features of one grid row, comma-separated.
struct RowText {
    text: Vec<u8>,
    cells: usize,
    masses: Vec<f64>,
    bbox: [f64; 4],
    split: bool,
}

fn write_row(
    layer: &CellLayer,
    r: usize,
    top: &VertexRow,
    bottom: &VertexRow,
    row_sel: &[bool],
    cell_area_km2: f64,
) -> Result<RowText, RenderError> {
    let mut t = RowText {
        text: Vec::with_capacity(row_sel.len() * 64),
        cells: 0,
        masses: Vec::new(),
        bbox: [f64::MAX, f64::MAX, f64::MIN, f64::MIN],
        split: false,
    };
    let out = &mut t.text;
    for c in (0..row_sel.len()).filter(|&c| row_sel[c]) {
        let p = layer.poc[[r, c]];
        // Counter-clockwise in lon/lat: SW, SE, NE, NW, SW.
        let corners = [
            (bottom, c),
            (bottom, c + 1),
            (top, c + 1),
            (top, c),
            (bottom, c),
        ];
        if t.cells > 0 {
            out.push(b',');
        }
        out.extend_from_slice(b"{\"type\":\"Feature\",\"geometry\":");
        if corners
            .iter()
            .all(|(v, i)| (-180.0..=180.0).contains(&v.lon_lat[*i][0]))
        {
            out.extend_from_slice(b"{\"type\":\"Polygon\",\"coordinates\":[[");
            for (k, (v, i)) in corners.iter().enumerate() {
                if k > 0 {
                    out.push(b',');
                }
                out.extend_from_slice(v.text(*i));
                let q = v.lon_lat[*i];
                t.bbox[0] = t.bbox[0].min(q[0]);
                t.bbox[1] = t.bbox[1].min(q[1]);
                t.bbox[2] = t.bbox[2].max(q[0]);
                t.bbox[3] = t.bbox[3].max(q[1]);
            }
            out.extend_from_slice(b"]]}");
        } else {
            // Slow path, only for cells across the antimeridian.
            t.split = true;
            let ring: Vec<[f64; 2]> = corners.iter().map(|(v, i)| v.lon_lat[*i]).collect();
            let g = geojson::Geometry::new(rings_to_geometry(vec![ring]));
            push_json(out, &serde_json::to_value(&g).map_err(json_err)?)?;
        }
        out.extend_from_slice(b",\"properties\":{\"poc\":");
        push_num(out, p);
        out.extend_from_slice(b",\"density_km2\":");
        push_num(out, p / cell_area_km2);
        out.extend_from_slice(b",\"row\":");
        push_u64(out, r as u64);
        out.extend_from_slice(b",\"col\":");
        push_u64(out, c as u64);
        out.extend_from_slice(b",\"cell_id\":\"");
        out.extend_from_slice(cell_id(layer.frame, layer.grid, r, c).as_bytes());
        out.push(b'"');
        if let Some(pod) = layer.pod_cumulative {
            out.extend_from_slice(b",\"pod_cumulative\":");
            push_num(out, pod[[r, c]]);
        }
        out.extend_from_slice(b"}}");
        t.cells += 1;
        t.masses.push(p);
    }
    Ok(t)
}

fn json_err(e: serde_json::Error) -> RenderError {
    RenderError::Json(e.to_string())
}

fn push_json(out: &mut Vec<u8>, v: &Value) -> Result<(), RenderError> {
    serde_json::to_writer(&mut *out, v).map_err(json_err)
}

/// Indices of the highest cells (ties broken by index) whose sum first reaches
/// `share * total`, at most `max` of them, and which of the two rules stopped the count.
pub(crate) fn top_share_cells(values: &[f64], share: f64, max: usize) -> (Vec<usize>, CellLimit) {
    let order = descending_order(values);
    let total = neumaier_sum(values.iter().copied());
    let n = count_to_reach(values, &order, share * total);
    if n <= max {
        (order[..n].to_vec(), CellLimit::TopShare)
    } else {
        (order[..max].to_vec(), CellLimit::MaxCells)
    }
}

/// Indices of the cells with mass, in descending value (ties: ascending index).
pub(crate) fn descending_order(values: &[f64]) -> Vec<usize> {
    // Sorting (key, index) pairs in place is several times faster than sorting indices with a
    // comparator that looks the values up. For non-negative floats the bit pattern orders like
    // the value, so its complement orders descending.
    let mut keyed: Vec<(u64, usize)> = values
        .iter()
        .enumerate()
        .filter(|(_, v)| **v > 0.0)
        .map(|(i, v)| (!v.to_bits(), i))
        .collect();
    keyed.par_sort_unstable();
    keyed.into_iter().map(|(_, i)| i).collect()
}

/// The smallest count of leading cells of `order` whose compensated sum is at least `target`
/// (all of them when rounding keeps the sum below it).
pub(crate) fn count_to_reach(values: &[f64], order: &[usize], target: f64) -> usize {
    // Neumaier's compensated running sum (A. Neumaier, ZAMM 54, 1974).
    let (mut s, mut comp) = (0.0f64, 0.0f64);
    for (k, &i) in order.iter().enumerate() {
        let v = values[i];
        let t = s + v;
        comp += if s.abs() >= v.abs() {
            (s - t) + v
        } else {
            (v - t) + s
        };
        s = t;
        if s + comp >= target {
            return k + 1;
        }
    }
    order.len()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::vector::ring_signed_area2;
    use seekgrid_core::{DEFAULT_MAX_CELLS, UtmZone};

    fn setup(rows: usize, cols: usize) -> (Frame, GridSpec) {
        let frame = Frame::new(UtmZone::from_epsg(32620).unwrap());
        let grid =
            GridSpec::new(480_000.0, 4_900_000.0, 250.0, rows, cols, DEFAULT_MAX_CELLS).unwrap();
        (frame, grid)
    }

    fn parse(bytes: &[u8]) -> Value {
        serde_json::from_slice(bytes).unwrap()
    }

    #[test]
    fn degrees_are_written_rounded_with_trimmed_zeros() {
        let mut out = Vec::new();
        for (v, d) in [
            (-63.123_456_7, 6),
            (0.5, 6),
            (-0.000_000_1, 6),
            (12.0, 6),
            (1.000_000_5, 6),
            (-1.25, 7),
        ] {
            push_deg(&mut out, v, d);
            out.push(b' ');
        }
        assert_eq!(
            String::from_utf8(out).unwrap(),
            "-63.123457 0.5 0.0 12.0 1.000001 -1.25 "
        );
    }

    #[test]
    fn cells_are_closed_ccw_polygons_with_properties_and_zero_cells_are_omitted() {
        let (frame, grid) = setup(3, 4);
        let mut poc = Array2::zeros((3, 4));
        poc[[0, 0]] = 0.5;
        poc[[2, 3]] = 0.25;
        let pod = Array2::from_elem((3, 4), 0.3);
        let layer = CellLayer {
            frame: &frame,
            grid: &grid,
            poc: &poc,
            pod_cumulative: Some(&pod),
        };
        let mut foreign = Map::new();
        foreign.insert("caution".into(), Value::String("invented data".into()));
        let ex = probability_geojson(&layer, 0.999, 1000, "probability", foreign).unwrap();
        assert_eq!((ex.cells_written, ex.limited), (2, false));
        assert_eq!(ex.mass_written, 0.75);
        let v = parse(&ex.geojson);
        assert_eq!(v["name"], "probability");
        assert_eq!(v["caution"], "invented data");
        let feats = v["features"].as_array().unwrap();
        assert_eq!(feats.len(), 2);
        let p = &feats[1]["properties"];
        assert_eq!(p["row"], 2);
        assert_eq!(p["col"], 3);
        assert_eq!(p["poc"], 0.25);
        assert_eq!(p["pod_cumulative"], 0.3);
        // 250 m cells: 0.0625 km².
        assert_eq!(p["density_km2"], 4.0);
        for f in feats {
            let ring: Vec<[f64; 2]> = f["geometry"]["coordinates"][0]
                .as_array()
                .unwrap()
                .iter()
                .map(|q| [q[0].as_f64().unwrap(), q[1].as_f64().unwrap()])
                .collect();
            assert_eq!(ring.len(), 5);
            assert_eq!(ring[0], ring[4], "closed");
            assert!(
                ring_signed_area2(&ring) > 0.0,
                "counter-clockwise in lon/lat"
            );
        }
        let text = String::from_utf8(ex.geojson.clone()).unwrap();
        assert!(!text.contains("NaN") && !text.contains("null") && !text.contains("crs"));
    }

    #[test]
    fn cell_id_names_the_south_west_corner_and_is_the_same_in_grids_of_other_extents() {
        let (frame, grid) = setup(4, 5);
        // Cell (2, 3) of a grid with its north-west corner at (480 000, 4 900 000) and 250 m
        // cells: its south-west corner is (480 750, 4 899 250) (computed).
        assert_eq!(
            cell_id(&frame, &grid, 2, 3),
            "EPSG:32620:E480750:N4899250:250m"
        );
        // The same ground cell in a grid that starts two rows north and one column west.
        let other = GridSpec::new(479_750.0, 4_900_500.0, 250.0, 9, 9, DEFAULT_MAX_CELLS).unwrap();
        assert_eq!(cell_id(&frame, &other, 4, 4), cell_id(&frame, &grid, 2, 3));
        assert_ne!(cell_id(&frame, &other, 4, 3), cell_id(&frame, &grid, 2, 3));
        // Millimetres kept, trailing zeros dropped, no "-0".
        let odd = GridSpec::new(-0.0004, 12.5, 12.5, 1, 1, DEFAULT_MAX_CELLS).unwrap();
        assert_eq!(cell_id(&frame, &odd, 0, 0), "EPSG:32620:E0:N0:12.5m");
    }

    #[test]
    fn cell_corners_match_the_frame_projection() {
        let (frame, grid) = setup(2, 2);
        let mut poc = Array2::zeros((2, 2));
        poc[[1, 0]] = 1.0;
        let layer = CellLayer {
            frame: &frame,
            grid: &grid,
            poc: &poc,
            pod_cumulative: None,
        };
        let v = parse(
            &probability_geojson(&layer, 1.0, 10, "p", Map::new())
                .unwrap()
                .geojson,
        );
        let sw = &v["features"][0]["geometry"]["coordinates"][0][0];
        let b = grid.cell_box(1, 0);
        let (lon, lat) = frame.to_lon_lat(Coord {
            x: b.west_m,
            y: b.south_m,
        });
        assert!((sw[0].as_f64().unwrap() - lon).abs() <= 5e-7);
        assert!((sw[1].as_f64().unwrap() - lat).abs() <= 5e-7);
    }

    #[test]
    fn hand_written_features_equal_the_geojson_crate_path() {
        // Fast writer against the slow, obviously correct path: each cell as a geo polygon
        // through polygon_to_geojson and geojson_bytes (serde), compared after parsing.
        let (frame, grid) = setup(7, 45);
        let poc = Array2::from_shape_fn((7, 45), |(r, c)| ((r * 45 + c) % 4) as f64 * 1e-3 / 3.0);
        let pod = Array2::from_shape_fn((7, 45), |(r, c)| ((r + c) % 10) as f64 / 10.0);
        let layer = CellLayer {
            frame: &frame,
            grid: &grid,
            poc: &poc,
            pod_cumulative: Some(&pod),
        };
        let fast = parse(
            &probability_geojson(&layer, 1.0, 10_000, "p", Map::new())
                .unwrap()
                .geojson,
        );
        let mut features = Vec::new();
        for ((r, c), &p) in poc.indexed_iter().filter(|(_, p)| **p > 0.0) {
            let poly = grid.cell_box(r, c).to_polygon();
            let mut f = geojson::Feature::from(crate::vector::polygon_to_geojson(&frame, &poly));
            f.set_property("poc", p);
            f.set_property("density_km2", p / 0.0625);
            f.set_property("row", r);
            f.set_property("col", c);
            f.set_property("cell_id", cell_id(&frame, &grid, r, c));
            f.set_property("pod_cumulative", pod[[r, c]]);
            features.push(f);
        }
        let slow = parse(
            &crate::vector::geojson_bytes(geojson::FeatureCollection::new(features)).unwrap(),
        );
        let (fa, sa) = (
            fast["features"].as_array().unwrap(),
            slow["features"].as_array().unwrap(),
        );
        assert_eq!(fa.len(), sa.len());
        for (f, s) in fa.iter().zip(sa) {
            assert_eq!(f["properties"], s["properties"]);
            let ring = |v: &Value| -> Vec<[f64; 2]> {
                v["geometry"]["coordinates"][0]
                    .as_array()
                    .unwrap()
                    .iter()
                    .map(|q| [q[0].as_f64().unwrap(), q[1].as_f64().unwrap()])
                    .collect()
            };
            let (rf, rs) = (ring(f), ring(s));
            assert_eq!(rf.len(), 5);
            // Same corners (either ring may start elsewhere: compare as sets), same winding.
            for q in &rf {
                assert!(
                    rs.iter()
                        .any(|p| (p[0] - q[0]).abs() < 1e-12 && (p[1] - q[1]).abs() < 1e-12),
                    "{q:?} not in {rs:?}"
                );
            }
            assert_eq!(ring_signed_area2(&rf) > 0.0, ring_signed_area2(&rs) > 0.0);
        }
    }

    #[test]
    fn descending_order_matches_a_comparison_sort() {
        // Fast (bit-pattern keys, parallel sort) against slow (comparison sort on the values).
        let values: Vec<f64> = (0..5000u64)
            .map(|i| {
                let h = i.wrapping_mul(0x9E37_79B9_7F4A_7C15) >> 40;
                if h % 7 == 0 {
                    0.0
                } else {
                    (h % 1000) as f64 * 1e-7 + if h % 3 == 0 { 1e-300 } else { 0.0 }
                }
            })
            .collect();
        let mut slow: Vec<usize> = (0..values.len()).filter(|&i| values[i] > 0.0).collect();
        slow.sort_by(|&a, &b| values[b].partial_cmp(&values[a]).unwrap().then(a.cmp(&b)));
        assert_eq!(descending_order(&values), slow);
    }

    #[test]
    fn interpolated_corners_match_exact_projection() {
        // Fast path (cubic interpolation between exact corners) against the slow reference
        // (every corner projected), on 100 m cells at low, mid and the highest UTM latitudes.
        for (epsg, lon, lat) in [
            (32620, -61.5, 0.5),
            (32626, -25.0, 45.0),
            (32633, 17.5, 83.5),
            (32760, 179.0, -79.5),
        ] {
            let frame = Frame::new(UtmZone::from_epsg(epsg).unwrap());
            let p = frame.to_xy(lon, lat);
            let grid =
                GridSpec::new(p.x - 60_000.0, p.y, 100.0, 2, 1203, DEFAULT_MAX_CELLS).unwrap();
            let fast = corner_row_lon_lat(&frame, &grid, p.y);
            assert_eq!(fast.len(), 1204);
            let mut worst = 0.0f64;
            for (c, f) in fast.iter().enumerate() {
                let e = unwrapped_lon_lat(
                    &frame,
                    Coord {
                        x: grid.west_m() + c as f64 * 100.0,
                        y: p.y,
                    },
                );
                worst = worst.max((f[0] - e[0]).abs()).max((f[1] - e[1]).abs());
            }
            assert!(
                worst < 1e-8,
                "EPSG:{epsg} at {lat}: worst error {worst} degree"
            );
        }
    }

    #[test]
    fn many_cells_are_limited_to_the_top_share_and_say_so() {
        // 100 cells with mass 1..=100 (total 5050): the top share 0.5 needs the cells 100 down
        // to k where the sum first reaches 2525: 100+...+71 = 2565 (30 cells), 100..72 = 2494.
        let (frame, grid) = setup(10, 10);
        let poc = Array2::from_shape_fn((10, 10), |(r, c)| (r * 10 + c + 1) as f64 / 5050.0);
        let layer = CellLayer {
            frame: &frame,
            grid: &grid,
            poc: &poc,
            pod_cumulative: None,
        };
        let ex = probability_geojson(&layer, 0.5, 50, "p", Map::new()).unwrap();
        assert!(ex.limited);
        assert_eq!(ex.cells_written, 30);
        assert!((ex.mass_written - 2565.0 / 5050.0).abs() < 1e-12);
        let v = parse(&ex.geojson);
        assert_eq!(v["limited"], true);
        assert_eq!(v["top_share"], 0.5);
        assert_eq!(v["cells_written"], 30);
        let min_poc = v["features"]
            .as_array()
            .unwrap()
            .iter()
            .map(|f| f["properties"]["poc"].as_f64().unwrap())
            .fold(f64::MAX, f64::min);
        assert!((min_poc - 71.0 / 5050.0).abs() < 1e-15);
        // Under the feature limit, everything with mass is written.
        let all = probability_geojson(&layer, 0.5, 100, "p", Map::new()).unwrap();
        assert_eq!((all.cells_written, all.limited), (100, false));
        assert_eq!(ex.limited_by, Some(CellLimit::TopShare));
        assert_eq!(v["limited_by"], "top_share");
        // Under the feature limit, everything with mass is written.
        let all = probability_geojson(&layer, 0.5, 100, "p", Map::new()).unwrap();
        assert_eq!((all.cells_written, all.limited), (100, false));
        assert_eq!(parse(&all.geojson)["share_of_grid_mass_written"], 1.0);
        // The feature limit caps the count even when the share would need more.
        let capped = probability_geojson(&layer, 0.99, 20, "p", Map::new()).unwrap();
        assert_eq!((capped.cells_written, capped.limited), (20, true));
        assert_eq!(capped.limited_by, Some(CellLimit::MaxCells));
    }

    #[test]
    fn a_capped_flat_grid_states_the_share_of_the_mass_it_holds() {
        // A flat grid of 300 x 300 cells holding 0.9 of the probability (0.1 outside the grid),
        // capped at 18,000 cells: the file can hold only 18,000 / 90,000 = 20 % of the grid's
        // mass, far below the top share asked for, and must say so (computed).
        let (rows, cols, cap) = (300, 300, 18_000);
        let (frame, grid) = setup(rows, cols);
        let poc = Array2::from_elem((rows, cols), 0.9 / (rows * cols) as f64);
        let layer = CellLayer {
            frame: &frame,
            grid: &grid,
            poc: &poc,
            pod_cumulative: None,
        };
        let ex = probability_geojson(&layer, 0.999, cap, "p", Map::new()).unwrap();
        assert_eq!(ex.limited_by, Some(CellLimit::MaxCells));
        let v = parse(&ex.geojson);
        let in_file: Vec<f64> = v["features"]
            .as_array()
            .unwrap()
            .iter()
            .map(|f| f["properties"]["poc"].as_f64().unwrap())
            .collect();
        let sum = neumaier_sum(in_file.iter().copied());
        let share = v["share_of_grid_mass_written"].as_f64().unwrap();
        assert_eq!(in_file.len(), cap);
        assert_eq!(v["cells_written"], cap);
        assert_eq!(v["cells_with_mass"], rows * cols);
        assert_eq!(v["limited_by"], "max_cells");
        assert_eq!(v["max_cells"], cap);
        assert!((v["poc_written"].as_f64().unwrap() - sum).abs() < 1e-12);
        assert!((share * ex.grid_mass - sum).abs() < 1e-12, "{share} {sum}");
        assert!((share - 0.2).abs() < 1e-12, "{share}");
        assert!((ex.grid_mass - 0.9).abs() < 1e-12);
    }

    #[test]
    fn bad_values_and_parameters_are_refused() {
        let (frame, grid) = setup(2, 2);
        let mut poc = Array2::zeros((2, 2));
        poc[[0, 1]] = f64::NAN;
        let layer = CellLayer {
            frame: &frame,
            grid: &grid,
            poc: &poc,
            pod_cumulative: None,
        };
        assert!(matches!(
            probability_geojson(&layer, 0.9, 10, "p", Map::new()),
            Err(RenderError::BadCellValue { row: 0, col: 1, .. })
        ));
        let ok = Array2::zeros((2, 2));
        let bad_pod = Array2::from_elem((2, 2), 1.5);
        let layer = CellLayer {
            frame: &frame,
            grid: &grid,
            poc: &ok,
            pod_cumulative: Some(&bad_pod),
        };
        assert!(matches!(
            probability_geojson(&layer, 0.9, 10, "p", Map::new()),
            Err(RenderError::BadCellValue {
                layer: "pod_cumulative",
                ..
            })
        ));
        let wrong = Array2::zeros((3, 2));
        let layer = CellLayer {
            frame: &frame,
            grid: &grid,
            poc: &wrong,
            pod_cumulative: None,
        };
        assert!(matches!(
            probability_geojson(&layer, 0.9, 10, "p", Map::new()),
            Err(RenderError::ShapeMismatch { .. })
        ));
        let layer = CellLayer {
            frame: &frame,
            grid: &grid,
            poc: &ok,
            pod_cumulative: None,
        };
        assert!(probability_geojson(&layer, 0.0, 10, "p", Map::new()).is_err());
        assert!(probability_geojson(&layer, 0.9, 0, "p", Map::new()).is_err());
        let mut m = Map::new();
        m.insert("crs".into(), Value::Null);
        assert!(matches!(
            probability_geojson(&layer, 0.9, 10, "p", m),
            Err(RenderError::ReservedMember { .. })
        ));
    }
}
