//! Preparing an incident: searches cut short, and errors that name their item.

use seekgrid_engine::prepare::{PreparedGeometry, prepare};
use seekgrid_incident::model::Item;
use seekgrid_incident::parse;

/// An invented incident with one expanding square, `done` of it flown.
fn incident(done: Option<f64>) -> String {
    let done = done.map_or(String::new(), |f| format!("done_fraction = {f}\n"));
    format!(
        r#"
[incident]
title = "Cut short (invented)"
reference_time = "2026-06-14T10:00:00Z"
crs = "EPSG:32626"
[grid]
cell_m = 100
[[analyst]]
id = "a"
[[scenario]]
id = "p"
analyst = "a"
kind = "point"
position = [-30.0, 30.0]
sigma_m = 1000
[[search]]
id = "square"
unit = "u"
start = "2026-06-14T11:00:00Z"
end = "2026-06-14T12:00:00Z"
sweep_width_m = 300
detection = "exponential"
pattern = {{ kind = "expanding-square", center = [-30.0, 30.0], track_spacing_m = 400, legs = 8 }}
{done}"#
    )
}

fn length(points: &[geo::Coord<f64>]) -> f64 {
    points
        .windows(2)
        .map(|w| (w[1].x - w[0].x).hypot(w[1].y - w[0].y))
        .sum()
}

#[test]
fn a_pattern_flown_in_full_stays_a_pattern() {
    for done in [None, Some(1.0)] {
        let dir = tempfile::tempdir().unwrap();
        let inc = parse(&dir.path().join("i.toml"), incident(done)).unwrap();
        let p = prepare(&inc).unwrap();
        assert!(matches!(
            p.searches[0].geometry,
            PreparedGeometry::Pattern(_)
        ));
    }
}

#[test]
fn a_pattern_cut_short_is_scored_as_the_share_of_its_track_flown() {
    let dir = tempfile::tempdir().unwrap();
    let whole = prepare(&parse(&dir.path().join("i.toml"), incident(None)).unwrap()).unwrap();
    let Some(pattern) = whole.searches[0].pattern().cloned() else {
        panic!("the whole search is a pattern");
    };
    let cut = prepare(&parse(&dir.path().join("i.toml"), incident(Some(0.25))).unwrap()).unwrap();
    let s = &cut.searches[0];
    assert!(s.pattern().is_none());
    match &s.geometry {
        PreparedGeometry::Track {
            points,
            times,
            cut_from,
        } => {
            // A quarter of the legs' length (8 legs of 400 m steps: 1+1+2+2+3+3+4+4 = 20 x
            // 400 m = 8 km; computed by hand), from the commence search point.
            assert!((length(points) - 2000.0).abs() < 1e-6, "{}", length(points));
            assert!((pattern.track_length_m() - 8000.0).abs() < 1e-6);
            assert_eq!(points[0], pattern.tracks().0[0]);
            assert!(times.is_none());
            assert_eq!(cut_from.as_ref(), Some(&pattern));
        }
        other => panic!("expected a track, got {other:?}"),
    }
    // Scored with the search's own law and sweep width.
    assert_eq!(s.law, seekgrid_search::DetectionLaw::Exponential);
    assert_eq!(s.sweep_width.metres(), 300.0);
}

#[test]
fn a_drift_the_drift_crate_refuses_names_its_scenario() {
    // Built in code past the loader: a leeway the drift crate refuses.
    let dir = tempfile::tempdir().unwrap();
    let text = format!(
        "{}\n[[scenario]]\nid = \"adrift\"\nanalyst = \"a\"\nkind = \"drift\"\nposition = [-30.0, 30.0]\nadrift = {{ earliest = \"2026-06-14T10:00:00Z\", latest = \"2026-06-14T10:00:00Z\" }}\ncurrent = {{ speed_kn = 1.0, toward_deg = 90 }}\nwind = {{ speed_kn = 0.0, from_deg = 0 }}\nleeway = {{ downwind_slope = 0.0 }}\nparticles = 10\n",
        incident(None)
    );
    let mut inc = parse(&dir.path().join("i.toml"), text).unwrap();
    let seekgrid_incident::model::ScenarioKind::Drift(d) = &mut inc.scenarios[1].kind else {
        panic!("scenario 1 drifts");
    };
    d.leeway.jibe_per_h = f64::NAN;
    d.current = seekgrid_incident::model::VectorDef::Field {
        file: dir.path().join("none.csv"),
        samples: Vec::new(),
        speed_sigma_kn: 0.0,
        direction_sigma_deg: 0.0,
    };
    let e = prepare(&inc).unwrap_err();
    assert_eq!(e.item(), Item::Scenario("adrift".into()));
    let (line, col) = inc.locate(&inc.path_of(&e.item())).unwrap();
    // The `[[scenario]]` header of "adrift".
    let header = inc
        .text
        .lines()
        .enumerate()
        .filter(|(_, l)| *l == "[[scenario]]")
        .nth(1);
    assert_eq!(Some(line), header.map(|(i, _)| i + 1));
    assert_eq!(col, 1);
}
