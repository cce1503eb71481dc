//! The model, run over bytes: a byte in, the next byte's logits out.
//!
//! Per byte `b`, with the residual `u = byte_embed[b]`, each block computes (Gu & Dao 2023,
//! Sec. 3 and Alg. 2, pre-norm residual):
//! ```text
//! h      = rmsnorm(u) * norm
//! [x; z] = expand · h
//! x      = silu(conv_bias + Σ_k conv[:,k] * x_{t-K+1+k})     causal depthwise, oldest → newest
//! [r; B; C] = select · x
//! dt     = softplus(step · r + step_bias)
//! s      = exp(dt[i] * A[i,n]) * s + dt[i] * B[n] * x[i]     A = -exp(decay)
//! y      = (s · C + skip * x) * silu(z)
//! u      = u + contract · y
//! ```
//! then `logits = head · (rmsnorm(u) * final_norm)`. Every exponential is computed as a
//! power of two ([`exp2_nonpositive`]): `exp(dt·A)` as `2^((dt·log2 e)·A)`, SiLU and softplus
//! from `e^(−|x|)`.
//!
//! The state of one block is its convolution window `[I, K-1]` (oldest first) followed by
//! its SSM state `[I, N]`; blocks follow each other. It starts at zero.
//!
//! [`prefill`] runs several known bytes block by block, so that each weight row is read once
//! for the whole chunk. It computes only what its result needs: the residual after the last
//! block feeds nothing but the output head, so the last block's `contract` and the head run
//! for the last byte alone (and not at all in a pass whose logits nobody reads). [`step`] is a
//! prefill of one byte. Every value is computed by the same operations in the same order
//! either way, so a prefill gives bit for bit the state and logits of stepping byte by byte.

use core::cell::Cell;

use super::buffers::{check_len, Scratch};
use super::nonlinear::{exp2_nonpositive, rms_norm, silu, softplus};
use super::state_store::StateStore;
use super::weights::Weights;
use crate::error::Error;
use crate::image::dims::Dims;
use crate::image::format::{Role, VOCAB};
use crate::image::views::{FloatRun, Floats};

/// Splits `n` elements off the front of `buf` (all of it when shorter).
fn carve<T>(buf: &mut [T], n: usize) -> (&mut [T], &mut [T]) {
    let n = n.min(buf.len());
    buf.split_at_mut(n)
}

/// Runs one byte through the model, updating `state`, and returns the 256 logits of the
/// next byte (they stay in `scratch` until the next step).
///
/// `state` must hold [`Dims::state_len`] values (zeros for a fresh start); `scratch` must
/// have been made for the same dimensions.
///
/// ```
/// use inkling_core::{Model, Scratch, engine::recurrence::step};
/// # let image = inkling_core::image::example::tiny_image();
/// let model = Model::from_bytes(&image)?;
/// let dims = *model.dims();
/// let mut state = [0.0f32; 1024];
/// let (mut work, mut act) = ([0.0f32; 1024], [0i16; 64]);
/// let mut scratch = Scratch::new(&dims, &mut work, &mut act)?;
/// let logits = step(&model, &mut state[..dims.state_len()], &mut scratch, b'a')?;
/// assert_eq!(logits.len(), 256);
/// # Ok::<(), inkling_core::Error>(())
/// ```
pub fn step<'s, W: Weights + ?Sized>(
    weights: &W,
    state: &mut [f32],
    scratch: &'s mut Scratch<'_>,
    byte: u8,
) -> Result<&'s [f32], Error> {
    prefill(weights, state, scratch, &[byte])
}

/// Runs known bytes through the model, updating `state`, and returns the logits after the
/// last one. The bytes go through in passes of [`Scratch::chunk_capacity`] bytes; each pass
/// reads every weight matrix once. The result is bit-identical to calling [`step`] for
/// each byte. An empty `bytes` leaves the state alone and returns the last logits.
///
/// ```
/// use inkling_core::{Model, Scratch, engine::recurrence::{prefill, step}};
/// # let image = inkling_core::image::example::tiny_image();
/// let model = Model::from_bytes(&image)?;
/// let d = *model.dims();
/// let (mut work, mut act) = (vec![0.0; d.chunk_work_len(8)], vec![0; d.chunk_act_len(8)]);
/// let mut chunked = Scratch::new(&d, &mut work, &mut act)?;
/// let mut a = vec![0.0; d.state_len()];
/// let fast = prefill(&model, &mut a, &mut chunked, b"hello there")?.to_vec();
///
/// let (mut work1, mut act1) = (vec![0.0; d.work_len()], vec![0; d.act_len()]);
/// let mut single = Scratch::new(&d, &mut work1, &mut act1)?;
/// let mut b = vec![0.0; d.state_len()];
/// for &byte in b"hello there" {
///     step(&model, &mut b, &mut single, byte)?;
/// }
/// assert_eq!(fast, single.logits());
/// assert_eq!(a, b);
/// # Ok::<(), inkling_core::Error>(())
/// ```
pub fn prefill<'s, W: Weights + ?Sized>(
    weights: &W,
    state: &mut [f32],
    scratch: &'s mut Scratch<'_>,
    bytes: &[u8],
) -> Result<&'s [f32], Error> {
    prefill_stored(weights, state, scratch, bytes)
}

/// [`prefill`] on a state in any [`StateStore`]: in passes of [`Scratch::chunk_capacity`]
/// bytes when the store [takes passes](StateStore::takes_passes), else one byte a pass.
///
/// ```
/// use inkling_core::{Model, Scratch, engine::recurrence::prefill_stored};
/// use inkling_core::engine::state_store::HalfState;
/// # let image = inkling_core::image::example::tiny_image();
/// let model = Model::from_bytes(&image)?;
/// let d = *model.dims();
/// let (mut work, mut act) = (vec![0.0; d.work_len()], vec![0; d.act_len()]);
/// let mut scratch = Scratch::new(&d, &mut work, &mut act)?;
/// let (mut bits, mut block) = (vec![0u16; d.state_len()], vec![0.0; d.block_state_len()]);
/// let mut state = HalfState::new(&d, &mut bits, &mut block)?;
/// let logits = prefill_stored(&model, &mut state, &mut scratch, b"hi")?;
/// assert_eq!(logits.len(), 256);
/// # Ok::<(), inkling_core::Error>(())
/// ```
pub fn prefill_stored<'s, W: Weights + ?Sized, S: StateStore + ?Sized>(
    weights: &W,
    state: &mut S,
    scratch: &'s mut Scratch<'_>,
    bytes: &[u8],
) -> Result<&'s [f32], Error> {
    let d = *weights.dims();
    check_len("state", d.state_len(), state.state_len())?;
    let chunk = if state.takes_passes() {
        scratch.chunk_capacity()
    } else {
        1
    };
    let passes = bytes.len().div_ceil(chunk);
    for (pass, part) in bytes.chunks(chunk).enumerate() {
        let wanted = if pass + 1 == passes {
            Wanted::Last
        } else {
            Wanted::None
        };
        run_pass(weights, &d, state, scratch, part, wanted);
    }
    Ok(scratch.logits())
}

/// Runs known bytes through the model as [`prefill_stored`] does, but computes the logits
/// after *every* byte and hands them to `check` with the byte's index, stopping after the
/// first byte for which `check` returns `false`; returns how many bytes went through the
/// model (the whole passes run: a pass is not cut short, so the state may have taken more
/// bytes than were checked). Used to verify a drafted continuation in one pass (see
/// [`draft`](crate::session::draft)): the blocks run over the whole pass, reading each
/// weight row once, and only the output head runs once per byte.
///
/// The logits handed over are those [`step`] would give after the same bytes on an f32
/// state (on a [`StateStore`] that rounds, its rounding happens at the end of each pass).
///
/// ```
/// use inkling_core::{Model, Scratch, engine::recurrence::{prefill_checked, step}};
/// # let image = inkling_core::image::example::tiny_image();
/// let model = Model::from_bytes(&image)?;
/// let d = *model.dims();
/// let (mut work, mut act) = (vec![0.0; d.chunk_work_len(8)], vec![0; d.chunk_act_len(8)]);
/// let mut chunked = Scratch::new(&d, &mut work, &mut act)?;
/// let mut a = vec![0.0; d.state_len()];
/// let mut seen = Vec::new();
/// let fed = prefill_checked(&model, &mut a[..], &mut chunked, b"hut", |_, l| {
///     seen.push(l.to_vec());
///     true
/// })?;
/// assert_eq!(fed, 3);
/// let (mut w1, mut a1) = (vec![0.0; d.work_len()], vec![0; d.act_len()]);
/// let mut single = Scratch::new(&d, &mut w1, &mut a1)?;
/// let mut b = vec![0.0; d.state_len()];
/// for (i, &byte) in b"hut".iter().enumerate() {
///     assert_eq!(step(&model, &mut b, &mut single, byte)?, &seen[i][..]);
/// }
/// # Ok::<(), inkling_core::Error>(())
/// ```
pub fn prefill_checked<W: Weights + ?Sized, S: StateStore + ?Sized>(
    weights: &W,
    state: &mut S,
    scratch: &mut Scratch<'_>,
    bytes: &[u8],
    mut check: impl FnMut(usize, &[f32]) -> bool,
) -> Result<usize, Error> {
    let d = *weights.dims();
    check_len("state", d.state_len(), state.state_len())?;
    let chunk = scratch.chunk_capacity();
    let mut fed = 0usize;
    for part in bytes.chunks(chunk) {
        let first = fed;
        let mut each = |i: usize, logits: &[f32]| check(first + i, logits);
        let go_on = run_pass(weights, &d, state, scratch, part, Wanted::Each(&mut each));
        fed += part.len();
        if !go_on {
            break;
        }
    }
    Ok(fed)
}

/// Which logits a pass computes.
enum Wanted<'f> {
    /// None (a pass whose logits nobody reads).
    None,
    /// After the last byte, left in the scratch.
    Last,
    /// After every byte, each handed to the function with the byte's index in the pass;
    /// `false` from it ends the pass's head early.
    Each(&'f mut dyn FnMut(usize, &[f32]) -> bool),
}

/// The per-byte work areas of one pass, each `t` vectors long.
struct PassAreas<'a> {
    u: &'a mut [f32],
    h: &'a mut [f32],
    xz: &'a mut [f32],
    rbc: &'a mut [f32],
    dt: &'a mut [f32],
    xy: &'a mut [f32],
}

/// One pass over `bytes` (at most the scratch's chunk capacity), block by block.
fn run_pass<W: Weights + ?Sized, S: StateStore + ?Sized>(
    weights: &W,
    d: &Dims,
    state: &mut S,
    scratch: &mut Scratch<'_>,
    bytes: &[u8],
    mut wanted: Wanted<'_>,
) -> bool {
    let t = bytes.len();
    let (i_n, n, k, r, dm) = (d.d_inner, d.d_state, d.d_conv, d.dt_rank, d.d_model);
    let work = &mut *scratch.work;
    let (logits, rest) = carve(work, VOCAB);
    let (u, rest) = carve(rest, t * dm);
    let (h, rest) = carve(rest, t * dm);
    let (xz, rest) = carve(rest, t * 2 * i_n);
    let (rbc, rest) = carve(rest, t * (r + 2 * n));
    let (dt, rest) = carve(rest, t * i_n);
    let (xy, _) = carve(rest, t * i_n);
    let mut a = PassAreas {
        u,
        h,
        xz,
        rbc,
        dt,
        xy,
    };
    let act = &mut *scratch.act;

    for (&b, u_t) in bytes.iter().zip(a.u.chunks_exact_mut(dm)) {
        weights.embed(b, u_t);
    }
    let per_block = i_n * (k - 1 + n);
    for l in 0..d.blocks {
        // Every byte's output of a block feeds the next block; the last block's outputs feed
        // only the head, which wants the last byte's, or none.
        let output_from = match (l + 1 == d.blocks, &wanted) {
            (false, _) | (true, Wanted::Each(_)) => 0,
            (true, Wanted::Last) => t.saturating_sub(1),
            (true, Wanted::None) => t,
        };
        let block = Block {
            weights,
            d,
            l,
            t,
            output_from,
        };
        state.with_block(l, per_block, |block_state| {
            block.run(block_state, &mut a, act)
        });
    }
    let mut head = |u_t: &[f32], logits: &mut [f32]| {
        let h0 = a.h.get_mut(..dm).unwrap_or(&mut []);
        rms_norm(u_t, weights.floats(0, Role::FinalNorm), d.norm_eps, h0);
        weights.matvec(0, Role::Head, h0, act, logits);
    };
    match &mut wanted {
        Wanted::None => true,
        Wanted::Last => {
            head(a.u.chunks_exact(dm).last().unwrap_or(&[]), logits);
            true
        }
        Wanted::Each(check) => {
            for (i, u_t) in a.u.chunks_exact(dm).enumerate() {
                head(u_t, logits);
                if !check(i, logits) {
                    return false;
                }
            }
            true
        }
    }
}

/// The float tensors of one block, as one kind of [`FloatRun`] for all of them.
#[derive(Clone, Copy)]
struct BlockFloats<F: FloatRun> {
    norm: F,
    conv: F,
    conv_bias: F,
    step: F,
    step_bias: F,
    decay: F,
    skip: F,
}

impl<'a> BlockFloats<Floats<'a>> {
    /// The float tensors of block `l`.
    fn of<W: Weights + ?Sized>(weights: &'a W, l: usize) -> Self {
        let f = |role| weights.floats(l, role);
        BlockFloats {
            norm: f(Role::Norm),
            conv: f(Role::Conv),
            conv_bias: f(Role::ConvBias),
            step: f(Role::Step),
            step_bias: f(Role::StepBias),
            decay: f(Role::Decay),
            skip: f(Role::Skip),
        }
    }

    /// The same tensors as plain `&[f32]` when every one is stored that way (aligned
    /// little-endian f32, as in every image the converter writes): the loops over them then
    /// have no per-value decoding.
    fn as_slices(&self) -> Option<BlockFloats<&'a [f32]>> {
        Some(BlockFloats {
            norm: self.norm.as_f32s()?,
            conv: self.conv.as_f32s()?,
            conv_bias: self.conv_bias.as_f32s()?,
            step: self.step.as_f32s()?,
            step_bias: self.step_bias.as_f32s()?,
            decay: self.decay.as_f32s()?,
            skip: self.skip.as_f32s()?,
        })
    }
}

/// What every part of block `l`'s pass over `t` bytes needs.
struct Block<'w, W: Weights + ?Sized> {
    weights: &'w W,
    d: &'w Dims,
    l: usize,
    t: usize,
    /// The first byte whose output (the `contract` product added to the residual) is used;
    /// `t` when none is.
    output_from: usize,
}

impl<W: Weights + ?Sized> Block<'_, W> {
    /// The pass, with the float tensors in the form that suits them.
    fn run(&self, block_state: &mut [f32], a: &mut PassAreas<'_>, act: &mut [i16]) {
        let floats = BlockFloats::of(self.weights, self.l);
        match floats.as_slices() {
            Some(slices) => self.run_with(&slices, block_state, a, act),
            None => self.run_with(&floats, block_state, a, act),
        }
    }

    /// The pass with the float tensors `f`.
    fn run_with<F: FloatRun>(
        &self,
        f: &BlockFloats<F>,
        block_state: &mut [f32],
        a: &mut PassAreas<'_>,
        act: &mut [i16],
    ) {
        let (d, l, t) = (self.d, self.l, self.t);
        let (i_n, n, k, r, dm) = (d.d_inner, d.d_state, d.d_conv, d.dt_rank, d.d_model);
        let (window, ssm) = carve(block_state, i_n * (k - 1));
        for (u_t, h_t) in a.u.chunks_exact(dm).zip(a.h.chunks_exact_mut(dm)) {
            rms_norm(u_t, f.norm, d.norm_eps, h_t);
        }
        self.weights
            .matvec_chunk(l, Role::Expand, a.h, t, act, a.xz);

        // Causal depthwise convolution, byte after byte; x goes to its own contiguous area.
        for (xz_t, x_t) in a.xz.chunks_exact(2 * i_n).zip(a.xy.chunks_exact_mut(i_n)) {
            x_t.copy_from_slice(xz_t.get(..i_n).unwrap_or(&[]));
            convolve(x_t, window, f.conv, f.conv_bias, k);
        }
        // The activations, each a loop of its own over whole vectors (so that it vectorises):
        // x after the convolution, and the gate silu(z) in place of z.
        a.xy.iter_mut().for_each(|v| *v = silu(*v));
        for xz_t in a.xz.chunks_exact_mut(2 * i_n) {
            let z = xz_t.get_mut(i_n..).unwrap_or(&mut []);
            z.iter_mut().for_each(|v| *v = silu(*v));
        }

        // Input-dependent step size, input and output projections.
        self.weights
            .matvec_chunk(l, Role::Select, a.xy, t, act, a.rbc);
        for (rbc_t, dt_t) in a
            .rbc
            .chunks_exact(r + 2 * n)
            .zip(a.dt.chunks_exact_mut(i_n))
        {
            let rank = rbc_t.get(..r).unwrap_or(&[]);
            for ((dti, row), bias) in dt_t
                .iter_mut()
                .zip(f.step.rows(r))
                .zip(f.step_bias.values())
            {
                *dti = row.zip(rank).fold(0.0f32, |acc, (w, &ri)| acc + w * ri) + bias;
            }
        }
        a.dt.iter_mut().for_each(|v| *v = softplus(*v));

        // Selective scan, byte after byte; y replaces x in place.
        let scan = ScanWeights {
            decay: f.decay,
            skip: f.skip,
            n,
        };
        scan_pass(&scan, a, d, ssm);

        let from = self.output_from.min(t);
        if from < t {
            let y = a.xy.get(from * i_n..).unwrap_or(&[]);
            self.weights
                .matvec_chunk(l, Role::Contract, y, t - from, act, a.h);
            let u = a.u.get_mut(from * dm..).unwrap_or(&mut []);
            for (ui, &hi) in u.iter_mut().zip(a.h.iter()) {
                *ui += hi;
            }
        }
    }
}

/// The selective scan over the `t` bytes of a pass.
fn scan_pass<F: FloatRun>(scan: &ScanWeights<F>, a: &mut PassAreas<'_>, d: &Dims, ssm: &mut [f32]) {
    let (i_n, n, r) = (d.d_inner, d.d_state, d.dt_rank);
    for (((xy_t, dt_t), rbc_t), xz_t) in
        a.xy.chunks_exact_mut(i_n)
            .zip(a.dt.chunks_exact(i_n))
            .zip(a.rbc.chunks_exact(r + 2 * n))
            .zip(a.xz.chunks_exact(2 * i_n))
    {
        let bc = rbc_t.get(r..).unwrap_or(&[]);
        let (b, c) = bc.split_at(n.min(bc.len()));
        let gate = xz_t.get(i_n..).unwrap_or(&[]);
        scan.step(ssm, xy_t, dt_t, b, c, gate);
    }
}

/// One byte of the causal depthwise convolution, before its SiLU: `x[i] = bias[i] +
/// Σ_k conv[i,k] · (window[i] then x[i])`, and the window moves on by one.
fn convolve<F: FloatRun>(x: &mut [f32], window: &mut [f32], conv: F, bias: F, k: usize) {
    let mut windows = window;
    for ((xi, mut taps), b) in x.iter_mut().zip(conv.rows(k)).zip(bias.values()) {
        let (past, later) = carve(core::mem::take(&mut windows), k - 1);
        windows = later;
        // One pass over the window, oldest first: each value meets its tap and then moves
        // one place older (a separate shifting copy costs a loop, or a memmove call).
        let past = Cell::from_mut(past).as_slice_of_cells();
        let mut acc = b;
        let mut older: Option<&Cell<f32>> = None;
        // `past` first in the zip, so that its end does not take a tap.
        for (slot, tap) in past.iter().zip(taps.by_ref()) {
            let p = slot.get();
            acc += tap * p;
            if let Some(older) = older {
                older.set(p);
            }
            older = Some(slot);
        }
        acc += taps.next().unwrap_or(0.0) * *xi;
        if let Some(older) = older {
            older.set(*xi);
        }
        *xi = acc;
    }
}

/// The float weights of the selective scan of one block (`decay` holds `A`).
struct ScanWeights<F: FloatRun> {
    decay: F,
    skip: F,
    n: usize,
}

impl<F: FloatRun> ScanWeights<F> {
    /// One byte of the scan (zero-order hold for A, Euler for B), output and gate (`gate`
    /// holds silu(z)): `xy` holds x on entry and y on return.
    ///
    /// Every target computes each value by the same operations in the same order (each
    /// channel's read-out sums its states in order), in two loop shapes: a Cortex-M4's FPU
    /// has no vectors, and one loop per channel saves reloading each state for the read-out;
    /// on the workstation the update is a loop of its own, with no dependence between states
    /// (it vectorises), and the read-out runs four channels side by side (four independent
    /// sums instead of one chain of dependent additions).
    fn step(
        &self,
        ssm: &mut [f32],
        xy: &mut [f32],
        dt: &[f32],
        b: &[f32],
        c: &[f32],
        gate: &[f32],
    ) {
        let n = self.n;
        #[cfg(target_arch = "arm")]
        for (((yi, s), (&dti, &gate)), (decay, skip)) in xy
            .iter_mut()
            .zip(ssm.chunks_exact_mut(n))
            .zip(dt.iter().zip(gate))
            .zip(self.decay.rows(n).zip(self.skip.values()))
        {
            let (dt_log2, dx) = (dti * core::f32::consts::LOG2_E, dti * *yi);
            let mut acc = 0.0f32;
            for (((sn, a), &bn), &cn) in s.iter_mut().zip(decay).zip(b).zip(c) {
                *sn = decayed(*sn, a, dt_log2, dx, bn);
                acc += *sn * cn;
            }
            *yi = output(acc, skip, *yi, gate);
        }

        #[cfg(not(target_arch = "arm"))]
        {
            for (((s, &dti), &xi), decay) in ssm
                .chunks_exact_mut(n)
                .zip(dt)
                .zip(xy.iter())
                .zip(self.decay.rows(n))
            {
                let (dt_log2, dx) = (dti * core::f32::consts::LOG2_E, dti * xi);
                for ((sn, a), &bn) in s.iter_mut().zip(decay).zip(b) {
                    *sn = decayed(*sn, a, dt_log2, dx, bn);
                }
            }
            // Channels in order, so the skip weights are taken in order.
            let (mut done, mut skips) = (0, self.skip.values());
            for ((y4, s4), g4) in xy
                .chunks_exact_mut(4)
                .zip(ssm.chunks_exact(4 * n))
                .zip(gate.chunks_exact(4))
            {
                let mut rows = s4.chunks_exact(n);
                let (Some(r0), Some(r1), Some(r2), Some(r3)) =
                    (rows.next(), rows.next(), rows.next(), rows.next())
                else {
                    break;
                };
                let mut acc = [0.0f32; 4];
                for ((((&s0, &s1), &s2), &s3), &cn) in r0.iter().zip(r1).zip(r2).zip(r3).zip(c) {
                    acc[0] += s0 * cn;
                    acc[1] += s1 * cn;
                    acc[2] += s2 * cn;
                    acc[3] += s3 * cn;
                }
                for ((y, &g), acc) in y4.iter_mut().zip(g4).zip(acc) {
                    *y = output(acc, skips.next().unwrap_or(0.0), *y, g);
                    done += 1;
                }
            }
            // The channels after the last four.
            for (((yi, s), &g), skip) in xy
                .iter_mut()
                .zip(ssm.chunks_exact(n))
                .zip(gate)
                .skip(done)
                .zip(skips)
            {
                let mut acc = 0.0f32;
                for (&sn, &cn) in s.iter().zip(c) {
                    acc += sn * cn;
                }
                *yi = output(acc, skip, *yi, g);
            }
        }
    }
}

/// A channel's output from its read-out `acc`, skip weight, input `x` and gate.
#[inline(always)]
fn output(acc: f32, skip: f32, x: f32, gate: f32) -> f32 {
    (acc + skip * x) * gate
}

/// One state's update: `2^(dt_log2 · a) · s + dx · b`.
#[inline(always)]
fn decayed(s: f32, a: f32, dt_log2: f32, dx: f32, b: f32) -> f32 {
    exp2_nonpositive(dt_log2 * a) * s + dx * b
}
