//! `seekgrid credibility`: the invented track record of the demo analysts, the report files,
//! and a record that is not a seekgrid record.

use crate::end_to_end::{seekgrid, workspace};
use crate::external::stdout;
use serde_json::Value;

const DEMO_ANALYSTS: [&str; 6] = [
    "harbour-desk",
    "ops-desk",
    "duty-officer",
    "team-lead",
    "local-ranger",
    "dog-handler",
];

fn invented_record() -> String {
    workspace()
        .join("scenarios/credibility-record.csv")
        .to_str()
        .unwrap()
        .to_owned()
}

#[test]
fn credibility_of_the_invented_record_prints_every_demo_analyst_verdicts_and_caution() {
    let o = seekgrid(&["credibility", &invented_record()]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let text = stdout(&o);
    for a in DEMO_ANALYSTS {
        assert!(text.contains(a), "{a} missing:\n{text}");
    }
    for needle in [
        "suggested weight",
        "Bayes' rule",
        "Shared bias: n = ",
        "Pool against the best analyst:",
        "small-sample caveat",
        "little power",
        "CAUTION: Decision support only",
        "search mission coordinator",
    ] {
        assert!(text.contains(needle), "{needle} missing:\n{text}");
    }
}

#[test]
fn credibility_json_weights_add_up_to_one_and_the_files_match_it() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("report");
    let o = seekgrid(&[
        "credibility",
        &invented_record(),
        "--out",
        out.to_str().unwrap(),
        "--json",
    ]);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let printed: Value = serde_json::from_str(&stdout(&o)).unwrap();
    let written: Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("credibility.json")).unwrap())
            .unwrap();
    assert_eq!(printed["analysts"], written["analysts"]);
    let analysts = written["analysts"].as_array().unwrap();
    assert_eq!(analysts.len(), DEMO_ANALYSTS.len());
    let total: f64 = analysts
        .iter()
        .map(|a| a["suggested_weight"].as_f64().unwrap())
        .sum();
    assert!((total - 1.0).abs() < 1e-9, "{total}");
    // The record holds 9 incidents; every analyst took part in at least 3 (dog-handler).
    assert_eq!(written["incidents"], 9);
    assert!(
        analysts
            .iter()
            .all(|a| a["incidents"].as_u64().unwrap() >= 3)
    );
    let bias = &written["bias_direction"];
    assert!(bias["p_value"].as_f64().unwrap() <= 1.0);
    assert!(bias["verdict"].as_str().unwrap().contains("5 %"));
    assert!(
        written["caution"]
            .as_str()
            .unwrap()
            .contains("Decision support")
    );
    assert!(
        written["rayleigh_caveat"]
            .as_str()
            .unwrap()
            .contains("little power")
    );
    let md = std::fs::read_to_string(out.join("credibility.md")).unwrap();
    assert!(md.starts_with("# Credibility of the analysts across incidents"));
    assert!(md.contains("small-sample caveat"), "{md}");
    assert_eq!(md.matches("**Caution.**").count(), 2, "{md}");
}

#[test]
fn a_record_whose_header_differs_exits_2_naming_the_column() {
    let dir = tempfile::tempdir().unwrap();
    let bad = dir.path().join("record.csv");
    let text = std::fs::read_to_string(invented_record())
        .unwrap()
        .replacen("bias_bearing_deg", "bearing", 1);
    std::fs::write(&bad, text).unwrap();
    let o = seekgrid(&["credibility", bad.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(2));
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(
        err.contains("record.csv:3") && err.contains("header column 9 is \"bearing\""),
        "{err}"
    );
}
