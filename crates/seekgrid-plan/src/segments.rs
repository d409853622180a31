//! Land search: whole segments for ground teams.

use crate::error::PlanError;
use crate::options::PlanOptions;
use crate::unit::{UnitSpec, validate_units};
use seekgrid_core::neumaier_sum;

/// One team's segment and what it is expected to achieve there.
#[derive(Clone, Debug, PartialEq)]
pub struct SegmentAssignment {
    /// The team's id.
    pub team: String,
    /// The segment's id.
    pub segment: String,
    /// Coverage the team gives the segment, `searchers x W x L / area`, capped at
    /// `W / track_spacing_min_m` (dimensionless).
    pub coverage: f64,
    /// POD of the team alone in the segment, `law.pod_from_coverage(coverage)`.
    pub pod: f64,
    /// The team's POS alone, `POA x POD` (probability).
    pub pos: f64,
    /// Spacing between searchers that gives this coverage, `W / coverage`, metres.
    pub recommended_spacing_m: f64,
    /// Hours the search of the segment takes at that coverage (less than the hours on scene
    /// when the coverage is capped by the minimum spacing).
    pub hours_needed: f64,
    /// Whether the coverage was capped by the team's minimum spacing.
    pub capped_by_min_spacing: bool,
}

/// The assignment of teams to segments that maximises the joint POS.
#[derive(Clone, Debug, PartialEq)]
pub struct SegmentPlan {
    /// One assignment per team, in the order the teams were given.
    pub assignments: Vec<SegmentAssignment>,
    /// Joint POS, `Σ_s POA_s (1 - Π_{teams in s} (1 - POD))` (probability).
    pub pos_plan: f64,
    /// Whether the assignment was found by enumerating every possibility (else greedy).
    pub exact: bool,
    /// The method and rules used, stated in sentences.
    pub notes: Vec<String>,
}

/// `n` and the noun, singular for 1 ("1 team", "3 teams").
fn counted(n: u64, one: &str, many: &str) -> String {
    format!("{n} {}", if n == 1 { one } else { many })
}

fn validate_segments(segments: &[(String, f64, f64)]) -> Result<(), PlanError> {
    if segments.is_empty() {
        return Err(PlanError::NoSegments);
    }
    for (i, (id, poa, area)) in segments.iter().enumerate() {
        let bad = |field: &'static str, value: f64, fix: &'static str| PlanError::BadSegment {
            segment: id.clone(),
            field,
            value,
            fix,
        };
        if id.trim().is_empty() {
            return Err(bad("id", f64::NAN, "give the segment a non-empty id"));
        }
        if segments[..i].iter().any(|s| s.0 == *id) {
            return Err(PlanError::DuplicateSegment {
                segment: id.clone(),
            });
        }
        if !(poa.is_finite() && (0.0..=1.0).contains(poa)) {
            return Err(bad("poa", *poa, "give the POA as a probability in 0..=1"));
        }
        if !(area.is_finite() && *area > 0.0) {
            return Err(bad(
                "area_m2",
                *area,
                "give the segment's area as a positive number of square metres",
            ));
        }
    }
    let total = neumaier_sum(segments.iter().map(|s| s.1));
    if total > 1.0 + 1e-9 {
        return Err(PlanError::SegmentPoaOverOne { total });
    }
    Ok(())
}

/// Assigns ground teams to whole land segments to maximise the joint POS.
///
/// `segments` are `(id, POA now, area_m2)`: the segment's probability of area (overlap-weighted,
/// after earlier searches) and its area. For team `t` in segment `s` the coverage is
/// `C = searchers x W x L / A` with `L = speed x hours x 3600 s/h x (1 - turn_allowance)` (found:
/// Robe & Frost 2002; Cooper, Frost & Robe 2003: C = W·L/A for land search, docs/references.md §6),
/// capped at `W / track_spacing_min_m` when the team has a minimum spacing (the team then
/// finishes early: `hours_needed`), and the POD is the team's law at that coverage. Several
/// teams may share a segment: their POD combine as `1 - Π(1 - d)` (found: Patterson 1998,
/// docs/references.md §3). A vessel or aircraft in `teams` counts as one searcher.
///
/// The assignment is exact, by enumerating all `segments^teams` possibilities, when there are
/// at most `options.max_exact_assignments` of them (ties to the first in lexicographic order
/// of segment indices, team 1 most significant); else greedy: teams in order of effort each
/// take the segment of largest marginal gain, then moves of one team and exchanges between two
/// are made while one raises the joint POS. The notes say which.
///
/// # Errors
/// [`PlanError::NoSegments`], [`PlanError::BadSegment`], [`PlanError::DuplicateSegment`],
/// [`PlanError::SegmentPoaOverOne`]; [`PlanError::NoUnits`], [`PlanError::BadUnit`],
/// [`PlanError::DuplicateUnit`]; [`PlanError::BadOption`].
pub fn assign_teams_to_segments(
    segments: &[(String, f64, f64)],
    teams: &[UnitSpec],
    options: &PlanOptions,
) -> Result<SegmentPlan, PlanError> {
    validate_segments(segments)?;
    validate_units(teams)?;
    options.validate()?;
    let (n, m) = (teams.len(), segments.len());
    // Coverage, POD, cap flag and hours for every (team, segment).
    let mut table = Vec::with_capacity(n * m);
    for t in teams {
        let effort = t.effort_m2(options.turn_allowance);
        for (_, _, area) in segments {
            let raw = effort / area;
            let cap = t.track_spacing_min_m.map(|s| t.sweep_width_m / s);
            let (c, capped) = match cap {
                Some(cap) if raw > cap => (cap, true),
                _ => (raw, false),
            };
            let hours = if capped {
                t.hours_on_scene * c / raw
            } else {
                t.hours_on_scene
            };
            table.push((c, t.law.pod_from_coverage(c), capped, hours));
        }
    }
    let pod = |t: usize, s: usize| table[t * m + s].1;
    let joint = |assign: &[usize]| -> f64 {
        let mut surv = vec![1.0; m];
        for (t, &s) in assign.iter().enumerate() {
            surv[s] *= 1.0 - pod(t, s);
        }
        neumaier_sum(
            segments
                .iter()
                .zip(&surv)
                .map(|(seg, sv)| seg.1 * (1.0 - sv)),
        )
    };
    let combos = (0..n).try_fold(1u64, |acc, _| acc.checked_mul(m as u64));
    let exact = combos.is_some_and(|c| c <= options.max_exact_assignments);
    let mut notes = vec![format!(
        "coverage = searchers x W x L / area with L = speed x hours x (1 - {}), capped at W / minimum spacing; teams sharing a segment combine as 1 - Π(1 - POD)",
        options.turn_allowance
    )];
    let best: Vec<usize> = if exact {
        let mut cur = vec![0usize; n];
        let mut best = cur.clone();
        let mut best_pos = joint(&cur);
        loop {
            // Odometer, last team least significant.
            let mut done = true;
            let mut i = n;
            while i > 0 {
                i -= 1;
                cur[i] += 1;
                if cur[i] < m {
                    done = false;
                    break;
                }
                cur[i] = 0;
            }
            if done {
                break;
            }
            let p = joint(&cur);
            if p > best_pos {
                best_pos = p;
                best.clone_from(&cur);
            }
        }
        notes.push(format!(
            "exact: all {} of {} to {} enumerated",
            counted(combos.unwrap_or(0), "assignment", "assignments"),
            counted(n as u64, "team", "teams"),
            counted(m as u64, "segment", "segments")
        ));
        best
    } else {
        let mut order: Vec<usize> = (0..n).collect();
        let effort: Vec<f64> = teams
            .iter()
            .map(|t| t.effort_m2(options.turn_allowance))
            .collect();
        order.sort_by(|&a, &b| effort[b].total_cmp(&effort[a]).then(a.cmp(&b)));
        let mut assign = vec![usize::MAX; n];
        let mut surv = vec![1.0; m];
        for &t in &order {
            let mut bs = 0;
            let mut bg = f64::NEG_INFINITY;
            for (s, seg) in segments.iter().enumerate() {
                let g = seg.1 * surv[s] * pod(t, s);
                if g > bg {
                    bg = g;
                    bs = s;
                }
            }
            assign[t] = bs;
            surv[bs] *= 1.0 - pod(t, bs);
        }
        let mut moves = 0;
        'outer: for _ in 0..1000 {
            let mut moved = false;
            for &t in &order {
                let here = joint(&assign);
                let orig = assign[t];
                let mut best_s = orig;
                let mut best_p = here;
                for s in 0..m {
                    if s == orig {
                        continue;
                    }
                    assign[t] = s;
                    let p = joint(&assign);
                    if p > best_p * (1.0 + 1e-15) {
                        best_p = p;
                        best_s = s;
                    }
                }
                assign[t] = best_s;
                if best_s != orig {
                    moved = true;
                    moves += 1;
                }
            }
            // Exchanges of segments between two teams.
            for a in 0..n {
                for b in a + 1..n {
                    if assign[a] == assign[b] {
                        continue;
                    }
                    let here = joint(&assign);
                    assign.swap(a, b);
                    if joint(&assign) > here * (1.0 + 1e-15) {
                        moved = true;
                        moves += 1;
                    } else {
                        assign.swap(a, b);
                    }
                }
            }
            if !moved {
                break 'outer;
            }
        }
        notes.push(format!(
            "greedy: more than {} of {} to {}, so teams were placed in order of effort on the segment of largest marginal gain in joint POS, then {moves} move(s) of one team or exchange(s) between two improved it; the result may fall short of the optimum",
            counted(options.max_exact_assignments, "assignment", "assignments"),
            counted(n as u64, "team", "teams"),
            counted(m as u64, "segment", "segments")
        ));
        assign
    };
    let assignments = best
        .iter()
        .enumerate()
        .map(|(t, &s)| {
            let (c, d, capped, hours) = table[t * m + s];
            SegmentAssignment {
                team: teams[t].id.clone(),
                segment: segments[s].0.clone(),
                coverage: c,
                pod: d,
                pos: segments[s].1 * d,
                recommended_spacing_m: teams[t].sweep_width_m / c,
                hours_needed: hours,
                capped_by_min_spacing: capped,
            }
        })
        .collect::<Vec<_>>();
    for a in assignments.iter().filter(|a| a.capped_by_min_spacing) {
        notes.push(format!(
            "team {}: coverage capped at W / minimum spacing = {:.3} in segment {}; the team needs {:.2} h",
            a.team, a.coverage, a.segment, a.hours_needed
        ));
    }
    Ok(SegmentPlan {
        pos_plan: joint(&best),
        assignments,
        exact,
        notes,
    })
}
