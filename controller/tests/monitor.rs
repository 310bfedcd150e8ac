//! The loop monitor's public contract (feature `monitor`), beyond its unit
//! tests: flag values, validation rules, the IAE limit and the event count.
#![cfg(feature = "monitor")]

use evenkeel::Status;
use evenkeel::monitor::{Diagnostics, MAX_EVENTS, Monitor, MonitorError, MonitorSettings};

#[test]
fn flag_bits_names_and_display() {
    let all = [
        (Diagnostics::LOAD_DISTURBANCE, 1, "load_disturbance"),
        (Diagnostics::OSCILLATION, 2, "oscillation"),
        (Diagnostics::SATURATION, 4, "saturation"),
        (Diagnostics::SLUGGISH, 8, "sluggish"),
        (Diagnostics::NOISY, 16, "noisy"),
    ];
    let mut union = Diagnostics::NONE;
    for (flag, bits, name) in all {
        assert_eq!(flag.bits(), bits);
        assert!(flag.names().eq([name]));
        assert_eq!(flag.to_string(), name);
        assert_eq!(flag.is_alarm(), bits != 1, "{name}");
        union |= flag;
    }
    assert_eq!(union.bits(), 31);
    assert_eq!((Diagnostics::SLUGGISH | Diagnostics::SLUGGISH).bits(), 8);
    assert_eq!(
        union.to_string(),
        "load_disturbance|oscillation|saturation|sluggish|noisy"
    );
    assert_eq!(Diagnostics::NONE.to_string(), "-");
    assert_eq!(Diagnostics::default(), Diagnostics::NONE);
}

#[test]
fn every_setting_is_validated() {
    let ok = MonitorSettings::new(0.01, 0.1, 1.0);
    assert_eq!(ok.validate(), Ok(()));
    let cases = [
        (
            MonitorSettings {
                period_s: 0.0,
                ..ok
            },
            MonitorError::Period,
        ),
        (
            MonitorSettings {
                amplitude: f32::NAN,
                ..ok
            },
            MonitorError::Amplitude,
        ),
        (
            MonitorSettings {
                ultimate_period_s: -1.0,
                ..ok
            },
            MonitorError::UltimatePeriod,
        ),
        (
            MonitorSettings {
                supervision_time_s: f32::INFINITY,
                ..ok
            },
            MonitorError::SupervisionTime,
        ),
        (
            MonitorSettings {
                saturation_time_s: 0.0,
                ..ok
            },
            MonitorError::SaturationTime,
        ),
        (
            MonitorSettings {
                sluggish_time_s: 0.0,
                ..ok
            },
            MonitorError::SluggishTime,
        ),
        (
            MonitorSettings {
                noise_time_s: 0.0,
                ..ok
            },
            MonitorError::NoiseTime,
        ),
        (
            MonitorSettings {
                oscillation_count: 0,
                ..ok
            },
            MonitorError::OscillationCount,
        ),
        (
            ok.with_oscillation_rule(10.0, 32),
            MonitorError::OscillationCount,
        ),
        (ok.with_noise_rms_max(f32::NAN), MonitorError::NoiseLimit),
        (ok.with_noise_rms_max(-1.0), MonitorError::NoiseLimit),
    ];
    for (s, want) in cases {
        assert_eq!(s.validate(), Err(want), "{s:?}");
        assert_eq!(Monitor::new(s).err(), Some(want));
    }
    assert_eq!(ok.with_oscillation_rule(10.0, 31).validate(), Ok(()));
    assert_eq!(MAX_EVENTS, 32);
    let names = [
        (MonitorError::Period, "period_s"),
        (MonitorError::Amplitude, "amplitude"),
        (MonitorError::UltimatePeriod, "ultimate_period_s"),
        (MonitorError::SupervisionTime, "supervision_time_s"),
        (MonitorError::OscillationCount, "oscillation_count"),
        (MonitorError::SaturationTime, "saturation_time_s"),
        (MonitorError::SluggishTime, "sluggish_time_s"),
        (MonitorError::NoiseTime, "noise_time_s"),
        (MonitorError::NoiseLimit, "noise_rms_max"),
    ];
    for (e, name) in names {
        assert_eq!(e.name(), name);
        assert!(e.to_string().starts_with("monitor "), "{e:?}");
    }
    assert_eq!(
        MonitorError::OscillationCount.to_string(),
        "monitor oscillation_count must be an integer in 1..32"
    );
    assert_eq!(
        MonitorError::Period.to_string(),
        "monitor period_s must be finite and > 0"
    );
}

#[test]
fn iae_limit_and_event_count() {
    let m = Monitor::new(MonitorSettings::new(0.1, 0.5, 2.0)).expect("valid");
    assert!((m.iae_limit() - 1.0 / core::f32::consts::PI).abs() < 1e-6);
    let s = MonitorSettings::new(0.1, 0.1, 1.0).with_oscillation_rule(100.0, 5);
    let mut m = Monitor::new(s).expect("valid");
    m.update(0.0, 0.0, Status::NONE);
    let mut y = 1.0;
    let mut flagged = 0;
    for round in 0..8 {
        for _ in 0..5 {
            let d = m.update(0.0, y, Status::NONE);
            flagged += usize::from(d.contains(Diagnostics::LOAD_DISTURBANCE));
        }
        y = -y;
        let d = m.update(0.0, y, Status::NONE);
        flagged += usize::from(d.contains(Diagnostics::LOAD_DISTURBANCE));
        // The first crossing only arms the detector; each later one counts
        // the excursion it closes (IAE 0.5 > 0.1·1/π).
        assert_eq!(m.load_disturbances(), round, "round {round}");
        assert_eq!(
            d.contains(Diagnostics::OSCILLATION),
            round > 5,
            "round {round}"
        );
    }
    assert_eq!(flagged, 7);
}

#[test]
fn saturation_time_is_rounded_to_whole_samples() {
    // 0.25 s at 0.1 s per sample is 2.5 → 3 samples: flagged from the 4th.
    let s = MonitorSettings::new(0.1, 0.1, 1.0).with_saturation_time_s(0.25);
    let mut m = Monitor::new(s).expect("valid");
    let raised: Vec<bool> = (0..5)
        .map(|_| {
            m.update(1.0, 0.0, Status::CLAMP_LOW)
                .contains(Diagnostics::SATURATION)
        })
        .collect();
    assert_eq!(raised, [false, false, false, true, true]);
    // Shorter than one sample: one sample.
    let s = MonitorSettings::new(0.1, 0.1, 1.0).with_saturation_time_s(0.01);
    let mut m = Monitor::new(s).expect("valid");
    assert!(
        !m.update(1.0, 0.0, Status::CLAMP_HIGH)
            .contains(Diagnostics::SATURATION)
    );
    assert!(
        m.update(1.0, 0.0, Status::CLAMP_HIGH)
            .contains(Diagnostics::SATURATION)
    );
}

#[test]
fn zero_noise_limit_is_refused() {
    let s = MonitorSettings::new(0.01, 0.1, 1.0).with_noise_rms_max(0.0);
    assert_eq!(s.validate(), Err(MonitorError::NoiseLimit));
}

#[test]
fn clear_latched_and_reset_forget() {
    let s = MonitorSettings::new(0.1, 0.1, 1.0).with_saturation_time_s(0.1);
    let mut m = Monitor::new(s).expect("valid");
    for _ in 0..3 {
        m.update(1.0, 0.0, Status::CLAMP_HIGH);
    }
    m.update(1.0, 0.9, Status::NONE);
    assert!(m.latched().contains(Diagnostics::SATURATION));
    m.clear_latched();
    assert_eq!(m.latched(), Diagnostics::NONE);
    m.update(0.0, 1.0, Status::NONE);
    m.update(0.0, -1.0, Status::NONE);
    assert!(m.noise_rms() > 0.0);
    m.reset();
    assert_eq!(m.noise_rms(), 0.0);
    assert_eq!(m.load_disturbances(), 0);
    assert_eq!(m.latched(), Diagnostics::NONE);
    // After a reset the first sample only records the setpoint: no
    // crossing, no noise from the jump to the new reading.
    assert_eq!(m.update(0.0, 5.0, Status::NONE), Diagnostics::NONE);
    assert_eq!(m.noise_rms(), 0.0);
}

/// Ts = 0.5 s, a = 1, T_u = π: IAE limit exactly 1.0 (f32).
fn exact() -> Monitor {
    let s = MonitorSettings::new(0.5, 1.0, core::f32::consts::PI).with_oscillation_rule(5.0, 5);
    let m = Monitor::new(s).expect("valid");
    assert_eq!(m.iae_limit(), 1.0);
    m
}

/// Arms the detector: a negative excursion, then the crossing.
fn armed() -> Monitor {
    let mut m = exact();
    m.update(0.0, 0.0, Status::NONE);
    m.update(0.0, 0.25, Status::NONE); // IAE 0.125: too small to count
    m.update(0.0, -0.25, Status::NONE); // crossing: arms
    m
}

#[test]
fn an_excursion_must_exceed_the_limit_strictly() {
    // The arming sample's error (+0.25 for 0.5 s) starts the excursion.
    let mut m = armed();
    m.update(0.0, -0.75, Status::NONE); // IAE 0.125 + 0.375 = 0.5
    m.update(0.0, -1.0, Status::NONE); // 1.0: equal to the limit
    let d = m.update(0.0, 1.0, Status::NONE);
    assert!(!d.contains(Diagnostics::LOAD_DISTURBANCE));
    let mut m = armed();
    m.update(0.0, -0.75, Status::NONE);
    m.update(0.0, -1.25, Status::NONE); // 1.125 > 1
    let d = m.update(0.0, 1.0, Status::NONE);
    assert!(d.contains(Diagnostics::LOAD_DISTURBANCE));
}

#[test]
fn an_exactly_zero_error_is_no_crossing() {
    let mut m = armed();
    for _ in 0..4 {
        m.update(0.0, -1.0, Status::NONE); // IAE 0.125 + 2.0
    }
    // Exactly on the setpoint: neither side, the excursion goes on.
    assert!(
        !m.update(0.0, 0.0, Status::NONE)
            .contains(Diagnostics::LOAD_DISTURBANCE)
    );
    assert!(
        !m.update(0.0, -1.0, Status::NONE)
            .contains(Diagnostics::LOAD_DISTURBANCE)
    );
    assert!(
        m.update(0.0, 1.0, Status::NONE)
            .contains(Diagnostics::LOAD_DISTURBANCE)
    );
}

#[test]
fn sluggish_needs_an_error_strictly_above_the_amplitude() {
    let s = MonitorSettings::new(0.1, 0.5, 1.0).with_sluggish_time_s(0.2);
    let mut m = Monitor::new(s).expect("valid");
    m.update(0.0, 0.0, Status::NONE);
    m.update(0.0, 0.25, Status::NONE);
    m.update(0.0, -0.25, Status::NONE); // armed
    for _ in 0..10 {
        assert!(!m.update(0.0, -0.5, Status::NONE).is_alarm()); // |e| = a exactly
    }
    let raised = (0..4).any(|_| {
        m.update(0.0, -0.75, Status::NONE)
            .contains(Diagnostics::SLUGGISH)
    });
    assert!(raised);
}

#[test]
fn detections_are_forgotten_after_exactly_the_supervision_time() {
    // T_sup = 5 s at 0.5 s: 10 samples.
    let mut m = armed();
    m.update(0.0, -2.0, Status::NONE); // IAE 0.125 + 1.0 > 1
    m.update(0.0, 1.0, Status::NONE); // detection at this sample
    assert_eq!(m.load_disturbances(), 1);
    // Stay on the setpoint (no crossing): kept for 10 more samples, gone at the 11th.
    for k in 1..=10 {
        m.update(0.0, 0.0, Status::NONE);
        assert_eq!(m.load_disturbances(), 1, "sample {k}");
    }
    m.update(0.0, 0.0, Status::NONE);
    assert_eq!(m.load_disturbances(), 0);
}

#[test]
fn noise_flag_needs_the_rms_strictly_above_its_limit() {
    // noise_time = Ts: the estimate is the last Δy²/2 exactly.
    let base = MonitorSettings::new(0.1, 0.1, 1.0).with_noise_time_s(0.1);
    let feed = |m: &mut Monitor| {
        m.update(0.0, 0.0, Status::NONE);
        m.update(0.0, 2.0, Status::NONE)
    };
    let mut probe = Monitor::new(base).expect("valid");
    feed(&mut probe);
    let rms = probe.noise_rms();
    assert!((rms - 2.0_f32.sqrt()).abs() < 2e-3 * rms);
    let mut at = Monitor::new(base.with_noise_rms_max(rms)).expect("valid");
    assert!(!feed(&mut at).contains(Diagnostics::NOISY));
    let mut below = Monitor::new(base.with_noise_rms_max(rms * 0.999)).expect("valid");
    assert!(feed(&mut below).contains(Diagnostics::NOISY));
}
