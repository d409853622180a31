//! Environment estimates: total water current and wind, constant, as a time series or gridded.
//!
//! Direction conventions (docs/architecture.md, "Cross-cutting invariants"): a current is given
//! by the true bearing it flows *toward* ([`Convention::Toward`]), a wind by the true bearing it
//! blows *from* ([`Convention::From`]). Gridded fields carry velocity components `u_kn` (east)
//! and `v_kn` (north) instead, which always say where the water or air moves toward, as in ocean
//! and weather model output; the convention does not apply to them.

use crate::Time;
use crate::error::DriftError;
use seekgrid_core::units::{MPS_PER_KNOT, bearing_to_unit_vector};

/// A speed and direction with their 1-sigma errors.
///
/// `direction_deg` is a true bearing, degrees clockwise from north; for a current it is the
/// direction the water flows toward, for a wind the direction it blows from (see
/// [`Convention`]). Speeds in knots; for wind, the speed is read as the 10 m wind U10 that the
/// leeway model expects.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct VectorEstimate {
    /// Speed, knots (>= 0).
    pub speed_kn: f64,
    /// Direction, true degrees (toward for current, from for wind).
    pub direction_deg: f64,
    /// 1-sigma error of the speed, knots (>= 0).
    pub speed_sigma_kn: f64,
    /// 1-sigma error of the direction, degrees (>= 0).
    pub direction_sigma_deg: f64,
}

impl VectorEstimate {
    /// The nominal velocity (no error) as (east, north) knots in the direction of motion.
    ///
    /// With [`Convention::From`] the vector points to `direction_deg + 180`.
    #[must_use]
    pub fn velocity_kn(&self, convention: Convention) -> (f64, f64) {
        let (e, n) = bearing_to_unit_vector(convention.toward_bearing_deg(self.direction_deg));
        (self.speed_kn * e, self.speed_kn * n)
    }

    /// The nominal velocity (no error) as (east, north) metres per second in the direction of
    /// motion: [`VectorEstimate::velocity_kn`] times [`MPS_PER_KNOT`].
    #[must_use]
    pub fn velocity_mps(&self, convention: Convention) -> (f64, f64) {
        let (e, n) = self.velocity_kn(convention);
        (e * MPS_PER_KNOT, n * MPS_PER_KNOT)
    }

    pub(crate) fn validate(&self, field: &str) -> Result<(), DriftError> {
        for (name, value) in [
            ("speed_kn", self.speed_kn),
            ("direction_deg", self.direction_deg),
            ("speed_sigma_kn", self.speed_sigma_kn),
            ("direction_sigma_deg", self.direction_sigma_deg),
        ] {
            if !value.is_finite() {
                return Err(DriftError::NotFinite {
                    field: format!("{field}.{name}"),
                    value,
                });
            }
            if name != "direction_deg" && value < 0.0 {
                return Err(DriftError::Negative {
                    field: format!("{field}.{name}"),
                    value,
                });
            }
        }
        Ok(())
    }
}

/// How the `direction_deg` of a [`VectorEstimate`] is read.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Convention {
    /// The direction of motion (currents: "setting toward 090").
    Toward,
    /// The direction of origin (winds: "wind from 270" moves air toward 090).
    From,
}

impl Convention {
    /// The convention of the total water current in a [`crate::DriftScenario`].
    pub const CURRENT: Convention = Convention::Toward;
    /// The convention of the wind in a [`crate::DriftScenario`].
    pub const WIND: Convention = Convention::From;

    /// The true bearing of motion for a direction given in this convention, degrees in [0, 360).
    #[must_use]
    pub fn toward_bearing_deg(self, direction_deg: f64) -> f64 {
        match self {
            Convention::Toward => seekgrid_core::units::normalise_deg(direction_deg),
            Convention::From => seekgrid_core::units::normalise_deg(direction_deg + 180.0),
        }
    }
}

/// One node of a gridded field: position, time and velocity components.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GridSample {
    /// Longitude, degrees east.
    pub lon_deg: f64,
    /// Latitude, degrees north.
    pub lat_deg: f64,
    /// Valid time.
    pub time: Time,
    /// Eastward velocity component, knots (positive toward east).
    pub u_kn: f64,
    /// Northward velocity component, knots (positive toward north).
    pub v_kn: f64,
}

/// A velocity field on a regular longitude/latitude lattice at a sequence of times,
/// interpolated bilinearly in space and linearly in time.
///
/// Beyond its times the value at the first or last time is used (held constant), as a
/// [`Environment::Series`] is beyond its ends. Outside its box in space the value at the
/// nearest edge is used when [`BeyondBox::HoldEdge`]; with [`BeyondBox::Refuse`] (forecast
/// files) a particle that leaves the box stops the simulation with
/// [`DriftError::FieldGap`] naming the side. A node with no value (NaN: a fill value of a
/// forecast file that is not over land) does the same when a particle needs it. An axis with a
/// single node is constant along that axis. The sigmas apply to every node. Build it with
/// [`GriddedField::from_samples`] (nodes in any order) or [`GriddedField::on_lattice`] (axes
/// and arrays, as a forecast file gives them).
#[derive(Debug, Clone, PartialEq)]
pub struct GriddedField {
    lon0_deg: f64,
    dlon_deg: f64,
    nlon: usize,
    lat0_deg: f64,
    dlat_deg: f64,
    nlat: usize,
    t0: Time,
    /// The time step when the times are evenly spaced (the fast path), else `None`.
    dt_s: Option<f64>,
    /// Seconds of each time after `t0`, strictly increasing, `times_s[0] == 0`.
    times_s: Vec<f64>,
    nt: usize,
    beyond_box: BeyondBox,
    /// Whether the longitudes go round the whole earth (`nlon * dlon == 360`): the last
    /// column then neighbours the first, and the box has no west or east side.
    lon_periodic: bool,
    /// What the field is, for messages (`"current"`, `"wind from wind.grib2 (10u, 10v)"`).
    label: String,
    /// Velocity components, index `(it * nlat + ilat) * nlon + ilon`.
    u_kn: Vec<f64>,
    v_kn: Vec<f64>,
    speed_sigma_kn: f64,
    direction_sigma_deg: f64,
}

/// The distinct values of one lattice axis, checked to be evenly spaced.
fn regular_axis(mut values: Vec<f64>, axis: &str) -> Result<(f64, f64, usize), DriftError> {
    values.sort_by(f64::total_cmp);
    let span = values[values.len() - 1] - values[0];
    let tol = 1e-9 * span.abs().max(1.0);
    values.dedup_by(|a, b| (*a - *b).abs() <= tol);
    let n = values.len();
    if n == 1 {
        return Ok((values[0], 0.0, 1));
    }
    let step = span / (n - 1) as f64;
    for (i, v) in values.iter().enumerate() {
        let expected = values[0] + step * i as f64;
        if (v - expected).abs() > 1e-6 * step {
            return Err(DriftError::BadGrid {
                field: "gridded".to_owned(),
                what: format!(
                    "{axis} values are not evenly spaced ({v} where {expected} was expected); give samples on a regular lattice"
                ),
            });
        }
    }
    Ok((values[0], step, n))
}

fn axis_index(value: f64, start: f64, step: f64) -> usize {
    if step == 0.0 {
        0
    } else {
        ((value - start) / step).round() as usize
    }
}

impl GriddedField {
    /// A field from its nodes, in any order. The nodes must form a complete regular lattice:
    /// evenly spaced longitudes, latitudes and times, one sample per node.
    ///
    /// # Errors
    /// [`DriftError::BadGrid`] when there are no samples, a value is not finite, the spacing is
    /// uneven, a node is missing or given twice; [`DriftError::NotFinite`] or
    /// [`DriftError::Negative`] for a bad sigma.
    pub fn from_samples(
        samples: &[GridSample],
        speed_sigma_kn: f64,
        direction_sigma_deg: f64,
    ) -> Result<Self, DriftError> {
        let bad = |what: String| DriftError::BadGrid {
            field: "gridded".to_owned(),
            what,
        };
        for (name, value) in [
            ("gridded.speed_sigma_kn", speed_sigma_kn),
            ("gridded.direction_sigma_deg", direction_sigma_deg),
        ] {
            if !value.is_finite() {
                return Err(DriftError::NotFinite {
                    field: name.to_owned(),
                    value,
                });
            }
            if value < 0.0 {
                return Err(DriftError::Negative {
                    field: name.to_owned(),
                    value,
                });
            }
        }
        let Some(first) = samples.first() else {
            return Err(bad("it has no samples; give at least one node".to_owned()));
        };
        if let Some(i) = samples.iter().position(|s| {
            !(s.lon_deg.is_finite()
                && s.u_kn.is_finite()
                && s.v_kn.is_finite()
                && (-90.0..=90.0).contains(&s.lat_deg))
        }) {
            return Err(bad(format!(
                "sample {i} has a non-finite value or a latitude outside -90..90; check that row"
            )));
        }
        let t0 = samples.iter().map(|s| s.time).min().unwrap_or(first.time);
        let secs = |t: Time| (t - t0).as_seconds_f64();
        let (lon0, dlon, nlon) = regular_axis(samples.iter().map(|s| s.lon_deg).collect(), "lon")?;
        let (lat0, dlat, nlat) = regular_axis(samples.iter().map(|s| s.lat_deg).collect(), "lat")?;
        let (_, dt, nt) = regular_axis(samples.iter().map(|s| secs(s.time)).collect(), "time")?;
        let nodes = nlon * nlat * nt;
        if nodes != samples.len() {
            return Err(bad(format!(
                "{} samples do not fill the {nlon} x {nlat} x {nt} (lon x lat x time) lattice of {nodes} nodes; give exactly one sample per node",
                samples.len()
            )));
        }
        let mut u = vec![f64::NAN; nodes];
        let mut v = vec![f64::NAN; nodes];
        for (i, s) in samples.iter().enumerate() {
            let ilon = axis_index(s.lon_deg, lon0, dlon);
            let ilat = axis_index(s.lat_deg, lat0, dlat);
            let it = axis_index(secs(s.time), 0.0, dt);
            let k = (it * nlat + ilat) * nlon + ilon;
            if !u[k].is_nan() {
                return Err(bad(format!(
                    "sample {i} at [{}, {}] {} repeats a node; give each node once",
                    s.lon_deg,
                    s.lat_deg,
                    s.time.to_rfc3339()
                )));
            }
            u[k] = s.u_kn;
            v[k] = s.v_kn;
        }
        Ok(Self {
            lon0_deg: lon0,
            dlon_deg: dlon,
            nlon,
            lat0_deg: lat0,
            dlat_deg: dlat,
            nlat,
            t0,
            dt_s: Some(dt),
            times_s: (0..nt).map(|k| k as f64 * dt).collect(),
            nt,
            beyond_box: BeyondBox::HoldEdge,
            lon_periodic: false,
            label: "gridded".to_owned(),
            u_kn: u,
            v_kn: v,
            speed_sigma_kn,
            direction_sigma_deg,
        })
    }

    /// A field from its axes and arrays, as a forecast file gives them: `lon` and `lat` regular
    /// axes (ascending), `times` strictly increasing (evenly spaced or not), and `u_kn`,
    /// `v_kn` with index `(it * nlat + ilat) * nlon + ilon`. A NaN component marks a node with
    /// no value (see [`GriddedField`]); every other value must be finite. `label` names the
    /// field in the messages of [`DriftError::FieldGap`].
    ///
    /// # Errors
    /// [`DriftError::BadGrid`] when an axis is empty or not ascending, a step is not finite
    /// and positive, the arrays do not have one value per node, a component is infinite, or
    /// the times do not increase; [`DriftError::NotFinite`] or [`DriftError::Negative`] for a
    /// bad sigma.
    #[allow(clippy::too_many_arguments)]
    pub fn on_lattice(
        lon: RegularAxis,
        lat: RegularAxis,
        times: &[Time],
        u_kn: Vec<f64>,
        v_kn: Vec<f64>,
        sigmas: (f64, f64),
        beyond_box: BeyondBox,
        label: &str,
    ) -> Result<Self, DriftError> {
        let bad = |what: String| DriftError::BadGrid {
            field: "gridded".to_owned(),
            what,
        };
        let (speed_sigma_kn, direction_sigma_deg) = sigmas;
        for (name, value) in [
            ("gridded.speed_sigma_kn", speed_sigma_kn),
            ("gridded.direction_sigma_deg", direction_sigma_deg),
        ] {
            if !value.is_finite() {
                return Err(DriftError::NotFinite {
                    field: name.to_owned(),
                    value,
                });
            }
            if value < 0.0 {
                return Err(DriftError::Negative {
                    field: name.to_owned(),
                    value,
                });
            }
        }
        for (name, axis) in [("lon", &lon), ("lat", &lat)] {
            if axis.n == 0
                || !axis.start_deg.is_finite()
                || !(axis.n == 1 || (axis.step_deg.is_finite() && axis.step_deg > 0.0))
            {
                return Err(bad(format!(
                    "the {name} axis ({} nodes from {} by {}) is empty or not ascending; give an ascending regular axis",
                    axis.n, axis.start_deg, axis.step_deg
                )));
            }
        }
        let Some(&t0) = times.first() else {
            return Err(bad("it has no times; give at least one".to_owned()));
        };
        let times_s: Vec<f64> = times.iter().map(|t| (*t - t0).as_seconds_f64()).collect();
        if let Some(k) = (1..times_s.len()).find(|&k| times_s[k] <= times_s[k - 1]) {
            return Err(bad(format!(
                "time {} ({}) does not come after the time before it; give increasing times",
                k,
                times[k].to_rfc3339()
            )));
        }
        let nt = times_s.len();
        let nodes = lon.n * lat.n * nt;
        if u_kn.len() != nodes || v_kn.len() != nodes {
            return Err(bad(format!(
                "{} u and {} v values for the {} x {} x {nt} (lon x lat x time) lattice of {nodes} nodes; give one value per node",
                u_kn.len(),
                v_kn.len(),
                lon.n,
                lat.n
            )));
        }
        if let Some(i) = (0..nodes).find(|&i| u_kn[i].is_infinite() || v_kn[i].is_infinite()) {
            return Err(bad(format!(
                "node {i} has an infinite component; check the file's values"
            )));
        }
        let dt_s = if nt < 2 {
            Some(0.0)
        } else {
            let dt = times_s[nt - 1] / (nt - 1) as f64;
            times_s
                .iter()
                .enumerate()
                .all(|(k, &t)| (t - k as f64 * dt).abs() <= 1e-9 * dt)
                .then_some(dt)
        };
        Ok(Self {
            lon0_deg: lon.start_deg,
            dlon_deg: if lon.n == 1 { 0.0 } else { lon.step_deg },
            nlon: lon.n,
            lat0_deg: lat.start_deg,
            dlat_deg: if lat.n == 1 { 0.0 } else { lat.step_deg },
            nlat: lat.n,
            t0,
            dt_s,
            times_s,
            nt,
            beyond_box,
            lon_periodic: lon.n > 1
                && (lon.step_deg * lon.n as f64 - 360.0).abs() <= 1e-3 * lon.step_deg,
            label: label.to_owned(),
            u_kn,
            v_kn,
            speed_sigma_kn,
            direction_sigma_deg,
        })
    }

    /// The first time of the field.
    #[must_use]
    pub fn first_time(&self) -> Time {
        self.t0
    }

    /// The box the field covers: (west, south, east, north) degrees, the longitudes as given.
    #[must_use]
    pub fn bounds_deg(&self) -> (f64, f64, f64, f64) {
        (
            self.lon0_deg,
            self.lat0_deg,
            self.lon0_deg + self.dlon_deg * (self.nlon - 1) as f64,
            self.lat0_deg + self.dlat_deg * (self.nlat - 1) as f64,
        )
    }

    /// What is wrong at a position and time where the interpolation gives no value (see
    /// [`GriddedField`]): the side of the box the position is beyond, or the node with no
    /// value; `None` where the field has a value.
    #[must_use]
    pub fn gap_at(&self, lon_deg: f64, lat_deg: f64, time: Time) -> Option<String> {
        let t_s = (time - self.t0).as_seconds_f64();
        let (u, v) = self.velocity_kn_at_s(lon_deg, lat_deg, t_s);
        if u.is_finite() && v.is_finite() {
            return None;
        }
        let when = time.format("%Y-%m-%dT%H:%MZ");
        let lon = self.lon_near_centre(lon_deg);
        if let Some((side, edge)) = self.outside_side(lon, lat_deg) {
            return Some(format!(
                "the {} does not reach the drift: a particle is at {lon_deg:.3}, {lat_deg:.3} (lon, lat) at {when}, beyond the {side} side of the field's box ({edge}); give a field of a larger area, or hold its edge values beyond the box (hold_environment_beyond_series = true in an incident file)",
                self.label
            ));
        }
        let (i0, _, i1) = self.lon_cell(lon);
        let (j0, _) = bracket(lat_deg, self.lat0_deg, self.dlat_deg, self.nlat);
        let (k0, _) = self.bracket_time(t_s);
        let node = [k0, (k0 + 1).min(self.nt - 1)]
            .into_iter()
            .flat_map(|k| {
                [j0, (j0 + 1).min(self.nlat - 1)]
                    .into_iter()
                    .flat_map(move |j| [i0, i1].into_iter().map(move |i| (i, j, k)))
            })
            .find(|&(i, j, k)| {
                let n = self.idx(i, j, k);
                self.u_kn[n].is_nan() || self.v_kn[n].is_nan()
            });
        let (i, j, k) = node.unwrap_or((i0, j0, k0));
        let node_time = self.t0 + chrono::TimeDelta::milliseconds((self.times_s[k] * 1e3) as i64);
        Some(format!(
            "the {} has no value (a fill value or NaN that no coastline makes land) at the node {:.4}, {:.4} (lon, lat) at {}, which a particle at {lon_deg:.3}, {lat_deg:.3} needs at {when}; if that node is land, give a coastline that covers it (its current is then zero), otherwise give a field with a value there",
            self.label,
            self.lon0_deg + self.dlon_deg * i as f64,
            self.lat0_deg + self.dlat_deg * j as f64,
            node_time.format("%Y-%m-%dT%H:%MZ")
        ))
    }

    fn idx(&self, i: usize, j: usize, k: usize) -> usize {
        (k * self.nlat + j) * self.nlon + i
    }

    /// The longitude brought to the turn nearest the lattice centre (antimeridian lattices).
    #[inline]
    fn lon_near_centre(&self, lon_deg: f64) -> f64 {
        let centre = self.lon0_deg + 0.5 * self.dlon_deg * (self.nlon - 1) as f64;
        lon_deg - 360.0 * ((lon_deg - centre) / 360.0).round()
    }

    /// The columns either side of a longitude and the weight of the eastern one: clamped to
    /// the box, or round the earth when the longitudes go all the way round.
    #[inline]
    fn lon_cell(&self, lon: f64) -> (usize, f64, usize) {
        if self.lon_periodic {
            // Between the last column and the first as between any two.
            let f = ((lon - self.lon0_deg) / self.dlon_deg).rem_euclid(self.nlon as f64);
            let i = (f.floor() as usize).min(self.nlon - 1);
            (i, f - i as f64, (i + 1) % self.nlon)
        } else {
            let (i, w) = bracket(lon, self.lon0_deg, self.dlon_deg, self.nlon);
            (i, w, (i + 1).min(self.nlon - 1))
        }
    }

    /// The side of the box a position is beyond and the edge there, or `None` inside (an
    /// axis of one node has no sides).
    fn outside_side(&self, lon: f64, lat: f64) -> Option<(&'static str, String)> {
        let (w, s, e, n) = self.bounds_deg();
        // A hair of tolerance: a particle exactly on the edge is inside.
        let tol = 1e-9;
        if self.nlon > 1 && !self.lon_periodic && lon < w - tol {
            Some(("west", format!("longitude {w}")))
        } else if self.nlon > 1 && !self.lon_periodic && lon > e + tol {
            Some(("east", format!("longitude {e}")))
        } else if self.nlat > 1 && lat < s - tol {
            Some(("south", format!("latitude {s}")))
        } else if self.nlat > 1 && lat > n + tol {
            Some(("north", format!("latitude {n}")))
        } else {
            None
        }
    }

    /// Lower time index and weight of the upper time, clamped to the times.
    #[inline]
    fn bracket_time(&self, t_s: f64) -> (usize, f64) {
        match self.dt_s {
            Some(dt) => bracket(t_s, 0.0, dt, self.nt),
            None => {
                let n = self.nt;
                let t = t_s.clamp(0.0, self.times_s[n - 1]);
                let j = self.times_s.partition_point(|&x| x <= t).clamp(1, n - 1);
                let (a, b) = (self.times_s[j - 1], self.times_s[j]);
                (j - 1, (t - a) / (b - a))
            }
        }
    }

    /// The field's times as seconds after its first time.
    pub(crate) fn times_s(&self) -> &[f64] {
        &self.times_s
    }

    /// The same field, named `label` in messages.
    #[must_use]
    pub fn labelled(mut self, label: &str) -> Self {
        label.clone_into(&mut self.label);
        self
    }

    /// Lattice shape: (longitudes, latitudes, times).
    #[must_use]
    pub fn shape(&self) -> (usize, usize, usize) {
        (self.nlon, self.nlat, self.nt)
    }

    /// 1-sigma speed error at every node, knots.
    #[must_use]
    pub fn speed_sigma_kn(&self) -> f64 {
        self.speed_sigma_kn
    }

    /// 1-sigma direction error at every node, degrees.
    #[must_use]
    pub fn direction_sigma_deg(&self) -> f64 {
        self.direction_sigma_deg
    }

    /// The interpolated velocity (u east, v north) in knots at a position and time: bilinear
    /// in longitude and latitude, linear in time, held at the first or last time beyond the
    /// times. Outside the box: the edge value with [`BeyondBox::HoldEdge`], NaN with
    /// [`BeyondBox::Refuse`]; NaN too next to a node with no value ([`GriddedField::gap_at`]
    /// says which).
    #[must_use]
    pub fn velocity_kn_at(&self, lon_deg: f64, lat_deg: f64, time: Time) -> (f64, f64) {
        self.velocity_kn_at_s(lon_deg, lat_deg, (time - self.t0).as_seconds_f64())
    }

    /// As [`GriddedField::velocity_kn_at`] with the time in seconds after the first lattice time.
    ///
    /// NaN components where the field has no value: beyond its box with
    /// [`BeyondBox::Refuse`], or next to a node with no value.
    pub(crate) fn velocity_kn_at_s(&self, lon_deg: f64, lat_deg: f64, t_s: f64) -> (f64, f64) {
        let lon = self.lon_near_centre(lon_deg);
        if self.beyond_box == BeyondBox::Refuse && self.outside_side(lon, lat_deg).is_some() {
            return (f64::NAN, f64::NAN);
        }
        let (i0, wi, i1) = self.lon_cell(lon);
        let (j0, wj) = bracket(lat_deg, self.lat0_deg, self.dlat_deg, self.nlat);
        let (k0, wk) = self.bracket_time(t_s);
        let j1 = (j0 + 1).min(self.nlat - 1);
        let k1 = (k0 + 1).min(self.nt - 1);
        let idx = |i: usize, j: usize, k: usize| (k * self.nlat + j) * self.nlon + i;
        let mut u = 0.0;
        let mut v = 0.0;
        for (k, wk) in [(k0, 1.0 - wk), (k1, wk)] {
            for (j, wj) in [(j0, 1.0 - wj), (j1, wj)] {
                for (i, wi) in [(i0, 1.0 - wi), (i1, wi)] {
                    let w = wk * wj * wi;
                    if w != 0.0 {
                        u += w * self.u_kn[idx(i, j, k)];
                        v += w * self.v_kn[idx(i, j, k)];
                    }
                }
            }
        }
        (u, v)
    }
}

/// A regular axis of a lattice: `n` values from `start_deg` by `step_deg`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RegularAxis {
    /// The first value, degrees.
    pub start_deg: f64,
    /// The step, degrees (> 0; ignored for one node).
    pub step_deg: f64,
    /// The number of values (>= 1).
    pub n: usize,
}

/// What a [`GriddedField`] gives outside its box in space.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BeyondBox {
    /// The value at the nearest edge (the CSV lattice, or a forecast file the incident says to
    /// hold).
    HoldEdge,
    /// No value: a particle that leaves the box stops the simulation with
    /// [`DriftError::FieldGap`].
    Refuse,
}

/// Lower node index and weight of the upper node along one axis, clamped to the lattice.
fn bracket(x: f64, start: f64, step: f64, n: usize) -> (usize, f64) {
    if n == 1 || step == 0.0 {
        return (0, 0.0);
    }
    let f = ((x - start) / step).clamp(0.0, (n - 1) as f64);
    let i = (f.floor() as usize).min(n - 2);
    (i, f - i as f64)
}

/// An estimate of the total water current or of the wind over the drift.
#[derive(Debug, Clone, PartialEq)]
pub enum Environment {
    /// One vector for all times and places.
    Constant(VectorEstimate),
    /// A time series: linear interpolation of the (east, north) components between samples,
    /// held constant before the first and after the last sample. Each sample carries its own
    /// sigmas (repeat the same sigmas for one error for all); sigmas are interpolated linearly
    /// too. Times must be strictly increasing.
    Series(Vec<(Time, VectorEstimate)>),
    /// A gridded field (velocity components, see [`GriddedField`]).
    Gridded(GriddedField),
}

impl Environment {
    /// The nominal velocity (no error) at a position and time as (east, north) metres per
    /// second in the direction of motion, reading directions with `convention`
    /// ([`Convention::CURRENT`] for the current, [`Convention::WIND`] for the wind). The
    /// convention does not affect gridded fields, whose components already point along the
    /// motion.
    ///
    /// A convenience for callers and tests; the simulation uses a prepared form.
    /// An empty series gives (0, 0).
    #[must_use]
    pub fn velocity_mps(
        &self,
        lon_deg: f64,
        lat_deg: f64,
        time: Time,
        convention: Convention,
    ) -> (f64, f64) {
        let prepared = Prepared::new(self, time, convention);
        let s = prepared.sample(Some((lon_deg, lat_deg)), 0.0);
        (s.u_kn * MPS_PER_KNOT, s.v_kn * MPS_PER_KNOT)
    }

    /// Whether the value depends on position (a gridded field).
    #[must_use]
    pub fn varies_in_space(&self) -> bool {
        matches!(self, Environment::Gridded(_))
    }

    pub(crate) fn validate(&self, field: &str) -> Result<(), DriftError> {
        match self {
            Environment::Constant(v) => v.validate(field),
            Environment::Series(samples) => {
                if samples.is_empty() {
                    return Err(DriftError::EmptySeries {
                        field: field.to_owned(),
                    });
                }
                for (i, (t, v)) in samples.iter().enumerate() {
                    v.validate(&format!("{field}.series[{i}]"))?;
                    if i > 0 && *t <= samples[i - 1].0 {
                        return Err(DriftError::UnorderedSeries {
                            field: field.to_owned(),
                            index: i,
                            time: t.to_rfc3339(),
                            previous: samples[i - 1].0.to_rfc3339(),
                        });
                    }
                }
                Ok(())
            }
            // Checked on construction.
            Environment::Gridded(_) => Ok(()),
        }
    }
}

/// The nominal value and its sigmas at one place and time (knots, toward).
#[derive(Debug, Clone, Copy)]
pub(crate) struct EnvSample {
    pub u_kn: f64,
    pub v_kn: f64,
    /// Unit (east, north) direction of motion to use when (u, v) is zero: the direction the
    /// estimate states for a calm, or (0, 0) when it states none (a gridded node).
    pub calm_e: f64,
    pub calm_n: f64,
    pub speed_sigma_kn: f64,
    pub direction_sigma_deg: f64,
}

/// An environment ready for the inner loop: times in seconds after an origin, vectors as
/// toward components in knots.
#[derive(Debug)]
pub(crate) enum Prepared<'a> {
    Constant(EnvSample),
    Series {
        t_s: Vec<f64>,
        samples: Vec<EnvSample>,
    },
    Gridded {
        field: &'a GriddedField,
        /// Seconds from the field's first time to the origin.
        offset_s: f64,
    },
}

fn env_sample(v: &VectorEstimate, convention: Convention) -> EnvSample {
    let (u, w) = v.velocity_kn(convention);
    let (calm_e, calm_n) = bearing_to_unit_vector(convention.toward_bearing_deg(v.direction_deg));
    EnvSample {
        u_kn: u,
        v_kn: w,
        calm_e,
        calm_n,
        speed_sigma_kn: v.speed_sigma_kn,
        direction_sigma_deg: v.direction_sigma_deg,
    }
}

impl<'a> Prepared<'a> {
    pub(crate) fn new(env: &'a Environment, origin: Time, convention: Convention) -> Self {
        match env {
            Environment::Constant(v) => Prepared::Constant(env_sample(v, convention)),
            Environment::Series(s) => Prepared::Series {
                t_s: s
                    .iter()
                    .map(|(t, _)| (*t - origin).as_seconds_f64())
                    .collect(),
                samples: s.iter().map(|(_, v)| env_sample(v, convention)).collect(),
            },
            Environment::Gridded(field) => Prepared::Gridded {
                field,
                offset_s: (origin - field.t0).as_seconds_f64(),
            },
        }
    }

    /// The direction sigma of the first sample (degrees), for [`EnvDraw::new`].
    pub(crate) fn first_direction_sigma_deg(&self) -> f64 {
        match self {
            Prepared::Constant(s) => s.direction_sigma_deg,
            Prepared::Series { samples, .. } => {
                samples.first().map_or(0.0, |s| s.direction_sigma_deg)
            }
            Prepared::Gridded { field, .. } => field.direction_sigma_deg,
        }
    }

    /// Times (seconds after the origin) where the interpolation has a kink.
    pub(crate) fn breaks(&self) -> Vec<f64> {
        match self {
            Prepared::Constant(_) => Vec::new(),
            Prepared::Series { t_s, .. } => t_s.clone(),
            Prepared::Gridded { field, offset_s } => {
                field.times_s().iter().map(|t| t - offset_s).collect()
            }
        }
    }

    /// Whether the value is the same everywhere at a time (so that it can be tabulated once
    /// per step): not a gridded field, unless the field has one node in space.
    pub(crate) fn is_uniform(&self) -> bool {
        match self {
            Prepared::Gridded { field, .. } => field.nlon == 1 && field.nlat == 1,
            _ => true,
        }
    }

    /// The gridded field, if this is one.
    pub(crate) fn field(&self) -> Option<(&GriddedField, f64)> {
        match self {
            Prepared::Gridded { field, offset_s } => Some((field, *offset_s)),
            _ => None,
        }
    }

    /// The nominal sample at `t_s` seconds after the origin; `lon_lat` is needed only for
    /// gridded fields (a uniform environment ignores it).
    pub(crate) fn sample(&self, lon_lat: Option<(f64, f64)>, t_s: f64) -> EnvSample {
        let mut hint = match self {
            Prepared::Series { t_s: times, .. } => times.partition_point(|&x| x <= t_s),
            _ => 0,
        };
        self.sample_near(lon_lat, t_s, &mut hint)
    }

    /// As [`Prepared::sample`], starting the search for the series interval at `hint` (the
    /// interval of the previous call), which makes the lookup O(1) along a particle's path.
    #[inline]
    pub(crate) fn sample_near(
        &self,
        lon_lat: Option<(f64, f64)>,
        t_s: f64,
        hint: &mut usize,
    ) -> EnvSample {
        match self {
            Prepared::Constant(s) => *s,
            Prepared::Series {
                t_s: times,
                samples,
            } => {
                let n = times.len();
                if n == 0 {
                    return EnvSample {
                        u_kn: 0.0,
                        v_kn: 0.0,
                        calm_e: 0.0,
                        calm_n: 0.0,
                        speed_sigma_kn: 0.0,
                        direction_sigma_deg: 0.0,
                    };
                }
                if t_s <= times[0] {
                    return samples[0];
                }
                if t_s >= times[n - 1] {
                    return samples[n - 1];
                }
                // First index with time > t_s; 1..n-1 here.
                let mut j = (*hint).clamp(1, n - 1);
                while j < n - 1 && times[j] <= t_s {
                    j += 1;
                }
                while j > 1 && times[j - 1] > t_s {
                    j -= 1;
                }
                *hint = j;
                let (a, b) = (&samples[j - 1], &samples[j]);
                let w = (t_s - times[j - 1]) / (times[j] - times[j - 1]);
                let lerp = |x: f64, y: f64| x + w * (y - x);
                // A calm in between takes the direction of the nearer sample.
                let near = if w < 0.5 { a } else { b };
                EnvSample {
                    u_kn: lerp(a.u_kn, b.u_kn),
                    v_kn: lerp(a.v_kn, b.v_kn),
                    calm_e: near.calm_e,
                    calm_n: near.calm_n,
                    speed_sigma_kn: lerp(a.speed_sigma_kn, b.speed_sigma_kn),
                    direction_sigma_deg: lerp(a.direction_sigma_deg, b.direction_sigma_deg),
                }
            }
            Prepared::Gridded { field, offset_s } => {
                let (lon, lat) = lon_lat.unwrap_or((field.lon0_deg, field.lat0_deg));
                let (u, v) = field.velocity_kn_at_s(lon, lat, t_s + offset_s);
                EnvSample {
                    u_kn: u,
                    v_kn: v,
                    calm_e: 0.0,
                    calm_n: 0.0,
                    speed_sigma_kn: field.speed_sigma_kn,
                    direction_sigma_deg: field.direction_sigma_deg,
                }
            }
        }
    }
}

/// One particle's persistent error draws for one environment.
#[derive(Debug, Clone, Copy, Default)]
pub(crate) struct EnvDraw {
    /// Standard normal draw scaling the speed sigma.
    pub z_speed: f64,
    /// Standard normal draw scaling the direction sigma.
    pub z_dir: f64,
    /// Unit vector (east, north) of this particle's bearing for a calm (zero nominal speed) of
    /// an estimate that states no direction (a gridded node), drawn uniformly: such a calm
    /// has no direction, so its speed error points anywhere.
    pub calm_e: f64,
    pub calm_n: f64,
    /// The turn z_dir * sigma precomputed for the sigma the estimate usually has (its first
    /// sample's), as sine and cosine.
    pub turn_sigma_deg: f64,
    pub turn_sin: f64,
    pub turn_cos: f64,
}

impl EnvDraw {
    /// Draws from standard normals and a uniform bearing, precomputing the turn for `sigma_deg`.
    pub(crate) fn new(z_speed: f64, z_dir: f64, calm_bearing_rad: f64, sigma_deg: f64) -> Self {
        let (turn_sin, turn_cos) = (z_dir * sigma_deg).to_radians().sin_cos();
        Self {
            z_speed,
            z_dir,
            calm_e: calm_bearing_rad.sin(),
            calm_n: calm_bearing_rad.cos(),
            turn_sigma_deg: sigma_deg,
            turn_sin,
            turn_cos,
        }
    }
}

/// A nominal sample with its speed and inverse speed worked out once, so that many particles
/// can share it.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Nominal {
    s: EnvSample,
    speed: f64,
    inv_speed: f64,
}

impl Nominal {
    #[inline]
    pub(crate) fn new(s: EnvSample) -> Self {
        // Plain sqrt rather than hypot: speeds in knots can neither overflow nor underflow.
        let speed = (s.u_kn * s.u_kn + s.v_kn * s.v_kn).sqrt();
        let inv_speed = if speed > 0.0 { 1.0 / speed } else { 0.0 };
        Self {
            s,
            speed,
            inv_speed,
        }
    }
}

/// The particle's own version of a nominal sample: speed + z_speed * sigma along the nominal
/// bearing turned by z_dir * sigma (clockwise for positive). A speed that comes out negative
/// reverses the vector, which keeps the along-direction error an unbiased normal. A calm has
/// no bearing of its own: the estimate's stated direction is used, or for a gridded node the
/// particle's own bearing.
///
/// Returns the signed new speed f (knots) and the unit vector (east, north) of the turned
/// bearing; the perturbed velocity is f times that vector.
#[inline]
pub(crate) fn perturb_nominal(n: &Nominal, d: &EnvDraw) -> (f64, f64, f64) {
    let s = &n.s;
    let (sn, cs) = if s.direction_sigma_deg == d.turn_sigma_deg {
        (d.turn_sin, d.turn_cos)
    } else {
        (d.z_dir * s.direction_sigma_deg).to_radians().sin_cos()
    };
    let (ue, un) = if n.speed > 0.0 {
        (s.u_kn * n.inv_speed, s.v_kn * n.inv_speed)
    } else if s.calm_e != 0.0 || s.calm_n != 0.0 {
        (s.calm_e, s.calm_n)
    } else {
        (d.calm_e, d.calm_n)
    };
    // A bearing b turned to b + delta: (sin(b+d), cos(b+d)).
    (
        n.speed + d.z_speed * s.speed_sigma_kn,
        ue * cs + un * sn,
        un * cs - ue * sn,
    )
}

/// The perturbed vector of [`perturb_nominal`] as (east, north) knots (for tests).
#[cfg(test)]
pub(crate) fn perturb(s: &EnvSample, d: &EnvDraw) -> (f64, f64) {
    let (f, te, tn) = perturb_nominal(&Nominal::new(*s), d);
    (f * te, f * tn)
}

/// The turned unit vector of [`perturb_nominal`] (for tests).
#[cfg(test)]
pub(crate) fn perturbed_direction(s: &EnvSample, d: &EnvDraw) -> (f64, f64) {
    let (_, te, tn) = perturb_nominal(&Nominal::new(*s), d);
    (te, tn)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    fn draw(z_speed: f64, z_dir: f64) -> EnvDraw {
        // Precomputed turn for another sigma, so that both paths are exercised.
        EnvDraw::new(z_speed, z_dir, std::f64::consts::FRAC_PI_2, 7.0)
    }

    #[test]
    fn the_precomputed_turn_equals_the_computed_one() {
        let s = sample(1.0, 30.0, 0.0, 7.0);
        let (e1, n1) = perturb(&s, &draw(0.0, 1.3));
        let mut other = draw(0.0, 1.3);
        other.turn_sigma_deg = -1.0;
        let (e2, n2) = perturb(&s, &other);
        assert_abs_diff_eq!(e1, e2, epsilon = 1e-15);
        assert_abs_diff_eq!(n1, n2, epsilon = 1e-15);
        assert_abs_diff_eq!(e1, (30.0f64 + 9.1).to_radians().sin(), epsilon = 1e-15);
    }

    fn sample(speed: f64, toward_deg: f64, sig_s: f64, sig_d: f64) -> EnvSample {
        env_sample(
            &VectorEstimate {
                speed_kn: speed,
                direction_deg: toward_deg,
                speed_sigma_kn: sig_s,
                direction_sigma_deg: sig_d,
            },
            Convention::Toward,
        )
    }

    #[test]
    fn a_positive_direction_draw_turns_the_vector_clockwise() {
        // computed: 1 kn toward 000°, +1 sigma of 90° -> 1 kn toward 090°.
        let (e, n) = perturb(&sample(1.0, 0.0, 0.0, 90.0), &draw(0.0, 1.0));
        assert_abs_diff_eq!(e, 1.0, epsilon = 1e-12);
        assert_abs_diff_eq!(n, 0.0, epsilon = 1e-12);
    }

    #[test]
    fn a_speed_draw_below_zero_reverses_the_vector() {
        // 0.2 kn toward 090° with sigma 0.3 kn, draw -2: -0.4 kn, i.e. 0.4 kn toward 270°.
        let (e, n) = perturb(&sample(0.2, 90.0, 0.3, 0.0), &draw(-2.0, 0.0));
        assert_abs_diff_eq!(e, -0.4, epsilon = 1e-12);
        assert_abs_diff_eq!(n, 0.0, epsilon = 1e-12);
        let (de, _) = perturbed_direction(&sample(0.2, 90.0, 0.3, 0.0), &draw(-2.0, 0.0));
        assert_abs_diff_eq!(de, 1.0, epsilon = 1e-12);
    }

    #[test]
    fn a_calm_estimate_puts_its_speed_error_along_its_stated_direction() {
        let (e, n) = perturb(&sample(0.0, 180.0, 0.5, 0.0), &draw(1.0, 0.0));
        assert_abs_diff_eq!(e, 0.0, epsilon = 1e-12);
        assert_abs_diff_eq!(n, -0.5, epsilon = 1e-12);
        // A gridded calm states no direction: the particle's own bearing is used.
        let mut s = sample(0.0, 180.0, 0.5, 0.0);
        s.calm_e = 0.0;
        s.calm_n = 0.0;
        let (e, n) = perturb(&s, &draw(1.0, 0.0));
        assert_abs_diff_eq!(e, 0.5, epsilon = 1e-12);
        assert_abs_diff_eq!(n, 0.0, epsilon = 1e-12);
    }

    #[test]
    fn bad_estimates_are_refused_by_field() {
        let v = VectorEstimate {
            speed_kn: 1.0,
            direction_deg: 10.0,
            speed_sigma_kn: -0.1,
            direction_sigma_deg: 0.0,
        };
        assert!(
            matches!(v.validate("current"), Err(DriftError::Negative { field, .. }) if field == "current.speed_sigma_kn")
        );
        // A negative direction is only a bearing written the other way round.
        let v = VectorEstimate {
            direction_deg: -90.0,
            speed_sigma_kn: 0.0,
            ..v
        };
        assert!(v.validate("wind").is_ok());
    }
}
