//! A search scored along its track, cut into parts in time, so that drifting particles meet
//! each part where they are while it is searched rather than where they are at the search's
//! middle.
//!
//! A GPS track whose every fix has a time is cut at those times. A track without times, and
//! the legs of an expanding square or sector search, are taken as followed at constant speed
//! from the search's start to its end. Parts last at most [`SLICE_S`]; each part's POD at a
//! particle is taken at the part's mid-time, and the parts combine as `1 - Π(1 - p)` (for the
//! smooth laws exactly the POD of the summed exposure). A search that fits in one part, and
//! the rectangle patterns (scored by coverage, not along a track), are evaluated once at the
//! search's mid-time.

use crate::prepare::{PreparedGeometry, PreparedSearch};
use geo::Coord;
use seekgrid_incident::model::Time;

/// Longest part of a search scored against one placement of the particles, seconds.
pub const SLICE_S: f64 = 1800.0;

/// One part of a search: its mid-time and the stretch of track followed in it.
#[derive(Debug, Clone, PartialEq)]
pub struct Slice {
    /// Middle of the part.
    pub mid: Time,
    /// The track followed during the part, in the working frame (may hold fewer than two
    /// points when the unit was not moving along the track then).
    pub track: Vec<Coord<f64>>,
}

/// The parts of a search scored along a track, or `None` when it is scored once (a rectangle
/// pattern, or a search no longer than one part).
#[must_use]
pub fn slices(s: &PreparedSearch) -> Option<Vec<Slice>> {
    let (start, end) = (s.def.start, s.def.end);
    let span_s = (end - start).as_seconds_f64();
    let parts = (span_s / SLICE_S).ceil();
    if parts.is_nan() || parts <= 1.0 {
        return None;
    }
    let (track, times) = match &s.geometry {
        PreparedGeometry::Pattern(p) if p.is_rectangle() => return None,
        PreparedGeometry::Pattern(p) => (p.tracks().0, None),
        PreparedGeometry::Track { points, times, .. } => (points.clone(), times.clone()),
    };
    let offsets = match times {
        Some(t) if t.len() == track.len() => t
            .iter()
            .map(|ti| (*ti - start).as_seconds_f64().clamp(0.0, span_s))
            .collect(),
        _ => constant_speed_offsets(&track, span_s)?,
    };
    let n = parts as usize;
    Some(
        (0..n)
            .map(|k| {
                let t0 = span_s * k as f64 / n as f64;
                let t1 = span_s * (k + 1) as f64 / n as f64;
                let mid =
                    start + chrono::Duration::milliseconds((500.0 * (t0 + t1)).round() as i64);
                Slice {
                    mid,
                    track: between(&track, &offsets, t0, t1),
                }
            })
            .collect(),
    )
}

/// Seconds from the start at which each fix is passed at constant speed over `span_s`;
/// `None` for a track without length.
fn constant_speed_offsets(track: &[Coord<f64>], span_s: f64) -> Option<Vec<f64>> {
    let mut cum = vec![0.0];
    for w in track.windows(2) {
        let last = cum[cum.len() - 1];
        cum.push(last + (w[1].x - w[0].x).hypot(w[1].y - w[0].y));
    }
    let total = cum[cum.len() - 1];
    (total > 0.0 && total.is_finite()).then(|| cum.iter().map(|c| span_s * c / total).collect())
}

/// The track between offsets `t0` and `t1` (seconds, non-decreasing along the track): the
/// point where it is at `t0`, every fix strictly between, and the point where it is at `t1`,
/// interpolated linearly in time along each segment.
fn between(track: &[Coord<f64>], offsets: &[f64], t0: f64, t1: f64) -> Vec<Coord<f64>> {
    let (first, last) = (offsets[0], offsets[offsets.len() - 1]);
    let (a, b) = (t0.max(first), t1.min(last));
    if a >= b {
        return Vec::new();
    }
    let at = |t: f64| -> Coord<f64> {
        // The last fix at or before t, then along its segment.
        let i = offsets.partition_point(|&o| o <= t).saturating_sub(1);
        let j = (i + 1).min(track.len() - 1);
        let (oi, oj) = (offsets[i], offsets[j]);
        let f = if oj > oi { (t - oi) / (oj - oi) } else { 0.0 };
        Coord {
            x: track[i].x + f * (track[j].x - track[i].x),
            y: track[i].y + f * (track[j].y - track[i].y),
        }
    };
    let mut out = vec![at(a)];
    out.extend(
        track
            .iter()
            .zip(offsets)
            .filter(|(_, o)| **o > a && **o < b)
            .map(|(p, _)| *p),
    );
    out.push(at(b));
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn c(x: f64, y: f64) -> Coord<f64> {
        Coord { x, y }
    }

    #[test]
    fn between_cuts_a_track_at_times_along_its_segments() {
        let track = [c(0.0, 0.0), c(100.0, 0.0), c(100.0, 100.0)];
        let offsets = [0.0, 10.0, 20.0];
        assert_eq!(
            between(&track, &offsets, 5.0, 15.0),
            vec![c(50.0, 0.0), c(100.0, 0.0), c(100.0, 50.0)]
        );
        assert_eq!(
            between(&track, &offsets, 0.0, 10.0),
            vec![c(0.0, 0.0), c(100.0, 0.0)]
        );
        assert!(between(&track, &offsets, 25.0, 30.0).is_empty());
        assert_eq!(
            between(&track, &offsets, 15.0, 40.0),
            vec![c(100.0, 50.0), c(100.0, 100.0)]
        );
    }

    #[test]
    fn constant_speed_spreads_the_fixes_by_length() {
        let track = [c(0.0, 0.0), c(30.0, 0.0), c(30.0, 10.0)];
        assert_eq!(
            constant_speed_offsets(&track, 40.0).unwrap(),
            vec![0.0, 30.0, 40.0]
        );
        assert!(constant_speed_offsets(&[c(1.0, 1.0), c(1.0, 1.0)], 40.0).is_none());
    }
}
