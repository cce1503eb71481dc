//! Where the instructions of one engine step go: the matrix-vector products, the
//! quantisation of their inputs, the exponentials of the selective scan, and the rest
//! (convolution, norms, SiLU, softplus, the state update), each timed on its own with the
//! model's own matrices and sizes.

use core::hint::black_box;

use inkling_core::engine::activation::quantise;
use inkling_core::engine::matvec::matvec;
use inkling_core::engine::nonlinear::exp2_nonpositive;
use inkling_core::image::format::Role;
use inkling_core::Model;

use inkling_firmware_example::device::InstructionClock;

/// Repetitions of each timed part (SysTick resolution is 40 instructions).
const REPEATS: u64 = 8;

/// Instructions per step spent in each part.
#[derive(Debug, Default, Clone, Copy)]
pub struct StepSplit {
    /// All matrix-vector products of a step (the blocks' three and the head).
    pub matvec: u64,
    /// Quantising the inputs of those products.
    pub quantise: u64,
    /// `I·N` exponentials per block of the selective scan.
    pub scan_exp: u64,
}

/// Times the parts of a step of `model`; `work` (f32) and `act` (i16) are scratch, at least
/// the engine's work and activation lengths.
pub fn measure(
    model: &Model<'_>,
    clock: &InstructionClock,
    per_tick: u64,
    work: &mut [f32],
    act: &mut [i16],
) -> StepSplit {
    let d = *model.dims();
    let widest = d.d_model.max(d.d_inner);
    let (input, out) = work.split_at_mut(widest.min(work.len()));
    for (i, v) in input.iter_mut().enumerate() {
        // Any values do: the integer kernels take the same path whatever the data.
        *v = ((i * 37 % 101) as f32 - 50.0) * 0.02;
    }
    let products = |l: usize| {
        [
            (Role::Expand, d.d_model),
            (Role::Select, d.d_inner),
            (Role::Contract, d.d_inner),
        ]
        .into_iter()
        .map(move |(role, cols)| (model.block_matrix(l, role), cols))
    };
    let all = || {
        (0..d.blocks)
            .flat_map(products)
            .chain(core::iter::once((model.head(), d.d_model)))
    };

    let start = clock.ticks();
    for _ in 0..REPEATS {
        for (_, cols) in all() {
            let a = act.get_mut(..cols).unwrap_or(&mut []);
            black_box(quantise(black_box(input.get(..cols).unwrap_or(&[])), a));
        }
    }
    let quantise_total = (clock.ticks() - start) * per_tick / REPEATS;

    let scale = quantise(input, act);
    let start = clock.ticks();
    for _ in 0..REPEATS {
        for (m, cols) in all() {
            let o = out.get_mut(..m.rows()).unwrap_or(&mut []);
            matvec(&m, black_box(act.get(..cols).unwrap_or(&[])), scale, o);
            black_box(&o);
        }
    }
    let matvec_total = (clock.ticks() - start) * per_tick / REPEATS;

    // The exponentials, less the same loop without them (its argument and sum), so that
    // the figure is the exponentials' own cost. The loop without them applies the identity:
    // a `black_box` there would add a store and a load that the loop with them does not have.
    let calls = d.blocks * d.d_inner * d.d_state;
    let with = timed_loop(clock, per_tick, calls, exp2_nonpositive);
    let without = timed_loop(clock, per_tick, calls, |x| x);
    let exp_total = with.saturating_sub(without);

    StepSplit {
        matvec: matvec_total,
        quantise: quantise_total,
        scan_exp: exp_total,
    }
}

/// Instructions of `calls` applications of `f` in a summing loop, the mean of [`REPEATS`]
/// runs; generic so that `f` is inlined as it is in the engine.
fn timed_loop<F: Fn(f32) -> f32>(
    clock: &InstructionClock,
    per_tick: u64,
    calls: usize,
    f: F,
) -> u64 {
    let start = clock.ticks();
    for _ in 0..REPEATS {
        let mut acc = 0.0f32;
        for i in 0..calls {
            // The scan's arguments Δ·log2(e)·A are negative, a few units at most.
            acc += f(black_box(-((i % 97) as f32) * 0.03));
        }
        black_box(acc);
    }
    (clock.ticks() - start) * per_tick / REPEATS
}
