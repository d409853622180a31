//! Structured fuzzing of every reader of the incident crate, on stable Rust with proptest.
//!
//! Each target starts from small valid files (invented test data) and applies a few
//! structure-aware mutations: bit flips and byte edits, lines deleted, duplicated, swapped or
//! inserted, numbers replaced by extremes (0, -0, ±1e308, nan, inf, huge integers, deep
//! nesting), strings replaced by empty, long or unusual Unicode text, keys renamed, arrays
//! shortened or lengthened, tables, objects or elements duplicated or deleted. The property:
//! the reader never panics, and what it accepts holds the invariants its documentation states.
//! Accepted files are also fed one step further, through an incident and
//! [`seekgrid_engine::prepare::prepare`], which must not panic either.
//!
//! * `SEEKGRID_FUZZ_CASES`: cases per round (default 1000: all targets together take well
//!   under 20 s in a release build).
//! * `SEEKGRID_FUZZ_SECONDS`: keep running rounds, each with the next seed, until this many
//!   seconds have passed (per target). Unset: one round.
//! * `SEEKGRID_FUZZ_SEED`: the seed of the first round (default: derived from the target's
//!   name). A failure prints the seed of its round and the command that repeats it.
//!
//! `cargo test -p seekgrid-engine --release --test fuzz`; a long run of one target:
//! `SEEKGRID_FUZZ_SECONDS=600 cargo test -p seekgrid-engine --release --test fuzz
//! incident_file -- --nocapture`.

use geo::{Coord, MultiPolygon};
use proptest::prelude::*;
use proptest::sample::select;
use proptest::strategy::Union;
use proptest::test_runner::{Config, RngAlgorithm, TestCaseError, TestError, TestRng, TestRunner};
use seekgrid_incident::model::{
    Incident, PatternDef, ScenarioKind, SearchGeometry, Time, VectorDef, VectorSample,
};
use seekgrid_incident::{ErrorKind, geofiles};
use std::fmt;
use std::ops::Range;
use std::path::Path;
use std::sync::Mutex;
use std::time::{Duration, Instant};

// ---------------------------------------------------------------------------------------------
// The run: rounds of proptest cases with deterministic seeds until the budget is spent.

fn env_u64(name: &str) -> Option<u64> {
    let v = std::env::var(name).ok()?;
    Some(
        v.trim()
            .parse()
            .unwrap_or_else(|_| panic!("{name}={v} is not a whole number")),
    )
}

/// FNV-1a of the target's name: each target has its own default seeds.
fn name_seed(name: &str) -> u64 {
    name.bytes().fold(0xcbf2_9ce4_8422_2325, |h, b| {
        (h ^ u64::from(b)).wrapping_mul(0x0100_0000_01b3)
    })
}

/// Runs `check` on the cases of `strategy`; `check` says whether the reader accepted the case
/// (counted for the summary) and fails the case when an invariant does not hold.
fn fuzz<S>(name: &str, strategy: S, check: impl Fn(&S::Value) -> Result<bool, TestCaseError>)
where
    S: Strategy,
    S::Value: fmt::Debug,
{
    let cases = env_u64("SEEKGRID_FUZZ_CASES").unwrap_or(1000);
    let cases = u32::try_from(cases).unwrap_or(u32::MAX);
    let seconds = env_u64("SEEKGRID_FUZZ_SECONDS");
    let first_seed = env_u64("SEEKGRID_FUZZ_SEED").unwrap_or_else(|| name_seed(name));
    let started = Instant::now();
    let slowest = Mutex::new(Duration::ZERO);
    let accepted = std::sync::atomic::AtomicU64::new(0);
    let mut rounds = 0u64;
    loop {
        let seed = first_seed.wrapping_add(rounds);
        let mut bytes = [0u8; 32];
        bytes[..8].copy_from_slice(&seed.to_le_bytes());
        let config = Config {
            cases,
            failure_persistence: None,
            max_shrink_time: 120_000,
            ..Config::default()
        };
        let mut runner =
            TestRunner::new_with_rng(config, TestRng::from_seed(RngAlgorithm::ChaCha, &bytes));
        let result = runner.run(&strategy, |value| {
            let t = Instant::now();
            let r = check(&value);
            let mut s = slowest
                .lock()
                .unwrap_or_else(std::sync::PoisonError::into_inner);
            *s = (*s).max(t.elapsed());
            if r.as_ref().is_ok_and(|a| *a) {
                accepted.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
            }
            r.map(|_| ())
        });
        rounds += 1;
        match result {
            Ok(()) => {}
            Err(TestError::Fail(reason, value)) => panic!(
                "fuzz target {name} failed: {reason}\nminimal input: {value:#?}\nrepeat with: \
                 SEEKGRID_FUZZ_SEED={seed} SEEKGRID_FUZZ_CASES={cases} cargo test -p \
                 seekgrid-engine --release --test fuzz {name} -- --nocapture"
            ),
            Err(TestError::Abort(reason)) => {
                panic!("fuzz target {name} aborted at seed {seed}: {reason}")
            }
        }
        if seconds.is_some() {
            eprintln!(
                "fuzz {name}: round {rounds} (seed {seed}) passed, {} cases, {:.0} s",
                rounds * u64::from(cases),
                started.elapsed().as_secs_f64()
            );
        }
        if seconds.is_none_or(|s| started.elapsed() >= Duration::from_secs(s)) {
            break;
        }
    }
    eprintln!(
        "fuzz {name}: {} cases ({} accepted) in {rounds} round(s) from seed {first_seed}, {:.1} s, slowest case {:.0} ms",
        rounds * u64::from(cases),
        accepted.load(std::sync::atomic::Ordering::Relaxed),
        started.elapsed().as_secs_f64(),
        slowest
            .lock()
            .unwrap_or_else(std::sync::PoisonError::into_inner)
            .as_secs_f64()
            * 1000.0
    );
}

// ---------------------------------------------------------------------------------------------
// Finding the parts of a text to mutate. The scanners are rough on purpose: a mutation that
// lands beside its target still makes an input worth reading.

/// How a text is structured, for finding its numbers, strings, keys, arrays and blocks.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Format {
    Toml,
    Json,
    Xml,
    Csv,
}

fn is_word(b: u8) -> bool {
    b.is_ascii_alphanumeric() || b == b'_' || b == b'-'
}

/// Number-like tokens: a digit (or a sign or point before one) not inside a word, and what
/// follows of digits, letters, points, signs and colons (so a time is one token too).
fn numbers(t: &[u8]) -> Vec<Range<usize>> {
    let mut out = Vec::new();
    let mut i = 0;
    while i < t.len() {
        let digit_at = |j: usize| t.get(j).is_some_and(u8::is_ascii_digit);
        let starts = digit_at(i) || (matches!(t[i], b'-' | b'+' | b'.') && digit_at(i + 1));
        let after_word = i > 0 && (is_word(t[i - 1]) || t[i - 1] == b'.');
        if starts && !after_word {
            let mut j = i + 1;
            while j < t.len() && (is_word(t[j]) || matches!(t[j], b'.' | b'+' | b':')) {
                j += 1;
            }
            out.push(i..j);
            i = j;
        } else {
            i += 1;
        }
    }
    out
}

/// The contents of quoted strings (without the quotes); for XML also the text between tags;
/// for CSV every cell.
fn strings(t: &[u8], f: Format) -> Vec<Range<usize>> {
    let mut out = Vec::new();
    if f == Format::Csv {
        for line in lines(t) {
            let mut start = line.start;
            for j in line.clone() {
                if matches!(t[j], b',' | b'\n' | b'\r') {
                    out.push(start..j);
                    start = j + 1;
                }
            }
            if start < line.end {
                out.push(start..line.end);
            }
        }
        return out;
    }
    let mut i = 0;
    while i < t.len() {
        if t[i] == b'"' {
            let mut j = i + 1;
            while j < t.len() && t[j] != b'"' && t[j] != b'\n' {
                j += if t[j] == b'\\' { 2 } else { 1 };
            }
            let end = j.min(t.len());
            out.push(i + 1..end);
            i = end + 1;
        } else if f == Format::Xml && t[i] == b'>' {
            let j = t[i + 1..]
                .iter()
                .position(|&b| b == b'<')
                .map_or(t.len(), |p| i + 1 + p);
            if t[i + 1..j].iter().any(|b| !b.is_ascii_whitespace()) {
                out.push(i + 1..j);
            }
            i = j;
        } else {
            i += 1;
        }
    }
    out
}

/// Keys: TOML keys and table names, JSON object keys, XML element and attribute names, CSV
/// header cells.
fn keys(t: &[u8], f: Format) -> Vec<Range<usize>> {
    let mut out = Vec::new();
    match f {
        Format::Json => {
            for s in strings(t, f) {
                let rest = &t[(s.end + 1).min(t.len())..];
                if rest.iter().find(|b| !b.is_ascii_whitespace()) == Some(&b':') {
                    out.push(s);
                }
            }
        }
        Format::Csv => {
            if let Some(header) = lines(t).into_iter().find(|l| t.get(l.start) != Some(&b'#')) {
                out.extend(
                    strings(&t[..header.end], f)
                        .into_iter()
                        .filter(|r| r.start >= header.start),
                );
            }
        }
        Format::Toml | Format::Xml => {
            let mut i = 0;
            while i < t.len() {
                if is_word(t[i]) && (i == 0 || !is_word(t[i - 1])) {
                    let mut j = i;
                    while j < t.len() && is_word(t[j]) {
                        j += 1;
                    }
                    let next = t[j..].iter().find(|b| !b.is_ascii_whitespace());
                    let before = t[..i].iter().rev().find(|b| **b != b' ');
                    let is_key = next == Some(&b'=')
                        || (f == Format::Toml && before == Some(&b'[') && next == Some(&b']'))
                        || (f == Format::Xml && matches!(before, Some(b'<' | b'/')));
                    if is_key {
                        out.push(i..j);
                    }
                    i = j;
                } else {
                    i += 1;
                }
            }
        }
    }
    out
}

/// Every line with its newline.
fn lines(t: &[u8]) -> Vec<Range<usize>> {
    let mut out = Vec::new();
    let mut start = 0;
    for (i, b) in t.iter().enumerate() {
        if *b == b'\n' {
            out.push(start..i + 1);
            start = i + 1;
        }
    }
    if start < t.len() {
        out.push(start..t.len());
    }
    out
}

/// Bracketed spans `open..=close` outside strings, for arrays (`[`) or objects (`{`), with the
/// ranges of their top-level comma-separated elements.
fn spans(t: &[u8], open: u8, close: u8) -> Vec<(Range<usize>, Vec<Range<usize>>)> {
    let mut out = Vec::new();
    let mut stack: Vec<(usize, Vec<usize>)> = Vec::new();
    let mut in_string = false;
    let mut i = 0;
    while i < t.len() {
        let b = t[i];
        if in_string {
            if b == b'\\' {
                i += 1;
            } else if b == b'"' || b == b'\n' {
                in_string = false;
            }
        } else if b == b'"' {
            in_string = true;
        } else if b == open {
            stack.push((i, Vec::new()));
        } else if b == close {
            if let Some((start, commas)) = stack.pop() {
                let mut elems = Vec::new();
                let mut from = start + 1;
                for c in commas.into_iter().chain([i]) {
                    if t[from..c].iter().any(|b| !b.is_ascii_whitespace()) {
                        elems.push(from..c);
                    }
                    from = c + 1;
                }
                out.push((start..i + 1, elems));
            }
        } else if b == b',' {
            if let Some((_, commas)) = stack.last_mut() {
                commas.push(i);
            }
        } else if matches!(b, b'[' | b']' | b'{' | b'}') {
            // The other kind of bracket: its commas are not this span's.
            if matches!(b, b'[' | b'{') {
                stack.push((usize::MAX, Vec::new()));
            } else if stack.last().is_some_and(|(s, _)| *s == usize::MAX) {
                stack.pop();
            }
        }
        i += 1;
    }
    out.retain(|(r, _)| r.start != usize::MAX);
    out
}

/// Blocks worth duplicating or deleting whole: TOML tables, JSON objects, XML elements, CSV
/// lines.
fn blocks(t: &[u8], f: Format) -> Vec<Range<usize>> {
    match f {
        Format::Toml => {
            let heads: Vec<usize> = lines(t)
                .into_iter()
                .filter(|l| t[l.clone()].trim_ascii_start().starts_with(b"["))
                .map(|l| l.start)
                .collect();
            heads
                .iter()
                .enumerate()
                .map(|(k, &s)| s..heads.get(k + 1).copied().unwrap_or(t.len()))
                .collect()
        }
        Format::Json => spans(t, b'{', b'}').into_iter().map(|(r, _)| r).collect(),
        Format::Xml => {
            let mut out = Vec::new();
            for (i, _) in t.iter().enumerate().filter(|(_, b)| **b == b'<') {
                let name_end = (i + 1..t.len())
                    .find(|&j| !is_word(t[j]))
                    .unwrap_or(t.len());
                if name_end == i + 1 {
                    continue;
                }
                let mut closing = b"</".to_vec();
                closing.extend_from_slice(&t[i + 1..name_end]);
                closing.push(b'>');
                let end = t[i..]
                    .windows(closing.len())
                    .position(|w| w == closing.as_slice())
                    .map(|p| i + p + closing.len())
                    .or_else(|| t[i..].iter().position(|b| *b == b'>').map(|p| i + p + 1));
                if let Some(end) = end {
                    out.push(i..end);
                }
            }
            out
        }
        Format::Csv => lines(t),
    }
}

// ---------------------------------------------------------------------------------------------
// Mutations.

/// Which of the candidates a mutation picks: the fraction `pick / 2^64` of the way along them
/// (so it shrinks toward the first, and means something for any number of candidates).
type Pick = u64;

fn index(pick: Pick, len: usize) -> usize {
    ((len as u128 * u128::from(pick)) >> 64) as usize
}

#[derive(Debug, Clone)]
enum Mutation {
    FlipBit {
        at: Pick,
        bit: u8,
    },
    SetByte {
        at: Pick,
        byte: u8,
    },
    DeleteBytes {
        at: Pick,
        len: u8,
    },
    DuplicateBytes {
        at: Pick,
        len: u8,
    },
    Truncate {
        at: Pick,
    },
    DeleteLine {
        at: Pick,
    },
    DuplicateLine {
        at: Pick,
    },
    SwapLines {
        a: Pick,
        b: Pick,
    },
    InsertLine {
        at: Pick,
        line: String,
    },
    ReplaceNumber {
        which: Pick,
        with: String,
    },
    ReplaceString {
        which: Pick,
        with: String,
    },
    RenameKey {
        which: Pick,
        to: String,
    },
    ShortenArray {
        which: Pick,
        element: Pick,
    },
    LengthenArray {
        which: Pick,
        element: Pick,
        times: u8,
    },
    DuplicateBlock {
        which: Pick,
    },
    DeleteBlock {
        which: Pick,
    },
}

fn pick<T: Clone>(items: &[T], p: &Pick) -> Option<T> {
    (!items.is_empty()).then(|| items[index(*p, items.len())].clone())
}

fn splice(t: &mut Vec<u8>, r: Range<usize>, with: &[u8]) {
    t.splice(r, with.iter().copied());
}

fn apply(t: &mut Vec<u8>, m: &Mutation, f: Format) {
    let len = t.len();
    let at = |p: &Pick| (len > 0).then(|| index(*p, len));
    match m {
        Mutation::FlipBit { at: i, bit } => {
            if let Some(p) = at(i) {
                t[p] ^= 1 << (bit % 8);
            }
        }
        Mutation::SetByte { at: i, byte } => {
            if let Some(p) = at(i) {
                t[p] = *byte;
            }
        }
        Mutation::DeleteBytes { at: i, len: n } => {
            if let Some(p) = at(i) {
                t.drain(p..(p + usize::from(*n)).min(len));
            }
        }
        Mutation::DuplicateBytes { at: i, len: n } => {
            if let Some(p) = at(i) {
                let copy = t[p..(p + usize::from(*n)).min(len)].to_vec();
                splice(t, p..p, &copy);
            }
        }
        Mutation::Truncate { at: i } => {
            if let Some(p) = at(i) {
                t.truncate(p);
            }
        }
        Mutation::DeleteLine { at: i } => {
            if let Some(l) = pick(&lines(t), i) {
                t.drain(l);
            }
        }
        Mutation::DuplicateLine { at: i } => {
            if let Some(l) = pick(&lines(t), i) {
                let mut copy = t[l.clone()].to_vec();
                if copy.last() != Some(&b'\n') {
                    copy.insert(0, b'\n');
                }
                splice(t, l.end..l.end, &copy);
            }
        }
        Mutation::SwapLines { a, b } => {
            let ls = lines(t);
            if let (Some(x), Some(y)) = (pick(&ls, a), pick(&ls, b)) {
                let (x, y) = if x.start <= y.start { (x, y) } else { (y, x) };
                if x.end <= y.start {
                    let (xs, ys) = (t[x.clone()].to_vec(), t[y.clone()].to_vec());
                    splice(t, y, &xs);
                    splice(t, x, &ys);
                }
            }
        }
        Mutation::InsertLine { at: i, line } => {
            let start = pick(&lines(t), i).map_or(0, |l| l.start);
            let mut text = line.as_bytes().to_vec();
            text.push(b'\n');
            splice(t, start..start, &text);
        }
        Mutation::ReplaceNumber { which, with } => {
            if let Some(r) = pick(&numbers(t), which) {
                splice(t, r, with.as_bytes());
            }
        }
        Mutation::ReplaceString { which, with } => {
            if let Some(r) = pick(&strings(t, f), which) {
                splice(t, r, with.as_bytes());
            }
        }
        Mutation::RenameKey { which, to } => {
            if let Some(r) = pick(&keys(t, f), which) {
                splice(t, r, to.as_bytes());
            }
        }
        Mutation::ShortenArray { which, element } => {
            if let Some((_, elems)) = pick(&spans(t, b'[', b']'), which)
                && let Some(e) = pick(&elems, element)
            {
                // With its comma: the one after it, or else the one before it.
                let r = if t.get(e.end) == Some(&b',') {
                    e.start..e.end + 1
                } else if e.start > 0 && t[e.start - 1] == b',' {
                    e.start - 1..e.end
                } else {
                    e
                };
                t.drain(r);
            }
        }
        Mutation::LengthenArray {
            which,
            element,
            times,
        } => {
            if let Some((_, elems)) = pick(&spans(t, b'[', b']'), which)
                && let Some(e) = pick(&elems, element)
            {
                let mut copy = Vec::new();
                for _ in 0..*times {
                    copy.push(b',');
                    copy.extend_from_slice(&t[e.clone()]);
                }
                splice(t, e.end..e.end, &copy);
            }
        }
        Mutation::DuplicateBlock { which } => {
            if let Some(r) = pick(&blocks(t, f), which) {
                let mut copy = t[r.clone()].to_vec();
                if f == Format::Json {
                    copy.insert(0, b',');
                } else if copy.last() != Some(&b'\n') {
                    copy.insert(0, b'\n');
                }
                splice(t, r.end..r.end, &copy);
            }
        }
        Mutation::DeleteBlock { which } => {
            if let Some(r) = pick(&blocks(t, f), which) {
                let r = if f == Format::Json && t.get(r.end) == Some(&b',') {
                    r.start..r.end + 1
                } else {
                    r
                };
                t.drain(r);
            }
        }
    }
}

/// What the mutations may write: per format, words that mean something to the reader.
struct Words {
    values: &'static [&'static str],
    strings: &'static [&'static str],
    keys: &'static [&'static str],
    lines: &'static [&'static str],
}

/// Numbers at and past the edges of every type a reader might parse them into.
const EXTREME_NUMBERS: &[&str] = &[
    "0",
    "-0",
    "0.0",
    "-0.0",
    "1e308",
    "-1e308",
    "1e309",
    "-1e309",
    "1.7976931348623157e308",
    "5e-324",
    "1e-320",
    "nan",
    "NaN",
    "-nan",
    "inf",
    "-inf",
    "+inf",
    "infinity",
    "18446744073709551615",
    "18446744073709551616",
    "9223372036854775807",
    "-9223372036854775808",
    "-9223372036854775809",
    "99999999999999999999999999999",
    "4294967295",
    "4294967296",
    "-1",
    "1",
    "2",
    "0.5",
    "360",
    "-360",
    "720",
    "180",
    "-180",
    "180.0000001",
    "90",
    "-90",
    "90.0000001",
    "84",
    "84.0000001",
    "-80.0000001",
    "1e-9",
    "1e15",
    "1e",
    ".",
    "-",
    "0x10",
    "1_000",
    "007",
    "1.",
    ".5",
    "1e+",
    "--1",
];

const TIMES: &[&str] = &[
    "2026-06-14T18:00:00Z",
    "2026-06-14T17:59:59Z",
    "2026-06-15T18:00:00Z",
    "2026-06-14T23:59:60Z",
    "2026-02-30T00:00:00Z",
    "2026-06-14T18:00:00+14:00",
    "2026-06-14T18:00:00-12:00",
    "2026-06-14T18:00:00.999999999Z",
    "2026-06-14 18:00:00",
    "2026-06-14",
    "0000-01-01T00:00:00Z",
    "9999-12-31T23:59:59Z",
    "1970-01-01T00:00:00Z",
    "-2026-06-14T18:00:00Z",
    "+262143-01-01T00:00:00Z",
];

const TOML_WORDS: Words = Words {
    values: &[
        "\"\"",
        "\"text\"",
        "true",
        "false",
        "[]",
        "{}",
        "[1, \"a\"]",
        "{ a = 1 }",
        "1979-05-27T07:32:00Z",
        "1979-05-27",
        "07:32:00",
        "'literal'",
        "\"\"\"multi\nline\"\"\"",
    ],
    strings: &[
        "point",
        "route",
        "area",
        "segments",
        "rings",
        "drift",
        "parallel-sweep",
        "creeping-line",
        "expanding-square",
        "sector-search",
        "inverse-cube",
        "exponential",
        "definite-range",
        "linear",
        "logarithmic",
        "uniform-per-ring",
        "monotone-cubic",
        "EPSG:32620",
        "EPSG:32720",
        "EPSG:32600",
        "EPSG:32661",
        "EPSG:4326",
        "desk",
        "ops",
        "S1",
        "S2",
        "u1",
        "area.geojson",
        "segments.geojson",
        "track.gpx",
        "track.geojson",
        "wind.csv",
        "field.csv",
        "coast.geojson",
        "missing.geojson",
        ".",
        "/dev/null",
        "/proc/self/status",
        "incident.toml",
        "\\u0000",
        "\\ud800",
    ],
    keys: &[
        "incident",
        "grid",
        "prior",
        "analyst",
        "scenario",
        "search",
        "unit",
        "title",
        "reference_time",
        "crs",
        "coastline",
        "object_afloat",
        "notes",
        "cell_m",
        "bounds",
        "max_cells",
        "pool",
        "id",
        "weight",
        "analyst",
        "kind",
        "position",
        "sigma_m",
        "sigma_major_m",
        "sigma_minor_m",
        "major_bearing_deg",
        "waypoints",
        "cross_track_sigma_m",
        "polygon",
        "segments",
        "poa",
        "distance_quantiles_km",
        "ring_interpolation",
        "position_sigma_m",
        "adrift",
        "current",
        "wind",
        "leeway",
        "series",
        "field",
        "particles",
        "seed",
        "start",
        "end",
        "sweep_width_m",
        "sweep_width_factors",
        "detection",
        "pattern",
        "track",
        "speed_kn",
        "speed_kmh",
        "hours_on_scene",
        "legs",
        "sectors",
        "radius_m",
        "searchers",
        "x",
        "\"\"",
        "\"a b\"",
        "a.b",
    ],
    lines: &[
        "[incident]",
        "[grid]",
        "[prior]",
        "[[analyst]]",
        "[[scenario]]",
        "[[search]]",
        "[[unit]]",
        "[grid.bounds]",
        "x = 1",
        "id = \"desk\"",
        "bounds = { west = -63.2, south = 43.9, east = -62.6, north = 44.4 }",
        "bounds = { west = 10, south = 10, east = -10, north = -10 }",
        "max_cells = 18446744073709551615",
        "max_cells = 0",
        "pool = \"logarithmic\"",
        "crs = \"EPSG:32601\"",
        "object_afloat = false",
        "coastline = \"coast.geojson\"",
        "sweep_width_factors = [0.5, 0, -1, 1e308]",
        "particles = 0",
        "particles = 18446744073709551615",
        "legs = 400",
        "sectors = 12",
        "searchers = 4294967296",
        "a = [",
        "\"",
        "'''",
        "# comment",
        "",
    ],
};

const JSON_WORDS: Words = Words {
    values: &[
        "null",
        "true",
        "\"\"",
        "\"S1\"",
        "[]",
        "{}",
        "[0,0]",
        "[[0,0]]",
        "[[[0,0],[1,0],[1,1],[0,0]]]",
        "[-63.0,44.0,10.0]",
        "[-63.0,44.0,10.0,5.0]",
        "{\"type\":\"Point\",\"coordinates\":[0,0]}",
        "{\"type\":\"GeometryCollection\",\"geometries\":[]}",
    ],
    strings: &[
        "Polygon",
        "MultiPolygon",
        "Point",
        "MultiPoint",
        "LineString",
        "MultiLineString",
        "GeometryCollection",
        "Feature",
        "FeatureCollection",
        "S1",
        "S2",
        "1",
        "\\u0000",
        "\\ud800",
        "\\uDFFF",
    ],
    keys: &[
        "type",
        "features",
        "geometry",
        "geometries",
        "coordinates",
        "properties",
        "id",
        "bbox",
        "crs",
        "name",
        "x",
    ],
    lines: &[
        "{",
        "}",
        "[",
        "]",
        ",",
        "\"id\": \"S1\",",
        "{\"type\":\"Feature\",\"properties\":{\"id\":\"S1\"},\"geometry\":null},",
        "{\"type\":\"Feature\",\"properties\":null,\"geometry\":{\"type\":\"Polygon\",\"coordinates\":[]}},",
        "{\"type\":\"Feature\",\"properties\":{},\"geometry\":{\"type\":\"LineString\",\"coordinates\":[[0,0]]}},",
    ],
};

const XML_WORDS: Words = Words {
    values: &[
        "",
        "abc",
        "\"",
        "&amp;",
        "&lt;",
        "&#0;",
        "&#x110000;",
        "&undefined;",
    ],
    strings: &[
        "1.1",
        "1.0",
        "2.0",
        "UTF-8",
        "ISO-8859-1",
        "UTF-16",
        "latin-9",
        "http://www.topografix.com/GPX/1/1",
        "http://www.topografix.com/GPX/1/0",
        "",
    ],
    keys: &[
        "gpx",
        "trk",
        "trkseg",
        "trkpt",
        "rte",
        "rtept",
        "wpt",
        "time",
        "ele",
        "name",
        "lat",
        "lon",
        "version",
        "metadata",
        "extensions",
        "x",
    ],
    lines: &[
        "<trkpt lat=\"44.0\" lon=\"-63.0\"></trkpt>",
        "<trkpt lat=\"44.0\" lon=\"-63.0\"/>",
        "<trkpt lat=\"44.0\"><time>2026-06-15T06:00:00Z</time></trkpt>",
        "<trkpt lat=\"44.0\" lon=\"-63.0\"><time>2000-01-01T00:00:00Z</time></trkpt>",
        "<trkseg>",
        "</trkseg>",
        "<trk>",
        "</trk>",
        "<rte><rtept lat=\"44.0\" lon=\"-63.0\"/></rte>",
        "<wpt lat=\"44.0\" lon=\"-63.0\"/>",
        "<!DOCTYPE gpx [<!ENTITY a \"aaaaaaaaaa\">]>",
        "<![CDATA[ <trkpt> ]]>",
        "<!-- comment -->",
        "<?xml version=\"1.0\"?>",
        "<extensions><x/></extensions>",
    ],
};

const CSV_WORDS: Words = Words {
    values: &["", "\"\"", "\"1,2\"", "\"", " ", "#"],
    strings: &[
        "time",
        "speed_kn",
        "direction_deg",
        "speed_sigma_kn",
        "direction_sigma_deg",
        "lon",
        "lat",
        "u_kn",
        "v_kn",
        "",
        "\"quoted\"",
    ],
    keys: &[
        "time",
        "speed_kn",
        "direction_deg",
        "speed_sigma_kn",
        "direction_sigma_deg",
        "lon",
        "lat",
        "u_kn",
        "v_kn",
        "x",
        "",
    ],
    lines: &[
        "",
        "# comment",
        ",,,",
        "time,speed_kn,direction_deg",
        "lon,lat,time,u_kn,v_kn",
        "2026-06-14T12:00:00Z,1,2",
        "2026-06-14T12:00:00Z,1,2,3,4,5,6",
        "-63.0,44.0,2026-06-14T12:00:00Z,0.5,0.1",
        "-63.0,44.0,2026-06-14T15:00:00Z,0.5,0.1",
        "\"unterminated",
        "\r",
    ],
};

fn one_of_words(list: &'static [&'static str]) -> BoxedStrategy<String> {
    select(list).prop_map(str::to_owned).boxed()
}

/// A value to put where a number was: an extreme, a random number, a word of the format,
/// or deep nesting.
fn value_strategy(w: &Words) -> BoxedStrategy<String> {
    prop_oneof![
        4 => one_of_words(EXTREME_NUMBERS),
        2 => any::<f64>().prop_map(|v| format!("{v:e}")),
        1 => any::<f64>().prop_map(|v| v.to_string()),
        1 => any::<i64>().prop_map(|v| v.to_string()),
        2 => (-200.0f64..200.0).prop_map(|v| v.to_string()),
        1 => one_of_words(TIMES),
        2 => one_of_words(w.values),
        1 => (1usize..20_000).prop_map(|d| format!("{}{}", "[".repeat(d), "]".repeat(d))),
        1 => (1usize..5_000).prop_map(|d| format!("{}1{}", "{\"a\":".repeat(d), "}".repeat(d))),
        1 => (1usize..5_000).prop_map(|d| format!("{}1{}", "{ a = ".repeat(d), " }".repeat(d))),
    ]
    .boxed()
}

fn string_strategy(w: &Words) -> BoxedStrategy<String> {
    prop_oneof![
        3 => one_of_words(w.strings),
        1 => one_of_words(TIMES),
        1 => Just(String::new()),
        1 => (1usize..200_000).prop_map(|n| "x".repeat(n)),
        1 => (1usize..20_000).prop_map(|n| "\u{1F6DF}\u{202E}\u{0301}".repeat(n)),
        2 => "\\PC{0,24}",
        1 => ".{0,8}",
    ]
    .boxed()
}

fn key_strategy(w: &Words) -> BoxedStrategy<String> {
    prop_oneof![4 => one_of_words(w.keys), 1 => "[a-z_]{0,12}", 1 => "\\PC{0,6}"].boxed()
}

const BYTES: &[u8] = &[
    0, b'\n', b'\r', b'\t', b' ', b'"', b'\'', b'\\', b'[', b']', b'{', b'}', b',', b'=', b':',
    b'#', b'<', b'>', b'/', b'&', b'-', b'.', b'e', b'9', 0x7F, 0x80, 0xC3, 0xEF, 0xFF,
];

fn mutation_strategy(w: &'static Words) -> impl Strategy<Value = Mutation> {
    let i = any::<Pick>;
    prop_oneof![
        2 => (i(), any::<u8>()).prop_map(|(at, bit)| Mutation::FlipBit { at, bit }),
        1 => (i(), select(BYTES)).prop_map(|(at, byte)| Mutation::SetByte { at, byte }),
        1 => (i(), 1u8..64).prop_map(|(at, len)| Mutation::DeleteBytes { at, len }),
        1 => (i(), 1u8..64).prop_map(|(at, len)| Mutation::DuplicateBytes { at, len }),
        1 => i().prop_map(|at| Mutation::Truncate { at }),
        2 => i().prop_map(|at| Mutation::DeleteLine { at }),
        2 => i().prop_map(|at| Mutation::DuplicateLine { at }),
        1 => (i(), i()).prop_map(|(a, b)| Mutation::SwapLines { a, b }),
        2 => (i(), one_of_words(w.lines)).prop_map(|(at, line)| Mutation::InsertLine { at, line }),
        6 => (i(), value_strategy(w)).prop_map(|(which, with)| Mutation::ReplaceNumber { which, with }),
        4 => (i(), string_strategy(w)).prop_map(|(which, with)| Mutation::ReplaceString { which, with }),
        3 => (i(), key_strategy(w)).prop_map(|(which, to)| Mutation::RenameKey { which, to }),
        2 => (i(), i()).prop_map(|(which, element)| Mutation::ShortenArray { which, element }),
        2 => (i(), i(), 1u8..40).prop_map(|(which, element, times)| Mutation::LengthenArray {
            which,
            element,
            times
        }),
        2 => i().prop_map(|which| Mutation::DuplicateBlock { which }),
        1 => i().prop_map(|which| Mutation::DeleteBlock { which }),
    ]
}

/// One fuzz case: which base file, the mutations, and the bytes they made.
#[derive(Clone)]
struct Case {
    base: usize,
    mutations: Vec<Mutation>,
    bytes: Vec<u8>,
}

impl fmt::Debug for Case {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        const SHOWN: usize = 6000;
        let text = String::from_utf8_lossy(&self.bytes);
        let shown: String = text.chars().take(SHOWN).collect();
        f.debug_struct("Case")
            .field("base", &self.base)
            .field("mutations", &self.mutations)
            .field("bytes_len", &self.bytes.len())
            .finish()?;
        write!(f, "\n----- the input (lossy UTF-8")?;
        if shown.len() < text.len() {
            write!(f, ", first {SHOWN} characters")?;
        }
        write!(f, ") -----\n{shown}\n----- end -----")
    }
}

/// A base file: its text, its format and the words its mutations may write.
type Base = (&'static str, Format, &'static Words);

fn case_strategy(bases: &'static [Base]) -> impl Strategy<Value = Case> {
    Union::new(
        bases
            .iter()
            .enumerate()
            .map(|(base, &(text, format, words))| {
                prop::collection::vec(mutation_strategy(words), 1..=4)
                    .prop_map(move |mutations| {
                        let mut bytes = text.as_bytes().to_vec();
                        for m in &mutations {
                            apply(&mut bytes, m, format);
                        }
                        Case {
                            base,
                            mutations,
                            bytes,
                        }
                    })
                    .boxed()
            }),
    )
}

// ---------------------------------------------------------------------------------------------
// Valid base files (invented test data).

const AREA: &str = r#"{"type":"FeatureCollection","features":[
{"type":"Feature","properties":{"id":"S1"},"geometry":{"type":"Polygon","coordinates":[
[[-63.0,44.0],[-62.9,44.0],[-62.9,44.1],[-63.0,44.1],[-63.0,44.0]],
[[-62.97,44.03],[-62.93,44.03],[-62.93,44.07],[-62.97,44.03]]]}},
{"type":"Feature","properties":{"id":2},"geometry":{"type":"MultiPolygon","coordinates":[
[[[-62.9,44.0],[-62.8,44.0],[-62.8,44.1],[-62.9,44.0]]],
[[[-62.8,44.1],[-62.7,44.1],[-62.7,44.2],[-62.8,44.1]]]]}}
]}
"#;

const AREA_SINGLE: &str = r#"{"type":"Feature","properties":{"id":"only"},
"geometry":{"type":"Polygon","coordinates":[[[-63.0,44.0],[-62.9,44.0],[-62.9,44.1],[-63.0,44.0]]]}}
"#;

const GPX: &str = r#"<?xml version="1.0" encoding="UTF-8"?>
<gpx version="1.1" creator="seekgrid fuzz test (invented track)" xmlns="http://www.topografix.com/GPX/1/1">
 <metadata><name>t</name></metadata>
 <trk><name>team</name><trkseg>
  <trkpt lat="44.0" lon="-63.0"><ele>12.5</ele><time>2026-06-14T19:00:00Z</time></trkpt>
  <trkpt lat="44.02" lon="-62.98"><time>2026-06-14T19:10:00Z</time></trkpt>
  <trkpt lat="44.04" lon="-62.96"><time>2026-06-14T19:20:00Z</time></trkpt>
 </trkseg><trkseg>
  <trkpt lat="44.05" lon="-62.95"></trkpt>
  <trkpt lat="44.06" lon="-62.94"><time>2026-06-14T19:40:00Z</time></trkpt>
 </trkseg></trk>
</gpx>
"#;

const GEOJSON_TRACK: &str = r#"{"type":"FeatureCollection","features":[
{"type":"Feature","properties":{},"geometry":{"type":"LineString","coordinates":[[-63.0,44.0],[-62.98,44.02],[-62.96,44.04]]}},
{"type":"Feature","properties":{},"geometry":{"type":"MultiLineString","coordinates":[[[-62.95,44.05],[-62.94,44.06]],[[-62.93,44.07],[-62.92,44.08]]]}}
]}
"#;

const SERIES: &str = "# invented test wind\ntime,speed_kn,direction_deg\n2026-06-14T12:00:00Z,12,245\n2026-06-14T15:00:00Z,15,250\n2026-06-14T18:00:00Z,16,255\n";

const SERIES_SIGMAS: &str = "time , speed_kn , direction_deg , speed_sigma_kn , direction_sigma_deg\n2026-06-14T12:00:00Z, 0.6, 75, 0.2, 20\n2026-06-14T18:00:00Z, 0.4, 80, 0.1, 15\n";

const FIELD: &str = "# invented test current field\nlon,lat,time,u_kn,v_kn\n-63.0,44.0,2026-06-14T12:00:00Z,0.5,0.1\n-62.9,44.0,2026-06-14T12:00:00Z,0.4,0.2\n-63.0,44.1,2026-06-14T12:00:00Z,0.3,0.1\n-62.9,44.1,2026-06-14T12:00:00Z,0.2,0.0\n-63.0,44.0,2026-06-14T18:00:00Z,0.5,-0.1\n-62.9,44.0,2026-06-14T18:00:00Z,0.4,-0.2\n-63.0,44.1,2026-06-14T18:00:00Z,0.3,-0.1\n-62.9,44.1,2026-06-14T18:00:00Z,0.2,0.0\n";

const INCIDENT_FULL: &str = r#"[incident]
title = "Fuzz base incident (invented)"
reference_time = "2026-06-14T18:00:00Z"
crs = "EPSG:32620"
coastline = "coast.geojson"
object_afloat = true
notes = "invented"

[grid]
cell_m = 500
bounds = { west = -63.2, south = 43.9, east = -62.6, north = 44.4 }
max_cells = 100000

[prior]
pool = "linear"

[[analyst]]
id = "desk"
weight = 2.0

[[analyst]]
id = "ops"

[[scenario]]
id = "point"
analyst = "desk"
weight = 0.5
kind = "point"
position = [-62.95, 44.12]
sigma_major_m = 1400
sigma_minor_m = 700
major_bearing_deg = 60

[[scenario]]
id = "route"
analyst = "desk"
kind = "route"
waypoints = [[-63.10, 44.00], [-62.80, 44.20], [-62.70, 44.35]]
cross_track_sigma_m = 800

[[scenario]]
id = "area"
analyst = "ops"
kind = "area"
polygon = "area.geojson"

[[scenario]]
id = "segments"
analyst = "ops"
kind = "segments"
segments = "area.geojson"
poa = { S1 = 0.3, 2 = 0.2 }

[[scenario]]
id = "rings"
analyst = "ops"
kind = "rings"
position = [-62.9, 44.1]
distance_quantiles_km = { 25 = 1.1, 50 = 2.0, 75 = 3.6, 95 = 7.4 }
ring_interpolation = "monotone-cubic"

[[scenario]]
id = "drift"
analyst = "ops"
kind = "drift"
position = [-62.90, 44.05]
position_sigma_m = 800
adrift = { earliest = "2026-06-14T15:00:00Z", latest = "2026-06-14T17:00:00Z" }
current = { field = "field.csv", speed_sigma_kn = 0.2, direction_sigma_deg = 20 }
wind = { series = "wind.csv", speed_sigma_kn = 3, direction_sigma_deg = 15 }
leeway = { downwind_slope = 0.035, downwind_offset_kn = 0.05, downwind_sigma_kn = 0.05, crosswind_slope = 0.012, crosswind_offset_kn = 0.0, crosswind_sigma_kn = 0.03, jibe_per_h = 0.05, source = "invented" }
diffusivity_m2_s = 1.5
particles = 2000
seed = 7

[[search]]
id = "sweep"
unit = "boat"
start = "2026-06-14T19:30:00Z"
end = "2026-06-14T22:00:00Z"
sweep_width_m = 900
sweep_width_factors = [0.9, 1.1]
detection = "inverse-cube"
pattern = { kind = "parallel-sweep", center = [-62.955, 44.148], length_m = 9000, width_m = 4500, major_bearing_deg = 60, track_spacing_m = 900 }

[[search]]
id = "square"
unit = "boat"
start = "2026-06-14T22:00:00Z"
end = "2026-06-14T23:00:00Z"
sweep_width_m = 500
detection = "exponential"
pattern = { kind = "expanding-square", center = [-62.9, 44.1], track_spacing_m = 500, legs = 8, first_leg_bearing_deg = 30 }

[[search]]
id = "sector"
unit = "boat"
start = "2026-06-14T23:00:00Z"
end = "2026-06-14T23:30:00Z"
sweep_width_m = 300
detection = "definite-range"
pattern = { kind = "sector-search", center = [-62.9, 44.1], radius_m = 2000, first_leg_bearing_deg = 0, sectors = 3 }

[[search]]
id = "gpx"
unit = "team"
start = "2026-06-14T19:00:00Z"
end = "2026-06-14T19:40:00Z"
sweep_width_m = 60
track = "track.gpx"

[[search]]
id = "line"
unit = "heli"
start = "2026-06-14T20:00:00Z"
end = "2026-06-14T20:30:00Z"
sweep_width_m = 1800
track = "track.geojson"

[[unit]]
id = "boat"
speed_kn = 12
hours_on_scene = 4
sweep_width_m = 900
track_spacing_min_m = 300
detection = "inverse-cube"

[[unit]]
id = "team"
speed_kmh = 3
hours_on_scene = 6
sweep_width_m = 20
searchers = 8
"#;

const INCIDENT_SMALL: &str = r#"[incident]
title = "Overdue day-sailer (invented test case)"
reference_time = "2026-06-14T18:00:00Z"

[grid]
cell_m = 250

[[analyst]]
id = "harbour-desk"
weight = 2.0

[[scenario]]
id = "anchored-off-the-point"
analyst = "harbour-desk"
weight = 0.7
kind = "point"
position = [-62.95, 44.12]
sigma_m = 1500

[[scenario]]
id = "sailed-the-planned-route"
analyst = "harbour-desk"
weight = 0.3
kind = "route"
waypoints = [[-63.10, 44.00], [-62.80, 44.20], [-62.70, 44.35]]
cross_track_sigma_m = 800
"#;

/// A folder with the files the full base incident names.
fn incident_dir() -> tempfile::TempDir {
    let d = tempfile::tempdir().unwrap();
    for (name, text) in [
        ("area.geojson", AREA),
        ("coast.geojson", AREA_SINGLE),
        ("track.gpx", GPX),
        ("track.geojson", GEOJSON_TRACK),
        ("wind.csv", SERIES),
        ("field.csv", FIELD),
    ] {
        std::fs::write(d.path().join(name), text).unwrap();
    }
    d
}

// ---------------------------------------------------------------------------------------------
// The invariants that accepted results must hold, as each reader documents them.

fn ensure(ok: bool, what: impl FnOnce() -> String) -> Result<(), TestCaseError> {
    if ok {
        Ok(())
    } else {
        Err(TestCaseError::fail(what()))
    }
}

/// A WGS84 position in the UTM range, as every reader and the validator require.
fn in_utm_range(lon: f64, lat: f64) -> bool {
    lon.is_finite()
        && lat.is_finite()
        && (-180.0..=180.0).contains(&lon)
        && (-80.0..=84.0).contains(&lat)
}

fn check_coord(c: Coord<f64>, what: &str) -> Result<(), TestCaseError> {
    ensure(in_utm_range(c.x, c.y), || {
        format!("{what}: position [{}, {}] accepted", c.x, c.y)
    })
}

/// `read_polygons`/`read_segments`: positions in range, every exterior ring at least four
/// positions (closed), every ring closed.
fn check_polygons(mp: &MultiPolygon<f64>, what: &str) -> Result<(), TestCaseError> {
    for p in mp {
        ensure(p.exterior().0.len() >= 4, || {
            format!(
                "{what}: an exterior ring of {} positions accepted",
                p.exterior().0.len()
            )
        })?;
        for ring in std::iter::once(p.exterior()).chain(p.interiors()) {
            ensure(ring.0.is_empty() || ring.is_closed(), || {
                format!("{what}: an open ring accepted")
            })?;
            for c in ring.coords() {
                check_coord(*c, what)?;
            }
        }
    }
    Ok(())
}

/// `read_track`: two or more points in range, one time slot per point, times never going
/// backwards.
fn check_track(points: &geo::LineString<f64>, times: &[Option<Time>]) -> Result<(), TestCaseError> {
    ensure(points.0.len() >= 2, || {
        format!("a track of {} point(s) accepted", points.0.len())
    })?;
    ensure(times.len() == points.0.len(), || {
        format!("{} times for {} points", times.len(), points.0.len())
    })?;
    for c in &points.0 {
        check_coord(*c, "track")?;
    }
    let known: Vec<Time> = times.iter().flatten().copied().collect();
    ensure(known.windows(2).all(|w| w[0] <= w[1]), || {
        "track times go backwards".to_owned()
    })
}

fn check_sample(s: &VectorSample, what: &str) -> Result<(), TestCaseError> {
    ensure(
        s.speed_kn.is_finite()
            && s.speed_kn >= 0.0
            && s.direction_deg.is_finite()
            && s.speed_sigma_kn.is_finite()
            && s.speed_sigma_kn >= 0.0
            && s.direction_sigma_deg.is_finite()
            && s.direction_sigma_deg >= 0.0,
        || format!("{what}: sample {s:?} accepted"),
    )
}

/// `read_series`: at least one row, times strictly increasing, finite non-negative speeds and
/// sigmas, finite directions.
fn check_series(rows: &[(Time, VectorSample)]) -> Result<(), TestCaseError> {
    ensure(!rows.is_empty(), || "an empty series accepted".to_owned())?;
    ensure(rows.windows(2).all(|w| w[0].0 < w[1].0), || {
        "series times not strictly increasing".to_owned()
    })?;
    rows.iter().try_for_each(|(_, s)| check_sample(s, "series"))
}

/// `read_field`: at least one row, lon/lat positions, finite components.
fn check_field(rows: &[seekgrid_incident::model::FieldSample]) -> Result<(), TestCaseError> {
    ensure(!rows.is_empty(), || "an empty field accepted".to_owned())?;
    for s in rows {
        ensure(
            s.lon.is_finite()
                && s.lat.is_finite()
                && (-180.0..=180.0).contains(&s.lon)
                && (-90.0..=90.0).contains(&s.lat)
                && s.u_kn.is_finite()
                && s.v_kn.is_finite(),
            || format!("field sample {s:?} accepted"),
        )?;
    }
    Ok(())
}

fn positive(v: f64) -> bool {
    v.is_finite() && v > 0.0
}

fn non_negative(v: f64) -> bool {
    v.is_finite() && v >= 0.0
}

fn check_vector(v: &VectorDef) -> Result<(), TestCaseError> {
    match v {
        VectorDef::Constant(s) => check_sample(s, "constant vector"),
        VectorDef::Series { samples, .. } => check_series(samples),
        VectorDef::Field {
            samples,
            speed_sigma_kn,
            direction_sigma_deg,
            ..
        } => {
            check_field(samples)?;
            ensure(
                non_negative(*speed_sigma_kn) && non_negative(*direction_sigma_deg),
                || "field sigmas".to_owned(),
            )
        }
        VectorDef::Forecast {
            grid,
            speed_sigma_kn,
            direction_sigma_deg,
            ..
        } => {
            // `forecast::read_netcdf`/`read_grib`: one value per node (NaN: none), times
            // increasing, sigmas non-negative.
            let nodes = grid.lon.n * grid.lat.n * grid.times.len();
            ensure(
                grid.u_kn.len() == nodes
                    && grid.v_kn.len() == nodes
                    && grid.times.windows(2).all(|w| w[0] < w[1])
                    && non_negative(*speed_sigma_kn)
                    && non_negative(*direction_sigma_deg),
                || "forecast grid".to_owned(),
            )
        }
    }
}

/// What `seekgrid_incident::parse` documents of an accepted incident (docs/incident-format.md):
/// positions in the UTM range, positive weights, sizes and speeds, non-negative sigmas,
/// searches that end no earlier than they start, and every file's reader invariants.
fn check_incident(inc: &Incident) -> Result<(), TestCaseError> {
    let pos = |p: [f64; 2], what: &str| check_coord(Coord { x: p[0], y: p[1] }, what);
    ensure(!inc.title.trim().is_empty(), || "empty title".to_owned())?;
    ensure(positive(inc.grid.cell_m), || {
        format!("cell_m {}", inc.grid.cell_m)
    })?;
    if let Some(c) = &inc.coastline {
        check_polygons(c, "coastline")?;
    }
    for a in &inc.analysts {
        ensure(positive(a.weight), || {
            format!("analyst weight {}", a.weight)
        })?;
    }
    for s in &inc.scenarios {
        ensure(positive(s.weight), || {
            format!("scenario weight {}", s.weight)
        })?;
        ensure(inc.analysts.iter().any(|a| a.id == s.analyst), || {
            format!("scenario of unknown analyst {:?}", s.analyst)
        })?;
        match &s.kind {
            ScenarioKind::Point {
                position,
                sigma_major_m,
                sigma_minor_m,
                major_bearing_deg,
            } => {
                pos(*position, "point")?;
                ensure(
                    non_negative(*sigma_major_m)
                        && non_negative(*sigma_minor_m)
                        && major_bearing_deg.is_finite(),
                    || "point sigmas".to_owned(),
                )?;
            }
            ScenarioKind::Route {
                waypoints,
                cross_track_sigma_m,
            } => {
                ensure(waypoints.len() >= 2, || "route of one waypoint".to_owned())?;
                for w in waypoints {
                    pos(*w, "route")?;
                }
                ensure(non_negative(*cross_track_sigma_m), || {
                    format!("cross_track_sigma_m {cross_track_sigma_m}")
                })?;
            }
            ScenarioKind::Area { polygons, .. } => check_polygons(polygons, "area")?,
            ScenarioKind::Segments { segments, poa, .. } => {
                ensure(poa.len() == segments.len(), || "poa not aligned".to_owned())?;
                for (_, mp) in segments {
                    check_polygons(mp, "segment")?;
                }
                ensure(
                    poa.iter().all(|p| (0.0..=1.0).contains(p))
                        && poa.iter().sum::<f64>() <= 1.0 + 1e-9,
                    || format!("poa {poa:?}"),
                )?;
            }
            ScenarioKind::Rings {
                position,
                quantiles,
                ..
            } => {
                pos(*position, "rings")?;
                ensure(!quantiles.is_empty(), || "no rings".to_owned())?;
                // A percentage too small to survive the division by 100 (`5e-324 = 1.1`) is
                // refused by the prior crate's check, which the loader calls.
                ensure(
                    quantiles
                        .iter()
                        .all(|(f, r)| *f > 0.0 && *f <= 1.0 && positive(*r))
                        && quantiles
                            .windows(2)
                            .all(|w| w[0].0 < w[1].0 && w[0].1 < w[1].1),
                    || format!("quantiles {quantiles:?}"),
                )?;
            }
            ScenarioKind::Drift(d) => {
                pos(d.position, "drift")?;
                ensure(non_negative(d.position_sigma_m), || {
                    "position_sigma_m".into()
                })?;
                ensure(d.adrift_earliest <= d.adrift_latest, || {
                    "adrift earliest after latest".into()
                })?;
                check_vector(&d.current)?;
                check_vector(&d.wind)?;
                ensure(d.particles > 0, || "zero particles".into())?;
                ensure(non_negative(d.diffusivity_m2_s), || "diffusivity".into())?;
            }
        }
    }
    for s in &inc.searches {
        ensure(s.start <= s.end, || {
            format!("search {} ends before it starts", s.id)
        })?;
        ensure(positive(s.sweep_width_m), || {
            format!("sweep_width_m {}", s.sweep_width_m)
        })?;
        match &s.geometry {
            SearchGeometry::Track { points, times, .. } => check_track(points, times)?,
            SearchGeometry::Pattern(PatternDef::ParallelSweep(r) | PatternDef::CreepingLine(r)) => {
                pos(r.center, "pattern")?;
                ensure(
                    positive(r.length_m) && positive(r.width_m) && positive(r.track_spacing_m),
                    || format!("rectangle {r:?}"),
                )?;
            }
            SearchGeometry::Pattern(PatternDef::ExpandingSquare {
                center,
                track_spacing_m,
                legs,
                ..
            }) => {
                pos(*center, "expanding square")?;
                ensure(positive(*track_spacing_m) && *legs >= 2, || {
                    "expanding square".into()
                })?;
            }
            SearchGeometry::Pattern(PatternDef::SectorSearch {
                center,
                radius_m,
                sectors,
                ..
            }) => {
                pos(*center, "sector search")?;
                ensure(positive(*radius_m) && *sectors >= 1, || {
                    "sector search".into()
                })?;
            }
        }
    }
    for u in &inc.units {
        // A speed too small to survive the conversion to m/s (`speed_kmh = 5e-324`) is refused
        // by the plan crate's unit check, which the loader calls.
        ensure(
            positive(u.speed_mps) && positive(u.hours_on_scene) && positive(u.sweep_width_m),
            || format!("unit {u:?}"),
        )?;
    }
    Ok(())
}

/// One step further: projects the incident and evaluates every drift environment at a few
/// places and times. Errors are fine; a panic fails the case (caught by proptest).
fn prepare_and_sample(inc: &Incident) {
    use seekgrid_drift::{Convention, Environment};
    let Ok(prepared) = seekgrid_engine::prepare::prepare(inc) else {
        return;
    };
    // Pattern sizes are bounded by the search crate's check (at most 10 000 km), so every
    // extent is computed.
    for s in &prepared.searches {
        let _ = s.extent();
    }
    for d in &prepared.drift {
        let sc = &d.scenario;
        for (env, conv) in [
            (&sc.current, Convention::CURRENT),
            (&sc.wind, Convention::WIND),
        ] {
            let times = [sc.adrift_earliest, sc.adrift_latest, inc.reference_time];
            for t in times {
                for (lon, lat) in [sc.lkp_lon_lat, (-180.0, -80.0), (180.0, 84.0)] {
                    let _ = Environment::velocity_mps(env, lon, lat, t, conv);
                }
            }
        }
    }
}

/// Writes `text` as `name` in `dir`, parses the incident and prepares it.
fn incident_with(dir: &Path, name: &str, bytes: &[u8], incident: &str) {
    std::fs::write(dir.join(name), bytes).unwrap();
    if let Ok(inc) = seekgrid_incident::parse(&dir.join("incident.toml"), incident.to_owned()) {
        prepare_and_sample(&inc);
    }
}

// ---------------------------------------------------------------------------------------------
// The targets.

/// The incident file: `parse` on mutated incident text (with the files it names beside it),
/// and `prepare` on what it accepts. Bytes that are no longer UTF-8 go through `load`, which
/// must refuse them as unreadable.
#[test]
fn incident_file() {
    static BASES: &[Base] = &[
        (INCIDENT_FULL, Format::Toml, &TOML_WORDS),
        (INCIDENT_SMALL, Format::Toml, &TOML_WORDS),
    ];
    let dir = incident_dir();
    let path = dir.path().join("incident.toml");
    fuzz(
        "incident_file",
        case_strategy(BASES),
        |case| match String::from_utf8(case.bytes.clone()) {
            Ok(text) => match seekgrid_incident::parse(&path, text) {
                Ok(inc) => {
                    check_incident(&inc)?;
                    prepare_and_sample(&inc);
                    Ok(true)
                }
                Err(_) => Ok(false),
            },
            Err(_) => {
                let p = dir.path().join("not-utf8.toml");
                std::fs::write(&p, &case.bytes).unwrap();
                let e = seekgrid_incident::load(&p)
                    .err()
                    .ok_or_else(|| TestCaseError::fail("non-UTF-8 incident accepted"))?;
                ensure(e.0[0].kind == ErrorKind::Unreadable, || format!("{e}"))?;
                Ok(false)
            }
        },
    );
}

const POLYGON_INCIDENT: &str = r#"[incident]
title = "fuzz"
reference_time = "2026-06-14T18:00:00Z"
coastline = "case.geojson"
object_afloat = true
[grid]
cell_m = 500
[[analyst]]
id = "a"
[[scenario]]
id = "area"
analyst = "a"
kind = "area"
polygon = "case.geojson"
"#;

/// GeoJSON polygons and segments: `read_polygons` and `read_segments` on the same mutated file;
/// accepted polygons then go through an area scenario, a coastline and a segments scenario.
#[test]
fn geojson_polygons_and_segments() {
    static BASES: &[Base] = &[
        (AREA, Format::Json, &JSON_WORDS),
        (AREA_SINGLE, Format::Json, &JSON_WORDS),
    ];
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("case.geojson");
    fuzz(
        "geojson_polygons_and_segments",
        case_strategy(BASES),
        |case| {
            std::fs::write(&path, &case.bytes).unwrap();
            let mut accepted = false;
            if let Ok(mp) = geofiles::read_polygons(&path) {
                accepted = true;
                check_polygons(&mp, "read_polygons")?;
                incident_with(dir.path(), "case.geojson", &case.bytes, POLYGON_INCIDENT);
            }
            if let Ok(segs) = geofiles::read_segments(&path) {
                accepted = true;
                for (k, (id, mp)) in segs.iter().enumerate() {
                    check_polygons(mp, "read_segments")?;
                    ensure(segs[..k].iter().all(|(other, _)| other != id), || {
                        format!("segment id {id:?} twice")
                    })?;
                }
                if let Some((id, _)) = segs.first() {
                    let key = serde_json::to_string(id).unwrap();
                    let text = POLYGON_INCIDENT
                        .replace("kind = \"area\"", "kind = \"segments\"")
                        .replace(
                            "polygon = \"case.geojson\"",
                            &format!("segments = \"case.geojson\"\npoa = {{ {key} = 0.5 }}"),
                        );
                    incident_with(dir.path(), "case.geojson", &case.bytes, &text);
                }
            }
            Ok(accepted)
        },
    );
}

const TRACK_INCIDENT: &str = r#"[incident]
title = "fuzz"
reference_time = "2026-06-14T18:00:00Z"
[grid]
cell_m = 500
[[analyst]]
id = "a"
[[scenario]]
id = "p"
analyst = "a"
kind = "point"
position = [-62.95, 44.05]
sigma_m = 1000
[[search]]
id = "s"
unit = "u"
start = "2026-06-14T19:00:00Z"
end = "2026-06-14T19:40:00Z"
sweep_width_m = 60
track = "TRACK"
"#;

/// Tracks: `read_track` on a mutated GPX file and a mutated GeoJSON line; accepted tracks then
/// go through a search of an incident.
#[test]
fn gpx_and_geojson_tracks() {
    static BASES: &[Base] = &[
        (GPX, Format::Xml, &XML_WORDS),
        (GEOJSON_TRACK, Format::Json, &JSON_WORDS),
    ];
    let dir = tempfile::tempdir().unwrap();
    fuzz("gpx_and_geojson_tracks", case_strategy(BASES), |case| {
        let name = if case.base == 0 {
            "case.gpx"
        } else {
            "case.geojson"
        };
        let path = dir.path().join(name);
        std::fs::write(&path, &case.bytes).unwrap();
        let Ok((points, times)) = geofiles::read_track(&path) else {
            return Ok(false);
        };
        check_track(&points, &times)?;
        let text = TRACK_INCIDENT.replace("TRACK", name);
        incident_with(dir.path(), name, &case.bytes, &text);
        Ok(true)
    });
}

const DRIFT_INCIDENT: &str = r#"[incident]
title = "fuzz"
reference_time = "2026-06-14T18:00:00Z"
[grid]
cell_m = 500
[[analyst]]
id = "a"
[[scenario]]
id = "d"
analyst = "a"
kind = "drift"
position = [-62.95, 44.05]
adrift = { earliest = "2026-06-14T15:00:00Z", latest = "2026-06-14T17:00:00Z" }
CURRENT_AND_WIND
leeway = { downwind_slope = 0.03, downwind_offset_kn = 0.0, downwind_sigma_kn = 0.0, crosswind_slope = 0.0, crosswind_offset_kn = 0.0, crosswind_sigma_kn = 0.0, jibe_per_h = 0.0 }
"#;

/// CSV: `read_series` and `read_field` on the same mutated file; accepted ones then serve as
/// the wind series or current field of a drift scenario, prepared and sampled.
#[test]
fn csv_series_and_fields() {
    static BASES: &[Base] = &[
        (SERIES, Format::Csv, &CSV_WORDS),
        (SERIES_SIGMAS, Format::Csv, &CSV_WORDS),
        (FIELD, Format::Csv, &CSV_WORDS),
    ];
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("case.csv");
    fuzz("csv_series_and_fields", case_strategy(BASES), |case| {
        std::fs::write(&path, &case.bytes).unwrap();
        let mut accepted = false;
        if let Ok(rows) = geofiles::read_series(&path, 1.0, 10.0) {
            accepted = true;
            check_series(&rows)?;
            let text = DRIFT_INCIDENT.replace(
                "CURRENT_AND_WIND",
                "current = { speed_kn = 0.5, toward_deg = 90, speed_sigma_kn = 0.1, direction_sigma_deg = 10 }\nwind = { series = \"case.csv\", speed_sigma_kn = 1, direction_sigma_deg = 10 }",
            );
            incident_with(dir.path(), "case.csv", &case.bytes, &text);
        }
        if let Ok(rows) = geofiles::read_field(&path) {
            accepted = true;
            check_field(&rows)?;
            let text = DRIFT_INCIDENT.replace(
                "CURRENT_AND_WIND",
                "current = { field = \"case.csv\", speed_sigma_kn = 0.1, direction_sigma_deg = 10 }\nwind = { speed_kn = 10, from_deg = 270, speed_sigma_kn = 1, direction_sigma_deg = 10 }",
            );
            incident_with(dir.path(), "case.csv", &case.bytes, &text);
        }
        Ok(accepted)
    });
}

// ---------------------------------------------------------------------------------------------
// The mutators themselves: each finds what it is meant to find (checked by hand on the base
// files), so a fuzz run is not quietly mutating nothing.

#[test]
fn the_scanners_find_numbers_strings_keys_arrays_and_blocks() {
    let t = b"[grid]\ncell_m = 250\nposition = [-62.95, 44.12]\nid = \"S1\"\n";
    let text = |r: &Range<usize>| String::from_utf8_lossy(&t[r.clone()]).into_owned();
    let found: Vec<String> = numbers(t).iter().map(text).collect();
    assert_eq!(found, ["250", "-62.95", "44.12"]);
    let found: Vec<String> = strings(t, Format::Toml).iter().map(text).collect();
    assert_eq!(found, ["S1"]);
    let found: Vec<String> = keys(t, Format::Toml).iter().map(text).collect();
    assert_eq!(found, ["grid", "cell_m", "position", "id"]);
    let arrays = spans(t, b'[', b']');
    let found: Vec<String> = arrays.iter().map(|(r, _)| text(r)).collect();
    assert_eq!(found, ["[grid]", "[-62.95, 44.12]"]);
    assert_eq!(arrays[1].1.len(), 2);
    assert_eq!(blocks(t, Format::Toml).len(), 1);

    let x = GPX.as_bytes();
    let names: Vec<String> = keys(x, Format::Xml)
        .iter()
        .map(|r| String::from_utf8_lossy(&x[r.clone()]).into_owned())
        .collect();
    for k in ["trkpt", "lat", "lon", "time", "version"] {
        assert!(names.iter().any(|n| n == k), "{k} in {names:?}");
    }
    let elems = blocks(x, Format::Xml);
    assert!(
        elems
            .iter()
            .any(|r| x[r.clone()].starts_with(b"<trkpt") && x[r.clone()].ends_with(b"</trkpt>"))
    );

    let j = AREA.as_bytes();
    let jkeys: Vec<String> = keys(j, Format::Json)
        .iter()
        .map(|r| String::from_utf8_lossy(&j[r.clone()]).into_owned())
        .collect();
    assert!(jkeys.contains(&"coordinates".to_owned()));
    assert!(!jkeys.contains(&"Polygon".to_owned()));

    let c = SERIES_SIGMAS.as_bytes();
    let header: Vec<String> = keys(c, Format::Csv)
        .iter()
        .map(|r| String::from_utf8_lossy(&c[r.clone()]).into_owned())
        .collect();
    assert_eq!(header.len(), 5);
}

#[test]
fn a_mutation_changes_only_what_it_names() {
    let mut t = b"a = [1, 2, 3]\nb = \"x\"\n".to_vec();
    let first: Pick = 0;
    apply(
        &mut t,
        &Mutation::ReplaceNumber {
            which: first,
            with: "nan".into(),
        },
        Format::Toml,
    );
    assert_eq!(t, b"a = [nan, 2, 3]\nb = \"x\"\n");
    apply(
        &mut t,
        &Mutation::ShortenArray {
            which: first,
            element: first,
        },
        Format::Toml,
    );
    assert_eq!(t, b"a = [ 2, 3]\nb = \"x\"\n");
    apply(
        &mut t,
        &Mutation::ReplaceString {
            which: first,
            with: String::new(),
        },
        Format::Toml,
    );
    assert_eq!(t, b"a = [ 2, 3]\nb = \"\"\n");
    apply(
        &mut t,
        &Mutation::RenameKey {
            which: first,
            to: "c".into(),
        },
        Format::Toml,
    );
    assert_eq!(t, b"c = [ 2, 3]\nb = \"\"\n");
}

// ---------------------------------------------------------------------------------------------
// Crashes the fuzzer found, each with its minimal input, kept as regression tests.

/// Writes `text` as `name` in a fresh folder and returns the folder with the path.
fn file_with(name: &str, text: &str) -> (tempfile::TempDir, std::path::PathBuf) {
    let d = tempfile::tempdir().unwrap();
    let p = d.path().join(name);
    std::fs::write(&p, text).unwrap();
    (d, p)
}

#[test]
fn a_polygon_position_of_one_number_is_refused_instead_of_panicking() {
    // Found by geojson_polygons_and_segments: the geojson crate's conversion to geo indexed
    // [1] of a one-number position and panicked (index out of bounds).
    let (_d, p) = file_with(
        "area.geojson",
        r#"{"type":"Feature","properties":{"id":"only"},
"geometry":{"type":"Polygon","coordinates":[[[44.0],[-62.9,44.0],[-62.9,44.1],[-63.0,44.0]]]}}"#,
    );
    for e in [
        geofiles::read_polygons(&p).unwrap_err(),
        geofiles::read_segments(&p).unwrap_err(),
    ] {
        assert_eq!(e.kind, ErrorKind::Invalid);
        assert!(e.message.contains("position of 1 number(s)"), "{e}");
    }
}

#[test]
fn a_track_position_of_one_number_is_refused_instead_of_panicking() {
    // Found by gpx_and_geojson_tracks, the same panic in the GeoJSON track reader.
    let (_d, p) = file_with(
        "track.geojson",
        r#"{"type":"FeatureCollection","features":[
{"type":"Feature","properties":{},"geometry":{"type":"LineString","coordinates":[[44.0],[-62.98,44.02],[-62.96,44.04]]}}]}"#,
    );
    let e = geofiles::read_track(&p).unwrap_err();
    assert_eq!(e.kind, ErrorKind::Invalid);
    assert!(
        e.message
            .contains("feature 0 has a position of 1 number(s)"),
        "{e}"
    );
}

#[test]
fn a_short_position_inside_a_geometry_collection_is_refused_instead_of_panicking() {
    // The same conversion, reached through a nested collection. (The geojson crate itself
    // refuses a short position of a Point, but not one inside a line or polygon.)
    let (_d, p) = file_with(
        "area.geojson",
        r#"{"type":"GeometryCollection","geometries":[{"type":"LineString","coordinates":[[1],[2,3]]}]}"#,
    );
    let e = geofiles::read_polygons(&p).unwrap_err();
    assert!(e.message.contains("position of 1 number(s)"), "{e}");
}
