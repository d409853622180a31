//! Smallest regions holding given shares of the grid mass, dissolved into polygons.
//!
//! Selection: cells sorted by value (density; all cells have the same area) in descending order,
//! taken until the running sum first reaches `level * grid_mass` (the highest-density region,
//! "HDR" in the statistics literature: R. J. Hyndman, "Computing and graphing highest density
//! regions", The American Statistician 50(2), 1996; common practice for containment contours).
//!
//! Boundary: hand-written edge chaining on the raster, because geo's boolean union of up to
//! millions of unit squares is orders of magnitude slower and gives no control over how rings
//! touch. Every boundary edge between a selected and an unselected cell is directed with the
//! selected cell on its left; at a vertex where two selected cells meet only diagonally the chain
//! turns left (the cells stay apart, 4-connectivity), so each 4-connected component has exactly
//! one counter-clockwise outer ring. A ring that passes a vertex twice (a pocket closed by a
//! diagonal pinch) is split there into simple rings, since OGC simple features forbid
//! self-touching rings; the pieces are a shell and holes touching it at one point, which is
//! valid. Holes are clockwise. All of this is done in integer vertex coordinates; only the
//! finished rings are projected to lon/lat.

use crate::error::RenderError;
use crate::probability::{check_layer, count_to_reach, decimals_for_cell, descending_order};
use crate::vector::{
    check_foreign, orient_rings, split_polygon_at_antimeridian, unwrapped_lon_lat,
};
use geo::Coord;
use ndarray::Array2;
use seekgrid_core::{Frame, GridSpec, neumaier_sum};
use serde_json::{Map, Value};

/// Directions of boundary edges, counter-clockwise order: a left turn is `+1 mod 4`.
const EAST: u8 = 0;
const NORTH: u8 = 1;
const WEST: u8 = 2;
const SOUTH: u8 = 3;

/// A vertex of the raster in y-up integer coordinates: `x` = column edge 0..=cols,
/// `y` = rows - row edge, so y grows northward.
type Vertex = (u32, u32);

/// Polygons of one selection: each polygon is its rings (exterior first), each ring closed.
pub(crate) type RasterPolygons = Vec<Vec<Vec<Vertex>>>;

fn step(v: Vertex, d: u8) -> Vertex {
    match d {
        EAST => (v.0 + 1, v.1),
        NORTH => (v.0, v.1 + 1),
        WEST => (v.0 - 1, v.1),
        _ => (v.0, v.1 - 1),
    }
}

/// Traces the boundary of the selected cells (`mask[[row, col]]`, row 0 north) into polygons
/// with holes, in y-up vertex coordinates; exterior rings counter-clockwise, holes clockwise,
/// no ring touching itself.
///
/// # Errors
/// [`RenderError::Topology`] if the rings do not form one shell per 4-connected component
/// (cannot happen for a raster; kept as a check instead of a panic).
pub(crate) fn trace_polygons(mask: &Array2<bool>) -> Result<RasterPolygons, RenderError> {
    let (rows, cols) = mask.dim();
    let w = cols + 1;
    let sel = |r: isize, c: isize| -> bool {
        r >= 0
            && c >= 0
            && (r as usize) < rows
            && (c as usize) < cols
            && mask[[r as usize, c as usize]]
    };
    // Outgoing boundary edges per vertex as a bit set over directions.
    let mut out = vec![0u8; (rows + 1) * w];
    let vid = |v: Vertex| v.1 as usize * w + v.0 as usize;
    for r in 0..rows {
        for c in 0..cols {
            if !mask[[r, c]] {
                continue;
            }
            let (ri, ci) = (r as isize, c as isize);
            let (x, yt) = (c as u32, (rows - r) as u32);
            let yb = yt - 1;
            if !sel(ri - 1, ci) {
                out[vid((x + 1, yt))] |= 1 << WEST;
            }
            if !sel(ri + 1, ci) {
                out[vid((x, yb))] |= 1 << EAST;
            }
            if !sel(ri, ci - 1) {
                out[vid((x, yt))] |= 1 << SOUTH;
            }
            if !sel(ri, ci + 1) {
                out[vid((x + 1, yb))] |= 1 << NORTH;
            }
        }
    }
    let mut used = vec![0u8; out.len()];
    // Component labels (4-connectivity) for assigning holes to shells.
    let labels = label_components(mask);
    let mut shells: Vec<Option<usize>> = Vec::new(); // component -> polygon index
    let mut polygons: RasterPolygons = Vec::new();
    let mut holes: Vec<(u32, Vec<Vertex>)> = Vec::new();
    let mut last_seen: Vec<u32> = vec![0; out.len()];
    let mut pos: Vec<u32> = vec![0; out.len()];
    let mut loop_id = 0u32;
    let max_steps = 4 * out.len();

    for start in 0..out.len() {
        while out[start] & !used[start] != 0 {
            let free = out[start] & !used[start];
            let d0 = free.trailing_zeros() as u8;
            let v0: Vertex = ((start % w) as u32, (start / w) as u32);
            // Follow the chain: in-edge direction -> out-edge (left turn at saddles).
            let mut ring: Vec<Vertex> = Vec::new();
            let (mut v, mut d) = (v0, d0);
            loop {
                if ring.len() > max_steps {
                    return Err(RenderError::Topology(format!(
                        "ring from {v0:?} does not close"
                    )));
                }
                ring.push(v);
                used[vid(v)] |= 1 << d;
                v = step(v, d);
                let o = out[vid(v)];
                let next = if o.count_ones() == 2 {
                    (d + 1) % 4
                } else {
                    o.trailing_zeros() as u8
                };
                if o & (1 << next) == 0 {
                    return Err(RenderError::Topology(format!(
                        "no edge leaves vertex {v:?}"
                    )));
                }
                if v == v0 && next == d0 {
                    break;
                }
                d = next;
            }
            // Split at repeated vertices into simple rings.
            loop_id += 1;
            for simple in split_simple(&ring, &mut last_seen, &mut pos, w, loop_id) {
                let area2 = signed_area2(&simple);
                let comp = left_cell_label(&simple, &labels, rows)?;
                if area2 > 0 {
                    if shells.len() <= comp as usize {
                        shells.resize(comp as usize + 1, None);
                    }
                    if shells[comp as usize].is_some() {
                        return Err(RenderError::Topology(format!(
                            "component {comp} has two outer rings"
                        )));
                    }
                    shells[comp as usize] = Some(polygons.len());
                    polygons.push(vec![close(simple)]);
                } else {
                    holes.push((comp, close(simple)));
                }
            }
        }
    }
    for (comp, ring) in holes {
        let p = shells
            .get(comp as usize)
            .copied()
            .flatten()
            .ok_or_else(|| {
                RenderError::Topology(format!("hole of component {comp} has no shell"))
            })?;
        polygons[p].push(ring);
    }
    Ok(polygons)
}

fn close(mut ring: Vec<Vertex>) -> Vec<Vertex> {
    if let Some(f) = ring.first().copied() {
        ring.push(f);
    }
    ring
}

/// Splits a closed vertex sequence (first vertex not repeated at the end) into simple loops.
/// `last_seen` and `pos` are per-vertex scratch arrays; `id` is unique to this call and > 0.
fn split_simple(
    ring: &[Vertex],
    last_seen: &mut [u32],
    pos: &mut [u32],
    w: usize,
    id: u32,
) -> Vec<Vec<Vertex>> {
    let idx = |v: &Vertex| v.1 as usize * w + v.0 as usize;
    let mut stack: Vec<Vertex> = Vec::with_capacity(ring.len() + 1);
    let mut loops = Vec::new();
    for v in ring.iter().chain(std::iter::once(&ring[0])) {
        let k = idx(v);
        if last_seen[k] == id {
            let sub: Vec<Vertex> = stack.drain(pos[k] as usize..).collect();
            for u in &sub {
                last_seen[idx(u)] = 0;
            }
            loops.push(sub);
        }
        last_seen[k] = id;
        pos[k] = stack.len() as u32;
        stack.push(*v);
    }
    // What is left is the start vertex pushed again after closing the outermost loop.
    loops
}

fn signed_area2(ring: &[Vertex]) -> i64 {
    let n = ring.len();
    let mut a = 0i64;
    for i in 0..n {
        let (p, q) = (ring[i], ring[(i + 1) % n]);
        a += i64::from(p.0) * i64::from(q.1) - i64::from(q.0) * i64::from(p.1);
    }
    a
}

/// The component label of the selected cell on the left of the ring's first edge.
fn left_cell_label(ring: &[Vertex], labels: &Array2<u32>, rows: usize) -> Result<u32, RenderError> {
    let (p, q) = (ring[0], ring[1 % ring.len()]);
    // Cell to the left of the directed edge p -> q, as (x, y) of its south-west corner.
    let (cx, cy) = if q.0 > p.0 {
        (p.0, p.1) // east: cell above
    } else if q.0 < p.0 {
        (q.0, p.1 - 1) // west: cell below
    } else if q.1 > p.1 {
        (p.0 - 1, p.1) // north: cell to the west
    } else {
        (p.0, q.1) // south: cell to the east
    };
    let (r, c) = (rows - 1 - cy as usize, cx as usize);
    let l = labels[[r, c]];
    if l == u32::MAX {
        return Err(RenderError::Topology(format!(
            "edge at {p:?} has no selected cell on its left"
        )));
    }
    Ok(l)
}

/// Labels 4-connected components of selected cells (u32::MAX for unselected).
fn label_components(mask: &Array2<bool>) -> Array2<u32> {
    let (rows, cols) = mask.dim();
    let mut labels = Array2::from_elem((rows, cols), u32::MAX);
    let mut next = 0u32;
    let mut stack = Vec::new();
    for r0 in 0..rows {
        for c0 in 0..cols {
            if !mask[[r0, c0]] || labels[[r0, c0]] != u32::MAX {
                continue;
            }
            labels[[r0, c0]] = next;
            stack.push((r0, c0));
            while let Some((r, c)) = stack.pop() {
                let mut visit = |rr: usize, cc: usize| {
                    if mask[[rr, cc]] && labels[[rr, cc]] == u32::MAX {
                        labels[[rr, cc]] = next;
                        stack.push((rr, cc));
                    }
                };
                if r > 0 {
                    visit(r - 1, c);
                }
                if r + 1 < rows {
                    visit(r + 1, c);
                }
                if c > 0 {
                    visit(r, c - 1);
                }
                if c + 1 < cols {
                    visit(r, c + 1);
                }
            }
            next += 1;
        }
    }
    labels
}

/// The selection masks of each level (in the order given) and the mass inside each.
pub(crate) fn select_levels(
    values: &Array2<f64>,
    levels: &[f64],
) -> (Vec<(Array2<bool>, f64, usize)>, f64) {
    let flat: Vec<f64> = values.iter().copied().collect();
    let total = neumaier_sum(flat.iter().copied());
    let order = descending_order(&flat);
    let dim = values.dim();
    let sets = levels
        .iter()
        .map(|&level| {
            let n = if total > 0.0 {
                count_to_reach(&flat, &order, level * total)
            } else {
                0
            };
            let mut mask = Array2::from_elem(dim, false);
            let mut parts = Vec::with_capacity(n);
            for &i in &order[..n] {
                mask[[i / dim.1, i % dim.1]] = true;
                parts.push(flat[i]);
            }
            (mask, neumaier_sum(parts), n)
        })
        .collect();
    (sets, total)
}

/// Collection members this function writes itself.
const OWN_MEMBERS: [&str; 2] = ["name", "grid_mass"];

/// The smallest regions holding each `level` of the grid mass (cells sorted by density,
/// descending, taken until the running sum reaches `level * grid_mass`), dissolved into
/// polygons with holes and written as RFC 7946 GeoJSON: one Feature per level (in the order
/// given) with a MultiPolygon geometry and properties `level`, `poc` (the mass actually inside,
/// as a probability, at least `level * grid_mass`), `share_of_grid` (poc / grid mass),
/// `cells` and `area_km2`. Rings are closed, exterior counter-clockwise, holes clockwise, no
/// ring touches itself; vertices are the projected grid corners (every corner along the
/// boundary is kept, so edges follow the grid), rounded to 6 decimals (7 under 10 m cells).
/// When the grid holds no mass the collection has no features. The collection carries `name`,
/// `grid_mass` and the `foreign` members.
///
/// # Errors
/// [`RenderError::ShapeMismatch`], [`RenderError::BadCellValue`] for negative or non-finite
/// values, [`RenderError::BadParameter`] for a level outside (0, 1],
/// [`RenderError::ReservedMember`] for a reserved foreign member, [`RenderError::Topology`] if
/// tracing fails (a bug).
pub fn containment_geojson(
    frame: &Frame,
    grid: &GridSpec,
    values: &Array2<f64>,
    levels: &[f64],
    collection_name: &str,
    foreign: Map<String, Value>,
) -> Result<Vec<u8>, RenderError> {
    check_layer("containment values", grid, values, f64::INFINITY)?;
    if let Some(&bad) = levels.iter().find(|l| !(**l > 0.0 && **l <= 1.0)) {
        return Err(RenderError::BadParameter {
            name: "level",
            value: bad,
            hint: "give containment levels as shares in (0, 1], such as 0.5, 0.9, 0.95",
        });
    }
    check_foreign(&foreign, &OWN_MEMBERS)?;
    let (sets, total) = select_levels(values, levels);
    let decimals = decimals_for_cell(grid.cell_m());
    let rows = grid.rows();
    let south_m = grid.north_m() - rows as f64 * grid.cell_m();
    let project = |v: Vertex| -> [f64; 2] {
        unwrapped_lon_lat(
            frame,
            Coord {
                x: grid.west_m() + f64::from(v.0) * grid.cell_m(),
                y: south_m + f64::from(v.1) * grid.cell_m(),
            },
        )
    };
    let mut features = Vec::new();
    for (&level, (mask, mass, n)) in levels.iter().zip(sets) {
        if n == 0 {
            continue;
        }
        let polys = trace_polygons(&mask)?;
        let mut parts: Vec<Vec<Vec<[f64; 2]>>> = Vec::new();
        for poly in polys {
            let mut rings: Vec<Vec<[f64; 2]>> = poly
                .into_iter()
                .map(|r| r.into_iter().map(project).collect())
                .collect();
            orient_rings(&mut rings);
            if rings
                .iter()
                .flatten()
                .any(|p| !(-180.0..=180.0).contains(&p[0]))
            {
                parts.extend(split_polygon_at_antimeridian(&rings));
            } else {
                parts.push(rings);
            }
        }
        let coords: Vec<Value> = parts
            .iter()
            .map(|poly| {
                Value::Array(
                    poly.iter()
                        .map(|ring| {
                            Value::Array(
                                ring.iter()
                                    .map(|p| {
                                        serde_json::json!([
                                            crate::vector::round_to(p[0], decimals),
                                            crate::vector::round_to(p[1], decimals)
                                        ])
                                    })
                                    .collect(),
                            )
                        })
                        .collect(),
                )
            })
            .collect();
        features.push(serde_json::json!({
            "type": "Feature",
            "geometry": {"type": "MultiPolygon", "coordinates": coords},
            "properties": {
                "level": level,
                "poc": mass,
                "share_of_grid": mass / total,
                "cells": n,
                "area_km2": n as f64 * grid.cell_area_m2() / seekgrid_core::units::M2_PER_KM2,
            }
        }));
    }
    let mut fc = Map::new();
    fc.insert("type".into(), Value::String("FeatureCollection".into()));
    fc.insert("name".into(), Value::String(collection_name.to_owned()));
    fc.insert("grid_mass".into(), serde_json::json!(total));
    fc.extend(foreign);
    fc.insert("features".into(), Value::Array(features));
    let mut out =
        serde_json::to_vec(&Value::Object(fc)).map_err(|e| RenderError::Json(e.to_string()))?;
    out.push(b'\n');
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn mask_from(rows: &[&str]) -> Array2<bool> {
        let r = rows.len();
        let c = rows[0].len();
        Array2::from_shape_fn((r, c), |(i, j)| rows[i].as_bytes()[j] == b'#')
    }

    /// A slow, obviously correct check of one polygon set against its mask: every ring closed,
    /// simple (no repeated vertex), exterior CCW and holes CW, and the cells inside (by
    /// even-odd point-in-polygon of each cell centre over all rings) equal the mask.
    fn check_valid(mask: &Array2<bool>, polys: &RasterPolygons) {
        let (rows, cols) = mask.dim();
        for poly in polys {
            for (i, ring) in poly.iter().enumerate() {
                assert_eq!(ring.first(), ring.last(), "closed");
                assert!(ring.len() >= 5, "a raster ring has at least 4 corners");
                let open = &ring[..ring.len() - 1];
                let mut seen = std::collections::HashSet::new();
                assert!(
                    open.iter().all(|v| seen.insert(*v)),
                    "ring touches itself: {open:?}"
                );
                let a = signed_area2(open);
                assert_eq!(
                    a > 0,
                    i == 0,
                    "exterior CCW, holes CW (ring {i}, area2 {a})"
                );
            }
        }
        for r in 0..rows {
            for c in 0..cols {
                let (px, py) = (c as f64 + 0.5, (rows - r) as f64 - 0.5);
                let mut inside = false;
                for ring in polys.iter().flatten() {
                    for e in ring.windows(2) {
                        let (ax, ay) = (f64::from(e[0].0), f64::from(e[0].1));
                        let (bx, by) = (f64::from(e[1].0), f64::from(e[1].1));
                        if (ay > py) != (by > py) && px < ax + (py - ay) / (by - ay) * (bx - ax) {
                            inside = !inside;
                        }
                    }
                }
                assert_eq!(inside, mask[[r, c]], "cell {r},{c}");
            }
        }
    }

    #[test]
    fn a_square_with_a_hole_gives_a_ccw_shell_and_a_cw_hole() {
        let m = mask_from(&["###", "#.#", "###"]);
        let p = trace_polygons(&m).unwrap();
        assert_eq!(p.len(), 1);
        assert_eq!(p[0].len(), 2);
        check_valid(&m, &p);
    }

    #[test]
    fn diagonal_neighbours_become_two_polygons_touching_at_a_point() {
        let m = mask_from(&["#.", ".#"]);
        let p = trace_polygons(&m).unwrap();
        assert_eq!(p.len(), 2);
        check_valid(&m, &p);
    }

    #[test]
    fn a_pocket_closed_by_a_diagonal_pinch_is_split_into_shell_and_hole() {
        // The ring of cells closes only diagonally at the top right: one 4-component whose
        // outer boundary passes the pinch vertex twice; it must come out as shell + hole.
        let m = mask_from(&["##..", "#.#.", "###.", "...."]);
        let m2 = mask_from(&["###.", "#..#", "####"]);
        for mm in [m, m2] {
            let p = trace_polygons(&mm).unwrap();
            check_valid(&mm, &p);
        }
    }

    #[test]
    fn a_checkerboard_gives_valid_separate_squares() {
        let m = Array2::from_shape_fn((6, 7), |(r, c)| (r + c) % 2 == 0);
        let p = trace_polygons(&m).unwrap();
        assert_eq!(p.len(), m.iter().filter(|b| **b).count());
        check_valid(&m, &p);
    }

    #[test]
    fn holes_touching_diagonally_and_islands_in_holes_are_valid() {
        let m = mask_from(&[
            "#######", "#..####", "#..####", "###..##", "###..##", "#.#####", "#######",
        ]);
        check_valid(&m, &trace_polygons(&m).unwrap());
        let island = mask_from(&["#####", "#...#", "#.#.#", "#...#", "#####"]);
        let p = trace_polygons(&island).unwrap();
        assert_eq!(p.len(), 2);
        check_valid(&island, &p);
        let touching_island = mask_from(&["#####", "##..#", "#.#.#", "#...#", "#####"]);
        check_valid(&touching_island, &trace_polygons(&touching_island).unwrap());
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(300))]
        #[test]
        fn random_masks_trace_into_valid_polygons(rows in 1usize..12, cols in 1usize..12, bits in proptest::collection::vec(any::<bool>(), 144)) {
            let m = Array2::from_shape_fn((rows, cols), |(r, c)| bits[r * 12 + c]);
            let p = trace_polygons(&m).unwrap();
            check_valid(&m, &p);
        }
    }

    #[test]
    fn levels_hold_at_least_their_share_and_are_minimal() {
        // Minimality: the region is the smallest count of top cells reaching the level, so
        // without its lowest cell it falls below (Hyndman 1996 HDR definition; computed here).
        let v = Array2::from_shape_fn((20, 20), |(r, c)| {
            let (dr, dc) = (r as f64 - 9.3, c as f64 - 11.1);
            (-(dr * dr + 0.5 * dc * dc) / 18.0).exp()
        });
        let total: f64 = v.iter().sum();
        let levels = [0.5, 0.9, 0.95, 1.0];
        let (sets, t) = select_levels(&v, &levels);
        assert!((t - total).abs() < 1e-12);
        let mut prev = 0;
        for (&level, (mask, mass, n)) in levels.iter().zip(&sets) {
            let inside: Vec<f64> = v
                .iter()
                .zip(mask.iter())
                .filter(|(_, m)| **m)
                .map(|(x, _)| *x)
                .collect();
            assert_eq!(inside.len(), *n);
            let sum: f64 = inside.iter().sum();
            assert!((sum - mass).abs() < 1e-12);
            assert!(
                sum >= level * total * (1.0 - 1e-15),
                "level {level}: {sum} < {}",
                level * total
            );
            let lowest = inside.iter().copied().fold(f64::MAX, f64::min);
            if level < 1.0 {
                assert!(sum - lowest < level * total, "level {level} is not minimal");
            }
            // Every selected cell is at least as dense as every unselected one.
            let max_out = v
                .iter()
                .zip(mask.iter())
                .filter(|(_, m)| !**m)
                .map(|(x, _)| *x)
                .fold(0.0, f64::max);
            assert!(lowest >= max_out);
            assert!(*n >= prev, "levels are nested");
            prev = *n;
        }
    }

    #[test]
    fn geojson_has_one_feature_per_level_with_ccw_rings_in_lon_lat() {
        use seekgrid_core::{DEFAULT_MAX_CELLS, UtmZone};
        let frame = Frame::new(UtmZone::from_epsg(32720).unwrap());
        let grid = GridSpec::new(300_000.0, 6_000_000.0, 100.0, 30, 30, DEFAULT_MAX_CELLS).unwrap();
        let v = Array2::from_shape_fn((30, 30), |(r, c)| {
            let (dr, dc) = (r as f64 - 15.0, c as f64 - 12.0);
            let ring = ((dr * dr + dc * dc).sqrt() - 8.0).abs();
            (-ring * ring / 4.0).exp() + if (r + c) % 11 == 0 { 0.3 } else { 0.0 }
        });
        let bytes = containment_geojson(
            &frame,
            &grid,
            &v,
            &[0.5, 0.9, 0.95],
            "containment",
            Map::new(),
        )
        .unwrap();
        let j: Value = serde_json::from_slice(&bytes).unwrap();
        let feats = j["features"].as_array().unwrap();
        assert_eq!(feats.len(), 3);
        for f in feats {
            let level = f["properties"]["level"].as_f64().unwrap();
            assert!(f["properties"]["share_of_grid"].as_f64().unwrap() >= level);
            for poly in f["geometry"]["coordinates"].as_array().unwrap() {
                for (i, ring) in poly.as_array().unwrap().iter().enumerate() {
                    let pts: Vec<[f64; 2]> = ring
                        .as_array()
                        .unwrap()
                        .iter()
                        .map(|p| [p[0].as_f64().unwrap(), p[1].as_f64().unwrap()])
                        .collect();
                    assert_eq!(pts.first(), pts.last());
                    let a = crate::vector::ring_signed_area2(&pts);
                    assert_eq!(a > 0.0, i == 0, "exterior CCW, holes CW in lon/lat");
                }
            }
        }
        let empty = containment_geojson(
            &frame,
            &grid,
            &Array2::zeros((30, 30)),
            &[0.5],
            "c",
            Map::new(),
        )
        .unwrap();
        let j: Value = serde_json::from_slice(&empty).unwrap();
        assert_eq!(j["features"].as_array().unwrap().len(), 0);
        assert!(containment_geojson(&frame, &grid, &v, &[1.5], "c", Map::new()).is_err());
    }
}
