//! The Cortex-M4 kernel: int8 weight rows against one int16 activation vector, two
//! multiply-accumulates per instruction (SMLAD), four rows per pass, in stable inline assembly.
//!
//! Per four columns and row it takes one word load of four weights, two SXTB16 (bytes 0, 2
//! and, rotated by 8, bytes 1, 3, sign-extended to 16-bit pairs) and two SMLAD: five
//! instructions for four multiply-accumulates. SXTB16 pairs columns (0, 2) and (1, 3), so the
//! activations are first copied once per matrix, on the stack, in that order (`a0, a2, a1,
//! a3` per four columns); one doubleword load of them then serves all four rows. The columns
//! go 32 a step. At the end of a pass the four sums are rescaled by the FPU in the assembly
//! itself (convert, times the row's scale, times the activations' scale, the order of the
//! portable path), with the four scales taken by one multiple load from an f32 slice.
//!
//! Needs the DSP extension (SXTB16, SMLAD, PKHBT), a single-precision FPU and unaligned word
//! loads: Armv7E-M with FPU (Cortex-M4F, M7) and the Arm cores of the A and R profiles. On
//! stable Rust the `dsp` target feature is not visible to `cfg`, so the module is built for
//! 32-bit Arm with the hard-float ABI (`thumbv7em-none-eabihf` and the like); an Armv8-M
//! Mainline part built that way must have the DSP extension.

use core::arch::asm;

/// Most columns the kernel takes (the stack copy of the activations is twice this in
/// bytes); a wider matrix goes to the portable kernel. It covers every matrix of models up
/// to 512 inner channels.
///
/// ```ignore
/// // Runs on the Cortex-M4 target only (this module is built for 32-bit Arm alone).
/// use inkling_core::engine::kernels::cortex_m4::{scaled_rows, MAX_COLS};
/// let (w, act, s) = ([0u8; 4 * (MAX_COLS + 4)], [0i16; MAX_COLS + 4], [1.0f32; 4]);
/// let mut out = [0.0f32; 4];
/// assert!(scaled_rows(&w, MAX_COLS, &act, MAX_COLS / 4, &s, 1.0, &mut out));
/// // One quad wider is refused: such a matrix goes to the portable kernel.
/// assert!(!scaled_rows(&w, MAX_COLS + 4, &act, MAX_COLS / 4 + 1, &s, 1.0, &mut out));
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

/// Output rows of a matrix-vector product, four rows a pass: for each of the first
/// `4·blocks` rows of `weights` (row-major, `stride` bytes a row), with `blocks =
/// out.len() / 4`, the sum `Σ w·a` over its first `4·quads` columns, added to the i32 whose
/// bit pattern `out[r]` holds on entry (`f32::from_bits(start as u32)`; `0.0` for none), then
/// rescaled in place as `(sum as f32 · scales[r]) · act_scale` (the portable path's rescale,
/// in its order). Returns `false` (and writes nothing) when the sizes do not fit.
///
/// ```ignore
/// // Runs on the Cortex-M4 target only; `dot_i8_i16` gives the same sum for each row anywhere.
/// use inkling_core::engine::{kernels::cortex_m4::scaled_rows, matvec::dot_i8_i16};
/// let w = [1u8, 2, 3, 4, 0xFF, 0xFE, 0xFD, 0xFC, 0, 0, 0, 0, 5, 6, 7, 8]; // 4 rows × 4 columns
/// let (act, scales, mut out) = ([10i16, -20, 30, -40], [0.5f32; 4], [0.0f32; 4]);
/// assert!(scaled_rows(&w, 4, &act, 1, &scales, 0.25, &mut out));
/// assert_eq!(out[1], dot_i8_i16(&w[4..8], &act) as f32 * 0.5 * 0.25);
/// ```
pub fn scaled_rows(
    weights: &[u8],
    stride: usize,
    act: &[i16],
    quads: usize,
    scales: &[f32],
    act_scale: f32,
    out: &mut [f32],
) -> bool {
    let blocks = out.len() / 4;
    let fits = quads <= MAX_COLS / 4
        && 4 * quads <= stride
        && 4 * quads <= act.len()
        && weights.len() >= 4 * blocks * stride
        && scales.len() >= 4 * blocks;
    if !fits {
        return false;
    }
    if blocks == 0 {
        return true;
    }
    // What the assembly reads: the activations, the number of quads and blocks, where the
    // outputs go, how far row 0 moves from one block to the next after a pass, the scales
    // and the bits of `act_scale`.
    let params: [usize; 7] = [
        act.as_ptr() as usize,
        quads,
        blocks,
        out.as_mut_ptr() as usize,
        4 * stride - 4 * quads,
        scales.as_ptr() as usize,
        act_scale.to_bits() as usize,
    ];
    // SAFETY: the assembly reads `4·quads` bytes from each of the `4·blocks` rows of
    // `weights` (`stride` bytes apart, inside the slice by `fits`), `8·quads` bytes of `act`,
    // `4·blocks` scales, and `params`; it reads and writes `4·blocks` words of `out`, and
    // below the stack pointer the saved s0-s8 and a frame of `32 + 8·quads` bytes (at most
    // 36 + 1 KiB + 32 bytes in all), which it puts back before it ends. Word loads of weights and activations may be unaligned,
    // which Armv7-M allows for LDR; the multiple loads of scales and stores of outputs are
    // of f32 slices (4-byte aligned), the doubleword loads and stores from the frame,
    // aligned to 8 here. Every core register it changes is an operand; the FPU registers it uses it restores.
    unsafe {
        asm!(
            // s0-s8 are saved first and restored last: inline assembly cannot name them as
            // operands on a single-precision FPU (the register class wants `vfp2`).
            "vpush {{s0-s8}}",
            "vldr s8, [{e}, #24]",
            // Frame at sp: end of the 32-column steps, end of the 4-column steps, where the
            // next outputs go, where they end, row 0's move between blocks, the old sp, where
            // the next scales are; then (from sp + 32) the reordered activations.
            "ldr {x}, [{e}, #4]",
            "lsl {y}, {x}, #3",
            "add {y}, {y}, #32",
            "mov {t}, sp",
            "sub {y}, {t}, {y}",
            "bic {y}, {y}, #7",
            "mov sp, {y}",
            "str {t}, [sp, #20]",
            "ldr {t}, [{e}, #8]",
            "ldr {y}, [{e}, #12]",
            "str {y}, [sp, #8]",
            "add {t}, {y}, {t}, lsl #4",
            "str {t}, [sp, #12]",
            "ldr {t}, [{e}, #16]",
            "str {t}, [sp, #16]",
            "ldr {t}, [{e}, #20]",
            "str {t}, [sp, #24]",
            "add {a}, sp, #32",
            "add {t}, {a}, {x}, lsl #3",
            "str {t}, [sp, #4]",
            "bic {y}, {x}, #7",
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
            // Four rows a pass, each sum starting from the value in `out`.
            "8:",
            "add {q}, {p}, {s}, lsl #1",
            "add {a}, sp, #32",
            "ldr {t}, [sp, #8]",
            "ldr {acc0}, [{t}]",
            "ldr {acc1}, [{t}, #4]",
            "ldr {acc2}, [{t}, #8]",
            "ldr {acc3}, [{t}, #12]",
            // 32 columns a step, then 4.
            "ldr {e}, [sp]",
            "cmp {a}, {e}",
            "beq 3f",
            "2:",
            quad!(),
            quad!(),
            quad!(),
            quad!(),
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
            // The rescale: (sum as f32 * scale) * act_scale, four rows.
            "vmov s0, s1, {acc0}, {acc1}",
            "vmov s2, s3, {acc2}, {acc3}",
            "vcvt.f32.s32 s0, s0",
            "vcvt.f32.s32 s1, s1",
            "vcvt.f32.s32 s2, s2",
            "vcvt.f32.s32 s3, s3",
            "ldr {e}, [sp, #24]",
            "vldmia {e}!, {{s4-s7}}",
            "str {e}, [sp, #24]",
            "vmul.f32 s0, s0, s4",
            "vmul.f32 s1, s1, s5",
            "vmul.f32 s2, s2, s6",
            "vmul.f32 s3, s3, s7",
            "vmul.f32 s0, s0, s8",
            "vmul.f32 s1, s1, s8",
            "vmul.f32 s2, s2, s8",
            "vmul.f32 s3, s3, s8",
            "ldr {t}, [sp, #8]",
            "vstmia {t}!, {{s0-s3}}",
            "str {t}, [sp, #8]",
            "ldr {e}, [sp, #16]",
            "add {p}, {p}, {e}",
            "ldr {e}, [sp, #12]",
            "cmp {t}, {e}",
            "bne 8b",
            "ldr {t}, [sp, #20]",
            "mov sp, {t}",
            "vpop {{s0-s8}}",
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

/// One step of four columns of one row for two vectors: two doublewords of reordered
/// activations (`x0`, `y0` of the first vector, `x1`, `y1` of the second), one word of four
/// weights unpacked once by SXTB16 and multiplied-accumulated with both vectors.
macro_rules! pair_quad {
    () => {
        concat!(
            "ldrd {x0}, {y0}, [{a}], #8\n",
            "ldrd {x1}, {y1}, [{a}], #8\n",
            "ldr {t}, [{p}], #4\n",
            "sxtb16 {e}, {t}\n",
            "smlad {acc0}, {e}, {x0}, {acc0}\n",
            "smlad {acc1}, {e}, {x1}, {acc1}\n",
            "sxtb16 {e}, {t}, ror #8\n",
            "smlad {acc0}, {e}, {y0}, {acc0}\n",
            "smlad {acc1}, {e}, {y1}, {acc1}\n",
        )
    };
}

/// [`scaled_rows`] of two vectors at once, each weight word unpacked once for both: for
/// every row `r < outs[0].len()` of `weights` (row-major, `cols` bytes a row, all columns)
/// and each `k` of 0, 1, `outs[k][r] = (Σ w·acts[k] as f32 · scales[r]) · act_scales[k]`.
/// Returns `false` (and writes nothing) unless `cols` is a non-zero multiple of 4 of at
/// most [`MAX_COLS`], both vectors and both outputs are as long as they must be, and there
/// are weights and scales for every row.
///
/// ```ignore
/// // Runs on the Cortex-M4 target only; `dot_i8_i16` gives the same sum for each row anywhere.
/// use inkling_core::engine::{kernels::cortex_m4::scaled_rows_pair, matvec::dot_i8_i16};
/// let w = [1u8, 2, 3, 4, 0xFF, 0xFE, 0xFD, 0xFC]; // 2 rows × 4 columns
/// let (a0, a1, s) = ([10i16, -20, 30, -40], [1i16, 2, 3, 4], [0.5f32; 2]);
/// let (mut o0, mut o1) = ([0.0f32; 2], [0.0f32; 2]);
/// assert!(scaled_rows_pair(&w, 4, [&a0, &a1], &s, [0.25, 2.0], [&mut o0, &mut o1]));
/// assert_eq!(o1[1], dot_i8_i16(&w[4..], &a1) as f32 * 0.5 * 2.0);
/// ```
pub fn scaled_rows_pair(
    weights: &[u8],
    cols: usize,
    acts: [&[i16]; 2],
    scales: &[f32],
    act_scales: [f32; 2],
    outs: [&mut [f32]; 2],
) -> bool {
    let [a0, a1] = acts;
    let [o0, o1] = outs;
    let rows = o0.len();
    let fits = cols != 0
        && cols.is_multiple_of(4)
        && cols <= MAX_COLS
        && a0.len() >= cols
        && a1.len() >= cols
        && o1.len() >= rows
        && scales.len() >= rows
        && weights.len() >= rows * cols;
    if !fits {
        return false;
    }
    if rows == 0 {
        return true;
    }
    // What the assembly reads: both vectors, the number of quads and rows, where both
    // outputs go, the scales and the bits of both activation scales.
    let params: [usize; 9] = [
        a0.as_ptr() as usize,
        a1.as_ptr() as usize,
        cols / 4,
        rows,
        o0.as_mut_ptr() as usize,
        o1.as_mut_ptr() as usize,
        scales.as_ptr() as usize,
        act_scales[0].to_bits() as usize,
        act_scales[1].to_bits() as usize,
    ];
    // SAFETY: the assembly reads `rows · cols` bytes of `weights` (inside the slice by
    // `fits`), `2·cols` bytes of each vector, `rows` scales and `params`; it writes `rows`
    // words of each output, and below the stack pointer the saved s0-s9 and a frame of
    // `24 + 4·cols` bytes (at most 40 + 24 + 2 KiB in all), which it puts back before it
    // ends. Word loads of weights and activations may be unaligned, which Armv7-M allows for
    // LDR; the loads of scales and stores of outputs are of f32 slices (4-byte aligned), the
    // doubleword loads and stores from the frame, aligned to 8 here. Every core register it
    // changes is an operand; the FPU registers it uses it restores.
    unsafe {
        asm!(
            // s0-s9 saved first and restored last, as in `scaled_rows`.
            "vpush {{s0-s9}}",
            "vldr s8, [{e}, #28]",
            "vldr s9, [{e}, #32]",
            // Frame at sp: end of the 4-column steps, the second output's distance from the
            // first, the first output's end, the old sp, where the next scale is; then
            // (from sp + 24) the activations of both vectors, reordered and interleaved
            // four columns at a time.
            "ldr {x0}, [{e}, #8]",
            "lsl {y0}, {x0}, #4",
            "add {y0}, {y0}, #24",
            "mov {t}, sp",
            "sub {y0}, {t}, {y0}",
            "bic {y0}, {y0}, #7",
            "mov sp, {y0}",
            "str {t}, [sp, #12]",
            "ldr {o}, [{e}, #16]",
            "ldr {t}, [{e}, #20]",
            "sub {t}, {t}, {o}",
            "str {t}, [sp, #4]",
            "ldr {t}, [{e}, #12]",
            "add {t}, {o}, {t}, lsl #2",
            "str {t}, [sp, #8]",
            "ldr {t}, [{e}, #24]",
            "str {t}, [sp, #16]",
            "add {a}, sp, #24",
            "add {t}, {a}, {x0}, lsl #4",
            "str {t}, [sp]",
            "bic {k}, {x0}, #7",
            "add {k}, {a}, {k}, lsl #4",
            // Reorder: (a0, a1), (a2, a3) -> (a0, a2), (a1, a3), first vector then second.
            "ldr {x1}, [{e}]",
            "ldr {y1}, [{e}, #4]",
            "mov {e}, {a}",
            "6:",
            "ldr {x0}, [{x1}], #4",
            "ldr {y0}, [{x1}], #4",
            "pkhbt {acc0}, {x0}, {y0}, lsl #16",
            "pkhtb {acc1}, {y0}, {x0}, asr #16",
            "strd {acc0}, {acc1}, [{e}], #8",
            "ldr {x0}, [{y1}], #4",
            "ldr {y0}, [{y1}], #4",
            "pkhbt {acc0}, {x0}, {y0}, lsl #16",
            "pkhtb {acc1}, {y0}, {x0}, asr #16",
            "strd {acc0}, {acc1}, [{e}], #8",
            "cmp {e}, {t}",
            "bne 6b",
            // One row a pass, for both vectors.
            "8:",
            "add {a}, sp, #24",
            "mov {acc0}, #0",
            "mov {acc1}, #0",
            // 32 columns a step, then 4.
            "cmp {a}, {k}",
            "beq 3f",
            "2:",
            pair_quad!(),
            pair_quad!(),
            pair_quad!(),
            pair_quad!(),
            pair_quad!(),
            pair_quad!(),
            pair_quad!(),
            pair_quad!(),
            "cmp {a}, {k}",
            "bne 2b",
            "3:",
            "ldr {e}, [sp]",
            "cmp {a}, {e}",
            "beq 5f",
            "4:",
            pair_quad!(),
            "ldr {e}, [sp]",
            "cmp {a}, {e}",
            "bne 4b",
            "5:",
            // The rescale: (sum as f32 * scale) * act_scale, for each vector.
            "vmov s0, s1, {acc0}, {acc1}",
            "vcvt.f32.s32 s0, s0",
            "vcvt.f32.s32 s1, s1",
            "ldr {e}, [sp, #16]",
            "vldmia {e}!, {{s2}}",
            "str {e}, [sp, #16]",
            "vmul.f32 s0, s0, s2",
            "vmul.f32 s1, s1, s2",
            "vmul.f32 s0, s0, s8",
            "vmul.f32 s1, s1, s9",
            "ldr {e}, [sp, #4]",
            "add {e}, {o}, {e}",
            "vstr s1, [{e}]",
            "vstmia {o}!, {{s0}}",
            "ldr {e}, [sp, #8]",
            "cmp {o}, {e}",
            "bne 8b",
            "ldr {t}, [sp, #12]",
            "mov sp, {t}",
            "vpop {{s0-s9}}",
            p = inout(reg) weights.as_ptr() => _,
            e = inout(reg) params.as_ptr() => _,
            a = out(reg) _,
            k = out(reg) _,
            o = out(reg) _,
            acc0 = out(reg) _,
            acc1 = out(reg) _,
            x0 = out(reg) _,
            y0 = out(reg) _,
            x1 = out(reg) _,
            y1 = out(reg) _,
            t = out(reg) _,
        );
    }
    true
}
