//! evenkeel on a real Cortex-M4F part, without a vendor HAL.
//!
//! The control step runs in the SysTick interrupt at a fixed rate; the
//! measurement and the actuator sit behind two small traits ([`Sensor`],
//! [`Actuator`]) that you implement for your ADC, encoder, PWM or DAC. The
//! controller itself only takes and returns numbers. Log lines go out with
//! `defmt` into a RAM ring buffer ([`RamLog`], our own panic-free logger;
//! read it with a debugger and decode it with `defmt-print`). `defmt-rtt`
//! works the same way for the controller, but its lock
//! (`_defmt_acquire`/`_defmt_release`) keeps a panic for nested use, so a
//! firmware built with it does not pass the panic-path link check
//! (measured: the link names those two functions).
//!
//! As shipped, a simulated fan ([`Tachometer`], [`PwmDriver`]) stands in for
//! the plant so the firmware runs on any Cortex-M4F board; replace them with
//! your drivers.
//!
//! The controller is shared with the interrupt handler without `unsafe`
//! and without a panic path: `Controller::new` is a `const fn`, so the
//! whole loop is a `static` initialised by the compiler (no `Option`, no
//! run-time set-up), behind a critical-section `Mutex<RefCell<_>>` borrowed
//! with `try_borrow_mut` (which cannot panic). `boards/run` builds this
//! firmware with a panic handler that calls an undefined function, so it
//! links only if no panic path is left (`defmt` output included: the
//! controller's `Format` impls send numbers as `f32` bits and flags as
//! names, without decimal formatting on target).
//!
//! The crate documentation of `evenkeel` shows this file as its interrupt
//! example.
#![no_std]
#![no_main]

use core::cell::RefCell;
use core::sync::atomic::{AtomicBool, AtomicI32, Ordering};

use cortex_m::interrupt::{self, Mutex};
use cortex_m::peripheral::syst::SystClkSource;
use cortex_m_rt::{entry, exception};
use evenkeel::fixed::types::I16F16;
use evenkeel::log::Q16;
use evenkeel::{AntiWindup, Config, Controller, Input, Settings};

/// Core clock of your part in Hz (SysTick counts core cycles).
const CORE_CLOCK_HZ: u32 = 16_000_000;
/// Control rate in Hz; the settings below use the same period.
const CONTROL_RATE_HZ: u32 = 1_000;

/// Fan speed loop: speed in krpm, command in % duty. Invented numbers.
const SETTINGS: Settings = Settings::new(1.0 / CONTROL_RATE_HZ as f64, 8.0, 40.0, 0.0, 100.0)
    .with_slew_per_s(200.0)
    .with_filter_time_s(0.005)
    .with_anti_windup(AntiWindup::BackCalculation {
        tracking_time_s: 0.05,
    })
    .with_measurement_range(0.0, 12.0);
// The structure (features, fixed-point formats) is fixed at compile time:
// the step contains only what these settings use and shifts by constants.
evenkeel::layout!(Fan = SETTINGS);
/// Checked by the compiler: an invalid setting does not build.
const CONFIG: Config<I16F16, Fan> = evenkeel::config!(I16F16, Fan, SETTINGS);

/// Something that measures the controlled quantity.
pub trait Sensor {
    /// The latest measurement, in the units of the setpoint.
    fn read(&mut self) -> I16F16;
}

/// Something that applies the command.
pub trait Actuator {
    /// Apply `command`; return what was really applied (after the driver's
    /// own limits or an override), so the controller's anti-windup can
    /// account for it.
    fn apply(&mut self, command: I16F16) -> I16F16;
}

/// The control loop: the controller with its sensor and actuator.
pub struct Loop<S, A> {
    pi: Controller<I16F16, Fan>,
    sensor: S,
    actuator: A,
    setpoint: I16F16,
    applied: Option<I16F16>,
    steps: u32,
}

impl<S: Sensor, A: Actuator> Loop<S, A> {
    /// One control period: measure, step, actuate.
    fn tick(&mut self) {
        let mut input = Input::new(self.setpoint, self.sensor.read());
        if let Some(applied) = self.applied {
            input = input.with_applied(applied);
        }
        let out = self.pi.step_with(&input);
        self.applied = Some(self.actuator.apply(out.command));
        self.steps = self.steps.wrapping_add(1);
        if self.steps.is_multiple_of(CONTROL_RATE_HZ) {
            defmt::info!(
                "t={}s r={} {}",
                self.steps / CONTROL_RATE_HZ,
                Q16(self.setpoint),
                out
            );
        }
        if out.status.is_fault() {
            defmt::warn!("fault: {}", out.status);
        }
    }
}

/// A `defmt` logger that writes encoded frames into a RAM ring buffer.
/// Panic-free: a frame that starts while another is being written (an
/// interrupt logging during `main`'s frame) is dropped, not a panic.
#[defmt::global_logger]
struct RamLog;

/// Frames in flight: the ring, its write position and the frame encoder.
struct Ring {
    bytes: [u8; 1024],
    at: usize,
    encoder: defmt::Encoder,
}

static TAKEN: AtomicBool = AtomicBool::new(false);
static DROPPING: AtomicBool = AtomicBool::new(false);
static RING: Mutex<RefCell<Ring>> = Mutex::new(RefCell::new(Ring {
    bytes: [0; 1024],
    at: 0,
    encoder: defmt::Encoder::new(),
}));

fn with_ring(f: impl FnOnce(&mut Ring)) {
    interrupt::free(|cs| {
        if let Ok(mut ring) = RING.borrow(cs).try_borrow_mut() {
            f(&mut ring);
        }
    });
}

fn push(ring_bytes: &mut [u8; 1024], at: &mut usize, data: &[u8]) {
    for &b in data {
        if let Some(slot) = ring_bytes.get_mut(*at) {
            *slot = b;
        }
        *at = (*at + 1) % 1024;
    }
}

// SAFETY: `acquire`/`release` bracket each frame; `TAKEN` makes a second,
// nested frame a no-op instead of interleaving it, and the buffer is only
// touched inside critical sections.
unsafe impl defmt::Logger for RamLog {
    fn acquire() {
        let nested = TAKEN.swap(true, Ordering::Acquire);
        DROPPING.store(nested, Ordering::Relaxed);
        if !nested {
            with_ring(|r| {
                let Ring { bytes, at, encoder } = r;
                encoder.start_frame(|data| push(bytes, at, data));
            });
        }
    }
    unsafe fn flush() {}
    unsafe fn release() {
        if DROPPING.swap(false, Ordering::Relaxed) {
            return;
        }
        with_ring(|r| {
            let Ring { bytes, at, encoder } = r;
            encoder.end_frame(|data| push(bytes, at, data));
        });
        TAKEN.store(false, Ordering::Release);
    }
    unsafe fn write(data: &[u8]) {
        if DROPPING.load(Ordering::Relaxed) {
            return;
        }
        with_ring(|r| {
            let Ring { bytes, at, encoder } = r;
            encoder.write(data, |d| push(bytes, at, d));
        });
    }
}

/// The demo's fan speed in krpm (Q16.16 bits): the physical world the
/// simulated tachometer reads and the simulated driver changes.
static FAN_SPEED: AtomicI32 = AtomicI32::new(0);

/// Demo sensor: a tachometer reading the simulated fan.
pub struct Tachometer;

impl Sensor for Tachometer {
    fn read(&mut self) -> I16F16 {
        I16F16::from_bits(FAN_SPEED.load(Ordering::Relaxed))
    }
}

/// Demo actuator: a PWM driver that limits duty to 90 % and moves the
/// simulated fan (speed follows duty with a first-order lag, time constant
/// 0.2 s, 0.1 krpm per %).
pub struct PwmDriver;

impl Actuator for PwmDriver {
    fn apply(&mut self, command: I16F16) -> I16F16 {
        let duty = command.min(I16F16::from_num(90));
        // speed += (0.1·duty − speed) · Ts/τ, with Ts/τ = 1/200.
        let speed = I16F16::from_bits(FAN_SPEED.load(Ordering::Relaxed));
        let next = speed.saturating_add((duty / 10 - speed) / 200);
        FAN_SPEED.store(next.to_bits(), Ordering::Relaxed);
        duty
    }
}

type FanLoop = Loop<Tachometer, PwmDriver>;

/// The loop, shared between `main` and the SysTick handler; built by the
/// compiler (`Controller::new` is `const`).
static LOOP: Mutex<RefCell<FanLoop>> = Mutex::new(RefCell::new(Loop {
    pi: Controller::new(CONFIG),
    sensor: Tachometer,
    actuator: PwmDriver,
    setpoint: I16F16::const_from_int(6),
    applied: None,
    steps: 0,
}));

#[entry]
fn main() -> ! {
    let Some(mut core) = cortex_m::Peripherals::take() else {
        loop {
            cortex_m::asm::wfi();
        }
    };
    // A new setpoint from the main loop: the same critical section.
    interrupt::free(|cs| {
        if let Ok(mut control) = LOOP.borrow(cs).try_borrow_mut() {
            control.setpoint = I16F16::const_from_int(6);
        }
    });
    defmt::info!("evenkeel: {} Hz control loop in SysTick", CONTROL_RATE_HZ);

    core.SYST.set_clock_source(SystClkSource::Core);
    core.SYST.set_reload(CORE_CLOCK_HZ / CONTROL_RATE_HZ - 1);
    core.SYST.clear_current();
    core.SYST.enable_interrupt();
    core.SYST.enable_counter();
    loop {
        cortex_m::asm::wfi();
    }
}

#[exception]
fn SysTick() {
    interrupt::free(|cs| {
        // Never fails: the main loop holds the borrow only inside its own
        // critical section, which this interrupt cannot preempt. If it ever
        // did, this period would be skipped rather than panic.
        if let Ok(mut control) = LOOP.borrow(cs).try_borrow_mut() {
            control.tick();
        }
    });
}

#[panic_handler]
fn panic(_: &core::panic::PanicInfo<'_>) -> ! {
    unsafe extern "C" {
        /// Deliberately defined nowhere: the firmware links only if the
        /// optimiser removed every panic path (release build). A product
        /// would drive its actuator to a safe state here instead.
        fn evenkeel_firmware_has_a_panic_path() -> !;
    }
    // SAFETY: never runs; the link fails first if this is reachable.
    unsafe { evenkeel_firmware_has_a_panic_path() }
}
