//! How long each phase of a run took, wall clock and CPU, for `summary.json` and `--verbose`.
//!
//! A run's phases are timed where they run (the drift, the searches, the particle density,
//! each output file) and kept in the order they ended. A phase that runs inside another (the
//! particle density, computed when the first layer reads it) is listed on its own and its time
//! is taken out of the enclosing phase, so the phases add up to the run. CPU time is the whole
//! process's (all threads), so CPU over wall shows how well a phase used the cores; on a
//! machine shared with other work both are only indications.

use std::sync::Mutex;
use std::time::Instant;

/// One timed phase of a run.
#[derive(Debug, Clone, PartialEq)]
pub struct PhaseTime {
    /// What ran, e.g. `drift`, `searches`, `particle density`, `write plan.gpx`.
    pub phase: String,
    /// Wall-clock time, seconds.
    pub wall_s: f64,
    /// CPU time of the whole process (every thread) during the phase, seconds; `None` where
    /// the platform does not give it.
    pub cpu_s: Option<f64>,
}

/// The phases of one run, in the order they ended. Shared between threads (a lazily computed
/// field may be timed while outputs are written).
#[derive(Debug, Default)]
pub struct PhaseTimes(Mutex<Timed>);

#[derive(Debug, Default, Clone)]
struct Timed {
    done: Vec<PhaseTime>,
    /// Per phase running now, outermost first: the wall and CPU time of the phases that ran
    /// and ended inside it.
    inner: Vec<(f64, f64)>,
}

impl PhaseTimes {
    /// Runs `work`, records its wall and CPU time under `phase`, and returns its result.
    /// Time spent in phases timed inside this one is taken out of it (module docs).
    pub fn time<T>(&self, phase: &str, work: impl FnOnce() -> T) -> T {
        self.lock().inner.push((0.0, 0.0));
        let wall = Instant::now();
        let cpu = cpu_time::ProcessTime::try_now().ok();
        let result = work();
        let wall_s = wall.elapsed().as_secs_f64();
        let cpu_s = cpu.map(|c| c.elapsed().as_secs_f64());
        let mut t = self.lock();
        let (inner_wall, inner_cpu) = t.inner.pop().unwrap_or_default();
        if let Some(outer) = t.inner.last_mut() {
            outer.0 += wall_s;
            outer.1 += cpu_s.unwrap_or(0.0);
        }
        t.done.push(PhaseTime {
            phase: phase.to_owned(),
            wall_s: (wall_s - inner_wall).max(0.0),
            cpu_s: cpu_s.map(|c| (c - inner_cpu).max(0.0)),
        });
        result
    }

    fn lock(&self) -> std::sync::MutexGuard<'_, Timed> {
        self.0
            .lock()
            .unwrap_or_else(std::sync::PoisonError::into_inner)
    }

    /// As [`PhaseTimes::time`], and names the phase to `progress` as it starts (0 of 1 done)
    /// and ends (1 of 1), so that a progress bar shows what runs.
    pub fn time_shown<T>(
        &self,
        phase: &str,
        progress: crate::timeline::Progress<'_>,
        work: impl FnOnce() -> T,
    ) -> T {
        progress(phase, 0, 1);
        let result = self.time(phase, work);
        progress(phase, 1, 1);
        result
    }

    /// The phases ended so far, in the order they ended.
    #[must_use]
    pub fn list(&self) -> Vec<PhaseTime> {
        self.lock().done.clone()
    }
}

impl Clone for PhaseTimes {
    fn clone(&self) -> Self {
        Self(Mutex::new(self.lock().clone()))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn phases_are_listed_in_the_order_they_ended_with_their_results_passed_through() {
        let times = PhaseTimes::default();
        let a = times.time("first", || 2 + 2);
        let b = times.time("second", || {
            // Busy for a moment so the CPU clock moves (at least its resolution).
            (0..200_000_u64).map(std::hint::black_box).sum::<u64>()
        });
        assert_eq!((a, b), (4, 199_999 * 200_000 / 2));
        let list = times.list();
        let names: Vec<&str> = list.iter().map(|p| p.phase.as_str()).collect();
        assert_eq!(names, ["first", "second"]);
        assert!(list.iter().all(|p| p.wall_s >= 0.0));
        assert!(list.iter().all(|p| p.cpu_s.is_none_or(|c| c >= 0.0)));
    }

    #[test]
    fn a_phase_inside_another_is_listed_first_and_taken_out_of_it() {
        let times = PhaseTimes::default();
        let sleep = |ms| std::thread::sleep(std::time::Duration::from_millis(ms));
        times.time("write layer", || {
            sleep(20);
            times.time("particle density", || sleep(120));
        });
        let list = times.list();
        let names: Vec<&str> = list.iter().map(|p| p.phase.as_str()).collect();
        assert_eq!(names, ["particle density", "write layer"]);
        // The outer phase keeps its own 20 ms, not the inner 120 ms: were the inner phase's
        // time left in, the outer would be the longer.
        assert!(list[0].wall_s >= 0.12, "{list:?}");
        assert!(list[1].wall_s >= 0.02, "{list:?}");
        assert!(list[1].wall_s < list[0].wall_s, "{list:?}");
    }
}
