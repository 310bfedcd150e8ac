//! evenkeel on QEMU's microbit (Cortex-M0): replays the golden vectors, times the
//! controller, exits with the verdict.
#![no_std]
#![no_main]

use cortex_m_rt::{ExceptionFrame, entry, exception};
use evenkeel_qemu::Board;
use evenkeel_replay::cost::Rate;

const BOARD: Board = Board {
    name: "Cortex-M0, QEMU microbit",
    // SysTick at the core clock, one instruction = 1024 ns: 16 MHz, 16.384 ticks per instruction.
    rate: Rate {
        ticks: 2048,
        instructions: 125,
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
