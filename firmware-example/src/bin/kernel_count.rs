//! Instructions per multiply-accumulate of the int8 matrix-vector kernel, counted under
//! QEMU `-icount shift=0`, and a check that it gives the portable kernel's bits.
//!
//! The check runs `matvec` (the Cortex-M4 SMLAD kernel on that core; the portable kernel
//! itself on the others, where the check is trivially met) against the portable
//! integer kernel with the same float rescale, on matrices of many shapes (rows and columns
//! not multiples of 4, groups of scales, scales as f32 in memory, as binary32 bytes aligned
//! or not and as binary16, extreme activations), and exits with status 4 on
//! any difference. The count times a few large products, repeated; figures are
//! `kernel_<rows>x<cols>_instructions_per_mac_milli` (instructions per MAC × 1000) on the
//! status log. Run it with `tests/firmware/run.sh` (which starts it after the main program)
//! or `cargo run --release --bin kernel_count`.
#![no_std]
#![no_main]

// The main program's status log (failures are not reported here).
#[allow(dead_code)]
#[path = "../status_log.rs"]
mod status_log;

use inkling_core::engine::matvec::{dot_i8_i16, matvec, matvec_chunk};
use inkling_core::image::views::{Floats, QuantMatrix};
use inkling_firmware_example::device::exit::{exit, ExitCode};
use inkling_firmware_example::device::{calibrate, entry, InstructionClock, CALIBRATION_LOOPS};

use status_log::StatusLog;

#[cfg(feature = "defmt")]
use defmt_semihosting as _;

/// Rows and columns of the largest timed product.
const ROWS: usize = 256;
const COLS: usize = 512;
/// Repetitions of each timed product (SysTick resolution is 40 instructions).
const REPEATS: u64 = 8;

/// The next value of a 32-bit xorshift generator (Marsaglia 2003, shifts 13, 17, 5).
const fn xorshift(mut x: u32) -> u32 {
    x ^= x << 13;
    x ^= x >> 17;
    x ^= x << 5;
    x
}

/// Pseudo-random int8 weights (as bytes), in flash as a model's are.
static WEIGHTS: [u8; ROWS * COLS] = {
    let mut w = [0u8; ROWS * COLS];
    let mut x = 0x1234_5678u32;
    let mut i = 0;
    while i < w.len() {
        x = xorshift(x);
        w[i] = (x >> 24) as u8;
        i += 1;
    }
    w
};

/// Scales, one per row or per group (enough for 16-column groups of the widest matrix).
static SCALES: [f32; ROWS * COLS / 16] = {
    let mut s = [0.0f32; ROWS * COLS / 16];
    let mut i = 0;
    while i < s.len() {
        s[i] = 1.0 / (1 + i % 37) as f32;
        i += 1;
    }
    s
};

/// The bytes of [`SCALES`] as binary32, little-endian, 4-byte aligned: read from offset 0
/// they are an image's f32 scales (the kernel's fast path), from offset 1 unaligned ones,
/// and as binary16 other values again (both through the portable path).
#[repr(C, align(4))]
struct ScaleBytes([u8; 4 * SCALES.len() + 4]);

static SCALE_BYTES: ScaleBytes = {
    let mut b = [0u8; 4 * SCALES.len() + 4];
    let mut i = 0;
    while i < SCALES.len() {
        let s = SCALES[i].to_le_bytes();
        b[4 * i] = s[0];
        b[4 * i + 1] = s[1];
        b[4 * i + 2] = s[2];
        b[4 * i + 3] = s[3];
        i += 1;
    }
    ScaleBytes(b)
};

/// `n` scales from [`SCALES`] in each of the forms an image can hold them in.
fn scale_forms(n: usize) -> [Floats<'static>; 4] {
    let b = &SCALE_BYTES.0;
    [
        Floats::Native(SCALES.get(..n).unwrap_or(&[])),
        Floats::F32Le(b.get(..4 * n).unwrap_or(&[])),
        Floats::F32Le(b.get(1..1 + 4 * n).unwrap_or(&[])),
        Floats::F16Le(b.get(..2 * n).unwrap_or(&[])),
    ]
}

/// Pseudo-random activations in -127..=127, with `extreme` also the i16 limits now and then.
fn activations(seed: u32, extreme: bool, out: &mut [i16]) {
    let mut x = seed | 1;
    for (i, a) in out.iter_mut().enumerate() {
        x = xorshift(x);
        *a = ((x >> 16) % 255) as i16 - 127;
        if extreme && i % 7 == 3 {
            *a = if x & 1 == 0 { i16::MIN } else { i16::MAX };
        }
    }
}

/// `matvec` as the portable kernel computes it: the reference the SMLAD kernel must match.
fn reference(m: &QuantMatrix<'_>, act: &[i16], act_scale: f32, out: &mut [f32]) {
    let group = m.group();
    for (r, o) in out.iter_mut().enumerate().take(m.rows()) {
        let (row, scales) = (m.row(r), m.row_scales(r));
        *o = if group == 0 {
            dot_i8_i16(row, act) as f32 * scales.get(0) * act_scale
        } else {
            let mut total = 0.0f32;
            for ((w, a), s) in row.chunks(group).zip(act.chunks(group)).zip(scales.iter()) {
                total += dot_i8_i16(w, a) as f32 * s;
            }
            total * act_scale
        };
    }
}

/// Shapes whose results differ from the reference, over a sweep of sizes.
fn mismatches() -> u64 {
    let mut act = [0i16; COLS + 3];
    let (mut got, mut want) = ([0.0f32; 40], [0.0f32; 40]);
    let mut bad = 0;
    let mut seed = 7u32;
    for &rows in &[1usize, 3, 4, 5, 8, 9, 33, 40] {
        for &cols in &[0usize, 1, 3, 4, 5, 8, 15, 16, 17, 31, 33, 64, 100, 512, 513] {
            for &group in &[0usize, 16] {
                let per_row = if group == 0 { 1 } else { cols.div_ceil(group) };
                for s in scale_forms(rows * per_row) {
                    for &extreme in &[false, true] {
                        // The activations one longer, shorter or as long as the rows.
                        for &extra in &[0isize, -1, 1] {
                            let len = (cols as isize + extra).max(0) as usize;
                            seed = xorshift(seed);
                            let a = act.get_mut(..len).unwrap_or(&mut []);
                            activations(seed, extreme, a);
                            let w = WEIGHTS.get(..rows * cols).unwrap_or(&[]);
                            let m = QuantMatrix::new(w, s, rows, cols, group);
                            let (g, r) = (&mut got[..rows], &mut want[..rows]);
                            matvec(&m, a, 0.0123, g);
                            reference(&m, a, 0.0123, r);
                            if g.iter()
                                .zip(r.iter())
                                .any(|(x, y)| x.to_bits() != y.to_bits())
                            {
                                bad += 1;
                            }
                        }
                    }
                }
            }
        }
    }
    bad
}

/// Shapes whose [`matvec_chunk`] results (1 to 3 vectors, the two-vector kernel on this
/// target) differ from the reference for each vector, over a sweep of sizes, outputs whole
/// and cut one short.
fn chunk_mismatches() -> u64 {
    let mut acts = [0i16; 3 * (COLS + 1)];
    let (mut got, mut want) = ([0.0f32; 3 * 40], [0.0f32; 40]);
    let scales = [0.0123f32, 0.5, 3.0e-5];
    let mut bad = 0;
    let mut seed = 11u32;
    for &rows in &[1usize, 4, 5, 9, 33, 40] {
        for &cols in &[0usize, 3, 4, 8, 64, 100, 512, 513] {
            for &group in &[0usize, 16] {
                let per_row = if group == 0 { 1 } else { cols.div_ceil(group) };
                for s in scale_forms(rows * per_row) {
                    for t in 1..=3 {
                        for &cut in &[0usize, 1] {
                            seed = xorshift(seed);
                            let a = acts.get_mut(..t * cols).unwrap_or(&mut []);
                            activations(seed, true, a);
                            let w = WEIGHTS.get(..rows * cols).unwrap_or(&[]);
                            let m = QuantMatrix::new(w, s, rows, cols, group);
                            let len = t * rows - cut;
                            let g = got.get_mut(..len).unwrap_or(&mut []);
                            g.fill(f32::NAN);
                            matvec_chunk(&m, a, scales.get(..t).unwrap_or(&[]), g);
                            for (j, &scale) in scales.iter().enumerate().take(t) {
                                let aj = a.get(j * cols..(j + 1) * cols).unwrap_or(&[]);
                                let r = &mut want[..rows];
                                reference(&m, aj, scale, r);
                                let gj = g.get(j * rows..).unwrap_or(&[]);
                                if gj
                                    .iter()
                                    .zip(r.iter())
                                    .any(|(x, y)| x.to_bits() != y.to_bits())
                                {
                                    bad += 1;
                                }
                            }
                        }
                    }
                }
            }
        }
    }
    bad
}

#[entry]
fn main() -> ! {
    let mut log = StatusLog::open();
    log.note("inkling kernel count: int8 matrix-vector kernel, instructions per MAC");
    let Some(clock) = InstructionClock::start() else {
        exit(ExitCode::Internal)
    };
    let calibration_ticks = calibrate(&clock);
    let per_tick =
        (2 * u64::from(CALIBRATION_LOOPS) + calibration_ticks / 2) / calibration_ticks.max(1);
    log.figure("instructions_per_tick", per_tick);

    let bad = mismatches() + chunk_mismatches();
    log.figure("kernel_mismatches", bad);
    if bad != 0 {
        log.note("the SMLAD kernel differs from the portable kernel");
        exit(ExitCode::Internal)
    }

    let mut act = [0i16; COLS];
    activations(99, false, &mut act);
    let mut out = [0.0f32; ROWS];
    for &(rows, cols, name) in &[
        (
            256usize,
            512usize,
            "kernel_256x512_instructions_per_mac_milli",
        ),
        (512, 256, "kernel_512x256_instructions_per_mac_milli"),
        (256, 64, "kernel_256x64_instructions_per_mac_milli"),
        (64, 64, "kernel_64x64_instructions_per_mac_milli"),
        // The demo model's own: expand and head, select, contract.
        (256, 96, "kernel_256x96_instructions_per_mac_milli"),
        (22, 128, "kernel_22x128_instructions_per_mac_milli"),
        (96, 128, "kernel_96x128_instructions_per_mac_milli"),
    ] {
        let w = WEIGHTS.get(..rows * cols).unwrap_or(&[]);
        let a = act.get(..cols).unwrap_or(&[]);
        // More rows than `out` holds go in parts of `ROWS`: the same work per row.
        let part_rows = rows.min(ROWS);
        let start = clock.ticks();
        for _ in 0..REPEATS {
            for part in w.chunks(part_rows * cols) {
                let s = Floats::Native(SCALES.get(..part_rows).unwrap_or(&[]));
                let m = QuantMatrix::new(part, s, part_rows, cols, 0);
                matvec(&m, a, 0.01, out.get_mut(..part_rows).unwrap_or(&mut []));
            }
        }
        let instructions = (clock.ticks() - start) * per_tick;
        let macs = REPEATS * (rows * cols) as u64;
        log.figure(name, 1000 * instructions / macs);
        core::hint::black_box(&out);
    }

    // Two vectors at once (`matvec_chunk`, as a prefill runs them) on the demo's shapes.
    let mut acts = [0i16; 2 * 128];
    activations(98, false, &mut acts);
    let mut outs = [0.0f32; 2 * 256];
    for &(rows, cols, name) in &[
        (
            256usize,
            96usize,
            "kernel_pair_256x96_instructions_per_mac_milli",
        ),
        (22, 128, "kernel_pair_22x128_instructions_per_mac_milli"),
        (96, 128, "kernel_pair_96x128_instructions_per_mac_milli"),
    ] {
        let w = WEIGHTS.get(..rows * cols).unwrap_or(&[]);
        let s = Floats::Native(SCALES.get(..rows).unwrap_or(&[]));
        let m = QuantMatrix::new(w, s, rows, cols, 0);
        let a = acts.get(..2 * cols).unwrap_or(&[]);
        let o = outs.get_mut(..2 * rows).unwrap_or(&mut []);
        let start = clock.ticks();
        for _ in 0..REPEATS {
            matvec_chunk(&m, a, &[0.01, 0.02], o);
        }
        let instructions = (clock.ticks() - start) * per_tick;
        let macs = REPEATS * (2 * rows * cols) as u64;
        log.figure(name, 1000 * instructions / macs);
        core::hint::black_box(&outs);
    }
    exit(ExitCode::Success)
}
