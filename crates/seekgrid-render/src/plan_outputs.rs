//! Writing a plan: `plan.geojson`, `plan.gpx`, `plan.md`, `plan.png`, `effort.png`,
//! `tasking.toml` and the summary with `pos_plan` and `pos_optimal_bound`.

use crate::gpx::{RouteSpec, routes_gpx};
use crate::outputs::{self, OutputSelection};
use crate::summary::{CAUTION, Summary};
use crate::{self as render, ColourScale, MapStyle, OutputDir, Overlay, RenderError};
use geo::{Area, Coord};
use geojson::{Feature, JsonObject};
use seekgrid_core::Frame;
use seekgrid_engine::PlanRun;
use seekgrid_incident::model::Incident;
use std::fmt::Write as _;

/// Degrees and decimal minutes, e.g. `31°32.123'N`, `040°57.321'W`.
#[must_use]
pub fn ddm(value_deg: f64, is_lat: bool) -> String {
    let hemi = match (is_lat, value_deg >= 0.0) {
        (true, true) => 'N',
        (true, false) => 'S',
        (false, true) => 'E',
        (false, false) => 'W',
    };
    let a = value_deg.abs();
    let mut d = a.floor();
    let mut m = ((a - d) * 60.0 * 1000.0).round() / 1000.0;
    if m >= 60.0 {
        d += 1.0;
        m -= 60.0;
    }
    if is_lat {
        format!("{d:02.0}°{m:06.3}'{hemi}")
    } else {
        format!("{d:03.0}°{m:06.3}'{hemi}")
    }
}

fn lat_lon(frame: &Frame, c: Coord<f64>) -> String {
    let (lon, lat) = frame.to_lon_lat(c);
    format!("{} {}", ddm(lat, true), ddm(lon, false))
}

fn true_bearing(frame: &Frame, grid_bearing_deg: f64, at: Coord<f64>) -> f64 {
    let (lon, lat) = frame.to_lon_lat(at);
    seekgrid_core::units::normalise_deg(grid_bearing_deg + frame.convergence_deg(lon, lat))
}

/// Writes the plan's files and returns the summary (map summary plus the plan).
///
/// # Errors
/// [`RenderError`] from the writers.
pub fn write(incident: &Incident, run: &PlanRun, dir: &OutputDir) -> Result<Summary, RenderError> {
    let m = &run.map;
    let frame = &m.prepared.frame;
    // The belief at the plan's start, with its usual layers (no summary yet).
    let selection = OutputSelection::parse("probability,containment,heatmap,segments")
        .map_err(RenderError::Internal)?;
    let mut summary = outputs::write(incident, m, dir, &selection)?;

    let mut features = Vec::new();
    let mut routes = Vec::new();
    let mut md = String::new();
    let _ = writeln!(md, "# Search plan: {}\n", incident.title);
    let _ = writeln!(
        md,
        "Period starting {} UTC. Belief after {} logged search(es); working CRS EPSG:{}.\n",
        run.start.format("%Y-%m-%d %H:%M"),
        m.searches.len(),
        frame.epsg()
    );
    let _ = writeln!(md, "Run id: `{}`.\n", dir.run_id());
    let _ = writeln!(md, "> **Caution.** {CAUTION}\n");
    let mut overlays = outputs::base_overlays(incident, m);
    let mut unit_rows = Vec::new();

    if let Some(p) = &run.areas {
        let _ = writeln!(
            md,
            "Joint POS of this plan: **{:.3}**; best possible with the same effort (optimal allocation, exponential detection): **{:.3}**; efficiency {:.0} %. Turns allowance {:.0} % of track length.\n",
            p.pos_plan,
            p.pos_optimal_bound,
            100.0 * p.efficiency,
            100.0 * p.turn_allowance
        );
        for a in &p.assignments {
            let area = a.pattern.area_polygon();
            let mut props = JsonObject::new();
            props.insert("unit".into(), a.unit.clone().into());
            props.insert("pattern".into(), a.pattern.kind().into());
            props.insert("track_spacing_m".into(), a.track_spacing_m.into());
            props.insert("coverage".into(), a.coverage.into());
            props.insert("pod".into(), a.pod.into());
            props.insert("pos".into(), a.pos.into());
            props.insert("poa".into(), a.poa.into());
            props.insert("area_km2".into(), (a.area_m2 / 1e6).into());
            props.insert("track_length_m".into(), a.track_length_m.into());
            props.insert("hours_needed".into(), a.hours_needed.into());
            let mut area_props = props.clone();
            area_props.insert("part".into(), "area".into());
            features.push(Feature {
                geometry: Some(render::polygon_to_geojson(frame, &area)),
                properties: Some(area_props),
                ..Default::default()
            });
            let track = geo::LineString(a.waypoints.clone());
            let mut track_props = props.clone();
            track_props.insert("part".into(), "track".into());
            features.push(Feature {
                geometry: Some(render::line_to_geojson(frame, &track)),
                properties: Some(track_props),
                ..Default::default()
            });
            let mut csp = JsonObject::new();
            csp.insert("unit".into(), a.unit.clone().into());
            csp.insert("part".into(), "commence search point".into());
            features.push(Feature {
                geometry: Some(render::point_to_geojson(frame, a.commence_search_point)),
                properties: Some(csp),
                ..Default::default()
            });
            overlays.push(Overlay::polygon(area.clone(), [255, 255, 255], 3).with_label(&a.unit));
            overlays.push(Overlay::line(track, [255, 140, 0], 1));
            overlays.push(
                Overlay::points(vec![a.commence_search_point], [255, 60, 60], 9)
                    .with_legend("commence search point"),
            );

            let points = a
                .waypoints
                .iter()
                .enumerate()
                .map(|(k, c)| {
                    let (lon, lat) = frame.to_lon_lat(*c);
                    (
                        if k == 0 {
                            format!("{} CSP", a.unit)
                        } else {
                            format!("{} {k:02}", a.unit)
                        },
                        lon,
                        lat,
                    )
                })
                .collect();
            routes.push(RouteSpec {
                name: a.unit.clone(),
                description: format!(
                    "{} at {:.0} m track spacing, {} legs",
                    a.pattern.kind(),
                    a.track_spacing_m,
                    a.legs.len()
                ),
                points,
            });

            let _ = writeln!(md, "## {}\n", a.unit);
            let _ = writeln!(md, "| item | value |\n|---|---|");
            let _ = writeln!(md, "| pattern | {} |", a.pattern.kind());
            let _ = writeln!(
                md,
                "| commence search point | {} |",
                lat_lon(frame, a.commence_search_point)
            );
            let corners: Vec<String> = area
                .exterior()
                .0
                .iter()
                .take(area.exterior().0.len().saturating_sub(1))
                .map(|c| lat_lon(frame, *c))
                .collect();
            let _ = writeln!(md, "| area corners | {} |", corners.join("; "));
            let _ = writeln!(
                md,
                "| area | {:.2} km² ({:.2} NM²) |",
                a.area_m2 / 1e6,
                a.area_m2 / (1852.0 * 1852.0)
            );
            let _ = writeln!(
                md,
                "| track spacing | {:.0} m ({:.2} NM) |",
                a.track_spacing_m,
                a.track_spacing_m / 1852.0
            );
            let _ = writeln!(md, "| coverage | {:.2} |", a.coverage);
            let _ = writeln!(md, "| POD | {:.3} |", a.pod);
            let _ = writeln!(md, "| POA of the area | {:.3} |", a.poa);
            let _ = writeln!(md, "| POS | {:.3} |", a.pos);
            let _ = writeln!(
                md,
                "| track length | {:.1} km ({:.1} NM) |",
                a.track_length_m / 1000.0,
                a.track_length_m / 1852.0
            );
            let _ = writeln!(md, "| time needed | {:.2} h |", a.hours_needed);
            let _ = writeln!(md);
            let _ = writeln!(
                md,
                "| leg | from | to | bearing (true) | length |\n|---|---|---|---|---|"
            );
            for (k, l) in a.legs.iter().enumerate() {
                let _ = writeln!(
                    md,
                    "| {} | {} | {} | {:05.1}° | {:.2} km |",
                    k + 1,
                    lat_lon(frame, l.from),
                    lat_lon(frame, l.to),
                    true_bearing(frame, l.grid_bearing_deg, l.from),
                    l.length_m / 1000.0
                );
            }
            let _ = writeln!(md);
            unit_rows.push(serde_json::json!({
                "unit": a.unit, "pattern": a.pattern.kind(), "track_spacing_m": a.track_spacing_m, "coverage": a.coverage,
                "pod": a.pod, "pos": a.pos, "area_km2": a.area_m2 / 1e6, "hours_needed": a.hours_needed,
            }));
        }
        for n in &p.notes {
            let _ = writeln!(md, "- {n}");
        }
        let _ = writeln!(md);
    }
    if let (Some(sp), Some(segments)) = (&run.segments, &m.prepared.segments) {
        let _ = writeln!(md, "## Ground teams to segments\n");
        let _ = writeln!(
            md,
            "Joint POS of the team assignment: **{:.3}** ({}).\n",
            sp.pos_plan,
            if sp.exact {
                "exact: every assignment was compared"
            } else {
                "heuristic: greedy by marginal POS"
            }
        );
        let _ = writeln!(
            md,
            "| team | segment | coverage | POD | POS | recommended spacing | time needed |\n|---|---|---|---|---|---|---|"
        );
        for a in &sp.assignments {
            let _ = writeln!(
                md,
                "| {} | {} | {:.2} | {:.3} | {:.3} | {:.0} m | {:.1} h |",
                a.team,
                a.segment,
                a.coverage,
                a.pod,
                a.pos,
                a.recommended_spacing_m,
                a.hours_needed
            );
            if let Some(seg) = segments.iter().find(|s| s.id == a.segment) {
                for poly in &seg.polygons {
                    let mut props = JsonObject::new();
                    props.insert("unit".into(), a.team.clone().into());
                    props.insert("segment".into(), a.segment.clone().into());
                    props.insert("pattern".into(), "segment".into());
                    props.insert("track_spacing_m".into(), a.recommended_spacing_m.into());
                    props.insert("coverage".into(), a.coverage.into());
                    props.insert("pod".into(), a.pod.into());
                    props.insert("pos".into(), a.pos.into());
                    props.insert("area_km2".into(), (poly.unsigned_area() / 1e6).into());
                    props.insert("part".into(), "area".into());
                    features.push(Feature {
                        geometry: Some(render::polygon_to_geojson(frame, poly)),
                        properties: Some(props),
                        ..Default::default()
                    });
                    overlays.push(
                        Overlay::polygon(poly.clone(), [255, 255, 255], 3)
                            .with_label(&format!("{} {}", a.team, a.segment)),
                    );
                    let points = poly
                        .exterior()
                        .0
                        .iter()
                        .enumerate()
                        .map(|(k, c)| {
                            let (lon, lat) = frame.to_lon_lat(*c);
                            (
                                format!("{} {} corner {:02}", a.team, a.segment, k + 1),
                                lon,
                                lat,
                            )
                        })
                        .collect();
                    routes.push(RouteSpec {
                        name: format!("{} {}", a.team, a.segment),
                        description: format!("boundary of segment {}", a.segment),
                        points,
                    });
                }
            }
            unit_rows.push(serde_json::json!({
                "unit": a.team, "segment": a.segment, "coverage": a.coverage, "pod": a.pod, "pos": a.pos,
                "recommended_spacing_m": a.recommended_spacing_m, "hours_needed": a.hours_needed,
            }));
        }
        for n in &sp.notes {
            let _ = writeln!(md, "- {n}");
        }
        let _ = writeln!(md);
    }

    let (pos_plan, bound) = plan_totals(run);
    let mut fm = JsonObject::new();
    fm.insert("name".into(), "plan".into());
    fm.insert("run_id".into(), dir.run_id().into());
    fm.insert("caution".into(), CAUTION.into());
    fm.insert("start".into(), run.start.to_rfc3339().into());
    fm.insert("pos_plan".into(), pos_plan.into());
    fm.insert("pos_optimal_bound".into(), bound.into());
    dir.write("plan.geojson", &outputs::collection_bytes(features, fm)?)?;
    if !routes.is_empty() {
        dir.write(
            "plan.gpx",
            &routes_gpx(
                &incident.title,
                &format!(
                    "seekgrid plan from {}, run {}. {CAUTION}",
                    run.start.to_rfc3339(),
                    dir.run_id()
                ),
                &routes,
            )?,
        )?;
    }
    dir.write("plan.md", md.as_bytes())?;
    crate::tasking::write(incident, run, dir)?;

    let poc = &m.poc;
    let cell_km2 = m.grid.cell_area_m2() / 1e6;
    let density = poc.mapv(|p| p / cell_km2);
    let sub = format!(
        "Plan for the period from {} UTC | POS {:.3} of at best {:.3}",
        run.start.format("%Y-%m-%d %H:%M"),
        pos_plan,
        bound
    );
    let style = MapStyle {
        title: &incident.title,
        subtitle: &sub,
        caution: CAUTION,
        legend_label: "probability per km²",
        scale: ColourScale::Density,
    };
    render::write_png_set(
        dir,
        "plan",
        &render::heatmap_png(frame, &m.grid, &density, &style, &overlays)?,
    )?;
    let sub = format!(
        "Optimal coverage (the bound): POS {bound:.3} for {:.1} km² of effort",
        run.bound.effort_m2 / 1e6
    );
    let style = MapStyle {
        title: &incident.title,
        subtitle: &sub,
        caution: CAUTION,
        legend_label: "coverage (effort / area)",
        scale: ColourScale::Density,
    };
    render::write_png_set(
        dir,
        "effort",
        &render::heatmap_png(frame, &m.grid, &run.bound.coverage, &style, &[])?,
    )?;

    summary.pos_plan = Some(pos_plan);
    summary.pos_optimal_bound = Some(bound);
    summary.plan = Some(serde_json::json!({
        "start": run.start.to_rfc3339(),
        "efficiency": if bound > 0.0 { pos_plan / bound } else { 0.0 },
        "effort_m2": run.bound.effort_m2,
        "lambda": run.bound.lambda,
        "units": unit_rows,
    }));
    for name in [
        "plan.geojson",
        "plan.gpx",
        "plan.md",
        "plan.png",
        "effort.png",
    ] {
        summary.outputs.insert(name.into(), serde_json::json!({}));
    }
    outputs::write_summary(dir, &summary)?;
    Ok(summary)
}

/// The plan's joint POS (areas and team assignments together: they search disjoint places
/// only when the segments and the areas do not overlap, so the two are combined as
/// independent: 1 - (1 - a)(1 - b)) and the bound.
fn plan_totals(run: &PlanRun) -> (f64, f64) {
    let a = run.areas.as_ref().map_or(0.0, |p| p.pos_plan);
    let b = run.segments.as_ref().map_or(0.0, |s| s.pos_plan);
    (1.0 - (1.0 - a) * (1.0 - b), run.bound.pos)
}

#[cfg(test)]
mod tests {
    use super::ddm;

    #[test]
    fn degrees_and_decimal_minutes_carry_their_hemisphere() {
        // 31.5 deg = 31 deg 30.000 min (common practice for charts).
        assert_eq!(ddm(31.5, true), "31°30.000'N");
        assert_eq!(ddm(-40.95, false), "040°57.000'W");
        assert_eq!(ddm(-0.25, true), "00°15.000'S");
        assert_eq!(ddm(10.999_999_9, false), "011°00.000'E");
    }
}
