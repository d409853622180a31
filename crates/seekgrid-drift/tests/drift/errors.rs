//! Bad input is refused with an error naming the field, never a panic.

use crate::common::*;
use seekgrid_core::units::SECONDS_PER_HOUR;
use seekgrid_drift::*;

fn try_run(s: &DriftScenario, options: &SimulationOptions) -> Result<DriftRun, DriftError> {
    simulate(s, &frame(), None, options, &|_, _| {})
}

fn ok_scenario() -> DriftScenario {
    scenario(
        Environment::Constant(exact(0.5, 90.0)),
        Environment::Constant(exact(10.0, 270.0)),
        downwind_only(0.03, 0.0),
    )
}

fn options(end_h: f64) -> SimulationOptions {
    SimulationOptions {
        end: hours(end_h),
        record_every_s: 600.0,
        step_s: None,
        also_record_at: Vec::new(),
    }
}

fn field_of(e: &DriftError) -> String {
    match e {
        DriftError::NotFinite { field, .. }
        | DriftError::Negative { field, .. }
        | DriftError::EmptySeries { field }
        | DriftError::UnorderedSeries { field, .. }
        | DriftError::BadGrid { field, .. }
        | DriftError::BadInterval { field, .. } => field.clone(),
        other => format!("{other:?}"),
    }
}

#[test]
fn negative_sigmas_are_refused_with_their_field() {
    let mut s = ok_scenario();
    s.position_sigma_m = -1.0;
    let e = try_run(&s, &options(1.0)).unwrap_err();
    assert_eq!(field_of(&e), "position_sigma_m");
    assert!(e.to_string().contains("cannot be negative"));

    let mut s = ok_scenario();
    s.current = Environment::Constant(VectorEstimate {
        direction_sigma_deg: -5.0,
        ..exact(0.5, 90.0)
    });
    let e = try_run(&s, &options(1.0)).unwrap_err();
    assert_eq!(field_of(&e), "current.direction_sigma_deg");

    let mut s = ok_scenario();
    s.diffusivity_m2_s = -0.1;
    assert_eq!(
        field_of(&try_run(&s, &options(1.0)).unwrap_err()),
        "diffusivity_m2_s"
    );

    let mut s = ok_scenario();
    s.leeway.crosswind_sigma_kn = -0.01;
    assert_eq!(
        field_of(&try_run(&s, &options(1.0)).unwrap_err()),
        "leeway.crosswind_sigma_kn"
    );
}

#[test]
fn non_finite_values_are_refused_with_their_field() {
    let mut s = ok_scenario();
    s.wind = Environment::Series(vec![(hours(0.0), exact(f64::NAN, 90.0))]);
    let e = try_run(&s, &options(1.0)).unwrap_err();
    assert_eq!(field_of(&e), "wind.series[0].speed_kn");
    assert!(!e.to_string().ends_with('.'));

    let mut s = ok_scenario();
    s.lkp_lon_lat = (f64::INFINITY, 20.0);
    assert!(matches!(
        try_run(&s, &options(1.0)),
        Err(DriftError::BadPosition { .. })
    ));
}

#[test]
fn a_reversed_adrift_window_is_refused() {
    let mut s = ok_scenario();
    s.adrift_latest = hours(-1.0);
    assert!(matches!(
        try_run(&s, &options(1.0)),
        Err(DriftError::AdriftWindowReversed { .. })
    ));
}

#[test]
fn empty_and_unordered_series_are_refused() {
    let mut s = ok_scenario();
    s.current = Environment::Series(Vec::new());
    let e = try_run(&s, &options(1.0)).unwrap_err();
    assert!(matches!(e, DriftError::EmptySeries { ref field } if field == "current"));

    let mut s = ok_scenario();
    s.wind = Environment::Series(vec![
        (hours(1.0), exact(5.0, 90.0)),
        (hours(1.0), exact(6.0, 90.0)),
    ]);
    let e = try_run(&s, &options(1.0)).unwrap_err();
    assert!(matches!(e, DriftError::UnorderedSeries { index: 1, .. }));
    assert!(e.to_string().contains("sort the samples"));
}

#[test]
fn zero_particles_and_bad_options_are_refused() {
    let mut s = ok_scenario();
    s.particles = 0;
    assert_eq!(
        try_run(&s, &options(1.0)).unwrap_err(),
        DriftError::NoParticles
    );
    // The upper limit is checked before anything is allocated.
    let mut s = ok_scenario();
    s.particles = seekgrid_drift::MAX_PARTICLES + 1;
    assert_eq!(
        s.validate(),
        Err(DriftError::TooManyParticles {
            particles: seekgrid_drift::MAX_PARTICLES + 1
        })
    );
    s.particles = seekgrid_drift::MAX_PARTICLES;
    assert_eq!(s.validate(), Ok(()));

    let s = ok_scenario();
    assert!(matches!(
        try_run(&s, &options(-0.5)),
        Err(DriftError::EndBeforeAdrift { .. })
    ));
    let bad_record = SimulationOptions {
        record_every_s: 0.0,
        ..options(1.0)
    };
    assert_eq!(
        field_of(&try_run(&s, &bad_record).unwrap_err()),
        "record_every_s"
    );
    let bad_step = SimulationOptions {
        step_s: Some(f64::NAN),
        also_record_at: Vec::new(),
        ..options(1.0)
    };
    assert_eq!(field_of(&try_run(&s, &bad_step).unwrap_err()), "step_s");
}

#[test]
fn records_that_would_not_fit_in_memory_are_refused() {
    let mut s = ok_scenario();
    s.particles = 1_000_000;
    let tiny_records = SimulationOptions {
        end: hours(240.0),
        record_every_s: 1.0,
        step_s: Some(1.0),
        also_record_at: Vec::new(),
    };
    assert!(matches!(
        try_run(&s, &tiny_records),
        Err(DriftError::TooLarge { .. })
    ));
    // Absurd counts are refused before anything is allocated.
    let absurd = SimulationOptions {
        end: hours(24.0 * 3650.0),
        record_every_s: 1e-6,
        step_s: None,
        also_record_at: Vec::new(),
    };
    assert!(matches!(
        try_run(&s, &absurd),
        Err(DriftError::TooLarge { .. })
    ));
    let mut one = ok_scenario();
    one.particles = 1;
    let tiny_steps = SimulationOptions {
        end: hours(48.0),
        record_every_s: SECONDS_PER_HOUR,
        step_s: Some(1e-4),
        also_record_at: Vec::new(),
    };
    assert!(matches!(
        try_run(&one, &tiny_steps),
        Err(DriftError::TooManySteps { .. })
    ));
}

#[test]
fn weights_that_do_not_match_are_refused() {
    let s = ok_scenario();
    let run = try_run(&s, &options(1.0)).unwrap();
    assert!(matches!(
        run.spread_at(hours(1.0), &[1.0, 2.0]),
        Err(DriftError::BadWeights { .. })
    ));
    let mut w = run.initial_weights();
    w[3] = -0.1;
    assert!(run.spread_at(hours(1.0), &w).is_err());
    assert!(run.spread_at(hours(1.0), &vec![0.0; run.len()]).is_err());
}
