//! Natural-log probabilities from logits: `log p_b = (l_b - max) - ln Σ_c exp(l_c - max)`.

/// The normaliser of one set of 256 logits, computed once and applied to each logit.
///
/// Subtracting the largest logit first keeps every `exp` at most 1 (no overflow); the sum
/// runs in byte order, so host and device get the same bits.
///
/// ```
/// use inkling_core::session::LogSoftmax;
/// let logits = [0.0f32, 1.0, 2.0];
/// let norm = LogSoftmax::of(&logits);
/// let total: f32 = logits.iter().map(|&l| norm.log_prob(l).exp()).sum();
/// assert!((total - 1.0).abs() < 1e-6);
/// ```
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LogSoftmax {
    max: f32,
    log_sum: f32,
}

impl LogSoftmax {
    /// The normaliser of `logits`.
    ///
    /// ```
    /// let norm = inkling_core::session::LogSoftmax::of(&[0.0; 256]);
    /// assert!((norm.log_prob(0.0) + 256f32.ln()).abs() < 1e-5);
    /// ```
    pub fn of(logits: &[f32]) -> Self {
        let max = logits.iter().copied().fold(f32::NEG_INFINITY, f32::max);
        let sum: f32 = logits.iter().map(|&l| libm::expf(l - max)).sum();
        LogSoftmax {
            max,
            log_sum: libm::logf(sum),
        }
    }

    /// The natural-log probability of the byte whose logit is `logit` (at most 0).
    ///
    /// ```
    /// let norm = inkling_core::session::LogSoftmax::of(&[5.0]);
    /// assert_eq!(norm.log_prob(5.0), 0.0);
    /// ```
    pub fn log_prob(&self, logit: f32) -> f32 {
        (logit - self.max) - self.log_sum
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn matches_the_definition_in_f64() {
        // log-softmax by its definition, log(exp(l_i) / Σ exp(l_j)), evaluated in f64.
        let logits: [f32; 6] = [3.5, -1.25, 0.0, 7.0, 2.0, -20.0];
        let norm = LogSoftmax::of(&logits);
        let sum: f64 = logits.iter().map(|&l| (l as f64).exp()).sum();
        for &l in &logits {
            let expected = ((l as f64).exp() / sum).ln();
            assert!((norm.log_prob(l) as f64 - expected).abs() < 1e-5);
            assert!(norm.log_prob(l) <= 0.0);
        }
    }

    #[test]
    fn large_logits_do_not_overflow() {
        let logits = [1000.0f32, 1000.0];
        let norm = LogSoftmax::of(&logits);
        // Two equal logits: each has probability 1/2.
        assert!((norm.log_prob(1000.0) - (-core::f32::consts::LN_2)).abs() < 1e-6);
    }
}
