//! What a model shape costs on a core (Cortex-M4F, Cortex-M0+ or RV32IMC): flash (the exact
//! image size), RAM (the session's buffers and a stack allowance) and instructions per engine
//! step and per keystroke, from a linear model fitted to that core's instruction counts
//! measured in QEMU (`tests/firmware/calibrate.sh --core CORE` writes them to
//! `tests/firmware/calibration*.txt`, built in here).

pub mod calibration;
pub mod image_size;

pub use calibration::{Calibration, Core, Sample};
pub use image_size::image_bytes;

use inkling_core::Dims;

/// The quantities a step's instruction count is modelled on: multiply-accumulates, scan
/// exponentials (`I·N` a block), channels (`I` a block: convolution, gate, softplus) and
/// matrix rows (per-row rescale, plus the quantised inputs).
pub fn step_features(d: &Dims) -> [f64; 4] {
    let rows = d.blocks * (2 * d.d_inner + d.dt_rank + 2 * d.d_state + d.d_model) + 256;
    [
        d.macs_per_step() as f64,
        (d.blocks * d.d_inner * d.d_state) as f64,
        (d.blocks * d.d_inner) as f64,
        rows as f64,
    ]
}

/// Fitted instruction counts: `step = Σ coef · feature`, and per keystroke on average
/// `(search steps + 1) · (step + overhead)` with `overhead = o0 + o1 · state floats`; the
/// largest keystroke is the mean times the largest-to-mean ratio measured.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CostModel {
    /// Instructions per MAC, per scan exponential, per channel, per matrix row.
    pub step: [f64; 4],
    /// Instructions a search step adds to a step: constant and per state float (copies).
    pub search_overhead: [f64; 2],
    /// Mean engine steps the search takes per keystroke with `beams` suggestions (on the
    /// trained models measured, if any).
    pub search_steps: f64,
    /// The largest keystroke over the mean one, the largest ratio measured (on the trained
    /// models, if any).
    pub max_to_mean: f64,
    /// Suggestions the calibration ran with.
    pub beams: usize,
    /// Largest stack high-water mark measured, bytes.
    pub stack_bytes: usize,
    /// Flash of the firmware besides the image (code and constants), bytes; largest measured.
    pub code_bytes: usize,
}

impl CostModel {
    /// Least-squares fit to the samples.
    pub fn fit(cal: &Calibration) -> Option<CostModel> {
        let s = &cal.samples;
        let rows: Vec<Vec<f64>> = s.iter().map(|x| step_features(&x.dims).to_vec()).collect();
        let step_y: Vec<f64> = s.iter().map(|x| x.step_instructions as f64).collect();
        let step = least_squares(&rows, &step_y)?;
        // Per search step, what a keystroke takes beyond the steps themselves.
        let over_rows: Vec<Vec<f64>> = s
            .iter()
            .map(|x| vec![1.0, x.dims.state_len() as f64])
            .collect();
        let over_y: Vec<f64> = s
            .iter()
            .map(|x| {
                x.keystroke_instructions_mean as f64 / (x.search_steps_mean as f64 + 1.0)
                    - x.step_instructions as f64
            })
            .collect();
        let over = least_squares(&over_rows, &over_y)?;
        // The search's length and spread from the trained models when there are any: random
        // weights spread the next byte's probability, and the search goes on far longer.
        let trained: Vec<&Sample> = s.iter().filter(|x| x.trained).collect();
        let typing: Vec<&Sample> = if trained.is_empty() {
            s.iter().collect()
        } else {
            trained
        };
        let n = typing.len().max(1) as f64;
        Some(CostModel {
            step: [step[0], step[1], step[2], step[3]],
            search_overhead: [over[0], over[1]],
            search_steps: typing
                .iter()
                .map(|x| x.search_steps_mean as f64)
                .sum::<f64>()
                / n,
            max_to_mean: typing
                .iter()
                .map(|x| {
                    x.keystroke_instructions_max as f64
                        / x.keystroke_instructions_mean.max(1) as f64
                })
                .fold(1.0, f64::max),
            beams: cal.beams,
            stack_bytes: s.iter().map(|x| x.stack_used_bytes).max().unwrap_or(0),
            code_bytes: s
                .iter()
                .map(|x| x.flash_text_bytes.saturating_sub(x.image_bytes))
                .max()
                .unwrap_or(0),
        })
    }

    /// Predicted instructions of one engine step.
    pub fn step_instructions(&self, d: &Dims) -> f64 {
        step_features(d)
            .iter()
            .zip(&self.step)
            .map(|(f, c)| f * c)
            .sum()
    }

    /// Predicted engine steps per keystroke with `beams` suggestions: the push, and the
    /// search's steps taken as proportional to the beams (a rule of thumb, no source: beam
    /// search expands each beam about once per round), at most `max_steps`.
    pub fn steps_per_keystroke(&self, beams: usize, max_steps: usize) -> f64 {
        let search = self.search_steps * beams as f64 / self.beams.max(1) as f64;
        1.0 + search.min(max_steps as f64)
    }

    /// Predicted instructions of one keystroke (push and the whole search) with `beams`
    /// suggestions, on average.
    pub fn keystroke_instructions(&self, d: &Dims, beams: usize, max_steps: usize) -> f64 {
        let over = self.search_overhead[0] + self.search_overhead[1] * d.state_len() as f64;
        self.steps_per_keystroke(beams, max_steps) * (self.step_instructions(d) + over)
    }

    /// Predicted instructions of the largest keystroke of a typing script like the
    /// calibration's: the mean times [`max_to_mean`](CostModel::max_to_mean).
    pub fn keystroke_max_instructions(&self, d: &Dims, beams: usize, max_steps: usize) -> f64 {
        self.max_to_mean * self.keystroke_instructions(d, beams, max_steps)
    }
}

/// `x` minimising `|A x - y|` by the normal equations `AᵀA x = Aᵀy` (Gauss-Jordan with
/// partial pivoting); `None` when they are singular.
fn least_squares(a: &[Vec<f64>], y: &[f64]) -> Option<Vec<f64>> {
    let n = a.first()?.len();
    let mut m = vec![vec![0.0; n + 1]; n];
    for (row, &yi) in a.iter().zip(y) {
        for i in 0..n {
            for j in 0..n {
                m[i][j] += row[i] * row[j];
            }
            m[i][n] += row[i] * yi;
        }
    }
    for col in 0..n {
        let pivot = (col..n).max_by(|&p, &q| m[p][col].abs().total_cmp(&m[q][col].abs()))?;
        if m[pivot][col].abs() < 1e-12 * m[pivot].iter().map(|v| v.abs()).fold(0.0, f64::max) {
            return None;
        }
        m.swap(col, pivot);
        let p = m[col][col];
        for v in m[col].iter_mut() {
            *v /= p;
        }
        for r in 0..n {
            if r != col {
                let f = m[r][col];
                let pivot_row = m[col].clone();
                for (v, pv) in m[r].iter_mut().zip(pivot_row) {
                    *v -= f * pv;
                }
            }
        }
    }
    Some(m.iter().map(|r| r[n]).collect())
}
