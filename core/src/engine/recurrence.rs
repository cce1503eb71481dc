//! One step of the model: a byte in, the next byte's logits out.
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

use super::buffers::{check_len, Scratch};
use super::nonlinear::{rms_norm, silu, softplus};
use super::weights::Weights;
use crate::error::Error;
use crate::image::format::{Role, VOCAB};

/// Splits `n` elements off the front of `buf` (all of it when shorter).
fn carve<T>(buf: &mut [T], n: usize) -> (&mut [T], &mut [T]) {
    let n = n.min(buf.len());
    buf.split_at_mut(n)
}

/// Runs one byte through the model, updating `state`, and returns the 256 logits of the
/// next byte (they stay in `scratch` until the next step).
///
/// `state` must hold [`Dims::state_len`](crate::Dims::state_len) values (zeros for a fresh
/// start); `scratch` must have been made for the same dimensions.
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
    let d = *weights.dims();
    check_len("state", d.state_len(), state.len())?;
    let (i_n, n, k, r) = (d.d_inner, d.d_state, d.d_conv, d.dt_rank);
    let per_block = i_n * (k - 1 + n);

    let work = &mut *scratch.work;
    let (u, rest) = carve(work, d.d_model);
    let (h, rest) = carve(rest, d.d_model);
    let (xz, rest) = carve(rest, 2 * i_n);
    let (rbc, rest) = carve(rest, r + 2 * n);
    let (dt, rest) = carve(rest, i_n);
    let (y, rest) = carve(rest, i_n);
    let (logits, _) = carve(rest, VOCAB);
    let act = &mut *scratch.act;

    weights.embed(byte, u);
    for (l, block_state) in state.chunks_exact_mut(per_block).enumerate() {
        rms_norm(u, weights.floats(l, Role::Norm), d.norm_eps, h);
        weights.matvec(l, Role::Expand, h, act, xz);
        let (x, z) = carve(xz, i_n);
        let (window, ssm) = carve(block_state, i_n * (k - 1));

        // Causal depthwise convolution over the window (oldest first) and the new x.
        let conv = weights.floats(l, Role::Conv);
        let conv_bias = weights.floats(l, Role::ConvBias);
        for (i, xi) in x.iter_mut().enumerate() {
            let taps = conv.slice(i * k, k);
            let past = window
                .get_mut(i * (k - 1)..(i + 1) * (k - 1))
                .unwrap_or(&mut []);
            let mut acc = conv_bias.get(i);
            for (tap, &p) in taps.iter().zip(past.iter()) {
                acc += tap * p;
            }
            acc += taps.get(k - 1) * *xi;
            if let Some(last) = past.len().checked_sub(1) {
                past.copy_within(1.., 0);
                if let Some(newest) = past.get_mut(last) {
                    *newest = *xi;
                }
            }
            *xi = silu(acc);
        }

        // Input-dependent step size, input and output projections.
        weights.matvec(l, Role::Select, x, act, rbc);
        let (rank, bc) = carve(rbc, r);
        let (b, c) = carve(bc, n);
        let step = weights.floats(l, Role::Step);
        let step_bias = weights.floats(l, Role::StepBias);
        for (i, dti) in dt.iter_mut().enumerate() {
            let mut acc = 0.0f32;
            for (w, &ri) in step.slice(i * r, r).iter().zip(rank.iter()) {
                acc += w * ri;
            }
            *dti = softplus(acc + step_bias.get(i));
        }

        // Selective scan (zero-order hold for A, Euler for B), output and gate.
        let decay = weights.floats(l, Role::Decay);
        let skip = weights.floats(l, Role::Skip);
        for (i, ((yi, s), &xi)) in y
            .iter_mut()
            .zip(ssm.chunks_exact_mut(n))
            .zip(x.iter())
            .enumerate()
        {
            let dti = dt.get(i).copied().unwrap_or(0.0);
            let dx = dti * xi;
            let mut acc = 0.0f32;
            for (((sn, a), &bn), &cn) in s
                .iter_mut()
                .zip(decay.slice(i * n, n).iter())
                .zip(b.iter())
                .zip(c.iter())
            {
                *sn = libm::expf(dti * a) * *sn + dx * bn;
                acc += *sn * cn;
            }
            let zi = z.get(i).copied().unwrap_or(0.0);
            *yi = (acc + skip.get(i) * xi) * silu(zi);
        }

        weights.matvec(l, Role::Contract, y, act, h);
        for (ui, &hi) in u.iter_mut().zip(h.iter()) {
            *ui += hi;
        }
    }
    rms_norm(u, weights.floats(0, Role::FinalNorm), d.norm_eps, h);
    weights.matvec(0, Role::Head, h, act, logits);
    Ok(scratch.logits())
}
