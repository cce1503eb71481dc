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
//! then `logits = head · (rmsnorm(u) * final_norm)`.
//!
//! The state of one block is its convolution window `[I, K-1]` (oldest first) followed by
//! its SSM state `[I, N]`; blocks follow each other. It starts at zero.
//!
//! [`prefill`] runs several known bytes block by block, so that each weight row is read once
//! for the whole chunk and the output head only for the last byte; [`step`] is a prefill of
//! one byte. Every value is computed by the same operations in the same order either way,
//! so a prefill gives bit for bit the state and logits of stepping byte by byte.

use super::buffers::{check_len, Scratch};
use super::nonlinear::{exp, rms_norm, silu, softplus};
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
    let d = *weights.dims();
    check_len("state", d.state_len(), state.len())?;
    let chunk = scratch.chunk_capacity();
    let passes = bytes.len().div_ceil(chunk);
    for (pass, part) in bytes.chunks(chunk).enumerate() {
        run_pass(weights, &d, state, scratch, part, pass + 1 == passes);
    }
    Ok(scratch.logits())
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
fn run_pass<W: Weights + ?Sized>(
    weights: &W,
    d: &Dims,
    state: &mut [f32],
    scratch: &mut Scratch<'_>,
    bytes: &[u8],
    logits_wanted: bool,
) {
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
    for (l, block_state) in state.chunks_exact_mut(per_block).enumerate() {
        run_block(weights, d, l, block_state, &mut a, t, act);
    }
    if logits_wanted {
        let last = a.u.chunks_exact(dm).last().unwrap_or(&[]);
        let h0 = a.h.get_mut(..dm).unwrap_or(&mut []);
        rms_norm(last, weights.floats(0, Role::FinalNorm), d.norm_eps, h0);
        weights.matvec(0, Role::Head, h0, act, logits);
    }
}

/// Block `l` over the `t` bytes of a pass.
fn run_block<W: Weights + ?Sized>(
    weights: &W,
    d: &Dims,
    l: usize,
    block_state: &mut [f32],
    a: &mut PassAreas<'_>,
    t: usize,
    act: &mut [i16],
) {
    let (i_n, n, k, r, dm) = (d.d_inner, d.d_state, d.d_conv, d.dt_rank, d.d_model);
    let (window, ssm) = carve(block_state, i_n * (k - 1));
    let norm = weights.floats(l, Role::Norm);
    for (u_t, h_t) in a.u.chunks_exact(dm).zip(a.h.chunks_exact_mut(dm)) {
        rms_norm(u_t, norm, d.norm_eps, h_t);
    }
    weights.matvec_chunk(l, Role::Expand, a.h, t, act, a.xz);

    // Causal depthwise convolution, byte after byte; x goes to its own contiguous area.
    let conv = weights.floats(l, Role::Conv);
    let conv_bias = weights.floats(l, Role::ConvBias);
    for (xz_t, x_t) in a.xz.chunks_exact(2 * i_n).zip(a.xy.chunks_exact_mut(i_n)) {
        x_t.copy_from_slice(xz_t.get(..i_n).unwrap_or(&[]));
        match conv.as_f32s() {
            Some(taps) => convolve(x_t, window, taps, conv_bias, k),
            None => convolve(x_t, window, conv, conv_bias, k),
        }
    }

    // Input-dependent step size, input and output projections.
    weights.matvec_chunk(l, Role::Select, a.xy, t, act, a.rbc);
    let step = weights.floats(l, Role::Step);
    let step_bias = weights.floats(l, Role::StepBias);
    for (rbc_t, dt_t) in a
        .rbc
        .chunks_exact(r + 2 * n)
        .zip(a.dt.chunks_exact_mut(i_n))
    {
        let rank = rbc_t.get(..r).unwrap_or(&[]);
        for (i, dti) in dt_t.iter_mut().enumerate() {
            let mut acc = 0.0f32;
            for (w, &ri) in step.slice(i * r, r).iter().zip(rank) {
                acc += w * ri;
            }
            *dti = softplus(acc + step_bias.get(i));
        }
    }

    // Selective scan, byte after byte; y replaces x in place.
    let decay = weights.floats(l, Role::Decay);
    let skip = weights.floats(l, Role::Skip);
    match decay.as_f32s() {
        Some(rates) => scan_pass(
            &ScanWeights {
                decay: rates,
                skip,
                n,
            },
            a,
            d,
            ssm,
        ),
        None => scan_pass(&ScanWeights { decay, skip, n }, a, d, ssm),
    }

    weights.matvec_chunk(l, Role::Contract, a.xy, t, act, a.h);
    for (ui, &hi) in a.u.iter_mut().zip(a.h.iter()) {
        *ui += hi;
    }
}

/// The selective scan over the `t` bytes of a pass.
fn scan_pass<D: FloatRun>(
    scan: &ScanWeights<'_, D>,
    a: &mut PassAreas<'_>,
    d: &Dims,
    ssm: &mut [f32],
) {
    let (i_n, n, r) = (d.d_inner, d.d_state, d.dt_rank);
    for (((xy_t, dt_t), rbc_t), xz_t) in
        a.xy.chunks_exact_mut(i_n)
            .zip(a.dt.chunks_exact(i_n))
            .zip(a.rbc.chunks_exact(r + 2 * n))
            .zip(a.xz.chunks_exact(2 * i_n))
    {
        let bc = rbc_t.get(r..).unwrap_or(&[]);
        let (b, c) = bc.split_at(n.min(bc.len()));
        let z = xz_t.get(i_n..).unwrap_or(&[]);
        scan.step(ssm, xy_t, dt_t, b, c, z);
    }
}

/// One byte of the causal depthwise convolution: `x[i] = silu(bias[i] + Σ_k conv[i,k] ·
/// (window[i] then x[i]))`, and the window moves on by one.
fn convolve<C: FloatRun>(x: &mut [f32], window: &mut [f32], conv: C, bias: Floats<'_>, k: usize) {
    for (i, xi) in x.iter_mut().enumerate() {
        let past = window
            .get_mut(i * (k - 1)..(i + 1) * (k - 1))
            .unwrap_or(&mut []);
        let mut acc = bias.get(i);
        for (tap, &p) in conv.run(i * k, k - 1).zip(past.iter()) {
            acc += tap * p;
        }
        acc += conv.at(i * k + k - 1) * *xi;
        if let Some(last) = past.len().checked_sub(1) {
            past.copy_within(1.., 0);
            if let Some(newest) = past.get_mut(last) {
                *newest = *xi;
            }
        }
        *xi = silu(acc);
    }
}

/// The float weights of the selective scan of one block (`decay` holds `A`).
struct ScanWeights<'a, D: FloatRun> {
    decay: D,
    skip: Floats<'a>,
    n: usize,
}

impl<D: FloatRun> ScanWeights<'_, D> {
    /// One byte of the scan (zero-order hold for A, Euler for B), output and gate:
    /// `xy` holds x on entry and y on return.
    fn step(&self, ssm: &mut [f32], xy: &mut [f32], dt: &[f32], b: &[f32], c: &[f32], z: &[f32]) {
        let n = self.n;
        for (i, ((yi, s), (&dti, &zi))) in xy
            .iter_mut()
            .zip(ssm.chunks_exact_mut(n))
            .zip(dt.iter().zip(z))
            .enumerate()
        {
            let xi = *yi;
            let dx = dti * xi;
            // The update has no dependence between states (it vectorises); the read-out
            // sums in state order, so every target adds in the same order.
            for ((sn, a), &bn) in s.iter_mut().zip(self.decay.run(i * n, n)).zip(b) {
                *sn = exp(dti * a) * *sn + dx * bn;
            }
            let mut acc = 0.0f32;
            for (&sn, &cn) in s.iter().zip(c) {
                acc += sn * cn;
            }
            *yi = (acc + self.skip.get(i) * xi) * silu(zi);
        }
    }
}
