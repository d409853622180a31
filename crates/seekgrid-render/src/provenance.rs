//! Where a run's files came from: the program, the command, the time, the inputs' SHA-256
//! digests and the seeds, written into every file that can hold it.

use serde::Serialize;

/// One input file and its SHA-256 digest.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct InputDigest {
    /// The path as the run named it (relative to the incident file's folder when inside it).
    pub path: String,
    /// SHA-256 of the file's bytes (FIPS 180-4), 64 lowercase hexadecimal digits.
    pub sha256: String,
}

/// One drifting scenario's random seed.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Seed {
    /// The scenario's id.
    pub scenario: String,
    /// The seed the incident file gives it.
    pub seed: u64,
}

/// The provenance of a run. The caller builds it (this crate reads no clock and hashes no
/// input); [`crate::OutputDir::set_provenance`] makes every GeoJSON file and PNG picture of
/// the folder carry it, and `summary.json` and `plan.gpx` carry it too.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Provenance {
    /// seekgrid's version (the package version).
    pub seekgrid_version: String,
    /// The command line, arguments separated by spaces.
    pub command: String,
    /// When the run started, UTC, RFC 3339 (`2026-06-14T21:30:00Z`).
    pub time_utc: String,
    /// The incident file first, then every file it names.
    pub inputs: Vec<InputDigest>,
    /// The seed of each drifting scenario, in the file's order.
    pub seeds: Vec<Seed>,
}

impl Provenance {
    /// As a JSON value (the member `provenance` of each GeoJSON file and of `summary.json`).
    #[must_use]
    pub fn to_json(&self) -> serde_json::Value {
        serde_json::to_value(self).unwrap_or(serde_json::Value::Null)
    }

    /// As one line of compact JSON (PNG text chunk, GPX metadata).
    #[must_use]
    pub fn to_json_line(&self) -> String {
        self.to_json().to_string()
    }
}

/// `bytes` of a GeoJSON object (or any JSON object) with the member `"provenance": p` added
/// first; other bytes unchanged.
pub(crate) fn into_json_object(bytes: &[u8], p: &Provenance) -> Vec<u8> {
    match bytes.first() {
        Some(b'{') => {
            let member = format!("\"provenance\":{},", p.to_json_line());
            let rest = &bytes[1..];
            // An empty object takes the member without a trailing comma.
            let empty = rest.iter().find(|b| !b.is_ascii_whitespace()) == Some(&b'}');
            let mut out = Vec::with_capacity(bytes.len() + member.len() + 1);
            out.push(b'{');
            out.extend_from_slice(if empty {
                member.trim_end_matches(',').as_bytes()
            } else {
                member.as_bytes()
            });
            out.extend_from_slice(rest);
            out
        }
        _ => bytes.to_vec(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn example() -> Provenance {
        Provenance {
            seekgrid_version: "0.1.0".into(),
            command: "seekgrid map incident.toml --out map".into(),
            time_utc: "2026-06-14T21:30:00Z".into(),
            inputs: vec![InputDigest {
                path: "incident.toml".into(),
                // SHA-256 of the empty string (FIPS 180-4 test vector, common knowledge).
                sha256: "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855".into(),
            }],
            seeds: vec![Seed {
                scenario: "adrift".into(),
                seed: 7,
            }],
        }
    }

    #[test]
    fn a_json_object_gets_the_provenance_member_and_stays_valid_json() {
        let p = example();
        for text in [
            &b"{\"type\":\"FeatureCollection\",\"features\":[]}"[..],
            b"{}",
            b"{ }",
        ] {
            let out = into_json_object(text, &p);
            let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
            assert_eq!(v["provenance"]["seeds"][0]["seed"], 7);
            assert_eq!(v["provenance"]["inputs"][0]["path"], "incident.toml");
        }
        assert_eq!(into_json_object(b"not json", &p), b"not json");
    }
}
