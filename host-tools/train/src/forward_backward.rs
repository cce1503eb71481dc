//! The model of the design (pre-norm residual Mamba blocks on bytes) over one
//! byte sequence: forward pass with next-byte cross-entropy, and the hand-written
//! reverse-mode gradient of every parameter.

use inkling_core::image::format::VOCAB;
use inkling_core::Dims;

use crate::matrix_product::{gemm, linear_backward, Mat};
use crate::model_params::Layout;
use crate::real::Real;
use crate::selective_scan::{scan_backward, scan_forward, ScanGradScratch, ScanInputs};

/// What one block's forward pass keeps for its backward pass.
struct BlockActs<R> {
    inv: Vec<R>,
    hn: Vec<R>,
    h: Vec<R>,
    xz: Vec<R>,
    xc: Vec<R>,
    x: Vec<R>,
    sel: Vec<R>,
    dtpre: Vec<R>,
    dt: Vec<R>,
    /// A = -exp(decay), transposed to [N, I].
    a_t: Vec<R>,
    /// conv transposed to [K, I].
    conv_t: Vec<R>,
    states: Vec<R>,
    ypre: Vec<R>,
    y: Vec<R>,
}

/// Activations and gradient scratch for sequences of up to `t_max` predicted bytes.
pub struct Workspace<R> {
    dims: Dims,
    t_max: usize,
    /// Residual stream entering each block, then after the last one ([L+1][T, D]).
    resid: Vec<Vec<R>>,
    blocks: Vec<BlockActs<R>>,
    inv_f: Vec<R>,
    hn_f: Vec<R>,
    hf: Vec<R>,
    probs: Vec<R>,
    gu: Vec<R>,
    gh: Vec<R>,
    gxz: Vec<R>,
    gy: Vec<R>,
    gx: Vec<R>,
    gdt: Vec<R>,
    gsel: Vec<R>,
    ga: Vec<R>,
    gs: Vec<R>,
    gconv_t: Vec<R>,
    dx: Vec<R>,
}

impl<R: Real> Workspace<R> {
    pub fn new(dims: Dims, t_max: usize) -> Self {
        let Dims {
            d_model: d,
            d_inner: i,
            d_state: n,
            dt_rank: r,
            ..
        } = dims;
        let t = t_max;
        let z = |len: usize| vec![R::ZERO; len];
        Workspace {
            dims,
            t_max,
            resid: (0..=dims.blocks).map(|_| z(t * d)).collect(),
            blocks: (0..dims.blocks)
                .map(|_| BlockActs {
                    inv: z(t),
                    hn: z(t * d),
                    h: z(t * d),
                    xz: z(t * 2 * i),
                    xc: z(t * i),
                    x: z(t * i),
                    sel: z(t * (r + 2 * n)),
                    dtpre: z(t * i),
                    dt: z(t * i),
                    a_t: z(i * n),
                    conv_t: z(i * dims.d_conv),
                    states: z(t * i * n),
                    ypre: z(t * i),
                    y: z(t * i),
                })
                .collect(),
            inv_f: z(t),
            hn_f: z(t * d),
            hf: z(t * d),
            probs: z(t * VOCAB),
            gu: z(t * d),
            gh: z(t * d),
            gxz: z(t * 2 * i),
            gy: z(t * i),
            gx: z(t * i),
            gdt: z(t * i),
            gsel: z(t * (r + 2 * n)),
            ga: z(i * n),
            gs: z(i * n),
            gconv_t: z(i * dims.d_conv),
            dx: z(i),
        }
    }
}

/// 1/(1 + e^-v) from e^-|v| ≤ 1, so nothing overflows; a select, not a branch.
#[inline(always)]
fn sigmoid<R: Real>(v: R) -> R {
    let e = (-v.abs()).exp_nonpositive();
    let r = R::ONE / (R::ONE + e);
    if v >= R::ZERO {
        r
    } else {
        e * r
    }
}

/// softplus(v) = ln(1 + e^v) = max(v, 0) + ln(1 + e^-|v|), finite for any v.
#[inline(always)]
fn softplus<R: Real>(v: R) -> R {
    v.max(R::ZERO) + (-v.abs()).exp_nonpositive().ln_1p_unit()
}

/// h = rmsnorm(u)·w per row of width d; keeps 1/rms and the normalised rows.
fn rmsnorm_forward<R: Real>(u: &[R], w: &[R], eps: R, inv: &mut [R], hn: &mut [R], h: &mut [R]) {
    let d = w.len();
    let inv_d = R::from_f64(1.0 / d as f64);
    for (row, inv_t) in inv.iter_mut().enumerate() {
        let span = row * d..(row + 1) * d;
        let mut ms = R::ZERO;
        for &v in &u[span.clone()] {
            ms += v * v;
        }
        let s = R::ONE / (ms * inv_d + eps).sqrt();
        *inv_t = s;
        for (((o, ho), &v), &wv) in hn[span.clone()]
            .iter_mut()
            .zip(&mut h[span.clone()])
            .zip(&u[span.clone()])
            .zip(w)
        {
            *o = v * s;
            *ho = v * s * wv;
        }
    }
}

/// Given dL/dh, adds dL/dw into `gw` and dL/du into `gu`:
/// with n = u·s, s = (mean(u²)+eps)^-½: du = s·(dn - n·mean(dn·n)), dn = dh·w.
fn rmsnorm_backward<R: Real>(gh: &[R], hn: &[R], inv: &[R], w: &[R], gw: &mut [R], gu: &mut [R]) {
    let d = w.len();
    let inv_d = R::from_f64(1.0 / d as f64);
    for (row, &s) in inv.iter().enumerate() {
        let span = row * d..(row + 1) * d;
        let (g, n) = (&gh[span.clone()], &hn[span.clone()]);
        let mut dot = R::ZERO;
        for c in 0..d {
            gw[c] += g[c] * n[c];
            dot += g[c] * w[c] * n[c];
        }
        let mean = dot * inv_d;
        for (c, o) in gu[span].iter_mut().enumerate() {
            *o += s * (g[c] * w[c] - n[c] * mean);
        }
    }
}

/// Forward pass over `bytes` (T+1 bytes: inputs 0..T predict 1..=T), starting from
/// zero state. Returns the summed cross-entropy in nats; keeps what `backward` needs.
pub fn forward<R: Real>(p: &[R], lay: &Layout, ws: &mut Workspace<R>, bytes: &[u8]) -> f64 {
    let t = bytes.len() - 1;
    assert!(
        t >= 1 && t <= ws.t_max,
        "sequence length outside the workspace"
    );
    assert_eq!(ws.dims, lay.dims, "workspace built for other dimensions");
    let Dims {
        d_model: d,
        d_inner: i,
        d_state: n,
        d_conv: k,
        dt_rank: r,
        ..
    } = lay.dims;
    let eps = R::from_f64(f64::from(lay.dims.norm_eps));
    let sr = r + 2 * n;
    let embed = &p[lay.byte_embed.clone()];
    for (tt, &b) in bytes[..t].iter().enumerate() {
        let row = b as usize * d;
        ws.resid[0][tt * d..(tt + 1) * d].copy_from_slice(&embed[row..row + d]);
    }
    for (l, bs) in lay.blocks.iter().enumerate() {
        let a = &mut ws.blocks[l];
        let (before, after) = ws.resid.split_at_mut(l + 1);
        let u_in = &before[l][..t * d];
        rmsnorm_forward(
            u_in,
            &p[bs.norm.clone()],
            eps,
            &mut a.inv[..t],
            &mut a.hn,
            &mut a.h,
        );
        let expand = &p[bs.expand.clone()];
        gemm(
            R::ONE,
            Mat::dense(&a.h, t, d),
            Mat::dense(expand, 2 * i, d).t(),
            R::ZERO,
            &mut a.xz,
            2 * i,
        );
        // causal depthwise conv, window oldest→newest, zeros before the start
        let (conv, conv_bias) = (&p[bs.conv.clone()], &p[bs.conv_bias.clone()]);
        for ch in 0..i {
            for kk in 0..k {
                a.conv_t[kk * i + ch] = conv[ch * k + kk];
            }
        }
        for tt in 0..t {
            let out = &mut a.xc[tt * i..(tt + 1) * i];
            out.copy_from_slice(conv_bias);
            for kk in 0..k {
                let Some(src) = (tt + kk + 1).checked_sub(k) else {
                    continue;
                };
                let xin = &a.xz[src * 2 * i..src * 2 * i + i];
                for ((o, &w), &v) in out.iter_mut().zip(&a.conv_t[kk * i..(kk + 1) * i]).zip(xin) {
                    *o += w * v;
                }
            }
            for (xo, &v) in a.x[tt * i..(tt + 1) * i].iter_mut().zip(out.iter()) {
                *xo = v * sigmoid(v);
            }
        }
        let select = &p[bs.select.clone()];
        gemm(
            R::ONE,
            Mat::dense(&a.x, t, i),
            Mat::dense(select, sr, i).t(),
            R::ZERO,
            &mut a.sel,
            sr,
        );
        let step = &p[bs.step.clone()];
        gemm(
            R::ONE,
            Mat::rows(&a.sel, t, r, sr),
            Mat::dense(step, i, r).t(),
            R::ZERO,
            &mut a.dtpre,
            i,
        );
        let step_bias = &p[bs.step_bias.clone()];
        for (pre_row, dt_row) in a.dtpre[..t * i]
            .chunks_exact_mut(i)
            .zip(a.dt.chunks_exact_mut(i))
        {
            for ((pre, dtv), &bias) in pre_row.iter_mut().zip(dt_row).zip(step_bias) {
                *pre += bias;
                *dtv = softplus(*pre);
            }
        }
        let decay = &p[bs.decay.clone()];
        for ch in 0..i {
            for nn in 0..n {
                a.a_t[nn * i + ch] = -decay[ch * n + nn].exp();
            }
        }
        let inputs = ScanInputs {
            t,
            i,
            n,
            r,
            x: &a.x,
            dt: &a.dt,
            sel: &a.sel,
            a_t: &a.a_t,
        };
        scan_forward(&inputs, &mut a.states, &mut a.ypre, &mut ws.dx);
        let skip = &p[bs.skip.clone()];
        for tt in 0..t {
            let row = tt * i..(tt + 1) * i;
            let z_row = &a.xz[tt * 2 * i + i..(tt + 1) * 2 * i];
            for ((((yp, yo), &xv), &zv), &sk) in a.ypre[row.clone()]
                .iter_mut()
                .zip(&mut a.y[row.clone()])
                .zip(&a.x[row])
                .zip(z_row)
                .zip(skip)
            {
                *yp += sk * xv;
                *yo = *yp * zv * sigmoid(zv);
            }
        }
        let u_out = &mut after[0][..t * d];
        u_out.copy_from_slice(u_in);
        let contract = &p[bs.contract.clone()];
        gemm(
            R::ONE,
            Mat::dense(&a.y, t, i),
            Mat::dense(contract, d, i).t(),
            R::ONE,
            u_out,
            d,
        );
    }
    let u = &ws.resid[lay.dims.blocks][..t * d];
    rmsnorm_forward(
        u,
        &p[lay.final_norm.clone()],
        eps,
        &mut ws.inv_f[..t],
        &mut ws.hn_f,
        &mut ws.hf,
    );
    let head = &p[lay.output_head()];
    gemm(
        R::ONE,
        Mat::dense(&ws.hf, t, d),
        Mat::dense(head, VOCAB, d).t(),
        R::ZERO,
        &mut ws.probs,
        VOCAB,
    );
    let mut nats = 0.0;
    for (tt, &target) in bytes[1..].iter().enumerate() {
        let row = &mut ws.probs[tt * VOCAB..(tt + 1) * VOCAB];
        let max = row.iter().fold(row[0], |m, &v| m.max(v));
        let mut sum = R::ZERO;
        for v in row.iter_mut() {
            *v = (*v - max).exp_nonpositive();
            sum += *v;
        }
        // -ln p(target) = ln Σ e^(l - max) - (l_target - max)
        nats += sum.to_f64().ln() - row[target as usize].to_f64().ln();
        let inv = R::ONE / sum;
        for v in row.iter_mut() {
            *v *= inv;
        }
    }
    nats
}

/// Adds `scale`·d(summed nats)/d(parameter) into `g` for the sequence of the last
/// `forward` call with the same `bytes`.
pub fn backward<R: Real>(
    p: &[R],
    lay: &Layout,
    ws: &mut Workspace<R>,
    bytes: &[u8],
    scale: R,
    g: &mut [R],
) {
    let t = bytes.len() - 1;
    let Dims {
        d_model: d,
        d_inner: i,
        d_state: n,
        d_conv: k,
        dt_rank: r,
        ..
    } = lay.dims;
    let sr = r + 2 * n;
    let Workspace {
        blocks,
        inv_f,
        hn_f,
        hf,
        probs,
        gu,
        gh,
        gxz,
        gy,
        gx,
        gdt,
        gsel,
        ga,
        gs,
        gconv_t,
        dx,
        ..
    } = ws;
    // d(-ln softmax_target)/d logits = softmax - onehot
    for (tt, &target) in bytes[1..].iter().enumerate() {
        let row = &mut probs[tt * VOCAB..(tt + 1) * VOCAB];
        row[target as usize] -= R::ONE;
        for v in row.iter_mut() {
            *v *= scale;
        }
    }
    let head_range = lay.output_head();
    let glogits = Mat::dense(&probs[..t * VOCAB], t, VOCAB);
    linear_backward(
        glogits,
        Mat::dense(&hf[..t * d], t, d),
        &p[head_range.clone()],
        &mut g[head_range],
        gh,
        d,
        false,
    );
    gu[..t * d].fill(R::ZERO);
    rmsnorm_backward(
        &gh[..t * d],
        hn_f,
        &inv_f[..t],
        &p[lay.final_norm.clone()],
        &mut g[lay.final_norm.clone()],
        gu,
    );
    for (l, bs) in lay.blocks.iter().enumerate().rev() {
        let a = &blocks[l];
        linear_backward(
            Mat::dense(&gu[..t * d], t, d),
            Mat::dense(&a.y, t, i),
            &p[bs.contract.clone()],
            &mut g[bs.contract.clone()],
            gy,
            i,
            false,
        );
        // y = ypre·silu(z), ypre = yss + skip·x
        let skip = &p[bs.skip.clone()];
        let gskip = &mut g[bs.skip.clone()];
        for tt in 0..t {
            let row = tt * i..(tt + 1) * i;
            let z_span = tt * 2 * i + i..(tt + 1) * 2 * i;
            let (z_row, gz_row) = (&a.xz[z_span.clone()], &mut gxz[z_span]);
            let lanes = gy[row.clone()]
                .iter_mut()
                .zip(&mut gx[row.clone()])
                .zip(gz_row)
                .zip(z_row)
                .zip(&a.ypre[row.clone()])
                .zip(&a.x[row]);
            for ((((((gyv, gxv), gzv), &zv), &yp), &xv), (gsk, &sk)) in
                lanes.zip(gskip.iter_mut().zip(skip))
            {
                let sz = sigmoid(zv);
                // silu'(z) = σ(z)·(1 + z·(1 - σ(z)))
                *gzv = *gyv * yp * sz * (R::ONE + zv * (R::ONE - sz));
                let gyp = *gyv * zv * sz;
                *gsk += gyp * xv;
                *gxv = gyp * sk;
                *gyv = gyp;
            }
        }
        ga.fill(R::ZERO);
        let inputs = ScanInputs {
            t,
            i,
            n,
            r,
            x: &a.x,
            dt: &a.dt,
            sel: &a.sel,
            a_t: &a.a_t,
        };
        scan_backward(
            &inputs,
            &a.states,
            gy,
            gx,
            gdt,
            gsel,
            ga,
            ScanGradScratch { gs, dx },
        );
        // A = -exp(decay): dA/d decay = A
        let gdecay = &mut g[bs.decay.clone()];
        for ch in 0..i {
            for nn in 0..n {
                gdecay[ch * n + nn] += ga[nn * i + ch] * a.a_t[nn * i + ch];
            }
        }
        // dt = softplus(dtpre): d dt / d dtpre = σ(dtpre)
        let gsb = &mut g[bs.step_bias.clone()];
        for (g_row, pre_row) in gdt[..t * i]
            .chunks_exact_mut(i)
            .zip(a.dtpre.chunks_exact(i))
        {
            for ((gv, &pre), sb) in g_row.iter_mut().zip(pre_row).zip(gsb.iter_mut()) {
                *gv *= sigmoid(pre);
                *sb += *gv;
            }
        }
        linear_backward(
            Mat::dense(&gdt[..t * i], t, i),
            Mat::rows(&a.sel, t, r, sr),
            &p[bs.step.clone()],
            &mut g[bs.step.clone()],
            gsel,
            sr,
            false,
        );
        // x also feeds the scan and the skip path, whose gradients gx holds: add to them.
        linear_backward(
            Mat::dense(&gsel[..t * sr], t, sr),
            Mat::dense(&a.x, t, i),
            &p[bs.select.clone()],
            &mut g[bs.select.clone()],
            gx,
            i,
            true,
        );
        // x = silu(xc): gx becomes dL/dxc
        for (gv, &v) in gx[..t * i].iter_mut().zip(&a.xc) {
            let sv = sigmoid(v);
            *gv *= sv * (R::ONE + v * (R::ONE - sv));
        }
        let gcb = &mut g[bs.conv_bias.clone()];
        for tt in 0..t {
            for ch in 0..i {
                gcb[ch] += gx[tt * i + ch];
            }
        }
        for tt in 0..t {
            gxz[tt * 2 * i..tt * 2 * i + i].fill(R::ZERO);
        }
        gconv_t.fill(R::ZERO);
        for tt in 0..t {
            let gxc = &gx[tt * i..(tt + 1) * i];
            for kk in 0..k {
                let Some(src) = (tt + kk + 1).checked_sub(k) else {
                    continue;
                };
                let row = src * 2 * i..src * 2 * i + i;
                let (xin, gw, w) = (
                    &a.xz[row.clone()],
                    &mut gconv_t[kk * i..(kk + 1) * i],
                    &a.conv_t[kk * i..(kk + 1) * i],
                );
                for ((((gwv, &gv), &xv), gin), &wv) in
                    gw.iter_mut().zip(gxc).zip(xin).zip(&mut gxz[row]).zip(w)
                {
                    *gwv += gv * xv;
                    *gin += gv * wv;
                }
            }
        }
        let gconv = &mut g[bs.conv.clone()];
        for ch in 0..i {
            for kk in 0..k {
                gconv[ch * k + kk] += gconv_t[kk * i + ch];
            }
        }
        linear_backward(
            Mat::dense(&gxz[..t * 2 * i], t, 2 * i),
            Mat::dense(&a.h, t, d),
            &p[bs.expand.clone()],
            &mut g[bs.expand.clone()],
            gh,
            d,
            false,
        );
        rmsnorm_backward(
            &gh[..t * d],
            &a.hn,
            &a.inv[..t],
            &p[bs.norm.clone()],
            &mut g[bs.norm.clone()],
            gu,
        );
    }
    let gembed = &mut g[lay.byte_embed.clone()];
    for (tt, &b) in bytes[..t].iter().enumerate() {
        let row = b as usize * d;
        for (o, &v) in gembed[row..row + d]
            .iter_mut()
            .zip(&gu[tt * d..(tt + 1) * d])
        {
            *o += v;
        }
    }
}
