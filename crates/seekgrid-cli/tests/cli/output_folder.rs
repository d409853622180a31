//! Output folders written as one unit: a killed run, two runs at once, a folder holding an
//! input, and a re-run with fewer layers each leave exactly one complete run in the folder.

use serde_json::Value;
use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Output, Stdio};
use std::time::{Duration, Instant};

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_seekgrid"))
}

fn marine() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("../../scenarios/marine/incident.toml")
}

fn map_args(out: &Path, force: bool) -> Vec<String> {
    let mut a = vec![
        "map".to_owned(),
        marine().to_str().unwrap().to_owned(),
        "--out".to_owned(),
        out.to_str().unwrap().to_owned(),
    ];
    if force {
        a.push("--force".to_owned());
    }
    a
}

fn spawn_map(out: &Path, force: bool) -> Child {
    bin()
        .args(map_args(out, force))
        .stdout(Stdio::null())
        .stderr(Stdio::piped())
        .spawn()
        .expect("the binary starts")
}

fn map(out: &Path, force: bool) -> Output {
    bin()
        .args(map_args(out, force))
        .output()
        .expect("the binary runs")
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

fn names(dir: &Path) -> BTreeSet<String> {
    std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().file_name().into_string().unwrap())
        .collect()
}

/// The run id a PNG carries in its `tEXt` chunk `run_id` (PNG specification, third edition,
/// 5.3 chunk layout and 11.3.3.2 tEXt).
fn png_run_id(bytes: &[u8]) -> Option<String> {
    let mut i = 8;
    while i + 8 <= bytes.len() {
        let n = u32::from_be_bytes(bytes[i..i + 4].try_into().unwrap()) as usize;
        let data = bytes.get(i + 8..i + 8 + n)?;
        if &bytes[i + 4..i + 8] == b"tEXt"
            && let Some(text) = data.strip_prefix(b"run_id\0")
        {
            return Some(String::from_utf8_lossy(text).into_owned());
        }
        i += 12 + n;
    }
    None
}

/// Each file of `dir` with the run id it carries (summary.json, GeoJSON layers and PNG
/// pictures carry one; world files, `.prj` and `.aux.xml` sidecars do not).
fn run_ids(dir: &Path) -> BTreeMap<String, Option<String>> {
    names(dir)
        .into_iter()
        .map(|name| {
            let path = dir.join(&name);
            let id = if name.ends_with(".json") || name.ends_with(".geojson") {
                let v: Value = serde_json::from_slice(&std::fs::read(&path).unwrap())
                    .unwrap_or_else(|e| panic!("{} is not whole JSON: {e}", path.display()));
                v["run_id"].as_str().map(str::to_owned)
            } else if name.ends_with(".png") {
                png_run_id(&std::fs::read(&path).unwrap())
            } else {
                None
            };
            (name, id)
        })
        .collect()
}

/// Checks that `dir` holds exactly the files of one complete run (`files`), every file that
/// carries a run id carrying the same one, and returns that id.
fn one_complete_run(dir: &Path, files: &BTreeSet<String>) -> String {
    let ids = run_ids(dir);
    let found: BTreeSet<String> = ids.keys().cloned().collect();
    assert_eq!(&found, files, "the files of one complete run, nothing else");
    let carried: BTreeSet<&String> = ids.values().flatten().collect();
    assert_eq!(carried.len(), 1, "one run id in {}: {ids:?}", dir.display());
    assert!(
        ids["summary.json"].is_some() && ids["probability.geojson"].is_some(),
        "{ids:?}"
    );
    carried.into_iter().next().unwrap().clone()
}

/// The run id the binary makes for a process: UTC time to the second, then the process id.
fn is_id_of(run_id: &str, pid: u32) -> bool {
    run_id.ends_with(&format!("-{pid}"))
        && run_id.len() == "20260614T213000Z-".len() + pid.to_string().len()
}

/// Splitmix64 (Steele, Lea and Flood, "Fast splittable pseudorandom number generators",
/// OOPSLA 2014): seeded delays for the kills.
fn next_unit(state: &mut u64) -> f64 {
    *state = state.wrapping_add(0x9E37_79B9_7F4A_7C15);
    let mut z = *state;
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^= z >> 31;
    (z >> 11) as f64 / (1u64 << 53) as f64
}

#[test]
fn a_forced_run_killed_at_any_moment_leaves_the_old_or_the_new_run_whole() {
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("out");
    let started = Instant::now();
    let first = map(&out, false);
    let duration = started.elapsed();
    assert!(first.status.success(), "{}", stderr(&first));
    let files = names(&out);
    let mut current = one_complete_run(&out, &files);

    let mut seed = 20_260_614_u64;
    let mut interrupted = 0;
    let mut leftovers_seen = 0;
    for _ in 0..16 {
        // Over the run's whole duration and a little past it.
        let delay = duration.mul_f64(1.2 * next_unit(&mut seed));
        let mut child = spawn_map(&out, true);
        let pid = child.id();
        std::thread::sleep(delay);
        child.kill().expect("SIGKILL is sent");
        let status = child.wait().unwrap();
        if !status.success() {
            interrupted += 1;
        }
        let now = one_complete_run(&out, &files);
        assert!(
            now == current || is_id_of(&now, pid),
            "the folder holds run {now}, neither the earlier {current} nor the killed run's (pid {pid})"
        );
        current = now;
        if leftovers(tmp.path()) {
            leftovers_seen += 1;
        }
    }
    eprintln!(
        "{interrupted} of 16 forced runs were killed before they finished, {leftovers_seen} left a staging folder"
    );
    assert!(interrupted > 0, "no run was killed before it finished");
    assert!(leftovers_seen > 0, "no kill left a staging folder to clean");

    // A normal run removes what the killed ones left beside the folder, and says so.
    let left = leftovers(tmp.path());
    let o = map(&out, true);
    assert!(o.status.success(), "{}", stderr(&o));
    assert_eq!(
        stderr(&o).contains("left by an interrupted run into the same folder"),
        left,
        "{}",
        stderr(&o)
    );
    one_complete_run(&out, &files);
    assert_eq!(
        names(tmp.path()),
        BTreeSet::from(["out".to_owned()]),
        "no staging folder, set-aside folder or lock file stays beside the output folder"
    );
    let partial = walk(&out).into_iter().find(|p| {
        p.file_name()
            .is_some_and(|n| n.to_string_lossy().ends_with(".partial"))
    });
    assert_eq!(partial, None, "no half-written file in the folder");
}

/// Whether a staging or set-aside folder of the destination `out` lies in `parent`.
fn leftovers(parent: &Path) -> bool {
    names(parent)
        .iter()
        .any(|n| n.starts_with(".out.staging-") || n.starts_with(".out.old-"))
}

fn walk(dir: &Path) -> Vec<PathBuf> {
    let mut all = Vec::new();
    for e in std::fs::read_dir(dir).unwrap() {
        let p = e.unwrap().path();
        if p.is_dir() {
            all.extend(walk(&p));
        }
        all.push(p);
    }
    all
}

/// Sends a signal with the system's `kill` command (the standard library only sends SIGKILL).
fn signal(pid: u32, name: &str) {
    let ok = Command::new("kill")
        .args([format!("-{name}"), pid.to_string()])
        .status()
        .unwrap()
        .success();
    assert!(ok, "kill -{name} {pid}");
}

#[test]
fn a_second_run_into_the_same_folder_exits_1_while_the_first_is_writing() {
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("out");
    let first = map(&out, false);
    assert!(first.status.success(), "{}", stderr(&first));
    let files = names(&out);

    // Hold the first run still while it holds the lock (from before its staging folder
    // exists until it exits), so that the second certainly meets it, whatever the load.
    let mut attempts = 0;
    let (mut a, b) = loop {
        attempts += 1;
        assert!(
            attempts <= 5,
            "the first run never held still while writing"
        );
        let mut a = spawn_map(&out, true);
        let waited = Instant::now();
        while !names(tmp.path())
            .iter()
            .any(|n| n.starts_with(".out.staging-"))
            && a.try_wait().unwrap().is_none()
        {
            assert!(
                waited.elapsed() < Duration::from_secs(60),
                "no staging folder"
            );
            std::thread::sleep(Duration::from_millis(2));
        }
        signal(a.id(), "STOP");
        if a.try_wait().unwrap().is_some() {
            // It finished before it was stopped: try again.
            continue;
        }
        let b = map(&out, true);
        signal(a.id(), "CONT");
        break (a, b);
    };
    let a_pid = a.id();
    let a_status = a.wait().unwrap();
    let mut a_err = String::new();
    std::io::Read::read_to_string(a.stderr.as_mut().unwrap(), &mut a_err).unwrap();

    assert!(a_status.success(), "{a_err}");
    assert_eq!(b.status.code(), Some(1), "{}", stderr(&b));
    let msg = stderr(&b);
    assert!(
        msg.contains(out.to_str().unwrap())
            && msg.contains("being written by another seekgrid run")
            && msg.contains("wait for that run to finish, or choose another output folder"),
        "{msg}"
    );
    let id = one_complete_run(&out, &files);
    assert!(is_id_of(&id, a_pid), "{id} is the first run's");
    assert_eq!(names(tmp.path()), BTreeSet::from(["out".to_owned()]));
}

/// Every file under `dir` with its bytes.
fn snapshot(dir: &Path) -> BTreeMap<PathBuf, Vec<u8>> {
    walk(dir)
        .into_iter()
        .map(|p| {
            let bytes = if p.is_dir() {
                Vec::new()
            } else {
                std::fs::read(&p).unwrap()
            };
            (p, bytes)
        })
        .collect()
}

#[test]
fn an_output_folder_that_is_or_holds_an_input_is_refused_with_exit_2_and_nothing_changes() {
    let tmp = tempfile::tempdir().unwrap();
    let case = tmp.path().join("case");
    let scenarios = Path::new(env!("CARGO_MANIFEST_DIR")).join("../../scenarios/land");
    for f in [
        "incident.toml",
        "coast.geojson",
        "segments.geojson",
        "tracks/team-alpha.gpx",
        "tracks/team-bravo.gpx",
    ] {
        std::fs::create_dir_all(case.join(f).parent().unwrap()).unwrap();
        std::fs::copy(scenarios.join(f), case.join(f)).unwrap();
    }
    std::os::unix::fs::symlink(&case, tmp.path().join("link")).unwrap();
    let incident = case.join("incident.toml");
    let before = snapshot(tmp.path());
    for (out, input) in [
        (case.clone(), "incident.toml"),
        (case.join("tracks"), "team-alpha.gpx"),
        (case.join("tracks/.."), "incident.toml"),
        (tmp.path().join("link"), "incident.toml"),
        (tmp.path().join("link/segments.geojson"), "segments.geojson"),
    ] {
        let o = bin()
            .args([
                "map",
                incident.to_str().unwrap(),
                "--out",
                out.to_str().unwrap(),
                "--force",
            ])
            .output()
            .unwrap();
        assert_eq!(
            o.status.code(),
            Some(2),
            "{}: {}",
            out.display(),
            stderr(&o)
        );
        let msg = stderr(&o);
        assert!(
            msg.contains(input) && msg.contains("choose another output folder"),
            "{msg}"
        );
        assert_eq!(snapshot(tmp.path()), before, "{}", out.display());
    }
}

#[test]
fn a_forced_re_run_with_fewer_layers_leaves_only_its_own_files() {
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("out");
    let full = map(&out, false);
    assert!(full.status.success(), "{}", stderr(&full));
    assert!(names(&out).len() > 5);
    let o = bin()
        .args(map_args(&out, true))
        .args(["--outputs", "summary"])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", stderr(&o));
    assert_eq!(names(&out), BTreeSet::from(["summary.json".to_owned()]));
    let s: Value =
        serde_json::from_slice(&std::fs::read(out.join("summary.json")).unwrap()).unwrap();
    let id = s["run_id"].as_str().unwrap();
    assert!(
        stderr(&o).contains(&format!("as run {id}")),
        "{}",
        stderr(&o)
    );
    assert_eq!(names(tmp.path()), BTreeSet::from(["out".to_owned()]));
}
