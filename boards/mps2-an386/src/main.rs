//! evenkeel on QEMU's mps2-an386 (Cortex-M4F): replays the golden vectors, times the
//! controller, exits with the verdict.
#![no_std]
#![no_main]

use cortex_m_rt::{ExceptionFrame, entry, exception};
use evenkeel_qemu::Board;
use evenkeel_replay::cost::Rate;

const BOARD: Board = Board {
    name: "Cortex-M4F, QEMU mps2-an386",
    // SysTick at the core clock, one instruction = 1024 ns: 25 MHz, 25.6 ticks per instruction.
    rate: Rate {
        ticks: 128,
        instructions: 5,
    },
};

#[entry]
fn main() -> ! {
    evenkeel_qemu::run(&BOARD)
}

#[exception]
unsafe fn HardFault(_frame: &ExceptionFrame) -> ! {
    evenkeel_qemu::fault()
}
