//! The libraries' typed errors, reported at the file position of the field they name and in
//! the file's words (the library's field names are those of the working frame: a grid bearing,
//! a centre in metres, a fraction instead of a percentage).

use super::SegmentFiles;
use crate::file::{RawScenario, RawShape, RawUnit};
use crate::locate::FieldPath;
use crate::model::{DriftDef, ScenarioKind, VectorDef};
use geo::Coord;
use seekgrid_drift::DriftError;
use seekgrid_plan::PlanError;
use seekgrid_prior::ShapeError;
use seekgrid_search::SearchError;
use std::convert::Infallible;
use std::path::PathBuf;

/// Where an error is reported.
pub(super) enum Place {
    /// At a field of the incident file.
    Field(FieldPath),
    /// In a file the incident names, as a whole.
    File(PathBuf),
}

/// A lon/lat position as the coordinates the libraries check (finite, distinct, not
/// self-intersecting: properties a projection keeps).
pub(super) fn as_lon_lat(p: [f64; 2]) -> Result<Coord<f64>, Infallible> {
    Ok(Coord { x: p[0], y: p[1] })
}

/// A true bearing as written (the libraries only check that it is finite).
pub(super) fn as_written(bearing_deg: f64, _at: [f64; 2]) -> f64 {
    bearing_deg
}

/// The file's name for a field the search or prior crate names in the working frame.
fn file_name(library_field: &str) -> &str {
    match library_field {
        "major_grid_bearing_deg" => "major_bearing_deg",
        "first_leg_grid_bearing_deg" => "first_leg_bearing_deg",
        f if f.starts_with("center") => "center",
        f => f,
    }
}

/// A pattern the search crate refuses.
pub(super) fn pattern(at: &FieldPath, e: &SearchError) -> (FieldPath, String) {
    match e {
        SearchError::BadPattern {
            field, value, fix, ..
        } => {
            let name = file_name(field);
            (
                at.key(name),
                format!("{name} = {value} is not usable; {fix}"),
            )
        }
        other => (at.clone(), other.to_string()),
    }
}

/// A sweep width the search crate refuses.
pub(super) fn sweep_width(at: &FieldPath, base_m: f64, e: &SearchError) -> (FieldPath, String) {
    match e {
        SearchError::BadSweepWidth { sweep_width_m } if base_m.is_finite() && base_m > 0.0 => (
            at.key("sweep_width_factors"),
            format!(
                "the sweep width times its correction factors is {sweep_width_m} m, not a usable number; check the factors (each a multiplier such as 0.8)"
            ),
        ),
        SearchError::BadCorrectionFactor { index, .. } => {
            (at.key("sweep_width_factors").index(*index), e.to_string())
        }
        _ => (at.key("sweep_width_m"), e.to_string()),
    }
}

/// A stationary scenario the prior crate refuses.
pub(super) fn shape(
    at: &FieldPath,
    raw: &RawScenario,
    kind: &ScenarioKind,
    files: &SegmentFiles,
    e: &ShapeError,
) -> (Place, String) {
    let field = |k: &str| Place::Field(at.key(k));
    match (e, kind) {
        (ShapeError::NotFinite { field: f }, _) => {
            let path = match f.split_once('.') {
                Some(("center", _)) => at.key("position"),
                Some((w, _)) if w.starts_with("waypoints[") => {
                    let k = w["waypoints[".len()..w.len() - 1].parse().unwrap_or(0);
                    at.key("waypoints").index(k)
                }
                _ => at.key(file_name(f)),
            };
            let name = file_name(f.split('.').next().unwrap_or(f));
            (
                Place::Field(path),
                format!("{name} must be a finite number"),
            )
        }
        (ShapeError::BadSigma { field: f, value_m }, _) => {
            let circular = matches!(&raw.shape, RawShape::Point(p) if p.sigma_m.is_some());
            let name = if circular { "sigma_m" } else { f };
            (
                field(name),
                format!("{name} must be a positive number, got {value_m}"),
            )
        }
        (
            ShapeError::MinorExceedsMajor {
                sigma_major_m,
                sigma_minor_m,
            },
            _,
        ) => (
            field("sigma_minor_m"),
            format!(
                "sigma_minor_m ({sigma_minor_m}) is larger than sigma_major_m ({sigma_major_m}); swap them and turn major_bearing_deg by 90"
            ),
        ),
        (ShapeError::RouteTooShort { .. }, _) => (
            field("waypoints"),
            "a route needs at least two waypoints".into(),
        ),
        (ShapeError::RouteZeroLength, _) => (
            field("waypoints"),
            "the route has zero length; give distinct waypoints or use kind = \"point\"".into(),
        ),
        (ShapeError::BadPoa { segment, poa }, _) => (
            Place::Field(at.key("poa").key(segment)),
            format!("a POA must be a fraction in 0..=1, got {poa}"),
        ),
        (ShapeError::PoaSumAboveOne { sum }, _) => (
            field("poa"),
            format!(
                "the POA values add up to {sum:.4}, more than 1; give fractions whose sum is at most 1 (the rest is rest of world)"
            ),
        ),
        (
            ShapeError::NoQuantiles
            | ShapeError::BadFraction { .. }
            | ShapeError::BadRadius { .. }
            | ShapeError::QuantilesNotIncreasing { .. },
            ScenarioKind::Rings { quantiles, .. },
        ) => ring(at, raw, quantiles, e),
        (_, ScenarioKind::Area { file, .. }) => (
            Place::File(file.clone()),
            area_message(e, files.feature_of_polygon.get(file)),
        ),
        (_, ScenarioKind::Segments { file, .. }) => (Place::File(file.clone()), e.to_string()),
        (other, _) => (Place::Field(at.clone()), other.to_string()),
    }
}

/// A rings scenario's quantile problem, at the key of the ring it names.
fn ring(
    at: &FieldPath,
    raw: &RawScenario,
    quantiles: &[(f64, f64)],
    e: &ShapeError,
) -> (Place, String) {
    match e {
        ShapeError::NoQuantiles => (
            Place::Field(at.key("distance_quantiles_km")),
            "no distance quantiles given".into(),
        ),
        ShapeError::BadFraction { index, .. } => {
            let key = ring_key(raw, *index);
            (
                Place::Field(at.key("distance_quantiles_km").key(&key)),
                format!("percentage {key} is outside 0..100"),
            )
        }
        ShapeError::BadRadius { index, radius_m } => (
            Place::Field(at.key("distance_quantiles_km").key(&ring_key(raw, *index))),
            format!(
                "a ring distance must be a positive number, got {}",
                radius_m / 1000.0
            ),
        ),
        ShapeError::QuantilesNotIncreasing { index } => {
            let key = ring_key(raw, *index);
            let twice = *index > 0 && quantiles[*index].0 == quantiles[*index - 1].0;
            let message = if twice {
                format!(
                    "percentage {key} is given twice (as \"{}\" and \"{key}\"); give each percentage once",
                    ring_key(raw, *index - 1)
                )
            } else {
                "ring distances must grow with the percentage (a larger share of subjects lies within a larger distance)".to_owned()
            };
            (
                Place::Field(at.key("distance_quantiles_km").key(&key)),
                message,
            )
        }
        other => (Place::Field(at.clone()), other.to_string()),
    }
}

/// The key of the ring at `index` in order of percentage (as the loader sorts them).
fn ring_key(raw: &RawScenario, index: usize) -> String {
    let RawShape::Rings(r) = &raw.shape else {
        return String::new();
    };
    let mut keys: Vec<(f64, &String)> = r
        .distance_quantiles_km
        .iter()
        .flatten()
        .filter_map(|(k, _)| k.trim().parse::<f64>().ok().map(|pct| (pct, k)))
        .collect();
    keys.sort_by(|a, b| a.0.total_cmp(&b.0));
    keys.get(index)
        .map(|(_, k)| (*k).clone())
        .unwrap_or_default()
}

/// An area's polygon problem named by the feature that holds it.
fn area_message(e: &ShapeError, feature_of: Option<&Vec<usize>>) -> String {
    let feature = |i: usize| feature_of.and_then(|f| f.get(i)).copied().unwrap_or(i);
    match e {
        ShapeError::InvalidPolygon { index, reason, .. } => format!(
            "feature {}: a polygon is invalid ({reason}); repair the geometry (e.g. in a GIS) and retry",
            feature(*index)
        ),
        ShapeError::OverlappingPolygons { first, second, .. } => {
            let (a, b) = (feature(*first), feature(*second));
            if a == b {
                format!(
                    "feature {a}: its polygons {first} and {second} overlap; merge them into one polygon"
                )
            } else {
                format!(
                    "features {a} and {b} overlap; an area is uniform over its polygons, so merge them or remove the overlap"
                )
            }
        }
        ShapeError::EmptyPolygon { .. } => {
            "the polygons have no area; give at least one polygon with a positive area".into()
        }
        other => other.to_string(),
    }
}

/// A drift scenario the drift crate refuses.
pub(super) fn drift(at: &FieldPath, def: &DriftDef, e: &DriftError) -> (Place, String) {
    let named = |field: &str| {
        // `current.series[3].speed_sigma_kn` is the table's `current.speed_sigma_kn`.
        let keys: Vec<&str> = field
            .split('.')
            .filter(|k| !k.starts_with("series["))
            .collect();
        let mut path = at.clone();
        for (i, k) in keys.iter().enumerate() {
            let k = match (i, keys.first(), *k) {
                (1, Some(&"current"), "direction_deg") => "toward_deg",
                (1, Some(&"wind"), "direction_deg") => "from_deg",
                (_, _, k) => k,
            };
            path = path.key(k);
        }
        let name = match path.0.last() {
            Some(crate::locate::PathStep::Key(k)) => k.clone(),
            _ => field.to_owned(),
        };
        (path, name)
    };
    match e {
        DriftError::NotFinite { field, value } => {
            let (path, name) = named(field);
            (
                Place::Field(path),
                format!("{name} must be a finite number, got {value}"),
            )
        }
        DriftError::Negative { field, value } => {
            let (path, name) = named(field);
            (
                Place::Field(path),
                format!("{name} must be zero or positive, got {value}"),
            )
        }
        DriftError::OutOfRange { field, value, fix } => {
            let (path, name) = named(field);
            (Place::Field(path), format!("{name} is {value}; {fix}"))
        }
        DriftError::NoParticles | DriftError::TooManyParticles { .. } => (
            Place::Field(at.key("particles")),
            format!(
                "particles must be between 1 and 20 000 000, got {}",
                def.particles
            ),
        ),
        DriftError::AdriftWindowReversed { .. } => (
            Place::Field(at.key("adrift").key("latest")),
            "latest is before earliest; swap them".into(),
        ),
        DriftError::BadGrid { field, .. } => {
            let vector = if field == "wind" {
                &def.wind
            } else {
                &def.current
            };
            match vector {
                VectorDef::Field { file, .. } => (Place::File(file.clone()), e.to_string()),
                VectorDef::Forecast { grid, .. } if !grid.files.is_empty() => {
                    (Place::File(grid.files[0].clone()), e.to_string())
                }
                _ => (Place::Field(at.key(field)), e.to_string()),
            }
        }
        DriftError::BadPosition { .. } => (Place::Field(at.key("position")), e.to_string()),
        DriftError::EmptySeries { field } | DriftError::UnorderedSeries { field, .. } => {
            (Place::Field(at.key(field)), e.to_string())
        }
        other => (Place::Field(at.clone()), other.to_string()),
    }
}

/// A unit the plan crate refuses, named by the field as written (`speed_kn` or `speed_kmh`
/// for the speed it checks in m/s, so that a speed too small to survive the conversion is
/// refused too).
pub(super) fn unit(at: &FieldPath, u: &RawUnit, e: &PlanError) -> (FieldPath, String) {
    match e {
        PlanError::BadUnit { field, value, .. } => match *field {
            "id" => (at.key("id"), "the unit id is empty; give it a name".into()),
            "searchers" => (
                at.key("searchers"),
                "a ground team needs at least one searcher".into(),
            ),
            "speed_mps" => {
                let (name, written) = match (u.speed_kn, u.speed_kmh) {
                    (Some(kn), _) => ("speed_kn", kn),
                    (_, Some(kmh)) => ("speed_kmh", kmh),
                    _ => ("speed_kn", *value),
                };
                (
                    at.key(name),
                    // Debug keeps an extreme value short (5e-324).
                    format!("{name} must be a positive number, got {written:?}"),
                )
            }
            name => (
                at.key(name),
                format!("{name} must be a positive number, got {value}"),
            ),
        },
        other => (at.clone(), other.to_string()),
    }
}
