//! Property tests (proptest).

use crate::common::*;
use geo::Coord;
use proptest::prelude::*;
use seekgrid_core::units::{SECONDS_PER_HOUR, s_to_hours};
use seekgrid_drift::*;

proptest! {
    #![proptest_config(ProptestConfig::with_cases(48))]

    #[test]
    fn zero_error_drift_is_current_plus_leeway_on_one_side_times_time(
        cur_kn in 0.0..3.0f64,
        cur_toward in 0.0..360.0f64,
        wind_kn in 0.5..40.0f64,
        wind_from in 0.0..360.0f64,
        slope in 0.0..0.06f64,
        offset in -0.1..0.3f64,
        cross in 0.0..0.2f64,
        end_h in 0.5..24.0f64,
    ) {
        // computed: docs/references.md §5 vector sum, with the crosswind on either side.
        let lw = Leeway { downwind_slope: slope, downwind_offset_kn: offset, crosswind_offset_kn: cross, ..Leeway::NONE };
        let mut s = scenario(
            Environment::Constant(exact(cur_kn, cur_toward)),
            Environment::Constant(exact(wind_kn, wind_from)),
            lw,
        );
        s.particles = 4;
        let run = run(&s, end_h, SECONDS_PER_HOUR, None);
        let snap = run.positions_at(hours(end_h));
        let c = exact(cur_kn, cur_toward).velocity_kn(Convention::CURRENT);
        let d = exact(1.0, wind_from).velocity_kn(Convention::WIND);
        let down = slope * wind_kn + offset;
        // Right of downwind: (d.n, -d.e).
        let t = s_to_hours((run.end() - t0()).as_seconds_f64());
        for i in 0..run.len() {
            let (e, n) = true_displacement_nm(Coord { x: snap.x_m[i], y: snap.y_m[i] });
            let fits = [1.0, -1.0].iter().any(|side| {
                let ee = t * (c.0 + down * d.0 + side * cross * d.1);
                let nn = t * (c.1 + down * d.1 - side * cross * d.0);
                (e - ee).abs() < 1e-6 && (n - nn).abs() < 1e-6
            });
            prop_assert!(fits, "particle {i}: ({e}, {n})");
        }
    }

    #[test]
    fn spread_is_unchanged_by_scaling_the_weights(scale in 1e-6..1e6f64, seed in 0u64..1000) {
        let mut s = scenario(
            Environment::Constant(exact(0.5, 45.0)),
            Environment::Constant(exact(0.0, 0.0)),
            Leeway::NONE,
        );
        s.position_sigma_m = 200.0;
        s.seed = seed;
        let run = run(&s, 1.0, SECONDS_PER_HOUR, Some(SECONDS_PER_HOUR));
        let w = run.initial_weights();
        let scaled: Vec<f64> = w.iter().map(|x| x * scale).collect();
        let a = run.spread_at(hours(1.0), &w).unwrap();
        let b = run.spread_at(hours(1.0), &scaled).unwrap();
        prop_assert!((a.mean.x - b.mean.x).abs() < 1e-6 && (a.mean.y - b.mean.y).abs() < 1e-6);
        prop_assert!((a.cov[0][0] - b.cov[0][0]).abs() < 1e-6 * a.cov[0][0].max(1.0));
    }
}
