//! `plan.kml` read back by GDAL's KML reader: a layer per folder, with as many features as the
//! GeoJSON layers it is made from.

use crate::end_to_end::{seekgrid, workspace};
use crate::external::{have, run, stdout};
use serde_json::Value;

#[test]
fn plan_kml_is_read_by_gdal_with_the_containment_and_plan_features() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("plan");
    let incident = workspace().join("scenarios/marine/incident.toml");
    let o = seekgrid(&[
        "plan",
        incident.to_str().unwrap(),
        "--start",
        "2026-06-15T00:00:00Z",
        "--out",
        out.to_str().unwrap(),
        "--outputs",
        "kml,plan,containment",
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let count = |name: &str| -> usize {
        let v: Value =
            serde_json::from_str(&std::fs::read_to_string(out.join(name)).unwrap()).unwrap();
        v["features"].as_array().unwrap().len()
    };
    let (regions, plan) = (count("containment.geojson"), count("plan.geojson"));
    assert_eq!(regions, 3);
    assert!(plan >= 3, "{plan}");
    let text = std::fs::read_to_string(out.join("plan.kml")).unwrap();
    assert!(text.contains("<kml xmlns=\"http://www.opengis.net/kml/2.2\">"));
    if !have("ogrinfo") {
        return;
    }
    let path = out.join("plan.kml");
    let o = run("ogrinfo", &["-ro", "-so", "-al", path.to_str().unwrap()]);
    let listing = format!("{}{}", stdout(&o), String::from_utf8_lossy(&o.stderr));
    assert!(o.status.success(), "{listing}");
    assert!(
        !listing.lines().any(|l| l.starts_with("ERROR")),
        "{listing}"
    );
    let mut layers = Vec::new();
    let mut name = None;
    for line in listing.lines() {
        if let Some(n) = line.strip_prefix("Layer name: ") {
            name = Some(n.trim().to_owned());
        } else if let Some(c) = line.strip_prefix("Feature Count: ") {
            layers.push((name.take().unwrap(), c.trim().parse::<usize>().unwrap()));
        }
    }
    assert_eq!(
        layers,
        [
            ("containment".to_owned(), regions),
            ("plan".to_owned(), plan)
        ],
        "{listing}"
    );
}
