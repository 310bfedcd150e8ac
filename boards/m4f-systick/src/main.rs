//! evenkeel on a real Cortex-M4F part, without a vendor HAL.
//!
//! The control step runs in the SysTick interrupt at a fixed rate; the
//! measurement and the actuator sit behind two small traits ([`Sensor`],
//! [`Actuator`]) that you implement for your ADC, encoder, PWM or DAC. The
//! controller itself only takes and returns numbers. Log lines go out with
//! `defmt` over RTT (`probe-rs run` decodes them).
//!
//! As shipped, a simulated fan ([`Tachometer`], [`PwmDriver`]) stands in for
//! the plant so the firmware runs on any Cortex-M4F board; replace them with
//! your drivers.
//!
//! Unlike the emulated boards this example is not built panic-free:
//! `defmt-rtt` (its lock) and `fixed`'s number formatting behind `defmt`
//! keep panic paths. The controller has none.
#![no_std]
#![no_main]

use core::cell::RefCell;
use core::sync::atomic::{AtomicI32, Ordering};

use cortex_m::interrupt::{self, Mutex};
use cortex_m::peripheral::syst::SystClkSource;
use cortex_m_rt::{entry, exception};
use defmt_rtt as _;
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
/// Checked by the compiler: an invalid setting does not build.
const CONFIG: Config<I16F16> = evenkeel::config!(I16F16, SETTINGS);

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
    pi: Controller<I16F16>,
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

/// The loop, shared between `main` and the SysTick handler.
static LOOP: Mutex<RefCell<Option<FanLoop>>> = Mutex::new(RefCell::new(None));

#[entry]
fn main() -> ! {
    let Some(mut core) = cortex_m::Peripherals::take() else {
        loop {
            cortex_m::asm::wfi();
        }
    };
    let control = Loop {
        pi: Controller::new(CONFIG),
        sensor: Tachometer,
        actuator: PwmDriver,
        setpoint: I16F16::from_num(6),
        applied: None,
        steps: 0,
    };
    interrupt::free(|cs| {
        if let Ok(mut slot) = LOOP.borrow(cs).try_borrow_mut() {
            *slot = Some(control);
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
        if let Ok(mut slot) = LOOP.borrow(cs).try_borrow_mut()
            && let Some(control) = slot.as_mut()
        {
            control.tick();
        }
    });
}

#[panic_handler]
fn panic(_: &core::panic::PanicInfo<'_>) -> ! {
    // Stop controlling. A product drives its actuator to a safe state here
    // and lets a watchdog reset the part.
    cortex_m::interrupt::disable();
    loop {
        cortex_m::asm::wfi();
    }
}
