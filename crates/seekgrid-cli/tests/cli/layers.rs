//! The registry of output layers (`seekgrid_render::layers::Layer`) against what a user reads:
//! README.md's "What a run writes" table and the `--outputs` values of `seekgrid map --help` and
//! `seekgrid plan --help`. A layer added to the registry and forgotten in either fails here.

use crate::end_to_end::{seekgrid, workspace};
use crate::external::stdout;
use seekgrid_render::layers::Layer;

/// A layer's row in README.md's table: name, files (sidecars in brackets), description.
fn readme_row(l: Layer) -> String {
    let quoted =
        |names: &[&str]| -> Vec<String> { names.iter().map(|f| format!("`{f}`")).collect() };
    let sidecars = if l.sidecars().is_empty() {
        String::new()
    } else {
        format!(" (+ {})", quoted(l.sidecars()).join(", "))
    };
    format!(
        "| `{}` | {}{sidecars} | {} |",
        l.name(),
        quoted(l.files()).join(", "),
        l.description()
    )
}

/// The lines of the first table after the heading `heading` in `text`.
fn table_after<'a>(text: &'a str, heading: &str) -> Vec<&'a str> {
    text.lines()
        .skip_while(|l| l.trim() != heading)
        .skip_while(|l| !l.starts_with('|'))
        .take_while(|l| l.starts_with('|'))
        .collect()
}

/// Whitespace runs as single spaces, so wrapped help text compares with one-line text.
fn squeeze(text: &str) -> String {
    text.split_whitespace().collect::<Vec<_>>().join(" ")
}

#[test]
fn readme_table_lists_every_layer_as_the_registry_describes_it() {
    let readme = std::fs::read_to_string(workspace().join("README.md")).unwrap();
    let table = table_after(&readme, "## What a run writes");
    let mut want = vec![
        "| `--outputs` | files | what it holds |".to_owned(),
        "|---|---|---|".to_owned(),
    ];
    want.extend(Layer::ALL.iter().map(|l| readme_row(*l)));
    let got: Vec<String> = table.iter().map(|l| (*l).to_owned()).collect();
    assert_eq!(
        got,
        want,
        "README.md's \"What a run writes\" table must be exactly:\n{}",
        want.join("\n")
    );
}

#[test]
fn help_offers_and_explains_every_layer_each_command_can_write() {
    for (command, offered) in [("map", false), ("plan", true)] {
        let o = seekgrid(&[command, "--help"]);
        assert!(o.status.success());
        let help = squeeze(&stdout(&o));
        for l in Layer::ALL {
            let entry = format!("- {}: {}", l.name(), squeeze(l.files().join(", ").as_str()));
            let listed = help.contains(&entry) && help.contains(&squeeze(l.description()));
            let expected = offered || !l.plan_only();
            assert_eq!(
                listed,
                expected,
                "seekgrid {command} --help and layer {}:\n{help}",
                l.name()
            );
        }
    }
}

#[test]
fn an_unknown_layer_is_bad_input_and_names_the_choices() {
    let dir = tempfile::tempdir().unwrap();
    let f = workspace().join("fixtures/golden/tiny/incident.toml");
    let out = dir.path().join("o");
    for (command, extra) in [
        ("map", vec![]),
        ("plan", vec!["--start", "2026-03-10T11:00:00Z"]),
    ] {
        let mut args = vec![command, f.to_str().unwrap(), "--out", out.to_str().unwrap()];
        args.extend(extra);
        args.extend(["--outputs", "summary,heatmaps"]);
        let o = seekgrid(&args);
        assert_eq!(o.status.code(), Some(2), "{command}");
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(
            err.contains("heatmaps") && err.contains("probability"),
            "{err}"
        );
        assert!(!out.exists(), "nothing is written for a bad --outputs");
    }
    // A plan layer cannot be asked of a map: there is no plan to write.
    let o = seekgrid(&[
        "map",
        f.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
        "--outputs",
        "briefing",
    ]);
    assert_eq!(o.status.code(), Some(2));
}
