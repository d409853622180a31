//! The track record: one CSV file that collects, incident after incident, how each analyst and
//! the pool scored against the outcome (`seekgrid review … --record FILE.csv` appends to it,
//! `seekgrid credibility FILE.csv` reads it).
//!
//! The format is defined once, here, by [`RecordRow`] and [`RECORD_COLUMNS`]: a header line
//! with exactly these columns in this order, then one row per analyst (`role` = `analyst`)
//! and one row for the pooled map (`role` = `pool`, `analyst` = `pool`) of each incident.
//! Lines starting with `#` are comments. Empty cells mean "not computed"; a log score of
//! `-inf` means a density of zero at the truth. `seekgrid-render` writes the file with the same
//! struct, so reader and writer cannot drift apart.
//!
//! | column | meaning |
//! |---|---|
//! | `incident_id` | stable id of the incident: [`incident_id`] of the incident file path and title |
//! | `incident_title` | the incident's title |
//! | `outcome_time` | when the object was found, RFC 3339 UTC |
//! | `role` | `analyst` or `pool` |
//! | `analyst` | analyst id; `pool` on the pool's row |
//! | `log_score` | ln(density at the truth per km²) |
//! | `truth_mass_above` | share of the belief at the end of the review in cells rated denser than the truth (0..1; the same on every row of an incident) |
//! | `bias_distance_m` | metres from the mean of the analyst's distribution to the truth |
//! | `bias_bearing_deg` | true bearing of that line, degrees 0..360 |
//! | `weight_used` | the analyst's credibility weight in the pool (normalised, 0..1) |
//! | `weight_implied` | the weight Bayes' rule gives the analyst once the truth is known (0..1) |

use crate::error::{ErrorKind, IncidentError};
use crate::model::Time;
use serde::{Deserialize, Serialize};
use std::path::Path;

/// The columns of a record file, in order.
pub const RECORD_COLUMNS: [&str; 11] = [
    "incident_id",
    "incident_title",
    "outcome_time",
    "role",
    "analyst",
    "log_score",
    "truth_mass_above",
    "bias_distance_m",
    "bias_bearing_deg",
    "weight_used",
    "weight_implied",
];

/// The `analyst` value written on the pool's rows.
pub const POOL_ANALYST: &str = "pool";

/// Whose score a row holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Role {
    /// One analyst's map.
    Analyst,
    /// The pooled map (the prior before any search).
    Pool,
}

/// One row of a record file (see the module docs for each column).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct RecordRow {
    /// Stable incident id ([`incident_id`]).
    pub incident_id: String,
    /// Incident title.
    pub incident_title: String,
    /// When the object was found (UTC).
    pub outcome_time: Time,
    /// Whose score this is.
    pub role: Role,
    /// Analyst id; [`POOL_ANALYST`] on the pool's row.
    pub analyst: String,
    /// ln(density at the truth per km²); −∞ for a density of 0; `None` when not computed.
    pub log_score: Option<f64>,
    /// Share of the belief at the end of the review in cells denser than the truth, 0..=1.
    pub truth_mass_above: Option<f64>,
    /// Distance from the mean of the analyst's distribution to the truth, metres.
    pub bias_distance_m: Option<f64>,
    /// True bearing from that mean to the truth, degrees in 0..360.
    pub bias_bearing_deg: Option<f64>,
    /// The analyst's credibility weight in the pool, normalised, 0..=1.
    pub weight_used: Option<f64>,
    /// The weight Bayes' rule gives the analyst once the truth is known, 0..=1.
    pub weight_implied: Option<f64>,
}

/// A row read from a file, with the line it came from.
#[derive(Debug, Clone, PartialEq)]
pub struct RecordLine {
    /// Line number in the file, from 1.
    pub line: usize,
    /// The row.
    pub row: RecordRow,
}

/// A stable id for an incident: 16 hexadecimal digits of the 64-bit FNV-1a hash of the
/// incident file's path (as given, `/` separators) and title joined by a newline.
///
/// The same path and title always give the same id, on any machine and with any build;
/// review an incident from the same path to keep its id. FNV-1a (G. Fowler, L. C. Noll,
/// K.-P. Vo; offset basis 0xcbf29ce484222325, prime 0x100000001b3, from memory) is written out
/// here: two constants, where the `fnv` crate's `Hasher` would add a dependency for nothing.
#[must_use]
pub fn incident_id(path: &Path, title: &str) -> String {
    let path = path.to_string_lossy().replace('\\', "/");
    let hash = fnv1a(path.bytes().chain([b'\n']).chain(title.bytes()));
    format!("{hash:016x}")
}

/// The 64-bit FNV-1a hash of a byte sequence.
fn fnv1a(bytes: impl Iterator<Item = u8>) -> u64 {
    bytes.fold(0xcbf2_9ce4_8422_2325, |hash, byte| {
        (hash ^ u64::from(byte)).wrapping_mul(0x0000_0100_0000_01b3)
    })
}

/// Reads a record file.
///
/// # Errors
/// [`IncidentError`] (with the line where known) when the file cannot be read, its header is
/// not exactly [`RECORD_COLUMNS`] (the first column that differs is named), a row cannot be
/// parsed, a value is out of range, or one incident holds the same analyst (or the pool)
/// twice.
pub fn read_record(file: &Path) -> Result<Vec<RecordLine>, IncidentError> {
    let text = std::fs::read_to_string(file).map_err(|e| {
        IncidentError::whole_file(
            ErrorKind::Unreadable,
            file,
            format!("cannot read the record: {e}; give the path of a record CSV file"),
        )
    })?;
    parse_record(file, &text)
}

/// Parses the text of a record file; `file` is only used in error messages. An empty text
/// (or only comments) is an empty record.
///
/// # Errors
/// As [`read_record`], except the file is not read.
pub fn parse_record(file: &Path, text: &str) -> Result<Vec<RecordLine>, IncidentError> {
    if text
        .lines()
        .all(|l| l.trim().is_empty() || l.starts_with('#'))
    {
        return Ok(Vec::new());
    }
    let mut rdr = csv::ReaderBuilder::new()
        .comment(Some(b'#'))
        .trim(csv::Trim::All)
        .from_reader(text.as_bytes());
    let headers = rdr
        .headers()
        .map_err(|e| error(file, Some(1), format!("unreadable header: {e}")))?
        .clone();
    // The header's own position is not reliable after comment lines: count them here.
    let header_line = text
        .lines()
        .position(|l| !l.trim().is_empty() && !l.starts_with('#'))
        .map(|i| i + 1);
    check_header(file, header_line, &headers)?;
    let mut rows: Vec<RecordLine> = Vec::new();
    let mut raw = csv::StringRecord::new();
    loop {
        match rdr.read_record(&mut raw) {
            Ok(false) => break,
            Ok(true) => {}
            Err(e) => {
                let line = e.position().map(|p| p.line() as usize);
                return Err(error(file, line, format!("unreadable row: {e}")));
            }
        }
        let line = raw.position().map_or(0, |p| p.line() as usize);
        let row: RecordRow = raw.deserialize(Some(&headers)).map_err(|e| {
            let message = match e.kind() {
                csv::ErrorKind::Deserialize { err, .. } => {
                    let column = err
                        .field()
                        .and_then(|i| RECORD_COLUMNS.get(i as usize))
                        .map_or(String::new(), |c| format!(" in column \"{c}\""));
                    format!("cannot read the row{column}: {}", deserialize_reason(err))
                }
                _ => format!("cannot read the row: {e}"),
            };
            error(file, Some(line), message)
        })?;
        check_row(file, line, &row)?;
        if let Some(first) = rows.iter().find(|r| {
            r.row.incident_id == row.incident_id
                && r.row.role == row.role
                && r.row.analyst == row.analyst
        }) {
            return Err(error(
                file,
                Some(line),
                format!(
                    "incident {} already has a row for {} \"{}\" on line {}; keep one row per analyst and one pool row per incident",
                    row.incident_id,
                    role_name(row.role),
                    row.analyst,
                    first.line
                ),
            ));
        }
        rows.push(RecordLine { line, row });
    }
    Ok(rows)
}

/// "analyst" or "pool".
#[must_use]
pub fn role_name(role: Role) -> &'static str {
    match role {
        Role::Analyst => "analyst",
        Role::Pool => "pool",
    }
}

/// The header must be exactly [`RECORD_COLUMNS`].
fn check_header(
    file: &Path,
    line: Option<usize>,
    headers: &csv::StringRecord,
) -> Result<(), IncidentError> {
    let expected = RECORD_COLUMNS.join(",");
    for (i, want) in RECORD_COLUMNS.iter().enumerate() {
        match headers.get(i) {
            Some(got) if got == *want => {}
            Some(got) => {
                return Err(error(
                    file,
                    line,
                    format!(
                        "header column {} is \"{got}\" but a seekgrid record has \"{want}\" there; this file is not a seekgrid record, or of another version: its header must be {expected}",
                        i + 1
                    ),
                ));
            }
            None => {
                return Err(error(
                    file,
                    line,
                    format!(
                        "the header lacks column {} \"{want}\"; a seekgrid record's header must be {expected}",
                        i + 1
                    ),
                ));
            }
        }
    }
    if headers.len() > RECORD_COLUMNS.len() {
        return Err(error(
            file,
            line,
            format!(
                "header column {} \"{}\" is not part of a seekgrid record; its header must be {expected}",
                RECORD_COLUMNS.len() + 1,
                headers.get(RECORD_COLUMNS.len()).unwrap_or_default()
            ),
        ));
    }
    Ok(())
}

/// Values out of range are refused with the column named.
fn check_row(file: &Path, line: usize, row: &RecordRow) -> Result<(), IncidentError> {
    let bad = |column: &str, value: f64, expected: &str| {
        Err(error(
            file,
            Some(line),
            format!("{column} is {value}; give {expected}, or leave it empty"),
        ))
    };
    if row.incident_id.trim().is_empty() {
        return Err(error(
            file,
            Some(line),
            "incident_id is empty; give the incident's id".into(),
        ));
    }
    if row.analyst.trim().is_empty() {
        return Err(error(
            file,
            Some(line),
            "analyst is empty; give the analyst's id (or \"pool\" on the pool's row)".into(),
        ));
    }
    if let Some(s) = row.log_score
        && (s.is_nan() || s == f64::INFINITY)
    {
        return bad(
            "log_score",
            s,
            "a finite log score, or -inf for a density of 0 at the truth",
        );
    }
    for (column, value) in [
        ("truth_mass_above", row.truth_mass_above),
        ("weight_used", row.weight_used),
        ("weight_implied", row.weight_implied),
    ] {
        if let Some(v) = value
            && !(0.0..=1.0).contains(&v)
        {
            return bad(column, v, "a number from 0 to 1");
        }
    }
    if let Some(d) = row.bias_distance_m
        && !(d.is_finite() && d >= 0.0)
    {
        return bad("bias_distance_m", d, "a distance in metres, 0 or more");
    }
    if let Some(b) = row.bias_bearing_deg
        && !(0.0..360.0).contains(&b)
    {
        return bad("bias_bearing_deg", b, "a true bearing in degrees, 0 to 360");
    }
    Ok(())
}

/// The reason of a deserialisation error, without csv's own position prefix.
fn deserialize_reason(e: &csv::DeserializeError) -> String {
    match e.kind() {
        csv::DeserializeErrorKind::ParseFloat(_) => {
            "not a number (write a decimal number, -inf, or leave it empty)".into()
        }
        csv::DeserializeErrorKind::Message(m) if m.contains("unknown variant") => {
            "role must be analyst or pool".into()
        }
        csv::DeserializeErrorKind::Message(m) if m.contains("premature end of input") => {
            "not an RFC 3339 time; write it as 2026-06-14T21:00:00Z".into()
        }
        other => format!("{other}"),
    }
}

fn error(file: &Path, line: Option<usize>, message: String) -> IncidentError {
    IncidentError {
        kind: ErrorKind::Invalid,
        file: file.to_owned(),
        line,
        col: None,
        message,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn row(analyst: &str, role: Role, log_score: Option<f64>) -> RecordRow {
        RecordRow {
            incident_id: "00000000000000aa".into(),
            incident_title: "Invented, with a comma".into(),
            outcome_time: "2026-06-14T23:10:00Z".parse().unwrap(),
            role,
            analyst: analyst.into(),
            log_score,
            truth_mass_above: Some(0.25),
            bias_distance_m: Some(1200.0),
            bias_bearing_deg: Some(45.0),
            weight_used: Some(0.5),
            weight_implied: Some(0.75),
        }
    }

    fn write(rows: &[RecordRow]) -> String {
        let mut w = csv::Writer::from_writer(Vec::new());
        for r in rows {
            w.serialize(r).unwrap();
        }
        String::from_utf8(w.into_inner().unwrap()).unwrap()
    }

    #[test]
    fn the_serde_struct_writes_exactly_the_documented_header() {
        let text = write(&[row("a", Role::Analyst, Some(-2.0))]);
        assert_eq!(text.lines().next().unwrap(), RECORD_COLUMNS.join(","));
    }

    #[test]
    fn rows_round_trip_through_text_with_minus_infinity_and_empty_cells() {
        let mut pool = row(POOL_ANALYST, Role::Pool, Some(-3.5));
        pool.bias_distance_m = None;
        pool.bias_bearing_deg = None;
        pool.weight_used = None;
        pool.weight_implied = None;
        let rows = vec![
            row("a", Role::Analyst, Some(-2.25)),
            row("b", Role::Analyst, Some(f64::NEG_INFINITY)),
            row("c", Role::Analyst, None),
            pool,
        ];
        let text = format!("# a comment line\n{}", write(&rows));
        assert!(text.contains(",-inf,"), "{text}");
        let back = parse_record(Path::new("r.csv"), &text).unwrap();
        assert_eq!(back.iter().map(|l| l.row.clone()).collect::<Vec<_>>(), rows);
        assert_eq!(back[0].line, 3);
    }

    #[test]
    fn a_header_that_differs_is_refused_naming_the_column() {
        let text = write(&[row("a", Role::Analyst, Some(-2.0))]).replacen("log_score", "score", 1);
        let e = parse_record(Path::new("r.csv"), &format!("# note\n\n{text}")).unwrap_err();
        assert_eq!(e.line, Some(3));
        assert!(
            e.message.starts_with(
                "header column 6 is \"score\" but a seekgrid record has \"log_score\""
            ),
            "{e}"
        );
        let e = parse_record(Path::new("r.csv"), "incident_id,incident_title\n").unwrap_err();
        assert!(e.message.contains("lacks column 3 \"outcome_time\""), "{e}");
    }

    #[test]
    fn bad_values_and_duplicate_rows_are_refused_with_their_line() {
        let good = write(&[row("a", Role::Analyst, Some(-2.5))]);
        let e = parse_record(Path::new("r.csv"), &good.replace(",0.75", ",1.5")).unwrap_err();
        assert_eq!(e.line, Some(2));
        assert!(e.message.starts_with("weight_implied is 1.5"), "{e}");
        let e = parse_record(Path::new("r.csv"), &good.replace("-2.5", "high")).unwrap_err();
        assert!(e.message.contains("column \"log_score\""), "{e}");
        let e =
            parse_record(Path::new("r.csv"), &good.replace(",analyst,a,", ",boss,a,")).unwrap_err();
        assert!(e.message.contains("role must be analyst or pool"), "{e}");
        let twice = write(&[
            row("a", Role::Analyst, Some(-2.0)),
            row("a", Role::Analyst, Some(-1.0)),
        ]);
        let e = parse_record(Path::new("r.csv"), &twice).unwrap_err();
        assert_eq!(e.line, Some(3));
        assert!(e.message.contains("on line 2"), "{e}");
    }

    #[test]
    fn an_empty_or_comment_only_text_is_an_empty_record() {
        assert!(parse_record(Path::new("r.csv"), "").unwrap().is_empty());
        assert!(
            parse_record(Path::new("r.csv"), "# only\n")
                .unwrap()
                .is_empty()
        );
    }

    #[test]
    fn incident_ids_are_stable_and_tell_incidents_apart() {
        // FNV-1a 64 test vectors (from memory, the published FNV test suite): "" gives the
        // offset basis cbf29ce484222325, "a" af63dc4c8601ec8c, "foobar" 85944171f73967e8.
        assert_eq!(fnv1a(b"".iter().copied()), 0xcbf2_9ce4_8422_2325);
        assert_eq!(fnv1a(b"a".iter().copied()), 0xaf63_dc4c_8601_ec8c);
        assert_eq!(fnv1a(b"foobar".iter().copied()), 0x8594_4171_f739_67e8);
        let a = incident_id(Path::new("cases/a.toml"), "Missing kayak");
        assert_eq!(a.len(), 16);
        assert_eq!(a, incident_id(Path::new("cases/a.toml"), "Missing kayak"));
        assert_ne!(a, incident_id(Path::new("cases/b.toml"), "Missing kayak"));
        assert_ne!(a, incident_id(Path::new("cases/a.toml"), "Missing canoe"));
        assert_eq!(
            incident_id(Path::new("x"), "y"),
            format!("{:016x}", fnv1a(b"x\ny".iter().copied()))
        );
    }
}
