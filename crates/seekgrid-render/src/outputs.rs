//! Writing the layers of a computed map into an output folder, through seekgrid-render.

use crate::summary::{CAUTION, Summary, summarise};
use crate::{self as render, ColourScale, MapStyle, OutputDir, Overlay, RenderError};
use geojson::{Feature, FeatureCollection, JsonObject, JsonValue};
use ndarray::Array2;
use seekgrid_engine::IncidentMap;
use seekgrid_incident::model::Incident;
use std::collections::BTreeSet;

/// The outputs that can be chosen with `--outputs`.
pub const OUTPUT_NAMES: [&str; 9] = [
    "summary",
    "probability",
    "containment",
    "heatmap",
    "segments",
    "searches",
    "pod",
    "particles",
    "drift",
];

/// Particles written per drift scenario to `particles.geojson` at most.
pub const MAX_PARTICLE_FEATURES: usize = 5_000;

/// Cells written to `probability.geojson` at most before it is limited to the top share.
pub const MAX_PROBABILITY_FEATURES: usize = 200_000;

/// The share of grid mass written when `probability.geojson` is limited.
pub const TOP_SHARE: f64 = 0.999;

/// Which outputs to write.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct OutputSelection(BTreeSet<&'static str>);

impl OutputSelection {
    /// Every output.
    #[must_use]
    pub fn all() -> Self {
        Self(OUTPUT_NAMES.into_iter().collect())
    }

    /// Parses a comma-separated list such as `summary,heatmap`.
    ///
    /// # Errors
    /// Names the unknown output and lists the known ones.
    pub fn parse(list: &str) -> Result<Self, String> {
        let mut set = BTreeSet::new();
        for name in list.split(',').map(str::trim).filter(|s| !s.is_empty()) {
            match OUTPUT_NAMES.iter().find(|n| **n == name) {
                Some(n) => {
                    set.insert(*n);
                }
                None => {
                    return Err(format!(
                        "unknown output \"{name}\"; choose from {}",
                        OUTPUT_NAMES.join(", ")
                    ));
                }
            }
        }
        if set.is_empty() {
            return Err(format!(
                "no output named; choose from {}",
                OUTPUT_NAMES.join(", ")
            ));
        }
        Ok(Self(set))
    }

    /// Whether an output is chosen.
    #[must_use]
    pub fn has(&self, name: &str) -> bool {
        self.0.contains(name)
    }
}

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

/// Writes the chosen outputs; returns the summary (with its `outputs` member filled in).
///
/// # Errors
/// [`RenderError`] from the writer (a file that cannot be written, a layer that cannot be drawn).
pub fn write(
    incident: &Incident,
    m: &IncidentMap,
    dir: &OutputDir,
    selection: &OutputSelection,
) -> Result<Summary, RenderError> {
    let frame = &m.prepared.frame;
    let grid = &m.grid;
    let poc = &m.poc;
    let mut summary = summarise(incident, m);
    summary.run_id = Some(dir.run_id().to_owned());
    let mut written = serde_json::Map::new();
    let cell_km2 = grid.cell_area_m2() / 1e6;

    if selection.has("probability") {
        let layer = render::CellLayer {
            frame,
            grid,
            poc,
            pod_cumulative: m.pod_cumulative.as_ref(),
        };
        let export = render::probability_geojson(
            &layer,
            TOP_SHARE,
            MAX_PROBABILITY_FEATURES,
            "probability",
            foreign(incident, m, dir.run_id()),
        )?;
        dir.write("probability.geojson", &export.geojson)?;
        written.insert(
            "probability.geojson".into(),
            serde_json::json!({
                "cells_written": export.cells_written,
                "poc_written": export.mass_written,
                "limited_to_top_share": export.limited.then_some(TOP_SHARE),
            }),
        );
    }
    if selection.has("containment") {
        let bytes = render::containment_geojson(
            frame,
            grid,
            poc,
            &[0.5, 0.9, 0.95],
            "containment",
            foreign(incident, m, dir.run_id()),
        )?;
        dir.write("containment.geojson", &bytes)?;
        written.insert(
            "containment.geojson".into(),
            serde_json::json!({"levels": [0.5, 0.9, 0.95], "of": "mass in the grid"}),
        );
    }
    if selection.has("heatmap") {
        let density = poc.mapv(|p| p / cell_km2);
        let sub = subtitle(m, "Probability map");
        let style = MapStyle {
            title: &incident.title,
            subtitle: &sub,
            caution: CAUTION,
            legend_label: "probability per km²",
            scale: ColourScale::Density,
        };
        let mut overlays = base_overlays(incident, m);
        overlays.extend(search_overlays(m));
        let png = render::heatmap_png(frame, grid, &density, &style, &overlays)?;
        render::write_png_set(dir, "heatmap", &png)?;
        written.insert("heatmap.png".into(), serde_json::json!({"pixels_per_cell": png.pixels_per_cell, "sidecars": ["heatmap.pgw", "heatmap.png.aux.xml", "heatmap.prj"]}));
    }
    if selection.has("pod")
        && let Some(pod) = &m.pod_cumulative
    {
        let sub = subtitle(m, "Cumulative POD");
        let style = MapStyle {
            title: &incident.title,
            subtitle: &sub,
            caution: CAUTION,
            legend_label: "cumulative POD",
            scale: ColourScale::Fraction,
        };
        let mut overlays = base_overlays(incident, m);
        overlays.extend(search_overlays(m));
        let png = render::heatmap_png(frame, grid, pod, &style, &overlays)?;
        render::write_png_set(dir, "pod", &png)?;
        written.insert(
            "pod.png".into(),
            serde_json::json!({"pixels_per_cell": png.pixels_per_cell}),
        );
    }
    if selection.has("segments")
        && let Some(segments) = &m.prepared.segments
    {
        let (csv, geojson) = segment_tables(m, segments, poc, dir.run_id())?;
        dir.write("segments.csv", csv.as_bytes())?;
        dir.write("segments.geojson", &geojson)?;
        written.insert(
            "segments.csv".into(),
            serde_json::json!({"segments": segments.len()}),
        );
    }
    if selection.has("searches") && !m.searches.is_empty() {
        dir.write(
            "searches.geojson",
            &searches_geojson(incident, m, dir.run_id())?,
        )?;
        written.insert(
            "searches.geojson".into(),
            serde_json::json!({"searches": m.searches.len()}),
        );
    }
    if !m.drift_runs.is_empty() {
        if selection.has("particles") {
            dir.write("particles.geojson", &particles_geojson(m, dir.run_id())?)?;
            written.insert(
                "particles.geojson".into(),
                serde_json::json!({"thinned_to_at_most_per_scenario": MAX_PARTICLE_FEATURES, "weight": "mass of the particles each point stands for"}),
            );
        }
        if selection.has("drift") {
            dir.write("drift.geojson", &drift_geojson(m, dir.run_id())?)?;
            written.insert(
                "drift.geojson".into(),
                serde_json::json!({"mean_track": "hourly weighted mean", "ellipses": [0.5, 0.9], "weights": "the belief's weights at the map time"}),
            );
        }
    }
    summary.outputs = written;
    if selection.has("summary") {
        write_summary(dir, &summary)?;
    }
    Ok(summary)
}

/// Writes `summary.json` (pretty JSON, ending with a newline).
///
/// # Errors
/// [`RenderError`] when it cannot be serialised or written.
pub(crate) fn write_summary(dir: &OutputDir, summary: &Summary) -> Result<(), RenderError> {
    let mut bytes =
        serde_json::to_vec_pretty(summary).map_err(|e| RenderError::Json(e.to_string()))?;
    bytes.push(b'\n');
    dir.write("summary.json", &bytes)?;
    Ok(())
}

/// Per segment: POA now, area, density, and after searches cumulative POD and POS.
fn segment_tables(
    m: &IncidentMap,
    segments: &[seekgrid_prior::Segment],
    poc: &Array2<f64>,
    run_id: &str,
) -> Result<(String, Vec<u8>), RenderError> {
    let now = seekgrid_prior::segment_table(poc, &m.grid, segments);
    // Cumulative POD of a segment: its prior mass weighted by each cell's cumulative POD,
    // over its prior mass; its POS: that weighted mass itself (share of the original prior).
    let before = m.belief_before_searches.cells();
    let searched = m.pod_cumulative.as_ref().map(|pod| {
        let found = before * pod;
        (
            seekgrid_prior::segment_table(before, &m.grid, segments),
            seekgrid_prior::segment_table(&found, &m.grid, segments),
        )
    });
    let mut csv = String::from("segment,area_km2,poa,density_km2,pod_cumulative,pos_cumulative\n");
    let mut features = Vec::new();
    for (k, row) in now.iter().enumerate() {
        let (pod, pos) = match &searched {
            Some((b, f)) if b[k].poa > 0.0 => (Some(f[k].poa / b[k].poa), Some(f[k].poa)),
            Some(_) => (Some(0.0), Some(0.0)),
            None => (None, None),
        };
        let fmt = |v: Option<f64>| v.map_or(String::new(), |v| format!("{v:.6}"));
        csv.push_str(&format!(
            "{},{:.6},{:.6},{:.6},{},{}\n",
            row.id,
            row.area_m2 / 1e6,
            row.poa,
            row.density_per_km2,
            fmt(pod),
            fmt(pos)
        ));
        for poly in &segments[k].polygons {
            let mut props = JsonObject::new();
            props.insert("segment".into(), row.id.clone().into());
            props.insert("area_km2".into(), (row.area_m2 / 1e6).into());
            props.insert("poa".into(), row.poa.into());
            props.insert("density_km2".into(), row.density_per_km2.into());
            if let (Some(pod), Some(pos)) = (pod, pos) {
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
    Ok((csv, collection_bytes(features, named("segments", run_id))?))
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
