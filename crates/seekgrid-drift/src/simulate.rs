//! The Monte Carlo drift simulation.

use crate::Time;
use crate::environment::{Convention, EnvDraw, Environment, Nominal, Prepared, perturb_nominal};
use crate::error::DriftError;
use crate::land::LandMask;
use crate::leeway::Leeway;
use crate::spread::Spread;
use chrono::TimeDelta;
use geo::Coord;
use rand::{RngExt, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Exp1, StandardNormal};
use rayon::prelude::*;
use seekgrid_core::frame::Frame;
use seekgrid_core::units::{MPS_PER_KNOT, SECONDS_PER_HOUR};
use std::sync::atomic::{AtomicU64, Ordering};

/// WGS84 semi-major axis, metres (NIMA TR8350.2).
const WGS84_A: f64 = 6_378_137.0;
/// WGS84 flattening (NIMA TR8350.2).
const WGS84_F: f64 = 1.0 / 298.257_223_563;

/// Particles simulated per parallel work item; the progress callback runs once per chunk.
pub const CHUNK_PARTICLES: usize = 1024;

/// Largest memory the stored records may take, bytes (16 bytes per particle per record).
pub const MAX_RECORD_BYTES: u128 = 12 * (1 << 30);

/// Bytes stored per particle per record: x and y in double precision. (Single-precision
/// offsets would halve it, but round a stranded particle by up to centimetres, past the
/// millimetre it is kept seaward of the shore.)
const RECORD_BYTES: f64 = 16.0;

/// Most time steps a run may have (a guard against a step of microseconds over days).
pub const MAX_STEPS: f64 = 5.0e7;

/// Particles used to choose the automatic time step (the first ones of the run).
pub const PILOT_PARTICLES: usize = 512;

/// Longest automatic time step, seconds (one hour).
pub const MAX_AUTO_STEP_S: f64 = SECONDS_PER_HOUR;

/// Halvings the automatic step may take from its first try.
pub const MAX_AUTO_HALVINGS: u32 = 9;

/// The drift problem: where and when the object went adrift, what moved it, and how many
/// particles to use.
///
/// The two environments follow the conventions of docs/architecture.md: `current` is the total
/// water current given by the direction it flows **toward** ([`Convention::CURRENT`]), `wind`
/// the 10 m wind given by the direction it blows **from** ([`Convention::WIND`]).
#[derive(Debug, Clone, PartialEq)]
pub struct DriftScenario {
    /// Last known position, WGS84 (longitude, latitude), degrees.
    pub lkp_lon_lat: (f64, f64),
    /// 1-sigma error of the last known position per axis (isotropic normal), metres.
    pub position_sigma_m: f64,
    /// Earliest time the object may have gone adrift.
    pub adrift_earliest: Time,
    /// Latest time the object may have gone adrift (may equal the earliest).
    pub adrift_latest: Time,
    /// Total water current (toward convention).
    pub current: Environment,
    /// 10 m wind (from convention).
    pub wind: Environment,
    /// Leeway coefficients of the object (the planner's input).
    pub leeway: Leeway,
    /// Horizontal eddy diffusivity K for an added random walk, square metres per second (0
    /// for none).
    pub diffusivity_m2_s: f64,
    /// Number of particles (> 0).
    pub particles: usize,
    /// Seed of the random generator.
    pub seed: u64,
}

/// How long to run and when to store positions.
#[derive(Debug, Clone, PartialEq)]
pub struct SimulationOptions {
    /// End of the simulation (at or after `adrift_earliest`, which is its start).
    pub end: Time,
    /// Interval between stored positions, seconds (e.g. 600); the end is always stored.
    /// [`DriftRun::positions_at`] interpolates linearly between records.
    pub record_every_s: f64,
    /// Time step, seconds; `None` chooses it automatically (see [`simulate()`]). Steps are
    /// shortened so that a whole number of them fills each record interval.
    pub step_s: Option<f64>,
    /// Further times to store positions at exactly (e.g. the times searches are scored at),
    /// besides the regular records; times outside the simulated span are ignored.
    pub also_record_at: Vec<Time>,
}

/// Positions of all particles at one time.
#[derive(Debug, Clone, PartialEq)]
pub struct ParticleSnapshot {
    /// Eastings, working frame, metres.
    pub x_m: Vec<f64>,
    /// Northings, working frame, metres.
    pub y_m: Vec<f64>,
    /// Whether each particle has stranded on land by then.
    pub stranded: Vec<bool>,
    /// Whether each particle is adrift by then; before its own adrift time a particle sits at
    /// its start position (the last known position plus its position error draw).
    pub adrift: Vec<bool>,
}

impl ParticleSnapshot {
    /// The snapshot as core [`seekgrid_core::Particles`] with the given weights.
    ///
    /// # Errors
    /// [`DriftError::BadWeights`] when the weights do not match or are not valid masses.
    pub fn into_particles(self, weights: Vec<f64>) -> Result<seekgrid_core::Particles, DriftError> {
        seekgrid_core::Particles::new(self.x_m, self.y_m, weights, self.stranded).map_err(|e| {
            DriftError::BadWeights {
                what: e.to_string(),
            }
        })
    }
}

/// Whether a particle's run adds the scenario's random walk (diffusion) to its motion.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum RandomWalk {
    /// The scenario's diffusion, when it has one (the simulation).
    Included,
    /// No diffusion (the pilot run that sizes the time step); the walk's random stream is
    /// not drawn from.
    Omitted,
}

#[derive(Debug, Clone, Copy, Default)]
struct ParticleMeta {
    adrift_s: f64,
    strand_s: f64,
}

/// Where and when a gridded field gave a particle no value (see [`DriftError::FieldGap`]).
#[derive(Clone, Copy, Debug)]
struct Fault {
    /// Seconds after the start.
    t_s: f64,
    /// Working frame position.
    at: Coord<f64>,
}

/// The result of [`simulate()`]: particle positions stored at the record times, with what is
/// needed to give them at any time between start and end.
///
/// Memory: 16 bytes per particle per record time, plus 16 bytes per particle.
#[derive(Clone)]
pub struct DriftRun {
    start: Time,
    record_s: Vec<f64>,
    /// The recorded positions, one block per [`CHUNK_PARTICLES`] particles.
    chunks: Vec<ChunkRecords>,
    meta: Vec<ParticleMeta>,
    step_s: f64,
}

/// The recorded positions of one chunk of particles, time-major so that the chunk's positions
/// at one record lie together (a snapshot reads each chunk in one sweep): particle `j` at
/// record `k` at `[(k * len + j) * 2]` (x) and `+ 1` (y).
#[derive(Clone)]
struct ChunkRecords {
    len: usize,
    positions: Vec<f64>,
}

impl ChunkRecords {
    #[inline]
    fn at(&self, k: usize, j: usize) -> (f64, f64) {
        let at = (k * self.len + j) * 2;
        (self.positions[at], self.positions[at + 1])
    }
}

impl std::fmt::Debug for DriftRun {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("DriftRun")
            .field("start", &self.start)
            .field("end_s", &self.end_s())
            .field("records", &self.record_s.len())
            .field("particles", &self.len())
            .field("step_s", &self.step_s)
            .finish()
    }
}

impl DriftRun {
    /// Number of particles.
    #[must_use]
    pub fn len(&self) -> usize {
        self.meta.len()
    }

    /// Whether there are no particles (never true for a run from [`simulate()`]).
    #[must_use]
    pub fn is_empty(&self) -> bool {
        self.meta.is_empty()
    }

    /// Equal weights summing to 1, one per particle.
    #[must_use]
    pub fn initial_weights(&self) -> Vec<f64> {
        let n = self.len();
        vec![1.0 / n as f64; n]
    }

    /// Start of the simulation (the earliest adrift time).
    #[must_use]
    pub fn start(&self) -> Time {
        self.start
    }

    /// End of the simulation.
    #[must_use]
    pub fn end(&self) -> Time {
        self.time_of(self.end_s())
    }

    fn end_s(&self) -> f64 {
        self.record_s[self.record_s.len() - 1]
    }

    fn time_of(&self, s: f64) -> Time {
        self.start + TimeDelta::nanoseconds((s * 1e9).round() as i64)
    }

    /// The record times.
    #[must_use]
    pub fn record_times(&self) -> Vec<Time> {
        self.record_s.iter().map(|&s| self.time_of(s)).collect()
    }

    /// The time step used, seconds (the longest; steps are fitted to the record intervals).
    #[must_use]
    pub fn step_s(&self) -> f64 {
        self.step_s
    }

    /// Each particle's adrift time.
    #[must_use]
    pub fn adrift_times(&self) -> Vec<Time> {
        self.meta.iter().map(|m| self.time_of(m.adrift_s)).collect()
    }

    /// Positions at time `t` (clamped to the simulated span): linear between the records,
    /// with each particle moving only while it is adrift and not yet stranded (a stranded
    /// particle stays where it stranded; one not yet adrift stays at its start position).
    #[must_use]
    pub fn positions_at(&self, t: Time) -> ParticleSnapshot {
        let (k, t_s) = self.record_interval(t);
        let n = self.len();
        let mut snap = ParticleSnapshot {
            x_m: vec![0.0; n],
            y_m: vec![0.0; n],
            stranded: vec![false; n],
            adrift: vec![false; n],
        };
        snap.x_m
            .par_chunks_mut(CHUNK_PARTICLES)
            .zip(snap.y_m.par_chunks_mut(CHUNK_PARTICLES))
            .zip(snap.stranded.par_chunks_mut(CHUNK_PARTICLES))
            .zip(snap.adrift.par_chunks_mut(CHUNK_PARTICLES))
            .zip(self.chunks.par_iter())
            .zip(self.meta.par_chunks(CHUNK_PARTICLES))
            .for_each(|(((((xs, ys), stranded), adrift), chunk), meta)| {
                for (j, m) in meta.iter().enumerate() {
                    (xs[j], ys[j]) = self.position(chunk, k, j, m, t_s);
                    stranded[j] = t_s >= m.strand_s;
                    adrift[j] = t_s >= m.adrift_s;
                }
            });
        snap
    }

    /// Positions at time `t` as [`Self::positions_at`] gives them, written into `out` (one
    /// per particle), for a caller that reads many times and keeps its buffer.
    ///
    /// # Panics
    /// If `out` does not hold one place per particle.
    pub fn write_points_at(&self, t: Time, out: &mut [Coord<f64>]) {
        assert_eq!(out.len(), self.len(), "one place per particle");
        let (k, t_s) = self.record_interval(t);
        out.par_chunks_mut(CHUNK_PARTICLES)
            .zip(self.chunks.par_iter())
            .zip(self.meta.par_chunks(CHUNK_PARTICLES))
            .for_each(|((out, chunk), meta)| {
                for (j, m) in meta.iter().enumerate() {
                    let (x, y) = self.position(chunk, k, j, m, t_s);
                    out[j] = Coord { x, y };
                }
            });
    }

    /// The record interval `[k, k + 1]` holding `t` and `t` in seconds from the start,
    /// clamped to the simulated span.
    fn record_interval(&self, t: Time) -> (usize, f64) {
        let t_s = (t - self.start).as_seconds_f64().clamp(0.0, self.end_s());
        let r = self.record_s.len();
        let k = self
            .record_s
            .partition_point(|&x| x <= t_s)
            .saturating_sub(1)
            .min(r.saturating_sub(2));
        (k, t_s)
    }

    /// Particle `j` of `chunk` at `t_s` in record interval `k`: linear between the records,
    /// moving only while adrift and not yet stranded.
    #[inline]
    fn position(
        &self,
        chunk: &ChunkRecords,
        k: usize,
        j: usize,
        m: &ParticleMeta,
        t_s: f64,
    ) -> (f64, f64) {
        let p0 = chunk.at(k, j);
        if self.record_s.len() == 1 {
            return p0;
        }
        let p1 = chunk.at(k + 1, j);
        let a = self.record_s[k].max(m.adrift_s);
        let b = self.record_s[k + 1].min(m.strand_s);
        if b <= a || t_s <= a {
            p0
        } else if t_s >= b {
            p1
        } else {
            let w = (t_s - a) / (b - a);
            (p0.0 + w * (p1.0 - p0.0), p0.1 + w * (p1.1 - p0.1))
        }
    }

    /// Weighted mean position and covariance at time `t` (working frame), for the mean track
    /// and the containment ellipses of a drift layer (see [`Spread::ellipse`]).
    ///
    /// # Errors
    /// [`DriftError::BadWeights`] when `weights` does not have one finite, non-negative value
    /// per particle with a positive sum.
    pub fn spread_at(&self, t: Time, weights: &[f64]) -> Result<Spread, DriftError> {
        let s = self.positions_at(t);
        Spread::of_points(&s.x_m, &s.y_m, weights)
    }
}

/// Most steps for which the nominal environment is tabulated per step (64 bytes each).
const MAX_TABULATED_STEPS: usize = 2_000_000;

/// Times of the records and the step boundaries in each record interval.
#[derive(Debug, Clone)]
struct Lattice {
    record_s: Vec<f64>,
    /// For record interval k, the step boundaries from `record_s[k]` to `record_s[k + 1]`.
    bounds: Vec<Vec<f64>>,
    /// For uniform environments: the nominal current and wind at the midpoint of each step,
    /// `[k][j]` for step j of record interval k.
    nominal: Option<Vec<Vec<(Nominal, Nominal)>>>,
}

impl Lattice {
    /// Every `record_every_s` from the start, the end, and the `extra` times (seconds from
    /// the start) strictly inside the span, sorted; records closer than a millisecond merge.
    fn record_times(end_s: f64, record_every_s: f64, extra: &[f64]) -> Vec<f64> {
        if end_s <= 0.0 {
            return vec![0.0];
        }
        let intervals = ((end_s / record_every_s - 1e-9).ceil() as usize).max(1);
        let mut t: Vec<f64> = (0..intervals).map(|k| k as f64 * record_every_s).collect();
        t.extend(extra.iter().copied().filter(|&e| e > 0.0 && e < end_s));
        t.push(end_s);
        t.sort_by(f64::total_cmp);
        t.dedup_by(|later, earlier| *later - *earlier < 1e-3);
        // The end must stay the last record even if an extra time merged into it.
        if let Some(last) = t.last_mut() {
            *last = end_s;
        }
        t
    }

    /// Equal steps of at most `step_s` in each record interval, with the `breaks` (times where
    /// an environment has a kink: series samples, gridded time nodes) added as boundaries so
    /// that no step straddles one.
    fn with_step(record_s: Vec<f64>, step_s: f64, breaks: &[f64]) -> Self {
        let bounds = record_s
            .windows(2)
            .map(|w| {
                let (r0, r1) = (w[0], w[1]);
                let len = r1 - r0;
                let n = ((len / step_s - 1e-9).ceil() as usize).max(1);
                let mut b: Vec<f64> = (0..n).map(|j| r0 + len * j as f64 / n as f64).collect();
                b.extend(breaks.iter().copied().filter(|&t| t > r0 && t < r1));
                b.sort_by(f64::total_cmp);
                b.dedup();
                b.push(r1);
                b
            })
            .collect();
        Self {
            record_s,
            bounds,
            nominal: None,
        }
    }

    /// Tabulates the nominal environment at every step midpoint when it does not depend on
    /// position (and the table stays small).
    fn tabulate(mut self, current: &Prepared<'_>, wind: &Prepared<'_>) -> Self {
        let steps: usize = self.bounds.iter().map(|b| b.len() - 1).sum();
        if current.is_uniform() && wind.is_uniform() && steps <= MAX_TABULATED_STEPS {
            let table = self
                .bounds
                .iter()
                .map(|b| {
                    b.windows(2)
                        .map(|w| {
                            let mid = w[0] + 0.5 * (w[1] - w[0]);
                            (
                                Nominal::new(current.sample(None, mid)),
                                Nominal::new(wind.sample(None, mid)),
                            )
                        })
                        .collect()
                })
                .collect();
            self.nominal = Some(table);
        }
        self
    }
}

/// Everything the inner loop needs, prepared once.
struct Model<'a> {
    current: Prepared<'a>,
    wind: Prepared<'a>,
    uniform: bool,
    leeway: Leeway,
    frame: &'a Frame,
    lkp: Coord<f64>,
    /// True (east, north) knots to grid metres per second: scale * [`MPS_PER_KNOT`] * rotation.
    to_grid: [[f64; 2]; 2],
    position_sigma_grid_m: f64,
    window_s: f64,
    jibe_per_s: f64,
    /// sqrt(2 K) in grid metres per sqrt(second).
    diffusion_grid: f64,
    seed: u64,
}

/// One particle's draws at the start, in the fixed order of its random stream.
struct Init {
    start: Coord<f64>,
    adrift_s: f64,
    current: EnvDraw,
    wind: EnvDraw,
    z_down: f64,
    z_cross: f64,
    side: f64,
}

fn env_draw(rng: &mut ChaCha8Rng, env: &Prepared<'_>) -> EnvDraw {
    let z_speed: f64 = rng.sample(StandardNormal);
    let z_dir: f64 = rng.sample(StandardNormal);
    let calm = std::f64::consts::TAU * rng.random::<f64>();
    EnvDraw::new(z_speed, z_dir, calm, env.first_direction_sigma_deg())
}

impl<'a> Model<'a> {
    /// The prepared model of a validated scenario.
    fn new(scenario: &'a DriftScenario, frame: &'a Frame) -> Self {
        let start = scenario.adrift_earliest;
        let (lon, lat) = scenario.lkp_lon_lat;
        let lkp = frame.to_xy(lon, lat);
        let gamma = frame.convergence_deg(lon, lat).to_radians();
        let scale = point_scale(frame, lon, lat);
        let (sg, cg) = gamma.sin_cos();
        let f = scale * MPS_PER_KNOT;
        let current = Prepared::new(&scenario.current, start, Convention::CURRENT);
        let wind = Prepared::new(&scenario.wind, start, Convention::WIND);
        Model {
            uniform: current.is_uniform() && wind.is_uniform(),
            current,
            wind,
            leeway: scenario.leeway,
            frame,
            lkp,
            // Grid components of a true (east, north) vector: the bearing decreases by gamma.
            to_grid: [[f * cg, -f * sg], [f * sg, f * cg]],
            position_sigma_grid_m: scenario.position_sigma_m * scale,
            window_s: (scenario.adrift_latest - start).as_seconds_f64(),
            jibe_per_s: scenario.leeway.jibe_per_h / SECONDS_PER_HOUR,
            diffusion_grid: (2.0 * scenario.diffusivity_m2_s).sqrt() * scale,
            seed: scenario.seed,
        }
    }

    fn rngs(&self, i: usize) -> (ChaCha8Rng, ChaCha8Rng) {
        let mut init = ChaCha8Rng::seed_from_u64(self.seed);
        init.set_stream(2 * i as u64);
        let mut walk = ChaCha8Rng::seed_from_u64(self.seed);
        walk.set_stream(2 * i as u64 + 1);
        (init, walk)
    }

    fn draw_init(&self, rng: &mut ChaCha8Rng) -> Init {
        let dx: f64 = rng.sample(StandardNormal);
        let dy: f64 = rng.sample(StandardNormal);
        let u: f64 = rng.random();
        let current = env_draw(rng, &self.current);
        let wind = env_draw(rng, &self.wind);
        let z_down: f64 = rng.sample(StandardNormal);
        let z_cross: f64 = rng.sample(StandardNormal);
        let side = if rng.random::<f64>() < 0.5 { 1.0 } else { -1.0 };
        Init {
            start: Coord {
                x: self.lkp.x + self.position_sigma_grid_m * dx,
                y: self.lkp.y + self.position_sigma_grid_m * dy,
            },
            adrift_s: self.window_s * u,
            current,
            wind,
            z_down,
            z_cross,
            side,
        }
    }

    /// Velocity in the working frame, metres per second, at a position and time.
    #[inline]
    fn velocity(
        &self,
        p: Coord<f64>,
        t_s: f64,
        init: &Init,
        side: f64,
        hints: &mut [usize; 2],
    ) -> Coord<f64> {
        let lon_lat = if self.uniform {
            None
        } else {
            Some(self.frame.to_lon_lat(p))
        };
        let c = Nominal::new(self.current.sample_near(lon_lat, t_s, &mut hints[0]));
        let w = Nominal::new(self.wind.sample_near(lon_lat, t_s, &mut hints[1]));
        self.velocity_of(&c, &w, init, side)
    }

    /// Velocity in the working frame, metres per second, for given nominal samples.
    #[inline]
    fn velocity_of(&self, current: &Nominal, wind: &Nominal, init: &Init, side: f64) -> Coord<f64> {
        let (fc, ce, cn) = perturb_nominal(current, &init.current);
        let (fw, we, wn) = perturb_nominal(wind, &init.wind);
        // A negative perturbed speed blows the other way; in an exact calm the turned bearing
        // of the estimate gives the downwind direction.
        let (u10, downwind) = if fw < 0.0 {
            (-fw, (-we, -wn))
        } else {
            (fw, (we, wn))
        };
        let l = self
            .leeway
            .velocity_kn(u10, downwind, side, init.z_down, init.z_cross);
        let (e, n) = (fc * ce + l.0, fc * cn + l.1);
        Coord {
            x: self.to_grid[0][0] * e + self.to_grid[0][1] * n,
            y: self.to_grid[1][0] * e + self.to_grid[1][1] * n,
        }
    }

    /// Simulates particle `i`, writing its position at every record time into `out`
    /// (`records * 2` values).
    fn run_particle(
        &self,
        i: usize,
        lattice: &Lattice,
        out: &mut [f64],
        land: Option<&LandMask>,
        random_walk: RandomWalk,
    ) -> (ParticleMeta, Option<Fault>) {
        let (mut rng, mut walk) = self.rngs(i);
        let init = self.draw_init(&mut rng);
        let mut pos = init.start;
        let mut side = init.side;
        let mut next_jibe = if self.jibe_per_s > 0.0 {
            init.adrift_s + rng.sample::<f64, _>(Exp1) / self.jibe_per_s
        } else {
            f64::INFINITY
        };
        let mut strand_s = f64::INFINITY;
        if land.is_some_and(|l| l.contains(pos)) {
            // Drawn ashore: it never moves.
            strand_s = 0.0;
        }
        let diffusion = random_walk == RandomWalk::Included && self.diffusion_grid > 0.0;
        out[0] = pos.x;
        out[1] = pos.y;
        let adrift_s = init.adrift_s;
        let mut hints = [0usize; 2];
        let mut fault = None;

        // One midpoint step from s to e; returns false when the particle strands.
        let mut substep = |pos: &mut Coord<f64>,
                           s: f64,
                           e: f64,
                           side: f64,
                           shared: Option<&(Nominal, Nominal)>|
         -> Option<f64> {
            let dt = e - s;
            if dt.is_nan() || dt <= 0.0 {
                return None;
            }
            let half = 0.5 * dt;
            let finite = |v: Coord<f64>| v.x.is_finite() && v.y.is_finite();
            let (v, mid) = if let Some((c, w)) = shared {
                // The step's nominal environment, worked out once for all particles.
                (self.velocity_of(c, w, &init, side), *pos)
            } else {
                let mid = if self.uniform {
                    *pos
                } else {
                    let v0 = self.velocity(*pos, s, &init, side, &mut hints);
                    if !finite(v0) {
                        fault = Some(Fault { t_s: s, at: *pos });
                        return Some(s);
                    }
                    *pos + v0 * half
                };
                (self.velocity(mid, s + half, &init, side, &mut hints), mid)
            };
            if !finite(v) {
                // A gridded field with no value here: the particle stops and the run fails.
                fault = Some(Fault {
                    t_s: s + half,
                    at: mid,
                });
                return Some(s);
            }
            let mut new = *pos + v * dt;
            if diffusion {
                let scale = self.diffusion_grid * dt.sqrt();
                let zx: f64 = walk.sample(StandardNormal);
                let zy: f64 = walk.sample(StandardNormal);
                new.x += scale * zx;
                new.y += scale * zy;
            }
            if let Some(land) = land
                && let Some((frac, hit)) = land.first_crossing(*pos, new)
            {
                *pos = land.strand_point(*pos, hit);
                return Some(s + frac * dt);
            }
            *pos = new;
            None
        };

        for (k, bounds) in lattice.bounds.iter().enumerate() {
            let r1 = lattice.record_s[k + 1];
            if strand_s.is_infinite() && r1 > adrift_s {
                'steps: for (j, w) in bounds.windows(2).enumerate() {
                    let (a, b) = (w[0], w[1]);
                    if b <= adrift_s {
                        continue;
                    }
                    let mut s = a.max(adrift_s);
                    while next_jibe < b {
                        if let Some(t) = substep(&mut pos, s, next_jibe, side, None) {
                            strand_s = t;
                            break 'steps;
                        }
                        side = -side;
                        s = next_jibe;
                        next_jibe += rng.sample::<f64, _>(Exp1) / self.jibe_per_s;
                    }
                    // A whole step uses the shared nominal environment: the same numbers as
                    // evaluating it here (same midpoint time), without the per-particle cost.
                    let shared = if s == a {
                        lattice.nominal.as_ref().map(|n| &n[k][j])
                    } else {
                        None
                    };
                    if let Some(t) = substep(&mut pos, s, b, side, shared) {
                        strand_s = t;
                        break 'steps;
                    }
                }
            }
            out[2 * k + 2] = pos.x;
            out[2 * k + 3] = pos.y;
        }
        (ParticleMeta { adrift_s, strand_s }, fault)
    }

    /// The error for a fault: which field has no value there and why.
    fn field_gap(&self, start: Time, f: Fault) -> DriftError {
        let (lon, lat) = self.frame.to_lon_lat(f.at);
        let time = start + TimeDelta::milliseconds((f.t_s * 1e3).round() as i64);
        for (name, env) in [("current", &self.current), ("wind", &self.wind)] {
            if let Some((field, _)) = env.field()
                && let Some(what) = field.gap_at(lon, lat, time)
            {
                return DriftError::FieldGap {
                    field: name.to_owned(),
                    what,
                };
            }
        }
        DriftError::FieldGap {
            field: "current".to_owned(),
            what: format!(
                "the environment gives no finite value at {lon:.3}, {lat:.3} (lon, lat) at {}",
                time.to_rfc3339()
            ),
        }
    }

    /// Runs particles `0..n` without land or diffusion and returns the mean and RMS radius of
    /// the cloud at each record.
    fn pilot(&self, n: usize, lattice: &Lattice) -> Vec<(Coord<f64>, f64)> {
        let r = lattice.record_s.len();
        let mut out = vec![0.0; n * r * 2];
        out.par_chunks_mut(r * 2).enumerate().for_each(|(i, o)| {
            self.run_particle(i, lattice, o, None, RandomWalk::Omitted);
        });
        let w = vec![1.0; n];
        (0..r)
            .map(|k| {
                let x: Vec<f64> = (0..n).map(|i| out[(i * r + k) * 2]).collect();
                let y: Vec<f64> = (0..n).map(|i| out[(i * r + k) * 2 + 1]).collect();
                let s = Spread::of_points(&x, &y, &w).unwrap_or(Spread {
                    mean: Coord { x: 0.0, y: 0.0 },
                    cov: [[0.0; 2]; 2],
                });
                (s.mean, s.rms_radius_m())
            })
            .collect()
    }

    /// The automatic step: the longest of min(record interval, 1 h) / 2^j (j <= 9) for which
    /// halving the step moves the pilot cloud's mean, at every record, by at most 0.5 % of its
    /// RMS radius (half the 1 % target, as the pilot is a subset), or 1 m for a cloud with no
    /// spread.
    fn automatic_step(
        &self,
        particles: usize,
        record_s: &[f64],
        record_every_s: f64,
        breaks: &[f64],
    ) -> f64 {
        let n = particles.min(PILOT_PARTICLES);
        let mut h = record_every_s.min(MAX_AUTO_STEP_S);
        if record_s.len() < 2 {
            return h;
        }
        let lattice = |h: f64| {
            Lattice::with_step(record_s.to_vec(), h, breaks).tabulate(&self.current, &self.wind)
        };
        let mut coarse = self.pilot(n, &lattice(h));
        for _ in 0..MAX_AUTO_HALVINGS {
            let fine = self.pilot(n, &lattice(h / 2.0));
            let ok = coarse.iter().zip(&fine).all(|((mc, _), (mf, rf))| {
                let shift = (mc.x - mf.x).hypot(mc.y - mf.y);
                shift <= (0.005 * rf).max(1.0)
            });
            if ok {
                return h;
            }
            h /= 2.0;
            coarse = fine;
        }
        h
    }
}

/// UTM point scale factor at a position: grid length over ground length along the meridian,
/// by a central difference of the projection over +-1e-4 degrees, divided by the WGS84
/// meridian radius of curvature M = a (1 - e^2) / (1 - e^2 sin^2 phi)^(3/2) (common practice,
/// any geodesy text). The tests check the result against geo's Karney geodesic.
fn point_scale(frame: &Frame, lon_deg: f64, lat_deg: f64) -> f64 {
    let d = 1e-4;
    let a = frame.to_xy(lon_deg, lat_deg - d);
    let b = frame.to_xy(lon_deg, lat_deg + d);
    let grid = (b.x - a.x).hypot(b.y - a.y);
    let e2 = WGS84_F * (2.0 - WGS84_F);
    let s = lat_deg.to_radians().sin();
    let m = WGS84_A * (1.0 - e2) / (1.0 - e2 * s * s).powf(1.5);
    grid / (m * (2.0 * d).to_radians())
}

/// Most particles a drift scenario may ask for (20 000 000: 16 bytes each per record time).
pub const MAX_PARTICLES: usize = 20_000_000;

fn check_finite_non_negative(field: &str, value: f64) -> Result<(), DriftError> {
    if !value.is_finite() {
        return Err(DriftError::NotFinite {
            field: field.to_owned(),
            value,
        });
    }
    if value < 0.0 {
        return Err(DriftError::Negative {
            field: field.to_owned(),
            value,
        });
    }
    Ok(())
}

fn check_interval(field: &str, value: f64) -> Result<(), DriftError> {
    if value.is_finite() && value > 0.0 {
        Ok(())
    } else {
        Err(DriftError::BadInterval {
            field: field.to_owned(),
            value,
        })
    }
}

impl DriftScenario {
    /// Checks every field; [`simulate()`] calls it first.
    ///
    /// # Errors
    /// The first problem found, naming its field (see [`DriftError`]).
    pub fn validate(&self) -> Result<(), DriftError> {
        let (lon, lat) = self.lkp_lon_lat;
        if !(lon.is_finite()
            && lat.is_finite()
            && (-180.0..=180.0).contains(&lon)
            && (-80.0..=84.0).contains(&lat))
        {
            return Err(DriftError::BadPosition { lon, lat });
        }
        check_finite_non_negative("position_sigma_m", self.position_sigma_m)?;
        if self.adrift_latest < self.adrift_earliest {
            return Err(DriftError::AdriftWindowReversed {
                earliest: self.adrift_earliest.to_rfc3339(),
                latest: self.adrift_latest.to_rfc3339(),
            });
        }
        self.current.validate("current")?;
        self.wind.validate("wind")?;
        self.leeway.validate()?;
        check_finite_non_negative("diffusivity_m2_s", self.diffusivity_m2_s)?;
        if self.particles == 0 {
            return Err(DriftError::NoParticles);
        }
        if self.particles > MAX_PARTICLES {
            return Err(DriftError::TooManyParticles {
                particles: self.particles,
            });
        }
        Ok(())
    }
}

/// Runs the Monte Carlo drift.
///
/// Each particle draws, from its own random stream (ChaCha8 seeded with `seed`, stream
/// 2 * index; its random walk uses stream 2 * index + 1, so results do not depend on the
/// number of threads):
/// * its start position: the LKP plus an isotropic normal offset of `position_sigma_m`;
/// * its adrift time, uniform in [`adrift_earliest`, `adrift_latest`];
/// * persistent errors for the current and for the wind: standard normals z_s and z_d held for
///   the whole run, so that its speed is `speed + z_s * speed_sigma` and its direction
///   `direction + z_d * direction_sigma` at every time (sigmas as interpolated there). Each
///   particle is thus one member of an ensemble of possible environments, a bias rather than
///   noise: the estimates are wrong by an unknown but lasting amount. A calm (zero nominal
///   speed) has no direction; its speed error points along a bearing the particle draws
///   uniformly;
/// * its leeway errors and side (see [`Leeway`]), and its jibe times (Poisson).
///
/// It stays at its start position until its adrift time, then moves with velocity =
/// current + leeway(wind), plus a random walk `sqrt(2 K dt) N(0, 1)` per axis when K =
/// `diffusivity_m2_s` > 0 (Fickian diffusion, variance 2 K t per axis). Velocities are true
/// east/north; they are turned into the working frame with the meridian convergence and
/// scaled by the UTM point scale, both taken **at the LKP** for the whole run (the grid
/// bearing is the true bearing minus the convergence; over 100 km from the LKP the
/// convergence changes by about 1 degree at mid latitudes, far below the direction error of any
/// current or wind estimate). Integration is the explicit midpoint method (second order); a
/// jibe or the adrift time splits a step exactly where it falls, and steps end at every series
/// sample time and gridded time node, where the interpolated environment has a kink. With land, a step that meets
/// the coastline strands the particle there (see [`LandMask`]); a particle drawn on land is
/// stranded from the start.
///
/// The automatic step (`options.step_s == None`) tries min(`record_every_s`, 1 h) and halves
/// it (at most 9 times) until halving it again moves the mean of a pilot cloud (the first 512
/// particles, no land, no random walk) by at most 0.5 % of its RMS radius at every record
/// time, or 1 m for a cloud without spread. The random walk is exact in distribution for any
/// step, so it plays no part in the choice.
///
/// `progress(done, total)` is called after each chunk of [`CHUNK_PARTICLES`] particles, from
/// worker threads, with counts of particles.
///
/// # Errors
/// Any [`DriftError`] from [`DriftScenario::validate`]; [`DriftError::EndBeforeAdrift`],
/// [`DriftError::BadInterval`] for the options; [`DriftError::TooLarge`] when the records
/// would exceed [`MAX_RECORD_BYTES`]; [`DriftError::TooManySteps`] when `step_s` would make
/// more than [`MAX_STEPS`] steps.
pub fn simulate(
    scenario: &DriftScenario,
    frame: &Frame,
    land: Option<&LandMask>,
    options: &SimulationOptions,
    progress: &(dyn Fn(u64, u64) + Sync),
) -> Result<DriftRun, DriftError> {
    scenario.validate()?;
    check_interval("record_every_s", options.record_every_s)?;
    if let Some(step) = options.step_s {
        check_interval("step_s", step)?;
    }
    let start = scenario.adrift_earliest;
    if options.end < start {
        return Err(DriftError::EndBeforeAdrift {
            end: options.end.to_rfc3339(),
            earliest: start.to_rfc3339(),
        });
    }
    let end_s = (options.end - start).as_seconds_f64();
    let n = scenario.particles;
    // Count before allocating anything.
    let records_f =
        (end_s / options.record_every_s).ceil() + 1.0 + options.also_record_at.len() as f64;
    let bytes_f = n as f64 * records_f * RECORD_BYTES;
    if bytes_f > MAX_RECORD_BYTES as f64 {
        return Err(DriftError::TooLarge {
            particles: n,
            records: records_f.min(usize::MAX as f64) as usize,
            bytes: bytes_f.min(u128::MAX as f64) as u128,
            limit: MAX_RECORD_BYTES,
        });
    }
    if let Some(step) = options.step_s {
        let steps = (end_s / step).ceil();
        if steps > MAX_STEPS {
            return Err(DriftError::TooManySteps {
                step_s: step,
                steps,
                limit: MAX_STEPS,
            });
        }
    }
    let extra: Vec<f64> = options
        .also_record_at
        .iter()
        .map(|t| (*t - start).as_seconds_f64())
        .collect();
    let record_s = Lattice::record_times(end_s, options.record_every_s, &extra);
    let records = record_s.len();

    let model = Model::new(scenario, frame);
    let mut breaks = model.current.breaks();
    breaks.extend(model.wind.breaks());
    let step_s = match options.step_s {
        Some(s) => s,
        None => model.automatic_step(n, &record_s, options.record_every_s, &breaks),
    };
    let lattice =
        Lattice::with_step(record_s, step_s, &breaks).tabulate(&model.current, &model.wind);

    let mut meta = vec![ParticleMeta::default(); n];
    let done = AtomicU64::new(0);
    let total = n as u64;
    let first_fault: std::sync::Mutex<Option<(usize, Fault)>> = std::sync::Mutex::new(None);
    let chunks: Vec<ChunkRecords> = meta
        .par_chunks_mut(CHUNK_PARTICLES)
        .enumerate()
        .map(|(c, meta_chunk)| {
            let len = meta_chunk.len();
            let mut one = vec![0.0; records * 2];
            let mut chunk = ChunkRecords {
                len,
                positions: vec![0.0; len * records * 2],
            };
            for (j, m) in meta_chunk.iter_mut().enumerate() {
                let i = c * CHUNK_PARTICLES + j;
                let (meta, fault) =
                    model.run_particle(i, &lattice, &mut one, land, RandomWalk::Included);
                *m = meta;
                if let Some(f) = fault {
                    // The lowest particle index is kept: the same report at any thread count.
                    let mut first = first_fault.lock().unwrap_or_else(|e| e.into_inner());
                    if first.is_none_or(|(k, _)| i < k) {
                        *first = Some((i, f));
                    }
                }
                for (k, xy) in one.chunks_exact(2).enumerate() {
                    let at = (k * len + j) * 2;
                    chunk.positions[at..at + 2].copy_from_slice(xy);
                }
            }
            let count = len as u64;
            let now = done.fetch_add(count, Ordering::Relaxed) + count;
            progress(now, total);
            chunk
        })
        .collect();

    let first_fault = first_fault.into_inner().unwrap_or_else(|e| e.into_inner());
    if let Some((_, f)) = first_fault {
        return Err(model.field_gap(start, f));
    }
    Ok(DriftRun {
        start,
        record_s: lattice.record_s,
        chunks,
        meta,
        step_s: step_s.min(options.record_every_s),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;
    use seekgrid_core::units::hours_to_s;

    #[test]
    fn the_working_frame_map_turns_true_north_onto_the_projected_meridian() {
        // The grid image of a short step due true north, by projecting two lon/lat points,
        // must equal the map applied to (0, 1): this checks the convergence sign and the
        // point scale against the projection itself. computed.
        let frame = Frame::for_position(-30.5, 20.2).unwrap();
        for (lon, lat) in [(-30.5, 20.2), (-35.9, -40.0), (-33.0, 60.0)] {
            let g = frame.convergence_deg(lon, lat).to_radians();
            let k = point_scale(&frame, lon, lat);
            let d = 1e-5;
            let a = frame.to_xy(lon, lat);
            let b = frame.to_xy(lon, lat + d);
            let ground = WGS84_A * (1.0 - WGS84_F * (2.0 - WGS84_F))
                / (1.0 - WGS84_F * (2.0 - WGS84_F) * lat.to_radians().sin().powi(2)).powf(1.5)
                * d.to_radians();
            let (dx, dy) = (b.x - a.x, b.y - a.y);
            // Grid components of true north: (-sin g, cos g) scaled by k.
            assert_abs_diff_eq!(dx / ground, -k * g.sin(), epsilon = 1e-6);
            assert_abs_diff_eq!(dy / ground, k * g.cos(), epsilon = 1e-6);
            assert!((0.9995..1.001).contains(&k), "{k} at {lon} {lat}");
        }
    }

    #[test]
    fn the_shared_step_environment_gives_the_same_numbers_as_evaluating_it_per_particle() {
        // Fast code against its slow reference: the per-step table must not change one bit.
        use chrono::{Duration, TimeZone, Utc};
        let t0 = Utc.with_ymd_and_hms(2024, 5, 1, 0, 0, 0).unwrap();
        let est = |speed_kn: f64, direction_deg: f64| crate::VectorEstimate {
            speed_kn,
            direction_deg,
            speed_sigma_kn: 0.2 * speed_kn,
            direction_sigma_deg: 15.0,
        };
        let scenario = DriftScenario {
            lkp_lon_lat: (-30.5, 20.2),
            position_sigma_m: 500.0,
            adrift_earliest: t0,
            adrift_latest: t0 + Duration::hours(2),
            current: Environment::Series(
                (0..7)
                    .map(|h| (t0 + Duration::hours(h), est(0.5, 40.0 * h as f64)))
                    .collect(),
            ),
            wind: Environment::Series(vec![
                (t0, est(10.0, 180.0)),
                (t0 + Duration::minutes(150), est(0.0, 200.0)),
                (t0 + Duration::hours(6), est(20.0, 270.0)),
            ]),
            leeway: Leeway {
                downwind_slope: 0.03,
                downwind_offset_kn: 0.05,
                downwind_sigma_kn: 0.02,
                crosswind_slope: 0.01,
                crosswind_offset_kn: 0.01,
                crosswind_sigma_kn: 0.01,
                jibe_per_h: 0.3,
            },
            diffusivity_m2_s: 2.0,
            particles: 200,
            seed: 3,
        };
        let frame = Frame::for_position(-30.5, 20.2).unwrap();
        let model = Model::new(&scenario, &frame);
        let mut breaks = model.current.breaks();
        breaks.extend(model.wind.breaks());
        let record_s = Lattice::record_times(hours_to_s(6.0), SECONDS_PER_HOUR, &[]);
        let plain = Lattice::with_step(record_s, 1200.0, &breaks);
        let table = plain.clone().tabulate(&model.current, &model.wind);
        assert!(plain.nominal.is_none() && table.nominal.is_some());
        let r = plain.record_s.len();
        for i in 0..scenario.particles {
            let (mut a, mut b) = (vec![0.0; 2 * r], vec![0.0; 2 * r]);
            let (ma, _) = model.run_particle(i, &plain, &mut a, None, RandomWalk::Included);
            let (mb, _) = model.run_particle(i, &table, &mut b, None, RandomWalk::Included);
            assert_eq!(a, b, "particle {i}");
            assert_eq!(ma.strand_s, mb.strand_s);
        }
    }

    #[test]
    fn record_times_end_at_the_end_and_steps_end_at_kinks() {
        // Plain times in seconds (no unit conversion): the literals are the checked record
        // and step times, worked out by hand (computed).
        assert_eq!(
            Lattice::record_times(7200.0, 3600.0, &[]),
            vec![0.0, 3600.0, 7200.0]
        );
        assert_eq!(
            Lattice::record_times(5000.0, 3600.0, &[]),
            vec![0.0, 3600.0, 5000.0]
        );
        assert_eq!(Lattice::record_times(0.0, 600.0, &[]), vec![0.0]);
        // Extra times inside the span are added once; outside it, or on a record, ignored.
        assert_eq!(
            Lattice::record_times(
                7200.0,
                3600.0,
                &[-5.0, 1234.5, 3600.0, 3600.0004, 7199.9999, 9000.0]
            ),
            vec![0.0, 1234.5, 3600.0, 7200.0]
        );
        let l = Lattice::with_step(vec![0.0, 3600.0], 1000.0, &[100.0, 1800.0, 5000.0]);
        assert_eq!(l.bounds[0], vec![0.0, 100.0, 900.0, 1800.0, 2700.0, 3600.0]);
    }
}
