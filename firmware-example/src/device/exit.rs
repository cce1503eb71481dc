//! Leaving QEMU with a status, so that a failed run never hangs: the panic handler and the
//! fault handlers (`HardFault` on Arm, the exception handler on RISC-V) exit too.

use embedded_io::Write;

use super::semihosting_io::HostOutput;
use super::{halt, semihosting};
use crate::number_text::{decimal_u64, hex_u32, U64_DIGITS};

/// The exit statuses of the program.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ExitCode {
    /// All input handled.
    Success = 0,
    /// The built-in model image was rejected.
    BadImage = 2,
    /// Reading the input or writing the output failed.
    Io = 3,
    /// The program's own set-up failed (peripherals taken twice, buffers too small).
    Internal = 4,
    /// A panic (the program has none on purpose; this is the safety net).
    Panic = 101,
    /// A fault: HardFault on Arm, an exception trap on RISC-V.
    Fault = 102,
}

/// `SYS_EXIT_EXTENDED`: exit with any status (plain `SYS_EXIT` passes only 0 or 1); Arm's
/// semihosting specification, which the RISC-V semihosting specification takes over.
const SYS_EXIT_EXTENDED: usize = 0x20;
/// `ADP_Stopped_ApplicationExit`: the reason code of a normal exit.
const APPLICATION_EXIT: usize = 0x2_0026;

/// Ends the program with `code`.
pub fn exit(code: ExitCode) -> ! {
    let block = [APPLICATION_EXIT, code as usize];
    // SAFETY: the parameter block lives across the call.
    unsafe {
        semihosting(SYS_EXIT_EXTENDED, &block);
    }
    // Without a debugger attached the call returns: stop here.
    halt()
}

/// Reports a fault (`what` at `pc`) on standard error and exits with `code`.
pub fn fault(what: &[u8], pc: u32, code: ExitCode) -> ! {
    if let Ok(mut err) = HostOutput::stderr() {
        let _ = err.write_all(what);
        let _ = err.write_all(b" at pc ");
        let _ = err.write_all(&hex_u32(pc));
        let _ = err.write_all(b"\n");
    }
    exit(code)
}

#[panic_handler]
fn panic(info: &core::panic::PanicInfo) -> ! {
    // Only the place: formatting the message would pull core::fmt into flash.
    if let Ok(mut err) = HostOutput::stderr() {
        let _ = err.write_all(b"panic");
        if let Some(at) = info.location() {
            let mut digits = [0u8; U64_DIGITS];
            let _ = err.write_all(b" at ");
            let _ = err.write_all(at.file().as_bytes());
            let _ = err.write_all(b":");
            let _ = err.write_all(decimal_u64(u64::from(at.line()), &mut digits));
        }
        let _ = err.write_all(b"\n");
    }
    exit(ExitCode::Panic)
}
