//! On-target loop monitor (feature `monitor`): diagnostics a firmware can
//! turn into fault codes, computed beside the controller from the same
//! setpoint, measurement and status.
//!
//! Loops drift in the field (a payload the design never saw, a worn
//! actuator, a noisy sensor). [`Monitor::update`] runs once per sample, in
//! bounded memory and without panics, and raises [`Diagnostics`]:
//!
//! | flag | method |
//! |---|---|
//! | [`Diagnostics::LOAD_DISTURBANCE`] | Hägglund's load-disturbance detection: the integrated absolute error (IAE) between two zero crossings of the control error exceeds `IAE_lim = 2a/ω_u = a·T_u/π` (T. Hägglund, "A control-loop performance monitor", *Control Engineering Practice* 3(11), 1995; from memory). Raised on the sample of the crossing that closes the excursion. |
//! | [`Diagnostics::OSCILLATION`] | Hägglund's oscillation rule (same paper, from memory): more than `n_lim` load disturbances (default 10) within the supervision time `T_sup` (default 50·T_u). The detection times are kept in a `heapless::Deque`, so the count is exact over a sliding window. |
//! | [`Diagnostics::SATURATION`] | the command has been held by a limit (clamp or a downstream limit, see [`Status`]) without a break for longer than `saturation_time_s` (common practice). |
//! | [`Diagnostics::SLUGGISH`] | our own rule: with the setpoint constant, the error has stayed on one side of zero and above the amplitude `a` for longer than `sluggish_time_s` (a loop that takes too long to remove a load disturbance). |
//! | [`Diagnostics::NOISY`] | running RMS of the measurement noise above `noise_rms_max`: for white noise of standard deviation σ the first difference `y_k − y_{k−1}` has variance 2σ², so `σ̂² = EWMA(Δy²/2)` with forgetting factor `Ts/T_noise`; σ̂ is its square root. |
//!
//! Setpoint changes are not load disturbances: a change of the setpoint
//! ends the current excursion, and error excursions are judged again only
//! from the next zero crossing on (Hägglund's detector supervises
//! regulation, not servo response).
//!
//! # Numeric contract
//!
//! `f32` throughout, + − × ÷ and comparisons, plus one square root per
//! sample for the noise RMS: `micromath`'s bit-level approximation (up to
//! 6.1 % high, measured in the tests) refined by one Newton–Raphson step,
//! which brings the relative error below [`SQRT_REL_TOLERANCE`] (0.2 %;
//! checked against `std`'s correctly rounded `sqrt` in the tests). No
//! `exp`/`ln`: forgetting factors are `Ts/T`. Non-finite inputs are ignored
//! (the sample is skipped). Memory: a fixed-size struct with a
//! `heapless::Deque` of [`MAX_EVENTS`] sample counters; time counters
//! saturate instead of wrapping.

use heapless::Deque;
use micromath::F32Ext;

use crate::status::Status;

/// Largest number of load-disturbance events kept for the oscillation rule
/// (so `n_lim` may be at most `MAX_EVENTS − 1`).
///
/// ```
/// assert_eq!(evenkeel::monitor::MAX_EVENTS, 32);
/// ```
pub const MAX_EVENTS: usize = 32;

/// Worst relative error of [`noise_rms`](Monitor::noise_rms)'s square root
/// (micromath approximation plus one Newton–Raphson step): 0.2 %.
///
/// ```
/// assert_eq!(evenkeel::monitor::SQRT_REL_TOLERANCE, 0.002);
/// ```
pub const SQRT_REL_TOLERANCE: f32 = 0.002;

/// Diagnostic flags of one monitor update.
///
/// ```
/// use evenkeel::monitor::Diagnostics;
/// let d = Diagnostics::OSCILLATION | Diagnostics::NOISY;
/// assert!(d.contains(Diagnostics::NOISY) && d.is_alarm());
/// assert!(!Diagnostics::LOAD_DISTURBANCE.is_alarm()); // an event, not an alarm
/// assert!(d.names().eq(["oscillation", "noisy"]));
/// ```
#[derive(Clone, Copy, PartialEq, Eq, Hash, Default, Debug)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct Diagnostics(u8);

impl Diagnostics {
    /// No flag.
    ///
    /// ```
    /// assert_eq!(evenkeel::monitor::Diagnostics::NONE.bits(), 0);
    /// ```
    pub const NONE: Self = Self(0);
    /// A load disturbance was detected on this sample (an event).
    ///
    /// ```
    /// assert_eq!(evenkeel::monitor::Diagnostics::LOAD_DISTURBANCE.bits(), 1);
    /// ```
    pub const LOAD_DISTURBANCE: Self = Self(1 << 0);
    /// Sustained oscillation (alarm).
    ///
    /// ```
    /// assert_eq!(evenkeel::monitor::Diagnostics::OSCILLATION.bits(), 2);
    /// ```
    pub const OSCILLATION: Self = Self(1 << 1);
    /// Persistent saturation (alarm).
    ///
    /// ```
    /// assert_eq!(evenkeel::monitor::Diagnostics::SATURATION.bits(), 4);
    /// ```
    pub const SATURATION: Self = Self(1 << 2);
    /// Sluggish load response (alarm).
    ///
    /// ```
    /// assert_eq!(evenkeel::monitor::Diagnostics::SLUGGISH.bits(), 8);
    /// ```
    pub const SLUGGISH: Self = Self(1 << 3);
    /// Measurement noise above its limit (alarm).
    ///
    /// ```
    /// assert_eq!(evenkeel::monitor::Diagnostics::NOISY.bits(), 16);
    /// ```
    pub const NOISY: Self = Self(1 << 4);

    const ALARMS: u8 = Self::OSCILLATION.0 | Self::SATURATION.0 | Self::SLUGGISH.0 | Self::NOISY.0;
    const NAMES: [(Self, &'static str); 5] = [
        (Self::LOAD_DISTURBANCE, "load_disturbance"),
        (Self::OSCILLATION, "oscillation"),
        (Self::SATURATION, "saturation"),
        (Self::SLUGGISH, "sluggish"),
        (Self::NOISY, "noisy"),
    ];

    /// The raw bits (bit n is the n-th constant above).
    ///
    /// ```
    /// use evenkeel::monitor::Diagnostics;
    /// assert_eq!((Diagnostics::SATURATION | Diagnostics::NOISY).bits(), 0b1_0100);
    /// ```
    #[must_use]
    pub const fn bits(self) -> u8 {
        self.0
    }

    /// `true` if every flag of `other` is set.
    ///
    /// ```
    /// use evenkeel::monitor::Diagnostics;
    /// assert!(Diagnostics::SLUGGISH.contains(Diagnostics::NONE));
    /// assert!(!Diagnostics::SLUGGISH.contains(Diagnostics::SLUGGISH | Diagnostics::NOISY));
    /// ```
    #[must_use]
    pub const fn contains(self, other: Self) -> bool {
        self.0 & other.0 == other.0
    }

    /// `true` if an alarm (anything but the load-disturbance event) is set.
    ///
    /// ```
    /// use evenkeel::monitor::Diagnostics;
    /// assert!(Diagnostics::SATURATION.is_alarm());
    /// assert!(!Diagnostics::NONE.is_alarm());
    /// ```
    #[must_use]
    pub const fn is_alarm(self) -> bool {
        self.0 & Self::ALARMS != 0
    }

    /// Each set flag's name, in bit order.
    ///
    /// ```
    /// use evenkeel::monitor::Diagnostics;
    /// let d = Diagnostics::SLUGGISH | Diagnostics::LOAD_DISTURBANCE;
    /// assert!(d.names().eq(["load_disturbance", "sluggish"]));
    /// ```
    pub fn names(self) -> impl Iterator<Item = &'static str> {
        Self::NAMES
            .into_iter()
            .filter(move |(flag, _)| self.contains(*flag))
            .map(|(_, name)| name)
    }
}

impl core::ops::BitOr for Diagnostics {
    type Output = Self;
    fn bitor(self, rhs: Self) -> Self {
        Self(self.0 | rhs.0)
    }
}

impl core::ops::BitOrAssign for Diagnostics {
    fn bitor_assign(&mut self, rhs: Self) {
        self.0 |= rhs.0;
    }
}

impl core::fmt::Display for Diagnostics {
    /// Flag names joined by `|`, or `-` when none is set.
    ///
    /// ```
    /// use evenkeel::monitor::Diagnostics;
    /// assert_eq!((Diagnostics::OSCILLATION | Diagnostics::SATURATION).to_string(), "oscillation|saturation");
    /// assert_eq!(Diagnostics::NONE.to_string(), "-");
    /// ```
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        let mut first = true;
        for name in self.names() {
            if !first {
                f.write_str("|")?;
            }
            f.write_str(name)?;
            first = false;
        }
        if first {
            f.write_str("-")?;
        }
        Ok(())
    }
}

/// A monitor setting that is not a finite positive number (or, for the
/// oscillation count, not below [`MAX_EVENTS`]).
///
/// ```
/// use evenkeel::monitor::{MonitorError, MonitorSettings};
/// let bad = MonitorSettings::new(0.01, 0.0, 2.0);
/// assert_eq!(bad.validate(), Err(MonitorError::Amplitude));
/// assert_eq!(MonitorError::Amplitude.to_string(), "monitor amplitude must be finite and > 0");
/// ```
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
#[non_exhaustive]
pub enum MonitorError {
    /// `period_s`.
    Period,
    /// `amplitude`.
    Amplitude,
    /// `ultimate_period_s`.
    UltimatePeriod,
    /// `supervision_time_s`.
    SupervisionTime,
    /// `oscillation_count` must be in 1..`MAX_EVENTS`.
    OscillationCount,
    /// `saturation_time_s`.
    SaturationTime,
    /// `sluggish_time_s`.
    SluggishTime,
    /// `noise_time_s`.
    NoiseTime,
    /// `noise_rms_max` (must be > 0; `f32::INFINITY` turns the check off).
    NoiseLimit,
}

impl MonitorError {
    /// The setting's name.
    ///
    /// ```
    /// assert_eq!(evenkeel::monitor::MonitorError::SluggishTime.name(), "sluggish_time_s");
    /// ```
    #[must_use]
    pub const fn name(self) -> &'static str {
        match self {
            Self::Period => "period_s",
            Self::Amplitude => "amplitude",
            Self::UltimatePeriod => "ultimate_period_s",
            Self::SupervisionTime => "supervision_time_s",
            Self::OscillationCount => "oscillation_count",
            Self::SaturationTime => "saturation_time_s",
            Self::SluggishTime => "sluggish_time_s",
            Self::NoiseTime => "noise_time_s",
            Self::NoiseLimit => "noise_rms_max",
        }
    }
}

impl core::fmt::Display for MonitorError {
    fn fmt(&self, f: &mut core::fmt::Formatter<'_>) -> core::fmt::Result {
        match self {
            Self::OscillationCount => write!(
                f,
                "monitor oscillation_count must be an integer in 1..{MAX_EVENTS}"
            ),
            Self::NoiseLimit => f.write_str("monitor noise_rms_max must be > 0 (inf: off)"),
            other => write!(f, "monitor {} must be finite and > 0", other.name()),
        }
    }
}

impl core::error::Error for MonitorError {}

/// Monitor settings. Time constants in seconds, `amplitude` and
/// `noise_rms_max` in measurement units.
///
/// ```
/// use evenkeel::monitor::MonitorSettings;
/// // Ts = 10 ms, detect load disturbances of 0.05 and more, T_u ≈ 2 s.
/// let s = MonitorSettings::new(0.01, 0.05, 2.0).with_noise_rms_max(0.02);
/// assert_eq!(s.supervision_time_s, 100.0); // 50·T_u
/// assert_eq!(s.oscillation_count, 10);
/// assert!(s.validate().is_ok());
/// ```
#[derive(Clone, Copy, Debug, PartialEq)]
#[cfg_attr(feature = "defmt", derive(defmt::Format))]
pub struct MonitorSettings {
    /// Sample period Ts.
    pub period_s: f32,
    /// a: the smallest load-disturbance amplitude worth detecting
    /// (Hägglund suggests about 1 % of the signal range; from memory).
    pub amplitude: f32,
    /// T_u: ultimate period of the loop, or the integral time Ti = Kp/Ki
    /// when T_u is unknown (Hägglund's fallback; from memory).
    pub ultimate_period_s: f32,
    /// T_sup: sliding window of the oscillation rule. Default 50·T_u.
    pub supervision_time_s: f32,
    /// n_lim: more detections than this within T_sup mean oscillation.
    /// Default 10.
    pub oscillation_count: u8,
    /// Continuous limiting longer than this raises `SATURATION`.
    /// Default 20·T_u.
    pub saturation_time_s: f32,
    /// A one-sided error above `amplitude` longer than this (setpoint
    /// constant) raises `SLUGGISH`. Default 10·T_u.
    pub sluggish_time_s: f32,
    /// Averaging time of the noise RMS. Default 2·T_u.
    pub noise_time_s: f32,
    /// Noise RMS above this raises `NOISY`. Default `f32::INFINITY` (off).
    pub noise_rms_max: f32,
}

impl MonitorSettings {
    /// Settings with Hägglund's defaults for the oscillation rule and the
    /// defaults above for the rest.
    ///
    /// ```
    /// let s = evenkeel::monitor::MonitorSettings::new(0.1, 1.0, 4.0);
    /// assert_eq!((s.saturation_time_s, s.sluggish_time_s, s.noise_time_s), (80.0, 40.0, 8.0));
    /// ```
    #[must_use]
    pub const fn new(period_s: f32, amplitude: f32, ultimate_period_s: f32) -> Self {
        Self {
            period_s,
            amplitude,
            ultimate_period_s,
            supervision_time_s: 50.0 * ultimate_period_s,
            oscillation_count: 10,
            saturation_time_s: 20.0 * ultimate_period_s,
            sluggish_time_s: 10.0 * ultimate_period_s,
            noise_time_s: 2.0 * ultimate_period_s,
            noise_rms_max: f32::INFINITY,
        }
    }

    /// Set the supervision window and the number of detections in it.
    ///
    /// ```
    /// let s = evenkeel::monitor::MonitorSettings::new(0.1, 1.0, 4.0).with_oscillation_rule(60.0, 5);
    /// assert_eq!((s.supervision_time_s, s.oscillation_count), (60.0, 5));
    /// ```
    #[must_use]
    pub const fn with_oscillation_rule(mut self, supervision_time_s: f32, count: u8) -> Self {
        self.supervision_time_s = supervision_time_s;
        self.oscillation_count = count;
        self
    }

    /// Set the saturation time.
    ///
    /// ```
    /// let s = evenkeel::monitor::MonitorSettings::new(0.1, 1.0, 4.0).with_saturation_time_s(3.0);
    /// assert_eq!(s.saturation_time_s, 3.0);
    /// ```
    #[must_use]
    pub const fn with_saturation_time_s(mut self, t: f32) -> Self {
        self.saturation_time_s = t;
        self
    }

    /// Set the sluggishness time.
    ///
    /// ```
    /// let s = evenkeel::monitor::MonitorSettings::new(0.1, 1.0, 4.0).with_sluggish_time_s(7.0);
    /// assert_eq!(s.sluggish_time_s, 7.0);
    /// ```
    #[must_use]
    pub const fn with_sluggish_time_s(mut self, t: f32) -> Self {
        self.sluggish_time_s = t;
        self
    }

    /// Set the noise limit (`f32::INFINITY`: off).
    ///
    /// ```
    /// let s = evenkeel::monitor::MonitorSettings::new(0.1, 1.0, 4.0).with_noise_rms_max(0.5);
    /// assert_eq!(s.noise_rms_max, 0.5);
    /// ```
    #[must_use]
    pub const fn with_noise_rms_max(mut self, rms: f32) -> Self {
        self.noise_rms_max = rms;
        self
    }

    /// Set the noise averaging time.
    ///
    /// ```
    /// let s = evenkeel::monitor::MonitorSettings::new(0.1, 1.0, 4.0).with_noise_time_s(1.5);
    /// assert_eq!(s.noise_time_s, 1.5);
    /// ```
    #[must_use]
    pub const fn with_noise_time_s(mut self, t: f32) -> Self {
        self.noise_time_s = t;
        self
    }

    /// Check every setting.
    ///
    /// ```
    /// use evenkeel::monitor::{MonitorError, MonitorSettings};
    /// let s = MonitorSettings::new(0.01, 0.1, 1.0);
    /// assert_eq!(s.with_oscillation_rule(50.0, 40).validate(), Err(MonitorError::OscillationCount));
    /// assert_eq!(s.with_noise_rms_max(0.0).validate(), Err(MonitorError::NoiseLimit));
    /// assert!(s.with_noise_rms_max(f32::INFINITY).validate().is_ok());
    /// ```
    ///
    /// # Errors
    /// The first setting that is not allowed.
    pub const fn validate(&self) -> Result<(), MonitorError> {
        const fn positive(x: f32) -> bool {
            x.is_finite() && x > 0.0
        }
        if !positive(self.period_s) {
            return Err(MonitorError::Period);
        }
        if !positive(self.amplitude) {
            return Err(MonitorError::Amplitude);
        }
        if !positive(self.ultimate_period_s) {
            return Err(MonitorError::UltimatePeriod);
        }
        if !positive(self.supervision_time_s) {
            return Err(MonitorError::SupervisionTime);
        }
        if !positive(self.saturation_time_s) {
            return Err(MonitorError::SaturationTime);
        }
        if !positive(self.sluggish_time_s) {
            return Err(MonitorError::SluggishTime);
        }
        if !positive(self.noise_time_s) {
            return Err(MonitorError::NoiseTime);
        }
        if self.oscillation_count == 0 || self.oscillation_count as usize >= MAX_EVENTS {
            return Err(MonitorError::OscillationCount);
        }
        if self.noise_rms_max.is_nan() || self.noise_rms_max <= 0.0 {
            return Err(MonitorError::NoiseLimit);
        }
        Ok(())
    }
}

/// Square root: micromath's approximation plus one Newton–Raphson step.
/// Relative error ≤ [`SQRT_REL_TOLERANCE`] for positive normal inputs; 0
/// for 0 and negative inputs.
fn sqrt(x: f32) -> f32 {
    if x.is_nan() || x <= 0.0 {
        return 0.0;
    }
    let y = F32Ext::sqrt(x);
    0.5 * (y + x / y)
}

/// Whole samples in `t_s` (at least 1), saturating at `u32::MAX`.
fn samples(t_s: f32, period_s: f32) -> u32 {
    let n = t_s / period_s;
    if n >= 4.0e9 {
        u32::MAX
    } else if n < 1.0 {
        1
    } else {
        // In 1..4e9: fits u32. Round to nearest.
        #[allow(clippy::cast_possible_truncation, clippy::cast_sign_loss)]
        let whole = (n + 0.5) as u32;
        whole
    }
}

/// The loop monitor. Feed it every sample with [`Monitor::update`].
///
/// ```
/// use evenkeel::{Config, Controller, Settings};
/// use evenkeel::monitor::{Diagnostics, Monitor, MonitorSettings};
/// let config = Config::<f32>::try_new(&Settings::new(0.01, 2.0, 1.0, -5.0, 5.0));
/// let mut pi = Controller::new(config.map_err(|_| "config")?);
/// let mut monitor = Monitor::new(MonitorSettings::new(0.01, 0.05, 2.0)).map_err(|_| "settings")?;
/// let (r, y) = (1.0, 0.98);
/// let out = pi.step(r, y);
/// let flags = monitor.update(r, y, out.status);
/// assert_eq!(flags, Diagnostics::NONE);
/// assert_eq!(monitor.latched(), Diagnostics::NONE);
/// # Ok::<(), &str>(())
/// ```
#[derive(Clone, Debug)]
pub struct Monitor {
    settings: MonitorSettings,
    iae_limit: f32,
    supervision: u32,
    saturation_limit: u32,
    sluggish_limit: u32,
    noise_lambda: f32,
    /// Sample counter (wraps; only differences are used).
    now: u32,
    /// Sample counters of recent load-disturbance detections.
    events: Deque<u32, MAX_EVENTS>,
    /// Sign of the current excursion: 1, −1, or 0 (none yet / not armed).
    sign: i8,
    /// Whether the current excursion may count (not begun by a setpoint change).
    armed: bool,
    iae: f32,
    excursion: u32,
    saturated: u32,
    last_setpoint: Option<f32>,
    last_measurement: Option<f32>,
    noise_var: f32,
    latched: Diagnostics,
}

impl Monitor {
    /// A monitor with validated settings.
    ///
    /// ```
    /// use evenkeel::monitor::{Monitor, MonitorError, MonitorSettings};
    /// assert!(Monitor::new(MonitorSettings::new(0.01, 0.05, 2.0)).is_ok());
    /// assert_eq!(Monitor::new(MonitorSettings::new(-1.0, 0.05, 2.0)).err(), Some(MonitorError::Period));
    /// ```
    ///
    /// # Errors
    /// [`MonitorError`] naming the first setting that is not allowed.
    pub fn new(settings: MonitorSettings) -> Result<Self, MonitorError> {
        settings.validate()?;
        let ts = settings.period_s;
        let lambda = ts / settings.noise_time_s;
        Ok(Self {
            settings,
            iae_limit: settings.amplitude * settings.ultimate_period_s / core::f32::consts::PI,
            supervision: samples(settings.supervision_time_s, ts),
            saturation_limit: samples(settings.saturation_time_s, ts),
            sluggish_limit: samples(settings.sluggish_time_s, ts),
            noise_lambda: if lambda > 1.0 { 1.0 } else { lambda },
            now: 0,
            events: Deque::new(),
            sign: 0,
            armed: false,
            iae: 0.0,
            excursion: 0,
            saturated: 0,
            last_setpoint: None,
            last_measurement: None,
            noise_var: 0.0,
            latched: Diagnostics::NONE,
        })
    }

    /// The settings in use.
    ///
    /// ```
    /// use evenkeel::monitor::{Monitor, MonitorSettings};
    /// let m = Monitor::new(MonitorSettings::new(0.01, 0.05, 2.0)).map_err(|_| "settings")?;
    /// assert_eq!(m.settings().amplitude, 0.05);
    /// # Ok::<(), &str>(())
    /// ```
    #[must_use]
    pub fn settings(&self) -> &MonitorSettings {
        &self.settings
    }

    /// Hägglund's IAE limit `2a/ω_u = a·T_u/π` (measurement units · s).
    ///
    /// ```
    /// use evenkeel::monitor::{Monitor, MonitorSettings};
    /// let m = Monitor::new(MonitorSettings::new(0.01, 0.5, 2.0)).map_err(|_| "settings")?;
    /// assert!((m.iae_limit() - 1.0 / core::f32::consts::PI).abs() < 1e-6);
    /// # Ok::<(), &str>(())
    /// ```
    #[must_use]
    pub fn iae_limit(&self) -> f32 {
        self.iae_limit
    }

    /// Load disturbances detected within the supervision window.
    ///
    /// ```
    /// use evenkeel::monitor::{Monitor, MonitorSettings};
    /// let m = Monitor::new(MonitorSettings::new(0.01, 0.05, 2.0)).map_err(|_| "settings")?;
    /// assert_eq!(m.load_disturbances(), 0);
    /// # Ok::<(), &str>(())
    /// ```
    #[must_use]
    pub fn load_disturbances(&self) -> usize {
        self.events.len()
    }

    /// Running RMS estimate of the measurement noise (measurement units).
    ///
    /// ```
    /// use evenkeel::Status;
    /// use evenkeel::monitor::{Monitor, MonitorSettings};
    /// let mut m = Monitor::new(MonitorSettings::new(0.01, 0.05, 2.0)).map_err(|_| "settings")?;
    /// for k in 0..4000 {
    ///     let y = if k % 2 == 0 { 0.1 } else { -0.1 }; // ±0.1: Δy² / 2 = 0.02
    ///     m.update(0.0, y, Status::NONE);
    /// }
    /// assert!((m.noise_rms() - 0.02_f32.sqrt()).abs() < 1e-3);
    /// # Ok::<(), &str>(())
    /// ```
    #[must_use]
    pub fn noise_rms(&self) -> f32 {
        sqrt(self.noise_var)
    }

    /// Every flag raised since creation or the last [`Monitor::clear_latched`].
    ///
    /// ```
    /// use evenkeel::monitor::{Diagnostics, Monitor, MonitorSettings};
    /// let m = Monitor::new(MonitorSettings::new(0.01, 0.05, 2.0)).map_err(|_| "settings")?;
    /// assert_eq!(m.latched(), Diagnostics::NONE);
    /// # Ok::<(), &str>(())
    /// ```
    #[must_use]
    pub fn latched(&self) -> Diagnostics {
        self.latched
    }

    /// Forget the latched flags (e.g. once the firmware has logged them).
    ///
    /// ```
    /// use evenkeel::Status;
    /// use evenkeel::monitor::{Diagnostics, Monitor, MonitorSettings};
    /// let s = MonitorSettings::new(0.1, 0.05, 1.0).with_saturation_time_s(0.2);
    /// let mut m = Monitor::new(s).map_err(|_| "settings")?;
    /// for _ in 0..5 {
    ///     m.update(1.0, 0.0, Status::CLAMP_HIGH);
    /// }
    /// assert!(m.latched().contains(Diagnostics::SATURATION));
    /// m.clear_latched();
    /// assert_eq!(m.latched(), Diagnostics::NONE);
    /// # Ok::<(), &str>(())
    /// ```
    pub fn clear_latched(&mut self) {
        self.latched = Diagnostics::NONE;
    }

    /// Back to the state of [`Monitor::new`].
    ///
    /// ```
    /// use evenkeel::Status;
    /// use evenkeel::monitor::{Monitor, MonitorSettings};
    /// let mut m = Monitor::new(MonitorSettings::new(0.01, 0.05, 2.0)).map_err(|_| "settings")?;
    /// m.update(0.0, 1.0, Status::NONE);
    /// m.update(0.0, -1.0, Status::NONE);
    /// m.reset();
    /// assert_eq!(m.noise_rms(), 0.0);
    /// # Ok::<(), &str>(())
    /// ```
    pub fn reset(&mut self) {
        let settings = self.settings;
        if let Ok(fresh) = Self::new(settings) {
            *self = fresh;
        }
    }

    /// One sample: the controller's setpoint, measurement and status.
    /// Returns the flags of this sample (alarms stay raised while their
    /// condition holds) and adds them to [`Monitor::latched`]. A non-finite
    /// setpoint or measurement is skipped (returns the alarms as they were,
    /// without the event flag).
    ///
    /// ```
    /// use evenkeel::Status;
    /// use evenkeel::monitor::{Diagnostics, Monitor, MonitorSettings};
    /// let mut m = Monitor::new(MonitorSettings::new(0.1, 0.1, 1.0)).map_err(|_| "settings")?;
    /// m.update(1.0, 1.0, Status::NONE); // setpoint known, loop at rest
    /// m.update(1.0, 1.02, Status::NONE); // a small excursion (error −0.02)
    /// // A load disturbance: the error jumps to +0.5 (this first crossing
    /// // arms the detector), stays for 1 s, then crosses zero again.
    /// for _ in 0..10 {
    ///     m.update(1.0, 0.5, Status::NONE);
    /// }
    /// // IAE = 10 · 0.1 s · 0.5 = 0.5 > a·T_u/π = 0.032
    /// assert!(m.update(1.0, 1.2, Status::NONE).contains(Diagnostics::LOAD_DISTURBANCE));
    /// # Ok::<(), &str>(())
    /// ```
    pub fn update(&mut self, setpoint: f32, measurement: f32, status: Status) -> Diagnostics {
        let mut flags = self.current_alarms();
        if !(setpoint.is_finite() && measurement.is_finite()) {
            return flags;
        }
        self.now = self.now.wrapping_add(1);
        let ts = self.settings.period_s;

        // Oscillation: Hägglund's IAE between zero crossings.
        let error = setpoint - measurement;
        let sign: i8 = if error > 0.0 {
            1
        } else if error < 0.0 {
            -1
        } else {
            0
        };
        let setpoint_moved = self.last_setpoint.is_some_and(|r| r != setpoint);
        self.last_setpoint = Some(setpoint);
        if setpoint_moved {
            // A servo move, not a load disturbance: judge from the next crossing on.
            self.armed = false;
            self.sign = sign;
            self.iae = 0.0;
            self.excursion = 0;
        } else if sign != 0 && sign != self.sign {
            if self.armed && self.sign != 0 && self.iae > self.iae_limit {
                if self.events.is_full() {
                    let _ = self.events.pop_front();
                }
                let _ = self.events.push_back(self.now);
                flags |= Diagnostics::LOAD_DISTURBANCE;
            }
            // The first crossing after a setpoint move arms the detector.
            self.armed = self.sign != 0 || self.armed;
            self.sign = sign;
            self.iae = 0.0;
            self.excursion = 0;
        }
        if sign != 0 {
            self.iae += F32Ext::abs(error) * ts;
        }
        if self.armed && F32Ext::abs(error) > self.settings.amplitude {
            self.excursion = self.excursion.saturating_add(1);
        } else {
            self.excursion = 0;
        }
        let horizon = self.supervision;
        while let Some(&oldest) = self.events.front() {
            if self.now.wrapping_sub(oldest) > horizon {
                let _ = self.events.pop_front();
            } else {
                break;
            }
        }

        // Saturation: any limiter holding the command.
        let limited =
            Status::CLAMP_HIGH.bits() | Status::CLAMP_LOW.bits() | Status::DOWNSTREAM.bits();
        if status.bits() & limited != 0 {
            self.saturated = self.saturated.saturating_add(1);
        } else {
            self.saturated = 0;
        }

        // Noise: EWMA of Δy²/2.
        if let Some(last) = self.last_measurement {
            let d = measurement - last;
            self.noise_var += self.noise_lambda * (0.5 * d * d - self.noise_var);
        }
        self.last_measurement = Some(measurement);

        flags = (flags & Diagnostics::LOAD_DISTURBANCE) | self.current_alarms();
        self.latched |= flags;
        flags
    }

    /// Alarms whose condition holds now.
    fn current_alarms(&self) -> Diagnostics {
        let mut flags = Diagnostics::NONE;
        if self.events.len() > usize::from(self.settings.oscillation_count) {
            flags |= Diagnostics::OSCILLATION;
        }
        if self.saturated > self.saturation_limit {
            flags |= Diagnostics::SATURATION;
        }
        if self.excursion > self.sluggish_limit {
            flags |= Diagnostics::SLUGGISH;
        }
        if self.noise_rms() > self.settings.noise_rms_max {
            flags |= Diagnostics::NOISY;
        }
        flags
    }
}

impl core::ops::BitAnd for Diagnostics {
    type Output = Self;
    fn bitand(self, rhs: Self) -> Self {
        Self(self.0 & rhs.0)
    }
}

// Test-only: `expect` on settings the tests build from constants (a
// failure there is a broken test, not a run-time path of the monitor).
#[cfg(test)]
mod tests {
    extern crate std;
    use super::*;
    use std::vec::Vec;

    #[test]
    fn micromath_sqrt_alone_is_within_6_point_1_percent_and_refined_within_tolerance() {
        let mut worst_raw = 0.0f32;
        let mut worst = 0.0f32;
        let mut x = 1e-6f32;
        while x < 1e6 {
            let exact = std::primitive::f32::sqrt(x);
            let raw = F32Ext::sqrt(x);
            worst_raw = worst_raw.max(((raw - exact) / exact).abs());
            worst = worst.max(((sqrt(x) - exact) / exact).abs());
            x *= 1.013;
        }
        assert!(worst_raw < 0.061, "micromath sqrt: {worst_raw}");
        assert!(worst_raw > 0.03, "the approximation is coarse: {worst_raw}");
        assert!(worst < SQRT_REL_TOLERANCE, "refined: {worst}");
        assert_eq!(sqrt(0.0), 0.0);
        assert_eq!(sqrt(-1.0), 0.0);
    }

    /// A too-aggressive P controller on a plant with dead time: the delayed
    /// integrator ẏ = u(t − L), L = 0.5 s, with Kp = 4 > π/(2L) ≈ 3.14 (the
    /// ultimate gain of k/s·e^(−sL), from the phase condition ω·L = π/2;
    /// common textbook result).
    fn delayed_loop(kp: f32, steps: usize, noise: f32) -> (Diagnostics, usize) {
        let ts = 0.01f32;
        let mut monitor =
            Monitor::new(MonitorSettings::new(ts, 0.02, 2.0)).expect("valid settings");
        let delay = 50;
        let mut line: Vec<f32> = std::vec![0.0; delay];
        let mut y = 0.0f32;
        let mut latched = Diagnostics::NONE;
        let mut events = 0;
        for k in 0..steps {
            let r = 1.0;
            let jitter = if k % 2 == 0 { noise } else { -noise };
            let u = (kp * (r - (y + jitter))).clamp(-10.0, 10.0);
            line.push(u);
            let applied = line.remove(0);
            y += applied * ts;
            let d = monitor.update(r, y + jitter, Status::NONE);
            latched |= d;
            if d.contains(Diagnostics::LOAD_DISTURBANCE) {
                events += 1;
            }
        }
        (latched, events)
    }

    #[test]
    fn detects_oscillation_of_an_aggressive_loop_with_dead_time() {
        let (latched, events) = delayed_loop(4.0, 20_000, 0.0);
        assert!(latched.contains(Diagnostics::OSCILLATION), "{latched}");
        assert!(events > 10, "{events}");
    }

    #[test]
    fn quiet_on_a_well_tuned_loop() {
        // Kp = 1: gain margin (π/2)/(Kp·L) = 3.1; the step response
        // overshoots once or twice (lobes the detector may count) and settles.
        let (latched, events) = delayed_loop(1.0, 20_000, 0.0);
        assert!(!latched.is_alarm(), "{latched}");
        assert!(events <= 2, "{events}");
        // Kp·L = 0.25 < 1/e: no overshoot at all (the delayed integrator's
        // critical gain for a non-oscillatory response; common textbook result).
        let (latched, events) = delayed_loop(0.5, 20_000, 0.0);
        assert_eq!((latched, events), (Diagnostics::NONE, 0));
    }

    #[test]
    fn saturation_after_its_time_and_not_before() {
        let s = MonitorSettings::new(0.1, 0.1, 1.0).with_saturation_time_s(1.0);
        let mut m = Monitor::new(s).expect("valid");
        for k in 0..10 {
            let d = m.update(1.0, 0.0, Status::CLAMP_HIGH | Status::INTEGRATOR_HELD);
            assert!(!d.contains(Diagnostics::SATURATION), "sample {k}");
        }
        assert!(
            m.update(1.0, 0.0, Status::DOWNSTREAM)
                .contains(Diagnostics::SATURATION)
        );
        assert!(
            !m.update(1.0, 0.0, Status::SLEW)
                .contains(Diagnostics::SATURATION)
        );
    }

    #[test]
    fn sluggish_needs_a_constant_setpoint_and_a_crossing_first() {
        let s = MonitorSettings::new(0.1, 0.1, 1.0).with_sluggish_time_s(1.0);
        let mut m = Monitor::new(s).expect("valid");
        // A setpoint step: the long one-sided error is servo response, not sluggishness.
        m.update(0.0, 0.0, Status::NONE);
        for _ in 0..50 {
            assert!(!m.update(1.0, 0.5, Status::NONE).is_alarm());
        }
        // Crossing, then a load disturbance that is removed too slowly.
        m.update(1.0, 1.1, Status::NONE);
        let mut raised_at = None;
        for k in 0..30 {
            if m.update(1.0, 0.7, Status::NONE)
                .contains(Diagnostics::SLUGGISH)
            {
                raised_at.get_or_insert(k);
            }
        }
        assert_eq!(raised_at, Some(10)); // > 1 s = 10 samples
    }

    #[test]
    fn noise_rms_estimates_the_standard_deviation() {
        // Deterministic pseudo-noise: a ±σ square wave with random sign
        // changes has Δy²/2 = 2σ² at a change and 0 otherwise; a strict
        // alternation gives 2σ², so σ̂ = √2·σ. Use independent uniform noise
        // instead (xorshift), σ = 0.05·√(1/3)·2 for U(−0.05·√3, 0.05·√3).
        let sigma = 0.05f32;
        let half_width = sigma * 3f32.sqrt();
        let mut state = 0x1234_5678u32;
        let s = MonitorSettings::new(0.01, 0.1, 1.0)
            .with_noise_time_s(5.0)
            .with_noise_rms_max(0.06);
        let mut m = Monitor::new(s).expect("valid");
        let mut noisy = false;
        for _ in 0..20_000 {
            state ^= state << 13;
            state ^= state >> 17;
            state ^= state << 5;
            #[allow(clippy::cast_precision_loss)]
            let u = state as f32 / u32::MAX as f32 * 2.0 - 1.0;
            noisy = m
                .update(0.0, u * half_width, Status::NONE)
                .contains(Diagnostics::NOISY);
        }
        assert!(
            (m.noise_rms() - sigma).abs() < 0.1 * sigma,
            "{}",
            m.noise_rms()
        );
        assert!(!noisy);
        let loud = MonitorSettings {
            noise_rms_max: 0.04,
            ..s
        };
        let mut m = Monitor::new(loud).expect("valid");
        for k in 0..2000 {
            let y = if k % 2 == 0 { 0.05 } else { -0.05 };
            m.update(0.0, y, Status::NONE);
        }
        assert!(m.latched().contains(Diagnostics::NOISY));
    }

    #[test]
    fn non_finite_inputs_are_skipped() {
        let mut m = Monitor::new(MonitorSettings::new(0.01, 0.05, 2.0)).expect("valid");
        m.update(1.0, 1.0, Status::NONE);
        assert_eq!(m.update(f32::NAN, 1.0, Status::NONE), Diagnostics::NONE);
        assert_eq!(
            m.update(1.0, f32::INFINITY, Status::NONE),
            Diagnostics::NONE
        );
        assert_eq!(m.noise_rms(), 0.0);
    }

    #[test]
    fn event_window_forgets_old_detections() {
        let s = MonitorSettings::new(0.1, 0.1, 1.0).with_oscillation_rule(5.0, 3);
        let mut m = Monitor::new(s).expect("valid");
        m.update(0.0, 0.0, Status::NONE);
        let mut y = 1.0;
        for _ in 0..8 {
            // Each half-period of 5 samples at |e| = 1: IAE 0.5 > 0.032.
            for _ in 0..5 {
                m.update(0.0, y, Status::NONE);
            }
            y = -y;
        }
        assert!(m.latched().contains(Diagnostics::OSCILLATION));
        for _ in 0..60 {
            m.update(0.0, 0.0, Status::NONE);
        }
        assert_eq!(m.load_disturbances(), 0);
        assert!(
            !m.update(0.0, 0.0, Status::NONE)
                .contains(Diagnostics::OSCILLATION)
        );
    }
}
