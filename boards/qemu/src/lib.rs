//! What every emulated evenkeel board does: replay the golden vectors (the
//! Q16.16 golden and schedule sets, the 16-bit set), time
//! the controller, print the results as semihosting text and exit with the
//! verdict (QEMU's exit status).
//!
//! The panic handler calls a function that does not exist, so a firmware
//! links only if the optimiser removed every panic path: the build itself
//! is the panic-free proof (release profile; see `boards/README.md`).
#![no_std]
#![deny(missing_docs)]

use core::fmt::Write;

use cortex_m::peripheral::{SYST, syst::SystClkSource};
use cortex_m_semihosting::debug::{self, EXIT_FAILURE, EXIT_SUCCESS};
use cortex_m_semihosting::hio::{self, HostStream};
use evenkeel_replay::cost::{self, Clock, Cost, Rate};
use evenkeel_replay::replay::{self, Mismatch, Report};
use evenkeel_replay::tables::{golden, schedule, slim16, slim16_schedule};

/// What differs between the boards.
#[derive(Clone, Copy, Debug)]
pub struct Board {
    /// Core and QEMU machine, for the log.
    pub name: &'static str,
    /// SysTick ticks per instruction under `-icount shift=10`.
    pub rate: Rate,
}

/// Mismatches printed per scenario (all are counted).
const PRINTED_PER_SCENARIO: u32 = 8;

/// Semihosting standard output; output is best effort (a failed write is
/// ignored: the exit status carries the verdict).
struct Console {
    out: Option<HostStream>,
    printed: u32,
}

impl Write for Console {
    fn write_str(&mut self, s: &str) -> core::fmt::Result {
        match &mut self.out {
            Some(out) => out.write_all(s.as_bytes()).map_err(|_| core::fmt::Error),
            None => Ok(()),
        }
    }
}

impl Report for Console {
    fn mismatch(&mut self, m: &Mismatch<'_>) {
        if self.printed < PRINTED_PER_SCENARIO {
            let _ = writeln!(
                self,
                "  MISMATCH {} ({}) step {}: command want {:#010x} got {:#010x}, status want {:#06x} got {:#06x}",
                m.scenario,
                m.layout,
                m.step,
                m.want_command,
                m.got_command,
                m.want_status,
                m.got_status
            );
        }
        self.printed = self.printed.saturating_add(1);
    }

    fn scenario(&mut self, name: &str, layout: &'static str, steps: u32, mismatches: u32) {
        let verdict = if mismatches == 0 { "ok" } else { "FAIL" };
        let _ = writeln!(
            self,
            "  {verdict} {name}, {layout} ({steps} steps, {mismatches} mismatches)"
        );
        self.printed = 0;
    }
}

/// SysTick as an up-counter (it counts down from its reload value).
struct SysTickClock(SYST);

impl SysTickClock {
    fn start(mut syst: SYST) -> Self {
        syst.disable_interrupt();
        syst.set_clock_source(SystClkSource::Core);
        syst.set_reload(0x00ff_ffff);
        syst.clear_current();
        syst.enable_counter();
        Self(syst)
    }
}

impl Clock for SysTickClock {
    fn ticks(&mut self) -> u32 {
        !SYST::get_current() & 0x00ff_ffff
    }
}

fn print_cost(console: &mut Console, what: &str, c: Cost) {
    let mean = c.mean_tenths();
    let _ = writeln!(
        console,
        "cost {what}: min {} mean {}.{} max {} instructions per step ({} steps)",
        c.min,
        mean / 10,
        mean % 10,
        c.max,
        cost::STEPS
    );
}

/// Run everything and exit: success only if the vector file read to the end
/// and every step matched.
pub fn run(board: &Board) -> ! {
    let mut console = Console {
        out: hio::hstdout().ok(),
        printed: 0,
    };
    let _ = writeln!(console, "evenkeel boards: {}", board.name);
    let _ = writeln!(
        console,
        "vectors: golden {} bytes, schedule {} bytes, slim16 {} bytes, slim16 schedule {} bytes",
        golden::VECTORS.len(),
        schedule::VECTORS.len(),
        slim16::VECTORS.len(),
        slim16_schedule::VECTORS.len()
    );
    let mut passed = true;
    for (what, result) in [
        ("replay", replay::run(&mut console)),
        ("schedule replay", replay::run_schedules(&mut console)),
        ("slim16 replay", replay::run_slim16(&mut console)),
        (
            "slim16 schedule replay",
            replay::run_slim16_schedules(&mut console),
        ),
    ] {
        passed &= match result {
            Ok(s) => {
                let _ = writeln!(
                    console,
                    "{what}: {} scenario runs, {} steps, {} mismatches",
                    s.scenarios, s.steps, s.mismatches
                );
                s.mismatches == 0 && s.steps > 0
            }
            Err(e) => {
                let _ = writeln!(console, "{what}: ERROR {}", e.describe());
                false
            }
        };
    }

    // The hand-written 16-bit steps (`evenkeel_replay::floor`) must give
    // the library's bits on every step of their workload before they are
    // timed; a difference fails the run.
    let floors = [
        ("minimal", cost::check_minimal_floor()),
        ("full", cost::check_full_floor()),
    ];
    for (what, check) in floors {
        let _ = writeln!(
            console,
            "slim16 floor {what} check: {} steps, {} mismatches",
            check.steps, check.mismatches
        );
        if let Some((k, library, hand)) = check.first {
            let _ = writeln!(
                console,
                "  MISMATCH floor {what} step {k}: command library {} hand {}, status library {:#06x} hand {:#06x}",
                library.command, hand.command, library.status, hand.status
            );
        }
        passed &= check.mismatches == 0 && check.steps == cost::STEPS;
    }

    // The frozen configurations (`evenkeel::frozen!`) must give the bits of
    // the same settings under a compile-time layout on every step of each
    // workload before they are timed.
    let frozen = [
        (
            "fixed minimal",
            cost::check_frozen_minimal(cost::FIXED_MINIMAL_LAYOUT, cost::FrozenMinimal::CONFIG),
        ),
        (
            "fixed full",
            cost::check_frozen_full(cost::FIXED_FULL_LAYOUT, cost::FrozenFull::CONFIG),
        ),
        (
            "slim16 minimal",
            cost::check_frozen_minimal(cost::SLIM_MINIMAL_LAYOUT, cost::SlimFrozenMinimal::CONFIG),
        ),
        (
            "slim16 full",
            cost::check_frozen_full(cost::SLIM_FULL_LAYOUT, cost::SlimFrozenFull::CONFIG),
        ),
    ];
    for (what, check) in frozen {
        let _ = writeln!(
            console,
            "frozen {what} check: {} steps, {} mismatches",
            check.steps, check.mismatches
        );
        if let Some(k) = check.first {
            let _ = writeln!(console, "  MISMATCH frozen {what}: first at step {k}");
        }
        passed &= check.mismatches == 0 && check.steps == cost::STEPS;
    }

    let timing = cortex_m::Peripherals::take().map(|p| SysTickClock::start(p.SYST));
    if let Some(mut clock) = timing {
        let full = cost::full(cost::FIXED_FULL, &mut clock, board.rate);
        print_cost(&mut console, "fixed full", full);
        let minimal = cost::minimal(cost::FIXED_MINIMAL, &mut clock, board.rate);
        print_cost(&mut console, "fixed minimal", minimal);
        let full = cost::full(cost::FIXED_FULL_LAYOUT, &mut clock, board.rate);
        print_cost(&mut console, "fixed-layout full", full);
        let minimal = cost::minimal(cost::FIXED_MINIMAL_LAYOUT, &mut clock, board.rate);
        print_cost(&mut console, "fixed-layout minimal", minimal);
        let full = cost::full(cost::SLIM_FULL_CONFIG, &mut clock, board.rate);
        print_cost(&mut console, "slim16 full", full);
        let minimal = cost::minimal(cost::SLIM_MINIMAL_CONFIG, &mut clock, board.rate);
        print_cost(&mut console, "slim16 minimal", minimal);
        let full = cost::full(cost::SLIM_FULL_LAYOUT, &mut clock, board.rate);
        print_cost(&mut console, "slim16-layout full", full);
        let minimal = cost::minimal(cost::SLIM_MINIMAL_LAYOUT, &mut clock, board.rate);
        print_cost(&mut console, "slim16-layout minimal", minimal);
        let full = cost::full(cost::FrozenFull::CONFIG, &mut clock, board.rate);
        print_cost(&mut console, "fixed-frozen full", full);
        let minimal = cost::minimal(cost::FrozenMinimal::CONFIG, &mut clock, board.rate);
        print_cost(&mut console, "fixed-frozen minimal", minimal);
        let full = cost::full(cost::SlimFrozenFull::CONFIG, &mut clock, board.rate);
        print_cost(&mut console, "slim16-frozen full", full);
        let minimal = cost::minimal(cost::SlimFrozenMinimal::CONFIG, &mut clock, board.rate);
        print_cost(&mut console, "slim16-frozen minimal", minimal);
        let full = cost::full_floor(&mut clock, board.rate);
        print_cost(&mut console, "slim16-floor full", full);
        let minimal = cost::minimal_floor(&mut clock, board.rate);
        print_cost(&mut console, "slim16-floor minimal", minimal);
        #[cfg(feature = "f32")]
        {
            let full = cost::full(cost::F32_FULL, &mut clock, board.rate);
            print_cost(&mut console, "f32 full", full);
            let minimal = cost::minimal(cost::F32_MINIMAL, &mut clock, board.rate);
            print_cost(&mut console, "f32 minimal", minimal);
        }
    }
    let fixed = cost::controller_bytes::<evenkeel_replay::Fixed>();
    let _ = writeln!(console, "ram fixed: {fixed} bytes per controller");
    let slim = cost::controller_bytes::<evenkeel_replay::Slim16>();
    let _ = writeln!(console, "ram slim16: {slim} bytes per controller");
    let floor_full = core::mem::size_of::<evenkeel_replay::floor::Full>();
    let _ = writeln!(
        console,
        "ram slim16-floor full: {floor_full} bytes of state"
    );
    let floor_minimal = core::mem::size_of::<evenkeel_replay::floor::Minimal>();
    let _ = writeln!(
        console,
        "ram slim16-floor minimal: {floor_minimal} bytes of state"
    );
    #[cfg(feature = "f32")]
    {
        let float = cost::controller_bytes::<f32>();
        let _ = writeln!(console, "ram f32: {float} bytes per controller");
    }

    let _ = writeln!(console, "verdict: {}", if passed { "PASS" } else { "FAIL" });
    exit(passed)
}

/// Exit QEMU with failure (for the boards' HardFault handlers).
pub fn fault() -> ! {
    if let Ok(mut out) = hio::hstdout() {
        let _ = out.write_all(b"verdict: FAIL (hard fault)\n");
    }
    exit(false)
}

fn exit(passed: bool) -> ! {
    debug::exit(if passed { EXIT_SUCCESS } else { EXIT_FAILURE });
    loop {
        cortex_m::asm::wfi();
    }
}

#[panic_handler]
fn panic(_: &core::panic::PanicInfo<'_>) -> ! {
    unsafe extern "C" {
        /// Deliberately defined nowhere: a firmware that still contains a
        /// panic path fails to link, naming this symbol.
        fn evenkeel_firmware_has_a_panic_path() -> !;
    }
    // SAFETY: never runs; the link fails first if this is reachable.
    unsafe { evenkeel_firmware_has_a_panic_path() }
}
