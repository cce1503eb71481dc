//! The selective scan of Gu & Dao 2023 (Alg. 2), per channel i and state n:
//!   s_t = exp(dt_t[i]·A[i,n])·s_{t-1} + dt_t[i]·B_t[n]·x_t[i],  s_{-1} = 0
//!   y_t[i] = Σ_n s_t[i,n]·C_t[n]
//! and its reverse-time adjoint (backpropagation through time).
//! States are laid out [T, N, I] so that every inner loop runs over channels,
//! contiguous in memory, which the compiler turns into SIMD lanes.

use crate::real::Real;

/// Shapes and the inputs shared by the forward and backward pass. `sel` holds
/// [r; B; C] rows of width `r + 2n` (B at column r, C at r + n).
pub struct ScanInputs<'a, R> {
    pub t: usize,
    pub i: usize,
    pub n: usize,
    pub r: usize,
    pub x: &'a [R],
    pub dt: &'a [R],
    pub sel: &'a [R],
    /// A = -exp(decay), transposed to [N, I].
    pub a_t: &'a [R],
}

impl<R: Real> ScanInputs<'_, R> {
    fn b_c(&self, t: usize) -> (&[R], &[R]) {
        let row = t * (self.r + 2 * self.n) + self.r;
        (
            &self.sel[row..row + self.n],
            &self.sel[row + self.n..row + 2 * self.n],
        )
    }

    fn row<'b>(&self, v: &'b [R], t: usize) -> &'b [R] {
        &v[t * self.i..(t + 1) * self.i]
    }
}

/// Σ a·b with eight partial sums, so that the sum vectorises.
fn dot<R: Real>(a: &[R], b: &[R]) -> R {
    let mut lanes = [R::ZERO; 8];
    let (ac, bc) = (a.chunks_exact(8), b.chunks_exact(8));
    let tail: R = ac
        .remainder()
        .iter()
        .zip(bc.remainder())
        .fold(R::ZERO, |s, (&x, &y)| s + x * y);
    for (x, y) in ac.zip(bc) {
        for l in 0..8 {
            lanes[l] += x[l] * y[l];
        }
    }
    lanes.iter().fold(tail, |s, &v| s + v)
}

/// Writes every state into `states` ([T, N, I], kept for the backward pass),
/// y into `y` ([T, I]); `dx` ([I]) is scratch.
pub fn scan_forward<R: Real>(inp: &ScanInputs<'_, R>, states: &mut [R], y: &mut [R], dx: &mut [R]) {
    let (i_dim, n_dim) = (inp.i, inp.n);
    let step = i_dim * n_dim;
    let dx = &mut dx[..i_dim];
    for t in 0..inp.t {
        let (b, c) = inp.b_c(t);
        let (done, rest) = states.split_at_mut(t * step);
        let cur = &mut rest[..step];
        let dt = inp.row(inp.dt, t);
        for ((o, &d), &x) in dx.iter_mut().zip(dt).zip(inp.row(inp.x, t)) {
            *o = d * x;
        }
        let y_row = &mut y[t * i_dim..(t + 1) * i_dim];
        y_row.fill(R::ZERO);
        for nn in 0..n_dim {
            let s_cur = &mut cur[nn * i_dim..(nn + 1) * i_dim];
            let (bn, cn) = (b[nn], c[nn]);
            if t == 0 {
                for (s, &v) in s_cur.iter_mut().zip(dx.iter()) {
                    *s = v * bn;
                }
            } else {
                let s_prev = &done[(t - 1) * step + nn * i_dim..(t - 1) * step + (nn + 1) * i_dim];
                let a_row = &inp.a_t[nn * i_dim..(nn + 1) * i_dim];
                for ((((s, &sp), &a), &d), &v) in s_cur
                    .iter_mut()
                    .zip(s_prev)
                    .zip(a_row)
                    .zip(dt)
                    .zip(dx.iter())
                {
                    *s = (d * a).exp_nonpositive() * sp + v * bn;
                }
            }
            for (yo, &s) in y_row.iter_mut().zip(s_cur.iter()) {
                *yo += s * cn;
            }
        }
    }
}

/// Scratch of the backward pass.
pub struct ScanGradScratch<'a, R> {
    /// Adjoint state, [N, I].
    pub gs: &'a mut [R],
    /// dt·x of one step, [I].
    pub dx: &'a mut [R],
}

/// Gradients of the scan, given dL/dy (`gy`, [T, I]):
/// `gx` += dL/dx, `gdt` = dL/d dt, the B and C columns of `gsel` = dL/dB, dL/dC,
/// `ga` ([N, I]) += dL/dA.
#[allow(clippy::too_many_arguments)]
pub fn scan_backward<R: Real>(
    inp: &ScanInputs<'_, R>,
    states: &[R],
    gy: &[R],
    gx: &mut [R],
    gdt: &mut [R],
    gsel: &mut [R],
    ga: &mut [R],
    scratch: ScanGradScratch<'_, R>,
) {
    let (i_dim, n_dim) = (inp.i, inp.n);
    let step = i_dim * n_dim;
    let width = inp.r + 2 * n_dim;
    let ScanGradScratch { gs, dx } = scratch;
    let dx = &mut dx[..i_dim];
    gs[..step].fill(R::ZERO);
    for t in (0..inp.t).rev() {
        let (b, c) = inp.b_c(t);
        let (gb, gc) = gsel[t * width + inp.r..(t + 1) * width].split_at_mut(n_dim);
        let (dt, x, g) = (inp.row(inp.dt, t), inp.row(inp.x, t), inp.row(gy, t));
        let gx_row = &mut gx[t * i_dim..(t + 1) * i_dim];
        let gdt_row = &mut gdt[t * i_dim..(t + 1) * i_dim];
        gdt_row.fill(R::ZERO);
        for ((o, &d), &xv) in dx.iter_mut().zip(dt).zip(x) {
            *o = d * xv;
        }
        for nn in 0..n_dim {
            let (bn, cn) = (b[nn], c[nn]);
            let span = nn * i_dim..(nn + 1) * i_dim;
            let s_cur = &states[t * step + span.start..t * step + span.end];
            let gs_row = &mut gs[span.clone()];
            // total adjoint of s_t: carried from t+1 plus the path through y_t
            for (gsv, &gv) in gs_row.iter_mut().zip(g) {
                *gsv += gv * cn;
            }
            gc[nn] = dot(g, s_cur);
            gb[nn] = dot(gs_row, dx);
            // from dt·B·x: d/dx = dt·B, d/d dt = B·x
            for ((((gxv, gdv), &gsv), &d), &xv) in gx_row
                .iter_mut()
                .zip(gdt_row.iter_mut())
                .zip(gs_row.iter())
                .zip(dt)
                .zip(x)
            {
                *gxv += gsv * d * bn;
                *gdv += gsv * bn * xv;
            }
            if t > 0 {
                let s_prev = &states[(t - 1) * step + span.start..(t - 1) * step + span.end];
                let a_row = &inp.a_t[span.clone()];
                let ga_row = &mut ga[span.clone()];
                // from exp(dt·A)·s_{t-1}: d/d dt = exp(dt·A)·A·s, d/dA = exp(dt·A)·dt·s
                for (((((gsv, gdv), gav), &sp), &a), &d) in gs_row
                    .iter_mut()
                    .zip(gdt_row.iter_mut())
                    .zip(ga_row.iter_mut())
                    .zip(s_prev)
                    .zip(a_row)
                    .zip(dt)
                {
                    let e = (d * a).exp_nonpositive();
                    let gse = *gsv * e;
                    *gdv += gse * sp * a;
                    *gav += gse * sp * d;
                    *gsv = gse;
                }
            }
        }
    }
}
