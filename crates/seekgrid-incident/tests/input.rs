//! The guards every input file goes through: regular files only, a size limit per kind, a
//! UTF-8 byte-order mark accepted, text that is not UTF-8 refused with its position. Each guard
//! is checked on every reader: the incident file, polygons, segments, GPX and GeoJSON tracks,
//! series and field CSV.

use seekgrid_incident::input::{CSV_MAX_BYTES, GEOMETRY_MAX_BYTES, INCIDENT_MAX_BYTES};
use seekgrid_incident::{ErrorKind, IncidentError, geofiles};
use std::path::{Path, PathBuf};
use std::sync::mpsc;
use std::time::Duration;

/// One reader and a small valid file for it (invented test data).
struct Reader {
    /// How the reader's messages name its file.
    name: &'static str,
    /// The file name to write (the ending picks GPX or GeoJSON for tracks).
    file_name: &'static str,
    /// A small valid file.
    valid: &'static str,
    /// The size limit of its kind, bytes.
    limit: u64,
    /// Reads the file; `Ok(n)` is a count of what was read, to check the content arrived.
    read: fn(&Path) -> Result<usize, IncidentError>,
}

const POLYGON: &str = r#"{"type":"FeatureCollection","features":[{"type":"Feature","properties":{"id":"S1"},
"geometry":{"type":"Polygon","coordinates":[[[-63.0,44.0],[-62.9,44.0],[-62.9,44.1],[-63.0,44.0]]]}}]}"#;

const GEOJSON_TRACK: &str = r#"{"type":"Feature","properties":{},
"geometry":{"type":"LineString","coordinates":[[-63.0,44.0],[-62.9,44.05],[-62.8,44.1]]}}"#;

const GPX: &str = r#"<?xml version="1.0" encoding="UTF-8"?>
<gpx version="1.1" creator="seekgrid test (invented track)" xmlns="http://www.topografix.com/GPX/1/1">
 <trk><trkseg>
  <trkpt lat="44.0" lon="-63.0"><time>2026-06-15T06:00:00Z</time></trkpt>
  <trkpt lat="44.05" lon="-62.9"><time>2026-06-15T06:10:00Z</time></trkpt>
 </trkseg></trk>
</gpx>
"#;

const SERIES: &str = "# invented test wind\ntime,speed_kn,direction_deg\n2026-06-14T12:00:00Z,12,245\n2026-06-14T15:00:00Z,15,250\n";

const FIELD: &str = "lon,lat,time,u_kn,v_kn\n-63.0,44.0,2026-06-14T12:00:00Z,0.5,0.1\n-62.9,44.0,2026-06-14T12:00:00Z,0.4,0.2\n";

const INCIDENT: &str = r#"[incident]
title = "Guard test (invented)"
reference_time = "2026-06-14T18:00:00Z"

[grid]
cell_m = 250

[[analyst]]
id = "desk"

[[scenario]]
id = "point"
analyst = "desk"
kind = "point"
position = [-62.95, 44.12]
sigma_m = 1500
"#;

fn readers() -> Vec<Reader> {
    vec![
        Reader {
            name: "incident file",
            file_name: "incident.toml",
            valid: INCIDENT,
            limit: INCIDENT_MAX_BYTES,
            read: |p| {
                seekgrid_incident::load(p)
                    .map(|i| i.scenarios.len())
                    .map_err(|e| e.0.into_iter().next().unwrap())
            },
        },
        Reader {
            name: "polygon file",
            file_name: "area.geojson",
            valid: POLYGON,
            limit: GEOMETRY_MAX_BYTES,
            read: |p| geofiles::read_polygons(p).map(|mp| mp.0.len()),
        },
        Reader {
            name: "segments file",
            file_name: "segments.geojson",
            valid: POLYGON,
            limit: GEOMETRY_MAX_BYTES,
            read: |p| geofiles::read_segments(p).map(|s| s.len()),
        },
        Reader {
            name: "track",
            file_name: "track.gpx",
            valid: GPX,
            limit: GEOMETRY_MAX_BYTES,
            read: |p| geofiles::read_track(p).map(|(l, _)| l.0.len()),
        },
        Reader {
            name: "track",
            file_name: "track.geojson",
            valid: GEOJSON_TRACK,
            limit: GEOMETRY_MAX_BYTES,
            read: |p| geofiles::read_track(p).map(|(l, _)| l.0.len()),
        },
        Reader {
            name: "series CSV",
            file_name: "wind.csv",
            valid: SERIES,
            limit: CSV_MAX_BYTES,
            read: |p| geofiles::read_series(p, 1.0, 10.0).map(|s| s.len()),
        },
        Reader {
            name: "field CSV",
            file_name: "current-field.csv",
            valid: FIELD,
            limit: CSV_MAX_BYTES,
            read: |p| geofiles::read_field(p).map(|s| s.len()),
        },
    ]
}

/// Runs the reader on another thread and fails the test, instead of hanging it, when the
/// reader does not return within 20 s. A reader blocked opening a FIFO is released by
/// opening the FIFO for writing.
fn read_within_time(r: &Reader, path: &Path) -> Result<usize, IncidentError> {
    let (tx, rx) = mpsc::channel();
    let read = r.read;
    let p = path.to_owned();
    std::thread::spawn(move || {
        let _ = tx.send(read(&p));
    });
    match rx.recv_timeout(Duration::from_secs(20)) {
        Ok(result) => result,
        Err(_) => {
            let _ = std::fs::OpenOptions::new().write(true).open(path);
            panic!("the {} reader did not return within 20 s", r.name)
        }
    }
}

fn expect_refused(r: &Reader, path: &Path, words: &[&str]) -> IncidentError {
    let e = read_within_time(r, path).expect_err("the reader should refuse the file");
    assert_eq!(e.kind, ErrorKind::Unreadable, "{} reader: {e}", r.name);
    assert_eq!(e.file, path, "{} reader: {e}", r.name);
    assert!(e.message.contains(r.name), "{} reader: {e}", r.name);
    for w in words {
        assert!(e.message.contains(w), "{} reader: {e}", r.name);
    }
    e
}

fn write(dir: &Path, r: &Reader, bytes: &[u8]) -> PathBuf {
    let p = dir.join(r.file_name);
    std::fs::write(&p, bytes).unwrap();
    p
}

#[test]
fn every_reader_accepts_its_small_valid_file() {
    let d = tempfile::tempdir().unwrap();
    for r in readers() {
        let p = write(d.path(), &r, r.valid.as_bytes());
        let n = read_within_time(&r, &p).unwrap_or_else(|e| panic!("{}: {e}", r.name));
        assert!(n >= 1, "{}", r.name);
    }
}

#[test]
fn every_reader_accepts_a_utf8_byte_order_mark() {
    let d = tempfile::tempdir().unwrap();
    for r in readers() {
        let mut bytes = b"\xEF\xBB\xBF".to_vec();
        bytes.extend_from_slice(r.valid.as_bytes());
        let p = write(d.path(), &r, &bytes);
        let with_bom = read_within_time(&r, &p).unwrap_or_else(|e| panic!("{}: {e}", r.name));
        let p = write(d.path(), &r, r.valid.as_bytes());
        assert_eq!(with_bom, read_within_time(&r, &p).unwrap(), "{}", r.name);
    }
}

#[cfg(unix)]
#[test]
fn every_reader_refuses_a_fifo_without_blocking() {
    let d = tempfile::tempdir().unwrap();
    for r in readers() {
        let p = d.path().join(r.file_name);
        let status = std::process::Command::new("mkfifo")
            .arg(&p)
            .status()
            .unwrap();
        assert!(status.success());
        expect_refused(&r, &p, &["named pipe (FIFO)", "not a regular file"]);
        std::fs::remove_file(&p).unwrap();
    }
}

#[cfg(unix)]
#[test]
fn every_reader_refuses_dev_zero_without_reading_it() {
    for r in readers() {
        expect_refused(&r, Path::new("/dev/zero"), &["character device"]);
    }
}

#[test]
fn every_reader_refuses_a_directory() {
    let d = tempfile::tempdir().unwrap();
    for r in readers() {
        let p = d.path().join(r.file_name);
        std::fs::create_dir(&p).unwrap();
        expect_refused(&r, &p, &["a directory", "not a regular file"]);
    }
}

#[test]
fn every_reader_refuses_a_file_one_byte_over_its_limit() {
    let d = tempfile::tempdir().unwrap();
    for r in readers() {
        let p = d.path().join(r.file_name);
        // Sparse: no disk space used, and the guard refuses it before reading.
        let f = std::fs::File::create(&p).unwrap();
        f.set_len(r.limit + 1).unwrap();
        drop(f);
        let size = format!("{} bytes", r.limit + 1);
        let limit = format!("limit of {} bytes", r.limit);
        expect_refused(&r, &p, &[&size, &limit]);
    }
}

#[test]
fn the_limits_are_those_documented() {
    // docs/incident-format.md, "Input files".
    assert_eq!(INCIDENT_MAX_BYTES, 16 * 1024 * 1024);
    assert_eq!(GEOMETRY_MAX_BYTES, 256 * 1024 * 1024);
    assert_eq!(CSV_MAX_BYTES, 256 * 1024 * 1024);
}

#[test]
fn every_reader_refuses_latin1_text_with_the_line_and_column_of_the_bad_byte() {
    let d = tempfile::tempdir().unwrap();
    for r in readers() {
        // The valid file with "é" written as the single Latin-1 byte 0xE9 on the second line:
        // in an XML comment for GPX, a JSON key for GeoJSON, a comment line for TOML and CSV.
        let (first, rest) = r.valid.split_once('\n').unwrap();
        let (mut bytes, col) = if r.file_name.ends_with(".gpx") {
            ([first.as_bytes(), b"\n<!-- caf\xE9 -->\n"].concat(), 9)
        } else if r.file_name.ends_with(".geojson") {
            // `{"café":1, ...` with the key on a line of its own.
            (b"{\n\"caf\xE9\":1,\n".to_vec(), 5)
        } else {
            ([first.as_bytes(), b"\n# caf\xE9\n"].concat(), 6)
        };
        if r.file_name.ends_with(".geojson") {
            bytes.extend_from_slice(&r.valid.as_bytes()[1..]);
        } else {
            bytes.extend_from_slice(rest.as_bytes());
        }
        let p = write(d.path(), &r, &bytes);
        let e = expect_refused(&r, &p, &["not UTF-8", "0xE9"]);
        assert_eq!((e.line, e.col), (Some(2), Some(col)), "{}: {e}", r.name);
    }
}

#[test]
fn every_reader_names_utf16_text() {
    let d = tempfile::tempdir().unwrap();
    for r in readers()
        .into_iter()
        .filter(|r| !r.file_name.ends_with(".gpx"))
    {
        let mut bytes = vec![0xFF, 0xFE];
        for u in r.valid.encode_utf16() {
            bytes.extend_from_slice(&u.to_le_bytes());
        }
        let p = write(d.path(), &r, &bytes);
        expect_refused(&r, &p, &["UTF-16", "save it as UTF-8"]);
    }
}

#[test]
fn a_gpx_file_that_declares_latin1_is_read_in_its_declared_encoding() {
    // XML 1.0 section 4.3.3: a document may name its encoding in the XML declaration; the
    // GPX reader decodes ISO-8859-1, so such a file is not refused for not being UTF-8.
    let d = tempfile::tempdir().unwrap();
    let text = GPX
        .replace("encoding=\"UTF-8\"", "encoding=\"ISO-8859-1\"")
        .replace("<trk>", "<trk><name>caf\u{e9}</name>");
    let bytes: Vec<u8> = text.chars().map(|c| u8::try_from(c).unwrap()).collect();
    assert!(std::str::from_utf8(&bytes).is_err());
    let p = d.path().join("track.gpx");
    std::fs::write(&p, bytes).unwrap();
    let (line, _) = geofiles::read_track(&p).unwrap();
    assert_eq!(line.0.len(), 2);
}
