//! The writers of the map's layers: one function per [`Layer`], each taking the computed result
//! and writing through the [`Recorder`] (see [`crate::layers`] for the registry).

use crate::layers::{Computed, Layer, Recorder};
use crate::summary::{CAUTION, FileDetails};
use crate::{self as render, CellLimit, ColourScale, MapStyle, Overlay, RenderError};
use geojson::{Feature, FeatureCollection, JsonObject, JsonValue};
use seekgrid_engine::IncidentMap;
use seekgrid_incident::model::Incident;

/// Particles written per drift scenario to `particles.geojson` at most.
pub const MAX_PARTICLE_FEATURES: usize = 5_000;

/// Cells written to `probability.geojson` at most. Beyond it the file holds only the densest
/// cells and says which share of the grid's mass it holds: a GeoJSON polygon per cell costs
/// about 200 bytes, so 200,000 cells make a file of about 40 MB, as much as GIS viewers open
/// comfortably; every cell is drawn in the heatmap.
pub const MAX_PROBABILITY_FEATURES: usize = 200_000;

/// The share of the grid's mass at which `probability.geojson` stops when more than
/// [`MAX_PROBABILITY_FEATURES`] cells hold mass (it stops earlier at that many cells).
pub const TOP_SHARE: f64 = 0.999;

/// The levels of `containment.geojson`.
pub(crate) const CONTAINMENT_LEVELS: [f64; 3] = [0.5, 0.9, 0.95];

fn foreign(incident: &Incident, m: &IncidentMap, run_id: &str) -> JsonObject {
    let mut f = JsonObject::new();
    f.insert("run_id".into(), run_id.into());
    f.insert("title".into(), incident.title.clone().into());
    f.insert("time".into(), m.at.to_rfc3339().into());
    f.insert("caution".into(), CAUTION.into());
    f
}

fn subtitle(m: &IncidentMap, what: &str) -> String {
    format!(
        "{what} at {} UTC | {} | cell {} m | {} search(es) applied",
        m.at.format("%Y-%m-%d %H:%M"),
        format_args!("EPSG:{}", m.prepared.frame.epsg()),
        m.grid.cell_m(),
        m.searches.len()
    )
}

pub(crate) fn base_overlays(incident: &Incident, m: &IncidentMap) -> Vec<Overlay> {
    let mut o = Vec::new();
    if let Some(land) = &m.prepared.land {
        for p in land {
            // Afloat: land holds no probability and is filled; otherwise only the shore is drawn
            // so the probability on land stays visible.
            o.push(if incident.object_afloat == Some(true) {
                Overlay::filled_polygon(p.clone(), [205, 190, 160, 255], [90, 70, 40], 2)
                    .with_legend("land")
            } else {
                Overlay::polygon(p.clone(), [90, 70, 40], 3).with_legend("coastline")
            });
        }
    }
    if let Some(segments) = &m.prepared.segments {
        for seg in segments {
            for (k, p) in seg.polygons.iter().enumerate() {
                let outline = Overlay::polygon(p.clone(), [60, 60, 60], 1);
                o.push(if k == 0 {
                    outline.with_label(&seg.id)
                } else {
                    outline
                });
            }
        }
    }
    o
}

fn search_overlays(m: &IncidentMap) -> Vec<Overlay> {
    let mut o = Vec::new();
    for s in &m.searches {
        match &s.area_polygon {
            Some(a) => o.push(Overlay::polygon(a.clone(), [255, 255, 255], 2).with_label(&s.id)),
            None => o.push(Overlay::line(s.track.clone(), [255, 255, 255], 2).with_label(&s.id)),
        }
    }
    o
}

/// The probability layer's writer: `probability.geojson`, stating the share of the grid's mass
/// it holds.
pub(crate) fn probability(c: &Computed, out: &mut Recorder) -> Result<(), RenderError> {
    let m = c.map;
    let layer = render::CellLayer {
        frame: &m.prepared.frame,
        grid: &m.grid,
        poc: m.poc(),
        pod_cumulative: m.pod_cumulative.as_ref(),
    };
    let mut members = foreign(c.incident, m, out.run_id());
    members.insert(
        "full_grid".into(),
        "every cell of the grid is drawn in the heatmap layer (heatmap.png); no file holds every cell's value yet".into(),
    );
    let export = render::probability_geojson(
        &layer,
        TOP_SHARE,
        MAX_PROBABILITY_FEATURES,
        "probability",
        members,
    )?;
    let details = FileDetails::Probability {
        cells_with_mass: export.cells_with_mass,
        cells_written: export.cells_written,
        poc_written: export.mass_written,
        share_of_grid_mass_written: export.share_written,
        limited_by: export.limited_by.map(CellLimit::name),
        top_share: TOP_SHARE,
        max_cells: MAX_PROBABILITY_FEATURES,
    };
    let l = Layer::Probability;
    out.write(l, l.files()[0], &export.geojson, Some(details))
}

/// The containment layer's writer: `containment.geojson`.
pub(crate) fn containment(c: &Computed, out: &mut Recorder) -> Result<(), RenderError> {
    let m = c.map;
    let bytes = render::containment_geojson(
        &m.prepared.frame,
        &m.grid,
        m.poc(),
        &CONTAINMENT_LEVELS,
        "containment",
        foreign(c.incident, m, out.run_id()),
    )?;
    let details = FileDetails::Containment {
        levels: CONTAINMENT_LEVELS.to_vec(),
        of: "mass in the grid",
    };
    let l = Layer::Containment;
    out.write(l, l.files()[0], &bytes, Some(details))
}

/// The heatmap layer's writer: `heatmap.png` and its sidecars.
pub(crate) fn heatmap(c: &Computed, out: &mut Recorder) -> Result<(), RenderError> {
    let m = c.map;
    let cell_km2 = m.grid.cell_area_m2() / seekgrid_core::units::M2_PER_KM2;
    let density = m.poc().mapv(|p| p / cell_km2);
    let sub = subtitle(m, "Probability map");
    let style = MapStyle::density(&c.incident.title, &sub);
    let mut overlays = base_overlays(c.incident, m);
    overlays.extend(search_overlays(m));
    let png = render::heatmap_png(&m.prepared.frame, &m.grid, &density, &style, &overlays)?;
    out.write_picture(Layer::Heatmap, &png)
}

/// The POD layer's writer: `pod.png` and its sidecars, when searches were applied.
pub(crate) fn pod(c: &Computed, out: &mut Recorder) -> Result<(), RenderError> {
    let m = c.map;
    let Some(pod) = &m.pod_cumulative else {
        out.skip(Layer::Pod, NO_SEARCH);
        return Ok(());
    };
    let sub = subtitle(m, "Cumulative POD");
    let style = MapStyle {
        title: &c.incident.title,
        subtitle: &sub,
        caution: CAUTION,
        legend_label: "cumulative POD",
        scale: ColourScale::Fraction,
    };
    let mut overlays = base_overlays(c.incident, m);
    overlays.extend(search_overlays(m));
    let png = render::heatmap_png(&m.prepared.frame, &m.grid, pod, &style, &overlays)?;
    out.write_picture(Layer::Pod, &png)
}

/// The heatmap-data layer's writer: `heatmap-data.png` (the map alone, one pixel per cell,
/// transparent where the probability is 0) and its sidecars.
pub(crate) fn heatmap_data(c: &Computed, out: &mut Recorder) -> Result<(), RenderError> {
    let m = c.map;
    let png = render::data_png(&m.prepared.frame, &m.grid, m.poc(), ColourScale::Density)?;
    out.write_picture(Layer::HeatmapData, &png)
}

/// The rasters layer's writer: `poc.tif`, `density.tif` and, after searches, `pod.tif`
/// (Float32 GeoTIFF, [`crate::geotiff`]).
pub(crate) fn rasters(c: &Computed, out: &mut Recorder) -> Result<(), RenderError> {
    let m = c.map;
    let l = Layer::Rasters;
    let cell_km2 = m.grid.cell_area_m2() / seekgrid_core::units::M2_PER_KM2;
    let poc = m.poc();
    let density = poc.mapv(|p| p / cell_km2);
    let mut rasters: Vec<(&str, &str, ndarray::Array2<f64>)> = vec![
        (
            "poc.tif",
            "probability of containment per cell (a fraction)",
            poc.clone(),
        ),
        ("density.tif", "probability of containment per km²", density),
    ];
    if let Some(pod) = &m.pod_cumulative {
        rasters.push((
            "pod.tif",
            "cumulative probability of detection (0..1)",
            pod.clone(),
        ));
    }
    for (name, quantity, values) in rasters {
        let mut items = vec![
            ("quantity", quantity.to_owned()),
            ("time", m.at.to_rfc3339()),
            ("run_id", out.run_id().to_owned()),
            ("caution", CAUTION.to_owned()),
        ];
        if let Some(p) = out.provenance() {
            items.push(("provenance", p.to_json_line()));
        }
        let bytes = crate::geotiff::float_geotiff(&m.prepared.frame, &m.grid, &values, &items)?;
        out.write(l, name, &bytes, None)?;
    }
    Ok(())
}

/// Why the search layers can be empty.
const NO_SEARCH: &str = "no search was applied by the map time";
/// Why the drift layers can be empty.
const NO_DRIFT: &str = "no scenario drifts";

/// The segments layer's writer: `segments.csv` and `segments.geojson`, when segments are used.
pub(crate) fn segments(c: &Computed, out: &mut Recorder) -> Result<(), RenderError> {
    let m = c.map;
    let Some(segments) = &m.prepared.segments else {
        out.skip(Layer::Segments, "the incident uses no segments");
        return Ok(());
    };
    let table = match m.segment_table() {
        Some(Ok(t)) => t,
        Some(Err(e)) => return Err(RenderError::Internal(format!("segment table: {e}"))),
        None => return Err(RenderError::Internal("segments without a table".into())),
    };
    let rows = segment_rows(m, &table);
    let l = Layer::Segments;
    let details = || {
        Some(FileDetails::Segments {
            segments: segments.len(),
            poa_rest_of_world: table.rest_of_world,
            poa_outside_segments: table.outside_segments,
        })
    };
    let geojson = segments_geojson(m, segments, &rows, &table, out.run_id())?;
    out.write(l, l.files()[0], &segments_csv(&rows)?, details())?;
    out.write(l, l.files()[1], &geojson, details())
}

/// The searches layer's writer: `searches.geojson`, when searches were applied.
pub(crate) fn searches(c: &Computed, out: &mut Recorder) -> Result<(), RenderError> {
    let m = c.map;
    if m.searches.is_empty() {
        out.skip(Layer::Searches, NO_SEARCH);
        return Ok(());
    }
    let details = FileDetails::Searches {
        searches: m.searches.len(),
    };
    let l = Layer::Searches;
    out.write(
        l,
        l.files()[0],
        &searches_geojson(c.incident, m, out.run_id())?,
        Some(details),
    )
}

/// The particles layer's writer: `particles.geojson`, when a scenario drifts.
pub(crate) fn particles(c: &Computed, out: &mut Recorder) -> Result<(), RenderError> {
    let m = c.map;
    if m.drift_runs.is_empty() {
        out.skip(Layer::Particles, NO_DRIFT);
        return Ok(());
    }
    let details = FileDetails::Particles {
        thinned_to_at_most_per_scenario: MAX_PARTICLE_FEATURES,
        weight: "mass of the particles each point stands for",
    };
    let l = Layer::Particles;
    out.write(
        l,
        l.files()[0],
        &particles_geojson(m, out.run_id())?,
        Some(details),
    )
}

/// The drift layer's writer: `drift.geojson`, when a scenario drifts.
pub(crate) fn drift(c: &Computed, out: &mut Recorder) -> Result<(), RenderError> {
    let m = c.map;
    if m.drift_runs.is_empty() {
        out.skip(Layer::Drift, NO_DRIFT);
        return Ok(());
    }
    let details = FileDetails::Drift {
        ellipses: [0.5, 0.9],
        mean_track: "hourly weighted mean",
        weights: "the belief's weights at the map time",
    };
    let l = Layer::Drift;
    out.write(
        l,
        l.files()[0],
        &drift_geojson(m, out.run_id())?,
        Some(details),
    )
}

/// One segment's row: POA now, area, density, and after searches cumulative POD and POS.
struct SegmentRow {
    id: String,
    area_km2: f64,
    poa: f64,
    density_km2: f64,
    /// Cumulative POD and POS, after searches.
    searched: Option<(f64, f64)>,
}

/// Per segment: POA now, area, density, and after searches cumulative POD and POS, each cell
/// split between segments by the engine's sub-cell shares (`IncidentMap::segment_table`).
fn segment_rows(m: &IncidentMap, table: &seekgrid_engine::SegmentTable) -> Vec<SegmentRow> {
    // Cumulative POD of a segment: its prior mass weighted by each cell's cumulative POD,
    // over its prior mass; its POS: that weighted mass itself (share of the original prior).
    let before = m.belief_before_searches.cells();
    let searched = m.pod_cumulative.as_ref().map(|pod| {
        let found = before * pod;
        (table.split.poa(before), table.split.poa(&found))
    });
    table
        .rows
        .iter()
        .enumerate()
        .map(|(k, row)| SegmentRow {
            id: row.id.clone(),
            area_km2: row.area_m2 / seekgrid_core::units::M2_PER_KM2,
            poa: row.poa,
            density_km2: row.density_per_km2,
            searched: match &searched {
                Some((b, f)) if b[k] > 0.0 => Some((f[k] / b[k], f[k])),
                Some(_) => Some((0.0, 0.0)),
                None => None,
            },
        })
        .collect()
}

/// `segments.csv` (RFC 4180 through the `csv` crate: an id holding a comma or a quote is
/// quoted), numbers with six decimals, POD and POS empty before any search.
fn segments_csv(rows: &[SegmentRow]) -> Result<Vec<u8>, RenderError> {
    let mut w = csv::Writer::from_writer(Vec::new());
    let bad = |e: csv::Error| RenderError::Internal(format!("CSV writer: {e}"));
    w.write_record([
        "segment",
        "area_km2",
        "poa",
        "density_km2",
        "pod_cumulative",
        "pos_cumulative",
    ])
    .map_err(bad)?;
    let fmt = |v: f64| format!("{v:.6}");
    for r in rows {
        let (pod, pos) = r
            .searched
            .map_or((String::new(), String::new()), |(d, s)| (fmt(d), fmt(s)));
        w.write_record([
            r.id.clone(),
            fmt(r.area_km2),
            fmt(r.poa),
            fmt(r.density_km2),
            pod,
            pos,
        ])
        .map_err(bad)?;
    }
    w.into_inner()
        .map_err(|e| RenderError::Internal(format!("CSV writer: {e}")))
}

/// `segments.geojson`: each segment's polygons with the same numbers as `segments.csv`.
fn segments_geojson(
    m: &IncidentMap,
    segments: &[seekgrid_prior::Segment],
    rows: &[SegmentRow],
    table: &seekgrid_engine::SegmentTable,
    run_id: &str,
) -> Result<Vec<u8>, RenderError> {
    let mut features = Vec::new();
    for (row, segment) in rows.iter().zip(segments) {
        for poly in &segment.polygons {
            let mut props = JsonObject::new();
            props.insert("segment".into(), row.id.clone().into());
            props.insert("area_km2".into(), row.area_km2.into());
            props.insert("poa".into(), row.poa.into());
            props.insert("density_km2".into(), row.density_km2.into());
            if let Some((pod, pos)) = row.searched {
                props.insert("pod_cumulative".into(), pod.into());
                props.insert("pos_cumulative".into(), pos.into());
            }
            features.push(Feature {
                geometry: Some(render::polygon_to_geojson(&m.prepared.frame, poly)),
                properties: Some(props),
                ..Default::default()
            });
        }
    }
    let mut members = named("segments", run_id);
    members.insert("poa_rest_of_world".into(), table.rest_of_world.into());
    members.insert("poa_outside_segments".into(), table.outside_segments.into());
    collection_bytes(features, members)
}

/// A feature collection with its foreign members, as RFC 7946 bytes.
pub(crate) fn collection_bytes(
    features: Vec<Feature>,
    foreign: JsonObject,
) -> Result<Vec<u8>, RenderError> {
    render::geojson_bytes(FeatureCollection {
        features,
        bbox: None,
        foreign_members: Some(foreign),
    })
}

fn named(name: &str, run_id: &str) -> JsonObject {
    let mut f = JsonObject::new();
    f.insert("run_id".into(), run_id.into());
    f.insert("name".into(), name.into());
    f.insert("caution".into(), CAUTION.into());
    f
}

fn searches_geojson(
    incident: &Incident,
    m: &IncidentMap,
    run_id: &str,
) -> Result<Vec<u8>, RenderError> {
    let frame = &m.prepared.frame;
    let mut features = Vec::new();
    for s in &m.searches {
        let mut props = JsonObject::new();
        props.insert("search".into(), s.id.clone().into());
        props.insert("unit".into(), s.unit.clone().into());
        props.insert("start".into(), s.start.to_rfc3339().into());
        props.insert("end".into(), s.end.to_rfc3339().into());
        props.insert("sweep_width_m".into(), s.sweep_width_m.into());
        props.insert("detection".into(), s.detection.into());
        props.insert("track_length_m".into(), s.track_length_m.into());
        props.insert("pos".into(), s.pos.into());
        props.insert("pod_mean_in_area".into(), s.outcome.pod_mean_in_area.into());
        if let Some(v) = s.track_spacing_m {
            props.insert("track_spacing_m".into(), v.into());
        }
        if let Some(v) = s.coverage {
            props.insert("coverage".into(), v.into());
        }
        if let Some(v) = s.pod_pattern {
            props.insert("pod".into(), v.into());
        }
        if let Some(area) = &s.area_polygon {
            let mut p = props.clone();
            p.insert("part".into(), "area".into());
            features.push(Feature {
                geometry: Some(render::polygon_to_geojson(frame, area)),
                properties: Some(p),
                ..Default::default()
            });
        }
        props.insert("part".into(), "track".into());
        features.push(Feature {
            geometry: Some(render::line_to_geojson(frame, &s.track)),
            properties: Some(props),
            ..Default::default()
        });
    }
    let mut f = named("searches", run_id);
    f.insert("title".into(), JsonValue::from(incident.title.clone()));
    collection_bytes(features, f)
}

/// A thinned sample of each drift scenario's particles at the map time: every k-th particle,
/// carrying the mass of the k particles it stands for, so the sample's weights add up to the
/// drifting mass.
fn particles_geojson(m: &IncidentMap, run_id: &str) -> Result<Vec<u8>, RenderError> {
    let frame = &m.prepared.frame;
    let p = m.belief.particles();
    let mut features = Vec::new();
    for (range, (id, _)) in m.particle_clouds().into_iter().zip(&m.drift_runs) {
        let n = range.len();
        let k = n.div_ceil(MAX_PARTICLE_FEATURES).max(1);
        let mut i = range.start;
        while i < range.end {
            let block = i..(i + k).min(range.end);
            let weight: f64 = p.weights()[block.clone()].iter().sum();
            let mut props = JsonObject::new();
            props.insert("scenario".into(), id.clone().into());
            props.insert("weight".into(), weight.into());
            props.insert("stranded".into(), p.stranded()[i].into());
            features.push(Feature {
                geometry: Some(render::point_to_geojson(frame, p.position(i))),
                properties: Some(props),
                ..Default::default()
            });
            i = block.end;
        }
    }
    let mut f = named("particles", run_id);
    f.insert("time".into(), m.at.to_rfc3339().into());
    collection_bytes(features, f)
}

/// Hourly weighted mean position of each drift scenario's cloud (a track and points) and its
/// 50 % and 90 % spread ellipses, from the hour after the earliest adrift time to the map time.
fn drift_geojson(m: &IncidentMap, run_id: &str) -> Result<Vec<u8>, RenderError> {
    use chrono::{DurationRound, TimeDelta};
    let frame = &m.prepared.frame;
    let weights = m.belief.particles().weights();
    let mut features = Vec::new();
    let bad = |e: seekgrid_drift::DriftError| RenderError::Topology(e.to_string());
    for (range, (id, run)) in m.particle_clouds().into_iter().zip(&m.drift_runs) {
        let w = &weights[range];
        let hour = TimeDelta::hours(1);
        let mut t = run
            .start()
            .duration_trunc(hour)
            .map_err(|e| RenderError::Topology(e.to_string()))?
            + hour;
        let mut times = vec![run.start()];
        while t < m.at {
            times.push(t);
            t += hour;
        }
        times.push(m.at);
        let mut track = Vec::new();
        for t in &times {
            let spread = run.spread_at(*t, w).map_err(bad)?;
            track.push(spread.mean);
            let mut props = JsonObject::new();
            props.insert("scenario".into(), id.clone().into());
            props.insert("time".into(), t.to_rfc3339().into());
            props.insert("part".into(), "mean".into());
            features.push(Feature {
                geometry: Some(render::point_to_geojson(frame, spread.mean)),
                properties: Some(props),
                ..Default::default()
            });
            for level in [0.5, 0.9] {
                let e = spread.ellipse(level).map_err(bad)?;
                if e.semi_major_m <= 0.0 {
                    continue;
                }
                let ring = geo::LineString(e.boundary(72));
                let mut props = JsonObject::new();
                props.insert("scenario".into(), id.clone().into());
                props.insert("time".into(), t.to_rfc3339().into());
                props.insert("part".into(), "ellipse".into());
                props.insert("level".into(), level.into());
                props.insert("semi_major_m".into(), e.semi_major_m.into());
                props.insert("semi_minor_m".into(), e.semi_minor_m.into());
                features.push(Feature {
                    geometry: Some(render::polygon_to_geojson(
                        frame,
                        &geo::Polygon::new(ring, vec![]),
                    )),
                    properties: Some(props),
                    ..Default::default()
                });
            }
        }
        let mut props = JsonObject::new();
        props.insert("scenario".into(), id.clone().into());
        props.insert("part".into(), "mean-track".into());
        props.insert("start".into(), run.start().to_rfc3339().into());
        props.insert("end".into(), m.at.to_rfc3339().into());
        features.push(Feature {
            geometry: Some(render::line_to_geojson(frame, &geo::LineString(track))),
            properties: Some(props),
            ..Default::default()
        });
    }
    collection_bytes(features, named("drift", run_id))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_segment_id_with_a_comma_or_a_quote_stays_one_field_in_segments_csv() {
        let row = |id: &str, searched| SegmentRow {
            id: id.to_owned(),
            area_km2: 1.5,
            poa: 0.25,
            density_km2: 0.1,
            searched,
        };
        let rows = [
            row("North, upper slope", Some((0.5, 0.125))),
            row("the \"Gap\"", None),
        ];
        let bytes = segments_csv(&rows).unwrap();
        let text = String::from_utf8(bytes.clone()).unwrap();
        // RFC 4180: a field holding a comma or a quote is quoted, quotes doubled.
        assert!(
            text.contains("\"North, upper slope\",1.500000,0.250000,0.100000,0.500000,0.125000\n"),
            "{text}"
        );
        assert!(
            text.contains("\"the \"\"Gap\"\"\",1.500000,0.250000,0.100000,,\n"),
            "{text}"
        );
        let mut reader = csv::Reader::from_reader(bytes.as_slice());
        let records: Vec<csv::StringRecord> = reader.records().map(Result::unwrap).collect();
        assert_eq!(records.len(), 2);
        assert!(records.iter().all(|r| r.len() == 6));
        assert_eq!(&records[0][0], "North, upper slope");
        assert_eq!(&records[1][0], "the \"Gap\"");
        assert_eq!(
            reader.headers().unwrap().iter().collect::<Vec<_>>(),
            [
                "segment",
                "area_km2",
                "poa",
                "density_km2",
                "pod_cumulative",
                "pos_cumulative"
            ]
        );
    }
}
