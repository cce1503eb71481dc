//! The parts of the program that a core does its own way, chosen here and nowhere else by
//! the target being built:
//! - Arm (`thumbv7em-none-eabihf` for the Cortex-M4F, `thumbv6m-none-eabi` for the
//!   Cortex-M0+): `cortex_m.rs`, cortex-m-rt start-up, SysTick as the instruction
//!   clock, a HardFault handler;
//! - RISC-V (`riscv32imc-unknown-none-elf`): `riscv.rs`, riscv-rt start-up, the `minstret`
//!   counter as the instruction clock, an exception handler.
//!
//! Both give the same names: [`entry`] (the program's entry attribute), [`InstructionClock`],
//! [`calibrate`], [`semihosting`] (one host call), [`stack_bounds`], [`stack_pointer`] and
//! [`halt`]. What is common sits beside them: [`exit`] (statuses, panic handler) and
//! [`semihosting_io`] (the host's standard streams as `embedded-io`), so everything above
//! this module is the same program on every core.

#[cfg(target_arch = "arm")]
#[path = "cortex_m.rs"]
mod this_core;
#[cfg(target_arch = "riscv32")]
#[path = "riscv.rs"]
mod this_core;

pub mod exit;
pub mod semihosting_io;

pub use this_core::{
    calibrate, entry, halt, semihosting, stack_bounds, stack_pointer, InstructionClock, CORE,
};

/// Iterations of the calibration loop (two instructions each, on every core).
pub const CALIBRATION_LOOPS: u32 = 2_000_000;
