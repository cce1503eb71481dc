//! The Cortex-M4 kernel: int8 weight rows against one int16 activation vector, two
//! multiply-accumulates per instruction (SMLAD), four rows per pass, in stable inline assembly.
//!
//! Per four columns and row it takes one word load of four weights, two SXTB16 (bytes 0, 2
//! and, rotated by 8, bytes 1, 3, sign-extended to 16-bit pairs) and two SMLAD: five
//! instructions for four multiply-accumulates. SXTB16 pairs columns (0, 2) and (1, 3), so the
//! activations are first copied once per matrix, on the stack, in that order (`a0, a2, a1,
//! a3` per four columns); one doubleword load of them then serves all four rows.
//!
//! Needs the DSP extension (SXTB16, SMLAD, PKHBT) and unaligned word loads: Armv7E-M
//! (Cortex-M4, M7) and the Arm cores of the A and R profiles. On stable Rust the `dsp` target
//! feature is not visible to `cfg`, so the module is built for 32-bit Arm with the hard-float
//! ABI (`thumbv7em-none-eabihf` and the like); an Armv8-M Mainline part built that way must
//! have the DSP extension.

use core::arch::asm;

/// Most columns the kernel takes (the stack copy of the activations is twice this in
/// bytes); a wider matrix goes to the portable kernel. It covers every matrix of models up
/// to 512 inner channels.
///
/// ```ignore
/// // Runs on the Cortex-M4 target only (this module is built for 32-bit Arm alone).
/// use inkling_core::engine::kernels::cortex_m4::{row_sums, MAX_COLS};
/// let (w, act, mut sums) = ([0u8; 4 * (MAX_COLS + 4)], [0i16; MAX_COLS + 4], [0.0f32; 4]);
/// assert!(row_sums(&w, MAX_COLS, &act, MAX_COLS / 4, 1, &mut sums));
/// // One quad wider is refused: such a matrix goes to the portable kernel.
/// assert!(!row_sums(&w, MAX_COLS + 4, &act, MAX_COLS / 4 + 1, 1, &mut sums));
/// ```
pub const MAX_COLS: usize = 512;

/// One step of four columns for the four rows: a doubleword of reordered activations
/// (`x` = columns 0, 2; `y` = 1, 3), then per row a word of four weights, unpacked by SXTB16
/// into the pairs (0, 2) and (1, 3) and multiplied-accumulated with SMLAD. Rows 1 and 3 are
/// read at `p + s` and `q + s` before rows 0 and 2 move their pointers on.
macro_rules! quad {
    () => {
        concat!(
            "ldrd {x}, {y}, [{a}], #8\n",
            row!("[{p}, {s}]", "{acc1}"),
            row!("[{q}, {s}]", "{acc3}"),
            row!("[{p}], #4", "{acc0}"),
            row!("[{q}], #4", "{acc2}"),
        )
    };
}

/// Four multiply-accumulates of one row: a weight word from `$at`, added into `$acc`.
macro_rules! row {
    ($at:literal, $acc:literal) => {
        concat!(
            "ldr {t}, ",
            $at,
            "\n",
            "sxtb16 {e}, {t}\n",
            "smlad ",
            $acc,
            ", {e}, {x}, ",
            $acc,
            "\n",
            "sxtb16 {e}, {t}, ror #8\n",
            "smlad ",
            $acc,
            ", {e}, {y}, ",
            $acc,
            "\n",
        )
    };
}

/// Σ w·a over the first `4·quads` columns of the first `4·blocks` rows of `weights`
/// (row-major, `stride` bytes a row), one per row into `sums` as the bit patterns of the
/// i32 values (`f32::to_bits() as i32` reads them back: the caller rescales in place), or
/// `false` (and nothing written) when the sizes do not fit.
///
/// ```ignore
/// // Runs on the Cortex-M4 target only; `dot_i8_i16` gives the same sum for each row anywhere.
/// use inkling_core::engine::{kernels::cortex_m4::row_sums, matvec::dot_i8_i16};
/// let w = [1u8, 2, 3, 4, 0xFF, 0xFE, 0xFD, 0xFC, 0, 0, 0, 0, 5, 6, 7, 8]; // 4 rows × 4 columns
/// let (act, mut sums) = ([10i16, -20, 30, -40], [0.0f32; 4]);
/// assert!(row_sums(&w, 4, &act, 1, 1, &mut sums));
/// assert_eq!(sums[1].to_bits() as i32, dot_i8_i16(&w[4..8], &act));
/// ```
pub fn row_sums(
    weights: &[u8],
    stride: usize,
    act: &[i16],
    quads: usize,
    blocks: usize,
    sums: &mut [f32],
) -> bool {
    let fits = quads <= MAX_COLS / 4
        && 4 * quads <= stride
        && 4 * quads <= act.len()
        && weights.len() >= 4 * blocks * stride
        && sums.len() >= 4 * blocks;
    if !fits {
        return false;
    }
    if blocks == 0 {
        return true;
    }
    // What the assembly reads: the activations, the number of quads and blocks, where the
    // sums go, and how far row 0 moves from one block to the next after a pass.
    let params: [usize; 5] = [
        act.as_ptr() as usize,
        quads,
        blocks,
        sums.as_mut_ptr() as usize,
        4 * stride - 4 * quads,
    ];
    // SAFETY: the assembly reads `4·quads` bytes from each of the `4·blocks` rows of
    // `weights` (`stride` bytes apart, inside the slice by `fits`), `8·quads` bytes of `act`,
    // and `params`; it writes `4·blocks` words of `sums` and a frame of `24 + 8·quads` bytes
    // (at most 1 KiB + 24) below the stack pointer, which it puts back before it ends. Word
    // loads of weights and activations may be unaligned, which Armv7-M allows for LDR; the
    // doubleword loads and stores are from the frame, aligned to 8 here. Every register it
    // changes is an operand.
    unsafe {
        asm!(
            // Frame at sp: end of the 16-column steps, end of the 4-column steps, where the
            // next sums go, blocks left, row 0's move between blocks, the old sp; then the
            // reordered activations from sp + 24.
            "ldr {x}, [{e}, #4]",
            "lsl {y}, {x}, #3",
            "add {y}, {y}, #24",
            "mov {t}, sp",
            "sub {y}, {t}, {y}",
            "bic {y}, {y}, #7",
            "mov sp, {y}",
            "str {t}, [sp, #20]",
            "ldr {t}, [{e}, #8]",
            "str {t}, [sp, #12]",
            "ldr {t}, [{e}, #12]",
            "str {t}, [sp, #8]",
            "ldr {t}, [{e}, #16]",
            "str {t}, [sp, #16]",
            "add {a}, sp, #24",
            "add {t}, {a}, {x}, lsl #3",
            "str {t}, [sp, #4]",
            "bic {y}, {x}, #3",
            "add {y}, {a}, {y}, lsl #3",
            "str {y}, [sp]",
            // Reorder the activations: (a0, a1), (a2, a3) -> (a0, a2), (a1, a3).
            "ldr {e}, [{e}]",
            "mov {q}, {a}",
            "cmp {q}, {t}",
            "beq 7f",
            "6:",
            "ldr {x}, [{e}], #4",
            "ldr {y}, [{e}], #4",
            "pkhbt {acc0}, {x}, {y}, lsl #16",
            "pkhtb {y}, {y}, {x}, asr #16",
            "strd {acc0}, {y}, [{q}], #8",
            "cmp {q}, {t}",
            "bne 6b",
            "7:",
            // Four rows a pass.
            "8:",
            "add {q}, {p}, {s}, lsl #1",
            "add {a}, sp, #24",
            "mov {acc0}, #0",
            "mov {acc1}, #0",
            "mov {acc2}, #0",
            "mov {acc3}, #0",
            // 16 columns a step, then 4.
            "ldr {e}, [sp]",
            "cmp {a}, {e}",
            "beq 3f",
            "2:",
            quad!(),
            quad!(),
            quad!(),
            quad!(),
            "ldr {e}, [sp]",
            "cmp {a}, {e}",
            "bne 2b",
            "3:",
            "ldr {e}, [sp, #4]",
            "cmp {a}, {e}",
            "beq 5f",
            "4:",
            quad!(),
            "ldr {e}, [sp, #4]",
            "cmp {a}, {e}",
            "bne 4b",
            "5:",
            "ldr {t}, [sp, #8]",
            "str {acc0}, [{t}], #4",
            "str {acc1}, [{t}], #4",
            "str {acc2}, [{t}], #4",
            "str {acc3}, [{t}], #4",
            "str {t}, [sp, #8]",
            "ldr {t}, [sp, #16]",
            "add {p}, {p}, {t}",
            "ldr {t}, [sp, #12]",
            "subs {t}, {t}, #1",
            "str {t}, [sp, #12]",
            "bne 8b",
            "ldr {t}, [sp, #20]",
            "mov sp, {t}",
            p = inout(reg) weights.as_ptr() => _,
            s = in(reg) stride,
            e = inout(reg) params.as_ptr() => _,
            a = out(reg) _,
            q = out(reg) _,
            acc0 = out(reg) _,
            acc1 = out(reg) _,
            acc2 = out(reg) _,
            acc3 = out(reg) _,
            x = out(reg) _,
            y = out(reg) _,
            t = out(reg) _,
        );
    }
    true
}
