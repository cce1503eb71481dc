//! Symmetric int8 quantisation of weight matrices, one scale per row or per group of a row.

/// The largest int8 magnitude used: symmetric, so -128 is never produced.
pub const WEIGHT_MAX: f32 = 127.0;

/// An int8 matrix and its scales.
#[derive(Debug, Clone, PartialEq)]
pub struct QuantisedMatrix {
    /// Weights, row-major.
    pub weights: Vec<i8>,
    /// Scales, row-major, `ceil(cols / group)` per row (one per row for group 0).
    pub scales: Vec<f32>,
}

/// Quantises a row-major `rows × cols` matrix: for each group of a row,
/// `scale = max|w| / 127` and `q = round(w / scale)`, so the rounding error is at most
/// half a step (`scale / 2`). An all-zero group gets scale 0.
///
/// ```
/// use inkling_quantize::quantiser::quantise_matrix;
/// let q = quantise_matrix(&[0.5, -1.0, 0.25, 0.0], 2, 2, 0);
/// assert_eq!(q.weights, vec![64, -127, 127, 0]);
/// assert_eq!(q.scales, vec![1.0 / 127.0, 0.25 / 127.0]);
/// ```
pub fn quantise_matrix(values: &[f32], rows: usize, cols: usize, group: usize) -> QuantisedMatrix {
    let group = if group == 0 { cols.max(1) } else { group };
    let mut weights = Vec::with_capacity(rows * cols);
    let mut scales = Vec::with_capacity(rows * cols.div_ceil(group));
    for row in values.chunks_exact(cols.max(1)).take(rows) {
        for g in row.chunks(group) {
            let amax = g.iter().fold(0.0f32, |m, v| m.max(v.abs()));
            let scale = amax / WEIGHT_MAX;
            scales.push(scale);
            weights.extend(g.iter().map(|&v| {
                if scale == 0.0 {
                    0
                } else {
                    (v / scale).round().clamp(-WEIGHT_MAX, WEIGHT_MAX) as i8
                }
            }));
        }
    }
    QuantisedMatrix { weights, scales }
}

/// The value a quantised weight stands for.
pub fn dequantise(q: &QuantisedMatrix, cols: usize, group: usize) -> Vec<f32> {
    let group = if group == 0 { cols.max(1) } else { group };
    let per_row = cols.div_ceil(group);
    q.weights
        .iter()
        .enumerate()
        .map(|(i, &w)| {
            let (r, c) = (i / cols, i % cols);
            w as f32 * q.scales[r * per_row + c / group]
        })
        .collect()
}

/// Error statistics of a quantisation: the largest absolute error and the signal-to-
/// quantisation-noise ratio `10·log10(Σ w² / Σ (w − ŵ)²)` in dB (infinite when exact).
pub fn error_stats(original: &[f32], restored: &[f32]) -> (f32, f64) {
    let mut max_abs = 0.0f32;
    let (mut signal, mut noise) = (0.0f64, 0.0f64);
    for (&a, &b) in original.iter().zip(restored) {
        let e = a - b;
        max_abs = max_abs.max(e.abs());
        signal += f64::from(a) * f64::from(a);
        noise += f64::from(e) * f64::from(e);
    }
    let sqnr = if noise == 0.0 {
        f64::INFINITY
    } else {
        10.0 * (signal / noise).log10()
    };
    (max_abs, sqnr)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn full_scale_sine_sqnr_matches_textbook() {
        // Kester, "Taking the Mystery out of the Infamous Formula SNR = 6.02N + 1.76 dB",
        // Analog Devices MT-001: a full-scale sine through an N-bit uniform quantiser has
        // SQNR = 6.02·N + 1.76 dB. Our grid has 255 levels (symmetric, ±127 steps), i.e.
        // N = log2(255) effective bits; the formula holds for a sine sampled incommensurately.
        let n = 100_000;
        let sine: Vec<f32> = (0..n).map(|i| (i as f32 * 0.012_345_6).sin()).collect();
        let q = quantise_matrix(&sine, 1, n, 0);
        let (_, sqnr) = error_stats(&sine, &dequantise(&q, n, 0));
        let bits = 255f64.log2();
        let expected = 6.02 * bits + 1.76;
        assert!((sqnr - expected).abs() < 0.2, "sqnr {sqnr} vs {expected}");
    }

    #[test]
    fn noise_power_is_step_squared_over_twelve() {
        // Kester, MT-001: error uniform on ±q/2 has power q²/12.
        let n = 200_000;
        let mut x = 0x2545_F491u32;
        let v: Vec<f32> = (0..n)
            .map(|_| {
                x ^= x << 13;
                x ^= x >> 17;
                x ^= x << 5;
                (x as f32 / u32::MAX as f32) * 2.0 - 1.0
            })
            .collect();
        let q = quantise_matrix(&v, 1, n, 0);
        let restored = dequantise(&q, n, 0);
        let step = f64::from(q.scales[0]);
        let noise: f64 = v
            .iter()
            .zip(&restored)
            .map(|(&a, &b)| f64::from(a - b).powi(2))
            .sum::<f64>()
            / n as f64;
        let expected = step * step / 12.0;
        assert!(
            (noise / expected - 1.0).abs() < 0.02,
            "{noise} vs {expected}"
        );
    }

    #[test]
    fn error_never_exceeds_half_a_step_per_group() {
        let v: Vec<f32> = (0..96)
            .map(|i| ((i * 37) % 101) as f32 / 7.0 - 7.0)
            .collect();
        for group in [0, 5, 32] {
            let q = quantise_matrix(&v, 3, 32, group);
            let r = dequantise(&q, 32, group);
            let g = if group == 0 { 32 } else { group };
            for (i, (&a, &b)) in v.iter().zip(&r).enumerate() {
                let s = q.scales[(i / 32) * 32usize.div_ceil(g) + (i % 32) / g];
                assert!((a - b).abs() <= s / 2.0 + 1e-6);
            }
        }
    }
}
