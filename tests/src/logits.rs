//! Logits per position as the tools print them, and the measures that compare two of them.

use serde_json::Value;

/// Vocabulary size: one logit per byte value.
pub const VOCAB: usize = 256;

/// Raw logits after every byte of a text: `per_position[j]` predicts byte `j + 1`.
#[derive(Clone, Debug)]
pub struct PositionLogits {
    /// The `"logits"` field: after the last byte.
    pub last: Vec<f64>,
    /// The `"per_position"` field, one row of 256 per input byte.
    pub per_position: Vec<Vec<f64>>,
}

impl PositionLogits {
    /// Parse `{"logits": [...], "per_position": [[...], ...]}`; `source` names the producer in
    /// panic messages. Checks 256 finite numbers per row and one row per input byte.
    pub fn from_json(json: &Value, text_len: usize, source: &str) -> Self {
        let last = row(&json["logits"], source, "logits");
        let rows = json["per_position"]
            .as_array()
            .unwrap_or_else(|| panic!("{source}: no \"per_position\" array in {json}"));
        let per_position: Vec<Vec<f64>> = rows
            .iter()
            .enumerate()
            .map(|(j, r)| row(r, source, &format!("per_position[{j}]")))
            .collect();
        assert_eq!(
            per_position.len(),
            text_len,
            "{source}: per_position has {} rows for a text of {text_len} bytes",
            per_position.len()
        );
        Self { last, per_position }
    }
}

fn row(value: &Value, source: &str, field: &str) -> Vec<f64> {
    let numbers = value
        .as_array()
        .unwrap_or_else(|| panic!("{source}: {field} is not an array"));
    assert_eq!(
        numbers.len(),
        VOCAB,
        "{source}: {field} has {} entries",
        numbers.len()
    );
    numbers
        .iter()
        .enumerate()
        .map(|(b, v)| match v.as_f64() {
            Some(x) if x.is_finite() => x,
            _ => panic!("{source}: {field}[{b}] = {v} is not a finite number"),
        })
        .collect()
}

/// max_b |a_b - r_b| / max_b |r_b|: the error of `a` relative to the reference `r`'s scale.
pub fn relative_difference(a: &[f64], r: &[f64]) -> f64 {
    let scale = r.iter().fold(0.0f64, |m, x| m.max(x.abs()));
    let diff = a
        .iter()
        .zip(r)
        .fold(0.0f64, |m, (x, y)| m.max((x - y).abs()));
    diff / scale
}

/// log softmax, shifted by the maximum so that exp never overflows.
pub fn log_softmax(logits: &[f64]) -> Vec<f64> {
    let max = logits.iter().fold(f64::NEG_INFINITY, |m, &x| m.max(x));
    let log_sum = logits.iter().map(|x| (x - max).exp()).sum::<f64>().ln();
    logits.iter().map(|x| x - max - log_sum).collect()
}

/// KL(p ‖ q) in nats between the distributions softmax(p_logits) and softmax(q_logits):
/// Σ p log(p / q) (Kullback & Leibler 1951).
pub fn kl_divergence(p_logits: &[f64], q_logits: &[f64]) -> f64 {
    let lp = log_softmax(p_logits);
    let lq = log_softmax(q_logits);
    lp.iter().zip(&lq).map(|(a, b)| a.exp() * (a - b)).sum()
}

/// The byte with the largest logit (the first one on a tie).
pub fn top_byte(logits: &[f64]) -> usize {
    logits
        .iter()
        .enumerate()
        .fold((0, f64::NEG_INFINITY), |best, (b, &x)| {
            if x > best.1 {
                (b, x)
            } else {
                best
            }
        })
        .0
}
