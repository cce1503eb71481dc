//! Running a model over text: logits after a text, and bits per byte of a text.

use inkling_core::engine::recurrence::step;
use inkling_core::engine::weights::Weights;
use inkling_core::Scratch;

/// Buffers for stepping one model on the host.
pub struct HostEngine {
    state: Vec<f32>,
    work: Vec<f32>,
    act: Vec<i16>,
}

impl HostEngine {
    /// Buffers sized for `weights`, state at zero.
    pub fn new(weights: &dyn Weights) -> Self {
        let d = weights.dims();
        HostEngine {
            state: vec![0.0; d.state_len()],
            work: vec![0.0; d.work_len()],
            act: vec![0; d.act_len()],
        }
    }

    /// Feeds one byte and returns the next byte's logits.
    pub fn step(&mut self, weights: &dyn Weights, byte: u8) -> &[f32] {
        let dims = *weights.dims();
        let scratch = Scratch::new(&dims, &mut self.work, &mut self.act);
        match scratch {
            Ok(mut scratch) => {
                // Buffers are sized from the same dims: neither call can fail.
                let _ = step(weights, &mut self.state, &mut scratch, byte);
            }
            Err(_) => unreachable!("buffers sized from the model's dims"),
        }
        // The scratch keeps the logits at the front of its work space.
        &self.work[..256]
    }
}

/// log-softmax of logits, in f64.
pub fn log_softmax(logits: &[f32]) -> Vec<f64> {
    let max = logits
        .iter()
        .fold(f64::NEG_INFINITY, |m, &l| m.max(f64::from(l)));
    let sum: f64 = logits.iter().map(|&l| (f64::from(l) - max).exp()).sum();
    let lse = max + sum.ln();
    logits.iter().map(|&l| f64::from(l) - lse).collect()
}

/// Bits per byte of `text` under the model: the mean of −log2 p(byte | text before it),
/// over every byte after the first (the first byte only starts the state).
pub fn bits_per_byte(weights: &dyn Weights, text: &[u8], mut progress: impl FnMut(usize)) -> f64 {
    let mut engine = HostEngine::new(weights);
    let mut nats = 0.0;
    let mut counted = 0usize;
    let mut logits = vec![0.0f32; 256];
    for (i, &b) in text.iter().enumerate() {
        if i > 0 {
            nats -= log_softmax(&logits)[b as usize];
            counted += 1;
        }
        logits.copy_from_slice(engine.step(weights, b));
        if i % 1024 == 0 {
            progress(i);
        }
    }
    if counted == 0 {
        return f64::NAN;
    }
    nats / counted as f64 / std::f64::consts::LN_2
}
