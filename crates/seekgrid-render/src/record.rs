//! Appending a review to a track record ([`seekgrid_incident::record`]): one row per analyst
//! and one for the pool.
//!
//! The file is never edited in place: [`append_record`] reads the whole earlier file, checks
//! it, and writes the earlier text followed by the new rows to a temporary file in the same
//! folder, flushes it and renames it over the record. A reader sees the old record or the new
//! one, never half of one; a crash leaves the old one. A lock file beside the record
//! (`.NAME.lock`) keeps two runs from appending at once, which would lose one run's rows.

use crate::RenderError;
use crate::output::{Lock, sync_dir};
use seekgrid_engine::review::Review;
use seekgrid_incident::record::{POOL_ANALYST, RecordRow, Role, incident_id, parse_record};
use std::io::Write;
use std::path::{Path, PathBuf};

/// The rows a review adds to a track record: one per analyst (in the incident file's order),
/// then the pool's.
///
/// `incident_path` is the incident file as given on the command line; with the title it makes
/// the incident id ([`incident_id`]). `truth_mass_above` is the share of the belief at the end
/// of the review rated above the truth (the last timeline row), the same on every row.
///
/// # Errors
/// [`RenderError::NothingToRecord`] when the review has no found position inside the grid
/// (suspended, no outcome, or found outside the grid), so no analyst has a score.
pub fn record_rows(incident_path: &Path, review: &Review) -> Result<Vec<RecordRow>, RenderError> {
    let (Some(truth), Some(pool)) = (&review.truth, &review.pool) else {
        return Err(RenderError::NothingToRecord {
            reason: if review.truth.is_none() {
                "the review has no found position (the incident was suspended or has no [outcome] of kind found)"
            } else {
                "the object was found outside the grid, so no map has a density there; widen the grid to cover the found position"
            },
        });
    };
    let id = incident_id(incident_path, &review.title);
    let mass_above = review
        .timeline
        .iter()
        .rev()
        .find_map(|row| row.truth.map(|t| t.rank.mass_above.clamp(0.0, 1.0)));
    let base = RecordRow {
        incident_id: id,
        incident_title: review.title.clone(),
        outcome_time: truth.time,
        role: Role::Analyst,
        analyst: String::new(),
        log_score: None,
        truth_mass_above: mass_above,
        bias_distance_m: None,
        bias_bearing_deg: None,
        weight_used: None,
        weight_implied: None,
    };
    let mut rows: Vec<RecordRow> = review
        .analysts
        .iter()
        .map(|a| RecordRow {
            analyst: a.id.clone(),
            log_score: a.log_score,
            bias_distance_m: a.bias.map(|b| b.distance_m),
            bias_bearing_deg: a.bias.and_then(|b| b.bearing_deg),
            weight_used: Some(a.weight_used.clamp(0.0, 1.0)),
            weight_implied: a.implied_weight.map(|w| w.clamp(0.0, 1.0)),
            ..base.clone()
        })
        .collect();
    rows.push(RecordRow {
        role: Role::Pool,
        analyst: POOL_ANALYST.into(),
        log_score: Some(pool.log_score),
        ..base
    });
    Ok(rows)
}

/// The rows as CSV text, with the header line when `header` is true.
///
/// # Errors
/// [`RenderError::Internal`] if the CSV writer fails (it writes to memory).
pub fn record_csv(rows: &[RecordRow], header: bool) -> Result<String, RenderError> {
    let mut w = csv::WriterBuilder::new()
        .has_headers(header)
        .from_writer(Vec::new());
    if header && rows.is_empty() {
        w.write_record(seekgrid_incident::record::RECORD_COLUMNS)
            .map_err(|e| RenderError::Internal(e.to_string()))?;
    }
    for r in rows {
        w.serialize(r)
            .map_err(|e| RenderError::Internal(e.to_string()))?;
    }
    let bytes = w
        .into_inner()
        .map_err(|e| RenderError::Internal(e.to_string()))?;
    String::from_utf8(bytes).map_err(|e| RenderError::Internal(e.to_string()))
}

/// What [`append_record`] did.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct AppendedRecord {
    /// The record file.
    pub path: PathBuf,
    /// Rows in the file before.
    pub rows_before: usize,
    /// Rows added.
    pub rows_added: usize,
    /// Whether the file was created (with its header).
    pub created: bool,
}

/// Appends `rows` to the record file `path`, creating it with its header when it does not
/// exist or holds nothing but comments or blank lines; the earlier text is kept byte for byte.
/// `run_id` is written into the lock file while it is held.
///
/// # Errors
/// [`RenderError::RecordLocked`] when another run is appending to the same record;
/// [`RenderError::BadRecord`] when the earlier file is not a valid record (its header differs,
/// naming the column, or a row is bad);
/// [`RenderError::IncidentAlreadyRecorded`] when it already holds rows of the incident;
/// [`RenderError::BadOutputPath`] for a path without a file name;
/// [`RenderError::Io`] when the file cannot be read, written or renamed.
pub fn append_record(
    path: &Path,
    rows: &[RecordRow],
    run_id: &str,
) -> Result<AppendedRecord, RenderError> {
    let (Some(name), folder) = (
        path.file_name().and_then(|n| n.to_str()),
        path.parent()
            .filter(|p| !p.as_os_str().is_empty())
            .unwrap_or(Path::new(".")),
    ) else {
        return Err(RenderError::BadOutputPath {
            path: path.to_owned(),
        });
    };
    let lock_path = folder.join(format!(".{name}.lock"));
    let _lock = Lock::acquire(&lock_path, path, run_id).map_err(|e| match e {
        RenderError::OutputLocked { lock, holder, .. } => RenderError::RecordLocked {
            path: path.to_owned(),
            lock,
            holder,
        },
        other => other,
    })?;
    let old = match std::fs::read_to_string(path) {
        Ok(text) => text,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => String::new(),
        Err(source) => {
            return Err(RenderError::Io {
                action: "read the record",
                path: path.to_owned(),
                source,
            });
        }
    };
    let earlier = parse_record(path, &old).map_err(|e| RenderError::BadRecord(Box::new(e)))?;
    if let Some(new) = rows.first()
        && let Some(first) = earlier
            .iter()
            .find(|l| l.row.incident_id == new.incident_id)
    {
        return Err(RenderError::IncidentAlreadyRecorded {
            path: path.to_owned(),
            incident_id: new.incident_id.clone(),
            title: new.incident_title.clone(),
            line: first.line,
        });
    }
    let has_header = old
        .lines()
        .any(|l| !l.trim().is_empty() && !l.starts_with('#'));
    let mut text = old.clone();
    if !text.is_empty() && !text.ends_with('\n') {
        text.push('\n');
    }
    text.push_str(&record_csv(rows, !has_header)?);

    let io = |action: &'static str, p: &Path| {
        let p = p.to_owned();
        move |source| RenderError::Io {
            action,
            path: p,
            source,
        }
    };
    let prefix = format!(".{name}.");
    let mut builder = tempfile::Builder::new();
    builder.prefix(&prefix).suffix(".partial");
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        let mode = std::fs::metadata(path).map_or(0o644, |m| m.permissions().mode() & 0o777);
        builder.permissions(std::fs::Permissions::from_mode(mode));
    }
    let mut tmp = builder
        .tempfile_in(folder)
        .map_err(io("create a temporary file in", folder))?;
    tmp.write_all(text.as_bytes())
        .map_err(io("write", tmp.path()))?;
    tmp.as_file().sync_all().map_err(io("flush", tmp.path()))?;
    tmp.persist(path).map_err(|e| RenderError::Io {
        action: "rename a temporary file onto",
        path: path.to_owned(),
        source: e.error,
    })?;
    sync_dir(folder)?;
    Ok(AppendedRecord {
        path: path.to_owned(),
        rows_before: earlier.len(),
        rows_added: rows.len(),
        created: !has_header,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use seekgrid_incident::record::read_record;

    fn row(incident: &str, analyst: &str, score: f64) -> RecordRow {
        RecordRow {
            incident_id: incident.into(),
            incident_title: "Invented \"quoted\", title".into(),
            outcome_time: "2026-06-14T23:10:00Z".parse().unwrap(),
            role: if analyst == POOL_ANALYST {
                Role::Pool
            } else {
                Role::Analyst
            },
            analyst: analyst.into(),
            log_score: Some(score),
            truth_mass_above: Some(0.125),
            bias_distance_m: (analyst != POOL_ANALYST).then_some(1500.5),
            bias_bearing_deg: (analyst != POOL_ANALYST).then_some(271.25),
            weight_used: (analyst != POOL_ANALYST).then_some(0.4),
            weight_implied: (analyst != POOL_ANALYST).then_some(0.6),
        }
    }

    #[test]
    fn rows_are_written_appended_and_read_back_with_one_header() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("record.csv");
        let first = vec![
            row("aaaa", "a", -2.5),
            row("aaaa", "b", f64::NEG_INFINITY),
            row("aaaa", POOL_ANALYST, -3.0),
        ];
        let done = append_record(&path, &first, "test-1").unwrap();
        assert!(done.created);
        assert_eq!((done.rows_before, done.rows_added), (0, 3));
        let second = vec![row("bbbb", "a", -1.0), row("bbbb", POOL_ANALYST, -1.5)];
        let done = append_record(&path, &second, "test-2").unwrap();
        assert!(!done.created);
        assert_eq!((done.rows_before, done.rows_added), (3, 2));
        let text = std::fs::read_to_string(&path).unwrap();
        assert_eq!(text.matches("incident_id,").count(), 1, "{text}");
        let back: Vec<RecordRow> = read_record(&path)
            .unwrap()
            .into_iter()
            .map(|l| l.row)
            .collect();
        assert_eq!(back, [first, second].concat());
        // No lock file or temporary file is left behind.
        let names: Vec<String> = std::fs::read_dir(dir.path())
            .unwrap()
            .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
            .collect();
        assert_eq!(names, ["record.csv"]);
    }

    #[test]
    fn comments_of_the_earlier_file_are_kept_byte_for_byte() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("record.csv");
        std::fs::write(&path, "# kept as written\n").unwrap();
        append_record(&path, &[row("aaaa", "a", -2.0)], "t").unwrap();
        let text = std::fs::read_to_string(&path).unwrap();
        assert!(
            text.starts_with("# kept as written\nincident_id,"),
            "{text}"
        );
    }

    #[test]
    fn a_record_whose_header_differs_is_refused_and_left_unchanged() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("record.csv");
        let mut text = record_csv(&[row("aaaa", "a", -2.0)], true).unwrap();
        text = text.replacen("weight_used", "weight", 1);
        std::fs::write(&path, &text).unwrap();
        let e = append_record(&path, &[row("bbbb", "a", -1.0)], "t").unwrap_err();
        let message = e.to_string();
        assert!(
            message.contains("header column 10 is \"weight\"")
                && message.contains("\"weight_used\""),
            "{message}"
        );
        assert_eq!(std::fs::read_to_string(&path).unwrap(), text);
    }

    #[test]
    fn an_incident_already_in_the_record_is_refused_with_its_line() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("record.csv");
        append_record(&path, &[row("aaaa", "a", -2.0)], "t").unwrap();
        let e = append_record(&path, &[row("aaaa", "b", -1.0)], "t").unwrap_err();
        assert!(
            matches!(e, RenderError::IncidentAlreadyRecorded { line: 2, .. }),
            "{e}"
        );
    }
}
