//! Golden tests: `seekgrid map` and `seekgrid plan` on the invented incident in
//! `fixtures/golden/tiny/` must write `summary.json`, `segments.csv` and `plan.md` exactly as
//! frozen in `fixtures/golden/tiny/expected/`, so that a refactor can show it changed nothing.
//!
//! Source of the expected files: seekgrid's own output at the commit that last blessed them
//! ("computed"). They freeze behaviour; they are not a check of correctness against the world,
//! which the other modules and the library tests do.
//!
//! Only the run id (UTC time and process id of the run, read from `summary.json`) is
//! normalised, to `RUN-ID`: these files hold no path, host or version, and they are otherwise
//! byte-identical between runs, from any working folder and at any thread count
//! (`RAYON_NUM_THREADS=1`, `2`, `4` checked when the files were frozen). Every number is compared
//! as written.
//!
//! Accepting a deliberate change: `SEEKGRID_BLESS=1 cargo test -p seekgrid-cli --release --test
//! cli golden` rewrites the expected files from the binary's output instead of comparing (refused
//! under `CI=true`); review `git diff fixtures/golden` before committing.

use crate::end_to_end::{seekgrid, workspace};
use std::path::{Path, PathBuf};

/// The start of the planned period: after both logged searches of the tiny incident.
const PLAN_START: &str = "2026-03-10T11:00:00Z";

fn tiny() -> PathBuf {
    workspace().join("fixtures/golden/tiny")
}

/// Runs the binary with `args`, failing the test with its standard error when it fails.
fn run_ok(args: &[&str]) {
    let o = seekgrid(args);
    assert!(
        o.status.success(),
        "seekgrid {args:?} exited {:?}: {}",
        o.status.code(),
        String::from_utf8_lossy(&o.stderr)
    );
}

/// Compares each of `names` written into `produced` with `expected/<part>/<name>`, or rewrites
/// the expected files when `SEEKGRID_BLESS=1`.
fn check_golden(produced: &Path, part: &str, names: &[&str]) {
    let expected = tiny().join("expected").join(part);
    let bless = std::env::var("SEEKGRID_BLESS").is_ok_and(|v| v == "1");
    assert!(
        !(bless && std::env::var("CI").is_ok_and(|v| v == "true")),
        "SEEKGRID_BLESS=1 is refused under CI=true: bless on a developer machine and commit"
    );
    let run_id = run_id_of(produced);
    let mut mismatches = Vec::new();
    for name in names {
        let got_path = produced.join(name);
        let got = std::fs::read_to_string(&got_path)
            .unwrap_or_else(|e| panic!("{} was not written: {e}", got_path.display()))
            .replace(&run_id, "RUN-ID");
        let got = without_times(&got);
        let want_path = expected.join(name);
        if bless {
            std::fs::create_dir_all(&expected).unwrap();
            std::fs::write(&want_path, &got).unwrap();
            eprintln!("blessed {}", want_path.display());
            continue;
        }
        let want = std::fs::read_to_string(&want_path).unwrap_or_else(|e| {
            panic!(
                "{}: {e}; write it with SEEKGRID_BLESS=1 (see the top of golden.rs)",
                want_path.display()
            )
        });
        if got != want {
            mismatches.push(first_difference(&format!("{part}/{name}"), &want, &got));
        }
    }
    assert!(
        mismatches.is_empty(),
        "output differs from fixtures/golden/tiny/expected (if the change is intended, rerun with SEEKGRID_BLESS=1 and review the diff):\n{}",
        mismatches.join("\n")
    );
}

/// The text with each phase's measured times (`"wall_s"` and `"cpu_s"` in summary.json's
/// `phases`), and the provenance's time and command line, replaced by `TIME`: they differ from
/// run to run; the phases' names and order, and the inputs' digests, stay.
fn without_times(text: &str) -> String {
    text.lines()
        .map(|line| {
            let key = line.trim_start();
            if key.starts_with("\"wall_s\":")
                || key.starts_with("\"cpu_s\":")
                || key.starts_with("\"time_utc\":")
                || key.starts_with("\"command\":")
            {
                let (name, rest) = line.split_once(':').unwrap();
                let comma = if rest.trim_end().ends_with(',') {
                    ","
                } else {
                    ""
                };
                format!("{name}: \"TIME\"{comma}")
            } else {
                line.to_owned()
            }
        })
        .collect::<Vec<_>>()
        .join("\n")
        + if text.ends_with('\n') { "\n" } else { "" }
}

/// The run id that `summary.json` in `produced` carries (every file of a run carries the same).
fn run_id_of(produced: &Path) -> String {
    let text = std::fs::read_to_string(produced.join("summary.json")).unwrap();
    let summary: serde_json::Value = serde_json::from_str(&text).unwrap();
    let id = summary["run_id"]
        .as_str()
        .expect("summary.json carries a run_id");
    assert!(!id.is_empty(), "the run id is empty");
    id.to_owned()
}

/// A unified-style excerpt around the first differing line: three lines of context, then up to
/// eight lines of each side. Hand-written rather than a diff crate: only the first difference is
/// shown, and a test-only dependency for it would add to every developer's build.
fn first_difference(name: &str, want: &str, got: &str) -> String {
    const CONTEXT: usize = 3;
    const SHOWN: usize = 8;
    let w: Vec<&str> = want.lines().collect();
    let g: Vec<&str> = got.lines().collect();
    let mut out = format!(
        "--- expected/{name} ({} lines)\n+++ produced/{name} ({} lines)\n",
        w.len(),
        g.len()
    );
    let Some(first) = (0..w.len().max(g.len())).find(|&i| w.get(i) != g.get(i)) else {
        out.push_str("(same lines; the files differ in line endings or the final newline)\n");
        return out;
    };
    let from = first.saturating_sub(CONTEXT);
    out.push_str(&format!("@@ first difference at line {} @@\n", first + 1));
    for line in &w[from..first] {
        out.push_str(&format!(" {line}\n"));
    }
    for line in w.iter().skip(first).take(SHOWN) {
        out.push_str(&format!("-{line}\n"));
    }
    for line in g.iter().skip(first).take(SHOWN) {
        out.push_str(&format!("+{line}\n"));
    }
    out
}

#[test]
fn map_writes_the_frozen_summary_and_segment_table() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("map");
    let incident = tiny().join("incident.toml");
    run_ok(&[
        "map",
        incident.to_str().unwrap(),
        "--out",
        out.to_str().unwrap(),
    ]);
    check_golden(&out, "map", &["summary.json", "segments.csv"]);
}

#[test]
fn plan_writes_the_frozen_summary_segment_table_and_briefing() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("plan");
    let incident = tiny().join("incident.toml");
    run_ok(&[
        "plan",
        incident.to_str().unwrap(),
        "--start",
        PLAN_START,
        "--out",
        out.to_str().unwrap(),
    ]);
    check_golden(&out, "plan", &["summary.json", "segments.csv", "plan.md"]);
}

#[test]
fn first_difference_shows_context_and_both_sides() {
    let d = first_difference("x.csv", "a\nb\nc\nd\n", "a\nb\nC\nd\n");
    assert!(d.contains("@@ first difference at line 3 @@"), "{d}");
    assert!(d.contains(" a\n b\n-c\n-d\n+C\n+d\n"), "{d}");
    let d = first_difference("x.csv", "a\n", "a");
    assert!(d.contains("final newline"), "{d}");
}
