//! AdamW (Loshchilov & Hutter 2019, Alg. 2): Adam moments with bias correction
//! and weight decay decoupled from the gradient; plus the learning-rate schedule
//! and global-norm gradient clipping.

use crate::model_params::Layout;

#[derive(Clone, Copy, Debug)]
pub struct AdamWSettings {
    pub beta1: f32,
    pub beta2: f32,
    pub eps: f32,
    pub weight_decay: f32,
}

/// β1 = 0.9, β2 = 0.95, weight decay 0.1: the settings of Gu & Dao 2023's
/// language-model runs (from memory, following GPT-3's recipe); eps 1e-8 as in Adam.
pub const DEFAULT_SETTINGS: AdamWSettings = AdamWSettings {
    beta1: 0.9,
    beta2: 0.95,
    eps: 1e-8,
    weight_decay: 0.1,
};

/// First and second moments per parameter, and the number of updates done.
pub struct AdamW {
    pub settings: AdamWSettings,
    pub step: u64,
    pub m: Vec<f32>,
    pub v: Vec<f32>,
    /// 1 where the parameter takes weight decay, 0 where not.
    decay_mask: Vec<f32>,
}

impl AdamW {
    pub fn new(layout: &Layout, settings: AdamWSettings) -> Self {
        let mut decay_mask = vec![0.0; layout.len];
        for slot in layout.slots.iter().filter(|s| s.weight_decay) {
            decay_mask[slot.range.clone()].fill(1.0);
        }
        AdamW {
            settings,
            step: 0,
            m: vec![0.0; layout.len],
            v: vec![0.0; layout.len],
            decay_mask,
        }
    }

    /// One update of `params` with gradient `grad` at learning rate `lr`.
    pub fn update(&mut self, params: &mut [f32], grad: &[f32], lr: f32) {
        self.step += 1;
        let AdamWSettings {
            beta1,
            beta2,
            eps,
            weight_decay,
        } = self.settings;
        let c1 = 1.0 - beta1.powi(self.step as i32);
        let c2 = 1.0 - beta2.powi(self.step as i32);
        for ((((p, &g), m), v), &mask) in params
            .iter_mut()
            .zip(grad)
            .zip(&mut self.m)
            .zip(&mut self.v)
            .zip(&self.decay_mask)
        {
            *m = beta1 * *m + (1.0 - beta1) * g;
            *v = beta2 * *v + (1.0 - beta2) * g * g;
            let update = (*m / c1) / ((*v / c2).sqrt() + eps);
            *p -= lr * (update + weight_decay * mask * *p);
        }
    }
}

/// Linear warm-up over `warmup` steps, then cosine decay to `floor`·peak at
/// progress 1 (Loshchilov & Hutter 2017, SGDR, one cycle; warm-up is common
/// practice, no source). `progress` is the fraction of the run done, in [0, 1].
pub fn learning_rate(peak: f32, step: u64, warmup: u64, progress: f64) -> f32 {
    const FLOOR: f64 = 0.1;
    if step < warmup {
        return peak * (step + 1) as f32 / warmup as f32;
    }
    let cos = (std::f64::consts::PI * progress.clamp(0.0, 1.0)).cos();
    (peak as f64 * (FLOOR + (1.0 - FLOOR) * 0.5 * (1.0 + cos))) as f32
}

/// Scales `grad` so that its L2 norm is at most `max_norm`; returns the norm before.
pub fn clip_global_norm(grad: &mut [f32], max_norm: f32) -> f32 {
    let norm = grad
        .iter()
        .map(|&g| (g as f64) * (g as f64))
        .sum::<f64>()
        .sqrt() as f32;
    if norm > max_norm {
        let s = max_norm / norm;
        grad.iter_mut().for_each(|g| *g *= s);
    }
    norm
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::shapes::TINY;

    #[test]
    fn first_step_moves_each_weight_by_the_learning_rate() {
        // Adam's first bias-corrected step is lr·g/(|g| + eps) ≈ lr·sign(g)
        // (Kingma & Ba 2015, Sec. 2.1); decoupled decay subtracts lr·λ·p on top
        // (Loshchilov & Hutter 2019, Alg. 2 line 12, with schedule multiplier 1).
        let layout = Layout::new(TINY);
        let mut opt = AdamW::new(&layout, DEFAULT_SETTINGS);
        let mut p = vec![0.5f32; layout.len];
        let g: Vec<f32> = (0..layout.len)
            .map(|k| if k % 2 == 0 { 3.0 } else { -0.01 })
            .collect();
        opt.update(&mut p, &g, 0.01);
        let embed0 = layout.byte_embed.start; // decayed, gradient 3.0
        assert!((p[embed0] - (0.5 - 0.01 - 0.01 * 0.1 * 0.5)).abs() < 1e-6);
        let skip = layout.blocks[0].skip.start; // not decayed
        let want = if skip.is_multiple_of(2) { 0.49 } else { 0.51 };
        assert!((p[skip] - want).abs() < 1e-5, "{}", p[skip]);
    }

    #[test]
    fn schedule_and_clipping() {
        // Warm-up reaches the peak at its last step; cosine ends at the floor.
        assert_eq!(learning_rate(1.0, 9, 10, 0.0), 1.0);
        assert!((learning_rate(1.0, 500, 10, 1.0) - 0.1).abs() < 1e-6);
        assert!((learning_rate(1.0, 500, 10, 0.5) - 0.55).abs() < 1e-6);
        // A 3-4-5 triangle: norm 5 clipped to 1 gives (0.6, 0.8).
        let mut g = [3.0, 4.0];
        assert_eq!(clip_global_norm(&mut g, 1.0), 5.0);
        assert!((g[0] - 0.6).abs() < 1e-7 && (g[1] - 0.8).abs() < 1e-7);
    }
}
